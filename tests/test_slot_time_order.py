"""Slots are used in time order, whatever the order of the rows of the slots sheet.

Each workbook here is written by the test, with the rows of its slots sheet shuffled, and
every figure is checked against a count made here from the dates and start times alone
(brute force over each attendee's pairs of events), never from slot numbers. Invented
data of the fictional Harrowgate Vale College.
"""

from __future__ import annotations

import datetime as dt
import itertools
import random

import pytest

from intake_builders import write_xlsx
from timetabler.intake import ReadOptions, read_problem
from timetabler.model import Event, Problem, Rule, RuleKind, Slot, Weights
from timetabler.scheduling import SolveOptions, solve, validate

DAYS = [dt.date(2027, 1, 11) + dt.timedelta(days=i) for i in range(3)]
SESSIONS = [(dt.time(9), "AM"), (dt.time(14), "PM")]
#: Mon AM, Mon PM, Tue AM, ... in time order
IN_TIME = [(f"{d:%a %d %b} {name}", d, t) for d in DAYS for t, name in SESSIONS]


def enrolment_rows(seed: int = 5, students: int = 30, events: int = 10) -> list[list[object]]:
    rng = random.Random(seed)
    rows: list[list[object]] = [["Student", "Exam"]]
    for s in range(students):
        for code in rng.sample([f"HV{100 + e}" for e in range(events)], 2):
            rows.append([f"HV-S{s:04d}", code])
    return rows


def workbook(tmp_path, slot_rows, *, name="term.xlsx", rules=None, extra_slot_columns=()):
    sheets = {"Enrolments": enrolment_rows(),
              "Slots": [["Slot", "Date", "Start", "Length", *extra_slot_columns], *slot_rows]}
    if rules:
        sheets["Rules"] = [["Rule", "First event", "Other events"], *rules]
    return write_xlsx(tmp_path / name, sheets)


def am_rows_first():
    """The same dated slots, listed AM rows first then PM rows (the order of the issue)."""
    return [[label, d, t.strftime("%H:%M"), 180] for label, d, t in sorted(IN_TIME, key=lambda x: (x[2], x[1]))]


def back_to_back_from_dates(problem: Problem, moment: dict[str, tuple[dt.date, dt.time]],
                            placed: dict[str, str]) -> tuple[int, int]:
    """(back-to-back, overnight) pairs counted from dates and starts alone: two events of an attendee
    in slots next to each other in the calendar, on the same date or not."""
    calendar = sorted(set(moment.values()))
    position = {m: i for i, m in enumerate(calendar)}
    b2b = overnight = 0
    for codes in problem.events_by_attendee().values():
        for a, b in itertools.combinations(codes, 2):
            ma, mb = moment[placed[a]], moment[placed[b]]
            if abs(position[ma] - position[mb]) == 1:
                if ma[0] == mb[0]:
                    b2b += 1
                else:
                    overnight += 1
    return b2b, overnight


def test_shuffled_rows_are_read_in_time_order_with_a_located_warning(tmp_path):
    reading = read_problem(workbook(tmp_path, am_rows_first()), ReadOptions())
    assert [s.label for s in reading.problem.slots] == [label for label, _, _ in IN_TIME]
    hits = [w for w in reading.warnings if "not in time order" in w.message]
    assert hits and hits[0].where.sheet == "Slots"
    # slot 2 in time is 'Mon 11 Jan PM', the fourth data row (row 5) of the AM-first sheet
    assert hits[0].where.row == 5 and "slot 2 is 'Mon 11 Jan PM'" in hits[0].message


def test_back_to_back_follows_the_calendar_not_the_rows(tmp_path):
    problem = read_problem(workbook(tmp_path, am_rows_first()), ReadOptions()).problem
    moment = {label: (d, t) for label, d, t in IN_TIME}
    rng = random.Random(11)
    labels = [s.label for s in problem.slots]
    for _ in range(20):  # random timetables (clashes allowed: only the pair counts matter here)
        placed = {code: rng.choice(labels) for code in problem.events}
        numbers = {code: labels.index(placed[code]) + 1 for code in problem.events}
        v = validate(problem, problem.slots, numbers)
        assert (v.soft["back_to_back"], v.soft["overnight"]) == back_to_back_from_dates(problem, moment, placed)


def test_the_solver_minimises_the_back_to_back_the_calendar_has(tmp_path):
    problem = read_problem(workbook(tmp_path, am_rows_first()), ReadOptions()).problem
    problem.weights = Weights(**{**{k: 0 for k in Weights().__dict__}, "back_to_back": 1})
    run = solve(problem, problem.slots, SolveOptions(time_limit=10, workers=2, seed=1))
    assert run.status in ("optimal", "feasible"), run.reasons
    placed = {c: problem.slots[n - 1].label for c, n in run.assignment.items()}
    b2b, _ = back_to_back_from_dates(problem, {label: (d, t) for label, d, t in IN_TIME}, placed)
    assert run.penalty_breakdown.get("back_to_back", 0) == b2b


def test_a_before_rule_holds_in_the_calendar_with_rows_in_reverse_date_order(tmp_path):
    rows = [[label, d, t.strftime("%H:%M"), 180] for label, d, t in reversed(IN_TIME)]
    problem = read_problem(workbook(tmp_path, rows, rules=[["before", "HV100", "HV101"], ["before", "HV101", "HV102"]]),
                           ReadOptions()).problem
    run = solve(problem, problem.slots, SolveOptions(time_limit=10, workers=2, seed=1))
    assert run.status in ("optimal", "feasible")
    when = {c: (problem.slots[n - 1].date, problem.slots[n - 1].start) for c, n in run.assignment.items()}
    assert when["HV100"] < when["HV101"] < when["HV102"]


