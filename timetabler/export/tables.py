"""The published tables: plain rows built from a problem and solver results.

The workbook, the CSV folder and the terminal comparison all show the same figures, so
they are computed once, here, as :class:`PublishedTable` objects (a name, typed columns,
rows of Python values). Exporters only decide how each column kind looks in their format.

Attendee figures (back-to-back, two in a day, overnight) are recomputed here from the raw
enrolments and the assignment, so the published sheets never depend on numbers the
solver reported about itself. Definitions, per attendee:

clash
    two of their events in the same slot (a hard violation; a valid timetable has none).
back-to-back
    two of their events in consecutive slots of the same day.
same day
    two of their events on the same day in slots that are not consecutive.
overnight
    two of their events in consecutive slots on different days (last of one day, first of the next).
proximity
    the Carter proximity cost: 16, 8, 4, 2, 1 for two events 1, 2, 3, 4, 5 slots apart
    (Carter, Laporte & Lee 1996).

An attendee has "two in a day" when some day holds two or more of their events
(back-to-back or not).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import math
from collections import Counter, defaultdict
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, Callable, Mapping, Sequence

from ..counting.bounds import log10_int
from ..model import Problem, Slot, SlotRefs, SolveStatus, days_of, event_times, tail_room

if TYPE_CHECKING:  # reports sit above the engines; the names are for the signatures only
    from ..counting import CountReport, SlotCount
    from ..scheduling import FewestSlots, SolveRun, Validation

TEXT, INT, FLOAT, DATE, TIME, FLAG, BIGINT = "text", "int", "float", "date", "time", "flag", "bigint"


@dataclass
class Column:
    """A column of a published table. ``kind`` tells exporters how to show its values."""

    header: str
    kind: str = TEXT
    note: str = ""
    key: str = ""  # name in JSON documents (snake_case); empty when the column is not in one


@dataclass
class PublishedTable:
    name: str
    columns: list[Column]
    rows: list[list[Any]] = field(default_factory=list)
    title: str = ""

    @property
    def headers(self) -> list[str]:
        return [c.header for c in self.columns]

    def column(self, header: str) -> list[Any]:
        i = self.headers.index(header)
        return [r[i] for r in self.rows]


# --------------------------------------------------------------------------- slots


@dataclass
class SlotPlace:
    """Where a slot sits in the calendar: its day and its session number within the day."""

    number: int
    slot: Slot
    day: int
    session: int
    first_of_day: bool
    last_of_day: bool


def slot_places(slots: Sequence[Slot]) -> list[SlotPlace]:
    """Day and session-within-day of every slot (slots numbered 1..K in the given order)."""
    days = days_of(slots) if slots else []
    by_day: dict[int, list[int]] = defaultdict(list)
    for i, d in enumerate(days, start=1):
        by_day[d].append(i)
    places = []
    for i, (slot, d) in enumerate(zip(slots, days), start=1):
        members = by_day[d]
        places.append(SlotPlace(i, slot, d, members.index(i) + 1, members[0] == i, members[-1] == i))
    return places


def _run_slots(run: SolveRun) -> list[Slot]:
    return list(run.slot_list or [])


def has_timetable(run: SolveRun) -> bool:
    return bool(run.assignment) and SolveStatus(run.status).found


# --------------------------------------------------------------------------- people in a timetable


@dataclass
class Sitting:
    """One attendee at one event of a timetable: the slots they take there and their own times.

    ``taken`` is None when their extra time does not fit the slots; ``missed`` says, for an
    optional attendee, why they cannot come ("" when they can).
    """

    event: str
    start: int
    taken: tuple[int, ...] | None
    optional: bool
    begins: dt.datetime | None
    ends: dt.datetime | None
    missed: str = ""
    not_honoured: str = ""  # a required attendee in a slot they cannot make (an invalid timetable)


@dataclass
class TimetablePeople:
    """What a timetable means for the people in it (from :mod:`timetabler.availability`'s
    definitions, recomputed here from the input and the assignment alone).

    ``taken[e]``: the slots event ``e`` takes (every slot of a long event). ``sittings[a]``:
    attendee ``a``'s events in time order. ``unavailable[a]``: the slots ``a`` cannot make.
    """

    slots: list[Slot]
    taken: dict[str, tuple[int, ...]]
    sittings: dict[str, list[Sitting]]
    unavailable: dict[str, frozenset[int]]

    def slot_label(self, number: int) -> str:
        return self.slots[number - 1].label if 1 <= number <= len(self.slots) else f"slot {number}"


def _pinned_availability(problem: Problem, slots: Sequence[Slot], assignment: Mapping[str, int]):
    """:class:`~timetabler.availability.Availability` worked out only at each event's assigned start.

    Every placed event is fixed to its slot (by its label when labels are unique, else by its
    number) and freed of its barred slots, so that the spans and sittings are those of the
    definitions at that start, and the work is one start per enrolment, not K.
    """
    from ..availability import Availability
    from ..model import Event

    labels = [s.label.strip().casefold() for s in slots]
    unique = len(set(labels)) == len(labels)
    events: dict[str, Event] = {}
    for code, event in problem.events.items():
        n = assignment.get(code)
        if isinstance(n, int) and 1 <= n <= len(slots):
            ref = slots[n - 1].label if unique else str(n)
            events[code] = dataclasses.replace(event, fixed_slot=ref, barred_slots=(), quorum=None)
        else:
            events[code] = event
    pinned = dataclasses.replace(problem, events=events, enrolments=list(problem.enrolments))
    return Availability.of(pinned, slots)


def people_matter(problem: Problem, slots: Sequence[Slot]) -> bool:
    """True when some attendee or event can take other slots than its start alone: an Attendees
    sheet (extra time, unavailable slots), optional attendance, or an event longer than a slot."""
    if problem.people or problem.optional:
        return True
    lengths = [s.length_minutes for s in slots if s.length_minutes]
    shortest = min(lengths, default=None)
    return shortest is not None and any(e.duration_minutes and e.duration_minutes > shortest
                                        for e in problem.events.values())


def timetable_people(problem: Problem, run: SolveRun) -> TimetablePeople:
    """The slots every event and attendee take in ``run``'s timetable, and who misses what.

    An optional attendee misses an event when they cannot make a slot it takes for them, when
    their extra time does not fit, or when another of their events (required or optional)
    takes an overlapping slot for them (the issue's definitions; see DEVELOPERS.md).
    """
    slots = _run_slots(run)
    assignment = {c: n for c, n in (run.assignment).items()
                  if isinstance(n, int) and 1 <= n <= len(slots)}
    avail = _pinned_availability(problem, slots, assignment) if people_matter(problem, slots) else None
    taken = {c: (avail.slots_taken(c, n) if avail is not None else (n,)) for c, n in assignment.items()}
    unavailable = dict(avail.unavailable) if avail is not None else {}
    sittings: dict[str, list[Sitting]] = {}
    for attendee, code in problem.enrolments:
        n = assignment.get(code)
        if n is None:
            continue
        own = avail.slots_taken(code, n, attendee) if avail is not None else (n,)
        person = problem.people.get(attendee)
        extra = person.extra_time_percent if person is not None else 0  # their end, even when it does not fit
        begins, ends = event_times(problem.events.get(code), slots[n - 1], extra)
        sittings.setdefault(attendee, []).append(
            Sitting(code, n, own, (attendee, code) in problem.optional, begins, ends))
    labels = [s.label for s in slots]
    for attendee, mine in sittings.items():
        mine.sort(key=lambda x: (x.start, x.event))
        away = unavailable.get(attendee, frozenset())
        for sitting in mine:
            problems = []
            if sitting.taken is None:
                problems.append("their extra time does not fit the slots")
            else:
                cannot = sorted(away.intersection(sitting.taken))
                if cannot:
                    problems.append("cannot make " + ", ".join(labels[t - 1] for t in cannot))
                if sitting.optional:
                    here = set(sitting.taken)
                    for other in mine:
                        if other is sitting:
                            continue
                        overlap = sorted(here.intersection(other.taken or (other.start,)))
                        if overlap:
                            problems.append(f"booked in {other.event} at {labels[overlap[0] - 1]}")
            if sitting.optional:
                sitting.missed = "; ".join(problems)
            else:
                sitting.not_honoured = "; ".join(problems)
    return TimetablePeople(slots, taken, sittings, unavailable)


# --------------------------------------------------------------------------- attendee load


@dataclass
class AttendeeLoad:
    attendee: str
    events: int
    busiest_day: int
    clashes: int
    back_to_back: int
    same_day: int
    overnight: int
    proximity: int

    @property
    def flagged(self) -> bool:
        return bool(self.clashes or self.back_to_back or self.same_day)


#: Carter, Laporte & Lee (1996), J. Oper. Res. Soc. 47:373-383: cost of two events of one
#: attendee ``gap`` slots apart.
CARTER_WEIGHTS = {1: 16, 2: 8, 3: 4, 4: 2, 5: 1}


def attendee_loads(problem: Problem, slots: Sequence[Slot], assignment: Mapping[str, int],
                   people: "TimetablePeople | None" = None) -> list[AttendeeLoad]:
    """Per-attendee figures of a timetable, recomputed from the enrolments (see module docs).

    Only required enrolments count (an optional attendee's events make no clash). With
    ``people`` (:func:`timetable_people`) each event counts over every slot it takes for the
    attendee (a long event, their extra time): two events overlap in a slot for a clash, and
    the gap between the nearest slots of two events decides back-to-back, same day, overnight
    and proximity (an event taking slots 2-3 is back-to-back with one in slot 4).
    """
    places = slot_places(slots)
    k = len(places)
    blocks_of: dict[str, list[tuple[int, ...]]] = {}
    if people is not None:
        for attendee, mine in people.sittings.items():
            blocks_of[attendee] = [x.taken or (x.start,) for x in mine if not x.optional]
    else:
        for attendee, code in problem.required_enrolments():
            n = assignment.get(code)
            blocks = blocks_of.setdefault(attendee, [])
            if isinstance(n, int) and 1 <= n <= k:
                blocks.append((n,))
    required = Counter(a for a, _ in problem.required_enrolments())
    out = []
    for attendee in sorted(problem.events_by_attendee()):
        blocks = sorted(blocks_of.get(attendee, []))
        events_by_day = Counter(places[b[0] - 1].day for b in blocks)
        clashes = b2b = same_day = overnight = proximity = 0
        for i, first in enumerate(blocks):
            for second in blocks[i + 1:]:
                if first[-1] >= second[0] and set(first) & set(second):
                    clashes += 1
                    continue
                s, t = (first[-1], second[0]) if first[-1] < second[0] else (second[-1], first[0])
                gap = t - s
                if gap <= 0:
                    continue
                same = places[s - 1].day == places[t - 1].day
                if same and gap == 1:
                    b2b += 1
                elif same:
                    same_day += 1
                elif gap == 1:
                    overnight += 1
                proximity += CARTER_WEIGHTS.get(gap, 0)
        out.append(AttendeeLoad(attendee, required[attendee], max(events_by_day.values(), default=0), clashes, b2b, same_day,
                                overnight, proximity))
    return out


@dataclass
class RunFigures:
    """The side-by-side figures of one solved slot count."""

    slots: int
    days: int
    attendees_back_to_back: int | None = None
    attendees_two_in_a_day: int | None = None
    attendees_with_clash: int | None = None
    back_to_back: int | None = None
    same_day: int | None = None
    overnight: int | None = None
    proximity: int | None = None
    peak_seats: int | None = None
    peak_slot: str | None = None
    loads: list[AttendeeLoad] = field(default_factory=list)
    people: "TimetablePeople | None" = None  # when people_matter: the slots each event and attendee take


def run_figures(problem: Problem, run: SolveRun) -> RunFigures:
    slots = _run_slots(run)
    places = slot_places(slots)
    figures = RunFigures(slots=int(run.slots), days=len({p.day for p in places}))
    if not has_timetable(run) or not slots:
        return figures
    assignment = run.assignment
    people = timetable_people(problem, run) if people_matter(problem, slots) else None
    figures.people = people
    loads = attendee_loads(problem, slots, assignment, people)
    figures.loads = loads
    figures.attendees_back_to_back = sum(1 for a in loads if a.back_to_back)
    figures.attendees_two_in_a_day = sum(1 for a in loads if a.busiest_day >= 2)
    figures.attendees_with_clash = sum(1 for a in loads if a.clashes)
    figures.back_to_back = sum(a.back_to_back for a in loads)
    figures.same_day = sum(a.same_day for a in loads)
    figures.overnight = sum(a.overnight for a in loads)
    figures.proximity = sum(a.proximity for a in loads)
    seats = seats_by_slot(problem, slots, assignment, people.taken if people is not None else None)
    if seats:
        peak = max(range(len(seats)), key=lambda i: (seats[i], -i))
        figures.peak_seats = seats[peak]
        figures.peak_slot = slots[peak].label
    return figures


def seats_by_slot(problem: Problem, slots: Sequence[Slot], assignment: Mapping[str, int],
                  taken: Mapping[str, tuple[int, ...]] | None = None) -> list[int]:
    """Seats each slot needs: every attendee of every event in it (with ``taken``, in every slot it takes)."""
    sizes = problem.event_sizes()
    seats = [0] * len(slots)
    for code, n in assignment.items():
        for t in (taken or {}).get(code, (n,)):
            if isinstance(t, int) and 1 <= t <= len(slots):
                seats[t - 1] += sizes.get(code, 0)
    return seats


# --------------------------------------------------------------------------- tables of one timetable


def event_end(problem: Problem, code: str, slot: Slot | None) -> dt.time | None:
    """The time of day ``code`` ends in ``slot`` (:func:`timetabler.model.event_times`: the slot's
    start plus the event's duration, else the slot's end; None when neither is known)."""
    if slot is None:
        return None
    end = event_times(problem.events.get(code), slot)[1]
    return end.time() if end is not None else None


def _room_text(run: SolveRun, code: str) -> tuple[str, int | None]:
    rooms = run.rooms.get(code) or []
    if not rooms:
        return "", None
    return ", ".join(str(name) for name, _ in rooms), sum(int(seats) for _, seats in rooms)


def _taken_words(slots: Sequence[Slot], taken: tuple[int, ...]) -> str:
    return "; ".join(slots[t - 1].label for t in taken if 1 <= t <= len(slots))


def events_table(problem: Problem, run: SolveRun, people: TimetablePeople | None = None) -> PublishedTable:
    """One row per event: its slot, date, start, end, rooms, seats and size.

    The end is the event's own (start plus its duration), not the slot's, when it has a duration:
    an event longer than its slot ends in a later slot, and when some event does, a column
    "Slots taken" lists every slot it takes (``people``: :func:`timetable_people`).

    When some event names preferred rooms, two more columns: those rooms, and whether the
    event has seats in one of them (blank when it has no preference or no rooms).
    """
    slots = _run_slots(run)
    places = slot_places(slots)
    sizes = problem.event_sizes()
    preferences = any(e.preferred_rooms for e in problem.events.values())
    if people is None and people_matter(problem, slots) and has_timetable(run):
        people = timetable_people(problem, run)
    spans = people is not None and any(len(t) > 1 for t in people.taken.values())
    table = PublishedTable(
        "Events",
        [
            Column("Event"), Column("Title"), Column("Slot", INT), Column("Slot label"), Column("Day", INT),
            Column("Session", INT), Column("Date", DATE), Column("Start", TIME), Column("End", TIME),
            Column("Rooms"), Column("Seats", INT), Column("Size", INT),
        ] + ([Column("Preferred rooms"), Column("In a preferred room", FLAG)] if preferences else [])
        + ([Column("Slots taken", note="every slot a long event takes")] if spans else []),
        title="Every event and its slot",
    )
    assignment = run.assignment
    for code in sorted(problem.events, key=lambda c: (assignment.get(c, 10**9), c)):
        event = problem.events[code]
        n = assignment.get(code)
        place = places[n - 1] if n and 1 <= n <= len(places) else None
        rooms, seats = _room_text(run, code)
        row = [
            code, event.title or "", n, place.slot.label if place else "", place.day if place else None,
            place.session if place else None, place.slot.date if place else None, place.slot.start if place else None,
            event_end(problem, code, place.slot if place else None), rooms, seats, sizes.get(code, 0),
        ]
        if preferences:
            wanted = {name.strip().casefold() for name in event.preferred_rooms}
            given = {str(name).strip().casefold() for name, _ in run.rooms.get(code) or []}
            row += ["; ".join(event.preferred_rooms), bool(wanted & given) if wanted and given else None]
        if spans:
            row.append(_taken_words(slots, people.taken.get(code, ())))
        table.rows.append(row)
    return table


def personal_table(problem: Problem, run: SolveRun, show: Callable[[str], str] = str,
                   people: TimetablePeople | None = None) -> PublishedTable:
    """One row per attendee and event: personal timetables, sorted by attendee then slot.

    The end is the attendee's own: with their extra time (Attendees sheet), and a long event's
    true end; an attendee seated apart (Own room) is given their own room, not the event's, and
    one whose extra time runs past a split event's slots the one room they keep their seat in.
    With optional attendance, a column says whether each row is required or optional
    and another why an optional attendee cannot come.
    """
    slots = _run_slots(run)
    places = slot_places(slots)
    assignment = run.assignment
    if people is None and people_matter(problem, slots) and has_timetable(run):
        people = timetable_people(problem, run)
    own_end: dict[tuple[str, str], dt.time] = {}
    missed: dict[tuple[str, str], str] = {}
    late_room: dict[tuple[str, str], str] = {}  # still writing past a split event's slots: its one room then
    if people is not None:

        for attendee, mine in people.sittings.items():
            for x in mine:
                if x.ends is not None:
                    own_end[(attendee, x.event)] = x.ends.time()
                if x.missed:
                    missed[(attendee, x.event)] = x.missed
                parts = run.rooms.get(x.event) or []
                if len(parts) > 1 and set(x.taken or ()) - set(people.taken.get(x.event, ())):
                    late_room[(attendee, x.event)] = tail_room(problem, [(str(r), int(n)) for r, n in parts])
    optional = bool(problem.optional)
    apart = {(a, c): room for a, c, room, _ in own_room_placements(run, people)}
    table = PublishedTable(
        "Personal",
        [
            Column("Attendee"), Column("Event"), Column("Title"), Column("Slot", INT), Column("Slot label"),
            Column("Day", INT), Column("Date", DATE), Column("Start", TIME), Column("End", TIME), Column("Rooms"),
        ] + ([Column("Attendance"), Column("Cannot come")] if optional else []),
        title="Personal timetables: one row per attendee and event",
    )
    rows = []
    for attendee, code in problem.enrolments:
        n = assignment.get(code)
        place = places[n - 1] if n and 1 <= n <= len(places) else None
        rooms = apart.get((attendee, code)) or late_room.get((attendee, code)) or _room_text(run, code)[0]
        end = own_end.get((attendee, code)) or event_end(problem, code, place.slot if place else None)
        row = [
            show(attendee), code, problem.events[code].title or "", n, place.slot.label if place else "",
            place.day if place else None, place.slot.date if place else None, place.slot.start if place else None,
            end, rooms,
        ]
        if optional:
            row += ["optional" if (attendee, code) in problem.optional else "required", missed.get((attendee, code), "")]
        rows.append(row)
    rows.sort(key=lambda r: (r[0], r[3] if r[3] is not None else 10**9, r[1]))
    table.rows = rows
    return table


def sitting_words(people: TimetablePeople, sitting: Sitting) -> str:
    """An attendee's event as they live it: ``BOARD Mon 01 Mar 09:00–11:30`` (their own end), or
    by slot labels when the slots have no times (``BOARD Slot 3 to Slot 4`` for a long event)."""
    taken = sitting.taken or (sitting.start,)
    if sitting.begins is not None:
        when = (f"{sitting.begins:%a %d %b} " if people.slots[sitting.start - 1].date else "") + sitting.begins.strftime("%H:%M")
        if sitting.ends is not None:
            when += "–" + sitting.ends.strftime("%H:%M")
    else:
        when = people.slot_label(taken[0]) + (f" to {people.slot_label(taken[-1])}" if len(taken) > 1 else "")
    marks = [m for m in ("optional" if sitting.optional else "", "missed" if sitting.missed else "") if m]
    return f"{sitting.event} {when}" + (f" ({', '.join(marks)})" if marks else "")


def own_room_placements(run: SolveRun, people: TimetablePeople | None = None) -> list[tuple[str, str, str, tuple[int, ...]]]:
    """The attendees seated apart in ``run`` (Own room): (attendee, event, room, slots held).

    Read from the run's ``own_rooms`` (a mapping ``(attendee, event) -> room`` or a list of
    ``{"attendee", "event", "room"}``), when the scheduler gives them; each room is held for
    every slot of the attendee's sitting (``people``), else for the event's start slot.
    """
    given = run.own_rooms
    items: list[tuple[str, str, str]] = []
    if isinstance(given, Mapping):
        for key, room in given.items():
            if isinstance(key, tuple) and len(key) == 2:
                items.append((str(key[0]), str(key[1]), str(room[0] if isinstance(room, (tuple, list)) else room)))
    else:
        for item in given:
            if isinstance(item, Mapping):
                items.append((str(item.get("attendee")), str(item.get("event")), str(item.get("room"))))
    assignment = run.assignment
    out = []
    for attendee, code, room in sorted(items):
        held: tuple[int, ...] = ()
        if people is not None:
            held = next(((x.taken or (x.start,)) for x in people.sittings.get(attendee, []) if x.event == code), ())
        if not held and isinstance(assignment.get(code), int):
            held = (assignment[code],)
        out.append((attendee, code, room, held))
    return out


def people_table(problem: Problem, run: SolveRun, show: Callable[[str], str] = str,
                 people: TimetablePeople | None = None) -> PublishedTable:
    """One row per attendee: their events with their own times, the slots they cannot make and
    whether the timetable keeps them free there, and the optional events they miss and why.

    One row per attendee (not per enrolment) keeps it a list a person can read on a whole
    university; the events of each attendee, one by one, are in the Personal timetables.
    """
    if people is None:
        people = timetable_people(problem, run)
    table = PublishedTable(
        "People",
        [
            Column("Attendee"), Column("Required events", INT), Column("Optional events", INT),
            Column("Extra time (%)", INT), Column("Own room"),
            Column("Their timetable", note="each event with their own times: a long event's whole span, their extra time"),
            Column("Cannot make", note="the Attendees sheet's unavailable slots, as written"),
            Column("Slots they cannot make", INT, note="of this timetable's slots"),
            Column("Unavailability honoured", FLAG, note="no: a required event of theirs takes a slot they cannot make"),
            Column("Not honoured"),
            Column("Optional events missed", INT), Column("Why missed"),
        ],
        title="People: each attendee's timetable, availability and optional events",
    )
    apart: dict[str, list[str]] = defaultdict(list)
    for attendee, code, room, _ in own_room_placements(run, people):
        apart[attendee].append(f"{room} for {code}")
    rows = []
    for attendee, mine in people.sittings.items():
        person = problem.people.get(attendee)
        away = people.unavailable.get(attendee, frozenset())
        broken = [f"{x.event}: {x.not_honoured}" for x in mine if x.not_honoured]
        missed = [f"{x.event}: {x.missed}" for x in mine if x.missed]
        rows.append([
            show(attendee), sum(1 for x in mine if not x.optional), sum(1 for x in mine if x.optional),
            person.extra_time_percent if person is not None and person.extra_time_percent else None,
            ", ".join(x for x in ((person.own_room_type or "") if person is not None else "", "; ".join(apart.get(attendee, [])))
                      if x),
            "; ".join(sitting_words(people, x) for x in mine),
            "; ".join(person.unavailable) if person is not None else "", len(away),
            not broken, "; ".join(broken), len(missed), "; ".join(missed),
        ])
    rows.sort(key=lambda r: r[0])
    table.rows = rows
    return table


def load_table(problem: Problem, run: SolveRun, show: Callable[[str], str] = str, loads: list[AttendeeLoad] | None = None) -> PublishedTable:
    """One row per attendee: events, busiest day, clashes, back-to-back, two in a day, overnight."""
    slots = _run_slots(run)
    if loads is None:
        people = timetable_people(problem, run) if people_matter(problem, slots) and has_timetable(run) else None
        loads = attendee_loads(problem, slots, run.assignment, people)
    table = PublishedTable(
        "Load",
        [
            Column("Attendee"), Column("Events", INT), Column("Most in one day", INT), Column("Clashes", INT),
            Column("Back-to-back", INT), Column("Same day, not back-to-back", INT), Column("Overnight", INT),
            Column("Proximity cost", INT), Column("Clash or two in a day", FLAG),  # yes: a clash, back-to-back or same day
        ],
        title="Attendee load",
    )
    rows = [[show(a.attendee), a.events, a.busiest_day, a.clashes, a.back_to_back, a.same_day, a.overnight, a.proximity,
             a.flagged] for a in loads]
    rows.sort(key=lambda r: r[0])
    table.rows = rows
    return table


def seats_table(problem: Problem, run: SolveRun, people: TimetablePeople | None = None) -> PublishedTable:
    """One row per slot: events, seats needed, the slot's seat limit and room seats, free seats
    (a long event counts in every slot it takes)."""
    slots = _run_slots(run)
    assignment = run.assignment
    if people is None and people_matter(problem, slots) and has_timetable(run):
        people = timetable_people(problem, run)
    taken = people.taken if people is not None else {c: (n,) for c, n in assignment.items()}
    seats = seats_by_slot(problem, slots, assignment, taken)
    counts = Counter(t for held in taken.values() for t in held)
    table = PublishedTable(
        "Seats",
        [
            Column("Slot", INT), Column("Slot label"), Column("Day", INT), Column("Date", DATE), Column("Start", TIME),
            Column("Events", INT), Column("Seats needed", INT), Column("Seat limit", INT), Column("Free seats", INT),
        ],
        title="Seats by slot",
    )
    refs = problem.slot_refs(slots)
    for place in slot_places(slots):
        limits = [x for x in (place.slot.seat_capacity, _room_seats_in(problem, refs, place.number)) if x is not None]
        limit = min(limits) if limits else None
        need = seats[place.number - 1]
        table.rows.append([
            place.number, place.slot.label, place.day, place.slot.date, place.slot.start, counts.get(place.number, 0),
            need, limit, (limit - need) if limit is not None else None,
        ])
    return table


def _room_seats_in(problem: Problem, refs: SlotRefs, number: int) -> int | None:
    """Seats of the rooms available in slot ``number`` (None when the problem has no rooms)."""
    if not problem.rooms:
        return None
    return sum(r.capacity for r in problem.rooms if refs.room_free(r.name, number))


def rooms_table(problem: Problem, run: SolveRun, people: TimetablePeople | None = None) -> PublishedTable | None:
    """Room occupancy by slot (only when the problem has rooms): every room in every slot.

    A long event holds its rooms in every slot it takes; an attendee seated apart (Own room)
    holds their room for every slot of their sitting, listed as ``EVENT (one attendee apart)``
    (the People sheet says who).
    """
    if not problem.rooms:
        return None
    slots = _run_slots(run)
    assignment = run.assignment
    if people is None and people_matter(problem, slots) and has_timetable(run):
        people = timetable_people(problem, run)
    used: dict[tuple[int, str], list[tuple[str, int]]] = defaultdict(list)
    for code, placed in run.rooms.items():
        n = assignment.get(code)
        for name, seats in placed:
            for t in (people.taken.get(code, (n,)) if people is not None else (n,)):
                used[(t, str(name))].append((code, int(seats)))
    for _attendee, code, name, held in own_room_placements(run, people):
        for t in held:  # no name here: the room plan goes to the rooms staff
            used[(t, str(name))].append((f"{code} (one attendee apart)", 1))
    avoided = any(r.penalised for r in problem.rooms)
    single = any(not r.shared for r in problem.rooms)
    table = PublishedTable(
        "Rooms",
        [
            Column("Slot", INT), Column("Slot label"), Column("Date", DATE), Column("Start", TIME), Column("Room"),
            Column("Room type"), Column("Capacity", INT), Column("Events"), Column("Seats used", INT), Column("Free seats", INT),
            Column("Available", FLAG),
        ] + ([Column("Avoid", FLAG, "marked Avoid: used only when the other rooms do not suffice")] if avoided else [])
        + ([Column("Shared", FLAG, "no: holds one event at a time")] if single else []),
        title="Room occupancy by slot",
    )
    refs = problem.slot_refs(slots)
    for place in slot_places(slots):
        for room in problem.rooms:
            here = used.get((place.number, room.name), [])
            taken = sum(s for _, s in here)
            available = refs.room_free(room.name, place.number)
            table.rows.append([
                place.number, place.slot.label, place.slot.date, place.slot.start, room.name, room.room_type or "",
                room.capacity, ", ".join(c for c, _ in here), taken, room.capacity - taken, available,
            ] + ([bool(room.penalised)] if avoided else []) + ([bool(room.shared)] if single else []))
    return table


def slot_words(slots: Sequence[Slot], number: int | None) -> str:
    """A slot as a reader names it: its label, with its date and start when it has them.

    >>> from timetabler.model import Slot, generic_slots
    >>> slot_words(generic_slots(3), 2)
    'Slot 2'
    >>> slot_words([Slot("Mon AM", dt.date(2027, 1, 11), dt.time(9, 30))], 1)
    'Mon AM (Mon 11 Jan 2027 09:30, slot 1)'
    """
    if not isinstance(number, int) or not 1 <= number <= len(slots):
        return "no slot" if number is None else f"slot {number}"
    slot = slots[number - 1]
    when = " ".join(part for part in (slot.date.strftime("%a %d %b %Y") if slot.date else "",
                                      slot.start.strftime("%H:%M") if slot.start else "") if part)
    return f"{slot.label} ({when}, slot {number})" if when else slot.label


def moves_table(problem: Problem, run: SolveRun) -> PublishedTable | None:
    """Repair mode: every event moved from the earlier timetable, and every event placed afresh
    (not in the earlier timetable, or its slot is gone), with the old and new slot of each and
    the attendees each change affects."""
    moves = run.moves
    placed = run.placed
    if not moves and not placed:
        return None
    slots = _run_slots(run)
    sizes = problem.event_sizes()
    table = PublishedTable(
        "Moves",
        [Column("Event"), Column("Change"), Column("From slot", INT), Column("Old slot label"), Column("Old date", DATE),
         Column("Old start", TIME), Column("To slot", INT), Column("New slot label"), Column("New date", DATE),
         Column("New start", TIME), Column("Attendees affected", INT)],
        title="Events moved from the earlier timetable, and events placed afresh",
    )

    def at(number: int | None) -> list[object]:
        slot = slots[number - 1] if isinstance(number, int) and 1 <= number <= len(slots) else None
        return [number, slot.label if slot else "", slot.date if slot else None, slot.start if slot else None]

    for move in moves:
        code = move.get("event")
        table.rows.append([code, "moved", *at(move.get("from")), *at(move.get("to")), sizes.get(code, 0)])
    for new in placed:
        code = new.get("event")
        table.rows.append([code, "placed afresh (no earlier slot)", None, "", None, None, *at(new.get("to")),
                           sizes.get(code, 0)])
    return table


@dataclass
class GridDay:
    """One day of the grid: its label and date, each session's slot heading, and each session's events."""

    label: str
    date: dt.date | None
    heads: list[str]
    events: list[list[str]]


def grid_rows(problem: Problem, run: SolveRun, people: TimetablePeople | None = None) -> tuple[list[str], list[GridDay]]:
    """The timetable as a grid: session headers, and per day the slot headings and events of each session.

    Events are listed one per line under their session, as ``CODE`` or ``CODE Title``, followed by
    ``(until HH:MM)`` when the event ends before (or without) the end the heading shows for its slot.
    An event longer than its slot is listed again in every later slot it takes, ``(continued)``,
    with ``until HH:MM`` when it ends before that slot does.
    """
    slots = _run_slots(run)
    places = slot_places(slots)
    assignment = run.assignment
    if people is None and people_matter(problem, slots) and has_timetable(run):
        people = timetable_people(problem, run)
    by_slot: dict[int, list[str]] = defaultdict(list)
    for code, n in assignment.items():
        title = problem.events[code].title if code in problem.events else None
        text = f"{code} {title}" if title else code
        slot = slots[n - 1] if isinstance(n, int) and 1 <= n <= len(slots) else None
        end = event_end(problem, code, slot)
        first = text
        if end is not None and end != slot.end:
            first += f" (until {end.strftime('%H:%M')})"
        by_slot[n].append(first)
        for t in (people.taken.get(code, ()) if people is not None else ())[1:]:
            later = slots[t - 1]
            tail = f", until {end.strftime('%H:%M')}" if end is not None and end != later.end else ""
            by_slot[t].append(f"{text} (continued{tail})")
    sessions = max((p.session for p in places), default=0)
    headers = [f"Session {i}" for i in range(1, sessions + 1)]
    days: dict[int, list[SlotPlace]] = defaultdict(list)
    for p in places:
        days[p.day].append(p)
    out = []
    for d in sorted(days):
        members = days[d]
        date = next((p.slot.date for p in members if p.slot.date), None)
        label = date.strftime("%a %d %b %Y") if date else f"Day {d}"
        heads = [""] * sessions
        events: list[list[str]] = [[] for _ in range(sessions)]
        for p in members:
            times = ""
            if p.slot.start:
                times = p.slot.start.strftime("%H:%M") + (f"–{p.slot.end.strftime('%H:%M')}" if p.slot.end else "")
            heads[p.session - 1] = " ".join(x for x in (p.slot.label, times) if x)
            events[p.session - 1] = sorted(by_slot.get(p.number, []))
        out.append(GridDay(label, date, heads, events))
    return headers, out


# --------------------------------------------------------------------------- counts and comparison


def count_text(value: int | None) -> str:
    """An exact count as decimal text (Excel keeps only 15 significant digits of a number)."""
    return "" if value is None else str(int(value))


def _count_log10(c: SlotCount) -> float | None:
    for v in (c.log10, c.estimate_log10):
        if v is not None:
            return float(v)
    t = c.timetables
    if t:
        return _big_log10(int(t))
    return None


def _big_log10(n: int) -> float:
    return log10_int(n) if n > 0 else -math.inf


def power_text(log10: float) -> str:
    """``10^x`` as a reader sees it: ``3.56 × 10^51``, or the plain number below a million."""
    if log10 < 6:
        value = 10 ** log10
        return f"{value:,.2f}" if value < 100 else f"{value:,.0f}"
    exponent = math.floor(log10)
    mantissa = 10 ** (log10 - exponent)
    if mantissa >= 9.995:
        mantissa, exponent = 1.0, exponent + 1
    return f"{mantissa:.2f} × 10^{exponent}"


def interval_words(interval: Sequence[float] | None, prefix: str = "") -> str:
    """``between 10^88 and 10^90, 95 % confidence`` for a log10 interval (empty when None)."""
    if interval is None:
        return ""
    low, high = interval
    if low == high:
        return f"exactly {prefix}{power_text(low)}"
    return f"{prefix}between {power_text(low)} and {power_text(high)}, 95 % confidence"


def ratio_words(c: SlotCount) -> str:
    """The ratio to one slot fewer as its interval, ``× between … and …, 95 % confidence`` (empty when unknown)."""
    return interval_words(c.ratio_interval_log10, "× ")


def counts_table(counts: CountReport) -> PublishedTable:
    """One row per slot count: the exact number of clash-free timetables (as text) and its figures."""
    table = PublishedTable(
        "Counts",
        [
            Column("Slots", INT), Column("Clash-free timetables", BIGINT), Column("Digits", INT), Column("log10", FLOAT),
            Column("Ratio to previous", FLOAT), Column("Exact", FLAG), Column("Lower bound", BIGINT),
            Column("Upper bound", BIGINT), Column("Estimate relative error", FLOAT), Column("Groupings", BIGINT),
            Column("95 % interval, log10 low", FLOAT), Column("95 % interval, log10 high", FLOAT),
            Column("95 % interval"), Column("Ratio to previous, 95 % interval"),
        ],
        title="Number of clash-free timetables for each number of slots",
    )
    for c in counts.counts:
        t = c.timetables
        table.rows.append([
            int(c.slots), count_text(t), len(str(int(t))) if t else (1 if t == 0 else None), _count_log10(c),
            c.ratio_to_previous, bool(c.exact), count_text(c.lower),
            count_text(c.upper), c.estimate_relative_error,
            count_text(c.groupings),
            *(list(c.estimate_interval_log10 or (None, None))),
            interval_words(c.estimate_interval_log10), ratio_words(c),
        ])
    return table


def groups_table(counts: CountReport) -> PublishedTable | None:
    """Per group of events linked by clashes: its size, clashes, how it was counted, and its counts.

    The total for K slots is the product of the groups' counts and K for every event with no
    clash (that factor is shown as its own row when no fixed or barred slot applies).
    """
    components = list(counts.components)
    if not components:
        return None
    ks = [int(c.slots) for c in counts.counts]
    columns = [Column("Group", INT), Column("Events", INT), Column("Event codes"), Column("Clashes", INT),
               Column("Exact", FLAG), Column("Method"), Column("Fewest slots", INT)]
    columns += [Column(f"Timetables with {k} slots", BIGINT) for k in ks]
    table = PublishedTable("Count groups", columns, title="Counts by group of events linked by clashes")
    order = sorted(components, key=lambda c: (-len(c.events), sorted(map(str, c.events))))
    for i, comp in enumerate(order, start=1):
        codes = sorted(map(str, comp.events))
        shown = ", ".join(codes[:30]) + (f", … {len(codes) - 30} more" if len(codes) > 30 else "")
        by_k = {int(c.slots): c for c in comp.counts}
        table.rows.append([i, len(codes), shown, comp.clashes, bool(comp.exact),
                           comp.method or "", comp.chromatic_number]
                          + [count_text(by_k[k].timetables if k in by_k else None) for k in ks])
    isolated = int(counts.isolated_events or 0)
    if isolated and not counts.constrained:
        table.rows.append([None, isolated, "events with no clash: any slot each", 0, True, "closed form (K per event)",
                           1] + [str(k ** isolated) for k in ks])
    return table


def what_if_table(counts: CountReport) -> PublishedTable | None:
    """The counting engine's what-if figures: absent clashes that would hurt most, clashes whose removal frees most,
    and the attendees whose unavailability costs most timetables (the Event column then names the attendee)."""
    risky = list(counts.riskiest_absent_clashes)
    freeing = list(counts.most_freeing_clashes)
    people = list(counts.most_limiting_people)
    if not risky and not freeing and not people:
        return None
    table = PublishedTable(
        "What if",
        [Column("Change"), Column("Event"), Column("Other event"), Column("Slots", INT), Column("Effect", FLOAT),
         Column("Meaning")],
        title="What one change of enrolments or of availability would do to the number of timetables",
    )
    for item in risky:
        a, b = (list(item.get("events", [])) + ["", ""])[:2]
        share = float(item.get("share_lost", 0.0))
        table.rows.append(["a new shared attendee", a, b, item.get("slots"), share,
                           f"one attendee sitting both would rule out {share:.0%} of the timetables"])
    for item in freeing:
        a, b = (list(item.get("events", [])) + ["", ""])[:2]
        gain = float(item.get("gain", 0.0))
        table.rows.append(["clash removed", a, b, item.get("slots"), gain,
                           f"with no attendee sitting both there would be {gain:.3g} times as many timetables"])
    for item in people:
        person = str(item.get("attendee", ""))
        gain = float(item.get("gain", 0.0))
        table.rows.append(["attendee made free", person, "", item.get("slots"), gain,
                           f"if {person} could make every slot there would be {gain:.3g} times as many timetables"])
    return table


def count_for(counts: CountReport | None, k: int) -> SlotCount | None:
    for c in (counts.counts if counts is not None else []):
        if int(c.slots) == int(k):
            return c
    return None


def count_words(c: SlotCount | None) -> str:
    """A count as a reader sees it: exact digits, or '≈ 10^x' when only estimated."""
    if c is None:
        return ""
    t = c.timetables
    if t is not None and c.exact:
        return str(int(t))
    lg = _count_log10(c)
    if lg is not None and math.isfinite(lg):
        return f"about 10^{lg:.1f}"
    lower, upper = c.lower, c.upper
    if lower is not None and upper is not None:  # proven bounds and no estimate: say the bounds
        top = f"{int(upper):,}" if upper < 10 ** 12 else f"about 10^{_big_log10(int(upper)):.1f}"
        return f"between {int(lower):,} and {top}"
    return "not counted"


def validations_for(runs: Sequence[SolveRun], given: Mapping[int, Validation] | None = None) -> dict[int, Validation]:
    """The validator's verdicts the runs carry (``run.validation``, given ones first): exports write the
    checks they are given and never run the validator (:func:`timetabler.plan.checked` does)."""
    out = dict(given or {})
    for run in runs:
        if int(run.slots) not in out and has_timetable(run) and run.validation is not None:
            out[int(run.slots)] = run.validation
    return out


def verdict_words(validation: Validation | None) -> str:
    if validation is None:
        return "not checked"
    if validation.ok:
        return "valid"
    return f"{len(validation.violations)} violation(s)"


def short_sheet_words(fewest: FewestSlots | None) -> str | None:
    """When the slots sheet is shorter than the fewest slots needed: that, plainly, with how many are
    needed and how many rows to add (None otherwise).

    >>> from types import SimpleNamespace as F
    >>> short_sheet_words(F(sheet_too_short=True, slots_in_sheet=3, lower=5, lower_reason="A1 has 5 events"))
    'The Slots sheet has only 3 slots, and at least 5 are needed (A1 has 5 events): add at least 2 rows to the Slots sheet.'
    """
    if fewest is None or not fewest.sheet_too_short:
        return None
    have, need = fewest.slots_in_sheet, fewest.lower
    return (f"The Slots sheet has only {have} slot{'s' if have != 1 else ''}, and at least {need} are needed "
            f"({fewest.lower_reason}): add at least {need - have} row{'s' if need - have != 1 else ''} to the "
            "Slots sheet.")


def fewest_words(fewest: FewestSlots | None, k: int) -> str:
    """What the fewest-slots result says about K slots, in plain words."""
    if fewest is None:
        return ""
    lower, upper = fewest.lower, fewest.upper
    reason = fewest.lower_reason or ""
    proven = bool(fewest.proven)
    if lower is not None and k < lower:
        return f"too few: at least {lower} needed ({reason})"
    if proven and upper == k:
        return f"the fewest possible, proven ({reason})"
    if proven and upper is not None and k > upper:
        return f"{k - upper} more than the fewest ({upper}, proven)"
    if upper is not None and k >= upper:
        return f"a timetable exists with {upper}; fewer than {upper} not ruled out (at least {lower})"
    return f"at least {lower} needed ({reason}); {k} not settled"


def comparison_table(problem: Problem, runs: Sequence[SolveRun], counts: CountReport | None = None,
                     validations: Mapping[int, Validation] | None = None,
                     figures: Mapping[int, RunFigures] | None = None, fewest: FewestSlots | None = None) -> PublishedTable:
    """Every solved slot count side by side."""
    validations = validations or {}
    table = PublishedTable(
        "Comparison",
        [
            Column("Slots", INT, key="slots"), Column("Days", INT, key="days"),
            Column("Clash-free timetable exists", key="exists"), Column("Fewest slots", key="fewest"),
            Column("Status", key="status"), Column("Proven", FLAG, key="proven"), Column("Penalty", INT, key="penalty"),
            Column("Bound", FLOAT, key="bound"), Column("Clash-free timetables", BIGINT, key="timetables"),
            Column("log10 timetables", FLOAT, key="log10_timetables"),
            Column("Attendees with back-to-back", INT, key="attendees_back_to_back"),
            Column("Attendees with two in a day", INT, key="attendees_two_in_a_day"),
            Column("Back-to-back pairs", INT, key="back_to_back_pairs"),
            Column("Same-day pairs, not back-to-back", INT, key="same_day_pairs"),
            Column("Overnight pairs", INT, key="overnight_pairs"), Column("Proximity cost", INT, key="proximity_cost"),
            Column("Peak seats", INT, key="peak_seats"), Column("Peak slot", key="peak_slot"),
            Column("Validator", key="validator"), Column("Solve seconds", FLOAT, key="solve_seconds"),
            Column("Reason", key="reason"),
        ],
        title="Slot counts side by side",
    )
    for run in sorted(runs, key=lambda r: int(r.slots)):
        k = int(run.slots)
        fig = (figures or {}).get(k) or run_figures(problem, run)
        c = count_for(counts, k)
        status = SolveStatus(run.status)
        exists = "yes" if status.found else "no" if status is SolveStatus.INFEASIBLE else "unknown"
        if exists == "unknown" and c is not None and c.exact and c.timetables is not None:
            exists = "yes" if int(c.timetables) > 0 else "no"
        bound = run.bound
        reason = run.reason or ""
        table.rows.append([
            k, fig.days, exists, fewest_words(fewest, k), status, bool(run.proven), run.penalty,
            float(bound) if bound is not None else None, count_words(c), _count_log10(c) if c is not None else None,
            fig.attendees_back_to_back, fig.attendees_two_in_a_day, fig.back_to_back, fig.same_day, fig.overnight,
            fig.proximity, fig.peak_seats,
            fig.peak_slot or "", verdict_words(validations.get(k)) if has_timetable(run) else "",
            run.wall_seconds, reason,
        ])
    return table


def rows_as_json(table: PublishedTable) -> list[dict[str, Any]]:
    """Rows as JSON-ready dicts keyed by the columns' ``key`` (big counts stay decimal text)."""
    out = []
    for row in table.rows:
        doc = {}
        for v, col in zip(row, table.columns):
            if not col.key:
                continue
            if isinstance(v, float) and not math.isfinite(v):
                v = None
            if col.kind == FLOAT and isinstance(v, float):
                v = round(v, 6)
            doc[col.key] = (v or None) if col.kind in (BIGINT, TEXT) and v == "" else v
        out.append(doc)
    return out


def value_text(value: Any, kind: str = TEXT) -> str:
    if value is None:
        return ""
    if kind == FLAG or isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, dt.datetime):
        return value.isoformat(timespec="minutes")
    if isinstance(value, dt.date):
        return value.isoformat()
    if isinstance(value, dt.time):
        return value.strftime("%H:%M")
    if isinstance(value, float):
        if not math.isfinite(value):
            return ""
        return f"{value:.6g}" if kind == FLOAT else repr(value)
    return str(value)
