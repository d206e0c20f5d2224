"""The CP-SAT model of an exam or meeting timetable.

Variables (one family per name):

``x[e][s]``
    event ``e`` sits in slot ``s`` (Boolean; exactly one per event).
``t[e]``, ``d[e]``
    slot number and day number of event ``e`` (integers linked to ``x``), made only when a
    rule or goal needs them.
``before``, ``gap``, ``near<d>``, ``sday``, ``b2b``, ``over``, ``twoday``
    per clashing pair, and only those the goals in force need (see :func:`_add_pair_goals`):
    the order of the two; their slot distance, capped; at most ``d`` slots apart; on the
    same day; back-to-back on one day; last-of-day then first-of-next; two in a day (not
    consecutive). One pair costs at most one small integer, never one per goal.

Hard rules:

* no attendee double-booked: one at-most-one constraint per slot and per clique of an edge
  clique cover of the conflict graph (:func:`.cliques.clique_cover`);
* physical limits (event length within slot length, event seats within the slot's seats
  and the rooms that could hold it) shrink each event's slots;
* fixed and barred slots, "same slot", "before", "different days", "alone", the seat limit of
  each slot, the seats of the rooms of each type in each slot (and, without splitting, the
  places they have for events of each size: one per room not shared, ``capacity // size``
  per shared room), the cap on events per
  attendee per day. Attendees with an own room (``Attendee.own_room_type``) take no seat in
  their event's rooms; each holds a room of their type for every slot of their sitting, so per
  slot and type they cannot outnumber the rooms free, each takes at least the seats of the
  smallest such room from the type's (and all rooms') seats, and where no room may be shared
  events and attendees apart together cannot outnumber the rooms. An attendee seated with their
  event whose extra time runs into the next slot keeps a seat in one of the event's rooms then
  (:mod:`.rooms`' rule): those seats count in that slot's seats of the rooms of the event's type
  and, as one more event there, in its places and room counts (:func:`_tail_seats`). Seating
  (:mod:`.rooms`) checks the rest and returns cuts. In *explain* mode each of these carries its own enforcement literal,
  which the solver takes as an assumption; the sufficient assumptions for infeasibility
  then name a set of rules that cannot all hold.

Slot symmetry: when every slot is alike and no rule tells slots apart, the events of a
large clique are fixed to slots 1, 2, ... (a standard symmetry break for colouring; any
timetable can be relabelled to satisfy it).

Soft goals are weighted counts (weights from :class:`~timetabler.model.Weights`); a pair
of events sharing ``c`` attendees costs ``c`` times the weight, so the objective counts
attendee-occurrences exactly as :func:`.validator.validate` recounts them.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from typing import Hashable

import networkx as nx
from ortools.sat.python import cp_model

from ..availability import Availability
from ..model import Problem, RuleKind, Slot, days_of
from .cliques import clique_cover
from .rooms import seated_apart, seats_in_rooms

#: Carter, Laporte & Lee (1996) proximity weights for gaps of 1..5 slots.
PROXIMITY_WEIGHTS = (16, 8, 4, 2, 1)

#: Up to this many clashing pairs the per-pair literals carry names (for reading a model dump); beyond, the
#: names alone would take tens of megabytes in the model and in each solver worker's copy.
NAMED_PAIRS = 10_000

#: Constraints a clashing pair adds to the goal model, roughly (for projecting the building time).
PAIR_STEP = 8


class BuildStopped(Exception):
    """Building the model would not end by the time given (``build_model(stop_at=...)``)."""


class _Clock:
    """Checks, every so many steps of a long loop, that the loop will end by ``stop_at``
    (``time.perf_counter()`` seconds), projecting from the pace so far; raises :class:`BuildStopped`."""

    def __init__(self, stop_at: float | None, total_steps: int):
        self.stop_at, self.total = stop_at, max(1, total_steps)
        self.start = time.perf_counter()
        self.done = 0

    def step(self, n: int = 1) -> None:
        before, self.done = self.done, self.done + n
        if self.stop_at is None or before // 20_000 == self.done // 20_000:
            return
        now = time.perf_counter()
        projected = now + (now - self.start) * (self.total - self.done) / self.done
        if now > self.stop_at or (self.done >= self.total // 20 and projected > self.stop_at):
            raise BuildStopped(f"the model would take until {projected - self.start:.0f} s after its start to build")


@dataclass
class RuleLiteral:
    """A user rule and the literal that switches it on (explain mode)."""

    literal: cp_model.IntVar
    text: str
    kind: str


@dataclass
class TimetableModel:
    """A built model and the handles needed to read a solution back."""

    model: cp_model.CpModel
    codes: list[str]
    k: int
    x: dict[str, list[cp_model.IntVar]]
    terms: dict[str, list[tuple[int, int, tuple]]] = field(default_factory=dict)  # coef, literal ref, meaning
    rules: list[RuleLiteral] = field(default_factory=list)
    symmetry_clique: list[str] = field(default_factory=list)
    cover_size: int = 0
    constant: dict[str, int] = field(default_factory=dict)
    derived: list[tuple] = field(default_factory=list)  # (var index, kind, args...) to complete hints
    day: list[int] = field(default_factory=list)
    pairs: int = 0  # clashing pairs in the model
    clock: object = None  # the build's deadline check
    # optional attendee (a, e) -> [busy var, what it means]: a is also booked in another event during their sitting at e
    optional_busy: dict = field(default_factory=dict)
    found: Availability | None = None  # the people's rules over these slots, when they are in play
    last: dict[str, dict[int, int]] = field(default_factory=dict)  # long event -> start -> its last slot

    def hint(self, assignment: dict[str, int]) -> None:
        """Hint a full solution: ``x`` from ``assignment`` and every derived variable computed from it,
        so CP-SAT can take the hint as its first solution without search."""
        k = self.k
        refs: list[int] = []
        values: list[int] = []
        for c, s in assignment.items():
            if c in self.x and 1 <= s <= k:
                refs.extend(v.index for v in self.x[c])
                values.extend(int(i == s) for i in range(1, k + 1))
        if all(c in assignment for c in self.codes):
            for index, kind, *args in self.derived:
                refs.append(index)
                values.append(int(self.value(kind, args, assignment)))
        hint = self.model.proto.solution_hint  # in bulk: one call per variable is slow on large models
        hint.vars.extend(refs)
        hint.values.extend(values)

    def value(self, kind: str, args, a: dict[str, int]) -> int:
        """What a derived variable or goal term means, computed from a timetable ``a`` (event -> slot)."""
        day = self.day
        if kind == "t":
            return a[args[0]]
        if kind == "d":
            return day[a[args[0]] - 1]
        if kind == "in":
            return int(a[args[0]] == args[1])
        if kind == "away":
            return int(a[args[0]] != args[1])
        if kind == "miss":
            return int(a[args[0]] not in args[1])
        if kind == "busy":
            return int(_booked_elsewhere(args[0], args[1], args[2], a))
        if kind == "optmiss":
            return int(a[args[0]] in args[3] or _booked_elsewhere(args[0], args[1], args[2], a))
        if kind == "end":
            return self.last.get(args[0], {}).get(a[args[0]], a[args[0]])
        e, f = args[0], args[1]
        # slots from the last slot of the earlier event to the first of the later (long events take several)
        gap = a[f] - self.last.get(e, {}).get(a[e], a[e]) if a[e] < a[f] else a[e] - self.last.get(f, {}).get(a[f], a[f])
        same = day[a[e] - 1] == day[a[f] - 1]
        if kind == "before":
            return int(a[e] < a[f])
        if kind == "near":
            return int(gap <= args[2])
        if kind == "gap":
            return min(gap, args[2])
        if kind == "sday":
            return int(same)
        if kind == "b2b":
            return int(gap == 1 and same)
        if kind == "over":
            return int(gap == 1 and not same)
        if kind == "twoday":
            return int(gap != 1 and same)
        raise ValueError(f"unknown derived variable kind {kind!r}")

    def assignment(self, solver: cp_model.CpSolver) -> dict[str, int]:
        out: dict[str, int] = {}
        for code in self.codes:
            for s, var in enumerate(self.x[code], start=1):
                if solver.boolean_value(var):
                    out[code] = s
                    break
        return out

    def evaluate(self, assignment: dict[str, int]) -> dict[str, int]:
        """Weighted penalty of each soft goal of the model in ``assignment``, computed from the timetable
        (the goal literals bound the goals from above; they are exact only at the optimum)."""
        out: dict[str, int] = {}
        for name, terms in self.terms.items():
            out[name] = self.constant.get(name, 0) + sum(coef * self.value(key[0], key[1:], assignment)
                                                         for coef, _, key in terms)
        for name, value in self.constant.items():
            out.setdefault(name, value)
        return out

    def breakdown(self, solver: cp_model.CpSolver) -> dict[str, int]:
        """Weighted penalty of each soft goal in the solver's current solution (see :meth:`evaluate`)."""
        return self.evaluate(self.assignment(solver))

    def size(self) -> dict[str, int]:
        """Variables and constraints of the model (what memory grows with)."""
        proto = self.model.proto
        return {"variables": len(proto.variables), "constraints": len(proto.constraints),
                "objective_terms": len(proto.objective.vars)}


