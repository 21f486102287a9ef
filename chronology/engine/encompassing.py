"""Many orderings weighed at once from one encompassing model (Klugkist, Kato & Hoijtink 2005).

A version that leaves ``k`` uncertain relationships undecided has ``2^k``
readings: each relationship accepted (its order constraints hold) or not
(it is left out).  Every reading's model is the *encompassing* model, the
one with all ``k`` left out, restricted to the set ``C_S`` where the
constraints of the accepted subset ``S`` hold.  The prior of a reading is
the encompassing prior truncated to ``C_S``, since an order constraint is
an indicator factor and changes no other part of the prior (the span-uniform
boundary prior depends only on phases and chains).  Then

    p(y | M_S) / p(y | M_enc) = P(theta in C_S | y, M_enc) / P(theta in C_S | M_enc),

the fraction of the encompassing posterior that satisfies ``S`` over the
fraction of the encompassing prior that does (Klugkist, Kato & Hoijtink
2005, eq. 6; Klugkist & Hoijtink 2007).  One posterior run and one
prior-only run (the power posterior at ``beta = 0``,
:mod:`chronology.engine.power_posterior`) of the encompassing model give
every reading's Bayes factor against it: each draw carries one indicator
per order pair the readings need, 1 where it holds, and the fraction of
draws that satisfy ``S`` is counted over the distinct patterns of the
draws' indicators.

A relationship may join a context that is not an event of the model (an
undated deposit, say).  The encompassing order then also holds a
*skeleton*: the record's order between such contexts and the events.  The
constraints of ``S`` are the order among the events that the encompassing
order, the skeleton and the edges of ``S`` imply together
(:func:`induced_pairs`); through a context that is no event, two
relationships can order events that neither orders alone, so each subset's
pairs are found from its own closure, keeping only the latest events before
and the earliest after each edge (the others follow from the model's own
order, which every draw satisfies).

Monte Carlo errors are from batch means (``batches`` per chain, each
batch a repeat), on the log scale by the delta method; the two runs are
independent, so their errors add in quadrature.  A reading whose accepted
relationships close a cycle with the encompassing order cannot be true and
is listed with the cycle; one that no prior (or no posterior) draw satisfies
is listed as not estimable from these draws.

References
----------
Klugkist, I., Kato, B. & Hoijtink, H. (2005). Bayesian model selection using
encompassing priors. Statistica Neerlandica 59(1), 57-69.
Klugkist, I. & Hoijtink, H. (2007). The Bayes factor for inequality and
about equality constrained models. Computational Statistics & Data Analysis
51(12), 6367-6379.
"""

from __future__ import annotations

import time
from dataclasses import asdict, dataclass
from typing import Callable, Sequence

import networkx as nx
import numpy as np

from chronology.engine.model import Model
from chronology.engine.power_posterior import tempered
from chronology.engine.sampler import chain_seeds, flatten, run_chain

__all__ = [
    "ENCOMPASSING_METHOD",
    "MAX_RESTRICTIONS",
    "Restriction",
    "JointSettings",
    "Reading",
    "EncompassingResult",
    "induced_pairs",
    "cycles_of",
    "subset_pairs",
    "pair_holds",
    "subset_fractions",
    "encompassing_weights",
]

ENCOMPASSING_METHOD = (
    "encompassing prior (Klugkist, Kato & Hoijtink 2005): each reading's Bayes factor against the model with "
    "every undecided relationship left out is the fraction of its posterior draws satisfying the reading's "
    "order constraints over the fraction of its prior draws doing so; Monte Carlo error from batch means"
)

#: Most relationships weighed jointly: 2^10 readings.
MAX_RESTRICTIONS = 10


@dataclass(frozen=True)
class Restriction:
    """One undecided relationship as the order edges ``(earlier, later)`` it adds (events or skeleton nodes)."""

    name: str
    pairs: tuple[tuple[str, str], ...]


@dataclass(frozen=True)
class JointSettings:
    """Chains of the posterior run and of the prior-only run, each ``warmup`` then ``iterations`` sweeps."""

    chains: int = 4
    iterations: int = 20000
    warmup: int = 2000
    thin: int = 1
    batches: int = 10

    def __post_init__(self):
        if self.chains < 1 or self.iterations < 10 * self.batches or self.warmup < 0 or self.thin < 1 \
                or self.batches < 2 or self.chains * self.batches < 4:
            raise ValueError("chains >= 1, batches >= 2 (at least 4 batches in all), iterations >= 10 per batch")

    def as_dict(self) -> dict:
        return asdict(self)


