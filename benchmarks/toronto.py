"""The Toronto exam timetabling instances through the real ``timetabler solve`` command.

Usage::

    python benchmarks/toronto.py [--time-limit 300] [--instances hec-s-92 sta-f-83 ...] [--folder PATH]

For every instance of ``../shared/benchmarks/toronto`` (next to the repository; skipped
cleanly when absent; ``--folder`` points elsewhere), this script

1. converts ``NAME.crs``/``NAME.stu`` into a CSV of enrolments (one row per student and
   exam) in a temporary folder, with its own code;
2. runs ``timetabler solve FILE --slots P --time-limit T --weight proximity=1`` with every
   other weight 0, ``--sessions-per-day 1`` and ``--json`` as a child process (P from
   ``index.tsv``; the same settings for every instance, none tuned to one);
3. recomputes the Carter proximity cost from the returned assignment with its own code:
   for every pair of one student's exams ``d`` periods apart, 16, 8, 4, 2, 1 for
   d = 1..5, summed and divided by the number of non-empty student lines (Carter, Laporte
   & Lee, J. Oper. Res. Soc. 47 (1996) 373-383), and checks that no student sits two exams
   in one period and every exam has a period;
4. prints instance, periods, cost, the reference cost (best reported in the literature,
   recalled, from ``index.tsv``), the ratio, the 1996 paper's cost (recalled), the wall
   seconds and the peak memory of the child process (``ru_maxrss`` of ``RUSAGE_CHILDREN``,
   measured around each child on its own).

Timings and costs depend on the machine's load: the 1-minute load average is printed with
each row.
"""

from __future__ import annotations

import argparse
import csv
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
FOLDER = REPO.parent / "shared" / "benchmarks" / "toronto"
GOALS = ("back_to_back", "overnight", "same_day", "large_late", "preferred_slot", "penalised_slot",
         "room_split", "moved", "preferred_room", "penalised_room")


def read_index(folder: Path) -> list[dict]:
    rows = []
    with open(folder / "index.tsv", newline="") as fh:
        for row in csv.DictReader(fh, delimiter="\t"):
            rows.append(row)
    return rows


def read_students(folder: Path, name: str) -> list[list[str]]:
    """The exams of each non-empty student line of ``NAME.stu``."""
    out = []
    for line in (folder / f"{name}.stu").read_text().splitlines():
        ids = line.split()
        if ids:
            out.append(ids)
    return out


def write_enrolments(students: list[list[str]], path: Path) -> None:
    # codes get a letter so no reader takes them for numbers (0001 and 1 stay distinct)
    with open(path, "w", newline="") as fh:
        out = csv.writer(fh)
        out.writerow(["Student", "Exam"])
        for i, ids in enumerate(students, start=1):
            for c in ids:
                out.writerow([f"s{i}", f"x{c}"])


def carter_cost(students: list[list[str]], periods: dict[str, int]) -> tuple[float, int]:
    """Carter cost of ``periods`` (exam id -> period) and the number of clashes (two exams in one period)."""
    weights = {1: 16, 2: 8, 3: 4, 4: 2, 5: 1}
    total = clashes = 0
    for ids in students:
        ps = [periods[c] for c in ids]
        for i in range(len(ps)):
            for j in range(i + 1, len(ps)):
                d = abs(ps[i] - ps[j])
                if d == 0:
                    clashes += 1
                total += weights.get(d, 0)
    return total / len(students), clashes


