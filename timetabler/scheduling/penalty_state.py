"""A timetable's weighted penalty and hard rules as flat arrays, for fast local search.

Every soft goal the slot model has splits into two kinds of terms:

* **pair terms**, one per pair of clashing events ``e, f`` sharing ``w_ef`` attendees and
  sitting in slots ``s, t``: ``w_ef * C[s, t]``, where ``C`` adds the back-to-back,
  overnight, two-in-a-day and Carter proximity weights for that pair of slots
  (:func:`.arrangement.pair_cost`). Attendees with the same pair of events are aggregated
  in ``w_ef`` (the conflict graph's ``shared``), so no goal ever walks attendee by
  attendee;
* **event terms** ``U[e, s]``: large events late, preferred slots missed, slots marked
  penalised, and moves away from a kept earlier timetable.

So the penalty of slots ``x`` is ``sum_{ef} w_ef C[x_e, x_f] + sum_e U[e, x_e]``, the
quantity the validator recounts from the raw enrolments (``validator.validate``; the tests
compare the two). The room goals (split, preferred and avoided rooms) belong to seating
and are added after it, as before.

The hard rules become arrays the search checks move by move:

* ``allowed[e, s]``: length, seats and rooms (the physical domains), fixed and barred slots;
* ``res_use[e, r] <= res_cap[s, r]`` summed over each slot: seats per slot and, when there
  are rooms, the same aggregate limits the CP-SAT model states (seats of the free rooms of
  each type, one event per room unless sharing, Hall's condition for whole events);
  the exact seating is done afterwards by :mod:`.rooms`;
* ``before``, ``same slot``, ``different days`` and ``alone`` as per-event partner lists;
* the cap on events per attendee per day over the *distinct event sets* of attendees
  (identical sets aggregated, sets inside a larger one dropped).

Nothing here reads files or prints; :mod:`.kempe_search` does the searching.
"""

from __future__ import annotations

from dataclasses import dataclass

import networkx as nx
import numpy as np

from ..model import Problem, RuleKind, Slot, days_of
from .arrangement import pair_cost
from .cpsat_rules import _attendee_event_sets
from .slot_domains import Domains, _room_capacity_by_slot, _type_key, optional_missed_by_slot

#: A limit so high it never binds (slot seats not given).
UNLIMITED = np.iinfo(np.int64).max // 4


@dataclass
class PenaltyState:
    """The arrays of one block of events (see the module docstring); slots are 0-based here."""

    codes: list[str]
    k: int
    day: np.ndarray  # (k,) day number of each slot
    cost: np.ndarray  # (k, k) pair cost C, zero diagonal
    event_cost: np.ndarray  # (n, k) U
    allowed: np.ndarray  # (n, k) bool
    adj_ptr: np.ndarray  # CSR of the conflict graph
    adj_idx: np.ndarray
    adj_w: np.ndarray
    res_use: np.ndarray  # (n, R)
    res_cap: np.ndarray  # (k, R)
    before_ptr: np.ndarray  # CSR: partner, +1 when the event must come first, -1 when the partner must
    before_idx: np.ndarray
    before_sign: np.ndarray
    same_ptr: np.ndarray  # CSR of "same slot" partners
    same_idx: np.ndarray
    apart_ptr: np.ndarray  # CSR of "different days" partners
    apart_idx: np.ndarray
    alone: np.ndarray  # (n,) bool
    group_ptr: np.ndarray  # CSR event -> distinct attendee event sets (for the per-day cap)
    group_idx: np.ndarray
    n_groups: int
    daily_limit: int  # -1: no cap in force

    @property
    def n(self) -> int:
        return len(self.codes)

    def slots_of(self, assignment: dict[str, int]) -> np.ndarray:
        """Slot numbers 1..K of an assignment as a 0-based array in the order of ``codes``."""
        return np.array([assignment[c] - 1 for c in self.codes], dtype=np.int64)

    def assignment_of(self, x: np.ndarray) -> dict[str, int]:
        return {c: int(s) + 1 for c, s in zip(self.codes, x)}

    def penalty(self, x: np.ndarray) -> int:
        """The full penalty of slots ``x`` (0-based), recomputed from scratch."""
        rows = np.repeat(np.arange(self.n), np.diff(self.adj_ptr))
        pair = int((self.adj_w * self.cost[x[rows], x[self.adj_idx]]).sum()) // 2  # each pair is stored twice
        return pair + int(self.event_cost[np.arange(self.n), x].sum())

    def hard_violations(self, x: np.ndarray) -> list[str]:
        """Hard rules broken by slots ``x``, in plain words (empty when all hold); for checks and tests."""
        out: list[str] = []
        n, codes = self.n, self.codes
        for e in range(n):
            if not self.allowed[e, x[e]]:
                out.append(f"{codes[e]} may not go in slot {x[e] + 1}")
            for j in range(self.adj_ptr[e], self.adj_ptr[e + 1]):
                f = self.adj_idx[j]
                if f > e and x[f] == x[e]:
                    out.append(f"{codes[e]} and {codes[f]} clash in slot {x[e] + 1}")
            for j in range(self.before_ptr[e], self.before_ptr[e + 1]):
                f, sign = self.before_idx[j], self.before_sign[j]
                if sign > 0 and not x[e] < x[f]:
                    out.append(f"{codes[e]} must come before {codes[f]}")
            for j in range(self.same_ptr[e], self.same_ptr[e + 1]):
                if x[self.same_idx[j]] != x[e]:
                    out.append(f"{codes[e]} and {codes[self.same_idx[j]]} must share a slot")
            for j in range(self.apart_ptr[e], self.apart_ptr[e + 1]):
                f = self.apart_idx[j]
                if f > e and self.day[x[f]] == self.day[x[e]]:
                    out.append(f"{codes[e]} and {codes[f]} must be on different days")
            if self.alone[e] and int((x == x[e]).sum()) > 1:
                out.append(f"{codes[e]} must be alone in its slot")
        if self.res_use.shape[1]:
            load = np.zeros_like(self.res_cap)
            np.add.at(load, x, self.res_use)
            for s, r in zip(*np.nonzero(load > self.res_cap)):
                out.append(f"slot {s + 1} is over limit {r}")
        if self.daily_limit >= 0:
            counts: dict[tuple[int, int], int] = {}
            for e in range(n):
                for j in range(self.group_ptr[e], self.group_ptr[e + 1]):
                    key = (int(self.group_idx[j]), int(self.day[x[e]]))
                    counts[key] = counts.get(key, 0) + 1
            if any(v > self.daily_limit for v in counts.values()):
                out.append(f"an attendee has more than {self.daily_limit} events a day")
        return out


