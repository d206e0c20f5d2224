"""The fewest slots that hold a clash-free timetable meeting every hard rule: bounds, then CP-SAT between them."""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import networkx as nx

from ..conflicts import graph_of_every_event
from ..model import Problem, Slot
from .cliques import clique_cover, largest_clique_found
from .cpsat_run import Progress, set_parameters
from .dsatur import dsatur
from .solve import SolveOptions, SolveRun, solve
from .tabucol import tabucol
from .transversals import colour_by_transversals


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
    graph = graph_of_every_event(problem, graph)
    sizes = {c: int(graph.nodes[c].get("size", 0)) for c in graph}
    n = graph.number_of_nodes()
    cover = clique_cover(graph)
    clique = largest_clique_found(graph, cover)
    lower, reason, witness = _lower_bound(problem, n, clique, sizes)
    colouring = dsatur(graph)
    dsat = max(colouring.values(), default=0)
    plain = not problem.rules and problem.max_per_day is None and not problem.rooms \
        and not problem.slots and not any(e.fixed_slot or e.barred_slots for e in problem.events.values())
    result = FewestSlots(lower=lower, lower_reason=reason, witness=witness, upper=None, upper_reason="",
                         proven=False, dsatur_slots=dsat, slots_in_sheet=len(problem.slots) if problem.slots else None)
    search = _Search(problem, per_day, options, progress, graph, start, result, lo=lower, proven_lo=lower,
                     max_k=len(problem.slots) if problem.slots else max(n, 1),
                     quick=SolveOptions(**{**options.__dict__, "explain": False}))
    if plain:
        search.tighten_plain(colouring, dsat, cover, clique)
    search.upwards()
    search.lo = max(search.lo, search.proven_lo)
    search.bisect()
    return search.finish()


def _lower_bound(problem: Problem, n: int, clique: list, sizes: dict[str, int]) -> tuple[int, str, list[str]]:
    """The best of the lower bounds, with its reason and witness: the largest clique found, the busiest
    attendee, the seats."""
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
    return lower, reason, witness


