"""Labels that read the same are the same; a post costs the same queries at any project size."""

from __future__ import annotations

import uuid

import pytest
from django.db import connection

from projects.record import writes
from projects.record.sync import sync_batch
from projects.record.errors import RecordConflict, RecordInvalid
from tests.api.conftest import url
from tests.record.helpers import add_contexts

pytestmark = pytest.mark.django_db

#: Token, project with role, savepoint pair, lock, the two contexts, duplicate or inverse, insert,
#: then entries + states + revision + project head as one statement (PostgreSQL; four on SQLite),
#: token last-used stamp (measured; raise it only on purpose).
POST_QUERIES = 11 if connection.vendor == "postgresql" else 14


def test_full_width_digits_are_the_same_label_as_ascii_digits(project, actor):
    # NFKC folds U+FF11.. to ASCII digits (Unicode Standard Annex #15).
    add_contexts(project, actor, ["1001"])
    with pytest.raises(RecordConflict) as err:
        writes.add_context(project, actor, label="\uff11\uff10\uff10\uff11", kind="deposit")
    assert err.value.code == "duplicate-label"


@pytest.mark.parametrize("hidden", ["\u200b", "\u202e", "\x07"])
def test_a_label_with_an_invisible_character_is_refused_naming_the_field(project, actor, hidden):
    with pytest.raises(RecordInvalid) as err:
        writes.add_context(project, actor, label=f"10{hidden}01", kind="deposit")
    assert (err.value.field, err.value.code) == ("label", "invalid-character")


def test_the_api_refuses_a_zero_width_label_with_400(api, project):
    response = api.post(url("VML24", "contexts"), {"label": "10\u200b01", "kind": "deposit"}, format="json")
    assert response.status_code == 400
    assert response.json()["errors"][0]["field"] == "label"


def _post_costs(api, project, actor, n, django_assert_max_num_queries):
    labels = [f"{i:05d}" for i in range(n)]
    sync_batch(project, actor, batch_id=uuid.uuid4(),
               contexts=[{"label": label, "kind": "deposit", "area": "A"} for label in labels])
    api.post(url("VML24", "relationships"), {"subject": labels[-1], "type": "above", "object": labels[-2]},
             format="json")  # warms the order cache, as a running server has it
    with django_assert_max_num_queries(POST_QUERIES) as captured:
        response = api.post(url("VML24", "relationships"),
                            {"subject": labels[-1], "type": "above", "object": labels[-5]}, format="json")
    assert response.status_code == 201
    return len(captured)


@pytest.mark.parametrize("n", [100, 2000])
def test_one_relationship_post_costs_the_same_queries_at_any_size(api, project, actor, n,
                                                                  django_assert_max_num_queries):
    # The same ceiling at 100 and 2,000 contexts: the post's cost does not grow with the record.
    assert _post_costs(api, project, actor, n, django_assert_max_num_queries) == POST_QUERIES
