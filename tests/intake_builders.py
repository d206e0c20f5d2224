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


# --- hand-made .xlsx parts (damaged and hostile workbooks) -------------------------------

_MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"


def inline_cell(ref: str, text: str) -> str:
    return f'<c r="{ref}" t="inlineStr"><is><t>{text}</t></is></c>'


def sheet_xml(rows: str, dimension: str | None = None, extra: str = "") -> str:
    """A worksheet part with the given ``<row>`` elements (and an optional declared dimension)."""
    dim = f'<dimension ref="{dimension}"/>' if dimension else ""
    return f'<?xml version="1.0" encoding="UTF-8"?><worksheet xmlns="{_MAIN}">{dim}<sheetData>{rows}</sheetData>{extra}</worksheet>'


def rows_xml(rows: Rows, first_row: int = 1) -> str:
    """``<row>`` elements for rows of text (inline strings), starting at ``first_row``."""
    out = []
    for r, row in enumerate(rows, start=first_row):
        cells = "".join(inline_cell(f"{chr(65 + c)}{r}", str(v)) for c, v in enumerate(row) if v is not None)
        out.append(f'<row r="{r}">{cells}</row>')
    return "".join(out)


def write_parts_xlsx(path: Path, sheets: dict[str, str | bytes], shared: Sequence[str] | bytes | None = None,
                     styles: str | None = None, chart_sheets: Sequence[str] = (),
                     compression: int = zipfile.ZIP_DEFLATED) -> Path:
    """An .xlsx made from hand-written parts: ``sheets`` maps a sheet name to its worksheet XML.

    ``shared`` is the shared-string table (texts, or the raw part); ``chart_sheets`` are
    listed in the workbook as chart sheets (no cells).
    """
    names = list(sheets) + list(chart_sheets)
    book = "".join(f'<sheet name="{n}" sheetId="{i}" r:id="rId{i}"/>' for i, n in enumerate(names, start=1))
    rels = "".join(
        f'<Relationship Id="rId{i}" Type="{_REL}/{"worksheet" if n in sheets else "chartsheet"}" '
        f'Target="{"worksheets/sheet" if n in sheets else "chartsheets/sheet"}{i}.xml"/>'
        for i, n in enumerate(names, start=1))
    office = "application/vnd.openxmlformats-officedocument.spreadsheetml"
    overrides = [("/xl/workbook.xml", f"{office}.sheet.main+xml")]
    overrides += [(f"/xl/{'worksheets' if n in sheets else 'chartsheets'}/sheet{i}.xml",
                   f"{office}.{'worksheet' if n in sheets else 'chartsheet'}+xml") for i, n in enumerate(names, start=1)]
    if shared is not None:
        overrides.append(("/xl/sharedStrings.xml", f"{office}.sharedStrings+xml"))
    if styles is not None:
        overrides.append(("/xl/styles.xml", f"{office}.styles+xml"))
    types = "".join(f'<Override PartName="{p}" ContentType="{c}"/>' for p, c in overrides)
    parts: dict[str, str | bytes] = {
        "[Content_Types].xml": '<?xml version="1.0"?><Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
        '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
        f'<Default Extension="xml" ContentType="application/xml"/>{types}</Types>',
        "_rels/.rels": f'<?xml version="1.0"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">'
        f'<Relationship Id="rId1" Type="{_REL}/officeDocument" Target="xl/workbook.xml"/></Relationships>',
        "xl/workbook.xml": f'<?xml version="1.0"?><workbook xmlns="{_MAIN}" xmlns:r="{_REL}"><sheets>{book}</sheets></workbook>',
        "xl/_rels/workbook.xml.rels": '<?xml version="1.0"?><Relationships '
        f'xmlns="http://schemas.openxmlformats.org/package/2006/relationships">{rels}</Relationships>',
    }
    for i, n in enumerate(names, start=1):
        if n in sheets:
            parts[f"xl/worksheets/sheet{i}.xml"] = sheets[n]
        else:
            parts[f"xl/chartsheets/sheet{i}.xml"] = f'<chartsheet xmlns="{_MAIN}"/>'
    if shared is not None:
        if isinstance(shared, bytes):
            parts["xl/sharedStrings.xml"] = shared
        else:
            items = "".join(f"<si><t>{t}</t></si>" for t in shared)
            parts["xl/sharedStrings.xml"] = f'<?xml version="1.0"?><sst xmlns="{_MAIN}" count="{len(shared)}">{items}</sst>'
    if styles is not None:
        parts["xl/styles.xml"] = styles
    with zipfile.ZipFile(path, "w", compression) as z:
        for n, data in parts.items():
            z.writestr(n, data)
    return path


def flip_bytes(path: Path, member: str, count: int = 8) -> Path:
    """Invert ``count`` bytes in the middle of a member's packed data, as a damaged disk or download does."""
    with zipfile.ZipFile(path) as z:
        info = z.getinfo(member)
    data = bytearray(path.read_bytes())
    name_len, extra_len = int.from_bytes(data[info.header_offset + 26:info.header_offset + 28], "little"), \
        int.from_bytes(data[info.header_offset + 28:info.header_offset + 30], "little")
    start = info.header_offset + 30 + name_len + extra_len
    middle = start + info.compress_size // 2
    for i in range(middle, min(middle + count, start + info.compress_size)):
        data[i] ^= 0xFF
    path.write_bytes(bytes(data))
    return path


def add_ods_rows(path: Path, rows_xml_text: str) -> Path:
    """Append hand-written ``<table:table-row>`` elements to the first sheet of an .ods file."""
    with zipfile.ZipFile(path) as z:
        parts = {n: z.read(n) for n in z.namelist()}
    content = parts["content.xml"].decode()
    end = content.index("</table:table>")
    parts["content.xml"] = (content[:end] + rows_xml_text + content[end:]).encode()
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr("mimetype", parts.pop("mimetype"), compress_type=zipfile.ZIP_STORED)
        for n, data in parts.items():
            z.writestr(n, data)
    return path
