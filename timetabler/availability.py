"""Who can come when: the slots each event may start in, and the slots it and each attendee then take.

This is the one place the people's rules are turned into slot numbers; the scheduling and
counting engines and the reports read an :class:`Availability`, and the validator
(:mod:`timetabler.scheduling.validator`) derives the same facts again with its own code.
Slots are numbered 1..K in the order given, which is the order in time (:func:`model.time_order`).

The definitions
---------------
unavailable slots
    An attendee's references (Attendees sheet) resolve to slot numbers: a slot label (any
    case), an ISO date (every slot of that date), or a slot number 1..K. References that
    match no slot of this run are left out (intake reports the ones that match no slot at all).
span
    An event longer than its slot (its duration exceeds the slot's length) takes that slot and
    the next ones of the same day, each starting exactly when the one before ends, until its
    duration is covered. A start from which it cannot be covered is not allowed. An event
    without a duration, or slots without start times and lengths, take one slot.
extra time
    An attendee with ``p`` % extra time sits ``ceil(D × (100 + p) / 100)`` minutes from the
    event's start, ``D`` being the event's duration (else the length of the slots it takes).
    The sitting takes every slot of the day whose time it overlaps, and must end by the end of
    the event's last slot or of the next slot of the same day ("the slot and the next, where
    the slots allow"); a start where it cannot is barred for a required attendee and, for an
    optional one, a start where they cannot come. Without start times and lengths extra time
    cannot be placed and is ignored (intake warns).
allowed starts
    Slot ``s`` is an allowed start of event ``e`` when: ``e`` is fixed to no other slot and not
    barred from ``s``; its span fits from ``s``; every required attendee can make every slot
    they would take (extra time included); and, with a quorum ``q``, at least ``q`` of its
    attendees can make every slot they would take. (That is what the quorum asks of
    availability alone; an optional attendee booked in another event at the same time is
    not free either, which depends on the other events' slots and is left to the scheduler
    and the validator.)

Examples
--------
>>> import datetime as dt
>>> from timetabler.model import Attendee, Event, Problem, Slot
>>> day = dt.date(2027, 3, 1)
>>> slots = [Slot(f"{h}:00", date=day, start=dt.time(h), length_minutes=60) for h in (9, 10, 11)]
>>> problem = Problem([("ada", "BOARD"), ("ben", "BOARD")],
...                   events={"BOARD": Event("BOARD", duration_minutes=120)},
...                   people={"ben": Attendee("ben", unavailable=("11:00",))})
>>> found = Availability.of(problem, slots)
>>> sorted(found.starts["BOARD"]), found.slots_taken("BOARD", 1)
([1], (1, 2))
>>> found.cannot_make("BOARD", 2)
['ben']
"""

from __future__ import annotations

import datetime as _dt
import math
from dataclasses import dataclass, field
from typing import Sequence

from .model import Problem, Slot, days_of


def _resolver(slots: Sequence[Slot]):
    """A function turning one reference into the slot numbers it names (an empty set: none)."""
    by_label: dict[str, int] = {}
    for i, slot in enumerate(slots, start=1):
        by_label.setdefault(slot.label.strip().casefold(), i)
    by_date: dict[str, set[int]] = {}
    for i, slot in enumerate(slots, start=1):
        if slot.date is not None:
            by_date.setdefault(slot.date.isoformat(), set()).add(i)

    def resolve(ref: str) -> set[int]:
        text = str(ref).strip()
        if text.casefold() in by_label:
            return {by_label[text.casefold()]}
        if text[:10] in by_date and (len(text) == 10 or text[10:].strip() in ("", "00:00:00")):
            return set(by_date[text[:10]])
        try:
            number = float(text)
        except ValueError:
            return set()
        if number.is_integer() and 1 <= number <= len(slots):
            return {int(number)}
        return set()

    return resolve


