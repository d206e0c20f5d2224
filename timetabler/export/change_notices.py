"""The notification list after a change: who must be told, and what moved, as tables and files.

Built from a :class:`timetabler.store.changes.Changes` (read through its documented fields
only). Three tables, the same in the workbook (``changes --out``) and the CSV folder
(``changes --csv``):

Notices
    One row per attendee to tell, with every change to their timetable in one text cell:
    ready for a mail merge (one letter per row).
Changes by attendee
    One row per attendee and changed event: old slot, date and start, new slot, date and start.
Events changed
    One row per moved, added or removed event, with the number of attendees concerned.

Kinds of change: ``moved`` (the event has another slot), ``added`` (new to this attendee's
timetable: a new enrolment, or an event the earlier version did not have), ``removed``
(no longer in their timetable: a withdrawal, or an event the later version dropped).
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path
from typing import Any

from .csv_folder import prepare_folder, write_table_csv
from .safe_write import check_target, write_safely
from .tables import DATE, INT, TIME, Column, PublishedTable


def change_kind(before: Any, after: Any) -> str:
    if before is None:
        return "added"
    if after is None:
        return "removed"
    return "moved"


def describe(time: Any) -> str:
    """A slot as a letter shows it: its label, then the date and start when the label lacks them."""
    return "—" if time is None else str(time)


def _cells(time: Any) -> list:
    if time is None:
        return [None, None, None]
    date = dt.date.fromisoformat(time.date) if time.date else None
    start = dt.time.fromisoformat(time.start) if time.start else None
    return [time.label, date, start]


_OLD_NEW = [Column("Old slot"), Column("Old date", DATE), Column("Old start", TIME),
            Column("New slot"), Column("New date", DATE), Column("New start", TIME)]


def notices_table(changes: Any, titles: dict | None = None) -> PublishedTable:
    titles = titles or {}
    table = PublishedTable("Notices", [Column("Attendee"), Column("Changed events", INT), Column("What changed")],
                           title=f"Attendees to tell: changes from '{changes.before_label}' to '{changes.after_label}'")
    for person in changes.attendees:
        lines = []
        for code, before, after in person.events:
            name = f"{code} {titles[code]}" if titles.get(code) else code
            kind = change_kind(before, after)
            if kind == "moved":
                lines.append(f"{name}: moved from {describe(before)} to {describe(after)}")
            elif kind == "added":
                lines.append(f"{name}: now in your timetable, {describe(after)}")
            else:
                lines.append(f"{name}: no longer in your timetable (was {describe(before)})")
        table.rows.append([person.attendee, len(person.events), "; ".join(lines)])
    return table


def attendee_changes_table(changes: Any, titles: dict | None = None) -> PublishedTable:
    titles = titles or {}
    table = PublishedTable("Changes by attendee", [Column("Attendee"), Column("Event"), Column("Title"),
                                                   Column("Change")] + _OLD_NEW)
    for person in changes.attendees:
        for code, before, after in person.events:
            table.rows.append([person.attendee, code, titles.get(code) or "", change_kind(before, after),
                               *_cells(before), *_cells(after)])
    return table


def events_changed_table(changes: Any) -> PublishedTable:
    table = PublishedTable("Events changed", [Column("Change"), Column("Event"), Column("Title")] + _OLD_NEW
                           + [Column("Attendees", INT)])
    for kind, items in (("moved", changes.moved), ("added", changes.added), ("removed", changes.removed)):
        for item in items:
            table.rows.append([kind, item.event, item.title or "", *_cells(item.before), *_cells(item.after),
                               len(item.attendees)])
    return table


def change_tables(changes: Any, titles: dict | None = None) -> list[PublishedTable]:
    return [notices_table(changes, titles), attendee_changes_table(changes, titles), events_changed_table(changes)]


CSV_NAMES = {"Notices": "notices.csv", "Changes by attendee": "changes_by_attendee.csv",
             "Events changed": "events_changed.csv"}


def write_change_csv(folder: str | Path, changes: Any, titles: dict | None = None) -> list[Path]:
    """``notices.csv``, ``changes_by_attendee.csv`` and ``events_changed.csv`` in ``folder``."""
    target = prepare_folder(folder)
    written = []
    for table in change_tables(changes, titles):
        path = check_target(target / CSV_NAMES[table.name])
        written.append(write_safely(path, lambda tmp, table=table: write_table_csv(tmp, table)))
    return written


def write_change_workbook(path: str | Path, changes: Any, titles: dict | None = None) -> Path:
    from .workbook import write_tables_workbook

    return write_tables_workbook(path, change_tables(changes, titles))
