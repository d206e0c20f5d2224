"""The people in the input: the Attendees sheet, the enrolments' Attendance column, the events' Quorum.

The Attendees sheet (optional; see :mod:`timetabler.intake.vocabulary`) has one row per
attendee with something the timetable must know of them: the slots they cannot make, extra
time, a room of their own. :func:`read_attendees` reads it with the sheets before it already
read (the Slots and Rooms sheets), so each unavailable reference is checked as it is read:

* a slot name (any case) becomes the Slots sheet's spelling; a number 1..K stays a number
  (without a Slots sheet any number, or ``Slot N``, is kept: K is chosen later);
* a date (a date cell, or text in the forms the Slots sheet accepts: ``2027-01-11``,
  ``11/01/2027`` day first, ``11 January 2027``) becomes ISO text, meaning every slot of that
  day; a date-and-time cell names the slot starting then. A date outside the slots' first to
  last day is an error (a wrong year is the usual slip); a date inside it on which no slot
  falls is harmless and only warned about;
* anything else is an error naming the slots that exist.

Extra time is a whole percentage, 0 to :data:`~.vocabulary.MAX_EXTRA_TIME_PERCENT` (``25``,
``25%``, ``25 percent``, or a cell formatted as a percentage, which holds 0.25). An own-room
type must be a type of the Rooms sheet when there is one. An attendee listed twice with the
same details is read once (a warning); with different details it is an error.

:func:`attach_people` then files the rows under the attendees' names as the enrolments spell
them and warns about what cannot be used: attendees with no enrolment (named; left out),
extra time when the slots have no start times and lengths, own rooms without a Rooms sheet.
:func:`attach_attendance` turns the Attendance column into ``Problem.optional``, and
:func:`check_quorums` checks each quorum against the event's attendees.
"""

from __future__ import annotations

import datetime as _dt
import re
from typing import Callable

from ..model import Attendee, Location, Problem, Slot
from .findings import FindingList
from .normalising import date_value, identifier, is_blank, looks_like_total
from .vocabulary import ATTENDEE_WORDS, ATTENDEES_COLUMNS, ATTENDEES_SHEET_NAMES, MAX_EXTRA_TIME_PERCENT, key

_SLOT_NUMBER = re.compile(r"^(slot\s*)?(\d+)$", re.IGNORECASE)
_PERCENT = re.compile(r"^([+-]?\d+(?:[.,]\d+)?)\s*(%|percent|per cent|pc)?$", re.IGNORECASE)


class PeopleRows:
    """What the Attendees sheet held, row by row, before the names are matched to the enrolments."""

    def __init__(self) -> None:
        self.people: list[tuple[Attendee, Location]] = []
        self.by_key: dict[str, int] = {}  # name (case folded) -> index into people


def strict_name(sheet_name: str) -> bool:
    """True when the sheet's name says Attendees sheet and nothing else (a missing header is then an error)."""
    return key(sheet_name) in ATTENDEES_SHEET_NAMES


def looks_like_attendees(headers: list[str]) -> bool:
    """A header row of a sheet whose name says nothing, holding an Attendees sheet: a column naming
    attendees by one of the attendee words (not a bare ``Name`` or ``ID``, which rooms have too),
    one of the Attendees sheet's other columns, and no column of the Rooms or Events sheets.

    >>> looks_like_attendees(["Student", "Extra time"]), looks_like_attendees(["Name", "Capacity", "Unavailable"])
    (True, False)
    """
    keys = [key(h) for h in headers]
    named = any(k and k.split()[0] in ATTENDEE_WORDS for k in keys)
    others = any(col.matches(h) for col in ATTENDEES_COLUMNS[1:] for h in headers)
    foreign = any(k.split()[0] in ("room", "capacity", "seats", "event", "exam", "module", "course", "paper",
                                   "meeting", "slot", "session")
                  for k in keys if k and not any(col.matches(k) for col in ATTENDEES_COLUMNS))
    return named and others and not foreign


def sheet_looks_like_attendees(rows: list[list[object]], scan: int = 30) -> bool:
    """True when one of the top rows of a sheet is an Attendees header row (:func:`looks_like_attendees`)."""
    return any(looks_like_attendees([identifier(c) for c in row]) for row in rows[:scan])


