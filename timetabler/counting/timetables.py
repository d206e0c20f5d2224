"""How many clash-free timetables each number of slots allows: the registrar's measure of slack.

For a conflict graph ``G`` and ``k`` labelled slots the number of clash-free timetables is
the chromatic polynomial ``P(G, k)``; it is the product over the connected components of
``G`` (an event with no clash contributes ``k``). Each component is counted exactly when
its budget allows (:func:`.reductions.chromatic_polynomial`); otherwise it is reported as
not exact with rigorous bounds and an unbiased estimate (:mod:`.bounds`). Never a silent
wrong number: every figure says whether it is exact.

Fixed and barred slots
    With fixed events (an event that must sit in a given slot) or barred slots, the count
    is the number of clash-free timetables that respect them. It is computed exactly on a
    component by adding ``k`` slot vertices joined in a clique, joining each event to the
    slot vertices it may not use, and dividing the number of proper ``k``-colourings by
    ``k!`` (the clique's colours name the slots). Components without constraints keep
    their chromatic polynomial.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from typing import Sequence

import networkx as nx

from ..conflicts import largest_clique
from ..progress import StepProgress
from .bounds import (
    log10_int,
    agreeing_family_lower,
    chordal_subgraph_upper,
    clique_product_upper,
    degeneracy_lower,
    lower_bound,
)
from ..dsatur import dsatur_order
from .sequential_sampling import Moments, placing_order, sample_counts
from .budget import Budget, BudgetExceeded
from .frontier import colourings, frontier_order
from .polynomial import ChromaticPolynomial
from .reductions import chromatic_polynomial

Progress = StepProgress  # (what, done, total): see timetabler.progress

MEANING = (
    "timetables = the number of ways to give every event one of K distinct, labelled slots "
    "so that no attendee has two events in one slot"
)
MEANING_CONSTRAINED = MEANING + ", with every fixed event in its slot and no event in a slot barred to it"
MEANING_AVAILABILITY = MEANING_CONSTRAINED + (
    ", and every event only in a slot all its required attendees can make (optional attendees make no clash)")
MEANING_PEOPLE = (
    "; an event longer than its slot takes the touching slots after it and an attendee with extra time every slot "
    "of their sitting (no required attendee in two events at once), and a quorum counts an optional attendee only "
    "when they can come and are booked in no other event at the time")
SENSITIVITY_MAX_EVENTS = 16  # components up to this size get the what-if figures


@dataclass
class SlotCount:
    """The count for one number of slots (for the whole timetable or one component)."""

    slots: int
    timetables: int | None  # exact Python int, or None when not exact
    exact: bool
    log10: float | None = None  # log10 of the exact count (None when 0 or not exact)
    lower: int | None = None
    upper: int | None = None
    estimate_log10: float | None = None
    estimate_relative_error: float | None = None
    ratio_to_previous: float | None = None  # count at K over count at K − 1
    groupings: int | None = None  # splits into at most K non-empty clash-free groups
    estimate_interval_log10: tuple[float, float] | None = None  # 95 % interval for the count, log10
    ratio_interval_log10: tuple[float, float] | None = None  # 95 % interval for count(K) / count(K − 1), log10
    moments: Moments | None = field(default=None, repr=False)  # ln of the count: centre, variance
    ratio_moments: Moments | None = field(default=None, repr=False)

    @property
    def ratio_interval(self) -> tuple[float, float] | None:
        """The ratio's 95 % interval as plain numbers (None when they overflow a float)."""
        if self.ratio_interval_log10 is None or max(self.ratio_interval_log10) > 300:
            return None
        return (10 ** self.ratio_interval_log10[0], 10 ** self.ratio_interval_log10[1])

    def to_json(self) -> dict:
        return {
            "slots": self.slots,
            "timetables": None if self.timetables is None else str(self.timetables),
            "exact": self.exact,
            "log10": self.log10,
            "lower": None if self.lower is None else str(self.lower),
            "upper": None if self.upper is None else str(self.upper),
            "estimate_log10": self.estimate_log10,
            "estimate_relative_error": self.estimate_relative_error,
            "ratio_to_previous": self.ratio_to_previous,
            "groupings": None if self.groupings is None else str(self.groupings),
            "estimate_interval_log10": None if self.estimate_interval_log10 is None
            else [round(x, 4) for x in self.estimate_interval_log10],
            "ratio_interval": None if self.ratio_interval is None else [float(f"{x:.6g}") for x in self.ratio_interval],
            "ratio_interval_log10": None if self.ratio_interval_log10 is None
            else [round(x, 4) for x in self.ratio_interval_log10],
        }