@dataclass(frozen=True)
class Reading:
    """The readings' subset ``accepted`` (names) with its Bayes factor against the encompassing model.

    ``log_bf`` is ``None`` when no posterior or no prior draw satisfies the
    subset; ``cycle`` names the events of a cycle the subset closes.
    """

    accepted: tuple[str, ...]
    posterior_fraction: float
    prior_fraction: float
    log_bf: float | None
    mcse: float | None
    posterior_draws: int
    prior_draws: int
    cycle: tuple[str, ...] | None = None

    def as_dict(self) -> dict:
        return asdict(self)


@dataclass(frozen=True)
class EncompassingResult:
    """Every reading of ``names`` (all ``2^k`` subsets, the empty one first), with the draws' counts."""

    names: tuple[str, ...]
    readings: tuple[Reading, ...]
    posterior_draws: int
    prior_draws: int
    settings: JointSettings
    seconds: float
    method: str = ENCOMPASSING_METHOD

    def as_dict(self) -> dict:
        return {"names": list(self.names), "readings": [r.as_dict() for r in self.readings],
                "posterior_draws": self.posterior_draws, "prior_draws": self.prior_draws,
                "settings": self.settings.as_dict(), "seconds": self.seconds, "method": self.method}


def _graph(model: Model, skeleton) -> nx.DiGraph:
    g = nx.DiGraph()
    g.add_nodes_from(model.event_keys)
    g.add_edges_from((c.earlier, c.later) for c in model.constraints)
    g.add_edges_from(skeleton)
    return g


def _frontier(g: nx.DiGraph, found: set, latest: bool) -> set:
    """The members of ``found`` that ``g`` does not order before (``latest``) or after another member."""
    if latest:
        return {n for n in found if not (nx.descendants(g, n) & found)}
    return {n for n in found if not (nx.ancestors(g, n) & found)}


def induced_pairs(g: nx.DiGraph, events: set, edges) -> list[tuple[str, str]]:
    """Event pairs ``(a, b)`` that must hold once ``edges`` are added to the order ``g``.

    For each edge ``u -> v``, every event at or before ``u`` precedes every
    event at or after ``v`` in ``g`` with all the edges added; of these only
    the latest before (and the earliest after) are kept *with respect to
    g*, since a draw of the encompassing model already satisfies ``g``'s
    order among events and the dropped pairs follow from it.
    """
    h = g.copy()
    h.add_edges_from(edges)
    out = set()
    for u, v in edges:
        before = _frontier(g, (nx.ancestors(h, u) | {u}) & events, latest=True)
        after = _frontier(g, (nx.descendants(h, v) | {v}) & events, latest=False)
        out.update((a, b) for a in before for b in after if a != b)
    return sorted(out)


def cycles_of(model: Model, restrictions: Sequence[Restriction], skeleton=()) -> dict[int, tuple[str, ...]]:
    """Subsets (bit masks) whose edges close a cycle with the model's order and the skeleton: mask -> the cycle."""
    g = _graph(model, skeleton)
    out: dict[int, tuple[str, ...]] = {}
    for mask in range(1, 1 << len(restrictions)):
        h = g.copy()
        for j, r in enumerate(restrictions):
            if mask >> j & 1:
                h.add_edges_from(r.pairs)
        try:
            cycle = nx.find_cycle(h)
        except nx.NetworkXNoCycle:
            continue
        out[mask] = tuple(u for u, _v in cycle) + (cycle[0][0],)
    return out


def subset_pairs(model: Model, restrictions: Sequence[Restriction], skeleton=(),
                 cycles: dict | None = None) -> dict[int, list[tuple[str, str]]]:
    """Per subset (bit mask) without a cycle, the event pairs its edges add (:func:`induced_pairs`)."""
    g = _graph(model, skeleton)
    events = set(model.event_keys)
    cycles = cycles_of(model, restrictions, skeleton) if cycles is None else cycles
    out = {}
    for mask in range(1 << len(restrictions)):
        if mask in cycles:
            continue
        edges = [p for j, r in enumerate(restrictions) if mask >> j & 1 for p in r.pairs]
        out[mask] = induced_pairs(g, events, edges)
    return out


def pair_holds(draws: np.ndarray, columns: Sequence[tuple[int, int]]) -> np.ndarray:
    """``out[d, i]``: at draw ``d`` the ``i``-th pair ``(a, b)`` of event columns has ``x_a < x_b``."""
    if not columns:
        return np.zeros((draws.shape[0], 0), dtype=bool)
    a, b = np.array(columns, dtype=np.int64).T
    return draws[:, a] < draws[:, b]


