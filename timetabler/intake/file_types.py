"""Open a file of any supported type as a list of sheets of raw cell values.

Supported types, recognised by their content first and their name second (registrars
rename files):

* ``.xlsx`` / ``.xlsm`` — read part by part by :mod:`.xlsx_sheets` (sparsely, within the
  limits, every damaged cell located), taking the values Excel stored for formulas; macros
  are never run and links never followed.
* ``.ods`` — read through pandas' ``odf`` engine (package ``odfpy``).
* ``.csv`` / ``.tsv`` / ``.txt`` — text. The encoding is decided by :func:`decode`
  (byte-order mark, then UTF-16 without a mark by its zero bytes, then UTF-8, then
  Windows-1252); the delimiter by :func:`sniff_delimiter` among comma, semicolon, tab
  and pipe.

The file is read into memory once and closed at once: it is never modified or held open.
"""

from __future__ import annotations

import codecs
import csv
import io
import re
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import Finding, InputError, visible
from ..model import Location
from ..progress import StepProgress
from .limits import CellBudget, Limits, check_archive, check_file_size, check_ods_cells
from .xlsx_sheets import read_xlsx

TEXT_SUFFIXES = (".csv", ".tsv", ".txt", ".tab")
WORKBOOK_SUFFIXES = (".xlsx", ".xlsm")
ODS_SUFFIXES = (".ods",)
SUPPORTED = ".xlsx, .xlsm, .ods, .csv, .tsv"
DELIMITERS = (",", ";", "\t", "|")
DELIMITER_NAMES = {",": "comma", ";": "semicolon", "\t": "tab", "|": "pipe"}

Progress = StepProgress  # (what, done, total): see timetabler.progress


@dataclass
class RawSheet:
    """One sheet's cells as read (rows of Python values; row ``i`` of the list is spreadsheet row ``i + 1``)."""

    name: str | None
    rows: list[list[object]]
    hidden: bool = False


@dataclass
class RawBook:
    kind: str  # "xlsx", "ods" or "text"
    sheets: list[RawSheet]
    encoding: str | None = None
    delimiter: str | None = None
    notes: list[Finding] = field(default_factory=list)


def read_bytes(path: Path, limits: Limits) -> bytes:
    name = str(path)
    if not path.exists():
        raise InputError(Finding("The file does not exist.", where=Location(name), suggestion="Check the name and folder."))
    if path.is_dir():
        raise InputError(Finding("This is a folder, not a file.", where=Location(name)))
    check_file_size(name, path.stat().st_size, limits)
    try:
        with open(path, "rb") as handle:  # read once, close at once: never held open or locked
            return handle.read()
    except PermissionError:
        raise InputError(
            Finding(
                "The file cannot be read: permission denied.",
                where=Location(name),
                suggestion="Close it in other programs, or copy it to a folder you own.",
            )
        ) from None


def content_kind(data: bytes) -> str:
    """``zip`` (xlsx/ods), ``ole`` (old .xls or a password-protected workbook), ``text`` or ``empty``."""
    if not data.strip():
        return "empty"
    if data[:4] == b"PK\x03\x04":
        return "zip"
    if data[:8] == b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1":
        return "ole"
    return "text"


