"""Scheduler benchmarks: fewest slots on the DIMACS colouring instances, and a large generated session.

Usage::

    python benchmarks/scheduling.py dimacs [--only NAME ...] [--time-limit 60] [--workers 2]
    python benchmarks/scheduling.py large [--first-limit 120] [--time-limit 600] [--workers 2]

``dimacs`` reads ``../shared/benchmarks/dimacs`` (relative to the repository; skipped
cleanly when absent), turns each graph into an enrolment list (one attendee per edge, one
per isolated vertex, so the conflict graph is exactly the instance), runs
:func:`timetabler.scheduling.fewest_slots` and prints: instance, n, m, published χ
(``index.tsv``, the DIMACS/COLOR literature values, recalled), slots found, whether
optimality is proven, the time, and the lower bound reached.

``large`` generates a session at the published scale of a large university's final exams
(about 2,000 exams, 33,000 students, 120,000 enrolments, ~3 % conflict density, 28 slots,
250 rooms — the scale of the Purdue exam data sets), all invented for a fictional college,
and reports the time to the first clash-free, room-feasible timetable, then penalty, bound
and gap at the end, and peak memory (resident set size).

Timings depend on load: the script prints the 1-minute load average beside them.
"""

from __future__ import annotations

import argparse
import os
import random
import resource
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

from timetabler.model import Problem, Room, Weights, generic_slots  # noqa: E402
from timetabler.scheduling import SolveOptions, fewest_slots, solve, validate  # noqa: E402

DIMACS = HERE.parent.parent / "shared" / "benchmarks" / "dimacs"


def read_col(path: Path) -> tuple[int, list[tuple[int, int]]]:
    n, edges = 0, []
    for line in path.read_text().splitlines():
        parts = line.split()
        if not parts:
            continue
        if parts[0] == "p":
            n = int(parts[2])
        elif parts[0] == "e":
            u, v = int(parts[1]), int(parts[2])
            if u != v:
                edges.append((min(u, v), max(u, v)))
    return n, sorted(set(edges))


def as_problem(n: int, edges: list[tuple[int, int]]) -> Problem:
    """One attendee per edge (enrolled in both ends); one per isolated vertex."""
    enrol = []
    touched = set()
    for i, (u, v) in enumerate(edges):
        enrol += [(f"A{i}", f"V{u:04d}"), (f"A{i}", f"V{v:04d}")]
        touched.update((u, v))
    for v in range(1, n + 1):
        if v not in touched:
            enrol.append((f"I{v}", f"V{v:04d}"))
    return Problem(enrol, weights=Weights(**{k: 0 for k in Weights().__dict__}))


def load() -> str:
    try:
        return f"{os.getloadavg()[0]:.2f}"
    except OSError:
        return "?"


def dimacs(args) -> None:
    index = DIMACS / "index.tsv"
    if not index.exists():
        print(f"skipped: {DIMACS} not found")
        return
    rows = [line.split("\t") for line in index.read_text().splitlines()[1:] if line.strip()]
    if args.only:
        rows = [r for r in rows if r[0] in args.only]
    print(f"# fewest_slots, {args.workers} workers, {args.time_limit:g} s per instance; cores: {os.cpu_count()}")
    print(f"{'instance':<14}{'n':>5}{'m':>7}{'chi':>5}{'found':>6}{'lower':>6}{'dsatur':>7}"
          f"{'proven':>7}{'seconds':>9}{'valid':>6}{'load':>6}")
    reached = proven = 0
    for name, nv, ne, chi in rows:
        n, edges = read_col(DIMACS / f"{name}.col")
        problem = as_problem(n, edges)
        t0 = time.perf_counter()
        res = fewest_slots(problem, per_day=1, options=SolveOptions(time_limit=args.time_limit, workers=args.workers,
                                                                    seed=args.seed, explain=False))
        secs = time.perf_counter() - t0
        ok = "-"
        if res.run and res.run.assignment:
            v = validate(problem, generic_slots(res.upper or 0, 1), res.run.assignment, own_rooms=res.run.own_rooms)
            ok = "yes" if v.ok else "NO"
        found = res.upper if res.upper is not None else "-"
        reached += res.upper is not None and res.upper <= int(chi)
        proven += res.proven
        print(f"{name:<14}{n:>5}{len(edges):>7}{chi:>5}{found!s:>6}{res.lower:>6}{res.dsatur_slots!s:>7}"
              f"{'yes' if res.proven else 'no':>7}{secs:>9.1f}{ok:>6}{load():>6}", flush=True)
    print(f"# reached the published number on {reached}/{len(rows)}; proven optimal on {proven}/{len(rows)}")