@dataclass
class ComponentCount:
    """One group of events linked by clashes, with its own counts."""

    events: list[str]
    clashes: int
    exact: bool
    method: str
    polynomial: ChromaticPolynomial | None
    constrained: bool
    counts: list[SlotCount]
    reason: str | None = None  # why it is not exact
    values: dict[int, int] = field(default_factory=dict, repr=False)  # exact counts at K and K − 1
    nodes: list = field(default_factory=list, repr=False)  # the graph's own node objects

    @property
    def chromatic_number(self) -> int | None:
        return self.polynomial.chromatic_number if self.polynomial is not None else None

    def to_json(self) -> dict:
        return {
            "events": self.events,
            "size": len(self.events),
            "clashes": self.clashes,
            "exact": self.exact,
            "method": self.method,
            "constrained": self.constrained,
            "chromatic_number": self.chromatic_number,
            "reason": self.reason,
            "counts": [c.to_json() for c in self.counts],
        }


@dataclass
class CountReport:
    """Everything ``timetabler count`` shows."""

    counts: list[SlotCount]
    components: list[ComponentCount]
    chromatic_number: int | None
    events: int
    clashes: int
    isolated_events: int
    constrained: bool
    fewest_slots_reason: str | None = None
    riskiest_absent_clashes: list[dict] = field(default_factory=list)
    most_freeing_clashes: list[dict] = field(default_factory=list)
    seconds: float = 0.0
    availability: bool = False  # events only where their required attendees can come
    availability_bound: bool = False  # long events, extra time or quorums not counted exactly: upper bounds
    people_rules: bool = False  # long events, extra time or quorums with optional attendees are in the count
    most_limiting_people: list[dict] = field(default_factory=list)  # attendee, slots (K), gain, starts_blocked
    not_counted: str | None = None  # the hard rules the counts leave to the solver, in words
    fewest_at_least: bool = False  # the fewest shown is a lower bound only: the people's rules may need more
    fewest_with_people: int | None = None  # with people: the fewest the counts prove (above chromatic_number)

    @property
    def fewest(self) -> int | None:
        """The fewest slots as the counts show it: with people, at least one more than every slot
        count counted exactly 0 (a timetable of K slots is one of K + 1); else the chromatic number."""
        return self.fewest_with_people if self.fewest_with_people is not None else self.chromatic_number

    @property
    def exact(self) -> bool:
        return all(c.exact for c in self.counts)

    def to_json(self) -> dict:
        return {
            "counts": [c.to_json() for c in self.counts],
            "meaning": (MEANING_AVAILABILITY + (MEANING_PEOPLE if self.people_rules else "")
                        + ("; where a count is not exact its upper bound counts the starts every required attendee "
                           "can make" if self.availability_bound else "")
                        if self.availability else MEANING_CONSTRAINED if self.constrained else MEANING),
            "events": self.events,
            "clashes": self.clashes,
            "isolated_events": self.isolated_events,
            "chromatic_number": self.chromatic_number,
            "fewest_slots": None
            if self.chromatic_number is None
            else {"slots": self.fewest, "reason": self.fewest_slots_reason, "at_least": self.fewest_at_least},
            "components": [c.to_json() for c in self.components],
            "constrained": self.constrained,
            "riskiest_absent_clashes": self.riskiest_absent_clashes,
            "most_freeing_clashes": self.most_freeing_clashes,
            "most_limiting_people": self.most_limiting_people,
            "not_counted": self.not_counted,
            "seconds": round(self.seconds, 3),
        }


# --------------------------------------------------------------------------- constraints


def allowed_slots(event, k: int, fixed: dict | None, barred: dict | None) -> set[int] | None:
    """0-based slots the event may use with ``k`` slots, or None when unconstrained."""
    out = None
    if fixed and event in fixed:
        s = int(fixed[event])
        out = {s - 1} if 1 <= s <= k else set()
    if barred and event in barred:
        base = out if out is not None else set(range(k))
        out = base - {int(b) - 1 for b in barred[event]}
    return out


