"""Time and peak memory of reading enrolment files of growing size, per file type and layout.

Each file is generated in a temporary folder (invented ids of Harrowgate Vale College, a
fictional institution: students taking 3-6 of 2,000 exams) and read by
``read_problem`` in a fresh child process, so that the peak resident memory reported is
that of one read (Linux ``VmHWM``; it includes about 100 MiB of imported libraries).
openpyxl writes strings inline while Excel writes a shared-string table, so the ``xlsx``
rows here are a slow case for openpyxl; files saved by Excel or LibreOffice read faster. Prints one table row per (type, rows).

    /work/venv/bin/python benchmarks/intake.py                  # up to 300,000 rows
    /work/venv/bin/python benchmarks/intake.py --max-rows 50000 # quicker
    /work/venv/bin/python benchmarks/intake.py --hostile        # damaged and bomb-like workbooks only

``--hostile`` reads workbooks made to cost far more than their size: the full sheet width
declared with one row in the last row (5 KB), the same in 40 sheets, one shared text of
300 MiB packed into about 2 MB, and a sheet of 5 million cells each at the last column. For
each it prints the time, the peak memory, and what came of it (the enrolments read, counted
here from the Reading, or the first line of the error), next to what the file should give.
"""

from __future__ import annotations

import argparse
import json
import random
import subprocess
import sys
import tempfile
import warnings
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

CHILD = r"""
import json, sys, time
sys.path.insert(0, {root!r})
from timetabler.errors import InputError
from timetabler.intake import read_problem
t = time.perf_counter()
try:
    r = read_problem(sys.argv[1])
except InputError as exc:
    seconds = time.perf_counter() - t
    peak = next(int(line.split()[1]) for line in open("/proc/self/status") if line.startswith("VmHWM")) / 1024
    print(json.dumps({{"seconds": seconds, "peak_mib": peak, "error": exc.findings[0].message}}))
    sys.exit(0)
except Exception as exc:  # a bug (exit 1 on the command line): shown as such in the table
    seconds = time.perf_counter() - t
    peak = next(int(line.split()[1]) for line in open("/proc/self/status") if line.startswith("VmHWM")) / 1024
    print(json.dumps({{"seconds": seconds, "peak_mib": peak, "error": "a bug: " + type(exc).__name__ + ": " + str(exc)}}))
    sys.exit(0)
seconds = time.perf_counter() - t
# VmHWM: this process's peak resident memory (reset by exec, unlike ru_maxrss), in KiB
peak = next(int(line.split()[1]) for line in open("/proc/self/status") if line.startswith("VmHWM")) / 1024
print(json.dumps({{"seconds": seconds, "peak_mib": peak, "enrolments": len(r.problem.enrolments),
                  "events": len(r.problem.events), "layout": r.layout}}))
"""


def enrolment_rows(n_rows: int, seed: int = 1) -> list[list[str]]:
    rng = random.Random(seed)
    rows: list[list[str]] = []
    student = 0
    while len(rows) < n_rows:
        student += 1
        for e in rng.sample(range(2000), rng.randint(3, 6)):
            rows.append([f"HV-S{student:06d}", f"EX{e:04d}"])
    return rows[:n_rows]


def wide_rows(long: list[list[str]]) -> list[list[str]]:
    grouped: dict[str, list[str]] = {}
    for a, e in long:
        grouped.setdefault(a, []).append(e)
    width = max(len(v) for v in grouped.values())
    return [["Student"] + [f"Exam {i}" for i in range(1, width + 1)]] + [[a, *evs] for a, evs in grouped.items()]


def _run_child(path: Path, timeout: float | None = None) -> dict:
    try:
        out = subprocess.run([sys.executable, "-c", CHILD.format(root=str(ROOT)), str(path)],
                             capture_output=True, text=True, check=True, timeout=timeout)
    except subprocess.TimeoutExpired:
        return {"seconds": timeout, "peak_mib": float("nan"), "error": f"still reading after {timeout:.0f} s (stopped)"}
    return json.loads(out.stdout)