def read_attendees(table, findings: FindingList, extras) -> None:
    """Read the Attendees sheet (a :class:`~.sheets.Table`) into ``extras.people``."""
    rows = PeopleRows()
    slots = [s for s, _ in extras.slots]
    slots_read = "Slots" in extras.tables
    room_types = {}
    for room, _ in extras.rooms:
        if room.room_type:
            room_types.setdefault(room.room_type.casefold(), room.room_type)
    rooms_read = "Rooms" in extras.tables
    for r, cells in table.rows():
        raw_name = table.get(cells, "Attendee")
        name = identifier(raw_name)
        if looks_like_total(raw_name):
            findings.warn("This looks like a total row, not an attendee; it was skipped.", table.where(r, "Attendee"),
                          found=name)
            continue
        if not name:
            findings.error("This row has no attendee.", table.where(r, "Attendee"),
                           expected="the attendee, exactly as in the Enrolments sheet")
            continue
        unavailable = _unavailable(table, cells, r, slots, slots_read, findings)
        extra = _extra_time(table, cells, r, findings)
        own = identifier(table.get(cells, "Own room")) or None
        if own is not None and rooms_read:
            known = room_types.get(own.casefold())
            if known is None:
                kinds = ", ".join(sorted(room_types.values())) or "none: no room of the Rooms sheet has a type"
                findings.error(f"The attendee {name} needs an own room of a type that no room has.",
                               table.where(r, "Own room"), found=own, expected=f"one of the Rooms sheet's types: {kinds}",
                               suggestion="Give the room type (as in the Rooms sheet's Room type column), not a room's name.")
            else:
                own = known
        person = Attendee(name, unavailable=unavailable, extra_time_percent=extra, own_room_type=own,
                          where=table.where(r))
        folded = name.casefold()
        if folded in rows.by_key:
            before, where_before = rows.people[rows.by_key[folded]]
            differ = _differences(before, person)
            if differ:
                column, mine, theirs = differ[0]
                findings.error(f"The attendee {name} is listed twice with different details (also in row "
                               f"{where_before.row}).", table.where(r, column), found=mine,
                               expected=f"{theirs}, as in row {where_before.row}, or one row per attendee",
                               suggestion="Keep one row per attendee, with all their details.")
            else:
                findings.warn(f"The attendee {name} is listed twice (also in row {where_before.row}), with the "
                              "same details; they were read once.", table.where(r, "Attendee"), found=name)
            continue
        rows.by_key[folded] = len(rows.people)
        rows.people.append((person, table.where(r)))
    extras.people = rows.people


def _differences(a: Attendee, b: Attendee) -> list[tuple[str, str, str]]:
    """(column, this row's value, the earlier row's value) for each detail two rows of one attendee disagree on."""
    out = []
    if sorted(x.casefold() for x in a.unavailable) != sorted(x.casefold() for x in b.unavailable):
        out.append(("Unavailable slots", "; ".join(b.unavailable) or "none", "; ".join(a.unavailable) or "none"))
    if a.extra_time_percent != b.extra_time_percent:
        out.append(("Extra time", f"{b.extra_time_percent}%", f"{a.extra_time_percent}%"))
    if (a.own_room_type or "").casefold() != (b.own_room_type or "").casefold():
        out.append(("Own room", b.own_room_type or "none", a.own_room_type or "none"))
    return out


def _pieces(raw: object, slots: list[Slot]) -> list[object]:
    """The references in one Unavailable slots cell: split at ``;`` and line breaks, then at commas
    unless the piece with its commas is a slot's name or a date (``Monday, 11 January 2027``)."""
    if is_blank(raw):
        return []
    if not isinstance(raw, str):
        return [raw]
    labels = {s.label.strip().casefold() for s in slots}
    out: list[object] = []
    for piece in (identifier(p) for p in re.split(r"[;\n]", raw)):
        if not piece:
            continue
        if "," in piece and piece.casefold() not in labels and date_value(piece) is None:
            parts = [identifier(p) for p in piece.split(",")]
            i = 0
            while i < len(parts):  # the longest run of parts that, commas and all, names a slot
                for j in range(len(parts), i, -1):
                    joined = ", ".join(parts[i:j])
                    if j == i + 1 or joined.casefold() in labels:
                        if joined:
                            out.append(joined)
                        i = j
                        break
        else:
            out.append(piece)
    return out


def _expected_slots(slots: list[Slot], slots_read: bool) -> str:
    if slots_read and slots:
        shown = ", ".join(s.label for s in slots[:4]) + (", ..." if len(slots) > 4 else "")
        dated = [s.date for s in slots if s.date]
        days = f", or a date from {min(dated).isoformat()} to {max(dated).isoformat()}" if dated else ""
        return f"a slot name from the Slots sheet ({shown}), a number 1..{len(slots)}{days}"
    return "a slot number such as 3 (there is no Slots sheet, so slots have no names and no dates)"


