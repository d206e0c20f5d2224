"""What the commands share: input options, reading the file, JSON output, exit statuses."""

from __future__ import annotations

import json
import os
import signal
import sys
import traceback
from pathlib import Path
from typing import Any, Callable

import click
from rich.console import Console
from rich.text import Text

from ..errors import Finding, InputError
from ..intake import ReadOptions, Reading, read_problem
from ..model import Location

EXIT_DONE = 0
EXIT_BUG = 1
EXIT_BAD_INPUT = 2

#: ``--share-rooms/--no-share-rooms`` of solve and compare.
SHARE_ROOMS_HELP = ("Several events may sit in one room in a slot, of any lengths, as long as their attendees fit in "
                    "its seats (the default: --share-rooms is accepted and changes nothing). A room whose Shared "
                    "column in the Rooms sheet says no holds one event; --no-share-rooms makes every room hold one.")

# Markup and emoji codes are off: file names, event codes and attendee ids reach these
# consoles as they are ('week[bold].csv', 'MA[/i]1', ':fire:' print as typed). Styling is
# given with Text objects or ``style=``, never with markup inside a string.
class StdoutClosed(Exception):
    """stdout's reader went away. Raised instead of BrokenPipeError, which click would turn
    into a bare exit status 1 (see :class:`PipeAwareGroup`)."""


class _Console(Console):
    """rich's Console, except that a closed pipe is reported to :func:`run_guarded` (rich's own
    handling exits with status 1, which would read as a bug)."""

    def on_broken_pipe(self) -> None:
        self.quiet = True
        raise StdoutClosed()


console = _Console(stderr=False, highlight=False, markup=False, emoji=False)
err_console = _Console(stderr=True, highlight=False, markup=False, emoji=False)


def styled(*parts: str | tuple[str, str]) -> Text:
    """A line of plain text and ``(text, style)`` pieces, none of it read as markup.

    >>> styled(("MA[/i]1", "bold"), " moved").plain
    'MA[/i]1 moved'
    """
    return Text.assemble(*parts)


def input_options(func: Callable) -> Callable:
    """The options every command that reads an enrolment file accepts.

    ``--sheet``, ``--attendee-column`` and ``--event-column`` reach the command as keyword
    arguments (pass them on to :func:`read_input`); ``--layout`` and
    ``--case-sensitive-codes`` are kept on the click context and picked up by
    :func:`read_input` itself, so commands need not name them.
    """
    func = click.option(
        "--case-sensitive-codes",
        is_flag=True,
        expose_value=False,
        callback=_remember,
        help="Treat event codes and attendee ids that differ only in upper/lower case as different "
        "(default: 'ma101' and 'MA101' are the same event).",
    )(func)
    func = click.option(
        "--layout",
        type=click.Choice(["auto", "long", "wide", "clashes"], case_sensitive=False),
        default="auto",
        show_default=True,
        expose_value=False,
        callback=_remember,
        help="How the enrolments are laid out: 'long' (one row per enrolment), 'wide' (one row per "
        "attendee, events in several columns or listed in one cell), 'clashes' (a clash list: pairs of events "
        "and how many attendees they share).",
    )(func)
    func = click.option(
        "--event-column",
        metavar="HEADER",
        multiple=True,
        help="Header of the column naming events (default: found by name). Give it more than once "
        "for a wide layout with events in several columns.",
    )(func)
    func = click.option(
        "--attendee-column", metavar="HEADER", help="Header of the column naming attendees (default: found by name)."
    )(func)
    func = click.option(
        "--sheet", metavar="NAME", help="Read enrolments from this sheet (default: the first sheet whose headers fit)."
    )(func)
    return func


def _remember(ctx: click.Context, param: click.Parameter, value: Any) -> Any:
    ctx.meta.setdefault(_META_KEY, {})[param.name] = value
    return value


_META_KEY = "timetabler.read_options"


def read_input(path: str, sheet: str | None, attendee_column: str | None, event_column: Any = None, **extra: Any) -> Reading:
    """Read the input file with the common options (intake raises InputError on bad input).

    ``event_column`` may be one header or several (``--event-column`` given more than
    once). Options kept on the click context (``--layout``, ``--case-sensitive-codes``)
    apply, and ``extra`` keyword arguments naming :class:`ReadOptions` fields override them.
    """
    if isinstance(event_column, (list, tuple)):
        columns = tuple(c for c in event_column if c)
    else:
        columns = (event_column,) if event_column else ()
    options = ReadOptions(
        sheet=sheet,
        attendee_column=attendee_column,
        event_column=columns[0] if len(columns) == 1 else None,
        event_columns=columns if len(columns) > 1 else (),
    )
    ctx = click.get_current_context(silent=True)
    remembered = dict(ctx.find_root().meta.get(_META_KEY, {})) if ctx is not None else {}
    for key, value in {**remembered, **extra}.items():
        if key == "layout" and isinstance(value, str):
            value = value.lower()
        if hasattr(options, key):
            setattr(options, key, value)
    if options.progress is None and ctx is not None and err_console.is_terminal:
        options.progress = _reading_progress
    return read_problem(path, options)


def _reading_progress(stage: str, done: int, total: int | None) -> None:
    if done and done % 50_000 == 0:
        of = f" of {total:,}" if total else ""
        err_console.print(f"{stage}: {done:,}{of} rows", style="dim")


