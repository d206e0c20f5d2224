"""iCalendar files (RFC 5545) of a timetable: the whole exam period, and one per attendee.

Written with the ``icalendar`` library. Each event of the timetable becomes a VEVENT
with the event code and title as its summary, the rooms as its location, and a stable
UID (a hash of the input file name, the slot count and the event code), so importing an
updated file replaces entries instead of duplicating them. Slots need dates; a slot
with a start time gives timed entries, a slot with only a date gives an all-day entry
(DTSTART and DTEND as dates, RFC 5545 §3.6.1). A timed entry ends when the event does
(:func:`timetabler.model.event_times`: the slot's start plus the event's duration, else the
slot's length); when neither is known no end is invented: the files are refused with a
message naming the slot, since an entry with a start time and no end would be an instant
(RFC 5545 §3.6.1). In an attendee's own calendar an event ends at their own end: with their
extra time (Attendees sheet) by the same definition. Times are "floating" local times (RFC 5545 §3.3.5) unless a time zone
name (IANA, e.g. ``Europe/London``) is given.

Each entry's SEQUENCE (its revision number, RFC 5545 §3.8.7.4) is the number of minutes
from 2026-01-01 UTC to the moment of writing, so a timetable published again later always
carries the higher revision and calendar programs take its times over the earlier ones.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import re
from pathlib import Path
from typing import Any, Callable
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

from icalendar import Calendar, Event as CalEvent

from ..errors import Finding, InputError
from dataclasses import replace

from ..model import Event, Location, Problem, Slot, event_times
from .csv_folder import prepare_folder
from .safe_write import check_target, write_safely
from .tables import own_room_placements

PRODID = "-//timetabler//exam and meeting timetables//EN"
REVISION_EPOCH = dt.datetime(2026, 1, 1, tzinfo=dt.timezone.utc)


def revision(stamp: dt.datetime) -> int:
    """The SEQUENCE of entries written at ``stamp``: whole minutes since :data:`REVISION_EPOCH`."""
    return max(0, int((stamp - REVISION_EPOCH).total_seconds() // 60))


def _uid(source: str, k: int, code: str) -> str:
    digest = hashlib.sha256(f"{Path(source).name}\x00{k}\x00{code}".encode("utf-8")).hexdigest()[:24]
    return f"{digest}@timetabler.invalid"


def _times(event: Event, slot: Slot, tz: ZoneInfo | None, extra_time_percent: int = 0) -> tuple[Any, Any]:
    if slot.start is None:
        return slot.date, slot.date + dt.timedelta(days=1)
    start, end = event_times(event, slot, extra_time_percent)
    if end is None:  # check_dated refuses this before anything is written
        raise ValueError(f"no end time for {event.code} in {slot.label}")
    if tz is not None:
        start, end = start.replace(tzinfo=tz), end.replace(tzinfo=tz)
    return start, end


def _calendar(name: str) -> Calendar:
    cal = Calendar()
    cal.add("prodid", PRODID)
    cal.add("version", "2.0")
    cal.add("calscale", "GREGORIAN")
    cal.add("x-wr-calname", name)
    return cal


def _entry(problem: Problem, run: Any, code: str, tz: ZoneInfo | None, stamp: dt.datetime,
           extra_time_percent: int = 0, optional: bool = False, own_room: str | None = None) -> CalEvent:
    """The VEVENT of ``code``; with ``extra_time_percent`` (one attendee's calendar) it ends at
    that attendee's own end, ``optional`` says in the description that they may come, and
    ``own_room`` (an attendee seated apart, Own room) is their location instead of the event's rooms."""
    k = int(run.slots)
    slot = run.slot_list[run.assignment[code] - 1]
    event = problem.events[code]
    start, end = _times(event, slot, tz, extra_time_percent)
    entry = CalEvent()
    entry.add("uid", _uid(problem.source, k, code))
    entry.add("dtstamp", stamp)
    entry.add("sequence", revision(stamp))
    entry.add("dtstart", start)
    entry.add("dtend", end)
    entry.add("summary", f"{code} {event.title}" if event.title else code)
    rooms = (getattr(run, "rooms", None) or {}).get(code) or []
    if own_room:
        entry.add("location", str(own_room))
    elif rooms:
        entry.add("location", ", ".join(str(r) for r, _ in rooms))
    notes = [f"Slot {slot.label}"]
    if extra_time_percent > 0 and slot.start is not None:
        notes.append(f"with {extra_time_percent} % extra time")
    if optional:
        notes.append("optional for you")
    entry.add("description", "; ".join(notes))
    return entry


def check_dated(run: Any, problem: Problem | None = None) -> None:
    """Refuse calendars that would need an invented time: a slot without a date, or (with ``problem``)
    an event placed in a slot with a start time but no length that has no duration of its own."""
    check_dated_slots(run.slot_list)
    if problem is None:
        return
    endless = calendar_end_findings(problem, run.slot_list, run.assignment)
    if endless:
        raise InputError(endless)


def check_dated_slots(slots: Any) -> None:
    """iCalendar files need a date for every slot (none at all: K generic slots)."""
    slots = list(slots)
    missing = [s.label for s in slots if s.date is None]
    if missing or not slots:
        raise InputError(
            Finding(
                f"iCalendar files need a date for every slot; {len(missing)} of the {len(slots)} slots have none "
                f"(for example '{missing[0]}')." if missing else
                "iCalendar files need a date for every slot, and the file has no slots sheet (numbered slots "
                "have no dates).",
                suggestion="Give a slots sheet with a date (and start time and length) for each slot.",
            )
        )


def calendar_end_findings(problem: Problem, slots: list[Slot], assignment: dict[str, int] | None = None) -> list[Finding]:
    """One finding per slot with a start time and no length holding an event without a duration
    (with ``assignment`` None, before solving: each such slot that an event without a duration may
    take, by its fixed and barred slots)."""
    out: list[Finding] = []
    without = sorted(c for c, e in problem.events.items() if not e.duration_minutes)

    refs = problem.slot_refs(slots)

    def may_take(code: str, number: int) -> bool:
        if code in refs.fixed:
            return refs.fixed[code] == number
        return number not in refs.barred.get(code, ())

    for number, slot in enumerate(slots, start=1):
        if slot.start is None or slot.length_minutes:
            continue
        here = [c for c in without if may_take(c, number)] if assignment is None else \
            [c for c in without if assignment.get(c) == number]
        if not here:
            continue
        where = replace(slot.where, column="Length") if isinstance(slot.where, Location) else None
        out.append(Finding(
            f"The slot '{slot.label}' has a start time but no length, and {here[0]}"
            + (f" (and {len(here) - 1} more events)" if len(here) > 1 else "")
            + " has no duration, so its calendar entry would have no end time.",
            where=where, found="no length", expected="the slot's length in minutes",
            suggestion="Give the slot a length in the Slots sheet, or the events a duration in the Events sheet."))
    return out


def time_zone(name: str | None) -> ZoneInfo | None:
    """The IANA time zone ``name`` (None for floating local times); an unknown name is an InputError."""
    if not name:
        return None
    try:
        return ZoneInfo(name)
    except (ZoneInfoNotFoundError, ValueError, OSError) as exc:
        raise InputError(Finding(f"Unknown time zone {name!r} (--ics-time-zone).",
                                 expected="an IANA name such as Europe/London")) from exc


def safe_file_stem(text: str) -> str:
    stem = re.sub(r"[^A-Za-z0-9._-]+", "_", text).strip("._") or "attendee"
    return stem[:80]


def write_calendars(folder: str | Path, *, problem: Problem, run: Any, show: Callable[[str], str] = str,
                    personal: bool = True, timezone: str | None = None) -> list[Path]:
    """Write ``session.ics`` (every event) and, with ``personal``, ``attendees/<id>.ics`` per attendee."""
    check_dated(run)
    tz = time_zone(timezone)
    target = prepare_folder(folder)
    stamp = dt.datetime.now(dt.timezone.utc).replace(microsecond=0)
    entries = {code: _entry(problem, run, code, tz, stamp) for code in sorted(run.assignment)}
    order = sorted(entries, key=lambda c: (run.assignment[c], c))
    session = _calendar(f"Timetable ({int(run.slots)} slots)")
    for code in order:
        session.add_component(entries[code])
    timezones = b""
    if tz is not None:
        session.add_missing_timezones()
        timezones = b"".join(c.to_ical() for c in session.walk("VTIMEZONE"))
    written = []
    path = check_target(target / "session.ics", inputs=[problem.source])
    written.append(write_safely(path, lambda tmp, cal=session: tmp.write_bytes(cal.to_ical())))
    if personal:
        # Each VEVENT is serialised once and shared by every personal calendar that holds it:
        # a personal calendar is its header, the time zones, its events, and the closing line.
        blobs = {code: entries[code].to_ical() for code in order}
        rank = {code: i for i, code in enumerate(order)}
        people = prepare_folder(target / "attendees")
        head = _calendar(f"Personal timetable ({int(run.slots)} slots)").to_ical()
        closing = b"END:VCALENDAR\r\n"
        if not head.endswith(closing):  # pragma: no cover - the icalendar library's own layout
            raise RuntimeError("unexpected iCalendar layout from the icalendar library")
        head = head[: -len(closing)] + timezones
        used: set[str] = set()
        jobs = []
        # attendees seated apart (run.own_rooms, keyed as the enrolments are) sit in their own room, not the event's
        apart = {(a, c): room for a, c, room, _ in own_room_placements(run)}
        for attendee, codes in sorted(problem.events_by_attendee().items()):
            shown = show(attendee)
            stem = safe_file_stem(shown)
            base, i = stem, 2
            while stem.casefold() in used:
                stem, i = f"{base}-{i}", i + 1
            used.add(stem.casefold())
            person = problem.people.get(attendee)
            extra = person.extra_time_percent if person is not None else 0
            parts = []
            for c in sorted((c for c in codes if c in blobs), key=rank.__getitem__):
                optional = (attendee, c) in problem.optional
                own = apart.get((attendee, c))
                if extra > 0 or optional or own:  # their own end, attendance or room: an entry of their own
                    parts.append(_entry(problem, run, c, tz, stamp, extra, optional, own).to_ical())
                else:
                    parts.append(blobs[c])
            body = b"".join(parts)
            jobs.append((check_target(people / f"{stem}.ics", inputs=[problem.source]),
                         head + body + closing))
        for path, data in jobs:
            written.append(write_safely(path, lambda tmp, data=data: tmp.write_bytes(data)))
    return written
