"""A terminus without outlier chance bounds its event at the exact year, inside the grid cell."""

import numpy as np

from chronology.engine.evidence_likelihoods import terminus_ante_quem, terminus_post_quem
from chronology.engine.grid import CalendarGrid
from chronology.engine.model_compiler import EvidenceInput, PhaseInput, compile_model
from chronology.engine.sampler import chain_seeds, run_chain

GRID = CalendarGrid(0.0, 1.0, 201)  # cells centred on whole years


def _draws(kind, year):
    fn = terminus_post_quem if kind == "tpq" else terminus_ante_quem
    ll = -0.5 * ((GRID.years - year) / 3.0) ** 2  # a date near the bound, so draws crowd it
    evidence = [EvidenceInput("d", "a", ll), EvidenceInput("t", "a", fn(GRID, year).log_values, kind=kind, bound=year)]
    model = compile_model(GRID, phases=[PhaseInput("P", ("a",))], order=[], evidence=evidence,
                          range_lo=0.0, range_hi=200.0)
    r = run_chain(model, chain_seeds(3, 1)[0], iterations=4000, warmup=200)
    return r.draws[:, model.event_keys.index("ctx:a")]


def test_no_draw_precedes_a_terminus_post_quem_inside_its_cell():
    v = _draws("tpq", 100.3)
    assert v.min() >= 100.3
    # the part of the cell after the year is still used
    assert np.any(v < 100.5)


def test_no_draw_follows_a_terminus_ante_quem_inside_its_cell():
    v = _draws("taq", 99.6)
    assert v.max() <= 99.6 and np.any(v > 99.5)
