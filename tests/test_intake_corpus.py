"""A corpus of deliberately broken or awkward input files, each with what it must produce.

Every file is generated here (nothing is stored), set in Harrowgate Vale College, a
fictional institution. Each case asserts either the figures read back (compared with the
enrolments the case wrote, never with a typed-in total) or the message, sheet, row and
column of the finding it must raise.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import os
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import pytest

from intake_builders import (
    add_ods_rows,
    flip_bytes,
    inline_cell,
    patch_cached_formula_values,
    rows_xml,
    sheet_xml,
    write_ods,
    write_parts_xlsx,
    write_text,
    write_xlsx,
)
from timetabler.errors import InputError
from timetabler.intake import Limits, ReadOptions, read_problem

# The enrolments most cases write, in one rendering or another.
BASE = [
    ("HV-S0001", "MAT101"), ("HV-S0001", "PHY110"), ("HV-S0001", "CHM120"),
    ("HV-S0002", "MAT101"), ("HV-S0002", "HIS130"),
    ("HV-S0003", "PHY110"), ("HV-S0003", "CHM120"),
    ("HV-S0004", "HIS130"), ("HV-S0004", "GEO140"),
    ("HV-S0005", "GEO140"),
]


def long_rows(pairs=BASE, header=("Student", "Exam")):
    return [list(header)] + [list(p) for p in pairs]


def pairs_of(reading) -> set[tuple[str, str]]:
    return {(a.casefold(), e.casefold()) for a, e in reading.problem.enrolments}


def expected(pairs=BASE) -> set[tuple[str, str]]:
    return {(a.casefold(), e.casefold()) for a, e in pairs}


@dataclass
class Case:
    name: str
    build: Callable[[Path], Path]
    options: dict = field(default_factory=dict)
    # for files that read: a check on the Reading (may assert anything)
    check: Callable | None = None
    # for files that must not read: (message part, sheet, row, column part) of some finding
    error: tuple | None = None


def _sheet_with_extras(tmp: Path, name: str, extra: dict) -> Path:
    sheets = {"Enrolments": long_rows()}
    sheets.update(extra)
    return write_xlsx(tmp / name, sheets)


def _slots(rows):
    return [["Slot", "Date", "Start", "Length (minutes)", "Seats"], *rows]


GOOD_SLOTS = _slots([["Mon AM", "2027-05-03", "09:30", 180, 200], ["Mon PM", "2027-05-03", "14:00", 120, 200]])


def _check_figures(**want):
    def check(r):
        assert pairs_of(r) == expected(want.pop("pairs", BASE)) if "pairs" in want else pairs_of(r) == expected()
        for k, v in want.items():
            assert getattr(r, k) == v, (k, getattr(r, k), v)
    return check


def _warned(text, row=None, column=None, pairs=BASE):
    def check(r):
        assert pairs_of(r) == expected(pairs)
        hits = [w for w in r.warnings if text in w.message]
        assert hits, [str(w) for w in r.warnings]
        if row is not None:
            assert hits[0].where.row == row, str(hits[0])
        if column is not None:
            assert column in (hits[0].where.column or ""), str(hits[0])
    return check


CASES = [
    # --- finding the data ------------------------------------------------------------
    Case("title rows above the header",
         lambda t: write_xlsx(t / "a.xlsx", {"Entries": [["Harrowgate Vale College"], ["Winter exam entries 2027"], [],
                                                           *long_rows()]}),
         check=_check_figures(header_row=4, sheet="Entries")),
    Case("cover and notes sheets before the data",
         lambda t: write_xlsx(t / "a.xlsx", {"Cover": [["Exam entries", "printed 2027-01-04"]],
                                             "Notes": [["Student", "Exam"], ["see the next sheet", ""]],
                                             "Data": long_rows()}),
         check=_check_figures(sheet="Data")),
    Case("headers in odd case, spacing and punctuation",
         lambda t: write_xlsx(t / "a.xlsx", {"S": long_rows(header=("  STUDENT_id ", "exam-CODE"))}),
         check=_check_figures(attendee_column="STUDENT_id", event_column="exam-CODE")),
    Case("extra columns and the event column first",
         lambda t: write_xlsx(t / "a.xlsx", {"S": [["Exam", "Programme", "Student"]] + [[e, "BSc", a] for a, e in BASE]}),
         check=_check_figures(attendee_column="Student")),
    Case("columns named with the explicit mapping",
         lambda t: write_xlsx(t / "a.xlsx", {"S": long_rows(header=("Who", "Sitting"))}),
         options={"attendee_column": "who", "event_column": "SITTING"},
         check=_check_figures()),
    Case("two visible enrolment sheets: the larger is read, with a warning",
         lambda t: write_xlsx(t / "a.xlsx", {"Last year": long_rows(BASE[:3]), "This year": long_rows()}),
         check=_warned("only 'This year', the one with most rows, was read")),
    Case("a hidden sheet with the same headers is passed over",
         lambda t: write_xlsx(t / "a.xlsx", {"Old": long_rows(BASE[:2]) * 5, "Now": long_rows()}, hidden=["Old"]),
         check=_check_figures(sheet="Now")),
    # --- normalising -------------------------------------------------------------------
    Case("ids typed as number, float and text are one id",
         lambda t: write_xlsx(t / "a.xlsx", {"S": [["Student", "Exam"], [40001, "MAT101"], [40001.0, "PHY110"],
                                                     ["40001", "CHM120"], [" 40001.0 ", "HIS130"]]}),
         check=lambda r: (r.problem.attendees == ["40001"] and len(r.problem.enrolments) == 4) or pytest.fail(str(r.problem))),
    Case("leading zeros kept in text cells, and the near-twin flagged",
         lambda t: write_xlsx(t / "a.xlsx", {"S": [["Student", "Exam"], ["00123", "MAT101"], [123, "PHY110"]]}),
         check=lambda r: (sorted(r.problem.attendees) == ["00123", "123"]
                          and any("leading zeros" in w.message for w in r.warnings)) or pytest.fail(str(r.warnings))),
    Case("whitespace trimmed and collapsed",
         lambda t: write_xlsx(t / "a.xlsx", {"S": [["Student", "Exam"]] + [[f"  {a} ", f"\u00a0{e}  "] for a, e in BASE]}),
         check=_check_figures()),
    Case("merged attendee cells over several rows (and a merged title)",
         lambda t: _merged_book(t / "a.xlsx"),
         check=_check_figures(header_row=2)),
    Case("an attendee written only on their first row (not merged)",
         lambda t: write_xlsx(t / "a.xlsx", {"S": long_rows(BASE[:2]) + [[None, "CHM120"]]}),
         check=_warned("event but no attendee", row=4, column="A (Student)", pairs=BASE[:2])),
    Case("duplicate enrolments dropped and counted",
         lambda t: write_xlsx(t / "a.xlsx", {"S": long_rows(BASE + BASE[:3] + [(BASE[0][0].lower(), BASE[0][1])])}),
         check=_check_figures(duplicates_dropped=4)),
    Case("blank rows in the middle are skipped",
         lambda t: write_xlsx(t / "a.xlsx", {"S": long_rows()[:4] + [[], [None, None], ["  ", ""]] + long_rows()[4:]}),
         check=_check_figures(blank_rows=3)),
    Case("codes differing in case are one event, with a warning",
         lambda t: write_xlsx(t / "a.xlsx", {"S": long_rows([(a, e.lower() if i % 2 else e) for i, (a, e) in enumerate(BASE)])}),
         check=_warned("upper/lower case")),
    Case("codes differing in case kept apart on request",
         lambda t: write_xlsx(t / "a.xlsx", {"S": long_rows([("HV-S0001", "MAT101"), ("HV-S0002", "mat101")])}),
         options={"case_sensitive_codes": True},
         check=lambda r: sorted(r.problem.events) == ["MAT101", "mat101"] or pytest.fail(str(r.problem.events))),
    Case("a total row under the data",
         lambda t: write_xlsx(t / "a.xlsx", {"S": long_rows() + [["Total", len(BASE)]]}),
         check=_warned("total row", row=len(BASE) + 2)),
    Case("a row with an attendee and no event",
         lambda t: write_xlsx(t / "a.xlsx", {"S": long_rows() + [["HV-S0009", None]]}),
         check=_warned("no event", row=len(BASE) + 2, column="B (Exam)")),
    Case("the header repeated where two exports were pasted together",
         lambda t: write_xlsx(t / "a.xlsx", {"S": long_rows(BASE[:5]) + long_rows(BASE[5:])}),
         check=_warned("header row is repeated", row=7)),
    Case("an attendee with an implausible number of events",
         lambda t: write_xlsx(t / "a.xlsx", {"S": long_rows(BASE + [("HV-S0099", f"X{i:03d}") for i in range(40)])}),
         check=lambda r: any("HV-S0099" in w.message and "40 events" in w.message for w in r.warnings)
         or pytest.fail(str(r.warnings))),
    Case("the attendee and event columns swapped",
         lambda t: write_xlsx(t / "a.xlsx", {"S": [["Student", "Exam"]] + [[f"MAT10{(i + j) % 4}", f"HV-S{i:04d}"]
                                                                          for i in range(20) for j in (0, 1)]}),
         check=lambda r: any("swapped" in w.message for w in r.warnings) or pytest.fail(str(r.warnings))),
    Case("formulas read through their cached values (.xlsm)",
         lambda t: _formula_book(t / "a.xlsm"),
         check=lambda r: (pairs_of(r) == expected() and r.warnings == []) or pytest.fail(str(r.warnings))),
    Case("formulas never calculated (a file written by a script)",
         lambda t: write_xlsx(t / "a.xlsx", {"S": long_rows(BASE[:3]) + [["HV-S0009", '=UPPER("geo140")']]}),
         check=_warned("formula cells have no calculated value", pairs=BASE[:3])),
    # --- text files --------------------------------------------------------------------
    Case("CSV in UTF-8 with a byte-order mark",
         lambda t: write_text(t / "a.csv", long_rows(), bom=True),
         check=_check_figures(encoding="UTF-8 with byte-order mark", attendee_column="Student")),
    Case("UTF-16 tab-separated text, as Excel saves 'Unicode text'",
         lambda t: write_text(t / "a.txt", long_rows(), "\t", "utf-16-le", bom=True),
         check=_check_figures(delimiter="tab", encoding="UTF-16 (little-endian) with byte-order mark")),
    Case("UTF-16 without a byte-order mark",
         lambda t: write_text(t / "a.csv", long_rows(), ",", "utf-16-le"),
         check=_check_figures(encoding="UTF-16 (little-endian)")),
    Case("Windows-1252 with accented names",
         lambda t: write_text(t / "a.csv", [["Attendee", "Committee"], ["Zoë Ångström", "Estates"], ["Renée Müller", "Estates"],
                                            ["Zoë Ångström", "Finance"]], encoding="cp1252"),
         check=lambda r: (r.encoding == "Windows-1252" and "Zoë Ångström" in r.problem.attendees) or pytest.fail(r.encoding)),
    Case("semicolon-separated CSV (European Excel)",
         lambda t: write_text(t / "a.csv", long_rows(), ";"),
         check=_check_figures(delimiter="semicolon")),
    Case("pipe-separated text",
         lambda t: write_text(t / "a.txt", long_rows(), "|"),
         check=_check_figures(delimiter="pipe")),
    Case("TSV",
         lambda t: write_text(t / "a.tsv", [["Candidate number", "Paper"]] + [list(p) for p in BASE], "\t"),
         check=_check_figures(delimiter="tab")),
    Case("CSV with title lines and a comma inside a quoted title",
         lambda t: write_text(t / "a.csv", [["Harrowgate Vale College, exam entries"], [], *long_rows()]),
         check=_check_figures(header_row=3, delimiter="comma")),
    Case("Excel's 'sep=;' line above the header",
         lambda t: _bytes(t / "a.csv", ("sep=;\r\n" + "\r\n".join(f"{a};{e}" for a, e in [("Student", "Exam"), *BASE])).encode()),
         check=_check_figures(delimiter="semicolon", header_row=2)),
    Case("long ids exported in scientific notation",
         lambda t: write_text(t / "a.csv", [["Student", "Exam"], ["1.23457E+11", "MAT101"], ["1.23457E+11", "PHY110"]]),
         check=_warned("scientific notation", row=2, pairs=[("1.23457E+11", "MAT101"), ("1.23457E+11", "PHY110")])),
    Case("a workbook saved under a .csv name",
         lambda t: write_xlsx(t / "a.csv", {"S": long_rows()}),
         check=_warned("is an Excel workbook")),
    Case("an OpenDocument spreadsheet with a title row",
         lambda t: write_ods(t / "a.ods", {"Entries": [["Winter exams"], *long_rows()]}),
         check=_check_figures(file_type="ods", header_row=2)),
    # --- layouts -----------------------------------------------------------------------
    Case("wide: events in numbered columns",
         lambda t: write_xlsx(t / "a.xlsx", {"S": _wide_columns(BASE)}),
         check=_check_figures(layout="wide")),
    Case("wide: events listed in one cell",
         lambda t: write_xlsx(t / "a.xlsx", {"S": _wide_cell(BASE, "; ")}),
         check=_check_figures(layout="wide")),
    Case("wide: a tick grid with event codes as headers",
         lambda t: write_xlsx(t / "a.xlsx", {"Grid": _grid(BASE, "x")}),
         check=_check_figures(layout="wide")),
    Case("wide: a grid of 1s with a text column and a totals row",
         lambda t: write_text(t / "a.csv", [row[:1] + ["BSc"] + row[1:] for row in _grid(BASE, 1)]
                              + [["Total", "", *[sum(1 for _, e in BASE if e == c) for c in _codes()]]]),
         check=_warned("total row", pairs=BASE)),
    Case("wide: a grid cell that is not a tick",
         lambda t: write_xlsx(t / "a.xlsx", {"Grid": _grid(BASE, "x") + [["HV-S0009", "x", "late"] + [None] * 3]}),
         check=_warned("should hold a tick", row=7, column="C (PHY110)", pairs=BASE + [("HV-S0009", "MAT101")])),
    Case("long header but list cells: read as wide",
         lambda t: write_text(t / "a.csv", [["Student", "Exam"]] + [[a, ", ".join(e)] for a, e in _grouped(BASE).items()]),
         check=_check_figures(layout="wide")),
    Case("clash list",
         lambda t: write_xlsx(t / "a.xlsx", {"Clashes": [["Event", "Other event", "Shared"], ["MAT101", "PHY110", 12],
                                                         ["PHY110", "CHM120", 3], ["HIS130", None, None]]}),
         check=lambda r: (r.synthetic_attendees and r.layout == "clash list"
                          and sorted(r.problem.events) == ["CHM120", "HIS130", "MAT101", "PHY110"]
                          and len(r.problem.attendees) == 15) or pytest.fail(r.describe())),
    # --- errors: files -----------------------------------------------------------------
    Case("an empty file", lambda t: _bytes(t / "a.csv", b""), error=("empty", None, None, None)),
    Case("an old .xls (OLE) file", lambda t: _bytes(t / "a.xls", b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\0" * 600),
         error=("old-style Excel", None, None, None)),
    Case("binary data named .csv", lambda t: _bytes(t / "a.csv", bytes(range(256)) * 4),
         error=("binary data", None, None, None)),
    Case("a zip that is not a workbook", lambda t: _zip(t / "a.xlsx", {"photo.jpg": b"x" * 100}),
         error=("not a spreadsheet workbook", None, None, None)),
    Case("a zip bomb", lambda t: _zip(t / "a.xlsx", {"xl/worksheets/sheet1.xml": b" " * (8 * 2**20)}),
         error=("unpacks to far more", None, None, None)),
    Case("a runaway export beyond the cell limit", lambda t: write_text(t / "a.csv", long_rows(BASE * 20)),
         options={"limits": Limits(max_cells=100)}, error=("more cells", None, None, None)),
    Case("a file beyond the size limit", lambda t: write_text(t / "a.csv", long_rows()),
         options={"limits": Limits(max_file_bytes=50)}, error=("larger than", None, None, None)),
    Case("a stray double quote in a CSV",
         lambda t: _bytes(t / "a.csv", ("Student,Exam\nHV-S0001,\"MAT101\n" + "".join(f"{a},{e}\n" for a, e in BASE * 2)).encode()),
         error=("double quote", None, 2, "B (Exam)")),
    Case("a one-column CSV (wrong delimiter)", lambda t: _bytes(t / "a.csv", b"Student Exam\nHV-S0001 MAT101\n"),
         error=("No enrolment header", None, None, None)),
    Case("no attendee column", lambda t: write_xlsx(t / "a.xlsx", {"S": [["Programme", "Exam"], ["BSc", "MAT101"]]}),
         error=("No enrolment header", "S", None, None)),
    Case("an explicit column that is not there", lambda t: write_xlsx(t / "a.xlsx", {"S": long_rows()}),
         options={"attendee_column": "Matric"}, error=("No enrolment header", "S", None, None)),
    Case("a sheet that is not there", lambda t: write_xlsx(t / "a.xlsx", {"S": long_rows()}),
         options={"sheet": "Entries"}, error=("no sheet of that name", None, None, None)),
    Case("a clash count that is not a number",
         lambda t: write_xlsx(t / "a.xlsx", {"C": [["Event", "Other event", "Shared"], ["MAT101", "PHY110", "many"]]}),
         error=("not a whole number", "C", 2, "C (Shared)")),
    # --- errors: the other sheets ------------------------------------------------------
    Case("a rule naming an unknown event",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Rules": [["Rule", "First event", "Other events"], ["before", "MAT101", "MAT999"]]}),
         error=("not in the enrolments", "Rules", 2, "C (Other events)")),
    Case("an unknown rule",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Rules": [["Rule", "First event", "Other events"], ["after", "MAT101", "PHY110"]]}),
         error=("not one timetabler knows", "Rules", 2, "A (Rule)")),
    Case("a fixed slot that does not exist",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Slots": GOOD_SLOTS,
                                                     "Exams": [["Exam", "Fixed slot"], ["MAT101", "Tue AM"]]}),
         error=("does not exist", "Exams", 2, "B (Fixed slot)")),
    Case("a duration longer than every slot",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Slots": GOOD_SLOTS, "Events": [["Event", "Duration (minutes)"], ["CHM120", 240]]}),
         error=("longer than every slot", "Events", 2, "B (Duration")),
    Case("slots given as date-and-time cells without a Start column",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Slots": [["Slot", "Date"], ["Mon AM", dt.datetime(2027, 5, 3, 9, 30)]]}),
         check=lambda r: (r.problem.slots[0].start == dt.time(9, 30) and r.problem.slots[0].date == dt.date(2027, 5, 3))
         or pytest.fail(str(r.problem.slots))),
    Case("slots out of time order",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Slots": _slots([["Mon PM", "2027-05-03", "14:00", 180, 100],
                                                                      ["Mon AM", "2027-05-03", "09:00", 180, 100]])}),
         check=lambda r: (_warned("not in time order", row=3, column="B (Date)")(r)
                          or [s.label for s in r.problem.slots] == ["Mon AM", "Mon PM"]
                          or pytest.fail(str(r.problem.slots)))),
    Case("dates that could be day or month first",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Slots": _slots([["Tue AM", "04/05/2027", "09:00", 180, 100]])}),
         check=lambda r: (r.problem.slots[0].date == dt.date(2027, 5, 4)
                          and any("read day first, as 04 May 2027" in w.message for w in r.warnings))
         or pytest.fail(str(r.warnings))),
    Case("a date that is not a date",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Slots": _slots([["Mon AM", "31/02/2027", "09:00", 180, 100]])}),
         error=("not a date", "Slots", 2, "B (Date)")),
    Case("a room type no room has",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Rooms": [["Room", "Capacity", "Room type"], ["Orchard Hall", 100, "Hall"]],
                                                     "Events": [["Event", "Room type"], ["CHM120", "Lab"]]}),
         error=("room type that no room has", "Events", 2, "B (Room type)")),
    Case("a weight that is not a whole number",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Weights": [["Goal", "Weight"], ["back-to-back", "high"]]}),
         error=("whole number", "Weights", 2, "B (Weight)")),
    Case("a Shared cell that is neither yes nor no",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Rooms": [["Room", "Capacity", "Shared"], ["Orchard Hall", 100, "yes"],
                                                               ["Beacon Lab", 20, "sometimes"]]}),
         error=("Shared must be yes or no", "Rooms", 3, "C (Shared)")),
    Case("rooms are shared unless Shared says no",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Rooms": [["Room", "Capacity", "Shared"], ["Orchard Hall", 100, None],
                                                               ["Beacon Lab", 20, "no"], ["Mill Room", 30, "yes"]]}),
         check=lambda r: [(x.name, x.shared) for x in r.problem.rooms] == [
             ("Orchard Hall", True), ("Beacon Lab", False), ("Mill Room", True)] or pytest.fail(str(r.problem.rooms))),
    Case("a room capacity that is missing",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Rooms": [["Room", "Capacity"], ["Orchard Hall", None]]}),
         error=("capacity", "Rooms", 2, "B (Capacity)")),
    Case("an event with nobody enrolled",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Events": [["Event", "Title"], ["MAT101", "Maths"], ["LAT200", "Latin"]]}),
         check=_warned("Nobody is enrolled on the event LAT200", row=3)),
    Case("an events sheet under another name is still read",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Exam details": [["Exam", "Title", "Duration"], ["MAT101", "Maths", 120]]}),
         check=lambda r: (r.other_sheets == {"Events": "Exam details"} and r.problem.events["MAT101"].duration_minutes == 120)
         or pytest.fail(r.describe())),
    Case("a sheet whose name says nothing is reported, not guessed",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Sheet2": [["Exam", "Title"], ["MAT101", "Maths"]]}),
         check=_warned("'Sheet2' was not read")),
    Case("a same-slot rule between events that share attendees",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Rules": [["Rule", "First event", "Other events"], ["same slot", "MAT101", "PHY110"]]}),
         check=_warned("1 attendee is enrolled on both MAT101 and PHY110", row=2)),
    Case("an event title that looks like a total row",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Events": [["Event", "Title"], ["MAT101", "Total"]]}),
         check=_warned("title looks like a total row", row=2, column="Title")),
]


def _bytes(path: Path, data: bytes) -> Path:
    path.write_bytes(data)
    return path


def _zip(path: Path, members: dict[str, bytes]) -> Path:
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in members.items():
            z.writestr(name, data)
    return path


def _grouped(pairs):
    out: dict[str, list[str]] = {}
    for a, e in pairs:
        out.setdefault(a, []).append(e)
    return out


def _codes():
    return sorted({e for _, e in BASE}, key=[e for _, e in BASE].index)


def _grid(pairs, mark):
    codes = _codes()
    return [["Student", *codes]] + [[a, *[mark if e in evs else None for e in codes]] for a, evs in _grouped(pairs).items()]


def _wide_columns(pairs):
    groups = _grouped(pairs)
    width = max(len(v) for v in groups.values())
    return [["Student"] + [f"Exam {i}" for i in range(1, width + 1)]] + [[a, *evs] for a, evs in groups.items()]


def _wide_cell(pairs, sep):
    return [["Candidate", "Exams"]] + [[a, sep.join(evs)] for a, evs in _grouped(pairs).items()]


def _merged_book(path: Path) -> Path:
    import openpyxl

    book = openpyxl.Workbook()
    ws = book.active
    ws.append(["Harrowgate Vale College: entries", None])
    ws.append(["Student", "Exam"])
    for a, evs in _grouped(BASE).items():
        first = ws.max_row + 1
        for e in evs:
            ws.append([a, e])
        if len(evs) > 1:
            ws.merge_cells(start_row=first, start_column=1, end_row=first + len(evs) - 1, end_column=1)
    ws.merge_cells("A1:B1")
    book.save(path)
    return path


def _formula_book(path: Path) -> Path:
    rows = [["Student", "Exam"]] + [[a, f'=UPPER("{e.lower()}")'] for a, e in BASE]
    write_xlsx(path, {"S": rows})
    patch_cached_formula_values(path, {f"B{i}": e for i, (_, e) in enumerate(BASE, start=2)})
    return path


# --- damaged and hostile workbooks (each part written by hand) ---------------------------


def _one_bad_cell(cell: str, row: int = 3, shared=None, styles=None):
    """The BASE enrolments with one hand-written cell in column B of ``row``."""
    def build(t: Path) -> Path:
        rows = long_rows()
        body = rows_xml(rows[: row - 1]) + f'<row r="{row}">{inline_cell(f"A{row}", "HV-S0009")}{cell}</row>'
        return write_parts_xlsx(t / "a.xlsx", {"S": sheet_xml(body)}, shared=shared, styles=styles)
    return build


def _far_row(t: Path) -> Path:
    """5 KB: declares the whole sheet (A1:XFD1048576) and holds one enrolment in its last row."""
    body = rows_xml(long_rows()) + rows_xml([["HV-S0009", "GEO140"]], first_row=1_048_576)
    return write_parts_xlsx(t / "a.xlsx", {"S": sheet_xml(body, dimension="A1:XFD1048576")})


def _far_corner(t: Path) -> Path:
    body = rows_xml(long_rows()) + '<row r="1048576">' + inline_cell("XFD1048576", "x") + "</row>"
    return write_parts_xlsx(t / "a.xlsx", {"S": sheet_xml(body, dimension="A1:XFD1048576")})


def _far_rows_in_sheets(t: Path) -> Path:
    far = rows_xml([["HV-S0009", "GEO140"]], first_row=1_048_576)
    sheets = {"S": sheet_xml(rows_xml(long_rows()))}
    sheets.update({f"Copy {i}": sheet_xml(far) for i in range(1, 4)})
    return write_parts_xlsx(t / "a.xlsx", sheets)


def _flipped(t: Path) -> Path:
    path = write_parts_xlsx(t / "a.xlsx", {"S": sheet_xml(rows_xml(long_rows(BASE * 40)))})
    return flip_bytes(path, "xl/worksheets/sheet1.xml")


def _shared_book(t: Path, texts: list[str]) -> Path:
    body = '<row r="1"><c r="A1" t="s"><v>0</v></c><c r="B1" t="s"><v>1</v></c></row>'
    body += "".join(f'<row r="{r}">{inline_cell(f"A{r}", a)}<c r="B{r}" t="s"><v>{2 + i}</v></c></row>'
                    for i, (r, (a, _)) in enumerate(zip(range(2, 12), BASE)))
    return write_parts_xlsx(t / "a.xlsx", {"S": sheet_xml(body)}, shared=["Student", "Exam", *texts])


DATE_STYLES = ('<?xml version="1.0"?><styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
               '<cellXfs count="2"><xf numFmtId="0"/><xf numFmtId="14"/></cellXfs></styleSheet>')

BILLION_LAUGHS = ('<?xml version="1.0"?><!DOCTYPE lolz [<!ENTITY lol "lol"><!ENTITY lol2 "&lol;&lol;&lol;&lol;">]>'
                  '<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>'
                  '<row r="1"><c r="A1" t="inlineStr"><is><t>&lol2;</t></is></c></row></sheetData></worksheet>')

CASES += [
    Case("a number cell holding text", _one_bad_cell('<c r="B3" t="n"><v>twelve</v></c>'),
         error=("number cell holds text", "S", 3, "B3")),
    Case("a number cell holding 'nan'", _one_bad_cell('<c r="B3"><v>nan</v></c>'),
         error=("number cell holds text", "S", 3, "B3")),
    Case("a date cell (type d) holding text", _one_bad_cell('<c r="B3" t="d"><v>next Tuesday</v></c>'),
         error=("date cell holds text", "S", 3, "B3")),
    Case("a number beyond floating point", _one_bad_cell('<c r="B3"><v>1E+999</v></c>'),
         error=("number too large", "S", 3, "B3")),
    Case("a date-formatted serial beyond the year 9999", _one_bad_cell('<c r="B3" s="1"><v>99999999</v></c>', styles=DATE_STYLES),
         error=("number that is no date", "S", 3, "B3")),
    Case("a date-formatted number reads as a date",
         # Excel's 1900 date system counts days from 1899-12-30 for dates after February 1900
         # (ECMA-376 Part 1, 18.17.4.1, as recalled); computed here, not typed in
         _one_bad_cell(f'<c r="B3" s="1"><v>{(dt.date(2027, 5, 3) - dt.date(1899, 12, 30)).days}</v></c>', styles=DATE_STYLES),
         check=lambda r: ("HV-S0009", "2027-05-03") in r.problem.enrolments or pytest.fail(str(r.problem.enrolments))),
    Case("a true/false cell holding something else", _one_bad_cell('<c r="B3" t="b"><v>maybe</v></c>'),
         error=("true/false cell", "S", 3, "B3")),
    Case("a cell reference beyond column XFD", _one_bad_cell('<c r="XFE3" t="inlineStr"><is><t>MAT101</t></is></c>'),
         error=("impossible reference", "S", 3, "XFE3")),
    Case("a cell reference in row 0", _one_bad_cell('<c r="B0" t="inlineStr"><is><t>MAT101</t></is></c>'),
         error=("impossible reference", "S", 3, "B0")),
    Case("a cell reference that is not one", _one_bad_cell('<c r="3B" t="inlineStr"><is><t>MAT101</t></is></c>'),
         error=("impossible reference", "S", 3, "3B")),
    Case("a row number beyond the last row of a sheet",
         lambda t: write_parts_xlsx(t / "a.xlsx", {"S": sheet_xml(rows_xml(long_rows()) + '<row r="1048577"></row>')}),
         error=("impossible row number", "S", None, None)),
    Case("a row number that is not a number",
         lambda t: write_parts_xlsx(t / "a.xlsx", {"S": sheet_xml(rows_xml(long_rows()) + '<row r="-4"></row>')}),
         error=("impossible row number", "S", None, None)),
    Case("a shared-text index out of range",
         _one_bad_cell('<c r="B3" t="s"><v>7</v></c>', shared=["Student", "Exam", "MAT101"]),
         error=("shared text that the workbook does not hold", "S", 3, "B3")),
    Case("a shared-text index that is not a number",
         _one_bad_cell('<c r="B3" t="s"><v>x</v></c>', shared=["MAT101"]),
         error=("shared text that the workbook does not hold", "S", 3, "B3")),
    Case("shared texts read as the cells they fill", lambda t: _shared_book(t, [e for _, e in BASE]),
         check=_check_figures()),
    Case("flipped bytes inside a sheet", _flipped, error=("sheet is damaged", "S", None, None)),
    Case("a sheet cut off in the middle of a cell",
         lambda t: write_parts_xlsx(t / "a.xlsx", {"S": sheet_xml(rows_xml(long_rows()))[:300]}),
         error=("sheet is damaged", "S", None, None)),
    Case("entity declarations inside a sheet", lambda t: write_parts_xlsx(t / "a.xlsx", {"S": BILLION_LAUGHS}),
         error=("sheet is damaged", "S", None, None)),
    Case("the full sheet width declared and one row in the last row",
         _far_row, check=_warned("blank rows", row=1_048_576, pairs=BASE + [("HV-S0009", "GEO140")])),
    Case("one cell in the last cell of the sheet (XFD1048576)", _far_corner, check=_check_figures()),
    Case("far rows in several sheets, beyond the cell limit", _far_rows_in_sheets,
         options={"limits": Limits(max_cells=2_500_000)}, error=("more cells", None, None, None)),
    Case("shared text larger than the limit, refused before parsing",
         lambda t: _shared_book(t, [e for _, e in BASE[:-1]] + ["x" * 100_000]),
         options={"limits": Limits(max_shared_strings_bytes=64 * 1024)}, error=("shared text is larger", None, None, None)),
    Case("a shared text longer than a cell holds (32,767 characters)",
         lambda t: _shared_book(t, [e for _, e in BASE[:-1]] + ["G" * 40_000]),
         error=("more text than a spreadsheet cell can", "S", 11, "B11")),
    Case("an inline text longer than a cell holds", _one_bad_cell(inline_cell("B3", "M" * 40_000)),
         error=("more text than a spreadsheet cell can", "S", 3, "B3")),
    Case("sheets larger than the limit, refused before parsing",
         lambda t: write_parts_xlsx(t / "a.xlsx", {"S": sheet_xml(rows_xml(long_rows()))}),
         options={"limits": Limits(max_sheet_bytes=1000)}, error=("sheets unpack to more data", None, None, None)),
    Case("more cell text than the limit",
         lambda t: write_parts_xlsx(t / "a.xlsx", {"S": sheet_xml(rows_xml(long_rows()))}),
         options={"limits": Limits(max_text_chars=50)}, error=("more text than timetabler reads", None, None, None)),
    Case("a workbook whose only sheet is a chart",
         lambda t: write_parts_xlsx(t / "a.xlsx", {}, chart_sheets=["Chart 1"]),
         error=("no sheet of cells", None, None, None)),
    Case("a workbook listing no sheets at all", lambda t: write_parts_xlsx(t / "a.xlsx", {}),
         error=("no sheet of cells", None, None, None)),
    Case("a chart sheet beside the data is passed over with a note",
         lambda t: write_parts_xlsx(t / "a.xlsx", {"S": sheet_xml(rows_xml(long_rows()))}, chart_sheets=["Chart 1"]),
         check=_warned("is a chart sheet")),
    Case("a control character in a sheet name is shown, not sent",
         lambda t: write_parts_xlsx(t / "a.xlsx", {"S\u009b2J": sheet_xml(rows_xml(long_rows()))}),
         check=_check_figures(sheet="S\\x9b2J")),
    Case("an .ods repeating a filled row and cell far past the cell limit (2 KB)",
         lambda t: add_ods_rows(write_ods(t / "a.ods", {"S": long_rows()}),
                                '<table:table-row table:number-rows-repeated="10000"><table:table-cell '
                                'table:number-columns-repeated="1000" office:value-type="string"><text:p>x</text:p>'
                                '</table:table-cell></table:table-row>'),
         error=("declares more cells than timetabler reads", None, None, None)),
    Case("an .ods with 100,000 repeated blank rows above its last row",
         lambda t: add_ods_rows(write_ods(t / "a.ods", {"S": long_rows()}),
                                '<table:table-row table:number-rows-repeated="100000"><table:table-cell '
                                'table:number-columns-repeated="1024"/></table:table-row><table:table-row>'
                                '<table:table-cell office:value-type="string"><text:p>HV-S0009</text:p></table:table-cell>'
                                '<table:table-cell office:value-type="string"><text:p>GEO140</text:p></table:table-cell>'
                                '</table:table-row>'),
         check=_check_figures(pairs=BASE + [("HV-S0009", "GEO140")])),
    # --- hostile and damaged text files ------------------------------------------------
    Case("a CSV cell over the csv module's field limit",
         lambda t: _bytes(t / "a.csv", b'Student,Exam\nHV-S0001,"' + b"M" * 200_000 + b'"\n'),
         error=("longer than timetabler reads", None, 2, None)),
    Case("an unclosed quote swallowing a few rows",
         lambda t: _bytes(t / "a.csv", b'Student,Exam\nHV-S0001,MAT101\nHV-S0002,"PHY110\nHV-S0003,CHM120\nHV-S0004,HIS130\n'),
         error=("double quote", None, 3, "B (Exam)")),
    Case("an unclosed quote in the last row",
         lambda t: _bytes(t / "a.csv", ("Student\tExam\n" + "".join(f"{a}\t{e}\n" for a, e in BASE[:-1])
                                        + f'{BASE[-1][0]}\t"{BASE[-1][1]}\n').encode()),
         error=("double quote", None, 11, "B (Exam)")),
    Case("a quoted cell with a line break in a notes column reads",
         lambda t: write_text(t / "a.csv", [["Student", "Exam", "Notes"]] + [[a, e, "late entry\napproved" if i == 2 else ""]
                                                                             for i, (a, e) in enumerate(BASE)]),
         check=_check_figures()),
    Case("control characters in a CSV are shown, not sent to the terminal",
         lambda t: write_text(t / "a.csv", long_rows(BASE + [("HV-S0009", "GEO140\x1b[2J\x07")])),
         check=lambda r: ("HV-S0009", "GEO140\\x1b[2J\\x07") in r.problem.enrolments
         or pytest.fail(str(r.problem.enrolments))),
    Case("UTF-16 big-endian without a byte-order mark",
         lambda t: write_text(t / "a.csv", long_rows(), ",", "utf-16-be"),
         check=_check_figures(encoding="UTF-16 (big-endian)")),
    # --- event codes and titles in the enrolment sheet ---------------------------------
    Case("codes joined by a slash are one code each, with a located warning",
         lambda t: write_xlsx(t / "a.xlsx", {"S": long_rows(BASE + [("HV-S0009", "MAT101 / PHY110")])}),
         check=_warned("join two codes", row=12, column="B (Exam)", pairs=BASE + [("HV-S0009", "MAT101 / PHY110")])),
    Case("a committee name with & is not taken for two codes",
         lambda t: write_text(t / "a.csv", [["Member", "Committee"], ["Ann", "Finance & Estates"], ["Ben", "Finance & Estates"]]),
         check=lambda r: not any("join two codes" in w.message for w in r.warnings) or pytest.fail(str(r.warnings))),
    Case("a few cells holding a semicolon: a warning naming the first row",
         lambda t: write_xlsx(t / "a.xlsx", {"S": long_rows(BASE + [("HV-S0009", "MAT101; PHY110")])}),
         check=_warned("comma or semicolon", row=12, column="B (Exam)", pairs=BASE + [("HV-S0009", "MAT101; PHY110")])),
    Case("an exam title column gives the events their titles",
         lambda t: write_xlsx(t / "a.xlsx", {"S": [["Student", "Exam", "Exam title"]] + [[a, e, f"Title of {e}"] for a, e in BASE]}),
         check=lambda r: ({c: e.title for c, e in r.problem.events.items()} == {e: f"Title of {e}" for _, e in BASE}
                          and not r.warnings) or pytest.fail(str(r.warnings))),
    Case("module name beside module code is the title",
         lambda t: write_text(t / "a.csv", [["Candidate", "Module code", "Module name"]] + [[a, e, e.lower()] for a, e in BASE]),
         check=lambda r: (r.event_column == "Module code" and r.problem.events["MAT101"].title == "mat101")
         or pytest.fail(r.describe())),
    Case("two titles for one exam in the enrolments",
         lambda t: write_xlsx(t / "a.xlsx", {"S": [["Student", "Exam", "Title"]] + [[a, e, "Algebra" if i == 3 else e]
                                                                                  for i, (a, e) in enumerate(BASE)]}),
         check=_warned("has two titles", row=5, column="C (Title)")),
    Case("an enrolment title differing from the events sheet's",
         lambda t: write_xlsx(t / "a.xlsx", {"S": [["Student", "Exam", "Title"]] + [[a, e, e] for a, e in BASE],
                                             "Events": [["Event", "Title"], ["MAT101", "Mathematics I"]]}),
         check=lambda r: (r.problem.events["MAT101"].title == "Mathematics I" and r.problem.events["PHY110"].title == "PHY110"
                          and _warned("the events sheet's title was kept", row=2)(r)) is None or pytest.fail("")),
    # --- people: the Attendees sheet, the Attendance and Quorum columns -------------------
    Case("an attendee's unavailable slot that is no slot",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Slots": GOOD_SLOTS, "Attendees": [
             ["Attendee", "Unavailable slots"], ["HV-S0001", "Mon AM; Tue AM"]]}),
         error=("names a slot that does not exist", "Attendees", 2, "B (Unavailable slots)")),
    Case("an unavailable date outside the slots' dates (a wrong year)",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Slots": GOOD_SLOTS, "Attendees": [
             ["Attendee", "Unavailable slots"], ["HV-S0002", dt.datetime(2026, 5, 3)]]}),
         error=("No slot falls on Sunday 03 May 2026", "Attendees", 2, "B (Unavailable slots)")),
    Case("an unavailable date when the slots have no dates",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Slots": [["Slot"], ["Mon AM"], ["Mon PM"]], "Attendees": [
             ["Attendee", "Unavailable slots"], ["HV-S0002", "03/05/2027"]]}),
         error=("the slots have no dates", "Attendees", 2, "B (Unavailable slots)")),
    Case("extra time typed in minutes and as words",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Attendees": [
             ["Attendee", "Extra time"], ["HV-S0001", "15 minutes"]]}),
         error=("The extra time is not a percentage", "Attendees", 2, "B (Extra time)")),
    Case("negative extra time",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Attendees": [["Attendee", "Extra time"], ["HV-S0001", -25]]}),
         error=("The extra time is not a percentage", "Attendees", 2, "B (Extra time)")),
    Case("extra time over the sane maximum",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Attendees": [["Attendee", "Extra time"], ["HV-S0003", "250%"]]}),
         error=("more than timetabler takes for a percentage", "Attendees", 2, "B (Extra time)")),
    Case("an own room of a type no room has",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Rooms": [["Room", "Capacity", "Room type"], ["Orchard Hall", 100, "Hall"]],
                                                   "Attendees": [["Attendee", "Own room"], ["HV-S0004", "Quiet room"]]}),
         error=("own room of a type that no room has", "Attendees", 2, "B (Own room)")),
    Case("an attendee listed twice with different extra time",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Attendees": [["Attendee", "Extra time"], ["HV-S0001", 25],
                                                                 ["hv-s0001", 50]]}),
         error=("listed twice with different details", "Attendees", 3, "B (Extra time)")),
    Case("attendees of the attendees sheet with no enrolment are named",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Attendees": [["Attendee", "Extra time"], ["HV-S0001", 25],
                                                                 ["HV-S0777", 25]]}),
         check=_warned("have no enrolment, so their details were not used: HV-S0777", row=3)),
    Case("extra time with slots that have no start times",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Slots": [["Slot", "Date"], ["Mon AM", "2027-05-03"]],
                                                   "Attendees": [["Attendee", "Extra time"], ["HV-S0001", "25%"]]}),
         check=_warned("so the extra time cannot be placed", row=2)),
    Case("an attendance that is neither required nor optional",
         lambda t: write_xlsx(t / "a.xlsx", {"S": [["Student", "Exam", "Attendance"]] + [[a, e, "maybe" if i == 2 else ""]
                                                                                       for i, (a, e) in enumerate(BASE)]}),
         error=("The attendance is not one timetabler knows", "S", 4, "C (Attendance)")),
    Case("one enrolment given as required and as optional",
         lambda t: write_text(t / "a.csv", [["Member", "Committee", "Attendance"], ["Ines Varga", "Finance", "required"],
                                            ["Ines Varga", "Finance", "optional"]]),
         error=("once as required and once as optional", None, 3, "C (Attendance)")),
    Case("a quorum that is not a whole number",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Events": [["Event", "Quorum"], ["MAT101", "half"]]}),
         error=("The quorum is not a whole number of attendees", "Events", 2, "B (Quorum)")),
    Case("a quorum larger than the event's attendees",
         lambda t: _sheet_with_extras(t, "a.xlsx", {"Events": [["Event", "Quorum"], ["MAT101", 2], ["HIS130", 3]]}),
         error=("The quorum of HIS130 is larger than its number of attendees", "Events", 3, "B (Quorum)")),
    Case("optional attendance in a CSV file",
         lambda t: write_text(t / "a.csv", [["Member", "Committee", "Attendance"], ["Ines Varga", "Finance", ""],
                                            ["Tomas Reyl", "Finance", "Optional"], ["Tomas Reyl", "Estates", "opt"]], ";"),
         check=lambda r: r.problem.optional == {("Tomas Reyl", "Finance"), ("Tomas Reyl", "Estates")}
         or pytest.fail(str(r.problem.optional))),
]


def test_the_corpus_is_large_enough():
    assert len(CASES) >= 30


@pytest.mark.parametrize("case", CASES, ids=[c.name for c in CASES])
def test_corpus(case: Case, tmp_path: Path):
    path = case.build(tmp_path)
    options = ReadOptions(**case.options)
    if case.error is None:
        reading = read_problem(path, options)
        case.check(reading)
        return
    message, sheet, row, column = case.error
    with pytest.raises(InputError) as info:
        read_problem(path, options)
    findings = info.value.findings
    hits = [f for f in findings if message in f.message]
    assert hits, [str(f) for f in findings]
    f = hits[0]
    assert f.where is not None and f.where.file == str(path)
    if sheet is not None:
        assert f.where.sheet == sheet, str(f)
    if row is not None:
        assert f.where.row == row, str(f)
    if column is not None:
        assert column in (f.where.column or ""), str(f)


def test_all_errors_are_collected_up_to_the_cap(tmp_path: Path):
    bad = [[f"S{i}", f"{i}/13/2027", "09:00", 60, 10] for i in range(70)]  # month 13: never a date
    path = _sheet_with_extras(tmp_path, "a.xlsx", {"Slots": _slots(bad)})
    with pytest.raises(InputError) as info:
        read_problem(path, ReadOptions(max_findings=50))
    findings = info.value.findings
    assert len([f for f in findings if "not a date" in f.message]) == 50
    assert findings[-1].message.startswith("... and 20 more")
    assert [f.where.row for f in findings[:3]] == [2, 3, 4]


def test_several_kinds_of_error_reported_together(tmp_path: Path):
    path = _sheet_with_extras(tmp_path, "a.xlsx", {
        "Slots": GOOD_SLOTS,
        "Events": [["Event", "Fixed slot", "Duration"], ["MAT101", "Fri", 60], ["PHY110", None, "long"]],
        "Rules": [["Rule", "First event", "Other events"], ["before", "MAT101", "ZZZ"]],
    })
    with pytest.raises(InputError) as info:
        read_problem(path)
    text = str(info.value)
    for part in ("Fixed slot", "Duration", "ZZZ"):
        assert part in text


def test_reading_never_changes_the_input(tmp_path: Path):
    path = write_xlsx(tmp_path / "a.xlsx", {"S": long_rows()})
    before = (hashlib.sha256(path.read_bytes()).hexdigest(), path.stat().st_mtime_ns)
    read_problem(path)
    after = (hashlib.sha256(path.read_bytes()).hexdigest(), path.stat().st_mtime_ns)
    assert before == after
    # and nothing is left open: the file can be renamed away at once (a held handle blocks this on Windows)
    os.replace(path, tmp_path / "b.xlsx")
    assert not any(p.name.startswith("~$") for p in tmp_path.iterdir())


def test_clash_list_gives_the_listed_graph(tmp_path: Path):
    """The conflict graph of a clash list is the listed weighted graph (reference: networkx built directly)."""
    import networkx as nx

    from timetabler.conflicts import conflict_graph

    listed = [("MAT101", "PHY110", 12), ("PHY110", "CHM120", 3), ("CHM120", "MAT101", 1), ("HIS130", "GEO140", 7)]
    path = write_xlsx(tmp_path / "c.xlsx", {"C": [["Exam", "Clashes with", "Students in common"], *map(list, listed)]})
    graph = conflict_graph(read_problem(path).problem)
    reference = nx.Graph()
    reference.add_weighted_edges_from(listed, weight="shared")
    assert nx.utils.graphs_equal(nx.Graph(graph.edges(data=True)), reference)


# --- the same files through the other readers of intake ---------------------------------

DAMAGED_WORKBOOKS = [c for c in CASES if c.error is not None and not c.options
                     and c.name.startswith(("a number cell", "a date cell", "a cell reference", "a row number",
                                            "a shared-text index", "flipped bytes", "a sheet cut off",
                                            "an inline text longer"))]


def test_the_damaged_workbooks_are_many():
    assert len(DAMAGED_WORKBOOKS) >= 10, [c.name for c in DAMAGED_WORKBOOKS]


@pytest.mark.parametrize("case", DAMAGED_WORKBOOKS, ids=[c.name for c in DAMAGED_WORKBOOKS])
def test_earlier_timetable_reader_locates_the_same_damage(case: Case, tmp_path: Path):
    """``solve --keep FILE`` reads FILE with the enrolment reader's file reading: same located errors."""
    from timetabler.intake.previous_timetable import read_previous_timetable

    path = case.build(tmp_path)
    with pytest.raises(InputError) as info:
        read_previous_timetable(path)
    message, sheet, row, column = case.error
    f = next(f for f in info.value.findings if message in f.message)
    assert (f.where.file, f.where.sheet) == (str(path), sheet), str(f)
    if row is not None:
        assert f.where.row == row, str(f)
    if column is not None:
        assert column in (f.where.column or ""), str(f)


