"""The published workbook: everything a registrar forwards, in one ``.xlsx`` file.

Sheets (in this order; per-timetable sheets get a `` (K slots)`` suffix when the workbook
holds timetables for several slot counts):

Overview
    The input file and its figures, the rules and weights used, settings, and for every
    slot count: status, proven or not, penalty, the independent validator's verdict.
Comparison
    Every solved slot count side by side: one column per slot count, one row per figure
    (the CSV folder's comparison.csv has one row per slot count instead, for other programs).
Counts
    Per slot count: the exact number of clash-free timetables **as text** (Excel keeps
    only 15 significant digits of a number), its number of digits, log10, the ratio to the
    previous count, exact or estimated; and a native Excel chart of log10(count) against slots.
Count groups
    The counts of each group of events linked by clashes (their product, times K for each
    event with no clash, is the total).
What if
    Absent clashes that would rule out the largest share of timetables if one attendee sat
    both events, and clashes whose removal would multiply the timetables most.
Grid
    The timetable as a grid: one block per day, one column per session, events one per row.
Events
    One row per event: slot, day, session, date, start, end, rooms, seats, size.
Personal timetables
    One row per attendee and event (sortable, filterable: personal timetables); each row ends
    at the attendee's own end (their extra time, a long event's true end).
People
    When the input says anything of people (an Attendees sheet, optional attendance, a
    quorum): one row per attendee with their timetable and own times, the slots they cannot
    make and whether the timetable keeps them free, the optional events they miss and why.
Seats / Rooms
    Seats needed in each slot against the seat limit; room occupancy by slot (when rooms are given).
Moves
    In repair mode: every event moved from the earlier timetable, and how many attendees it affects.
Attendee load
    Per attendee: events, most in one day, clashes, back-to-back, same day, overnight,
    Carter proximity cost, and 'Clash or two in a day' (yes when the attendee has a clash or two events on one day).

Every list is an Excel table with filters, a frozen header row, widths fitted to the
content, real dates and times, and conditional highlighting of problems. The file is
written with openpyxl in write-only (streaming) mode, through
:func:`~timetabler.export.safe_write.write_safely`.
"""

from __future__ import annotations

import contextlib
import dataclasses
import datetime as dt
import math
import os
import re
import shutil
import tempfile
import threading
import warnings
from pathlib import Path
from typing import Any, Callable, Mapping, Sequence

import networkx as nx
from openpyxl import Workbook
from openpyxl.cell import WriteOnlyCell
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE
from openpyxl.chart import Reference, ScatterChart, Series
from openpyxl.chart.legend import Legend
from openpyxl.formatting.rule import CellIsRule, FormulaRule
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.filters import AutoFilter
from openpyxl.worksheet.properties import PageSetupProperties
from openpyxl.worksheet import _writer as openpyxl_sheet_writer
from openpyxl.worksheet.table import Table, TableColumn, TableStyleInfo

from ..conflicts import conflict_graph
from ..model import GOAL_NAMES, Problem, Weights
from .safe_write import check_target, write_safely
from .tables import (
    Column,
    BIGINT, DATE, FLAG, FLOAT, INT, TIME, PublishedTable, RunFigures, comparison_table, counts_table, events_table,
    groups_table, validations_for, what_if_table,
    grid_rows, has_timetable, load_table, moves_table, people_table, personal_table, rooms_table, run_figures, seats_table, value_text,
    verdict_words,
)

RED = PatternFill("solid", start_color="FFC7CE", end_color="FFC7CE", bgColor="FFC7CE")
AMBER = PatternFill("solid", start_color="FFEB9C", end_color="FFEB9C", bgColor="FFEB9C")
RED_FONT = Font(color="9C0006")
AMBER_FONT = Font(color="9C5700")
BOLD = Font(bold=True)
DAY_FILL = PatternFill("solid", start_color="DDEBF7", end_color="DDEBF7")
TITLE = Font(bold=True, size=14)
NUMBER_FORMATS = {DATE: "yyyy-mm-dd", TIME: "hh:mm", FLOAT: "0.000", INT: "0"}
TABLE_STYLE = "TableStyleMedium2"
MAX_WIDTH = 48  # characters; longer text wraps


