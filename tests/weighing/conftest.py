"""A small invented site with two readings on the same evidence and one undecided uncertain relationship.

Built on the runs tests' site (seven contexts in one sequence, two phases,
determinations on the engine's labelled SYNTHETIC curve, a coin terminus post
quem): one more dated context, 2001, whose place above 1003 is recorded as
uncertain.  "Sequential" leaves that relationship undecided; "Contiguous"
accepts it and joins the two phases at one boundary.  Lab codes follow the
demo's invented VXL series.
"""

from __future__ import annotations

import copy

import pytest

from chronology.evidence import writes as evidence_writes
from chronology.interpretations import services as interpretations
from projects.record import writes
from tests.runs.conftest import _media, analyst_actor, build_site  # noqa: F401  (fixtures re-used)

#: Few, short stones: enough to exercise the path, not to be precise.
QUICK = {"stones": 8, "draws": 60, "thin": 1, "warmup": 30, "repeats": 2}
QUICK_SAMPLING = {"chains": 2, "iterations": 1500, "warmup": 300}


def _commit(project, analyst, content, name):
    _interp, draft = interpretations.create_interpretation(project, analyst, name=name, content=content)
    return interpretations.commit(draft, analyst)


@pytest.fixture
def readings(project, actor, analyst_actor):  # noqa: F811
    built = build_site(project, actor, analyst_actor)
    extra = writes.add_context(project, actor, label="2001", kind="deposit", area="B").object
    rel = writes.add_relationship(project, actor, subject="2001", type="above", object="1003",
                                  certainty="uncertain").object
    sample = evidence_writes.add_sample(project, actor, context="2001", code="S4", material="charred grain",
                                        short_lived=True).object
    evidence_writes.add_determination(project, actor, sample="S4", lab_code="VXL-0905", cra=2280, cra_sigma=30,
                                      curve=built["curve"].pk)
    sequential = copy.deepcopy(built["content"])
    sequential["evidence"].append({"evidence": f"sample:{sample.id}", "use": "included", "outlier_prior": 0.05})
    sequential["uncertain"] = [{"relationship": rel.id, "decision": "undecided"}]
    contiguous = copy.deepcopy(sequential)
    contiguous["phases"][0]["to_next"] = {"arrangement": "contiguous"}
    contiguous["uncertain"] = [{"relationship": rel.id, "decision": "accepted"}]
    return {**built, "extra": extra, "uncertain": rel,
            "sequential": _commit(project, analyst_actor, sequential, "Sequential"),
            "contiguous": _commit(project, analyst_actor, contiguous, "Contiguous"),
            "first": interpretations.commit(built["draft"], analyst_actor)}
