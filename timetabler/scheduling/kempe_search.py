"""Improving a clash-free timetable by simulated annealing over Kempe chains and slot swaps.

CP-SAT finds the first timetable that meets every hard rule and proves what it can; this
module then lowers the weighted penalty (:mod:`.penalty_state`) while keeping every hard
rule at every step.

Neighbourhoods
--------------
*Kempe-chain interchange* (Thompson & Dowsland, "General cooling schedules for a simulated
annealing based timetabling system", PATAT 1995, LNCS 1153 (1996) 345-363; "A robust
simulated annealing based examination timetabling system", Computers & OR 25 (1998)
637-648): pick an event ``e`` in slot ``a`` and another slot ``b``; the chain is the
connected set of events reached from ``e`` through clashes (and "same slot" rules) among
the events of ``a`` and ``b``; swapping the chain's events between ``a`` and ``b`` keeps the
timetable clash-free. When ``e`` clashes with nothing in ``b`` the chain is ``e`` alone: the
single move is the smallest Kempe chain.

*Slot swap*: all the events of ``a`` go to ``b`` and back (the chain that takes both slots
whole). It is tried like any move and kept only when every hard rule holds after it, so it
is applied only where the two slots are alike for the rules in force.

Incremental evaluation
----------------------
``wn[e, t]`` holds the attendees ``e`` shares with the events in slot ``t``. A chain ``S``
moving between ``a`` and ``b`` changes the penalty by

    sum_{e in S} ( U[e, new] - U[e, old] + sum_t wn[e, t] (C[new, t] - C[old, t]) + C[a, b] wn[e, new] )

(the last term restores the pairs inside the chain, which stay ``a``-``b`` pairs); the
hard rules are checked on ``S`` only (allowed slots, per-slot limits, before, different
days, alone, the per-day cap over distinct attendee event sets). A move costs
``O(|S| (K + degree))``, not a recount.

Acceptance
----------
Simulated annealing (Kirkpatrick, Gelatt & Vecchi, Science 220 (1983) 671-680) with a
geometric cooling over the time given, as Thompson & Dowsland recommend for this
neighbourhood. The schedule is derived from the instance, never set per instance: a sample
of moves from the starting timetable gives the uphill changes; the search starts where the
median uphill move is accepted with probability ``START_ACCEPTANCE`` and ends where the
smallest uphill steps are accepted with probability ``END_ACCEPTANCE``. The best timetable
seen is kept; the result is never worse than the start. Chosen over late acceptance hill
climbing (Burke & Bykov, EJOR 258 (2017) 70-78) because its history length ties the
convergence to a number of moves, while a registrar gives a time limit: a schedule over
the time left uses all of it on any machine and load.

Speed
-----
The inner loop (:mod:`.kempe_moves`) is compiled with numba (``cache=True``, so later
runs load it from disk). Measured on hec-s-92 (81 exams, 18 slots) on this 2-core machine
under a load average of about 10: 170,000 moves a second compiled against 925 for the same
loop run as Python, 184 times faster; numpy alone does not help here, since a chain holds a
few events and each numpy call costs more than the work it would vectorise.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from typing import Callable

import numpy as np

from .penalty_state import PenaltyState

#: Share of tried moves that are slot swaps (the rest are Kempe chains and single moves).
SWAP_SHARE = 0.01
#: Acceptance probability of the median uphill move at the start, and of the smallest at the end.
START_ACCEPTANCE = 0.45
END_ACCEPTANCE = 0.01
#: In repeatable mode the search counts moves instead of seconds: this many moves per second of budget.
MOVES_PER_SECOND = 200_000


@dataclass
class SearchResult:
    """The best timetable found and what the search did."""

    assignment: dict[str, int]
    penalty: int
    start_penalty: int
    moves: int
    accepted: int
    seconds: float


class _Search:
    """The mutable arrays of one search over a :class:`PenaltyState`."""

    def __init__(self, state: PenaltyState, x: np.ndarray, seed: int):
        self.state = st = state
        n, k = st.n, st.k
        self.x = x.astype(np.int64).copy()
        rows = np.repeat(np.arange(n), np.diff(st.adj_ptr))
        self.wn = np.zeros((n, k), dtype=np.int64)
        np.add.at(self.wn, (rows, self.x[st.adj_idx]), st.adj_w)
        self.load = np.zeros((k, st.res_use.shape[1]), dtype=np.int64)
        np.add.at(self.load, self.x, st.res_use)
        self.occ = np.bincount(self.x, minlength=k).astype(np.int64)
        self.alone_in = np.bincount(self.x, weights=st.alone.astype(np.int64), minlength=k).astype(np.int64)
        days = int(st.day.max(initial=0)) + 1
        self.gload = np.zeros((max(st.n_groups, 1), days), dtype=np.int64)
        if st.daily_limit >= 0:
            ev_rows = np.repeat(np.arange(n), np.diff(st.group_ptr))
            np.add.at(self.gload, (st.group_idx, st.day[self.x[ev_rows]]), 1)
        self.best_x = self.x.copy()
        self.mark = np.zeros(n, dtype=np.int64)
        self.members = np.zeros(max(n, 1), dtype=np.int64)
        start = st.penalty(self.x)
        self.stats = np.array([start, start, 0, 0, 0, 0], dtype=np.int64)
        from .kempe_moves import seed_moves  # imports numba: only when a search runs

        seed_moves(seed)

    def run(self, moves: int, t_start: float, t_end: float, record: np.ndarray | None = None) -> None:
        from .kempe_moves import RuleArrays, SearchArrays, anneal_moves

        st = self.state
        search = SearchArrays(*(getattr(self, name) for name in SearchArrays._fields))
        rules = RuleArrays(*(getattr(st, name) for name in RuleArrays._fields))
        anneal_moves(search, rules, int(moves), float(t_start), float(t_end), SWAP_SHARE,
                     record if record is not None else np.zeros(0, dtype=np.int64))

    @property
    def current(self) -> int:
        return int(self.stats[0])

    @property
    def best(self) -> int:
        return int(self.stats[1])


def temperatures(search: _Search, samples: int = 2000) -> tuple[float, float]:
    """Start and end temperatures from the uphill changes of a sample of moves from the current timetable."""
    record = np.zeros(samples, dtype=np.int64)
    search.run(samples * 20, 1.0, 1.0, record)
    got = record[: int(search.stats[5])]
    search.stats[5] = 0
    up = np.sort(got[got > 0])
    if up.size == 0:
        return 1.0, 0.01
    median = float(np.median(up))
    small = float(up[max(0, int(0.05 * up.size) - 1)])
    t_start = median / -math.log(START_ACCEPTANCE)
    t_end = min(t_start, small / -math.log(END_ACCEPTANCE))
    return t_start, max(t_end, 1e-3)


def improve(
    state: PenaltyState,
    start: dict[str, int],
    *,
    seconds: float,
    seed: int = 0,
    deterministic: bool = False,
    progress: Callable[[int, float], None] | None = None,
    stop: Callable[[], bool] | None = None,
) -> SearchResult:
    """Lower the penalty of the timetable ``start`` (event -> slot 1..K) within ``seconds``.

    ``start`` must meet every hard rule of ``state``; every timetable the search visits
    does too. ``seconds`` counts search time: loading the compiled loop comes first (see
    :mod:`.kempe_moves`; :func:`.solve.solve` has it loaded in the background). ``progress(best_penalty, seconds)`` is called when the best improves (at most
    a few times a second); ``stop()`` returning True ends the search early. In ``deterministic`` mode the search does a fixed number of moves
    (``MOVES_PER_SECOND`` per second of budget) so runs repeat exactly.

    Examples
    --------
    >>> from timetabler.model import Problem, generic_slots
    >>> from timetabler.conflicts import conflict_graph
    >>> from timetabler.scheduling.cpsat_model import physical_domains
    >>> from timetabler.scheduling.penalty_state import build_state
    >>> p = Problem([("ann", "A"), ("ann", "B"), ("bo", "B"), ("bo", "C")])
    >>> slots = generic_slots(3)
    >>> g = conflict_graph(p)
    >>> sizes = {c: g.nodes[c]["size"] for c in g}
    >>> st = build_state(p, slots, g, sorted(g), sizes=sizes,
    ...                  domains=physical_domains(p, slots, sorted(g), sizes, room_splitting=False))
    >>> r = improve(st, {"A": 1, "B": 2, "C": 3}, seconds=0.2)
    >>> r.start_penalty, r.penalty  # generic slots are days of their own: two pairs overnight, 3 each
    (6, 0)
    """
    from .kempe_moves import compile_now

    compile_now()  # loading (or, the first time on a machine, compiling) the loop is not search time
    t0 = time.perf_counter()
    x = state.slots_of(start)
    search = _Search(state, x, seed)
    start_penalty = search.best
    total_moves = int(max(1.0, seconds) * MOVES_PER_SECOND) if deterministic else None
    if state.k >= 2 and state.n and seconds > 0:
        t_hot, t_cold = temperatures(search)
        done = 0
        chunk = 2000
        last_best, last_report = search.best, 0.0
        while not (stop and stop()):
            used = time.perf_counter() - t0
            if deterministic:
                if done >= total_moves:
                    break
                frac0, frac1 = done / total_moves, min(1.0, (done + chunk) / total_moves)
            else:
                if used >= seconds:
                    break
                rate = done / used if done and used > 0 else None
                frac0 = used / seconds
                frac1 = min(1.0, frac0 + (chunk / rate / seconds if rate else 0.01))
            search.run(chunk, t_hot * (t_cold / t_hot) ** frac0, t_hot * (t_cold / t_hot) ** frac1)
            done += chunk
            took = time.perf_counter() - t0 - used
            if not deterministic and took < 0.05:
                chunk = min(chunk * 2, 1_000_000)
            elif not deterministic and took > 0.2:
                chunk = max(500, chunk // 2)
            if progress and search.best < last_best and time.perf_counter() - t0 - last_report > 0.25:
                last_best, last_report = search.best, time.perf_counter() - t0
                progress(search.best, last_report)
    best_x = search.best_x
    best = state.penalty(best_x)
    if best > start_penalty:  # cannot happen (the best is kept); a guard against a silent regression
        best_x, best = x, start_penalty
    if progress and best < start_penalty:
        progress(best, time.perf_counter() - t0)
    return SearchResult(assignment=state.assignment_of(best_x), penalty=best, start_penalty=start_penalty,
                        moves=int(search.stats[3]), accepted=int(search.stats[4]), seconds=time.perf_counter() - t0)
