"""The slots each event may take before any model is built, and the facts of the slots the models read.

:func:`physical_domains` takes out of each event's slots those it cannot physically take (its length,
the slot's seats, the rooms free then, a room for each attendee seated apart) and those its required
attendees cannot make or where too few can come for its quorum, with the reason for each. The CP-SAT
model (:mod:`.cpsat_model`), the local search's state (:mod:`.penalty_state`) and the block solver
(:mod:`.block_solver`) read them, with the rooms free in each slot (:func:`_room_capacity_by_slot`), the
starts an optional attendee cannot make (:func:`_cannot_starts`) and whether the slots are alike
(:func:`slots_interchangeable`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..availability import Availability
from ..model import Problem, RuleKind, Slot, days_of
from .rooms import seated_apart, seats_in_rooms


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
    away = {name: set(numbers) for name, numbers in problem.slot_refs(slots).room_unavailable.items()}
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
    attendee booked in another event at the same time is counted by :func:`.cpsat_rules._add_optional_busy`'s literal
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


def _type_key(room_type: str | None) -> str | None:
    return room_type.casefold() if room_type else None


def _room_capacity_by_slot(problem: Problem, slots: list[Slot], *, shared_only: bool = False
                           ) -> dict[int, dict[str | None, list[tuple[int, bool]]]]:
    """(capacity, may be shared) of the rooms free in each slot, by room type (key None: every room).
    With ``shared_only`` (room sharing switched off) no room may be shared."""
    out: dict[int, dict[str | None, list[tuple[int, bool]]]] = {}
    refs = problem.slot_refs(slots)
    for s in range(1, len(slots) + 1):
        by_type: dict[str | None, list[tuple[int, bool]]] = {None: []}
        for room in problem.rooms:
            if not refs.room_free(room.name, s):
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


def optional_links(problem: Problem) -> list[list[str]]:
    """The events of each attendee who is optional somewhere and has more than one event: whether they are
    free at one depends on the slots of the others (a quorum, the ``optional_missed`` goal)."""
    if not problem.optional:
        return []
    events_of: dict[str, list[str]] = {}
    for a, c in problem.enrolments:
        events_of.setdefault(a, []).append(c)
    return [sorted(events_of[a]) for a in sorted({a for a, _ in problem.optional}) if len(events_of[a]) > 1]
