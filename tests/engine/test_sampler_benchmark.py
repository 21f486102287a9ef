"""The sampler benchmark's radiocarbon case has curve likelihoods and order inside its phases."""

from __future__ import annotations

import numpy as np

from chronology.benchmarks.sampler import radiocarbon_model


def test_radiocarbon_case_orders_members_inside_each_phase():
    model = radiocarbon_model()
    inside = [(c.earlier, c.later) for c in model.constraints
              if c.earlier.startswith("ctx:") and c.later.startswith("ctx:")]
    # two stacks of four members per phase: three order constraints each, six per phase
    assert len(inside) == 18
    phase = {e.key: e.phase for e in model.events}
    assert all(phase[a] == phase[b] for a, b in inside)


def test_radiocarbon_case_likelihoods_come_through_the_curve():
    model = radiocarbon_model()
    dated = [e for e in model.events if e.kind == "dated"]
    assert len(dated) == 24
    # a normal log-likelihood on a regular grid has constant second differences; one calibrated
    # through the wiggly synthetic curve has not
    ll = dated[0].evidence[0].loglik
    near = ll[ll > ll.max() - 8]
    assert np.ptp(np.diff(near, 2)) > 1e-3
