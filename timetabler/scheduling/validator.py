"""An independent check of a timetable against the raw enrolments and every rule.

This module shares no code with the CP-SAT model (:mod:`.cpsat_model`): it walks the
enrolment list attendee by attendee, resolves every rule again, and recounts every
soft-goal occurrence from scratch. The solver's own account of its penalty is compared
with these counts in the tests, so a mistake in either shows up as a disagreement.

Soft-goal counts (``Validation.soft``), all per attendee and pair of that attendee's events:

``back_to_back``
    two events in consecutive slots of the same day;
``overnight``
    the last slot of one day and the first slot of the next day;
``same_day``
    two events on the same day in slots that are not consecutive;
``proximity``
    the Carter proximity cost: 16, 8, 4, 2, 1 for events 1, 2, 3, 4, 5 slots apart
    (Carter, Laporte & Lee, "Examination timetabling: algorithmic strategies and
    applications", J. Oper. Res. Soc. 47 (1996) 373-383), summed over attendees;
``large_late``
    for each large event (the largest tenth by attendees), the number of slots it sits
    after the first;
``preferred_slot``
    events with preferred slots placed in none of them;
``penalised_slot``
    events placed in a slot marked as penalised;
``room_split``
    extra rooms used by events spread over more than one room;
``moved``
    events placed in a different slot than in the previous timetable;
``preferred_room``
    seated events with preferred rooms that have no seats in any of them;
``penalised_room``
    (event, room) pairs in which the room is marked Avoid.

Room names are compared without regard to case, as the rooms sheet is read.

Time is read here afresh from the slots themselves, not from their numbers (see
:func:`_timeline`): slots are put in order by date (or by day number when there are no
dates) and start time, days are the dates, and "consecutive", "same day", "before" and
the distance of the proximity cost follow that order. Slots numbered against the calendar
are reported as a violation, so a timetable whose slot numbers do not run with time (the
model takes consecutive numbers as consecutive slots) cannot pass.

Rooms: a room holds several events in one slot when their attendees fit in its seats
(whatever their lengths), unless sharing is switched off or the room is marked not shared.
"""

from __future__ import annotations

import math
from collections import defaultdict
from dataclasses import dataclass, field
from typing import Mapping, Sequence

from ..model import Problem, RuleKind, Slot

#: Carter, Laporte & Lee (1996): weight of two events of one attendee ``gap`` slots apart.
CARTER_WEIGHTS = {1: 16, 2: 8, 3: 4, 4: 2, 5: 1}


@dataclass
class Validation:
    """The verdict on one timetable."""

    ok: bool
    violations: list[str] = field(default_factory=list)
    soft: dict[str, int] = field(default_factory=dict)
    attendee_load: dict[str, dict[str, int]] = field(default_factory=dict)
    penalty: int = 0

    def to_json(self) -> dict:
        return {"ok": self.ok, "violations": list(self.violations), "soft": dict(self.soft), "penalty": self.penalty}


