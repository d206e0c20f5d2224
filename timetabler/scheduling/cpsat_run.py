"""Running CP-SAT: every parameter the tool sets, the search with its stop and stall checks, the progress
it reports, and the time a run has left (wall clock, or counted work in repeatable mode)."""

from __future__ import annotations

import math
import threading
import time
from typing import TYPE_CHECKING, Callable

from ortools.sat.python import cp_model

from ..progress import SolveProgressCallback
from .cpsat_model import TimetableModel

if TYPE_CHECKING:
    from .solve import SolveOptions

Progress = SolveProgressCallback  # see timetabler.progress


class Watcher(cp_model.CpSolverSolutionCallback):
    """Passes the best penalty and bound to the progress callback as solutions arrive."""

    def __init__(self, progress: Progress | None, info: dict, start: float):
        super().__init__()
        self.progress = progress
        self.info = info
        self.start = start
        self.first: float | None = None
        self.solutions = 0
        self.moved = self.last_solution = time.perf_counter()

    def on_solution_callback(self) -> None:
        self.solutions += 1
        self.last_solution = time.perf_counter()
        if self.first is None:
            self.first = time.perf_counter() - self.start
        if self.progress:
            penalty = self.objective_value
            bound = self.best_objective_bound
            gap = 0.0 if penalty == 0 else max(0.0, (penalty - bound) / abs(penalty))
            self.progress({**self.info, "event": "solution", "penalty": int(round(penalty)), "bound": bound,
                           "gap": gap, "seconds": time.perf_counter() - self.start})


class Budget:
    """Time left for a run: wall-clock seconds, or CP-SAT deterministic time in repeatable mode
    (so that how the time is shared between phases does not depend on the machine's load)."""

    def __init__(self, seconds: float, deterministic: bool):
        self.total = seconds
        self.deterministic = deterministic
        self.used = 0.0
        self.start = time.perf_counter()

    def left(self) -> float:
        if self.deterministic:
            return self.total - self.used
        return self.total - (time.perf_counter() - self.start)

    def charge(self, solver: cp_model.CpSolver) -> None:
        if self.deterministic:
            self.used += solver.response_proto.deterministic_time

    def charge_seconds(self, seconds: float) -> None:
        """Charge work measured in budget seconds (the local search's move count in repeatable mode)."""
        if self.deterministic:
            self.used += seconds


class ClockStop:
    """Repeatable mode's hard stop: true once the wall clock reaches ``deadline`` (noting that it cut the
    work, so the run may not repeat), or when the caller's own ``stop`` is."""

    def __init__(self, deadline: float, inner: Callable[[], bool] | None):
        self.deadline = deadline
        self.inner = inner
        self.hit = False

    def __call__(self) -> bool:
        if time.perf_counter() >= self.deadline:
            self.hit = True
            return True
        return bool(self.inner and self.inner())

    def seconds_left(self) -> float:
        return self.deadline - time.perf_counter()


def set_parameters(solver: cp_model.CpSolver, options: SolveOptions, seconds: float, *, workers: int | None = None,
                pairs: int = 0) -> None:
    """Every CP-SAT parameter the tool sets, in one place (``pairs``: clashing pairs in the model)."""
    p = solver.parameters
    # CP-SAT would catch Ctrl-C (ending the search as if the time were up, so the command went on)
    # and leave SIGINT and SIGTERM at their defaults afterwards, so a later Ctrl-C or kill ended
    # the process without cleaning up. Off: the caller's ``options.stop`` ends a search promptly
    # (see _run; the command line sets it from Ctrl-C), and a signal the caller turns into
    # KeyboardInterrupt lands once the search returns.
    p.catch_sigint_signal = False
    p.num_workers = max(1, workers if workers is not None else options.workers)
    p.random_seed = options.seed
    p.log_search_progress = options.log
    p.max_memory_in_mb = options.max_memory_mb
    if pairs > LIGHT_PRESOLVE_PAIRS:
        p.cp_model_presolve = False
        p.symmetry_level = 0
        # the linear relaxation gave a bound of 0 on the 2,000-exam benchmark and most of the memory
        p.linearization_level = 0
    if options.deterministic:
        p.interleave_search = True
        p.max_deterministic_time = max(0.05, seconds)
        # the clock only as the hard stop (the time limit); the work itself is counted
        clock_left = options.stop.seconds_left() if isinstance(options.stop, ClockStop) else math.inf
        p.max_time_in_seconds = max(0.05, min(max(0.05, seconds) * 100, clock_left))
    else:
        p.max_time_in_seconds = max(0.05, seconds)
    if options.stop is not None and options.stop():
        p.max_time_in_seconds = 0.0  # stopped already: a search begun now gets no time; the run ends with what it has