def constrained_count(graph: nx.Graph, k: int, allowed: dict, budget: Budget) -> int:
    """Exact clash-free timetables of ``graph`` with ``k`` slots respecting ``allowed``.

    Adds a clique of ``k`` slot vertices, joins each event to the slots it may not use,
    counts proper ``k``-colourings by the colour-class DP and divides by ``k!``.
    """
    if k <= 0:
        return 1 if graph.number_of_nodes() == 0 else 0
    g = nx.Graph()
    slot_nodes = [("__slot__", j) for j in range(k)]
    g.add_nodes_from(slot_nodes)
    for i in range(k):
        for j in range(i + 1, k):
            g.add_edge(slot_nodes[i], slot_nodes[j])
    g.add_nodes_from(graph)
    g.add_edges_from(graph.edges())
    for v, ok in allowed.items():
        if ok is None:
            continue
        if not ok:
            return 0
        for j in range(k):
            if j not in ok:
                g.add_edge(v, slot_nodes[j])
    order = slot_nodes + [v for v in frontier_order(graph).order]
    total = colourings(g, k, order, budget)
    quotient, rest = divmod(total, math.factorial(k))
    if rest:
        raise ArithmeticError("slot-clique count not divisible by k!: internal error")
    return quotient


# --------------------------------------------------------------------------- main entry


def count_timetables(
    graph: nx.Graph,
    ks: Sequence[int],
    *,
    budget_seconds: float = 20.0,
    fixed: dict[str, int] | None = None,
    barred: dict[str, set[int]] | None = None,
    progress: Progress | None = None,
    memory_bytes: int = 1_500_000_000,
    what_if: bool = True,
    exact_counting: bool = True,
) -> CountReport:
    """Count clash-free timetables for each number of slots in ``ks``.

    Parameters
    ----------
    graph : networkx.Graph
        The conflict graph (events as nodes, an edge where two events share an attendee).
    ks : sequence of int
        Numbers of slots to count for.
    budget_seconds : float
        Time for the whole count; components are counted smallest first, each with what
        is left (at least half a second). A component that does not finish is reported
        with bounds and an estimate, marked not exact.
    fixed, barred : dict, optional
        Event code → slot number (1-based) it must use; event code → slot numbers it may
        not use. Counts then respect them (see the module notes).
    progress : callable, optional
        Called as ``progress(message, done, total)`` (:data:`timetabler.progress.StepProgress`):
        a line about the work in hand (steps of a long frontier count included), and groups done
        out of groups to count.
    exact_counting : bool
        ``False`` skips exact counting and estimates every group (for checking the
        estimates against exact counts: ``benchmarks/count_estimates.py``).

    A group not counted exactly gets proven bounds and a 95 % interval from
    :mod:`.sequential_sampling`, which uses the time left until ``budget_seconds``.

    Examples
    --------
    >>> import networkx as nx
    >>> report = count_timetables(nx.path_graph(3), [2, 3])
    >>> [c.timetables for c in report.counts]    # k (k − 1)^2, a tree on 3 vertices
    [2, 12]
    """
    started = time.monotonic()
    deadline = started + budget_seconds
    ks = sorted({int(k) for k in ks})
    fixed = {str(k): int(v) for k, v in (fixed or {}).items() if k in graph}
    barred = {str(k): set(v) for k, v in (barred or {}).items() if k in graph and v}
    constrained_events = set(fixed) | set(barred)

    comps = sorted((sorted(c, key=str) for c in nx.connected_components(graph)), key=lambda c: (len(c), str(c[0])))
    isolated = [c[0] for c in comps if len(c) == 1]
    big = [c for c in comps if len(c) > 1]
    results: list[ComponentCount] = []
    # the k values each component must be evaluated at: ks, K−1 for ratios
    needed = sorted({k for k in ks} | {k - 1 for k in ks if k >= 1})

    for index, comp in enumerate(big):
        sub = nx.Graph(graph.subgraph(comp))  # a copy: subgraph views are slow to walk
        # exact counting may take what is left but a second or a tenth (kept for an estimate)
        left = max(deadline - time.monotonic(), 0.5)
        budget = Budget(time.monotonic() + max(left - min(0.1 * left, 1.0), 0.5), memory_bytes)
        def inner(done: int, total: int, index=index, size=len(comp)) -> None:
            progress(f"a group of {size} events: step {done} of {total}", index, len(big))
        results.append(_count_component(sub, needed, ks, budget, fixed, barred, constrained_events,
                                        inner if progress is not None else None, exact_counting))
        if progress is not None:
            progress(f"counted a group of {len(comp)} events", index + 1, len(big))
    pending = [r for r in results if not r.exact]
    if pending:
        if progress is not None:
            progress(f"estimating {len(pending)} large group(s) until the time limit", len(big), len(big))
        _estimate_components(pending, graph, ks, deadline - 0.3, fixed, barred)

    def isolated_factor(k: int) -> int:
        value = 1
        for v in isolated:
            ok = allowed_slots(v, k, fixed, barred)
            value *= k if ok is None else len(ok)
        return value

    exact_everywhere = all(r.exact for r in results)
    totals: dict[int, int | None] = {}
    for k in needed:
        if exact_everywhere:
            value = isolated_factor(k)
            for r in results:
                value *= _value_at(r, k)
            totals[k] = value
        else:
            totals[k] = None

    counts = []
    unconstrained_polys = exact_everywhere and not constrained_events
    for k in ks:
        if exact_everywhere:
            value = totals[k]
            prev = totals.get(k - 1)
            counts.append(exact_slot_count(k, value, prev,
                                           _groupings(results, isolated, k, deadline) if unconstrained_polys else None))
        else:
            counts.append(_combine_inexact(results, {j: isolated_factor(j) for j in (k - 1, k) if j >= 0}, k))

    chromatic = None
    reason = None
    if all(r.polynomial is not None for r in results):
        chromatic = max([r.chromatic_number for r in results] + [1 if graph.number_of_nodes() else 0])
        reason = _fewest_reason(graph, results, chromatic)
    report = CountReport(
        counts=counts,
        components=results,
        chromatic_number=chromatic,
        events=graph.number_of_nodes(),
        clashes=graph.number_of_edges(),
        isolated_events=len(isolated),
        constrained=bool(constrained_events),
    )
    report.fewest_slots_reason = reason
    if what_if:
        _what_if(graph, report, ks, deadline)
    report.seconds = time.monotonic() - started
    return report


