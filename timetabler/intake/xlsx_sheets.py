"""Read the cells of an ``.xlsx`` workbook from its XML parts: sparsely, within limits, every fault located.

openpyxl's read-only mode pads every missing row to the width a sheet declares (a sheet
that declares ``A1:XFD1048576`` and holds one cell in its last row becomes 17 billion
empty cells) and raises from inside its row iterator on a malformed cell, where no
file, sheet or cell can be named. So intake reads the parts itself; openpyxl still gives
the rules for which number formats show dates and the serial-date conversion, so values
come out as openpyxl gives them:

* ``xl/workbook.xml`` and its relationships: the sheets in order, their names and
  visibility, and the 1904 date system;
* ``xl/styles.xml``: which cell styles show dates, times or durations;
* ``xl/sharedStrings.xml``: the shared texts;
* each worksheet part, streamed through expat (no document type declarations, so no
  entities): only the cells present are kept; the declared dimension is ignored; merged
  ranges and formulas with no stored value are noted on the way.

Limits (:class:`~timetabler.intake.limits.Limits`): the shared-strings part and the sheet
parts are measured (their unpacked sizes in the archive's table of contents, which the zip
reader enforces) before any parsing; a cell's text may not exceed 32,767 characters, the
most an Excel cell holds; cells, rows up to the last filled one, and characters of text
are counted against the budget as they stream in. A sheet is at most 1,048,576 rows by
16,384 columns (``XFD``), Excel's sheet size (both figures from Microsoft's "Excel
specifications and limits", as recalled); a reference beyond that is a damaged file.
"""

from __future__ import annotations

import datetime as _dt
import math
import posixpath
import re
import zipfile
import zlib
from xml.parsers import expat

from ..errors import Finding, InputError, visible
from ..model import Location
from ..progress import StepProgress
from .limits import CellBudget, Limits, mib

MAX_ROW = 1_048_576
MAX_COLUMN = 16_384
#: Rows of blanks above a filled row beyond which a warning names the far row (a stray cell far down the sheet).
FAR_GAP = 100_000