def load_book(path: Path, limits: Limits, progress: Progress | None = None) -> RawBook:
    """Read a file into a :class:`RawBook`, checking limits; raise InputError for what cannot be read."""
    name = str(path)
    suffix = path.suffix.lower()
    data = read_bytes(path, limits)
    kind = content_kind(data)
    if kind == "ole":
        raise InputError(
            Finding(
                "This is an old-style Excel file (.xls) or a password-protected workbook; timetabler cannot read it.",
                where=Location(name),
                expected=f"one of {SUPPORTED}, without a password",
                suggestion="Open it and save a copy as .xlsx (Excel Workbook) with no password.",
            )
        )
    if kind == "empty":
        raise InputError(Finding("The file is empty.", where=Location(name), expected="a header row and enrolment rows"))
    if suffix not in TEXT_SUFFIXES + WORKBOOK_SUFFIXES + ODS_SUFFIXES and kind != "zip":
        if suffix in (".numbers", ".pdf", ".docx", ".doc", ".json", ".xml", ".html"):
            raise InputError(
                Finding(
                    f"timetabler cannot read '{suffix}' files.",
                    where=Location(name),
                    expected=f"one of {SUPPORTED}",
                    suggestion="Export the enrolments from your spreadsheet program as .xlsx or .csv.",
                )
            )
    notes: list[Finding] = []
    budget = CellBudget(name, limits)
    if kind == "zip":
        archive = check_archive(name, data, limits)
        names = set(archive.namelist())
        mimetype = archive.read("mimetype").decode("ascii", "replace").strip() if "mimetype" in names else ""
        if "opendocument.spreadsheet" in mimetype:
            check_ods_cells(name, archive, limits)
            return RawBook("ods", _read_ods(name, data, budget, progress), notes=notes)
        if "xl/workbook.xml" in names or any(n.startswith("xl/") for n in names):
            if suffix in TEXT_SUFFIXES + ODS_SUFFIXES:
                notes.append(Finding(f"The file is named '{suffix}' but is an Excel workbook; it was read as one.",
                                     where=Location(name), severity="warning"))
            return RawBook("xlsx", read_xlsx(name, archive, limits, budget, progress, notes), notes=notes)
        raise InputError(
            Finding(
                "The file is a zip archive but not a spreadsheet workbook.",
                where=Location(name),
                found=", ".join(sorted(names)[:5]),
                expected=f"one of {SUPPORTED}",
                suggestion="Unzip it and give timetabler the workbook inside.",
            )
        )
    if suffix in WORKBOOK_SUFFIXES + ODS_SUFFIXES:
        notes.append(Finding(f"The file is named '{suffix}' but holds plain text; it was read as a CSV file.",
                             where=Location(name), severity="warning"))
    text, encoding = decode(name, data)
    hint = re.match(r"\s*sep=(.)[ \t]*\r?\n", text)  # Excel's "sep=;" first line names the delimiter
    if hint:
        delimiter = hint.group(1)
        text = "\n" + text[hint.end():]  # keep row numbers equal to line numbers
    else:
        delimiter = sniff_delimiter(text, prefer="\t" if suffix in (".tsv", ".tab") else ",")
    rows = text_rows(name, text, delimiter, budget, progress)
    return RawBook("text", [RawSheet(None, rows)], encoding=encoding, delimiter=delimiter, notes=notes)


# --- text files -------------------------------------------------------------------------


def text_rows(name: str, text: str, delimiter: str, budget: CellBudget | None = None,
              progress: Progress | None = None) -> list[list[str]]:
    """The rows of CSV text (trailing blank cells dropped); a damaged file raises a located InputError.

    A double quote that is opened and never closed makes the csv module join the lines after
    it into one cell, silently. A cell holding line breaks is therefore taken for such a
    merge when it runs to the end of the file unclosed, spans 10 lines or more, or holds the
    delimiter on one of its later lines (those lines were rows). A cell over the csv
    module's field limit (131,072 characters) is reported the same way.
    """
    rows: list[list[str]] = []
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter)
    line = 0
    i = 0
    tail = ""  # the last cell of the last record
    width = 0
    try:
        for i, row in enumerate(reader, start=1):
            if row:
                tail, width = row[-1], len(row)
            if reader.line_num - line > 1:  # this record spans lines: a quoted cell holds line breaks
                for j, cell in enumerate(row):
                    lines = cell.splitlines()
                    if len(lines) >= 10 or any(delimiter in part for part in lines[1:]):
                        raise _open_quote(name, i, j, cell, rows)
            line = reader.line_num
            while row and not row[-1].strip():
                row.pop()
            if budget is not None:
                budget.take(len(row), None, i)
            rows.append(row)
            if progress and i % 50_000 == 0:
                progress("reading rows", i, None)
    except csv.Error as exc:
        if "field limit" in str(exc):
            raise InputError(Finding(
                f"A cell is longer than timetabler reads (more than {csv.field_size_limit():,} characters): most "
                "often a double quote (\") opened and never closed, which joins all the lines after it into one cell.",
                where=Location(name, None, i + 1), found=f"line {reader.line_num}",
                suggestion="Remove the stray double quote, or enclose the whole cell in double quotes.")) from None
        raise InputError(Finding("The text file cannot be read as CSV.", where=Location(name, None, i + 1),
                                 found=str(exc), suggestion="Save it again as CSV from your spreadsheet program.")) from None
    if ("\n" in tail or "\r" in tail) and not text.rstrip().endswith('"'):
        raise _open_quote(name, i, width - 1, tail, rows)  # the file ends inside a quoted cell, never closed
    return rows


