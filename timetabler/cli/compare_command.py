"""``timetabler compare``: several numbers of slots side by side, to choose how many to book."""

from __future__ import annotations

import contextlib
import dataclasses
import time
from decimal import Decimal
from typing import Any

import click
from rich.table import Table

from ..conflicts import conflict_graph
from ..export.tables import comparison_table, rows_as_json, run_figures, short_sheet_words, value_text
from ..plan import COMPARE_SECONDS, COUNT_SECONDS, MOST_SESSIONS_PER_DAY, SESSIONS_PER_DAY, WORKERS
from ..plan import FEWEST, FewestFound, StepStarted, check_slot_counts, counts_for_runs, solve_steps
from ..scheduling import SolveOptions
from .command_clock import CommandClock
from .common import (SHARE_ROOMS_HELP, console, err_console, input_options, print_json, read_input, require_enrolments, show_warnings,
                     styled)
from .output_options import check_outputs, output_options, try_publish
from .slot_counts import SlotCountsOption, choose_slot_counts, days_option, parse_slot_counts
from .solve_options import (apply_goal_options, keep_option, max_per_day_option, print_repair, repeatable_option,
                            resolve_kept, warn_unrepeatable,
                            time_limit_option, weight_option)
from .store_options import earlier_timetable, open_store, store_options


@click.command("compare")
@click.argument("file", type=click.Path(dir_okay=False))
@input_options
@click.option("--slots", "slot_counts", cls=SlotCountsOption, metavar="K [K ...]", callback=parse_slot_counts,
              help="The numbers of slots to put side by side, e.g. --slots 5 6 or --slots 8-12 (or --days).")
@days_option("Put side by side")
@click.option("--sessions-per-day", type=click.IntRange(1, MOST_SESSIONS_PER_DAY),
              default=SESSIONS_PER_DAY, show_default=True,
              help="Without a slots sheet: how many slots make a day (for back-to-back and two-in-a-day figures).")
@time_limit_option(COMPARE_SECONDS, "Time for each number of slots, and again for the fewest-slots search, counted from the "
                         "start of the command (reading the file comes out of it).")
@time_limit_option(COUNT_SECONDS, "Time for counting the clash-free timetables. Counts that take longer are estimated.",
                   minimum=0.1, name="--count-time")
@click.option("--workers", type=click.IntRange(1, 64), default=WORKERS, show_default=True, help="Search threads.")
@click.option("--seed", type=int, default=0, show_default=True, help="Random seed of the search.")
@repeatable_option
@click.option("--share-rooms/--no-share-rooms", default=True, help=SHARE_ROOMS_HELP)
@click.option("--split-rooms", is_flag=True, help="Let a large event spread over several rooms (each extra room is penalised).")
@weight_option
@max_per_day_option
@keep_option
@store_options
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document instead of a table.")
@output_options
def command(file, sheet, attendee_column, event_column, slot_counts, day_counts, sessions_per_day, time_limit, count_time, workers,
            seed, repeatable, share_rooms, split_rooms, weights, max_per_day, keep, store_at, retention_days, as_json,
            outputs, **_ignored):
    """Put several numbers of slots for FILE side by side, to decide how many to book.

    \b
    For each number of slots: whether a clash-free timetable meeting every rule exists; what
    the fewest-slots search proves about it; how many clash-free timetables there are (counted
    exactly where the clash graph allows, else estimated; this count looks at clashes and
    fixed or barred slots only, not rooms or other rules); the penalty of the best timetable
    found; how many attendees get back-to-back events or two events in a day; the most seats
    needed in one slot; and the independent validator's verdict.

    \b
    Examples:
      timetabler compare enrolments.xlsx --slots 5 6
      timetabler compare enrolments.xlsx --slots 8-12 --out choices.xlsx --plot counts.png
    """
    started = time.perf_counter()
    if not slot_counts and not day_counts:
        raise click.UsageError("Say which numbers of slots to put side by side: --slots 5 6 (or a range, --slots "
                               "8-12), or days of the slots sheet: --days 4 5.")
    reading = read_input(file, sheet, attendee_column, event_column)
    require_enrolments(reading)
    show_warnings(reading, as_json)
    problem = reading.problem
    apply_goal_options(problem, weights, max_per_day)
    slot_counts, days_of_count = choose_slot_counts(problem, slot_counts, day_counts)
    ks = sorted(slot_counts)
    check_slot_counts(problem, ks)
    check_outputs(outputs, problem=problem, keep=keep, slots=problem.slots[:max(ks)] if problem.slots else [])
    stores: list = []
    click.get_current_context().call_on_close(lambda: [s.close() for s in stores])

    def store():  # opened only for --keep LABEL (an earlier timetable published in the store)
        if not stores:
            stores.append(open_store(store_at, retention_days, quiet=as_json))
        return stores[0]

    previous_refs, _ = earlier_timetable(keep, store) if keep else (None, None)

    graph = conflict_graph(problem)
    options = SolveOptions(time_limit=time_limit, workers=workers, seed=seed, deterministic=repeatable,
                           room_sharing=share_rooms, room_splitting=split_rooms)
    clock = CommandClock(started, time_limit, len(problem.enrolments))
    fewest, runs = None, []
    with contextlib.ExitStack() as showing:
        for step in solve_steps(problem, ks, lambda k: problem.slots_for(k, sessions_per_day),
                                options=lambda i: clock.options(options, i), fewest_per_day=sessions_per_day,
                                previous=(lambda k, slots: resolve_kept(problem, previous_refs, slots)) if previous_refs else None,
                                graph=graph):
            showing.close()  # the words of the step before
            if isinstance(step, StepStarted):
                showing.enter_context(_step(not as_json, "looking for the fewest slots" if step.step == FEWEST
                                            else f"solving with {step.step} slots"))
            elif isinstance(step, FewestFound):
                fewest = step.result
            else:
                runs.append(step.run)
    warn_unrepeatable(runs)
    with _step(not as_json, "counting clash-free timetables"):
        counts, count_note = counts_for_runs(problem, runs, count_time, graph=graph)
    validations = {r.slots: r.validation for r in runs if r.validation is not None}
    settings = {"compared slot counts": ks, "time limit (s)": time_limit, "count time (s)": count_time,
                "workers": workers, "seed": seed, "repeatable": repeatable, "sessions per day": None if problem.slots else sessions_per_day,
                "share rooms": share_rooms, "split rooms": split_rooms,
                "weights": dataclasses.asdict(problem.weights), "kept from": keep}
    written, write_error = try_publish(outputs, problem=problem, runs=runs, counts=counts, reading=reading,
                                   settings=settings, validations=validations, fewest=fewest, quiet=as_json)
    figures = {r.slots: run_figures(problem, r) for r in runs}
    table = comparison_table(problem, runs, counts, validations, figures, fewest)
    if as_json:
        doc: dict[str, Any] = {"file": file, "slots": ks, "comparison": rows_as_json(table)}
        if days_of_count:
            doc["days"] = [days_of_count[k] for k in ks]
        doc["fewest"] = {k: v for k, v in fewest.to_json().items() if k != "timetable"}
        doc["counts"] = counts.to_json() if counts is not None and hasattr(counts, "to_json") else None
        if count_note:
            doc["counts_note"] = count_note
        doc["written"] = [str(p) for p in written]
        print_json(doc)
    else:
        _print_side_by_side(table, counts, fewest, count_note, days_of_count)
        for run in runs:
            print_repair(run)
    if write_error is not None:  # the results are shown above; the failed output is bad input (exit 2)
        raise write_error


