"""Solve jobs of the web page: the scheduling engine run in a child process, watched and cancellable.

A solve can run for minutes. The page must stay responsive, show the best penalty and
bound as they improve, and let the registrar stop it. The engine itself
(:func:`timetabler.scheduling.solve`, the same function the ``solve`` command calls) runs
in a child process, ``python -m timetabler.web.jobs``: the job is sent to it on its
standard input, and progress and results come back on its standard output as
length-prefixed pickles (both ends are this module; nothing else writes to the pipe).
Stopping writes a line to the child's standard input, kept open for that: a thread of the
child then stops every CP-SAT search of the engine (``StopSearch``, as if its time limit
were reached, and any search begun later gets no time), so the slot count in hand comes
back with the best timetable found so far, validated like any other, and the child ends
without starting the next one. A child that has not answered in :data:`STOP_GRACE` seconds
is terminated. The runs already finished are kept either way. The child's standard error is the server's, so a bug's
traceback lands in the terminal that runs the page, never in the browser.

This module imports nothing heavy at the top: the child process runs it first.
"""

from __future__ import annotations

import dataclasses
import logging
import os
import pickle
import re
import struct
import subprocess
import sys
import threading
import time
import traceback
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..plan import FEWEST

log = logging.getLogger("timetabler.web")

#: Fewest seconds between two progress messages from the child for one slot count.
PROGRESS_EVERY = 0.25

#: Seconds a stopped child has to send back the slot count in hand before it is terminated.
STOP_GRACE = 12.0

#: Seconds between two StopSearch calls of the child's stop thread (a search may begin meanwhile).
STOP_EVERY = 0.2

#: The engine's phase names, in the words the page shows (no method names: a registrar reads them).
PHASE_WORDS = {
    "goals": "improving the timetable",
    "clash-free": "looking for a clash-free timetable",
    "local search": "improving the timetable by local search",
    "improving by local search": "improving the timetable by local search",
    "checking": "checking the slots and rules",
    "checking the DSATUR timetable": "checking a quick first timetable",
    "arranging groups over the slots": "arranging groups of events over the slots",
    "seating the first timetable": "seating the first timetable in rooms",
    "done": "finishing",
}

#: Phase names of the fewest-slots search that carry a number of slots, in plain words.
_PHASE_PATTERNS = (
    (re.compile(r"^transversals for (\d+) slots$"), r"trying \1 slots (one event from each group of clashing events per slot)"),
    (re.compile(r"^tabu search for (\d+) slots$"), r"trying \1 slots (moving clashing events)"),
)


def phase_words(phase: str) -> str:
    """The page's words for an engine phase name (unknown names are shown as they are).

    >>> phase_words("checking the DSATUR timetable")
    'checking a quick first timetable'
    >>> phase_words("tabu search for 12 slots")
    'trying 12 slots (moving clashing events)'
    """
    if phase in PHASE_WORDS:
        return PHASE_WORDS[phase]
    for pattern, words in _PHASE_PATTERNS:
        if pattern.match(phase):
            return pattern.sub(words, phase)
    return phase

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
    """A progress callback sending at most one report per :data:`PROGRESS_EVERY` seconds, except
    that a change of phase is always sent (else the page would show a finished phase for long)."""
    last = [0.0]
    last_phase = [None]

    def progress(*args: Any, **kwargs: Any) -> None:
        now = time.monotonic()
        fields = progress_fields(args, kwargs)
        phase = phase_words(fields["phase"]) if "phase" in fields else last_phase[0]
        if now - last[0] < PROGRESS_EVERY and phase == last_phase[0]:
            return
        last[0], last_phase[0] = now, phase
        _send(out, (tag, key, fields))

    return progress


def _child_main() -> None:
    """Body of the child process: read the job from stdin, solve each slot count, report on stdout.

    Each timetable is checked by the independent validator here, as the ``compare`` command
    does, and the check travels with the run (``run.validation``). The steps are the commands'
    (:func:`timetabler.plan.solve_steps`): with ``fewest_per_day`` set, the fewest-slots search first.
    """
    out = sys.stdout.buffer
    sys.stdout = sys.stderr  # anything the engine prints must not corrupt the channel
    try:
        os.nice(5)  # the solver yields to the page and the browser on a busy laptop
    except (AttributeError, OSError):
        pass
    try:
        control = sys.stdin.fileno()  # read unbuffered: the stop line must not sit in a buffer
        (size,) = struct.unpack(">Q", _read_exactly(control, 8))
        problem, plan, options, previous_for, fewest_per_day = pickle.loads(_read_exactly(control, size))
        stop = _stoppable_searches(control)
        if options is not None and hasattr(options, "stop"):
            options.stop = stop.is_set  # the local search asks it between rounds
        from timetabler.plan import FewestFound, StepStarted, solve_steps  # noqa: the child imports late

        for step in solve_steps(problem, [k for k, _ in plan], dict(plan).__getitem__, options=lambda i: options,
                                fewest_per_day=fewest_per_day, previous=lambda k, slots: previous_for.get(k) or None,
                                progress=lambda key: _throttled(out, "progress", key)):
            if isinstance(step, StepStarted):
                _send(out, ("start", step.step, time.time()))
            elif isinstance(step, FewestFound):
                _send(out, ("fewest", FEWEST, step.result))
            else:
                _send(out, ("run", step.slots, step.run))
            if stop.is_set() and not isinstance(step, StepStarted):
                _send(out, ("stopped",))
                return
        _send(out, ("done",))
    except BaseException as exc:  # noqa: BLE001 - reported to the parent, never shown as a traceback
        try:
            _send(out, ("error", f"{type(exc).__name__}: {exc}", traceback.format_exc()))
        except OSError:
            pass


