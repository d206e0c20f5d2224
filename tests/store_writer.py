"""A process that writes records into a store until it is told to stop or killed (for the store tests).

Usage: python tests/store_writer.py STORE NAME COUNT [--publish]

Each record is one solve of a generated instance (40 events, 300 attendees, 1,200 enrolments:
big enough that a transaction takes a while); after each commit it prints
``committed NAME I`` and flushes (and ``ready`` once the store is open), so the parent knows which records must have survived.
The instance of record I is a function of NAME and I, so a test can recompute what it
should find in the store.
"""

from __future__ import annotations

import random
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from timetabler.model import Problem, generic_slots  # noqa: E402
from timetabler.scheduling import SolveRun  # noqa: E402
from timetabler.store import Store  # noqa: E402


def instance(name: str, i: int) -> tuple[Problem, SolveRun]:
    rng = random.Random(f"{name}-{i}")
    events = [f"E{n:02d}" for n in range(40)]
    pairs = sorted({(f"{name}-S{rng.randrange(300):03d}", rng.choice(events)) for _ in range(1200)})
    problem = Problem(list(pairs), source=f"{name}-{i}.csv")
    assignment = {code: 1 + (n % 8) for n, code in enumerate(sorted(problem.events))}
    run = SolveRun(slots=8, slot_list=generic_slots(8), status="feasible", assignment=assignment, penalty=i)
    return problem, run


def main() -> None:
    path, name, count = sys.argv[1], sys.argv[2], int(sys.argv[3])
    publish = "--publish" in sys.argv
    with Store(path) as store:
        print("ready", flush=True)
        for i in range(count):
            problem, run = instance(name, i)
            store.record_solve(problem, [run], {"writer": name, "record": i},
                               publish=(8, f"{name} {i}") if publish else None)
            print(f"committed {name} {i}", flush=True)


if __name__ == "__main__":
    main()
