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
apart, each with a share of the time limit proportional to its size. Steps 2 to 6 for one
such block are in :mod:`.block_solver`, running CP-SAT in :mod:`.cpsat_run`, step 6 in
:mod:`.conflicting_rules`; the fewest slots are searched in :mod:`.fewest_slots_search`.
"""


from __future__ import annotations

import dataclasses
import time
from dataclasses import dataclass, field
from typing import Callable

import networkx as nx

from ..conflicts import graph_of_every_event
from ..model import Problem, Slot, SolveStatus, Timetable, time_order
from .cliques import clique_cover, largest_clique_found
from .cpsat_goals import objective_order_free
from .cpsat_run import Budget, ClockStop, Progress
from .infeasibility import prechecks, room_count_witness
from .rooms import seated_apart, seats_in_rooms
from .slot_domains import large_event_codes, optional_links, physical_domains


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


#: Repeatable mode: the share of the time limit given as seconds of counted work (CP-SAT's deterministic
#: time, the local search's moves). The rest is for what is not counted (building models, checking, seating)
#: and for the counted work running slower than its nominal rate: term_exams.xlsx, 14 slots, 2 s limit on
#: 2 loaded cores took 4.6 s with the whole limit as work (CP-SAT 0.4 deterministic s in 1.1 s, the local
#: search's 1.4 s of moves in 1.9 s, 1.2 s uncounted).
REPEATABLE_WORK_SHARE = 0.4


def _blocks(problem: Problem, graph: nx.Graph, slots: list[Slot], options: SolveOptions) -> list[list[str]]:
    """Groups of events that can be solved apart (the whole problem when anything links them)."""
    codes = sorted(graph.nodes)
    coupled = bool(problem.rooms) or any(s.seat_capacity is not None for s in slots) \
        or any(r.kind.value == "alone" for r in problem.rules)
    if not options.split_components or coupled:
        return [codes]
    joined = nx.Graph(graph)
    for events in optional_links(problem):  # an optional attendee's events: booked elsewhere is seen in one block
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
        clock_stop = ClockStop(end, options.stop)
        options = dataclasses.replace(options, stop=clock_stop)
    elif options.deadline is not None:
        limit = max(0.2, min(limit, options.deadline - start))
    k = len(slots)
    if time_order(slots) != list(range(k)):
        # the model reads consecutive numbers as consecutive slots; intake sorts a slots sheet by time
        raise ValueError("the slots must be given in time order (by date, then start time)")
    graph = graph_of_every_event(problem, graph)
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
    from .block_solver import BlockTask, solve_block, warm_up_local_search  # it reads SolveRun from here

    if k > 1 and not objective_order_free(problem, slots, previous or {}):
        warm_up_local_search()  # its compiled loop is ready by the time CP-SAT has a timetable
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
    budget = Budget(limit if options.deterministic else limit - (time.perf_counter() - start), options.deterministic)
    for i, block in enumerate(blocks):
        left = max(0.2, budget.left())
        share = left if i == len(blocks) - 1 else max(0.2, left * len(block) / max(1, sum(map(len, blocks[i:]))))
        block_cover = cover if len(blocks) == 1 else [c for c in cover if c[0] in set(block)]
        results.append(solve_block(BlockTask(problem, slots, graph, block, sizes, domains, block_cover, clique, large,
                                             previous, options, share, _best_only(progress), info, start, budget)))
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
