"""Whole-site shift and scale moves keep the power posterior they act on.

Each check starts every draw from one fixed state, so only the moves act:
what they reach is then known exactly.
"""

from __future__ import annotations

import numpy as np
from scipy import stats

from chronology.engine.grid import CalendarGrid
from chronology.engine.model_compiler import EvidenceInput, PhaseInput, compile_model
from chronology.engine.sampler import flatten
from chronology.engine.whole_site_moves import whole_site_moves

L, U = 0.0, 400.0
R = U - L
GRID = CalendarGrid.spanning(L, U, 1.0)
SD = 15.0


def normal_ll(mu, sd=SD):
    return stats.norm.logpdf(GRID.years, mu, sd)


def test_from_one_shape_the_prior_span_of_a_phase_of_two_members_is_uniform():
    # one phase, two members, beta = 0: from a fixed shape the moves reach x = m + c (shape - m) at every
    # place; the span-uniform prior (1/R)(R - s)^-1 s^-2 (Nicholls & Jones 2001) times the room for the
    # place (R - s) times the radial measure s^(N - 2) = s^2 (N = 4 events) is flat: s ~ U(0, R) (analytic)
    ev = [EvidenceInput(f"e{i}", f"c{i}", normal_ll(m)) for i, m in enumerate((180.0, 220.0))]
    m = compile_model(GRID, phases=[PhaseInput("p", ("c0", "c1"))], order=[], evidence=ev, range_lo=L, range_hi=U)
    f = flatten(m)
    start = np.empty(f.n_events)
    for i, key in enumerate(f.event_keys):
        start[i] = {"beginning:p": 100.0, "close:p": 300.0, "ctx:c0": 150.0, "ctx:c1": 260.0}[key]
    draws = np.tile(start, (1000, 1))
    moved = whole_site_moves(f, 0.0, draws, np.zeros((1000, 0), dtype=np.int8), np.random.default_rng(4),
                             rounds=150)
    span = moved.draws[:, f.event_keys.index("close:p")] - moved.draws[:, f.event_keys.index("beginning:p")]
    assert stats.kstest(span, stats.uniform(0.0, R).cdf).pvalue > 0.001


def test_the_shift_of_one_tempered_event_gives_its_power_posterior():
    # one unphased event, uniform prior on [L, U], beta = 0.25: the power posterior is N(200, SD^2 / beta)
    # on [L, U] (analytic); every draw starts at 150 and only the uniform-proposal shift can move it
    m = compile_model(GRID, phases=[], order=[], evidence=[EvidenceInput("e", "c", normal_ll(200.0))],
                      range_lo=L, range_hi=U)
    f = flatten(m)
    moved = whole_site_moves(f, 0.25, np.full((1000, 1), 150.0), np.zeros((1000, 0), dtype=np.int8),
                             np.random.default_rng(5), rounds=80)
    sd = SD / np.sqrt(0.25)
    target = stats.truncnorm((L - 200.0) / sd, (U - 200.0) / sd, loc=200.0, scale=sd)
    # the grid likelihood is constant inside one-year cells: far too fine for 1000 draws to see
    assert stats.kstest(moved.draws[:, 0], target.cdf).pvalue > 0.001
