"""Insert many history rows at once: PostgreSQL's COPY, or ``bulk_create`` elsewhere.

A sync batch of 5,000 items writes 5,000 change-log entries and 5,000 state
rows.  Through ``INSERT`` Django builds and the server parses one statement
per thousand rows with every value bound; ``COPY ... FROM STDIN`` streams the
rows instead and is several times faster on both sides (PostgreSQL
documentation, "Populating a Database": "use COPY").  Only for rows whose ids
nobody needs back (the change log, the state rows); below ``COPY_FROM`` rows a
plain bulk insert is as fast.
"""

from __future__ import annotations

from django.db import connection, models
from psycopg.types.json import Jsonb

COPY_FROM = 200


def insert_rows(model, rows: list, *, with_ids: bool = False) -> None:
    """Insert ``rows`` (unsaved instances of ``model``).

    With ``with_ids`` each instance gets its id: under COPY the ids are drawn
    from the table's own sequence first, exactly as ``INSERT`` would draw them.
    """
    if not rows:
        return
    if connection.vendor != "postgresql" or len(rows) < COPY_FROM:
        model.objects.bulk_create(rows, batch_size=2000)
        return
    if with_ids:
        _draw_ids(model, rows)
    fields = [f for f in model._meta.concrete_fields if with_ids or not f.primary_key]
    columns = ", ".join(connection.ops.quote_name(f.column) for f in fields)
    table = connection.ops.quote_name(model._meta.db_table)
    with connection.cursor() as cursor:
        with cursor.cursor.copy(f"COPY {table} ({columns}) FROM STDIN") as copy:
            for obj in rows:
                copy.write_row(_values(model, fields, obj))


def _values(model, fields, obj) -> list:
    # psycopg adapts plain values itself; only JSON needs its wrapper.  Field-by-field
    # preparation through Django costs more than the statement.
    values = [getattr(obj, f.attname) for f in fields]
    for i, f in enumerate(fields):
        if isinstance(f, models.JSONField) and values[i] is not None:
            values[i] = Jsonb(values[i])
    return values


def insert_statement(model, rows: list) -> tuple[str, list]:
    """``INSERT INTO ... VALUES (...), (...)`` for ``rows`` (ids left to the table), with its parameters."""
    fields = [f for f in model._meta.concrete_fields if not f.primary_key]
    columns = ", ".join(connection.ops.quote_name(f.column) for f in fields)
    one = "(" + ", ".join(["%s"] * len(fields)) + ")"
    params = [value for obj in rows for value in _values(model, fields, obj)]
    table = connection.ops.quote_name(model._meta.db_table)
    return f"INSERT INTO {table} ({columns}) VALUES {', '.join([one] * len(rows))}", params


def run_together(statements: list[tuple[str, list]], last: tuple[str, list]) -> None:
    """Run the data-changing ``statements`` and ``last`` as one PostgreSQL statement.

    Data-modifying ``WITH`` clauses (PostgreSQL documentation, "WITH Queries",
    section "Data-Modifying Statements in WITH") run in one round trip to the
    server and see one snapshot; the statements must not depend on each
    other's effects.
    """
    clauses, params = [], []
    for i, (sql, values) in enumerate(statements):
        clauses.append(f"w{i} AS ({sql})")
        params.extend(values)
    sql = (f"WITH {', '.join(clauses)} " if clauses else "") + last[0]
    with connection.cursor() as cursor:
        cursor.execute(sql, params + list(last[1]))


def _draw_ids(model, rows: list) -> None:
    pk = model._meta.pk
    with connection.cursor() as cursor:
        cursor.execute(
            "SELECT nextval(pg_get_serial_sequence(%s, %s)) FROM generate_series(1, %s)",
            [model._meta.db_table, pk.column, len(rows)],
        )
        for obj, (value,) in zip(rows, cursor.fetchall()):
            setattr(obj, pk.attname, value)
            obj._state.adding = False
            obj._state.db = connection.alias


__all__ = ["insert_rows", "insert_statement", "run_together", "COPY_FROM"]
