"""The span-uniform prior on phase boundaries (Nicholls & Jones 2001).

Derivation (one phase).  Let the overall range be ``[L, U]``, ``R = U - L``,
and a phase with ``n`` member events between boundaries ``alpha <= beta``.
Generate, in three steps,

1. the span ``s ~ U(0, R)``;
2. the start ``alpha ~ U(L, U - s)`` and ``beta = alpha + s``;
3. the members ``theta_i ~ iid U(alpha, beta)``.

The change of variables ``(s, alpha) -> (alpha, beta)`` has unit Jacobian, so
the joint density is ``(1/R) (R - s)^-1 s^-n`` on ``L <= alpha <= theta_i <=
beta <= U``: the factor ``s^-n`` cancels the volume the members occupy, and
``(R - s)^-1`` the room left to place a phase of width ``s``; the span is
uniform by construction.  If the members also obey a partial order ``P`` their
volume is ``s^n e(P)/n!`` and only the constant changes.

Several phases linked in one chain (sequential or contiguous), with ``k``
distinct boundaries ``b_(1) <= ... <= b_(k)`` and total span
``S = b_(k) - b_(1)``: draw ``S ~ U(0, R)``, the first boundary
``~ U(L, U - S)``, the ``k - 2`` inner boundaries uniform inside the span
(ordered), then each phase's members uniform between its boundaries.  The
density is ``(R - S)^-1 S^-(k-2) prod_j (beta_j - alpha_j)^-n_j`` up to a
constant.  Contiguous chains of ``m`` phases have ``k = m + 1`` boundaries and
sequential ones ``k = 2m``, which gives the published exponents ``S^-(m-1)``
and ``S^-(2m-2)`` (Nicholls & Jones 2001).

Overlapping phases start a new chain.  When the beginnings of consecutive
chains are asserted in order (``beginning_j <= beginning_j+1``, as a version's
``overlapping`` arrangement compiles), the chains form one *group* and the
factor ``prod_j (R - S_j)^-1`` is replaced by ``1 / V(R - S_1, ..., R - S_m)``,
the volume of the ordered beginnings that keep every chain inside the range
(:mod:`chronology.engine.ordered_volume`, Steck 1971).  Then, generating each
``S_j ~ U(0, R)`` independently, the beginnings uniformly on that ordered set
and the rest as above gives exactly this density, so every span stays
uniform on ``[0, R]`` despite the asserted order (derivation in
``docs/statistics.md``).  Other cross-phase stratigraphic constraints still
make the spans only approximately uniform, which is why a prior-only run
should always be offered.

With ``prior="uniform"`` the boundaries carry no factor at all: the plain
order prior of Buck, Litton & Smith (1992), which lengthens phases (§4.2 of
our domain primer).

Interval priors (a phase's duration, the gap after it).  A version may give
a density ``f_p`` for the duration ``d_p = beta_p - alpha_p`` of some phases
(and ``g_q`` for the gap from a phase's close to the next beginning in a
sequence; :mod:`chronology.engine.interval_priors`).  The prior becomes

    pi(alpha, beta, theta)  ∝  pi_SU(alpha, beta, theta) prod_p f_p(d_p) prod_q g_q(gap_q),

the span-uniform prior tilted by the densities (an informative prior on
phase parameters in the sense of Buck, Cavanagh & Litton 1996).  What this
does follows from the construction above.  For a lone phase (a chain of one
phase, or one phase of an overlapping group) the span-uniform prior makes
the span uniform on ``[0, R]`` and independent of where the phase sits, so
the product gives the duration the density ``f(d) 1[0 < d < R] / F`` with
``F = ∫_0^R f``: exactly ``f`` truncated to ``[0, R]``, with the beginning
still uniform on the room left and the members uniform inside.  In a chain
the span-uniform prior draws the total span ``S ~ U(0, R)`` and splits it
exchangeably (Dirichlet(1, ..., 1) over the phases' lengths and gaps).
Integrating out the members and the first boundary (its room ``R - S``
cancels the factor ``(R - S)^-1``), the chain's lengths and gaps
``l_1 .. l_(k-1)`` have the density ``S^-(k-2)`` on ``{l_i >= 0, S < R}``,
which is what makes ``S`` uniform; the factors tilt it to

    S^-(k-2) prod_i f_i(l_i)    (f_i = 1 for a length without a prior),

so the lengths are *not* marginally ``f_i`` in a chain: the factor
``S^-(k-2)`` still favours short chains (for three phases in sequence,
``S^-4``), and a prior-only run shows what the combination implies.  Lengths
drawn independently from ``f_i``, as a simulation might, would need that
factor removed as well (measured in ``docs/statistics.md``).  The
densities are untempered in a power posterior (they are prior), so the
stepping-stone estimate of the marginal likelihood is the one under the
normalised product.  With ``prior="uniform"`` the factors multiply the
plain order prior instead.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from chronology.engine.interval_priors import distribution_code, interval_log_density
from chronology.engine.model import Model
from chronology.engine.ordered_volume import log_ordered_volume

__all__ = [
    "PriorStructure",
    "prior_structure",
    "log_prior",
    "group_log_volume",
    "log_interval_factors",
    "log_one_phase_prior",
    "sample_one_phase_prior",
]


@dataclass(frozen=True, eq=False)
class PriorStructure:
    """The boundary prior flattened to index arrays over the model's events.

    ``phase_start``/``phase_end``/``phase_n``: per phase, event indices of the
    boundaries and its member count.  ``block_first``/``block_last``/``block_k``:
    per chain of linked phases, the indices of its first and last boundary and
    its number of distinct boundaries.  ``group_ptr``/``group_blocks``: per
    group of chains with ordered beginnings, its chains in order (CSR);
    ``block_group`` the group of each chain.  ``interval_earlier``/
    ``interval_later``/``interval_code``/``interval_p1``/``interval_p2``: per
    interval prior, the two events, the family's code and its parameters
    (:mod:`chronology.engine.interval_priors`).  ``active`` is False when the
    boundaries carry no factor (the uniform prior without interval priors);
    with the uniform prior the span-uniform arrays are empty (no chains, no
    member counts) so only the interval factors remain.
    """

    active: bool
    range_width: float
    phase_start: np.ndarray
    phase_end: np.ndarray
    phase_n: np.ndarray
    block_first: np.ndarray
    block_last: np.ndarray
    block_k: np.ndarray
    block_group: np.ndarray
    group_ptr: np.ndarray
    group_blocks: np.ndarray
    interval_earlier: np.ndarray
    interval_later: np.ndarray
    interval_code: np.ndarray
    interval_p1: np.ndarray
    interval_p2: np.ndarray


def prior_structure(model: Model) -> PriorStructure:
    """Flatten the boundary prior of ``model`` for fast evaluation.

    Parameters
    ----------
    model : Model
        A compiled model; its phases are taken in order, a chain continuing
        while ``arrangement_next`` is ``sequential`` or ``contiguous``.

    Returns
    -------
    PriorStructure
    """
    index = {k: i for i, k in enumerate(model.event_keys)}
    ps, pe, pn = [], [], []
    bf, bl, bk = [], [], []
    link: list = []  # per chain: its last phase's link to the next chain
    chain: list = []

    def close(chain):
        if not chain:
            return
        keys = []
        for p in chain:
            for k in (p.start, p.end):
                if k not in keys:
                    keys.append(k)
        bf.append(index[chain[0].start])
        bl.append(index[chain[-1].end])
        bk.append(len(keys))
        link.append(chain[-1].arrangement_next)

    for p in model.phases:
        ps.append(index[p.start])
        pe.append(index[p.end])
        pn.append(len(p.members))
        chain.append(p)
        if p.arrangement_next not in ("sequential", "contiguous"):
            close(chain)
            chain = []
    close(chain)
    # chains whose beginnings are asserted in order form one group
    ordered = {(c.earlier, c.later) for c in model.constraints}
    keys = model.event_keys
    groups: list[list[int]] = []
    for b in range(len(bf)):
        if b > 0 and link[b - 1] == "overlapping" and (keys[bf[b - 1]], keys[bf[b]]) in ordered:
            groups[-1].append(b)
        else:
            groups.append([b])
    block_group = [0] * len(bf)
    gptr = [0]
    for g, members in enumerate(groups):
        for b in members:
            block_group[b] = g
        gptr.append(gptr[-1] + len(members))
    as_int = lambda v: np.asarray(v, dtype=np.int64)  # noqa: E731
    if model.prior != "span-uniform":
        # the plain order prior: no span factors, only interval priors (if any)
        pn = [0] * len(pn)
        bf, bl, bk, block_group, gptr, groups = [], [], [], [], [0], []
    ivs = model.interval_priors
    return PriorStructure(
        active=(model.prior == "span-uniform" or bool(ivs)),
        range_width=float(model.range_hi - model.range_lo),
        phase_start=as_int(ps),
        phase_end=as_int(pe),
        phase_n=as_int(pn),
        block_first=as_int(bf),
        block_last=as_int(bl),
        block_k=as_int(bk),
        block_group=as_int(block_group),
        group_ptr=as_int(gptr),
        group_blocks=as_int([b for g in groups for b in g]),
        interval_earlier=as_int([index[p.earlier] for p in ivs]),
        interval_later=as_int([index[p.later] for p in ivs]),
        interval_code=as_int([distribution_code(p.distribution) for p in ivs]),
        interval_p1=np.array([p.parameters[0] for p in ivs], dtype=float),
        interval_p2=np.array([p.parameters[1] for p in ivs], dtype=float),
    )


def log_prior(structure: PriorStructure, x: np.ndarray) -> float:
    """Log of the boundary prior factor (up to a constant) at state ``x``.

    Parameters
    ----------
    structure : PriorStructure
    x : numpy.ndarray
        Values of every event, in model order.

    Returns
    -------
    float
        ``-inf`` where a span is not positive, a chain spans the whole range
        or an interval lies outside its prior's support.
    """
    if not structure.active:
        return 0.0
    total = 0.0
    R = structure.range_width
    for a, b, n in zip(structure.phase_start, structure.phase_end, structure.phase_n):
        s = x[b] - x[a]
        if s <= 0.0 and n > 0:
            return -np.inf
        if n > 0:
            total -= n * np.log(s)
    for f, l, k in zip(structure.block_first, structure.block_last, structure.block_k):
        S = x[l] - x[f]
        if S <= 0.0 or S >= R:
            return -np.inf
        total -= (k - 2) * np.log(S)
    for g in range(len(structure.group_ptr) - 1):
        total -= group_log_volume(structure, g, x)
    total += log_interval_factors(structure, x)
    return float(total)


def log_interval_factors(structure: PriorStructure, x: np.ndarray) -> float:
    """Sum of the interval priors' log densities at state ``x`` (0 without any)."""
    total = 0.0
    for a, b, c, p1, p2 in zip(structure.interval_earlier, structure.interval_later, structure.interval_code,
                               structure.interval_p1, structure.interval_p2):
        total += interval_log_density(float(x[b] - x[a]), int(c), float(p1), float(p2))
    return float(total)


