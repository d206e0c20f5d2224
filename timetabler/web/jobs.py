"""Solve jobs of the web page: the scheduling engine run in a child process, watched and cancellable.

A solve can run for minutes. The page must stay responsive, show the best penalty and
bound as they improve, and let the registrar stop it. The engine itself
(:func:`timetabler.scheduling.solve`, the same function the ``solve`` command calls) runs
in a child process, ``python -m timetabler.web.jobs``: the job is sent to it on its
standard input, and progress and results come back on its standard output as
length-prefixed pickles (both ends are this module; nothing else writes to the pipe).
Cancelling terminates the child, so it works whatever the engine is doing, and the runs
already finished are kept. The child's standard error is the server's, so a bug's
traceback lands in the terminal that runs the page, never in the browser.

This module imports nothing heavy at the top: the child process runs it first.
"""

from __future__ import annotations

import dataclasses
import logging
import os
import pickle
import struct
import subprocess
import sys
import threading
import time
import traceback
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

log = logging.getLogger("timetabler.web")

#: Fewest seconds between two progress messages from the child for one slot count.
PROGRESS_EVERY = 0.25

#: The engine's short phase names, in the words the page shows.
PHASE_WORDS = {"goals": "improving the timetable", "clash-free": "looking for a clash-free timetable"}

#: Fields of a progress report the page shows (any others are ignored).
_PROGRESS_KEYS = ("best", "penalty", "objective", "bound", "gap", "solutions", "elapsed", "wall_seconds", "phase", "message")


def progress_fields(args: tuple, kwargs: dict) -> dict[str, Any]:
    """Turn whatever the engine's progress callback received into a small dict of plain values."""
    found: dict[str, Any] = {}
    for arg in args:
        if dataclasses.is_dataclass(arg) and not isinstance(arg, type):
            found.update(dataclasses.asdict(arg))
        elif isinstance(arg, dict):
            found.update(arg)
    found.update(kwargs)
    if found.get("phase") == "clash-free":
        # The search for a first clash-free timetable has no goals: its "penalty" means nothing yet.
        found = {k: v for k, v in found.items() if k not in ("penalty", "objective", "bound", "gap")}
    out: dict[str, Any] = {}
    for key in _PROGRESS_KEYS:
        value = found.get(key)
        if isinstance(value, (int, float, str)) and not isinstance(value, bool):
            out[key] = value
    if "best" not in out:
        for alias in ("penalty", "objective"):
            if alias in out:
                out["best"] = out[alias]
                break
    return out


def _send(stream: Any, message: tuple) -> None:
    data = pickle.dumps(message, protocol=pickle.HIGHEST_PROTOCOL)
    stream.write(struct.pack(">I", len(data)) + data)
    stream.flush()


def _receive(stream: Any) -> tuple | None:
    head = stream.read(4)
    if len(head) < 4:
        return None
    (size,) = struct.unpack(">I", head)
    data = stream.read(size)
    if len(data) < size:
        return None
    return pickle.loads(data)


def _throttled(out: Any, tag: str, key: Any):
    last = [0.0]

    def progress(*args: Any, **kwargs: Any) -> None:
        now = time.monotonic()
        if now - last[0] < PROGRESS_EVERY:
            return
        last[0] = now
        _send(out, (tag, key, progress_fields(args, kwargs)))

    return progress


