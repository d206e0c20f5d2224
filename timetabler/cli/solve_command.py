"""``timetabler solve``: a good timetable for each number of slots asked for, or why none exists."""

from __future__ import annotations

import dataclasses
import time

import click
from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn
from rich.table import Table

from ..conflicts import conflict_graph
from ..export.tables import short_sheet_words
from ..model import FOUND_STATUSES, GOAL_NAMES
from ..plan import COUNT_SECONDS, MOST_SESSIONS_PER_DAY, SESSIONS_PER_DAY, SOLVE_SECONDS, WORKERS
from ..plan import FEWEST, FewestFound, StepStarted, check_slot_counts, counts_for_runs, solve_steps
from ..scheduling import SolveOptions
from .command_clock import CommandClock

from .interruption import SearchInterruption, StoppedEarly
from .common import (SHARE_ROOMS_HELP, console, err_console, input_options, print_json, read_input, require_enrolments,
                     show_warnings, styled)
from .output_options import check_outputs, output_options, try_publish
from .slot_counts import SlotCountsOption, choose_slot_counts, days_option, parse_slot_counts
from .solve_options import (apply_goal_options, keep_option, max_per_day_option, parse_weights, print_repair,
                            repeatable_option,
                            resolve_kept, warn_unrepeatable,
                            time_limit_option, weight_option)
from .store_options import check_publish_request, earlier_timetable, open_store, record_solve, store_options

_parse_weights = parse_weights  # the one --weight parser, under its former name


@click.command("solve")
@click.argument("file", type=click.Path(dir_okay=False))
@input_options
@click.option("--slots", "slot_counts", cls=SlotCountsOption, metavar="K [K ...]", callback=parse_slot_counts,
              help="Numbers of slots to try, e.g. --slots 10 11 12 or --slots 10-12. With a slots sheet, K uses its "
                   "first K slots (default: all of them).")
@days_option("Solve with")
@click.option("--fewest", is_flag=True,
              help="Find the fewest slots that hold a timetable meeting every rule, say whether that is proven, "
                   "and give that timetable.")
@click.option("--sessions-per-day", type=click.IntRange(1, MOST_SESSIONS_PER_DAY),
              default=SESSIONS_PER_DAY, show_default=True,
              help="Without a slots sheet: how many slots make a day (for back-to-back and same-day counts).")
@time_limit_option(SOLVE_SECONDS, "Time for each number of slots (and for --fewest), counted from the start of the command: "
                   "reading the file and writing the results come out of it. The best timetable found by then is "
                   "given.")
@click.option("--workers", type=click.IntRange(1, 64), default=WORKERS, show_default=True,
              help="Search threads. More finish sooner on a machine with more cores.")
@click.option("--seed", type=int, default=0, show_default=True, help="Random seed of the search.")
@repeatable_option
@weight_option
@max_per_day_option
@click.option("--share-rooms/--no-share-rooms", default=True, help=SHARE_ROOMS_HELP)
@click.option("--split-rooms", is_flag=True, help="Let a large event spread over several rooms (each extra room is penalised).")
@keep_option
@click.option("--publish", "publish_label", metavar="LABEL",
              help="Record the timetable in the store as published under LABEL (one --slots K, or --fewest). "
                   "Refused, with nothing recorded, unless it is clash-free and passes the validator, or when LABEL "
                   "is taken. 'timetabler changes OLD NEW' then lists who must be told what moved.")
@click.option("--no-record", is_flag=True,
              help="Keep nothing of this run in the store (by default the normalised input, the settings and each "
                   "result are recorded; see 'timetabler history').")