def write_workbook(
    path: str | Path,
    *,
    problem: Problem,
    runs: Sequence[Any],
    counts: Any = None,
    reading: Any = None,
    settings: Mapping[str, Any] | None = None,
    validations: Mapping[int, Any] | None = None,
    fewest: Any = None,
    inputs: Sequence[str | Path] = (),
    progress: Callable[[str], None] | None = None,
) -> Path:
    """Write the published workbook to ``path`` (``.xlsx``) and return the path written.

    ``progress``, when given, is called with the name of each sheet as it is begun (a large
    session's personal timetables take a while).

    ``runs`` are solver results (``SolveRun``: ``slots``, ``slot_list``, ``status``,
    ``assignment``, ``rooms``, ``penalty``, ...); ``counts`` a ``CountReport`` or None.
    ``validations`` maps a slot count to a validator result; when absent, each timetable is
    checked here by :func:`timetabler.scheduling.validate` when that is available.

    The file is written to a temporary name and renamed when complete; the input file (and
    any other file in ``inputs``, such as a kept earlier timetable) is never overwritten; a
    target open in another program gives a clear InputError.
    """
    inputs = [getattr(problem, "source", ""), *inputs]
    target = check_target(path, inputs=inputs, suffixes=(".xlsx",))
    runs = sorted(runs, key=lambda r: int(r.slots))
    validations = validations_for(runs, validations)
    figures = {int(r.slots): run_figures(problem, r) for r in runs}

    def build(tmp: Path) -> None:
        wb = Workbook(write_only=True)
        try:
            _build(wb, tmp)
        except BaseException:
            _abandon_sheets(wb)
            raise

    def _build(wb: Workbook, tmp: Path) -> None:
        book = _Book(wb, progress)
        _overview(book, problem, runs, counts, reading, settings or {}, validations, figures, fewest)
        if runs:
            _comparison_sheet(book, comparison_table(problem, runs, counts, validations, figures, fewest))
        if counts is not None and getattr(counts, "counts", None):
            _counts_sheet(book, counts)
            groups = groups_table(counts)
            if groups is not None:
                book.table_sheet("Count groups", groups)
            what_if = what_if_table(counts)
            if what_if is not None:
                book.table_sheet("What if", what_if)
        with_timetable = [r for r in runs if has_timetable(r)]
        for run in with_timetable:
            suffix = f" ({int(run.slots)} slots)" if len(with_timetable) > 1 else ""
            people = figures[int(run.slots)].people
            _grid_sheet(book, "Grid" + suffix, problem, run, people)
            book.table_sheet("Events" + suffix, events_table(problem, run, people), highlight=_events_highlight)
            book.table_sheet("Personal timetables" + suffix, personal_table(problem, run, people=people))
            if problem.has_people and people is not None:
                book.table_sheet("People" + suffix, people_table(problem, run, people=people), highlight=_people_highlight)
            book.table_sheet("Seats" + suffix, seats_table(problem, run, people), highlight=_free_seats_highlight)
            rooms = rooms_table(problem, run, people)
            if rooms is not None:
                book.table_sheet("Rooms" + suffix, rooms, highlight=_free_seats_highlight)
            book.table_sheet(
                "Attendee load" + suffix, load_table(problem, run, loads=figures[int(run.slots)].loads), highlight=_load_highlight
            )
            moves = moves_table(problem, run)
            if moves is not None:
                book.table_sheet("Moves" + suffix, moves)
        wb.save(tmp)

    with private_sheet_files():
        return write_safely(target, build)