def unavailable_slots(problem: Problem, slots: Sequence[Slot]) -> dict[str, frozenset[int]]:
    """The slot numbers each attendee of the Attendees sheet cannot make (only those with some)."""
    resolve = _resolver(slots)
    out: dict[str, frozenset[int]] = {}
    for name, person in problem.people.items():
        numbers: set[int] = set()
        for ref in person.unavailable:
            numbers |= resolve(ref)
        if numbers:
            out[name] = frozenset(numbers)
    return out


def _times(slots: Sequence[Slot]) -> list[tuple[_dt.datetime, _dt.datetime] | None]:
    out: list[tuple[_dt.datetime, _dt.datetime] | None] = []
    for slot in slots:
        if slot.start is None or not slot.length_minutes:
            out.append(None)
            continue
        begin = _dt.datetime.combine(slot.date or _dt.date(2000, 1, 1), slot.start)
        out.append((begin, begin + _dt.timedelta(minutes=slot.length_minutes)))
    return out


@dataclass(frozen=True)
class Availability:
    """What the people's rules and the events' lengths leave of the slots, for one run of K slots.

    ``starts[e]``: the allowed start slots of event ``e`` (1-based). ``spans[e][s]``: the slots
    ``e`` takes when it starts in ``s``, listed only for events that take more than one slot
    somewhere. ``sittings[(a, e)][s]``: the slots attendee ``a`` takes at ``e`` started in ``s``
    when their extra time makes that differ from the event's own slots (None: their sitting
    does not fit). ``unavailable[a]``: the slots ``a`` cannot make. ``blocked[e][s]``: the
    required attendees who cannot make start ``s`` of ``e`` (for reasons that name people).
    ``free[e][s]``: for an event with a quorum, how many of its attendees can make start ``s``.
    ``late[e][s]``: those of ``blocked[e][s]`` whose extra-time sitting would not fit (past the
    day's slots), not unavailable.
    """

    k: int
    starts: dict[str, frozenset[int]]
    spans: dict[str, dict[int, tuple[int, ...]]] = field(default_factory=dict)
    sittings: dict[tuple[str, str], dict[int, tuple[int, ...] | None]] = field(default_factory=dict)
    unavailable: dict[str, frozenset[int]] = field(default_factory=dict)
    blocked: dict[str, dict[int, list[str]]] = field(default_factory=dict)
    quorum_short: dict[str, dict[int, int]] = field(default_factory=dict)
    free: dict[str, dict[int, int]] = field(default_factory=dict)  # quorum events: start -> attendees who can make it
    late: dict[str, dict[int, list[str]]] = field(default_factory=dict)  # of blocked: extra time past the day

    @property
    def one_slot_each(self) -> bool:
        """True when every event takes exactly one slot for every attendee: timetables are then
        colourings of the conflict graph with a list of allowed slots per event."""
        return not self.spans and not self.sittings

    def slots_taken(self, event: str, start: int, attendee: str | None = None) -> tuple[int, ...] | None:
        """The slots ``event`` started in ``start`` takes (for ``attendee`` when given: with their
        extra time; None when their sitting does not fit)."""
        if attendee is not None:
            own = self.sittings.get((attendee, event))
            if own is not None and start in own:
                return own[start]
        span = self.spans.get(event)
        if span is not None and start in span:
            return span[start]
        return (start,)

    def cannot_make(self, event: str, start: int) -> list[str]:
        """The required attendees of ``event`` who cannot make it when it starts in ``start``."""
        return list(self.blocked.get(event, {}).get(start, []))

    @classmethod
    def of(cls, problem: Problem, slots: Sequence[Slot]) -> "Availability":
        """Work out the :class:`Availability` of ``problem`` over ``slots`` (see the module's definitions)."""
        k = len(slots)
        resolve = _resolver(slots)
        unavailable = unavailable_slots(problem, slots)
        times = _times(slots)
        days = days_of(slots) if slots else []

        def next_same_day(s: int) -> int | None:  # 1-based
            if s < k and days[s] == days[s - 1]:
                return s + 1
            return None

        def span_from(s: int, minutes: int | None) -> tuple[int, ...] | None:
            if not minutes or times[s - 1] is None:
                return (s,)
            taken = [s]
            end = times[s - 1][1]
            goal = times[s - 1][0] + _dt.timedelta(minutes=minutes)
            while end < goal:
                nxt = next_same_day(taken[-1])
                if nxt is None or times[nxt - 1] is None or times[nxt - 1][0] != end:
                    return None
                taken.append(nxt)
                end = times[nxt - 1][1]
            return tuple(taken)

        def sitting_from(s: int, taken: tuple[int, ...], minutes: int | None, percent: int) -> tuple[int, ...] | None:
            if any(times[t - 1] is None for t in taken):
                return taken
            length = minutes or sum(slots[t - 1].length_minutes or 0 for t in taken)
            begin = times[s - 1][0]
            finish = begin + _dt.timedelta(minutes=math.ceil(length * (100 + percent) / 100))
            last = taken[-1]
            limit = times[last - 1][1]
            nxt = next_same_day(last)
            if nxt is not None and times[nxt - 1] is not None:
                limit = max(limit, times[nxt - 1][1])
            if finish > limit:
                return None
            out = list(taken)
            if nxt is not None and times[nxt - 1] is not None and times[nxt - 1][0] < finish:
                out.append(nxt)
            return tuple(out)

        by_event = problem.attendees_by_event()
        starts: dict[str, frozenset[int]] = {}
        spans: dict[str, dict[int, tuple[int, ...]]] = {}
        sittings: dict[tuple[str, str], dict[int, tuple[int, ...] | None]] = {}
        blocked: dict[str, dict[int, list[str]]] = {}
        quorum_short: dict[str, dict[int, int]] = {}
        free: dict[str, dict[int, int]] = {}
        late: dict[str, dict[int, list[str]]] = {}
        for code, event in problem.events.items():
            allowed = set(range(1, k + 1))
            if event.fixed_slot is not None and str(event.fixed_slot).strip():
                allowed &= resolve(event.fixed_slot)
            for ref in event.barred_slots:
                allowed -= resolve(ref)
            own_span: dict[int, tuple[int, ...]] = {}
            for s in sorted(allowed):
                taken = span_from(s, event.duration_minutes)
                if taken is None:
                    allowed.discard(s)
                elif len(taken) > 1:
                    own_span[s] = taken
            if own_span:
                spans[code] = own_span
            people = by_event.get(code, [])
            free_count = {s: 0 for s in allowed}
            for attendee in people:
                person = problem.people.get(attendee)
                away = unavailable.get(attendee, frozenset())
                percent = person.extra_time_percent if person is not None else 0
                required = (attendee, code) not in problem.optional
                own: dict[int, tuple[int, ...] | None] = {}
                for s in sorted(allowed):
                    taken = own_span.get(s, (s,))
                    sitting = sitting_from(s, taken, event.duration_minutes, percent) if percent > 0 else taken
                    if sitting != taken:
                        own[s] = sitting
                    if sitting is None or away.intersection(sitting):
                        if required:
                            blocked.setdefault(code, {}).setdefault(s, []).append(attendee)
                            if sitting is None:
                                late.setdefault(code, {}).setdefault(s, []).append(attendee)
                    else:
                        free_count[s] += 1
                if own:
                    sittings[(attendee, code)] = own
            for s in list(allowed):
                if s in blocked.get(code, {}):
                    allowed.discard(s)
                elif event.quorum and free_count[s] < event.quorum:
                    quorum_short.setdefault(code, {})[s] = free_count[s]
                    allowed.discard(s)
            starts[code] = frozenset(allowed)
            if event.quorum:
                free[code] = {s: free_count[s] for s in allowed}
        return cls(k=k, starts=starts, spans=spans, sittings=sittings, unavailable=unavailable,
                   blocked=blocked, quorum_short=quorum_short, free=free, late=late)
