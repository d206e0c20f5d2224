"""``--slots 5 6 7`` / ``--slots 5-8``: the option that takes several numbers of slots.

Click options take one value each; registrars type the numbers one after another, as the
command-line contract (../shared/DESIGN.md) shows. :class:`SlotCountsOption` swallows every
following token that looks like a number or a range, and :func:`parse_slot_counts` turns
them into a tuple of distinct whole numbers in the order given.
"""

from __future__ import annotations

import click

from ..plan import day_choices, days_by_slot_count, looks_like_count, parse_counts as plan_parse_counts


class SlotCountsOption(click.Option):
    """An option that takes every following whole number (or range like 5-8)."""

    def add_to_parser(self, parser, ctx):
        result = super().add_to_parser(parser, ctx)
        for name in self.opts:
            target = parser._long_opt.get(name) or parser._short_opt.get(name)
            if target is None:
                continue
            original = target.process

            def process(value, state, original=original):
                values = [value]
                while state.rargs and looks_like_count(state.rargs[0]):
                    values.append(state.rargs.pop(0))
                original(" ".join(values), state)

            target.process = process
            break
        return result


def parse_slot_counts(ctx, param, value) -> tuple[int, ...]:
    """Click callback: '5 6', '5,6', '5-8' -> (5, 6, ...); a clear message for anything else."""
    return parse_counts(value, "slots")


def parse_day_counts(ctx, param, value) -> tuple[int, ...]:
    """Click callback of ``--days``: '4 5', '4-5' -> (4, 5)."""
    return parse_counts(value, "days")


def parse_counts(value, noun: str) -> tuple[int, ...]:
    """'5 6', '5,6', '5-8' -> distinct whole numbers of ``noun`` (slots, days) in the order given."""
    if value is None:
        return ()
    try:
        return tuple(plan_parse_counts(value, noun))
    except ValueError as exc:
        raise click.BadParameter(str(exc)) from None


def days_option(verb: str):
    """``--days N [N ...]``: the first N days of the Slots sheet, instead of ``--slots K``."""
    return click.option(
        "--days", "day_counts", cls=SlotCountsOption, metavar="N [N ...]", callback=parse_day_counts,
        help=f"{verb} the slots of the first N days of the slots sheet (in time order; days from its dates or day "
             "numbers), instead of --slots, e.g. --days 4 5 for four days or five.")


def choose_slot_counts(problem, slot_counts, day_counts):
    """The slot counts asked for (``--slots`` or ``--days``, not both) and ``{K: days}`` for ``--days``."""
    if slot_counts and day_counts:
        raise click.UsageError("Give --slots or --days, not both.")
    if not day_counts:
        return tuple(slot_counts), {}
    choices = day_choices(problem, day_counts)
    return tuple(c.slots for c in choices), days_by_slot_count(choices)
