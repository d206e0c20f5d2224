"""Counting for the overview page: a quick first look, then the exact count in the background.

The overview must show at once, yet a count that needs a minute must not be cut short at a
few seconds (a page once said "not exact, between 0 and 2 × 10^13" for a number of slots the
command line counts as exactly 0 in twelve seconds). So a :class:`CountTask` counts twice:

1. a first look in a thread of the server, within ``first_seconds``: a small file is counted
   exactly here, and a large one gets its bounds and estimates, which the page shows at once;
2. when that is not exact, the same count again in a child process
   (``python -m timetabler.web.count_jobs``, the same engine as the ``count`` command) with
   the whole ``budget_seconds`` (at least the command line's 20 s), while the page says so
   and replaces the table when the exact figures arrive. The child is ended when the upload
   is deleted, when another set of slot counts is asked for on the same upload, and when the
   server stops.

Messages between the server and the child are the length-prefixed pickles of
:mod:`timetabler.web.jobs` (both ends are this package).
"""

from __future__ import annotations

import logging
import os
import pickle
import subprocess
import sys
import threading
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..errors import InputError
from ..plan import BACKGROUND_COUNT_SECONDS
from .jobs import _receive, _send

log = logging.getLogger("timetabler.web")

#: Fewest seconds between two progress messages from the child.
PROGRESS_EVERY = 0.5


def exact_share(report: Any) -> int:
    """How many slot counts of a count report are exact (more is better)."""
    return sum(1 for c in getattr(report, "counts", None) or [] if getattr(c, "exact", False))


@dataclass
class CountTask:
    """The count of one set of slot counts for one analysed upload (see the module notes).

    ``state`` is ``counting`` (nothing to show yet), ``refining`` (the first look's report is
    shown; the exact count runs in the background), ``done``, ``stopped`` (the background
    count was ended; the first look stays) or ``failed``. ``first`` is set once there is a
    report (or an error) to show; ``finished`` once nothing more will come.
    """

    ks: tuple[int, ...]
    budget_seconds: float = BACKGROUND_COUNT_SECONDS
    done: int = 0
    total: int | None = None
    message: str = ""
    error: str | None = None
    state: str = "counting"
    started: float = field(default_factory=time.monotonic)
    first: threading.Event = field(default_factory=threading.Event)
    finished: threading.Event = field(default_factory=threading.Event)

    def __post_init__(self) -> None:
        self._process: subprocess.Popen | None = None
        self._lock = threading.Lock()

    # -- the work ------------------------------------------------------------------------

    def run(self, analysis: Any, first_seconds: float) -> None:
        from .analysis import count

        def progress(message: str, done: int, total: int | None) -> None:
            self.done, self.total, self.message = done, total, message

        try:
            report = count(analysis, list(self.ks), min(first_seconds, self.budget_seconds), progress)
            if exact_share(report) == len(self.ks) or self.budget_seconds <= first_seconds:
                self.state = "done"
                return
            with self._lock:
                if self.state == "stopped":
                    return
                self.state = "refining"
                self.done, self.total, self.message = 0, None, ""
            self.first.set()
            better = self._in_child(analysis)
            if better is not None and exact_share(better) >= exact_share(analysis.counts.get(self.ks)):
                analysis.counts[self.ks] = better
            with self._lock:
                if self.state == "refining":
                    self.state = "done"
        except InputError as exc:
            self.error, self.state = str(exc), "failed"
        except Exception:  # noqa: BLE001 - a counting bug must not hide the figures or stop a solve
            log.exception("counting failed for slot counts %s", list(self.ks))
            self.state = "failed"
            self.error = (
                "Counting the timetables failed: this is a bug in timetabler (the details are in the window "
                "where the page server runs). The figures above and solving below still work."
            )
        finally:
            self.first.set()
            self.finished.set()

    def _in_child(self, analysis: Any) -> Any:
        """The whole count in a child process; its report, or None when it was stopped or died."""
        env = dict(os.environ)
        package_root = str(Path(__file__).resolve().parents[2])
        env["PYTHONPATH"] = os.pathsep.join(p for p in (package_root, env.get("PYTHONPATH")) if p)
        with self._lock:
            if self.state != "refining":
                return None
            self._process = subprocess.Popen([sys.executable, "-m", "timetabler.web.count_jobs"], stdin=subprocess.PIPE,
                                             stdout=subprocess.PIPE, close_fds=True, env=env)
        process = self._process
        try:
            # the budget counts from the start of the task, as the page shows it: the child's imports and a
            # busy machine (a solve holding both cores) come out of it, so the child gets a deadline
            deadline = time.time() + self.budget_seconds - (time.monotonic() - self.started)
            process.stdin.write(pickle.dumps((analysis.problem, list(self.ks), analysis.graph, deadline),
                                             protocol=pickle.HIGHEST_PROTOCOL))
            process.stdin.close()
        except OSError:
            pass  # the child died at once (or was stopped); reading finds out
        report = None
        try:
            while True:
                message = _receive(process.stdout)
                if message is None:
                    break
                if message[0] == "progress":
                    self.done, self.total, self.message = message[1], message[2], message[3]
                elif message[0] == "report":
                    report = message[1]
                elif message[0] == "error":
                    log.error("the background count failed in the child process:\n%s", message[2])
        finally:
            process.stdout.close()
            process.wait()
        return report

    def stop(self) -> None:
        """End the background count (the first look stays shown)."""
        with self._lock:
            if self.state in ("counting", "refining"):
                self.state = "stopped"
            process = self._process
        if process is not None and process.poll() is None:
            process.terminate()
            try:
                process.wait(5)
            except subprocess.TimeoutExpired:
                process.kill()

    # -- what the page shows -----------------------------------------------------------------

    def to_json(self) -> dict:
        return {"state": self.state, "done": self.done, "total": self.total, "message": self.message,
                "error": self.error, "seconds": round(time.monotonic() - self.started, 1),
                "budget_seconds": self.budget_seconds}


