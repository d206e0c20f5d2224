"""``--slots 5 6 7`` / ``--slots 5-8``: the option that takes several numbers of slots.

Click options take one value each; registrars type the numbers one after another, as the
command-line contract in the design notes shows. :class:`SlotCountsOption` swallows every
following token that looks like a number or a range, and :func:`parse_slot_counts` turns
them into a tuple of distinct whole numbers in the order given.
"""

from __future__ import annotations

import click


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


def looks_like_count(token: str) -> bool:
    parts = token.replace("..", "-").split("-")
    return 1 <= len(parts) <= 2 and all(p.strip().isdigit() for p in parts)


def parse_slot_counts(ctx, param, value) -> tuple[int, ...]:
    """Click callback: '5 6', '5,6', '5-8' -> (5, 6, ...); a clear message for anything else."""
    if value is None:
        return ()
    counts: list[int] = []
    for token in str(value).replace(",", " ").split():
        if not looks_like_count(token):
            raise click.BadParameter(f"'{token}' is not a number of slots (give whole numbers like 6, or a range like 5-8)")
        parts = [int(p) for p in token.replace("..", "-").split("-")]
        lo, hi = parts[0], parts[-1]
        if lo > hi:
            raise click.BadParameter(f"the range '{token}' runs backwards")
        counts.extend(range(lo, hi + 1))
    if any(k < 1 for k in counts):
        raise click.BadParameter("the number of slots must be at least 1")
    return tuple(dict.fromkeys(counts))
