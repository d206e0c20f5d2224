"""``--keep``: an earlier timetable keeps each event in the slot it named, by label, when the labels
of the slots sheet are numbers that are not their positions in time and its rows are not in
calendar order (the tool numbers slots by date and start time).

The expected slots are worked out here from the labels the first run printed (``slot_labels``)
and the event codes alone; the moves are recounted with the independent validator against
that label-for-label reading. Invented data of Brackenmoor Institute, a fictional college.
"""

from __future__ import annotations

import csv
import datetime as dt
import random

from store_builders import late_changes, rows as enrolment_rows, write_xlsx

from timetabler.intake import ReadOptions, read_problem
from timetabler.scheduling import validate

DAYS = [dt.date(2027, 3, 1) + dt.timedelta(days=i) for i in range(3)]
#: In time order (Mon AM, Mon PM, Tue AM, ...), labelled with numbers none of which is its position
IN_TIME = [(label, day, start) for label, (day, start) in
           zip(["4", "6", "1", "5", "3", "2"], [(d, t) for d in DAYS for t in (dt.time(9), dt.time(14))])]
#: The Slots sheet's rows, in neither calendar nor label order
SHEET_ORDER = [IN_TIME[i] for i in (3, 0, 5, 1, 4, 2)]


def _by_label(run: dict) -> dict[str, str]:
    return {event: run["slot_labels"][n - 1] for event, n in run["assignment"].items()}


def _first(run_command, tmp_path, rows):
    source = write_xlsx(tmp_path / "spring.xlsx", rows, SHEET_ORDER)
    first = run_command("solve", source, "--slots", "6", "--time-limit", "2", "--repeatable", "--publish", "v1",
                        "--out", tmp_path / "v1.xlsx", "--json")
    assert first.status == 0, first.stderr
    run = first.json()["runs"][0]
    assert run["slot_labels"] == [label for label, _, _ in IN_TIME]  # numbered in time, not by label or row
    return run


def _repair(run_command, source, keep):
    out = run_command("solve", source, "--slots", "6", "--time-limit", "2", "--repeatable", "--keep", keep,
                      "--weight", "moved=1000", "--json", "--no-record")
    assert out.status == 0, out.stderr
    return out.json()["runs"][0]


def _independent_moves(source, earlier: dict[str, str], run: dict) -> int:
    """The validator's ``moved``, given the earlier timetable read label for label into this run's numbers."""
    problem = read_problem(source, ReadOptions()).problem
    number = {label: n for n, label in enumerate(run["slot_labels"], start=1)}
    previous = {event: number[label] for event, label in earlier.items() if event in problem.events}
    return validate(problem, problem.slots, run["assignment"], previous=previous).soft["moved"]


def test_keep_label_and_keep_file_leave_an_unchanged_timetable_where_it_was(run_command, tmp_path):
    rows = enrolment_rows()
    first = _first(run_command, tmp_path, rows)
    source = tmp_path / "spring.xlsx"
    for keep in ("v1", tmp_path / "v1.xlsx"):
        again = _repair(run_command, source, keep)
        assert _by_label(again) == _by_label(first), keep  # every event in the slot the earlier timetable named
        assert again["moves"] == [] and _independent_moves(source, _by_label(first), again) == 0


def test_a_repair_moves_what_the_changes_force_and_names_the_earlier_slots(run_command, tmp_path):
    first = _first(run_command, tmp_path, enrolment_rows())
    late = write_xlsx(tmp_path / "late.xlsx", late_changes(enrolment_rows(), first["assignment"], random.Random(5)),
                      SHEET_ORDER)
    earlier = _by_label(first)
    for keep in ("v1", tmp_path / "v1.xlsx"):
        again = _repair(run_command, late, keep)
        now = _by_label(again)
        moved = sorted(e for e in now if e in earlier and now[e] != earlier[e])
        assert moved, keep  # the late enrolments force a move
        assert sorted(m["event"] for m in again["moves"]) == moved
        assert all(again["slot_labels"][m["from"] - 1] == earlier[m["event"]] for m in again["moves"])
        assert _independent_moves(late, earlier, again) == len(moved)


def _write_csv(path, header, rows):
    with open(path, "w", newline="", encoding="utf-8") as fh:
        csv.writer(fh).writerows([header, *rows])
    return path


def test_a_slot_label_column_is_read_as_labels_only(tmp_path):
    # with the first five slots in time, label '2' (the sixth) is gone: it is not slot number 2's place
    from timetabler.intake.previous_timetable import read_previous_timetable, resolve_previous

    source = write_xlsx(tmp_path / "spring.xlsx", enrolment_rows(), SHEET_ORDER)
    problem = read_problem(source, ReadOptions()).problem
    earlier = _write_csv(tmp_path / "earlier.csv", ["Event", "Slot label"], [["BRK101", "1"], ["BRK102", "2"],
                                                                             ["BRK103", "4"]])
    resolved = resolve_previous(problem, read_previous_timetable(earlier), problem.slots[:5])
    assert resolved.slots == {"BRK101": 3, "BRK103": 1}  # label '1' is the third slot in time, '4' the first
    assert [f.found for f in resolved.unplaced] == ["2"]


def test_a_slot_number_column_is_read_as_numbers_and_a_bare_slot_column_warns_when_it_could_be_either(tmp_path):
    from timetabler.intake.previous_timetable import read_previous_timetable, resolve_previous

    source = write_xlsx(tmp_path / "spring.xlsx", enrolment_rows(), SHEET_ORDER)
    problem = read_problem(source, ReadOptions()).problem
    by_number = _write_csv(tmp_path / "numbers.csv", ["Event", "Slot number"], [["BRK101", "1"], ["BRK103", "4"]])
    resolved = resolve_previous(problem, read_previous_timetable(by_number), problem.slots)
    assert resolved.slots == {"BRK101": 1, "BRK103": 4} and not resolved.ambiguous
    bare = _write_csv(tmp_path / "bare.csv", ["Event", "Slot"], [["BRK101", "1"], ["BRK103", "Slot 9"]])
    resolved = resolve_previous(problem, read_previous_timetable(bare), problem.slots)
    assert resolved.slots == {"BRK101": 3}  # a label first, as documented
    warning = resolved.ambiguous[0]
    assert "BRK101" in warning.message and "'1'" in warning.message and "label" in warning.message
    assert warning.where.row == 2 and warning.where.column == "Slot"
