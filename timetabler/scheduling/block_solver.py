"""Solving one block (a group of events solved apart from the others): steps 2 to 6 of :func:`.solve.solve`.

:func:`solve_block` takes a :class:`BlockTask` and runs, in named steps of :class:`_BlockSolve`:

1. :meth:`~_BlockSolve.first_timetable`: each event's allowed slots with its fixed and barred ones,
   DSATUR's timetable within them (:func:`_first_colouring`), and, when the slots are alike, its
   groups arranged over the slots (:mod:`.arrangement`);
2. :meth:`~_BlockSolve.check_first_timetable`: the DSATUR timetable, seated and checked by the
   validator, kept when every hard rule holds;
3. :meth:`~_BlockSolve.clash_free_search`: otherwise a feasibility model without the goals (slot
   symmetry broken when the slots are alike); infeasible there means infeasible everywhere
   (:mod:`.conflicting_rules` names the rules);
4. :meth:`~_BlockSolve.goal_round`: the full model with the goals, hinted, and the local search
   (:mod:`.kempe_search`, :func:`_improve_locally`) before and after it, in the order the model's size
   calls for; then :meth:`~_BlockSolve.seat_rooms` seats the rooms (:mod:`.rooms`), and a group that
   cannot be seated is forbidden and the round starts again.
"""

from __future__ import annotations

import dataclasses
import math
import threading
import time
from dataclasses import dataclass

import networkx as nx
from ortools.sat.python import cp_model

from ..availability import Availability
from ..model import Problem, Slot, days_of
from .arrangement import arrange
from .conflicting_rules import explain_infeasible
from .cpsat_goals import model_memory_mb, objective_order_free, pair_plan
from .cpsat_model import BuildStopped, ModelInputs, TimetableModel, build_block_model
from .cpsat_run import Budget, ClockStop, Progress, build_deadline, cut_by_clock, run_cpsat, search_seconds
from .dsatur import dsatur
from .kempe_search import improve
from .penalty_state import build_state
from .rooms import seat_events
from .slot_domains import Domains, _room_capacity_by_slot, needs_availability, optional_links, slots_interchangeable
from .solve import SolveOptions, SolveRun

#: Statuses of a CP-SAT search that found a timetable.
_FOUND = (cp_model.OPTIMAL, cp_model.FEASIBLE)


@dataclass(frozen=True, eq=False)
class BlockTask:
    """What one block's solve reads: its events, and what the whole run computed for them."""

    problem: Problem
    slots: list[Slot]
    graph: nx.Graph
    block: list[str]
    sizes: dict[str, int]
    domains: Domains
    cover: list  # the clique cover's cliques within the block
    clique: list  # the largest clique found (slot symmetry is broken on its events in the block)
    large: set[str]  # the largest events (the marking-time goal)
    previous: dict[str, int]  # repair: the earlier timetable
    options: SolveOptions
    seconds: float  # this block's share of the time
    progress: Progress | None
    info: dict  # passed with every progress event
    start: float  # the run's start (``time.perf_counter()``)
    budget: Budget


def solve_block(task: BlockTask) -> SolveRun:
    """A timetable of one block within its share of the time, or why it has none."""
    return _BlockSolve(task).solve()


