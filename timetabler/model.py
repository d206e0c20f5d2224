"""The timetabling problem as plain objects: events, attendees, slots, rooms, rules, weights.

Everything below the intake layer speaks in these objects. Intake builds a
:class:`Problem` from files; the conflict graph (:mod:`timetabler.conflicts`), the
counting and scheduling engines and the exporters read it. Nothing here reads files,
solves or prints.

Vocabulary
----------
event
    An exam, a meeting, a paper: something that takes one slot. Identified by its *code*.
attendee
    A student, a committee member: someone who must not be in two places at once.
enrolment
    One attendee booked on one event. Duplicates are removed by intake.
slot
    A labelled period of time (a session). Slots are numbered 1..K in time order (intake
    sorts a slots sheet by date and start time; slots without dates keep the order of their
    rows); the number is what ``solve --json`` reports. Engines take the order of the list
    they are given as the order in time: consecutive numbers are consecutive slots.
rule
    A hard relation between events given by the registrar (see :class:`RuleKind`).
attendance
    Whether an attendee must be at an event (``required``, the default: never booked twice,
    never in a slot they cannot make) or is welcome but not needed (``optional``: a soft
    goal). Only required enrolments make clashes (:meth:`Problem.required_enrolments`).
person
    What the Attendees sheet says of one attendee (:class:`Attendee`): the slots they cannot
    make, extra time, a room of their own. :mod:`timetabler.availability` turns it, with the
    events' lengths and quorums, into the slots each event can start in and the slots each
    attendee then takes.
"""

from __future__ import annotations

import datetime as _dt
import enum
from dataclasses import dataclass, field
from typing import Iterable, Mapping, Sequence


@dataclass(frozen=True)
class Location:
    """Where a value came from: file, sheet, row, column (1-based rows as a spreadsheet shows them)."""

    file: str
    sheet: str | None = None
    row: int | None = None
    column: str | None = None

    def __str__(self) -> str:
        parts = [self.file]
        if self.sheet:
            parts.append(f"sheet '{self.sheet}'")
        if self.row is not None:
            parts.append(f"row {self.row}")
        if self.column:
            parts.append(f"column '{self.column}'")
        return ", ".join(parts)


@dataclass
class Event:
    """One event (exam, meeting) with the optional details of the events sheet.

    ``fixed_slot`` and ``barred_slots`` hold slot *references* as the registrar wrote them
    (a slot label, or a slot number as text); :meth:`Problem.slot_number` resolves them.
    """

    code: str
    title: str | None = None
    duration_minutes: int | None = None
    room_type: str | None = None
    fixed_slot: str | None = None
    barred_slots: tuple[str, ...] = ()
    group: str | None = None
    preferred_slots: tuple[str, ...] = ()
    preferred_rooms: tuple[str, ...] = ()
    quorum: int | None = None  # at least this many attendees free in its slot (Events sheet's Quorum column)


class Attendance(str, enum.Enum):
    """The enrolments' Attendance column."""

    REQUIRED = "required"
    OPTIONAL = "optional"


@dataclass
class Attendee:
    """One row of the Attendees sheet: what the timetable must know of a person.

    ``unavailable`` holds references as the registrar wrote them: a slot label, a slot number
    as text, or a date in ISO form (``2027-01-11``) meaning every slot of that day; intake
    turns date cells into ISO text. :func:`timetabler.availability.unavailable_slots` resolves
    them against the slots of a run. ``extra_time_percent`` lengthens each of the person's
    events by that percentage (for them alone); ``own_room_type`` seats them apart, alone in
    a room of that type.
    """

    name: str
    unavailable: tuple[str, ...] = ()
    extra_time_percent: int = 0
    own_room_type: str | None = None
    where: Location | None = field(default=None, compare=False, repr=False)


@dataclass
class Slot:
    """One slot (session). ``day`` groups slots into days for same-day and back-to-back rules.

    ``penalised`` is the Slots sheet's Avoid column (the "avoided slot" goal); ``where`` is
    the row the slot was read from, for messages that name it (None for generic slots).
    """

    label: str
    date: _dt.date | None = None
    start: _dt.time | None = None
    length_minutes: int | None = None
    seat_capacity: int | None = None
    day: int | None = None
    penalised: bool = False
    where: Location | None = field(default=None, compare=False, repr=False)

    @property
    def end(self) -> _dt.time | None:
        if self.start is None or self.length_minutes is None:
            return None
        base = _dt.datetime.combine(_dt.date(2000, 1, 1), self.start)
        return (base + _dt.timedelta(minutes=self.length_minutes)).time()


