"""When CP-SAT proves a block has no timetable: name a small set of the user's rules that cannot all hold.

The block's model is rebuilt with one assumption literal per user rule (explain mode of
:func:`.cpsat_model.build_model`); CP-SAT's sufficient assumptions for infeasibility give a first set,
which a deletion filter (:func:`_shrink`) makes smaller while time is left. The fast pre-checks that
need no search are in :mod:`.infeasibility`.
"""

from __future__ import annotations

import dataclasses
from typing import TYPE_CHECKING, Callable

from ortools.sat.python import cp_model

from .cpsat_model import BuildStopped, ModelInputs, TimetableModel, build_block_model
from .cpsat_run import build_deadline, cut_by_clock, set_parameters

if TYPE_CHECKING:
    from .solve import SolveOptions, SolveRun


def explain_infeasible(inputs: ModelInputs, options: SolveOptions, left: Callable[[], float],
                       run: SolveRun) -> SolveRun:
    """Infeasible: name a small set of rules that cannot all hold together (``inputs``: the block's model,
    rebuilt here in explain mode; ``left()``: the block's seconds left)."""
    k = len(inputs.slots)
    run.status, run.proven = "infeasible", True
    run.assignment = {}
    generic = f"no clash-free timetable with {k} slots exists"
    if not options.explain:
        run.reason = generic
        run.reasons = [generic]
        return run
    seconds = max(1.0, min(30.0, left()))
    try:
        tm = build_block_model(dataclasses.replace(inputs, objective=False, explain=True,
                                                   stop_at=build_deadline(options, left())))
    except BuildStopped:
        cut_by_clock(options)
        run.reason = generic + " (the rules behind it could not be singled out in time)"
        run.reasons = [run.reason]
        return run
    solver = cp_model.CpSolver()
    set_parameters(solver, options, seconds, workers=1)
    status = solver.solve(tm.model)
    if status != cp_model.INFEASIBLE:
        run.reason = generic + " (the rules behind it could not be singled out in time)"
        run.reasons = [run.reason]
        return run
    core_idx = set(solver.sufficient_assumptions_for_infeasibility())
    core = [r for r in tm.rules if r.literal.index in core_idx]
    if not core:
        run.reason = (f"the clashes alone need more than {k} slots: no way to give every event a slot "
                      "without booking someone twice")
        run.reasons = [run.reason]
        return run
    core = _shrink(tm, core, options, left)
    run.reasons = [r.text for r in core]
    run.reason = ("these rules cannot all hold together with the clashes in " f"{k} slots: " + "; ".join(run.reasons))
    return run


def _shrink(tm: TimetableModel, core, options: SolveOptions, left):
    """Deletion filter: drop each rule in turn while the rest stays infeasible (within the time left)."""
    if len(core) > 15:
        return core
    kept = list(core)
    for rule in list(core):
        if left() <= 0:
            break
        trial = [r for r in kept if r is not rule]
        tm.model.clear_assumptions()
        tm.model.add_assumptions([r.literal for r in trial])
        solver = cp_model.CpSolver()
        set_parameters(solver, options, max(0.5, min(5.0, left())), workers=1)
        if solver.solve(tm.model) == cp_model.INFEASIBLE:
            kept = trial
    return kept
