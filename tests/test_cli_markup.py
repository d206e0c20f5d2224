"""User text reaches the terminal as typed: no rich markup or emoji codes read from it.

File names, event codes and attendee ids that look like rich markup (``[bold]``, ``[/i]``)
or emoji codes (``:fire:``) must print as they are, in every command, and never stop the
command (rich raises ``MarkupError`` on an unmatched closing tag).
"""

from __future__ import annotations

import re

import pytest

# codes that are rich markup or emoji codes when read as such
ODD_CODES = ["MA[/i]1", "PH[bold]2", ":fire:", "CH[/]3"]


def _flat(text: str) -> str:
    """Output with line breaks and table borders turned into single spaces (names may wrap)."""
    return re.sub(r"[\s│┃|]+", " ", text)


@pytest.fixture
def odd_csv(tmp_path):
    """Enrolments whose path and codes are markup: the path reads '.../wk[/b][bold].csv'
    (a folder 'wk[' holding 'b][bold].csv'); s[red]1 sits all four events, so they pairwise clash."""
    (tmp_path / "wk[").mkdir()
    path = tmp_path / "wk[" / "b][bold].csv"
    rows = [("s[red]1", code) for code in ODD_CODES] + [("s2", "MA[/i]1")]
    path.write_text("Student,Exam\n" + "".join(f"{a},{e}\n" for a, e in rows), encoding="utf-8")
    return path


def _assert_plain(result, *names):
    assert result.status == 0, result.stderr
    assert "MarkupError" not in result.stderr and "internal error" not in result.stderr
    shown = _flat(result.stdout + result.stderr)
    joined = shown.replace(" ", "")  # a long path may wrap inside a name: compare without the breaks too
    for name in names:
        assert name in shown or name.replace(" ", "") in joined, (name, result.stdout)


def test_inspect_prints_the_file_name_and_codes_as_typed(run_command, odd_csv):
    result = run_command("inspect", odd_csv)
    _assert_plain(result, "wk[/b][bold].csv", "s[red]1", *ODD_CODES)


def test_count_prints_names_as_typed(run_command, odd_csv):
    result = run_command("count", odd_csv, "--slots", "4", "5")
    _assert_plain(result, "wk[/b][bold].csv", *ODD_CODES)


def test_solve_prints_reasons_and_codes_as_typed(run_command, odd_csv, tmp_path):
    out = tmp_path / "tt[bold].xlsx"
    result = run_command("solve", odd_csv, "--slots", "1", "4", "--out", out, "--time-limit", "2")
    # with one slot the reason (four events pairwise clash, or s[red]1 has four) names every code
    _assert_plain(result, *ODD_CODES, out.name)
    assert out.exists()


def test_solve_repair_prints_moves_and_warnings_as_typed(run_command, odd_csv, tmp_path):
    earlier = tmp_path / "wk[" / "b]earlier.csv"
    # every event in slot 1 (clashes, so something must move), and a code no longer enrolled
    earlier.write_text("Event,Slot\nMA[/i]1,1\nPH[bold]2,1\n:fire:,1\nCH[/]3,1\nGONE[/u],1\n", encoding="utf-8")
    result = run_command("solve", odd_csv, "--slots", "4", "--keep", earlier, "--time-limit", "2")
    _assert_plain(result, "3 event(s) moved from the earlier timetable", "GONE[/u]")
    moves = [line for line in result.stdout.splitlines() if "•" in line]
    assert moves and all(any(code in line for code in ODD_CODES) for line in moves), moves


def test_compare_prints_names_as_typed(run_command, odd_csv):
    result = run_command("compare", odd_csv, "--slots", "1", "4", "--time-limit", "2", "--count-time", "2")
    _assert_plain(result, *ODD_CODES)


def test_template_names_the_file_as_typed(run_command, tmp_path):
    (tmp_path / "t[").mkdir()
    path = tmp_path / "t[" / "b][bold].xlsx"
    result = run_command("template", path)
    _assert_plain(result, "t[/b][bold].xlsx")
    assert path.exists()


def test_an_error_message_shows_the_file_name_as_typed(run_command, tmp_path):
    (tmp_path / "gone[").mkdir()
    missing = tmp_path / "gone[" / "b].csv"
    result = run_command("inspect", missing)
    assert result.status == 2
    assert "gone[/b].csv" in _flat(result.stderr) and "MarkupError" not in result.stderr
