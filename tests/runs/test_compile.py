"""Translation of a committed version into the engine's model."""

from __future__ import annotations

import hashlib
import json

import numpy as np
import pytest

from chronology.runs.compile import OUTLIER_SIGMA_FACTOR, ModelRefused, compile_version

from .conftest import commit_content


def _by_key(model):
    return {e.key: e for e in model.events}


@pytest.mark.django_db
def test_order_comes_through_undated_contexts_of_the_whole_record(site):
    model = compile_version(site["version"]).model
    ids = {label: c.id for label, c in site["contexts"].items()}
    pairs = {(c.earlier, c.later) for c in model.constraints}
    # 1003 and 1005 are ordered only through 1004 (estimated) in the record
    assert (f"ctx:{ids['1003']}", f"ctx:{ids['1004']}") in pairs
    assert (f"ctx:{ids['1004']}", f"ctx:{ids['1005']}") in pairs
    # 1002 is phased but neither dated nor asked for: it is no event, yet it
    # still orders 1001 before 1003 through the record
    assert f"ctx:{ids['1002']}" not in {e.key for e in model.events}
    assert (f"ctx:{ids['1001']}", f"ctx:{ids['1003']}") in pairs


@pytest.mark.django_db
def test_phases_get_boundaries_and_a_sequential_link(site):
    model = compile_version(site["version"]).model
    assert [p.key for p in model.phases] == ["early", "late"]
    pairs = {(c.earlier, c.later) for c in model.constraints}
    assert ("close:early", "beginning:late") in pairs
    events = _by_key(model)
    assert events["beginning:early"].kind == "boundary"
    assert events[f"ctx:{site['contexts']['1004'].id}"].kind == "undated"


@pytest.mark.django_db
def test_two_determinations_on_one_sample_are_combined_before_calibration(site):
    compiled = compile_version(site["version"])
    s1 = site["samples"][0]
    row = next(r for r in compiled.evidence if r["key"] == f"sample:{s1.id}")
    # Ward & Wilson (1978): 2450±30 and 2410±35 give 2433±23, T = 0.75 (the primer's worked example)
    assert round(row["cra"]) == 2433 and round(row["sigma"]) == 23
    assert row["combination"]["consistent"] is True
    event = _by_key(compiled.model)[f"ctx:{site['contexts']['1001'].id}"]
    assert len(event.evidence) == 1


@pytest.mark.django_db
def test_outlier_component_is_the_same_evidence_with_a_broader_error(site):
    compiled = compile_version(site["version"])
    term = _by_key(compiled.model)[f"ctx:{site['contexts']['1006'].id}"].evidence[0]
    assert term.outlier_prior == pytest.approx(0.05)
    years = compiled.model.grid.years
    p_in, p_out = np.exp(term.loglik), np.exp(term.outlier_loglik)
    sd = lambda p: np.sqrt(np.sum(p * (years - np.sum(p * years) / p.sum()) ** 2) / p.sum())  # noqa: E731
    assert sd(p_out) > 3 * sd(p_in)
    assert OUTLIER_SIGMA_FACTOR == 10.0


@pytest.mark.django_db
def test_terminus_post_quem_cuts_the_likelihood_below_its_year(site):
    model = compile_version(site["version"]).model
    term = _by_key(model)[f"ctx:{site['contexts']['1005'].id}"].evidence[0]
    years = model.grid.years
    assert np.all(np.isneginf(term.loglik[years < -300]))
    assert np.all(np.isfinite(term.loglik[years >= -300]))


@pytest.mark.django_db
def test_model_hash_is_the_sha256_of_the_canonical_json(site):
    compiled = compile_version(site["version"])
    text = compiled.model.to_json()
    assert compiled.model_hash == hashlib.sha256(text.encode()).hexdigest()
    assert json.loads(text)["schema_version"] == 2
    # compiling again gives the same model
    assert compile_version(site["version"]).model_hash == compiled.model_hash


@pytest.mark.django_db
def test_the_run_names_the_curve_and_its_checksum(site):
    compiled = compile_version(site["version"])
    assert [c["checksum"] for c in compiled.curves] == [site["curve"].checksum]
    assert compiled.curves[0]["synthetic"] is True


@pytest.mark.django_db
def test_the_compiler_refuses_a_version_without_evidence(project, site, analyst_actor):
    content = dict(site["content"], evidence=[], questions=[])
    version = commit_content(project, analyst_actor, content, "No dates")
    with pytest.raises(ModelRefused) as err:
        compile_version(version)
    assert err.value.code == "no-evidence" and err.value.status == 422


@pytest.mark.django_db
def test_an_extra_ordering_against_the_record_is_refused_as_a_cycle(project, site, analyst_actor):
    ids = {label: c.id for label, c in site["contexts"].items()}
    content = dict(site["content"], orderings=[{"earlier": ids["1006"], "later": ids["1002"], "strict": True,
                                                "reason": "a wrong reading"}])
    version = commit_content(project, analyst_actor, content, "Cyclic")
    with pytest.raises(ModelRefused) as err:
        compile_version(version)
    assert err.value.code == "cycle" and err.value.status == 409
    assert {ids["1006"], ids["1002"]} <= set(err.value.details["contexts"])


