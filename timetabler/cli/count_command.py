"""``timetabler count``: how many clash-free timetables each number of slots allows."""

from __future__ import annotations

from decimal import Decimal

import click
from rich.table import Table

from ..conflicts import conflict_graph
from ..counting.problem_counts import count_problem
from ..counting.polynomial import ChromaticPolynomial, edgeless_power, poly_mul
from ..errors import Finding, InputError
from ..export.tables import interval_words, ratio_words
from .common import console, err_console, finding_json, input_options, print_json, read_input, show_warnings, styled
from .slot_counts import SlotCountsOption, choose_slot_counts, days_option, parse_slot_counts
from ..plan import COUNT_SECONDS
from .solve_options import time_limit_option


@click.command("count")
@click.argument("file", type=click.Path(dir_okay=False))
@input_options
@click.option("--slots", "slot_counts", cls=SlotCountsOption, metavar="K [K ...]", callback=parse_slot_counts,
              help="The numbers of slots to count for, e.g. --slots 5 6 or --slots 5-8 "
                   "(default: the number of slots in the slots sheet).")
@days_option("Count for")
@time_limit_option(COUNT_SECONDS, "Time for exact counting. A group of events that takes longer is given bounds and an "
                         "estimate, marked not exact.", minimum=0.1)
@click.option("--polynomial", "show_polynomial", is_flag=True,
              help="Also print the counting polynomial P(k) and the number of ways to split the events into "
                   "j clash-free groups, for every j.")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document instead of tables.")
def command(file: str, sheet, attendee_column, event_column, slot_counts, day_counts, time_limit: float,
            show_polynomial: bool, as_json: bool) -> None:
    """Count the clash-free timetables of FILE for each number of slots.

    \b
    A clash-free timetable gives every event one of K labelled slots so that nobody has
    two events in the same slot. The count measures slack: a choice of K with a dozen
    timetables breaks at the first late enrolment, one with a billion does not.

    \b
    For each K the table shows the count (exact, or proven bounds and an estimate when
    the time limit is reached — never a guessed number shown as exact), how many times
    more timetables K allows than K - 1, and the number of ways to split the events
    into at most K clash-free groups (slots unlabelled). It also shows the fewest slots
    possible and why, the groups of events linked by clashes with their own counts,
    and, for small groups, the missing clashes that would hurt most if a new enrolment
    created them and the clashes whose removal would free the most timetables.

    \b
    Fixed and barred slots from the events sheet are respected: counts are then of the
    timetables that keep every fixed event in its slot and no event in a barred slot.

    \b
    Examples:
      timetabler count enrolments.xlsx --slots 5 6
      timetabler count enrolments.csv --slots 8-12 --json
      timetabler count enrolments.csv --slots 4 --polynomial
    """
    reading = read_input(file, sheet, attendee_column, event_column)
    show_warnings(reading, as_json)
    problem = reading.problem
    slot_counts, days_of_count = choose_slot_counts(problem, slot_counts, day_counts)
    ks = sorted(slot_counts) if slot_counts else ([len(problem.slots)] if problem.slots else [])
    if not ks:
        raise InputError(Finding(
            "Say how many slots to count for.",
            suggestion="Add --slots with one or more numbers, e.g. --slots 5 6 (or a range, --slots 5-8).",
        ))
    if problem.slots and max(ks) > len(problem.slots):
        raise InputError(Finding(
            f"--slots asks for {max(ks)} slots but the slots sheet of {file} lists only {len(problem.slots)}.",
            suggestion="Add slots to the slots sheet, or ask for fewer.",
        ))
    graph = conflict_graph(problem)
    notes: list[str] = []

    def work(progress=None):
        report, found = count_problem(problem, ks, graph=graph, budget_seconds=time_limit, progress=progress)
        notes.extend(found)
        return report

    if as_json:
        report = work()
        doc = report.to_json()
        doc["file"] = file
        doc["slots"] = ks
        if days_of_count:
            doc["days"] = [days_of_count[k] for k in ks]
            for entry in doc.get("counts", []):
                entry["days"] = days_of_count.get(entry.get("slots"))
        if notes:
            doc["notes"] = notes
        if show_polynomial:
            poly = whole_polynomial(report, graph)
            doc["polynomial"] = poly.to_json() if poly is not None else None
        doc["warnings"] = [finding_json(w) for w in reading.warnings]
        print_json(doc)
        return

    with err_console.status(styled("Counting clash-free timetables…")) as status:
        def progress(message: str, done: int, total: int | None) -> None:
            status.update(styled(f"Counting clash-free timetables… group {done} of {total} done ({message})"))

        report = work(progress)
    _print_report(file, report, notes, days_of_count)
    if show_polynomial:
        _print_polynomial(report, graph)