@store_options
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document instead of tables.")
@output_options
def command(file, sheet, attendee_column, event_column, slot_counts, day_counts, fewest, sessions_per_day, time_limit, workers,
            seed, repeatable, weights, max_per_day, share_rooms, split_rooms, keep, publish_label, no_record, store_at,
            retention_days, as_json, outputs, **_ignored):
    """Give every event in FILE a slot so that nobody is booked twice, and report how good it is.

    \b
    For each number of slots (--slots) the answer is one of:
      optimal     the best timetable for the soft goals, proven best
      feasible    a clash-free timetable meeting every rule; better ones may exist
      infeasible  no timetable exists, with the reason (events that pairwise share
                  attendees, an attendee with too many events, rules that cannot all hold)
      unknown     the time ran out before a timetable was found or ruled out

    \b
    Soft goals and their default weights (penalty per attendee affected, change with --weight
    or the weights sheet): back-to-back on one day 10, last of a day then first of the next 3,
    two on one day 2, Carter proximity cost 0 (off), large events late 0 (off), event outside its
    preferred slots 1, event in a slot marked Avoid 1, extra room for a split event 5, event moved
    from the earlier timetable (--keep) 20, event seated outside its preferred rooms 1, event
    in a room marked Avoid 1 (per room).

    \b
    Every timetable is re-checked by an independent validator against the enrolments and every
    rule; its verdict is shown. Examples:
      timetabler solve enrolments.xlsx --slots 12 --out timetable.xlsx
      timetabler solve enrolments.xlsx --slots 10-14 --time-limit 60
      timetabler solve enrolments.xlsx --fewest
      timetabler solve enrolments.xlsx --slots 12 --keep last-week.xlsx --out repaired.xlsx
      timetabler solve enrolments.xlsx --slots 12 --publish "week 1"
      timetabler solve late-enrolments.xlsx --slots 12 --keep "week 1" --publish "week 2"
    """
    started = time.perf_counter()
    reading = read_input(file, sheet, attendee_column, event_column)
    require_enrolments(reading)
    show_warnings(reading, as_json)
    problem = reading.problem
    apply_goal_options(problem, weights, max_per_day)
    slot_counts, days_of_count = choose_slot_counts(problem, slot_counts, day_counts)
    if not slot_counts and not fewest and not problem.slots:
        raise click.UsageError("Say how many slots to use (--slots 12, or several: --slots 10-14), or ask for the "
                               "fewest (--fewest). The file has no slots sheet to take them from.")
    check_slot_counts(problem, slot_counts)
    check_outputs(outputs, problem=problem, keep=keep,
                  slots=problem.slots[:max(slot_counts or [len(problem.slots)])] if problem.slots else [])
    options = SolveOptions(time_limit=time_limit, workers=workers, seed=seed, deterministic=repeatable,
                           room_sharing=share_rooms, room_splitting=split_rooms)
    stores: list = []
    click.get_current_context().call_on_close(lambda: [s.close() for s in stores])

    def store():  # opened on first use: a run with --no-record and --keep FILE never touches it
        if not stores:
            stores.append(open_store(store_at, retention_days, quiet=as_json))
        return stores[0]

    check_publish_request(publish_label, slot_counts, fewest, problem,
                          store() if publish_label and not no_record else None)
    previous_refs, kept_from = earlier_timetable(keep, store) if keep else (None, None)
    graph = conflict_graph(problem)

    counts = list(slot_counts) or ([len(problem.slots)] if problem.slots and not fewest else [])
    fewest_result = None
    runs = []
    clock = CommandClock(started, time_limit, len(problem.enrolments))
    tasks: dict = {}
    # Ctrl-C stops the searches promptly; the best timetables found are shown, and the command exits 130
    with _progress_display(not as_json) as show, SearchInterruption() as interruption:
        options.stop = interruption.requested.is_set
        for step in solve_steps(problem, counts, lambda k: problem.slots_for(k, sessions_per_day),
                                options=lambda i: clock.options(options, i),
                                fewest_per_day=sessions_per_day if fewest else None, solve_fewest=True,
                                previous=(lambda k, slots: resolve_kept(problem, previous_refs, slots)) if previous_refs else None,
                                graph=graph, progress=lambda key: (lambda e: show.update(tasks[key], e)),
                                stop=interruption.requested.is_set):
            if isinstance(step, StepStarted):
                tasks[step.step] = show.add("fewest slots" if step.step == FEWEST else f"{step.step} slots", time_limit)
                continue
            show.finish(tasks[FEWEST if isinstance(step, FewestFound) else step.slots])
            if isinstance(step, FewestFound):
                fewest_result, counts = step.result, list(step.to_solve)
            else:
                runs.append(step.run)
    if interruption.by_ctrl_c:
        _show_stopped(problem, file, runs, fewest_result, days_of_count, as_json, skipped=len(counts) - len(runs))
    warn_unrepeatable(runs)
    settings = {"time limit (s)": time_limit, "workers": workers, "seed": seed,
                "sessions per day": None if problem.slots else sessions_per_day,
                "weights": dataclasses.asdict(problem.weights), "share rooms": share_rooms,
                "split rooms": split_rooms, "kept from": keep}
    timetable_counts = None
    if outputs and (outputs.get("out") or outputs.get("plot")) and runs:  # the workbook and the chart show the counts
        timetable_counts, _ = counts_for_runs(problem, runs, COUNT_SECONDS, graph=graph)
    written, write_error = try_publish(outputs, problem=problem, runs=runs, counts=timetable_counts, reading=reading,
                                       settings=settings, fewest=fewest_result, quiet=as_json)
    if not no_record:
        record_solve(store, problem, runs, settings, publish_label=publish_label, kept_from=kept_from, quiet=as_json)
    if as_json:
        doc = {"file": file, "runs": [_run_json(r, days_of_count) for r in runs]}
        if fewest_result is not None:
            doc["fewest"] = {k: v for k, v in fewest_result.to_json().items() if k != "timetable"}
        doc["written"] = [str(p) for p in written]
        print_json(doc)
    else:
        _print_runs(problem, runs, fewest_result, days_of_count)
    if write_error is not None:  # the results are shown above; the failed output is bad input (exit 2)
        raise write_error


