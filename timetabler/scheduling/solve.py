"""Solving: a good timetable for K slots, or the reason none exists.

The steps of :func:`solve`:

1. physical limits per event (length, seats, rooms) and the fast pre-checks of
   :mod:`.infeasibility`; a pre-check that fires ends the run as *infeasible* with its
   witness;
2. DSATUR within each event's allowed slots (:mod:`.dsatur`) for a warm start;
3. unless DSATUR's timetable already meets every hard rule, a feasibility model without the
   goals (when the slots are interchangeable, with the events of a large clique fixed to
   slots 1, 2, ...: slot symmetry broken) — infeasible there means infeasible everywhere;
   its timetable, arranged over the slots (:mod:`.arrangement`), is the hint for step 4;
4. the full model with the soft goals, hinted, with CP-SAT's parallel portfolio and
   large-neighbourhood search, and the local search of :mod:`.kempe_search` (simulated
   annealing over Kempe chains, single moves and slot swaps, every hard rule kept): on a
   large model CP-SAT first for a share of the time (stopping when it stalls), then the
   local search; on a small one a short local search, CP-SAT from its timetable with most
   of the time (to prove optimality), then the local search again;
5. rooms seated slot by slot, slots linked by long events or by attendees seated apart
   (Own room) together (:mod:`.rooms`); a group that cannot be seated is forbidden as its exact
   set of (event, start slot) pairs and step 4 resumes;
6. when CP-SAT proves infeasibility, the model is rebuilt with one assumption per user
   rule and the rules that cannot all hold are reported (:mod:`.infeasibility`).

Components of the conflict graph that no rule, seat limit or room links are solved
apart, each with a share of the time limit proportional to its size.
"""

from __future__ import annotations

import dataclasses
import math
import threading
import time
from dataclasses import dataclass, field
from typing import Callable

import networkx as nx
from ortools.sat.python import cp_model

from ..conflicts import conflict_graph
from ..model import Problem, Slot, SolveStatus, Timetable, days_of, time_order
from .cliques import clique_cover, largest_clique_found
from ..availability import Availability
from .cpsat_goals import model_memory_mb, pair_plan
from .cpsat_model import BuildStopped, TimetableModel, build_model
from .slot_domains import (_room_capacity_by_slot, large_event_codes, needs_availability, physical_domains,
                           slots_interchangeable)
from .arrangement import arrange
from .dsatur import dsatur
from .infeasibility import prechecks, room_count_witness
from .kempe_search import improve
from .penalty_state import build_state
from .rooms import seat_events, seated_apart, seats_in_rooms
from .tabucol import tabucol
from .transversals import colour_by_transversals

Progress = Callable[[dict], None]


@dataclass
class SolveOptions:
    """Solver settings, in one place.

    time_limit
        Seconds of wall time for one slot count (the whole run, all phases: checks, model building,
        search, seating).
    deadline
        A ``time.perf_counter()`` time the run must end by, whatever ``time_limit`` says (the command's
        own deadline: what reading the file took is no longer there to spend). In repeatable mode only
        a hard stop, as ``time_limit`` is (see ``deterministic``).
    workers
        CP-SAT search workers (threads). 2 suits an ordinary laptop.
    seed
        Random seed; with ``deterministic`` the same seed and workers give the same timetable.
    deterministic
        Interleave the workers in fixed batches and stop on CP-SAT's deterministic time and the local
        search's move count (``REPEATABLE_WORK_SHARE`` of ``time_limit`` as seconds of work) instead of
        the wall clock, so runs repeat exactly. The clock still ends the run at ``time_limit`` (or
        ``deadline``): a run cut there may not repeat, and says so (``SolveRun.repeatable`` False).
    room_sharing, room_splitting
        Several events may share a room, of any lengths, as long as their attendees fit in its
        seats (the default; a room with ``Room.shared`` False never holds two); a large event
        may be spread over several rooms (each extra room costs ``Weights.room_split``).
    explain
        Search for the rules that cannot all hold when no timetable exists.
    split_components
        Solve independent groups of events apart.
    stop
        Asked between rounds of the local search; when it returns True the search ends as if its time
        were up (the web page's stop button; CP-SAT's searches are stopped by the caller directly).
    max_memory_mb
        The memory a run may take, in MiB (whole process). A model whose estimated size
        (:func:`.cpsat_model.model_memory_mb`) is above it gets fewer CP-SAT workers; a goal model too
        large even for one is not built, and the first clash-free timetable stands. CP-SAT also stops
        searching (keeping its best timetable) when its own accounting reaches it.
    """

    time_limit: float = 30.0
    workers: int = 2
    seed: int = 0
    deterministic: bool = False
    room_sharing: bool = True
    room_splitting: bool = False
    explain: bool = True
    split_components: bool = True
    log: bool = False
    max_memory_mb: int = 1800
    stop: Callable[[], bool] | None = None
    deadline: float | None = None


@dataclass
class SolveRun:
    """The outcome for one slot count (see the ``solve --json`` contract in DESIGN.md)."""

    slots: int
    slot_list: list[Slot]
    status: SolveStatus  # given as the enum or its word; always held as the enum
    assignment: dict[str, int] = field(default_factory=dict)
    rooms: dict[str, list[tuple[str, int]]] = field(default_factory=dict)
    own_rooms: dict[tuple[str, str], str] = field(default_factory=dict)  # (attendee, event) -> room they sit alone in
    penalty: int | None = None
    bound: float | None = None
    proven: bool = False
    reason: str | None = None
    reasons: list[str] = field(default_factory=list)
    penalty_breakdown: dict[str, int] = field(default_factory=dict)
    wall_seconds: float = 0.0
    moves: list[dict] = field(default_factory=list)
    placed: list[dict] = field(default_factory=list)  # repair: events with no earlier slot, and where they went
    first_feasible_seconds: float | None = None
    validation: object | None = None  # a validator.Validation, filled by callers that check
    #: repeatable mode only: True when the fixed amount of work was done, False when the time limit cut it
    repeatable: bool | None = None

    def __setattr__(self, name: str, value) -> None:
        if name == "status":
            value = SolveStatus(value)  # a word outside the four is a bug: ValueError
        object.__setattr__(self, name, value)

    @property
    def found(self) -> bool:
        """A timetable was found (status optimal or feasible): the one test of it."""
        return self.status.found

    @property
    def timetable(self) -> Timetable:
        """The timetable held, as one value (its assignment is empty when none was found)."""
        return Timetable(tuple(self.slot_list), dict(self.assignment), dict(self.rooms), dict(self.own_rooms))

    @property
    def has_timetable(self) -> bool:
        """A timetable was found and is held (an interrupted or cut run may have the status but no events)."""
        return self.found and bool(self.assignment)

    @property
    def gap(self) -> float | None:
        if self.penalty is None or self.bound is None:
            return None
        if self.penalty == 0:
            return 0.0
        return max(0.0, (self.penalty - self.bound) / self.penalty)

    def to_json(self) -> dict:
        doc = {
            "slots": self.slots,
            "status": self.status,
            "assignment": dict(sorted(self.assignment.items())),
            "reason": self.reason,
            "reasons": list(self.reasons),
            "proven": self.proven,
            "penalty": self.penalty,
            "bound": self.bound,
            "gap": self.gap,
            "penalty_breakdown": dict(self.penalty_breakdown),
            "slot_labels": [s.label for s in self.slot_list],
            "rooms": {c: [{"room": r, "seats": n} for r, n in v] for c, v in sorted(self.rooms.items())},
            "own_rooms": [{"attendee": a, "event": c, "room": r} for (a, c), r in sorted(self.own_rooms.items())],
            "moves": list(self.moves),
            "first_feasible_seconds": (None if self.first_feasible_seconds is None
                                       else round(self.first_feasible_seconds, 3)),
            "placed": list(self.placed),
            "wall_seconds": round(self.wall_seconds, 3),
        }
        if self.validation is not None:
            doc["validation"] = self.validation.to_json()
        if self.repeatable is not None:
            doc["repeatable"] = self.repeatable
        return doc