@dataclass
class _Search:
    """The search between the bounds: what its phases hand on (the bounds, the best timetable, why counts fail)."""

    problem: Problem
    per_day: int | None
    options: SolveOptions
    progress: Progress | None
    graph: nx.Graph
    start: float
    result: FewestSlots
    lo: int
    proven_lo: int
    max_k: int
    quick: SolveOptions  # the probes' options (no explanation), their time limit set before each
    hi: int | None = None
    best_run: SolveRun | None = None
    why_not: dict[int, str] = field(default_factory=dict)  # slot count proven impossible -> the solver's reason

    def slots_for(self, k: int) -> list[Slot]:
        return self.problem.slots_for(k, self.per_day)

    def say(self, phase: str, k: int) -> None:
        if self.progress:
            self.progress({"event": "phase", "phase": phase, "slots": k, "seconds": time.perf_counter() - self.start})

    def probe(self, k: int) -> SolveRun:
        """CP-SAT on ``k`` slots without the goals, within ``quick.time_limit``, noted in the attempts."""
        run = solve(_without_goals(self.problem), self.slots_for(k), self.quick, graph=self.graph)
        self.result.attempts.append({"slots": k, "status": run.status, "seconds": round(run.wall_seconds, 3)})
        return run

    def tighten_plain(self, colouring: dict, dsat: int, cover, clique) -> None:
        """Plain clashes only: the transversal method at the lower bound, then TabuCol taking turns with short
        CP-SAT probes, one slot fewer at a time."""
        options, result, graph = self.options, self.result, self.graph
        hi = max(dsat, self.lo)
        result.upper_reason = "DSATUR"
        lo = self.lo
        if hi > lo:
            self.say(f"transversals for {lo} slots", lo)
            # events that split into cliques of exactly `lo`: a timetable with `lo` slots is a partition into
            # transversals (transversals.py); decided first, as it settles the question outright when it succeeds
            found = colour_by_transversals(graph, lo, cover + [clique], seconds=0.4 * options.time_limit,
                                           configure=lambda solver, seconds: set_parameters(solver, options, seconds),
                                           deterministic=options.deterministic)
            if found.colouring is not None:
                colouring, hi, result.upper_reason = found.colouring, lo, "CP-SAT over transversals of the clique partition"
            elif found.impossible:
                self.why_not[lo] = (f"the events split into groups of {lo} that pairwise share attendees, so each slot "
                                    f"takes one event of every group; of the {found.transversals} clash-free ways to "
                                    f"pick one from each, no {lo} cover every event")
                lo = self.lo = self.proven_lo = lo + 1
        # Up to 40 % of the time tightens the upper bound one slot at a time: TabuCol for a short
        # budget, then (if it fails) CP-SAT for the same budget, which may find a timetable or prove
        # that none exists; the budget doubles after each round that settles nothing. A step that
        # cannot succeed (myciel3 at 3 slots) is settled by the CP-SAT probe in milliseconds instead
        # of spending the whole share in tabu search; le450_25c needs about 5 s of tabu search to go
        # from 27 to 26 slots.
        share_end = time.perf_counter() + 0.4 * options.time_limit
        budget = max(0.25, options.time_limit / 60)
        attempt = 0
        while hi > self.lo and time.perf_counter() < share_end and not _stopped(options):
            k = hi - 1
            self.say(f"tabu search for {k} slots", k)
            step = min(budget, max(0.05, share_end - time.perf_counter()))
            better = tabucol(graph, k, start=colouring, seed=options.seed + attempt, seconds=step,
                             max_moves=int(40_000 * step) if options.deterministic else None)
            attempt += 1
            if better is not None:
                colouring, hi, result.upper_reason = better, k, "tabu search (TabuCol)"
                continue
            self.quick.time_limit = min(budget, max(0.05, share_end - time.perf_counter()))
            run = self.probe(k)
            if run.found:
                colouring, hi, result.upper_reason = dict(run.assignment), k, "CP-SAT"
            elif run.status == "infeasible":
                self.lo = self.proven_lo = k + 1
                self.why_not[k] = run.reason or ""
            else:
                budget *= 2
        self.hi = hi
        self.best_run = SolveRun(slots=hi, slot_list=self.slots_for(hi), status="feasible", assignment=dict(colouring))

    def upwards(self) -> None:
        """Without a timetable yet (rules, rooms, a slots sheet): a quick pass upwards from the lower bound,
        each count with a short budget (enough for DSATUR's seat-aware first timetable, a witness of
        impossibility, or a short CP-SAT search), stopping at the first timetable; the counts below it that
        were left open are then tried again, with the rest of the time, by :meth:`bisect`."""
        options = self.options
        step_time = max(1.0, options.time_limit / 20)
        k = self.lo
        while self.hi is None and k <= self.max_k:
            left = options.time_limit - (time.perf_counter() - self.start)
            if left <= 0.2 or _stopped(options):
                break
            self.quick.time_limit = min(step_time, left) if k < self.max_k else left
            run = self.probe(k)
            if run.found:
                self.hi, self.best_run, self.result.upper_reason = k, run, "CP-SAT"
            elif run.status == "infeasible":
                self.proven_lo = max(self.proven_lo, k + 1)
                self.why_not[k] = run.reason or ""
            k += 1

    def bisect(self) -> None:
        """With a timetable in hand: the lower bound first, then bisection."""
        options, problem = self.options, self.problem
        first_try = True
        while self.hi is not None and self.lo < self.hi:
            lo, hi = self.lo, self.hi
            left = options.time_limit - (time.perf_counter() - self.start)
            if left <= 0.2 or _stopped(options):
                break
            mid = lo if first_try else (lo + hi) // 2
            first_try = False
            # the lower bound is often the answer (cliques decide most real sessions): give it most of the time
            self.quick.time_limit = left if hi - lo <= 1 else (left * 0.7 if mid == lo else left / 2)
            self.say(f"trying {mid} slots", mid)
            run = self.probe(mid)
            if run.found:
                used = max(run.assignment.values(), default=0) if not problem.slots else mid
                self.hi, self.best_run, self.result.upper_reason = max(used, lo), run, "CP-SAT"
                if used < mid:  # the same timetable, rooms and own rooms over the slots it uses
                    self.best_run = SolveRun(slots=self.hi, slot_list=self.slots_for(self.hi), status="feasible",
                                             assignment=run.assignment, rooms=dict(run.rooms),
                                             own_rooms=dict(run.own_rooms))
            elif run.status == "infeasible":
                # fewer slots only make it harder: infeasible at mid proves the fewest is above mid
                self.lo = mid + 1
                self.proven_lo = max(self.proven_lo, mid + 1)
                self.why_not[mid] = run.reason or ""
            else:
                self.lo = mid + 1

    def finish(self) -> FewestSlots:
        result, hi, proven_lo = self.result, self.hi, self.proven_lo
        result.upper = hi
        if proven_lo > result.lower:
            result.lower = proven_lo
            reason = self.why_not.get(proven_lo - 1)
            result.lower_reason = (f"{proven_lo - 1} slots cannot hold a timetable: {reason}" if reason else
                                   f"CP-SAT proved that {proven_lo - 1} slots cannot hold a timetable")
            result.witness = []
        result.proven = hi is not None and result.lower == hi
        result.run = self.best_run
        result.wall_seconds = time.perf_counter() - self.start
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
