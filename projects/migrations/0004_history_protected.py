"""PostgreSQL refuses edits of the history, whatever the client.

The change log and revisions refuse ``UPDATE``, ``DELETE`` and ``TRUNCATE``.
``RecordState`` refuses ``DELETE`` and ``TRUNCATE``, and an ``UPDATE`` is let
through only when it closes an open row (``valid_to`` set once, from NULL,
to a revision not before ``valid_from``) and changes nothing else.  The ORM
guards in ``projects.models.append_only`` say the same earlier and more
kindly; these triggers also hold against raw SQL and bare querysets.

SQLite has no such triggers here (the embedded default keeps the ORM
guards only): its schema editor rebuilds tables on alteration and would
silently drop them.
"""

from django.db import migrations

HISTORY_TABLES = ("projects_changelogentry", "projects_revision", "projects_recordstate")

FUNCTIONS = """
CREATE OR REPLACE FUNCTION tellstack_history_refuse() RETURNS trigger AS $$
BEGIN
    RAISE EXCEPTION 'the history is append-only: % on % refused', TG_OP, TG_TABLE_NAME
        USING ERRCODE = 'P0001';
END;
$$ LANGUAGE plpgsql;

CREATE OR REPLACE FUNCTION tellstack_record_state_close_only() RETURNS trigger AS $$
BEGIN
    IF OLD.valid_to IS NULL AND NEW.valid_to IS NOT NULL AND NEW.valid_to >= OLD.valid_from
       AND NEW.id = OLD.id AND NEW.project_id = OLD.project_id AND NEW.kind = OLD.kind
       AND NEW.object_id = OLD.object_id AND NEW.valid_from = OLD.valid_from AND NEW.data = OLD.data THEN
        RETURN NEW;
    END IF;
    RAISE EXCEPTION 'the history is append-only: only closing an open % row is allowed', TG_TABLE_NAME
        USING ERRCODE = 'P0001';
END;
$$ LANGUAGE plpgsql;
"""


def _triggers() -> str:
    sql = []
    for table in HISTORY_TABLES:
        rows = "DELETE" if table == "projects_recordstate" else "UPDATE OR DELETE"
        sql.append(
            f"CREATE TRIGGER {table}_append_only BEFORE {rows} ON {table} "
            f"FOR EACH ROW EXECUTE FUNCTION tellstack_history_refuse();"
        )
        sql.append(
            f"CREATE TRIGGER {table}_no_truncate BEFORE TRUNCATE ON {table} "
            f"FOR EACH STATEMENT EXECUTE FUNCTION tellstack_history_refuse();"
        )
    sql.append(
        "CREATE TRIGGER projects_recordstate_close_only BEFORE UPDATE ON projects_recordstate "
        "FOR EACH ROW EXECUTE FUNCTION tellstack_record_state_close_only();"
    )
    return "\n".join(sql)


def _drop() -> str:
    sql = [f"DROP TRIGGER IF EXISTS {t}_append_only ON {t}; DROP TRIGGER IF EXISTS {t}_no_truncate ON {t};"
           for t in HISTORY_TABLES]
    sql.append("DROP TRIGGER IF EXISTS projects_recordstate_close_only ON projects_recordstate;")
    sql.append("DROP FUNCTION IF EXISTS tellstack_history_refuse(); DROP FUNCTION IF EXISTS tellstack_record_state_close_only();")
    return "\n".join(sql)


def _run(schema_editor, sql: str) -> None:
    # One plain execute without parameters: several statements and literal '%'.
    with schema_editor.connection.cursor() as cursor:
        cursor.execute(sql)


def install(apps, schema_editor):
    if schema_editor.connection.vendor == "postgresql":
        _run(schema_editor, FUNCTIONS + _triggers())


def uninstall(apps, schema_editor):
    if schema_editor.connection.vendor == "postgresql":
        _run(schema_editor, _drop())


class Migration(migrations.Migration):

    dependencies = [
        ("projects", "0003_history_fields"),
    ]

    operations = [migrations.RunPython(install, uninstall, elidable=False)]
