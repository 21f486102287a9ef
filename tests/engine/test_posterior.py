"""Posterior summaries and the posterior plot."""

import numpy as np
import pytest
from scipy import stats

from chronology.engine.diagnostics import diagnose, stack_chains, to_inference_data
from chronology.engine.grid import CalendarGrid
from chronology.engine.model_compiler import EvidenceInput, PhaseInput, QuestionInput, compile_model
from chronology.engine.posterior import CAUTION, question_draws, summarise
from chronology.engine.sampler import run_chains

GRID = CalendarGrid(-600.0, 1.0, 801)


def normal_ll(mu, sigma=25.0):
    return -0.5 * ((GRID.years - mu) / sigma) ** 2


@pytest.fixture(scope="module")
def run():
    ev = [
        EvidenceInput("VXL-0101", 1001, normal_ll(-300), outlier_prior=0.05, outlier_loglik=normal_ll(-300, 200) - np.log(8)),
        EvidenceInput("VXL-0102", 1002, normal_ll(-250)),
        EvidenceInput("VXL-0103", 1003, normal_ll(-100)),
    ]
    m = compile_model(GRID, phases=[PhaseInput("A", (1001, 1002), "sequential", "Ditch"), PhaseInput("B", (1003,), None, "Pit")],
                      order=[], evidence=ev, undated=[1004], range_lo=-600.0, range_hi=200.0,
                      questions=[QuestionInput("duration", "A"), QuestionInput("gap", 1001, 1003),
                                 QuestionInput("precedence", 1001, 1002)])
    res = run_chains(m, entropy=21, n_chains=4, iterations=3000, warmup=300)
    dates, outl = stack_chains(res)
    q = question_draws(m, dates)
    idata = to_inference_data(dates, m.event_keys, outl, res[0].evidence_keys, q, [x.key for x in m.questions])
    report = diagnose(idata, probability_questions=[x.key for x in m.questions if x.kind == "precedence"])
    s = summarise(m, dates, outl, evidence_keys=res[0].evidence_keys, curves=["synthetic test curve v1"],
                  run_id="run-7", diagnostics=report)
    return m, dates, s


def test_summary_names_curve_prior_run_methods_and_caution(run):
    _, _, s = run
    assert s.curves == ("synthetic test curve v1",) and s.run_id == "run-7"
    assert s.prior == "span-uniform" and "Nicholls & Jones 2001" in s.prior_text
    assert s.caution == CAUTION and "qualified specialist" in s.caution
    assert any("Neal 2003" in x for x in s.methods)


def test_event_density_sums_to_one_and_hpd_nests(run):
    _, _, s = run
    for e in s.events:
        assert e.density.sum() == pytest.approx(1.0)
        outer = e.hpd[0.954]
        for r in e.hpd[0.683]:
            assert any(o.start <= r.start and r.end <= o.end for o in outer)


def test_median_is_given_on_three_scales(run):
    _, _, s = run
    e = next(x for x in s.events if x.key == "ctx:1003")
    assert e.median_cal_bp == pytest.approx(1950 - e.median)
    assert e.median_text.endswith("cal BC")  # about -100 astronomical, i.e. 101 BC
    assert all(t.endswith("cal BP") for t in e.hpd_text_bp[0.954])


def test_undated_event_is_marked_as_order_only(run):
    _, _, s = run
    e = next(x for x in s.events if x.key == "ctx:1004")
    assert e.estimated_from_order_only and e.likelihood is None


def test_hpd_of_a_single_dated_event_is_about_two_sigma():
    # a lone event under a uniform prior has posterior N(mu, sigma): 95.4% range mu +- 2 sigma
    m = compile_model(GRID, phases=[], order=[], evidence=[EvidenceInput("VXL-0150", 1, normal_ll(-200))],
                      range_lo=-600.0, range_hi=200.0)
    dates, _ = stack_chains(run_chains(m, entropy=4, n_chains=2, iterations=20000, warmup=10))
    (r,) = summarise(m, dates).events[0].hpd[0.954]
    assert r.start == pytest.approx(-250, abs=4) and r.end == pytest.approx(-150, abs=4)


def test_order_probability_of_independent_events_matches_the_normal_cdf():
    # P(a < b) = Phi((mu_b - mu_a)/(sigma sqrt 2)) for independent normal dates (scipy.stats.norm)
    m = compile_model(GRID, phases=[], order=[],
                      evidence=[EvidenceInput("VXL-0160", "a", normal_ll(-200)), EvidenceInput("VXL-0161", "b", normal_ll(-180))],
                      range_lo=-600.0, range_hi=200.0, questions=[QuestionInput("precedence", "a", "b")])
    dates, _ = stack_chains(run_chains(m, entropy=6, n_chains=2, iterations=20000, warmup=10))
    (q,) = summarise(m, dates).questions
    assert abs(q.mean - stats.norm.cdf(20 / (25 * np.sqrt(2)))) < 4 * q.mcse


def test_span_and_interval_questions_are_summarised(run):
    m, dates, s = run
    span = next(q for q in s.questions if q.kind == "duration")
    assert span.mean > 0 and span.hpd[0.954][0].start >= 0
    interval = next(q for q in s.questions if q.kind == "gap")
    assert interval.mean == pytest.approx(dates[..., m.event_keys.index("ctx:1003")].mean()
                                          - dates[..., m.event_keys.index("ctx:1001")].mean())


def test_outlier_posterior_is_shown_beside_its_prior(run):
    _, _, s = run
    (o,) = s.outliers
    assert o.evidence_key == "VXL-0101" and o.event_key == "ctx:1001" and o.prior == 0.05
    assert 0.0 <= o.posterior < 0.2 and o.mcse >= 0


def test_no_reported_range_runs_past_a_terminus_post_quem():
    # a hard bound: the event is not before AD 260 (a coin), so no range may start earlier
    from chronology.engine.evidence_likelihoods import terminus_post_quem
    from chronology.engine.grid import CalendarGrid
    from chronology.engine.model_compiler import EvidenceInput, PhaseInput, compile_model
    from chronology.engine.posterior import summarise

    grid = CalendarGrid(0.0, 1.0, 1001)
    normal = -0.5 * ((grid.years - 255.0) / 40.0) ** 2
    model = compile_model(grid, phases=[PhaseInput("P", ("a",))], order=[],
                          evidence=[EvidenceInput("rc", "a", normal),
                                    EvidenceInput("coin", "a", terminus_post_quem(grid, 260.0).log_values,
                                                  kind="tpq")],
                          range_lo=0.0, range_hi=1000.0)
    res = run_chains(model, entropy=3031, n_chains=2, iterations=2000, warmup=300)
    draws = np.stack([r.draws for r in res])
    event = next(e for e in summarise(model, draws).events if e.key == "ctx:a")
    assert draws[..., model.event_keys.index("ctx:a")].min() >= 259.5
    assert all(r.start >= 259.5 for rs in event.hpd.values() for r in rs)
