"""Size limits, checked before and while reading, so a runaway export or a zip bomb cannot eat the machine.

An ``.xlsx`` or ``.ods`` file is a zip archive of XML. Its size on disk says little about
the memory it takes to read: a few hundred kilobytes can unpack to gigabytes. So the
archive's table of contents is checked first (total unpacked size, and the packing ratio
of each member), and the cells are counted as rows stream in. The defaults fit a large
institution (a university-wide session has some hundreds of thousands of enrolment rows)
on an ordinary laptop; ``ReadOptions.limits`` changes them.
"""

from __future__ import annotations

import io
import zipfile
from dataclasses import dataclass

from ..errors import Finding, InputError
from ..model import Location


@dataclass(frozen=True)
class Limits:
    """The largest input intake will read."""

    max_file_bytes: int = 200 * 2**20  # 200 MiB on disk
    max_unpacked_bytes: int = 2 * 2**30  # 2 GiB of XML inside an .xlsx/.ods
    max_packing_ratio: float = 200.0  # unpacked/packed size of one member, above 1 MiB unpacked
    max_cells: int = 5_000_000  # cells up to the last filled cell of each row, all sheets (measured: 5M cells of CSV peak at 0.7 GiB)
    # An .xlsx: each row up to a sheet's last filled row costs one cell too, and so does each shared text.
    max_cell_chars: int = 32_767  # the most an Excel cell holds (Microsoft, "Excel specifications and limits"; recalled)
    max_text_chars: int = 2**27  # characters of cell text kept in memory, all sheets (about 128 million)
    max_shared_strings_bytes: int = 128 * 2**20  # the shared-text part of an .xlsx, unpacked, checked before parsing
    max_sheet_bytes: int = 1 * 2**30  # the worksheet parts of an .xlsx together, unpacked, checked before parsing


def mib(n: float) -> str:
    return f"{n / 2**20:,.1f} MiB"


def check_file_size(name: str, size: int, limits: Limits) -> None:
    if size > limits.max_file_bytes:
        raise InputError(
            Finding(
                "The file is larger than timetabler reads.",
                where=Location(name),
                found=mib(size),
                expected=f"at most {mib(limits.max_file_bytes)}",
                suggestion="Check that this is the enrolment export you meant; keep only the columns needed "
                "(attendee and event) and save again.",
            )
        )


def check_archive(name: str, data: bytes, limits: Limits) -> zipfile.ZipFile:
    """Open a zip-based workbook after checking its table of contents against the limits."""
    try:
        archive = zipfile.ZipFile(io.BytesIO(data))
        members = archive.infolist()
    except (zipfile.BadZipFile, OSError) as exc:
        raise InputError(
            Finding(
                "The workbook is damaged: it cannot be opened as a zip archive.",
                where=Location(name),
                found=str(exc),
                suggestion="Open it in your spreadsheet program and save it again, or export it afresh.",
            )
        ) from None
    total = sum(m.file_size for m in members)
    if total > limits.max_unpacked_bytes:
        raise InputError(
            Finding(
                "The workbook unpacks to more data than timetabler reads.",
                where=Location(name),
                found=mib(total),
                expected=f"at most {mib(limits.max_unpacked_bytes)} unpacked",
                suggestion="Save a copy with only the sheets needed.",
            )
        )
    for m in members:
        if m.file_size > 2**20 and m.file_size > limits.max_packing_ratio * max(m.compress_size, 1):
            raise InputError(
                Finding(
                    "The workbook holds a part that unpacks to far more than its packed size; "
                    "it was not read, to protect this computer.",
                    where=Location(name),
                    found=f"{m.filename}: {mib(m.compress_size)} packed, {mib(m.file_size)} unpacked",
                    expected=f"a packing ratio of at most {limits.max_packing_ratio:g}",
                    suggestion="If the file is genuine, save it again from your spreadsheet program.",
                )
            )
    return archive


