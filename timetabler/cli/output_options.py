"""The output options shared by ``solve`` and ``compare``, and :func:`publish` that honours them.

Usage in a command module::

    @click.command("solve")
    ...
    @output_options
    def command(file, ..., outputs):          # one ``outputs`` dict instead of five options
        ...
        publish(outputs, problem=..., runs=..., counts=..., reading=..., settings=...)

The decorator adds ``--out``, ``--csv``, ``--ics``, ``--ics-time-zone``, ``--plot``,
``--pseudonyms`` and ``--pseudonym-key`` and hands their values to the command as one
dict named ``outputs``. :func:`publish` writes whatever was asked for and returns the
paths written; messages go to stderr so ``--json`` stdout stays one document.
"""

from __future__ import annotations

import contextlib
import functools
from pathlib import Path
from typing import Any, Callable, Mapping, Sequence

import click

from ..errors import Finding, InputError
from .common import err_console

OUTPUT_KEYS = ("out", "csv", "ics", "ics_time_zone", "plot", "pseudonyms", "pseudonym_key")


def output_options(func: Callable) -> Callable:
    """Add the output options to a click command; the command receives them as ``outputs``."""

    @functools.wraps(func)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        kwargs["outputs"] = {key: kwargs.pop(key, None) for key in OUTPUT_KEYS}
        return func(*args, **kwargs)

    options = [
        click.option("--out", metavar="FILE.xlsx", type=click.Path(dir_okay=False),
                     help="Write a workbook to forward as it is: overview, comparison, counts with a chart, the "
                          "timetable as a grid, events, personal timetables, seats, rooms and attendee load."),
        click.option("--csv", metavar="DIR", type=click.Path(file_okay=False),
                     help="Write the workbook's lists as CSV files into this folder (created if needed)."),
        click.option("--ics", metavar="DIR", type=click.Path(file_okay=False),
                     help="Write iCalendar files into this folder: session.ics with every event and attendees/ID.ics "
                          "per attendee. Needs a slots sheet with dates."),
        click.option("--ics-time-zone", metavar="NAME",
                     help="Time zone of the slot times in the iCalendar files, e.g. Europe/London "
                          "(default: local times, shown as written in every calendar)."),
        click.option("--plot", metavar="FILE.png", type=click.Path(dir_okay=False),
                     help="Draw a PNG chart of the number of clash-free timetables against the number of slots."),
        click.option("--pseudonyms", is_flag=True,
                     help="Replace attendee identifiers by stable pseudonyms (P-XXXXXXXXXX) in every file written, "
                          "for sharing outside the office (the terminal still shows the real ones). The same "
                          "attendee gets the same pseudonym in every run."),
        click.option("--pseudonym-key", metavar="FILE", type=click.Path(dir_okay=False),
                     help="Secret key file for --pseudonyms (default: ~/.config/timetabler/pseudonym-key, created "
                          "on first use). Keep it private: with it, pseudonyms can be linked back to identifiers."),
    ]
    for option in reversed(options):
        wrapper = option(wrapper)
    return wrapper


def wants_output(outputs: Mapping[str, Any] | None) -> bool:
    return bool(outputs) and any(outputs.get(k) for k in ("out", "csv", "ics", "plot"))


