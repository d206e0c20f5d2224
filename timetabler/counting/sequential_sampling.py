"""Estimates of the number of timetables, with a 95 % interval, by sequential Monte Carlo.

The estimator (Knuth 1975 grown into a population method)
    Colour the events one at a time in a fixed order (see "The order" below). With the
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

The order
    Smallest-last (D. W. Matula and L. L. Beck, "Smallest-last ordering and clustering and
    graph coloring algorithms", J. ACM 30 (1983)): the event of fewest clashes among those
    left is placed last, repeatedly, so every event has at most the degeneracy of the graph
    among its earlier neighbours and the dense core comes first. Measured with the compiled
    kernel against DSATUR's order (Brélaz 1979), 32 populations each, same seeds, variance
    of ``ln Ẑ`` times seconds: car-s-91 at 35 slots 13.2 against 33.5, uta-s-92 at 35 5.0
    against 6.4, pur-s-93 at 42 40 against 59, ear-f-83 at 24 0.49 against 1.66, hec-s-92
    at 18 0.02 against 0.10, lse-f-91 at 18 0.08 against 0.14, the sample term at 17 0.43
    against 0.65; yor-f-83 at 21 and 22 was even (each order ahead on two of four seeds).

The moves after a resampling (resample-move, W. R. Gilks and C. Berzuini, "Following a
moving target", J. R. Stat. Soc. B 63 (2001); P. Del Moral, A. Doucet and A. Jasra,
"Sequential Monte Carlo samplers", J. R. Stat. Soc. B 68 (2006))
    Resampling leaves copies; the next weight depends only on the slots of the next
    event's neighbours, so those are what the moves refresh: ``_MOVES_PER_RESAMPLE`` (64)
    heat-bath updates, in passes over them in random order. Measured with the compiled
    kernel on car-s-91, uta-s-92, yor-f-83 and the sample term (32 populations of 200 to
    400 particles each), 64 updates gave the least variance of ``ln Ẑ`` per second, 32
    one and a half to two times more, 128 more again (each update costs as much as placing
    an event anew). More particles cannot make up for too few moves: the copies stay alike.

One slot fewer
    The ratio ``P(G, k) / P(G, k − 1)`` is the difference of two independent estimates (one
    chain per number of slots, :func:`sample_counts`). Closing slot ``k`` to the events one
    at a time from the ``k``-slot timetables reached (the telescoping product of M. Jerrum,
    "A very simple algorithm for estimating the number of k-colorings of a low-degree
    graph", Random Struct. Algorithms 7 (1995)) was tried and dropped: near the fewest
    slots the steps mix poorly, and at equal time on the benchmark graphs (180 to 380
    events) its ratio had three to fifty times the variance, a third of its runs meeting
    dead ends.

The interval
    The whole run is repeated ``R`` times independently (8 populations per round, run by
    the compiled kernel of :mod:`.particle_kernel`, one population per core at a time).
    ``log Ẑ`` of a run is asymptotically normal (J. Bérard,
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
import os
import time
from dataclasses import dataclass, field
from typing import Hashable, Mapping, Sequence

import networkx as nx
import numpy as np

REPLICATES = 8
_PILOT_PARTICLES = 32
_MIN_PARTICLES = 128
_MAX_PARTICLES = 20000
_MEMORY_BYTES = 300_000_000  # the particles' slot arrays, all groups together
_MOVES_PER_RESAMPLE = 64


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
    """Replicated estimates of ``ln P(G, k)`` at one number of slots ``k``.

    ``log_counts[r]`` is the natural log of replicate ``r``'s estimate (``-inf`` where
    every particle of the replicate met a dead end).
    """

    k: int
    log_counts: np.ndarray
    particles: int
    seconds: float
    colourings: list[dict] = field(default_factory=list)  # a few clash-free timetables (0-based slots)

    def count_moments(self) -> "Moments | None":
        """Centre and variance of ``ln P(G, k)``, or None without a valid interval."""
        return log_mean_moments(self.log_counts)


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


def placing_order(graph: nx.Graph) -> list:
    """The smallest-last order of the events (Matula & Beck 1983): the order the chains place them in.

    >>> placing_order(nx.star_graph(3))[0]   # the centre (three clashes) first, the leaves after
    0
    """
    return list(nx.algorithms.coloring.strategy_smallest_last(graph, {}))


def sample_chain(
    graph: nx.Graph,
    k: int,
    *,
    seconds: float,
    allowed: Mapping[Hashable, set[int]] | None = None,
    replicates: int = REPLICATES,
    particles: int | None = None,
    seed: int = 20261202,
    keep_colourings: int = 4,
    order: Sequence | None = None,
) -> ChainEstimate:
    """Estimate ``ln P(G, k)`` within about ``seconds``.

    Two short pilots (32 and 128 particles per replicate) measure the cost, a fixed part
    and a part per particle; the main run then gives the ``replicates`` populations as many
    particles as two rounds in the remaining time allow (``2R`` replicates; few, large
    populations: the spread ``s²`` of one population's ``ln Ẑ`` falls with its size, and the
    log-normal correction's own uncertainty, ``s⁴/(2(R − 1))``, with it: measured on
    car-s-91 at 35 slots, 40 replicates of 314 particles gave ``s² = 11.4``, where that term
    is 1.7 of the 1.95 variance of ``ln Ẑ``), each of at most the size the memory takes
    (``particles`` fixes the number and skips the pilot). ``allowed`` maps an event to the
    0-based slots it may use (fixed and barred slots). ``order`` is the order of placing the
    events (:func:`placing_order` when not given; pass it when it is already known, it costs
    time on a large group).

    Examples
    --------
    >>> import networkx as nx
    >>> est = sample_chain(nx.cycle_graph(6), 3, seconds=0.5)
    >>> iv = est.count_moments().interval()
    >>> iv.low <= math.log10(66) <= iv.high   # (k − 1)^6 + (k − 1) = 66 for C6, k = 3 (closed form)
    True
    """
    started = time.monotonic()
    stop = started + seconds
    arrays = _Arrays(graph, list(order) if order is not None else placing_order(graph), k, allowed)

    def run(size: int, round_: int) -> ChainEstimate:
        return arrays.run(replicates, size, seed + 7919 * round_, keep_colourings)

    if particles is not None:
        result = run(particles, 0)
        result.seconds = time.monotonic() - started
        return result
    _compiled()
    t0 = time.monotonic()
    rounds = [run(_PILOT_PARTICLES, 0)]
    pilot_seconds = max(time.monotonic() - t0, 1e-4)
    left = stop - time.monotonic()
    # the cost of a round is a fixed part (one pass over the order, whatever the size) plus a
    # part per particle; a second pilot four times larger separates them when time allows, or
    # the fixed part would be charged to every particle and the main round come out too small
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
    # two rounds of equal size; the second only when the first leaves time for it (the cost per
    # particle grows with the population once its slots outgrow the processor's cache: measured on
    # uta-s-92, a round sized for 20 s took 34 s, so a single round sized by the pilot would overrun)
    size = int((0.85 * left / 2 - fixed) / per_particle)
    size = min(size, _MAX_PARTICLES, _MEMORY_BYTES // max(arrays.bytes_per_particle(), 1))
    if size < _MIN_PARTICLES and fixed + per_particle * _MIN_PARTICLES <= 0.85 * left:
        size = _MIN_PARTICLES  # small populations bias the logs
    if size >= 2 * _PILOT_PARTICLES:
        rounds = []
    else:
        size = _PILOT_PARTICLES
    round_seconds = fixed + per_particle * size
    while not rounds or time.monotonic() + round_seconds <= stop:
        t0 = time.monotonic()
        rounds.append(run(size, len(rounds) + 1))
        round_seconds = time.monotonic() - t0
    result = ChainEstimate(k, np.concatenate([r.log_counts for r in rounds]), size, 0.0, rounds[0].colourings)
    result.seconds = time.monotonic() - started
    return result


class _Arrays:
    """The graph in the kernel's form: events numbered by their place in the order, compressed rows."""

    def __init__(self, graph: nx.Graph, order: list, k: int, allowed: Mapping[Hashable, set[int]] | None):
        self.order, self.k = order, k
        index = {v: i for i, v in enumerate(order)}
        rows = [sorted(index[u] for u in graph[v]) for v in order]
        self.indptr = np.zeros(len(order) + 1, dtype=np.int64)
        self.indptr[1:] = np.cumsum([len(r) for r in rows])
        self.nbrs = np.array([u for r in rows for u in r], dtype=np.int64)
        words = max((k + 63) // 64, 1)
        self.allowed = np.zeros((len(order), words), dtype=np.uint64)
        for i, v in enumerate(order):
            ok = allowed.get(v) if allowed else None
            for c in (range(k) if ok is None else [c for c in ok if 0 <= c < k]):
                self.allowed[i, c // 64] |= np.uint64(1) << np.uint64(c % 64)

    def bytes_per_particle(self) -> int:
        return 4 * len(self.order) * (os.cpu_count() or 1)  # two slot arrays per population, one population per core

    def run(self, groups: int, size: int, seed: int, keep: int) -> ChainEstimate:
        from .particle_kernel import run_populations

        seeds = np.random.default_rng(seed).integers(1, 2 ** 63, size=groups, dtype=np.uint64)
        t0 = time.monotonic()
        log_z, first = run_populations(self.indptr, self.nbrs, self.allowed, self.k, groups, size,
                                       _MOVES_PER_RESAMPLE, seeds)
        colourings = [{v: int(row[i]) for i, v in enumerate(self.order)}
                      for row in first[:keep] if len(row) and row.min() >= 0]
        return ChainEstimate(self.k, log_z, size, time.monotonic() - t0, colourings)


def _compiled() -> None:
    """Compile (or load from numba's cache) the kernel before anything is timed."""
    global _READY
    if not _READY:
        one = _Arrays(nx.path_graph(2), [0, 1], 2, None)
        one.run(1, 2, 0, 0)
        _READY = True


_READY = False


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
    >>> est = sample_counts(nx.cycle_graph(7), [3, 4], seconds=1.0)
    >>> iv = est[3].count_moments().interval()
    >>> iv.low <= math.log10(2 ** 7 - 2) <= iv.high   # (k − 1)^7 − (k − 1) for C7, k = 3 (closed form)
    True
    """
    ks = list(ks)
    started = time.monotonic()
    stop = started + seconds
    order = list(order) if order is not None else placing_order(graph)
    allowed_at = allowed_at or {}
    if len(ks) == 1:
        return {ks[0]: sample_chain(graph, ks[0], seconds=seconds, allowed=allowed_at.get(ks[0]),
                                    seed=seed, keep_colourings=keep_colourings, order=order)}
    # the pilot: one small run per k, at most a tenth of the time
    _compiled()
    costs: dict[int, float | None] = {}
    for k in ks:
        if time.monotonic() > started + 0.1 * seconds:
            costs[k] = None
            continue
        pilot = sample_chain(graph, k, seconds=0.0, allowed=allowed_at.get(k), particles=2 * _PILOT_PARTICLES,
                             seed=seed + 104729 + k, keep_colourings=0, order=order)
        spent = max(pilot.seconds, 1e-4) / REPLICATES
        alive = pilot.log_counts[np.isfinite(pilot.log_counts)]
        costs[k] = float(alive.var(ddof=1)) * spent if len(alive) >= 3 else None
    shares = neyman_shares(costs)
    out: dict[int, ChainEstimate] = {}
    for index, k in enumerate(ks):
        left = max(stop - time.monotonic(), 0.05)
        share = left * shares[k] / sum(shares[j] for j in ks[index:])  # what a chain leaves passes on
        out[k] = sample_chain(graph, k, seconds=share, allowed=allowed_at.get(k), seed=seed + 7 * k,
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