_REF = re.compile(r"([A-Z]{1,3})([0-9]{1,7})")
_NUMBER = re.compile(r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
_REL_WORKSHEET = "/worksheet"
_EMPTY: tuple = ()  # every absent row is this one immutable object: a gap of a million rows costs 8 MB

Progress = StepProgress  # (what, done, total): see timetabler.progress


class _Overlong:
    """A shared text longer than a cell may hold; an error only when a cell uses it."""

    __slots__ = ("length",)

    def __init__(self, length: int):
        self.length = length


def _local(name: str) -> str:
    return name.rpartition(":")[2]


def _damaged(name: str, message: str, sheet: str | None = None, row: int | None = None,
             column: str | None = None, found: object = None, expected: str | None = None) -> InputError:
    return InputError(Finding(
        message, where=Location(name, sheet, row, column), found=None if found is None else str(found)[:80],
        expected=expected,
        suggestion="The file is damaged: open it in your spreadsheet program and save it again as .xlsx, "
        "or export it afresh."))


def _parser(on_start, on_end, on_chars) -> expat.XMLParserType:
    p = expat.ParserCreate()
    p.buffer_text = True
    p.buffer_size = 1 << 16
    p.StartElementHandler = on_start
    p.EndElementHandler = on_end
    if on_chars is not None:
        p.CharacterDataHandler = on_chars

    def no_doctype(*_args):  # a workbook part never has one; entities could only be a trick
        raise _NoDoctype()

    p.StartDoctypeDeclHandler = no_doctype
    p.EntityDeclHandler = no_doctype
    return p


class _NoDoctype(Exception):
    pass


def _feed(archive: zipfile.ZipFile, part: str, parser: expat.XMLParserType) -> None:
    """Stream one part through ``parser``; damage (zip, deflate, XML) raises the original exception."""
    with archive.open(part) as stream:
        while True:
            chunk = stream.read(1 << 20)
            if not chunk:
                break
            parser.Parse(chunk, False)
    parser.Parse(b"", True)


_FAULTS = (zipfile.BadZipFile, zlib.error, expat.ExpatError, _NoDoctype, EOFError, OSError, ValueError)


def _small_part(name: str, archive: zipfile.ZipFile, part: str, cap: int = 32 * 2**20) -> bytes | None:
    try:
        info = archive.getinfo(part)
    except KeyError:
        return None
    if info.file_size > cap:
        raise InputError(Finding(
            "A part of the workbook that should be small is very large; the file was not read.",
            where=Location(name), found=f"{part}: {mib(info.file_size)}", expected=f"at most {mib(cap)}",
            suggestion="Open it in your spreadsheet program and save it again as .xlsx."))
    try:
        return archive.read(part)
    except _FAULTS as exc:
        raise _damaged(name, f"The workbook's part {part} cannot be unpacked.", found=f"{type(exc).__name__}: {exc}") from None


def _tree(name: str, archive: zipfile.ZipFile, part: str):
    data = _small_part(name, archive, part)
    if data is None:
        return None
    from defusedxml import ElementTree

    try:
        return ElementTree.fromstring(data)
    except Exception as exc:  # noqa: BLE001 - defusedxml and expat raise several types for bad XML
        raise _damaged(name, f"The workbook's part {part} is not well-formed XML.", found=f"{type(exc).__name__}: {exc}") from None


def _target(base: str, target: str) -> str:
    if target.startswith("/"):
        return target.lstrip("/")
    return posixpath.normpath(posixpath.join(posixpath.dirname(base), target))


class _Workbook:
    """The workbook part: sheets (name, part or None, state, kind) and the date system."""

    def __init__(self, name: str, archive: zipfile.ZipFile):
        part = "xl/workbook.xml"  # where every producer puts it; the package relationships say for sure
        package = _tree(name, archive, "_rels/.rels") if "_rels/.rels" in archive.NameToInfo else None
        for rel in package if package is not None else ():
            if rel.get("Type", "").endswith("/officeDocument") and _target("", rel.get("Target", "")) in archive.NameToInfo:
                part = _target("", rel.get("Target", ""))
                break
        workbook = _tree(name, archive, part)
        if workbook is None:
            raise _damaged(name, f"The workbook has no workbook part ({part}).")
        folder, base = posixpath.split(part)
        rels = _tree(name, archive, posixpath.join(folder, "_rels", base + ".rels"))
        targets: dict[str, tuple[str, str]] = {}
        for rel in rels if rels is not None else ():
            targets[rel.get("Id", "")] = (_target(part, rel.get("Target", "")), rel.get("Type", ""))
        self.shared_part = next((t for t, kind in targets.values() if kind.endswith("/sharedStrings")),
                                "xl/sharedStrings.xml")
        self.styles_part = next((t for t, kind in targets.values() if kind.endswith("/styles")), "xl/styles.xml")
        self.date1904 = False
        self.sheets: list[tuple[str, str | None, str, str]] = []
        for element in workbook.iter():
            tag = element.tag.rpartition("}")[2]
            if tag == "workbookPr":
                self.date1904 = element.get("date1904", "").strip().lower() in ("1", "true")
            elif tag == "sheet":
                rid = next((v for k, v in element.attrib.items() if k.rpartition("}")[2] == "id"), "")
                part, kind = targets.get(rid, (None, ""))
                self.sheets.append((visible(element.get("name", "")), part, element.get("state", "visible"), kind))


def _date_styles(name: str, archive: zipfile.ZipFile, part: str) -> tuple[set[int], set[int]]:
    """Indexes of the cell styles (``s`` attributes) that show dates or times, and of those showing durations."""
    from openpyxl.styles.numbers import BUILTIN_FORMATS, is_date_format, is_timedelta_format

    styles = _tree(name, archive, part)
    dates: set[int] = set()
    durations: set[int] = set()
    if styles is None:
        return dates, durations
    custom: dict[int, str] = {}
    for element in styles.iter():
        if element.tag.rpartition("}")[2] == "numFmt":
            try:
                custom[int(element.get("numFmtId", ""))] = element.get("formatCode", "")
            except ValueError:
                continue
    for element in styles.iter():
        if element.tag.rpartition("}")[2] != "cellXfs":
            continue
        for i, xf in enumerate(x for x in element if x.tag.rpartition("}")[2] == "xf"):
            try:
                number = int(xf.get("numFmtId", "0"))
            except ValueError:
                continue
            code = custom.get(number, BUILTIN_FORMATS.get(number))
            if is_date_format(code):
                dates.add(i)
            if is_timedelta_format(code):
                durations.add(i)
        break
    return dates, durations


def _shared_strings(name: str, archive: zipfile.ZipFile, part: str, limits: Limits, budget: CellBudget) -> list:
    try:
        info = archive.getinfo(part)
    except KeyError:
        return []
    if info.file_size > limits.max_shared_strings_bytes:
        raise InputError(Finding(
            "The workbook's shared text is larger than timetabler reads; the file was not read.",
            where=Location(name), found=f"{mib(info.file_size)} of shared text",
            expected=f"at most {mib(limits.max_shared_strings_bytes)}",
            suggestion="Keep only the columns needed (attendee and event) and save a copy; check for cells "
            "holding whole documents."))
    strings: list = []
    cap = limits.max_cell_chars
    state = {"depth_si": False, "phonetic": 0, "in_t": False, "parts": [], "length": 0}
    parts: list[str] = state["parts"]  # type: ignore[assignment]

    def start(tag: str, attrs: dict) -> None:
        tag = _local(tag)
        if tag == "si":
            state["depth_si"] = True
            parts.clear()
            state["length"] = 0
        elif tag == "rPh":
            state["phonetic"] += 1
        elif tag == "t" and state["depth_si"] and not state["phonetic"]:
            state["in_t"] = True

    def end(tag: str) -> None:
        tag = _local(tag)
        if tag == "t":
            state["in_t"] = False
        elif tag == "rPh":
            state["phonetic"] -= 1
        elif tag == "si":
            state["depth_si"] = False
            length = state["length"]
            if length > cap:
                strings.append(_Overlong(length))
            else:
                text = "".join(parts).replace("x005F_", "")  # as openpyxl reads them
                budget.take_text(len(text))
                strings.append(text)
            if len(strings) % 1024 == 0:
                budget.take(1024)  # each shared text costs a cell: millions of tiny ones are memory too

    def chars(data: str) -> None:
        if state["in_t"]:
            state["length"] += len(data)
            if state["length"] <= cap:
                parts.append(data)

    try:
        _feed(archive, part, _parser(start, end, chars))
    except _FAULTS as exc:
        raise _damaged(name, f"The workbook's shared text ({part}) is damaged.",
                       found=f"{type(exc).__name__}: {exc}") from None
    return strings


class _SheetReader:
    """One worksheet part streamed into rows; every malformed cell raises a located InputError."""

    def __init__(self, name: str, title: str, shared: list, dates: set[int], durations: set[int],
                 epoch: _dt.datetime, limits: Limits, budget: CellBudget, progress: Progress | None):
        self.name, self.title, self.shared = name, title, shared
        self.dates, self.durations, self.epoch = dates, durations, epoch
        self.cap = limits.max_cell_chars
        self.budget, self.progress = budget, progress
        self.rows: dict[int, list] = {}
        self.last = 0  # the last row number holding a value
        self.gap: tuple[int, int] | None = None  # (blank rows, the row below them): the widest gap
        self.merges: list[tuple[int, int, int, int]] = []
        self.uncalculated: list[str] = []
        self.row_number = 0
        self.cells: list[tuple[int, object]] = []
        self.column = 0
        self.in_cell = False
        self.collecting = False
        self.in_inline = False
        self.phonetic = 0
        self.text: list[str] = []
        self.length = 0
        self.value: str | None = None
        self.inline: list[str] | None = None
        self.formula = False
        self.kind = "n"
        self.style: str | None = None
        self.ref: str | None = None
        self.rows_seen = 0

    # -- locating ---------------------------------------------------------------------------

    def _fault(self, message: str, found: object = None, expected: str | None = None, column: str | None = None):
        return _damaged(self.name, message, self.title, self.row_number or None,
                        column if column is not None else self._letter(), found, expected)

    def _letter(self) -> str | None:
        if self.ref:
            return self.ref
        return _column_letter(self.column) if self.column else None

    # -- expat handlers ---------------------------------------------------------------------

    def start(self, tag: str, attrs: dict) -> None:
        if ":" in tag:
            tag = _local(tag)
        if tag == "c":
            self.in_cell = True
            self.kind = attrs.get("t", "n")
            self.style = attrs.get("s")
            self.value = None
            self.inline = None
            self.formula = False
            ref = attrs.get("r")
            self.ref = ref
            if ref is None:
                self.column += 1
            else:
                m = _REF.fullmatch(ref)
                column = _column_number(m.group(1)) if m else 0
                row = int(m.group(2)) if m else 0
                if not m or not 1 <= column <= MAX_COLUMN or not 1 <= row <= MAX_ROW:
                    raise self._fault("A cell has an impossible reference.", found=ref,
                                      expected=f"a column from A to XFD and a row from 1 to {MAX_ROW:,}, e.g. B7")
                self.column = column
        elif tag == "v" or (tag == "t" and self.in_inline and not self.phonetic):
            if self.in_cell:
                self.collecting = True
                self.text = []
                if tag == "v":
                    self.length = 0
        elif tag == "row":
            r = attrs.get("r")
            if r is None:
                self.row_number += 1
            elif r.isascii() and r.isdigit() and 1 <= int(r) <= MAX_ROW:
                self.row_number = int(r)
            else:
                self.row_number = 0
                raise _damaged(self.name, "A row has an impossible row number.", self.title, None, None, r,
                               f"a whole number from 1 to {MAX_ROW:,}")
            self.cells = []
            self.column = 0
        elif tag == "is":
            if self.in_cell:
                self.in_inline = True
                self.inline = []
                self.length = 0
        elif tag == "rPh":
            self.phonetic += 1
        elif tag == "f":
            self.formula = True
        elif tag == "mergeCell":
            self._merge(attrs.get("ref", ""))

    def chars(self, data: str) -> None:
        if self.collecting:
            self.length += len(data)
            if self.length > self.cap:
                raise self._fault("A cell holds more text than a spreadsheet cell can; the file was not read.",
                                  found=f"more than {self.cap:,} characters",
                                  expected=f"at most {self.cap:,} characters in a cell")
            self.text.append(data)

    def end(self, tag: str) -> None:
        if ":" in tag:
            tag = _local(tag)
        if tag == "c":
            self._cell()
            self.in_cell = False
            self.ref = None
        elif tag == "v":
            if self.collecting:
                self.value = "".join(self.text)
                self.collecting = False
        elif tag == "t":
            if self.collecting and self.inline is not None:
                self.inline.append("".join(self.text))
                self.collecting = False
        elif tag == "row":
            self._row()
        elif tag == "is":
            self.in_inline = False
        elif tag == "rPh":
            self.phonetic -= 1

    # -- cells and rows ---------------------------------------------------------------------

    def _cell(self) -> None:
        kind, v = self.kind, self.value
        value: object = None
        if kind == "inlineStr":
            if self.inline is not None:
                value = "".join(self.inline)
                self.budget.take_text(len(value))
        elif v is None or v == "":
            if self.formula and self.ref:
                self.uncalculated.append(self.ref)
            value = None
        elif kind == "n":
            value = self._number(v)
        elif kind == "s":
            value = self._shared(v)
        elif kind == "str" or kind == "e":
            value = v
            self.budget.take_text(len(v))
        elif kind == "b":
            if v.strip() not in ("0", "1"):
                raise self._fault("A true/false cell holds something else.", found=v, expected="0 or 1")
            value = v.strip() == "1"
        elif kind == "d":
            value = self._iso_date(v)
        else:
            value = v
            self.budget.take_text(len(v))
        if value is not None and self.row_number:
            self.cells.append((self.column, value))

    def _number(self, v: str) -> object:
        if v.isascii() and v.isdigit():
            number: object = int(v)
        elif _NUMBER.fullmatch(v.strip()):
            text = v.strip()
            number = float(text) if ("." in text or "e" in text or "E" in text) else int(text)
            if isinstance(number, float) and not math.isfinite(number):
                raise self._fault("A number cell holds a number too large for a spreadsheet.", found=v)
        else:
            raise self._fault("A number cell holds text that is not a number.", found=v, expected="a number")
        if self.style is not None and self.dates:
            try:
                style = int(self.style)
            except ValueError:
                return number
            if style in self.dates:
                from openpyxl.utils.datetime import from_excel

                try:
                    return from_excel(number, self.epoch, timedelta=style in self.durations)
                except (OverflowError, ValueError):
                    raise self._fault("A date cell holds a number that is no date.", found=v,
                                      expected="a date serial number of years 1900 to 9999") from None
        return number

    def _shared(self, v: str) -> object:
        text = v.strip()
        index = int(text) if text.isascii() and text.isdigit() else -1
        if not 0 <= index < len(self.shared):
            raise self._fault("A cell refers to a shared text that the workbook does not hold.", found=v,
                              expected=f"a shared-text number from 0 to {len(self.shared) - 1}" if self.shared
                              else "no shared-text cells (the workbook holds no shared text)")
        value = self.shared[index]
        if isinstance(value, _Overlong):
            raise self._fault("A cell holds more text than a spreadsheet cell can; the file was not read.",
                              found=f"{value.length:,} characters", expected=f"at most {self.cap:,} characters in a cell")
        return value

    def _iso_date(self, v: str) -> object:
        from openpyxl.utils.datetime import from_ISO8601

        try:
            return from_ISO8601(v.strip())
        except (ValueError, TypeError, OverflowError, AttributeError):
            raise self._fault("A date cell holds text that is not a date.", found=v,
                              expected="a date such as 2027-05-03 or 2027-05-03T09:30:00") from None

    def _row(self) -> None:
        r = self.row_number
        cells = self.cells
        self.cells = []
        if not r or not cells:
            return
        width = 0
        for column, value in cells:
            if column > width and not (type(value) is str and not value.strip()):
                width = column
        if not width:
            return
        row: list = [None] * width
        for column, value in cells:
            if column <= width:
                row[column - 1] = value
        if r in self.rows:  # the same row twice: the later cells are written over the earlier
            before = self.rows[r]
            if len(before) < width:
                before.extend([None] * (width - len(before)))
            for i, value in enumerate(row):
                if value is not None:
                    before[i] = value
            self.budget.take(width, self.title, r)
            return
        self.rows[r] = row
        taken = width
        if r > self.last:
            blank = r - self.last - 1
            if blank > FAR_GAP and (self.gap is None or blank > self.gap[0]):
                self.gap = (blank, r)
            taken += blank + 1  # each row up to the last costs a cell: a gap of a million rows is memory too
            self.last = r
        self.budget.take(taken, self.title, r)
        self.rows_seen += 1
        if self.progress and self.rows_seen % 50_000 == 0:
            self.progress(f"reading sheet '{self.title}'", self.rows_seen, None)

    def _merge(self, ref: str) -> None:
        first, _, last = ref.partition(":")
        a, b = _REF.fullmatch(first), _REF.fullmatch(last or first)
        if not a or not b:
            return  # a merged range is a convenience; a bad one is ignored
        r1, c1, r2, c2 = int(a.group(2)), _column_number(a.group(1)), int(b.group(2)), _column_number(b.group(1))
        if 1 <= r1 <= r2 <= MAX_ROW and 1 <= c1 <= c2 <= MAX_COLUMN:
            self.merges.append((r1 - 1, c1 - 1, r2 - 1, c2 - 1))

    def rows_list(self) -> list:
        out: list = [_EMPTY] * self.last
        for r, row in self.rows.items():
            if r <= self.last:
                out[r - 1] = row
        return out


def read_xlsx(name: str, archive: zipfile.ZipFile, limits: Limits, budget: CellBudget,
              progress: Progress | None, notes: list[Finding]):
    """The worksheets of an .xlsx archive as :class:`~timetabler.intake.file_types.RawSheet` objects."""
    from openpyxl.utils.datetime import CALENDAR_MAC_1904, CALENDAR_WINDOWS_1900

    from .file_types import RawSheet, fill_merged

    book = _Workbook(name, archive)
    worksheets = [(title, part, state) for title, part, state, kind in book.sheets
                  if part is not None and kind.endswith(_REL_WORKSHEET) and part in archive.NameToInfo]
    skipped = [title for title, part, state, kind in book.sheets if (title, part, state) not in worksheets]
    if not worksheets:
        raise InputError(Finding(
            "The workbook has no sheet of cells that timetabler can read.", where=Location(name),
            found=("only " + ", ".join(f"'{t}'" for t in skipped[:5]) + " (chart sheets or missing parts)") if skipped
            else "no sheets at all",
            expected="a worksheet with a header row and enrolment rows",
            suggestion="Open it in your spreadsheet program, check that the enrolments are on a worksheet, and save it again."))
    for title in skipped[:5]:
        notes.append(Finding(f"The sheet '{title}' is a chart sheet or has no cells in the file; it was not read.",
                             where=Location(name, title), severity="warning"))
    total = sum(archive.NameToInfo[part].file_size for _, part, _ in worksheets)
    if total > limits.max_sheet_bytes:
        raise InputError(Finding(
            "The workbook's sheets unpack to more data than timetabler reads; the file was not read.",
            where=Location(name), found=f"{mib(total)} of sheet data", expected=f"at most {mib(limits.max_sheet_bytes)}",
            suggestion="Delete unused sheets, columns and rows (a runaway export often fills a whole sheet), "
            "and save a copy."))
    shared = _shared_strings(name, archive, book.shared_part, limits, budget)
    dates, durations = _date_styles(name, archive, book.styles_part)
    epoch = CALENDAR_MAC_1904 if book.date1904 else CALENDAR_WINDOWS_1900
    sheets = []
    for title, part, state in worksheets:
        reader = _SheetReader(name, title, shared, dates, durations, epoch, limits, budget, progress)
        try:
            _feed(archive, part, _parser(reader.start, reader.end, reader.chars))
        except _FAULTS as exc:
            where = f"after row {reader.last}" if reader.last else "before its first row"
            raise _damaged(name, f"The sheet is damaged {where}: its data cannot be read.", title,
                           reader.row_number or None, None, f"{type(exc).__name__}: {exc}") from None
        sheet = RawSheet(title, reader.rows_list(), hidden=state != "visible")
        fill_merged(sheet, reader.merges)
        sheets.append(sheet)
        if reader.gap is not None:
            blank, row = reader.gap
            notes.append(Finding(
                f"Row {row:,} comes after {blank:,} blank rows; it was read, but a cell far below the data is "
                "often typed there by mistake.", where=Location(name, title, row), severity="warning",
                suggestion="Check that row, and delete it if it is not an enrolment."))
        if reader.uncalculated:
            cells = reader.uncalculated
            notes.append(Finding(
                f"{len(cells)} formula cells have no calculated value (the file was not saved by a spreadsheet "
                "program) and read as blank.",
                where=Location(name, title, None, None), found=", ".join(cells[:5]) + (", ..." if len(cells) > 5 else ""),
                suggestion="Open the file in your spreadsheet program and save it, so the values are stored.",
                severity="warning"))
    return sheets


def _column_number(letters: str) -> int:
    n = 0
    for ch in letters:
        n = n * 26 + (ord(ch) - 64)
    return n


def _column_letter(number: int) -> str:
    letters = ""
    while number:
        number, r = divmod(number - 1, 26)
        letters = chr(65 + r) + letters
    return letters
