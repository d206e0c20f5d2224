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
