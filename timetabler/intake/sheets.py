"""The optional sheets of an input workbook: events, slots, rooms, rules, weights and attendees.

Each reader finds its header row (the first of the top rows holding the sheet's key
column and at least one other known column), reads every row into model objects, and
records a :class:`~timetabler.errors.Finding` for each cell it cannot make sense of, with
the row and column. Cross-checks between sheets (a rule naming an unknown event, a fixed
slot that does not exist) are in :mod:`timetabler.intake.validation`.
"""

from __future__ import annotations

import datetime as _dt
import re
from dataclasses import dataclass, field

from ..errors import setting
from ..model import MAX_WEIGHT, Attendee, Event, Location, Room, Rule, RuleKind, Slot, Weights, time_order
from .file_types import RawSheet
from .findings import FindingList
from .header_detection import SCAN_ROWS, column_letter
from .people import read_attendees, strict_name
from .normalising import (
    date_value,
    duration_minutes,
    identifier,
    is_blank,
    looks_like_total,
    split_list,
    time_value,
    whole_number,
    yes_no,
)
from .vocabulary import (
    ATTENDEES,
    ATTENDEES_COLUMNS,
    EVENTS_COLUMNS,
    GOAL_LABELS,
    GOAL_WORDS,
    MOST_PER_DAY,
    ROOMS_COLUMNS,
    RULE_WORDS,
    RULES_COLUMNS,
    SLOTS_COLUMNS,
    TOTAL_WORDS,
    WEIGHTS_COLUMNS,
    Column,
    key,
)


@dataclass
class Table:
    """A sheet with its header row found: which column index holds each known column."""

    sheet: RawSheet
    file: str
    header_row: int
    index: dict[str, int]
    headers: list[str]

    def rows(self):
        """(row number, cells) of the non-blank rows below the header."""
        for r in range(self.header_row + 1, len(self.sheet.rows) + 1):
            cells = self.sheet.rows[r - 1]
            if not all(is_blank(c) for c in cells):
                yield r, cells

    def get(self, cells: list[object], name: str) -> object:
        i = self.index.get(name)
        return cells[i] if i is not None and i < len(cells) else None

    def where(self, row: int | None, name: str | None = None) -> Location:
        label = None
        if name is not None and name in self.index:
            i = self.index[name]
            label = f"{column_letter(i)} ({self.headers[i]})"
        return Location(self.file, self.sheet.name, row, label)


def find_table(sheet: RawSheet, file: str, columns: tuple[Column, ...], findings: FindingList,
               strict: bool = True) -> Table | None:
    """Locate the header row of an optional sheet; record an error when it has none (a warning
    that the sheet was not read when not ``strict``)."""
    for r, row in enumerate(sheet.rows[:SCAN_ROWS], start=1):
        headers = [identifier(c) for c in row]
        index: dict[str, int] = {}
        for col in columns:  # the template's own header first, then the other words in order
            for i, h in enumerate(headers):
                if i not in index.values() and key(h) == key(col.name):
                    index[col.name] = i
                    break
        for col in columns:
            if col.name in index:
                continue
            for i, h in enumerate(headers):
                if i not in index.values() and col.matches(h):
                    index[col.name] = i
                    break
        if columns[0].name in index and len(index) >= 2 or (columns[0].name in index and len(columns) == 1):
            for i, h in enumerate(headers):
                if h and i not in index.values():
                    findings.warn(f"The column '{h}' of sheet '{sheet.name}' is not one timetabler knows; it was ignored.",
                                  Location(file, sheet.name, r, f"{column_letter(i)} ({h})"),
                                  expected=", ".join(c.name for c in columns))
            return Table(sheet, file, r, index, headers)
    if not sheet.rows:
        return None  # an empty optional sheet is no sheet
    if not strict:
        findings.warn(f"The sheet '{sheet.name}' was not read: its name suggests {columns[0].name.lower()} details, "
                      f"but it has no header row with a '{columns[0].name}' column and one of "
                      + ", ".join(f"'{c.name}'" for c in columns[1:]) + ".", Location(file, sheet.name),
                      found=", ".join(h for h in (identifier(c) for c in sheet.rows[0]) if h) or "an empty first row",
                      suggestion="Rename the sheet 'Attendees' and use the headers of 'timetabler template' "
                      "if it should be read.")
        return None
    findings.error(
        f"The sheet '{sheet.name}' has no header row with a '{columns[0].name}' column.",
        Location(file, sheet.name),
        found=", ".join(h for h in (identifier(c) for c in sheet.rows[0]) if h) or "an empty first row",
        expected="headers " + ", ".join(c.name for c in columns),
        suggestion="Use the headers of 'timetabler template', or rename the sheet if it holds something else.",
    )
    return None