def _unavailable(table, cells, r: int, slots: list[Slot], slots_read: bool, findings: FindingList) -> tuple[str, ...]:
    """The references of one row's Unavailable slots cell, checked against the slots and normalised."""
    by_label = {s.label.strip().casefold(): s.label for s in slots}
    dates = sorted({s.date for s in slots if s.date is not None})
    out: list[str] = []
    where = table.where(r, "Unavailable slots")
    expected = _expected_slots(slots, slots_read)
    for piece in _pieces(table.get(cells, "Unavailable slots"), slots):
        text = identifier(piece)
        if isinstance(piece, str) and text.casefold() in by_label:
            out.append(by_label[text.casefold()])
            continue
        if isinstance(piece, _dt.datetime) and piece.time() != _dt.time(0):
            named = [s.label for s in slots if s.date == piece.date() and s.start == piece.time()]
            if named:
                out.append(named[0])
            else:
                findings.error("This date and time is not the start of any slot.", where, found=text,
                               expected=expected + " (a date alone means every slot of that day)")
            continue
        number = _slot_number(piece)
        if number is not None:
            if slots_read and not 1 <= number <= len(slots):
                findings.error("This names a slot that does not exist.", where, found=text, expected=expected)
            else:
                out.append(str(number))
            continue
        day = date_value(piece)
        if day is None:
            findings.error("This names a slot that does not exist.", where, found=text, expected=expected,
                           suggestion="Separate several slots with ; and write dates as 2027-01-11 or 11/01/2027.")
            continue
        if not slots_read or not dates:
            findings.error("This is a date, but the slots have no dates, so it names no slot.", where, found=text,
                           expected=expected, suggestion="Give the slots dates in the Slots sheet, or name the slots.")
            continue
        if not dates[0] <= day <= dates[-1]:
            findings.error(f"No slot falls on {day:%A %d %B %Y}: the slots run from {dates[0]:%d %B %Y} to "
                           f"{dates[-1]:%d %B %Y}.", where, found=text, expected=expected,
                           suggestion="Check the year and the month (dates are read day first: 05/03 is 5 March).")
            continue
        if day not in dates:
            findings.warn(f"No slot falls on {day:%A %d %B %Y}, so this unavailable day changes nothing.", where,
                          found=text)
        out.append(day.isoformat())
    return tuple(dict.fromkeys(out))


def _slot_number(piece: object) -> int | None:
    """A slot number from a number cell or text ``3`` / ``Slot 3``; None for anything else."""
    if isinstance(piece, bool) or isinstance(piece, (_dt.date, _dt.time)):
        return None
    if isinstance(piece, (int, float)):
        return int(piece) if float(piece).is_integer() and piece >= 1 else None
    m = _SLOT_NUMBER.match(str(piece).strip())
    return int(m.group(2)) if m and int(m.group(2)) >= 1 else None


def extra_time_percent(value: object) -> int | None:
    """A whole percentage from ``25``, ``"25%"``, ``"25 percent"`` or a percentage cell (0.25); blank is 0;
    None when the value is not one (text, a fraction of a percent, a negative number).

    >>> [extra_time_percent(v) for v in (25, "25%", " 50 % ", 0.25, None, "25 minutes", -5, 12.5)]
    [25, 25, 50, 25, 0, None, None, None]
    """
    if is_blank(value):
        return 0
    if isinstance(value, bool):
        return None
    if isinstance(value, (int, float)):
        number, sign = float(value), False
    else:
        m = _PERCENT.match(identifier(value))
        if not m:
            return None
        number, sign = float(m.group(1).replace(",", ".")), m.group(2) is not None
    if not sign and 0 < number < 1:
        number = round(number * 100, 6)  # a cell formatted as a percentage holds the fraction (25% is 0.25)
    if number < 0 or not number.is_integer():
        return None
    return int(number)


