"""Options solve and compare share (one definition each): --weight, --max-per-day, --keep, --time-limit."""

from __future__ import annotations

import click
import pytest

# Harrowgate Vale College: three students sit X and Y, four sit X and Z; t0 joins A and B late.
ROWS = [(f"s{i}", e) for i in range(3) for e in ("X", "Y")] + [(f"u{i}", e) for i in range(4) for e in ("X", "Z")] \
    + [("t0", "A"), ("t0", "B")]
EARLIER = {"X": 1, "Y": 2, "Z": 3, "A": 3, "B": 3}


@pytest.fixture
def files(tmp_path):
    enrolments = tmp_path / "late.csv"
    enrolments.write_text("Student,Exam\n" + "".join(f"{a},{e}\n" for a, e in ROWS))
    earlier = tmp_path / "earlier.csv"
    earlier.write_text("Event,Slot\n" + "".join(f"{e},{s}\n" for e, s in EARLIER.items()))
    return enrolments, earlier


def test_compare_takes_weight_max_per_day_and_keep(run_command, files):
    enrolments, earlier = files
    common = ["--slots", "4", "--sessions-per-day", "2", "--keep", earlier, "--weight", "moved=1000",
              "--max-per-day", "1", "--time-limit", "5", "--json"]
    compared = run_command("compare", enrolments, *common, "--count-time", "2")
    solved = run_command("solve", enrolments, *common)
    assert compared.status == 0, compared.stderr
    assert solved.status == 0, solved.stderr
    row = compared.json()["comparison"][0]
    run = solved.json()["runs"][0]
    assert run["status"] == "optimal" and run["validation"]["ok"]
    # both commands minimise the same thing, so the least penalty is the same
    assert row["penalty"] == run["penalty"]
    # --max-per-day 1, recounted from the assignment: slots 1-2 are day 1, 3-4 day 2
    day = {e: (s + 1) // 2 for e, s in run["assignment"].items()}
    for student in {a for a, _ in ROWS}:
        days = [day[e] for a, e in ROWS if a == student]
        assert len(days) == len(set(days)), student
    # with moves this dear, only what the rules force moves: A or B (t0), Y or X (one a day)
    assert len(run["moves"]) == 2 and run["penalty"] >= 2000


def test_compare_prints_the_moves_of_a_repair(run_command, files):
    enrolments, earlier = files
    result = run_command("compare", enrolments, "--slots", "4", "--keep", earlier, "--time-limit", "3",
                         "--count-time", "2")
    assert result.status == 0, result.stderr
    assert "moved from the earlier timetable" in result.stdout


@pytest.mark.parametrize("command,option", [("solve", "--time-limit"), ("compare", "--time-limit"),
                                            ("compare", "--count-time"), ("count", "--time-limit")])
@pytest.mark.parametrize("value", ["nan", "inf", "-inf", "1e999", "NaN"])
def test_a_time_limit_must_be_a_finite_number(run_command, files, command, option, value):
    enrolments, _ = files
    result = run_command(command, enrolments, "--slots", "4", option, value)
    assert result.status == 2
    assert "finite number of seconds" in result.stderr and "Traceback" not in result.stderr


def test_one_definition_of_each_shared_option():
    """The options are the same objects' output in both commands (help, type and parser)."""
    from timetabler.cli.compare_command import command as compare
    from timetabler.cli.solve_command import command as solve

    def by_name(cmd: click.Command) -> dict:
        return {p.name: p for p in cmd.params}

    s, c = by_name(solve), by_name(compare)
    for name in ("weights", "max_per_day", "keep"):
        assert s[name].help == c[name].help and type(s[name].type) is type(c[name].type), name
    assert s["weights"].callback is c["weights"].callback
