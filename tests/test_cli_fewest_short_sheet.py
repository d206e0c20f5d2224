"""``--fewest`` when the Slots sheet has fewer slots than are needed: the answer says so plainly (how
many slots the sheet has, how many are needed, how many rows to add), not that time ran out.

Invented data of Wrenfield Moor College (a fictional school); the slots needed are worked out by
hand in each test's comment.
"""

from __future__ import annotations

import datetime as dt

from intake_builders import write_xlsx


def _workbook(tmp_path, enrolments, slots):
    rows = [["Slot", "Date", "Start", "Length"]]
    rows += [[f"WM slot {i + 1}", day, start, 120] for i, (day, start) in enumerate(slots)]
    return write_xlsx(tmp_path / "wrenfield.xlsx", {"Enrolments": [["Student", "Exam"], *enrolments],
                                                     "Slots": rows})


MONDAY = dt.date(2027, 5, 3)


def test_fewest_with_a_sheet_shorter_than_the_largest_clash_says_the_sheet_is_too_short(run_command, tmp_path):
    # one student sits five exams: five slots at least (the busiest attendee), and the sheet lists three
    source = _workbook(tmp_path, [["WM-S001", f"WM10{n}"] for n in range(5)],
                       [(MONDAY + dt.timedelta(days=d), "09:00") for d in range(3)])
    shown = run_command("solve", source, "--fewest", "--time-limit", "3", "--no-record")
    assert shown.status == 0, shown.stderr
    text = " ".join(shown.stdout.split())
    assert "The Slots sheet has only 3 slots, and at least 5 are needed" in text
    assert "add at least 2 rows to the Slots sheet" in text and "time limit" not in text
    doc = run_command("solve", source, "--fewest", "--time-limit", "3", "--no-record", "--json").json()
    assert doc["fewest"]["sheet_too_short"] is True and doc["fewest"]["slots_in_sheet"] == 3
    assert doc["fewest"]["lower"] == 5 and doc["fewest"]["upper"] is None
    compared = run_command("compare", source, "--slots", "2", "3", "--time-limit", "2", "--count-time", "1")
    assert compared.status == 0, compared.stderr
    assert "The Slots sheet has only 3 slots, and at least 5 are needed" in " ".join(compared.stdout.split())


def test_fewest_when_every_count_the_sheet_allows_is_impossible(run_command, tmp_path):
    # four exams of one student, at most one a day: four days. The sheet has five slots on two days
    # (Mon AM/PM, Tue AM/PM/evening), so 4 and 5 slots are both impossible: at least 6 in that sheet's order
    slots = [(MONDAY, "09:00"), (MONDAY, "14:00"), (MONDAY + dt.timedelta(days=1), "09:00"),
             (MONDAY + dt.timedelta(days=1), "14:00"), (MONDAY + dt.timedelta(days=1), "18:00")]
    source = _workbook(tmp_path, [["WM-S002", f"WM20{n}"] for n in range(4)], slots)
    doc = run_command("solve", source, "--fewest", "--max-per-day", "1", "--time-limit", "3", "--no-record",
                      "--json").json()
    fewest = doc["fewest"]
    assert fewest["upper"] is None and fewest["sheet_too_short"] is True and fewest["lower"] == 6
    shown = run_command("solve", source, "--fewest", "--max-per-day", "1", "--time-limit", "3", "--no-record")
    assert "The Slots sheet has only 5 slots, and at least 6 are needed" in " ".join(shown.stdout.split())