def test_earlier_timetable_with_a_far_row_reads_at_once(tmp_path: Path):
    """A timetable sheet declaring the full width, with its last row at the bottom of the sheet."""
    from timetabler.intake.previous_timetable import read_previous_timetable

    body = rows_xml([["Event", "Slot"], ["MAT101", 2], ["PHY110", 1]]) + rows_xml([["CHM120", 3]], first_row=1_048_576)
    path = write_parts_xlsx(tmp_path / "earlier.xlsx", {"Events": sheet_xml(body, dimension="A1:XFD1048576")})
    refs = read_previous_timetable(path)
    assert refs.slots == {"MAT101": "2", "PHY110": "1", "CHM120": "3"}
    assert refs.where["CHM120"].row == 1_048_576


TEXT_CASES = [c for c in CASES if c.error is None]


@pytest.mark.parametrize("case", TEXT_CASES, ids=[c.name for c in TEXT_CASES])
def test_the_upload_check_accepts_every_file_intake_reads(case: Case, tmp_path: Path):
    """The web page's upload check judges text as intake does (UTF-16 without a mark included)."""
    from timetabler.web.uploads import sniff_kind

    path = case.build(tmp_path)
    read_problem(path, ReadOptions(**case.options))
    assert sniff_kind(path.read_bytes()[:65536], path) in ("csv", "xlsx", "ods")


