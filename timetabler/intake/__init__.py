"""Intake: read registrars' files into a :class:`~timetabler.model.Problem`.

Intake never solves. Its one entry point is :func:`read_problem`; problems in the files
become :class:`~timetabler.errors.Finding` objects (errors raise
:class:`~timetabler.errors.InputError`, warnings are returned in :class:`Reading`).
"""

from .reading import Reading, ReadOptions, read_problem

__all__ = ["Reading", "ReadOptions", "read_problem"]
