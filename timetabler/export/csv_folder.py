"""A folder of CSV files: the workbook's lists, one plain file each.

Files are UTF-8 with a byte-order mark (so spreadsheet programs detect the encoding),
comma-separated, one header row; dates as ``YYYY-MM-DD``, times as ``HH:MM``, flags as
``yes``/``no``, counts of timetables as exact decimal digits, other numbers in full precision. A text value that a
spreadsheet would run as a formula (starting with ``=``, ``+``, ``@``, or ``-`` when it is
not a number) is written with a leading apostrophe, the usual defence against formula
injection in CSV files (OWASP, "CSV Injection").
"""

from __future__ import annotations

import csv
import math
import re
from pathlib import Path
from typing import Any, Sequence

from ..errors import Finding, InputError
from ..model import Problem
from .safe_write import check_target, write_safely
from .tables import (
    TEXT, PublishedTable, comparison_table, counts_table, events_table, groups_table, has_timetable, load_table, moves_table, people_table, personal_table, what_if_table,
    rooms_table, run_figures, seats_table, validations_for, value_text,
)

_NUMBER = re.compile(r"^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$")


def guard_text(text: str) -> str:
    """Prefix an apostrophe to text a spreadsheet would treat as a formula."""
    if text and (text[0] in "=+@\t\r" or (text[0] == "-" and not _NUMBER.match(text))):
        return "'" + text
    return text


def write_table_csv(path: Path, table: PublishedTable) -> None:
    with open(path, "w", encoding="utf-8-sig", newline="") as fh:
        writer = csv.writer(fh)
        writer.writerow(table.headers)
        for row in table.rows:
            writer.writerow([_csv_text(v, c.kind) for v, c in zip(row, table.columns)])


def _csv_text(value, kind: str) -> str:
    if isinstance(value, float) and not isinstance(value, bool) and math.isfinite(value):
        return repr(value)  # full precision: a CSV file is data for other programs too
    text = value_text(value, kind)
    return guard_text(text) if kind == TEXT else text


def prepare_folder(folder: str | Path) -> Path:
    target = Path(folder).expanduser()
    if target.exists() and not target.is_dir():
        raise InputError(Finding(f"{target} is a file, not a folder.", suggestion="Give a folder name for the output files."))
    try:
        target.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(Finding(f"Cannot create the folder {target}: {exc.strerror}.")) from exc
    return target


def write_csv_folder(folder: str | Path, *, problem: Problem, runs: Sequence[Any], counts: Any = None,
                     validations: dict | None = None, fewest: Any = None) -> list[Path]:
    """Write the lists as CSV files into ``folder`` (created if needed); return the files written."""
    target = prepare_folder(folder)
    runs = sorted(runs, key=lambda r: int(r.slots))
    validations = validations_for(runs, validations)
    tables: list[tuple[str, PublishedTable]] = []
    figures = {int(r.slots): run_figures(problem, r) for r in runs}
    if runs:
        tables.append(("comparison", comparison_table(problem, runs, counts, validations, figures, fewest)))
    if counts is not None and getattr(counts, "counts", None):
        tables.append(("counts", counts_table(counts)))
        for stem, table in (("count-groups", groups_table(counts)), ("what-if", what_if_table(counts))):
            if table is not None:
                tables.append((stem, table))
    with_timetable = [r for r in runs if has_timetable(r)]
    for run in with_timetable:
        suffix = f"-{int(run.slots)}-slots" if len(with_timetable) > 1 else ""
        people = figures[int(run.slots)].people
        tables.append(("events" + suffix, events_table(problem, run, people)))
        tables.append(("personal-timetables" + suffix, personal_table(problem, run, people=people)))
        if problem.has_people and people is not None:
            tables.append(("people" + suffix, people_table(problem, run, people=people)))
        tables.append(("seats" + suffix, seats_table(problem, run, people)))
        rooms = rooms_table(problem, run, people)
        if rooms is not None:
            tables.append(("rooms" + suffix, rooms))
        tables.append(("attendee-load" + suffix, load_table(problem, run, loads=figures[int(run.slots)].loads)))
        moves = moves_table(problem, run)
        if moves is not None:
            tables.append(("moves" + suffix, moves))
    paths = [check_target(target / f"{stem}.csv", inputs=[problem.source]) for stem, _ in tables]  # all, before any write
    return [write_safely(path, lambda tmp, t=table: write_table_csv(tmp, t)) for path, (_, table) in zip(paths, tables)]
