"""Shared fixtures: the demo organisations, users per role, token clients.

Test data is built through the public write path (``projects.record.writes``)
or the API, never by writing record tables directly.
"""

from __future__ import annotations

import pytest
from django.contrib.auth import get_user_model
from rest_framework.test import APIClient

from projects.models import ApiToken, Membership, Organisation, Project, Role
from projects.record import order_cache
from projects.record.changes import Actor

ROLES = [Role.VIEWER, Role.RECORDER, Role.ANALYST, Role.MANAGER]


@pytest.fixture(autouse=True)
def _tasks_in_process(request):
    """Run Celery tasks in-process, except in tests marked ``real_worker``.

    CI sets a Redis broker so the worker tests can use it; every other test
    must not depend on a worker being up.
    """
    from config.celery import app

    if request.node.get_closest_marker("real_worker"):
        yield
        return
    previous = app.conf.task_always_eager, app.conf.task_eager_propagates
    app.conf.task_always_eager = True
    app.conf.task_eager_propagates = True
    yield
    app.conf.task_always_eager, app.conf.task_eager_propagates = previous


@pytest.fixture(autouse=True)
def _fast_password_hashing(settings):
    # Test users need no strong hashing; it costs a third of a second per user.
    settings.PASSWORD_HASHERS = ["django.contrib.auth.hashers.MD5PasswordHasher"]


HISTORY_TABLES = ("projects_changelogentry", "projects_revision", "projects_recordstate")


@pytest.fixture(autouse=True, scope="session")
def _flush_past_history_triggers():
    """Let the database flush after transactional tests truncate the history tables.

    PostgreSQL refuses ``TRUNCATE`` on them (migration 0004); Django empties
    the database between transactional tests with exactly that, so the
    triggers are switched off for the flush only.
    """
    from django.db import connection
    from django.test import TransactionTestCase

    original = TransactionTestCase._fixture_teardown

    def teardown(self):
        if connection.vendor != "postgresql":
            return original(self)
        _history_triggers(connection, "DISABLE")
        try:
            original(self)
        finally:
            _history_triggers(connection, "ENABLE")

    TransactionTestCase._fixture_teardown = teardown
    yield
    TransactionTestCase._fixture_teardown = original


def _history_triggers(connection, state: str) -> None:
    with connection.cursor() as cursor:
        for table in HISTORY_TABLES:
            cursor.execute(f"ALTER TABLE {table} {state} TRIGGER USER")


@pytest.fixture(autouse=True)
def _fresh_order_cache():
    order_cache.forget()
    yield
    order_cache.forget()


@pytest.fixture
def org(db):
    return Organisation.objects.create(slug="northfold", name="Northfold Field Archaeology")


@pytest.fixture
def other_org(db):
    return Organisation.objects.create(slug="quillmoor", name="Quillmoor Heritage Ltd")


def _user(org, name, role):
    user = get_user_model().objects.create_user(username=name, password="pw-" + name)
    Membership.objects.create(user=user, organisation=org, role=role)
    return user


@pytest.fixture
def users(org):
    """One user per role in the demo organisation."""
    return {
        Role.VIEWER: _user(org, "eve.viewer", Role.VIEWER),
        Role.RECORDER: _user(org, "ada.recorder", Role.RECORDER),
        Role.ANALYST: _user(org, "cleo.analyst", Role.ANALYST),
        Role.MANAGER: _user(org, "dan.manager", Role.MANAGER),
    }


@pytest.fixture
def recorder(users):
    return users[Role.RECORDER]


@pytest.fixture
def project(org):
    return Project.objects.create(organisation=org, code="VML24", name="Vellmarsh Lane")


@pytest.fixture
def other_project(other_org):
    return Project.objects.create(organisation=other_org, code="QHX01", name="Quillmoor evaluation")


@pytest.fixture
def outsider(other_org):
    return _user(other_org, "quill.recorder", Role.MANAGER)


@pytest.fixture
def actor(recorder):
    return Actor(user=recorder, device="test")


def token_client(user, name="tablet") -> APIClient:
    _token, key = ApiToken.issue(user, name)
    client = APIClient()
    client.credentials(HTTP_AUTHORIZATION=f"Token {key}")
    return client


@pytest.fixture
def client_for(users):
    def make(role, name="tablet"):
        return token_client(users[role], name)

    return make


@pytest.fixture
def api(client_for):
    """A recorder's token client."""
    return client_for(Role.RECORDER)


@pytest.fixture(autouse=True)
def _stored_versions_meet_the_published_schema(request):
    """After every test that used the database, each stored version's content meets the schema.

    Checked with the ``jsonschema`` library's own Draft 2020-12 validator, so a
    document the service stored can be read by anyone holding the schema file
    (documents stored under earlier names are read through the alias table first).
    """
    uses_db = request.node.get_closest_marker("django_db") or {"db", "transactional_db"} & set(request.fixturenames)
    if not uses_db:
        yield
        return
    request.getfixturevalue("transactional_db" if "transactional_db" in request.fixturenames else "db")
    yield
    from django.db import connection
    from jsonschema import Draft202012Validator

    from chronology.engine.legacy_names import read_content
    from chronology.interpretations.content_schema import schema
    from chronology.interpretations.models import Version

    if connection.needs_rollback:
        return  # the test broke its own transaction on purpose; nothing can be read in it
    validator = Draft202012Validator(schema())
    for number, content in Version.objects.values_list("number", "content"):
        problems = [f"{'/'.join(map(str, e.absolute_path))}: {e.message}" for e in validator.iter_errors(read_content(content))]
        assert not problems, f"version {number} breaks the published schema: {problems}"
