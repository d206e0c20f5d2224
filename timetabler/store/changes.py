"""What changed between two published versions of a timetable, and who must be told.

No I/O: :func:`changes_between` compares two :class:`~.records.PublishedVersion` objects.

Definitions (the same in every output: terminal, JSON, workbook, CSV, calendars)
----------------------------------------------------------------------------------
A slot is compared by what people see — its label, date and start time — not by its
number, so a version with one slot inserted earlier does not make every later event look
moved.

moved
    Events in both versions whose slot differs, each with its slot in the earlier version
    (``from``), in the later one (``to``) and the attendees enrolled on it in the later
    version (those who must be told the new time).
added
    Events only in the later version, with their slot and attendees.
removed
    Events only in the earlier version, with their old slot and the attendees they had.
attendees
    Everyone whose own timetable differs: for each event they attend in either version,
    the old time (``from``: the event's slot in the earlier version when they were enrolled
    on it there, else ``None``) and the new time (``to``, likewise in the later version),
    listed when the two differ. So a moved event appears for each attendee who sits it
    now; a new enrolment or an added event has ``from`` None; a withdrawal or a removed
    event has ``to`` None. Attendees with nothing changed are not listed.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from ..model import Slot


@dataclass(frozen=True)
class SlotTime:
    """A slot as people see it: its number in its version, label, date and start."""

    number: int
    label: str
    date: str | None
    start: str | None
    end: str | None

    @property
    def seen(self) -> tuple:
        return (self.label.strip().casefold(), self.date, self.start)

    def to_json(self) -> dict:
        return {"slot": self.number, "label": self.label, "date": self.date, "start": self.start, "end": self.end}

    def __str__(self) -> str:
        parts = [self.label]
        when = " ".join(p for p in (self.date, self.start) if p)
        if when and when not in self.label:
            parts.append(f"({when})")
        return " ".join(parts)


def slot_time(slots: list[Slot], number: int) -> SlotTime:
    slot = slots[number - 1]
    return SlotTime(number, slot.label, slot.date.isoformat() if slot.date else None,
                    slot.start.strftime("%H:%M") if slot.start else None,
                    slot.end.strftime("%H:%M") if slot.end else None)


@dataclass
class EventChange:
    event: str
    title: str | None
    before: SlotTime | None
    after: SlotTime | None
    attendees: list[str]

    def to_json(self) -> dict:
        doc = {"event": self.event, "title": self.title}
        if self.before is not None or self.after is not None:
            doc["from"] = self.before.to_json() if self.before else None
            doc["to"] = self.after.to_json() if self.after else None
        doc["attendees"] = list(self.attendees)
        return doc


@dataclass
class AttendeeChange:
    attendee: str
    events: list[tuple[str, SlotTime | None, SlotTime | None]]  # (event, from, to)

    def to_json(self) -> dict:
        return {"attendee": self.attendee,
                "events": [{"event": e, "from": a.to_json() if a else None, "to": b.to_json() if b else None}
                           for e, a, b in self.events]}


@dataclass
class Changes:
    before_label: str
    after_label: str
    moved: list[EventChange] = field(default_factory=list)
    added: list[EventChange] = field(default_factory=list)
    removed: list[EventChange] = field(default_factory=list)
    attendees: list[AttendeeChange] = field(default_factory=list)
    unchanged_events: int = 0

    def to_json(self) -> dict:
        return {"from_label": self.before_label, "to_label": self.after_label,
                "moved": [m.to_json() for m in self.moved],
                "added": [m.to_json() for m in self.added],
                "removed": [m.to_json() for m in self.removed],
                "attendees": [a.to_json() for a in self.attendees],
                "unchanged_events": self.unchanged_events}


def changes_between(before, after) -> Changes:
    """Compare two published versions (``before`` earlier, ``after`` later); see the module docstring.

    Examples
    --------
    >>> from types import SimpleNamespace as V
    >>> from timetabler.model import generic_slots
    >>> a = V(label="a", slots=generic_slots(3), assignment={"X": 1, "Y": 2}, enrolments=[("ann", "X"), ("bob", "Y")],
    ...       titles={})
    >>> b = V(label="b", slots=generic_slots(3), assignment={"X": 3, "Y": 2}, enrolments=[("ann", "X"), ("bob", "Y")],
    ...       titles={})
    >>> c = changes_between(a, b)
    >>> [(m.event, m.before.label, m.after.label, m.attendees) for m in c.moved]
    [('X', 'Slot 1', 'Slot 3', ['ann'])]
    >>> [(p.attendee, [e for e, _, _ in p.events]) for p in c.attendees]
    [('ann', ['X'])]
    """
    time_a = {e: slot_time(before.slots, n) for e, n in before.assignment.items()}
    time_b = {e: slot_time(after.slots, n) for e, n in after.assignment.items()}
    people_a = _attendees_by_event(before.enrolments)
    people_b = _attendees_by_event(after.enrolments)
    titles = {**(before.titles or {}), **(after.titles or {})}
    out = Changes(before.label, after.label)
    for code in sorted(set(time_a) | set(time_b)):
        a, b = time_a.get(code), time_b.get(code)
        if a is not None and b is not None:
            if a.seen != b.seen:
                out.moved.append(EventChange(code, titles.get(code), a, b, sorted(people_b.get(code, ()))))
            else:
                out.unchanged_events += 1
        elif b is not None:
            out.added.append(EventChange(code, titles.get(code), None, b, sorted(people_b.get(code, ()))))
        else:
            out.removed.append(EventChange(code, titles.get(code), a, None, sorted(people_a.get(code, ()))))
    mine_a = _events_by_attendee(before.enrolments, time_a)
    mine_b = _events_by_attendee(after.enrolments, time_b)
    for person in sorted(set(mine_a) | set(mine_b)):
        rows = []
        for code in sorted(mine_a.get(person, set()) | mine_b.get(person, set())):
            a = time_a.get(code) if code in mine_a.get(person, ()) else None
            b = time_b.get(code) if code in mine_b.get(person, ()) else None
            if (a.seen if a else None) != (b.seen if b else None):
                rows.append((code, a, b))
        if rows:
            rows.sort(key=lambda r: (_order(r[2] or r[1]), r[0]))
            out.attendees.append(AttendeeChange(person, rows))
    return out


def _order(t: SlotTime) -> tuple:
    return (t.date or "", t.start or "", t.number)


def _attendees_by_event(pairs) -> dict[str, set[str]]:
    out: dict[str, set[str]] = {}
    for attendee, code in pairs:
        out.setdefault(code, set()).add(attendee)
    return out


def _events_by_attendee(pairs, placed) -> dict[str, set[str]]:
    out: dict[str, set[str]] = {}
    for attendee, code in pairs:
        if code in placed:  # an enrolment on an event the version did not place is not a time anyone was given
            out.setdefault(attendee, set()).add(code)
    return out