def _read_exactly(fd: int, size: int) -> bytes:
    parts, left = [], size
    while left:
        chunk = os.read(fd, min(left, 1 << 20))
        if not chunk:
            raise EOFError("the job was cut short")
        parts.append(chunk)
        left -= len(chunk)
    return b"".join(parts)


def _stoppable_searches(control: int) -> threading.Event:
    """In the child: make every CP-SAT search stoppable by a line on the file descriptor ``control``
    (the parent's stop).

    Wraps ``CpSolver.solve`` (and its older name ``Solve``) of this process only, so the searches
    in hand are known; a thread waits for the stop line (or the end of the input, when the parent
    is gone), then calls ``StopSearch`` on them until the engine returns, and a search begun after
    that gets no time, so the engine finishes the slot count in hand with what it has found.
    """
    from ortools.sat.python import cp_model

    stop = threading.Event()
    searching: set = set()
    lock = threading.Lock()
    original = cp_model.CpSolver.solve

    def solve(self, *args: Any, **kwargs: Any):
        if stop.is_set():
            self.parameters.max_time_in_seconds = 0.0
        with lock:
            searching.add(self)
        try:
            return original(self, *args, **kwargs)
        finally:
            with lock:
                searching.discard(self)

    cp_model.CpSolver.solve = solve
    cp_model.CpSolver.Solve = solve

    def watch() -> None:
        try:
            os.read(control, 64)  # the stop line, or b"" when the parent has gone
        except OSError:
            pass
        stop.set()
        while True:
            with lock:
                now = list(searching)
            for solver in now:
                solver.stop_search()
            time.sleep(STOP_EVERY)

    threading.Thread(target=watch, name="timetabler-solve-stop", daemon=True).start()
    return stop




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
    state: str = "starting"  # starting | running | stopping | finished | cancelled | failed
    error: str | None = None
    runs: dict[int, Any] = field(default_factory=dict)
    #: Slot counts whose run came back because of a stop (the best timetable found until then).
    stopped: set[int] = field(default_factory=set)
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

    def stop(self) -> bool:
        """Stop the job, keeping the best timetable of the slot count in hand.

        The child is asked to stop its search; the run it sends back is kept (in ``runs``, and
        its slot count in ``stopped``), then the child is ended. Blocks until the job has
        ended (at most about :data:`STOP_GRACE` seconds). Returns False when it had already ended.
        """
        with self._lock:
            if self.state not in ("starting", "running"):
                return False
            self.state = "stopping"
        try:
            self._process.stdin.write(b"stop\n")
            self._process.stdin.flush()
        except (OSError, ValueError, AttributeError):
            pass  # the child is gone already; ending it below settles the job
        self._done.wait(STOP_GRACE)
        self._end("cancelled")
        return True

    def cancel(self) -> bool:
        """Stop the job now, dropping the slot count in hand. Returns False when it had already ended."""
        with self._lock:
            if self.state not in ("starting", "running", "stopping"):
                return False
        self._end("cancelled")
        return True

    def _end(self, state: str) -> None:
        """Mark every unfinished slot count stopped and end the child."""
        with self._lock:
            if self.state in ("starting", "running", "stopping"):
                self.state = state
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
        if self._process is not None and self._process.stdin is not None:
            try:
                self._process.stdin.close()
            except OSError:
                pass
        self._done.set()

    def wait(self, timeout: float | None = None) -> bool:
        """Block until the job ends (for tests and shutdown). True when it ended."""
        return self._done.wait(timeout)

    @property
    def running(self) -> bool:
        return self.state in ("starting", "running", "stopping")

    # -- the parent's side of the channel -----------------------------------------------------

    def _watch(self, payload: bytes) -> None:
        process = self._process
        try:
            try:
                process.stdin.write(struct.pack(">Q", len(payload)) + payload)
                process.stdin.flush()  # stdin stays open: a line on it later asks the child to stop
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
            stopping = self.state == "stopping"
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
                    item.phase = phase_words(fields["phase"])
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
                if stopping:  # the best timetable found until the stop (validated in the child)
                    self.stopped.add(k)
                    item.state = "stopped"
            elif kind == "fewest":
                self.fewest = message[2]
                item = self.slots[FEWEST]
                item.state, item.finished = "finished", time.time()
                item.status = "proven" if getattr(self.fewest, "proven", False) else "not proven"
                if stopping:
                    item.state = "stopped"
            elif kind == "stopped":
                return True  # the child ends by itself; stop() marks the rest
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
