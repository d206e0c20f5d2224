"""`timetabler solve` through the real entry point: the JSON contract, reasons, repair, exit statuses."""

from __future__ import annotations


import pandas as pd
import pytest

from timetabler.model import Problem, generic_slots
from timetabler.scheduling import validate


@pytest.fixture
def week_csv(tmp_path):
    """Harrowgate Vale College, a small invented exam week: a clique of 4 exams plus a few others."""
    rows = []
    for i in range(12):
        sid = f"HV-S{i:04d}"
        rows += [(sid, "HV-MAT101"), (sid, "HV-PHY101")]
        if i % 2:
            rows.append((sid, "HV-CHE101"))
        if i % 3 == 0:
            rows.append((sid, "HV-BIO101"))
    rows += [("HV-S0100", "HV-CHE101"), ("HV-S0100", "HV-BIO101"), ("HV-S0101", "HV-ART101")]
    rows += [("HV-S0001", "HV-BIO101")]  # makes MAT/PHY/CHE/BIO a clique of 4
    path = tmp_path / "week.csv"
    pd.DataFrame(rows, columns=["Student", "Exam"]).to_csv(path, index=False)
    return path, rows


def test_json_contract_and_validator_verdict(run_command, week_csv):
    path, rows = week_csv
    result = run_command("solve", path, "--slots", "3", "4", "6", "--time-limit", "5", "--json")
    assert result.status == 0, result.stderr
    doc = result.json()
    assert [r["slots"] for r in doc["runs"]] == [3, 4, 6]
    three, four, six = doc["runs"]
    assert three["status"] == "infeasible" and "4 events pairwise share attendees" in " ".join(three["reasons"])
    assert "HV-S0001 has 4 events" in three["reason"]
    assert three["assignment"] == {}
    for run in (four, six):
        assert run["status"] in ("optimal", "feasible")
        assert run["validation"]["ok"] is True
        k = run["slots"]
        assert all(1 <= s <= k for s in run["assignment"].values())
        # re-check against the raw rows directly (no intake): nobody in two exams of one slot
        by_student: dict[str, list[int]] = {}
        for sid, exam in set(rows):
            by_student.setdefault(sid, []).append(run["assignment"][exam])
        assert all(len(v) == len(set(v)) for v in by_student.values())
    p = Problem(sorted(set(rows)))
    assert validate(p, generic_slots(6, 2), six["assignment"]).penalty == six["penalty"]


def test_slot_ranges_and_human_output(run_command, week_csv):
    path, _ = week_csv
    result = run_command("solve", path, "--slots", "4-5", "--time-limit", "5")
    assert result.status == 0, result.stderr
    assert "Timetables" in result.stdout and "passed" in result.stdout


def test_fewest_slots_is_reported_and_proven(run_command, week_csv):
    path, _ = week_csv
    doc = run_command("solve", path, "--fewest", "--time-limit", "5", "--json").json()
    assert doc["fewest"]["upper"] == doc["fewest"]["lower"] == 4 and doc["fewest"]["proven"]
    assert doc["runs"][0]["slots"] == 4 and doc["runs"][0]["status"] in ("optimal", "feasible")


def test_weights_and_daily_limit_from_the_command_line(run_command, week_csv):
    path, _ = week_csv
    doc = run_command("solve", path, "--slots", "8", "--max-per-day", "1", "--weight", "back-to-back=0",
                      "--time-limit", "5", "--json").json()
    run = doc["runs"][0]
    assert run["status"] in ("optimal", "feasible")
    days = {}
    for exam, s in run["assignment"].items():
        days.setdefault((s - 1) // 2, []).append(exam)
    # students of MAT101 and PHY101 must not share a day
    assert (run["assignment"]["HV-MAT101"] - 1) // 2 != (run["assignment"]["HV-PHY101"] - 1) // 2
    bad = run_command("solve", path, "--slots", "4", "--max-per-day", "1", "--time-limit", "5", "--json").json()
    assert bad["runs"][0]["status"] == "infeasible"
    assert "more than 1 events a day" in bad["runs"][0]["reason"]


def test_repair_from_a_csv_lists_moves(run_command, week_csv, tmp_path):
    path, rows = week_csv
    first = run_command("solve", path, "--slots", "5", "--time-limit", "5", "--json").json()["runs"][0]
    earlier = tmp_path / "earlier.csv"
    pd.DataFrame(sorted(first["assignment"].items()), columns=["Event", "Slot"]).to_csv(earlier, index=False)
    # a late enrolment: a student joins ART101 and an exam that shared its slot
    art = first["assignment"]["HV-ART101"]
    partner = next((e for e, s in first["assignment"].items() if s == art and e != "HV-ART101"), "HV-MAT101")
    late = tmp_path / "late.csv"
    pd.DataFrame(rows + [("HV-S0999", "HV-ART101"), ("HV-S0999", partner)],
                 columns=["Student", "Exam"]).to_csv(late, index=False)
    doc = run_command("solve", late, "--slots", "5", "--keep", earlier, "--time-limit", "5", "--json").json()
    run = doc["runs"][0]
    assert run["status"] in ("optimal", "feasible") and run["validation"]["ok"]
    moved = {m["event"] for m in run["moves"]}
    assert moved == {e for e in run["assignment"] if run["assignment"][e] != first["assignment"][e]}
    if partner != "HV-MAT101" or art == first["assignment"]["HV-MAT101"]:
        assert len(moved) == 1  # one move is enough to part two exams


@pytest.mark.parametrize("args,words", [
    (["--slots", "0"], "at least 1"),
    (["--slots", "x"], "No such command"),  # click: a stray word is an extra argument
    (["--weight", "nonsense=3", "--slots", "4"], "NAME=NUMBER"),
    ([], "Say how many slots"),
])
def test_bad_arguments_exit_2_with_a_message(run_command, week_csv, args, words):
    path, _ = week_csv
    result = run_command("solve", path, *args)
    assert result.status == 2
    assert words.split()[0].lower() in (result.stderr + result.stdout).lower()


def test_missing_earlier_timetable_is_bad_input(run_command, week_csv, tmp_path):
    path, _ = week_csv
    result = run_command("solve", path, "--slots", "4", "--keep", tmp_path / "nope.xlsx")
    assert result.status == 2 and "does not exist" in result.stderr


def test_weight_names_of_the_weights_sheet_work_on_the_command_line():
    import click

    from timetabler.cli.solve_command import _parse_weights
    got = _parse_weights(None, None, ("avoided room=3", "back-to-back=2", "preferred_slot=4", "Avoided slot=6"))
    assert got == {"penalised_room": 3, "back_to_back": 2, "preferred_slot": 4, "penalised_slot": 6}
    with pytest.raises(click.BadParameter, match="NAME one of"):
        _parse_weights(None, None, ("lunch=1",))
