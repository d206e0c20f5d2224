"""`timetabler inspect` on real files: the JSON contract of DESIGN.md and exit statuses."""

from __future__ import annotations

import itertools

import pandas as pd


def test_inspect_json_contract_on_sample_week(run_command, exam_week_xlsx):
    result = run_command("inspect", exam_week_xlsx, "--json")
    assert result.status == 0, result.stderr
    doc = result.json()
    for key in ("events", "attendees", "enrolments", "conflict_pairs", "components", "max_clique"):
        assert isinstance(doc[key], int), key
    # Recount from the raw sheet with pandas alone (independent of intake and the graph code).
    raw = pd.read_excel(exam_week_xlsx, sheet_name="Enrolments").drop_duplicates(["Student", "Exam"])
    assert doc["events"] == raw["Exam"].nunique()
    assert doc["attendees"] == raw["Student"].nunique()
    assert doc["enrolments"] == len(raw)
    papers = raw.groupby("Student")["Exam"].apply(set)
    pairs = {frozenset(p) for s in papers for p in itertools.combinations(sorted(s), 2)}
    assert doc["conflict_pairs"] == len(pairs)


def test_inspect_csv_and_xlsx_agree(run_command, tmp_path):
    frame = pd.DataFrame({"Member": ["m1", "m1", "m2", "m2", "m3"], "Committee": ["Estates", "Finance", "Finance", "Library", "Estates"]})
    csv, xlsx = tmp_path / "c.csv", tmp_path / "c.xlsx"
    frame.to_csv(csv, index=False)
    frame.to_excel(xlsx, index=False)
    a = run_command("inspect", csv, "--json").json()
    b = run_command("inspect", xlsx, "--json").json()
    keys = ("events", "attendees", "enrolments", "conflict_pairs", "components", "max_clique")
    assert {k: a[k] for k in keys} == {k: b[k] for k in keys} == {
        "events": 3, "attendees": 3, "enrolments": 5, "conflict_pairs": 2, "components": 1, "max_clique": 2,
    }


def test_inspect_human_output_names_the_bound(run_command, exam_week_xlsx):
    result = run_command("inspect", exam_week_xlsx)
    assert result.status == 0
    assert "At least" in result.stdout and "slots are needed" in result.stdout


def test_missing_file_exits_2_and_names_it(run_command, tmp_path):
    missing = tmp_path / "enrolments.xlsx"
    result = run_command("inspect", missing)
    assert result.status == 2
    assert "enrolments.xlsx" in result.stderr
    assert "Traceback" not in result.stderr


def test_file_without_recognisable_columns_exits_2(run_command, tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("Name,Colour\nx,red\n")
    result = run_command("inspect", bad)
    assert result.status == 2
    assert "bad.csv" in result.stderr
    assert "Traceback" not in result.stderr


def test_unknown_option_exits_2(run_command, exam_week_xlsx):
    assert run_command("inspect", exam_week_xlsx, "--no-such-option").status == 2


def test_plain_timetabler_shows_the_overview_and_succeeds(run_command):
    result = run_command()
    assert result.status == 0
    assert "Typical session" in result.stdout and "solve" in result.stdout and "count" in result.stdout


def test_inspect_words_the_slot_bound_for_no_events_and_for_events_that_never_clash(run_command, tmp_path):
    empty = tmp_path / "empty.csv"
    empty.write_text("Student,Exam\n", encoding="utf-8")
    result = run_command("inspect", empty)
    assert result.status == 0 and "nothing to timetable" in result.stdout and "pairwise" not in result.stdout
    apart = tmp_path / "apart.csv"
    apart.write_text("Student,Exam\nHV-S0001,MAT101\nHV-S0002,HIS130\n", encoding="utf-8")
    result = run_command("inspect", apart)
    assert "At least 1 slot is needed: no two events share an attendee." in " ".join(result.stdout.split())
