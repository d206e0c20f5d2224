"""The two shapes of progress reports, defined once for every layer.

Long work reports through a callback so the command line and the web page can both show it;
the engines and intake never print.

step progress (:data:`StepProgress`)
    ``progress(what, done, total)``: reading a file (rows read, ``total`` None when unknown)
    and counting (groups of events counted out of those to count); ``what`` is a line about
    the work in hand, in plain words.
solve progress (:class:`SolveProgress`, :data:`SolveProgressCallback`)
    one event of a search for a timetable: ``event`` says which (``phase``: a new phase begins;
    ``solution``: a better timetable, with its ``penalty`` and the proven ``bound`` and ``gap``;
    ``bound``: a better bound), with the seconds since the search began and the number of
    slots (``slots``) it is for.
"""

from __future__ import annotations

from typing import Callable, Literal, TypedDict

StepProgress = Callable[[str, int, "int | None"], None]


class SolveProgress(TypedDict, total=False):
    """One event of a search (see the module docstring); only ``event`` is always there."""

    event: Literal["phase", "solution", "bound"]
    phase: str
    slots: int
    penalty: int
    bound: float
    gap: float
    seconds: float


SolveProgressCallback = Callable[[SolveProgress], None]