def test_the_first_k_slots_are_the_first_k_in_time(tmp_path, run_command):
    rows = [[label, d, t.strftime("%H:%M"), 180] for label, d, t in reversed(IN_TIME)]
    path = workbook(tmp_path, rows)
    result = run_command("solve", path, "--slots", "4", "--time-limit", "5", "--json")
    assert result.status == 0, result.stderr
    (run,) = result.json()["runs"]
    assert run["slot_labels"] == [label for label, _, _ in IN_TIME[:4]]  # Monday and Tuesday, not Tue PM to Wed


def test_the_validator_reads_time_itself_and_rejects_numbers_against_the_calendar():
    # Slots handed over out of time order (as intake never does): the validator does not take the
    # numbers for the calendar; it counts back-to-back from the dates and says the numbering is wrong.
    shuffled = [Slot(label, date=d, start=t, length_minutes=180) for label, d, t in
                sorted(IN_TIME, key=lambda x: (x[2], x[1]))]
    p = Problem([("HV-S0001", "A"), ("HV-S0001", "B"), ("HV-S0002", "C"), ("HV-S0002", "D")],
                rules=[Rule(RuleKind.BEFORE, ("C", "D"))])
    # A in Mon AM (number 1), B in Mon PM (number 4): back-to-back in the calendar, three numbers apart
    # C in Wed AM (number 3) before D in Mon PM (number 4) by number, but two days later in the calendar
    v = validate(p, shuffled, {"A": 1, "B": 4, "C": 3, "D": 4})
    assert v.soft["back_to_back"] == 1 and v.soft["same_day"] == 0
    text = " | ".join(v.violations)
    assert "not numbered in time order" in text and "C must come before D" in text
    in_time = [Slot(label, date=d, start=t, length_minutes=180) for label, d, t in IN_TIME]
    assert validate(p, in_time, {"A": 1, "B": 2, "C": 1, "D": 5}).ok


def test_day_numbers_without_dates_give_the_order_and_days(tmp_path):
    rows = [["Second day, morning", None, "09:00", 120, 2], ["First day, afternoon", None, "14:00", 120, 1],
            ["First day, morning", None, "09:00", 120, 1]]
    problem = read_problem(workbook(tmp_path, rows, extra_slot_columns=("Day",)), ReadOptions()).problem
    assert [s.label for s in problem.slots] == ["First day, morning", "First day, afternoon", "Second day, morning"]


def test_no_dates_and_no_days_keep_the_rows_and_say_so(tmp_path):
    rows = [["Late", None, "14:00", 120], ["Early", None, "09:00", 120]]
    reading = read_problem(workbook(tmp_path, rows), ReadOptions())
    assert [s.label for s in reading.problem.slots] == ["Late", "Early"]
    assert any("no dates and no day numbers" in w.message and "order of the rows" in w.message
               for w in reading.warnings)


@pytest.mark.parametrize("days, message, row", [
    ((1, 1, 1, 2, 3, 3), "disagrees with the dates", 4),  # Tue AM says day 1, like Monday
    ((2, 2, 1, 1, 3, 3), "do not rise with the dates", 4),
])
def test_a_day_column_that_contradicts_the_dates_is_an_error(tmp_path, days, message, row):
    from timetabler.errors import InputError
    rows = [[label, d, t.strftime("%H:%M"), 180, n] for (label, d, t), n in zip(IN_TIME, days)]
    with pytest.raises(InputError) as caught:
        read_problem(workbook(tmp_path, rows, extra_slot_columns=("Day",)), ReadOptions())
    finding = next(f for f in caught.value.findings if message in f.message)
    assert finding.where.row == row and "Day" in finding.where.column


def test_overlapping_slots_are_reported(tmp_path):
    rows = [["Mon AM", DAYS[0], "09:00", 180], ["Mon late AM", DAYS[0], "11:00", 120]]
    reading = read_problem(workbook(tmp_path, rows), ReadOptions())
    hit = next(w for w in reading.warnings if "overlap in time" in w.message)
    assert hit.where.row == 3


def test_an_event_placed_with_solve_numbers_matches_its_label_in_time(tmp_path):
    # the JSON's slot numbers count in time order: number n is slot_labels[n - 1], the n-th slot in time
    problem = read_problem(workbook(tmp_path, am_rows_first()), ReadOptions()).problem
    problem.events["HV100"] = Event("HV100", fixed_slot="Mon 11 Jan PM")
    run = solve(problem, problem.slots, SolveOptions(time_limit=5, workers=2, seed=1))
    assert run.assignment["HV100"] == 2 and run.to_json()["slot_labels"][1] == "Mon 11 Jan PM"


def test_an_earlier_timetable_is_read_by_slot_label_rather_than_number(tmp_path):
    # a workbook made before slots were sorted by time numbered them by row: the label says which slot it was
    from intake_builders import write_text
    from timetabler.intake.previous_timetable import read_previous_timetable, resolve_previous

    earlier = write_text(tmp_path / "earlier.csv", [["Event", "Slot", "Slot label"], ["HV100", 2, "Wed 13 Jan AM"]])
    problem = read_problem(workbook(tmp_path, am_rows_first()), ReadOptions()).problem
    resolved = resolve_previous(problem, read_previous_timetable(earlier), problem.slots)
    assert resolved.slots == {"HV100": 5}  # Wed AM is the fifth slot in time; number 2 is Mon PM
