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