@dataclass
class Room:
    """One room. ``penalised`` marks a room to use only when the others do not suffice (a soft
    goal; the Rooms sheet's Avoid column, as ``Slot.penalised`` is the Slots sheet's).

    ``shared``: several events may sit in the room in one slot, as long as their attendees
    fit in its seats (events of different lengths too: the seats are counted for the whole
    slot). The Rooms sheet's Shared column sets it to False for a room that holds one event.
    """

    name: str
    capacity: int
    room_type: str | None = None
    unavailable_slots: tuple[str, ...] = ()
    penalised: bool = False
    shared: bool = True


class RuleKind(str, enum.Enum):
    """Hard relations between events, as the registrar names them in the rules sheet."""

    BEFORE = "before"  # events[0] in an earlier slot than events[1]
    SAME_SLOT = "same slot"  # all events in one slot
    DIFFERENT_DAYS = "different days"  # events on pairwise different days
    ALONE = "alone"  # events[0] is the only event in its slot


@dataclass
class Rule:
    kind: RuleKind
    events: tuple[str, ...]
    where: Location | None = None

    def describe(self) -> str:
        """The rule in plain words, for reasons and reports."""
        ev = self.events
        if self.kind is RuleKind.BEFORE:
            return f"{ev[0]} must come before {ev[1]}"
        if self.kind is RuleKind.SAME_SLOT:
            return f"{' and '.join(ev)} must share a slot"
        if self.kind is RuleKind.DIFFERENT_DAYS:
            return f"{' and '.join(ev)} must be on different days"
        return f"{ev[0]} must be alone in its slot"


class SolveStatus(str, enum.Enum):
    """What a solve found for one number of slots (``solve --json``'s ``status``).

    A ``str`` enum: it compares equal to its word and prints and shows as it, so JSON, sheets
    and the store see ``optimal`` / ``feasible`` / ``infeasible`` / ``unknown`` as before.

    >>> SolveStatus("feasible").found, f"{SolveStatus.INFEASIBLE}", SolveStatus.OPTIMAL == "optimal"
    (True, 'infeasible', True)
    """

    OPTIMAL = "optimal"  # a timetable, proven best for the goals
    FEASIBLE = "feasible"  # a timetable, not proven best
    INFEASIBLE = "infeasible"  # proven: no timetable with these slots
    UNKNOWN = "unknown"  # neither found nor ruled out in the time given

    __str__ = str.__str__
    __format__ = str.__format__
    __repr__ = str.__repr__  # shown as its word, as before it was an enum

    @property
    def found(self) -> bool:
        """A timetable was found (optimal or feasible)."""
        return self in FOUND_STATUSES


#: The statuses of a run that found a timetable.
FOUND_STATUSES = (SolveStatus.OPTIMAL, SolveStatus.FEASIBLE)


@dataclass(frozen=True)
class Timetable:
    """One timetable: the slots in time order, each event's slot number (1..K), the rooms.

    ``rooms[code]`` is the list of (room, seats) an event is given (more than one when it is
    split); ``own_rooms[(attendee, code)]`` the room an attendee sits alone in. The same four
    things whether the timetable comes from a solve, a published version or a workbook.

    >>> t = Timetable(tuple(generic_slots(3)), {"A": 1, "B": 3})
    >>> t.slot_of("B").label, t.events_in(1), t.slot_count
    ('Slot 3', ['A'], 3)
    """

    slots: tuple[Slot, ...]
    assignment: Mapping[str, int]
    rooms: Mapping[str, Sequence[tuple[str, int]]] = field(default_factory=dict)
    own_rooms: Mapping[tuple[str, str], str] = field(default_factory=dict)

    @property
    def slot_count(self) -> int:
        return len(self.slots)

    def slot_of(self, code: str) -> Slot:
        """The slot an event is in (KeyError for an event not in the timetable)."""
        return self.slots[self.assignment[code] - 1]

    def events_in(self, number: int) -> list[str]:
        """The events in slot ``number`` (1..K), in code order."""
        return sorted(c for c, n in self.assignment.items() if n == number)

#: The largest weight a goal may be given, in every input (Weights sheet, --weight, the web form):
#: weights times the pairs of a whole university must stay within CP-SAT's 64-bit objective.
MAX_WEIGHT = 1_000_000