def generate_large(seed: int = 1, exams: int = 2000, students: int = 33000, enrolments: int = 120000,
                   rooms: int = 250, departments: int = 80, cross: float = 0.1, tail: float = 0.6) -> Problem:
    """An invented session of Harrowgate Vale College at the scale of a large university.

    Exams belong to ``departments``; each student takes about enrolments/students exams,
    each from their home department except with probability ``cross``, which gives the
    clustered clashes of real sessions. Exam popularity within a department falls as
    1/(1+i)^tail, so a few exams are large (a couple of hundred students). The defaults were
    tuned here to give a conflict density near 3 % (printed by the benchmark).
    """
    rng = random.Random(seed)
    per = exams // departments
    codes = [f"HV{d:02d}-{i:03d}" for d in range(departments) for i in range(per)]
    by_dept = [codes[d * per:(d + 1) * per] for d in range(departments)]
    weights = [1.0 / (1 + i) ** tail for i in range(per)]
    per_student = enrolments / students
    out: list[tuple[str, str]] = []
    for s in range(students):
        sid = f"HV-S{s:05d}"
        home = rng.randrange(departments)
        k = max(1, min(9, int(rng.gauss(per_student, 1.3) + 0.5)))
        chosen: set[str] = set()
        while len(chosen) < k:
            dept = home if rng.random() > cross else rng.randrange(departments)
            chosen.add(rng.choices(by_dept[dept], weights=weights)[0])
        out += [(sid, c) for c in sorted(chosen)]
    room_list = []
    for r in range(rooms):
        cap = rng.choice([20, 30, 40, 50, 60, 80, 100, 120, 150, 200, 300])
        room_list.append(Room(name=f"HV Room {r + 1:03d}", capacity=cap))
    return Problem(out, rooms=room_list)


def large(args) -> None:
    from timetabler.conflicts import conflict_graph
    t0 = time.perf_counter()
    problem = generate_large(seed=args.seed)
    graph = conflict_graph(problem)
    n, m = graph.number_of_nodes(), graph.number_of_edges()
    print(f"# generated in {time.perf_counter() - t0:.1f} s: {n} exams, {len(problem.attendees)} students, "
          f"{len(problem.enrolments)} enrolments, {m} clashing pairs, density {2 * m / (n * (n - 1)):.2%}, "
          f"{len(problem.rooms)} rooms ({sum(r.capacity for r in problem.rooms)} seats); load {load()}")
    slots = generic_slots(28, 2)
    events: list[tuple[float, dict]] = []
    opts = SolveOptions(time_limit=args.time_limit, workers=args.workers, seed=args.seed)
    run = solve(problem, slots, opts, graph=graph, progress=lambda e: events.append((time.perf_counter(), e)))
    v = validate(problem, slots, run.assignment, run.rooms, own_rooms=run.own_rooms) if run.assignment else None
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"{'slots':>6}{'status':>10}{'first(s)':>10}{'penalty':>10}{'bound':>12}{'gap':>8}{'wall(s)':>9}"
          f"{'valid':>7}{'peak MB':>9}{'load':>6}")
    gap = f"{run.gap:.1%}" if run.gap is not None else "-"
    first = f"{run.first_feasible_seconds:.1f}" if run.first_feasible_seconds is not None else "-"
    bound = f"{run.bound:.0f}" if run.bound is not None else "-"
    print(f"{28:>6}{run.status:>10}{first:>10}{run.penalty!s:>10}{bound:>12}{gap:>8}{run.wall_seconds:>9.1f}"
          f"{('yes' if v and v.ok else 'NO'):>7}{peak_mb:>9.0f}{load():>6}")
    if v:
        print("# soft counts (validator):", v.soft)
    if run.reason:
        print("# reason:", run.reason)
    phases = [(round(t - t0 - 0, 1), e.get("phase")) for t, e in events if e.get("event") == "phase"]
    print("# phases (seconds since generation start):", phases)
    if v and not v.ok:
        print("# violations:", v.violations[:5])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    sub = ap.add_subparsers(dest="which", required=True)
    d = sub.add_parser("dimacs")
    d.add_argument("--only", nargs="*")
    d.add_argument("--time-limit", type=float, default=60.0)
    d.add_argument("--workers", type=int, default=2)
    d.add_argument("--seed", type=int, default=0)
    g = sub.add_parser("large")
    g.add_argument("--time-limit", type=float, default=600.0)
    g.add_argument("--workers", type=int, default=2)
    g.add_argument("--seed", type=int, default=1)
    args = ap.parse_args()
    dimacs(args) if args.which == "dimacs" else large(args)


if __name__ == "__main__":
    main()