def _count_component(sub, needed, ks, budget, fixed, barred, constrained_events, progress=None,
                     exact_counting=True) -> ComponentCount:
    events = [str(v) for v in sorted(sub, key=str)]
    constrained = any(v in constrained_events for v in sub)
    poly = None
    method = ""
    reason = None
    try:
        if not exact_counting:
            raise BudgetExceeded("exact counting not asked for")
        poly = chromatic_polynomial(sub, budget=budget, progress=progress)
        method = poly.method
    except BudgetExceeded as exc:
        reason = str(exc)
    counts: list[SlotCount] = []
    exact = poly is not None
    values: dict[int, int] = {}
    if constrained and exact:
        try:
            for k in needed:
                allowed = {v: allowed_slots(v, k, fixed, barred) for v in sub}
                values[k] = constrained_count(sub, k, allowed, budget)
            method = "slot-clique count (fixed and barred slots) + colour-classes"
        except BudgetExceeded as exc:
            exact = False
            reason = str(exc)
    elif exact:
        values = {k: poly(k) for k in needed}
    for k in ks if exact else []:
        v = values[k]
        prev = values.get(k - 1)
        counts.append(exact_slot_count(k, v, prev, None if constrained else poly.groupings(k)))
    return ComponentCount(events, sub.number_of_edges(), exact, method if exact else "bounds + sequential Monte Carlo estimate",
                          poly, constrained, counts, None if exact else reason, values if exact else {},
                          sorted(sub, key=str))


def exact_slot_count(k: int, value: int, prev: int | None, groupings: int | None = None) -> SlotCount:
    """An exact count, its interval the single point it is (empty for 0)."""
    log10 = log10_int(value) if value else None
    ratio_log10 = log10_int(value) - log10_int(prev) if value and prev else None
    return SlotCount(
        k, value, True, log10, value, value,
        ratio_to_previous=_ratio(value, prev) if prev else None,
        groupings=groupings,
        estimate_interval_log10=None if log10 is None else (log10, log10),
        ratio_interval_log10=None if ratio_log10 is None else (ratio_log10, ratio_log10),
    )


# --------------------------------------------------------------------------- estimates for large groups

LN10 = math.log(10)
_CHAIN_GAP = 3  # numbers of slots further apart than this are sampled by separate chains


