"""Reading the people: the Attendees sheet, the enrolments' Attendance column, the events' Quorum.

Every file is written here, set in the Brackenmoor Housing Cooperative (a fictional
organisation) and Harrowgate Vale College (a fictional college): invented names only.
The expected values are the ones each test wrote into its file, never typed-in totals.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import openpyxl
import pytest

from intake_builders import write_ods, write_text, write_xlsx
from timetabler.availability import Availability
from timetabler.errors import InputError
from timetabler.intake import read_problem
from timetabler.intake.people import extra_time_percent, looks_like_attendees
from timetabler.intake.vocabulary import MAX_EXTRA_TIME_PERCENT, sheet_role

MON, TUE = dt.date(2027, 3, 1), dt.date(2027, 3, 2)

ENROLMENTS = [
    ["Member", "Committee", "Attendance"],
    ["Ines Varga", "FIN", ""],
    ["Ines Varga", "EST", "optional"],
    ["Tomas Reyl", "FIN", "Required"],
    ["Tomas Reyl", "EST", None],
    ["Lior Ames", "EST", "opt"],
    ["Lior Ames", "GOV", "if possible"],
    ["Maud Okafor", "GOV", "compulsory"],
]

SLOTS = [
    ["Slot", "Date", "Start", "Length"],
    ["Mon 09", MON, dt.time(9), 60],
    ["Mon 10", MON, dt.time(10), 60],
    ["Mon 11, east wing", MON, dt.time(11), 60],
    ["Tue 09", TUE, dt.time(9), 60],
    ["Tue 10", TUE, dt.time(10), 60],
]


def book(tmp: Path, attendees=None, *, slots=SLOTS, events=None, rooms=None, enrolments=ENROLMENTS,
         name="Attendees") -> Path:
    sheets = {"Enrolments": enrolments}
    if events is not None:
        sheets["Committees list"] = events
    if slots is not None:
        sheets["Slots"] = slots
    if rooms is not None:
        sheets["Rooms"] = rooms
    if attendees is not None:
        sheets[name] = attendees
    return write_xlsx(tmp / "round.xlsx", sheets)


def errors_of(path: Path) -> list:
    with pytest.raises(InputError) as info:
        read_problem(path)
    return info.value.findings


# --- the Attendees sheet read into the model ---------------------------------------------------


def test_unavailable_references_of_every_kind_become_labels_numbers_or_iso_dates(tmp_path):
    path = book(tmp_path, [
        ["Attendee", "Unavailable slots", "Extra time", "Own room"],
        ["ines varga", "mon 09; 2", None, None],                         # a label in another case, a number
        ["Tomas Reyl", dt.datetime(2027, 3, 2), None, None],             # a date cell: every slot of that day
        ["Lior Ames", "02/03/2027, Mon 11, east wing", None, None],      # day-first text; a label holding a comma
        ["Maud Okafor", dt.datetime(2027, 3, 1, 10, 0), None, None],     # a date-and-time cell: the slot starting then
    ])
    people = read_problem(path).problem.people
    assert people["Ines Varga"].unavailable == ("Mon 09", "2")  # filed under the enrolments' spelling
    assert people["Tomas Reyl"].unavailable == ("2027-03-02",)
    assert people["Lior Ames"].unavailable == ("2027-03-02", "Mon 11, east wing")
    assert people["Maud Okafor"].unavailable == ("Mon 10",)


def test_the_references_mean_the_slots_they_name_to_availability(tmp_path):
    """The availability module resolves what intake wrote; recomputed here from the sheet by hand."""
    path = book(tmp_path, [
        ["Attendee", "Unavailable slots"],
        ["Ines Varga", "Mon 09; 5"],
        ["Tomas Reyl", "2027-03-02"],
    ])
    problem = read_problem(path).problem
    found = Availability.of(problem, problem.slots)
    labels = [s.label for s in problem.slots]
    assert {labels[s - 1] for s in found.unavailable["Ines Varga"]} == {"Mon 09", "Tue 10"}
    assert {labels[s - 1] for s in found.unavailable["Tomas Reyl"]} == {"Tue 09", "Tue 10"}  # the whole of Tuesday


def test_extra_time_and_own_room_are_read(tmp_path):
    rooms = [["Room", "Capacity", "Room type"], ["Linden Room", 30, "Meeting"], ["Quiet Nook", 1, "Quiet"]]
    path = book(tmp_path, [
        ["Attendee", "Extra time", "Own room"],
        ["Ines Varga", "25%", "quiet"],
        ["Tomas Reyl", 50, None],
        ["Lior Ames", " 10 percent ", None],
    ], rooms=rooms)
    people = read_problem(path).problem.people
    assert (people["Ines Varga"].extra_time_percent, people["Ines Varga"].own_room_type) == (25, "Quiet")
    assert people["Tomas Reyl"].extra_time_percent == 50
    assert people["Lior Ames"].extra_time_percent == 10
    assert "Maud Okafor" not in people  # no row: no details


def test_a_percentage_cell_holds_the_fraction(tmp_path):
    path = book(tmp_path, [["Attendee", "Extra time"], ["Ines Varga", 0.25]])
    wb = openpyxl.load_workbook(path)
    wb["Attendees"]["B2"].number_format = "0%"
    wb.save(path)
    assert read_problem(path).problem.people["Ines Varga"].extra_time_percent == 25


@pytest.mark.parametrize("value, percent", [
    (25, 25), ("25", 25), ("25%", 25), ("25 %", 25), ("25 percent", 25), (0.5, 50), ("0.5", 50), (0, 0),
    (None, 0), ("", 0), (100, 100), (25.0, 25),
    ("15 minutes", None), (-10, None), ("-10%", None), ("12.5%", None), (12.5, None), ("lots", None), (True, None),
])
def test_extra_time_percent(value, percent):
    assert extra_time_percent(value) == percent


def test_extra_time_above_the_limit_is_an_error_at_the_limit_it_is_not(tmp_path):
    ok = book(tmp_path, [["Attendee", "Extra time"], ["Ines Varga", MAX_EXTRA_TIME_PERCENT]])
    assert read_problem(ok).problem.people["Ines Varga"].extra_time_percent == MAX_EXTRA_TIME_PERCENT
    bad = book(tmp_path, [["Attendee", "Extra time"], ["Ines Varga", MAX_EXTRA_TIME_PERCENT + 1]])
    [f] = [f for f in errors_of(bad) if "extra time" in f.message]
    assert (f.where.sheet, f.where.row, f.where.column) == ("Attendees", 2, "B (Extra time)")
    assert str(MAX_EXTRA_TIME_PERCENT) in f.expected


def test_an_attendee_listed_twice_alike_is_read_once(tmp_path):
    reading = read_problem(book(tmp_path, [["Attendee", "Unavailable slots"], ["Ines Varga", "Mon 09; Tue 09"],
                                           ["INES VARGA", "tue 09; mon 09"]]))
    assert reading.problem.people["Ines Varga"].unavailable == ("Mon 09", "Tue 09")
    assert any("listed twice" in w.message and w.where.row == 3 for w in reading.warnings)


def test_each_bad_reference_is_located_and_the_good_ones_named(tmp_path):
    findings = errors_of(book(tmp_path, [
        ["Attendee", "Unavailable slots"],
        ["Ines Varga", "Mon 09; Wed 09"],
        ["Tomas Reyl", "6"],
        ["Lior Ames", dt.datetime(2027, 3, 1, 14, 0)],
    ]))
    by_row = {f.where.row: f for f in findings}
    assert by_row[2].found == "Wed 09" and "Mon 09" in by_row[2].expected and "1..5" in by_row[2].expected
    assert by_row[3].found == "6"
    assert "not the start of any slot" in by_row[4].message
    assert all(f.where.column == "B (Unavailable slots)" and f.where.sheet == "Attendees" for f in findings)


def test_a_day_without_slots_inside_the_period_only_warns(tmp_path):
    slots = SLOTS + [["Thu 09", dt.date(2027, 3, 4), dt.time(9), 60]]
    reading = read_problem(book(tmp_path, [["Attendee", "Unavailable slots"], ["Ines Varga", "2027-03-03"]], slots=slots))
    assert reading.problem.people["Ines Varga"].unavailable == ("2027-03-03",)
    assert any("No slot falls on Wednesday 03 March 2027" in w.message for w in reading.warnings)


def test_without_a_slots_sheet_only_numbers_are_taken(tmp_path):
    ok = read_problem(book(tmp_path, [["Attendee", "Unavailable slots"], ["Ines Varga", "3; Slot 4"]], slots=None))
    assert ok.problem.people["Ines Varga"].unavailable == ("3", "4")
    findings = errors_of(book(tmp_path, [["Attendee", "Unavailable slots"], ["Ines Varga", "Mon 09"],
                                         ["Tomas Reyl", "2027-03-01"]], slots=None))
    assert [f.where.row for f in findings] == [2, 3]
    assert "no Slots sheet" in findings[0].expected


def test_own_room_checked_against_the_rooms_types_and_warned_without_rooms(tmp_path):
    rooms = [["Room", "Capacity", "Room type"], ["Linden Room", 30, "Meeting"]]
    [f] = errors_of(book(tmp_path, [["Attendee", "Own room"], ["Ines Varga", "Linden Room"]], rooms=rooms))
    assert (f.where.row, f.where.column, f.found) == (2, "B (Own room)", "Linden Room") and "Meeting" in f.expected
    reading = read_problem(book(tmp_path, [["Attendee", "Own room"], ["Ines Varga", "Quiet"]]))
    assert reading.problem.people["Ines Varga"].own_room_type == "Quiet"
    assert any("no rooms sheet" in w.message for w in reading.warnings)


def test_extra_time_without_times_is_warned_and_with_times_not(tmp_path):
    timed = read_problem(book(tmp_path, [["Attendee", "Extra time"], ["Ines Varga", 25]]))
    assert not any("cannot be placed" in w.message for w in timed.warnings)
    untimed = read_problem(book(tmp_path, [["Attendee", "Extra time"], ["Ines Varga", 25]], slots=None))
    [w] = [w for w in untimed.warnings if "cannot be placed" in w.message]
    assert "no Slots sheet" in w.message and w.where.row == 2


# --- finding the sheet -----------------------------------------------------------------------------


@pytest.mark.parametrize("name, role", [
    ("Attendees", "Attendees"), ("People", "Attendees"), ("Exam candidates", "Attendees"),
    ("Committee members", "Attendees"), ("Availability", "Attendees"), ("Student exams", "Events"),
    ("Room availability", "Rooms"), ("Rooms", "Rooms"), ("Exams", "Events"),
])
def test_sheet_names(name, role):
    assert sheet_role(name) == role


def test_a_sheet_named_otherwise_is_known_by_its_headers_but_a_rooms_sheet_is_not(tmp_path):
    assert looks_like_attendees(["Member", "Unavailable slots"])
    assert not looks_like_attendees(["Name", "Unavailable slots"])  # a bare Name: rooms have names too
    assert not looks_like_attendees(["Member", "Room", "Unavailable slots"])
    path = book(tmp_path, [["Member", "Extra time"], ["Ines Varga", 25]], name="Sheet3")
    reading = read_problem(path)
    assert reading.problem.people["Ines Varga"].extra_time_percent == 25
    assert reading.other_sheets["Attendees"] == "Sheet3"


def test_the_rooms_unavailable_slots_stay_the_rooms_and_the_events_unavailable_stay_barred(tmp_path):
    rooms = [["Room", "Capacity", "Unavailable slots"], ["Linden Room", 30, "Mon 09"]]
    events = [["Committee", "Unavailable"], ["FIN", "Tue 10"]]
    problem = read_problem(book(tmp_path, [["Attendee", "Unavailable slots"], ["Ines Varga", "Mon 10"]],
                                rooms=rooms, events=events)).problem
    assert problem.rooms[0].unavailable_slots == ("Mon 09",)
    assert problem.events["FIN"].barred_slots == ("Tue 10",)
    assert problem.people["Ines Varga"].unavailable == ("Mon 10",)


def test_a_roster_named_students_is_left_with_a_warning_an_attendees_sheet_without_columns_is_an_error(tmp_path):
    roster = [["Student", "Email"], ["HV-S0001", "s0001@example.invalid"]]
    reading = read_problem(book(tmp_path, roster, name="Students"))
    assert reading.problem.people == {}
    assert any("was not read" in w.message and w.where.sheet == "Students" for w in reading.warnings)
    findings = errors_of(book(tmp_path, roster, name="Attendees"))
    assert any("no header row" in f.message and f.where.sheet == "Attendees" for f in findings)


def test_an_enrolment_sheet_named_attendees_is_still_the_enrolments(tmp_path):
    path = write_xlsx(tmp_path / "a.xlsx", {"Attendees": ENROLMENTS})
    reading = read_problem(path)
    assert reading.sheet == "Attendees" and len(reading.problem.enrolments) == len(ENROLMENTS) - 1
    assert reading.problem.people == {}


def test_ods_reads_the_same(tmp_path):
    path = write_ods(tmp_path / "a.ods", {"Enrolments": ENROLMENTS, "Slots": SLOTS,
                                         "Attendees": [["Attendee", "Unavailable slots", "Extra time"],
                                                       ["Ines Varga", "Tue 09; 2027-03-01", "25%"]]})
    person = read_problem(path).problem.people["Ines Varga"]
    assert person.unavailable == ("Tue 09", "2027-03-01") and person.extra_time_percent == 25


# --- Attendance and Quorum ---------------------------------------------------------------------------


def test_attendance_words_fill_optional(tmp_path):
    problem = read_problem(book(tmp_path)).problem
    wanted = {(row[0], row[1]) for row in ENROLMENTS[1:] if row[2] in ("optional", "opt", "if possible")}
    assert problem.optional == wanted
    assert set(problem.required_enrolments()) == {(r[0], r[1]) for r in ENROLMENTS[1:]} - wanted


def test_attendance_in_a_wide_layout_applies_to_the_row_and_a_grid_takes_optional_cells(tmp_path):
    wide = write_text(tmp_path / "w.csv", [["Member", "Committees", "Attendance"], ["Ines Varga", "FIN; EST", "optional"],
                                           ["Tomas Reyl", "FIN; GOV", ""]])
    assert read_problem(wide).problem.optional == {("Ines Varga", "FIN"), ("Ines Varga", "EST")}
    grid = write_xlsx(tmp_path / "g.xlsx", {"S": [["Member", "FIN", "EST", "GOV"], ["Ines Varga", "x", "optional", None],
                                                  ["Tomas Reyl", None, "x", "x"]]})
    problem = read_problem(grid).problem
    assert set(problem.enrolments) == {("Ines Varga", "FIN"), ("Ines Varga", "EST"), ("Tomas Reyl", "EST"),
                                       ("Tomas Reyl", "GOV")}
    assert problem.optional == {("Ines Varga", "EST")}


def test_every_unknown_attendance_is_located(tmp_path):
    rows = ENROLMENTS[:3] + [["Tomas Reyl", "FIN", "perhaps"], ["Lior Ames", "GOV", "no"]]
    findings = errors_of(book(tmp_path, enrolments=rows))
    assert [(f.where.row, f.found) for f in findings] == [(4, "perhaps"), (5, "no")]
    assert all(f.where.column == "C (Attendance)" and "optional" in f.expected for f in findings)


def test_quorum_read_and_checked(tmp_path):
    events = [["Committee", "Quorum"], ["FIN", 2], ["EST", "3"], ["GOV", None]]
    problem = read_problem(book(tmp_path, events=events)).problem
    assert {c: e.quorum for c, e in problem.events.items()} == {"FIN": 2, "EST": 3, "GOV": None}
    # EST has three attendees (one of them optional): a quorum of 4 asks for more than there are
    findings = errors_of(book(tmp_path, events=[["Committee", "Quorum"], ["EST", 4], ["GOV", 0]]))
    by_row = {f.where.row: f for f in findings}
    assert "larger than its number of attendees" in by_row[2].message and "at most 3" in by_row[2].expected
    assert "not a whole number" in by_row[3].message
    assert all(f.where.column == "B (Quorum)" for f in findings)