def subset_fractions(holds: np.ndarray, required: Sequence[np.ndarray]) -> np.ndarray:
    """Per subset, the share of draws (rows of ``holds``) where every required pair (column) holds.

    The rows are reduced to their distinct patterns first: a handful of
    patterns usually stands for many thousands of draws.
    """
    if holds.shape[0] == 0:
        return np.zeros(len(required))
    patterns, counts = np.unique(holds, axis=0, return_counts=True)
    return np.array([counts[patterns[:, cols].all(axis=1)].sum() if len(cols) else counts.sum()
                     for cols in required]) / holds.shape[0]


def _batched_fractions(flat, seeds, settings: JointSettings, columns, required, tick, cancel) -> np.ndarray:
    rows = []
    for c, seed in enumerate(seeds):
        r = run_chain(flat, seed, chain=c, iterations=settings.iterations, warmup=settings.warmup,
                      thin=settings.thin, cancel=cancel)
        holds = pair_holds(r.draws, columns)
        rows.extend(subset_fractions(part, required) for part in np.array_split(holds, settings.batches))
        tick()
    return np.array(rows)


def _estimate(per: np.ndarray, total: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Pooled fractions (batches are of equal size to within one), batch-means errors and pooled counts."""
    pooled = per.mean(axis=0)
    se = per.std(axis=0, ddof=1) / np.sqrt(per.shape[0])
    return pooled, se, np.rint(pooled * total).astype(int)


def encompassing_weights(model: Model, restrictions: Sequence[Restriction], *, entropy: int,
                         settings: JointSettings = JointSettings(), skeleton: Sequence[tuple[str, str]] = (),
                         progress: Callable[[float], None] | None = None,
                         cancel: Callable[[], bool] | None = None) -> EncompassingResult:
    """Bayes factors of every subset of ``restrictions`` against the encompassing ``model``.

    Parameters
    ----------
    model : Model
        The encompassing model: every restriction left out.
    restrictions : sequence of Restriction
        At most :data:`MAX_RESTRICTIONS`; their pairs are edges between
        events of ``model`` or nodes of the skeleton.
    entropy : int
        Seed; the prior-only chains use ``entropy + 1``.
    settings : JointSettings
    skeleton : sequence of (str, str)
        The encompassing order between nodes that are not events (contexts a
        relationship joins) and the events, as edges; empty when every
        relationship joins two events.

    Returns
    -------
    EncompassingResult

    Raises
    ------
    ValueError
        Too many restrictions, or the skeleton alone makes the order cyclic.
    """
    k = len(restrictions)
    if not 1 <= k <= MAX_RESTRICTIONS:
        raise ValueError(f"between 1 and {MAX_RESTRICTIONS} restrictions can be weighed jointly, not {k}")
    if not nx.is_directed_acyclic_graph(_graph(model, skeleton)):
        raise ValueError("the skeleton makes the encompassing order cyclic")
    started = time.perf_counter()
    cycles = cycles_of(model, restrictions, skeleton)
    pairs = subset_pairs(model, restrictions, skeleton, cycles)
    keys = {key: i for i, key in enumerate(model.event_keys)}
    distinct = sorted({p for ps in pairs.values() for p in ps})
    column = {p: i for i, p in enumerate(distinct)}
    columns = [(keys[a], keys[b]) for a, b in distinct]
    masks = sorted(pairs)
    required = [np.array([column[p] for p in pairs[m]], dtype=np.int64) for m in masks]
    done = [0]

    def tick():
        done[0] += 1
        if progress is not None:
            progress(done[0] / (2 * settings.chains))

    flat = flatten(model)
    total = settings.chains * (settings.iterations // settings.thin)
    post = _batched_fractions(flat, chain_seeds(entropy, settings.chains), settings, columns, required, tick, cancel)
    prior = _batched_fractions(tempered(flat, 0.0), chain_seeds(entropy + 1, settings.chains), settings, columns,
                               required, tick, cancel)
    f_post, se_post, n_post = _estimate(post, total)
    f_prior, se_prior, n_prior = _estimate(prior, total)
    where = {m: i for i, m in enumerate(masks)}
    readings = []
    for mask in range(1 << k):
        accepted = tuple(r.name for j, r in enumerate(restrictions) if mask >> j & 1)
        if mask in cycles:
            readings.append(Reading(accepted, 0.0, 0.0, None, None, 0, 0, cycles[mask]))
            continue
        i = where[mask]
        log_bf = mcse = None
        if n_post[i] > 0 and n_prior[i] > 0:
            log_bf = float(np.log(f_post[i]) - np.log(f_prior[i]))
            mcse = float(np.hypot(se_post[i] / f_post[i], se_prior[i] / f_prior[i]))
        readings.append(Reading(accepted, float(f_post[i]), float(f_prior[i]), log_bf, mcse,
                                int(n_post[i]), int(n_prior[i])))
    return EncompassingResult(tuple(r.name for r in restrictions), tuple(readings), total, total, settings,
                              time.perf_counter() - started)
