"""Seating the events of each slot in rooms, once the slots are chosen.

The slot model (:mod:`.cpsat_model`) keeps only the aggregate room limits (seats of the
free rooms of each type per slot, and the places they have for events of each size).
Rooms are shared by default: several events, of any lengths, sit in one room as long as
their attendees fit in its seats (counted for the whole slot); a room marked not shared
(``Room.shared`` False, the Rooms sheet's Shared column) or every room when sharing is
switched off holds one event. Given
its timetable, each slot is seated here: best-fit decreasing first (largest event first,
into the smallest room that holds it). When that fails, or leaves a room-goal penalty (below),
one event per room, whole, is solved exactly as an assignment problem; when rooms may be
shared or events split, a small CP-SAT model of that slot alone follows, minimising the
extra rooms used by split events and the room goals. A slot that cannot be seated is
returned to the caller, which forbids that exact group of events in that slot and solves
again (a logic-based Benders cut: Hooker & Ottosson, "Logic-based Benders decomposition",
Math. Programming 96 (2003) 33-60).

Preferred and avoided rooms
---------------------------
Two soft goals belong to seating alone, since the slot model does not choose rooms:

* ``preferred_room``: one unit for every seated event that has preferred rooms
  (:attr:`Event.preferred_rooms <timetabler.model.Event.preferred_rooms>`) and has none of
  its seats in one of them;
* ``penalised_room``: one unit for every (event, room) pair in which the room is marked
  :attr:`Room.penalised <timetabler.model.Room.penalised>` (column Avoid).

The greedy places an event whole in the room of least goal cost first (a preferred room,
then an ordinary one, an avoided room last; best fit among rooms of equal cost) and, when
it splits an event, fills avoided rooms last. When its seating of a slot still carries one
of these penalties:

1. the assignment problem (events to rooms of their own, cost ``preferred_room`` for a
   room outside the event's preferred ones plus ``penalised_room`` for an avoided room,
   empty seats breaking ties) gives the least penalty over seatings without sharing or
   splitting, exactly (:func:`scipy.optimize.linear_sum_assignment`);
2. with sharing allowed, or splitting that could pay off (a seating costing more than
   ``room_split``), the slot's CP-SAT model starts from the better seating so far as a hint
   and minimises

       room_split * (rooms used - events) + preferred_room * misses + penalised_room * avoided uses

   (the number of rooms used breaks ties) within ``seconds_per_slot``; a slot where it
   stops on time with a penalty left is listed in ``Seating.unproven_slots``.

A goal of weight 0 is left out throughout. Room names are compared without regard to case.
The slot model itself does not see these goals, so a slot may hold more events than the
rooms not marked Avoid can seat; only seating within the slot is optimised here.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from ortools.sat.python import cp_model

from ..model import Problem, Room, Slot


@dataclass
class Seating:
    """Rooms of every seated event, the slots that could not be seated, and the room goals' counts.

    ``missed_preferred_rooms`` counts events with preferred rooms seated in none of them;
    ``avoided_rooms_used`` counts (event, room marked Avoid) pairs. Both are counts, not
    penalties: multiply by ``Weights.preferred_room`` and ``Weights.penalised_room``.
    """

    rooms: dict[str, list[tuple[str, int]]] = field(default_factory=dict)
    failed_slots: dict[int, list[str]] = field(default_factory=dict)  # slot -> events that could not be seated together
    missed_preferred_rooms: int = 0
    avoided_rooms_used: int = 0
    unproven_slots: list[int] = field(default_factory=list)  # room goals not proven least within the time
    unsettled_slots: list[int] = field(default_factory=list)  # failed within the time, not proven unseatable


def seat_events(problem: Problem, slots: list[Slot], assignment: dict[str, int], sizes: dict[str, int], *,
                sharing: bool = True, splitting: bool = False, seconds_per_slot: float = 5.0,
                seed: int = 0) -> Seating:
    """Rooms for every event of ``assignment`` (event -> [(room, seats)])."""
    out = Seating()
    by_slot: dict[int, list[str]] = {}
    for code, s in assignment.items():
        if sizes.get(code, 0) > 0:
            by_slot.setdefault(s, []).append(code)
    goals = _RoomGoals(problem)
    for s, codes in sorted(by_slot.items()):
        free = [r for r in problem.rooms
                if not any(problem.slot_number(ref, slots) == s for ref in r.unavailable_slots)]
        codes = sorted(codes, key=lambda c: (-sizes[c], c))
        got = _greedy(problem, codes, free, sizes, sharing, splitting, goals)
        if got is None and goals.active:
            got = _greedy(problem, codes, free, sizes, sharing, splitting, None)
        proven = True
        if got is None or goals.penalty(got):
            # one event per room, whole: an assignment problem, solved exactly
            whole = _assignment(problem, codes, free, sizes, goals)
            if whole is not None and (got is None or goals.cost(whole) < goals.cost(got)):
                got = whole
            # Splitting alone adds room_split per extra room, so it cannot beat a whole seating
            # costing room_split or less; sharing is free and always worth the search.
            shares = sharing and any(r.shared for r in free)
            settled = whole is not None and not shares and goals.cost(whole)[0] <= goals.split
            if (shares or splitting) and not settled:  # CP-SAT may still do better by sharing or splitting
                better, proven = _exact(problem, codes, free, sizes, sharing, splitting, seconds_per_slot, seed,
                                        goals, hint=got)
                if better is not None and (got is None or goals.cost(better) < goals.cost(got)):
                    got = better
        if got is None:
            out.failed_slots[s] = codes
            if not proven:
                out.unsettled_slots.append(s)
            continue
        out.rooms.update(got)
        missed, avoided = goals.counts(got)
        out.missed_preferred_rooms += missed
        out.avoided_rooms_used += avoided
        if not proven and goals.penalty(got):
            out.unproven_slots.append(s)
    return out


class _RoomGoals:
    """The preferred- and avoided-room goals of one problem, as seating weighs them."""

    def __init__(self, problem: Problem):
        w = problem.weights
        self.split, self.preferred, self.avoided = w.room_split, w.preferred_room, w.penalised_room
        self.avoid = {r.name.casefold() for r in problem.rooms if r.penalised}
        self.wanted = {code: {n.strip().casefold() for n in e.preferred_rooms}
                       for code, e in problem.events.items() if e.preferred_rooms}
        self.active = bool(self.preferred and self.wanted) or bool(self.avoided and self.avoid)

    def room_cost(self, code: str, name: str) -> int:
        """Goal cost of seating (part of) ``code`` in room ``name``, as if it were its only room."""
        k = name.casefold()
        cost = self.avoided if k in self.avoid else 0
        wanted = self.wanted.get(code)
        if wanted and k not in wanted:
            cost += self.preferred
        return cost

    def counts(self, seated: dict[str, list[tuple[str, int]]]) -> tuple[int, int]:
        """(events missing all their preferred rooms, (event, avoided room) pairs) of a seating."""
        missed = avoided = 0
        for code, parts in seated.items():
            names = {n.casefold() for n, _ in parts}
            wanted = self.wanted.get(code)
            if wanted and not names & wanted:
                missed += 1
            avoided += len(names & self.avoid)
        return missed, avoided

    def penalty(self, seated: dict[str, list[tuple[str, int]]]) -> int:
        missed, avoided = self.counts(seated)
        return self.preferred * missed + self.avoided * avoided

    def cost(self, seated: dict[str, list[tuple[str, int]]]) -> tuple[int, int]:
        """What the slot's CP-SAT model minimises: the weighted goals, then the rooms used."""
        used = sum(len(parts) for parts in seated.values())
        return self.split * (used - len(seated)) + self.penalty(seated), used