def publish(
    outputs: Mapping[str, Any] | None,
    *,
    problem: Any,
    runs: Sequence[Any],
    counts: Any = None,
    reading: Any = None,
    settings: Mapping[str, Any] | None = None,
    validations: Mapping[int, Any] | None = None,
    fewest: Any = None,
    quiet: bool = False,
) -> list[Path]:
    """Write every output asked for in ``outputs``; return the paths written.

    When a workbook or a chart is asked for and ``counts`` is None, the numbers of
    clash-free timetables for the slot counts of ``runs`` are counted here (within the
    ``count_budget`` seconds of ``settings``, default 20).
    """
    from ..export.tables import validate_run
    from ..export.workbook import write_workbook

    outputs = dict(outputs or {})
    if not wants_output(outputs):
        return []
    settings = dict(settings or {})
    runs = list(runs)
    if counts is None and (outputs.get("out") or outputs.get("plot")) and runs:
        counts, _ = count_for_runs(problem, runs, float(settings.get("count_budget", 20.0)))
    solved = [r for r in runs if r.assignment and r.status in ("optimal", "feasible")]
    # check what each output needs before writing anything
    if outputs.get("plot") and counts is None:
        raise InputError(Finding("The chart (--plot) needs the numbers of timetables, and counting is not available "
                                 "in this installation. Nothing was written."))
    if outputs.get("ics"):
        from ..export.icalendar_files import check_dated

        for run in solved:
            check_dated(run)
    validations = dict(validations or {})
    for run in runs:
        if int(run.slots) not in validations and run.assignment and run.status in ("optimal", "feasible"):
            validations[int(run.slots)] = validate_run(problem, run)
    if outputs.get("pseudonyms"):
        from ..export.pseudonyms import Pseudonyms, load_or_create_key, pseudonymise

        key, key_file, created = load_or_create_key(outputs.get("pseudonym_key"))
        if created and not quiet:
            err_console.print(f"Created the pseudonym key {key_file}; keep it private and keep it to get the same pseudonyms next time.")
        problem, runs, reading = pseudonymise(problem, runs, Pseudonyms(key), reading)
        settings["attendees shown as"] = "pseudonyms"
    written: list[Path] = []
    if outputs.get("out"):
        kept = [settings[k] for k in ("kept from",) if settings.get(k)]
        with _status(quiet, f"Writing {outputs['out']}") as show:
            written.append(write_workbook(outputs["out"], problem=problem, runs=runs, counts=counts, reading=reading,
                                          settings=settings, validations=validations, fewest=fewest, inputs=kept,
                                          progress=lambda sheet: show(f"Writing {outputs['out']}: sheet {sheet}")))
    if outputs.get("csv"):
        from ..export.csv_folder import write_csv_folder

        written.extend(write_csv_folder(outputs["csv"], problem=problem, runs=runs, counts=counts, validations=validations,
                                        fewest=fewest))
    if outputs.get("ics"):
        from ..export.icalendar_files import write_calendars

        if not solved and not quiet:
            err_console.print("[yellow]warning:[/yellow] no timetable was found, so no iCalendar files were written.")
        for run in solved:
            folder = Path(outputs["ics"])
            if len(solved) > 1:
                folder = folder / f"{int(run.slots)} slots"
            written.extend(write_calendars(folder, problem=problem, run=run, timezone=outputs.get("ics_time_zone")))
    if outputs.get("plot"):
        from ..export.count_chart import write_count_chart

        written.append(write_count_chart(outputs["plot"], counts, inputs=(problem.source,)))
    if not quiet:
        _tell(written)
    return written


def count_for_runs(problem: Any, runs: Sequence[Any], budget: float, *, graph: Any = None) -> tuple[Any, str | None]:
    """Count clash-free timetables for the slot counts of ``runs``, or (None, why not).

    Fixed and barred slots are respected, resolved against each run's own slots; without
    any, all slot counts are counted in one call (the polynomial is shared).
    """
    from ..conflicts import conflict_graph
    from ..counting.problem_counts import count_problem

    graph = conflict_graph(problem) if graph is None else graph
    runs = sorted({int(r.slots): r for r in runs}.values(), key=lambda r: int(r.slots))
    if not runs:
        return None, None
    slot_lists = {int(r.slots): list(r.slot_list) for r in runs}
    report, notes = count_problem(problem, list(slot_lists), graph=graph, slots_for=slot_lists.__getitem__,
                                  budget_seconds=budget)
    if not report.constrained:
        return report, None
    return report, " ".join(["Counts respect fixed and barred slots."] + notes)


@contextlib.contextmanager
def _status(quiet: bool, text: str):
    """A spinner with a changing message on stderr while a long file is written (terminals only)."""
    if quiet or not err_console.is_terminal:
        yield lambda message: None
        return
    with err_console.status(text + " …") as status:
        yield lambda message: status.update(message + " …")


def _tell(written: list[Path]) -> None:
    files = [p for p in written if p.suffix != ".ics"]
    calendars = [p for p in written if p.suffix == ".ics"]
    for path in files:
        err_console.print(f"Wrote {path}")
    if calendars:
        folders = sorted({str(p.parent.parent if p.parent.name == "attendees" else p.parent) for p in calendars})
        err_console.print(f"Wrote {len(calendars)} iCalendar files in {', '.join(folders)}")
