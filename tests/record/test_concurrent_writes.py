"""Two writers posting the two halves of a cycle at the same moment: exactly one wins."""

from __future__ import annotations

import threading

import pytest
from django.db import connection

from projects.models import Project, Relationship
from projects.record import writes
from projects.record.changes import Actor
from projects.record.errors import RecordError
from tests.record.helpers import add_contexts, relate

pytestmark = pytest.mark.django_db(transaction=True)

ROUNDS = 4


def _require_postgres():
    if connection.vendor != "postgresql":
        pytest.skip(f"needs PostgreSQL row locks across connections; the database is {connection.vendor}")


def _race(project_id, actor, posts):
    """Run each post in its own thread, released together by a barrier; returns outcomes in order."""
    barrier = threading.Barrier(len(posts))
    outcomes = [None] * len(posts)

    def run(index, data):
        try:
            project = Project.objects.get(pk=project_id)
            barrier.wait(timeout=10)
            outcomes[index] = ("ok", writes.add_relationship(project, actor, **data).object.id)
        except RecordError as exc:
            outcomes[index] = (exc.status, exc.code, exc.details.get("cycle"))
        finally:
            connection.close()

    threads = [threading.Thread(target=run, args=(i, data)) for i, data in enumerate(posts)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(timeout=30)
    return outcomes


@pytest.mark.parametrize("round_", range(ROUNDS))
def test_concurrent_halves_of_a_cycle_let_exactly_one_through(round_, project, actor):
    _require_postgres()
    add_contexts(project, actor, ["A", "B", "C", "D"])
    relate(project, actor, "A", "above", "B")
    relate(project, actor, "C", "above", "D")
    # Either half alone is consistent; together they make A > B > C > D > A.
    outcomes = _race(project.pk, actor, [
        {"subject": "B", "type": "above", "object": "C"},
        {"subject": "D", "type": "above", "object": "A"},
    ])
    winners = [o for o in outcomes if o[0] == "ok"]
    losers = [o for o in outcomes if o[0] != "ok"]
    assert len(winners) == 1 and len(losers) == 1, outcomes
    status, code, cycle = losers[0]
    assert (status, code) == (409, "cycle")
    assert [s["from"] for s in cycle] in (["B", "C", "D", "A"], ["D", "A", "B", "C"])
    assert all(cycle[i]["to"] == cycle[(i + 1) % len(cycle)]["from"] for i in range(len(cycle)))
    assert Relationship.objects.filter(project=project, retracted_revision__isnull=True).count() == 3


def test_concurrent_writers_make_consecutive_revisions(project, actor):
    _require_postgres()
    add_contexts(project, actor, [str(n) for n in range(1001, 1009)])
    posts = [{"subject": str(1001 + 2 * i), "type": "above", "object": str(1002 + 2 * i)} for i in range(4)]
    outcomes = _race(project.pk, Actor(user=actor.user, device="tablet"), posts)
    assert [o[0] for o in outcomes] == ["ok"] * 4
    project.refresh_from_db()
    assert project.revision == 12
    assert list(project.revisions.values_list("number", flat=True)) == list(range(1, 13))


def test_the_same_batch_sent_twice_at_once_is_applied_once(project, actor):
    _require_postgres()
    import uuid

    from projects.record.sync import sync_batch

    batch = {
        "batch_id": str(uuid.uuid4()),
        "contexts": [{"uid": str(uuid.uuid4()), "label": label, "kind": "deposit"} for label in ("1001", "1002")],
        "relationships": [{"uid": str(uuid.uuid4()), "subject": "1001", "type": "above", "object": "1002"}],
    }
    barrier = threading.Barrier(2)
    answers = [None, None]

    def run(index):
        try:
            fresh = Project.objects.get(pk=project.pk)
            barrier.wait(timeout=10)
            answers[index] = sync_batch(fresh, actor, **batch)
        except Exception as exc:  # noqa: BLE001 - the outcome is what is compared
            answers[index] = exc
        finally:
            connection.close()

    threads = [threading.Thread(target=run, args=(i,)) for i in range(2)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(timeout=30)
    assert answers[0] == answers[1] and isinstance(answers[0], dict), answers
    project.refresh_from_db()
    assert project.revision == 1
