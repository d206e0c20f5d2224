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
from typing import Callable, Sequence

import networkx as nx

from .bounds import Estimate, _log10_int, chordal_subgraph_upper, dsatur_colour_count, knuth_estimate, lower_bound
from .budget import Budget, BudgetExceeded
from .frontier import colourings, frontier_order
from .polynomial import ChromaticPolynomial
from .reductions import chromatic_polynomial

Progress = Callable[[int, int, str], None]

MEANING = (
    "timetables = the number of ways to give every event one of K distinct, labelled slots "
    "so that no attendee has two events in one slot"
)
MEANING_CONSTRAINED = MEANING + ", with every fixed event in its slot and no event in a slot barred to it"
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

    @property
    def exact(self) -> bool:
        return all(c.exact for c in self.counts)

    def to_json(self) -> dict:
        return {
            "counts": [c.to_json() for c in self.counts],
            "meaning": MEANING_CONSTRAINED if self.constrained else MEANING,
            "events": self.events,
            "clashes": self.clashes,
            "isolated_events": self.isolated_events,
            "chromatic_number": self.chromatic_number,
            "fewest_slots": None
            if self.chromatic_number is None
            else {"slots": self.chromatic_number, "reason": self.fewest_slots_reason},
            "components": [c.to_json() for c in self.components],
            "constrained": self.constrained,
            "riskiest_absent_clashes": self.riskiest_absent_clashes,
            "most_freeing_clashes": self.most_freeing_clashes,
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
        Called as ``progress(done, total, message)``: groups done out of groups to count,
        and a line about the work in hand (steps of a long frontier count included).

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
        budget = Budget(max(deadline - time.monotonic(), 0.5) + time.monotonic(), memory_bytes)
        inner = None
        if progress is not None:
            def inner(done: int, total: int, index=index, size=len(comp)) -> None:
                progress(index, len(big), f"a group of {size} events: step {done} of {total}")
        results.append(_count_component(sub, needed, ks, budget, fixed, barred, constrained_events, inner))
        if progress is not None:
            progress(index + 1, len(big), f"counted a group of {len(comp)} events")

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
            counts.append(
                SlotCount(
                    slots=k,
                    timetables=value,
                    exact=True,
                    log10=_log10_int(value) if value else None,
                    lower=value,
                    upper=value,
                    ratio_to_previous=(_ratio(value, prev) if prev else None),
                    groupings=_groupings(results, isolated, k, deadline) if unconstrained_polys else None,
                )
            )
        else:
            counts.append(_combine_inexact(results, isolated_factor(k), k))

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


def _count_component(sub, needed, ks, budget, fixed, barred, constrained_events, progress=None) -> ComponentCount:
    events = [str(v) for v in sorted(sub, key=str)]
    constrained = any(v in constrained_events for v in sub)
    poly = None
    method = ""
    reason = None
    try:
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
    colour_count = None if exact or constrained else dsatur_colour_count(sub)
    for k in ks:
        if exact:
            v = values[k]
            prev = values.get(k - 1)
            counts.append(SlotCount(k, v, True, _log10_int(v) if v else None, v, v,
                                    ratio_to_previous=_ratio(v, prev) if prev else None,
                                    groupings=None if constrained else poly.groupings(k)))
        else:
            allowed = {v: allowed_slots(v, k, fixed, barred) for v in sub} if constrained else {}
            allowed = {v: a for v, a in allowed.items() if a is not None}
            upper = poly(k) if poly is not None else chordal_subgraph_upper(sub, k)
            lower = 0 if constrained else lower_bound(sub, k, colour_count)
            est = knuth_estimate(sub, k, allowed=allowed or None, seconds=0.5)
            counts.append(_inexact_count(k, lower, upper, est))
    return ComponentCount(events, sub.number_of_edges(), exact, method if exact else "bounds + Knuth estimate",
                          poly, constrained, counts, None if exact else reason, values if exact else {},
                          sorted(sub, key=str))


def _inexact_count(k: int, lower: int, upper: int, est: Estimate) -> SlotCount:
    if upper == 0:  # a chordal subgraph already needs more than k slots: exactly zero
        return SlotCount(k, 0, True, None, 0, 0)
    return SlotCount(
        slots=k,
        timetables=None,
        exact=False,
        lower=lower,
        upper=upper,
        estimate_log10=est.log10 if not est.zero else None,
        estimate_relative_error=est.relative_error,
    )


def _value_at(r: ComponentCount, k: int) -> int:
    if k in r.values:
        return r.values[k]
    if r.polynomial is not None and not r.constrained:
        return r.polynomial(k)
    raise KeyError(k)


def _combine_inexact(results: list[ComponentCount], iso: int, k: int) -> SlotCount:
    lower, upper = iso, iso
    log_est = math.log10(iso) if iso > 0 else None
    rel_sq = 0.0
    zero = iso == 0
    for r in results:
        c = next(c for c in r.counts if c.slots == k)
        if c.exact:
            lower *= c.timetables
            upper *= c.timetables
            if c.timetables == 0:
                zero = True
            elif log_est is not None:
                log_est += _log10_int(c.timetables)
        else:
            lower *= c.lower or 0
            upper *= c.upper
            if c.estimate_log10 is None:
                log_est = None
            elif log_est is not None:
                log_est += c.estimate_log10
                rel_sq += (c.estimate_relative_error or 0.0) ** 2
    if zero or upper == 0:
        return SlotCount(k, 0, True, None, 0, 0)
    return SlotCount(k, None, False, None, lower, upper, log_est, math.sqrt(rel_sq) if log_est is not None else None)


def _ratio(value: int, prev: int) -> float:
    if value == 0:
        return 0.0
    return 10 ** (_log10_int(value) - _log10_int(prev))


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
