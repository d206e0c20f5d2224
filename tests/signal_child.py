"""Run ``timetabler ARGS...`` in this process, touching a flag file at a known moment, so that a test
can send a real signal at that moment instead of guessing it with sleeps.

    python tests/signal_child.py FLAG search ARGS...   the flag appears as the first CP-SAT search with
                                                       goals begins (the search then runs as usual)
    python tests/signal_child.py FLAG export ARGS...   the flag appears once the workbook's sheet files
                                                       exist; the export then waits (up to 120 s) for
                                                       the signal, so it cannot finish first
"""

from __future__ import annotations

import sys
import time
from pathlib import Path


def _touch(flag: Path) -> None:
    flag.write_text("now\n")


def main() -> int:
    flag, moment, args = Path(sys.argv[1]), sys.argv[2], sys.argv[3:]
    if moment == "search":
        from ortools.sat.python import cp_model

        real_solve = cp_model.CpSolver.solve

        def solve(self, model, *rest, **kwargs):
            if model.has_objective() and not flag.exists():
                _touch(flag)
            return real_solve(self, model, *rest, **kwargs)

        cp_model.CpSolver.solve = solve
    elif moment == "export":
        from timetabler.export import workbook

        real_grid = workbook._grid_sheet

        def grid(*a, **kw):
            out = real_grid(*a, **kw)
            _touch(flag)
            time.sleep(120)  # the signal's handler raises here
            return out

        workbook._grid_sheet = grid
    else:
        raise SystemExit(f"unknown moment {moment!r}")
    from timetabler.cli import main as timetabler_main

    timetabler_main(args)  # the real entry point: SIGTERM handling, exit statuses
    return 0


if __name__ == "__main__":
    sys.exit(main())
