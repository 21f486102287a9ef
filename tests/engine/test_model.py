"""Compiled model: structure, JSON schema, hashing and refusals."""

import jsonschema
import numpy as np
import pytest

from chronology.engine.errors import ModelError
from chronology.engine.grid import CalendarGrid
from chronology.engine.model import MODEL_JSON_SCHEMA, Model
from chronology.engine.model_compiler import EvidenceInput, PhaseInput, QuestionInput, compile_model

GRID = CalendarGrid(-600.0, 1.0, 601)


def normal_ll(mu, sigma=25.0):
    return -0.5 * ((GRID.years - mu) / sigma) ** 2


def small_model(**kw):
    evidence = [
        EvidenceInput("VXL-0101", 1001, normal_ll(-400), outlier_prior=0.05, outlier_loglik=normal_ll(-400, 250)),
        EvidenceInput("VXL-0102", 1002, normal_ll(-350)),
        EvidenceInput("VXL-0103", 1003, normal_ll(-200), usage="residual"),
        EvidenceInput("VXL-0104", 1003, normal_ll(-100), usage="excluded"),
        EvidenceInput("VXL-0105", 1004, normal_ll(-150)),
    ]
    phases = [PhaseInput("A", (1001, 1002), "contiguous", "Ditch"), PhaseInput("B", (1003, 1004), None, "Pit")]
    args = dict(phases=phases, order=[(1001, 1002, True), (1003, 1004, True)], evidence=evidence,
                range_lo=-600.0, range_hi=0.0, undated=[1005],
                questions=[QuestionInput("duration", "A"), QuestionInput("precedence", 1002, 1004)])
    args.update(kw)
    return compile_model(GRID, **args)


def test_contiguous_phases_share_one_boundary():
    m = small_model()
    assert m.phase("A").end == m.phase("B").start == "changeover:A:B"


def test_residual_sample_becomes_an_offset_event_older_than_its_context():
    m = small_model()
    e = m.event("sample:VXL-0103")
    assert e.offset_of == "ctx:1003" and e.offset_direction == "older"
    assert any(c.earlier == "sample:VXL-0103" and c.later == "ctx:1003" for c in m.constraints)
    assert m.event("ctx:1003").kind == "undated"


def test_excluded_evidence_is_recorded_but_not_used():
    m = small_model()
    assert m.excluded_evidence == ("VXL-0104",)
    assert all(t.key != "VXL-0104" for _, t in m.evidence)


def test_undated_context_is_an_undated_event():
    assert small_model().event("ctx:1005").kind == "undated"


def test_json_round_trip_keeps_the_hash():
    m = small_model()
    back = Model.from_json(m.to_json())
    assert back.spec_hash() == m.spec_hash()
    assert np.array_equal(back.event("ctx:1001").evidence[0].loglik, m.event("ctx:1001").evidence[0].loglik)


def test_json_validates_against_the_schema():
    # reference validator: jsonschema (Draft 2020-12)
    import json

    jsonschema.Draft202012Validator.check_schema(MODEL_JSON_SCHEMA)
    jsonschema.validate(json.loads(small_model().to_json()), MODEL_JSON_SCHEMA,
                        cls=jsonschema.Draft202012Validator)


def test_zero_likelihood_is_written_as_null():
    ll = normal_ll(-300)
    ll[:10] = -np.inf
    m = compile_model(GRID, phases=[], order=[], evidence=[EvidenceInput("VXL-0110", 1, ll)],
                      range_lo=-600.0, range_hi=0.0)
    back = Model.from_json(m.to_json())
    assert np.isneginf(back.events[0].evidence[0].loglik[:10]).all()


def test_hash_changes_when_the_evidence_changes():
    a = small_model()
    b = small_model(range_lo=-590.0)
    assert a.spec_hash() != b.spec_hash()
    assert len(a.spec_hash()) == 64


def test_cycle_is_refused_with_its_path():
    with pytest.raises(ModelError) as err:
        small_model(order=[(1001, 1002, True), (1002, 1001, True)])
    assert err.value.code == "model-cycle"
    assert err.value.details["cycle"][0] == err.value.details["cycle"][-1]


def test_model_without_evidence_is_refused():
    with pytest.raises(ModelError) as err:
        compile_model(GRID, phases=[PhaseInput("A", (1, 2))], order=[], evidence=[],
                      range_lo=-600.0, range_hi=0.0)
    assert err.value.code == "no-evidence"


def test_prior_only_model_needs_no_evidence():
    m = compile_model(GRID, phases=[PhaseInput("A", (1, 2))], order=[], evidence=[],
                      range_lo=-600.0, range_hi=0.0, prior_only=True)
    assert {e.kind for e in m.events} == {"boundary", "undated"}


def test_likelihood_outside_the_allowed_range_is_refused():
    ll = np.full(GRID.n, -np.inf)
    ll[-5:] = 0.0  # only -4 .. 0 possible
    issue = np.full(GRID.n, -np.inf)
    issue[50:150] = 0.0  # a uniform issue period -550 .. -451, which must be later
    with pytest.raises(ModelError) as err:
        compile_model(GRID, phases=[], order=[(1, 2, True)],
                      evidence=[EvidenceInput("VXL-0120", 1, ll), EvidenceInput("VXL-0121", 2, issue, kind="calendar")],
                      range_lo=-600.0, range_hi=0.0)
    assert err.value.code == "empty-support"
