"""``solve`` with every output option, through the real command, on a dated input workbook."""

from __future__ import annotations

import datetime as dt

import pytest
from icalendar import Calendar
from openpyxl import Workbook, load_workbook

from export_cases import ENROLMENTS


@pytest.fixture
def dated_input(tmp_path):
    """A Harrowgate Vale College input workbook: enrolments and a slots sheet over three days."""
    wb = Workbook()
    ws = wb.active
    ws.title = "Enrolments"
    ws.append(["Student", "Exam"])
    for student, exams in ENROLMENTS.items():
        for exam in exams:
            ws.append([student, exam])
    slots = wb.create_sheet("Slots")
    slots.append(["Slot", "Date", "Start", "Length (minutes)", "Seats"])
    for day in range(3):
        date = dt.datetime(2027, 6, 14 + day)
        slots.append([f"{date:%a} AM", date, dt.time(9, 30), 120, 40])
        slots.append([f"{date:%a} PM", date, dt.time(14, 0), 90, 40])
    path = tmp_path / "hv_june.xlsx"
    wb.save(path)
    return path


def test_solve_writes_every_output_consistently(run_command, dated_input, tmp_path):
    out, lists, cal = tmp_path / "june.xlsx", tmp_path / "lists", tmp_path / "cal"
    result = run_command("solve", dated_input, "--slots", "6", "--time-limit", "5", "--json",
                         "--out", out, "--csv", lists, "--ics", cal)
    assert result.status == 0, result.stderr
    run = result.json()["runs"][0]
    assert run["status"] in ("optimal", "feasible")
    assignment = run["assignment"]
    wb = load_workbook(out)
    assert {"Overview", "Comparison", "Grid", "Events", "Personal timetables", "Seats", "Attendee load"} <= set(wb.sheetnames)
    header, *rows = list(wb["Events"].iter_rows(values_only=True))
    events = {r[0]: dict(zip(header, r)) for r in rows}
    slot_dates = {n: dt.date(2027, 6, 14 + (n - 1) // 2) for n in range(1, 7)}
    for code, n in assignment.items():
        assert events[code]["Slot"] == n
        assert events[code]["Date"].date() == slot_dates[n]
        assert events[code]["Start"] == (dt.time(9, 30) if n % 2 else dt.time(14, 0))
    assert (lists / "events.csv").exists() and (lists / "personal-timetables.csv").exists()
    session = Calendar.from_ical((cal / "session.ics").read_bytes())
    for entry in session.walk("VEVENT"):
        n = assignment[str(entry["summary"])]
        start = entry.decoded("dtstart")
        assert start.date() == slot_dates[n]
        assert entry.decoded("dtend") - start == dt.timedelta(minutes=120 if n % 2 else 90)
    assert sorted(p.stem for p in (cal / "attendees").iterdir()) == sorted(ENROLMENTS)


def test_solve_with_pseudonyms_leaves_no_identifier(run_command, dated_input, tmp_path):
    out = tmp_path / "shared.xlsx"
    result = run_command("solve", dated_input, "--slots", "6", "--time-limit", "5", "--out", out, "--ics",
                         tmp_path / "cal", "--pseudonyms", "--pseudonym-key", tmp_path / "secret.key")
    assert result.status == 0, result.stderr
    assert "Created the pseudonym key" in result.stderr
    wb = load_workbook(out)
    text = " ".join(str(v) for ws in wb for row in ws.iter_rows(values_only=True) for v in row if v is not None)
    names = " ".join(p.name for p in (tmp_path / "cal" / "attendees").iterdir())
    for student in ENROLMENTS:
        assert student not in text and student not in names
    header, *rows = list(wb["Personal timetables"].iter_rows(values_only=True))
    shown = {r[0] for r in rows}
    assert len(shown) == len(ENROLMENTS) and all(s.startswith("P-") for s in shown)
    # a second run with the same key gives the same pseudonyms
    again = tmp_path / "again.xlsx"
    result = run_command("solve", dated_input, "--slots", "6", "--time-limit", "5", "--out", again,
                         "--pseudonyms", "--pseudonym-key", tmp_path / "secret.key")
    assert result.status == 0 and "Created" not in result.stderr
    _, *rows_again = list(load_workbook(again)["Personal timetables"].iter_rows(values_only=True))
    assert {r[0] for r in rows_again} == shown


def test_solve_plot_needs_counts_or_says_why(run_command, dated_input, tmp_path):
    png = tmp_path / "counts.png"
    result = run_command("solve", dated_input, "--slots", "6", "--time-limit", "3", "--plot", png, "--out",
                         tmp_path / "x.xlsx")
    assert result.status == 0, result.stderr
    assert png.read_bytes()[:4] == b"\x89PNG"
    assert "Counts" in load_workbook(tmp_path / "x.xlsx").sheetnames


def test_a_published_workbook_can_be_kept_and_repaired(run_command, dated_input, tmp_path):
    first = tmp_path / "first.xlsx"
    result = run_command("solve", dated_input, "--slots", "6", "--time-limit", "5", "--json", "--out", first)
    assert result.status == 0, result.stderr
    before = result.json()["runs"][0]["assignment"]
    again = run_command("solve", dated_input, "--slots", "6", "--time-limit", "5", "--json", "--keep", first)
    assert again.status == 0, again.stderr
    run = again.json()["runs"][0]
    assert run["assignment"] == before  # nothing changed, so nothing moves


def test_the_kept_timetable_is_never_written_over(run_command, dated_input, tmp_path):
    first = tmp_path / "first.xlsx"
    assert run_command("solve", dated_input, "--slots", "6", "--time-limit", "5", "--out", first).status == 0
    before = first.read_bytes()
    result = run_command("solve", dated_input, "--slots", "6", "--time-limit", "5", "--keep", first, "--out", first)
    assert result.status == 2 and "never writes over its input" in result.stderr
    assert first.read_bytes() == before
