"""The ``timetabler`` command: a thin layer over intake, the engines and the exporters.

Each command lives in its own module (``inspect_command.py``, ``count_command.py``, ...)
and registers itself on :data:`cli`. This module holds what they share: reading the input
file with the common options, printing JSON, and turning errors into exit statuses
(0 done, 2 bad input or arguments, 1 internal error).
"""

from __future__ import annotations

import importlib
import sys

import click

from .common import PipeAwareGroup, run_guarded, stop_on_sigterm

COMMAND_MODULES = [
    "inspect_command",
    "count_command",
    "solve_command",
    "compare_command",
    "template_command",
    "serve_command",
    "changes_command",
    "history_command",
    "forget_command",
]


@click.group(
    cls=PipeAwareGroup,
    context_settings={"help_option_names": ["-h", "--help"], "max_content_width": 100},
    invoke_without_command=True,
)
@click.version_option(package_name="timetabler")
@click.pass_context
def cli(ctx: click.Context) -> None:
    """Build exam and meeting timetables from enrolment spreadsheets.

    \b
    Typical session:
      timetabler inspect enrolments.xlsx          what is in the file, the fewest slots it could need
      timetabler count enrolments.xlsx --slots 5 6   how many clash-free timetables each choice allows
      timetabler solve enrolments.xlsx --slots 6 --out timetable.xlsx   a good timetable, as a workbook
      timetabler solve enrolments.xlsx --slots 6 --publish "week 1"     keep it as published
      timetabler changes "week 1" "week 2" --out notices.xlsx          who must be told what moved

    Input is an .xlsx workbook or a .csv file with one row per enrolment: a column naming
    the attendee (student, member, ...) and a column naming the event (exam, module,
    meeting, ...). Everything runs on this computer; nothing is sent anywhere.
    """
    if ctx.invoked_subcommand is None:  # plain `timetabler`: the overview, which is not an error
        click.echo(ctx.get_help())


for _name in COMMAND_MODULES:
    cli.add_command(importlib.import_module(f"{__name__}.{_name}").command)


def main(argv: list[str] | None = None) -> None:
    """Entry point of the ``timetabler`` script."""
    stop_on_sigterm()
    sys.exit(run_guarded(cli, argv))
