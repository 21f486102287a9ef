"""Fixtures for the evidence tests: a stored synthetic curve and a few contexts."""

from __future__ import annotations

import numpy as np
import pytest

from chronology.engine.curves import Curve as EngineCurve
from chronology.engine.curves import curve_to_csv
from chronology.engine.synthetic_curve import synthetic_curve
from chronology.evidence import curves as stored_curves
from chronology.evidence.curves import import_curve
from projects.record import writes as record_writes

#: A short stretch of the engine's synthetic curve keeps the tests fast.
EXTENT = dict(start_bp=0.0, end_bp=6000.0, step=5.0)


@pytest.fixture(autouse=True)
def _fresh_curve_cache():
    stored_curves.forget()
    yield
    stored_curves.forget()


def curve_text(**extent) -> str:
    return curve_to_csv(synthetic_curve(**(extent or EXTENT)))


@pytest.fixture
def engine_synthetic():
    return synthetic_curve(**EXTENT)


@pytest.fixture
def curve(db):
    """The synthetic curve as a global curve."""
    stored, _ = import_curve(curve_text())
    return stored


@pytest.fixture
def marine_curve(db):
    """An invented marine-like curve: the synthetic one 400 radiocarbon years older."""
    base = synthetic_curve(**EXTENT)
    shifted = EngineCurve(name="TEST-MARINE-SYNTHETIC", citation="test curve", licence="test only",
                          cal_bp=base.cal_bp, c14_bp=np.round(base.c14_bp + 400.0, 1), sigma=base.sigma,
                          synthetic=True)
    stored, _ = import_curve(curve_to_csv(shifted))
    return stored


@pytest.fixture
def contexts(project, actor):
    """Contexts of the demo site, enough for samples and termini."""
    out = {}
    for label, kind in [("1011", "fill"), ("1015", "fill"), ("1021", "fill"), ("3031", "fill"), ("3041", "timber")]:
        out[label] = record_writes.add_context(project, actor, label=label, kind=kind, area="A").object
    return out


def url(code: str, *parts) -> str:
    tail = "/".join(str(p) for p in parts)
    return f"/api/v1/projects/{code}/{tail}/"
