"""iCalendar files after a change: one per affected attendee, replacing the times they were given.

``timetabler changes OLD NEW --ics DIR`` writes ``DIR/attendees/<id>.ics`` for each attendee
whose timetable differs between two published versions, and for nobody else. Each file
holds the attendee's whole timetable in the later version, plus a cancelled entry
(``STATUS:CANCELLED``, RFC 5545 §3.8.1.11) for each event no longer in it.

So that calendar programs replace the entries they imported from the earlier version
instead of adding new ones, every entry keeps the UID the earlier version's calendars gave
it (:func:`timetabler.export.icalendar_files` derives it from the input file's name, the
number of slots and the event code) and carries a higher SEQUENCE (RFC 5545 §3.8.7.4): one
more than the minutes since 2026-01-01 UTC at the time of writing, above any file written
earlier.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path
from typing import Any, Callable

from icalendar import Event as CalEvent

from ..errors import Finding, InputError
from ..model import Event
from .csv_folder import prepare_folder
from .icalendar_files import _calendar, _times, _uid, revision, safe_file_stem, time_zone
from .safe_write import check_target, write_safely


def _check_dated(version: Any) -> None:
    missing = [s.label for s in version.slots if s.date is None]
    if missing:
        raise InputError(Finding(
            f"Calendars need a date for every slot; the version '{version.label}' has {len(missing)} slot(s) "
            f"without one (for example '{missing[0]}'). Nothing was written.",
            suggestion="Publish timetables made from a slots sheet with dates to send calendars."))
    durations = getattr(version, "durations", None) or {}
    for code, n in sorted(version.assignment.items()):
        slot = version.slots[n - 1]
        if slot.start is not None and not slot.length_minutes and not durations.get(code):
            raise InputError(Finding(
                f"The slot '{slot.label}' of the version '{version.label}' has a start time but no length, and "
                f"{code} has no duration, so its calendar entry would have no end time. Nothing was written.",
                suggestion="Give the slot a length, or the event a duration, and publish again."))


def write_change_calendars(folder: str | Path, *, before: Any, after: Any, changes: Any,
                           timezone: str | None = None, show: Callable[[str], str] = str,
                           now: dt.datetime | None = None) -> list[Path]:
    """Write the calendars of the attendees in ``changes.attendees``; return the paths written."""
    _check_dated(before)
    _check_dated(after)
    tz = time_zone(timezone)
    stamp = (now or dt.datetime.now(dt.timezone.utc)).replace(microsecond=0)
    sequence = revision(stamp) + 1
    source, k = before.source_name, before.slot_count  # the UIDs the earlier calendars used
    titles = {**(before.titles or {}), **(after.titles or {})}

    def entry(code: str, slot: Any, rooms: Any, cancelled: bool, version: Any, attendee: str) -> CalEvent:
        minutes = (getattr(version, "durations", None) or {}).get(code)
        extra = (getattr(version, "extra_time", None) or {}).get(attendee, 0)  # their own end, as in their calendar
        start, end = _times(Event(code, duration_minutes=minutes), slot, tz, extra)
        item = CalEvent()
        item.add("uid", _uid(source, k, code))
        item.add("dtstamp", stamp)
        item.add("sequence", sequence)
        item.add("dtstart", start)
        item.add("dtend", end)
        title = titles.get(code)
        item.add("summary", (f"{code} {title}" if title else code) + (" (cancelled)" if cancelled else ""))
        own = (getattr(version, "own_rooms", None) or {}).get((attendee, code))
        if own:  # seated apart: their own room, not the event's
            item.add("location", str(own))
        elif rooms:
            item.add("location", ", ".join(str(r) for r, _ in rooms))
        item.add("description", f"Slot {slot.label}" + (f"; with {extra} % extra time" if extra > 0 and slot.start
                                                         else "") + (" — no longer in your timetable" if cancelled else ""))
        item.add("status", "CANCELLED" if cancelled else "CONFIRMED")
        return item

    mine_after: dict[str, list[str]] = {}
    for attendee, code in after.enrolments:
        if code in after.assignment:
            mine_after.setdefault(attendee, []).append(code)
    target = prepare_folder(Path(folder))
    people = prepare_folder(target / "attendees")
    used: set[str] = set()
    written = []
    for person in changes.attendees:
        cal = _calendar(f"Personal timetable ({after.label})")
        codes = sorted(set(mine_after.get(person.attendee, ())), key=lambda c: (after.assignment[c], c))
        for code in codes:
            n = after.assignment[code]
            cal.add_component(entry(code, after.slots[n - 1], after.rooms.get(code), False, after, person.attendee))
        for code, was, now_at in person.events:
            if now_at is None and code in before.assignment:
                n = before.assignment[code]
                cal.add_component(entry(code, before.slots[n - 1], before.rooms.get(code), True, before, person.attendee))
        if tz is not None:
            cal.add_missing_timezones()
        stem = base = safe_file_stem(show(person.attendee))
        i = 2
        while stem.casefold() in used:
            stem, i = f"{base}-{i}", i + 1
        used.add(stem.casefold())
        path = check_target(people / f"{stem}.ics")
        written.append(write_safely(path, lambda tmp, data=cal.to_ical(): tmp.write_bytes(data)))
    return written