def _estimate_components(pending: list[ComponentCount], graph: nx.Graph, ks: list[int], deadline: float,
                         fixed: dict, barred: dict) -> None:
    """Bounds and a sequential Monte Carlo estimate for every group not counted exactly.

    The time left until ``deadline`` is shared between the groups in proportion to their
    size (events plus clashes), smallest first; what a group leaves unused passes on.
    """
    weights = [len(r.nodes) + r.clashes for r in pending]
    for index, comp in enumerate(pending):
        left = max(deadline - time.monotonic(), 0.2)
        share = left * weights[index] / sum(weights[index:])
        _estimate_component(comp, nx.Graph(graph.subgraph(comp.nodes)), ks, time.monotonic() + share, fixed, barred)


def _estimate_component(comp: ComponentCount, sub: nx.Graph, ks: list[int], stop: float, fixed: dict,
                        barred: dict) -> None:
    started = time.monotonic()
    bounds_stop = started + 0.15 * (stop - started)
    clique = largest_clique(sub, budget_nodes=120, deadline=started + 0.03 * (stop - started))
    possible = [k for k in ks if k >= len(clique)]
    allowed_at = {}
    for k in possible:
        allowed_at[k] = {v: allowed_slots(v, k, fixed, barred) for v in sub} if comp.constrained else {}
        allowed_at[k] = {v: {c for c in a} for v, a in allowed_at[k].items() if a is not None}
    possible = [k for k in possible if all(allowed_at[k].values()) or not allowed_at[k]]
    order, dsatur = dsatur_order(sub)  # once: the order of every bound, and a timetable
    uppers: dict[int, int] = {}
    lowers: dict[int, int] = {}
    for k in possible:
        allowed = allowed_at[k] or None
        upper = chordal_subgraph_upper(sub, k) if not allowed else _list_upper(sub, k, allowed)
        if comp.polynomial is not None:
            upper = min(upper, comp.polynomial(k))
        tighter = clique_product_upper(sub, k, order, allowed, deadline=bounds_stop)
        uppers[k] = min(upper, tighter) if tighter is not None else upper
        lowers[k] = degeneracy_lower(sub, k, allowed)
        if not allowed:
            lowers[k] = max(lowers[k], lower_bound(sub, k, max(dsatur.values()) + 1, deadline=bounds_stop))
            if max(dsatur.values()) < k:
                lowers[k] = max(lowers[k], agreeing_family_lower(sub, k, dsatur, deadline=bounds_stop))
    possible = [k for k in possible if uppers[k] > 0]
    chains: dict[int, object] = {}
    if possible:
        # every number of slots by its own chain; the ratio to one slot fewer is the difference
        # of two independent logs (sample_counts says why, and how the time is shared)
        runs = _chain_runs(possible, len(clique), comp.constrained)
        sampled = sorted({k for lo, hi in runs for k in range(lo, hi + 1)})
        left = max(stop - time.monotonic(), 0.1)
        chains = sample_counts(sub, sampled, seconds=0.9 * left, order=placing_order(sub),
                               allowed_at={k: allowed_at.get(k) or None for k in sampled})
    counts = []
    for k in ks:
        if k not in uppers or uppers[k] == 0:
            counts.append(exact_slot_count(k, 0, None))
            continue
        if lowers[k] == uppers[k]:  # the bounds meet (a chordal group): exact, and so is the ratio when they meet at K − 1
            prev = None
            if not comp.constrained and k - 1 >= len(clique):
                below = lower_bound(sub, k - 1, max(dsatur.values()) + 1, deadline=stop)
                prev = below if below and below == chordal_subgraph_upper(sub, k - 1) else None
            comp.values[k] = lowers[k]
            if prev:
                comp.values[k - 1] = prev
            counts.append(exact_slot_count(k, lowers[k], prev))
            continue
        chain = chains.get(k)
        allowed = allowed_at[k] or None
        lower = lowers[k]
        for colouring in (chain.colourings[:3] if chain is not None else []):
            if time.monotonic() > stop and lower > 0:
                break
            lower = max(lower, agreeing_family_lower(sub, k, colouring, allowed, deadline=stop))
        moments = chain.count_moments() if chain is not None else None
        ratio = None
        below = chains[k - 1].count_moments() if k - 1 in chains else None
        if moments is not None and below is not None:  # independent chains: the variances add
            ratio = Moments(moments.centre - below.centre, moments.variance + below.variance,
                            min(moments.replicates, below.replicates))
        counts.append(_estimated_count(k, lower, uppers[k], moments, ratio))
    comp.counts = counts