class _Watcher(cp_model.CpSolverSolutionCallback):
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


def _best_only(progress: Progress | None) -> Progress | None:
    """``progress`` passing on a "solution" only when it is better than every one before it: the
    phases (first timetable, local search, CP-SAT, whose objective may stand above the penalty the
    timetable has) report on their own, and the best so far must never rise."""
    if progress is None:
        return None
    best: list[int] = []

    def passed(event: dict) -> None:
        if event.get("event") == "solution":
            if best and event["penalty"] >= best[0]:
                return
            best[:] = [event["penalty"]]
        progress(event)
    return passed


class _Budget:
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


class _ClockStop:
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


#: Repeatable mode: the share of the time limit given as seconds of counted work (CP-SAT's deterministic
#: time, the local search's moves). The rest is for what is not counted (building models, checking, seating)
#: and for the counted work running slower than its nominal rate: term_exams.xlsx, 14 slots, 2 s limit on
#: 2 loaded cores took 4.6 s with the whole limit as work (CP-SAT 0.4 deterministic s in 1.1 s, the local
#: search's 1.4 s of moves in 1.9 s, 1.2 s uncounted).
REPEATABLE_WORK_SHARE = 0.4


def _parameters(solver: cp_model.CpSolver, options: SolveOptions, seconds: float, *, workers: int | None = None,
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
        clock_left = options.stop.seconds_left() if isinstance(options.stop, _ClockStop) else math.inf
        p.max_time_in_seconds = max(0.05, min(max(0.05, seconds) * 100, clock_left))
    else:
        p.max_time_in_seconds = max(0.05, seconds)
    if options.stop is not None and options.stop():
        p.max_time_in_seconds = 0.0  # stopped already: a search begun now gets no time; the run ends with what it has


def _optional_links(problem: Problem) -> list[list[str]]:
    """The events of each attendee who is optional somewhere and has more than one event: whether they are
    free at one depends on the slots of the others (a quorum, the ``optional_missed`` goal)."""
    if not problem.optional:
        return []
    events_of: dict[str, list[str]] = {}
    for a, c in problem.enrolments:
        events_of.setdefault(a, []).append(c)
    return [sorted(events_of[a]) for a in sorted({a for a, _ in problem.optional}) if len(events_of[a]) > 1]


def _blocks(problem: Problem, graph: nx.Graph, slots: list[Slot], options: SolveOptions) -> list[list[str]]:
    """Groups of events that can be solved apart (the whole problem when anything links them)."""
    codes = sorted(graph.nodes)
    coupled = bool(problem.rooms) or any(s.seat_capacity is not None for s in slots) \
        or any(r.kind.value == "alone" for r in problem.rules)
    if not options.split_components or coupled:
        return [codes]
    joined = nx.Graph(graph)
    for events in _optional_links(problem):  # an optional attendee's events: booked elsewhere is seen in one block
        for a, b in zip(events, events[1:]):
            joined.add_edge(a, b)
    for rule in problem.rules:
        evs = [c for c in rule.events if c in joined]
        for a, b in zip(evs, evs[1:]):
            joined.add_edge(a, b)
    comps = [sorted(c) for c in nx.connected_components(joined)]
    singles = [c[0] for c in comps if len(c) == 1]
    groups = sorted((c for c in comps if len(c) > 1), key=lambda c: (len(c), c[0]))
    # smallest first (events that clash with nothing, then small groups): they take a moment each, so the
    # whole timetable is complete as soon as the largest group has its first timetable, and the largest
    # group gets what the others leave
    return ([sorted(singles)] if singles else []) + groups


def solve(
    problem: Problem,
    slots: list[Slot],
    options: SolveOptions | None = None,
    *,
    previous: dict[str, int] | None = None,
    progress: Progress | None = None,
    graph: nx.Graph | None = None,
) -> SolveRun:
    """A good timetable of ``problem`` in ``slots``, or the reason none exists.

    Parameters
    ----------
    problem
        The instance (events, enrolments, rules, rooms, weights).
    slots
        The slots to use (``problem.slots`` or :func:`~timetabler.model.generic_slots`).
    options
        Solver settings (:class:`SolveOptions`).
    previous
        Repair mode: an earlier timetable (event -> slot number); moving an event costs
        ``problem.weights.moved`` and every move is listed in ``SolveRun.moves``.
    progress
        Called with a dict (``event``: "phase" | "solution", ``penalty``, ``bound``, ``gap``,
        ``seconds``, ``slots``) as the search advances.

    Examples
    --------
    >>> from timetabler.model import Problem, generic_slots
    >>> p = Problem([("ann", "A"), ("ann", "B"), ("bo", "B"), ("bo", "C")])
    >>> run = solve(p, generic_slots(2), SolveOptions(time_limit=5, workers=1))
    >>> run.status, run.assignment["A"] != run.assignment["B"], run.assignment["B"] != run.assignment["C"]
    ('optimal', True, True)
    """
    options = options or SolveOptions()
    start = time.perf_counter()
    limit = options.time_limit
    clock_stop = None
    if options.deterministic:
        # the work is counted (so runs repeat) and sized to fit the limit; the clock is the hard stop
        limit = options.time_limit * REPEATABLE_WORK_SHARE
        end = start + options.time_limit if options.deadline is None else min(start + options.time_limit,
                                                                                options.deadline)
        clock_stop = _ClockStop(end, options.stop)
        options = dataclasses.replace(options, stop=clock_stop)
    elif options.deadline is not None:
        limit = max(0.2, min(limit, options.deadline - start))
    k = len(slots)
    if time_order(slots) != list(range(k)):
        # the model reads consecutive numbers as consecutive slots; intake sorts a slots sheet by time
        raise ValueError("the slots must be given in time order (by date, then start time)")
    graph = conflict_graph(problem) if graph is None else graph
    missing = [c for c in problem.events if c not in graph]
    if missing:  # events nobody is enrolled in: added to a copy, never to the caller's graph
        graph = graph.copy()
        graph.add_nodes_from(missing, size=0)
    sizes = {c: int(graph.nodes[c].get("size", 0)) for c in graph}
    codes = sorted(graph.nodes)
    info = {"slots": k}

    def say(phase: str) -> None:
        if progress:
            progress({**info, "event": "phase", "phase": phase, "seconds": time.perf_counter() - start})

    run = SolveRun(slots=k, slot_list=list(slots), status="unknown")
    if k == 0:
        if codes:
            run.status, run.proven = "infeasible", True
            run.reason = "there are events but no slots"
            run.reasons = [run.reason]
        else:
            run.status, run.proven, run.penalty, run.bound = "optimal", True, 0, 0.0
        run.wall_seconds = time.perf_counter() - start
        return run

    say("checking")
    if k > 1 and not _objective_order_free(problem, slots, previous or {}):
        _warm_up_local_search()  # its compiled loop is ready by the time CP-SAT has a timetable
    domains = physical_domains(problem, slots, codes, sizes, room_splitting=options.room_splitting)
    cover = clique_cover(graph)
    clique = largest_clique_found(graph, cover)
    witnesses = prechecks(problem, slots, graph, clique, domains.allowed, domains.why_not)
    if not options.room_splitting:
        # attendees seated apart take no seat in their events' rooms
        seat_witness = room_count_witness(problem, slots, seats_in_rooms(sizes, seated_apart(problem)),
                                          sharing=options.room_sharing)
        if seat_witness is not None:
            witnesses.append(seat_witness)
    if witnesses:
        run.status, run.proven = "infeasible", True
        run.reasons = [w.text for w in witnesses]
        run.reason = run.reasons[0]
        run.wall_seconds = time.perf_counter() - start
        return run

    large = large_event_codes(sizes)
    repairing = previous is not None
    previous = {c: s for c, s in (previous or {}).items() if c in problem.events}
    blocks = _blocks(problem, graph, slots, options)
    results: list[SolveRun] = []
    # repeatable mode: the work counted from here does not depend on how long the checks took
    budget = _Budget(limit if options.deterministic else limit - (time.perf_counter() - start), options.deterministic)
    for i, block in enumerate(blocks):
        left = max(0.2, budget.left())
        share = left if i == len(blocks) - 1 else max(0.2, left * len(block) / max(1, sum(map(len, blocks[i:]))))
        block_cover = cover if len(blocks) == 1 else [c for c in cover if c[0] in set(block)]
        results.append(_solve_block(problem, slots, graph, block, sizes, domains, block_cover, clique, large,
                                    previous, options, share, _best_only(progress), info, start, budget))
        if results[-1].status in ("infeasible", "unknown"):
            break
    _combine(run, results, len(blocks))
    if run.found:
        run.moves = [{"event": c, "from": previous[c], "to": s} for c, s in sorted(run.assignment.items())
                     if c in previous and previous[c] != s]
        if repairing:
            run.placed = [{"event": c, "to": s} for c, s in sorted(run.assignment.items()) if c not in previous]
    if clock_stop is not None:
        run.repeatable = not clock_stop.hit
    run.wall_seconds = time.perf_counter() - start
    say("done")
    return run


def _combine(run: SolveRun, results: list[SolveRun], n_blocks: int) -> None:
    if any(r.status == "infeasible" for r in results):
        bad = next(r for r in results if r.status == "infeasible")
        run.status, run.proven, run.reason, run.reasons = "infeasible", True, bad.reason, bad.reasons
        return
    if len(results) < n_blocks or any(r.status == "unknown" for r in results):
        bad = next((r for r in results if r.status == "unknown"), None)
        run.status = "unknown"
        run.reason = bad.reason if bad else "the time ran out before every group of events was placed"
        run.reasons = [run.reason]
        return
    run.status = "optimal" if all(r.status == "optimal" for r in results) else "feasible"
    run.proven = run.status == "optimal"
    firsts = [r.first_feasible_seconds for r in results if r.first_feasible_seconds is not None]
    run.first_feasible_seconds = max(firsts) if firsts else None
    for r in results:
        run.assignment.update(r.assignment)
        run.rooms.update(r.rooms)
        run.own_rooms.update(r.own_rooms)
        for name, v in r.penalty_breakdown.items():
            run.penalty_breakdown[name] = run.penalty_breakdown.get(name, 0) + v
    run.penalty = sum(r.penalty or 0 for r in results)
    run.bound = float(sum(r.bound if r.bound is not None else 0.0 for r in results))


def _objective_order_free(problem: Problem, slots: list[Slot], previous: dict) -> bool:
    w = problem.weights
    order_terms = (w.back_to_back, w.overnight, w.same_day, w.proximity, w.large_late)
    if any(order_terms) and len(slots) > 1:
        return False
    if previous and w.moved:
        return False
    if w.penalised_slot and any(s.penalised for s in slots):
        return False
    if w.preferred_slot and any(e.preferred_slots for e in problem.events.values()):
        return False
    if w.optional_missed and problem.optional:  # unavailable, or booked in another event at the time
        return False
    return True


def _solve_block(problem, slots, graph, block, sizes, domains, cover, clique, large, previous, options,
                 seconds, progress, info, start, budget: _Budget) -> SolveRun:
    k = len(slots)
    t0 = time.perf_counter()
    left_at_start = budget.left()

    def left() -> float:  # this block's share still unused
        return seconds - (left_at_start - budget.left())
    run = SolveRun(slots=k, slot_list=list(slots), status="unknown")
    block_set = set(block)
    sub = graph.subgraph(block)
    allowed = {c: set(domains.allowed[c]) for c in block}
    for c in block:  # fixed and barred slots too, so a complete DSATUR colouring meets them
        ev = problem.events[c]
        if ev.fixed_slot is not None and str(ev.fixed_slot).strip():
            allowed[c] &= {problem.slot_number(ev.fixed_slot, slots)}
        allowed[c] -= {problem.slot_number(r, slots) for r in ev.barred_slots}
    hint = _first_colouring(problem, slots, sub, block, allowed, sizes, k)
    symmetric = slots_interchangeable(problem, slots, block)
    order_free = _objective_order_free(problem, slots, previous)
    sym_clique = [c for c in clique if c in block_set] if symmetric else []
    if symmetric and not sym_clique and block:
        sym_clique = [max(block, key=lambda c: (sub.degree(c), c))]

    def say(phase: str) -> None:
        if progress:
            progress({**info, "event": "phase", "phase": phase, "seconds": time.perf_counter() - start})

    aligned = _align(hint, sym_clique, k) if symmetric else hint
    if symmetric and not order_free and len(hint) == len(block):
        say("arranging groups over the slots")
        hint = arrange(sub, hint, slots, problem.weights, large=large, seed=options.seed,
                       **_arrange_effort(options, seconds))

    dsatur_complete = len(hint) == len(block)
    feasible_hint: dict[str, int] | None = None
    nogoods: list[list[tuple[str, int]]] = []  # groups of (event, start) that cannot be seated together
    unsettled: set[int] = set()  # slots whose seating failed on time, not proven impossible
    fallback: SolveRun | None = None  # the first clash-free (and seated) timetable, kept in case step 4 finds none
    found = Availability.of(problem, slots) if needs_availability(problem, slots) else None  # spans and sittings

    def keep_fallback(assignment: dict[str, int]) -> bool:
        """Seat and check a timetable of this block; keep it as the fallback when every hard rule holds."""
        nonlocal fallback
        rooms: dict = {}
        own: dict = {}
        if problem.rooms:
            seating = seat_events(problem, slots, assignment, sizes, sharing=options.room_sharing,
                                  splitting=options.room_splitting, seed=options.seed, seconds_per_slot=1.0,
                                  availability=found)
            if seating.failed_groups:
                return False
            rooms, own = seating.rooms, seating.own_rooms
        scored = _scored(problem, slots, assignment, rooms, previous, options, block_set, own_rooms=own)
        if scored is None:
            return False
        fallback = scored
        if run.first_feasible_seconds is None:
            run.first_feasible_seconds = time.perf_counter() - start
        if progress and scored.penalty is not None:  # the first timetable is the best so far until a better one
            progress({**info, "event": "solution", "phase": "first timetable", "penalty": int(scored.penalty),
                      "bound": 0.0, "gap": 0.0 if scored.penalty == 0 else 1.0,
                      "seconds": time.perf_counter() - start})
        return True

    # long events and extra time that takes the next slot are not colourings: CP-SAT alone handles them
    one_slot_each = found is None or found.one_slot_each
    if not one_slot_each:
        say("events that take more than one slot: CP-SAT alone (no DSATUR start, no local search)")
    elif _optional_links(problem):
        # an optional attendee booked elsewhere counts against a quorum and the goal: the local search's
        # per-event costs do not see it, so CP-SAT alone (the DSATUR start is still checked by the validator)
        one_slot_each = False
        say("optional attendees with several events: CP-SAT alone (no DSATUR start, no local search)")
    if dsatur_complete and one_slot_each:
        # DSATUR honours clashes and each event's allowed slots; the independent check covers the other rules
        say("checking the DSATUR timetable")
        if keep_fallback(hint):
            feasible_hint = hint

    # step 3: a feasibility search with slot symmetry broken
    # (also without symmetry: a model without the goals finds a first timetable far sooner)
    if feasible_hint is None:
        say("searching for a clash-free timetable")
        try:
            tm = build_model(problem, slots, graph, block, sizes=sizes, domains=domains, objective=False,
                             symmetry=sym_clique if symmetric else None, large=large,
                             room_splitting=options.room_splitting, room_sharing=options.room_sharing, cover=cover,
                             stop_at=_build_deadline(options, left()))
        except BuildStopped:
            _cut_by_clock(options)
            return _out_of_time(run, k, t0)
        _add_hint(tm, aligned)
        phase_seconds = _search_seconds(left() * (1.0 if order_free else 0.5), tm)
        status, solver, watcher = _run(tm, options, phase_seconds, progress, {**info, "phase": "clash-free"}, start)
        budget.charge(solver)
        if status == cp_model.INFEASIBLE:
            return _explain(problem, slots, graph, block, sizes, domains, options, left, run, cover)
        if status in (cp_model.OPTIMAL, cp_model.FEASIBLE):
            feasible_hint = tm.assignment(solver)
            if symmetric and not order_free:  # moving whole groups between slots is safe only when slots are alike
                feasible_hint = arrange(sub, feasible_hint, slots, problem.weights, large=large, seed=options.seed,
                                        **_arrange_effort(options, seconds))
            say("seating the first timetable")
            keep_fallback(feasible_hint)
        elif order_free:
            return _out_of_time(run, k, t0)

    # step 4: the full model (with the goals), hinted; step 5: rooms, with cuts
    for round_ in range(6):
        remaining = left()
        if order_free and feasible_hint is not None and not problem.rooms:
            # nothing to optimise: the clash-free timetable is optimal (penalty 0 is the least possible)
            run.assignment = dict(feasible_hint)
            run.status, run.proven, run.penalty, run.bound = "optimal", True, 0, 0.0
            break
        # Two orders, by the model's size. Small (at most PROOF_PAIRS clashing pairs): CP-SAT can often
        # prove optimality, and its bound tends to move only at the proof, so a short local search first gives
        # it a good hint, CP-SAT then has most of the time without stopping on a stall, and the local search
        # the rest. Large: CP-SAT first for a share of the time, stopping when it stalls; then the local search.
        local = k > 1 and not order_free and one_slot_each
        small = sub.number_of_edges() <= PROOF_PAIRS

        def polish(assignment: dict[str, int], bound: float | None, share: float = 1.0) -> SolveRun | None:
            say("improving by local search")
            spare = left() - _reserve(seconds, problem)
            return _improve_locally(problem, slots, graph, block, sizes, domains, previous, large, options,
                                    assignment, spare * share, progress, info, start, bound, budget)
        start_from = feasible_hint
        first = None
        if local and small and feasible_hint is not None and not problem.rooms:
            first = polish(feasible_hint, None, share=SMALL_FIRST_SEARCH_SHARE)
            if first is not None:
                start_from = first.assignment
        say("improving the timetable" if feasible_hint else "searching for a timetable")
        # a goal model too large for the memory or the time left is not built: the first timetable stands
        workers = _workers_within_memory(options, k, cover, sub.number_of_edges(), pair_plan(problem.weights, slots))
        if not workers and fallback is None:
            workers = 1  # no timetable yet: the one way to one, whatever the memory
        if not workers:
            say("keeping the first timetable: the goal model would not fit the memory allowed")
        tm = None
        if workers:
            try:
                tm = build_model(problem, slots, graph, block, sizes=sizes, domains=domains, objective=True,
                                 symmetry=sym_clique if (symmetric and order_free) else None, previous=previous,
                                 large=large, room_splitting=options.room_splitting,
                                 room_sharing=options.room_sharing, nogoods=nogoods, cover=cover,
                                 stop_at=_build_deadline(options, left()))
            except BuildStopped:
                _cut_by_clock(options)
                tm = None
        if tm is not None:
            _add_hint(tm, start_from or _repair_hint(previous, hint, block))
            remaining = left()  # building a large model takes a good part of the time
            cp_seconds = remaining * (CPSAT_SMALL_SHARE if small else CPSAT_SHARE) if local else remaining
            stall = _stall_seconds(cp_seconds) if local and not small and not options.deterministic else None
            status, solver, watcher = _run(tm, options, _search_seconds(cp_seconds, tm), progress,
                                           {**info, "phase": "goals"}, start, stall=stall,
                                           workers=workers)
            budget.charge(solver)
        else:
            status = cp_model.UNKNOWN
        if status == cp_model.INFEASIBLE:
            if nogoods and unsettled:
                run.status, run.proven = "unknown", False
                run.reason = ("no timetable is left once the groups of events that could not be seated in time are "
                              f"ruled out (slot(s) {', '.join(map(str, sorted(unsettled)))}), but seating them was "
                              "not proven impossible: try a longer time limit")
                run.reasons = [run.reason]
                return run
            if nogoods:
                run.status, run.proven = "infeasible", True
                run.reason = ("the events cannot be seated in the rooms of every slot: after "
                              f"{len(nogoods)} room check(s) no timetable is left")
                run.reasons = [run.reason]
                return run
            return _explain(problem, slots, graph, block, sizes, domains, options, left, run, cover)
        if status not in (cp_model.OPTIMAL, cp_model.FEASIBLE) and fallback is not None:
            better = polish(fallback.assignment, None) if local else None
            kept = fallback
            # seated and checked by keep_fallback; kept only when better with its rooms too
            if better is not None and (not keep_fallback(better.assignment)
                                       or (fallback.penalty or 0) >= (kept.penalty or 0)):
                fallback = kept
            fallback.first_feasible_seconds = run.first_feasible_seconds
            fallback.wall_seconds = time.perf_counter() - t0
            return fallback
        if status not in (cp_model.OPTIMAL, cp_model.FEASIBLE):
            return _out_of_time(run, k, t0)
        if run.first_feasible_seconds is None and watcher.first is not None:
            run.first_feasible_seconds = (t0 - start) + watcher.first
        assignment = tm.assignment(solver)
        run.assignment = assignment
        # the penalty is counted on the timetable: the goal literals only bound it from above
        run.penalty_breakdown = tm.evaluate(assignment)
        run.penalty = sum(run.penalty_breakdown.values())
        run.bound = min(float(solver.best_objective_bound), run.penalty) if tm.terms else 0.0
        run.status = "optimal" if status == cp_model.OPTIMAL else "feasible"
        run.proven = status == cp_model.OPTIMAL
        if status == cp_model.FEASIBLE and first is not None and first.penalty is not None \
                and first.penalty < run.penalty:
            # CP-SAT may set a hint aside: the first local search's timetable stays when it is better
            assignment = run.assignment = dict(first.assignment)
            run.penalty = first.penalty
            run.penalty_breakdown = {name: v for name, v in first.penalty_breakdown.items() if name != "room_split"}
        if status == cp_model.FEASIBLE and symmetric and not order_free and not previous:
            # one more pass of the group arrangement over the slots on CP-SAT's best timetable
            moved = arrange(sub, assignment, slots, problem.weights, large=large, seed=options.seed,
                            **_arrange_effort(options, seconds))
            better = _scored(problem, slots, moved, {}, previous, options, block_set, rooms_later=True) \
                if moved != assignment else None
            if better is not None and better.penalty is not None and better.penalty < (run.penalty or 0):
                assignment = run.assignment = moved
                run.penalty, run.penalty_breakdown = better.penalty, {
                    name: v for name, v in better.penalty_breakdown.items() if name != "room_split"}
        solver_result = None  # CP-SAT's own timetable, kept while the local search's is seated
        if local and status == cp_model.FEASIBLE:
            better = polish(assignment, run.bound)
            if better is not None and better.penalty is not None and better.penalty < (run.penalty or 0):
                solver_result = (dict(run.assignment), run.penalty, dict(run.penalty_breakdown))
                assignment = run.assignment = better.assignment
                run.penalty = better.penalty
                run.penalty_breakdown = {name: v for name, v in better.penalty_breakdown.items() if name != "room_split"}
                if run.bound is not None and run.penalty <= math.ceil(run.bound - 1e-6):
                    run.status, run.proven = "optimal", True  # the local search reached CP-SAT's bound
        if not problem.rooms:
            break
        say("seating events in rooms")
        seating = seat_events(problem, slots, assignment, sizes, sharing=options.room_sharing,
                              splitting=options.room_splitting, seed=options.seed,
                              seconds_per_slot=min(5.0, max(0.5, left() / 10)), availability=found)
        if seating.failed_groups and solver_result is not None:
            # the local search keeps only the aggregate room limits: when its timetable cannot be seated,
            # CP-SAT's (which the room cuts so far shaped) is seated instead
            run.assignment, run.penalty, run.penalty_breakdown = solver_result
            run.status, run.proven = "feasible", False
            assignment = run.assignment
            seating = seat_events(problem, slots, assignment, sizes, sharing=options.room_sharing,
                                  splitting=options.room_splitting, seed=options.seed,
                                  seconds_per_slot=min(5.0, max(0.5, left() / 10)), availability=found)
        if not seating.failed_groups:
            run.rooms = seating.rooms
            run.own_rooms = seating.own_rooms
            splits = sum(len(v) - 1 for v in seating.rooms.values())
            for name, n in (("room_split", splits), ("preferred_room", seating.missed_preferred_rooms),
                            ("penalised_room", seating.avoided_rooms_used)):
                weight = getattr(problem.weights, name)
                if n and weight:
                    run.penalty_breakdown[name] = n * weight
                    run.penalty = (run.penalty or 0) + n * weight
                    run.bound = None  # the bound covers the slot model only
                    run.status, run.proven = "feasible", False
            break
        nogoods.extend(seating.failed_groups)  # each group's exact (event, start) pairs, forbidden together
        unsettled.update(seating.unsettled_slots)
        feasible_hint = None
        if left() <= 0 or round_ == 5:
            run.status = "unknown"
            run.assignment = {}
            when = "within the time limit" if left() <= 0 else f"after {round_ + 1} rounds of new timetables"
            run.reason = ("a clash-free timetable was found but its events could not be seated in the rooms of "
                          f"slot(s) {', '.join(map(str, sorted(seating.failed_slots)))} {when}")
            run.reasons = [run.reason]
            return run
    run.wall_seconds = time.perf_counter() - t0
    return run


def _workers_within_memory(options: SolveOptions, k: int, cover, pairs: int, plan) -> int:
    """The most CP-SAT workers, up to ``options.workers``, whose goal model fits ``options.max_memory_mb``
    (0 when even one does not)."""
    literals = sum(len(c) for c in cover if len(c) > 1)
    for workers in range(max(1, options.workers), 0, -1):
        if model_memory_mb(k, literals, pairs, plan, workers) <= options.max_memory_mb:
            return workers
    return 0


#: Share of the time left that building a model may take; a model that would take longer is not built.
BUILD_SHARE = 0.5


def _build_deadline(options: SolveOptions, seconds_left: float) -> float | None:
    """When building a model must end: a share of the time left (in repeatable mode, of the time to the
    hard stop, since building is not counted work; a build stopped there cuts the run, see :class:`_ClockStop`)."""
    if isinstance(options.stop, _ClockStop):
        return time.perf_counter() + BUILD_SHARE * max(0.0, options.stop.seconds_left())
    if options.deterministic:
        return None
    return time.perf_counter() + BUILD_SHARE * max(0.0, seconds_left)


def _cut_by_clock(options: SolveOptions) -> None:
    """Repeatable mode: the clock stopped a step whose work was not done (the run may not repeat)."""
    if isinstance(options.stop, _ClockStop):
        options.stop.hit = True


def _search_seconds(seconds_left: float, tm: TimetableModel) -> float:
    """CP-SAT's time limit out of what is left: it overruns on large models (loading, stopping its workers)
    and the timetable must still be read back, arranged and checked. Measured under a load of 9 on 2 cores:
    car-s-91 (29,814 pairs, 2 workers) 3 s past a 30 s limit; pur-s-93 (86,261 pairs, 1 worker) 1.6 s."""
    tail = min(0.3 + tm.pairs / 10_000, 0.25 * seconds_left)
    return max(0.2, seconds_left - tail)


def _out_of_time(run: SolveRun, k: int, t0: float) -> SolveRun:
    run.status = "unknown"
    run.reason = (f"no timetable with {k} slots was found within the time limit, and none was ruled out; "
                  "try more time or more slots")
    run.reasons = [run.reason]
    run.wall_seconds = time.perf_counter() - t0
    return run


def _first_colouring(problem: Problem, slots: list[Slot], sub: nx.Graph, block, allowed: dict[str, set[int]],
                     sizes: dict[str, int], k: int) -> dict[str, int]:
    """DSATUR's timetable of a block, keeping the seat limits and the "same slot" rules when it can
    (events that must share a slot are coloured as one); else clashes and allowed slots only."""
    limits = _seat_limits(problem, slots, block, sizes)
    groups = nx.utils.UnionFind(block)
    for rule in problem.rules:
        if rule.kind.value == "same slot" and all(c in sub for c in rule.events):
            groups.union(*rule.events)
    lead = {c: groups[c] for c in block}
    if any(lead[c] != c for c in block) or limits or any(r.kind.value == "different days" for r in problem.rules):
        merged = nx.Graph()
        merged.add_nodes_from(set(lead.values()))
        merged.add_edges_from((lead[a], lead[b]) for a, b in sub.edges if lead[a] != lead[b])
        if all(not sub.has_edge(a, b) or lead[a] != lead[b] for a, b in sub.edges):
            together: dict[str, set[int]] = {}
            weight: dict[str, int] = {}
            for c in block:
                together[lead[c]] = together.get(lead[c], allowed[c]) & allowed[c]
                weight[lead[c]] = weight.get(lead[c], 0) + sizes.get(c, 0)
            seats = [({lead[c] for c in members}, caps) for members, caps in limits]
            apart: dict[str, set[str]] = {}
            for rule in problem.rules:
                if rule.kind.value == "different days" and all(c in sub for c in rule.events):
                    for a in rule.events:
                        apart.setdefault(lead[a], set()).update(lead[b] for b in rule.events if lead[b] != lead[a])
            day = dict(enumerate(days_of(slots), start=1))
            merged_colour = dsatur(merged, together, limit=k, sizes=weight, seats=seats, apart=apart, day=day)
            hint = {c: merged_colour[lead[c]] for c in block if lead[c] in merged_colour}
            if len(hint) == len(block):
                return hint
    return dsatur(sub, allowed, limit=k)


def _seat_limits(problem: Problem, slots: list[Slot], block, sizes: dict[str, int]) -> list[tuple[set, dict[int, int]]]:
    """The seat limits a first timetable must keep, for DSATUR: each slot's seats, and the seats of
    the rooms of each type free in each slot (slot number -> seats)."""
    seated = {c for c in block if sizes.get(c, 0) > 0}
    out: list[tuple[set, dict[int, int]]] = []
    caps = {s: slot.seat_capacity for s, slot in enumerate(slots, start=1) if slot.seat_capacity is not None}
    if caps:
        out.append((seated, caps))
    if problem.rooms:
        free = _room_capacity_by_slot(problem, slots)
        kinds = {(problem.events[c].room_type or "").casefold() or None for c in seated} | {None}
        for kind in kinds:  # None: every room, which every seated event uses
            members = seated if kind is None else \
                {c for c in seated if (problem.events[c].room_type or "").casefold() == kind}
            out.append((members, {s: sum(cap for cap, _ in free[s].get(kind, [])) for s in free}))
    return out


def _arrange_effort(options: SolveOptions, seconds: float) -> dict:
    # a fixed number of steps in repeatable mode, a share of the time otherwise
    if options.deterministic:
        return {"seconds": None, "steps": 20_000}
    return {"seconds": min(2.0, max(0.1, seconds * 0.05))}


def _align(hint: dict[str, int], clique: list[str], k: int) -> dict[str, int]:
    """Relabel the slots of ``hint`` so the clique's events sit in slots 1, 2, ... as the symmetry
    break demands (valid only when slots are interchangeable)."""
    if not hint or any(c not in hint for c in clique[:k]):
        return hint
    mapping: dict[int, int] = {}
    for i, c in enumerate(clique[:k], start=1):
        mapping[hint[c]] = i
    rest = iter(i for i in range(1, k + 1) if i not in mapping.values())
    for s in sorted(set(hint.values())):
        if s not in mapping:
            mapping[s] = next(rest)
    return {c: mapping[s] for c, s in hint.items()}


def _scored(problem, slots, assignment, rooms, previous, options, block: set[str],
            rooms_later: bool = False, own_rooms: dict | None = None) -> SolveRun | None:
    """A timetable of one block found before the goals were optimised, with its penalty recounted
    by the independent validator (no bound); None when it breaks a hard rule. With ``rooms_later``
    the rooms are left to be seated afterwards; else ``own_rooms`` (attendees seated apart) are
    checked with ``rooms``."""
    from dataclasses import replace

    from .validator import validate

    part = problem if len(block) == len(problem.events) else _restricted(problem, block)
    if rooms_later:
        part = replace(part, rooms=[])
    v = validate(part, slots, assignment, rooms or None, previous=previous or None,
                 room_sharing=options.room_sharing, room_splitting=options.room_splitting,
                 own_rooms=None if rooms_later else dict(own_rooms or {}))
    if not v.ok:
        return None
    w = problem.weights.__dict__
    breakdown = {name: w[name] * n for name, n in v.soft.items() if w.get(name) and n}
    return SolveRun(slots=len(slots), slot_list=list(slots), status="feasible", assignment=dict(assignment),
                    rooms=dict(rooms), own_rooms=dict(own_rooms or {}), penalty=v.penalty, bound=None, proven=False,
                    penalty_breakdown=breakdown)


def _restricted(problem: Problem, block: set[str]) -> Problem:
    from dataclasses import replace

    return replace(problem, enrolments=[(a, c) for a, c in problem.enrolments if c in block],
                   events={c: e for c, e in problem.events.items() if c in block},
                   rules=[r for r in problem.rules if all(c in block for c in r.events)])


def _repair_hint(previous: dict, hint: dict, block) -> dict:
    if not previous:
        return hint
    return {c: previous.get(c, hint.get(c)) for c in block if previous.get(c, hint.get(c)) is not None}


def _add_hint(tm: TimetableModel, hint: dict[str, int] | None) -> None:
    if hint:
        tm.hint(hint)


#: Above this many clashing pairs, presolve is switched off so the hinted timetable is taken at once
#: and improved by search (measured on a generated 600-exam session, 17,700 pairs: presolve with
#: probing took the whole of a 40 s limit on this 2-core machine under load).
LIGHT_PRESOLVE_PAIRS = 10_000


_local_search_loading: threading.Thread | None = None


def _load_local_search() -> None:
    from .kempe_moves import compile_now  # imports numba

    compile_now()


def _warm_up_local_search() -> None:
    """Import and compile the local search's loop in a background thread, once per process."""
    global _local_search_loading
    if _local_search_loading is None:
        _local_search_loading = threading.Thread(target=_load_local_search, name="compiling the local search",
                                                 daemon=True)
        _local_search_loading.start()


#: Share of a block's remaining time CP-SAT gets on the full model when the local search follows
#: (it stops sooner when it stalls, see :func:`_stall_seconds`; the local search takes the rest).
CPSAT_SHARE = 0.25
#: Models of at most this many clashing pairs take the order that leaves CP-SAT most of the time: the sample
#: exam week (54 pairs) is proven optimal in 7-15 s on this machine under load, while hec-s-92 (1,363 pairs,
#: Carter proximity) was not proven in 120 s (issue 12's table) and gains more from the local search.
PROOF_PAIRS = 1_000
#: On a model of at most PROOF_PAIRS clashing pairs, where CP-SAT can often prove optimality
#: (the sample exam week's 5 slots take it 7-10 s on this 2-core machine under load) and the local search
#: needs little time: the local search's first share of the time, then CP-SAT's share of what is left.
SMALL_FIRST_SEARCH_SHARE = 0.15
CPSAT_SMALL_SHARE = 0.8


def _stall_seconds(seconds: float) -> float:
    """CP-SAT stops when neither its best timetable nor its bound has moved for this long."""
    return max(3.0, 0.15 * seconds)


def _reserve(seconds: float, problem: Problem) -> float:
    """Seconds of a block's share kept back after the local search: seating the rooms, the last checks."""
    return min(5.0, seconds * (0.08 if problem.rooms else 0.02))


def _improve_locally(problem, slots, graph, block, sizes, domains, previous, large, options: SolveOptions,
                     assignment: dict[str, int], seconds: float, progress, info, start, bound,
                     budget: _Budget) -> SolveRun | None:
    """The local search (:mod:`.kempe_search`) from ``assignment``; its result only when it is better and
    the independent validator confirms every hard rule and the penalty the search computed."""
    waited_from = time.perf_counter()
    if _local_search_loading is not None:  # the compiled loop, loaded in the background since the start
        wait = min(seconds, options.stop.seconds_left()) if isinstance(options.stop, _ClockStop) else seconds
        _local_search_loading.join(timeout=max(0.0, wait))
        if _local_search_loading.is_alive():
            return None
        if not options.deterministic:
            seconds -= time.perf_counter() - waited_from
    if seconds < 0.2 or len(assignment) != len(block):
        return None
    built_from = time.perf_counter()
    state = build_state(problem, slots, graph, list(block), sizes=sizes, domains=domains, previous=previous,
                        large=large, room_sharing=options.room_sharing, room_splitting=options.room_splitting)
    # building took its time; the validator's check afterwards walks the same enrolments: about as long again
    # (pur-s-93, 2,419 exams: 1.5 s to build, 1.2 s to validate)
    if not options.deterministic:  # repeatable mode counts moves, not the clock
        seconds -= 2 * (time.perf_counter() - built_from)
    if seconds < 0.2:
        return None

    def report(best: int, _seconds: float) -> None:
        if progress:
            gap = 0.0 if best == 0 or bound is None else max(0.0, (best - bound) / best)
            progress({**info, "event": "solution", "phase": "local search", "penalty": int(best),
                      "bound": float(bound) if bound is not None else 0.0, "gap": gap,
                      "seconds": time.perf_counter() - start})

    result = improve(state, assignment, seconds=seconds, seed=options.seed, deterministic=options.deterministic,
                     progress=report, stop=options.stop)
    budget.charge_seconds(seconds)
    if result.penalty >= result.start_penalty:
        return None
    scored = _scored(problem, slots, result.assignment, {}, previous, options, set(block), rooms_later=True)
    if scored is None or scored.penalty != result.penalty:
        return None  # never happens when the search is right; the validator has the last word
    return scored


def _run(tm: TimetableModel, options: SolveOptions, seconds: float, progress, info, start,
         stall: float | None = None, workers: int | None = None):
    solver = cp_model.CpSolver()
    _parameters(solver, options, seconds, pairs=tm.pairs, workers=workers)
    watcher = _Watcher(progress, info, time.perf_counter())
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
    if isinstance(stop, _ClockStop):
        stop()  # notes whether the clock, not the counted work, ended this search
    return status, solver, watcher


#: How often a running CP-SAT search asks ``SolveOptions.stop`` (Ctrl-C lands within this).
STOP_POLL_SECONDS = 0.1


def _explain(problem, slots, graph, block, sizes, domains, options, left, run: SolveRun, cover) -> SolveRun:
    """Infeasible: name a small set of rules that cannot all hold together."""
    k = len(slots)
    run.status, run.proven = "infeasible", True
    run.assignment = {}
    generic = f"no clash-free timetable with {k} slots exists"
    if not options.explain:
        run.reason = generic
        run.reasons = [generic]
        return run
    seconds = max(1.0, min(30.0, left()))
    try:
        tm = build_model(problem, slots, graph, block, sizes=sizes, domains=domains, objective=False, explain=True,
                         room_splitting=options.room_splitting, room_sharing=options.room_sharing, cover=cover,
                         stop_at=_build_deadline(options, left()))
    except BuildStopped:
        _cut_by_clock(options)
        run.reason = generic + " (the rules behind it could not be singled out in time)"
        run.reasons = [run.reason]
        return run
    solver = cp_model.CpSolver()
    _parameters(solver, options, seconds, workers=1)
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
        _parameters(solver, options, max(0.5, min(5.0, left())), workers=1)
        if solver.solve(tm.model) == cp_model.INFEASIBLE:
            kept = trial
    return kept


@dataclass
class FewestSlots:
    """The fewest slots: a proven lower bound with its reason, the best timetable found, and whether they meet."""

    lower: int
    lower_reason: str
    witness: list[str]
    upper: int | None
    upper_reason: str
    proven: bool
    run: SolveRun | None = None
    attempts: list[dict] = field(default_factory=list)
    dsatur_slots: int | None = None
    wall_seconds: float = 0.0
    #: The slots sheet's slots (the most the search may use); None with generic slots
    slots_in_sheet: int | None = None

    @property
    def sheet_too_short(self) -> bool:
        """No timetable because the slots sheet has fewer slots than are needed (not for want of time)."""
        return self.upper is None and self.slots_in_sheet is not None and self.lower > self.slots_in_sheet

    def to_json(self) -> dict:
        return {"lower": self.lower, "lower_reason": self.lower_reason, "witness": self.witness,
                "upper": self.upper, "upper_reason": self.upper_reason, "proven": self.proven,
                "slots_in_sheet": self.slots_in_sheet, "sheet_too_short": self.sheet_too_short,
                "dsatur_slots": self.dsatur_slots, "attempts": self.attempts,
                "wall_seconds": round(self.wall_seconds, 3),
                "timetable": self.run.to_json() if self.run else None}


def fewest_slots(
    problem: Problem,
    *,
    per_day: int | None = 2,
    options: SolveOptions | None = None,
    progress: Progress | None = None,
    graph: nx.Graph | None = None,
) -> FewestSlots:
    """The fewest slots that hold a clash-free timetable meeting every hard rule.

    Lower bounds: the largest clique found (events that pairwise share attendees), the
    busiest attendee, and the seats (every attendee seat must fit into the slots' seats or
    rooms). Upper bound: DSATUR; with plain clashes only, the transversal method
    (:mod:`.transversals`, when the events split into cliques of the lower bound) and TabuCol
    taking turns with short CP-SAT probes tighten it, and a probe or a complete transversal
    search may prove a count impossible. CP-SAT then tries slot counts between the bounds
    (first the lower bound, then bisection) within ``options.time_limit`` in all. Uses ``problem.slots``
    (its first K slots) when the problem has a slots sheet, else generic slots grouped
    ``per_day`` to a day.
    """
    options = options or SolveOptions()
    start = time.perf_counter()
    graph = conflict_graph(problem) if graph is None else graph
    missing = [c for c in problem.events if c not in graph]
    if missing:  # events nobody is enrolled in: added to a copy, never to the caller's graph
        graph = graph.copy()
        graph.add_nodes_from(missing, size=0)
    sizes = {c: int(graph.nodes[c].get("size", 0)) for c in graph}
    n = graph.number_of_nodes()

    def slots_for(k: int) -> list[Slot]:
        return problem.slots_for(k, per_day)

    cover = clique_cover(graph)
    clique = largest_clique_found(graph, cover)
    lower, reason, witness = (1 if n else 0), "there is at least one event" if n else "there are no events", []
    if len(clique) > lower:
        lower, reason, witness = len(clique), f"{len(clique)} events pairwise share attendees", [str(c) for c in clique]
    load: dict[str, int] = {}
    for a, _ in problem.required_enrolments():  # optional enrolments need no slot of their own
        load[a] = load.get(a, 0) + 1
    if load:
        who = min(load, key=lambda a: (-load[a], a))
        if load[who] > lower:
            lower, reason, witness = load[who], f"{who} has {load[who]} events", [who]
    seats_needed = sum(sizes.values())
    per_slot = _seats_per_slot(problem)
    if per_slot and seats_needed:
        need = math.ceil(seats_needed / per_slot)
        if need > lower:
            lower, reason, witness = need, (f"{seats_needed} seats are needed and a slot seats at most {per_slot}"), []
    colouring = dsatur(graph)
    dsat = max(colouring.values(), default=0)
    plain = not problem.rules and problem.max_per_day is None and not problem.rooms \
        and not problem.slots and not any(e.fixed_slot or e.barred_slots for e in problem.events.values())
    result = FewestSlots(lower=lower, lower_reason=reason, witness=witness, upper=None, upper_reason="",
                         proven=False, dsatur_slots=dsat, slots_in_sheet=len(problem.slots) if problem.slots else None)
    best_run: SolveRun | None = None
    hi = None
    max_k = len(problem.slots) if problem.slots else max(n, 1)
    proven_lo = lower
    why_not: dict[int, str] = {}  # slot count proven impossible -> the solver's reason
    lo = lower
    quick = SolveOptions(**{**options.__dict__, "explain": False})
    if plain:
        hi = max(dsat, lower)
        result.upper_reason = "DSATUR"
        if hi > lo:
            if progress:
                progress({"event": "phase", "phase": f"transversals for {lo} slots", "slots": lo,
                          "seconds": time.perf_counter() - start})
            # events that split into cliques of exactly `lo`: a timetable with `lo` slots is a partition into
            # transversals (transversals.py); decided first, as it settles the question outright when it succeeds
            found = colour_by_transversals(graph, lo, cover + [clique], seconds=0.4 * options.time_limit,
                                           configure=lambda solver, seconds: _parameters(solver, options, seconds),
                                           deterministic=options.deterministic)
            if found.colouring is not None:
                colouring, hi, result.upper_reason = found.colouring, lo, "CP-SAT over transversals of the clique partition"
            elif found.impossible:
                why_not[lo] = (f"the events split into groups of {lo} that pairwise share attendees, so each slot "
                               f"takes one event of every group; of the {found.transversals} clash-free ways to "
                               f"pick one from each, no {lo} cover every event")
                lo = proven_lo = lo + 1
        # Up to 40 % of the time tightens the upper bound one slot at a time: TabuCol for a short
        # budget, then (if it fails) CP-SAT for the same budget, which may find a timetable or prove
        # that none exists; the budget doubles after each round that settles nothing. A step that
        # cannot succeed (myciel3 at 3 slots) is settled by the CP-SAT probe in milliseconds instead
        # of spending the whole share in tabu search; le450_25c needs about 5 s of tabu search to go
        # from 27 to 26 slots.
        share_end = time.perf_counter() + 0.4 * options.time_limit
        budget = max(0.25, options.time_limit / 60)
        attempt = 0
        while hi > lo and time.perf_counter() < share_end and not _stopped(options):
            k = hi - 1
            if progress:
                progress({"event": "phase", "phase": f"tabu search for {k} slots", "slots": k,
                          "seconds": time.perf_counter() - start})
            step = min(budget, max(0.05, share_end - time.perf_counter()))
            better = tabucol(graph, k, start=colouring, seed=options.seed + attempt, seconds=step,
                             max_moves=int(40_000 * step) if options.deterministic else None)
            attempt += 1
            if better is not None:
                colouring, hi, result.upper_reason = better, k, "tabu search (TabuCol)"
                continue
            quick.time_limit = min(budget, max(0.05, share_end - time.perf_counter()))
            run = solve(_without_goals(problem), slots_for(k), quick, graph=graph)
            result.attempts.append({"slots": k, "status": run.status, "seconds": round(run.wall_seconds, 3)})
            if run.found:
                colouring, hi, result.upper_reason = dict(run.assignment), k, "CP-SAT"
            elif run.status == "infeasible":
                lo = proven_lo = k + 1
                why_not[k] = run.reason or ""
            else:
                budget *= 2
        best_run = SolveRun(slots=hi, slot_list=slots_for(hi), status="feasible", assignment=dict(colouring))
    # without a timetable yet (rules, rooms, a slots sheet): a quick pass upwards from the lower bound,
    # each count with a short budget (enough for DSATUR's seat-aware first timetable, a witness of
    # impossibility, or a short CP-SAT search), stopping at the first timetable; the counts below it that
    # were left open are then tried again, with the rest of the time, by the bisection below
    step_time = max(1.0, options.time_limit / 20)
    k = lo
    while hi is None and k <= max_k:
        left = options.time_limit - (time.perf_counter() - start)
        if left <= 0.2 or _stopped(options):
            break
        quick.time_limit = min(step_time, left) if k < max_k else left
        run = solve(_without_goals(problem), slots_for(k), quick, graph=graph)
        result.attempts.append({"slots": k, "status": run.status, "seconds": round(run.wall_seconds, 3)})
        if run.found:
            hi, best_run, result.upper_reason = k, run, "CP-SAT"
        elif run.status == "infeasible":
            proven_lo = max(proven_lo, k + 1)
            why_not[k] = run.reason or ""
        k += 1
    lo = max(lo, proven_lo)
    # with a timetable in hand: the lower bound first, then bisection
    first_try = True
    while hi is not None and lo < hi:
        left = options.time_limit - (time.perf_counter() - start)
        if left <= 0.2 or _stopped(options):
            break
        mid = lo if first_try else (lo + hi) // 2
        first_try = False
        # the lower bound is often the answer (cliques decide most real sessions): give it most of the time
        quick.time_limit = left if hi - lo <= 1 else (left * 0.7 if mid == lo else left / 2)
        if progress:
            progress({"event": "phase", "phase": f"trying {mid} slots", "slots": mid,
                      "seconds": time.perf_counter() - start})
        run = solve(_without_goals(problem), slots_for(mid), quick, graph=graph)
        result.attempts.append({"slots": mid, "status": run.status, "seconds": round(run.wall_seconds, 3)})
        if run.found:
            used = max(run.assignment.values(), default=0) if not problem.slots else mid
            hi, best_run, result.upper_reason = max(used, lo), run, "CP-SAT"
            if used < mid:  # the same timetable, rooms and own rooms over the slots it uses
                best_run = SolveRun(slots=hi, slot_list=slots_for(hi), status="feasible", assignment=run.assignment,
                                    rooms=dict(run.rooms), own_rooms=dict(run.own_rooms))
        elif run.status == "infeasible":
            # fewer slots only make it harder: infeasible at mid proves the fewest is above mid
            lo = mid + 1
            proven_lo = max(proven_lo, mid + 1)
            why_not[mid] = run.reason or ""
        else:
            lo = mid + 1
    result.upper = hi
    if proven_lo > result.lower:
        result.lower = proven_lo
        reason = why_not.get(proven_lo - 1)
        result.lower_reason = (f"{proven_lo - 1} slots cannot hold a timetable: {reason}" if reason else
                               f"CP-SAT proved that {proven_lo - 1} slots cannot hold a timetable")
        result.witness = []
    result.proven = hi is not None and result.lower == hi
    result.run = best_run
    result.wall_seconds = time.perf_counter() - start
    return result


def _stopped(options: SolveOptions) -> bool:
    """The caller asked the searches to stop (``SolveOptions.stop``)."""
    return options.stop is not None and bool(options.stop())


def _seats_per_slot(problem: Problem) -> int | None:
    caps = [s.seat_capacity for s in problem.slots if s.seat_capacity is not None]
    room_total = sum(r.capacity for r in problem.rooms) if problem.rooms else None
    best = max(caps) if caps and len(caps) == len(problem.slots) else None
    if room_total is not None:
        best = room_total if best is None else min(best, room_total)
    return best


def _without_goals(problem: Problem) -> Problem:
    """The same problem with every soft-goal weight at zero (fewest slots is about hard rules)."""
    from dataclasses import replace

    from ..model import Weights
    return replace(problem, weights=Weights(**{k: 0 for k in Weights().__dict__}))