class _BlockSolve:
    """One block's solve: the steps, and what they hand on to each other."""

    def __init__(self, task: BlockTask):
        self.task = task
        self.problem, self.slots, self.block, self.options = task.problem, task.slots, task.block, task.options
        self.k = len(task.slots)
        self.t0 = time.perf_counter()
        self.left_at_start = task.budget.left()
        self.run = SolveRun(slots=self.k, slot_list=list(task.slots), status="unknown")
        self.block_set = set(task.block)
        self.sub = task.graph.subgraph(task.block)
        # the block's model; each build sets what differs (goals, symmetry, cuts, explain mode)
        self.inputs = ModelInputs(task.problem, task.slots, task.graph, task.block, sizes=task.sizes,
                                  domains=task.domains, room_splitting=task.options.room_splitting,
                                  room_sharing=task.options.room_sharing, cover=task.cover)
        self.hint: dict[str, int] = {}  # DSATUR's timetable (arranged over the slots when they are alike)
        self.aligned: dict[str, int] = {}  # DSATUR's timetable relabelled to the symmetry break
        self.symmetric = self.order_free = self.one_slot_each = False
        self.sym_clique: list[str] = []
        self.feasible_hint: dict[str, int] | None = None
        self.nogoods: list[list[tuple[str, int]]] = []  # groups of (event, start) that cannot be seated together
        self.unsettled: set[int] = set()  # slots whose seating failed on time, not proven impossible
        self.fallback: SolveRun | None = None  # the first clash-free (and seated) timetable, kept in case step 4 finds none
        self.found: Availability | None = None  # spans and sittings

    def left(self) -> float:
        """This block's share still unused."""
        return self.task.seconds - (self.left_at_start - self.task.budget.left())

    def say(self, phase: str) -> None:
        task = self.task
        if task.progress:
            task.progress({**task.info, "event": "phase", "phase": phase, "seconds": time.perf_counter() - task.start})

    def solve(self) -> SolveRun:
        self.first_timetable()
        self.check_first_timetable()
        if self.feasible_hint is None:
            out = self.clash_free_search()
            if out is not None:
                return out
        for round_ in range(6):
            out = self.goal_round(round_)
            if out is not None:
                return out
        return self.finished()

    def finished(self) -> SolveRun:
        self.run.wall_seconds = time.perf_counter() - self.t0
        return self.run

    def first_timetable(self) -> None:
        """DSATUR within each event's allowed slots, fixed and barred slots too (so a complete colouring meets
        them); with the slots alike, relabelled to the symmetry break and its groups arranged over the slots."""
        task, problem, slots, block, k = self.task, self.problem, self.slots, self.block, self.k
        refs = problem.slot_refs(slots)
        allowed = {c: refs.allowed(c, task.domains.allowed[c]) for c in block}
        hint = _first_colouring(problem, slots, self.sub, block, allowed, task.sizes, k)
        symmetric = self.symmetric = slots_interchangeable(problem, slots, block)
        self.order_free = objective_order_free(problem, slots, task.previous)
        sym_clique = [c for c in task.clique if c in self.block_set] if symmetric else []
        if symmetric and not sym_clique and block:
            sym_clique = [max(block, key=lambda c: (self.sub.degree(c), c))]
        self.sym_clique = sym_clique
        self.aligned = _align(hint, sym_clique, k) if symmetric else hint
        if symmetric and not self.order_free and len(hint) == len(block):
            self.say("arranging groups over the slots")
            hint = self._arrange(hint)
        self.hint = hint
        self.found = Availability.of(problem, slots) if needs_availability(problem, slots) else None

    def _arrange(self, assignment: dict[str, int]) -> dict[str, int]:
        """Whole groups of events moved between slots (safe only when the slots are alike)."""
        options = self.options
        return arrange(self.sub, assignment, self.slots, self.problem.weights, large=self.task.large,
                       seed=options.seed, **_arrange_effort(options, self.task.seconds))

    def check_first_timetable(self) -> None:
        """Long events and extra time that takes the next slot are not colourings: CP-SAT alone handles them;
        else DSATUR's timetable, when complete, is kept if the independent check passes."""
        found = self.found
        one_slot_each = found is None or found.one_slot_each
        if not one_slot_each:
            self.say("events that take more than one slot: CP-SAT alone (no DSATUR start, no local search)")
        elif optional_links(self.problem):
            # an optional attendee booked elsewhere counts against a quorum and the goal: the local search's
            # per-event costs do not see it, so CP-SAT alone (the DSATUR start is still checked by the validator)
            one_slot_each = False
            self.say("optional attendees with several events: CP-SAT alone (no DSATUR start, no local search)")
        self.one_slot_each = one_slot_each
        if len(self.hint) == len(self.block) and one_slot_each:
            # DSATUR honours clashes and each event's allowed slots; the independent check covers the other rules
            self.say("checking the DSATUR timetable")
            if self.keep_fallback(self.hint):
                self.feasible_hint = self.hint

    def keep_fallback(self, assignment: dict[str, int]) -> bool:
        """Seat and check a timetable of this block; keep it as the fallback when every hard rule holds."""
        task, problem, options, run = self.task, self.problem, self.options, self.run
        rooms: dict = {}
        own: dict = {}
        if problem.rooms:
            seating = seat_events(problem, self.slots, assignment, task.sizes, sharing=options.room_sharing,
                                  splitting=options.room_splitting, seed=options.seed, seconds_per_slot=1.0,
                                  availability=self.found)
            if seating.failed_groups:
                return False
            rooms, own = seating.rooms, seating.own_rooms
        scored = _scored(problem, self.slots, assignment, rooms, task.previous, options, self.block_set, own_rooms=own)
        if scored is None:
            return False
        self.fallback = scored
        if run.first_feasible_seconds is None:
            run.first_feasible_seconds = time.perf_counter() - task.start
        if task.progress and scored.penalty is not None:  # the first timetable is the best so far until a better one
            task.progress({**task.info, "event": "solution", "phase": "first timetable", "penalty": int(scored.penalty),
                           "bound": 0.0, "gap": 0.0 if scored.penalty == 0 else 1.0,
                           "seconds": time.perf_counter() - task.start})
        return True

    def clash_free_search(self) -> SolveRun | None:
        """Step 3: a feasibility search with slot symmetry broken (also without symmetry: a model without the
        goals finds a first timetable far sooner). A SolveRun when the block ends here."""
        task, options = self.task, self.options
        self.say("searching for a clash-free timetable")
        try:
            tm = build_block_model(dataclasses.replace(
                self.inputs, objective=False, symmetry=self.sym_clique if self.symmetric else None, large=task.large,
                stop_at=build_deadline(options, self.left())))
        except BuildStopped:
            cut_by_clock(options)
            return _out_of_time(self.run, self.k, self.t0)
        _add_hint(tm, self.aligned)
        phase_seconds = search_seconds(self.left() * (1.0 if self.order_free else 0.5), tm)
        status, solver, watcher = run_cpsat(tm, options, phase_seconds, task.progress,
                                            {**task.info, "phase": "clash-free"}, task.start)
        task.budget.charge(solver)
        if status == cp_model.INFEASIBLE:
            return explain_infeasible(self.inputs, options, self.left, self.run)
        if status in _FOUND:
            self.feasible_hint = tm.assignment(solver)
            if self.symmetric and not self.order_free:  # moving whole groups between slots is safe only when slots are alike
                self.feasible_hint = self._arrange(self.feasible_hint)
            self.say("seating the first timetable")
            self.keep_fallback(self.feasible_hint)
        elif self.order_free:
            return _out_of_time(self.run, self.k, self.t0)
        return None

    def polish(self, assignment: dict[str, int], bound: float | None, share: float = 1.0) -> SolveRun | None:
        self.say("improving by local search")
        spare = self.left() - _reserve(self.task.seconds, self.problem)
        return _improve_locally(self.task, assignment, spare * share, bound)

    def goal_round(self, round_: int) -> SolveRun | None:
        """Step 4 (the full model with the goals, hinted) and step 5 (rooms, with cuts). A SolveRun when the
        block ends here, None for another round (a group could not be seated)."""
        problem, run = self.problem, self.run
        if self.order_free and self.feasible_hint is not None and not problem.rooms:
            # nothing to optimise: the clash-free timetable is optimal (penalty 0 is the least possible)
            run.assignment = dict(self.feasible_hint)
            run.status, run.proven, run.penalty, run.bound = "optimal", True, 0, 0.0
            return self.finished()
        # Two orders, by the model's size. Small (at most PROOF_PAIRS clashing pairs): CP-SAT can often
        # prove optimality, and its bound tends to move only at the proof, so a short local search first gives
        # it a good hint, CP-SAT then has most of the time without stopping on a stall, and the local search
        # the rest. Large: CP-SAT first for a share of the time, stopping when it stalls; then the local search.
        local = self.k > 1 and not self.order_free and self.one_slot_each
        small = self.sub.number_of_edges() <= PROOF_PAIRS
        start_from = self.feasible_hint
        first = None
        if local and small and self.feasible_hint is not None and not problem.rooms:
            first = self.polish(self.feasible_hint, None, share=SMALL_FIRST_SEARCH_SHARE)
            if first is not None:
                start_from = first.assignment
        self.say("improving the timetable" if self.feasible_hint else "searching for a timetable")
        status, solver, watcher, tm = self.goal_search(start_from, local, small)
        if status == cp_model.INFEASIBLE:
            return self.nothing_left()
        if status not in _FOUND and self.fallback is not None:
            return self.fallback_run(local)
        if status not in _FOUND:
            return _out_of_time(run, self.k, self.t0)
        assignment = self.read_solution(tm, solver, watcher, status, first)
        solver_result = None  # CP-SAT's own timetable, kept while the local search's is seated
        if local and status == cp_model.FEASIBLE:
            assignment, solver_result = self.polish_solution(assignment)
        if not problem.rooms:
            return self.finished()
        return self.seat_rooms(round_, assignment, solver_result)

    def goal_search(self, start_from: dict[str, int] | None, local: bool, small: bool):
        """The goal model built and searched, hinted with ``start_from``: (status, solver, watcher, model); the
        status is UNKNOWN when the model was not built (it would not fit the memory or the time)."""
        task, options, k = self.task, self.options, self.k
        # a goal model too large for the memory or the time left is not built: the first timetable stands
        workers = _workers_within_memory(options, k, task.cover, self.sub.number_of_edges(),
                                         pair_plan(self.problem.weights, self.slots))
        if not workers and self.fallback is None:
            workers = 1  # no timetable yet: the one way to one, whatever the memory
        if not workers:
            self.say("keeping the first timetable: the goal model would not fit the memory allowed")
        tm = None
        if workers:
            try:
                tm = build_block_model(dataclasses.replace(
                    self.inputs, objective=True, symmetry=self.sym_clique if (self.symmetric and self.order_free) else None,
                    previous=task.previous, large=task.large, nogoods=self.nogoods,
                    stop_at=build_deadline(options, self.left())))
            except BuildStopped:
                cut_by_clock(options)
                tm = None
        if tm is None:
            return cp_model.UNKNOWN, None, None, None
        _add_hint(tm, start_from or _repair_hint(task.previous, self.hint, self.block))
        remaining = self.left()  # building a large model takes a good part of the time
        cp_seconds = remaining * (CPSAT_SMALL_SHARE if small else CPSAT_SHARE) if local else remaining
        stall = _stall_seconds(cp_seconds) if local and not small and not options.deterministic else None
        status, solver, watcher = run_cpsat(tm, options, search_seconds(cp_seconds, tm), task.progress,
                                            {**task.info, "phase": "goals"}, task.start, stall=stall,
                                            workers=workers)
        task.budget.charge(solver)
        return status, solver, watcher, tm

    def nothing_left(self) -> SolveRun:
        """The goal model is infeasible: by the seating cuts, or (none) by the rules, which are then named."""
        run = self.run
        if self.nogoods and self.unsettled:
            run.status, run.proven = "unknown", False
            run.reason = ("no timetable is left once the groups of events that could not be seated in time are "
                          f"ruled out (slot(s) {', '.join(map(str, sorted(self.unsettled)))}), but seating them was "
                          "not proven impossible: try a longer time limit")
            run.reasons = [run.reason]
            return run
        if self.nogoods:
            run.status, run.proven = "infeasible", True
            run.reason = ("the events cannot be seated in the rooms of every slot: after "
                          f"{len(self.nogoods)} room check(s) no timetable is left")
            run.reasons = [run.reason]
            return run
        return explain_infeasible(self.inputs, self.options, self.left, run)

    def fallback_run(self, local: bool) -> SolveRun:
        """No timetable from the goal model: the first one, improved by the local search when it can be."""
        fallback = self.fallback
        better = self.polish(fallback.assignment, None) if local else None
        kept = fallback
        # seated and checked by keep_fallback; kept only when better with its rooms too
        if better is not None and (not self.keep_fallback(better.assignment)
                                   or (self.fallback.penalty or 0) >= (kept.penalty or 0)):
            self.fallback = kept
        self.fallback.first_feasible_seconds = self.run.first_feasible_seconds
        self.fallback.wall_seconds = time.perf_counter() - self.t0
        return self.fallback

    def read_solution(self, tm: TimetableModel, solver, watcher, status, first: SolveRun | None) -> dict[str, int]:
        """CP-SAT's timetable into the run, its penalty counted on the timetable (the goal literals only bound it
        from above); the first local search's or a last group arrangement's when better."""
        task, run = self.task, self.run
        if run.first_feasible_seconds is None and watcher.first is not None:
            run.first_feasible_seconds = (self.t0 - task.start) + watcher.first
        assignment = tm.assignment(solver)
        run.assignment = assignment
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
        if status == cp_model.FEASIBLE and self.symmetric and not self.order_free and not task.previous:
            # one more pass of the group arrangement over the slots on CP-SAT's best timetable
            moved = self._arrange(assignment)
            better = _scored(self.problem, self.slots, moved, {}, task.previous, self.options, self.block_set,
                             rooms_later=True) if moved != assignment else None
            if better is not None and better.penalty is not None and better.penalty < (run.penalty or 0):
                assignment = run.assignment = moved
                run.penalty, run.penalty_breakdown = better.penalty, {
                    name: v for name, v in better.penalty_breakdown.items() if name != "room_split"}
        return assignment

    def polish_solution(self, assignment: dict[str, int]):
        """The local search after CP-SAT: (the timetable now, CP-SAT's own (assignment, penalty, breakdown) when
        the search's replaced it, else None)."""
        run = self.run
        solver_result = None
        better = self.polish(assignment, run.bound)
        if better is not None and better.penalty is not None and better.penalty < (run.penalty or 0):
            solver_result = (dict(run.assignment), run.penalty, dict(run.penalty_breakdown))
            assignment = run.assignment = better.assignment
            run.penalty = better.penalty
            run.penalty_breakdown = {name: v for name, v in better.penalty_breakdown.items() if name != "room_split"}
            if run.bound is not None and run.penalty <= math.ceil(run.bound - 1e-6):
                run.status, run.proven = "optimal", True  # the local search reached CP-SAT's bound
        return assignment, solver_result

    def _seat(self, assignment: dict[str, int]):
        options = self.options
        return seat_events(self.problem, self.slots, assignment, self.task.sizes, sharing=options.room_sharing,
                           splitting=options.room_splitting, seed=options.seed,
                           seconds_per_slot=min(5.0, max(0.5, self.left() / 10)), availability=self.found)

    def seat_rooms(self, round_: int, assignment: dict[str, int], solver_result) -> SolveRun | None:
        """Step 5: the timetable's events seated in rooms; a group that cannot be is forbidden for the next
        round (None), until the rounds or the time run out."""
        problem, run = self.problem, self.run
        self.say("seating events in rooms")
        seating = self._seat(assignment)
        if seating.failed_groups and solver_result is not None:
            # the local search keeps only the aggregate room limits: when its timetable cannot be seated,
            # CP-SAT's (which the room cuts so far shaped) is seated instead
            run.assignment, run.penalty, run.penalty_breakdown = solver_result
            run.status, run.proven = "feasible", False
            assignment = run.assignment
            seating = self._seat(assignment)
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
            return self.finished()
        self.nogoods.extend(seating.failed_groups)  # each group's exact (event, start) pairs, forbidden together
        self.unsettled.update(seating.unsettled_slots)
        self.feasible_hint = None
        if self.left() <= 0 or round_ == 5:
            run.status = "unknown"
            run.assignment = {}
            when = "within the time limit" if self.left() <= 0 else f"after {round_ + 1} rounds of new timetables"
            run.reason = ("a clash-free timetable was found but its events could not be seated in the rooms of "
                          f"slot(s) {', '.join(map(str, sorted(seating.failed_slots)))} {when}")
            run.reasons = [run.reason]
            return run
        return None