def _child_main() -> None:
    """Body of the child process: read the job from stdin, solve each slot count, report on stdout.

    Each timetable is checked by the independent validator here, as the ``compare`` command
    does, and the check travels with the run (``run.validation``). With ``fewest_per_day``
    set, the fewest-slots search runs last.
    """
    out = sys.stdout.buffer
    sys.stdout = sys.stderr  # anything the engine prints must not corrupt the channel
    try:
        os.nice(5)  # the solver yields to the page and the browser on a busy laptop
    except (AttributeError, OSError):
        pass
    try:
        problem, plan, options, previous_for, fewest_per_day = pickle.load(sys.stdin.buffer)
        from timetabler.conflicts import conflict_graph
        from timetabler.scheduling import fewest_slots, solve, validate

        graph = conflict_graph(problem)
        for k, slots in plan:
            _send(out, ("start", k, time.time()))
            previous = previous_for.get(k) or None
            run = solve(problem, slots, options, previous=previous, progress=_throttled(out, "progress", k), graph=graph.copy())
            if run.assignment:
                run.validation = validate(
                    problem, slots, run.assignment, run.rooms or None, previous=previous,
                    room_sharing=bool(getattr(options, "room_sharing", False)),
                    room_splitting=bool(getattr(options, "room_splitting", False)),
                )
            _send(out, ("run", k, run))
        if fewest_per_day is not None:
            _send(out, ("start", FEWEST, time.time()))
            result = fewest_slots(problem, per_day=fewest_per_day, options=options,
                                  progress=_throttled(out, "progress", FEWEST), graph=graph.copy())
            _send(out, ("fewest", FEWEST, result))
        _send(out, ("done",))
    except BaseException as exc:  # noqa: BLE001 - reported to the parent, never shown as a traceback
        try:
            _send(out, ("error", f"{type(exc).__name__}: {exc}", traceback.format_exc()))
        except OSError:
            pass


#: Key of the fewest-slots search among the progress rows (slot counts are 1 and up).
FEWEST = 0


@dataclass
class SlotProgress:
    """What the page shows for one slot count while a job runs."""

    slots: int
    state: str = "waiting"  # waiting | solving | finished | stopped
    started: float | None = None
    finished: float | None = None
    best: float | int | None = None
    bound: float | int | None = None
    status: str | None = None
    phase: str | None = None

    def to_json(self) -> dict:
        elapsed = None
        if self.started is not None:
            elapsed = round((self.finished or time.time()) - self.started, 1)
        return {
            "slots": self.slots,
            "state": self.state,
            "elapsed": elapsed,
            "best": self.best,
            "bound": self.bound,
            "status": self.status,
            "phase": self.phase if self.state == "solving" else None,
        }


