"""Slot and day counts are read by one parser: the command line and the web page accept and refuse the
same texts with the same words (before, the page swapped a backwards range and the command refused it)."""

from __future__ import annotations

import pytest

from timetabler.plan import parse_counts
from timetabler.web.analysis import parse_slot_counts


@pytest.mark.parametrize("text, expected", [("5 6", [5, 6]), ("6,5", [6, 5]), ("5-7", [5, 6, 7]),
                                            ("5..6 6", [5, 6]), ("4 4 4", [4])])
def test_counts_as_typed(text, expected):
    assert parse_counts(text) == expected
    assert parse_slot_counts(text, limit=12) == sorted(expected)  # the page lists them in order


@pytest.mark.parametrize("text, words", [("8-5", "runs backwards"), ("five", "is not a number of slots"),
                                         ("0", "at least 1"), ("5-", "is not a number of slots")])
def test_the_page_and_the_command_refuse_alike(tmp_path, run_command, text, words):
    with pytest.raises(ValueError, match=words):
        parse_slot_counts(text, limit=12)
    path = tmp_path / "pair.csv"
    path.write_text("Student,Exam\nQP1,A\nQP1,B\n")
    result = run_command("count", path, "--slots", text)
    assert result.status == 2 and words in " ".join(result.stderr.split())


@pytest.mark.parametrize("typed, words", [("100000000000000000000", "at most 1,000,000"), ("-4", "0 or more"),
                                          ("2.5", "whole number")])
def test_a_weight_is_refused_alike_by_the_command_and_the_page(tmp_path, run_command, typed, words):
    # 10^20 once crashed the solve (OverflowError converting the pair costs to 64-bit integers, exit 1)
    from timetabler.model import Weights
    from timetabler.web.analysis import weights_from_form

    with pytest.raises(ValueError, match=words):
        weights_from_form({"weight_back_to_back": typed}, Weights())
    path = tmp_path / "pair.csv"
    path.write_text("Student,Exam\nQP1,A\nQP1,B\n")
    result = run_command("solve", path, "--slots", "2", "--no-record", "--weight", f"back-to-back={typed}")
    assert result.status == 2 and words in " ".join(result.stderr.split()) and "Traceback" not in result.stderr
