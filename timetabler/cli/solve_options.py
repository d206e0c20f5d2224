"""The options ``solve`` and ``compare`` share, each defined once: ``--time-limit`` (a finite
number of seconds, also ``count``'s), ``--weight``, ``--max-per-day`` and ``--keep``, with
the one parser of each and :func:`apply_goal_options`, :func:`resolve_kept` that use them.

Usage in a command module::

    @click.command("compare")
    ...
    @time_limit_option(20.0, "Time for each number of slots ...")
    @weight_option
    @max_per_day_option
    @keep_option
    def command(..., time_limit, weights, max_per_day, keep, ...):
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any, Callable

import click

from ..intake.previous_timetable import resolve_previous
from ..intake.vocabulary import GOAL_WORDS, key
from ..model import GOAL_NAMES, Weights, weight_value
from ..export.tables import slot_words
from .common import console, styled, warn

#: --weight names: the goals' names (model.GOAL_NAMES, '-' for spaces); the Weights fields' own older
#: names (penalised-slot, penalised-room, back-to-back, ...) are still understood
WEIGHT_NAMES = {GOAL_NAMES[f.name].replace(" ", "-"): f.name for f in dataclasses.fields(Weights)}
_OLD_WEIGHT_NAMES = {f.name.replace("_", "-"): f.name for f in dataclasses.fields(Weights)}


class Seconds(click.ParamType):
    """A finite number of seconds, at least ``minimum`` ('nan' and 'inf' are refused: a time
    limit that is not a number, or never ends, is no limit)."""

    name = "seconds"

    def __init__(self, minimum: float):
        self.minimum = minimum

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None) -> float:
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            number = float(value)
        else:
            try:
                number = float(str(value).strip())
            except ValueError:
                self.fail(f"'{value}' is not a number of seconds", param, ctx)
        if not math.isfinite(number):
            self.fail(f"'{value}' is not a finite number of seconds; give one such as 30", param, ctx)
        if number < self.minimum:
            self.fail(f"{number:g} is below the least allowed, {self.minimum:g} seconds", param, ctx)
        return number


def time_limit_option(default: float, help: str, *, minimum: float = 0.5, name: str = "--time-limit") -> Callable:
    """``--time-limit SECONDS`` (or ``name``) with this command's default and help text."""
    return click.option(name, type=Seconds(minimum), default=default, show_default=True, metavar="SECONDS", help=help)


def parse_weights(ctx, param, values) -> dict[str, int]:
    """``--weight NAME=N`` (several times): the option's names, or a goal as the Weights sheet names it."""
    out: dict[str, int] = {}
    for item in values or ():
        name, sep, number = item.partition("=")
        # the option's own names, or a goal as the Weights sheet names it ('avoided room')
        typed = name.strip().lower().replace("_", "-")
        attr = WEIGHT_NAMES.get(typed) or _OLD_WEIGHT_NAMES.get(typed) or GOAL_WORDS.get(key(name))
        if not sep or attr is None:
            raise click.BadParameter(
                f"'{item}' should be NAME=NUMBER with NAME one of {', '.join(sorted(WEIGHT_NAMES))}")
        try:
            out[attr] = weight_value(number)
        except ValueError as exc:
            raise click.BadParameter(f"{exc} (in '{item}')") from None
    return out


weight_option = click.option(
    "--weight", "weights", multiple=True, metavar="NAME=N", callback=parse_weights,
    help="Change a soft-goal weight, e.g. --weight back-to-back=20 --weight proximity=1. Names: "
         + ", ".join(sorted(WEIGHT_NAMES)) + " (the older names penalised-slot and penalised-room still "
         "work, and so do the Weights sheet's goal names, in quotes: --weight \"avoided room=5\").")

repeatable_option = click.option(
    "--repeatable", is_flag=True,
    help="Give exactly the same timetables on every run with the same seed and workers. The search then does "
         "a fixed amount of work (sized to take well under --time-limit on an idle two-core computer) instead of "
         "searching until the time is up. --time-limit still ends the run: a run it cuts short (a busy "
         "computer, a large file) may not repeat, and a warning says so.")

max_per_day_option = click.option(
    "--max-per-day", type=click.IntRange(1, 24), metavar="N",
    help="No attendee may have more than N events on one day (overrides the rules sheet).")

keep_option = click.option(
    "--keep", "keep", metavar="PREVIOUS", type=click.Path(dir_okay=False),
    help="Repair an earlier timetable (a workbook from --out, a CSV with Event and Slot columns, or the label "
         "of a published timetable; an existing file is read as a file). What is minimised is the total "
         "penalty, each event moved counting as the weight 'moved' (20): an event moves when a change "
         "forces it, or when moving it saves more than 20 of the other goals. For the fewest moves whatever "
         "the rest costs, give --weight moved=N with N above the rest of the penalty (e.g. 1000). Every "
         "move and every event placed afresh is listed.")


def apply_goal_options(problem: Any, weights: dict[str, int], max_per_day: int | None) -> None:
    """``--weight`` and ``--max-per-day`` over what the file's Weights and Rules sheets say."""
    if weights:
        problem.weights = dataclasses.replace(problem.weights, **weights)
    if max_per_day is not None:
        problem.max_per_day = max_per_day


def resolve_kept(problem: Any, refs: Any, slots: list) -> dict[str, int]:
    """The earlier timetable (``--keep``) for these slots; events no longer enrolled, events whose
    earlier slot is gone (left out, or placed afresh) and slot references that could be a label or
    a number are named in warnings."""
    resolved = resolve_previous(problem, refs, slots)
    for finding in (resolved.dropped + resolved.unplaced + resolved.ambiguous)[:20]:
        warn(finding)
    return resolved.slots


def warn_unrepeatable(runs: Any) -> None:
    """``--repeatable``: a warning for each run the time limit cut before its fixed amount of work was done."""
    for run in runs:
        if getattr(run, "repeatable", None) is False:
            warn(f"--repeatable: the search for {run.slots} slots reached --time-limit before its fixed amount of "
                 "work was done, so its result may differ on another run. Give a longer --time-limit.")


def print_repair(run: Any) -> None:
    """A repair's moves and new placements, each slot by its label and date."""
    slots = run.slot_list
    if run.moves:
        console.print(styled((f"{run.slots} slots", "bold"),
                             f" — {len(run.moves)} event(s) moved from the earlier timetable:"))
        for move in run.moves[:50]:
            console.print(f"  • {move['event']}: {slot_words(slots, move['from'])} → {slot_words(slots, move['to'])}",
                          soft_wrap=True)
    if getattr(run, "placed", None):
        console.print(styled((f"{run.slots} slots", "bold"),
                             f" — {len(run.placed)} event(s) placed afresh (no slot in the earlier timetable):"))
        for new in run.placed[:50]:
            console.print(f"  • {new['event']}: {slot_words(slots, new['to'])}", soft_wrap=True)