def test_no_finding_sends_a_control_character(tmp_path: Path):
    """Escape sequences typed into a file (cells, headers) reach no message or value as they are."""
    path = write_text(tmp_path / "a.csv", [["Student", "Exam", "Notes\u001b]0;owned\u0007"], ["HV-S0001\u009b31m", "MAT101"],
                                           ["HV-S0002\u001b[2J", None], ["HV-S0003", "MAT101/\u001b[5mPHY110"],
                                           ["HV-S0004", "PHY110\r\u001b[1A"]])
    reading = read_problem(path)
    texts = [str(w) for w in reading.warnings] + [v for w in reading.warnings for v in w.to_dict().values() if isinstance(v, str)]
    texts += [reading.describe(), *reading.problem.events, *reading.problem.attendees]
    assert len(reading.warnings) >= 2, [str(w) for w in reading.warnings]
    for text in texts:
        assert not any(ord(ch) < 32 or 0x7f <= ord(ch) <= 0x9f for ch in text), repr(text)
    assert "HV-S0001\\x9b31m" in reading.problem.attendees


@pytest.mark.parametrize("epoch", ["1900", "1904"])
def test_workbook_values_equal_openpyxls_own_reading(tmp_path: Path, epoch: str):
    """Every value type reads as openpyxl's full (not read-only) load gives it: the reference here."""
    import openpyxl
    from openpyxl.utils.datetime import CALENDAR_MAC_1904

    from timetabler.intake.file_types import load_book

    book = openpyxl.Workbook()
    if epoch == "1904":
        book.epoch = CALENDAR_MAC_1904
    ws = book.active
    ws.title = "Values"
    rows = [
        ["Student", "Exam", "When", "Start", "Length", "Seats", "Share", "Late"],
        ["HV-S0001", "MAT101", dt.datetime(2027, 5, 3, 9, 30), dt.time(14, 0), dt.timedelta(hours=2), 120, 0.25, True],
        [40001, "PHY110", dt.date(2027, 5, 4), dt.time(9, 15), dt.timedelta(minutes=90), 3, -1.5e-7, False],
        [None, None, None, None, None, None, None, "only the last"],
    ]
    for row in rows:
        ws.append(row)
    ws.merge_cells("A5:A6")
    ws["A5"] = "merged"
    ws["B6"] = "CHM120"
    path = tmp_path / "values.xlsx"
    book.save(path)
    reference = openpyxl.load_workbook(path, data_only=True)["Values"]
    want = []
    for r in reference.iter_rows(values_only=True):
        r = list(r)
        while r and r[-1] is None:
            r.pop()
        want.append(r)
    assert want[6 - 1] == [None, "CHM120"]
    want[6 - 1][0] = "merged"  # intake fills a merged range with its top-left value
    sheet = load_book(path, Limits()).sheets[0]
    assert [list(r) for r in sheet.rows] == want