def weight_value(raw: object) -> int:
    """A goal's weight as typed (text or number): a whole number from 0 to :data:`MAX_WEIGHT`.
    Raises ValueError in plain words otherwise.

    >>> weight_value(" 20 "), weight_value(0)
    (20, 0)
    """
    text = str(raw).strip()
    if isinstance(raw, float) and raw.is_integer():
        text = str(int(raw))
    if not text.isdigit():
        raise ValueError(f"a weight must be a whole number, 0 or more; '{text}' is not")
    if int(text) > MAX_WEIGHT:
        raise ValueError(f"a weight must be at most {MAX_WEIGHT:,}; '{text}' is more")
    return int(text)


@dataclass
class Weights:
    """Weights of the soft goals (penalty per occurrence). Defaults are documented in the README.

    The defaults are common practice with no single source: back-to-back papers on one
    day hurt most, then two papers in a day, then last-of-day followed by first-of-next.
    ``proximity`` scales the Carter proximity cost (Carter, Laporte & Lee 1996), which is
    off by default. ``preferred_room`` (an event with preferred rooms seated in none of
    them) and ``penalised_room`` (each room marked Avoid that an event uses) default to 1,
    like their slot counterparts: also common practice with no source. ``optional_missed`` is
    per optional attendee who cannot come (unavailable in the slot, or booked in another event
    at the same time); 3, below a back-to-back, is common practice with no source.
    """

    back_to_back: int = 10
    overnight: int = 3
    same_day: int = 2
    proximity: int = 0
    large_late: int = 0
    preferred_slot: int = 1
    penalised_slot: int = 1
    room_split: int = 5
    moved: int = 20
    preferred_room: int = 1
    penalised_room: int = 1
    optional_missed: int = 3


#: What each soft goal (a :class:`Weights` field) is called wherever a person reads or writes it: the
#: Weights sheet, ``--weight`` (with ``-`` for spaces), the workbook and the terminal. Slots and rooms
#: to use only when needed are "avoided" everywhere, after the Slots and Rooms sheets' Avoid column
#: (the fields keep their older names ``penalised_slot`` and ``penalised_room``, as in the JSON).
GOAL_NAMES: dict[str, str] = {
    "back_to_back": "back-to-back",
    "overnight": "overnight",
    "same_day": "same day",
    "proximity": "proximity",
    "large_late": "large late",
    "preferred_slot": "preferred slot",
    "penalised_slot": "avoided slot",
    "room_split": "room split",
    "moved": "moved",
    "preferred_room": "preferred room",
    "penalised_room": "avoided room",
    "optional_missed": "optional attendee missed",
}


@dataclass
class Problem:
    """A whole timetabling instance as read from the registrar's files.

    ``enrolments`` holds distinct (attendee, event) pairs, required and optional alike;
    ``optional`` is the subset marked ``optional`` in the Attendance column (the others are
    required), and ``people`` the Attendees sheet by name (attendees without a row there
    have no details). ``events`` has an entry for
    every event code that appears in the enrolments or in the events sheet. ``slots`` is
    empty when the registrar gave no slots sheet; then engines work with K generic slots
    (:func:`generic_slots`).
    """

    enrolments: list[tuple[str, str]]
    events: dict[str, Event] = field(default_factory=dict)
    slots: list[Slot] = field(default_factory=list)
    rooms: list[Room] = field(default_factory=list)
    rules: list[Rule] = field(default_factory=list)
    weights: Weights = field(default_factory=Weights)
    source: str = ""
    max_per_day: int | None = None
    people: dict[str, Attendee] = field(default_factory=dict)
    optional: set[tuple[str, str]] = field(default_factory=set)

    def __post_init__(self) -> None:
        for _, code in self.enrolments:
            if code not in self.events:
                self.events[code] = Event(code)

    def required_enrolments(self) -> list[tuple[str, str]]:
        """The enrolments that make clashes: all but the optional ones, in their order."""
        if not self.optional:
            return self.enrolments
        return [pair for pair in self.enrolments if pair not in self.optional]

    @property
    def has_people(self) -> bool:
        """True when an Attendees sheet, an optional attendance or a quorum is in play."""
        return bool(self.people or self.optional or any(e.quorum for e in self.events.values()))

    @property
    def attendees(self) -> list[str]:
        return sorted({a for a, _ in self.enrolments})

    @property
    def event_codes(self) -> list[str]:
        return sorted(self.events)

    def slots_for(self, k: int, per_day: int | None = None) -> list[Slot]:
        """The slots of a K-slot timetable: the first K of the Slots sheet (intake sorts it in time
        order), else K generic slots of ``per_day`` a day. The one rule for every command and page."""
        return list(self.slots[:k]) if self.slots else generic_slots(k, per_day)

    def event_sizes(self) -> dict[str, int]:
        sizes = {code: 0 for code in self.events}
        for _, code in self.enrolments:
            sizes[code] += 1
        return sizes

    def attendees_by_event(self) -> dict[str, list[str]]:
        out: dict[str, list[str]] = {code: [] for code in self.events}
        for attendee, code in self.enrolments:
            out[code].append(attendee)
        return out

    def events_by_attendee(self) -> dict[str, list[str]]:
        out: dict[str, list[str]] = {}
        for attendee, code in self.enrolments:
            out.setdefault(attendee, []).append(code)
        return out

    def slot_refs(self, slots: Sequence[Slot]) -> SlotRefs:
        """Every reference to a slot in the problem resolved once against ``slots`` (see :class:`SlotRefs`)."""

        def numbers(refs) -> frozenset[int]:
            return frozenset(n for ref in refs if (n := self.slot_number(ref, slots)) is not None)

        return SlotRefs(
            fixed={c: self.slot_number(e.fixed_slot, slots) for c, e in self.events.items()
                   if e.fixed_slot is not None and str(e.fixed_slot).strip()},
            barred={c: numbers(e.barred_slots) for c, e in self.events.items() if e.barred_slots},
            preferred={c: numbers(e.preferred_slots) for c, e in self.events.items() if e.preferred_slots},
            room_unavailable={r.name: numbers(r.unavailable_slots) for r in self.rooms})

    def slot_number(self, ref: str, slots: Sequence[Slot]) -> int | None:
        """Resolve a slot reference (label, or number 1..K as text) to a slot number, or None."""
        ref = str(ref).strip()
        for i, slot in enumerate(slots, start=1):
            if slot.label.strip().casefold() == ref.casefold():
                return i
        try:
            n = int(float(ref))
        except ValueError:
            return None
        return n if 1 <= n <= len(slots) else None