def _list_upper(sub: nx.Graph, k: int, allowed: dict) -> int:
    value = 1
    for v in sub:
        value *= len(allowed[v]) if v in allowed else k
    return value


def _chain_runs(ks: list[int], clique: int, constrained: bool) -> list[tuple[int, int]]:
    """Ranges of consecutive numbers of slots sampled by one chain each (one per K with pins)."""
    if constrained:
        return [(k, k) for k in ks]
    runs: list[list[int]] = []
    for k in ks:
        if runs and k - runs[-1][1] <= _CHAIN_GAP:
            runs[-1][1] = k
        else:
            start = k - 1 if runs and k - 1 >= clique else k  # K − 1 too, for the ratio
            runs.append([start, k])
    return [(lo, hi) for lo, hi in runs]


def _estimated_count(k: int, lower: int, upper: int, moments: Moments | None, ratio: Moments | None) -> SlotCount:
    """A count known by proven bounds and an estimate; the interval is kept inside the bounds."""
    count = SlotCount(slots=k, timetables=None, exact=False, lower=lower, upper=upper, moments=moments,
                      ratio_moments=ratio)
    set_intervals(count)
    return count


def set_intervals(count: SlotCount) -> None:
    low_bound = log10_int(count.lower) if count.lower else -math.inf
    high_bound = log10_int(count.upper) if count.upper else math.inf
    if count.moments is not None:
        iv = count.moments.interval()
        centre = min(max(iv.estimate, low_bound), high_bound)
        count.estimate_log10 = centre
        count.estimate_relative_error = math.sqrt(count.moments.variance)
        count.estimate_interval_log10 = (min(max(iv.low, low_bound), high_bound), max(min(iv.high, high_bound), low_bound))
    if count.ratio_moments is not None:
        iv = count.ratio_moments.interval()
        count.ratio_interval_log10 = (iv.low, iv.high)
        count.ratio_to_previous = 10 ** iv.estimate if iv.estimate < 300 else None


def _value_at(r: ComponentCount, k: int) -> int:
    if k in r.values:
        return r.values[k]
    if r.polynomial is not None and not r.constrained:
        return r.polynomial(k)
    raise KeyError(k)


def _combine_inexact(results: list[ComponentCount], iso: dict[int, int], k: int) -> SlotCount:
    """The whole count from the groups': products of bounds, sums of the logs' moments."""
    lower, upper = iso[k], iso[k]
    zero = iso[k] == 0
    moments: Moments | None = Moments(math.log(iso[k]), 0.0, 10**9) if iso[k] else None
    ratio: Moments | None = None
    if iso[k] and iso.get(k - 1):
        ratio = Moments(math.log(iso[k]) - math.log(iso[k - 1]), 0.0, 10**9)
    for r in results:
        c = next(c for c in r.counts if c.slots == k)
        if c.exact:
            lower *= c.timetables
            upper *= c.timetables
            if c.timetables == 0:
                zero = True
                continue
            if moments is not None:
                moments = moments.shifted(log10_int(c.timetables) * LN10)
            prev = r.values.get(k - 1) if r.values else None
            if ratio is not None and prev:
                ratio = ratio.shifted((log10_int(c.timetables) - log10_int(prev)) * LN10)
            else:
                ratio = None
        else:
            lower *= c.lower or 0
            upper *= c.upper
            moments = None if moments is None or c.moments is None else moments + c.moments
            ratio = None if ratio is None or c.ratio_moments is None else ratio + c.ratio_moments
    if zero or upper == 0:
        return exact_slot_count(k, 0, None)
    if lower == upper:
        out = exact_slot_count(k, lower, None)
        if ratio is not None and ratio.variance == 0:  # every group's ratio exact too
            out.ratio_interval_log10 = (ratio.centre / LN10, ratio.centre / LN10)
            out.ratio_to_previous = 10 ** (ratio.centre / LN10) if ratio.centre / LN10 < 300 else None
        return out
    return _estimated_count(k, lower, upper, moments, ratio)


