"""Time and memory of the exporters at the scale of a large university exam session.

Generates an instance at the scale published with Purdue University's exam data sets
(about 2,000 exams, 33,000 students, 120,000 enrolments, 28 slots, 250 rooms; figures as
published with those data sets, recalled here, not read from them), gives every exam a
slot and a room, and times each exporter, printing a table. The timetable is arbitrary
(exam i in slot i mod K): this measures the writers, not the solver, and the sheets are as
large as for a real timetable.

    /work/venv/bin/python benchmarks/export.py                 # full scale
    /work/venv/bin/python benchmarks/export.py --scale 0.1     # a tenth, quicker
    /work/venv/bin/python benchmarks/export.py --skip-ics      # without 33,000 calendar files
"""

from __future__ import annotations

import argparse
import datetime as dt
import os
import random
import resource
import sys
import tempfile
import time
from dataclasses import dataclass, field
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from timetabler.export.csv_folder import write_csv_folder  # noqa: E402
from timetabler.export.icalendar_files import write_calendars  # noqa: E402
from timetabler.export.workbook import write_workbook  # noqa: E402
from timetabler.model import Problem, Room, Slot  # noqa: E402


@dataclass
class Run:
    slots: int
    slot_list: list
    status: str
    assignment: dict
    rooms: dict = field(default_factory=dict)
    penalty: int | None = None
    bound: float | None = None
    proven: bool = False
    reason: str | None = None
    wall_seconds: float = 0.0


def instance(exams: int, students: int, per_student: float, k: int, n_rooms: int, seed: int = 7):
    rng = random.Random(seed)
    codes = [f"HV{c:04d}" for c in range(exams)]
    weights = [1.0 / (1 + i) ** 0.6 for i in range(exams)]  # a few big exams, many small ones
    pairs = []
    for s in range(students):
        n = max(1, min(10, int(rng.gauss(per_student, 1.2))))
        chosen = set(rng.choices(codes, weights, k=n))
        pairs.extend((f"HV-S{s:05d}", c) for c in chosen)
    problem = Problem(pairs, source="benchmark-input.xlsx")
    problem.rooms = [Room(f"Room {r:03d}", 30 + (r * 37) % 270) for r in range(n_rooms)]
    start = dt.date(2027, 5, 3)
    slots = []
    for i in range(k):
        day = i // 2
        slots.append(Slot(f"Slot {i + 1}", date=start + dt.timedelta(days=day + 2 * (day // 5)),
                          start=dt.time(9) if i % 2 == 0 else dt.time(14), length_minutes=180, day=day + 1))
    assignment = {c: i % k + 1 for i, c in enumerate(codes)}
    sizes = problem.event_sizes()
    rooms = {c: [(problem.rooms[i % n_rooms].name, sizes[c])] for i, c in enumerate(codes) if sizes[c]}
    return problem, Run(k, slots, "feasible", assignment, rooms, penalty=0)


def measure(label, fn):
    """Wall and CPU time of ``fn``, and the process's peak resident memory after it (MB; a running maximum).

    CPU time is the fairer figure on a shared machine: wall time grows with other work."""
    t0, c0 = time.perf_counter(), time.process_time()
    out = fn()
    seconds, cpu = time.perf_counter() - t0, time.process_time() - c0
    return label, seconds, cpu, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024, out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--scale", type=float, default=1.0, help="fraction of the full size (default 1)")
    parser.add_argument("--skip-ics", action="store_true", help="do not write the per-attendee calendars")
    args = parser.parse_args()
    exams, students = int(2000 * args.scale), int(33000 * args.scale)
    problem, run = instance(exams, students, 4.2, 28, max(5, int(250 * args.scale)))
    base = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"instance: {len(problem.events)} exams, {len(problem.attendees)} students, {len(problem.enrolments)} "
          f"enrolments, {run.slots} slots, {len(problem.rooms)} rooms; load average {os.getloadavg()[0]:.2f} on "
          f"{os.cpu_count()} cores")
    print(f"peak RSS before writing (instance built): {base:.0f} MB")
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        label, s, cpu, mb, path = measure("workbook (.xlsx)",
                                          lambda: write_workbook(tmp / "b.xlsx", problem=problem, runs=[run]))
        rows.append((label, s, cpu, mb, f"{path.stat().st_size / 2**20:.1f} MB"))
        label, s, cpu, mb, files = measure("CSV folder", lambda: write_csv_folder(tmp / "csv", problem=problem, runs=[run]))
        rows.append((label, s, cpu, mb, f"{sum(p.stat().st_size for p in files) / 2**20:.1f} MB in {len(files)} files"))
        if not args.skip_ics:
            label, s, cpu, mb, files = measure("iCalendar files",
                                               lambda: write_calendars(tmp / "ics", problem=problem, run=run))
            rows.append((label, s, cpu, mb, f"{len(files)} files"))
    print(f"{'output':<20} {'wall s':>8} {'CPU s':>8} {'peak RSS MB':>12}  size")
    for label, s, cpu, mb, size in rows:
        print(f"{label:<20} {s:>8.1f} {cpu:>8.1f} {mb:>12.0f}  {size}")
    print(f"load average after: {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