@dataclass(frozen=True)
class SlotRefs:
    """The problem's references to slots, resolved once against one list of slots (numbers 1..K):
    the engines and exports read these, not the references (the validator resolves them with its own code).

    ``fixed[code]``: the fixed slot of each event that has one, None when it names none of these slots
    (it cannot hold); ``barred[code]`` and ``preferred[code]``: the slots named that exist (a reference to
    no slot is dropped); ``room_unavailable[name]``: a room's unavailable slots, likewise.

    >>> p = Problem([], events={"A": Event("A", fixed_slot="Tue am"), "B": Event("B", barred_slots=("2", "9"))})
    >>> refs = p.slot_refs([Slot("Mon am"), Slot("Tue am"), Slot("Wed am")])
    >>> refs.fixed, sorted(refs.barred["B"]), refs.allowed("A", {1, 2, 3}), sorted(refs.allowed("B", {1, 2, 3}))
    ({'A': 2}, [2], {2}, [1, 3])
    """

    fixed: Mapping[str, int | None]
    barred: Mapping[str, frozenset[int]]
    preferred: Mapping[str, frozenset[int]]
    room_unavailable: Mapping[str, frozenset[int]]

    def allowed(self, code: str, slots: Iterable[int]) -> set[int]:
        """Of ``slots``, those the event may take: only its fixed slot if it has one, never a barred one."""
        out = set(slots)
        if code in self.fixed:
            out &= {self.fixed[code]}
        return out - self.barred.get(code, frozenset())

    def room_free(self, room: str, number: int) -> bool:
        return number not in self.room_unavailable.get(room, frozenset())


def tail_room(problem: Problem, parts: Sequence[tuple[str, int]]) -> str:
    """The room of an event's ``parts`` [(room, seats)] in which its attendees still writing with extra time
    keep their seats past its own slots: the one with the most seats, the first in the Rooms sheet on a tie
    (our rule: the seating, the validator and the published tables all use this one).

    >>> p = Problem([], rooms=[Room("Hall", 80), Room("Annexe", 40), Room("Loft", 40)])
    >>> tail_room(p, [("Loft", 30), ("Annexe", 30)]), tail_room(p, [("Annexe", 30), ("Hall", 25)])
    ('Annexe', 'Annexe')
    """
    order = {r.name: i for i, r in enumerate(problem.rooms)}
    return max(parts, key=lambda part: (part[1], -order.get(part[0], len(order))))[0]