# openpyxl's write-only mode streams each sheet into a temporary file named openpyxl.* in
# the system's temporary folder and removes it when the workbook is saved (or at exit).
# Those files hold attendee ids; an interrupted or failed export would leave them behind.
# While a workbook is built, this thread's sheet files go to a private folder (mode 0700)
# that is removed on every way out.
_sheet_folders = threading.local()
_openpyxl_create_temporary_file = openpyxl_sheet_writer.create_temporary_file


def _create_sheet_file(suffix: str = "") -> str:
    folder = getattr(_sheet_folders, "path", None)
    if folder is None:
        return _openpyxl_create_temporary_file(suffix)
    handle, name = tempfile.mkstemp(prefix="openpyxl.", suffix=suffix, dir=folder)
    os.close(handle)
    openpyxl_sheet_writer.ALL_TEMP_FILES.append(name)
    return name


openpyxl_sheet_writer.create_temporary_file = _create_sheet_file


def _abandon_sheets(wb: Workbook) -> None:
    """Close the half-written sheet streams of a workbook that will not be saved, so that they
    do not complain when they are collected (openpyxl offers no public call for this)."""
    for sheet in wb.worksheets:
        for stream in (getattr(sheet, "_rows", None), getattr(getattr(sheet, "_writer", None), "xf", None)):
            if stream is not None and hasattr(stream, "close"):
                try:
                    stream.close()
                except Exception:  # noqa: BLE001 - the stream is being thrown away
                    pass


@contextlib.contextmanager
def private_sheet_files():
    """Send this thread's openpyxl sheet files to a private folder, removed when done."""
    folder = tempfile.mkdtemp(prefix="timetabler-sheets-")
    outer = getattr(_sheet_folders, "path", None)
    _sheet_folders.path = folder
    try:
        yield Path(folder)
    finally:
        _sheet_folders.path = outer
        left = [n for n in openpyxl_sheet_writer.ALL_TEMP_FILES if n.startswith(folder + os.sep)]
        for name in left:
            openpyxl_sheet_writer.ALL_TEMP_FILES.remove(name)
        shutil.rmtree(folder, ignore_errors=True)


# --------------------------------------------------------------------------- writing helpers


CELL_TEXT_LIMIT = 32767  # the most characters a spreadsheet cell holds (Excel's documented limit)


def _clean(value: Any) -> Any:
    """Text a spreadsheet accepts: no control characters, at most CELL_TEXT_LIMIT characters."""
    if isinstance(value, str):
        value = ILLEGAL_CHARACTERS_RE.sub("", value)
        if len(value) > CELL_TEXT_LIMIT:
            value = value[: CELL_TEXT_LIMIT - 40] + " … (cut: too long for one cell)"
    return value