@dataclass
class Domains:
    """Slots each event may physically take, and why others are ruled out."""

    allowed: dict[str, set[int]]
    why_not: dict[str, dict[int, str]]


def physical_domains(problem: Problem, slots: list[Slot], codes, sizes: dict[str, int],
                     *, room_splitting: bool) -> Domains:
    """Slots where each event fits: its length, the slot's seats, and the rooms free then."""
    k = len(slots)
    allowed: dict[str, set[int]] = {}
    why: dict[str, dict[int, str]] = {}
    room_caps = _room_capacity_by_slot(problem, slots)
    found = Availability.of(problem, slots) if needs_availability(problem, slots) else None
    long_starts = found.spans if found is not None else {}
    apart = seated_apart(problem)
    in_rooms = seats_in_rooms(sizes, apart)  # attendees seated apart take no seat in the event's rooms
    for code in codes:
        ev = problem.events[code]
        ok: set[int] = set()
        reasons: dict[int, str] = {}
        for s in range(1, k + 1):
            slot = slots[s - 1]
            if ev.duration_minutes is not None and slot.length_minutes is not None \
                    and ev.duration_minutes > slot.length_minutes and s not in long_starts.get(code, {}):
                reasons[s] = f"it lasts {ev.duration_minutes} minutes and slot {s} only {slot.length_minutes}"
                continue
            if slot.seat_capacity is not None and sizes[code] > slot.seat_capacity:
                reasons[s] = f"it has {sizes[code]} attendees and slot {s} only {slot.seat_capacity} seats"
                continue
            if problem.rooms and in_rooms[code] > 0:
                caps = [cap for cap, _ in room_caps[s].get(_type_key(ev.room_type), [])]
                room_word = f"rooms of type '{ev.room_type}'" if ev.room_type else "rooms"
                who = (f"{in_rooms[code]} attendees to seat ({sizes[code] - in_rooms[code]} more sit apart)"
                       if in_rooms[code] < sizes[code] else f"{sizes[code]} attendees")
                if room_splitting:
                    if in_rooms[code] > sum(caps):
                        reasons[s] = f"it has {who} and the {room_word} free in slot {s} seat {sum(caps)}"
                        continue
                elif in_rooms[code] > max(caps, default=0):
                    reasons[s] = (f"it has {who} and the largest of the {room_word} free in "
                                  f"slot {s} seats {max(caps, default=0)}")
                    continue
            if code in apart:
                short = _own_rooms_short(problem, slots, code, s, apart[code], found)
                if short:
                    reasons[s] = short
                    continue
            ok.add(s)
        allowed[code] = ok
        why[code] = reasons
    if problem.has_people:
        _people_domains(problem, slots, codes, allowed, why)
    return Domains(allowed, why)


def _own_rooms_short(problem: Problem, slots: list[Slot], code: str, s: int, apart: list[tuple[str, str]],
                     found: Availability | None) -> str | None:
    """Why ``code`` started in ``s`` leaves an attendee seated apart without a room of their type (None: it
    does not): no such room free for their whole sitting, or fewer free in slot ``s`` than they are."""
    away = {r.name: {t for ref in r.unavailable_slots if (t := problem.slot_number(ref, slots)) is not None}
            for r in problem.rooms}
    by_type: dict[str, list[str]] = {}
    for attendee, kind in apart:
        by_type.setdefault(kind.casefold(), []).append(attendee)
        sitting = (found.slots_taken(code, s, attendee) or found.slots_taken(code, s)) if found is not None else (s,)
        if not any((r.room_type or "").casefold() == kind.casefold() and r.capacity >= 1
                   and not away[r.name].intersection(sitting) for r in problem.rooms):
            held = f"slot {s}" if len(sitting) == 1 else f"slots {sitting[0]}-{sitting[-1]}"
            return f"{attendee} sits it alone in a room of type '{kind}' and none is free in {held}"
    for kind, names in by_type.items():
        n = sum(1 for r in problem.rooms if (r.room_type or "").casefold() == kind and r.capacity >= 1
                and s not in away[r.name])
        if len(names) > n:
            return (f"{len(names)} of its attendees sit it alone in rooms of type '{kind}' and only {n} such "
                    f"room(s) are free in slot {s}")
    return None


def needs_availability(problem: Problem, slots: list[Slot]) -> bool:
    """Whether the people's rules or an event longer than a slot are in play (else every event takes one
    slot and nobody's availability matters: the model is built as it always was)."""
    if problem.has_people:
        return True
    shortest = min((s.length_minutes for s in slots if s.length_minutes), default=None)
    return shortest is not None and any(e.duration_minutes and e.duration_minutes > shortest
                                        for e in problem.events.values())


def _required_events_by_attendee(problem: Problem, codes) -> dict[str, list[str]]:
    out: dict[str, list[str]] = {}
    for attendee, code in problem.required_enrolments():
        if code in codes:
            out.setdefault(attendee, []).append(code)
    return out


