"""DSATUR for the scheduler; the routine lives in :mod:`timetabler.dsatur` (below counting and scheduling, which both use it)."""

from ..dsatur import dsatur

__all__ = ["dsatur"]