class _Book:
    """A write-only workbook with unique sheet and table names."""

    def __init__(self, wb: Workbook, progress: Callable[[str], None] | None = None):
        self.wb = wb
        self.table_names: set[str] = set()
        self.progress = progress

    def sheet(self, name: str, *, landscape: bool = True):
        """A new sheet set up to print: landscape, as wide as one page, header row on every page."""
        if self.progress is not None:
            self.progress(name)
        ws = self.wb.create_sheet(_sheet_name(name))
        ws.page_setup.orientation = "landscape" if landscape else "portrait"
        ws.page_setup.fitToWidth = 1
        ws.page_setup.fitToHeight = 0  # as many pages down as needed
        ws.sheet_properties.pageSetUpPr = PageSetupProperties(fitToPage=True)
        return ws

    def cell(self, ws, value: Any, kind: str | None = None, font: Font | None = None, wrap: bool = False,
             left: bool = False, fill: PatternFill | None = None, top: bool = False) -> Any:
        value = _clean(value)
        if isinstance(value, float) and value != value:  # NaN
            value = None
        if kind == FLAG or isinstance(value, bool):
            value = None if value is None else ("yes" if value else "no")
        if kind == BIGINT and value is not None:
            value = str(value)
        # openpyxl formats a bare date as yyyy-mm-dd by itself (no cell object needed: faster)
        needs_cell = font is not None or fill is not None or wrap or left or top or kind in (TIME, FLOAT) or (isinstance(value, str) and value.startswith("="))
        if not needs_cell:
            return value
        c = WriteOnlyCell(ws, value=value)
        if isinstance(value, str) and value.startswith("="):
            c.data_type = "s"  # text, never a formula: codes and names come from the registrar's files
        if kind in NUMBER_FORMATS and not isinstance(value, str):
            c.number_format = NUMBER_FORMATS[kind]
        if font is not None:
            c.font = font
        if fill is not None:
            c.fill = fill
        if wrap or left or top:
            c.alignment = Alignment(wrap_text=wrap, vertical="top" if (wrap or top) else None,
                                    horizontal="left" if (wrap or left) else None)
        return c

    def table_name(self, base: str) -> str:
        name = re.sub(r"[^A-Za-z0-9_]", "_", base).strip("_") or "Table"
        if not name[0].isalpha():
            name = "T_" + name
        candidate, i = name, 2
        while candidate.casefold() in {n.casefold() for n in self.table_names}:
            candidate, i = f"{name}_{i}", i + 1
        self.table_names.add(candidate)
        return candidate

    def table_sheet(self, name: str, table: PublishedTable, *, highlight=None, freeze: str | None = "A2",
                    left: bool = False):
        """A sheet holding one Excel table (with filters) starting at A1, header frozen.

        Columns are as wide as their content up to ``MAX_WIDTH`` characters; longer text
        wraps, and its row is given the height of its lines (spreadsheet programs do not
        all grow rows by themselves, and a write-only sheet must say so before the row).
        """
        ws = self.sheet(name)
        widths = [max(8, len(h) + 3) for h in table.headers]
        for row in table.rows[:500]:
            for i, (v, col) in enumerate(zip(row, table.columns)):
                widths[i] = max(widths[i], min(MAX_WIDTH, len(value_text(v, col.kind)) + 2))
        for i, w in enumerate(widths, start=1):
            ws.column_dimensions[get_column_letter(i)].width = w
        if freeze:
            ws.freeze_panes = freeze  # before the first row: write-only sheets write their view first
        ws.print_title_rows = "1:1"
        ws.append([self.cell(ws, h) for h in table.headers])
        for r, row in enumerate(table.rows, start=2):
            lines = 1
            for v, w in zip(row, widths):
                if isinstance(v, str) and len(v) > w - 2:
                    lines = max(lines, math.ceil(len(v) / (w - 4)) + v.count("\n"))
            if lines > 1:
                ws.row_dimensions[r].height = min(409, 15 * lines)  # 409 points: a spreadsheet row's limit
            ws.append([self.cell(ws, v, col.kind, wrap=lines > 1 and isinstance(v, str) and len(v) > w - 2,
                                 top=lines > 1, left=left) for v, col, w in zip(row, table.columns, widths)])
        last_col = get_column_letter(len(table.columns))
        last_row = max(2, len(table.rows) + 1)
        if not table.rows:
            ws.append([None] * len(table.columns))  # an Excel table needs at least one data row
        ref = f"A1:{last_col}{last_row}"
        t = Table(displayName=self.table_name(name), ref=ref)
        t.tableColumns = [TableColumn(id=i, name=h) for i, h in enumerate(table.headers, start=1)]
        t.autoFilter = AutoFilter(ref=ref)
        t.tableStyleInfo = TableStyleInfo(name=TABLE_STYLE, showRowStripes=True)
        with warnings.catch_warnings():  # openpyxl warns in write-only mode even when the columns are given
            warnings.simplefilter("ignore", UserWarning)
            ws.add_table(t)
        if highlight is not None and table.rows:
            highlight(ws, table, len(table.rows) + 1)
        return ws


def _sheet_name(name: str) -> str:
    name = re.sub(r"[\[\]:*?/\\]", " ", name).strip("'")
    return name[:31]


def _col(table: PublishedTable, header: str) -> str:
    return get_column_letter(table.headers.index(header) + 1)


