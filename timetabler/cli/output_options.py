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
from typing import Any, Callable, Mapping

import click

from ..errors import InputError
from ..export.publishing import check_outputs as export_check_outputs, publish as export_publish, wants_output
from .common import err_console, styled

__all__ = ["OUTPUT_KEYS", "check_outputs", "output_options", "publish", "try_publish", "wants_output"]

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


def check_outputs(outputs: Mapping[str, Any] | None, *, problem: Any, slots: Any = None, keep: Any = None) -> None:
    """Check every output option before the solving starts (see
    :func:`timetabler.export.publishing.check_outputs`): a bad name, folder or time zone is
    bad input found at once, not after minutes of work."""
    export_check_outputs(outputs, inputs=[getattr(problem, "source", None), keep], slots=slots, problem=problem)


def publish(outputs: Mapping[str, Any] | None, *, quiet: bool = False, **results: Any) -> list[Path]:
    """Write the outputs asked for (see :func:`timetabler.export.publishing.publish`), with
    messages and a spinner on stderr, and say what was written. Raises InputError when an
    output cannot be written (after saying what was)."""
    written, error = try_publish(outputs, quiet=quiet, **results)
    if error is not None:
        raise error
    return written


def try_publish(outputs: Mapping[str, Any] | None, *, quiet: bool = False,
                **results: Any) -> tuple[list[Path], InputError | None]:
    """:func:`publish`, returning the paths written and the error when writing failed part way
    instead of raising it: the command then shows its results first and raises the error
    afterwards (exit status 2), so a finished solve is never lost to a full disk or a
    read-only folder."""
    from .common import written_files

    error = None
    start = len(written_files)
    try:
        export_publish(
            outputs,
            quiet=quiet,
            notify=lambda text: err_console.print(text, soft_wrap=True),
            status=functools.partial(_status, False),
            written=written_files,
            **results,
        )
    except InputError as exc:
        error = exc
    written = written_files[start:]
    if not quiet:  # what was written before a failure is said too
        _tell(written)
    return written, error


@contextlib.contextmanager
def _status(quiet: bool, text: str):
    """A spinner with a changing message on stderr while a long file is written (terminals only)."""
    if quiet or not err_console.is_terminal:
        yield lambda message: None
        return
    with err_console.status(styled(text + " …")) as status:
        yield lambda message: status.update(styled(message + " …"))


def _tell(written: list[Path]) -> None:
    files = [p for p in written if p.suffix != ".ics"]
    calendars = [p for p in written if p.suffix == ".ics"]
    for path in files:
        err_console.print(f"Wrote {path}")
    if calendars:
        folders = sorted({str(p.parent.parent if p.parent.name == "attendees" else p.parent) for p in calendars})
        err_console.print(f"Wrote {len(calendars)} iCalendar files in {', '.join(folders)}")