class CellBudget:
    """Counts cells as rows stream in and stops the reading when the limit is passed."""

    def __init__(self, name: str, limits: Limits):
        self.name = name
        self.limit = limits.max_cells
        self.used = 0
        self.text_limit = limits.max_text_chars
        self.text_used = 0

    def take_text(self, chars: int) -> None:
        """Count characters of cell text kept; stop the reading when they pass the limit."""
        self.text_used += chars
        if self.text_used > self.text_limit:
            raise InputError(
                Finding(
                    "The file holds more text than timetabler reads; reading stopped.",
                    where=Location(self.name),
                    found=f"more than {self.text_limit:,} characters in its cells",
                    expected=f"at most {self.text_limit:,} characters over all sheets",
                    suggestion="Keep only the columns needed (attendee and event) and save a copy; check for "
                    "cells holding whole documents.",
                )
            )

    def take(self, cells: int, sheet: str | None = None, row: int | None = None) -> None:
        self.used += cells
        if self.used > self.limit:
            raise InputError(
                Finding(
                    "The file has more cells than timetabler reads; reading stopped.",
                    where=Location(self.name, sheet, row),
                    found=f"more than {self.limit:,} cells",
                    expected=f"at most {self.limit:,} cells over all sheets",
                    suggestion="Delete unused sheets, columns and rows (a runaway export often fills "
                    "a whole sheet), or keep only the attendee and event columns.",
                )
            )


def check_ods_cells(name: str, archive: zipfile.ZipFile, limits: Limits) -> None:
    """Refuse an .ods whose repeated rows and columns would expand past the cell limit, before expanding them.

    An OpenDocument sheet writes a run of equal cells or rows once, with a repeat count
    (``table:number-rows-repeated``, ``table:number-columns-repeated``); a file of 2 KB may
    so declare billions of cells, and the reader (pandas' ``odf`` engine) expands them all,
    padding every row to the widest. This pass streams ``content.xml`` through expat and
    works out what the reader would build: per sheet, the rows up to the last filled one
    times the widest row up to its last filled cell.
    """
    from xml.parsers import expat

    state = {"sheet_rows": 0, "blank_rows": 0, "width": 0, "pos": 0, "row_width": 0, "repeat": 1,
             "cell_repeat": 1, "filled": False, "in_cell": False, "total": 0}

    def count(attrs: dict, what: str) -> int:
        for k, v in attrs.items():
            if k.rpartition(":")[2] == what:
                try:
                    return max(1, int(v))
                except ValueError:
                    return 1
        return 1

    def start(tag: str, attrs: dict) -> None:
        tag = tag.rpartition(":")[2]
        if tag == "table":
            state.update(sheet_rows=0, blank_rows=0, width=0)
        elif tag == "table-row":
            state.update(pos=0, row_width=0, repeat=count(attrs, "number-rows-repeated"))
        elif tag in ("table-cell", "covered-table-cell"):
            state.update(in_cell=True, cell_repeat=count(attrs, "number-columns-repeated"),
                         filled=any(k.rpartition(":")[2] == "value-type" for k in attrs))

    def chars(data: str) -> None:
        if state["in_cell"] and data.strip():
            state["filled"] = True

    def end(tag: str) -> None:
        tag = tag.rpartition(":")[2]
        if tag in ("table-cell", "covered-table-cell"):
            state["pos"] += state["cell_repeat"]
            if state["filled"]:
                state["row_width"] = state["pos"]
            state["in_cell"] = False
        elif tag == "table-row":
            if state["row_width"]:
                state["sheet_rows"] += state["blank_rows"] + state["repeat"]
                state["blank_rows"] = 0
                state["width"] = max(state["width"], state["row_width"])
            else:
                state["blank_rows"] += state["repeat"]
        elif tag == "table":
            state["total"] += state["sheet_rows"] * state["width"]
        if state["total"] > limits.max_cells:
            raise _TooManyCells()

    parser = expat.ParserCreate()
    parser.buffer_text = True
    parser.StartElementHandler, parser.EndElementHandler, parser.CharacterDataHandler = start, end, chars
    try:
        with archive.open("content.xml") as stream:
            while chunk := stream.read(1 << 20):
                parser.Parse(chunk, False)
        parser.Parse(b"", True)
    except _TooManyCells:
        raise InputError(
            Finding(
                "The spreadsheet declares more cells than timetabler reads (rows and columns repeated "
                "far beyond the data); it was not read.",
                where=Location(name),
                found=f"more than {limits.max_cells:,} cells once repeated rows and columns are written out",
                expected=f"at most {limits.max_cells:,} cells over all sheets",
                suggestion="Delete unused sheets, columns and rows, or save it as .xlsx.",
            )
        ) from None
    except (KeyError, expat.ExpatError, zipfile.BadZipFile, OSError, ValueError):
        return  # damage is for the reader to report


class _TooManyCells(Exception):
    pass
