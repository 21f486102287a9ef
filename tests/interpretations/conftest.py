"""A small record with known alternatives, and helpers to drive interpretations through the API."""

from __future__ import annotations

import pytest

from chronology.interpretations import services
from projects.models import Role
from projects.record.changes import Actor
from tests.api.conftest import url
from tests.record.helpers import add_contexts, relate

LABELS = ["101", "102", "103", "104", "105", "106", "107", "108"]


@pytest.fixture
def small(project, actor):
    """Eight contexts, one certain same-as and four undecidable items.

    101 natural; 102 above 101; 103 cuts 102; 104 fills 103; 105 above 104;
    106 above 102; 107 above 106; 108 same as 106 (certain).  Undecided by
    default: e1 = 104 contemporary with 106 (uncertain), e4 = 107 contemporary
    with 104 (uncertain), e3 = 105 contemporary with 102 (uncertain; 105 lies
    strictly above 102, so it contradicts the record on its own); u1 = 105
    above 106 is an uncertain ordering (accepted unless decided otherwise).
    e1 and e4 together make 107 equal to 106, which it lies above: a conflict.
    """
    ctx = add_contexts(project, actor, LABELS)
    rels = {
        "102>101": relate(project, actor, "102", "above", "101"),
        "103>102": relate(project, actor, "103", "cuts", "102"),
        "104>103": relate(project, actor, "104", "fills", "103"),
        "105>104": relate(project, actor, "105", "above", "104"),
        "106>102": relate(project, actor, "106", "above", "102"),
        "107>106": relate(project, actor, "107", "above", "106"),
        "108=106": relate(project, actor, "108", "same_as", "106"),
        "e1": relate(project, actor, "104", "contemporary_with", "106", certainty="uncertain"),
        "e4": relate(project, actor, "107", "contemporary_with", "104", certainty="uncertain"),
        "e3": relate(project, actor, "105", "contemporary_with", "102", certainty="uncertain"),
        "u1": relate(project, actor, "105", "above", "106", certainty="uncertain"),
    }
    project.refresh_from_db()
    return {"contexts": ctx, "ids": {k: v.id for k, v in ctx.items()}, "rels": {k: v.id for k, v in rels.items()},
            "project": project}


def phased_content(small, **extra) -> dict:
    """Three phases; contexts named by label, as an analyst would send them."""
    doc = {
        "phases": [
            {"key": "early", "name": "Early", "to_next": {"arrangement": "sequential", "min_gap": 10}},
            {"key": "middle", "name": "Middle", "to_next": {"arrangement": "contiguous"}},
            {"key": "late", "name": "Late"},
        ],
        "assignments": [{"context": c, "phase": p} for c, p in [
            ("101", "early"), ("102", "early"), ("103", "middle"), ("104", "middle"), ("106", "middle"),
            ("107", "middle"), ("108", "middle"), ("105", "late")]],
    }
    doc.update(extra)
    return doc


@pytest.fixture
def analyst_actor(users):
    return Actor(user=users[Role.ANALYST], device="test")


@pytest.fixture
def manager_actor(users):
    return Actor(user=users[Role.MANAGER], device="test")


@pytest.fixture
def draft(small, analyst_actor):
    """Version 1 of interpretation "Main", a valid draft."""
    _interp, version = services.create_interpretation(small["project"], analyst_actor, name="Main",
                                                      content=phased_content(small))
    return version


def vurl(*parts) -> str:
    return url("VML24", "versions", *parts)


def iurl(*parts) -> str:
    return url("VML24", "interpretations", *parts)
