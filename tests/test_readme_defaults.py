"""The README's table of soft goals is the model's: every goal, its name and its default weight."""

from __future__ import annotations

import dataclasses
import re
from pathlib import Path

from timetabler.model import GOAL_NAMES, Weights

README = Path(__file__).resolve().parents[1] / "README.md"


def _goal_rows() -> dict[str, str]:
    text = README.read_text(encoding="utf-8")
    table = text[text.index("| goal | name"):]
    rows = {}
    for line in table.splitlines()[2:]:
        if not line.startswith("|"):
            break
        cells = [c.strip() for c in line.strip("|").split("|")]
        rows[cells[1]] = cells[2]
    return rows


def test_every_goal_is_in_the_readme_table_with_its_default_weight():
    rows = _goal_rows()
    defaults = {f.name: f.default for f in dataclasses.fields(Weights)}
    assert set(rows) == set(GOAL_NAMES.values())
    for field, name in GOAL_NAMES.items():
        shown = int(re.match(r"\d+", rows[name]).group())
        assert shown == defaults[field], (name, rows[name], defaults[field])
