"""Counts for a whole timetabling problem: clashes plus its fixed and barred slots.

This is the one place where the slot references of the events sheet (a fixed slot, barred
slots, written as slot labels or numbers) are resolved against the slots of each K and
handed to :func:`~timetabler.counting.timetables.count_timetables`. The ``count``
command, the workbook and the web page all count through :func:`count_problem`, so they
always show the same numbers.
"""

from __future__ import annotations

import time
from typing import Callable, Sequence

import networkx as nx

from ..availability import Availability
from ..model import Problem, Slot
from .bounds import log10_int
from .budget import Budget
from .people_counts import PEOPLE_WHAT_IF_SECONDS, PeopleCounter, most_limiting_people
from .sequential_sampling import Moments
from .timetables import (ComponentCount, CountReport, SlotCount, _ratio, count_timetables, exact_slot_count,
                         set_intervals)

#: the share of each K's time the count honouring people may take (the list-colouring bound gets the rest)
PEOPLE_SHARE = 0.6
#: groups up to this many events get a lower bound from a timetable found by search when not exact
LOWER_BOUND_MAX_EVENTS = 400
PEOPLE_METHOD = "dynamic programming over start slots (long events, extra time, quorums)"


def default_slots_for(problem: Problem) -> Callable[[int], list[Slot]]:
    """The slots of K: the first K of the slots sheet, else K generic slots."""
    return problem.slots_for


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
    report, notes = _count_problem(problem, ks, graph, slots_for, budget_seconds, progress)
    report.not_counted = uncounted_rules(problem)
    return report, notes