def _people_domains(problem: Problem, slots: list[Slot], codes, allowed: dict[str, set[int]],
                    why: dict[str, dict[int, str]]) -> None:
    """Take out of each event's slots those a required attendee cannot make, and those where too few
    attendees can come for its quorum (:class:`timetabler.availability.Availability`), naming them."""
    found = Availability.of(problem, slots)
    for code in codes:
        blocked = found.blocked.get(code, {})
        short = found.quorum_short.get(code, {})
        quorum = problem.events[code].quorum
        for s in sorted(allowed[code]):
            label = slots[s - 1].label
            if s in blocked:
                late = set(found.late.get(code, {}).get(s, ()))
                parts = []
                away = [n for n in blocked[s] if n not in late]
                if away:
                    who = ", ".join(away[:3]) + (f" and {len(away) - 3} more" if len(away) > 3 else "")
                    parts.append(f"{who} cannot make {label}")
                for name in sorted(late)[:3]:
                    person = problem.people.get(name)
                    percent = person.extra_time_percent if person is not None else 0
                    parts.append(f"{name}'s sitting with {percent} % extra time would run past the day's slots "
                                 f"from {label}")
                why[code][s] = "; ".join(parts)
                allowed[code].discard(s)
            elif s in short:
                why[code][s] = f"it needs {quorum} attendees free and only {short[s]} can make {label}"
                allowed[code].discard(s)


def optional_missed_by_slot(problem: Problem, slots: list[Slot], codes,
                            leave_out: set[tuple[str, str]] = frozenset()) -> dict[str, dict[int, int]]:
    """For each event, the starts (1-based) at which some of its optional attendees cannot come, with how
    many cannot: they cannot make a slot of their sitting (every slot a long event takes, extra time
    included), or their sitting does not fit the day.

    This is the part of the ``optional_missed`` goal that depends on one event's start alone. An optional
    attendee booked in another event at the same time is counted by :func:`_add_optional_busy`'s literal
    (the pairs in ``leave_out`` are counted there whole) and by the validator.
    """
    if not problem.optional:
        return {}
    found = Availability.of(problem, slots)
    out: dict[str, dict[int, int]] = {}
    wanted = set(codes)
    for attendee, code in problem.optional:
        if code not in wanted or (attendee, code) in leave_out:
            continue
        for s in _cannot_starts(problem, slots, attendee, code, found):
            per = out.setdefault(code, {})
            per[s] = per.get(s, 0) + 1
    return out


def _cannot_starts(problem: Problem, slots: list[Slot], attendee: str, code: str,
                   found: Availability | None = None) -> frozenset[int]:
    """The starts of ``code`` at which ``attendee`` cannot come (a slot of their sitting they cannot make,
    or a sitting that does not fit)."""
    found = found or Availability.of(problem, slots)
    away = found.unavailable.get(attendee, frozenset())
    out = set()
    for s in found.starts.get(code, ()):
        mine = found.slots_taken(code, s, attendee)
        if mine is None or away.intersection(mine):
            out.add(s)
    return frozenset(out)


def _booked_elsewhere(code: str, others: tuple[str, ...], held: dict, a: dict[str, int]) -> bool:
    """Whether one attendee's sitting at ``code`` meets their sitting at one of ``others`` in timetable ``a``
    (``held[(event, start)]``: the slots they hold at that event started there)."""
    if code not in a:
        return False
    mine = held[(code, a[code])]
    return any(c in a and held[(c, a[c])] & mine for c in others)


def _add_optional_busy(tm: "TimetableModel", problem: Problem, found: Availability, code_set: set[str],
                       objective: bool, domains: "Domains", rule_literal) -> None:
    """Optional attendees booked elsewhere: the part of quorums and of ``optional_missed`` that depends on
    two events' slots.

    For an optional attendee ``a`` of event ``e`` who has other events, ``busy[a, e]`` is forced to 1
    when a slot of their sitting at ``e`` is also a slot of their sitting at another of their events
    that they can come to (the validator's definition: an optional attendee is not free when booked
    elsewhere then; an optional attendance they cannot come to books nobody). It is
    only bounded from below: CP-SAT leaves it 0 where it may, since it only costs (the goal, the quorum).
    A quorum ``q`` of ``e`` started in ``s`` then reads: of the optional attendees who can make ``s``,
    at most ``free[e][s] - q`` may be busy.
    """
    m, x, k = tm.model, tm.x, tm.k
    events_of: dict[str, list[str]] = {}
    for a, c in problem.enrolments:
        if c in code_set:
            events_of.setdefault(a, []).append(c)
    goal = objective and problem.weights.optional_missed > 0
    for a, e in sorted(problem.optional):
        if e not in code_set or len(events_of.get(a, ())) < 2 or not (goal or problem.events[e].quorum):
            continue
        # the slots they hold at each of their events and starts; none where, optional, they cannot come
        held = {}
        for c in events_of[a]:
            cannot = _cannot_starts(problem, [], a, c, found) if (a, c) in problem.optional else frozenset()
            for s in range(1, k + 1):
                held[(c, s)] = frozenset() if s in cannot else frozenset(found.slots_taken(c, s, a)
                                                                         or found.slots_taken(c, s))
        busy = m.new_bool_var(f"busy[{a},{e}]")
        others = tuple(c for c in events_of[a] if c != e)
        for c in others:
            for t in range(1, k + 1):
                mine = [x[e][s - 1] for s in sorted(domains.allowed[e]) if t in held[(e, s)]]
                theirs = [x[c][s - 1] for s in sorted(domains.allowed[c]) if t in held[(c, s)]]
                if mine and theirs:
                    m.add(busy >= sum(mine) + sum(theirs) - 1)
        meaning = (e, others, held)
        tm.derived.append((busy.index, "busy", *meaning))
        tm.optional_busy[(a, e)] = (busy, meaning)
    for e in sorted(code_set):
        quorum = problem.events[e].quorum
        mine = [(a, v) for (a, c), (v, _) in tm.optional_busy.items() if c == e]
        if not quorum or not mine:
            continue
        lit = rule_literal(f"{e} needs {quorum} of its attendees free (an optional attendee booked in another "
                           "event then is not free)", "quorum")
        cannot = {a: _cannot_starts(problem, [], a, e, found) for a, _ in mine}
        for s in sorted(domains.allowed[e]):
            can = [v for a, v in mine if s not in cannot[a]]
            slack = found.free.get(e, {}).get(s, 0) - quorum
            if len(can) > slack:
                m.add(sum(can) <= max(slack, 0)).only_enforce_if([x[e][s - 1]] + ([lit] if lit is not None else []))



def _type_key(room_type: str | None) -> str | None:
    return room_type.casefold() if room_type else None


def _room_capacity_by_slot(problem: Problem, slots: list[Slot], *, shared_only: bool = False
                           ) -> dict[int, dict[str | None, list[tuple[int, bool]]]]:
    """(capacity, may be shared) of the rooms free in each slot, by room type (key None: every room).
    With ``shared_only`` (room sharing switched off) no room may be shared."""
    out: dict[int, dict[str | None, list[tuple[int, bool]]]] = {}
    for s in range(1, len(slots) + 1):
        by_type: dict[str | None, list[tuple[int, bool]]] = {None: []}
        for room in problem.rooms:
            if any(problem.slot_number(ref, slots) == s for ref in room.unavailable_slots):
                continue
            entry = (room.capacity, room.shared and not shared_only)
            by_type[None].append(entry)
            if room.room_type:
                by_type.setdefault(room.room_type.casefold(), []).append(entry)
        out[s] = by_type
    return out


