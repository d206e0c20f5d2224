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
    (event, room) pairs in which the room is marked Avoid;
``optional_missed``
    (optional attendee, event) pairs where the attendee cannot make a slot the event takes for
    them, or is booked (required or optional) in another event taking an overlapping slot for them.

The order goals (back-to-back, overnight, same day, proximity) and double bookings count
required enrolments only (optional ones make no clash); a long event counts from the slots it
takes: two events of an attendee are ``gap`` slots apart from the last slot of the earlier to
the first slot of the later (an event taking slots 2-3 is back-to-back with one in slot 4), on
the same day when those two slots are. The event's own slots count here, not an attendee's
extra time.

People (the Attendees sheet, optional attendance, quorums, long events) are read here again
from the Problem and the slots' times, with none of :mod:`timetabler.availability`'s code, by
the definitions written there: references to slots (a label in any case, an ISO date meaning
every slot of that date, a slot number), an event's span (its slot and the touching slots of
the same day after it until its duration is covered), an attendee's sitting with extra time
(``ceil(D × (100 + p) / 100)`` minutes from the start, every slot of the day it overlaps, ending
by the end of the event's last slot or of the next slot that day). The checks:

* every required attendee can make every slot their sitting takes, and the sitting fits;
* no required attendee is in two events whose slots (for them) overlap;
* a long event takes touching slots of one day, and its rooms are held in every one of them;
* a quorum ``q``: at least ``q`` of the event's attendees are free, that is can make every slot
  it takes for them and (for an optional attendee) are booked in no other event at an
  overlapping slot; a required attendee who can make it is free, as they must attend;
* own rooms (when the timetable gives them): the attendee sits alone in a room of their
  ``Own room`` type, held for every slot of their sitting, and the event's other rooms seat
  them no more.

Room names are compared without regard to case, as the rooms sheet is read.

Time is read here afresh from the slots themselves, not from their numbers (see
:func:`_timeline`): slots are put in order by date (or by day number when there are no
dates) and start time, days are the dates, and "consecutive", "same day", "before" and
the distance of the proximity cost follow that order. Slots numbered against the calendar
are reported as a violation, so a timetable whose slot numbers do not run with time (the
model takes consecutive numbers as consecutive slots) cannot pass.

Rooms: a room holds several events in one slot when their attendees fit in its seats
(whatever their lengths), unless sharing is switched off or the room is marked not shared.
An attendee seated with their event (not apart in an own room) whose extra-time sitting runs
into a slot past the event's own keeps one seat in the event's room in that slot: the event's
only room or, when the event is split over several rooms, the room given the most of its seats
(ties: the room first in the Rooms sheet). That rule is ours. Those seats count against the
room's capacity, and the event counts as present in that room in that slot, so a room not
shared (or every room, with sharing off) holds no other event then, and the room must be
available then.
"""

from __future__ import annotations

import datetime as _dt
import math
from collections import defaultdict
from dataclasses import dataclass, field
from typing import Mapping, Sequence

from ..model import Problem, RuleKind, Slot, Timetable

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
    own_rooms: Mapping[tuple[str, str], str] | Sequence[Mapping] | None = None,
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
    own_rooms
        The rooms of attendees seated apart: ``(attendee, event) -> room name``, or a list of
        ``{"attendee", "event", "room"}``. Checked when given (each such attendee alone in a
        room of their type for their whole sitting; the event's ``rooms`` then seat one fewer).

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

    # the slots each placed event takes (its span), read from the slots' own times
    timing = _Timing(slots, rank, day)
    taken: dict[str, tuple[int, ...]] = {}
    for code, s in placed.items():
        span, why = timing.span(problem.events[code].duration_minutes, s)
        if span is None:
            violations.append(f"{code} lasts {problem.events[code].duration_minutes} minutes but {why}")
            span = (s,)
        taken[code] = span

    # attendees: no one booked twice; the per-day cap; soft counts
    by_attendee: dict[str, list[str]] = defaultdict(list)
    for attendee, code in problem.enrolments:
        by_attendee[attendee].append(code)
    optional = problem.optional
    people_in_play = bool(problem.people or optional or any(e.quorum for e in problem.events.values()))
    soft = {name: 0 for name in (
        "back_to_back", "overnight", "same_day", "proximity", "large_late",
        "preferred_slot", "penalised_slot", "room_split", "moved", "preferred_room", "penalised_room",
        "optional_missed")}
    load: dict[str, dict[str, int]] = {}
    for attendee in sorted(by_attendee):
        mine_all = [c for c in by_attendee[attendee] if c in placed]
        mine = sorted((rank[taken[c][0] - 1], rank[taken[c][-1] - 1], c) for c in mine_all
                      if (attendee, c) not in optional)
        events_by_day: dict[int, int] = defaultdict(int)
        for c in mine_all:
            events_by_day[day[placed[c] - 1]] += 1
        if not people_in_play:  # else _check_people does it, over each attendee's own slots
            per_slot: dict[int, list[str]] = defaultdict(list)
            for _, _, c in mine:
                for t in taken[c]:
                    per_slot[t].append(c)
            for s, codes in sorted(per_slot.items()):
                if len(codes) > 1:
                    violations.append(f"{attendee} is booked twice in {label(s)}: {' and '.join(sorted(codes))}")
        if problem.max_per_day is not None:
            for d, n in sorted(events_by_day.items()):
                if n > problem.max_per_day:
                    violations.append(
                        f"{attendee} has {n} events on day {d}, more than the limit of {problem.max_per_day}")
        for i in range(len(mine)):
            for j in range(i + 1, len(mine)):
                (_, last_i, _), (first_j, _, _) = mine[i], mine[j]
                if first_j <= last_i:
                    continue  # the two overlap: a double booking, reported above
                gap = first_j - last_i  # slots apart in time, not in numbering
                if timing.day_at_rank[last_i] == timing.day_at_rank[first_j]:
                    if gap == 1:
                        soft["back_to_back"] += 1
                    else:
                        soft["same_day"] += 1
                elif gap == 1:
                    soft["overnight"] += 1
                soft["proximity"] += CARTER_WEIGHTS.get(gap, 0)
        load[attendee] = {"events": len(mine_all), "most_in_one_day": max(events_by_day.values(), default=0)}
    if people_in_play:
        _check_people(problem, slots, placed, taken, timing, by_attendee, label, violations, soft)

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

    # seats per slot; an attendee whose extra time runs past the event's slots holds a seat then too
    seats_in: dict[int, int] = defaultdict(int)
    for code, s in placed.items():
        for t in taken[code]:
            seats_in[t] += sizes[code]
    if any(slot.seat_capacity is not None for slot in slots):
        for attendee, code in problem.enrolments:
            person = problem.people.get(attendee)
            if code not in placed or person is None or not person.extra_time_percent:
                continue
            held, _, _ = timing.sitting(problem.events[code].duration_minutes, taken[code], person.extra_time_percent)
            for t in held or ():
                if t not in taken[code]:
                    seats_in[t] += 1
    for s in range(1, k + 1):
        cap = slots[s - 1].seat_capacity
        if cap is not None and seats_in[s] > cap:
            violations.append(f"{label(s)} seats {seats_in[s]} attendees, more than its {cap} seats")

    _check_rules(problem, slots, placed, rank, day, label, violations)
    if problem.rooms:
        _check_rooms(problem, slots, placed, sizes, rooms, room_sharing, room_splitting, label, violations, soft,
                     taken, _own_room_list(own_rooms), timing)

    if previous:
        soft["moved"] = sum(1 for code, s in placed.items() if code in previous and previous[code] != s)

    w = problem.weights
    penalty = (
        w.back_to_back * soft["back_to_back"] + w.overnight * soft["overnight"] + w.same_day * soft["same_day"]
        + w.proximity * soft["proximity"] + w.large_late * soft["large_late"]
        + w.preferred_slot * soft["preferred_slot"] + w.penalised_slot * soft["penalised_slot"]
        + w.room_split * soft["room_split"] + w.moved * soft["moved"]
        + w.preferred_room * soft["preferred_room"] + w.penalised_room * soft["penalised_room"]
        + w.optional_missed * soft["optional_missed"]
    )
    return Validation(ok=not violations, violations=violations, soft=soft, attendee_load=load, penalty=penalty)


def validate_timetable(problem: Problem, timetable: Timetable, *, previous: Mapping[str, int] | None = None,
                       room_sharing: bool = True, room_splitting: bool = False) -> Validation:
    """:func:`validate` for one :class:`~timetabler.model.Timetable` (slots, assignment, rooms, own rooms).

    >>> from timetabler.model import Event, Problem, Timetable, generic_slots
    >>> p = Problem(events={"A": Event("A"), "B": Event("B")}, enrolments=[("s1", "A"), ("s1", "B")])
    >>> validate_timetable(p, Timetable(tuple(generic_slots(2)), {"A": 1, "B": 2})).ok
    True
    """
    return validate(problem, list(timetable.slots), dict(timetable.assignment), dict(timetable.rooms) or None,
                    previous=previous, room_sharing=room_sharing, room_splitting=room_splitting,
                    own_rooms=dict(timetable.own_rooms))


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


class _Timing:
    """The slots' own times, for spans and sittings: each slot's (start, end) as datetimes (None without
    a start time and a length), the slot that follows each in time, and days by rank."""

    def __init__(self, slots: Sequence[Slot], rank: list[int], day: list[int]):
        self.slots = slots
        self.day = day
        self.at_rank = [0] * len(slots)  # 1-based slot number at each place in time
        for i, r in enumerate(rank):
            self.at_rank[r] = i + 1
        self.rank = rank
        self.day_at_rank = [day[n - 1] for n in self.at_rank]
        self.clock: list[tuple[_dt.datetime, _dt.datetime] | None] = []
        for sl in slots:
            if sl.start is None or not sl.length_minutes:
                self.clock.append(None)
            else:
                begin = _dt.datetime.combine(sl.date or _dt.date(2000, 1, 1), sl.start)
                self.clock.append((begin, begin + _dt.timedelta(minutes=sl.length_minutes)))

    def following(self, s: int) -> int | None:
        """The slot right after ``s`` in time on the same day, or None."""
        r = self.rank[s - 1] + 1
        if r >= len(self.at_rank):
            return None
        t = self.at_rank[r]
        return t if self.day[t - 1] == self.day[s - 1] else None

    def span(self, minutes: int | None, s: int) -> tuple[tuple[int, ...] | None, str]:
        """The slots an event of ``minutes`` started in ``s`` takes; None (and why) when they do not cover it."""
        length = self.slots[s - 1].length_minutes
        if not minutes:
            return (s,), ""
        if self.clock[s - 1] is None:
            if length is not None and minutes > length:
                return None, f"slot {s} ({self.slots[s - 1].label}) is {length} minutes long"
            return (s,), ""
        begin, end = self.clock[s - 1]
        goal = begin + _dt.timedelta(minutes=minutes)
        out = [s]
        while end < goal:
            t = self.following(out[-1])
            if t is None or self.clock[t - 1] is None or self.clock[t - 1][0] != end:
                covered = int((end - begin).total_seconds() // 60)
                return None, (f"from slot {s} ({self.slots[s - 1].label}) the touching slots of that day last "
                              f"only {covered} minutes")
            out.append(t)
            end = self.clock[t - 1][1]
        return tuple(out), ""

    def sitting(self, minutes: int | None, span: tuple[int, ...], percent: int
                ) -> tuple[tuple[int, ...] | None, _dt.datetime | None, _dt.datetime | None]:
        """The slots an attendee with ``percent`` extra time takes at an event taking ``span``, with the time
        their sitting ends and the latest it may end (None for the slots: it does not fit)."""
        if percent <= 0 or any(self.clock[t - 1] is None for t in span):
            return span, None, None
        length = minutes or sum(self.slots[t - 1].length_minutes or 0 for t in span)
        begin = self.clock[span[0] - 1][0]
        finish = begin + _dt.timedelta(minutes=math.ceil(length * (100 + percent) / 100))
        latest = self.clock[span[-1] - 1][1]
        after = self.following(span[-1])
        if after is not None and self.clock[after - 1] is not None:
            latest = max(latest, self.clock[after - 1][1])
        if finish > latest:
            return None, finish, latest
        if after is not None and self.clock[after - 1] is not None and self.clock[after - 1][0] < finish:
            return span + (after,), finish, latest
        return span, finish, latest


def _slot_refs(slots: Sequence[Slot]):
    """A function from one reference (Attendees sheet) to the slot numbers it names: a label in any case,
    an ISO date (every slot of that date, a midnight time allowed), or a whole number 1..K."""
    labels: dict[str, int] = {}
    for i, sl in enumerate(slots, start=1):
        labels.setdefault(sl.label.strip().casefold(), i)

    def names(ref: str) -> set[int]:
        text = str(ref).strip()
        if text.casefold() in labels:
            return {labels[text.casefold()]}
        head, rest = text[:10], text[10:].strip(" T")
        if rest in ("", "00:00", "00:00:00"):
            try:
                when = _dt.date.fromisoformat(head)
            except ValueError:
                when = None
            if when is not None:
                found = {i for i, sl in enumerate(slots, start=1) if sl.date == when}
                if found:
                    return found
        try:
            number = float(text)
        except ValueError:
            return set()
        return {int(number)} if number.is_integer() and 1 <= number <= len(slots) else set()

    return names


def _clock_text(when: _dt.datetime | None) -> str:
    return when.strftime("%H:%M") if when is not None else "?"


def _check_people(problem, slots, placed, taken, timing, by_attendee, label, violations, soft) -> None:
    """Availability, extra time, double bookings over every slot taken, optional attendance and quorums."""
    names = _slot_refs(slots)
    away: dict[str, set[int]] = {}
    for name, person in problem.people.items():
        found: set[int] = set()
        for ref in person.unavailable:
            found |= names(ref)
        away[name] = found
    optional = problem.optional
    # the slots each attendee takes at each of their events, and whether they can make them
    sits: dict[tuple[str, str], tuple[int, ...] | None] = {}
    cannot: dict[tuple[str, str], str] = {}  # why the attendee cannot make the event where it is
    for attendee, codes in by_attendee.items():
        person = problem.people.get(attendee)
        percent = person.extra_time_percent if person is not None else 0
        for code in codes:
            if code not in placed:
                continue
            span = taken[code]
            mine, finish, latest = timing.sitting(problem.events[code].duration_minutes, span, percent)
            sits[(attendee, code)] = mine
            if mine is None:
                cannot[(attendee, code)] = (f"with {percent} % extra time their sitting would end at "
                                            f"{_clock_text(finish)}, after {_clock_text(latest)}")
                continue
            barred = sorted(away.get(attendee, set()).intersection(mine))
            if barred:
                cannot[(attendee, code)] = "they cannot make " + ", ".join(label(t) for t in barred)
    for (attendee, code), why in sorted(cannot.items()):
        if (attendee, code) not in optional:
            violations.append(f"{attendee} must attend {code} in {label(placed[code])} but {why}")
    # double bookings of required attendees, over every slot they take
    busy: dict[str, dict[int, list[str]]] = defaultdict(lambda: defaultdict(list))
    for (attendee, code), mine in sits.items():
        if (attendee, code) in cannot and (attendee, code) in optional:
            continue  # an optional attendance they cannot come to does not book them
        for t in mine or taken[code]:
            busy[attendee][t].append(code)
    for attendee in sorted(busy):
        for t, codes in sorted(busy[attendee].items()):
            hard = sorted(c for c in codes if (attendee, c) not in optional)
            if len(hard) > 1:
                violations.append(f"{attendee} is booked twice in {label(t)}: {' and '.join(hard)}")

    def elsewhere(attendee: str, code: str) -> list[str]:
        mine = sits.get((attendee, code)) or taken[code]
        return sorted({c for t in mine for c in busy[attendee].get(t, ()) if c != code})

    for attendee, code in sorted(optional):
        if code in placed and ((attendee, code) in cannot or elsewhere(attendee, code)):
            soft["optional_missed"] += 1
    attendees_of: dict[str, list[str]] = defaultdict(list)
    for attendee, code in problem.enrolments:
        attendees_of[code].append(attendee)
    for code, event in sorted(problem.events.items()):
        if not event.quorum or code not in placed:
            continue
        free, away_from = [], []
        for attendee in attendees_of[code]:
            if (attendee, code) in cannot:
                away_from.append(f"{attendee} ({cannot[(attendee, code)]})")
            elif (attendee, code) in optional and elsewhere(attendee, code):
                away_from.append(f"{attendee} (booked in {', '.join(elsewhere(attendee, code))})")
            else:
                free.append(attendee)
        if len(free) < event.quorum:
            shown = "; ".join(sorted(away_from)[:8]) + ("; ..." if len(away_from) > 8 else "")
            violations.append(f"{code} needs {event.quorum} of its attendees free in {label(placed[code])} but only "
                              f"{len(free)} are; not free: {shown}")


def _names_short(names: list[str]) -> str:
    return ", ".join(names[:3]) + (f" and {len(names) - 3} more" if len(names) > 3 else "")


def _own_room_list(own_rooms) -> list[tuple[str, str, str]] | None:
    """(attendee, event, room) of every placement apart, from either form ``validate`` accepts (None: not given)."""
    if own_rooms is None:
        return None
    out: list[tuple[str, str, str]] = []
    if isinstance(own_rooms, Mapping):
        for key, room in own_rooms.items():
            attendee, code = key
            out.append((str(attendee), str(code), str(room[0] if isinstance(room, (tuple, list)) else room)))
    else:
        for item in own_rooms:
            out.append((str(item["attendee"]), str(item["event"]), str(item["room"])))
    return sorted(out)


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


def _check_rooms(problem, slots, placed, sizes, rooms, sharing, splitting, label, violations, soft,
                 taken, apart, timing) -> None:
    if rooms is None:
        violations.append("the problem has rooms but the timetable gives none")
        return
    by_name = {r.name: r for r in problem.rooms}
    order = {r.name: i for i, r in enumerate(problem.rooms)}  # the Rooms sheet's order (ties of the extra-time rule)
    late_in: dict[tuple[str, int], list[str]] = defaultdict(list)  # (room, slot) -> attendees still writing there
    use: dict[tuple[str, int], list[tuple[str, int]]] = defaultdict(list)
    alone: dict[str, int] = defaultdict(int)  # event -> attendees seated apart from it
    solo: dict[tuple[str, int], list[str]] = defaultdict(list)  # (room, slot) -> the attendees alone in it
    if apart is not None:
        folded = {r.name.strip().casefold(): r for r in problem.rooms}
        given_apart = {(a, c) for a, c, _ in apart}
        enrolled = set(problem.enrolments)
        for attendee, code in sorted(enrolled):
            person = problem.people.get(attendee)
            if code in placed and person is not None and person.own_room_type and (attendee, code) not in given_apart:
                violations.append(f"{attendee} should sit {code} alone in a room of type '{person.own_room_type}' "
                                  "but has no room of their own")
        for attendee, code, name in apart:
            person = problem.people.get(attendee)
            if code not in placed:
                continue
            if (attendee, code) not in enrolled:
                violations.append(f"{attendee} has a room of their own for {code} but is not enrolled on it")
                continue
            room = folded.get(name.strip().casefold())
            if room is None:
                violations.append(f"{attendee} sits {code} alone in '{name}', which is not a room")
                continue
            want = person.own_room_type if person is not None else None
            if not want:
                violations.append(f"{attendee} sits {code} alone in {room.name} but asked for no room of their own")
            elif (room.room_type or "").casefold() != want.casefold():
                violations.append(f"{attendee} needs a room of type '{want}' for {code} but {room.name} is "
                                  f"'{room.room_type}'")
            percent = person.extra_time_percent if person is not None else 0
            held, _, _ = timing.sitting(problem.events[code].duration_minutes, taken[code], percent)
            for t in held or taken[code]:
                solo[(room.name, t)].append(f"{attendee} ({code})")
                if any(problem.slot_number(ref, slots) == t for ref in room.unavailable_slots):
                    violations.append(f"{attendee} sits {code} alone in {room.name} in {label(t)}, when "
                                      f"{room.name} is not available")
            alone[code] += 1
    # extra time past an event's slots: the attendee keeps their seat in the event's room then, the room with
    # the most of its seats when it is split (ties: the first in the Rooms sheet; our rule). An attendee
    # seated apart keeps their own room instead, checked above.
    tails: dict[str, dict[int, list[str]]] = defaultdict(lambda: defaultdict(list))
    placed_apart = {(a, c) for a, c, _ in apart} if apart is not None else {
        (a, c) for a, c in problem.enrolments if (someone := problem.people.get(a)) is not None and someone.own_room_type}
    for attendee, code in problem.enrolments:
        person = problem.people.get(attendee)
        if code not in placed or person is None or not person.extra_time_percent or (attendee, code) in placed_apart:
            continue
        held, _, _ = timing.sitting(problem.events[code].duration_minutes, taken[code], person.extra_time_percent)
        for t in held or ():
            if t not in taken[code]:
                tails[code][t].append(attendee)
    for code, s in placed.items():
        given = list(rooms.get(code, []))
        if sizes[code] == 0 and not given:
            continue
        known = [(name, seats) for name, seats in given if name in by_name]
        if known and tails.get(code):
            host = max(known, key=lambda part: (part[1], -order[part[0]]))[0]
            for t, who in sorted(tails[code].items()):
                use[(host, t)].append((code, len(who)))
                late_in[(host, t)].extend(who)
                if any(problem.slot_number(ref, slots) == t for ref in by_name[host].unavailable_slots):
                    violations.append(f"{_names_short(sorted(who))} still writing {code} with extra time in {host} "
                                      f"in {label(t)}, when {host} is not available")
        seated = 0
        for name, seats in given:
            room = by_name.get(name)
            if room is None:
                violations.append(f"{code} is seated in '{name}', which is not a room")
                continue
            if seats <= 0:
                violations.append(f"{code} has {seats} seats in {name}")
            seated += seats
            for t in taken[code]:
                use[(name, t)].append((code, seats))
            want_type = problem.events[code].room_type
            if want_type and (room.room_type or "").casefold() != want_type.casefold():
                violations.append(f"{code} needs a room of type '{want_type}' but {name} is '{room.room_type}'")
            for t in taken[code]:
                if any(problem.slot_number(ref, slots) == t for ref in room.unavailable_slots):
                    violations.append(f"{code} is in {name} in {label(t)}, when {name} is not available")
        if seated != sizes[code] - alone[code]:
            apart_words = f" ({alone[code]} more sit apart)" if alone[code] else ""
            violations.append(f"{code} has {sizes[code] - alone[code]} attendees to seat{apart_words} but {seated} "
                              "seats in rooms" if alone[code] else
                              f"{code} has {sizes[code]} attendees but {seated} seats in rooms")
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
    for (name, s), people in sorted(solo.items()):
        others = sorted({c for c, _ in use.get((name, s), [])})
        if len(people) > 1 or others:
            violations.append(f"{people[0].split(' (')[0]} should sit alone in {name} in {label(s)} but it also holds "
                              + ", ".join(sorted(people[1:]) + others))
    for (name, s), holders in sorted(use.items()):
        room = by_name[name]
        total = sum(n for _, n in holders)
        late = sorted(late_in.get((name, s), ()))
        still = f" (with {_names_short(late)} still writing with extra time)" if late else ""
        if total > room.capacity:
            violations.append(f"{name} holds {total} attendees in {label(s)}, more than its {room.capacity} seats"
                              + still)
        codes = sorted({c for c, _ in holders})
        if len(codes) > 1:
            if not sharing:
                violations.append(f"{name} holds {', '.join(codes)} together in {label(s)}, and sharing is not allowed"
                                  + still)
            elif not room.shared:
                violations.append(f"{name} holds {', '.join(codes)} together in {label(s)}, but it is marked "
                                  "as not shared" + still)
