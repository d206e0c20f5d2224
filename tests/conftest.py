"""Shared fixtures: paths of the sample workbooks and a runner for the real command."""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
SAMPLE_DATA = ROOT / "sample_data"


@dataclass
class CommandResult:
    status: int
    stdout: str
    stderr: str

    def json(self):
        return json.loads(self.stdout)


@pytest.fixture(autouse=True)
def private_store(tmp_path, monkeypatch):
    """Every test gets its own store file (commands record their runs there), never the user's data folder."""
    path = tmp_path / "timetabler-store.sqlite3"
    monkeypatch.setenv("TIMETABLER_STORE", str(path))
    monkeypatch.delenv("TIMETABLER_RETENTION_DAYS", raising=False)
    return path


@pytest.fixture
def run_command(capsys):
    """Run ``timetabler ARGS...`` in-process through the real entry point; return status and output."""
    from timetabler.cli import cli
    from timetabler.cli.common import run_guarded

    def run(*args: str) -> CommandResult:
        capsys.readouterr()
        status = run_guarded(cli, [str(a) for a in args])
        out, err = capsys.readouterr()
        return CommandResult(status, out, err)

    return run


@pytest.fixture
def exam_week_xlsx() -> Path:
    return SAMPLE_DATA / "exam_week.xlsx"


@pytest.fixture
def term_exams_xlsx() -> Path:
    return SAMPLE_DATA / "term_exams.xlsx"