def large_event_codes(sizes: dict[str, int]) -> set[str]:
    """The largest tenth of events by attendees (at least one), for the marking-time goal."""
    enrolled = sorted((n for n in sizes.values() if n > 0), reverse=True)
    if not enrolled:
        return set()
    cut = enrolled[max(1, math.ceil(len(enrolled) / 10)) - 1]
    return {c for c, n in sizes.items() if n >= cut and n > 0}


def slots_interchangeable(problem: Problem, slots: list[Slot], codes) -> bool:
    """Whether every permutation of the slots maps timetables to timetables (hard rules only)."""
    if len({(s.length_minutes, s.seat_capacity) for s in slots}) > 1:
        return False
    for code in codes:
        ev = problem.events[code]
        if (ev.fixed_slot and str(ev.fixed_slot).strip()) or ev.barred_slots:
            return False
    if any(room.unavailable_slots for room in problem.rooms):
        return False
    if needs_availability(problem, slots):  # people's unavailable slots and long events tell slots apart
        return False
    days = days_of(slots)
    one_day_each = len(set(days)) == len(days)
    for rule in problem.rules:
        if rule.kind is RuleKind.BEFORE:
            return False
        if rule.kind is RuleKind.DIFFERENT_DAYS and not one_day_each:
            return False
    if problem.max_per_day is not None and not one_day_each:
        return False
    return True


