"""Counts for a whole timetabling problem: clashes plus its fixed and barred slots.

This is the one place where the slot references of the events sheet (a fixed slot, barred
slots, written as slot labels or numbers) are resolved against the slots of each K and
handed to :func:`~timetabler.counting.timetables.count_timetables`. The ``count``
command, the workbook and the web page all count through :func:`count_problem`, so they
always show the same numbers.
"""

from __future__ import annotations

from typing import Callable, Sequence

import networkx as nx

from ..availability import Availability
from ..model import Problem, Slot, generic_slots
from .sequential_sampling import Moments
from .timetables import CountReport, count_timetables, set_intervals


def default_slots_for(problem: Problem) -> Callable[[int], list[Slot]]:
    """The slots of K: the first K of the slots sheet, else K generic slots."""
    return lambda k: list(problem.slots[:k]) if problem.slots else generic_slots(k)


def pinned_events(problem: Problem) -> list:
    """Events with a fixed slot or barred slots."""
    return [e for e in problem.events.values() if (e.fixed_slot and str(e.fixed_slot).strip()) or e.barred_slots]


def count_problem(
    problem: Problem,
    ks: Sequence[int],
    *,
    graph: nx.Graph,
    slots_for: Callable[[int], Sequence[Slot]] | None = None,
    budget_seconds: float = 20.0,
    progress: Callable | None = None,
) -> tuple[CountReport, list[str]]:
    """Count the clash-free timetables of ``problem`` for each K in ``ks``.

    Without fixed or barred slots every K is counted in one call (the chromatic polynomial
    is shared). With them, each K is counted apart (the constraint depends on the slots),
    the time budget is shared between the Ks, and the reports are merged. A fixed slot
    that is not among the K slots makes the count 0, and a note says so.

    Returns the report and notes in plain words.

    Examples
    --------
    >>> from timetabler.model import Event, Problem
    >>> from timetabler.conflicts import conflict_graph
    >>> p = Problem([("ann", "A"), ("ann", "B")], events={"A": Event("A", fixed_slot="1")})
    >>> report, notes = count_problem(p, [3], graph=conflict_graph(p))
    >>> report.counts[0].timetables  # A in slot 1, B in slot 2 or 3
    2
    """
    ks = sorted(set(int(k) for k in ks))
    if problem.has_people or problem.slots:
        slots_for = slots_for or default_slots_for(problem)
        if problem.has_people or any(Availability.of(problem, list(slots_for(k))).spans for k in ks):
            return _count_with_availability(problem, ks, graph, slots_for, budget_seconds, progress)
    pinned = pinned_events(problem)
    if not pinned:
        return count_timetables(graph, ks, budget_seconds=budget_seconds, progress=progress), []
    slots_for = slots_for or default_slots_for(problem)
    notes: list[str] = []
    reports = []
    for k in ks:
        slots = list(slots_for(k))
        fixed: dict[str, int] = {}
        barred: dict[str, set[int]] = {}
        for event in pinned:
            if event.fixed_slot and str(event.fixed_slot).strip():
                number = problem.slot_number(event.fixed_slot, slots)
                if number is None:
                    notes.append(
                        f"With {k} slots, {event.code} is fixed to '{event.fixed_slot}', which is not one of the "
                        f"slots: no timetable can honour it, so the count is 0."
                    )
                fixed[event.code] = number or 0
            refs = {problem.slot_number(r, slots) for r in event.barred_slots} - {None}
            if refs:
                barred[event.code] = refs  # type: ignore[assignment]
        reports.append(
            count_timetables(
                graph, [k], budget_seconds=budget_seconds / len(ks), fixed=fixed, barred=barred, progress=progress
            )
        )
    merged = reports[0]
    merged.counts = [c for r in reports for c in r.counts]
    for other in reports[1:]:  # per-component counts for every K
        for mine, theirs in zip(merged.components, other.components):
            mine.counts.extend(theirs.counts)
    merged.seconds = sum(r.seconds for r in reports)
    _ratios_between_runs(merged.counts)
    return merged, notes


def _count_with_availability(problem: Problem, ks, graph, slots_for, budget_seconds, progress):
    """Counts where each event may start only where every required attendee can come.

    The allowed starts of :class:`~timetabler.availability.Availability` (fixed and barred
    slots included) are the lists of a list-colouring count, passed on as barred slots.
    When every event takes one slot for everyone and no quorum can be broken by optional
    attendees busy elsewhere, that count is the number of timetables. Otherwise (long
    events, extra time running into the next slot, such a quorum) every timetable is still
    such a list-colouring, so the count is only an upper bound: reported not exact, with
    that upper bound and 0 as the proven lower bound, and a note.
    """
    notes: list[str] = []
    reports = []
    quorum_open = any(e.quorum for e in problem.events.values()) and bool(problem.optional)
    for k in ks:
        found = Availability.of(problem, list(slots_for(k)))
        barred = {e: set(range(1, k + 1)) - set(found.starts.get(e, range(1, k + 1))) for e in graph}
        barred = {e: b for e, b in barred.items() if b}
        report = count_timetables(graph, [k], budget_seconds=budget_seconds / len(ks), barred=barred,
                                  progress=progress)
        report.constrained = True
        report.availability = True
        if not found.one_slot_each or quorum_open:
            report.availability_bound = True
            for c in report.counts:
                if c.exact and not c.timetables:
                    continue  # no list-colouring, so no timetable: 0 stays exact
                c.upper = c.timetables if c.exact else c.upper
                c.exact, c.lower, c.timetables, c.log10 = False, 0, None, None
                c.moments = c.ratio_moments = None  # the estimate was of the list-colourings
                c.estimate_log10 = c.estimate_relative_error = c.estimate_interval_log10 = None
                c.ratio_interval_log10, c.ratio_to_previous, c.groupings = None, None, None
            notes.append(f"With {k} slots some events take more than one slot (long events, extra time) or a "
                         f"quorum depends on optional attendees: the figure counts starts where every required "
                         f"attendee can come, an upper bound on the timetables, not an exact count.")
        reports.append(report)
    merged = reports[0]
    merged.counts = [c for r in reports for c in r.counts]
    for other in reports[1:]:
        for mine, theirs in zip(merged.components, other.components):
            mine.counts.extend(theirs.counts)
    merged.seconds = sum(r.seconds for r in reports)
    _ratios_between_runs(merged.counts)
    return merged, notes


def _ratios_between_runs(counts: list) -> None:
    """Each K was estimated on its own: the ratio to K − 1 from the two independent estimates (variances add)."""
    by_k = {c.slots: c for c in counts}
    for c in counts:
        prev = by_k.get(c.slots - 1)
        if c.exact or prev is None or c.ratio_moments is not None or c.moments is None or prev.moments is None:
            continue
        c.ratio_moments = Moments(c.moments.centre - prev.moments.centre, c.moments.variance + prev.moments.variance,
                                  min(c.moments.replicates, prev.moments.replicates))
        set_intervals(c)