def test_a_determination_outside_the_curve_is_refused():
    # the evidence write path already refuses such a determination, so this builds plain inputs
    from chronology.engine.record_data import ContextData
    from chronology.engine.synthetic_curve import synthetic_curve
    from chronology.engine.temporal_graph import OrderPolicy
    from chronology.runs.compile import Determination, EvidenceSet, ModelSpec, Sample, Usage, build_model

    evidence = EvidenceSet(samples={1: Sample(1, 1, "S1")},
                           determinations={1: Determination(1, "VXL-0999", 40000.0, 300.0, "c", 1, 1)},
                           curves={"c": synthetic_curve(0, 6000)})
    reading = ModelSpec(usages=[Usage("determination:1")], policy=OrderPolicy())
    with pytest.raises(ModelRefused) as err:
        build_model([ContextData(1, "1001")], [], reading, evidence)
    assert err.value.code == "outside-curve" and err.value.status == 422


@pytest.mark.django_db
def test_a_calendar_date_beyond_the_curve_is_refused(project, site, actor, analyst_actor):
    from chronology.evidence import writes as evidence_writes

    late = evidence_writes.add_calendar_date(project, actor, context="1007", kind="normal", mean=2080.0, sd=5.0,
                                             method="documentary").object
    evidence = site["content"]["evidence"] + [{"evidence": f"calendar_date:{late.id}", "use": "included",
                                               "outlier_prior": 0}]
    version = commit_content(project, analyst_actor, dict(site["content"], evidence=evidence), "Too late")
    with pytest.raises(ModelRefused) as err:
        compile_version(version)
    assert err.value.code == "evidence-outside-grid" and err.value.status == 422


@pytest.mark.django_db
def test_a_draft_is_not_modelled(site):
    with pytest.raises(ModelRefused) as err:
        compile_version(site["draft"].__class__.objects.create(
            interpretation=site["version"].interpretation, project=site["version"].project, number=99,
            record_revision=site["version"].record_revision, author=site["version"].author,
            content=site["version"].content))
    assert err.value.code == "version-not-committed"


@pytest.mark.django_db
def test_a_residual_sample_becomes_an_offset_event_earlier_than_its_context(project, site, analyst_actor):
    s3 = site["samples"][2]
    evidence = [dict(u) for u in site["content"]["evidence"]]
    for u in evidence:
        if u["evidence"] == f"sample:{s3.id}":
            u["use"] = "residual"
    version = commit_content(project, analyst_actor, dict(site["content"], evidence=evidence), "Residual S3")
    model = compile_version(version).model
    key = f"sample:sample:{s3.id}"
    ctx = f"ctx:{site['contexts']['1006'].id}"
    assert (key, ctx) in {(c.earlier, c.later) for c in model.constraints}
    assert _by_key(model)[ctx].kind == "undated"


@pytest.mark.django_db
def test_a_determination_used_alone_and_in_its_sample_is_refused(project, site, analyst_actor):
    d1 = site["determinations"][0]
    evidence = site["content"]["evidence"] + [{"evidence": f"determination:{d1.id}", "use": "included",
                                               "outlier_prior": 0}]
    version = commit_content(project, analyst_actor, dict(site["content"], evidence=evidence), "Twice")
    with pytest.raises(ModelRefused) as err:
        compile_version(version)
    assert err.value.code == "evidence-used-twice"


@pytest.mark.django_db
def test_contexts_the_record_makes_the_same_become_one_event(project, site, actor, analyst_actor):
    from projects.record import writes

    writes.add_context(project, actor, label="1003b", kind="deposit", area="A")
    writes.add_relationship(project, actor, subject="1003b", type="same_as", object="1003")
    ids = {label: c.id for label, c in site["contexts"].items()}
    from projects.models import Context

    twin = Context.objects.get(project=project, label="1003b").id
    content = dict(site["content"], estimate=[ids["1004"], twin])
    version = commit_content(project, analyst_actor, content, "Twins")
    model = compile_version(version).model
    keys = {e.key for e in model.events}
    assert f"ctx:{min(ids['1003'], twin)}" in keys and f"ctx:{max(ids['1003'], twin)}" not in keys
    assert "1003 and 1003b" in {e.label for e in model.events}


@pytest.mark.django_db
def test_contiguous_phases_share_a_boundary_that_questions_can_name(project, site, analyst_actor):
    phases = [{"key": "early", "name": "Early", "to_next": {"arrangement": "contiguous"}},
              {"key": "late", "name": "Late"}]
    version = commit_content(project, analyst_actor, dict(site["content"], phases=phases), "Contiguous")
    model = compile_version(version).model
    assert "changeover:early:late" in {e.key for e in model.events}
    interval = next(q for q in model.questions if q.kind == "gap")
    assert interval.a == interval.b == "changeover:early:late"


@pytest.mark.django_db
def test_overlapping_phases_keep_their_starts_in_order(project, site, analyst_actor):
    phases = [{"key": "early", "name": "Early", "to_next": {"arrangement": "overlapping"}},
              {"key": "late", "name": "Late"}]
    version = commit_content(project, analyst_actor, dict(site["content"], phases=phases), "Overlapping")
    model = compile_version(version).model
    pairs = {(c.earlier, c.later) for c in model.constraints}
    assert ("beginning:early", "beginning:late") in pairs and ("close:early", "beginning:late") not in pairs
