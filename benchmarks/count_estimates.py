"""Are the 95 % intervals of the estimated counts honest, and how narrow are they? Two tables.

    /work/venv/bin/python benchmarks/count_estimates.py validation   # coverage on exactly counted graphs
    /work/venv/bin/python benchmarks/count_estimates.py targets      # Toronto instances and the sample term

validation
    Invented enrolments of timetabling shape (programmes with their own courses, students
    taking three to five of them and now and then an elective from another programme),
    about 15 to 55 exams each, seeded (graphs the exact engine cannot count in 120 s are skipped). Each conflict graph is counted exactly by the tool's exact
    engine with a long budget (the truth), then estimated with a short budget with exact
    counting switched off; the table says how often the interval covers the truth, for the
    count and for the ratio to one slot fewer, and how wide the intervals are. The
    intervals are read from the report and checked here, by this script's own code.
targets
    The shared Toronto instances (``../shared/benchmarks/toronto``, converted to an
    enrolment CSV in a temporary folder, never copied into the repository) at their period
    count K and K + 1, and ``sample_data/term_exams.xlsx`` at 17-20 slots, each through
    the real command (``count --json --time-limit``) in a child process, timed from the
    outside. Targets (issue 16): within 60 s a proven lower bound, an interval at most one
    order of magnitude wide for the count and at most a factor of 2 for the ratio.
"""

from __future__ import annotations

import argparse
import csv
import itertools
import json
import math
import os
import random
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import networkx as nx

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
# beside the checkout, or beside the folder of worktrees when run from a worktree
TORONTO = Path(os.environ.get("TIMETABLER_TORONTO", next(
    (p for p in (ROOT.parent / "shared" / "benchmarks" / "toronto", ROOT.parent.parent / "shared" / "benchmarks" / "toronto")
     if p.is_dir()), ROOT.parent / "shared" / "benchmarks" / "toronto")))


# --------------------------------------------------------------------------- validation


def invented_enrolments(seed: int) -> list[tuple[str, str]]:
    """(student, exam) pairs of a small invented faculty: programmes, their courses, electives."""
    rng = random.Random(seed)
    programmes = rng.randint(3, 8)
    courses = {p: [f"P{p}C{i}" for i in range(rng.randint(5, 7))] for p in range(programmes)}
    pairs = set()
    for s in range(rng.randint(40, 120)):
        p = rng.randrange(programmes)
        for c in rng.sample(courses[p], rng.randint(3, min(5, len(courses[p])))):
            pairs.add((f"S{s}", c))
        if rng.random() < 0.25:
            other = rng.randrange(programmes)
            pairs.add((f"S{s}", rng.choice(courses[other])))
    return sorted(pairs)


def clash_graph(pairs: list[tuple[str, str]]) -> nx.Graph:
    """The conflict graph built here from the pairs (not by the tool)."""
    by_student: dict[str, list[str]] = {}
    for s, c in pairs:
        by_student.setdefault(s, []).append(c)
    g = nx.Graph()
    g.add_nodes_from(c for _, c in pairs)
    for exams in by_student.values():
        g.add_edges_from(itertools.combinations(sorted(set(exams)), 2))
    return g


def validation(graphs: int, seconds: float) -> int:
    from timetabler.counting import count_timetables

    rows = []
    seed = 0
    while len(rows) < graphs and seed < 10 * graphs:
        seed += 1
        g = clash_graph(invented_enrolments(seed))
        exact = count_timetables(g, [1], budget_seconds=120, what_if=False)
        chi = exact.chromatic_number
        if chi is None:
            continue
        k = chi + 1 + seed % 2
        truth = count_timetables(g, [k, k + 1], budget_seconds=120, what_if=False).counts
        if not all(c.exact for c in truth):
            continue
        t0 = time.monotonic()
        est = count_timetables(g, [k, k + 1], budget_seconds=seconds, exact_counting=False, what_if=False).counts
        spent = time.monotonic() - t0
        truth_log = [math.log10(c.timetables) for c in truth]
        ratio_log = truth_log[1] - truth_log[0]
        iv = [c.estimate_interval_log10 for c in est]
        riv = est[1].ratio_interval_log10
        rows.append({
            "seed": seed, "events": g.number_of_nodes(), "clashes": g.number_of_edges(), "k": k,
            # 1e-9: a point interval (bounds that meet) is a float log of the exact count
            "covered": [i is not None and i[0] - 1e-9 <= t <= i[1] + 1e-9 for i, t in zip(iv, truth_log)],
            "width": [None if i is None else i[1] - i[0] for i in iv],
            "ratio_covered": riv is not None and riv[0] - 1e-9 <= ratio_log <= riv[1] + 1e-9,
            "ratio_width": None if riv is None else riv[1] - riv[0],
            "lower_ok": all(c.lower is not None and 0 < c.lower <= t.timetables <= c.upper for c, t in zip(est, truth)),
            "seconds": spent,
        })
        r = rows[-1]
        print(f"{len(rows):3d} seed {seed:3d}: {r['events']:2d} exams {r['clashes']:3d} clashes K={k:2d} "
              f"covered {r['covered']} widths {[None if w is None else round(w, 3) for w in r['width']]} "
              f"ratio covered {r['ratio_covered']} width {None if r['ratio_width'] is None else round(r['ratio_width'], 3)} "
              f"bounds ok {r['lower_ok']} {spent:.1f} s", flush=True)
    counts = [c for r in rows for c in r["covered"]]
    ratios = [r["ratio_covered"] for r in rows]
    widths = [w for r in rows for w in r["width"] if w is not None]
    rwidths = [r["ratio_width"] for r in rows if r["ratio_width"] is not None]
    print()
    print("| graphs | count intervals covering | ratio intervals covering | median count width (log10) "
          "| max | median ratio width (log10) | max | bounds bracket the truth |")
    print("|---|---|---|---|---|---|---|---|")
    print(f"| {len(rows)} | {sum(counts)}/{len(counts)} ({100 * sum(counts) / max(len(counts), 1):.0f} %) "
          f"| {sum(ratios)}/{len(ratios)} ({100 * sum(ratios) / max(len(ratios), 1):.0f} %) "
          f"| {statistics.median(widths):.3f} | {max(widths):.3f} | {statistics.median(rwidths):.3f} | {max(rwidths):.3f} "
          f"| {sum(r['lower_ok'] for r in rows)}/{len(rows)} |")
    print(f"(estimates with {seconds} s each, exact counting off; load: {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores)")
    return 0