def validate(
    problem: Problem,
    slots: Sequence[Slot],
    assignment: Mapping[str, int],
    rooms: Mapping[str, Sequence[tuple[str, int]]] | None = None,
    *,
    previous: Mapping[str, int] | None = None,
    room_sharing: bool = True,
    room_splitting: bool = False,
) -> Validation:
    """Check ``assignment`` (event code -> slot 1..K) against ``problem`` and recount soft goals.

    Parameters
    ----------
    problem, slots
        The instance and the slots the timetable uses (slot numbers are 1-based positions).
    assignment
        Slot number of every event.
    rooms
        Event -> [(room name, seats)]; checked when the problem has rooms.
    previous
        An earlier timetable: events placed elsewhere now are counted as ``moved``.
    room_sharing, room_splitting
        Whether several events may share a room (within its seats; rooms with
        ``shared=False`` never) and whether an event may be spread over several rooms.

    Examples
    --------
    >>> from timetabler.model import Problem, generic_slots
    >>> p = Problem([("ann", "A"), ("ann", "B")])
    >>> validate(p, generic_slots(2), {"A": 1, "B": 1}).violations
    ['ann is booked twice in slot 1 (Slot 1): A and B']
    >>> validate(p, generic_slots(2), {"A": 1, "B": 2}).ok
    True
    """
    k = len(slots)
    violations: list[str] = []
    rank, day = _timeline(slots)

    def label(s: int) -> str:
        return f"slot {s} ({slots[s - 1].label})" if 1 <= s <= k else f"slot {s}"

    for s in range(2, k + 1):
        if rank[s - 1] < rank[s - 2]:
            violations.append(f"the slots are not numbered in time order: {label(s)} comes before {label(s - 1)}")
            break

    # every event placed once, in a real slot
    placed: dict[str, int] = {}
    for code in sorted(problem.events):
        s = assignment.get(code)
        if s is None:
            violations.append(f"{code} has no slot")
            continue
        if not isinstance(s, int) or not 1 <= s <= k:
            violations.append(f"{code} is in slot {s!r}, which is not one of the {k} slots")
            continue
        placed[code] = s
    for code in assignment:
        if code not in problem.events:
            violations.append(f"{code} is in the timetable but not in the enrolments or events")

    # attendees: no one booked twice; the per-day cap; soft counts
    by_attendee: dict[str, list[str]] = defaultdict(list)
    for attendee, code in problem.enrolments:
        by_attendee[attendee].append(code)
    soft = {name: 0 for name in (
        "back_to_back", "overnight", "same_day", "proximity", "large_late",
        "preferred_slot", "penalised_slot", "room_split", "moved", "preferred_room", "penalised_room")}
    load: dict[str, dict[str, int]] = {}
    for attendee in sorted(by_attendee):
        mine = sorted((rank[placed[c] - 1], placed[c], c) for c in by_attendee[attendee] if c in placed)
        per_slot: dict[int, list[str]] = defaultdict(list)
        per_day: dict[int, int] = defaultdict(int)
        for _, s, c in mine:
            per_slot[s].append(c)
            per_day[day[s - 1]] += 1
        for s, codes in sorted(per_slot.items()):
            if len(codes) > 1:
                violations.append(f"{attendee} is booked twice in {label(s)}: {' and '.join(sorted(codes))}")
        if problem.max_per_day is not None:
            for d, n in sorted(per_day.items()):
                if n > problem.max_per_day:
                    violations.append(
                        f"{attendee} has {n} events on day {d}, more than the limit of {problem.max_per_day}")
        for i in range(len(mine)):
            for j in range(i + 1, len(mine)):
                (rs, s, _), (rt, t, _) = mine[i], mine[j]
                gap = rt - rs  # slots apart in time, not in numbering
                if s == t:
                    continue
                if day[s - 1] == day[t - 1]:
                    if gap == 1:
                        soft["back_to_back"] += 1
                    else:
                        soft["same_day"] += 1
                elif gap == 1:
                    soft["overnight"] += 1
                soft["proximity"] += CARTER_WEIGHTS.get(gap, 0)
        load[attendee] = {"events": len(mine), "most_in_one_day": max(per_day.values(), default=0)}

    # events: fixed and barred slots, length, preferred and penalised slots
    sizes: dict[str, int] = {code: 0 for code in problem.events}
    for _, code in problem.enrolments:
        sizes[code] += 1
    for code, event in sorted(problem.events.items()):
        s = placed.get(code)
        if s is None:
            continue
        if event.fixed_slot is not None and str(event.fixed_slot).strip():
            want = problem.slot_number(event.fixed_slot, slots)
            if want is None:
                violations.append(f"{code} is fixed to '{event.fixed_slot}', which is not a slot")
            elif want != s:
                violations.append(f"{code} is fixed to {label(want)} but placed in {label(s)}")
        for ref in event.barred_slots:
            if problem.slot_number(ref, slots) == s:
                violations.append(f"{code} is placed in {label(s)}, which is barred for it")
        length = slots[s - 1].length_minutes
        if event.duration_minutes is not None and length is not None and event.duration_minutes > length:
            violations.append(
                f"{code} lasts {event.duration_minutes} minutes but {label(s)} is {length} minutes long")
        if event.preferred_slots:
            wanted = {problem.slot_number(r, slots) for r in event.preferred_slots}
            if s not in wanted:
                soft["preferred_slot"] += 1
        if slots[s - 1].penalised:
            soft["penalised_slot"] += 1

    # large events late: the largest tenth of events by attendees (at least one event)
    enrolled = sorted((n for n in sizes.values() if n > 0), reverse=True)
    if enrolled:
        cut = enrolled[max(1, math.ceil(len(enrolled) / 10)) - 1]
        for code, n in sizes.items():
            if n >= cut and code in placed:
                soft["large_late"] += rank[placed[code] - 1]

    # seats per slot
    seats_in: dict[int, int] = defaultdict(int)
    for code, s in placed.items():
        seats_in[s] += sizes[code]
    for s in range(1, k + 1):
        cap = slots[s - 1].seat_capacity
        if cap is not None and seats_in[s] > cap:
            violations.append(f"{label(s)} seats {seats_in[s]} attendees, more than its {cap} seats")

    _check_rules(problem, slots, placed, rank, day, label, violations)
    if problem.rooms:
        _check_rooms(problem, slots, placed, sizes, rooms, room_sharing, room_splitting, label, violations, soft)

    if previous:
        soft["moved"] = sum(1 for code, s in placed.items() if code in previous and previous[code] != s)

    w = problem.weights
    penalty = (
        w.back_to_back * soft["back_to_back"] + w.overnight * soft["overnight"] + w.same_day * soft["same_day"]
        + w.proximity * soft["proximity"] + w.large_late * soft["large_late"]
        + w.preferred_slot * soft["preferred_slot"] + w.penalised_slot * soft["penalised_slot"]
        + w.room_split * soft["room_split"] + w.moved * soft["moved"]
        + w.preferred_room * soft["preferred_room"] + w.penalised_room * soft["penalised_room"]
    )
    return Validation(ok=not violations, violations=violations, soft=soft, attendee_load=load, penalty=penalty)


