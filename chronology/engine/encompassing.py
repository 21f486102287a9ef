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
per relationship, 1 where all of its constraints hold, and the fraction of
draws whose indicators include ``S`` is summed over the indicator patterns
(a superset sum, ``O(k 2^k)``).

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
    "indicator_patterns",
    "superset_fractions",
    "cycles_of",
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
    """One undecided relationship as the order constraints ``(earlier, later)`` it adds between model events."""

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


def indicator_patterns(draws: np.ndarray, index: Sequence[Sequence[tuple[int, int]]]) -> np.ndarray:
    """Per draw, a bit mask with bit ``j`` set where every pair ``(a, b)`` of restriction ``j`` has ``x_a < x_b``."""
    masks = np.zeros(draws.shape[0], dtype=np.int64)
    for j, pairs in enumerate(index):
        ok = np.ones(draws.shape[0], dtype=bool)
        for a, b in pairs:
            ok &= draws[:, a] < draws[:, b]
        masks |= ok.astype(np.int64) << j
    return masks


def superset_fractions(masks: np.ndarray, k: int) -> np.ndarray:
    """``f[S]``: the fraction of ``masks`` that contain every bit of ``S``, for all ``2^k`` subsets ``S``."""
    counts = np.bincount(masks, minlength=1 << k).astype(float)
    idx = np.arange(1 << k)
    for j in range(k):
        without = idx[(idx >> j) & 1 == 0]
        counts[without] += counts[without | (1 << j)]
    return counts / max(len(masks), 1)


def cycles_of(model: Model, restrictions: Sequence[Restriction]) -> dict[int, tuple[str, ...]]:
    """Subsets (bit masks) whose constraints close a cycle with the model's order: mask -> the cycle's events.

    The model's order is reduced to reachability between the restrictions'
    endpoints first, so each subset is checked on a graph of at most
    ``2 * pairs`` nodes.
    """
    g = nx.DiGraph()
    g.add_nodes_from(model.event_keys)
    g.add_edges_from((c.earlier, c.later) for c in model.constraints)
    ends = sorted({e for r in restrictions for p in r.pairs for e in p})
    reach = [(u, v) for u in ends for v in nx.descendants(g, u) if v in ends]
    out: dict[int, tuple[str, ...]] = {}
    k = len(restrictions)
    for mask in range(1, 1 << k):
        small = nx.DiGraph(reach)
        for j in range(k):
            if mask >> j & 1:
                small.add_edges_from(restrictions[j].pairs)
        try:
            cycle = nx.find_cycle(small)
        except nx.NetworkXNoCycle:
            continue
        out[mask] = tuple(u for u, _v in cycle) + (cycle[0][0],)
    return out


def _batched_masks(flat, seeds, settings: JointSettings, index, tick, cancel) -> list[np.ndarray]:
    batches = []
    for c, seed in enumerate(seeds):
        r = run_chain(flat, seed, chain=c, iterations=settings.iterations, warmup=settings.warmup,
                      thin=settings.thin, cancel=cancel)
        masks = indicator_patterns(r.draws, index)
        batches.extend(np.array_split(masks, settings.batches))
        tick()
    return batches


def _estimate(batches: list[np.ndarray], k: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Pooled fractions, their batch-means standard errors and the pooled counts, per subset."""
    per = np.array([superset_fractions(b, k) for b in batches])
    sizes = np.array([len(b) for b in batches], dtype=float)
    pooled = (per * sizes[:, None]).sum(axis=0) / sizes.sum()
    se = per.std(axis=0, ddof=1) / np.sqrt(len(batches))
    return pooled, se, np.rint(pooled * sizes.sum()).astype(int)


def encompassing_weights(model: Model, restrictions: Sequence[Restriction], *, entropy: int,
                         settings: JointSettings = JointSettings(),
                         progress: Callable[[float], None] | None = None,
                         cancel: Callable[[], bool] | None = None) -> EncompassingResult:
    """Bayes factors of every subset of ``restrictions`` against the encompassing ``model``.

    Parameters
    ----------
    model : Model
        The encompassing model: every restriction left out.
    restrictions : sequence of Restriction
        At most :data:`MAX_RESTRICTIONS`; their pairs name events of ``model``.
    entropy : int
        Seed; the prior-only chains use ``entropy + 1``.
    settings : JointSettings

    Returns
    -------
    EncompassingResult

    Raises
    ------
    ValueError
        Too many restrictions, or a pair names an event the model lacks.
    """
    k = len(restrictions)
    if not 1 <= k <= MAX_RESTRICTIONS:
        raise ValueError(f"between 1 and {MAX_RESTRICTIONS} restrictions can be weighed jointly, not {k}")
    keys = {key: i for i, key in enumerate(model.event_keys)}
    missing = sorted({e for r in restrictions for p in r.pairs for e in p} - set(keys))
    if missing:
        raise ValueError(f"restrictions name events the model lacks: {', '.join(missing)}")
    index = [[(keys[a], keys[b]) for a, b in r.pairs] for r in restrictions]
    started = time.perf_counter()
    done = [0]

    def tick():
        done[0] += 1
        if progress is not None:
            progress(done[0] / (2 * settings.chains))

    flat = flatten(model)
    post = _batched_masks(flat, chain_seeds(entropy, settings.chains), settings, index, tick, cancel)
    prior = _batched_masks(tempered(flat, 0.0), chain_seeds(entropy + 1, settings.chains), settings, index,
                           tick, cancel)
    f_post, se_post, n_post = _estimate(post, k)
    f_prior, se_prior, n_prior = _estimate(prior, k)
    cycles = cycles_of(model, restrictions)
    readings = []
    for mask in range(1 << k):
        accepted = tuple(r.name for j, r in enumerate(restrictions) if mask >> j & 1)
        estimable = mask not in cycles and n_post[mask] > 0 and n_prior[mask] > 0
        log_bf = mcse = None
        if estimable:
            log_bf = float(np.log(f_post[mask]) - np.log(f_prior[mask]))
            mcse = float(np.hypot(se_post[mask] / f_post[mask], se_prior[mask] / f_prior[mask]))
        readings.append(Reading(accepted, float(f_post[mask]), float(f_prior[mask]), log_bf, mcse,
                                int(n_post[mask]), int(n_prior[mask]), cycles.get(mask)))
    total = settings.chains * (settings.iterations // settings.thin)
    return EncompassingResult(tuple(r.name for r in restrictions), tuple(readings), total, total, settings,
                              time.perf_counter() - started)
