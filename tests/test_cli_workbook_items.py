"""Workbook details a registrar sees: the Written date, the attendee load column, the What if sheet."""

from __future__ import annotations

import datetime as dt

from openpyxl import load_workbook

from timetabler.counting.timetables import SENSITIVITY_MAX_EVENTS


def _workbook(run_command, source, tmp_path, *slots):
    out = tmp_path / "book.xlsx"
    result = run_command("solve", source, "--slots", *slots, "--time-limit", "3", "--out", out)
    assert result.status == 0, result.stderr
    return load_workbook(out)


def _small_csv(tmp_path):
    path = tmp_path / "small.csv"  # Harrowgate Vale College committees: a triangle and a pendant
    path.write_text("Member,Committee\nm1,A\nm1,B\nm2,B\nm2,C\nm3,A\nm3,C\nm4,C\nm4,D\n")
    return path


def test_written_is_a_date_and_time_cell(run_command, tmp_path):
    before = dt.datetime.now().replace(second=0, microsecond=0)
    book = _workbook(run_command, _small_csv(tmp_path), tmp_path, "3")
    written = next(row[1] for row in book["Overview"].iter_rows(values_only=True) if row and row[0] == "Written")
    assert isinstance(written, dt.datetime)
    assert before - dt.timedelta(minutes=1) <= written <= dt.datetime.now()


def test_the_attendee_load_column_says_what_it_marks(run_command, tmp_path):
    book = _workbook(run_command, _small_csv(tmp_path), tmp_path, "3")
    rows = list(book["Attendee load"].iter_rows(values_only=True))
    header = rows[0]
    assert "Flagged" not in header and "Clash or two in a day" in header
    # with 3 generic slots two a day, recount from the raw rows who has two events on one day
    events = book["Events"]
    erows = list(events.iter_rows(values_only=True))
    slot_of = {r[0]: r[erows[0].index("Slot")] for r in erows[1:]}
    member_events = {"m1": "AB", "m2": "BC", "m3": "AC", "m4": "CD"}
    for r in rows[1:]:
        record = dict(zip(header, r))
        days = [(slot_of[e] + 1) // 2 for e in member_events[record["Attendee"]]]
        assert record["Clash or two in a day"] == ("yes" if len(set(days)) < len(days) else "no")


def test_what_if_is_there_exactly_when_the_readme_says(run_command, exam_week_xlsx, tmp_path):
    """README: What if only when every group of events linked by clashes has at most 16 events."""
    small = _workbook(run_command, _small_csv(tmp_path), tmp_path, "3")
    assert "What if" in small.sheetnames
    sample = _workbook(run_command, exam_week_xlsx, tmp_path, "6")
    result = run_command("inspect", exam_week_xlsx, "--json")
    largest = max(result.json()["component_sizes"])  # 25 events in one group
    assert largest > SENSITIVITY_MAX_EVENTS and "What if" not in sample.sheetnames
