"""What the commands share: input options, reading the file, JSON output, exit statuses."""

from __future__ import annotations

import json
import sys
import traceback
from typing import Any, Callable

import click
from rich.console import Console
from rich.text import Text

from ..errors import InputError
from ..intake import ReadOptions, Reading, read_problem

EXIT_DONE = 0
EXIT_BUG = 1
EXIT_BAD_INPUT = 2

# Markup and emoji codes are off: file names, event codes and attendee ids reach these
# consoles as they are ('week[bold].csv', 'MA[/i]1', ':fire:' print as typed). Styling is
# given with Text objects or ``style=``, never with markup inside a string.
console = Console(stderr=False, highlight=False, markup=False, emoji=False)
err_console = Console(stderr=True, highlight=False, markup=False, emoji=False)


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


def print_json(document: Any) -> None:
    """Print exactly one JSON document on stdout. Big integers must already be strings."""
    click.echo(json.dumps(document, indent=2, ensure_ascii=False, default=str))


def show_warnings(reading: Reading, as_json: bool) -> None:
    """Warnings from intake go to stderr (so --json stdout stays one document)."""
    for finding in reading.warnings:
        warn(finding)


def warn(finding: Any) -> None:
    """One warning on stderr: 'warning:' in yellow, then the finding as plain text."""
    err_console.print(styled(("warning:", "yellow"), f" {finding}"), soft_wrap=True)


def run_guarded(cli: click.Group, argv: list[str] | None = None) -> int:
    """Run the click group and map outcomes to exit statuses.

    Bad input (InputError) and bad arguments (click usage errors) exit 2 with a message and
    no traceback; anything else is a bug: exit 1 with a message that says so.
    """
    try:
        cli.main(args=argv, prog_name="timetabler", standalone_mode=False)
    except InputError as exc:
        err_console.print(styled(("error:", "bold red"), " " + str(exc)), soft_wrap=True)
        return EXIT_BAD_INPUT
    except click.exceptions.Abort:
        err_console.print("Stopped.")
        return 130
    except click.ClickException as exc:
        exc.show()
        return EXIT_BAD_INPUT
    except click.exceptions.Exit as exc:
        return exc.exit_code
    except KeyboardInterrupt:
        err_console.print("Stopped.")
        return 130
    except Exception:  # noqa: BLE001 - the last line of defence
        err_console.print(styled(
            ("internal error", "bold red"), ": this is a bug in timetabler, not a problem with your file. "
            "Please report it with the details below."))
        traceback.print_exc(file=sys.stderr)
        return EXIT_BUG
    return EXIT_DONE