def _workers_within_memory(options: SolveOptions, k: int, cover, pairs: int, plan) -> int:
    """The most CP-SAT workers, up to ``options.workers``, whose goal model fits ``options.max_memory_mb``
    (0 when even one does not)."""
    literals = sum(len(c) for c in cover if len(c) > 1)
    for workers in range(max(1, options.workers), 0, -1):
        if model_memory_mb(k, literals, pairs, plan, workers) <= options.max_memory_mb:
            return workers
    return 0


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


_local_search_loading: threading.Thread | None = None


def _load_local_search() -> None:
    from .kempe_moves import compile_now  # imports numba

    compile_now()


def warm_up_local_search() -> None:
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


def _improve_locally(task: BlockTask, assignment: dict[str, int], seconds: float, bound) -> SolveRun | None:
    """The local search (:mod:`.kempe_search`) from ``assignment`` for ``seconds``; its result only when it is
    better and the independent validator confirms every hard rule and the penalty the search computed."""
    problem, slots, block, options, previous = task.problem, task.slots, task.block, task.options, task.previous
    progress, info, start = task.progress, task.info, task.start
    waited_from = time.perf_counter()
    if _local_search_loading is not None:  # the compiled loop, loaded in the background since the start
        if options.deterministic:
            # repeatable mode: the same work whether the loop loads fast or slowly, so wait up to the hard
            # stop (not the counted seconds: a first solve would skip the search a second one makes)
            wait = options.stop.seconds_left() if isinstance(options.stop, ClockStop) else None
        else:
            wait = seconds
        _local_search_loading.join(timeout=None if wait is None else max(0.0, wait))
        if _local_search_loading.is_alive():
            if options.deterministic:
                cut_by_clock(options)  # the search this run should make was not made: it may not repeat
            return None
        if not options.deterministic:
            seconds -= time.perf_counter() - waited_from
    if seconds < 0.2 or len(assignment) != len(block):
        return None
    built_from = time.perf_counter()
    state = build_state(problem, slots, task.graph, list(block), sizes=task.sizes, domains=task.domains,
                        previous=previous, large=task.large, room_sharing=options.room_sharing,
                        room_splitting=options.room_splitting)
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
    task.budget.charge_seconds(seconds)
    if result.penalty >= result.start_penalty:
        return None
    scored = _scored(problem, slots, result.assignment, {}, previous, options, set(block), rooms_later=True)
    if scored is None or scored.penalty != result.penalty:
        return None  # never happens when the search is right; the validator has the last word
    return scored
