"""``timetabler template``: write the input workbook, ready to fill in."""

from __future__ import annotations

import click

from ..intake.template import write_template
from .common import console


@click.command("template")
@click.argument("file", type=click.Path(dir_okay=False))
@click.option("--force", is_flag=True, help="Replace FILE if it already exists (default: refuse).")
@click.option("--example", is_flag=True, help="Fill the sheets with a small invented example to learn from.")
def command(file: str, force: bool, example: bool) -> None:
    """Write an input workbook FILE.xlsx with every sheet timetabler reads.

    \b
    Sheets: Instructions, Enrolments (required: one row per attendee and event),
    Events, Slots, Rooms, Rules and Weights (optional). Each header has a note that
    explains it; columns that take fixed words have drop-down lists, and numbers, dates
    and times are checked as they are typed. Fill it in, then run:
      timetabler inspect FILE.xlsx
    """
    path = write_template(file, force=force, example=example)
    what = "with an invented example" if example else "empty"
    console.print(f"Wrote {path} ({what}). Fill in the Enrolments sheet, then run: timetabler inspect {path}")
