"""``--days N``: the slots of the first N days of the Slots sheet, for count, solve and compare.

Every workbook is written here, in the fictional Fenwick Moor Institute (committee meetings,
invented members). The slot count of N days is recounted in each test from the dates (or
day numbers) written into the sheet, never read from the tool's own day function; the rows
are shuffled, so taking the first rows instead of the first days would give other figures.
"""

from __future__ import annotations

import datetime as dt
import random

import pytest

from intake_builders import write_xlsx

MONDAY = dt.date(2027, 3, 1)
#: hours of the sessions of each day: days of different lengths, so N days is not N times a constant
HOURS = {0: (9, 11, 13, 15), 1: (9, 13), 2: (9, 11, 13), 3: (10,), 4: (9, 11, 13, 15, 17)}


def enrolments(seed: int = 4) -> list[list[object]]:
    rng = random.Random(seed)
    codes = [f"FM-{name}" for name in ("BUD", "EST", "SAF", "LIB", "HR", "ACA", "RES", "OUT")]
    rows: list[list[object]] = [["Member", "Meeting"]]
    for m in range(24):
        for code in rng.sample(codes, 2):
            rows.append([f"fm{m:03d}", code])
    return rows


def week_rows(shuffle_seed: int = 7, *, with_dates: bool = True):
    rows = []
    for d, hours in HOURS.items():
        day = MONDAY + dt.timedelta(days=d)
        for h in hours:
            rows.append([f"{day:%a} {h:02d}:00", day if with_dates else None, f"{h:02d}:00", 60]
                        + ([] if with_dates else [d + 1]))
    random.Random(shuffle_seed).shuffle(rows)
    return rows


def slots_in_first_days(n: int) -> int:
    """Counted from HOURS, the sheet's own plan of the week."""
    return sum(len(HOURS[d]) for d in range(n))


def week_workbook(tmp_path, *, with_dates=True, name="week.xlsx"):
    header = ["Slot", "Date", "Start", "Length"] if with_dates else ["Slot", "Date", "Start", "Length", "Day"]
    return write_xlsx(tmp_path / name, {"Enrolments": enrolments(), "Slots": [header, *week_rows(with_dates=with_dates)]})


@pytest.mark.parametrize("with_dates", [True, False])
def test_count_days_are_the_first_days_in_time_order(tmp_path, run_command, with_dates):
    path = week_workbook(tmp_path, with_dates=with_dates)
    days = run_command("count", path, "--days", "2", "4", "--json")
    assert days.status == 0, days.stderr
    doc = days.json()
    expected = [slots_in_first_days(2), slots_in_first_days(4)]  # 6 and 10
    assert doc["slots"] == expected and doc["days"] == [2, 4]
    assert [(c["slots"], c["days"]) for c in doc["counts"]] == list(zip(expected, [2, 4]))
    by_slots = run_command("count", path, "--slots", *map(str, expected), "--json").json()
    assert [c["timetables"] for c in doc["counts"]] == [c["timetables"] for c in by_slots["counts"]]


def test_count_days_table_names_the_days(tmp_path, run_command):
    result = run_command("count", week_workbook(tmp_path), "--days", "1-2")
    assert result.status == 0, result.stderr
    assert "Days" in result.stdout


def test_solve_days_uses_only_the_slots_of_those_days(tmp_path, run_command):
    path = week_workbook(tmp_path)
    result = run_command("solve", path, "--days", "3", "--time-limit", "2", "--no-record", "--json")
    assert result.status == 0, result.stderr
    (run,) = result.json()["runs"]
    assert run["days"] == 3 and run["slots"] == slots_in_first_days(3)
    first_three = {MONDAY + dt.timedelta(days=d) for d in range(3)}
    allowed = {f"{day:%a} {h:02d}:00" for day in first_three for h in HOURS[(day - MONDAY).days]}
    assert set(run["slot_labels"]) == allowed  # the three earliest dates, not the first rows of the sheet
    assert run["status"] in ("optimal", "feasible")
    assert set(run["assignment"].values()) <= set(range(1, run["slots"] + 1))


def test_solve_without_days_has_no_days_key(tmp_path, run_command):
    result = run_command("solve", week_workbook(tmp_path), "--slots", "6", "--time-limit", "1", "--no-record", "--json")
    assert result.status == 0, result.stderr
    assert "days" not in result.json()["runs"][0]


def test_compare_days_json_and_columns(tmp_path, run_command):
    path = week_workbook(tmp_path)
    result = run_command("compare", path, "--days", "3", "5", "--time-limit", "1", "--count-time", "1", "--json")
    assert result.status == 0, result.stderr
    doc = result.json()
    assert doc["slots"] == [slots_in_first_days(3), slots_in_first_days(5)] and doc["days"] == [3, 5]
    assert [(r["slots"], r["days"]) for r in doc["comparison"]] == list(zip(doc["slots"], doc["days"]))
    shown = run_command("compare", path, "--days", "3", "--time-limit", "1", "--count-time", "1")
    assert shown.status == 0, shown.stderr
    assert f"3 days, {slots_in_first_days(3)} slots" in shown.stdout


@pytest.mark.parametrize("command", ["count", "solve", "compare"])
def test_more_days_than_the_sheet_holds_is_located_bad_input(tmp_path, run_command, command):
    result = run_command(command, week_workbook(tmp_path), "--days", "6", "--time-limit", "1")
    assert result.status == 2
    assert "sheet 'Slots'" in result.stderr and "6 days" in result.stderr and "only 5 days" in result.stderr
    assert "Traceback" not in result.stderr


@pytest.mark.parametrize("command", ["count", "solve", "compare"])
def test_days_without_a_slots_sheet_is_bad_input(tmp_path, run_command, command):
    path = write_xlsx(tmp_path / "plain.xlsx", {"Enrolments": enrolments()})
    result = run_command(command, path, "--days", "2", "--time-limit", "1")
    assert result.status == 2
    assert "plain.xlsx" in result.stderr and "no Slots sheet" in result.stderr


def test_days_with_undated_slots_is_bad_input(tmp_path, run_command):
    rows = [["Slot", "Start", "Length"], ["Morning", "09:00", 60], ["Afternoon", "14:00", 60], ["Evening", "18:00", 60]]
    path = write_xlsx(tmp_path / "undated.xlsx", {"Enrolments": enrolments(), "Slots": rows})
    result = run_command("count", path, "--days", "1")
    assert result.status == 2
    assert "sheet 'Slots'" in result.stderr and "which day" in result.stderr


def test_slots_and_days_together_are_refused(tmp_path, run_command):
    result = run_command("count", week_workbook(tmp_path), "--days", "2", "--slots", "4")
    assert result.status == 2 and "not both" in result.stderr


@pytest.mark.parametrize("bad", ["0", "x", "4-2"])
def test_bad_day_numbers_are_usage_errors(tmp_path, run_command, bad):
    result = run_command("count", week_workbook(tmp_path), "--days", bad)
    assert result.status == 2 and "Traceback" not in result.stderr


def test_compare_needs_slots_or_days(tmp_path, run_command):
    result = run_command("compare", week_workbook(tmp_path))
    assert result.status == 2 and "--days" in result.stderr
