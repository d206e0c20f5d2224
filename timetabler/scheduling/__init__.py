"""The scheduler: CP-SAT timetables under the rules of a real exam session.

Public API::

    from timetabler.scheduling import solve, SolveOptions, SolveRun, fewest_slots, validate

* :func:`solve` — a good timetable for K slots, or the reason none exists (:mod:`.solve`);
* :func:`fewest_slots` — lower bound with its reason, DSATUR upper bound, CP-SAT in between
  (:mod:`.fewest_slots_search`);
* :func:`validate` — an independent re-check of any timetable (:mod:`.validator`).
"""

from .fewest_slots_search import FewestSlots, fewest_slots
from .solve import SolveOptions, SolveRun, solve
from .validator import Validation, validate, validate_timetable

__all__ = ["solve", "SolveOptions", "SolveRun", "fewest_slots", "FewestSlots", "validate", "validate_timetable", "Validation"]
