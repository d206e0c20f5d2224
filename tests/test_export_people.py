"""People in the published files: the People sheet, own end times (extra time, long events),
long events in every slot they take, optional attendees who miss an event, own-room seats.

The timetable here is written by hand (not solved) so that every fact is known in advance;
the expected times are worked out by hand in the comments from the issue's definitions
(a sitting of D minutes with p % extra time lasts ceil(D × (100 + p) / 100) minutes).
"""

from __future__ import annotations

import datetime as dt

import pytest
from icalendar import Calendar
from openpyxl import load_workbook

from export_cases import BruteRun, rows_of
from timetabler.export.csv_folder import write_csv_folder
from timetabler.export.icalendar_files import write_calendars
from timetabler.export.workbook import write_workbook
from timetabler.model import Attendee, Event, Problem, Room, Slot

MONDAY = dt.date(2031, 3, 3)  # an invented committee week of the fictional Orsk Valley Guild


def hourly_slots() -> list[Slot]:
    out = []
    for i, date in enumerate((MONDAY, MONDAY + dt.timedelta(days=1))):
        for hour in (9, 10, 11, 12, 13):
            out.append(Slot(f"{date:%a} {hour:02d}:00", date=date, start=dt.time(hour), length_minutes=60, day=i + 1))
    return out


def guild(source: str = "") -> Problem:
    pairs = [("Ama Volde", "BOARD"), ("Bex Tarrin", "BOARD"), ("Ama Volde", "FINANCE"), ("Cael Umber", "FINANCE"),
             ("Bex Tarrin", "AUDIT"), ("Cael Umber", "AUDIT"), ("Dorn Essel", "FINANCE"), ("Dorn Essel", "AUDIT")]
    return Problem(
        pairs, source=source,
        events={"BOARD": Event("BOARD", "Board", duration_minutes=120), "FINANCE": Event("FINANCE", duration_minutes=60),
                "AUDIT": Event("AUDIT", duration_minutes=60)},
        people={"Ama Volde": Attendee("Ama Volde", unavailable=(MONDAY.isoformat(),)),  # not on Monday
                "Bex Tarrin": Attendee("Bex Tarrin", extra_time_percent=25, own_room_type="Quiet"),
                "Dorn Essel": Attendee("Dorn Essel", unavailable=("Tue 11:00",))},
        optional={("Dorn Essel", "FINANCE"), ("Cael Umber", "AUDIT")},
        rooms=[Room("Long Room", 6), Room("Snug", 1, "Quiet")],
    )


def timetable() -> BruteRun:
    # BOARD Tue 09:00-11:00 (slots 6-7), FINANCE Tue 11:00 (slot 8), AUDIT Tue 12:00 (slot 9).
    run = BruteRun(10, hourly_slots(), "feasible", {"BOARD": 6, "FINANCE": 8, "AUDIT": 9},
                   {"BOARD": [("Long Room", 2)], "FINANCE": [("Long Room", 3)], "AUDIT": [("Long Room", 3)]})
    run.own_rooms = {("Bex Tarrin", "BOARD"): "Snug"}
    return run


@pytest.fixture()
def book(tmp_path):
    problem = guild(str(tmp_path / "round.xlsx"))
    run = timetable()
    path = write_workbook(tmp_path / "out.xlsx", problem=problem, runs=[run])
    return problem, run, load_workbook(path)


def test_people_sheet_names_each_attendee_with_their_own_times_and_misses(book):
    _, _, wb = book
    assert "People" in wb.sheetnames
    _, rows = rows_of(wb["People"])
    by = {r["Attendee"]: r for r in rows}
    assert sorted(by) == ["Ama Volde", "Bex Tarrin", "Cael Umber", "Dorn Essel"]
    # Bex: BOARD 09:00 + ceil(120 × 1.25) = 150 min -> 11:30; AUDIT 12:00 + ceil(60 × 1.25) = 75 -> 13:15
    assert by["Bex Tarrin"]["Their timetable"] == "BOARD Tue 04 Mar 09:00–11:30; AUDIT Tue 04 Mar 12:00–13:15"
    assert by["Bex Tarrin"]["Extra time (%)"] == 25
    assert "Snug for BOARD" in by["Bex Tarrin"]["Own room"]
    # Ama cannot make Monday: 5 of the 10 slots; the timetable is all on Tuesday
    assert by["Ama Volde"]["Slots they cannot make"] == 5 and by["Ama Volde"]["Unavailability honoured"] == "yes"
    # Dorn is optional at FINANCE (Tue 11:00), which they cannot make
    assert by["Dorn Essel"]["Optional events missed"] == 1
    assert by["Dorn Essel"]["Why missed"] == "FINANCE: cannot make Tue 11:00"
    # Cael is optional at AUDIT (slot 9) and required at FINANCE (slot 8): no overlap, no miss
    assert by["Cael Umber"]["Optional events missed"] == 0
    assert by["Cael Umber"]["Required events"] == 1 and by["Cael Umber"]["Optional events"] == 1


