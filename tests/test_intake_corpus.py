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

from intake_builders import patch_cached_formula_values, write_ods, write_text, write_xlsx
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
         error=("double quote", None, 2, "column 2")),
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
         check=_warned("not in time order", row=3, column="B (Date)")),
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