def require_enrolments(reading: Reading) -> None:
    """Solving needs enrolments: a file with headers and no rows is bad input (exit 2), located
    at its header row, not an empty timetable reported as optimal."""
    if reading.problem.enrolments:
        return
    file = getattr(reading.problem, "source", None) or "the input file"
    raise InputError(Finding(
        "No enrolments were found below the header row, so there is nothing to timetable.",
        where=Location(str(file), reading.sheet, reading.header_row),
        expected="one row per attendee and event under the headers"))


def print_json(document: Any) -> None:
    """Print exactly one JSON document on stdout. Big integers must already be strings."""
    click.echo(json.dumps(document, indent=2, ensure_ascii=False, default=str))


#: The command line's names of the settings a finding may point to (:data:`timetabler.errors.SETTINGS`).
OPTION_NAMES = {
    "sheet": "--sheet",
    "attendee_column": "--attendee-column",
    "event_column": "--event-column",
    "wide_layout": "--layout wide",
    "case_sensitive_codes": "--case-sensitive-codes",
    "slots": "--slots K",
    "days": "--days",
    "force": "--force to replace it",
    "timetable_workbook": "the workbook that 'timetabler solve --out' wrote",
}


def show_warnings(reading: Reading, as_json: bool) -> None:
    """Warnings from intake go to stderr (so --json stdout stays one document)."""
    for finding in reading.warnings:
        warn(finding)


def warn(finding: Finding | str) -> None:
    """One warning on stderr: 'warning:' in yellow, then the finding as plain text (settings named by their options)."""
    shown = finding.worded(OPTION_NAMES) if isinstance(finding, Finding) else finding
    err_console.print(styled(("warning:", "yellow"), f" {shown}"), soft_wrap=True)


def finding_json(finding: Finding) -> dict:
    """A finding for a ``--json`` document, its settings named by their options."""
    return finding.worded(OPTION_NAMES).to_dict()


#: Files this command has finished writing, in order (filled as each one is complete), so
#: that an interruption or a failed later output can say what is on disk.
written_files: list[Path] = []

EXIT_INTERRUPTED = 130  # 128 + SIGINT, as shells report Ctrl-C


def stop_on_sigterm() -> None:
    """Turn SIGTERM (``kill``, a closing terminal session, a job scheduler) into the same clean
    stop as Ctrl-C: half-written files and temporary sheet files are removed on the way out."""
    def handler(signum, frame):  # noqa: ARG001 - the signal module's signature
        raise KeyboardInterrupt

    try:
        signal.signal(signal.SIGTERM, handler)
    except (ValueError, OSError):  # not the main thread, or no such signal here
        pass


def _interrupted(exc: BaseException | None = None) -> int:
    # interruption.StoppedEarly (which click hands on as the cause of an Abort): what was shown and what was not
    message = next((getattr(e, "message", None) for e in (exc, getattr(exc, "__cause__", None))
                    if isinstance(e, KeyboardInterrupt) and getattr(e, "message", None)), None)
    if message and not written_files:
        err_console.print(message, soft_wrap=True)
    elif written_files:
        names = ", ".join(str(p) for p in written_files[:10])
        more = f" and {len(written_files) - 10} more" if len(written_files) > 10 else ""
        err_console.print(f"Interrupted: wrote {names}{more}; nothing else was written.", soft_wrap=True)
    else:
        err_console.print("Interrupted: nothing was written.", soft_wrap=True)
    return EXIT_INTERRUPTED


def _stdout_closed() -> int:
    """The reader of stdout went away (``timetabler inspect FILE | head -1``): not a bug. Exit
    quietly with 141 (128 + SIGPIPE, what a shell reports for a program stopped by a closed
    pipe), pointing stdout at /dev/null so that Python's final flush does not complain."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):
        pass
    return EXIT_PIPE_CLOSED


EXIT_PIPE_CLOSED = 141


class PipeAwareGroup(click.Group):
    """The command group: a closed stdout pipe becomes :class:`StdoutClosed` for run_guarded."""

    def invoke(self, ctx: click.Context) -> Any:
        try:
            result = super().invoke(ctx)
            sys.stdout.flush()  # a pipe closed after the last print is found here, not at exit
            return result
        except BrokenPipeError as exc:
            raise StdoutClosed() from exc


def run_guarded(cli: click.Group, argv: list[str] | None = None) -> int:
    """Run the click group and map outcomes to exit statuses.

    Bad input (InputError) and bad arguments (click usage errors) exit 2 with a message and
    no traceback; Ctrl-C (and SIGTERM, see :func:`stop_on_sigterm`) exits 130 saying what was
    written; a closed stdout pipe exits 141 quietly; anything else is a bug: exit 1 with a
    message that says so.
    """
    written_files.clear()
    try:
        cli.main(args=argv, prog_name="timetabler", standalone_mode=False)
    except InputError as exc:
        err_console.print(styled(("error:", "bold red"), " " + str(exc.worded(OPTION_NAMES))), soft_wrap=True)
        return EXIT_BAD_INPUT
    except (click.exceptions.Abort, KeyboardInterrupt) as exc:
        return _interrupted(exc)
    except (StdoutClosed, BrokenPipeError):
        return _stdout_closed()
    except click.ClickException as exc:
        exc.show()
        return EXIT_BAD_INPUT
    except click.exceptions.Exit as exc:
        return exc.exit_code
    except Exception:  # noqa: BLE001 - the last line of defence
        err_console.print(styled(
            ("internal error", "bold red"), ": this is a bug in timetabler, not a problem with your file. "
            "Please report it with the details below."))
        traceback.print_exc(file=sys.stderr)
        return EXIT_BUG
    return EXIT_DONE