def _shared_text_bomb(path: Path, mib: int = 300) -> Path:
    """One shared text of ``mib`` MiB that packs at about 150:1 (under the zip-bomb ratio check)."""
    import zipfile

    from intake_builders import sheet_xml, write_parts_xlsx

    body = '<row r="1"><c r="A1" t="inlineStr"><is><t>Student</t></is></c><c r="B1" t="inlineStr"><is><t>Exam</t></is></c></row>'
    body += '<row r="2"><c r="A2" t="inlineStr"><is><t>HV-S0001</t></is></c><c r="B2" t="s"><v>0</v></c></row>'
    write_parts_xlsx(path, {"S": sheet_xml(body)}, shared=b"")  # listed in the content types; replaced below
    rng = random.Random(3)
    with warnings.catch_warnings(), zipfile.ZipFile(path, "a", zipfile.ZIP_DEFLATED) as z:
        warnings.simplefilter("ignore")  # the second member of that name is the one read
        with z.open("xl/sharedStrings.xml", "w", force_zip64=True) as out:
            out.write(b'<?xml version="1.0"?><sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><si><t>')
            block = "".join("HV" * 500 + "".join(rng.choice("abcdefghij") for _ in range(4)) for _ in range(1000)).encode()
            for _ in range(mib * 2**20 // len(block)):
                out.write(block)
            out.write(b"</t></si></sst>")
    return path


def hostile(tmp: Path) -> None:
    from intake_builders import inline_cell, rows_xml, sheet_xml, write_parts_xlsx

    base = [["Student", "Exam"], ["HV-S0001", "MAT101"], ["HV-S0002", "PHY110"]]
    far = rows_xml([["HV-S0009", "GEO140"]], first_row=1_048_576)
    wide = "".join(f'<row r="{r}">{inline_cell(f"A{r}", f"HV-S{r:07d}")}{inline_cell(f"XFD{r}", "x")}</row>'
                   for r in range(2, 400))
    files = {
        "full width, last row": (write_parts_xlsx(tmp / "far.xlsx", {"S": sheet_xml(rows_xml(base) + far, "A1:XFD1048576")}),
                                 "3 enrolments"),
        "40 sheets, last rows": (write_parts_xlsx(tmp / "far40.xlsx", {"S": sheet_xml(rows_xml(base) + far, "A1:XFD1048576"),
                                                                    **{f"Copy {i}": sheet_xml(far, "A1:XFD1048576")
                                                                       for i in range(40)}}),
                                 "the cell limit"),
        "cells at column XFD": (write_parts_xlsx(tmp / "xfd.xlsx", {"S": sheet_xml(rows_xml(base) + wide)}),
                                "the cell limit or 2 enrolments"),
        "300 MiB shared text": (_shared_text_bomb(tmp / "bomb.xlsx"), "a refusal before parsing"),
    }
    print(f"{'hostile file':<24}{'file KiB':>10}{'seconds':>9}{'peak MiB':>10}  outcome (should give)")
    for label, (path, want) in files.items():
        m = _run_child(path, timeout=300)
        outcome = m.get("error") or f"{m['enrolments']} enrolments"
        print(f"{label:<24}{path.stat().st_size / 1024:>10,.0f}{m['seconds']:>9.2f}{m['peak_mib']:>10.0f}  "
              f"{outcome[:70]} ({want})", flush=True)


def main() -> None:
    from intake_builders import write_ods, write_text, write_xlsx

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--max-rows", type=int, default=300_000)
    parser.add_argument("--hostile", action="store_true", help="read only the damaged and bomb-like workbooks")
    args = parser.parse_args()
    if args.hostile:
        with tempfile.TemporaryDirectory() as folder:
            hostile(Path(folder))
        return
    sizes = [n for n in (10_000, 100_000, 300_000) if n <= args.max_rows]
    print(f"{'file':<22}{'rows':>9}{'enrolments':>12}{'seconds':>9}{'peak MiB':>10}{'file MiB':>10}")
    with tempfile.TemporaryDirectory() as folder:
        tmp = Path(folder)
        for n in sizes:
            long = enrolment_rows(n)
            header = [["Student", "Exam"]]
            files = {
                "csv long": write_text(tmp / f"l{n}.csv", header + long),
                "csv utf-16 long": write_text(tmp / f"u{n}.csv", header + long, "\t", "utf-16-le", bom=True),
                "xlsx long": write_xlsx(tmp / f"l{n}.xlsx", {"Enrolments": header + long}),
                "xlsx wide": write_xlsx(tmp / f"w{n}.xlsx", {"Enrolments": wide_rows(long)}),
            }
            if n <= 100_000:  # pandas' odf reader is slow and memory-hungry; .ods exports are rarely this large
                files["ods long"] = write_ods(tmp / f"l{n}.ods", {"Enrolments": header + long})
            for label, path in files.items():
                m = _run_child(path)
                size = path.stat().st_size / 2**20
                print(f"{label:<22}{n:>9,}{m['enrolments']:>12,}{m['seconds']:>9.2f}{m['peak_mib']:>10.0f}{size:>10.1f}",
                      flush=True)


if __name__ == "__main__":
    main()