def _range(table: PublishedTable, header: str, last_row: int) -> str:
    c = _col(table, header)
    return f"{c}2:{c}{last_row}"


def _highlight_rows(ws, table: PublishedTable, last_row: int, formula: str, fill, font) -> None:
    """Colour every data row of the table where ``formula`` (written for row 2) holds."""
    ws.conditional_formatting.add(
        f"A2:{get_column_letter(len(table.columns))}{last_row}",
        FormulaRule(formula=[formula], fill=fill, font=font),
    )


# --------------------------------------------------------------------------- conditional highlighting


def _comparison_sheet(book: "_Book", table: PublishedTable) -> None:
    """The comparison turned on its side: a row per figure, a column per slot count."""
    ks = [row[0] for row in table.rows]
    side = PublishedTable("Comparison", [Column("Figure")] + [Column(f"{k} slots") for k in ks],
                          title="Slot counts side by side")
    rows_at: dict[str, int] = {}
    for i, col in enumerate(table.columns):
        if col.header == "Slots":
            continue
        values = []
        for row in table.rows:
            v = row[i]
            if col.kind == FLAG or isinstance(v, bool):
                v = "yes" if v else "no"
            elif col.kind == BIGINT and v is not None:
                v = str(v)
            elif isinstance(v, float):
                v = round(v, 3)
            values.append(v)
        rows_at[col.header] = len(side.rows) + 2
        side.rows.append([col.header] + values)

    def highlight(ws, _table, _last_row):
        last = get_column_letter(len(ks) + 1)
        r = rows_at["Status"]
        ws.conditional_formatting.add(f"B{r}:{last}{r}", CellIsRule(operator="equal", formula=['"infeasible"'], fill=RED,
                                                                     font=RED_FONT))
        ws.conditional_formatting.add(f"B{r}:{last}{r}", CellIsRule(operator="equal", formula=['"unknown"'], fill=AMBER,
                                                                     font=AMBER_FONT))
        r = rows_at["Clash-free timetable exists"]
        ws.conditional_formatting.add(f"B{r}:{last}{r}", CellIsRule(operator="equal", formula=['"no"'], fill=RED,
                                                                     font=RED_FONT))
        r = rows_at["Validator"]
        ws.conditional_formatting.add(
            f"B{r}:{last}{r}", FormulaRule(formula=[f'AND(B{r}<>"",B{r}<>"valid",B{r}<>"not checked")'], fill=RED,
                                           font=RED_FONT))

    book.table_sheet("Comparison", side, highlight=highlight, freeze="B2", left=True)


def _events_highlight(ws, table: PublishedTable, last_row: int) -> None:
    _highlight_rows(ws, table, last_row, f'ISBLANK(${_col(table, "Slot")}2)', RED, RED_FONT)
    if "In a preferred room" in table.headers:
        ws.conditional_formatting.add(_range(table, "In a preferred room", last_row),
                                      CellIsRule(operator="equal", formula=['"no"'], fill=AMBER, font=AMBER_FONT))


def _free_seats_highlight(ws, table: PublishedTable, last_row: int) -> None:
    ws.conditional_formatting.add(
        _range(table, "Free seats", last_row), CellIsRule(operator="lessThan", formula=["0"], fill=RED, font=RED_FONT)
    )
    if "Available" in table.headers:
        a, u = _col(table, "Available"), _col(table, "Seats used")
        _highlight_rows(ws, table, last_row, f'AND(${a}2="no",${u}2>0)', RED, RED_FONT)
    if "Avoid" in table.headers:
        v, u = _col(table, "Avoid"), _col(table, "Seats used")
        ws.conditional_formatting.add(_range(table, "Avoid", last_row),
                                      FormulaRule(formula=[f'AND(${v}2="yes",${u}2>0)'], fill=AMBER, font=AMBER_FONT))