@dataclass
class Extras:
    """What the optional sheets held, with the row each item came from (for cross-check messages)."""

    events: list[tuple[Event, Location]] = field(default_factory=list)
    slots: list[tuple[Slot, Location]] = field(default_factory=list)
    rooms: list[tuple[Room, Location]] = field(default_factory=list)
    rules: list[Rule] = field(default_factory=list)
    weights: Weights = field(default_factory=Weights)
    max_per_day: int | None = None
    tables: dict[str, Table] = field(default_factory=dict)
    sheets_read: dict[str, str] = field(default_factory=dict)  # role -> sheet name
    people: list[tuple[Attendee, Location]] = field(default_factory=list)  # Attendees sheet, names as typed


def _total_row(cells: list[object]) -> bool:
    return bool(cells) and looks_like_total(cells[0])


def read_events(table: Table, findings: FindingList, extras: Extras) -> None:
    seen: dict[str, int] = {}
    for r, cells in table.rows():
        code = identifier(table.get(cells, "Event"))
        if not code:
            findings.error("This row has no event code.", table.where(r, "Event"),
                           expected="the event's code, as in the enrolments")
            continue
        if key(code) in TOTAL_WORDS:
            findings.warn("This looks like a total row, not an event; it was skipped.", table.where(r, "Event"), found=code)
            continue
        if code.casefold() in seen:
            findings.error(f"The event {code} is listed twice (also in row {seen[code.casefold()]}).",
                           table.where(r, "Event"), found=code, suggestion="Keep one row per event.")
            continue
        seen[code.casefold()] = r
        title = identifier(table.get(cells, "Title")) or None
        if title and key(title) in TOTAL_WORDS:
            findings.warn("This title looks like a total row, not an event title.", table.where(r, "Title"), found=title)
        raw = table.get(cells, "Duration")
        duration = duration_minutes(raw)
        if not is_blank(raw) and (duration is None or duration <= 0):
            findings.error("The duration is not a number of minutes.", table.where(r, "Duration"),
                           found=identifier(raw), expected="minutes as a whole number, e.g. 120")
            duration = None
        event = Event(
            code=code,
            title=title,
            duration_minutes=duration,
            room_type=identifier(table.get(cells, "Room type")) or None,
            fixed_slot=identifier(table.get(cells, "Fixed slot")) or None,
            barred_slots=tuple(split_list(table.get(cells, "Barred slots"))),
            group=identifier(table.get(cells, "Group")) or None,
            preferred_slots=tuple(split_list(table.get(cells, "Preferred slots"))),
            preferred_rooms=tuple(split_list(table.get(cells, "Preferred rooms"))),
            quorum=_quorum(table, cells, r, findings),
        )
        extras.events.append((event, table.where(r)))


def _quorum(table: Table, cells: list[object], r: int, findings: FindingList) -> int | None:
    raw = table.get(cells, "Quorum")
    if is_blank(raw):
        return None
    quorum = whole_number(raw)
    if quorum is None or quorum < 1:
        findings.error("The quorum is not a whole number of attendees.", table.where(r, "Quorum"),
                       found=identifier(raw), expected="a whole number, 1 or more (or blank for no quorum)")
        return None
    return quorum


_AMBIGUOUS_DATE = re.compile(r"^\s*(\d{1,2})[/.-](\d{1,2})[/.-]\d{2,4}\s*$")