def group_log_volume(structure: PriorStructure, g: int, x: np.ndarray) -> float:
    """Log volume of the ordered beginnings group ``g`` leaves room for at state ``x``."""
    blocks = structure.group_blocks[structure.group_ptr[g]:structure.group_ptr[g + 1]]
    R = structure.range_width
    rooms = np.array([R - (x[structure.block_last[b]] - x[structure.block_first[b]]) for b in blocks])
    return float(log_ordered_volume(rooms, R))


def log_one_phase_prior(alpha: float, beta: float, n: int, lo: float, hi: float) -> float:
    """Log density ``-log R - log(R - s) - n log s`` of one phase's boundaries.

    Normalised over ``L <= alpha <= theta_i <= beta <= U`` jointly with the
    ``n`` member events (Nicholls & Jones 2001).
    """
    R = hi - lo
    s = beta - alpha
    if not (lo <= alpha < beta <= hi) or s >= R:
        return -np.inf
    return float(-np.log(R) - np.log(R - s) - n * np.log(s))


def sample_one_phase_prior(n: int, lo: float, hi: float, size: int, rng: np.random.Generator):
    """Exact draws from the one-phase span-uniform prior by its three-step construction.

    Returns
    -------
    (alpha, beta, theta) : numpy.ndarray
        Shapes ``(size,)``, ``(size,)`` and ``(size, n)``.
    """
    R = hi - lo
    s = rng.uniform(0.0, R, size)
    alpha = lo + rng.uniform(0.0, 1.0, size) * (R - s)
    beta = alpha + s
    theta = alpha[:, None] + rng.uniform(0.0, 1.0, (size, n)) * s[:, None]
    return alpha, beta, theta