def _fits_type(problem: Problem, code: str, room: Room) -> bool:
    want = problem.events[code].room_type
    return not want or (room.room_type or "").casefold() == want.casefold()


def _greedy(problem, codes, rooms, sizes, sharing, splitting, goals: _RoomGoals | None):
    """Best-fit decreasing; with ``goals``, rooms of least goal cost first (None: plain best fit)."""

    def cost(code: str, room: Room) -> int:
        return goals.room_cost(code, room.name) if goals is not None else 0

    def shunned(room: Room) -> bool:
        return goals is not None and bool(goals.avoided) and room.name.casefold() in goals.avoid

    left = {r.name: r.capacity for r in rooms}
    used: set[str] = set()
    result: dict[str, list[tuple[str, int]]] = {}
    for code in codes:
        need = sizes[code]
        ok = [r for r in rooms if _fits_type(problem, code, r) and (r.name not in used or (sharing and r.shared))]
        whole = sorted((r for r in ok if left[r.name] >= need), key=lambda r: (cost(code, r), left[r.name], r.name))
        if whole:
            r = whole[0]
            result[code] = [(r.name, need)]
            left[r.name] -= need
            used.add(r.name)
            continue
        if not splitting:
            return None
        parts = []
        for r in sorted(ok, key=lambda r: (shunned(r), -left[r.name], r.name)):
            if need <= 0:
                break
            if left[r.name] <= 0:
                continue
            take = min(need, left[r.name])
            parts.append((r.name, take))
            need -= take
        if need > 0:
            return None
        for name, take in parts:
            left[name] -= take
            used.add(name)
        result[code] = parts
    return result