SHOWN = [
    ("Clash-free timetable exists", "Timetable exists"),
    ("Fewest slots", "Fewest slots"),
    ("Status", "Best timetable"),
    ("Clash-free timetables", "Clash-free timetables"),
    ("Penalty", "Penalty"),
    ("Attendees with back-to-back", "Attendees with back-to-back"),
    ("Attendees with two in a day", "Attendees with two in a day"),
    ("Peak seats", "Most seats in one slot"),
    ("Validator", "Validator"),
]


def _print_side_by_side(table, counts, fewest, count_note: str | None,
                        days_of_count: dict[int, int] | None = None) -> None:
    out = Table(title="Slot counts side by side", title_justify="left", show_lines=False)
    out.add_column("", style="bold", no_wrap=True)
    for row in table.rows:
        days = (days_of_count or {}).get(row[0])
        out.add_column(f"{row[0]} slots" if days is None else f"{days} {'day' if days == 1 else 'days'}, {row[0]} slots", justify="left", overflow="fold", min_width=12, max_width=44)
    index = {h: i for i, h in enumerate(table.headers)}
    for header, label in SHOWN:
        cells = []
        for row in table.rows:
            value = row[index[header]]
            col = table.columns[index[header]]
            text = value_text(value, col.kind)
            if header == "Status" and value:
                text += " (proven)" if row[index["Proven"]] and value in ("optimal", "infeasible") else ""
            if header == "Peak seats" and value is not None:
                text += f" ({row[index['Peak slot']]})"
            if header == "Clash-free timetables" and text.isdigit():
                text = readable_count(text)
            cells.append(text)
        out.add_row(label, *cells)
    console.print(out)
    for row in table.rows:
        reason = row[index["Reason"]]
        if reason and row[index["Status"]] in ("infeasible", "unknown"):
            console.print(styled((f"{row[0]} slots", "bold"), f": {reason}"), soft_wrap=True)
    if count_note:
        console.print(count_note)
    if short_sheet_words(fewest):
        console.print(f"Fewest slots: {short_sheet_words(fewest)}", soft_wrap=True)
    elif fewest is not None and fewest.upper is not None:
        state = "proven" if fewest.proven else f"not proven; at least {fewest.lower}"
        console.print(f"Fewest slots: {fewest.upper} ({state}: {fewest.lower_reason}).")


def readable_count(digits: str) -> str:
    """An exact count for a reader: 1,260 up to 15 digits; beyond, 1.23 × 10^29 (30 digits).

    >>> readable_count("1260"), readable_count("123456789012345678901234567890")
    ('1,260', '1.23 × 10^29 (30 digits)')
    """
    if len(digits) <= 15:
        return f"{int(digits):,}"
    mantissa, exponent = f"{Decimal(digits):.2e}".split("e")
    return f"{mantissa} × 10^{int(exponent)} ({len(digits)} digits)"


@contextlib.contextmanager
def _step(enabled: bool, text: str):
    if enabled and err_console.is_terminal:
        with err_console.status(styled(text + " …")):
            yield
    else:
        yield