def build_model(
    problem: Problem,
    slots: list[Slot],
    graph: nx.Graph,
    codes: list[str],
    *,
    sizes: dict[str, int],
    domains: Domains,
    objective: bool = True,
    explain: bool = False,
    symmetry: list[str] | None = None,
    previous: dict[str, int] | None = None,
    large: set[str] | None = None,
    room_splitting: bool = False,
    room_sharing: bool = True,
    nogoods: list[list[tuple[str, int]]] | None = None,
    cover: list[list[Hashable]] | None = None,
    stop_at: float | None = None,
) -> TimetableModel:
    """Build the CP-SAT model for the events ``codes`` (a union of components of ``graph``).

    ``symmetry`` is a clique whose events are fixed to slots 1, 2, ...; pass it only when
    :func:`slots_interchangeable` holds and the objective does not depend on slot order.
    ``nogoods`` are sets of (event, start slot) pairs that must not all hold at once (a group of
    events found impossible to seat in the rooms, with every slot they take; the older form
    (slot, [events]) means those events all starting in that slot). ``explain`` gives every user rule its own assumption literal.
    ``stop_at`` (a ``time.perf_counter()`` time): raise :class:`BuildStopped` as soon as the
    building pace shows it would not end by then (a large model takes tens of seconds).
    """
    m = cp_model.CpModel()
    k = len(slots)
    code_set = set(codes)
    sub = graph.subgraph(codes)
    day = days_of(slots)
    x = {c: [m.new_bool_var(f"x[{c}][{s}]") for s in range(1, k + 1)] for c in codes}
    tm = TimetableModel(model=m, codes=list(codes), k=k, x=x, day=list(day), pairs=sub.number_of_edges())
    # occ[c][s]: event c holds slot s (its start, or a later slot of a long event's span); the clash, seat,
    # room and "alone" limits read occ, the goals and the other rules read the start x
    found = tm.found = Availability.of(problem, slots) if needs_availability(problem, slots) else None
    occ = {c: x[c] for c in codes}
    spans = found.spans if found is not None else {}
    for c in codes:
        if c in spans:
            held = [m.new_bool_var(f"occ[{c}][{s}]") for s in range(1, k + 1)]
            for t_ in range(1, k + 1):
                covering = [x[c][s - 1] for s in range(1, k + 1) if t_ in spans[c].get(s, (s,))]
                m.add(held[t_ - 1] == sum(covering))
            occ[c] = held

    def rule_literal(text: str, kind: str):
        if not explain:
            return None
        lit = m.new_bool_var(f"rule[{len(tm.rules)}]")
        tm.rules.append(RuleLiteral(lit, text, kind))
        m.add_assumption(lit)
        return lit

    def enforce(ct, lit):
        if lit is not None:
            ct.only_enforce_if(lit)
        return ct

    for c in codes:
        m.add_exactly_one(x[c])

    # physical limits (explain mode: one literal per event whose slots they restrict)
    for c in codes:
        banned = [s for s in range(1, k + 1) if s not in domains.allowed[c]]
        if not banned:
            continue
        reasons = domains.why_not[c]
        causes = list(dict.fromkeys(reasons[s] for s in banned if s in reasons))
        cause = "; ".join(causes[:3]) + (f"; and {len(causes) - 3} more reasons" if len(causes) > 3 else "")
        lit = rule_literal(f"{c} cannot go in slot(s) {_ranges(banned)}: {cause}", "physical")
        for s in banned:
            enforce(m.add(x[c][s - 1] == 0), lit)

    # no attendee double-booked: clique at-most-one per slot
    cliques = cover if cover is not None else clique_cover(sub)
    tm.cover_size = len(cliques)
    pair_goals = objective and k > 1 and any((problem.weights.back_to_back, problem.weights.overnight,
                                              problem.weights.same_day, problem.weights.proximity))
    # steps weighed by the constraints each adds: a clique one per slot, a pair about eight
    clock = tm.clock = _Clock(stop_at, len(cliques) * k + (tm.pairs * PAIR_STEP if pair_goals else 0))
    for clique in cliques:
        clock.step(k)
        if len(clique) < 2:
            continue
        # a clique of exactly K events fills every slot once (pigeonhole): exactly-one is valid and stronger
        tight = len(clique) == k
        for s in range(k):
            if tight and not spans:
                m.add_exactly_one(x[c][s] for c in clique)
            else:
                m.add_at_most_one(occ[c][s] for c in clique)
    if found is not None and found.sittings:
        # an attendee whose extra time takes the slot after the event's own: none of their other events there
        mine = _required_events_by_attendee(problem, code_set)
        for (attendee, c), own in found.sittings.items():
            if c not in code_set:
                continue
            for start, taken in own.items():
                if taken is None:
                    continue
                extra = set(taken) - set(found.slots_taken(c, start))
                for other in mine.get(attendee, ()):
                    if other != c:
                        for t_ in extra:
                            m.add(x[c][start - 1] + occ[other][t_ - 1] <= 1)

    if found is not None and problem.optional:
        _add_optional_busy(tm, problem, found, code_set, objective, domains, rule_literal)

    # fixed and barred slots
    for c in codes:
        ev = problem.events[c]
        if ev.fixed_slot is not None and str(ev.fixed_slot).strip():
            s = problem.slot_number(ev.fixed_slot, slots)
            lit = rule_literal(f"{c} is fixed to {_slot_name(slots, s, ev.fixed_slot)}", "fixed")
            if s is None:
                enforce(m.add_bool_or([]), lit)  # refers to no slot: cannot hold
            else:
                enforce(m.add(x[c][s - 1] == 1), lit)
        barred = sorted({n for ref in ev.barred_slots if (n := problem.slot_number(ref, slots)) is not None})
        if barred:
            lit = rule_literal(f"{c} may not go in slot(s) {_ranges(barred)}", "barred")
            for s in barred:
                enforce(m.add(x[c][s - 1] == 0), lit)

    t_cache: dict[str, cp_model.IntVar] = {}
    d_cache: dict[str, cp_model.IntVar] = {}

    def t(c: str):
        if c not in t_cache:
            v = m.new_int_var(1, max(k, 1), f"t[{c}]")
            m.add(v == sum((s + 1) * x[c][s] for s in range(k)))
            t_cache[c] = v
            tm.derived.append((v.index, "t", c))
        return t_cache[c]

    e_cache: dict[str, cp_model.IntVar] = {}
    tm.last = {c: {s: span[-1] for s, span in own.items()} for c, own in spans.items()}

    def end_of(c: str):
        """The last slot ``c`` takes: its start, or a long event's last slot."""
        if c not in tm.last:
            return t(c)
        if c not in e_cache:
            v = m.new_int_var(1, max(k, 1), f"end[{c}]")
            m.add(v == sum(tm.last[c].get(s + 1, s + 1) * x[c][s] for s in range(k)))
            e_cache[c] = v
            tm.derived.append((v.index, "end", c))
        return e_cache[c]

    def d(c: str):
        if c not in d_cache:
            v = m.new_int_var(min(day, default=1), max(day, default=1), f"d[{c}]")
            m.add(v == sum(day[s] * x[c][s] for s in range(k)))
            d_cache[c] = v
            tm.derived.append((v.index, "d", c))
        return d_cache[c]

    day_slots: dict[int, list[int]] = {}
    for s in range(k):
        day_slots.setdefault(day[s], []).append(s)

    # relations between events
    for rule in problem.rules:
        evs = [c for c in rule.events if c in code_set]
        if len(evs) != len(rule.events):
            continue  # rule belongs to another block, or names unknown events (intake reports those)
        lit = rule_literal(rule.describe(), rule.kind.value)
        if rule.kind is RuleKind.BEFORE:  # a long event ends (its last slot) before the other starts
            last = {s: max(taken) for s, taken in spans.get(evs[0], {}).items()}
            end = sum(last.get(s + 1, s + 1) * x[evs[0]][s] for s in range(k)) if last else t(evs[0])
            enforce(m.add(end + 1 <= t(evs[1])), lit)
        elif rule.kind is RuleKind.SAME_SLOT:
            for other in evs[1:]:
                for s in range(k):
                    enforce(m.add(x[evs[0]][s] == x[other][s]), lit)
        elif rule.kind is RuleKind.DIFFERENT_DAYS:
            for slot_list in day_slots.values():
                enforce(m.add(sum(x[c][s] for c in evs for s in slot_list) <= 1), lit)
        elif rule.kind is RuleKind.ALONE:
            e = evs[0]
            others = [c for c in codes if c != e]
            for s in range(k):
                if others:
                    cond = [occ[e][s]] + ([lit] if lit is not None else [])
                    m.add(sum(occ[c][s] for c in others) == 0).only_enforce_if(cond)

    # seats per slot, with the seats of extra-time sittings that run into the slot past their event's
    slot_tails = _tail_seats({}, found, x, code_set, {c: 1 for c in codes}) \
        if any(slot.seat_capacity is not None for slot in slots) else {}
    for s in range(k):
        cap = slots[s].seat_capacity
        if cap is None:
            continue
        load = [(sizes[c], occ[c][s]) for c in codes if sizes[c] > 0] + [(n, lit) for _, n, lit in slot_tails.get(s + 1, ())]
        if sum(n for n, _ in load) <= cap:
            continue
        lit = rule_literal(f"slot {s + 1} ({slots[s].label}) seats at most {cap}", "seats")
        enforce(m.add(sum(n * v for n, v in load) <= cap), lit)

    # rooms: seats of the rooms of each type free in each slot; attendees seated apart (Own room) sit in no
    # room of their event's, each holds a room of their type alone for their sitting
    if problem.rooms:
        caps = _room_capacity_by_slot(problem, slots, shared_only=not room_sharing)
        types = sorted({_type_key(problem.events[c].room_type) for c in codes}, key=lambda v: (v is not None, v or ""))
        apart = {c: v for c, v in seated_apart(problem).items() if c in code_set}
        seated = seats_in_rooms({c: sizes[c] for c in codes}, apart)
        holds = _own_room_holds(apart, found, x, k)
        late = _tail_seats(apart, found, x, code_set, seated)  # slot -> (event, seats, start literal)
        alone_by_kind: dict[str, list[str]] = {}
        spelled: dict[str, str] = {}  # the type as the Attendees sheet first wrote it
        for people in apart.values():
            for attendee, kind in people:
                alone_by_kind.setdefault(kind.casefold(), []).append(attendee)
                spelled.setdefault(kind.casefold(), kind)
        for kind, per_slot in sorted(holds.items()):
            names = sorted(set(alone_by_kind[kind]))
            who = ", ".join(names[:3]) + (f" and {len(names) - 3} more" if len(names) > 3 else "")
            for s in range(k):
                lits = per_slot.get(s + 1, [])
                rooms_free = sum(1 for cap, _ in caps[s + 1].get(kind, []) if cap >= 1)
                if len(lits) > rooms_free:
                    lit = rule_literal(f"slot {s + 1} has {rooms_free} room(s) of type '{spelled[kind]}' free, one "
                                       f"for each attendee who sits alone in one ({who})", "rooms")
                    enforce(m.add(sum(lits) <= rooms_free), lit)
        for s in range(k):
            for ty in types:
                members = [c for c in codes if seated[c] > 0
                           and (ty is None or _type_key(problem.events[c].room_type) == ty)]
                # extra-time seats held past an event's slots, each in one room of the event's type
                tails = [(n, lit) for c, n, lit in late.get(s + 1, ())
                         if ty is None or _type_key(problem.events[c].room_type) == ty]
                room_caps = caps[s + 1].get(ty, [])
                word = f"rooms of type '{ty}'" if ty else "rooms"
                # each attendee apart in these rooms takes a whole room: at least the smallest of its type
                own = [(min((cap for cap, _ in caps[s + 1].get(kind, [])), default=0), per_slot[s + 1])
                       for kind, per_slot in sorted(holds.items())
                       if (ty is None or kind == ty) and per_slot.get(s + 1)]
                own_most = sum(least * len(lits) for least, lits in own)
                total = sum(cap for cap, _ in room_caps)
                if sum(seated[c] for c in members) + own_most + sum(n for n, _ in tails) > total:
                    lit = rule_literal(f"the {word} free in slot {s + 1} seat {total}", "rooms")
                    enforce(m.add(sum(seated[c] * occ[c][s] for c in members)
                                  + sum(least * sum(lits) for least, lits in own)
                                  + sum(n * v for n, v in tails) <= total), lit)
                if (own or tails) and not any(shared for _, shared in room_caps):
                    # one room for each event, for each attendee apart and for each event's extra-time seats
                    count = sum(1 for cap, _ in room_caps if cap >= 1)
                    if len(members) + sum(len(lits) for _, lits in own) + len(tails) > count:
                        lit = rule_literal(f"slot {s + 1} has {count} {word} free, one event or one attendee "
                                           "apart per room", "rooms")
                        enforce(m.add(sum(occ[c][s] for c in members) + sum(sum(lits) for _, lits in own)
                                      + sum(v for _, v in tails) <= count), lit)
                if not room_splitting:
                    # Hall's condition: the events needing at least `need` seats cannot outnumber the places
                    # for them, a room of `cap` seats holding one such event, or cap // need when shared
                    # (exact without sharing for one room type, since the rooms an event fits are nested by size)
                    # (an event's extra-time seats past its slots take a place of their own: its room then)
                    items = [(seated[c], occ[c][s]) for c in members] + tails
                    needs = {cap + 1 for cap, _ in room_caps} | {min((n for n, _ in items), default=1)}
                    if any(shared for _, shared in room_caps):
                        needs |= {n for n, _ in items}
                    for need in sorted(needs):
                        big = [v for n, v in items if n >= need]
                        fits = sum((cap // need if shared else 1) for cap, shared in room_caps if cap >= need)
                        if len(big) > fits:
                            lit = rule_literal(f"slot {s + 1} has places for {fits} events with {need} seats or more "
                                               f"in its {word}", "rooms")
                            enforce(m.add(sum(big) <= fits), lit)
                elif not any(shared for _, shared in room_caps) and len(members) + len(tails) > len(room_caps):
                    # split events still take a room each, and no room takes two (extra-time seats: one room)
                    lit = rule_literal(f"slot {s + 1} has {len(room_caps)} {word} free, one event per room", "rooms")
                    enforce(m.add(sum(occ[c][s] for c in members) + sum(v for _, v in tails) <= len(room_caps)), lit)
    for cut in nogoods or ():
        if isinstance(cut, tuple) and len(cut) == 2 and isinstance(cut[0], int):  # (slot, events): one slot's group
            cut = [(c, cut[0]) for c in cut[1]]
        if cut and all(c in code_set for c, _ in cut):
            m.add(sum(x[c][start - 1] for c, start in cut) <= len(cut) - 1)

    # the cap on events per attendee per day
    if problem.max_per_day is not None and k:
        sets = _attendee_event_sets(problem, code_set)
        lit = rule_literal(f"no attendee may have more than {problem.max_per_day} events a day", "per day")
        for events in sets:
            if len(events) <= problem.max_per_day:
                continue
            for slot_list in day_slots.values():
                if len(slot_list) <= problem.max_per_day:
                    continue  # one event per slot: this day cannot exceed the cap
                enforce(m.add(sum(x[c][s] for c in events for s in slot_list) <= problem.max_per_day), lit)

    # slot symmetry
    if symmetry:
        for s, c in enumerate(symmetry[:k]):
            m.add(x[c][s] == 1)
        tm.symmetry_clique = list(symmetry[:k])

    if objective:
        _add_objective(tm, problem, slots, sub, day, t, d, previous or {}, large or set(), end_of)
    return tm


def _add_objective(tm: TimetableModel, problem, slots, sub, day, t, d, previous, large, end=None) -> None:
    m, x, k = tm.model, tm.x, tm.k
    w = problem.weights
    terms: dict[str, list[tuple[int, int, tuple]]] = {}
    plan = pair_plan(w, slots)
    if plan.any:
        _add_pair_goals(tm, sub, t, d, terms, w, plan, end or t)
    if w.large_late > 0:
        for c in tm.codes:
            if c in large:
                terms.setdefault("large_late", []).append((w.large_late, t(c).index, ("t", c)))
                tm.constant["large_late"] = tm.constant.get("large_late", 0) - w.large_late
    if w.preferred_slot > 0:
        for c in tm.codes:
            refs = problem.events[c].preferred_slots
            if not refs:
                continue
            wanted = frozenset(n for r in refs if (n := problem.slot_number(r, slots)) is not None)
            miss = m.new_bool_var(f"miss_preferred[{c}]")
            tm.derived.append((miss.index, "miss", c, wanted))
            m.add(sum(x[c][s - 1] for s in wanted) + miss == 1)
            terms.setdefault("preferred_slot", []).append((w.preferred_slot, miss.index, ("miss", c, wanted)))
    if w.penalised_slot > 0:
        for s, slot in enumerate(slots):
            if slot.penalised:
                for c in tm.codes:
                    terms.setdefault("penalised_slot", []).append((w.penalised_slot, x[c][s].index, ("in", c, s + 1)))
    if w.optional_missed > 0:
        dynamic = set(tm.optional_busy)  # pairs also missed when booked elsewhere: one literal each, below
        for c, per in optional_missed_by_slot(problem, slots, tm.codes, leave_out=dynamic).items():
            for s, count in sorted(per.items()):
                terms.setdefault("optional_missed", []).append(
                    (w.optional_missed * count, x[c][s - 1].index, ("in", c, s)))
        for (a, c), (busy, meaning) in sorted(tm.optional_busy.items()):
            cannot = _cannot_starts(problem, slots, a, c, tm.found)
            miss = m.new_bool_var(f"optional_missed[{a},{c}]")
            m.add(miss >= busy)
            if cannot:
                m.add(miss >= sum(x[c][s - 1] for s in sorted(cannot)))
            tm.derived.append((miss.index, "optmiss", *meaning, cannot))
            terms.setdefault("optional_missed", []).append(
                (w.optional_missed, miss.index, ("optmiss", *meaning, cannot)))
    if previous and w.moved > 0:
        for c in tm.codes:
            p = previous.get(c)
            if p is not None and 1 <= p <= k:
                terms.setdefault("moved", []).append((w.moved, -x[c][p - 1].index - 1, ("away", c, p)))
    tm.terms = terms
    if any(terms.values()):
        # written into the model in bulk (an expression of 10^5-10^6 terms is slow to build term by term);
        # a negated literal ref -i-1 (1 - x_i) becomes a constant and a negative coefficient
        merged: dict[int, int] = {}
        offset = sum(tm.constant.values())
        for name in terms:
            for coef, ref, _ in terms[name]:
                if ref < 0:
                    offset += coef
                    ref, coef = -ref - 1, -coef
                merged[ref] = merged.get(ref, 0) + coef
        objective = m.proto.objective
        objective.vars.extend(merged.keys())
        objective.coeffs.extend(merged.values())
        objective.offset = float(offset)
        objective.scaling_factor = 1.0


def proximity_steps() -> list[tuple[int, int]]:
    """Carter's weights as steps over nested distance classes.

    A pair ``g`` slots apart costs ``PROXIMITY_WEIGHTS[g - 1]``; that equals the sum of
    ``step`` over the classes "at most ``d`` apart" with ``d >= g`` (``step`` = the weight
    at ``d`` minus the weight at ``d + 1``), so one literal per class and a positive
    coefficient each express the cost exactly, with no integer variable per pair.

    >>> proximity_steps()
    [(1, 8), (2, 4), (3, 2), (4, 1), (5, 1)]
    >>> sum(step for d, step in proximity_steps() if d >= 2) == PROXIMITY_WEIGHTS[1]
    True
    """
    weights = list(PROXIMITY_WEIGHTS) + [0]
    return [(d, weights[d - 1] - weights[d]) for d in range(1, len(PROXIMITY_WEIGHTS) + 1)
            if weights[d - 1] != weights[d]]


@dataclass
class PairPlan:
    """What the pair goals in force need of each clashing pair (nothing for a goal weighted 0)."""

    want_b2b: bool
    want_over: bool
    want_two: bool
    want_prox: bool
    one_day_each: bool
    at_most_two_a_day: bool
    monotone: bool  # days never go back as slots go on
    steps: list[tuple[int, int]]  # Carter classes (distance, step) that some pairs can fall outside
    always: int  # Carter steps every pair pays (classes as wide as the whole session)
    classes: list[int]  # distance classes with a literal each

    @property
    def any(self) -> bool:
        return self.want_b2b or self.want_over or self.want_two or self.want_prox

    @property
    def need_sday(self) -> bool:
        return not self.one_day_each and (self.want_b2b or self.want_two or self.want_over)

    def variables_per_pair(self) -> int:
        """CP-SAT variables one clashing pair costs."""
        if not self.any:
            return 0
        n = 1 + (len(self.classes) > 1) + len(self.classes)  # before, gap, near<d>
        if self.need_sday:
            n += 1 + (self.want_b2b and not self.at_most_two_a_day) + self.want_over + self.want_two
        return n


def pair_plan(weights, slots: list[Slot]) -> PairPlan:
    """The per-pair variables the goals weighted above 0 need with these slots."""
    k = len(slots)
    day = days_of(slots)
    one_day_each = len(set(day)) == len(day)
    # a pair of consecutive slots exists on one day / across a day boundary?
    same_day_adjacent = any(day[s] == day[s + 1] for s in range(k - 1))
    cross_day_adjacent = any(day[s] != day[s + 1] for s in range(k - 1))
    per_day_count: dict[int, int] = {}
    for dd in day:
        per_day_count[dd] = per_day_count.get(dd, 0) + 1
    # two events of one day are then always back-to-back, provided each day's slots follow one another
    runs = sum(1 for s in range(k) if s == 0 or day[s] != day[s - 1])
    at_most_two_a_day = max(per_day_count.values(), default=0) <= 2 and runs == len(per_day_count)
    want_b2b = weights.back_to_back > 0 and same_day_adjacent
    want_over = weights.overnight > 0 and cross_day_adjacent
    want_two = weights.same_day > 0 and not one_day_each and not at_most_two_a_day
    want_prox = weights.proximity > 0 and k > 1
    # a class "at most k - 1 apart" or wider holds for every pair: its cost is a constant
    steps = [(dist, step) for dist, step in proximity_steps() if dist < k - 1] if want_prox else []
    always = sum(step for dist, step in proximity_steps() if dist >= k - 1) if want_prox else 0
    classes = sorted({dist for dist, _ in steps} | ({1} if (want_b2b and not at_most_two_a_day) or want_over
                                                     or want_two else set()))
    return PairPlan(want_b2b=want_b2b, want_over=want_over, want_two=want_two, want_prox=want_prox,
                    one_day_each=one_day_each, at_most_two_a_day=at_most_two_a_day,
                    monotone=all(day[s] <= day[s + 1] for s in range(k - 1)), steps=steps, always=always,
                    classes=classes)


def model_memory_mb(k: int, cover_literals: int, pairs: int, plan: PairPlan | None, workers: int) -> float:
    """Peak resident memory of the whole process, in MiB, for a model of ``k`` slots whose clique cover holds
    ``cover_literals`` events in all, with the pair goals of ``plan`` on ``pairs`` clashing pairs, solved
    by ``workers`` CP-SAT workers.

    Fitted on pur-s-93 (2,419 exams, 86,261 pairs, 42 slots, OR-Tools 9.15, presolve off as
    :func:`.solve._parameters` sets it for large models): the Python side costs about 30 bytes a
    cover literal and slot and 0.7 KB a pair variable, each CP-SAT worker about 50 bytes and 2 KB
    (no goals: 0.86 GB with 2 workers; proximity: 2.0 GB with 1 worker, 3.6 GB with 2). An
    estimate to choose the workers and whether to build the goal model at all, not a bound.
    """
    slots_literals = cover_literals * k
    pair_vars = pairs * (plan.variables_per_pair() if plan is not None else 0)
    return 180 + slots_literals * (30 + 52 * workers) / 1e6 + pair_vars * (0.69 + 1.95 * workers) / 1e3


def _add_pair_goals(tm: TimetableModel, sub, t, d, terms, weights, plan: PairPlan, end=None) -> None:
    """The goals that count pairs of clashing events: Booleans, and at most one small integer a pair.

    Per pair (``a``, ``b``, sharing ``c`` attendees, so weighing ``c`` in every goal):

    * ``before[a,b]``: ``t(a) < t(b)`` (they clash, so never equal); it picks the side of
      every distance inequality below, which CP-SAT propagates as plain precedences;
    * ``near<d>[a,b]``: at most ``d`` slots apart, one per distance class a goal needs
      (1 for consecutive slots; 1 to 5 for Carter's proximity, by :func:`proximity_steps`);
    * ``gap[a,b]``, with two classes or more: an integer in 1..(widest class + 1), at most
      the slot distance; "not near<d>" is then the single implication ``gap >= d + 1``, and
      ``gap >= 1`` on the side ``before`` picks orders the pair (7 constraints a pair for
      the proximity goal instead of 12);
    * ``sday[a,b]`` (same day), ``b2b``, ``over``, ``twoday``: the day goals.

    Every literal is minimised with a positive weight, so only the implication that forces
    it up is needed ("not near -> far apart"); the converse is added only where another
    literal uses it negated (consecutive for two-in-a-day, same day for overnight). The
    penalty is therefore read from the timetable itself (:meth:`TimetableModel.evaluate`),
    not from these literals, which may be 1 needlessly in a timetable that is not optimal.
    """
    m = tm.model
    classes, steps, always, monotone = plan.classes, plan.steps, plan.always, plan.monotone
    want_b2b, want_over, want_two = plan.want_b2b, plan.want_over, plan.want_two
    cap = max(classes, default=0) + 1  # a gap variable needs no value beyond the widest class
    exact_near1 = want_two
    need_sday = plan.need_sday
    exact_sday = want_over
    at_most_two_a_day = plan.at_most_two_a_day
    named = tm.pairs <= NAMED_PAIRS

    def var(family: str, a, b):  # every family is named in the docstring; each literal only on small models
        return m.new_bool_var(f"{family}[{a},{b}]" if named else "")

    end = end or t
    for a, b, shared in sub.edges(data="shared", default=1):
        tm.clock.step(PAIR_STEP)
        c = int(shared or 1)
        if always:
            tm.constant["proximity"] = tm.constant.get("proximity", 0) + c * always * weights.proximity
        # distances run from the last slot of the earlier event (a long event's end) to the later's start
        ta, tb, ea, eb = t(a), t(b), end(a), end(b)
        before = var("before", a, b)
        tm.derived.append((before.index, "before", a, b))
        gap = None
        if len(classes) > 1:
            # gap[a,b] in 1..D+1 is at most the slot distance (so `before` needs no constraint of its own:
            # gap >= 1 forces the order it names); each class then costs one implication on gap
            gap = m.new_int_var(1, cap, f"gap[{a},{b}]" if named else "")
            tm.derived.append((gap.index, "gap", a, b, cap))
            m.add(gap <= tb - ea).only_enforce_if(before)
            m.add(gap <= ta - eb).only_enforce_if(~before)
        else:
            m.add(tb - ea >= 1).only_enforce_if(before)
            m.add(ta - eb >= 1).only_enforce_if(~before)
        near: dict[int, cp_model.IntVar] = {}
        for dist in classes:
            v = near[dist] = var(f"near{dist}", a, b)
            tm.derived.append((v.index, "near", a, b, dist))
            if gap is not None:
                m.add(gap >= dist + 1).only_enforce_if(~v)
            else:
                m.add(tb - ea >= dist + 1).only_enforce_if([~v, before])
                m.add(ta - eb >= dist + 1).only_enforce_if([~v, ~before])
            if dist == 1 and exact_near1:
                m.add(tb - ea <= 1).only_enforce_if([v, before])
                m.add(ta - eb <= 1).only_enforce_if([v, ~before])
        for dist, step in steps:
            terms.setdefault("proximity", []).append((c * step * weights.proximity, near[dist].index,
                                                      ("near", a, b, dist)))
        sday = None
        if need_sday:
            da, db = d(a), d(b)
            sday = var("sday", a, b)
            tm.derived.append((sday.index, "sday", a, b))
            if monotone:
                m.add(db - da >= 1).only_enforce_if([~sday, before])
                m.add(da - db >= 1).only_enforce_if([~sday, ~before])
            else:
                m.add(da != db).only_enforce_if(~sday)
            if exact_sday:
                m.add(da == db).only_enforce_if(sday)
        if want_b2b and sday is not None:
            if at_most_two_a_day:  # two events of one day are then always in consecutive slots
                v = sday
            else:
                v = var("b2b", a, b)
                tm.derived.append((v.index, "b2b", a, b))
                m.add_bool_or([~near[1], ~sday, v])
            terms.setdefault("back_to_back", []).append((c * weights.back_to_back, v.index, ("b2b", a, b)))
        if want_over:
            if sday is None:  # every slot its own day: consecutive slots are consecutive days
                v = near[1]
            else:
                v = var("over", a, b)
                tm.derived.append((v.index, "over", a, b))
                m.add_bool_or([~near[1], sday, v])
            terms.setdefault("overnight", []).append((c * weights.overnight, v.index, ("over", a, b)))
        if want_two and sday is not None:
            v = var("twoday", a, b)
            tm.derived.append((v.index, "twoday", a, b))
            m.add_bool_or([~sday, near[1], v])
            terms.setdefault("same_day", []).append((c * weights.same_day, v.index, ("twoday", a, b)))


def _own_room_holds(apart: dict[str, list[tuple[str, str]]], found: Availability | None, x, k: int
                    ) -> dict[str, dict[int, list]]:
    """Own room type (folded) -> slot -> one start literal ``x[c][start]`` per (attendee apart, event, start)
    whose sitting holds that slot (extra time included): summed, the attendees apart holding rooms of that type
    in that slot (each attendee's event has one start)."""
    out: dict[str, dict[int, list]] = {}
    for c, people in sorted(apart.items()):
        for attendee, kind in people:
            per = out.setdefault(kind.casefold(), {})
            for start in range(1, k + 1):
                sitting = ((found.slots_taken(c, start, attendee) or found.slots_taken(c, start))
                           if found is not None else (start,))
                for t_ in sitting:
                    per.setdefault(t_, []).append(x[c][start - 1])
    return out


def _tail_seats(apart: dict[str, list[tuple[str, str]]], found: Availability | None, x, code_set: set[str],
                seated: dict[str, int]) -> dict[int, list[tuple[str, int, object]]]:
    """Slot -> (event, seats, start literal ``x[c][start]``) for every event and start whose attendees seated
    with it (not apart) have an extra-time sitting running into that slot past the event's own: the seats
    they keep in the event's room then (one room, :func:`.rooms.tail_room`)."""
    out: dict[int, list[tuple[str, int, object]]] = {}
    if found is None or not found.sittings:
        return out
    counts: dict[tuple[str, int, int], int] = {}
    for (attendee, c), own in found.sittings.items():
        if c not in code_set or seated.get(c, 0) <= 0 or any(a == attendee for a, _ in apart.get(c, ())):
            continue
        for start, taken in own.items():
            if taken is None:
                continue
            span = found.slots_taken(c, start) or (start,)
            for t_ in taken:
                if t_ not in span:
                    counts[(c, start, t_)] = counts.get((c, start, t_), 0) + 1
    for (c, start, t_), n in sorted(counts.items()):
        out.setdefault(t_, []).append((c, n, x[c][start - 1]))
    return out


def _attendee_event_sets(problem: Problem, code_set: set[str]) -> list[tuple[str, ...]]:
    """Distinct event sets of attendees (within ``code_set``), dropping sets inside larger ones.

    Attendees with the same events weigh one set; a set inside another needs no constraint of
    its own (a cap that holds for the larger set holds for it). Larger sets come first, and a
    set can only lie inside a kept set that holds its rarest event, so each check looks at a
    few candidates rather than at every kept set.
    """
    by: dict[str, set[str]] = {}
    for a, c in problem.enrolments:
        if c in code_set:
            by.setdefault(a, set()).add(c)
    sets = sorted({frozenset(v) for v in by.values()}, key=lambda v: (-len(v), sorted(v)))
    kept: list[frozenset[str]] = []
    holding: dict[str, list[int]] = {}  # event -> the kept sets holding it
    for events in sets:
        rarest = min(events, key=lambda c: len(holding.get(c, ())))
        if any(events <= kept[i] for i in holding.get(rarest, ())):
            continue
        for c in events:
            holding.setdefault(c, []).append(len(kept))
        kept.append(events)
    return [tuple(sorted(v)) for v in kept]


def _slot_name(slots: list[Slot], s: int | None, ref: str) -> str:
    if s is None:
        return f"'{ref}' (which is not one of the {len(slots)} slots)"
    return f"slot {s} ({slots[s - 1].label})"


def _ranges(numbers: list[int]) -> str:
    out: list[str] = []
    start = prev = None
    for n in numbers:
        if start is None:
            start = prev = n
        elif n == prev + 1:
            prev = n
        else:
            out.append(str(start) if start == prev else f"{start}-{prev}")
            start = prev = n
    if start is not None:
        out.append(str(start) if start == prev else f"{start}-{prev}")
    return ", ".join(out)
