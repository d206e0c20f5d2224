"""The store: how long a record, a read-back and a changes list take, and how big the file grows. Prints a table.

For each size: a generated session (events, attendees, four enrolments each; a timetable
given by a simple rule, not solved, since only the store is measured) is recorded and
published; then a second version with late enrolments and a tenth of the events moved is
recorded and published; the changes between the two are listed. The moved events and
the attendees to tell are recounted here from the two assignments and the enrolments,
and compared with the store's list. Also the sample term (sample_data/term_exams.xlsx,
read by intake).

    python benchmarks/store.py
    python benchmarks/store.py --sizes 1000 20000
"""

from __future__ import annotations

import argparse
import random
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from timetabler.model import Problem, generic_slots  # noqa: E402
from timetabler.store import Store, changes_between  # noqa: E402


class Run:  # the fields of a solver result the store reads
    def __init__(self, k, assignment):
        self.slots, self.slot_list, self.status, self.assignment = k, generic_slots(k), "feasible", assignment
        self.rooms, self.penalty, self.reason, self.moves, self.validation = {}, 0, None, [], None


def session(attendees: int, events: int, seed: int) -> list[tuple[str, str]]:
    rng = random.Random(seed)
    codes = [f"EX{n:04d}" for n in range(events)]
    return sorted({(f"S{a:06d}", c) for a in range(attendees) for c in rng.sample(codes, 4)})


def measure(name: str, pairs: list[tuple[str, str]], k: int, folder: Path) -> dict:
    rng = random.Random(1)
    codes = sorted({e for _, e in pairs})
    first = {c: 1 + i % k for i, c in enumerate(codes)}
    second = dict(first)
    for c in rng.sample(codes, max(1, len(codes) // 10)):
        second[c] = 1 + (first[c] % k)  # another slot
    late = pairs + [(f"LATE{i}", rng.choice(codes)) for i in range(50)]
    path = folder / f"{name}.sqlite3"
    with Store(path) as store:
        t0 = time.perf_counter()
        store.record_solve(Problem(list(pairs), source=f"{name}.csv"), [Run(k, first)], {}, publish=(k, "v1"))
        t1 = time.perf_counter()
        store.record_solve(Problem(list(late), source=f"{name}.csv"), [Run(k, second)], {}, publish=(k, "v2"))
        t2 = time.perf_counter()
        a, b = store.published_version("v1"), store.published_version("v2")
        t3 = time.perf_counter()
        found = changes_between(a, b)
        t4 = time.perf_counter()
    # recount: events whose slot differs; attendees with a moved event or a late enrolment
    moved = {c for c in codes if first[c] != second[c]}
    told = {p for p, c in late if c in moved} | {p for p, _ in late[len(pairs):]}
    agrees = {m.event for m in found.moved} == moved and {p.attendee for p in found.attendees} == told
    return {"input": name, "enrolments": len(pairs), "record s": t1 - t0, "record again s": t2 - t1,
            "read both s": t3 - t2, "changes s": t4 - t3, "file MiB": path.stat().st_size / 2**20,
            "moved": len(moved), "to tell": len(told), "agrees": "yes" if agrees else "NO"}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--sizes", type=int, nargs="+", default=[1000, 10000], help="attendees per generated session")
    args = parser.parse_args()
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for n in args.sizes:
            rows.append(measure(f"generated-{n}", session(n, max(50, n // 10), n), 20, Path(tmp)))
        term = ROOT / "sample_data" / "term_exams.xlsx"
        if term.exists():
            from timetabler.intake import read_problem

            problem = read_problem(str(term)).problem
            rows.append(measure("term_exams", list(problem.enrolments), 20, Path(tmp)))
    heads = list(rows[0])
    print(" | ".join(f"{h:>14}" for h in heads))
    for r in rows:
        print(" | ".join(f"{v:>14.3f}" if isinstance(v, float) else f"{v!s:>14}" for v in r.values()))


if __name__ == "__main__":
    main()
