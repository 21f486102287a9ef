"""Device tokens and memberships from the pages: through ``projects.people``, each logged with its actor."""

from __future__ import annotations

import pytest
from django.contrib.auth import get_user_model
from django.urls import reverse

from projects.models import ApiToken, Membership, PeopleLogEntry, Role

from .conftest import signed_in


@pytest.fixture
def manager(users):
    return users[Role.MANAGER]


def test_a_new_token_key_is_shown_once_and_only_its_digest_is_stored(users):
    client = signed_in(users[Role.RECORDER])
    response = client.post(reverse("web:token-create"), {"name": "trench tablet 3"}, follow=True)
    html = response.content.decode()
    token = ApiToken.objects.get(name="trench tablet 3")
    key = html.split('<code class="key">')[1].split("</code>")[0]
    assert ApiToken.authenticate(key) == token
    assert key not in client.get(reverse("web:tokens")).content.decode()


def test_creating_and_revoking_a_token_is_logged_with_the_actor(users):
    client = signed_in(users[Role.RECORDER])
    client.post(reverse("web:token-create"), {"name": "field phone"})
    token = ApiToken.objects.get(name="field phone")
    client.post(reverse("web:token-revoke", args=[token.pk]))
    token.refresh_from_db()
    assert token.revoked_at is not None
    actions = list(PeopleLogEntry.objects.order_by("id").values_list("action", "user_name", "subject_name"))
    assert actions == [("people.token.created", "ada.recorder", "ada.recorder"),
                       ("people.token.revoked", "ada.recorder", "ada.recorder")]
    assert PeopleLogEntry.objects.filter(request_id="").count() == 0


def test_a_token_without_a_name_is_refused(users):
    response = signed_in(users[Role.RECORDER]).post(reverse("web:token-create"), {"name": " "}, follow=True)
    assert "Refused (required)" in response.content.decode() and not ApiToken.objects.exists()


def test_nobody_but_a_manager_revokes_someone_elses_token(users):
    token, _key = ApiToken.issue(users[Role.RECORDER], "ada's tablet")
    for role in (Role.VIEWER, Role.ANALYST):
        response = signed_in(users[role]).post(reverse("web:token-revoke", args=[token.pk]),
                                               {"organisation": "northfold"})
        assert response.status_code == 404
    token.refresh_from_db()
    assert token.revoked_at is None


def test_a_manager_revokes_a_members_lost_tablet_from_the_people_page(users, manager):
    token, _key = ApiToken.issue(users[Role.RECORDER], "lost tablet")
    client = signed_in(manager)
    assert "lost tablet" in client.get(reverse("web:people", args=["northfold"])).content.decode()
    client.post(reverse("web:token-revoke", args=[token.pk]), {"organisation": "northfold"})
    token.refresh_from_db()
    assert token.revoked_at is not None
    assert PeopleLogEntry.objects.get(action="people.token.revoked").user_name == "dan.manager"


def test_a_manager_cannot_revoke_a_token_of_another_organisations_member(users, manager, outsider):
    token, _key = ApiToken.issue(outsider, "quillmoor tablet")
    response = signed_in(manager).post(reverse("web:token-revoke", args=[token.pk]), {"organisation": "northfold"})
    assert response.status_code == 404


def test_a_manager_adds_a_new_person_changes_their_role_and_removes_them(org, manager):
    client = signed_in(manager)
    client.post(reverse("web:member-add", args=["northfold"]),
                {"username": "fay.recorder", "role": "recorder", "password": "a-first-password-9"})
    membership = Membership.objects.get(user__username="fay.recorder")
    assert membership.role == Role.RECORDER
    client.post(reverse("web:member-role", args=["northfold", membership.pk]), {"role": "analyst"})
    membership.refresh_from_db()
    assert membership.role == Role.ANALYST
    client.post(reverse("web:member-remove", args=["northfold", membership.pk]))
    assert not Membership.objects.filter(pk=membership.pk).exists()
    assert get_user_model().objects.filter(username="fay.recorder").exists()
    log = list(PeopleLogEntry.objects.order_by("id").values_list("action", "before", "after"))
    assert log == [("people.membership.added", None, {"role": "recorder"}),
                   ("people.membership.role_changed", {"role": "recorder"}, {"role": "analyst"}),
                   ("people.membership.removed", {"role": "analyst"}, None)]


@pytest.mark.parametrize("role", [Role.VIEWER, Role.RECORDER, Role.ANALYST])
def test_only_managers_change_the_organisations_people(users, role):
    client = signed_in(users[role])
    target = Membership.objects.get(user=users[Role.VIEWER])
    assert client.post(reverse("web:member-add", args=["northfold"]), {"username": "x", "role": "viewer",
                                                                        "password": "pw-long-enough-1"}).status_code == 403
    assert client.post(reverse("web:member-role", args=["northfold", target.pk]), {"role": "manager"}).status_code == 403
    assert client.post(reverse("web:member-remove", args=["northfold", target.pk])).status_code == 403
    assert not PeopleLogEntry.objects.exists()


def test_the_last_manager_cannot_be_demoted(users, manager):
    membership = Membership.objects.get(user=manager)
    response = signed_in(manager).post(reverse("web:member-role", args=["northfold", membership.pk]),
                                       {"role": "viewer"}, follow=True)
    membership.refresh_from_db()
    assert membership.role == Role.MANAGER and "last-manager" in response.content.decode()


def test_the_people_page_of_another_organisation_is_not_found(users, other_org):
    assert signed_in(users[Role.MANAGER]).get(reverse("web:people", args=["quillmoor"])).status_code == 404


def test_the_organisation_switcher_changes_the_home_page(users, other_org, other_project):
    user = users[Role.ANALYST]
    Membership.objects.create(user=user, organisation=other_org, role=Role.VIEWER)
    client = signed_in(user)
    client.post(reverse("web:switch-organisation"), {"organisation": "quillmoor"})
    assert "QHX01" in client.get(reverse("web:home")).content.decode()


def test_switching_to_an_organisation_one_is_not_in_is_not_found(users, other_org):
    response = signed_in(users[Role.ANALYST]).post(reverse("web:switch-organisation"), {"organisation": "quillmoor"})
    assert response.status_code == 404
