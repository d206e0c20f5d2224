"""Memory and time of the real ``timetabler solve`` command on the two largest Toronto instances.

Usage::

    python benchmarks/memory.py [--time-limit 60] [--instances pur-s-93 car-s-91] [--goals proximity default]
                                [--workers 2] [--folder PATH]

For each instance of ``../shared/benchmarks/toronto`` (next to the repository; skipped
cleanly when absent) and each set of goals:

* ``proximity``: ``--weight proximity=1``, every other goal 0, ``--sessions-per-day 1``
  (the Toronto problem as the literature states it);
* ``default``: the tool's default goals (back-to-back, overnight, two in a day; two
  sessions a day),

the script converts ``NAME.crs``/``NAME.stu`` into an enrolment CSV in a temporary folder
(one row per student and exam), runs the command as a child process twice:

1. with ``--time-limit 1``: the whole command's wall time is then an upper bound on the time
   to the first clash-free timetable, reading and writing included;
2. with ``--time-limit T``: total wall time against T, the peak resident memory of the child
   (``ru_maxrss`` from ``os.wait4``, the child's own ``RUSAGE_CHILDREN`` figure), and the
   command's own ``first_feasible_seconds`` (from the start of the solve);

and recomputes from each returned assignment, with its own code, the exams without a
period and the clashes (pairs of one student's exams in one period; the target is 0), and
the Carter proximity cost (16, 8, 4, 2, 1 for exams 1..5 periods apart, per student,
divided by the students; Carter, Laporte & Lee, J. Oper. Res. Soc. 47 (1996) 373-383) for
information. Targets (issue 12): peak memory at most 2 GiB with any goals; the first
clash-free timetable of pur-s-93 within 60 s; the command within its limit plus a few
seconds. The 1-minute load average is printed with each row: timings depend on it.
"""

from __future__ import annotations

import argparse
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
OFF = ("back-to-back", "overnight", "same-day")
GOALS = {
    "proximity": ["--weight", "proximity=1", *[a for g in OFF for a in ("--weight", f"{g}=0")],
                  "--sessions-per-day", "1"],
    "default": [],
}
GIB = 1024 ** 3


def periods_of(folder: Path, name: str) -> int:
    for line in (folder / "index.tsv").read_text().splitlines()[1:]:
        cells = line.split("\t")
        if cells[0] == name:
            return int(cells[4])
    raise SystemExit(f"{name} is not in {folder / 'index.tsv'}")


def students_of(folder: Path, name: str) -> list[list[str]]:
    """Each non-empty line of NAME.stu: that student's exam ids."""
    return [ids for line in (folder / f"{name}.stu").read_text().splitlines() if (ids := line.split())]


def write_csv(students: list[list[str]], path: Path) -> None:
    with open(path, "w") as fh:
        fh.write("Student,Exam\n")
        for i, ids in enumerate(students, start=1):
            fh.writelines(f"s{i},x{c}\n" for c in ids)  # a letter in front: 0001 and 1 stay distinct


def recount(students: list[list[str]], assignment: dict[str, int]) -> tuple[int, int, float]:
    """Exams without a period, clashes (pairs of one student's exams in one period), Carter cost."""
    carter = {1: 16, 2: 8, 3: 4, 4: 2, 5: 1}
    missing: set[str] = set()
    clashes = 0
    cost = 0
    for ids in students:
        placed = []
        for c in ids:
            period = assignment.get(f"x{c}")
            if period is None:
                missing.add(c)
            else:
                placed.append(period)
        for i in range(len(placed)):
            for j in range(i + 1, len(placed)):
                gap = abs(placed[i] - placed[j])
                clashes += gap == 0
                cost += carter.get(gap, 0)
    return len(missing), clashes, cost / len(students)