def _ratio(value: int, prev: int) -> float:
    if value == 0:
        return 0.0
    return 10 ** (log10_int(value) - log10_int(prev))


def _groupings(results: list[ComponentCount], isolated: list, k: int, deadline: float | None = None) -> int | None:
    """Ways to split all events into at most ``k`` non-empty clash-free groups.

    From the values ``P(0) … P(m)`` of the whole graph by Newton's forward differences:
    ``a_j = Δ^j P(0) / j!`` are the falling-factorial coefficients (groupings into exactly
    ``j`` groups), summed for ``j ≤ m`` with ``m = min(k, n)``: n events make at most n
    non-empty groups, so ``a_j = 0`` for ``j > n`` and a huge ``k`` costs no more than
    ``k = n``. None when the ``deadline`` (a ``time.monotonic()`` value) passes first.
    """
    n = len(isolated) + sum(len(r.events) for r in results)
    m = min(k, n)
    samples = []
    for i in range(m + 1):
        value = i ** len(isolated)
        for r in results:
            value *= r.polynomial(i)  # type: ignore[union-attr]
        samples.append(value)
    total = 0
    diffs = samples
    for j in range(m + 1):
        if deadline is not None and time.monotonic() > deadline:
            return None
        total += diffs[0] // math.factorial(j)
        diffs = [diffs[i + 1] - diffs[i] for i in range(len(diffs) - 1)]
    return total


def _fewest_reason(graph: nx.Graph, results: list[ComponentCount], chromatic: int) -> str:
    if chromatic <= 1:
        return "no two events clash, so one slot holds them all" if graph.number_of_nodes() else "no events"
    worst = max(results, key=lambda r: (r.chromatic_number or 0, len(r.events)))
    clique = max(nx.find_cliques(graph.subgraph(worst.nodes)), key=len) if len(worst.events) <= 400 else []
    if len(clique) == chromatic:
        return (
            f"{', '.join(sorted(map(str, clique)))} pairwise share attendees, so no two of these "
            f"{chromatic} events can share a slot (with {chromatic - 1} slots the count is exactly 0)"
        )
    group = f"{len(worst.events)} events linked by clashes ({', '.join(map(str, worst.events[:3]))}, …)"
    return (
        f"with {chromatic - 1} slots there are exactly 0 clash-free timetables for the group of {group}, "
        f"although its largest set of pairwise clashing events has only {len(clique)}"
    )


def _what_if(graph: nx.Graph, report: CountReport, ks: list[int], deadline: float) -> None:
    """Riskiest absent clashes and the clashes whose removal frees the most, on small groups.

    For a pair ``u, v`` with no shared attendee, a new shared attendee destroys the
    timetables that put them together: the share ``P(G/uv, k) / P(G, k)``. Removing a clash
    ``e`` multiplies the count by ``P(G − e, k) / P(G, k)``. Both are computed on the pair's
    own component (other components cancel), at the smallest requested ``k`` that allows a
    timetable.
    """
    ok = [c.slots for c in report.counts if c.timetables]
    if not ok:
        return
    k = ok[0]
    stop = min(deadline, time.monotonic() + 3.0)
    risky, freeing = [], []
    for comp in report.components:
        if comp.polynomial is None or comp.constrained or len(comp.events) > SENSITIVITY_MAX_EVENTS:
            continue
        base = comp.polynomial(k)
        if base == 0:
            continue
        sub = nx.Graph(graph.subgraph(comp.nodes))
        nodes = list(sub)
        for i, u in enumerate(nodes):
            for v in nodes[i + 1:]:
                if time.monotonic() > stop:
                    break
                if sub.has_edge(u, v):
                    cut = nx.Graph(sub)
                    cut.remove_edge(u, v)
                    value = chromatic_polynomial(cut)(k)
                    freeing.append({"events": [str(u), str(v)], "slots": k, "gain": _ratio(value, base)})
                else:
                    merged = nx.contracted_nodes(sub, u, v, self_loops=False)
                    value = chromatic_polynomial(merged)(k)
                    risky.append({"events": [str(u), str(v)], "slots": k, "share_lost": value / base if value else 0.0})
    risky.sort(key=lambda d: (-d["share_lost"], d["events"]))
    freeing.sort(key=lambda d: (-d["gain"], d["events"]))
    report.riskiest_absent_clashes = risky[:5]
    report.most_freeing_clashes = freeing[:5]
