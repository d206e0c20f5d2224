"""Writers of awkward input files for the intake tests: xlsx, ods and text in any encoding.

Rows are lists of Python values; ``None`` is an empty cell. Everything written here is
invented, set in Harrowgate Vale College, a fictional institution.
"""

from __future__ import annotations

import csv
import io
import re
import zipfile
from pathlib import Path
from typing import Iterable, Sequence

import openpyxl
import pandas as pd

Rows = Sequence[Sequence[object]]


def write_xlsx(path: Path, sheets: dict[str, Rows], hidden: Iterable[str] = ()) -> Path:
    book = openpyxl.Workbook()
    book.remove(book.active)
    for name, rows in sheets.items():
        ws = book.create_sheet(name)
        for r, row in enumerate(rows, start=1):
            for c, value in enumerate(row, start=1):
                if value is not None:
                    ws.cell(row=r, column=c, value=value)
        if name in hidden:
            ws.sheet_state = "hidden"
    book.save(path)
    return path


def write_ods(path: Path, sheets: dict[str, Rows]) -> Path:
    with pd.ExcelWriter(path, engine="odf") as writer:
        for name, rows in sheets.items():
            width = max((len(r) for r in rows), default=1)
            frame = pd.DataFrame([list(r) + [None] * (width - len(r)) for r in rows], dtype=object)
            frame.to_excel(writer, sheet_name=name, header=False, index=False)
    return path


def text_of(rows: Rows, delimiter: str = ",") -> str:
    out = io.StringIO()
    writer = csv.writer(out, delimiter=delimiter, lineterminator="\r\n")
    for row in rows:
        writer.writerow(["" if v is None else v for v in row])
    return out.getvalue()


def write_text(path: Path, rows: Rows, delimiter: str = ",", encoding: str = "utf-8", bom: bool = False) -> Path:
    data = text_of(rows, delimiter).encode(encoding)
    if bom:
        data = {"utf-8": b"\xef\xbb\xbf", "utf-16-le": b"\xff\xfe", "utf-16-be": b"\xfe\xff"}[encoding] + data
    path.write_bytes(data)
    return path


def patch_cached_formula_values(path: Path, values: dict[str, str], sheet_xml: str = "xl/worksheets/sheet1.xml") -> None:
    """Give formula cells a cached text value, as Excel stores it (openpyxl writes formulas without one)."""
    with zipfile.ZipFile(path) as z:
        parts = {n: z.read(n) for n in z.namelist()}
    xml = parts[sheet_xml].decode()
    for ref, value in values.items():
        xml = re.sub(
            rf'<c r="{ref}"([^>]*)><f>(.*?)</f><v\s*/?>(</v>)?',
            lambda m: f'<c r="{ref}" t="str"><f>{m.group(2)}</f><v>{value}</v>',
            xml,
        )
    parts[sheet_xml] = xml.encode()
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for n, data in parts.items():
            z.writestr(n, data)
