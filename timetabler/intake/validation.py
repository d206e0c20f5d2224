"""Cross-checks between the sheets, and warnings about figures that look wrong.

Errors (the run stops):

* a rule naming an event that is neither enrolled nor in the events sheet;
* a fixed, barred or preferred slot, or a room's unavailable slot, that is not a slot
  (a slot name from the slots sheet, or a slot number; without a slots sheet only
  numbers and ``Slot N`` can be checked later against the number of slots chosen);
* an event fixed to a slot it is also barred from;
* a preferred room that is not in the rooms sheet (names are matched without regard to
  case and are rewritten to the rooms sheet's spelling);
* an event longer than every slot; an event needing a room type no room has.

Warnings (the run goes on; they are shown and kept in the output):

* a ``same slot`` rule between events that share attendees (no clash-free timetable can
  then exist; the solver reports it as infeasible, this says why before any solving);
* an event with nobody enrolled;
* an attendee with an implausible number of events (more than
  ``max(15, 4 × median)`` — a rule of thumb, common practice with no single source);
* the attendee and event columns possibly swapped (at least 10 events and more than
  twice as many events as attendees);
* preferred rooms given when there is no rooms sheet (they are ignored); a preferred room
  of another type than the event needs, or too small to seat it whole;
* identifiers that differ only by leading zeros (``0123`` and ``123``), or event codes that
  differ only by case and were merged.
"""

from __future__ import annotations

import datetime as dt
import re
import statistics

from ..errors import setting
from ..model import Event, Location, Problem, RuleKind, Slot
from .findings import FindingList
from .normalising import identifier
from .sheets import Extras

_SLOT_NUMBER = re.compile(r"^(slot\s*)?(\d+)$", re.IGNORECASE)


def slot_reference_ok(ref: str, slots: list[Slot]) -> bool:
    """True when a slot reference names a slot (by label or number), or could once K is chosen."""
    if slots:
        return Problem([]).slot_number(ref, slots) is not None
    m = _SLOT_NUMBER.match(ref.strip())
    return bool(m) and int(m.group(2)) >= 1


def _slot_expectation(slots: list[Slot]) -> str:
    if slots:
        shown = ", ".join(s.label for s in slots[:4]) + (", ..." if len(slots) > 4 else "")
        return f"a slot name from the slots sheet ({shown}) or a number 1..{len(slots)}"
    return "a slot number such as 3 (there is no slots sheet, so slots have no names)"


