"""A version stored under the earlier question and boundary names still validates, keeps its hash and compiles.

Stored versions are immutable, so such a document is made as it would have
been stored before the names changed: committed through the services with
today's names, then its stored row rewritten to the earlier names (and the
hash taken of that stored document), below the ORM guard that refuses edits.
"""

from __future__ import annotations

import copy

import pytest
from django.db import connection

from chronology.interpretations.content import content_hash, validate
from chronology.interpretations.models import Version
from chronology.runs.compile import compile_version

pytestmark = pytest.mark.django_db

OLD_KIND = {"duration": "span", "gap": "interval", "precedence": "order"}
OLD_END = {"beginning": "start", "close": "end"}


def _old_names(content: dict) -> dict:
    old = copy.deepcopy(content)
    for q in old["questions"]:
        q["kind"] = OLD_KIND[q["kind"]]
        for field in ("from", "to"):
            if field in q and q[field].startswith("phase:"):
                head, key, end = q[field].split(":")
                q[field] = f"{head}:{key}:{OLD_END[end]}"
    return old


@pytest.fixture
def stored_with_old_names(site):
    version = site["version"]
    old = _old_names(version.content)
    assert {q["kind"] for q in old["questions"]} == {"span", "interval", "order"}
    with connection.cursor() as cursor:
        cursor.execute(f"UPDATE {Version._meta.db_table} SET content = %s::jsonb, content_hash = %s WHERE id = %s"
                       if connection.vendor == "postgresql" else
                       f"UPDATE {Version._meta.db_table} SET content = %s, content_hash = %s WHERE id = %s",
                       [_json(old), content_hash(old, version.record_revision), version.pk])
    return Version.objects.get(pk=version.pk), version


def _json(value) -> str:
    import json

    return json.dumps(value)


def test_a_version_stored_with_the_earlier_names_validates_to_the_current_ones(stored_with_old_names):
    old, current = stored_with_old_names
    assert validate(old.content) == validate(current.content)


def test_a_version_stored_with_the_earlier_names_keeps_its_hash(stored_with_old_names):
    old, _current = stored_with_old_names
    compile_version(old)  # reading it must not rewrite it
    again = Version.objects.get(pk=old.pk)
    assert again.content == old.content and again.content["questions"][0]["kind"] in OLD_KIND.values()
    assert content_hash(again.content, again.record_revision) == again.content_hash == old.content_hash


def test_a_version_stored_with_the_earlier_names_compiles_to_the_same_model(stored_with_old_names):
    old, current = stored_with_old_names
    assert compile_version(old).model_hash == compile_version(current).model_hash
    kinds = {q.kind for q in compile_version(old).model.questions}
    assert kinds == {"duration", "gap", "precedence"}
