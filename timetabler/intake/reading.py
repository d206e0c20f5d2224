"""Read an enrolment file (long layout: one row per enrolment) into a Problem."""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from ..errors import Finding, InputError
from ..model import Location, Problem, distinct_enrolments

ATTENDEE_WORDS = ("student", "member", "attendee", "candidate", "person", "participant")
EVENT_WORDS = ("exam", "module", "course", "meeting", "committee", "event", "paper", "subject")


@dataclass
class ReadOptions:
    """How to read a file; anything left as None is detected."""

    sheet: str | None = None
    attendee_column: str | None = None
    event_column: str | None = None


@dataclass
class Reading:
    """What intake read: the problem, the warnings, and how it read the file."""

    problem: Problem
    warnings: list[Finding] = field(default_factory=list)
    sheet: str | None = None
    attendee_column: str | None = None
    event_column: str | None = None
    duplicates_dropped: int = 0


def _norm(text: object) -> str:
    return re.sub(r"[^a-z0-9]", "", str(text).casefold())


def _find_column(columns: list[str], explicit: str | None, words: tuple[str, ...]) -> str | None:
    if explicit is not None:
        for c in columns:
            if _norm(c) == _norm(explicit):
                return c
        return None
    for word in words:
        for c in columns:
            if _norm(c).startswith(word) or word in _norm(c):
                return c
    return None


def _cell_text(value: object) -> str:
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return " ".join(str(value).split())


def read_problem(path: str | Path, options: ReadOptions | None = None) -> Reading:
    """Read an enrolment ``.xlsx`` or ``.csv`` file into a :class:`Reading`."""
    options = options or ReadOptions()
    path = Path(path)
    name = str(path)
    if not path.exists():
        raise InputError(f"The file {name} does not exist.")
    suffix = path.suffix.lower()
    sheet = None
    try:
        if suffix in (".xlsx", ".xlsm"):
            sheets = pd.read_excel(path, sheet_name=None, dtype=object)
            sheet = options.sheet or next(iter(sheets))
            if sheet not in sheets:
                raise InputError(f"{name} has no sheet '{sheet}'; its sheets are {', '.join(sheets)}.")
            frame = sheets[sheet]
        elif suffix == ".csv":
            frame = pd.read_csv(path, dtype=str, keep_default_na=False)
        else:
            raise InputError(f"{name}: cannot read '{suffix}' files; use .xlsx or .csv.")
    except InputError:
        raise
    except Exception as exc:  # pandas and openpyxl raise many types for a broken file
        raise InputError(f"{name} could not be read as a {suffix} file ({exc}).") from None
    columns = [str(c) for c in frame.columns]
    frame.columns = columns
    who = _find_column(columns, options.attendee_column, ATTENDEE_WORDS)
    what = _find_column(columns, options.event_column, EVENT_WORDS)
    missing = [label for label, col in (("attendee", who), ("event", what)) if col is None]
    if missing:
        raise InputError(
            Finding(
                f"No {' or '.join(missing)} column was found.",
                where=Location(name, sheet),
                found=", ".join(columns) or "no columns",
                expected="a header such as 'Student' and one such as 'Exam'",
                suggestion="Name the columns with --attendee-column and --event-column.",
            )
        )
    pairs = []
    for a, e in zip(frame[who], frame[what]):
        if a is None or e is None or (isinstance(a, float) and pd.isna(a)) or (isinstance(e, float) and pd.isna(e)):
            continue
        a, e = _cell_text(a), _cell_text(e)
        if a and e:
            pairs.append((a, e))
    enrolments, dropped = distinct_enrolments(pairs)
    problem = Problem(enrolments=enrolments, source=name)
    return Reading(problem, sheet=sheet, attendee_column=who, event_column=what, duplicates_dropped=dropped)
