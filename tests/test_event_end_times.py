"""An event ends when it ends: its slot's start plus its own duration, in every file published.

The workbook is written by the test; the published files are read back with openpyxl and the
icalendar library, and each end time is compared with one computed here from the Slots and
Events rows by hand (start + duration, else start + slot length). Invented data of the
fictional Harrowgate Vale College.
"""

from __future__ import annotations

import datetime as dt

from icalendar import Calendar
from openpyxl import load_workbook

from intake_builders import write_xlsx

DAY = dt.date(2027, 5, 3)


def session(tmp_path, *, with_undurated_in_pm: bool = False):
    events = [["Event", "Title", "Duration", "Fixed slot"],
              ["MAT101", "Mathematics I", 120, "Mon AM"],   # 09:00 + 120 = 11:00, in a 180-minute slot
              ["HIS130", "History", None, "Mon AM"],        # no duration: ends with the slot, 12:00
              ["PHY110", "Physics", 90, "Mon PM"]]          # 14:00 + 90 = 15:30, in a slot with no length
    if with_undurated_in_pm:
        events.append(["ART140", "Art", None, "Mon PM"])    # no duration, no slot length: no end known
    enrol = [["Student", "Exam"], ["HV-S0001", "MAT101"], ["HV-S0002", "HIS130"], ["HV-S0001", "PHY110"]]
    if with_undurated_in_pm:
        enrol.append(["HV-S0003", "ART140"])
    return write_xlsx(tmp_path / "ends.xlsx", {
        "Enrolments": enrol,
        "Events": events,
        "Slots": [["Slot", "Date", "Start", "Length"], ["Mon AM", DAY, "09:00", 180], ["Mon PM", DAY, "14:00", None]],
    })


EXPECTED = {"MAT101": dt.time(11, 0), "HIS130": dt.time(12, 0), "PHY110": dt.time(15, 30)}


def test_events_sheet_personal_timetables_grid_and_calendars_end_with_the_event(tmp_path, run_command):
    out, ics = tmp_path / "t.xlsx", tmp_path / "cal"
    result = run_command("solve", session(tmp_path), "--time-limit", "5", "--out", out, "--ics", ics)
    assert result.status == 0, result.stderr
    book = load_workbook(out)
    events_sheet = next(ws for ws in book.worksheets if ws.title.startswith("Events"))
    rows = list(events_sheet.iter_rows(values_only=True))
    head = next(i for i, r in enumerate(rows) if r and "Event" in r and "End" in r)
    col = {name: i for i, name in enumerate(rows[head])}
    ends = {r[col["Event"]]: r[col["End"]] for r in rows[head + 1:] if r and r[col["Event"]] in EXPECTED}
    assert {c: (v.time() if isinstance(v, dt.datetime) else v) for c, v in ends.items()} == EXPECTED
    personal = next(ws for ws in book.worksheets if ws.title.startswith("Personal"))
    prow = list(personal.iter_rows(values_only=True))
    phead = next(i for i, r in enumerate(prow) if r and "Attendee" in r and "End" in r)
    pcol = {name: i for i, name in enumerate(prow[phead])}
    for r in prow[phead + 1:]:
        if r and r[pcol["Event"]] in EXPECTED:
            v = r[pcol["End"]]
            assert (v.time() if isinstance(v, dt.datetime) else v) == EXPECTED[r[pcol["Event"]]]
    grid = next(ws for ws in book.worksheets if ws.title.startswith("Grid"))
    cells = " | ".join(str(v) for row in grid.iter_rows(values_only=True) for v in row if v)
    assert "MAT101 Mathematics I (until 11:00)" in cells and "HIS130 History (until" not in cells
    assert "PHY110 Physics (until 15:30)" in cells
    session_ics = Calendar.from_ical((ics / "session.ics").read_bytes())
    got = {str(e["summary"]).split()[0]: (e.decoded("dtstart"), e.decoded("dtend")) for e in session_ics.walk("VEVENT")}
    for code, end in EXPECTED.items():
        start, stop = got[code]
        assert stop.time() == end and stop.date() == DAY and start < stop


def test_calendars_invent_no_end_for_an_event_without_duration_in_a_slot_without_length(tmp_path, run_command):
    ics = tmp_path / "cal"
    result = run_command("solve", session(tmp_path, with_undurated_in_pm=True), "--time-limit", "5", "--ics", ics)
    assert result.status == 2
    assert "'Mon PM'" in result.stderr and "ART140" in result.stderr and "no end time" in result.stderr
    assert "sheet 'Slots', row 3" in result.stderr  # the slot's row, to add its length
    assert not (ics / "session.ics").exists()
    # found before solving (ART140 is fixed there): no timetable table is printed, the workbook is not
    # left unwritten after a solve
    assert "Timetables" not in result.stdout and not (ics).exists()


def test_an_event_that_may_land_in_a_slot_without_length_is_refused_before_solving(tmp_path, run_command):
    # ART140 has no duration and no fixed slot, so it may land in 'Mon PM' (no length): refused at once;
    # barred from 'Mon PM' it can only take 'Mon AM' (180 minutes), and the calendars are written
    rows = {"Enrolments": [["Student", "Exam"], ["HV-S0003", "ART140"]],
            "Slots": [["Slot", "Date", "Start", "Length"], ["Mon AM", DAY, "09:00", 180], ["Mon PM", DAY, "14:00", None]]}
    free = write_xlsx(tmp_path / "free.xlsx", {**rows, "Events": [["Event", "Duration"], ["ART140", None]]})
    result = run_command("solve", free, "--slots", "2", "--no-record", "--ics", tmp_path / "cal1", "--out",
                         tmp_path / "t.xlsx")
    assert result.status == 2 and "'Mon PM'" in result.stderr and "ART140" in result.stderr
    assert "Timetables" not in result.stdout and not (tmp_path / "t.xlsx").exists()
    barred = write_xlsx(tmp_path / "barred.xlsx", {**rows, "Events": [["Event", "Barred slots"], ["ART140", "Mon PM"]]})
    result = run_command("solve", barred, "--slots", "2", "--no-record", "--ics", tmp_path / "cal2")
    assert result.status == 0, result.stderr
    assert list((tmp_path / "cal2").glob("*.ics"))


def test_one_definition_of_the_end():
    # model.event_times is the one definition; the exporters' end (tables.event_end) is its time of day
    from timetabler.export.tables import event_end
    from timetabler.model import Event, Problem, Slot, event_times

    slot = Slot("Mon PM", date=DAY, start=dt.time(23, 0), length_minutes=120)
    p = Problem([], events={"NIGHT": Event("NIGHT", duration_minutes=90), "OPEN": Event("OPEN")})
    assert event_times(p.events["NIGHT"], slot)[1] == dt.datetime(2027, 5, 4, 0, 30)  # past midnight
    assert event_end(p, "NIGHT", slot) == dt.time(0, 30) and event_end(p, "OPEN", slot) == dt.time(1, 0)
    assert event_times(p.events["OPEN"], Slot("x", date=DAY)) == (None, None)  # no start: no time at all