def _show_stopped(problem, file, runs, fewest_result, days_of_count, as_json: bool, *, skipped: int) -> None:
    """Ctrl-C stopped the searches: show the best timetables found (the runs stopped keep theirs), then
    exit 130 writing and recording nothing."""
    if as_json:
        doc = {"file": file, "runs": [_run_json(r, days_of_count) for r in runs], "interrupted": True}
        if fewest_result is not None:
            doc["fewest"] = {k: v for k, v in fewest_result.to_json().items() if k != "timetable"}
        doc["written"] = []
        print_json(doc)
    else:
        _print_runs(problem, runs, fewest_result, days_of_count)
    found = [r for r in runs if r.assignment]
    shown = ("the best timetable found is shown above" if len(found) == 1 else
             f"the best timetables found ({len(found)}) are shown above" if found else "no timetable had been found")
    left = f"; {skipped} slot count(s) were not tried" if skipped > 0 else ""
    raise StoppedEarly(f"Interrupted: the search was stopped and {shown}{left}. Nothing was written or recorded.")


class _progress_display:
    """A rich progress bar per slot count on stderr: time used, best penalty, bound and gap."""

    def __init__(self, enabled: bool):
        self.enabled = enabled and err_console.is_terminal
        self.progress = None
        self.starts: dict = {}

    def __enter__(self):
        if self.enabled:
            self.progress = Progress(TextColumn("{task.description}", markup=False), BarColumn(), TimeElapsedColumn(),
                                     TextColumn("{task.fields[state]}", markup=False), console=err_console,
                                     transient=True)
            self.progress.__enter__()
        return self

    def __exit__(self, *exc):
        if self.progress is not None:
            self.progress.__exit__(*exc)
        return False

    def add(self, label: str, total: float):
        if self.progress is None:
            return None
        task = self.progress.add_task(label, total=total, state="starting")
        self.starts[task] = time.perf_counter()
        return task

    def update(self, task, event: dict) -> None:
        if self.progress is None or task is None:
            return
        state = None
        if event.get("event") == "solution":
            state = f"best penalty {event['penalty']}, bound {event['bound']:.0f}, gap {event['gap']:.0%}"
        elif event.get("event") == "phase":
            state = event.get("phase", "")
        fields = {"state": state} if state else {}
        self.progress.update(task, completed=time.perf_counter() - self.starts[task], **fields)

    def finish(self, task) -> None:
        if self.progress is not None and task is not None:
            self.progress.update(task, completed=self.progress.tasks[task].total)