def _people_highlight(ws, table: PublishedTable, last_row: int) -> None:
    ws.conditional_formatting.add(
        _range(table, "Unavailability honoured", last_row), CellIsRule(operator="equal", formula=['"no"'], fill=RED, font=RED_FONT))
    ws.conditional_formatting.add(
        _range(table, "Optional events missed", last_row), CellIsRule(operator="greaterThan", formula=["0"], fill=AMBER,
                                                                       font=AMBER_FONT))


def _estimate_highlight(ws, table: PublishedTable, last_row: int) -> None:
    _highlight_rows(ws, table, last_row, f'${_col(table, "Exact")}2="no"', AMBER, AMBER_FONT)


def _load_highlight(ws, table: PublishedTable, last_row: int) -> None:
    ws.conditional_formatting.add(
        _range(table, "Clashes", last_row), CellIsRule(operator="greaterThan", formula=["0"], fill=RED, font=RED_FONT)
    )
    ws.conditional_formatting.add(
        _range(table, "Back-to-back", last_row), CellIsRule(operator="greaterThan", formula=["0"], fill=AMBER, font=AMBER_FONT)
    )
    ws.conditional_formatting.add(
        _range(table, "Same day, not back-to-back", last_row), CellIsRule(operator="greaterThan", formula=["0"], fill=AMBER, font=AMBER_FONT)
    )
    f = _col(table, "Clash or two in a day")
    ws.conditional_formatting.add(
        _range(table, "Clash or two in a day", last_row), FormulaRule(formula=[f'{f}2="yes"'], fill=AMBER, font=AMBER_FONT)
    )


# --------------------------------------------------------------------------- special sheets