def run_child(args: list[str], out: Path) -> tuple[float, int, int]:
    """Run the command; its wall seconds, peak resident bytes and exit status."""
    env = {**os.environ, "PYTHONPATH": str(REPO)}
    started = time.perf_counter()
    with open(out, "w") as stdout, open(out.with_suffix(".err"), "w") as stderr:
        child = subprocess.Popen([sys.executable, "-m", "timetabler", *args], stdout=stdout, stderr=stderr, env=env)
        _, status, usage = os.wait4(child.pid, 0)
        child.returncode = os.waitstatus_to_exitcode(status)
    return time.perf_counter() - started, usage.ru_maxrss * 1024, child.returncode


def measure(folder: Path, name: str, goals: str, limit: float, workers: int, work: Path) -> dict:
    students = students_of(folder, name)
    csv_path = work / f"{name}.csv"
    if not csv_path.exists():
        write_csv(students, csv_path)
    common = ["solve", str(csv_path), "--slots", str(periods_of(folder, name)), "--workers", str(workers),
              "--json", *GOALS[goals]]
    row: dict = {"instance": name, "goals": goals, "limit": limit}
    first_wall, _, status = run_child([*common, "--time-limit", "1"], work / "first.json")
    first = json.loads((work / "first.json").read_text())["runs"][0] if status == 0 else {}
    row["first_wall"] = first_wall
    row["first_clashes"] = recount(students, first.get("assignment", {}))[1] if first.get("assignment") else None
    wall, peak, status = run_child([*common, "--time-limit", str(limit)], work / "full.json")
    row.update(wall=wall, peak=peak, exit=status, load=os.getloadavg()[0])
    if status != 0:
        row["error"] = (work / "full.err").read_text().strip().splitlines()[-1:]
        return row
    run = json.loads((work / "full.json").read_text())["runs"][0]
    missing, clashes, cost = recount(students, run.get("assignment", {}))
    row.update(status=run["status"], first_in_solve=run.get("first_feasible_seconds"), missing=missing,
               clashes=clashes, cost=cost)
    return row


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--time-limit", type=float, default=60.0)
    parser.add_argument("--instances", nargs="+", default=["pur-s-93", "car-s-91"])
    parser.add_argument("--goals", nargs="+", choices=sorted(GOALS), default=["proximity", "default"])
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--folder", type=Path, default=FOLDER)
    args = parser.parse_args()
    if not (args.folder / "index.tsv").exists():
        print(f"skipped: no Toronto instances in {args.folder}")
        return
    print(f"{'instance':10} {'goals':9} {'first (1 s run)':>16} {'first in solve':>14} {'wall / limit':>14} "
          f"{'peak':>9} {'status':>9} {'unplaced':>8} {'clashes':>7} {'cost':>8} {'load':>5}  targets")
    with tempfile.TemporaryDirectory() as tmp:
        for name in args.instances:
            for goals in args.goals:
                r = measure(args.folder, name, goals, args.time_limit, args.workers, Path(tmp))
                if r.get("exit"):
                    print(f"{name:10} {goals:9} command failed (exit {r['exit']}): {r.get('error')}")
                    continue
                met = []
                met.append("memory ok" if r["peak"] <= 2 * GIB else "MEMORY OVER 2 GiB")
                met.append("time ok" if r["wall"] <= args.time_limit + 5 else "TIME OVER LIMIT + 5 s")
                if name == "pur-s-93":
                    ok = r["first_wall"] <= 60 and r["first_clashes"] == 0
                    met.append("first ok" if ok else "FIRST NOT WITHIN 60 s")
                if r["clashes"] or r["missing"]:
                    met.append("CLASHES")
                first_solve = "" if r["first_in_solve"] is None else f"{r['first_in_solve']:.1f} s"
                print(f"{name:10} {goals:9} {r['first_wall']:14.1f} s {first_solve:>14} "
                      f"{r['wall']:6.1f} / {r['limit']:<5.0f} {r['peak'] / GIB:7.2f} G {r['status']:>9} "
                      f"{r['missing']:8d} {r['clashes']:7d} {r['cost']:8.2f} {r['load']:5.1f}  {', '.join(met)}",
                      flush=True)


if __name__ == "__main__":
    main()
