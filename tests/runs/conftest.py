"""A small invented site built through the write paths, and helpers for runs.

Seven contexts in one sequence (1001 at the bottom, 1007 at the top), two
phases, radiocarbon determinations measured against the engine's labelled
SYNTHETIC curve, a coin terminus post quem and one undated context to
estimate.  Lab codes follow the demo's invented VXL series.
"""

from __future__ import annotations

import pytest

from chronology.engine.curves import curve_to_csv
from chronology.engine.synthetic_curve import synthetic_curve
from chronology.evidence import writes as evidence_writes
from chronology.evidence.curves import forget as forget_curves
from chronology.evidence.curves import import_curve
from chronology.interpretations import services as interpretations
from projects.models import Role
from projects.record import writes
from projects.record.changes import Actor

LABELS = ["1001", "1002", "1003", "1004", "1005", "1006", "1007"]


@pytest.fixture(autouse=True)
def _media(settings, tmp_path):
    settings.MEDIA_ROOT = tmp_path / "media"
    forget_curves()
    yield
    forget_curves()


@pytest.fixture
def analyst_actor(users):
    return Actor(user=users[Role.ANALYST], device="test desk")


def build_site(project, actor, analyst):
    """The record, its evidence and an interpretation draft; returns ids by label."""
    ctx = {label: writes.add_context(project, actor, label=label, kind="deposit", area="A").object
           for label in LABELS}
    for lower, upper in zip(LABELS, LABELS[1:]):
        writes.add_relationship(project, actor, subject=upper, type="above", object=lower)
    curve, _ = import_curve(curve_to_csv(synthetic_curve(0, 6000)))
    s1 = evidence_writes.add_sample(project, actor, context="1001", code="S1", material="charred grain",
                                    short_lived=True).object
    s2 = evidence_writes.add_sample(project, actor, context="1003", code="S2", material="animal bone",
                                    short_lived=True).object
    s3 = evidence_writes.add_sample(project, actor, context="1006", code="S3", material="charred grain",
                                    short_lived=True).object
    d1 = evidence_writes.add_determination(project, actor, sample="S1", lab_code="VXL-0901", cra=2450, cra_sigma=30,
                                           curve=curve.pk).object
    d2 = evidence_writes.add_determination(project, actor, sample="S1", lab_code="VXL-0902", cra=2410, cra_sigma=35,
                                           curve=curve.pk).object
    d3 = evidence_writes.add_determination(project, actor, sample="S2", lab_code="VXL-0903", cra=2300, cra_sigma=30,
                                           curve=curve.pk).object
    d4 = evidence_writes.add_determination(project, actor, sample="S3", lab_code="VXL-0904", cra=2150, cra_sigma=30,
                                           curve=curve.pk).object
    coin = evidence_writes.add_terminus(project, actor, context="1005", kind="post_quem", year=-300.0,
                                        find="SF 1005.1 invented coin").object
    content = {
        "phases": [
            {"key": "early", "name": "Early", "to_next": {"arrangement": "sequential"}},
            {"key": "late", "name": "Late"},
        ],
        "assignments": [{"context": ctx[c].id, "phase": "early"} for c in ("1001", "1002", "1003")]
        + [{"context": ctx[c].id, "phase": "late"} for c in ("1005", "1006")],
        "evidence": [
            {"evidence": f"sample:{s1.id}", "use": "included", "outlier_prior": 0.05},
            {"evidence": f"determination:{d3.id}", "use": "included", "outlier_prior": 0.05},
            {"evidence": f"sample:{s3.id}", "use": "included", "outlier_prior": 0.05},
            {"evidence": f"terminus:{coin.id}", "use": "included", "outlier_prior": 0},
        ],
        "estimate": [ctx["1004"].id],
        "questions": [
            {"kind": "duration", "phase": "early"},
            {"kind": "precedence", "earlier": f"context:{ctx['1003'].id}", "later": f"context:{ctx['1006'].id}"},
            {"kind": "gap", "from": "phase:early:close", "to": "phase:late:beginning"},
        ],
    }
    _interp, version = interpretations.create_interpretation(project, analyst, name="Two phases", content=content)
    return {"contexts": ctx, "samples": (s1, s2, s3), "determinations": (d1, d2, d3, d4), "coin": coin,
            "curve": curve, "draft": version, "content": content}


@pytest.fixture
def site(project, actor, analyst_actor):
    built = build_site(project, actor, analyst_actor)
    built["version"] = interpretations.commit(built["draft"], analyst_actor)
    return built


def commit_content(project, analyst, content, name):
    _interp, draft = interpretations.create_interpretation(project, analyst, name=name, content=content)
    return interpretations.commit(draft, analyst)


SMALL = {"chains": 2, "iterations": 400, "warmup": 100, "thin": 1, "converge": False}
