"""The history is append-only below the ORM too, and its digest chain catches a rewrite."""

from __future__ import annotations

import pytest
from django.core.management import CommandError, call_command
from django.db import DatabaseError, connection, transaction
from django.db.models import QuerySet

from projects.models import ChangeLogEntry, RecordState, Revision
from projects.models.append_only import AppendOnlyViolation
from projects.record import history, writes
from tests.record.helpers import add_contexts

pytestmark = pytest.mark.django_db

TABLES = ["projects_changelogentry", "projects_revision", "projects_recordstate"]


def _postgres():
    if connection.vendor != "postgresql":
        pytest.skip("the triggers are PostgreSQL's")


@pytest.fixture
def recorded(project, actor):
    ctx = add_contexts(project, actor, ["1001", "1002"])
    writes.add_relationship(project, actor, subject="1001", type="above", object="1002")
    writes.edit_context(project, actor, ctx["1001"].id, {"description": "dark silt"})
    return project


def _refused(sql):
    with connection.cursor() as cursor:
        cursor.execute("SET CONSTRAINTS ALL IMMEDIATE")  # TRUNCATE refuses pending FK checks otherwise
    with pytest.raises(DatabaseError, match="append-only"), transaction.atomic(), connection.cursor() as cursor:
        cursor.execute(sql)


@pytest.mark.parametrize("table", TABLES)
def test_raw_sql_delete_on_a_history_table_is_refused(recorded, table):
    _postgres()
    _refused(f"DELETE FROM {table}")


@pytest.mark.parametrize("table", TABLES)
def test_raw_sql_truncate_on_a_history_table_is_refused(recorded, table):
    _postgres()
    _refused(f"TRUNCATE {table} CASCADE")


@pytest.mark.parametrize("table,column", [("projects_changelogentry", "message"), ("projects_revision", "digest"),
                                          ("projects_recordstate", "kind")])
def test_raw_sql_update_on_a_history_table_is_refused(recorded, table, column):
    _postgres()
    _refused(f"UPDATE {table} SET {column} = 'forged'")


def test_raw_sql_may_not_reopen_or_move_a_closed_state_row(recorded):
    _postgres()
    _refused("UPDATE projects_recordstate SET valid_to = valid_to + 1 WHERE valid_to IS NOT NULL")


@pytest.mark.parametrize("attempt", [
    lambda: ChangeLogEntry._base_manager.update(message="forged"),
    lambda: ChangeLogEntry._base_manager.all().delete(),
    lambda: Revision._base_manager.update(digest="0" * 64),
    lambda: ChangeLogEntry.objects.all()._raw_delete(ChangeLogEntry.objects.db),
])
def test_orm_loopholes_are_refused(recorded, attempt):
    with pytest.raises((AppendOnlyViolation, DatabaseError)), transaction.atomic():
        attempt()


def test_a_bare_queryset_update_is_refused_by_the_database(recorded):
    _postgres()
    with pytest.raises(DatabaseError), transaction.atomic():
        QuerySet(ChangeLogEntry).update(message="forged")


def test_a_closed_state_row_cannot_be_saved_with_a_new_end(recorded):
    closed = RecordState.objects.filter(valid_to__isnull=False).first()
    closed.valid_to += 5
    with pytest.raises(AppendOnlyViolation):
        closed.save(update_fields=["valid_to"])


def test_an_untouched_record_verifies_and_its_head_is_the_projects(recorded):
    head, broken, links = history.verify(recorded)
    assert broken is None and links == recorded.revision
    assert head == history.head_digest(recorded) == Revision.objects.filter(project=recorded).last().digest


def _tamper(sql, params):
    """Rewrite history as someone with the database's owner rights could (triggers off)."""
    with connection.cursor() as cursor:
        if connection.vendor == "postgresql":
            cursor.execute("SET LOCAL session_replication_role = replica")  # user triggers off
        cursor.execute(sql[0], params)
        if connection.vendor == "postgresql":
            cursor.execute("SET LOCAL session_replication_role = origin")


@pytest.mark.parametrize("column,value", [("user_name", "dan.manager"), ("request_id", "forged"),
                                          ("created_at", "2001-01-01 00:00:00+00")])
def test_verify_record_finds_a_tampered_entry_field(recorded, column, value):
    entry = ChangeLogEntry.objects.filter(project=recorded, revision=2).first()
    _tamper((f"UPDATE projects_changelogentry SET {column} = %s WHERE id = %s", "projects_changelogentry"),
             [value, entry.pk])
    _head, broken, _links = history.verify(recorded)
    assert (broken.kind, broken.revision) == ("revision", 2)
    with pytest.raises(CommandError):
        call_command("verify_record", recorded.code)


def test_verify_record_finds_a_forged_state_row(recorded):
    state = RecordState.objects.filter(project=recorded, kind="context", valid_from=1).first()
    _tamper(("UPDATE projects_recordstate SET data = %s WHERE id = %s", "projects_recordstate"),
            ['{"label": "9999"}', state.pk])
    _head, broken, _links = history.verify(recorded)
    assert (broken.kind, broken.revision) == ("revision", 1)


def test_verify_record_finds_a_tampered_approval(recorded, actor):
    entry = history.log_entry(recorded, actor, "interpretation.version.approved", kind="interpretation_version",
                              object_id=1, repr_="Phasing v1")
    assert history.verify(recorded)[1] is None
    _tamper(("UPDATE projects_changelogentry SET action = %s WHERE id = %s", "projects_changelogentry"),
            ["interpretation.version.rejected", entry.pk])
    _head, broken, _links = history.verify(recorded)
    assert (broken.kind, broken.entry_id) == ("workflow entry", entry.pk)


def test_a_workflow_entry_moves_the_head_but_not_the_revision(recorded, actor):
    before = (recorded.revision, history.head_digest(recorded))
    history.log_entry(recorded, actor, "interpretation.version.proposed", kind="interpretation_version",
                      object_id=1, repr_="Phasing v1")
    recorded.refresh_from_db()
    assert recorded.revision == before[0] and history.head_digest(recorded) != before[1]