def _timeline(slots: Sequence[Slot]) -> tuple[list[int], list[int]]:
    """Each slot's place in time (0 for the earliest) and its day (1 for the first day), read from
    the slots' dates, day numbers and start times rather than from their positions in the list.

    Days are the dates when every slot has one, else the Day numbers when every slot has one,
    else every slot is a day of its own. Within a day, slots go by start time when all of that
    day's slots have one, else in list order; days go in calendar (or number) order; slots that
    have neither dates nor day numbers keep the list order.
    """
    k = len(slots)
    if k and all(sl.date is not None for sl in slots):
        day_key: list = [sl.date for sl in slots]
    elif k and all(sl.day is not None for sl in slots) and not any(sl.date is not None for sl in slots):
        day_key = [int(sl.day) for sl in slots]
    else:
        return list(range(k)), list(range(1, k + 1))
    timed_days = {dk for dk in day_key}
    for sl, dk in zip(slots, day_key):
        if sl.start is None:
            timed_days.discard(dk)

    def when(i: int) -> tuple:
        sl = slots[i]
        minute = sl.start.hour * 60 + sl.start.minute + sl.start.second / 60 if day_key[i] in timed_days else 0
        return (day_key[i], minute, i)

    rank = [0] * k
    for place, i in enumerate(sorted(range(k), key=when)):
        rank[i] = place
    day_number = {dk: n for n, dk in enumerate(sorted(set(day_key)), start=1)}
    return rank, [day_number[dk] for dk in day_key]