def _csr(n: int, pairs: list[tuple[int, int]], values: list[int] | None = None):
    """Row pointers, column indices (and values) of the ``(row, column)`` pairs, rows in order."""
    order = sorted(range(len(pairs)), key=lambda i: pairs[i])
    ptr = np.zeros(n + 1, dtype=np.int64)
    for r, _ in pairs:
        ptr[r + 1] += 1
    ptr = np.cumsum(ptr)
    idx = np.array([pairs[i][1] for i in order], dtype=np.int64)
    vals = np.array([values[i] for i in order], dtype=np.int64) if values is not None else None
    return ptr, idx, vals


def build_state(
    problem: Problem,
    slots: list[Slot],
    graph: nx.Graph,
    codes: list[str],
    *,
    sizes: dict[str, int],
    domains: Domains,
    previous: dict[str, int] | None = None,
    large: set[str] | None = None,
    room_sharing: bool = True,
    room_splitting: bool = False,
) -> PenaltyState:
    """The arrays of the events ``codes`` (a block: a union of components of ``graph``)."""
    k = len(slots)
    n = len(codes)
    index = {c: i for i, c in enumerate(codes)}
    refs = problem.slot_refs(slots)
    day = np.array(days_of(slots), dtype=np.int64)
    w = problem.weights
    cost = np.array(pair_cost(slots, w), dtype=np.int64).reshape(k, k)

    # event terms, written as the validator counts them
    event_cost = np.zeros((n, k), dtype=np.int64)
    large = large or set()
    previous = previous or {}
    for c, i in index.items():
        ev = problem.events[c]
        if w.large_late and c in large:
            event_cost[i] += w.large_late * np.arange(k)
        if w.preferred_slot and ev.preferred_slots:
            wanted = refs.preferred.get(c, frozenset())
            for s in range(k):
                if s + 1 not in wanted:
                    event_cost[i, s] += w.preferred_slot
        if w.moved and c in previous:
            for s in range(k):
                if s + 1 != previous[c]:
                    event_cost[i, s] += w.moved
    if w.penalised_slot:
        for s, slot in enumerate(slots):
            if slot.penalised:
                event_cost[:, s] += w.penalised_slot
    if w.optional_missed:
        for c, per in optional_missed_by_slot(problem, slots, codes).items():
            for s, count in per.items():
                event_cost[index[c], s - 1] += w.optional_missed * count

    # slots each event may take
    allowed = np.zeros((n, k), dtype=np.bool_)
    for c, i in index.items():
        ev = problem.events[c]
        ok = refs.allowed(c, domains.allowed[c])
        for s in ok:
            if s is not None and 1 <= s <= k:
                allowed[i, s - 1] = True

    # conflict graph, both directions
    pairs: list[tuple[int, int]] = []
    weights: list[int] = []
    for a, b, shared in graph.subgraph(codes).edges(data="shared", default=1):
        i, j = index[a], index[b]
        pairs += [(i, j), (j, i)]
        weights += [int(shared or 1)] * 2
    adj_ptr, adj_idx, adj_w = _csr(n, pairs, weights)

    res_use, res_cap = _resources(problem, slots, codes, sizes, room_sharing, room_splitting)

    before: list[tuple[int, int]] = []
    signs: list[int] = []
    same: list[tuple[int, int]] = []
    apart: list[tuple[int, int]] = []
    alone = np.zeros(n, dtype=np.bool_)
    for rule in problem.rules:
        if not all(c in index for c in rule.events):
            continue
        ids = [index[c] for c in rule.events]
        if rule.kind is RuleKind.BEFORE:
            before += [(ids[0], ids[1]), (ids[1], ids[0])]
            signs += [1, -1]
        elif rule.kind is RuleKind.SAME_SLOT:
            same += [(i, j) for i in ids for j in ids if i != j]
        elif rule.kind is RuleKind.DIFFERENT_DAYS:
            apart += [(i, j) for i in ids for j in ids if i != j]
        elif rule.kind is RuleKind.ALONE:
            alone[ids[0]] = True
    before_ptr, before_idx, before_sign = _csr(n, before, signs)
    same_ptr, same_idx, _ = _csr(n, sorted(set(same)))
    apart_ptr, apart_idx, _ = _csr(n, sorted(set(apart)))

    # the per-day cap binds only on a day with more slots than the cap
    cap = -1
    group_pairs: list[tuple[int, int]] = []
    n_groups = 0
    if problem.max_per_day is not None:
        slots_by_day = np.bincount(day)
        if slots_by_day.max(initial=0) > problem.max_per_day:
            cap = int(problem.max_per_day)
            sets = [s for s in _attendee_event_sets(problem, set(codes)) if len(s) > cap]
            n_groups = len(sets)
            group_pairs = [(index[c], g) for g, s in enumerate(sets) for c in s]
    group_ptr, group_idx, _ = _csr(n, group_pairs)

    return PenaltyState(codes=list(codes), k=k, day=day, cost=cost, event_cost=event_cost, allowed=allowed,
                        adj_ptr=adj_ptr, adj_idx=adj_idx, adj_w=adj_w, res_use=res_use, res_cap=res_cap,
                        before_ptr=before_ptr, before_idx=before_idx, before_sign=before_sign,
                        same_ptr=same_ptr, same_idx=same_idx, apart_ptr=apart_ptr, apart_idx=apart_idx,
                        alone=alone, group_ptr=group_ptr, group_idx=group_idx, n_groups=n_groups, daily_limit=cap)


