"""The solves of one upload: each its own id, page and downloads, kept until the upload goes.

A second solve on the same file must not replace a finished one that another tab is
showing, so every solve started on the page becomes a :class:`Solve` with an id of its
own (``/files/{token}/solves/{id}/...``). They are kept in the upload's state, newest
last; only one runs at a time per upload (the machine has few cores), and past
:data:`KEPT_SOLVES` the oldest finished ones are forgotten.
"""

from __future__ import annotations

import secrets
import time
from dataclasses import dataclass, field
from typing import Any

from .jobs import SolveJob

#: Solves kept per upload; beyond that the oldest finished one is dropped.
KEPT_SOLVES = 12


@dataclass
class Solve:
    """One solve of an upload: the job, what it was asked, and the files made from it."""

    id: str
    number: int  # 1, 2, ... in the order they were started on this upload
    job: SolveJob
    problem: Any  # the problem as solved (weights and rules as chosen in the form)
    settings: dict[str, Any]
    earlier: Any = None  # routes.EarlierTimetable, when the solve kept an earlier timetable
    outputs: dict = field(default_factory=dict)  # (kind, pseudonyms) -> path of a download made
    created: float = field(default_factory=time.time)

    @property
    def slot_counts(self) -> list[int]:
        return [k for k, _ in self.job.plan]


def solves_of(state: dict) -> dict[str, Solve]:
    """The solves of an upload (its ``state`` dict), oldest first."""
    return state.setdefault("solves", {})


def is_solve_id(text: str) -> bool:
    return 8 <= len(text) <= 32 and all(ch.isascii() and (ch.isalnum() or ch in "-_") for ch in text)


def add_solve(state: dict, job: SolveJob, problem: Any, settings: dict, earlier: Any = None) -> Solve:
    """Keep a new solve of the upload whose state is ``state`` and return it."""
    kept = solves_of(state)
    number = state.get("solve_count", 0) + 1
    state["solve_count"] = number
    solve = Solve(secrets.token_urlsafe(9), number, job, problem, settings, earlier)
    kept[solve.id] = solve
    while len(kept) > KEPT_SOLVES:
        oldest = next((s for s in kept.values() if not s.job.running), None)
        if oldest is None:
            break
        del kept[oldest.id]
    state["job"] = job  # the newest job: what "is a solve running on this file" looks at
    return solve


def latest_solve(state: dict) -> Solve | None:
    kept = solves_of(state)
    return next(reversed(kept.values()), None) if kept else None


def running_solve(state: dict) -> Solve | None:
    return next((s for s in solves_of(state).values() if s.job.running), None)