def _run_json(run, days_of_count: dict[int, int]) -> dict:
    """A run's JSON; with --days it also says how many days its slots make (null for a count
    the fewest-slots search added that ends inside a day)."""
    doc = run.to_json()
    if days_of_count:
        doc["days"] = days_of_count.get(run.slots)
    return doc


def _print_runs(problem, runs, fewest_result, days_of_count: dict[int, int] | None = None) -> None:
    if fewest_result is not None:
        f = fewest_result
        if short_sheet_words(f):
            console.print(styled(("Fewest slots: ", "bold"), short_sheet_words(f)), soft_wrap=True)
        elif f.upper is None:
            console.print(styled("Fewest slots: at least ", (str(f.lower), "bold"),
                                 f" ({f.lower_reason}); no timetable was found within the time limit."))
        elif f.proven:
            console.print(styled("Fewest slots: ", (str(f.upper), "bold"), f", proven ({f.lower_reason})."))
        else:
            console.print(styled("Fewest slots: between ", (str(f.lower), "bold"), f" ({f.lower_reason}) and ",
                                 (str(f.upper), "bold"), " (a timetable was found); not proven within the time limit."))
    table = Table(title="Timetables", title_justify="left")
    if days_of_count:
        table.add_column("Days", justify="right")
    for name, right in (("Slots", True), ("Result", False), ("Penalty", True), ("Lower bound", True),
                        ("Back to back", True), ("Moved", True), ("Check", False), ("Seconds", True)):
        table.add_column(name, justify="right" if right else "left", no_wrap=name in ("Result", "Check"))
    for r in runs:
        v = r.validation
        soft = v.soft if v else {}
        days = [_num(days_of_count.get(r.slots))] if days_of_count else []
        table.add_row(*days, str(r.slots), r.status, _num(r.penalty), _num(None if r.bound is None else round(r.bound)),
                      _num(soft.get("back_to_back")),
                      str(len(r.moves)) if r.moves or r.status in FOUND_STATUSES else "",
                      ("passed" if v.ok else f"FAILED ({len(v.violations)})") if v else "",
                      f"{r.wall_seconds:.1f}")
    if runs:  # --fewest with no timetable solves nothing: no empty table
        console.print(table)
    if any(r.validation for r in runs):  # no timetable, nothing to re-check
        console.print("Check: the independent validator re-checked the timetable against every enrolment and rule.",
                      style="dim")
    for r in runs:
        if r.penalty_breakdown and any(r.penalty_breakdown.values()):
            parts = ", ".join(f"{GOAL_NAMES.get(name, name.replace('_', ' '))} {value}"
                              for name, value in r.penalty_breakdown.items() if value)
            console.print(f"{r.slots} slots — penalty by goal: {parts}", soft_wrap=True)
        if r.status in ("infeasible", "unknown") and r.reason:
            console.print(styled((f"{r.slots} slots", "bold"), f" — {r.status}:"))
            for reason in r.reasons[:8] or [r.reason]:
                console.print(f"  • {reason}", soft_wrap=True)
        if r.validation is not None and not r.validation.ok:
            console.print(styled((f"{r.slots} slots: the validator found problems", "bold red"), " (this is a bug):"))
            for text in r.validation.violations[:10]:
                console.print(f"  • {text}", soft_wrap=True)
        print_repair(r)


def _num(value) -> str:
    return "" if value is None else str(value)