def cross_check(problem: Problem, extras: Extras, findings: FindingList, event_where: dict[str, Location]) -> None:
    slots = problem.slots
    events_table = extras.tables.get("Events")

    def where_event(code: str, column: str) -> Location | None:
        base = event_where.get(code)
        if base is None or events_table is None:
            return base
        return events_table.where(base.row, column)

    rules_table = extras.tables.get("Rules")
    for rule in problem.rules:
        for i, code in enumerate(rule.events):
            if code not in problem.events:
                where = rule.where
                if rules_table is not None and where is not None:
                    where = rules_table.where(where.row, "First event" if i == 0 else "Other events")
                findings.error(f"The rule '{rule.describe()}' names an event that is not in the enrolments or the events sheet.",
                               where, found=code, expected="an event code used elsewhere in the workbook",
                               suggestion="Check the spelling of the code.")
    if any(rule.kind is RuleKind.SAME_SLOT for rule in problem.rules):
        by_event = {code: set(names) for code, names in problem.attendees_by_event().items()}
        for rule in problem.rules:
            if rule.kind is not RuleKind.SAME_SLOT:
                continue
            for i, a in enumerate(rule.events):
                for b in rule.events[i + 1:]:
                    shared = by_event.get(a, set()) & by_event.get(b, set())
                    if shared:
                        findings.warn(f"The rule '{rule.describe()}' cannot hold: "
                                      + (f"{len(shared)} attendees are" if len(shared) > 1 else "1 attendee is")
                                      + f" enrolled on both {a} and {b}, so no clash-free timetable exists.", rule.where,
                                      found=", ".join(sorted(shared)[:3]) + (", ..." if len(shared) > 3 else ""),
                                      suggestion="Check the rule, or the enrolments of these attendees.")
    lengths = [s.length_minutes for s in slots if s.length_minutes]
    longest = longest_run_minutes(slots)
    room_types = {(r.room_type or "").casefold() for r in problem.rooms}
    for code, event in problem.events.items():
        for column, refs in (("Fixed slot", (event.fixed_slot,) if event.fixed_slot else ()),
                             ("Barred slots", event.barred_slots), ("Preferred slots", event.preferred_slots)):
            for ref in refs:
                if not slot_reference_ok(ref, slots):
                    findings.error(f"The event {code} names a slot that does not exist.", where_event(code, column),
                                   found=ref, expected=_slot_expectation(slots))
        if event.fixed_slot and slots:
            fixed = problem.slot_number(event.fixed_slot, slots)
            barred = {problem.slot_number(b, slots) for b in event.barred_slots}
            if fixed is not None and fixed in barred:
                findings.error(f"The event {code} is fixed to a slot it is also barred from.",
                               where_event(code, "Barred slots"), found=event.fixed_slot)
        if event.duration_minutes and lengths and event.duration_minutes > max(longest, max(lengths)):
            if longest > max(lengths):
                findings.error(f"The event {code} is longer than every run of touching slots of one day.",
                               where_event(code, "Duration"), found=f"{event.duration_minutes} minutes",
                               expected=f"at most {longest} minutes (the longest run of slots, each starting as the "
                                        "one before ends)",
                               suggestion="Check the duration, or the start times and lengths of the slots.")
            else:
                findings.error(f"The event {code} is longer than every slot.", where_event(code, "Duration"),
                               found=f"{event.duration_minutes} minutes",
                               expected=f"at most {max(lengths)} minutes (the longest slot)",
                               suggestion="Lengthen a slot in the slots sheet, or check the duration.")
        if event.room_type and problem.rooms and event.room_type.casefold() not in room_types:
            kinds = ", ".join(sorted({r.room_type for r in problem.rooms if r.room_type})) or "none"
            findings.error(f"The event {code} needs a room type that no room has.", where_event(code, "Room type"),
                           found=event.room_type, expected=f"one of the rooms sheet's types: {kinds}")
    def raw_cell(code: str, column: str) -> object:
        base = event_where.get(code)
        if base is None or events_table is None or base.row is None:
            return None
        return events_table.get(events_table.sheet.rows[base.row - 1], column)

    _check_preferred_rooms(problem, findings, where_event, raw_cell)
    rooms_table = extras.tables.get("Rooms")
    for room, where in extras.rooms:
        for ref in room.unavailable_slots:
            if not slot_reference_ok(ref, slots):
                loc = rooms_table.where(where.row, "Unavailable slots") if rooms_table else where
                findings.error(f"The room '{room.name}' names a slot that does not exist.", loc,
                               found=ref, expected=_slot_expectation(slots))
    if slots and any(s.date for s in slots) and not all(s.date for s in slots):
        missing = next(w for s, w in extras.slots if s.date is None)
        findings.warn("Some slots have a date and some do not; days are then counted one per slot.", missing,
                      suggestion="Give every slot a date, or none.")