def _assignment(problem, codes, rooms, sizes, goals: _RoomGoals) -> dict[str, list[tuple[str, int]]] | None:
    """Every event whole in a room of its own at the least goal cost (ties: fewest empty seats), or None.

    Without sharing or splitting, seating one slot is a rectangular linear assignment
    problem: events to rooms, cost ``room_cost`` of each pair, forbidden pairs (wrong type,
    too small) left out. It is solved exactly by :func:`scipy.optimize.linear_sum_assignment`
    (a shortest augmenting path method: Crouse, "On implementing 2D rectangular assignment
    algorithms", IEEE Trans. Aerospace and Electronic Systems 52 (2016) 1679-1696).
    """
    import numpy as np
    from scipy.optimize import linear_sum_assignment

    if len(codes) > len(rooms):
        return None
    fits = [[_fits_type(problem, c, r) and r.capacity >= sizes[c] for r in rooms] for c in codes]
    if not all(any(row) for row in fits):
        return None
    # empty seats only break ties: scale the goal cost past the most empty seats any seating can leave
    span = 1 + sum(max(r.capacity - sizes[c] for r, ok in zip(rooms, row) if ok) for c, row in zip(codes, fits))
    cost = np.full((len(codes), len(rooms)), np.inf)
    for i, (c, row) in enumerate(zip(codes, fits)):
        for j, (r, ok) in enumerate(zip(rooms, row)):
            if ok:
                cost[i, j] = span * goals.room_cost(c, r.name) + (r.capacity - sizes[c])
    try:
        events, chosen = linear_sum_assignment(cost)
    except ValueError:  # no way to give every event a room of its own
        return None
    return {codes[i]: [(rooms[j].name, sizes[codes[i]])] for i, j in zip(events, chosen)}


def _exact(problem, codes, rooms, sizes, sharing, splitting, seconds, seed, goals: _RoomGoals,
           hint: dict[str, list[tuple[str, int]]] | None = None):
    """The slot's CP-SAT seating, or None; and whether CP-SAT proved it best (or proved none exists)."""
    m = cp_model.CpModel()
    use: dict[tuple[str, str], cp_model.IntVar] = {}
    seats: dict[tuple[str, str], cp_model.LinearExprT] = {}  # a variable when splitting, else size * use
    for c in codes:
        for r in rooms:
            if not _fits_type(problem, c, r):
                continue
            if not splitting and r.capacity < sizes[c]:
                continue
            use[c, r.name] = m.NewBoolVar(f"use[{c},{r.name}]")
            if not splitting:
                seats[c, r.name] = sizes[c] * use[c, r.name]
                continue
            seats[c, r.name] = m.NewIntVar(0, min(r.capacity, sizes[c]), f"seats[{c},{r.name}]")
            m.Add(seats[c, r.name] <= min(r.capacity, sizes[c]) * use[c, r.name])
            m.Add(seats[c, r.name] >= use[c, r.name])
    for c in codes:
        mine = [r.name for r in rooms if (c, r.name) in use]
        if not mine:
            return None, True
        if splitting:
            m.Add(sum(seats[c, n] for n in mine) == sizes[c])
        else:
            m.AddExactlyOne(use[c, n] for n in mine)
    for r in rooms:
        here = [c for c in codes if (c, r.name) in use]
        if not here:
            continue
        m.Add(sum(seats[c, r.name] for c in here) <= r.capacity)
        if not (sharing and r.shared):
            m.AddAtMostOne(use[c, r.name] for c in here)
    weighted = []
    if goals.split and splitting:
        weighted += [goals.split * v for v in use.values()]
    if goals.avoided:
        weighted += [goals.avoided * v for (c, name), v in use.items() if name.casefold() in goals.avoid]
    miss: dict[str, cp_model.IntVar] = {}
    if goals.preferred:
        for c in codes:
            wanted = goals.wanted.get(c)
            if not wanted:
                continue
            miss[c] = m.NewBoolVar(f"miss[{c}]")
            m.AddBoolOr([miss[c]] + [use[c, r.name] for r in rooms
                                     if (c, r.name) in use and r.name.casefold() in wanted])
            weighted.append(goals.preferred * miss[c])
    scale = len(use) + 1  # the weighted goals first; fewer rooms only among equals
    m.Minimize(scale * sum(weighted) + sum(use.values()))
    if hint:
        given = {(c, name): n for c, parts in hint.items() for name, n in parts}
        for key, v in use.items():
            m.AddHint(v, key in given)
            if splitting:
                m.AddHint(seats[key], given.get(key, 0))
        for c, v in miss.items():
            m.AddHint(v, not any(name.casefold() in goals.wanted[c] for name, _ in hint.get(c, [])))
    solver = cp_model.CpSolver()
    solver.parameters.catch_sigint_signal = False  # Ctrl-C and SIGTERM stay the caller's (see solve._parameters)
    solver.parameters.max_time_in_seconds = seconds
    solver.parameters.num_workers = 1
    solver.parameters.random_seed = seed
    status = solver.Solve(m)
    if status not in (cp_model.OPTIMAL, cp_model.FEASIBLE):
        return None, status == cp_model.INFEASIBLE
    out: dict[str, list[tuple[str, int]]] = {}
    for (c, name), v in use.items():
        if solver.BooleanValue(v):
            out.setdefault(c, []).append((name, solver.Value(seats[c, name]) if splitting else sizes[c]))
    return {c: sorted(v) for c, v in out.items()}, status == cp_model.OPTIMAL
