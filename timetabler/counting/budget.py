"""Time and memory budgets for the counting engines.

An engine that would run past its budget raises :class:`BudgetExceeded` instead of
returning a number; the caller then reports bounds and an estimate, marked not exact.
"""

from __future__ import annotations

import time
from dataclasses import dataclass


class BudgetExceeded(Exception):
    """An exact computation would exceed its time or memory budget."""


@dataclass
class Budget:
    """A deadline (``time.monotonic`` seconds) and a memory ceiling in bytes for one piece."""

    deadline: float | None = None
    memory_bytes: int = 1_500_000_000

    @classmethod
    def seconds(cls, seconds: float | None, memory_bytes: int = 1_500_000_000) -> "Budget":
        return cls(None if seconds is None else time.monotonic() + seconds, memory_bytes)

    def check_time(self, what: str = "") -> None:
        if self.deadline is not None and time.monotonic() > self.deadline:
            raise BudgetExceeded(f"time budget reached{(' during ' + what) if what else ''}")

    def check_memory(self, estimate_bytes: float, what: str = "") -> None:
        if estimate_bytes > self.memory_bytes:
            raise BudgetExceeded(
                f"memory budget reached{(' during ' + what) if what else ''}: "
                f"about {estimate_bytes / 1e9:.1f} GB needed, {self.memory_bytes / 1e9:.1f} GB allowed"
            )

    def remaining(self) -> float | None:
        return None if self.deadline is None else self.deadline - time.monotonic()


UNLIMITED = Budget()