def whole_polynomial(report, graph) -> ChromaticPolynomial | None:
    """P(G, k) of the whole conflict graph when every group was counted exactly without pins."""
    if report.constrained or any(c.polynomial is None for c in report.components):
        return None
    power = edgeless_power(report.isolated_events)
    for comp in report.components:
        power = poly_mul(power, comp.polynomial.power)
    return ChromaticPolynomial(power, "product over groups")


def readable_count(value: int | None, digits: bool = False) -> str:
    """Up to 12 digits in full; beyond, four significant digits, rounded (the full number is in --json).

    >>> readable_count(1260), readable_count(3 ** 30), readable_count(10 ** 13 - 1, digits=True)
    ('1,260', '2.059 × 10^14', '1.000 × 10^13 (13 digits)')
    """
    if value is None:
        return "?"
    text = str(value)
    if len(text) <= 12:
        return f"{value:,}"
    mantissa, exponent = f"{Decimal(value):.3e}".split("e")  # rounds half to even, like the Decimal context
    short = f"{mantissa} × 10^{int(exponent)}"
    return short + (f" ({len(text)} digits)" if digits else "")


def _log_text(log10: float | None) -> str:
    if log10 is None:
        return "?"
    exponent = int(log10 // 1)
    mantissa = 10 ** (log10 - exponent)
    return f"{mantissa:.2f} × 10^{exponent}" if exponent >= 6 else f"{10 ** log10:,.0f}"


def _print_report(file: str, report, notes: list[str], days_of_count: dict[int, int] | None = None) -> None:
    groups = len(report.components)
    console.print(styled((file, "bold"), f": {report.events} events, {report.clashes} clashing pairs, "
                  f"{groups} {'group' if groups == 1 else 'groups'} of events linked by clashes, "
                  f"{report.isolated_events} {'event' if report.isolated_events == 1 else 'events'} with no clash"))
    table = Table(title="Clash-free timetables", title_justify="left")
    if days_of_count:
        table.add_column("Days", justify="right", overflow="fold")
    # A count too wide for its column folds onto the next line: rich's default cuts it with "…",
    # which leaves a shorter number that reads as a figure.
    table.add_column("Slots", justify="right", overflow="fold")
    table.add_column("Timetables", justify="right", overflow="fold")
    table.add_column("Exact", justify="center")
    table.add_column("× vs one slot fewer", justify="right", overflow="fold")
    table.add_column("Groupings (slots unlabelled)", justify="right", overflow="fold")
    for c in report.counts:
        if c.exact:
            shown = readable_count(c.timetables)
        elif c.estimate_interval_log10 is not None:
            shown = interval_words(c.estimate_interval_log10)
        else:
            shown = f"about {_log_text(c.estimate_log10)} (no interval)" if c.estimate_log10 is not None else "unknown"
        if not c.exact and c.ratio_interval_log10 is not None:
            ratio = ratio_words(c)
        else:
            ratio = f"{c.ratio_to_previous:,.2f}" if c.ratio_to_previous is not None else "—"
        days = [str(days_of_count.get(c.slots, ""))] if days_of_count else []
        table.add_row(*days, str(c.slots), shown, "yes" if c.exact else "no", ratio, readable_count(c.groupings)
                      if c.groupings is not None else "—")
    console.print(table)
    for c in report.counts:
        if not c.exact:
            if c.estimate_interval_log10 is not None:
                how = ("estimated by sequential Monte Carlo: repeated independent runs give the 95 % interval "
                       "shown above")
            elif c.estimate_log10 is not None:
                how = "too many sampling runs met dead ends for an honest interval"
            else:
                how = "no timetable met by the sampling runs, so no estimate"
            console.print(f"  {c.slots} slots: not exact within the time limit; proven between "
                          f"{readable_count(c.lower, True)} and {readable_count(c.upper, True)} ({how}).")
    if report.constrained:
        console.print("Counts keep every fixed event in its slot and no event in a barred slot.")
    if report.not_counted:
        console.print(f"Counts leave out {report.not_counted}; `timetabler solve` keeps to them too, so fewer "
                      f"timetables may keep every rule.")
    for note in notes:
        console.print(styled(("note:", "yellow"), f" {note}"))
    if report.chromatic_number is not None:
        console.print(styled("\nFewest slots: " + ("at least " if report.fewest_at_least else ""),
                             (str(report.fewest), "bold"),
                             f" — {report.fewest_slots_reason}."))
    else:
        console.print("\nFewest slots: not known exactly (a group was too large to count within the time limit; "
                      "`timetabler solve` can still find timetables).")
    if report.components:
        groups = Table(title="Groups of events linked by clashes (largest first)", title_justify="left")
        groups.add_column("Events")
        groups.add_column("Size", justify="right", overflow="fold")
        groups.add_column("Clashes", justify="right", overflow="fold")
        groups.add_column("Fewest slots", justify="right", overflow="fold")
        for k in [c.slots for c in report.counts]:
            groups.add_column(f"{k} slots", justify="right", overflow="fold")
        shown = sorted(report.components, key=lambda c: -len(c.events))[:10]
        for comp in shown:
            names = ", ".join(comp.events[:4]) + (f", … (+{len(comp.events) - 4})" if len(comp.events) > 4 else "")
            cells = []
            for c in comp.counts:
                if c.exact:
                    cells.append(readable_count(c.timetables))
                else:
                    cells.append(f"~{_log_text(c.estimate_log10)}" if c.estimate_log10 is not None else "unknown")
            groups.add_row(names, str(len(comp.events)), str(comp.clashes),
                           str(comp.chromatic_number) if comp.chromatic_number is not None else "?", *cells)
        console.print(groups)
        if len(report.components) > len(shown):
            console.print(f"… and {len(report.components) - len(shown)} smaller groups.")
    if report.riskiest_absent_clashes:
        k = report.riskiest_absent_clashes[0]["slots"]
        console.print(f"\nIf one new enrolment made these events clash, with {k} slots it would remove this share of "
                      f"the timetables:")
        for item in report.riskiest_absent_clashes:
            console.print(f"  {item['events'][0]} and {item['events'][1]}: {item['share_lost']:.0%}")
    if report.most_freeing_clashes:
        k = report.most_freeing_clashes[0]["slots"]
        console.print(f"\nClashes whose removal (e.g. moving the shared attendees) multiplies the {k}-slot count most:")
        for item in report.most_freeing_clashes:
            console.print(f"  {item['events'][0]} and {item['events'][1]}: × {item['gain']:,.2f}")
    people = getattr(report, "most_limiting_people", None) or []
    if people:
        k = people[0]["slots"]
        console.print(f"\nAttendees whose unavailability removes most timetables: with {k} slots, if they could "
                      f"make every slot the count would be multiplied by")
        for item in people:
            console.print(f"  {item['attendee']}: × {item['gain']:,.2f}")


def _print_polynomial(report, graph) -> None:
    poly = whole_polynomial(report, graph)
    if poly is None:
        console.print("\nThe polynomial is not shown: a group was not counted exactly, or fixed/barred slots apply.")
        return
    console.print(f"\nP(k) = {poly.pretty()}")
    console.print("Ways to split the events into exactly j clash-free groups:")
    for j, a in enumerate(poly.falling):
        if a:
            console.print(f"  j = {j}: {a:,}")