def _overview(book: _Book, problem: Problem, runs, counts, reading, settings, validations, figures, fewest) -> None:
    ws = book.sheet("Overview", landscape=False)
    ws.column_dimensions["A"].width = 50
    ws.column_dimensions["B"].width = 40
    for letter in "CDEF":
        ws.column_dimensions[letter].width = 16
    ws.column_dimensions["F"].width = 24
    ws.column_dimensions["G"].width = 60
    c = book.cell
    source = getattr(problem, "source", "") or ""
    ws.append([c(ws, f"Timetable from {Path(source).name}" if source else "Timetable", font=TITLE)])
    written = WriteOnlyCell(ws, value=dt.datetime.now().replace(second=0, microsecond=0))  # a real date and time
    written.number_format = "yyyy-mm-dd hh:mm"
    written.alignment = Alignment(horizontal="left")
    ws.append([c(ws, "Written"), written])
    try:
        from importlib.metadata import version

        ws.append(["timetabler version", version("timetabler")])
    except Exception:  # noqa: BLE001 - metadata missing in odd installs
        pass
    ws.append([])
    ws.append([c(ws, "Input", font=BOLD)])
    ws.append(["File", c(ws, source, left=True)])
    if reading is not None:
        for label, attr in (("Sheet", "sheet"), ("Attendee column", "attendee_column"), ("Event column", "event_column"),
                            ("Duplicate rows dropped", "duplicates_dropped")):
            value = getattr(reading, attr, None)
            if value is not None:
                ws.append([label, c(ws, value, left=True)])
    graph = conflict_graph(problem)
    ws.append([])
    ws.append([c(ws, "Figures", font=BOLD)])
    sizes = problem.event_sizes()
    rows = [
        ("Events", graph.number_of_nodes()),
        ("Attendees", len({a for a, _ in problem.enrolments})),
        ("Enrolments", len(problem.enrolments)),
        ("Clashing pairs of events", graph.number_of_edges()),
        ("Components (groups of events linked by clashes)", nx.number_connected_components(graph) if len(graph) else 0),
        ("Largest event (attendees)", max(sizes.values(), default=0)),
        ("Slots in the slots sheet", len(problem.slots) or "none (generic slots)"),
        ("Rooms", len(problem.rooms) or "none"),
    ]
    chi = getattr(counts, "fewest", None) if counts is not None else None
    if chi is not None:
        rows.append(("Fewest slots (from the counts)" if not getattr(counts, "fewest_at_least", False)
                     else "Fewest slots (from the counts): at least", chi))
    if fewest is not None:
        rows.append(("Fewest slots: at least", getattr(fewest, "lower", None)))
        if getattr(fewest, "lower_reason", None):
            rows.append(("Why no fewer", fewest.lower_reason))
        rows.append(("Fewest slots: a timetable found with", getattr(fewest, "upper", None)))
        if getattr(fewest, "upper_reason", None):
            rows.append(("How it was found", fewest.upper_reason))
        rows.append(("Fewest slots proven", bool(getattr(fewest, "proven", False))))
    for label, value in rows:
        # long text is not wrapped: it runs on into the empty cells to its right, which every
        # spreadsheet program shows and prints (wrapped cells do not grow in all of them)
        ws.append([label, c(ws, value, FLAG if isinstance(value, bool) else None, left=True)])
    ws.append([])
    ws.append([c(ws, "Rules", font=BOLD)])
    if problem.rules:
        for rule in problem.rules:
            ws.append([c(ws, rule.describe())])
    else:
        ws.append(["No rules given: only clashes are forbidden."])
    if problem.max_per_day:
        ws.append([f"At most {problem.max_per_day} events per attendee per day"])
    pinned = [e for e in sorted(problem.events.values(), key=lambda e: e.code) if e.fixed_slot or e.barred_slots]
    for event in pinned[:500]:
        parts = []
        if event.fixed_slot:
            parts.append(f"fixed to slot {event.fixed_slot}")
        if event.barred_slots:
            parts.append(f"barred from {', '.join(event.barred_slots)}")
        ws.append([c(ws, f"{event.code}: {'; '.join(parts)}")])
    if len(pinned) > 500:
        ws.append([f"… and {len(pinned) - 500} more events with fixed or barred slots (see the input file)"])
    ws.append([])
    ws.append([c(ws, "Weights (penalty per occurrence)", font=BOLD)])
    weights = problem.weights if isinstance(problem.weights, Weights) else Weights()
    for f in dataclasses.fields(weights):
        ws.append([GOAL_NAMES.get(f.name, f.name.replace("_", " ")), c(ws, getattr(weights, f.name), left=True)])
    if settings:
        ws.append([])
        ws.append([c(ws, "Settings", font=BOLD)])
        for key, value in settings.items():
            if value is None or value == {} or value == []:
                continue
            if isinstance(value, dict):
                value = ", ".join(f"{GOAL_NAMES.get(k2, k2)}={v2}" for k2, v2 in value.items())
            if isinstance(value, (list, tuple)):
                value = ", ".join(str(v) for v in value)
            ws.append([c(ws, str(key)), c(ws, value if isinstance(value, (int, float, str)) else str(value), left=True)])
    if runs:
        ws.append([])
        ws.append([c(ws, "Timetables", font=BOLD)])
        head = ["Slots", "Status", "Proven", "Penalty", "Validator", "Back-to-back attendees", "Reason"]
        ws.append([c(ws, h, font=BOLD) for h in head])
        for run in runs:
            k = int(run.slots)
            fig: RunFigures = figures[k]
            ws.append([
                k, c(ws, run.status), c(ws, bool(getattr(run, "proven", False)), FLAG), getattr(run, "penalty", None),
                c(ws, verdict_words(validations.get(k)) if has_timetable(run) else ""), fig.attendees_back_to_back,
                c(ws, getattr(run, "reason", None) or ""),
            ])
    warnings = list(getattr(reading, "warnings", None) or [])
    if warnings:
        ws.append([])
        ws.append([c(ws, f"Warnings from reading the input ({len(warnings)})", font=BOLD)])
        for w in warnings[:500]:
            ws.append([c(ws, str(w))])
    ws.append([])
    ws.append([c(ws, "Notes", font=BOLD)])
    if counts is None or not getattr(counts, "counts", None):
        ws.append(["The numbers of clash-free timetables were not counted for this workbook."])
    else:
        ws.append(["Numbers of timetables are written as text: a spreadsheet number keeps only 15 significant digits."])
        ws.append(["The numbers of timetables count clash-free timetables only; rooms and other rules may rule some out."])
    ws.append(["Attendee figures (back-to-back, two in a day) are recomputed from the enrolments, not taken from the solver."])