def _count_problem(problem, ks, graph, slots_for, budget_seconds, progress):
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
        refs = problem.slot_refs(slots)
        for event in pinned:
            if event.code in refs.fixed:
                number = refs.fixed[event.code]
                if number is None:
                    notes.append(
                        f"With {k} slots, {event.code} is fixed to '{event.fixed_slot}', which is not one of the "
                        f"slots: no timetable can honour it, so the count is 0."
                    )
                fixed[event.code] = number or 0
            if refs.barred.get(event.code):
                barred[event.code] = set(refs.barred[event.code])
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
    attendees busy elsewhere, that count is the number of timetables.

    Otherwise (long events, extra time running into the next slot, such a quorum) the
    timetables are counted by :class:`~timetabler.counting.people_counts.PeopleCounter`
    first, group by group, within a share of the time: where every group finishes the
    count is exact. Where one does not, the figure is not exact: its upper bound is the
    product of the finished groups' counts and the others' list-colourings (every timetable
    is one), its lower bound the finished groups' counts times what one timetable found by
    search proves for the others (or 0), with a note.

    Then, when some attendee cannot make some slot, within what is left of the time (at least
    a small reserve), the attendees whose unavailability costs most timetables (:func:`~timetabler.counting.people_counts.most_limiting_people`)
    at the fewest slots asked for with an exact, non-zero count (else with a lower bound
    above 0: the gains are ratios within the attendees' own groups, exact where those are).
    """
    notes: list[str] = []
    reports = []
    deadline = time.monotonic() + budget_seconds
    counter = PeopleCounter(problem, list(graph.nodes))
    away = any(person.unavailable for person in problem.people.values())
    reserve = min(PEOPLE_WHAT_IF_SECONDS, 0.15 * budget_seconds) if away else 0.0
    share = max(budget_seconds - reserve, 0.5) / len(ks)
    founds: dict[int, Availability] = {}
    values_at: dict[int, dict[int, int | None]] = {}
    for k in ks:
        started = time.monotonic()
        slots = list(slots_for(k))
        found = Availability.of(problem, slots)
        founds[k] = found
        barred = {e: set(range(1, k + 1)) - set(found.starts.get(e, range(1, k + 1))) for e in graph}
        barred = {e: b for e, b in barred.items() if b}
        by_people = not found.one_slot_each or bool(counter.live_quorums)
        if by_people:
            if progress is not None:
                progress(f"counting the starts honouring people with {k} slots", 0, len(counter.groups))
            values_at[k] = counter.group_counts(found, Budget(started + PEOPLE_SHARE * share))
        left = max(share - (time.monotonic() - started), 0.5)
        if by_people and all(v is not None for v in values_at[k].values()):
            left = min(left, max(1.0, 0.25 * share))  # exact already: the list-colouring count only names the groups
        # the clash what-ifs count one slot per event: not asked for when events take more
        report = count_timetables(graph, [k], budget_seconds=left, barred=barred, progress=progress,
                                  what_if=not by_people)
        report.constrained = True
        report.availability = True
        if by_people:
            report.people_rules = True
            lower_budget = Budget(time.monotonic() + min(1.0, 0.1 * share))
            if not _people_figures(report, counter, found, values_at[k], k, graph, lower_budget):
                report.availability_bound = True
                c = report.counts[0]
                notes.append(f"With {k} slots some events take more than one slot (long events, extra time) or a "
                             f"quorum depends on optional attendees, and a group of events was too large to count "
                             f"exactly in the time: the figure is only bounded, between {_shown(c.lower)} and "
                             f"{_shown(c.upper)} (the starts where every required attendee can come).")
        reports.append(report)
    merged = _merge_runs(reports)
    by_k = {c.slots: c for c in merged.counts}
    for k in values_at:  # exact people counts of K and K − 1 give the ratio
        c, prev = by_k[k], by_k.get(k - 1)
        if c.exact and prev is not None and prev.exact and prev.timetables and c.ratio_to_previous is None:
            c.ratio_to_previous = _ratio(c.timetables, prev.timetables)
            ratio_log10 = log10_int(c.timetables) - log10_int(prev.timetables) if c.timetables else None
            c.ratio_interval_log10 = None if ratio_log10 is None else (ratio_log10, ratio_log10)
    _ratios_between_runs(merged.counts)
    if merged.chromatic_number is not None:
        # the fewest slots of the clashes alone: availability, long events and extra time may need more. A
        # timetable of the first K slots is one of the first K + 1, so a K counted exactly 0 proves K + 1 at least;
        # with the next count exact and above 0, and no rule left out of the counts, that is the fewest
        chi = merged.chromatic_number
        none = [c.slots for c in merged.counts if c.exact and c.timetables == 0 and c.slots >= chi]
        if not none:
            merged.fewest_at_least = True
            merged.fewest_slots_reason = (f"from the clashes alone: {merged.fewest_slots_reason}; the people's "
                                          f"rules (availability, events longer than a slot, extra time, quorums) "
                                          f"may need more")
        else:
            low = max(none) + 1
            after = next((c for c in merged.counts if c.slots == low and c.exact and c.timetables), None)
            merged.fewest_with_people = low
            merged.fewest_at_least = after is None or uncounted_rules(problem) is not None
            merged.fewest_slots_reason = (
                f"{max(none)} slots have no timetable in which every required attendee can come (counted exactly), "
                + (f"and {low} slots have {after.timetables:,}" if after is not None else
                   f"so at least {low} are needed")
                + f" (the clashes alone need {chi}: {merged.fewest_slots_reason})")
    if away:  # at the fewest slots with timetables: an exact count, else one proven above 0
        usable = ([c.slots for c in merged.counts if c.exact and c.timetables]
                  or [c.slots for c in merged.counts if not c.exact and c.lower])
        if usable:
            k = usable[0]
            merged.most_limiting_people = most_limiting_people(
                problem, list(slots_for(k)), counter, founds[k],  # its reserve, or all the time the counts left
                seconds=max(reserve, 0.5, deadline - time.monotonic()), base=values_at.get(k))
    return merged, notes


def _shown(value: int | None) -> str:
    """A bound in a note: up to 12 digits in full, else its leading digits and power of ten."""
    if value is None:
        return "unknown"
    if len(str(value)) <= 12:
        return f"{value:,}"
    text = str(value)
    return f"about {text[0]}.{text[1:4]} × 10^{len(text) - 1}"


def _people_figures(report, counter: PeopleCounter, found: Availability, values: dict, k: int, graph,
                    lower_budget: Budget) -> bool:
    """Put the counts honouring people on ``report`` (one K): its groups and its total. True when exact.

    ``report`` holds the list-colouring counts (every timetable is a list-colouring, so they
    are upper bounds) by group of events linked by clashes; its groups become the people
    groups (those linked by a quorum as well), each exact where its count finished.
    """
    comp_of = {}
    for comp in report.components:
        for v in comp.nodes:
            comp_of[v] = comp
    whole = report.counts[0]
    lower_total, upper_total = 1, 1
    groups = []
    for index, group in enumerate(counter.groups):
        value = values.get(index)
        upper: int | None = 1
        seen: set[int] = set()
        for v in group:
            comp = comp_of.get(v)
            if comp is None:
                upper = None if upper is None else upper * len(found.starts.get(v, ()))
            elif id(comp) not in seen:
                seen.add(id(comp))
                c = comp.counts[0]
                bound = c.timetables if c.exact else c.upper
                upper = None if upper is None or bound is None else upper * bound
        if value is not None:
            lower, upper = value, value
        else:
            try:
                lower = counter.lower_bound(found, group, lower_budget) if len(group) <= LOWER_BOUND_MAX_EVENTS else 0
            except RecursionError:
                lower = 0
        lower_total *= lower
        upper_total = None if upper_total is None or upper is None else upper_total * upper
        if len(group) < 2:
            continue
        same = comp_of.get(group[0])
        same = same if same is not None and list(same.nodes) == list(group) else None
        if value is not None:
            count = exact_slot_count(k, value, None)
        else:
            count = SlotCount(k, None, False, lower=lower, upper=upper)
        groups.append(ComponentCount(
            [str(v) for v in group], graph.subgraph(group).number_of_edges(), value is not None,
            PEOPLE_METHOD if value is not None else "bounds: one timetable found by search; starts every required "
            "attendee can make", same.polynomial if same is not None else None, True, [count],
            None if value is not None else "not counted exactly within the time limit",
            {k: value} if value is not None else {}, list(group)))
    report.components = groups
    if any(v == 0 for v in values.values()) or upper_total == 0:
        report.counts = [exact_slot_count(k, 0, None)]
        return True
    if all(values.get(i) is not None for i in range(len(counter.groups))):
        report.counts = [exact_slot_count(k, lower_total, None)]
        return True
    upper_whole = whole.timetables if whole.exact else whole.upper
    if upper_total is None or (upper_whole is not None and upper_whole < upper_total):
        upper_total = upper_whole
    if upper_total is not None and lower_total == upper_total:
        report.counts = [exact_slot_count(k, lower_total, None)]
        return True
    report.counts = [SlotCount(k, None, False, lower=lower_total, upper=upper_total)]
    return False


def _merge_runs(reports: list[CountReport]) -> CountReport:
    """One report from the reports of single Ks: counts in order, each group's counts for every K."""
    merged = reports[0]
    merged.counts = [c for r in reports for c in r.counts]
    mine = {tuple(c.events): c for c in merged.components}
    for other in reports[1:]:
        for theirs in other.components:
            comp = mine.get(tuple(theirs.events))
            if comp is None:  # the groups of every K are the same; kept apart if not
                merged.components.append(theirs)
                mine[tuple(theirs.events)] = theirs
                continue
            comp.counts.extend(theirs.counts)
            comp.values.update(theirs.values)
            comp.exact = comp.exact and theirs.exact
            comp.reason = comp.reason or theirs.reason
        merged.availability_bound = merged.availability_bound or other.availability_bound
        merged.people_rules = merged.people_rules or other.people_rules
    merged.seconds = sum(r.seconds for r in reports)
    return merged


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


def uncounted_rules(problem: Problem) -> str | None:
    """The hard rules of ``problem`` that the counts do not honour, in words, or None.

    The counts honour clashes, fixed and barred slots, event lengths, availability, extra time
    and quorums; a daily limit, the rules sheet, rooms and slot seat limits are left to the
    solver, so with any of them a count is of timetables that may still break them.
    """
    parts = []
    if problem.max_per_day is not None:
        parts.append(f"the limit of {problem.max_per_day} events a day per attendee")
    if problem.rules:
        n = len(problem.rules)
        parts.append(f"the {n} {'rule' if n == 1 else 'rules'} of the rules sheet")
    if problem.rooms:
        parts.append("the rooms")
    if any(s.seat_capacity is not None for s in problem.slots):
        parts.append("the seat limits of the slots")
    if not parts:
        return None
    return parts[0] if len(parts) == 1 else ", ".join(parts[:-1]) + " and " + parts[-1]