def _open_quote(name: str, row: int, column: int, cell: str, rows: list[list[str]] | None = None) -> InputError:
    """The finding for a cell that swallowed the lines after it, its column named as elsewhere:
    the letter a spreadsheet shows and the header above it (from the first row of two or more
    cells read so far, the usual header row; the letter alone when there is none)."""
    from .header_detection import column_letter  # header_detection imports this module

    headers = next((r for r in rows or [] if sum(1 for c in r if c.strip()) >= 2), [])
    header = headers[column].strip() if column < len(headers) else ""
    label = f"{column_letter(column)} ({header})" if header else column_letter(column)
    return InputError(Finding(
        "A cell runs over several lines: a double quote (\") that is opened and never closed has "
        "joined the following lines into one cell, and their rows would be lost.",
        where=Location(name, None, row, label),
        found=cell[:60].replace("\r", "").replace("\n", " | ") + " ...",
        suggestion="Remove the stray double quote in this row, or enclose the whole cell in double quotes.",
    ))


def decode(name: str, data: bytes) -> tuple[str, str]:
    """Text of a CSV file and the name of the encoding found.

    Order: a byte-order mark (UTF-8, UTF-16, UTF-32) decides; else UTF-16 without a mark is
    recognised by zero bytes in every other position (ASCII text in UTF-16); else strict
    UTF-8; else Windows-1252 (the usual encoding of exports from Excel on Windows); else
    Latin-1, which accepts any bytes.
    """
    boms = (
        (codecs.BOM_UTF32_LE, "utf-32-le", "UTF-32 with byte-order mark"),
        (codecs.BOM_UTF32_BE, "utf-32-be", "UTF-32 with byte-order mark"),
        (codecs.BOM_UTF8, "utf-8", "UTF-8 with byte-order mark"),
        (codecs.BOM_UTF16_LE, "utf-16-le", "UTF-16 (little-endian) with byte-order mark"),
        (codecs.BOM_UTF16_BE, "utf-16-be", "UTF-16 (big-endian) with byte-order mark"),
    )
    for bom, codec, label in boms:
        if data.startswith(bom):
            return _strict(name, data[len(bom):], codec, label), label
    sample = data[:8192]
    codec = utf16_without_mark(sample)
    if codec is not None:
        label = "UTF-16 (little-endian)" if codec == "utf-16-le" else "UTF-16 (big-endian)"
        return _strict(name, data, codec, label), label
    if b"\x00" in sample:
        raise InputError(
            Finding(
                "The file is not a spreadsheet or text file that timetabler can read (it holds binary data).",
                where=Location(name),
                expected=f"one of {SUPPORTED}",
                suggestion="Export the enrolments from your spreadsheet program as .xlsx or .csv.",
            )
        )
    for codec, label in (("utf-8", "UTF-8"), ("cp1252", "Windows-1252"), ("latin-1", "Latin-1")):
        try:
            return data.decode(codec), label
        except UnicodeDecodeError:
            continue
    raise AssertionError("latin-1 decodes any bytes")  # pragma: no cover


def utf16_without_mark(sample: bytes) -> str | None:
    """``utf-16-le`` or ``utf-16-be`` when the bytes look like UTF-16 text without a byte-order mark, else None.

    Mostly-ASCII text in UTF-16 has a zero byte in every other position: in the odd
    positions for little-endian, the even ones for big-endian. The web page's upload check
    calls this too, so that it accepts what the command line reads.

    >>> utf16_without_mark("Student,Exam".encode("utf-16-le")), utf16_without_mark(b"Student,Exam")
    ('utf-16-le', None)
    """
    sample = sample[:8192]
    if len(sample) < 4:
        return None
    even, odd = sample[0::2], sample[1::2]
    zeros_even = even.count(0) / max(len(even), 1)
    zeros_odd = odd.count(0) / max(len(odd), 1)
    if zeros_odd > 0.4 and zeros_even < 0.05:
        return "utf-16-le"
    if zeros_even > 0.4 and zeros_odd < 0.05:
        return "utf-16-be"
    return None


