"""Intake: read registrars' files into a :class:`~timetabler.model.Problem`.

Intake never solves. Its one entry point is :func:`read_problem`; problems in the files
become :class:`~timetabler.errors.Finding` objects (errors raise
:class:`~timetabler.errors.InputError`, warnings are returned in :class:`Reading`).
The input sheets and their columns are listed in :mod:`timetabler.intake.vocabulary`.
"""

from .limits import Limits
from .reading import LAYOUT_CHOICES, Reading, ReadOptions, read_problem

__all__ = ["LAYOUT_CHOICES", "Limits", "Reading", "ReadOptions", "read_problem"]
