"""Time and peak memory of reading enrolment files of growing size, per file type and layout.

Each file is generated in a temporary folder (invented ids of Harrowgate Vale College, a
fictional institution: students taking 3-6 of 2,000 exams) and read by
``read_problem`` in a fresh child process, so that the peak resident memory reported is
that of one read (Linux ``VmHWM``; it includes about 100 MiB of imported libraries).
openpyxl writes strings inline while Excel writes a shared-string table, so the ``xlsx``
rows here are a slow case for openpyxl; files saved by Excel or LibreOffice read faster. Prints one table row per (type, rows).

    /work/venv/bin/python benchmarks/intake.py                  # up to 300,000 rows
    /work/venv/bin/python benchmarks/intake.py --max-rows 50000 # quicker
"""

from __future__ import annotations

import argparse
import json
import random
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

CHILD = r"""
import json, sys, time
sys.path.insert(0, {root!r})
from timetabler.intake import read_problem
t = time.perf_counter()
r = read_problem(sys.argv[1])
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


def main() -> None:
    from intake_builders import write_ods, write_text, write_xlsx

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--max-rows", type=int, default=300_000)
    args = parser.parse_args()
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
                out = subprocess.run([sys.executable, "-c", CHILD.format(root=str(ROOT)), str(path)],
                                     capture_output=True, text=True, check=True)
                m = json.loads(out.stdout)
                size = path.stat().st_size / 2**20
                print(f"{label:<22}{n:>9,}{m['enrolments']:>12,}{m['seconds']:>9.2f}{m['peak_mib']:>10.0f}{size:>10.1f}",
                      flush=True)


if __name__ == "__main__":
    main()
