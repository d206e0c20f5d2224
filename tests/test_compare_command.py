"""``timetabler compare``, driven through the real command: terminal table, JSON, workbook."""

from __future__ import annotations

import csv

import pytest
from openpyxl import load_workbook

from export_cases import ENROLMENTS, comparison_of, reference_counts, small_problem
from timetabler.conflicts import conflict_graph
from timetabler.scheduling.validator import validate


@pytest.fixture
def enrolment_csv(tmp_path):
    path = tmp_path / "hv_resits.csv"
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["Student", "Exam"])
        for student, exams in ENROLMENTS.items():
            for exam in exams:
                w.writerow([student, exam])
    return path


def test_compare_json_workbook_and_terminal_agree(run_command, enrolment_csv, tmp_path):
    out = tmp_path / "choices.xlsx"
    result = run_command("compare", enrolment_csv, "--slots", "2", "3", "4", "--time-limit", "5", "--count-time", "5",
                         "--json", "--out", out)
    assert result.status == 0, result.stderr
    doc = result.json()
    rows = doc["comparison"]
    assert [r["slots"] for r in rows] == [2, 3, 4]
    # the conflict graph of the Harrowgate Vale resits needs 3 slots: networkx.chromatic_polynomial
    # (reference library) is 0 at 2 and positive at 3
    reference = {c.slots: c.timetables for c in reference_counts(conflict_graph(small_problem(rooms=False)), [2, 3, 4]).counts}
    assert reference[2] == 0 and reference[3] > 0
    assert rows[0]["exists"] == "no" and rows[0]["status"] == "infeasible" and rows[0]["reason"]
    assert rows[0]["fewest"].startswith("too few: at least 3")
    assert rows[1]["exists"] == "yes" and rows[1]["fewest"].startswith("the fewest possible, proven")
    assert rows[2]["fewest"].startswith("1 more than the fewest")
    assert doc["fewest"]["upper"] == 3 and doc["fewest"]["proven"] is True
    assert [r["timetables"] for r in rows] == [str(reference[k]) for k in (2, 3, 4)]
    assert doc["written"] == [str(out)]
    # the workbook's comparison sheet holds the same figures as the JSON document
    wb = load_workbook(out)
    for sheet_row, doc_row in zip(comparison_of(wb["Comparison"]), rows):
        assert sheet_row["Slots"] == doc_row["slots"]
        assert sheet_row["Status"] == doc_row["status"]
        assert sheet_row["Penalty"] == doc_row["penalty"]
        assert sheet_row["Attendees with back-to-back"] == doc_row["attendees_back_to_back"]
        assert sheet_row["Fewest slots"] == doc_row["fewest"]
    assert "Grid (3 slots)" in wb.sheetnames and "Grid (2 slots)" not in wb.sheetnames


def test_compare_figures_match_the_validator(run_command, enrolment_csv):
    result = run_command("compare", enrolment_csv, "--slots", "4", "--time-limit", "5", "--count-time", "2", "--json")
    assert result.status == 0, result.stderr
    (row,) = result.json()["comparison"]
    assert row["validator"] == "valid"
    # the penalty compare reports equals the validator's recount of the timetable the solve
    # command gives for the same slots: both are proven optimal, so their penalties must agree
    solved = run_command("solve", enrolment_csv, "--slots", "4", "--time-limit", "5", "--json")
    run = solved.json()["runs"][0]
    problem = small_problem(rooms=False)
    from timetabler.model import generic_slots

    verdict = validate(problem, generic_slots(4, 2), run["assignment"])
    assert verdict.ok
    assert run["status"] == "optimal" and row["proven"] is True
    assert row["penalty"] == verdict.penalty == run["penalty"]


def test_compare_prints_a_side_by_side_table(run_command, enrolment_csv):
    result = run_command("compare", enrolment_csv, "--slots", "2", "3", "--time-limit", "3", "--count-time", "2")
    assert result.status == 0, result.stderr
    text = result.stdout
    for expected in ("2 slots", "3 slots", "Timetable exists", "Fewest slots", "Attendees with back-to-back",
                     "Most seats in one slot", "Validator"):
        assert expected in text
    assert "Fewest slots: 3 (proven" in " ".join(text.split())


def test_compare_refuses_bad_arguments_with_status_2(run_command, enrolment_csv):
    result = run_command("compare", enrolment_csv, "--slots", "five")
    assert result.status == 2 and "not a number of slots" in result.stderr
    result = run_command("compare", enrolment_csv, "--slots", "3", "--time-limit", "2", "--out", enrolment_csv)
    assert result.status == 2
    assert "should end in .xlsx" in result.stderr
    same = enrolment_csv.with_suffix(".xlsx")
    result = run_command("compare", enrolment_csv, "--slots", "3", "--time-limit", "2", "--csv", enrolment_csv.parent,
                         "--ics", enrolment_csv.parent / "cal")
    assert result.status == 2 and "need a date for every slot" in result.stderr
    assert not (enrolment_csv.parent / "comparison.csv").exists()  # nothing written when an output cannot be made
    assert not same.exists()


def test_big_counts_read_as_powers_of_ten_in_the_terminal():
    from timetabler.cli.compare_command import readable_count

    assert readable_count("1260") == "1,260"
    assert readable_count("123456789012345") == "123,456,789,012,345"
    assert readable_count("123456789012345678901234567890") == "1.23 × 10^29 (30 digits)"
    assert readable_count("9" * 30) == "1.00 × 10^30 (30 digits)"  # rounds, never truncates


def test_slot_counts_read_as_registrars_type_them(run_command, enrolment_csv):
    import click

    from timetabler.cli.slot_counts import parse_slot_counts

    assert parse_slot_counts(None, None, "5 6") == (5, 6)
    assert parse_slot_counts(None, None, "5-7,9 6") == (5, 6, 7, 9)
    for bad in ("0", "7-5", "x"):
        with pytest.raises(click.BadParameter):
            parse_slot_counts(None, None, bad)
    result = run_command("compare", enrolment_csv, "--slots", "3", "4-5", "--time-limit", "2", "--count-time", "1", "--json")
    assert result.status == 0, result.stderr
    assert [r["slots"] for r in result.json()["comparison"]] == [3, 4, 5]


def test_compare_repeatable_gives_the_same_figures_twice(run_command, exam_week_xlsx):
    def rows():
        doc = run_command("compare", exam_week_xlsx, "--slots", "5", "6", "--repeatable", "--time-limit", "5",
                          "--count-time", "2", "--json").json()
        assert doc["slots"] and doc["comparison"]
        return [{k: v for k, v in row.items() if k != "solve_seconds"} for row in doc["comparison"]]
    assert rows() == rows()


def test_a_count_with_bounds_only_shows_its_bounds_not_not_counted():
    # a count cut short with proven bounds and no estimate (as the committee round's long boards give)
    from types import SimpleNamespace

    from timetabler.export.tables import count_words

    cut = SimpleNamespace(timetables=None, exact=False, log10=None, estimate_log10=None, lower=6_177_600,
                          upper=2427 * 10 ** 40)
    assert count_words(cut) == "between 6,177,600 and about 10^43.4"  # log10(2.427e43) = 43.385
    small = SimpleNamespace(timetables=None, exact=False, log10=None, estimate_log10=None, lower=6, upper=120)
    assert count_words(small) == "between 6 and 120"
    nothing = SimpleNamespace(timetables=None, exact=False, log10=None, estimate_log10=None, lower=None, upper=None)
    assert count_words(nothing) == "not counted"