def _extra_time(table, cells, r: int, findings: FindingList) -> int:
    raw = table.get(cells, "Extra time")
    percent = extra_time_percent(raw)
    if percent is None:
        findings.error("The extra time is not a percentage.", table.where(r, "Extra time"), found=identifier(raw),
                       expected=f"a whole percentage from 0 to {MAX_EXTRA_TIME_PERCENT}, e.g. 25 or 25%",
                       suggestion="Give extra time as a percentage of the event's length (15 minutes in an hour is 25).")
        return 0
    if percent > MAX_EXTRA_TIME_PERCENT:
        findings.error("The extra time is more than timetabler takes for a percentage.", table.where(r, "Extra time"),
                       found=identifier(raw), expected=f"a whole percentage from 0 to {MAX_EXTRA_TIME_PERCENT}",
                       suggestion="Give extra time as a percentage, not in minutes (100 is double time).")
        return 0
    return percent


def attach_people(problem: Problem, people: list[tuple[Attendee, Location]], canonical: Callable[[str], str | None],
                  findings: FindingList, rooms_read: bool) -> None:
    """File the Attendees sheet's rows in ``problem.people`` under the enrolments' spelling of each name.

    ``canonical(name)`` gives that spelling, or None for a name with no enrolment: such rows are
    left out, and one warning names them. Warns when extra time cannot be placed (some slot has no
    start time or length, or there is no Slots sheet) and when own rooms are given without a Rooms sheet.
    """
    missing: list[tuple[Attendee, Location]] = []
    for person, where in people:
        name = canonical(person.name)
        if name is None:
            missing.append((person, where))
            continue
        person.name = name
        problem.people[name] = person
    if missing:
        shown = ", ".join(p.name for p, _ in missing[:8]) + (f" and {len(missing) - 8} more" if len(missing) > 8 else "")
        findings.warn(f"{len(missing)} attendee(s) of the attendees sheet have no enrolment, so their details were "
                      f"not used: {shown}.", _column(missing[0][1], "A (Attendee)"), found=missing[0][0].name,
                      expected="each attendee spelled as in the enrolments",
                      suggestion="Check the spelling of the names, or delete the rows of people who attend nothing.")
    extra = [p for p in problem.people.values() if p.extra_time_percent > 0]
    unplaced = [s.label for s in problem.slots if s.start is None or not s.length_minutes]
    if extra and (not problem.slots or unplaced):
        why = ("there is no Slots sheet" if not problem.slots else
               f"the slots {', '.join(unplaced[:3])}{', ...' if len(unplaced) > 3 else ''} have no start time "
               "and length")
        findings.warn(f"{len(extra)} attendee(s) have extra time, but {why}, so the extra time cannot be placed and "
                      "is ignored there.", extra[0].where, found=f"{extra[0].name}: {extra[0].extra_time_percent}%",
                      suggestion="Give every slot a start time and a length in the Slots sheet.")
    own = [p for p in problem.people.values() if p.own_room_type]
    if own and not rooms_read:
        findings.warn(f"{len(own)} attendee(s) need a room of their own, but there is no rooms sheet, so rooms are "
                      "not planned and their own rooms were ignored.", own[0].where, found=own[0].own_room_type,
                      suggestion="Add a Rooms sheet with every room, its capacity and type.")


def _column(where: Location, column: str) -> Location:
    return Location(where.file, where.sheet, where.row, column)


def attach_attendance(problem: Problem, marked: list[tuple[str, str, int, bool]], findings: FindingList,
                      where_row: Callable[[int], Location]) -> None:
    """Fill ``problem.optional`` from the enrolments' (attendee, event, row, optional) as the enrolments
    name them; an enrolment given twice, once required and once optional, is an error."""
    first: dict[tuple[str, str], tuple[bool, int]] = {}
    for attendee, code, row, optional in marked:
        pair = (attendee, code)
        seen = first.setdefault(pair, (optional, row))
        if seen[0] != optional:
            findings.error(f"The enrolment of {attendee} on {code} is given twice, once as required and once as "
                           f"optional (also in row {seen[1]}).", where_row(row),
                           found="optional" if optional else "required",
                           expected=f"{'optional' if seen[0] else 'required'}, as in row {seen[1]}",
                           suggestion="Keep one row per attendee and event.")
    problem.optional = {pair for pair, (optional, _) in first.items() if optional}


def check_quorums(problem: Problem, findings: FindingList, where_quorum: Callable[[str], Location | None]) -> None:
    """A quorum cannot ask for more attendees than the event has."""
    sizes = problem.event_sizes()
    for code, event in problem.events.items():
        if event.quorum and event.quorum > sizes.get(code, 0):
            findings.error(f"The quorum of {code} is larger than its number of attendees.", where_quorum(code),
                           found=event.quorum, expected=f"at most {sizes.get(code, 0)}, the attendees enrolled on {code}",
                           suggestion="Check the quorum, or the enrolments of the event.")