def longest_run_minutes(slots: list[Slot]) -> int:
    """The longest time covered by consecutive slots of one day each starting as the one before ends (the
    longest event that can take several slots: the span of :mod:`timetabler.availability`); 0 without times.

    >>> import datetime as dt
    >>> day = dt.date(2027, 3, 1)
    >>> longest_run_minutes([Slot("a", date=day, start=dt.time(9), length_minutes=60),
    ...                      Slot("b", date=day, start=dt.time(10), length_minutes=60),
    ...                      Slot("c", date=day, start=dt.time(14), length_minutes=90)])
    120
    """
    best = 0
    run_start = run_end = None
    previous: Slot | None = None
    for slot in slots:
        if slot.start is None or not slot.length_minutes:
            run_start = run_end = previous = None
            continue
        begin = dt.datetime.combine(slot.date or dt.date(2000, 1, 1), slot.start)
        end = begin + dt.timedelta(minutes=slot.length_minutes)
        same_day = previous is not None and (previous.date, previous.day) == (slot.date, slot.day)
        if run_end is not None and same_day and begin == run_end:
            run_end = end
        else:
            run_start, run_end = begin, end
        previous = slot
        best = max(best, int((run_end - run_start).total_seconds() // 60))
    return best


def room_names_in(cell: object, known: set[str]) -> list[str] | None:
    """The room names listed in a cell: split at ``;`` and line breaks, then at commas unless
    the text with its commas is itself a room's name (``Room 1, East Wing``); None for a
    cell that is not text. ``known`` holds the rooms' names, case folded.

    >>> room_names_in("Orchard Hall; Room 1, East Wing", {"orchard hall", "room 1, east wing"})
    ['Orchard Hall', 'Room 1, East Wing']
    >>> room_names_in("Orchard Hall, Mill Room", {"orchard hall", "mill room"})
    ['Orchard Hall', 'Mill Room']
    """
    if not isinstance(cell, str):
        return None
    out: list[str] = []
    for piece in (identifier(p) for p in re.split(r"[;\n]", cell)):
        if not piece:
            continue
        if piece.casefold() in known:
            out.append(piece)
        else:
            out += [t for t in (identifier(p) for p in piece.split(",")) if t]
    return out


def _check_preferred_rooms(problem: Problem, findings: FindingList, where_event, raw_cell) -> None:
    wanting = sorted(code for code, e in problem.events.items() if e.preferred_rooms)
    if not wanting:
        return
    if not problem.rooms:
        findings.warn(f"{len(wanting)} event(s) name preferred rooms but there is no rooms sheet, so rooms are not "
                      "planned and the preferred rooms were ignored.", where_event(wanting[0], "Preferred rooms"),
                      found=", ".join(problem.events[wanting[0]].preferred_rooms),
                      suggestion="Add a Rooms sheet with every room, its capacity and type.")
        return
    by_key = {r.name.strip().casefold(): r for r in problem.rooms}
    shown = ", ".join(r.name for r in problem.rooms[:4]) + (", ..." if len(problem.rooms) > 4 else "")
    sizes = problem.event_sizes()
    for code in wanting:
        event = problem.events[code]
        where = where_event(code, "Preferred rooms")
        refs = room_names_in(raw_cell(code, "Preferred rooms"), set(by_key)) or event.preferred_rooms
        known: list[str] = []
        for ref in refs:
            room = by_key.get(ref.strip().casefold())
            if room is None:
                findings.error(f"The event {code} names a preferred room that is not in the rooms sheet.", where,
                               found=ref, expected=f"a room name from the rooms sheet ({shown})",
                               suggestion="Check the spelling, or add the room to the rooms sheet.")
                continue
            if room.name not in known:
                known.append(room.name)
            if event.room_type and (room.room_type or "").casefold() != event.room_type.casefold():
                findings.warn(f"The event {code} prefers {room.name}, a room of type '{room.room_type or 'none'}', "
                              f"but it needs a room of type '{event.room_type}': that preference can never be met.",
                              where, found=ref)
            elif room.capacity < sizes.get(code, 0):
                findings.warn(f"The event {code} prefers {room.name}, which seats {room.capacity}, but "
                              f"{sizes[code]} attendees sit it: the room can hold only part of it, when the event "
                              "is split over rooms.", where, found=ref)
        event.preferred_rooms = tuple(known)  # the rooms sheet's spelling, as the engines compare names


def figure_warnings(problem: Problem, findings: FindingList, enrolment_where: Location, synthetic: bool,
                    event_where: dict[str, Location], leading_zero_pairs: list[tuple[str, str]],
                    case_merges: list[tuple[str, str]]) -> None:
    sizes = problem.event_sizes()
    # In a clash list an event with no synthetic attendee simply clashes with nothing.
    empty = [] if synthetic else [code for code, n in sizes.items() if n == 0]
    for code in sorted(empty)[:20]:
        findings.warn(f"Nobody is enrolled on the event {code}.", event_where.get(code, enrolment_where),
                      suggestion="It still gets a slot; delete it from the events sheet if it is not sat this session.")
    if len(empty) > 20:
        findings.warn(f"... and {len(empty) - 20} more events with nobody enrolled.", enrolment_where)
    if synthetic or not problem.enrolments:
        return
    load = {a: len(evs) for a, evs in problem.events_by_attendee().items()}
    median = statistics.median(load.values())
    limit = max(15, 4 * median)  # rule of thumb (common practice, no single source)
    heavy = sorted((a for a, n in load.items() if n > limit), key=lambda a: (-load[a], a))
    for a in heavy[:10]:
        findings.warn(f"The attendee {a} has {load[a]} events, far more than most (median {median:g}).",
                      enrolment_where, found=a, suggestion="Check for a merged or mistyped attendee id.")
    n_events, n_attendees = len(problem.events), len(load)
    if n_events >= 10 and n_events > 2 * n_attendees:
        findings.warn("There are far more events than attendees: the attendee and event columns may be swapped.",
                      enrolment_where, found=f"{n_attendees} attendees, {n_events} events",
                      suggestion=f"Name the columns with {setting('attendee_column')} and {setting('event_column')}.")
    for short, long in leading_zero_pairs[:5]:
        findings.warn(f"The identifiers {long!r} and {short!r} differ only by leading zeros; they are read as "
                      "two different identifiers.", enrolment_where,
                      suggestion="Format the column as text in the spreadsheet so leading zeros are kept everywhere.")
    if case_merges:
        shown = "; ".join(f"{a!r} = {b!r}" for a, b in case_merges[:5])
        more = f" (and {len(case_merges) - 5} more)" if len(case_merges) > 5 else ""
        findings.warn(f"Codes differing only in upper/lower case were read as the same: {shown}{more}.",
                      enrolment_where, suggestion=f"Use {setting('case_sensitive_codes')} if they are really different.")


def leading_zero_variants(values: list[str]) -> list[tuple[str, str]]:
    """Pairs (without zeros, with zeros) of numeric identifiers that differ only by leading zeros."""
    by_value: dict[str, list[str]] = {}
    for v in values:
        if v.isdigit():
            by_value.setdefault(v.lstrip("0") or "0", []).append(v)
    out = []
    for stripped, spellings in sorted(by_value.items()):
        spellings = sorted(set(spellings), key=len)
        if len(spellings) > 1:
            out.append((spellings[0], spellings[-1]))
    return out


def attach_event_details(problem: Problem, events: list[tuple[Event, Location]], canonical) -> dict[str, Location]:
    """Merge the events sheet into ``problem.events`` (under canonical codes); return where each came from."""
    where: dict[str, Location] = {}
    for event, loc in events:
        code = canonical(event.code)
        event.code = code
        problem.events[code] = event
        where[code] = loc
    return where


def attach_titles(problem: Problem, titles: dict[tuple[str, str], int], canonical, event_where: dict[str, Location],
                  findings: FindingList, where_row) -> None:
    """Give events the titles of the enrolment sheet's title column; warn where titles disagree.

    ``titles`` maps (event code as typed, title) to the first row giving it. The first title
    of each event is kept, unless the events sheet gives one: the events sheet is the details sheet.
    """
    first: dict[str, tuple[str, int]] = {}
    conflicts: list[tuple[str, str, int, str, int]] = []
    for (typed, title), row in sorted(titles.items(), key=lambda item: item[1]):
        code = canonical(typed)
        if code not in first:
            first[code] = (title, row)
        elif first[code][0] != title:
            conflicts.append((code, first[code][0], first[code][1], title, row))
    for code, title_one, row_one, title_two, row_two in conflicts[:10]:
        findings.warn(f"The event {code} has two titles in the enrolments: {title_one!r} (row {row_one}) and "
                      f"{title_two!r}; the first was kept.", where_row(row_two), found=title_two,
                      suggestion="Give each event one title, or list the titles in an Events sheet.")
    if len(conflicts) > 10:
        findings.warn(f"... and {len(conflicts) - 10} more events with two titles in the enrolments.", where_row(None))
    for code, (title, row) in first.items():
        event = problem.events.get(code)
        if event is None:
            continue
        if event.title is None:
            event.title = title
        elif event.title != title:
            findings.warn(f"The events sheet calls {code} {event.title!r} but the enrolments call it {title!r} "
                          f"(row {row}); the events sheet's title was kept.", event_where.get(code, where_row(row)),
                          found=title)
