"""Every page for every role, with Django's test client.

The roles are the four member roles of the demo organisation, its
organisation admin (a site administrator, who acts as a manager everywhere)
and a manager of the second organisation, who must find nothing of the first:
every page of it answers 404, as the API does.  Each test builds the site once
and walks the whole matrix, so a gap shows as a list of (role, page, status).
"""

from __future__ import annotations

import pytest
from django.contrib.auth import get_user_model
from django.urls import reverse

from projects.models import Role
from tests.api.conftest import foreign_record  # noqa: F401  (fixture)

from .conftest import ALL_ROLES, GLOBAL_PAGES, page_urls, signed_in

ADMIN = "org admin"
OUTSIDER = "other organisation"
MEMBERS = [*ALL_ROLES, ADMIN]

#: Words of the second organisation's record that must not appear on the first's pages.
FOREIGN_WORDS = ["QHX01", "Quillmoor evaluation", "quill.recorder", "quillmoor tablet"]
#: Words of the first organisation's record that must not appear on the second's pages.
HOME_WORDS = ["VML24", "Vellmarsh Lane", "ada.recorder", "dan.manager", "test tablet", "Two phases"]


@pytest.fixture
def org_admin(db):
    return get_user_model().objects.create_superuser(username="unit.admin", password="pw-unit.admin")


@pytest.fixture
def clients(users, org_admin, outsider):
    made = {role: signed_in(users[role]) for role in ALL_ROLES}
    made[ADMIN] = signed_in(org_admin)
    made[OUTSIDER] = signed_in(outsider)
    return made


def _expected(role: str, name: str) -> int:
    """The matrix: members and the admin read every page; the other organisation finds none of them."""
    if role == OUTSIDER:
        return 404
    return 200


def _global_urls() -> dict[str, str]:
    return {name: reverse(name) for name in GLOBAL_PAGES}


def _foreign_pages(project) -> dict[str, str]:
    args = (project.organisation.slug, project.code)
    names = ["project", "contexts", "relationships", "changes", "diagram", "check", "evidence", "versions", "runs"]
    return {name: reverse(f"web:{name}", args=args) for name in names}


def test_every_role_gets_the_status_the_matrix_gives_on_every_project_page(site, clients):
    urls = page_urls(site)
    wrong = [(role, name, status) for role, client in clients.items() for name, url in urls.items()
             if (status := client.get(url).status_code) != _expected(role, name)]
    assert wrong == []


def test_every_role_reads_the_pages_outside_projects(site, clients):
    wrong = [(role, name, status) for role, client in clients.items() for name, url in _global_urls().items()
             if (status := client.get(url).status_code) != 200]
    assert wrong == []


def test_no_page_of_the_first_organisation_shows_anything_of_the_second(site, clients, foreign_record):
    urls = {**page_urls(site), **_global_urls()}
    leaks = []
    for role in MEMBERS:
        for name, url in urls.items():
            html = clients[role].get(url).content.decode()
            leaks += [(role, name, word) for word in FOREIGN_WORDS if word in html]
    assert leaks == []


def test_no_page_of_the_second_organisation_shows_anything_of_the_first(site, clients, foreign_record):
    client = clients[OUTSIDER]
    urls = {**_foreign_pages(foreign_record["project"]), **_global_urls()}
    leaks = []
    for name, url in urls.items():
        response = client.get(url)
        assert response.status_code == 200, name
        html = response.content.decode()
        leaks += [(name, word) for word in HOME_WORDS if word in html]
    assert leaks == []


def test_the_second_organisations_pages_are_not_found_by_the_first(site, clients, foreign_record):
    urls = _foreign_pages(foreign_record["project"])
    wrong = [(role, name, status) for role in ALL_ROLES for name, url in urls.items()
             if (status := clients[role].get(url).status_code) != 404]
    assert wrong == []


def test_the_admin_and_the_manager_see_the_controls_to_change_people_and_nobody_else_does(site, clients):
    url = reverse("web:people", args=[site["project"].organisation.slug])
    shown = {role: 'id="member-add"' in clients[role].get(url).content.decode() for role in MEMBERS}
    assert shown == {Role.VIEWER: False, Role.RECORDER: False, Role.ANALYST: False, Role.MANAGER: True, ADMIN: True}