def _counts_sheet(book: _Book, counts: Any) -> None:
    table = counts_table(counts)
    ws = book.table_sheet("Counts", table, highlight=_estimate_highlight)
    n = len(table.rows)
    if n == 0:
        return
    x_col = table.headers.index("Slots") + 1
    y_col = table.headers.index("log10") + 1
    chart = ScatterChart()
    chart.title = "Clash-free timetables against slots"
    chart.style = 13
    chart.x_axis.title = "Slots"
    chart.y_axis.title = "log10(number of timetables)"
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.legend = None
    xs = Reference(ws, min_col=x_col, min_row=2, max_row=n + 1)
    ys = Reference(ws, min_col=y_col, min_row=1, max_row=n + 1)
    series = Series(ys, xs, title_from_data=True)
    series.marker.symbol = "circle"
    series.marker.size = 7
    chart.series.append(series)
    low_col = table.headers.index("95 % interval, log10 low") + 1
    if any(row[low_col - 1] is not None and not row[table.headers.index("Exact")] for row in table.rows):
        # the 95 % interval of the estimated counts as two dashed lines around the points
        for col in (low_col, low_col + 1):
            bound = Series(Reference(ws, min_col=col, min_row=1, max_row=n + 1), xs, title_from_data=True)
            bound.marker.symbol = "dash"
            bound.graphicalProperties.line.dashStyle = "dash"
            bound.graphicalProperties.line.width = 9525
            chart.series.append(bound)
        chart.legend = Legend()
        chart.legend.position = "b"
    chart.height, chart.width = 9, 16
    ws.add_chart(chart, f"{get_column_letter(len(table.columns) + 2)}2")


def _grid_sheet(book: _Book, name: str, problem: Problem, run: Any, people: Any = None) -> None:
    """One block per day: a shaded row with the day, date and each session's slot and times, then
    the events of each session one per row beneath it (no wrapped cells, so it prints as it shows)."""
    headers, days = grid_rows(problem, run, people)
    ws = book.sheet(name)
    ws.freeze_panes = "C2"
    ws.print_title_rows = "1:1"
    ws.column_dimensions["A"].width = 18
    ws.column_dimensions["B"].width = 12
    longest = max((len(e) for day in days for column in day.events for e in column), default=10)
    for i in range(len(headers)):
        ws.column_dimensions[get_column_letter(i + 3)].width = min(60, max(24, longest + 2))
    ws.append([book.cell(ws, "Day", font=BOLD), book.cell(ws, "Date", font=BOLD)] + [book.cell(ws, h, font=BOLD) for h in headers])
    for day in days:
        ws.append([book.cell(ws, day.label, font=BOLD, fill=DAY_FILL), book.cell(ws, day.date, DATE, fill=DAY_FILL)]
                  + [book.cell(ws, head, font=BOLD, fill=DAY_FILL) for head in day.heads])
        for i in range(max((len(column) for column in day.events), default=0)):
            ws.append([None, None] + [book.cell(ws, column[i]) if i < len(column) else None for column in day.events])


def write_tables_workbook(path: str | Path, tables: Sequence[PublishedTable], *,
                          inputs: Sequence[str | Path] = ()) -> Path:
    """A workbook of plain tables, one sheet each (filters, frozen header, widths), e.g. a notification list."""
    target = check_target(path, inputs=inputs, suffixes=(".xlsx",))

    def build(tmp: Path) -> None:
        wb = Workbook(write_only=True)
        book = _Book(wb)
        for table in tables:
            book.table_sheet(table.name, table)
        wb.save(tmp)

    return write_safely(target, build)
