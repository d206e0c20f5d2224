"""Invented enrolments of Brackenmoor Institute (a fictional college) for the store tests, and late changes to them."""

from __future__ import annotations

import csv
import random
from pathlib import Path

EVENTS = [f"BRK{n:03d}" for n in range(101, 115)]


def rows(seed: int = 3, students: int = 60) -> list[tuple[str, str]]:
    rng = random.Random(seed)
    rows = []
    for s in range(students):
        for code in rng.sample(EVENTS, rng.randint(1, 3)):
            rows.append((f"BI{s:04d}", code))
    return rows


def write_csv(path: Path, rows) -> Path:
    with open(path, "w", newline="", encoding="utf-8") as fh:
        writer = csv.writer(fh)
        writer.writerow(["Student", "Exam"])
        writer.writerows(rows)
    return path


def write_xlsx(path: Path, rows, slots) -> Path:
    from openpyxl import Workbook

    wb = Workbook()
    ws = wb.active
    ws.title = "Enrolments"
    ws.append(["Student", "Exam"])
    for row in rows:
        ws.append(list(row))
    sheet = wb.create_sheet("Slots")
    sheet.append(["Slot", "Date", "Start", "Length"])
    for label, day, start in slots:
        sheet.append([label, day, start, 120])
    wb.save(path)
    return path


def late_changes(rows, assignment, rng):
    """Withdraw some enrolments, drop one event, add a new one, and enrol three students on an event
    that shares a slot with one of theirs in ``assignment`` (so the earlier timetable must change)."""
    out = [r for i, r in enumerate(rows) if i % 17 != 5]  # withdrawals
    dropped = EVENTS[-1]
    out = [r for r in out if r[1] != dropped]
    out += [("BI0900", "BRK900"), ("BI0003", "BRK900")]  # a new event, a new student
    forced = 0
    mine = {}
    for a, e in out:
        mine.setdefault(a, set()).add(e)
    for attendee in sorted(mine):
        if forced == 3:
            break
        for code in sorted(mine[attendee]):
            if code not in assignment:
                continue
            partner = next((c for c in EVENTS[:-1] if c not in mine[attendee] and c != code
                            and assignment.get(c) == assignment[code]), None)
            if partner:
                out.append((attendee, partner))
                mine[attendee].add(partner)
                forced += 1
                break
    assert forced == 3
    return out




def dated_slots(days: int = 3):
    """Two sessions a day (09:00 and 14:00) from Monday 11 January 2027: (label, date, start)."""
    import datetime as dt

    first = dt.date(2027, 1, 11)
    return [(f"Day {d + 1} {half}", first + dt.timedelta(days=d), dt.time(9) if half == "AM" else dt.time(14))
            for d in range(days) for half in ("AM", "PM")]