def read_slots(table: Table, findings: FindingList, extras: Extras) -> None:
    seen: dict[str, int] = {}
    ambiguous: tuple[int, str, object] | None = None
    for r, cells in table.rows():
        label = identifier(table.get(cells, "Slot"))
        if _total_row(cells):
            findings.warn("This looks like a total row, not a slot; it was skipped.", table.where(r, "Slot"), found=label)
            continue
        if not label:
            findings.error("This row has no slot name.", table.where(r, "Slot"), expected="a name such as 'Mon 11 Jan AM'")
            continue
        if label.casefold() in seen:
            findings.error(f"The slot '{label}' is listed twice (also in row {seen[label.casefold()]}).",
                           table.where(r, "Slot"), found=label, suggestion="Give every slot its own name.")
            continue
        seen[label.casefold()] = r
        raw_date, raw_start = table.get(cells, "Date"), table.get(cells, "Start")
        date = date_value(raw_date)
        m = _AMBIGUOUS_DATE.match(raw_date) if isinstance(raw_date, str) else None
        if m and date is not None and ambiguous is None and int(m.group(1)) <= 12 and int(m.group(2)) <= 12 \
                and m.group(1) != m.group(2):
            ambiguous = (r, raw_date, date)
        if not is_blank(raw_date) and date is None:
            findings.error("This is not a date.", table.where(r, "Date"), found=identifier(raw_date),
                           expected="a date cell, or text such as 2027-01-11 or 11/01/2027 (day first)")
        start = time_value(raw_start)
        if is_blank(raw_start) and isinstance(raw_date, _dt.datetime) and raw_date.time() != _dt.time(0):
            start = raw_date.time()  # a date-and-time cell gives the start when there is no Start column
        if not is_blank(raw_start) and start is None:
            findings.error("This is not a time of day.", table.where(r, "Start"), found=identifier(raw_start),
                           expected="a time cell, or text such as 09:00 or 2pm")
        raw_len = table.get(cells, "Length")
        length = duration_minutes(raw_len)
        if not is_blank(raw_len) and (length is None or length <= 0):
            findings.error("The length is not a number of minutes.", table.where(r, "Length"),
                           found=identifier(raw_len), expected="minutes as a whole number, e.g. 180")
            length = None
        raw_seats = table.get(cells, "Seats")
        seats = whole_number(raw_seats)
        if not is_blank(raw_seats) and (seats is None or seats < 0):
            findings.error("The number of seats is not a whole number.", table.where(r, "Seats"),
                           found=identifier(raw_seats), expected="a whole number, 0 or more")
            seats = None
        raw_day = table.get(cells, "Day")
        day = whole_number(raw_day)
        if not is_blank(raw_day) and (day is None or day < 1):
            findings.error("The day is not a day number.", table.where(r, "Day"), found=identifier(raw_day),
                           expected="1 for the first day, 2 for the second, ...")
            day = None
        avoid = _yes_no_cell(table, cells, r, "Avoid", findings)
        slot = Slot(label=label, date=date, start=start, length_minutes=length, seat_capacity=seats, day=day,
                    penalised=avoid, where=table.where(r))
        extras.slots.append((slot, table.where(r)))
    if ambiguous is not None:
        r, text, date = ambiguous
        findings.warn(f"Dates such as '{text}' were read day first, as {date:%d %B %Y}.", table.where(r, "Date"),
                      suggestion="If your dates are month first, write them as year-month-day (e.g. 2027-03-05) "
                      "or as date cells.")
    extras.slots = _in_time_order(table, extras.slots, findings)


def _moment(slot: Slot) -> str:
    when = slot.date.isoformat() if slot.date else (f"day {slot.day}" if slot.day else "")
    return " ".join(x for x in (when, slot.start.strftime("%H:%M") if slot.start else "") if x)


def _in_time_order(table: Table, read: list[tuple[Slot, Location]], findings: FindingList) -> list[tuple[Slot, Location]]:
    """The slots sorted into time order, with a finding for each thing about time worth knowing:
    rows out of order (the slots are numbered in time order, not by row), a Day column that
    disagrees with the dates, no dates and no day numbers (each slot is then a day of its own,
    in the order of the rows), and slots that overlap in time."""
    if not read:
        return read
    slots = [s for s, _ in read]
    dated = [s for s in slots if s.date is not None]
    numbered = [s for s in slots if s.day is not None]
    if not dated and not numbered:
        findings.warn("The slots sheet gives no dates and no day numbers, so each slot is taken as a day of its own, "
                      "in the order of the rows: back-to-back and same-day goals cannot be judged.",
                      table.where(table.header_row, "Date" if "Date" in table.index else None),
                      suggestion="Give each slot a date (and a start time), or a day number in a Day column.")
    elif not dated and len(numbered) < len(slots):
        first = next(w for s, w in read if s.day is None)
        findings.warn("Some slots have a day number and some do not, so each slot is taken as a day of its own, "
                      "in the order of the rows.", table.where(first.row, "Day"),
                      suggestion="Give every slot a day number, or none.")
    if dated and len(dated) == len(slots) and numbered:
        _check_days_match_dates(table, read, findings)
    order = time_order(slots)
    moved = [n for n, i in enumerate(order) if i != n]
    if moved:
        first = read[order[moved[0]]]
        findings.warn(
            f"The rows of the slots sheet are not in time order; the slots are used in time order (by date, then "
            f"start time), "
            f"so slot {moved[0] + 1} is '{first[0].label}' ({_moment(first[0])}, row {first[1].row}).",
            table.where(first[1].row, "Date" if dated else "Day"), found=_moment(first[0]),
            suggestion=f"Slot numbers (in the Events and Rooms sheets, {setting('slots')} and the results) count in time "
                       "order; list the rows in time order to make them match the rows.")
    ordered = [read[i] for i in order]
    _warn_overlaps(table, ordered, findings)
    return ordered


