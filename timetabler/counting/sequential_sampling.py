"""Estimates of the number of timetables, with a 95 % interval, by sequential Monte Carlo.

The estimator (Knuth 1975 grown into a population method)
    Colour the events one at a time in a fixed order (DSATUR's, Brélaz 1979). With the
    first ``i − 1`` events coloured uniformly at random among the clash-free ways, the
    next event has ``f_i`` free slots, and ``P(G_i, k) / P(G_{i−1}, k) = E[f_i]`` where
    ``G_i`` is the graph of the first ``i`` events. A population of partial timetables
    ("particles") carries the weights ``Π f_i``; when they grow too uneven the population
    is resampled in proportion to them and every particle is moved by heat-bath updates
    (recolour an event uniformly among its free slots), which leave the uniform
    distribution of the clash-free timetables of ``G_i`` unchanged. The product of the
    mean weights between resamplings is an unbiased estimate of ``P(G, k)`` however well
    the moves mix (P. Del Moral, *Feynman–Kac formulae*, Springer 2004, ch. 7; A. Doucet
    and A. M. Johansen, "A tutorial on particle filtering and smoothing", 2009, §3.5);
    with one particle and no resampling it is Knuth's probe ("Estimating the efficiency
    of backtrack programs", Math. Comp. 29 (1975)). Resampling only when the effective
    sample size falls below half the population is the usual adaptive rule (Doucet &
    Johansen §3.5; the threshold is common practice, not a derived value).

The moves after a resampling (resample-move, W. R. Gilks and C. Berzuini, "Following a
moving target", J. R. Stat. Soc. B 63 (2001); P. Del Moral, A. Doucet and A. Jasra,
"Sequential Monte Carlo samplers", J. R. Stat. Soc. B 68 (2006))
    Resampling leaves copies; the next weight depends only on the slots of the next
    event's neighbours, so those are what the moves refresh: a heat-bath update of each of
    them, up to ``_MOVES_PER_RESAMPLE`` (32) chosen at random when there are more. Measured
    at equal time on the benchmark graphs (``benchmarks/count_estimates.py``), 32 updates
    instead of 4 cut the variance of ``ln Ẑ`` per second three- to fourfold on
    180-event groups (more particles cannot make up for it: the copies stay alike).

One slot fewer: the ratio ``P(G, k) / P(G, k − 1)``
    The chain starts at the largest ``k`` asked for. From the clash-free ``k``-slot
    timetables reached at the end, slot ``k`` is closed to one event at a time (the
    telescoping product of M. Jerrum, "A very simple algorithm for estimating the number
    of k-colorings of a low-degree graph", Random Struct. Algorithms 7 (1995), with the
    samples carried by the same population instead of independent Markov chains). If
    ``Ω_j`` are the timetables in which only the events after the ``j``-th may use slot
    ``k``, then ``|Ω_j| / |Ω_{j−1}| = E[g_j / g'_j]`` over ``Ω_{j−1}``, with ``g'_j`` the
    slots free for event ``j`` among all ``k`` and ``g_j`` among the first ``k − 1`` (a
    weight between 0 and 1; event ``j`` is then redrawn among its ``g_j`` slots). Closing,
    not opening, matters: the sample space must shrink, or the timetables reachable only
    through the new slot would be missed. Each step is close to 1, but on timetabling
    graphs near their fewest slots the steps mix poorly: measured at equal time on the
    benchmark graphs (180 to 380 events, at their period count), the ratio by closing
    had three to fifty times the variance of the difference of two independent counts,
    and a third of the runs met dead ends. The counts therefore use
    :func:`sample_counts` (one chain per number of slots, the ratio as a difference);
    the closing steps stay here for ``sample_chain(..., k_first < k_last)``.

The interval
    The whole run is repeated ``R`` times independently (8 by default, as vectorised
    groups of one population). ``log Ẑ`` of a run is asymptotically normal (J. Bérard,
    P. Del Moral and A. Doucet, "A lognormal central limit theorem for particle
    approximations of normalizing constants", Electron. J. Probab. 19 (2014) no. 94), and
    ``E[Ẑ] = Z``, so the mean is that of a log-normal law: the 95 % interval is Cox's,
    ``m + s²/2 ± t_{R−1} · sqrt(s²/R + s⁴/(2(R−1)))`` (X.-H. Zhou and S. Gao,
    "Confidence intervals for the log-normal mean", Stat. Med. 16 (1997)), from the mean
    ``m`` and variance ``s²`` of the ``R`` values of ``ln Ẑ``. A run in which every
    particle met a dead end (no free slot) breaks that model, and no interval is given.
    ``benchmarks/count_estimates.py`` measures how often the interval covers exact counts.

Engines never read files or print; this module takes a graph and returns numbers.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from typing import Hashable, Mapping, Sequence

import networkx as nx
import numpy as np

from ..dsatur import dsatur_order as _dsatur_order

REPLICATES = 8
_PILOT_PARTICLES = 32
_MIN_PARTICLES = 128
_MAX_PARTICLES = 20000
_MEMORY_BYTES = 300_000_000  # the particles' slot arrays, all groups together
_MOVES_PER_RESAMPLE = 32


@dataclass
class LogInterval:
    """A 95 % interval for a positive quantity, in log10, with the central estimate."""

    estimate: float
    low: float
    high: float

    def shifted(self, log10: float) -> "LogInterval":
        return LogInterval(self.estimate + log10, self.low + log10, self.high + log10)


@dataclass
class ChainEstimate:
    """Replicated estimates of ``ln P(G, k)`` for consecutive ``k``: ``ks[0]``, ``ks[0] + 1``, ...

    ``log_counts[r, j]`` is the natural log of replicate ``r``'s estimate at ``ks[j]``
    (``-inf`` where every particle of the replicate met a dead end).
    """

    ks: list[int]
    log_counts: np.ndarray
    particles: int
    seconds: float
    colourings: dict[int, list[dict]] = field(default_factory=dict)  # k -> a few clash-free timetables (0-based slots)

    def count_moments(self, k: int) -> "Moments | None":
        """Centre and variance of ``ln P(G, k)``, or None without a valid interval."""
        return log_mean_moments(self.log_counts[:, self.ks.index(k)])

    def ratio_moments(self, k: int) -> "Moments | None":
        """Centre and variance of ``ln (P(G, k) / P(G, k − 1))``, or None.

        The chain runs downwards: ``Ẑ(k − 1) / Ẑ(k)`` is the product of the closing steps,
        an estimate of the reciprocal of the ratio, and may be 0 (a dead end); its moments
        are taken and negated.
        """
        j = self.ks.index(k)
        if j == 0:
            return None
        top = self.log_counts[:, j]
        keep = np.isfinite(top)
        closing = self.log_counts[keep, j - 1] - top[keep]
        m = log_mean_moments(closing)
        return None if m is None else Moments(-m.centre, m.variance, m.replicates)


@dataclass
class Moments:
    """An estimate of a natural log: centre, variance of the centre, and the replicates behind it."""

    centre: float
    variance: float
    replicates: int

    def __add__(self, other: "Moments") -> "Moments":
        return Moments(self.centre + other.centre, self.variance + other.variance,
                       min(self.replicates, other.replicates))

    def shifted(self, ln_value: float) -> "Moments":
        return Moments(self.centre + ln_value, self.variance, self.replicates)

    def interval(self) -> LogInterval:
        """The 95 % interval, in log10 (Student's t with replicates − 1 degrees of freedom)."""
        half = t_quantile(max(self.replicates - 1, 1)) * math.sqrt(max(self.variance, 0.0))
        ln10 = math.log(10)
        return LogInterval(self.centre / ln10, (self.centre - half) / ln10, (self.centre + half) / ln10)


def log_mean_moments(values: np.ndarray, most_zeros: float = 0.5) -> "Moments | None":
    """Moments of ``ln E[Ẑ]`` from replicate values ``ln Ẑ_r`` (``-inf`` for ``Ẑ_r = 0``).

    Without zeros this is Cox's log-normal mean (Zhou & Gao 1997): ``m + s²/2`` with
    variance ``s²/R + s⁴/(2(R − 1))``. With some zeros it is the delta-log-normal mean
    ``p · exp(m + s²/2)``, ``p`` the share of non-zero runs, with the variance of its log by
    the delta method, ``(1 − p)/(R p) + s²/R₊ + s⁴/(2(R₊ − 1))`` (X.-H. Zhou and W. Tu,
    "Confidence intervals for the mean of diagnostic test charge data containing zeros",
    Biometrics 56 (2000)). More than ``most_zeros`` of the runs at 0, or fewer than three
    non-zero runs: None (no honest interval).
    """
    values = np.asarray(values, dtype=float)
    r = len(values)
    alive = values[np.isfinite(values)]
    r_plus = len(alive)
    if r < 2 or r_plus < 3 or r_plus < (1 - most_zeros) * r:
        return None
    m, s2 = float(alive.mean()), float(alive.var(ddof=1))
    p = r_plus / r
    centre = math.log(p) + m + s2 / 2
    variance = (1 - p) / (r * p) + s2 / r_plus + s2 * s2 / (2 * (r_plus - 1))
    return Moments(centre, variance, r_plus)


def t_quantile(dof: int) -> float:
    """The 97.5 % point of Student's t law with ``dof`` degrees of freedom (scipy's ``stdtrit``, the same
    value as ``scipy.stats.t.ppf``: importing scipy.stats costs about a second, a tenth of it on a busy machine
    for the page's background count at low priority)."""
    from scipy.special import stdtrit

    return float(stdtrit(dof, 0.975))


# --------------------------------------------------------------------------- bit tables

def _select16() -> np.ndarray:
    """``table[x, r]`` = position of the ``r``-th set bit of the 16-bit word ``x``."""
    x = np.arange(1 << 16, dtype=np.int64)[:, None]
    pos = np.arange(16, dtype=np.int64)[None, :]
    key = np.where((x >> pos) & 1 == 1, pos, 99)
    return np.sort(key, axis=1).astype(np.int64)


_SELECT16: np.ndarray | None = None


class _Population:
    """``groups × size`` partial timetables of one graph, as slot numbers (``k`` = no slot yet)."""

    def __init__(self, n: int, k: int, groups: int, size: int, rng: np.random.Generator):
        global _SELECT16
        if _SELECT16 is None:
            _SELECT16 = _select16()
        self.k, self.groups, self.size, self.rng = k, groups, size, rng
        self.total = groups * size
        self.words = (k + 64) // 64  # one spare bit for slot k + 1 of the ratio steps
        dtype = np.int8 if k + 1 < 127 else np.int16
        self.slot = np.full((self.total, n), k + 1, dtype=dtype)  # k + 1: no slot yet
        bits = np.zeros((k + 2, self.words), dtype=np.uint64)
        for c in range(k + 1):
            bits[c, c // 64] = np.uint64(1) << np.uint64(c % 64)
        self.bits = bits  # row c: the bit of slot c; row k + 1 (no slot): nothing
        self.rows = np.arange(self.total)

    def free(self, v: int, neighbours: np.ndarray, allowed: np.ndarray) -> np.ndarray:
        """Bit masks (total × words) of the slots open to event ``v`` given its neighbours."""
        if len(neighbours) == 0:
            return np.broadcast_to(allowed, (self.total, self.words)).copy()
        used = np.bitwise_or.reduce(self.bits[self.slot[:, neighbours]], axis=1)
        return allowed & ~used

    def pick(self, masks: np.ndarray, counts: np.ndarray) -> np.ndarray:
        """A uniformly random set bit of each mask (the slot ``k + 1`` marker where none)."""
        r = np.floor(self.rng.random(self.total) * np.maximum(counts, 1)).astype(np.int64)
        r = np.minimum(r, np.maximum(counts - 1, 0))
        word = np.zeros(self.total, dtype=np.int64)
        x = masks[:, 0]
        if self.words > 1:
            per_word = np.bitwise_count(masks).astype(np.int64)
            before = np.cumsum(per_word, axis=1) - per_word
            word = np.maximum((before <= r[:, None]).sum(axis=1) - 1, 0)
            r = r - before[self.rows, word]
            x = masks[self.rows, word]
        out = np.zeros(self.total, dtype=np.int64)
        found = np.zeros(self.total, dtype=bool)
        for q in range(4):
            chunk = ((x >> np.uint64(16 * q)) & np.uint64(0xFFFF)).astype(np.int64)
            c = np.bitwise_count(chunk.astype(np.uint16)).astype(np.int64)
            here = (~found) & (r < c)
            out[here] = _SELECT16[chunk[here], r[here]] + 16 * q
            found |= here
            r = np.where(found, r, r - c)
        out = out + 64 * word
        return np.where(counts > 0, out, self.k + 1)

    def resample(self, log_weights: np.ndarray) -> np.ndarray:
        """Systematic resampling within each group; returns ln(mean weight) per group."""
        top = log_weights.max(axis=1, keepdims=True)
        dead = ~np.isfinite(top[:, 0])
        top[dead] = 0.0
        w = np.exp(log_weights - top)
        sums = w.sum(axis=1)
        with np.errstate(divide="ignore"):
            log_mean = np.log(sums / self.size) + top[:, 0]
        log_mean[dead] = -np.inf
        w[dead] = 1.0
        sums[dead] = self.size
        cum = np.cumsum(w / sums[:, None], axis=1)
        cum[:, -1] = 1.0 + 1e-12
        offsets = np.arange(self.groups)[:, None]
        u = (self.rng.random((self.groups, 1)) + np.arange(self.size)[None, :]) / self.size
        picked = np.searchsorted((cum + offsets).ravel(), (u + offsets).ravel())
        self.slot = self.slot[np.minimum(picked, self.total - 1)]
        return log_mean


def _ess_low(log_weights: np.ndarray, fraction: float = 0.5) -> bool:
    top = log_weights.max(axis=1, keepdims=True)
    top = np.where(np.isfinite(top), top, 0.0)
    w = np.exp(log_weights - top)
    ess = w.sum(axis=1) ** 2 / np.maximum((w * w).sum(axis=1), 1e-300)
    return bool((ess < fraction * log_weights.shape[1]).any())


def _mask(slots, words: int) -> np.ndarray:
    out = np.zeros(words, dtype=np.uint64)
    for c in slots:
        out[c // 64] |= np.uint64(1) << np.uint64(c % 64)
    return out


def dsatur_order(graph: nx.Graph) -> list:
    """The order in which DSATUR (Brélaz 1979; :mod:`timetabler.dsatur`) colours the graph."""
    return _dsatur_order(graph)[0]


def sample_chain(
    graph: nx.Graph,
    k_first: int,
    k_last: int,
    *,
    seconds: float,
    allowed: Mapping[Hashable, set[int]] | None = None,
    replicates: int = REPLICATES,
    particles: int | None = None,
    seed: int = 20261202,
    keep_colourings: int = 4,
    order: Sequence | None = None,
) -> ChainEstimate:
    """Estimate ``ln P(G, k)`` for ``k = k_first … k_last`` within about ``seconds``.

    Two short pilots (32 and 128 particles per replicate) measure the cost, a fixed part
    and a part per particle; the main run then takes as many particles as the remaining
    time allows, in at least three rounds of equal size (``particles`` fixes the number
    and skips the pilot). ``allowed`` maps an event to the 0-based slots it may use at
    ``k_first`` (fixed and barred slots); ratios to later ``k`` are then not computed
    (``k_last`` must equal ``k_first``). ``order`` is the order of placing the events
    (DSATUR's when not given; pass it when it is already known, it costs time on a large group).

    Examples
    --------
    >>> import networkx as nx
    >>> est = sample_chain(nx.cycle_graph(6), 3, 4, seconds=0.5)
    >>> iv = est.count_moments(3).interval()
    >>> iv.low <= math.log10(66) <= iv.high   # (k − 1)^6 + (k − 1) = 66 for C6, k = 3 (closed form)
    True
    """
    if allowed and k_last != k_first:
        raise ValueError("with fixed or barred slots each number of slots is estimated on its own")
    started = time.monotonic()
    stop = started + seconds
    order = list(order) if order is not None else dsatur_order(graph)

    def run(size: int, round_: int) -> ChainEstimate:
        return _run_chain(graph, order, k_first, k_last, allowed, replicates, size, seed + 7919 * round_, keep_colourings)

    if particles is not None:
        result = run(particles, 0)
        result.seconds = time.monotonic() - started
        return result
    t0 = time.monotonic()
    rounds = [run(_PILOT_PARTICLES, 0)]
    pilot_seconds = max(time.monotonic() - t0, 1e-3)
    left = stop - time.monotonic()
    # the cost of a round is a fixed part (numpy's calls, one per event and move) plus a part
    # per particle; a second pilot four times larger separates them when time allows, or the
    # fixed part would be charged to every particle and the rounds come out far too small
    fixed, per_particle = 0.0, pilot_seconds / _PILOT_PARTICLES
    if 4 * pilot_seconds <= 0.1 * left:
        t0 = time.monotonic()
        run(4 * _PILOT_PARTICLES, 0)
        second = time.monotonic() - t0
        slope = (second - pilot_seconds) / (3 * _PILOT_PARTICLES)
        if slope > 0:
            fixed, per_particle = max(pilot_seconds - slope * _PILOT_PARTICLES, 0.0), slope
        else:
            per_particle = second / (4 * _PILOT_PARTICLES)
        left = stop - time.monotonic()
    # rounds of equal size until the time is used; at least three of them when time allows
    size = int((0.85 * left / 3 - fixed) / per_particle)
    bytes_per = replicates * graph.number_of_nodes() * 16  # slots, copies and gathers
    size = min(size, _MAX_PARTICLES, _MEMORY_BYTES // max(bytes_per, 1))
    if size < _MIN_PARTICLES and fixed + per_particle * _MIN_PARTICLES <= 0.85 * left:
        size = _MIN_PARTICLES  # fewer, larger rounds: small populations bias the logs
    if size >= 2 * _PILOT_PARTICLES:
        rounds = []
    else:
        size = _PILOT_PARTICLES
    round_seconds = fixed + per_particle * size
    while not rounds or time.monotonic() + round_seconds <= stop:
        t0 = time.monotonic()
        rounds.append(run(size, len(rounds) + 1))
        round_seconds = time.monotonic() - t0
    result = ChainEstimate(rounds[0].ks, np.vstack([r.log_counts for r in rounds]), size, 0.0, rounds[0].colourings)
    result.seconds = time.monotonic() - started
    return result


def sample_counts(
    graph: nx.Graph,
    ks: Sequence[int],
    *,
    seconds: float,
    allowed_at: Mapping[int, Mapping[Hashable, set[int]] | None] | None = None,
    order: Sequence | None = None,
    seed: int = 20261202,
    keep_colourings: int = 4,
) -> dict[int, ChainEstimate]:
    """Independent estimates of ``ln P(G, k)`` for each ``k`` of ``ks``, sharing ``seconds``.

    Each ``k`` gets its own chain placing the events at ``k`` slots (no closing steps: on
    timetabling graphs the closing steps cost twice a count and gave a ratio with a larger
    variance than the difference of two independent counts, measured on the benchmark
    graphs). The ratio of consecutive counts is then the difference of two independent
    logs, whose variances add, so the time is shared to make the sum of the variances
    small: with ``v_k`` the variance of one replicate's ``ln Ẑ`` times its cost (seconds),
    measured by a pilot, the variances are ``v_k / t_k`` and their sum under
    ``Σ t_k = T`` is least at ``t_k ∝ √v_k`` (Neyman's allocation, J. Neyman, "On the two
    different aspects of the representative method", J. R. Stat. Soc. 97 (1934)). Each
    ``k`` keeps at least a third of an equal share, as the pilot's variance is rough.
    ``allowed_at[k]`` gives the fixed and barred slots at ``k`` (see :func:`sample_chain`).

    Examples
    --------
    >>> import networkx as nx
    >>> est = sample_counts(nx.path_graph(8), [2, 3], seconds=1.0)
    >>> iv = est[3].count_moments(3).interval()
    >>> iv.low <= math.log10(3 * 2 ** 7) <= iv.high   # a tree: k (k − 1)^(n − 1) (closed form)
    True
    """
    ks = list(ks)
    started = time.monotonic()
    stop = started + seconds
    order = list(order) if order is not None else dsatur_order(graph)
    allowed_at = allowed_at or {}
    if len(ks) == 1:
        return {ks[0]: sample_chain(graph, ks[0], ks[0], seconds=seconds, allowed=allowed_at.get(ks[0]),
                                    seed=seed, keep_colourings=keep_colourings, order=order)}
    # the pilot: one small run per k, at most a tenth of the time
    costs: dict[int, float | None] = {}
    for k in ks:
        if time.monotonic() > started + 0.1 * seconds:
            costs[k] = None
            continue
        t0 = time.monotonic()
        pilot = _run_chain(graph, order, k, k, allowed_at.get(k), REPLICATES, 2 * _PILOT_PARTICLES,
                           seed + 104729 + k, 0)
        spent = max(time.monotonic() - t0, 1e-3) / REPLICATES
        alive = pilot.log_counts[:, 0][np.isfinite(pilot.log_counts[:, 0])]
        costs[k] = float(alive.var(ddof=1)) * spent if len(alive) >= 3 else None
    shares = neyman_shares(costs)
    out: dict[int, ChainEstimate] = {}
    for index, k in enumerate(ks):
        left = max(stop - time.monotonic(), 0.05)
        share = left * shares[k] / sum(shares[j] for j in ks[index:])  # what a chain leaves passes on
        out[k] = sample_chain(graph, k, k, seconds=share, allowed=allowed_at.get(k), seed=seed + 7 * k,
                              keep_colourings=keep_colourings, order=order)
    return out


def neyman_shares(costs: Mapping[int, float | None]) -> dict[int, float]:
    """Shares of the time (summing to 1) from each ``k``'s variance per second, ``t_k ∝ √v_k``.

    ``None`` (the pilot met dead ends or ran out of time) counts as four times the worst
    known cost; every ``k`` keeps at least a third of an equal share (see :func:`sample_counts`).

    >>> shares = neyman_shares({3: 9.0, 4: 1.0})
    >>> round(shares[3], 3), round(shares[4], 3)
    (0.75, 0.25)
    """
    known = [c for c in costs.values() if c is not None and c > 0]
    worst = max(known) if known else 1.0
    root = {k: math.sqrt(c if c is not None and c > 0 else (4 * worst if c is None else 0.0)) for k, c in costs.items()}
    total = sum(root.values())
    floor = 1 / (3 * len(root))
    raw = {k: (r / total if total > 0 else 1 / len(root)) for k, r in root.items()}
    lifted = {k: max(v, floor) for k, v in raw.items()}
    scale = sum(lifted.values())
    return {k: v / scale for k, v in lifted.items()}


def _run_chain(graph, order, k_first, k_last, allowed, replicates, size, seed, keep) -> ChainEstimate:
    rng = np.random.default_rng(seed)
    n = len(order)
    index = {v: i for i, v in enumerate(order)}
    neighbours = [np.array(sorted(index[u] for u in graph[v]), dtype=np.int64) for v in order]
    earlier = [nb[nb < i] for i, nb in enumerate(neighbours)]
    pop = _Population(n, k_last, replicates, size, rng)
    k = k_last
    masks = np.zeros((n, pop.words), dtype=np.uint64)
    for i, v in enumerate(order):
        ok = allowed.get(v) if allowed else None
        masks[i] = _mask(range(k) if ok is None else [c for c in ok if 0 <= c < k], pop.words)
    log_counts = np.zeros((replicates, k_last - k_first + 1))
    log_z = np.zeros(replicates)
    log_w = np.zeros((replicates, size))

    def moves(step: int, upto: int) -> None:
        # heat-bath updates of events already placed, chosen without looking at the particles
        upcoming = neighbours[step + 1] if step + 1 < n else np.empty(0, dtype=np.int64)
        pool = upcoming[upcoming < upto] if len(upcoming) else upcoming
        if len(pool) == 0:
            pool = np.arange(upto)
        for j in rng.choice(pool, size=min(_MOVES_PER_RESAMPLE, len(pool)), replace=False):
            free = pop.free(j, neighbours[j], masks[j])
            counts = np.bitwise_count(free).sum(axis=1).astype(np.int64)
            chosen = pop.pick(free, counts)
            pop.slot[:, j] = np.where(counts > 0, chosen, pop.slot[:, j])

    def step_done(step: int, upto: int, last: bool) -> None:
        nonlocal log_z
        if last or _ess_low(log_w):
            log_z = log_z + pop.resample(log_w)
            log_w[:] = 0.0
            if not last:
                moves(step, upto)

    # the count at k_last: place the events one at a time
    for i in range(n):
        free = pop.free(i, earlier[i], masks[i])
        counts = np.bitwise_count(free).sum(axis=1).astype(np.int64)
        pop.slot[:, i] = pop.pick(free, counts)
        with np.errstate(divide="ignore"):
            log_w += np.log(counts).reshape(replicates, size)
        step_done(i, i + 1, i == n - 1)
    top = k_last - k_first
    log_counts[:, top] = log_z
    colourings = {k_last: _keep(pop, order, size, k_last, keep)}
    # one slot fewer at a time: close the highest slot to the events one by one
    for kk in range(k_last, k_first, -1):
        bit = ~_mask([kk - 1], pop.words)
        for j in range(n):
            before = pop.free(j, neighbours[j], masks[j])
            masks[j] = masks[j] & bit
            after = before & bit
            g_before = np.bitwise_count(before).sum(axis=1).astype(np.int64)
            g_after = np.bitwise_count(after).sum(axis=1).astype(np.int64)
            with np.errstate(divide="ignore", invalid="ignore"):
                log_w += np.log(g_after / np.maximum(g_before, 1)).reshape(replicates, size)
            pop.slot[:, j] = pop.pick(after, g_after)
            step_done(j, n, j == n - 1)
        log_counts[:, kk - 1 - k_first] = log_z
        colourings[kk - 1] = _keep(pop, order, size, kk - 1, keep)
    return ChainEstimate(list(range(k_first, k_last + 1)), log_counts, size, 0.0, colourings)


def _keep(pop: _Population, order: list, size: int, k: int, keep: int) -> list[dict]:
    """The first particle of each group, when it is a complete timetable within ``k`` slots."""
    out = []
    for row in pop.slot[:: max(size, 1)][:keep]:
        if len(row) and np.all(row <= k - 1):
            out.append({v: int(row[i]) for i, v in enumerate(order)})
    return out
