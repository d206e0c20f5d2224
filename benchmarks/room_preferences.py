"""Seating one slot with preferred and avoided rooms: penalty and time, printed as a table.

Each case is one slot of a generated session (invented data of the fictional Harrowgate
Vale College): events with a skewed number of attendees, rooms of mixed sizes, a share of
the rooms marked Avoid and a share of the events naming one to three preferred rooms among
those big enough for them. Weights are the defaults (1 per missed preference, 1 per
avoided room used, 5 per extra room of a split event). Columns:

(Sharing cases give every event the same duration, so any two may share a room.)

plain      the penalty of best-fit seating that ignores the two goals (what seating did before)
greedy     the penalty after the goal-aware greedy alone
final      the penalty after the slot's CP-SAT pass, as ``seat_events`` returns it
proven     whether CP-SAT proved ``final`` least within the time given
seconds    wall time of ``seat_events`` (greedy; then the assignment step and, with sharing or
           splitting, CP-SAT when the greedy left a penalty); the first case to need the
           assignment step also pays for importing scipy (about 0.2 s)

The last row seats a whole generated session (events dealt round robin over 28 slots);
its penalties are summed over the slots.

The largest case has the per-slot scale of a large university's final exams (about 2,000
exams over 28 slots and 250 rooms, the figures published with Purdue University's exam
data sets): about 72 events per slot.

    /work/venv/bin/python benchmarks/room_preferences.py
"""

from __future__ import annotations

import random
import sys
import time

from timetabler.model import Event, Problem, Room, Weights, generic_slots
from timetabler.scheduling.rooms import _greedy, _RoomGoals, seat_events

CASES = [
    # name, events, rooms, share of events with preferences, share of rooms avoided, splitting, sharing
    ("small", 12, 20, 0.3, 0.15, False, False),
    ("medium", 30, 80, 0.3, 0.1, False, False),
    ("large session slot", 72, 250, 0.3, 0.1, False, False),
    ("large, split allowed", 72, 250, 0.3, 0.1, True, False),
    ("large, sharing allowed", 72, 250, 0.3, 0.1, False, True),
    ("large, most prefer", 72, 250, 0.8, 0.1, False, False),
    ("crowded slot", 150, 250, 0.3, 0.1, False, False),
    ("crowded, many avoided", 150, 250, 0.3, 0.4, False, False),
    ("crowded, split allowed", 150, 250, 0.3, 0.4, True, False),
    ("more events than rooms", 120, 80, 0.3, 0.1, False, True),
]
#: a whole large session: 2,000 events over 28 slots, 250 rooms (the Purdue-scale figures above)
SESSION = ("large session, 28 slots", 2000, 250, 0.3, 0.1, False, False)


def generate(seed: int, n_events: int, n_rooms: int, prefer: float, avoid: float) -> Problem:
    rng = random.Random(seed)
    sizes = [max(3, min(400, int(rng.lognormvariate(3.6, 0.8)))) for _ in range(n_events)]
    rooms = [Room(f"HV Room {i:03d}", rng.choice([24, 30, 40, 60, 80, 120, 200, 400]), penalised=rng.random() < avoid)
             for i in range(n_rooms)]
    enrolments, events = [], {}
    for i, n in enumerate(sizes):
        code = f"HV{1000 + i}"
        enrolments += [(f"HV-S{i:03d}{j:03d}", code) for j in range(n)]
        fitting = [r.name for r in rooms if r.capacity >= n]
        wants = tuple(rng.sample(fitting, min(len(fitting), rng.randint(1, 3)))) if rng.random() < prefer else ()
        events[code] = Event(code, duration_minutes=120, preferred_rooms=wants)
    return Problem(enrolments, events=events, rooms=rooms, weights=Weights())


def penalty(problem: Problem, seated: dict) -> int:
    goals = _RoomGoals(problem)
    splits = sum(len(parts) - 1 for parts in seated.values())
    return problem.weights.room_split * splits + goals.penalty(seated)


def run_case(name, n_events, n_rooms, prefer, avoid, splitting, sharing, seed=1, seconds=5.0, n_slots=1):
    p = generate(seed, n_events, n_rooms, prefer, avoid)
    sizes = p.event_sizes()
    codes = sorted(p.events, key=lambda c: (-sizes[c], c))
    where = {c: 1 + i % n_slots for i, c in enumerate(sorted(p.events))}  # round robin over the slots
    off = Problem(p.enrolments, events=p.events, rooms=p.rooms, weights=Weights(preferred_room=0, penalised_room=0))
    plain = greedy = 0
    for s in range(1, n_slots + 1):
        mine = [c for c in codes if where[c] == s]
        a = _greedy(off, mine, p.rooms, sizes, sharing, splitting, None)
        b = _greedy(p, mine, p.rooms, sizes, sharing, splitting, _RoomGoals(p))
        plain = None if a is None or plain is None else plain + penalty(p, a)
        greedy = None if b is None or greedy is None else greedy + penalty(p, b)
    t0 = time.perf_counter()
    seating = seat_events(p, generic_slots(n_slots), where, sizes, splitting=splitting, sharing=sharing,
                          seconds_per_slot=seconds, seed=seed)
    wall = time.perf_counter() - t0
    final = None if seating.failed_slots else penalty(p, seating.rooms)
    return {
        "case": name, "events": n_events, "rooms": n_rooms, "plain": plain, "greedy": greedy,
        "final": final, "proven": not seating.unproven_slots, "seconds": wall,
    }


def main(argv: list[str]) -> None:
    wanted = [a.casefold() for a in argv]
    print(f"{'case':<24}{'events':>7}{'rooms':>7}{'plain':>7}{'greedy':>8}{'final':>7}{'proven':>8}{'seconds':>9}")
    for case in CASES + [SESSION]:
        if wanted and not any(w in case[0].casefold() for w in wanted):
            continue
        r = run_case(*case, n_slots=28 if case is SESSION else 1)
        show = lambda v: "-" if v is None else str(v)  # noqa: E731
        print(f"{r['case']:<24}{r['events']:>7}{r['rooms']:>7}{show(r['plain']):>7}{show(r['greedy']):>8}"
              f"{show(r['final']):>7}{'yes' if r['proven'] else 'no':>8}{r['seconds']:>9.2f}", flush=True)


if __name__ == "__main__":
    main(sys.argv[1:])