def run_instance(folder: Path, row: dict, time_limit: float, workdir: Path) -> dict:
    name = row["instance"]
    periods = int(row["periods"])
    students = read_students(folder, name)
    exams = {c for ids in students for c in ids} | {line.split()[0] for line in
                                                    (folder / f"{name}.crs").read_text().splitlines() if line.split()}
    path = workdir / f"{name}.csv"
    write_enrolments(students, path)
    cmd = [sys.executable, "-m", "timetabler", "solve", str(path), "--slots", str(periods),
           "--time-limit", str(time_limit), "--sessions-per-day", "1", "--weight", "proximity=1", "--json"]
    for goal in GOALS:
        cmd += ["--weight", f"{goal}=0"]
    # RUSAGE_CHILDREN keeps the peak of all children so far: a small helper process runs the command
    # and reports the peak of its only child, so each instance's memory is its own
    helper = [sys.executable, "-c",
              "import resource, subprocess, sys, json;"
              "p = subprocess.run(sys.argv[1:], capture_output=True, text=True);"
              "sys.stdout.write(json.dumps({'rc': p.returncode, 'out': p.stdout, 'err': p.stderr[-2000:],"
              " 'rss_kib': resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss}))"] + cmd
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    t0 = time.perf_counter()
    done = subprocess.run(helper, capture_output=True, text=True, env=env, cwd=workdir)
    seconds = time.perf_counter() - t0
    report = json.loads(done.stdout)
    result = {"instance": name, "periods": periods, "seconds": seconds, "rss_mib": report["rss_kib"] / 1024,
              "cost": None, "status": None, "note": ""}
    if report["rc"] != 0:
        result["note"] = f"exit {report['rc']}: {report['err'].strip().splitlines()[-1:]}"
        return result
    run = json.loads(report["out"])["runs"][0]
    result["status"] = run["status"]
    assignment = run.get("assignment") or {}
    got = {code[1:]: int(s) for code, s in assignment.items()}
    missing = sorted(exams - set(got))
    bad = [c for c, s in got.items() if not 1 <= s <= periods]
    if missing or bad:
        result["note"] = f"{len(missing)} exams without a period, {len(bad)} outside 1..{periods}"
        return result
    cost, clashes = carter_cost(students, got)
    if clashes:
        result["note"] = f"{clashes} clashes"
        return result
    result["cost"] = cost
    return result


def _float(text: str) -> float | None:
    try:
        return float(text)
    except (TypeError, ValueError):
        return None


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--time-limit", type=float, default=300.0, help="seconds per instance (default 300)")
    parser.add_argument("--instances", nargs="*", help="instance names (default: all in index.tsv)")
    parser.add_argument("--folder", type=Path, default=FOLDER, help=f"the Toronto folder (default {FOLDER})")
    args = parser.parse_args(argv)
    if not (args.folder / "index.tsv").exists():
        print(f"skipped: no Toronto data at {args.folder}")
        return 0
    rows = read_index(args.folder)
    if args.instances:
        wanted = set(args.instances)
        unknown = wanted - {r["instance"] for r in rows}
        if unknown:
            print(f"unknown instance(s): {', '.join(sorted(unknown))}", file=sys.stderr)
            return 2
        rows = [r for r in rows if r["instance"] in wanted]
    print(f"time limit {args.time_limit:g} s per instance; reference and Carter 1996 costs are recalled "
          "(index.tsv), treat them as +-2 %")
    head = (f"{'instance':<10}{'periods':>8}{'cost':>9}{'reference':>10}{'ratio':>7}{'Carter 96':>10}"
            f"{'seconds':>9}{'peak MiB':>10}{'load':>6}  status")
    print(head)
    with tempfile.TemporaryDirectory() as tmp:
        for row in rows:
            res = run_instance(args.folder, row, args.time_limit, Path(tmp))
            ref, c96 = _float(row["reference_cost"]), _float(row["carter_1996_cost"])
            cost = res["cost"]
            ratio = f"{cost / ref:.3f}" if cost is not None and ref else "-"
            print(f"{res['instance']:<10}{res['periods']:>8}{(f'{cost:.2f}' if cost is not None else '-'):>9}"
                  f"{(f'{ref:g}' if ref else '-'):>10}{ratio:>7}{(f'{c96:g}' if c96 else '-'):>10}"
                  f"{res['seconds']:>9.1f}{res['rss_mib']:>10.0f}{os.getloadavg()[0]:>6.2f}  "
                  f"{res['status'] or ''} {res['note']}".rstrip(), flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