def _resources(problem: Problem, slots: list[Slot], codes: list[str], sizes: dict[str, int],
               sharing: bool, splitting: bool) -> tuple[np.ndarray, np.ndarray]:
    """Additive limits per slot: seats of the slot, and the aggregate room limits of the slot model."""
    k, n = len(slots), len(codes)
    uses: list[np.ndarray] = []
    caps: list[np.ndarray] = []
    size = np.array([sizes.get(c, 0) for c in codes], dtype=np.int64)
    if any(s.seat_capacity is not None for s in slots):
        uses.append(size)
        caps.append(np.array([UNLIMITED if s.seat_capacity is None else s.seat_capacity for s in slots],
                             dtype=np.int64))
    if problem.rooms:
        # (capacity, may be shared) of the free rooms: the same aggregate limits as cpsat_model.build_model
        room_caps = _room_capacity_by_slot(problem, slots, shared_only=not sharing)
        kinds = np.array([_type_key(problem.events[c].room_type) or "" for c in codes], dtype=object)
        types = sorted({_type_key(problem.events[c].room_type) for c in codes}, key=lambda v: (v is not None, v or ""))
        for ty in types:
            member = (size > 0) & ((kinds == (ty or "")) if ty is not None else True)
            member = np.asarray(member, dtype=bool)
            per_slot = [room_caps[s + 1].get(ty, []) for s in range(k)]
            uses.append(np.where(member, size, 0))
            caps.append(np.array([sum(cap for cap, _ in c) for c in per_slot], dtype=np.int64))
            shared_any = any(sh for c in per_slot for _, sh in c)
            if not splitting:
                # places for events of at least `need` seats: 1 per room not shared, cap // need per shared room
                needs = {cap + 1 for c in per_slot for cap, _ in c} | {int(size[member].min(initial=1))}
                if shared_any:
                    needs |= {int(v) for v in size[member]}
                for need in sorted(needs):
                    big = member & (size >= need)
                    places = np.array([sum((cap // need if sh else 1) for cap, sh in c if cap >= need)
                                       for c in per_slot], dtype=np.int64)
                    if big.sum() > (places.min() if places.size else 0):  # a limit that can bind
                        uses.append(big.astype(np.int64))
                        caps.append(places)
            elif not shared_any:
                uses.append(member.astype(np.int64))
                caps.append(np.array([len(c) for c in per_slot], dtype=np.int64))
    if not uses:
        return np.zeros((n, 0), dtype=np.int64), np.zeros((k, 0), dtype=np.int64)
    return np.stack(uses, axis=1), np.stack(caps, axis=1)
