"""``POST /api/v1/auth/token/``: a user name and password give a named device token."""

from __future__ import annotations

from rest_framework.test import APIClient

from projects.models import ApiToken, PeopleLogEntry, Role

from .conftest import assert_error_body

URL = "/api/v1/auth/token/"


def test_a_field_app_obtains_a_token_and_records_with_it(users, project):
    body = APIClient().post(URL, {"username": "ada.recorder", "password": "pw-ada.recorder",
                                  "name": "trench tablet 2"}, format="json").json()
    assert body["name"] == "trench tablet 2" and body["key"]
    client = APIClient()
    client.credentials(HTTP_AUTHORIZATION=f"Token {body['key']}")
    created = client.post(f"/api/v1/projects/{project.code}/contexts/", {"label": "1200", "kind": "deposit"},
                          format="json")
    assert created.status_code == 201
    assert ApiToken.objects.get(pk=body["id"]).user == users[Role.RECORDER]


def test_a_wrong_password_is_401_with_the_error_body(users):
    response = APIClient().post(URL, {"username": "ada.recorder", "password": "nope", "name": "t"}, format="json")
    assert_error_body(response, 401, "invalid-credentials")
    assert not ApiToken.objects.exists()


def test_a_missing_name_is_400_naming_the_field(users):
    response = APIClient().post(URL, {"username": "ada.recorder", "password": "pw-ada.recorder"}, format="json")
    assert assert_error_body(response, 400)["field"] == "name"


def test_an_obtained_token_is_logged_in_the_users_organisation(users):
    APIClient().post(URL, {"username": "ada.recorder", "password": "pw-ada.recorder", "name": "t"}, format="json")
    entry = PeopleLogEntry.objects.get()
    assert (entry.action, entry.organisation.slug, entry.user_name) == ("people.token.created", "northfold",
                                                                        "ada.recorder")