@dataclass
class SolveJob:
    """One solve job: several slot counts solved one after another in a child process.

    Parameters
    ----------
    problem
        The :class:`~timetabler.model.Problem` to solve.
    plan
        ``(K, slot list)`` pairs, in the order to solve them.
    options
        The engine's ``SolveOptions`` (passed through untouched).
    time_limit
        Seconds per slot count, used only to draw the progress bar.
    previous
        An earlier timetable to keep (event code -> slot number), the same for every slot count.
    previous_by_slots
        The same, resolved for each slot count (K -> event code -> slot number): slot labels and
        numbers can mean different slots, or none, for different K. Wins over ``previous``.
    """

    problem: Any
    plan: list[tuple[int, list]]
    options: Any = None
    previous: dict | None = None
    previous_by_slots: dict[int, dict] | None = None
    time_limit: float = 30.0
    #: Sessions per day for the fewest-slots search, run after the slot counts; None: no search.
    fewest_per_day: int | None = None
    fewest: Any = None
    state: str = "starting"  # starting | running | finished | cancelled | failed
    error: str | None = None
    runs: dict[int, Any] = field(default_factory=dict)
    slots: dict[int, SlotProgress] = field(default_factory=dict)
    started: float = field(default_factory=time.time)
    finished: float | None = None

    def __post_init__(self) -> None:
        self.slots = {k: SlotProgress(k) for k, _ in self.plan}
        if self.fewest_per_day is not None:
            self.slots[FEWEST] = SlotProgress(FEWEST)
        self._lock = threading.Lock()
        self._process: Any = None
        self._watcher: threading.Thread | None = None
        self._done = threading.Event()

    # -- control --------------------------------------------------------------------------

    def start(self) -> "SolveJob":
        env = dict(os.environ)
        package_root = str(Path(__file__).resolve().parents[2])  # so the child finds this very package
        env["PYTHONPATH"] = os.pathsep.join(p for p in (package_root, env.get("PYTHONPATH")) if p)
        self._process = subprocess.Popen(
            [sys.executable, "-m", "timetabler.web.jobs"],
            stdin=subprocess.PIPE,
            stdout=subprocess.PIPE,
            close_fds=True,
            env=env,
        )
        previous_for = {k: (self.previous_by_slots or {}).get(k, self.previous) for k, _ in self.plan}
        payload = pickle.dumps((self.problem, self.plan, self.options, previous_for, self.fewest_per_day),
                               protocol=pickle.HIGHEST_PROTOCOL)
        self.state = "running"
        self._watcher = threading.Thread(target=self._watch, args=(payload,), name="timetabler-solve-watch", daemon=True)
        self._watcher.start()
        return self

    def cancel(self) -> bool:
        """Stop the job now. Returns False when it had already ended."""
        with self._lock:
            if self.state not in ("starting", "running"):
                return False
            self.state = "cancelled"
            self.finished = time.time()
            for item in self.slots.values():
                if item.state in ("waiting", "solving"):
                    item.state = "stopped"
                    if item.started is not None:
                        item.finished = time.time()
        if self._process is not None and self._process.poll() is None:
            self._process.terminate()
            try:
                self._process.wait(5)
            except subprocess.TimeoutExpired:
                self._process.kill()
                self._process.wait(5)
        self._done.set()
        return True

    def wait(self, timeout: float | None = None) -> bool:
        """Block until the job ends (for tests and shutdown). True when it ended."""
        return self._done.wait(timeout)

    @property
    def running(self) -> bool:
        return self.state in ("starting", "running")

    # -- the parent's side of the channel -----------------------------------------------------

    def _watch(self, payload: bytes) -> None:
        process = self._process
        try:
            try:
                process.stdin.write(payload)
                process.stdin.close()
            except OSError:
                pass  # the child died at once; reading below finds out
            while True:
                message = _receive(process.stdout)
                if message is None:
                    break
                if self._handle(message):
                    return
            process.wait()
            with self._lock:
                if self.state == "running":
                    self.state = "failed"
                    self.error = (
                        "The solver stopped unexpectedly (exit status "
                        f"{process.returncode}; it may have run out of memory)."
                    )
                    self.finished = time.time()
        finally:
            try:
                process.stdout.close()
            except OSError:
                pass
            if process.poll() is None and self.state != "running":
                try:
                    process.wait(5)
                except subprocess.TimeoutExpired:
                    process.kill()
            self._done.set()

    def _handle(self, message: tuple) -> bool:
        kind = message[0]
        with self._lock:
            if self.state == "cancelled":
                return True
            if kind == "start":
                item = self.slots[message[1]]
                item.state, item.started = "solving", message[2]
            elif kind == "progress":
                item = self.slots[message[1]]
                fields = message[2]
                if "best" in fields:
                    item.best = fields["best"]
                if "bound" in fields:
                    item.bound = fields["bound"]
                if "phase" in fields:
                    item.phase = PHASE_WORDS.get(fields["phase"], fields["phase"])
            elif kind == "run":
                k, run = message[1], message[2]
                self.runs[k] = run
                item = self.slots[k]
                item.state, item.finished = "finished", time.time()
                item.status = getattr(run, "status", None)
                penalty = getattr(run, "penalty", None)
                if penalty is not None:
                    item.best = penalty
                bound = getattr(run, "bound", None)
                if bound is not None:
                    item.bound = bound
            elif kind == "fewest":
                self.fewest = message[2]
                item = self.slots[FEWEST]
                item.state, item.finished = "finished", time.time()
                item.status = "proven" if getattr(self.fewest, "proven", False) else "not proven"
            elif kind == "done":
                self.state, self.finished = "finished", time.time()
                return True
            elif kind == "error":
                log.error("solve failed in the child process:\n%s", message[2])
                self.state, self.finished = "failed", time.time()
                self.error = message[1]
                return True
        return False

    def to_json(self) -> dict:
        with self._lock:
            return {
                "state": self.state,
                "error": self.error,
                "time_limit": self.time_limit,
                "elapsed": round((self.finished or time.time()) - self.started, 1),
                "slots": [self.slots[k].to_json() for k, _ in self.plan],
                "fewest": self._fewest_json(),
            }

    def _fewest_json(self) -> dict | None:
        item = self.slots.get(FEWEST)
        if item is None:
            return None
        doc = item.to_json()
        doc.pop("slots")
        found = self.fewest
        doc["lower"] = getattr(found, "lower", None)
        doc["upper"] = getattr(found, "upper", None)
        doc["proven"] = getattr(found, "proven", None)
        return doc


if __name__ == "__main__":
    _child_main()