def _check_rules(problem, slots, placed, rank, day, label, violations) -> None:
    for rule in problem.rules:
        missing = [c for c in rule.events if c not in problem.events]
        if missing:
            violations.append(f"rule '{rule.describe()}' names unknown events: {', '.join(missing)}")
            continue
        ss = [placed.get(c) for c in rule.events]
        if any(s is None for s in ss):
            continue
        if rule.kind is RuleKind.BEFORE:
            if not rank[ss[0] - 1] < rank[ss[1] - 1]:
                violations.append(f"rule broken: {rule.describe()} ({rule.events[0]} in {label(ss[0])}, "
                                  f"{rule.events[1]} in {label(ss[1])})")
        elif rule.kind is RuleKind.SAME_SLOT:
            if len(set(ss)) > 1:
                violations.append(f"rule broken: {rule.describe()} (slots {', '.join(map(str, ss))})")
        elif rule.kind is RuleKind.DIFFERENT_DAYS:
            days = [day[s - 1] for s in ss]
            if len(set(days)) < len(days):
                violations.append(f"rule broken: {rule.describe()} (days {', '.join(map(str, days))})")
        elif rule.kind is RuleKind.ALONE:
            s = ss[0]
            others = sorted(c for c, t in placed.items() if t == s and c != rule.events[0])
            if others:
                violations.append(f"rule broken: {rule.describe()} ({label(s)} also holds {', '.join(others[:5])})")


def _check_rooms(problem, slots, placed, sizes, rooms, sharing, splitting, label, violations, soft) -> None:
    if rooms is None:
        violations.append("the problem has rooms but the timetable gives none")
        return
    by_name = {r.name: r for r in problem.rooms}
    use: dict[tuple[str, int], list[tuple[str, int]]] = defaultdict(list)
    for code, s in placed.items():
        given = list(rooms.get(code, []))
        if sizes[code] == 0 and not given:
            continue
        seated = 0
        for name, seats in given:
            room = by_name.get(name)
            if room is None:
                violations.append(f"{code} is seated in '{name}', which is not a room")
                continue
            if seats <= 0:
                violations.append(f"{code} has {seats} seats in {name}")
            seated += seats
            use[(name, s)].append((code, seats))
            want_type = problem.events[code].room_type
            if want_type and (room.room_type or "").casefold() != want_type.casefold():
                violations.append(f"{code} needs a room of type '{want_type}' but {name} is '{room.room_type}'")
            if any(problem.slot_number(ref, slots) == s for ref in room.unavailable_slots):
                violations.append(f"{code} is in {name} in {label(s)}, when {name} is not available")
        if seated != sizes[code]:
            violations.append(f"{code} has {sizes[code]} attendees but {seated} seats in rooms")
        if given:
            in_rooms = [by_name[name] for name, _ in given if name in by_name]
            preferred = [ref.strip().casefold() for ref in problem.events[code].preferred_rooms]
            if preferred and not any(room.name.strip().casefold() in preferred for room in in_rooms):
                soft["preferred_room"] += 1
            soft["penalised_room"] += sum(1 for room in in_rooms if room.penalised)
        if len(given) > 1:
            if not splitting:
                violations.append(f"{code} is split over {len(given)} rooms, and splitting is not allowed")
            soft["room_split"] += len(given) - 1
    for (name, s), holders in sorted(use.items()):
        room = by_name[name]
        total = sum(n for _, n in holders)
        if total > room.capacity:
            violations.append(f"{name} holds {total} attendees in {label(s)}, more than its {room.capacity} seats")
        codes = sorted({c for c, _ in holders})
        if len(codes) > 1:
            if not sharing:
                violations.append(f"{name} holds {', '.join(codes)} together in {label(s)}, and sharing is not allowed")
            elif not room.shared:
                violations.append(f"{name} holds {', '.join(codes)} together in {label(s)}, but it is marked "
                                  "as not shared")
