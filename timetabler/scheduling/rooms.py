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

Long events and attendees seated apart
--------------------------------------
A long event (one that takes several touching slots,
:meth:`Availability.slots_taken <timetabler.availability.Availability.slots_taken>`) holds the
same rooms, with the same seats, in every slot it takes, and those seats count against each
room in each of those slots. An attendee with an own room (``Attendee.own_room_type``, the
Attendees sheet's Own room column) sits each of their events alone in a room of that type for
their whole sitting (with extra time it may run into the next slot), and the event's own
rooms seat one fewer (:func:`seats_in_rooms`). Such slots are linked: the slots each event
and each sitting apart hold are joined by union-find, and each group of linked slots is seated
jointly, by a greedy that checks every slot an event holds (attendees apart first, each in
the smallest free room of their type) and, when it fails or leaves a room-goal penalty, by a
CP-SAT model of the whole group (:func:`_exact_group`: per room and slot, capacity, sharing
and sitting alone; a room unavailable in any slot an event or sitting holds is not offered to
it). A group that cannot be seated is returned as the exact (event, start) pairs that make it
(``Seating.failed_groups``): no timetable holding all of them can be seated, whatever else it
holds, since more events in those slots only make seating harder. A slot taken by single-slot
events alone, with nobody apart and no extra time running into it, is seated as described above.

Extra time into the next slot
-----------------------------
An attendee seated with their event (not apart) whose extra-time sitting runs past the event's
own slots keeps one seat in the event's room in each such slot (:func:`_tails`): the event's only
room or, when it is split, the room given the most of its seats (ties: the room first in the Rooms
sheet). The rule is ours, and the validator's (:func:`.validator.validate`). Such slots are linked
into the event's group like a long event's; in them the event holds just those seats in that one
room (:func:`tail_room`), counts as present there for sharing (a room not shared holds nothing
else then) and needs that room available. The slot model counts these seats in its per-type seat
totals and room places (:mod:`.cpsat_model`); what those totals let through, the Benders cuts of
failed groups settle.

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

from networkx.utils import UnionFind
from ortools.sat.python import cp_model

from ..availability import Availability
from ..model import Problem, Room, Slot, tail_room


@dataclass
class Seating:
    """Rooms of every seated event, the slots that could not be seated, and the room goals' counts.

    ``rooms``: event -> [(room, seats)], the same rooms and seats in every slot the event takes;
    ``own_rooms``: (attendee, event) -> the room that attendee sits the event in alone (held for
    every slot of their sitting; the event's ``rooms`` seat them no more).
    ``failed_groups``: each group of events that could not be seated together, as the exact
    (event, start slot) pairs a timetable must not repeat all at once (the Benders cut);
    ``failed_slots``: for messages, slot -> the events holding it in a group that failed.
    ``missed_preferred_rooms`` counts events with preferred rooms seated in none of them;
    ``avoided_rooms_used`` counts (event, room marked Avoid) pairs. Both are counts, not
    penalties: multiply by ``Weights.preferred_room`` and ``Weights.penalised_room``.
    """

    rooms: dict[str, list[tuple[str, int]]] = field(default_factory=dict)
    own_rooms: dict[tuple[str, str], str] = field(default_factory=dict)
    failed_groups: list[list[tuple[str, int]]] = field(default_factory=list)
    failed_slots: dict[int, list[str]] = field(default_factory=dict)  # slot -> events that could not be seated together
    missed_preferred_rooms: int = 0
    avoided_rooms_used: int = 0
    unproven_slots: list[int] = field(default_factory=list)  # room goals not proven least within the time
    unsettled_slots: list[int] = field(default_factory=list)  # failed within the time, not proven unseatable


def seated_apart(problem: Problem) -> dict[str, list[tuple[str, str]]]:
    """Event -> [(attendee, own room type)] of its attendees who sit it alone (``Attendee.own_room_type``),
    sorted by attendee; empty when the problem has no rooms (intake then warns that own rooms are ignored)."""
    if not problem.rooms or not problem.people:
        return {}
    out: dict[str, list[tuple[str, str]]] = {}
    for attendee, code in problem.enrolments:
        person = problem.people.get(attendee)
        if person is not None and person.own_room_type:
            out.setdefault(code, []).append((attendee, str(person.own_room_type)))
    return {code: sorted(set(pairs)) for code, pairs in out.items()}


def seats_in_rooms(sizes: dict[str, int], apart: dict[str, list[tuple[str, str]]]) -> dict[str, int]:
    """The seats each event needs in its own rooms: its attendees less those who sit apart."""
    return {code: max(0, n - len(apart.get(code, ()))) for code, n in sizes.items()}


def seat_events(problem: Problem, slots: list[Slot], assignment: dict[str, int], sizes: dict[str, int], *,
                sharing: bool = True, splitting: bool = False, seconds_per_slot: float = 5.0,
                seed: int = 0, availability: Availability | None = None) -> Seating:
    """Rooms for every event of ``assignment`` (event -> [(room, seats)]) and for every attendee
    who sits apart (``Seating.own_rooms``).

    The slots are grouped by the events that link them (union-find over the slots each event
    holds and the slots each attendee seated apart holds for their sitting). A group of one
    slot with nobody seated apart is seated as it always was (:func:`_seat_slot`); a linked
    group is seated jointly (:func:`_seat_group`): a greedy checking every slot each event
    holds, then, when it fails or leaves a room-goal penalty, a CP-SAT model of the group.
    ``availability`` (:meth:`Availability.of <timetabler.availability.Availability.of>` of
    ``problem`` and ``slots``) saves working it out again.
    """
    out = Seating()
    goals = _RoomGoals(problem)
    apart = seated_apart(problem)
    found = availability
    if found is None and _spans_or_sittings(problem, slots):
        found = Availability.of(problem, slots)
    need = seats_in_rooms({c: sizes.get(c, 0) for c in assignment}, apart)
    held: dict[str, tuple[int, ...]] = {}  # event -> the slots its rooms are held in (its span, then tails)
    spans: dict[str, tuple[int, ...]] = {}  # event -> its own slots
    tails: dict[str, dict[int, int]] = {}  # event -> slot past its own -> seats its extra-time attendees keep
    own: list[tuple[str, str, str, tuple[int, ...]]] = []  # (attendee, event, room type, slots held)
    for code, s in assignment.items():
        span = tuple(found.slots_taken(code, s) or (s,)) if found is not None else (s,)
        tail = _tails(problem, found, code, s, span, apart) if found is not None and found.sittings else {}
        if need[code] > 0:
            held[code] = span + tuple(sorted(tail))
            spans[code] = span
            if tail:
                tails[code] = tail
        for attendee, kind in apart.get(code, ()):
            sitting = found.slots_taken(code, s, attendee) if found is not None else None
            own.append((attendee, code, kind, tuple(sitting or span)))
    groups = UnionFind()
    for span in held.values():
        groups.union(*span)
    for *_, sitting in own:
        groups.union(*sitting)
    members: dict[int, tuple[list[str], list]] = {}
    for code, span in held.items():
        members.setdefault(groups[span[0]], ([], []))[0].append(code)
    for item in own:
        members.setdefault(groups[item[3][0]], ([], []))[1].append(item)
    unavailable = {name: set(numbers) for name, numbers in problem.slot_refs(slots).room_unavailable.items()}
    parts = sorted(members.values(), key=lambda m: min(t for c in m[0] for t in held[c]) if m[0]
                   else min(t for item in m[1] for t in item[3]))
    for codes, apart_here in parts:
        slot_set = sorted({t for c in codes for t in held[c]} | {t for item in apart_here for t in item[3]})
        if len(slot_set) == 1 and not apart_here:
            _seat_slot(problem, slot_set[0], codes, need, sharing, splitting, seconds_per_slot, seed, goals,
                       unavailable, out)
        else:
            _seat_group(problem, slot_set, codes, apart_here, held, need, assignment, sharing, splitting,
                        seconds_per_slot, seed, goals, unavailable, out, spans, tails)
    return out


def _tails(problem: Problem, found: Availability, code: str, start: int, span, apart) -> dict[int, int]:
    """Slot -> attendees of ``code`` (seated with it, not apart) whose extra-time sitting runs into that slot
    past the event's own slots: each keeps their seat in the event's room there (:func:`tail_room` when it
    is split; our rule, as the validator's)."""
    alone = {a for a, _ in apart.get(code, ())}
    out: dict[int, int] = {}
    for (attendee, c), own in found.sittings.items():
        if c != code or attendee in alone:
            continue
        sitting = own.get(start)
        for t in sitting or ():
            if t not in span:
                out[t] = out.get(t, 0) + 1
    return out


def _spans_or_sittings(problem: Problem, slots: list[Slot]) -> bool:
    """Whether an event may take more than one slot, or an attendee's sitting differ from the event's slots
    (else every event holds its start slot alone and :class:`Availability` is not needed)."""
    if problem.people and any(p.extra_time_percent > 0 for p in problem.people.values()):
        return True
    shortest = min((s.length_minutes for s in slots if s.length_minutes), default=None)
    return shortest is not None and any(e.duration_minutes and e.duration_minutes > shortest
                                        for e in problem.events.values())


def _seat_slot(problem, s, codes, sizes, sharing, splitting, seconds_per_slot, seed, goals, unavailable,
               out: Seating) -> None:
    """One slot whose events take it alone, with nobody seated apart: the greedy, the assignment problem,
    then the slot's CP-SAT model (the module's description)."""
    free = [r for r in problem.rooms if s not in unavailable[r.name]]
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
        out.failed_groups.append([(c, s) for c in codes])
        if not proven:
            out.unsettled_slots.append(s)
        return
    out.rooms.update(got)
    missed, avoided = goals.counts(got)
    out.missed_preferred_rooms += missed
    out.avoided_rooms_used += avoided
    if not proven and goals.penalty(got):
        out.unproven_slots.append(s)


def _seat_group(problem, slot_set, codes, apart_here, held, sizes, assignment, sharing, splitting,
                seconds_per_slot, seed, goals, unavailable, out: Seating, spans=None, tails=None) -> None:
    """Slots linked by long events, attendees seated apart or extra time, seated jointly: each event holds the
    same rooms (with the same seats) in every slot it takes and its extra-time seats in :func:`tail_room`
    after them, each attendee apart a room of their type alone for their whole sitting. The greedy first;
    CP-SAT when it fails or leaves a room-goal penalty."""
    codes = sorted(codes, key=lambda c: (-sizes[c], -len(held[c]), c))
    apart_here = sorted(apart_here, key=lambda item: (-len(item[3]), item[0], item[1]))
    spans = spans if spans is not None else held
    tails = tails or {}
    got = _greedy_group(problem, codes, apart_here, spans, sizes, sharing, splitting, goals, unavailable, tails)
    if got is None and goals.active:
        got = _greedy_group(problem, codes, apart_here, spans, sizes, sharing, splitting, None, unavailable, tails)
    proven = True
    if got is None or goals.penalty(got[0]):
        better, proven = _exact_group(problem, codes, apart_here, spans, sizes, sharing, splitting,
                                      seconds_per_slot, seed, goals, unavailable, hint=got, tails=tails)
        if better is not None and (got is None or goals.cost(better[0]) < goals.cost(got[0])):
            got = better
    if got is None:
        everyone = {c for c in codes} | {item[1] for item in apart_here}
        for t in slot_set:
            out.failed_slots[t] = sorted(c for c in everyone
                                         if t in held.get(c, ()) or any(item[1] == c and t in item[3]
                                                                        for item in apart_here))
        out.failed_groups.append(sorted((c, assignment[c]) for c in everyone))
        if not proven:
            out.unsettled_slots.extend(slot_set)
        return
    rooms, own = got
    out.rooms.update(rooms)
    out.own_rooms.update(own)
    missed, avoided = goals.counts(rooms)
    out.missed_preferred_rooms += missed
    out.avoided_rooms_used += avoided
    if not proven and goals.penalty(rooms):
        out.unproven_slots.extend(slot_set)


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
            use[c, r.name] = m.new_bool_var(f"use[{c},{r.name}]")
            if not splitting:
                seats[c, r.name] = sizes[c] * use[c, r.name]
                continue
            seats[c, r.name] = m.new_int_var(0, min(r.capacity, sizes[c]), f"seats[{c},{r.name}]")
            m.add(seats[c, r.name] <= min(r.capacity, sizes[c]) * use[c, r.name])
            m.add(seats[c, r.name] >= use[c, r.name])
    for c in codes:
        mine = [r.name for r in rooms if (c, r.name) in use]
        if not mine:
            return None, True
        if splitting:
            m.add(sum(seats[c, n] for n in mine) == sizes[c])
        else:
            m.add_exactly_one(use[c, n] for n in mine)
    for r in rooms:
        here = [c for c in codes if (c, r.name) in use]
        if not here:
            continue
        m.add(sum(seats[c, r.name] for c in here) <= r.capacity)
        if not (sharing and r.shared):
            m.add_at_most_one(use[c, r.name] for c in here)
    _minimise_room_goals(m, use, seats, codes, rooms, goals, splitting, hint)
    solver, status = _solve_seating(m, seconds, seed)
    if status not in (cp_model.OPTIMAL, cp_model.FEASIBLE):
        return None, status == cp_model.INFEASIBLE
    return _rooms_found(solver, use, seats, sizes, splitting), status == cp_model.OPTIMAL


def _own_room_candidates(problem, kind: str, sitting: tuple[int, ...], unavailable) -> list[Room]:
    """Rooms of type ``kind`` free in every slot of ``sitting``, for one attendee alone (rooms marked Avoid
    last, then the smallest: a room for one person wastes least)."""
    want = kind.casefold()
    ok = [r for r in problem.rooms if (r.room_type or "").casefold() == want and r.capacity >= 1
          and not unavailable[r.name].intersection(sitting)]
    return sorted(ok, key=lambda r: (r.penalised, r.capacity, r.name))


def _greedy_group(problem, codes, apart_here, spans, sizes, sharing, splitting, goals: _RoomGoals | None,
                  unavailable, tails=None):
    """Best-fit decreasing over linked slots: the attendees apart first (each the smallest free room of their
    type, alone in every slot of their sitting), then the events, each in rooms free and with room in
    every slot of its span, and its extra-time seats (``tails``: event -> slot -> seats) in
    :func:`tail_room` of its rooms after it. (rooms, own rooms) or None."""

    def cost(code: str, room: Room) -> int:
        return goals.room_cost(code, room.name) if goals is not None else 0

    def shunned(room: Room) -> bool:
        return goals is not None and bool(goals.avoided) and room.name.casefold() in goals.avoid

    left: dict[tuple[str, int], int] = {}
    used: set[tuple[str, int]] = set()
    solo: set[tuple[str, int]] = set()
    own: dict[tuple[str, str], str] = {}
    tails = tails or {}
    by_name = {r.name: r for r in problem.rooms}

    def free(r: Room, slots_seats) -> bool:
        """Whether ``r`` can take the seats of ``slots_seats`` ((slot, seats) pairs) for one more event."""
        return all(t not in unavailable[r.name] and (r.name, t) not in solo
                   and ((r.name, t) not in used or (sharing and r.shared))
                   and left.get((r.name, t), r.capacity) >= n for t, n in slots_seats)

    for attendee, code, kind, sitting in apart_here:
        room = next((r for r in _own_room_candidates(problem, kind, sitting, unavailable)
                     if not any((r.name, t) in used for t in sitting)), None)
        if room is None:
            return None
        for t in sitting:
            used.add((room.name, t))
            solo.add((room.name, t))
        own[(attendee, code)] = room.name
    result: dict[str, list[tuple[str, int]]] = {}
    for code in codes:
        span = spans[code]
        need = sizes[code]
        tail = sorted(tails.get(code, {}).items())  # extra-time seats past its slots, in one of its rooms
        ok = [r for r in problem.rooms if _fits_type(problem, code, r) and free(r, [(t, 1) for t in span])]
        room_left = {r.name: min(left.get((r.name, t), r.capacity) for t in span) for r in ok}
        whole = sorted((r for r in ok if room_left[r.name] >= need and free(r, tail)),
                       key=lambda r: (cost(code, r), room_left[r.name], r.name))
        if whole:
            chosen = [(whole[0].name, need)]
        elif not splitting:
            return None
        else:
            chosen = []
            for r in sorted(ok, key=lambda r: (shunned(r), not free(r, tail), -room_left[r.name], r.name)):
                if need <= 0:
                    break
                if room_left[r.name] <= 0:
                    continue
                take = min(need, room_left[r.name])
                chosen.append((r.name, take))
                need -= take
            if need > 0 or (tail and not free(by_name[tail_room(problem, chosen)], tail)):
                return None
        for name, take in chosen:
            for t in span:
                left[(name, t)] = left.get((name, t), by_name[name].capacity) - take
                used.add((name, t))
        if tail:
            host = tail_room(problem, chosen)
            for t, n in tail:
                left[(host, t)] = left.get((host, t), by_name[host].capacity) - n
                used.add((host, t))
        result[code] = chosen
    return result, own


def _exact_group(problem, codes, apart_here, spans, sizes, sharing, splitting, seconds, seed, goals: _RoomGoals,
                 unavailable, hint=None, tails=None):
    """The linked group's CP-SAT seating ((rooms, own rooms) or None), and whether CP-SAT proved it best (or
    proved that none exists).

    Variables: ``use[c, r]`` (event ``c`` has seats in room ``r`` in every slot of its span ``spans[c]``;
    with splitting ``seats[c, r]`` of them), ``host[c, r]`` (``r`` is :func:`tail_room` of ``c``, holding
    the seats ``tails[c][t]`` of its attendees still writing in each slot ``t`` past its span: ``use``
    itself without splitting; with splitting one of its rooms, with more seats than each room before it
    in the Rooms sheet and at least as many as each after) and ``alone[i, r]`` (attendee apart ``i`` sits
    alone in ``r`` for their whole sitting). Rooms unavailable in a slot an event, its extra-time seats or
    a sitting apart hold there are left out of that choice. Per room and slot: the seats of the events
    present (their own, or their extra-time seats) at most its capacity, at most one of them unless it
    may be shared, and nothing else where an attendee sits alone. The objective is :func:`_exact`'s.
    """
    m = cp_model.CpModel()
    tails = tails or {}
    use: dict[tuple[str, str], cp_model.IntVar] = {}
    seats: dict[tuple[str, str], cp_model.LinearExprT] = {}
    host: dict[tuple[str, str], cp_model.IntVar] = {}
    alone: dict[tuple[int, str], cp_model.IntVar] = {}
    order = {r.name: i for i, r in enumerate(problem.rooms)}
    for c in codes:
        for r in problem.rooms:
            if not _fits_type(problem, c, r) or unavailable[r.name].intersection(spans[c]):
                continue
            if not splitting and unavailable[r.name].intersection(tails.get(c, ())):
                continue
            if not splitting and r.capacity < sizes[c]:
                continue
            use[c, r.name] = m.new_bool_var(f"use[{c},{r.name}]")
            if not splitting:
                seats[c, r.name] = sizes[c] * use[c, r.name]
                continue
            seats[c, r.name] = m.new_int_var(0, min(r.capacity, sizes[c]), f"seats[{c},{r.name}]")
            m.add(seats[c, r.name] <= min(r.capacity, sizes[c]) * use[c, r.name])
            m.add(seats[c, r.name] >= use[c, r.name])
    for c in codes:
        mine = [r.name for r in problem.rooms if (c, r.name) in use]
        if not mine:
            return None, True
        if splitting:
            m.add(sum(seats[c, n] for n in mine) == sizes[c])
        else:
            m.add_exactly_one(use[c, n] for n in mine)
        if not tails.get(c):
            continue
        if not splitting:
            host.update({(c, n): use[c, n] for n in mine})
            continue
        hosts = [n for n in mine if not unavailable[n].intersection(tails[c])]
        if not hosts:
            return None, True
        for n in hosts:
            host[c, n] = m.new_bool_var(f"host[{c},{n}]")
            m.add_implication(host[c, n], use[c, n])
            for other in mine:
                if other != n:  # the most seats; on a tie, the first room in the Rooms sheet
                    ahead = 1 if order[other] < order[n] else 0
                    m.add(seats[c, n] >= seats[c, other] + ahead).only_enforce_if(host[c, n])
        m.add_exactly_one(host[c, n] for n in hosts)
    for i, (attendee, code, kind, sitting) in enumerate(apart_here):
        mine = _own_room_candidates(problem, kind, sitting, unavailable)
        if not mine:
            return None, True
        for r in mine:
            alone[i, r.name] = m.new_bool_var(f"alone[{attendee},{code},{r.name}]")
        m.add_exactly_one(alone[i, r.name] for r in mine)
    slot_set = sorted({t for c in codes for t in spans[c]} | {t for c in codes for t in tails.get(c, ())}
                      | {t for item in apart_here for t in item[3]})
    for r in problem.rooms:
        for t in slot_set:
            # (present, seats, most seats) of each event in r in slot t: in its span, or by extra-time seats
            here = [(use[c, r.name], seats[c, r.name], min(r.capacity, sizes[c]))
                    for c in codes if (c, r.name) in use and t in spans[c]]
            here += [(host[c, r.name], tails[c][t] * host[c, r.name], tails[c][t])
                     for c in codes if (c, r.name) in host and t in tails[c]]
            solo = [alone[i, r.name] for i, item in enumerate(apart_here) if (i, r.name) in alone and t in item[3]]
            if solo:
                m.add_at_most_one(solo)
                for lit in solo:
                    for present, _, _ in here:
                        m.add_implication(lit, present.negated())
            if not here:
                continue
            if sum(most for _, _, most in here) > r.capacity:
                m.add(sum(n for _, n, _ in here) <= r.capacity)
            if not (sharing and r.shared) and len(here) > 1:
                m.add_at_most_one(present for present, _, _ in here)
    rooms_hint, own_hint = hint if hint else (None, {})
    _minimise_room_goals(m, use, seats, codes, problem.rooms, goals, splitting, rooms_hint)
    if hint:
        for (i, name), v in alone.items():
            m.add_hint(v, own_hint.get((apart_here[i][0], apart_here[i][1])) == name)
    solver, status = _solve_seating(m, seconds, seed)
    if status not in (cp_model.OPTIMAL, cp_model.FEASIBLE):
        return None, status == cp_model.INFEASIBLE
    own = {(apart_here[i][0], apart_here[i][1]): name for (i, name), v in alone.items() if solver.boolean_value(v)}
    return (_rooms_found(solver, use, seats, sizes, splitting), own), status == cp_model.OPTIMAL


def _minimise_room_goals(m: cp_model.CpModel, use, seats, codes, rooms, goals: _RoomGoals, splitting: bool,
                         hint: dict[str, list[tuple[str, int]]] | None) -> None:
    """The seating models' objective, and a seating to start from (``hint``, event -> [(room, seats)]):

        room_split * (rooms used) + penalised_room * avoided uses + preferred_room * misses,

    scaled past the number of rooms used, which breaks ties (fewer rooms among equals)."""
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
            miss[c] = m.new_bool_var(f"miss[{c}]")
            m.add_bool_or([miss[c]] + [use[c, r.name] for r in rooms
                                       if (c, r.name) in use and r.name.casefold() in wanted])
            weighted.append(goals.preferred * miss[c])
    scale = len(use) + 1  # the weighted goals first; fewer rooms only among equals
    m.minimize(scale * sum(weighted) + sum(use.values()))
    if hint:
        given = {(c, name): n for c, parts in hint.items() for name, n in parts}
        for key, v in use.items():
            m.add_hint(v, key in given)
            if splitting:
                m.add_hint(seats[key], given.get(key, 0))
        for c, v in miss.items():
            m.add_hint(v, not any(name.casefold() in goals.wanted[c] for name, _ in hint.get(c, [])))


def _rooms_found(solver, use, seats, sizes: dict[str, int], splitting: bool) -> dict[str, list[tuple[str, int]]]:
    """Event -> [(room, seats)] read from a solved seating model, rooms sorted by name."""
    out: dict[str, list[tuple[str, int]]] = {}
    for (c, name), v in use.items():
        if solver.boolean_value(v):
            out.setdefault(c, []).append((name, solver.value(seats[c, name]) if splitting else sizes[c]))
    return {c: sorted(v) for c, v in out.items()}


def _solve_seating(m: cp_model.CpModel, seconds: float, seed: int) -> tuple[cp_model.CpSolver, int]:
    """One worker, within ``seconds``; Ctrl-C and SIGTERM stay the caller's (see cpsat_run.set_parameters)."""
    solver = cp_model.CpSolver()
    solver.parameters.catch_sigint_signal = False
    solver.parameters.max_time_in_seconds = seconds
    solver.parameters.num_workers = 1
    solver.parameters.random_seed = seed
    return solver, solver.solve(m)