def _strict(name: str, data: bytes, codec: str, label: str) -> str:
    try:
        return data.decode(codec)
    except UnicodeDecodeError as exc:
        raise InputError(
            Finding(
                f"The file starts as {label} text but has bytes that are not valid in it.",
                where=Location(name),
                found=f"byte {exc.start}",
                suggestion="Save it again as 'CSV UTF-8' from your spreadsheet program.",
            )
        ) from None


def sniff_delimiter(text: str, prefer: str = ",") -> str:
    """The delimiter among comma, semicolon, tab and pipe that splits the lines most consistently.

    For each candidate the lines (up to 200 non-blank ones) are split as CSV; among the
    lines it splits into two or more fields, the most common number of fields is found, and
    the score is the share of all lines having that number, then the number itself. Title
    rows above the header (one field) do not count against a delimiter. With no candidate splitting anything, ``prefer`` is returned.
    """
    lines = [line for line in text.splitlines()[:400] if line.strip()][:200]
    best: tuple[float, int, int] | None = None
    choice = prefer
    lines = [line[:4096] for line in lines]  # enough to count fields; a huge cell cannot stop the count
    for d in DELIMITERS:
        try:
            counts = [len(r) for r in csv.reader(lines, delimiter=d)]
        except csv.Error:
            continue
        split = [c for c in counts if c >= 2]
        if not split:
            continue
        mode, freq = Counter(split).most_common(1)[0]
        score = (freq / len(counts), mode, 1 if d == prefer else 0)
        if best is None or score > best:
            best, choice = score, d
    return choice


# --- workbooks --------------------------------------------------------------------------


def fill_merged(sheet: RawSheet, ranges: list[tuple[int, int, int, int]]) -> None:
    """Give every cell of a merged range the value shown in it (its top-left cell's).

    Rows touched are replaced by new lists (absent rows are one shared empty tuple).
    """
    for r1, c1, r2, c2 in ranges:
        if r1 >= len(sheet.rows) or (r2 - r1 + 1) * (c2 - c1 + 1) > 100_000:
            continue
        top = sheet.rows[r1]
        value = top[c1] if c1 < len(top) else None
        if value is None:
            continue
        for r in range(r1, min(r2, len(sheet.rows) - 1) + 1):
            row = list(sheet.rows[r])
            if len(row) <= c2:
                row.extend([None] * (c2 + 1 - len(row)))
            for c in range(c1, c2 + 1):
                row[c] = value
            sheet.rows[r] = row


def _read_ods(name: str, data: bytes, budget: CellBudget, progress: Progress | None) -> list[RawSheet]:
    import pandas as pd

    try:
        frames = pd.read_excel(io.BytesIO(data), engine="odf", header=None, sheet_name=None, dtype=object)
    except ImportError:
        raise InputError(
            Finding(
                "Reading .ods files needs the package 'odfpy', which is not installed.",
                where=Location(name),
                suggestion="Install it (pip install odfpy) or save the file as .xlsx.",
            )
        ) from None
    except Exception as exc:  # noqa: BLE001
        raise InputError(
            Finding(
                "The OpenDocument spreadsheet is damaged.",
                where=Location(name),
                found=f"{type(exc).__name__}: {exc}",
                suggestion="Open it and save it again, or save it as .xlsx.",
            )
        ) from None
    sheets = []
    for sheet_name, frame in frames.items():
        rows = []
        for i, values in enumerate(frame.itertuples(index=False, name=None), start=1):
            row = [None if _is_nan(v) else v for v in values]
            while row and (row[-1] is None or (isinstance(row[-1], str) and not row[-1].strip())):
                row.pop()
            budget.take(len(row), str(sheet_name), i)
            rows.append(row)
        while rows and not rows[-1]:
            rows.pop()
        sheets.append(RawSheet(visible(str(sheet_name)), rows))
    return sheets


def _is_nan(value: object) -> bool:
    return isinstance(value, float) and value != value