def start_count(analysis: Any, ks: list[int], first_seconds: float, budget_seconds: float) -> CountTask:
    """The count task for these slot counts, started if need be; a background count of other
    slot counts of the same upload is stopped (one child per upload)."""
    key = tuple(ks)
    with analysis.lock:
        task = analysis.tasks.get(key)
        if task is None or (task.finished.is_set() and task.state in ("failed", "stopped")):
            for other in analysis.tasks.values():
                if other is not task and other.state == "refining":
                    other.stop()
            task = CountTask(key, budget_seconds=budget_seconds)
            analysis.tasks[key] = task
            if task.state == "counting" and key in analysis.counts and exact_share(analysis.counts[key]) < len(key):
                analysis.counts.pop(key)  # a stopped refinement: count again from the start
            threading.Thread(target=task.run, args=(analysis, first_seconds), name="timetabler-count", daemon=True).start()
    return task


def stop_counts(analyses: dict) -> None:
    """Stop every background count of an upload (its ``state["analyses"]``)."""
    for analysis in list(analyses.values()):
        for task in list(getattr(analysis, "tasks", {}).values()):
            task.stop()


def _child_main() -> None:
    """Body of the child: read (problem, slot counts, graph, deadline), count until the deadline, send the report."""
    import traceback

    out = sys.stdout.buffer
    sys.stdout = sys.stderr
    try:
        os.nice(10)  # the page, the browser and a solve come first
    except (AttributeError, OSError):
        pass
    try:
        problem, ks, graph, deadline = pickle.load(sys.stdin.buffer)
        from timetabler.counting.problem_counts import count_problem

        budget = max(1.0, deadline - time.time())  # wall clock: the parent's monotonic clock is not ours

        last = [0.0]

        def progress(message: str, done: int, total: int | None) -> None:
            now = time.monotonic()
            if now - last[0] >= PROGRESS_EVERY:
                last[0] = now
                _send(out, ("progress", done, total, message))

        report, _notes = count_problem(problem, ks, graph=graph, budget_seconds=budget, progress=progress)
        _send(out, ("report", report))
    except BaseException as exc:  # noqa: BLE001 - reported to the parent, never shown as a traceback
        try:
            _send(out, ("error", f"{type(exc).__name__}: {exc}", traceback.format_exc()))
        except OSError:
            pass


if __name__ == "__main__":
    _child_main()
