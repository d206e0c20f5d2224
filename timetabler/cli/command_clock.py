"""The time limit of a command, counted from its start.

``--time-limit`` is the time for each step that searches (each number of slots, the fewest-slots
search): the command's steps share one clock that started before the file was read, so reading,
building the models, searching, checking and writing all come out of it, and the command ends
within the limits it was given plus a few seconds.
"""

from __future__ import annotations

import dataclasses
import time

from ..scheduling import SolveOptions


class CommandClock:
    """Deadlines for the steps of one command.

    Step ``i`` (0-based) must end ``(i + 1) * seconds_each`` seconds after
    ``started``, less the time kept for checking its timetable and writing the results
    (it grows with the enrolments: about a second per 100,000 for the independent validator).
    A step that ends early leaves its time to the next.

    >>> clock = CommandClock(started=100.0, seconds_each=30.0, enrolments=0)
    >>> clock.end(0), clock.end(1)
    (129.0, 159.0)
    """

    def __init__(self, started: float, seconds_each: float, enrolments: int):
        self.started = started
        self.each = seconds_each
        self.tail = 1.0 + 5.0 * enrolments / 100_000

    def end(self, step: int) -> float:
        return self.started + (step + 1) * self.each - self.tail

    def options(self, options: SolveOptions, step: int) -> SolveOptions:
        """``options`` for step ``step``: its deadline, and a time limit no later than it (in repeatable
        mode the deadline alone, as a hard stop: the amount of work must not depend on the clock)."""
        end = self.end(step)
        if options.deterministic:
            return dataclasses.replace(options, deadline=end)
        left = max(0.5, end - time.perf_counter())
        return dataclasses.replace(options, deadline=end, time_limit=min(options.time_limit, left))
