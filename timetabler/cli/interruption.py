"""Ctrl-C while a command searches: stop the search promptly and keep what it found.

Python runs a signal handler only when the main thread is back in the interpreter, and during a
CP-SAT search the main thread is inside the solver until the search ends (CP-SAT is told not to
catch SIGINT itself, see ``scheduling/cpsat_run.set_parameters``). So :class:`SearchInterruption` also
has the signal's number written to a pipe (``signal.set_wakeup_fd``, done at the moment the
signal arrives), and a thread reading that pipe sets :attr:`SearchInterruption.requested`, which
the engine's ``SolveOptions.stop`` asks: every CP-SAT search stops within a tenth of a second,
the local search between rounds, and each run ends with the best timetable it has.

- The first Ctrl-C asks for that stop; the command then shows what was found and exits 130
  (:class:`StoppedEarly`). A second Ctrl-C stops at once (``KeyboardInterrupt``).
- SIGTERM stays what ``common.stop_on_sigterm`` makes it, a ``KeyboardInterrupt`` (nothing more
  is shown or written), and stops the search too, so that it lands promptly.
"""

from __future__ import annotations

import os
import signal
import threading
from typing import Any


class StoppedEarly(KeyboardInterrupt):
    """Ctrl-C stopped the searches; the results found so far were shown. Exit 130 with ``message``."""

    def __init__(self, message: str):
        super().__init__(message)
        self.message = message


class SearchInterruption:
    """While in use (``with SearchInterruption() as stop:``), Ctrl-C sets ``stop.requested`` instead of
    raising; pass ``stop.requested.is_set`` as ``SolveOptions.stop``. Outside the main thread it does
    nothing (signals are the main thread's)."""

    def __init__(self) -> None:
        self.requested = threading.Event()
        self.interrupts = 0  # Ctrl-C seen by the handler
        self.seen = 0  # Ctrl-C seen on the pipe (sooner, while the main thread is in a search)
        self._active = False

    def __enter__(self) -> "SearchInterruption":
        if threading.current_thread() is not threading.main_thread():
            return self
        self._read, self._write = os.pipe()
        os.set_blocking(self._write, False)
        self._old_fd = signal.set_wakeup_fd(self._write, warn_on_full_buffer=False)
        self._old_int = signal.signal(signal.SIGINT, self._on_sigint)
        self._active = True
        self._watcher = threading.Thread(target=self._watch, name="timetabler-interruption", daemon=True)
        self._watcher.start()
        return self

    def __exit__(self, *exc: Any) -> bool:
        if self._active:
            self._active = False
            signal.signal(signal.SIGINT, self._old_int)
            signal.set_wakeup_fd(self._old_fd)
            os.close(self._write)  # the watcher reads the end of the pipe and returns
            self._watcher.join(timeout=1.0)
            os.close(self._read)
        return False

    @property
    def by_ctrl_c(self) -> bool:
        """Ctrl-C (SIGINT) asked for the stop (not SIGTERM)."""
        return bool(self.interrupts or self.seen)

    def _on_sigint(self, signum: int, frame: Any) -> None:  # noqa: ARG002 - the signal module's signature
        self.interrupts += 1
        self.requested.set()
        if max(self.interrupts, self.seen) >= 2:
            raise KeyboardInterrupt

    def _watch(self) -> None:
        while True:
            try:
                data = os.read(self._read, 64)
            except OSError:
                return
            if not data:
                return
            for number in data:
                if number == signal.SIGINT:
                    self.seen += 1
                    self.requested.set()
                elif number == signal.SIGTERM:
                    self.requested.set()  # the handler raises KeyboardInterrupt once the search returns