def _check_days_match_dates(table: Table, read: list[tuple[Slot, Location]], findings: FindingList) -> None:
    """A Day column beside dates must give one number per date, rising with the dates."""
    day_of_date: dict[_dt.date, tuple[int, int | None]] = {}
    date_of_day: dict[int, _dt.date] = {}
    for slot, where in read:
        if slot.day is None:
            findings.error("This slot has a date but no day number, while other slots have one.",
                           table.where(where.row, "Day"), expected="a day number on every row, or none",
                           suggestion="Leave the Day column out: days follow the dates.")
            return
        known = day_of_date.setdefault(slot.date, (slot.day, where.row))
        other = date_of_day.setdefault(slot.day, slot.date)
        if known[0] != slot.day or other != slot.date:
            findings.error("The day number disagrees with the dates.", table.where(where.row, "Day"),
                           found=f"day {slot.day} on {slot.date.isoformat()}",
                           expected=(f"day {known[0]}, as on row {known[1]} of the same date" if known[0] != slot.day
                                     else f"a day number other than {slot.day}, which is {other.isoformat()}"),
                           suggestion="Leave the Day column out: days follow the dates.")
            return
    dates = sorted(day_of_date)
    for a, b in zip(dates, dates[1:]):
        if day_of_date[a][0] > day_of_date[b][0]:
            findings.error("The day numbers do not rise with the dates.", table.where(day_of_date[b][1], "Day"),
                           found=f"day {day_of_date[b][0]} on {b.isoformat()}, after day {day_of_date[a][0]} on "
                                 f"{a.isoformat()}", suggestion="Leave the Day column out: days follow the dates.")
            return


def _warn_overlaps(table: Table, ordered: list[tuple[Slot, Location]], findings: FindingList) -> None:
    """Consecutive dated slots whose times overlap: an attendee could be given events in both."""
    for (a, wa), (b, wb) in zip(ordered, ordered[1:]):
        if a.date is None or a.date != b.date or a.start is None or b.start is None:
            continue
        start_a = _dt.datetime.combine(a.date, a.start)
        end_a = start_a + _dt.timedelta(minutes=a.length_minutes or 0)
        start_b = _dt.datetime.combine(b.date, b.start)
        if start_b < end_a or start_b == start_a:
            findings.warn(f"The slots '{a.label}' (row {wa.row}) and '{b.label}' (row {wb.row}) overlap in time, "
                          "so an attendee could be given events in both at once.", table.where(wb.row, "Start"),
                          found=f"{_moment(b)}, while '{a.label}' runs {_moment(a)}"
                                + (f" for {a.length_minutes} minutes" if a.length_minutes else ""),
                          suggestion="Check the start times and lengths; merge slots that are really one session.")
            return


def read_rooms(table: Table, findings: FindingList, extras: Extras) -> None:
    seen: dict[str, int] = {}
    for r, cells in table.rows():
        name = identifier(table.get(cells, "Room"))
        if _total_row(cells):
            findings.warn("This looks like a total row, not a room; it was skipped.", table.where(r, "Room"), found=name)
            continue
        if not name:
            findings.error("This row has no room name.", table.where(r, "Room"))
            continue
        if name.casefold() in seen:
            findings.error(f"The room '{name}' is listed twice (also in row {seen[name.casefold()]}).",
                           table.where(r, "Room"), found=name)
            continue
        seen[name.casefold()] = r
        raw = table.get(cells, "Capacity")
        capacity = whole_number(raw)
        if capacity is None or capacity < 1:
            findings.error("The capacity is not a whole number of seats.", table.where(r, "Capacity"),
                           found=identifier(raw), expected="a whole number, 1 or more")
            capacity = 0
        avoid = _yes_no_cell(table, cells, r, "Avoid", findings)
        shared = _yes_no_cell(table, cells, r, "Shared", findings, blank=True)
        room = Room(name=name, capacity=capacity, room_type=identifier(table.get(cells, "Room type")) or None,
                    unavailable_slots=tuple(split_list(table.get(cells, "Unavailable slots"))), penalised=avoid,
                    shared=shared)
        extras.rooms.append((room, table.where(r)))


