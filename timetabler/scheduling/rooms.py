"""Seating the events of each slot in rooms, once the slots are chosen.

The slot model (:mod:`.cpsat_model`) keeps only the aggregate room limits (seats of the
free rooms of each type per slot, and one event per room unless sharing is allowed). Given
its timetable, each slot is seated here: best-fit decreasing first (largest event first,
into the smallest room that holds it), and when that fails a small CP-SAT model of that
slot alone that minimises the extra rooms used by split events. A slot that cannot be
seated is returned to the caller, which forbids that exact group of events in that slot
and solves again (a logic-based Benders cut: Hooker & Ottosson, "Logic-based Benders
decomposition", Math. Programming 96 (2003) 33-60).
"""

from __future__ import annotations

from dataclasses import dataclass, field

from ortools.sat.python import cp_model

from ..model import Problem, Room, Slot


@dataclass
class Seating:
    rooms: dict[str, list[tuple[str, int]]] = field(default_factory=dict)
    failed_slots: dict[int, list[str]] = field(default_factory=dict)  # slot -> events that could not be seated together


def seat_events(problem: Problem, slots: list[Slot], assignment: dict[str, int], sizes: dict[str, int], *,
                sharing: bool = False, splitting: bool = False, seconds_per_slot: float = 5.0,
                seed: int = 0) -> Seating:
    """Rooms for every event of ``assignment`` (event -> [(room, seats)])."""
    out = Seating()
    by_slot: dict[int, list[str]] = {}
    for code, s in assignment.items():
        if sizes.get(code, 0) > 0:
            by_slot.setdefault(s, []).append(code)
    for s, codes in sorted(by_slot.items()):
        free = [r for r in problem.rooms
                if not any(problem.slot_number(ref, slots) == s for ref in r.unavailable_slots)]
        codes = sorted(codes, key=lambda c: (-sizes[c], c))
        got = _greedy(problem, codes, free, sizes, sharing, splitting)
        if got is None:
            got = _exact(problem, codes, free, sizes, sharing, splitting, seconds_per_slot, seed)
        if got is None:
            out.failed_slots[s] = codes
            continue
        out.rooms.update(got)
    return out


def _fits_type(problem: Problem, code: str, room: Room) -> bool:
    want = problem.events[code].room_type
    return not want or (room.room_type or "").casefold() == want.casefold()


def _greedy(problem, codes, rooms, sizes, sharing, splitting):
    left = {r.name: r.capacity for r in rooms}
    length_in: dict[str, int | None] = {}
    used: set[str] = set()
    result: dict[str, list[tuple[str, int]]] = {}
    for code in codes:
        need = sizes[code]
        length = problem.events[code].duration_minutes
        ok = [r for r in rooms if _fits_type(problem, code, r)
              and (r.name not in used or (sharing and length_in.get(r.name) == length))]
        whole = sorted((r for r in ok if left[r.name] >= need), key=lambda r: (left[r.name], r.name))
        if whole:
            r = whole[0]
            result[code] = [(r.name, need)]
            left[r.name] -= need
            used.add(r.name)
            length_in[r.name] = length
            continue
        if not splitting:
            return None
        parts = []
        for r in sorted(ok, key=lambda r: (-left[r.name], r.name)):
            if need <= 0:
                break
            if left[r.name] <= 0:
                continue
            take = min(need, left[r.name])
            parts.append((r.name, take))
            need -= take
        if need > 0:
            return None
        for name, take in parts:
            left[name] -= take
            used.add(name)
            length_in[name] = length
        result[code] = parts
    return result


def _exact(problem, codes, rooms, sizes, sharing, splitting, seconds, seed):
    m = cp_model.CpModel()
    use: dict[tuple[str, str], cp_model.IntVar] = {}
    seats: dict[tuple[str, str], cp_model.IntVar] = {}
    for c in codes:
        for r in rooms:
            if not _fits_type(problem, c, r):
                continue
            if not splitting and r.capacity < sizes[c]:
                continue
            use[c, r.name] = m.NewBoolVar(f"use[{c},{r.name}]")
            seats[c, r.name] = m.NewIntVar(0, min(r.capacity, sizes[c]), f"seats[{c},{r.name}]")
            m.Add(seats[c, r.name] <= min(r.capacity, sizes[c]) * use[c, r.name])
            m.Add(seats[c, r.name] >= use[c, r.name])
    for c in codes:
        mine = [r.name for r in rooms if (c, r.name) in use]
        if not mine:
            return None
        m.Add(sum(seats[c, n] for n in mine) == sizes[c])
        if not splitting:
            m.AddExactlyOne(use[c, n] for n in mine)
    for r in rooms:
        here = [c for c in codes if (c, r.name) in use]
        if not here:
            continue
        m.Add(sum(seats[c, r.name] for c in here) <= r.capacity)
        if not sharing:
            m.AddAtMostOne(use[c, r.name] for c in here)
        else:
            for i, a in enumerate(here):
                for b in here[i + 1:]:
                    if problem.events[a].duration_minutes != problem.events[b].duration_minutes:
                        m.AddBoolOr([use[a, r.name].Not(), use[b, r.name].Not()])
    m.Minimize(sum(use.values()))
    solver = cp_model.CpSolver()
    solver.parameters.max_time_in_seconds = seconds
    solver.parameters.num_workers = 1
    solver.parameters.random_seed = seed
    status = solver.Solve(m)
    if status not in (cp_model.OPTIMAL, cp_model.FEASIBLE):
        return None
    out: dict[str, list[tuple[str, int]]] = {}
    for (c, name), v in use.items():
        if solver.BooleanValue(v):
            out.setdefault(c, []).append((name, solver.Value(seats[c, name])))
    return {c: sorted(v) for c, v in out.items()}