def generic_slots(k: int, per_day: int | None = None) -> list[Slot]:
    """K interchangeable slots labelled ``Slot 1`` .. ``Slot K``.

    With ``per_day`` the slots are grouped into days of that many sessions (slot 1 and 2
    on day 1 when ``per_day=2``); without it every slot is its own day.
    """
    if k < 0:
        raise ValueError("the number of slots cannot be negative")
    per = per_day or 1
    return [Slot(label=f"Slot {i}", day=(i - 1) // per + 1) for i in range(1, k + 1)]


def time_order(slots: Sequence[Slot]) -> list[int]:
    """Positions of ``slots`` in time order: by date (or by day number when no slot has a date),
    then by start time within a day when every slot of that day has one; slots of a day without
    start times keep the order they were given in, and so do all slots when some have no date
    (or, without dates, no day number).

    >>> import datetime as dt
    >>> d = dt.date(2027, 1, 11)
    >>> time_order([Slot("PM", date=d, start=dt.time(14)), Slot("AM", date=d, start=dt.time(9)),
    ...             Slot("Tue", date=d + dt.timedelta(days=1))])
    [1, 0, 2]
    """
    if all(s.date is not None for s in slots):
        day_of = [s.date for s in slots]
    elif not any(s.date is not None for s in slots) and all(s.day is not None for s in slots):
        day_of = [s.day for s in slots]
    else:
        return list(range(len(slots)))
    by_day: dict[object, list[int]] = {}
    for i, d in enumerate(day_of):
        by_day.setdefault(d, []).append(i)
    out: list[int] = []
    for d in sorted(by_day):
        members = by_day[d]
        if all(slots[i].start is not None for i in members):
            members = sorted(members, key=lambda i: slots[i].start)  # stable: equal starts keep their rows
        out.extend(members)
    return out


def days_of(slots: Sequence[Slot]) -> list[int]:
    """Day index (1-based) of each slot: from ``Slot.day``, else from ``Slot.date``, else one day per slot."""
    if all(s.day is not None for s in slots):
        return [int(s.day) for s in slots]  # type: ignore[arg-type]
    if all(s.date is not None for s in slots):
        order = {d: i for i, d in enumerate(sorted({s.date for s in slots}), start=1)}
        return [order[s.date] for s in slots]
    return list(range(1, len(slots) + 1))


def event_times(event: Event | None, slot: Slot, extra_time_percent: int = 0) -> tuple[_dt.datetime | None, _dt.datetime | None]:
    """When ``event`` starts and ends if it sits in ``slot``: the one definition every export uses.

    The event starts with the slot and ends ``event.duration_minutes`` later when it has a
    duration (an event longer than its slot runs on into the next ones: this is its true end),
    else when the slot ends (its start plus ``length_minutes``). With ``extra_time_percent``
    ``p`` (an attendee's extra time) the length is ``ceil(D × (100 + p) / 100)`` minutes, as
    :mod:`timetabler.availability` defines a sitting. Without a date the
    times fall on 1 January 2000 (only their time of day is meant). The end is None when
    neither the event's duration nor the slot's length is known, and both are None when the
    slot has no start time: no time is invented.

    >>> import datetime as dt
    >>> slot = Slot("Mon AM", date=dt.date(2027, 1, 11), start=dt.time(9), length_minutes=180)
    >>> [t.strftime("%H:%M") for t in event_times(Event("LAW101", duration_minutes=120), slot)]
    ['09:00', '11:00']
    >>> event_times(Event("LAW102"), slot)[1].strftime("%H:%M")
    '12:00'
    >>> event_times(Event("LAW103"), Slot("Mon AM", start=dt.time(9)))[1] is None
    True
    >>> event_times(Event("LAW101", duration_minutes=120), slot, extra_time_percent=25)[1].strftime("%H:%M")
    '11:30'
    """
    if slot.start is None:
        return None, None
    start = _dt.datetime.combine(slot.date or _dt.date(2000, 1, 1), slot.start)
    minutes = event.duration_minutes if event is not None and event.duration_minutes else slot.length_minutes
    if not minutes:
        return start, None
    if extra_time_percent > 0:
        minutes = -(-minutes * (100 + extra_time_percent) // 100)  # ceil, in whole minutes
    return start, start + _dt.timedelta(minutes=minutes)


def distinct_enrolments(pairs: Iterable[tuple[str, str]]) -> tuple[list[tuple[str, str]], int]:
    """Drop repeated (attendee, event) pairs, keeping first-seen order; return them and the number dropped."""
    seen: set[tuple[str, str]] = set()
    out: list[tuple[str, str]] = []
    dropped = 0
    for pair in pairs:
        if pair in seen:
            dropped += 1
            continue
        seen.add(pair)
        out.append(pair)
    return out, dropped