def read_rules(table: Table, findings: FindingList, extras: Extras) -> None:
    kinds = ", ".join(sorted(set(RULE_WORDS.values())))
    for r, cells in table.rows():
        raw_kind = identifier(table.get(cells, "Rule"))
        word = RULE_WORDS.get(key(raw_kind))
        first = identifier(table.get(cells, "First event"))
        others = split_list(table.get(cells, "Other events"))
        if word is None:
            findings.error("This rule is not one timetabler knows.", table.where(r, "Rule"), found=raw_kind,
                           expected=kinds, suggestion="Pick the rule from the drop-down list of the template.")
            continue
        kind = RuleKind(word)
        if not first:
            findings.error(f"The '{word}' rule names no event.", table.where(r, "First event"), expected="an event code")
            continue
        events = (first, *others)
        if kind is RuleKind.BEFORE and len(others) != 1:
            findings.error("A 'before' rule needs exactly one other event (the one that comes later).",
                           table.where(r, "Other events"), found=", ".join(others) or "nothing",
                           expected="one event code", suggestion="Write one rule per pair of events.")
            continue
        if kind in (RuleKind.SAME_SLOT, RuleKind.DIFFERENT_DAYS) and not others:
            findings.error(f"A '{word}' rule needs at least one other event.", table.where(r, "Other events"),
                           found="nothing", expected="one or more event codes, separated by ;")
            continue
        if kind is RuleKind.ALONE and others:
            findings.error("An 'alone' rule takes no other events.", table.where(r, "Other events"),
                           found=", ".join(others), expected="this cell blank",
                           suggestion="Write one 'alone' rule per event.")
            continue
        if len({e.casefold() for e in events}) != len(events):
            findings.error("The rule names the same event twice.", table.where(r, "Other events"), found=", ".join(events))
            continue
        extras.rules.append(Rule(kind=kind, events=events, where=table.where(r)))


def _yes_no_cell(table: Table, cells, r: int, column: str, findings: FindingList, *, blank: bool = False) -> bool:
    """A yes/no column of a slots or rooms row (Avoid, Shared): a blank cell is ``blank``;
    anything but yes or no is an error."""
    raw = table.get(cells, column)
    if is_blank(raw):
        return blank
    value = yes_no(raw)
    if value is None:
        findings.error(f"{column} must be yes or no.", table.where(r, column), found=identifier(raw),
                       expected=f"yes, or no (or blank for {'yes' if blank else 'no'})")
        return blank
    return value


def read_weights(table: Table, findings: FindingList, extras: Extras) -> None:
    goals = ", ".join(list(GOAL_LABELS.values()) + [MOST_PER_DAY[0]])
    for r, cells in table.rows():
        raw_goal = identifier(table.get(cells, "Goal"))
        raw_weight = table.get(cells, "Weight")
        weight = whole_number(raw_weight)
        goal_key = key(raw_goal)
        if goal_key in MOST_PER_DAY:
            if is_blank(raw_weight):
                continue
            if weight is None or weight < 1:
                findings.error("The most events per day must be a whole number, 1 or more (or blank for no limit).",
                               table.where(r, "Weight"), found=identifier(raw_weight))
                continue
            extras.max_per_day = weight
            continue
        attr = GOAL_WORDS.get(goal_key)
        if attr is None:
            findings.error("This goal is not one timetabler knows.", table.where(r, "Goal"), found=raw_goal, expected=goals)
            continue
        if is_blank(raw_weight):
            continue  # keep the default
        if weight is None or weight < 0 or weight > MAX_WEIGHT:
            findings.error(f"A weight must be a whole number from 0 to {MAX_WEIGHT:,}.", table.where(r, "Weight"),
                           found=identifier(raw_weight), expected="e.g. 10; 0 switches the goal off")
            continue
        setattr(extras.weights, attr, weight)


READERS = {
    "Events": (EVENTS_COLUMNS, read_events),
    "Slots": (SLOTS_COLUMNS, read_slots),
    "Rooms": (ROOMS_COLUMNS, read_rooms),
    "Rules": (RULES_COLUMNS, read_rules),
    "Weights": (WEIGHTS_COLUMNS, read_weights),
    ATTENDEES: (ATTENDEES_COLUMNS, read_attendees),  # last: it checks its slots and room types against those read
}


def read_extras(sheets: dict[str, RawSheet], file: str, findings: FindingList) -> Extras:
    """Read the optional sheets found (role -> sheet), in a fixed order."""
    extras = Extras()
    for role, (columns, reader) in READERS.items():
        sheet = sheets.get(role)
        if sheet is None:
            continue
        strict = role != ATTENDEES or strict_name(str(sheet.name))
        table = find_table(sheet, file, columns, findings, strict=strict)
        if table is None:
            continue
        extras.tables[role] = table
        extras.sheets_read[role] = str(sheet.name)
        reader(table, findings, extras)
    return extras