def test_a_required_attendee_in_a_slot_they_cannot_make_is_flagged(tmp_path):
    problem = guild(str(tmp_path / "round.xlsx"))
    run = timetable()
    run.assignment = {"BOARD": 1, "FINANCE": 8, "AUDIT": 9}  # BOARD on Monday: Ama cannot come
    wb = load_workbook(write_workbook(tmp_path / "out.xlsx", problem=problem, runs=[run]))
    by = {r["Attendee"]: r for r in rows_of(wb["People"])[1]}
    assert by["Ama Volde"]["Unavailability honoured"] == "no"
    assert by["Ama Volde"]["Not honoured"] == "BOARD: cannot make Mon 09:00, Mon 10:00"


def test_extra_time_that_does_not_fit_the_day_is_flagged(tmp_path):
    problem = guild(str(tmp_path / "round.xlsx"))
    run = timetable()
    run.assignment = {"BOARD": 6, "FINANCE": 8, "AUDIT": 10}  # AUDIT Tue 13:00, the day's last slot
    wb = load_workbook(write_workbook(tmp_path / "out.xlsx", problem=problem, runs=[run]))
    by = {r["Attendee"]: r for r in rows_of(wb["People"])[1]}
    # 13:00 + 75 min = 14:15 runs past the day's last slot (13:00-14:00)
    assert by["Bex Tarrin"]["Not honoured"] == "AUDIT: their extra time does not fit the slots"
    assert by["Bex Tarrin"]["Their timetable"].endswith("AUDIT Tue 04 Mar 13:00–14:15")


def test_optional_attendee_booked_at_the_same_time_misses_it(tmp_path):
    problem = guild(str(tmp_path / "round.xlsx"))
    run = timetable()
    run.assignment = {"BOARD": 6, "FINANCE": 8, "AUDIT": 8}  # Cael: FINANCE (required) and AUDIT (optional) at once
    wb = load_workbook(write_workbook(tmp_path / "out.xlsx", problem=problem, runs=[run]))
    by = {r["Attendee"]: r for r in rows_of(wb["People"])[1]}
    assert by["Cael Umber"]["Why missed"] == "AUDIT: booked in FINANCE at Tue 11:00"


def test_long_event_shows_in_every_slot_it_takes_with_its_true_end(book):
    problem, run, wb = book
    _, events = rows_of(wb["Events"])
    board = next(r for r in events if r["Event"] == "BOARD")
    assert board["End"] == dt.time(11, 0) and board["Slots taken"] == "Tue 09:00; Tue 10:00"
    grid = [list(r) for r in wb["Grid"].iter_rows(values_only=True)]
    tuesday = next(i for i, r in enumerate(grid) if r[0] and str(r[0]).startswith("Tue"))
    assert grid[tuesday + 1][2] == "BOARD Board (until 11:00)"
    assert grid[tuesday + 1][3] == "BOARD Board (continued)"
    seats = {r["Slot"]: r["Seats needed"] for r in rows_of(wb["Seats"])[1]}
    assert seats[6] == seats[7] == 2  # the board's two members in both of its slots
    rooms = rows_of(wb["Rooms"])[1]
    held = {(r["Slot"], r["Room"]): r["Events"] for r in rows_of(wb["Rooms"])[1]}
    assert held[(6, "Long Room")] == held[(7, "Long Room")] == "BOARD"
    # Bex's own room for BOARD: 09:00-11:30 takes slots 6, 7 and 8 (11:00-12:00 overlaps it)
    assert [r["Slot"] for r in rooms if r["Room"] == "Snug" and r["Events"]] == [6, 7, 8]


