"""What the commands share: input options, reading the file, JSON output, exit statuses."""

from __future__ import annotations

import json
import sys
import traceback
from typing import Any, Callable

import click
from rich.console import Console

from ..errors import InputError
from ..intake import ReadOptions, Reading, read_problem

EXIT_DONE = 0
EXIT_BUG = 1
EXIT_BAD_INPUT = 2

console = Console(stderr=False, highlight=False)
err_console = Console(stderr=True, highlight=False)


def input_options(func: Callable) -> Callable:
    """The options every command that reads an enrolment file accepts."""
    func = click.option(
        "--sheet", metavar="NAME", help="Read enrolments from this sheet (default: found by its headers)."
    )(func)
    func = click.option(
        "--attendee-column", metavar="HEADER", help="Header of the column naming attendees (default: found by name)."
    )(func)
    func = click.option(
        "--event-column", metavar="HEADER", help="Header of the column naming events (default: found by name)."
    )(func)
    return func


def read_input(path: str, sheet: str | None, attendee_column: str | None, event_column: str | None, **extra: Any) -> Reading:
    """Read the input file with the common options (intake raises InputError on bad input)."""
    options = ReadOptions(sheet=sheet, attendee_column=attendee_column, event_column=event_column)
    for key, value in extra.items():
        if hasattr(options, key):
            setattr(options, key, value)
    return read_problem(path, options)


def print_json(document: Any) -> None:
    """Print exactly one JSON document on stdout. Big integers must already be strings."""
    click.echo(json.dumps(document, indent=2, ensure_ascii=False, default=str))


def show_warnings(reading: Reading, as_json: bool) -> None:
    """Warnings from intake go to stderr (so --json stdout stays one document)."""
    for finding in reading.warnings:
        err_console.print(f"[yellow]warning:[/yellow] {finding}", soft_wrap=True)


def run_guarded(cli: click.Group, argv: list[str] | None = None) -> int:
    """Run the click group and map outcomes to exit statuses.

    Bad input (InputError) and bad arguments (click usage errors) exit 2 with a message and
    no traceback; anything else is a bug: exit 1 with a message that says so.
    """
    try:
        cli.main(args=argv, prog_name="timetabler", standalone_mode=False)
    except InputError as exc:
        err_console.print("[bold red]error:[/bold red] " + str(exc), soft_wrap=True, markup=True)
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
        err_console.print(
            "[bold red]internal error[/bold red]: this is a bug in timetabler, not a problem with your file. "
            "Please report it with the details below.",
        )
        traceback.print_exc(file=sys.stderr)
        return EXIT_BUG
    return EXIT_DONE
