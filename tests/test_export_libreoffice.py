"""The workbook opens in LibreOffice: converted headlessly, every value, table and the chart survive.

Skipped, saying so, where LibreOffice (``soffice``) is not installed.
"""

from __future__ import annotations

import datetime as dt
import shutil
import subprocess
import zipfile

import pytest
from openpyxl import load_workbook

from export_cases import count_report, dated_slots, small_problem, solve_run
from timetabler.export.workbook import write_workbook

SOFFICE = shutil.which("soffice") or shutil.which("libreoffice")
pytestmark = pytest.mark.skipif(SOFFICE is None, reason="LibreOffice (soffice) is not installed; the workbook was not "
                                                         "checked by a second spreadsheet program")
ERRORS = ("#VALUE!", "#REF!", "#NAME?", "#DIV/0!", "#N/A", "#NUM!", "Err:")


def _convert(source, folder, to, profile):
    done = subprocess.run(
        [SOFFICE, f"-env:UserInstallation={profile.as_uri()}", "--headless", "--norestore", "--convert-to", to,
         "--outdir", str(folder), str(source)],
        capture_output=True, text=True, timeout=120,
    )
    assert done.returncode == 0, done.stderr
    out = folder / (source.stem + "." + to.split(":")[0])
    assert out.exists(), done.stdout + done.stderr
    return out


def _normal(v):
    if isinstance(v, dt.datetime) and v.time() == dt.time(0):
        return v.date()
    if isinstance(v, float) and v.is_integer():
        return int(v)
    if isinstance(v, float):
        return round(v, 6)
    return v


def test_libreoffice_reads_the_workbook_without_errors(tmp_path):
    problem = small_problem()
    runs = [solve_run(problem, dated_slots(k)) for k in (3, 5)]
    path = write_workbook(tmp_path / "book.xlsx", problem=problem, runs=runs, counts=count_report(problem, [3, 4, 5]))
    profile = tmp_path / "profile"
    ods = _convert(path, tmp_path / "ods", "ods", profile)
    with zipfile.ZipFile(ods) as z:
        charts = [n for n in z.namelist() if n.endswith("content.xml") and "Object" in n]
        assert charts, "the Counts chart did not survive"
        assert b"chart:chart" in z.read(charts[0])
    back = _convert(ods, tmp_path / "back", "xlsx:Calc MS Excel 2007 XML", profile)
    original, seen = load_workbook(path), load_workbook(back)
    assert seen.sheetnames == original.sheetnames
    for name in original.sheetnames:
        a = [[_normal(v) for v in row] for row in original[name].iter_rows(values_only=True)]
        b = [[_normal(v) for v in row] for row in seen[name].iter_rows(values_only=True)]
        strip = lambda rows: [r[: max((i + 1 for i, v in enumerate(r) if v not in (None, "")), default=0)] for r in rows]
        a, b = strip(a), strip(b)
        while a and not a[-1]:
            a.pop()
        while b and not b[-1]:
            b.pop()
        if name == "Overview":  # a timestamp row; compare labels only
            assert [r[:1] for r in a] == [r[:1] for r in b]
        else:
            assert a == b, name
        for row in b:
            for v in row:
                assert not (isinstance(v, str) and v.startswith(ERRORS)), (name, v)