#: Above this many clashing pairs, presolve is switched off so the hinted timetable is taken at once
#: and improved by search (measured on a generated 600-exam session, 17,700 pairs: presolve with
#: probing took the whole of a 40 s limit on this 2-core machine under load).
LIGHT_PRESOLVE_PAIRS = 10_000


def run_cpsat(tm: TimetableModel, options: SolveOptions, seconds: float, progress, info, start,
         stall: float | None = None, workers: int | None = None):
    solver = cp_model.CpSolver()
    set_parameters(solver, options, seconds, pairs=tm.pairs, workers=workers)
    watcher = Watcher(progress, info, time.perf_counter())
    if progress and hasattr(solver, "best_bound_callback"):
        def bound_seen(bound: float) -> None:
            progress({**info, "event": "bound", "bound": bound, "seconds": time.perf_counter() - start})
        solver.best_bound_callback = bound_seen
    stop = options.stop
    if stall is None and stop is None:
        return solver.solve(tm.model, watcher), solver, watcher
    if stall is not None:
        # stop when neither the best timetable nor the bound has moved for `stall` seconds
        watcher.moved = time.perf_counter()
        seen = {"bound": None}
        shown = solver.best_bound_callback if hasattr(solver, "best_bound_callback") else None

        def bound_moved(bound: float) -> None:
            if seen["bound"] is None or bound > seen["bound"] + 1e-9:
                seen["bound"] = bound
                watcher.moved = time.perf_counter()
            if shown:
                shown(bound)
        if hasattr(solver, "best_bound_callback"):
            solver.best_bound_callback = bound_moved
    done = threading.Event()

    def guard() -> None:
        # the caller's stop (Ctrl-C, the page's stop button, repeatable mode's clock) is asked every
        # STOP_POLL_SECONDS; the stall counts only once CP-SAT has a timetable (presolve may take long)
        while not done.wait(STOP_POLL_SECONDS):
            if stop is not None and stop():
                solver.stop_search()  # again at every poll: a stop asked before the search has begun is not lost
                continue
            if stall is not None and watcher.solutions \
                    and time.perf_counter() - max(watcher.moved, watcher.last_solution) > stall:
                solver.stop_search()
                return
    thread = threading.Thread(target=guard, daemon=True)
    thread.start()
    try:
        status = solver.solve(tm.model, watcher)
    finally:
        done.set()
        thread.join()
    if isinstance(stop, ClockStop):
        stop()  # notes whether the clock, not the counted work, ended this search
    return status, solver, watcher


#: How often a running CP-SAT search asks ``SolveOptions.stop`` (Ctrl-C lands within this).
STOP_POLL_SECONDS = 0.1


#: Share of the time left that building a model may take; a model that would take longer is not built.
BUILD_SHARE = 0.5


def build_deadline(options: SolveOptions, seconds_left: float) -> float | None:
    """When building a model must end: a share of the time left (in repeatable mode, of the time to the
    hard stop, since building is not counted work; a build stopped there cuts the run, see :class:`ClockStop`)."""
    if isinstance(options.stop, ClockStop):
        return time.perf_counter() + BUILD_SHARE * max(0.0, options.stop.seconds_left())
    if options.deterministic:
        return None
    return time.perf_counter() + BUILD_SHARE * max(0.0, seconds_left)


def cut_by_clock(options: SolveOptions) -> None:
    """Repeatable mode: the clock stopped a step whose work was not done (the run may not repeat)."""
    if isinstance(options.stop, ClockStop):
        options.stop.hit = True


def search_seconds(seconds_left: float, tm: TimetableModel) -> float:
    """CP-SAT's time limit out of what is left: it overruns on large models (loading, stopping its workers)
    and the timetable must still be read back, arranged and checked. Measured under a load of 9 on 2 cores:
    car-s-91 (29,814 pairs, 2 workers) 3 s past a 30 s limit; pur-s-93 (86,261 pairs, 1 worker) 1.6 s."""
    tail = min(0.3 + tm.pairs / 10_000, 0.25 * seconds_left)
    return max(0.2, seconds_left - tail)