# --------------------------------------------------------------------------- targets


def toronto_csv(name: str, folder: Path) -> Path:
    """NAME.stu (one line per student, that student's course ids) as a student,exam CSV."""
    out = folder / f"{name}.csv"
    with open(TORONTO / f"{name}.stu") as src, open(out, "w", newline="") as dst:
        w = csv.writer(dst)
        w.writerow(["student", "exam"])
        for i, line in enumerate(line for line in src if line.strip()):
            for course in line.split():
                w.writerow([f"st{i}", f"ex{course}"])
    return out


def run_count(path: Path, ks: list[int], time_limit: float) -> tuple[dict, float]:
    t0 = time.monotonic()
    done = subprocess.run([sys.executable, "-m", "timetabler", "count", str(path), "--slots", *map(str, ks),
                           "--time-limit", str(time_limit), "--json"], capture_output=True, text=True,
                          env={**os.environ, "PYTHONPATH": str(ROOT)}, timeout=600)
    spent = time.monotonic() - t0
    if done.returncode != 0:
        raise SystemExit(done.stderr)
    return json.loads(done.stdout), spent


def targets(time_limit: float, only: str) -> int:
    cases: list[tuple[str, Path, list[int]]] = []
    with tempfile.TemporaryDirectory() as tmp:
        if TORONTO.is_dir():
            with open(TORONTO / "index.tsv") as handle:
                for row in csv.DictReader(handle, delimiter="\t"):
                    if only in row["instance"]:
                        k = int(row["periods"])
                        cases.append((row["instance"], toronto_csv(row["instance"], Path(tmp)), [k, k + 1]))
        else:
            print(f"(no Toronto data at {TORONTO}: skipped)")
        if only in "term_exams":
            cases.append(("term_exams.xlsx", ROOT / "sample_data" / "term_exams.xlsx", [17, 18, 19, 20]))
        print("| input | K | exact | seconds | proven lower (log10) | 95 % interval (log10) | width | "
              "ratio to K − 1, 95 % interval (log10) | ratio factor | targets |")
        print("|---|---|---|---|---|---|---|---|---|---|")
        for name, path, ks in cases:
            doc, spent = run_count(path, ks, time_limit)
            for c in doc["counts"]:
                lower = int(c["lower"]) if c["lower"] else 0
                lower_log = round(math.log10(lower), 1) if lower > 0 else None
                iv = c.get("estimate_interval_log10")
                riv = c.get("ratio_interval_log10")
                width = None if iv is None else iv[1] - iv[0]
                factor = None if riv is None else 10 ** (riv[1] - riv[0])
                met = [spent <= 60, c["exact"] or lower > 0, width is not None and width <= 1.0]
                if c["slots"] != ks[0]:
                    met.append(factor is not None and factor <= 2.0)
                print(f"| {name} | {c['slots']} | {'yes' if c['exact'] else 'no'} | {spent:.0f} | {lower_log} | "
                      f"{'—' if iv is None else f'{iv[0]:.2f} – {iv[1]:.2f}'} | "
                      f"{'—' if width is None else f'{width:.2f}'} | "
                      f"{'—' if riv is None else f'{riv[0]:.2f} – {riv[1]:.2f}'} | "
                      f"{'—' if factor is None else f'{factor:.2f}'} | {'met' if all(met) else 'NOT met'} |", flush=True)
    print(f"(count --time-limit {time_limit}; load when finished: {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores)")
    return 0


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("which", choices=["validation", "targets"])
    parser.add_argument("--graphs", type=int, default=50)
    parser.add_argument("--seconds", type=float, default=2.0, help="budget of each estimate in the validation")
    parser.add_argument("--time-limit", type=float, default=55.0, help="count --time-limit for the targets")
    parser.add_argument("--only", default="", help="targets whose name contains this")
    args = parser.parse_args()
    if args.which == "validation":
        return validation(args.graphs, args.seconds)
    return targets(args.time_limit, args.only)


if __name__ == "__main__":
    raise SystemExit(main())