def test_personal_rows_end_at_the_attendees_own_end(book):
    _, _, wb = book
    _, rows = rows_of(wb["Personal timetables"])
    end = {(r["Attendee"], r["Event"]): r["End"] for r in rows}
    assert end[("Bex Tarrin", "BOARD")] == dt.time(11, 30) and end[("Ama Volde", "BOARD")] == dt.time(11, 0)
    attendance = {(r["Attendee"], r["Event"]): r["Attendance"] for r in rows}
    assert attendance[("Dorn Essel", "FINANCE")] == "optional" and attendance[("Ama Volde", "FINANCE")] == "required"


def test_attendee_load_counts_a_long_event_over_every_slot(book):
    _, _, wb = book
    load = {r["Attendee"]: r for r in rows_of(wb["Attendee load"])[1]}
    # Ama: BOARD slots 6-7 then FINANCE slot 8, same day: back-to-back (gap 1 from slot 7)
    assert load["Ama Volde"]["Back-to-back"] == 1
    # Bex: BOARD with extra time takes 6-8, AUDIT (with extra time) 9-10: back-to-back, no clash
    assert load["Bex Tarrin"]["Back-to-back"] == 1 and load["Bex Tarrin"]["Clashes"] == 0
    # Cael's AUDIT is optional: it counts for no goal
    assert load["Cael Umber"]["Events"] == 1 and load["Cael Umber"]["Back-to-back"] == 0


def test_personal_calendars_carry_extra_time_and_the_long_events_end(tmp_path):
    problem = guild(str(tmp_path / "round.xlsx"))
    written = write_calendars(tmp_path / "ics", problem=problem, run=timetable())
    def ends(name):
        path = next(p for p in written if p.name == name)
        cal = Calendar.from_ical(path.read_bytes())
        return {str(e["summary"]).split()[0]: e.decoded("dtend") for e in cal.walk("VEVENT")}
    bex = ends("Bex_Tarrin.ics")
    assert bex["BOARD"] == dt.datetime(2031, 3, 4, 11, 30) and bex["AUDIT"] == dt.datetime(2031, 3, 4, 13, 15)
    assert ends("Ama_Volde.ics")["BOARD"] == dt.datetime(2031, 3, 4, 11, 0)
    assert ends("session.ics")["BOARD"] == dt.datetime(2031, 3, 4, 11, 0)
    dorn = Calendar.from_ical(next(p for p in written if p.name == "Dorn_Essel.ics").read_bytes())
    assert any("optional for you" in str(e["description"]) for e in dorn.walk("VEVENT"))


def test_csv_folder_has_the_people_list(tmp_path):
    problem = guild(str(tmp_path / "round.xlsx"))
    names = {p.name for p in write_csv_folder(tmp_path / "csv", problem=problem, runs=[timetable()])}
    assert "people.csv" in names


def test_no_people_sheet_without_people(tmp_path):
    problem = Problem([("a", "X"), ("b", "Y")], source=str(tmp_path / "in.csv"))
    run = BruteRun(2, hourly_slots()[:2], "feasible", {"X": 1, "Y": 2})
    wb = load_workbook(write_workbook(tmp_path / "out.xlsx", problem=problem, runs=[run]))
    assert "People" not in wb.sheetnames


def test_pseudonyms_reach_the_people_sheet_and_keep_their_details(tmp_path):
    from timetabler.export.pseudonyms import Pseudonyms, pseudonymise

    problem = guild(str(tmp_path / "round.xlsx"))
    shown, runs, _ = pseudonymise(problem, [timetable()], Pseudonyms(b"k" * 32))
    path = write_workbook(tmp_path / "out.xlsx", problem=shown, runs=runs)
    wb = load_workbook(path)
    text = " ".join(str(v) for ws in wb.worksheets for row in ws.iter_rows(values_only=True) for v in row if v)
    for real in ("Ama Volde", "Bex Tarrin", "Cael Umber", "Dorn Essel"):
        assert real not in text
    by = {r["Attendee"]: r for r in rows_of(wb["People"])[1]}
    bex = Pseudonyms(b"k" * 32)("Bex Tarrin")
    assert by[bex]["Extra time (%)"] == 25 and "Snug for BOARD" in by[bex]["Own room"]
    dorn = Pseudonyms(b"k" * 32)("Dorn Essel")
    assert by[dorn]["Why missed"] == "FINANCE: cannot make Tue 11:00"
    snug = [r["Events"] for r in rows_of(wb["Rooms"])[1] if r["Room"] == "Snug" and r["Events"]]
    assert snug == ["BOARD (one attendee apart)"] * 3
