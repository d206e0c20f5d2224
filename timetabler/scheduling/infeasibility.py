"""Why no timetable exists: fast pre-checks with witnesses, then rules that cannot all hold.

The pre-checks need no search and name concrete evidence:

* K+1 events that pairwise share attendees (a clique of the conflict graph), with one
  shared attendee named for each pair;
* an attendee with more events than slots;
* an event that fits no slot (too long, too many attendees for the slot's seats or for the
  rooms free then), or whose fixed slot is not a slot or is barred;
* two events fixed to the same slot that share an attendee;
* (no splitting) more events needing a room of some size than there are places for them over
  all slots: one per (room, slot) for a room not shared, ``capacity // size`` for a shared one.

When these find nothing and CP-SAT proves the slot count infeasible, the model is built
again with one enforcement literal per user rule, each taken as an assumption; CP-SAT's
``SufficientAssumptionsForInfeasibility`` returns a subset of them that already cannot
all hold, which is shrunk further by dropping one rule at a time while the rest stays
infeasible (deletion filtering: Chinneck & Dravnieks, "Locating minimal infeasible
constraint sets in linear programs", ORSA J. Computing 3 (1991) 157-168).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import networkx as nx

from ..model import Problem, Slot


@dataclass
class Witness:
    """One reason no timetable exists, in plain words, with the evidence behind it."""

    kind: str
    text: str
    events: list[str] = field(default_factory=list)
    attendees: list[str] = field(default_factory=list)


def shared_attendee(problem_index: dict[str, set[str]], a: str, b: str) -> str | None:
    common = problem_index.get(a, set()) & problem_index.get(b, set())
    return min(common) if common else None


def prechecks(problem: Problem, slots: list[Slot], graph: nx.Graph, clique: list[str],
              allowed: dict[str, set[int]], why_not: dict[str, dict[int, str]]) -> list[Witness]:
    """Reasons found without search why ``slots`` cannot hold a timetable (empty if none found)."""
    k = len(slots)
    out: list[Witness] = []
    attendees_of: dict[str, set[str]] = {}
    for a, c in problem.enrolments:
        attendees_of.setdefault(c, set()).add(a)
    # busiest attendee
    load: dict[str, list[str]] = {}
    for a, c in problem.enrolments:
        load.setdefault(a, []).append(c)
    if load:
        busiest = min(load, key=lambda a: (-len(load[a]), a))
        if len(load[busiest]) > k:
            out.append(Witness(
                "attendee", f"{busiest} has {len(load[busiest])} events ({', '.join(sorted(load[busiest])[:12])}"
                f"{', ...' if len(load[busiest]) > 12 else ''}) but there are only {k} slots",
                events=sorted(load[busiest]), attendees=[busiest]))
    # a clique larger than K
    if len(clique) > k:
        pairs = []
        for i, a in enumerate(clique):
            for b in clique[i + 1:]:
                pairs.append(f"{a}/{b}: {shared_attendee(attendees_of, a, b)}")
        shown = "; ".join(pairs[:10]) + ("; ..." if len(pairs) > 10 else "")
        out.append(Witness(
            "clique", f"{len(clique)} events pairwise share attendees, so they need {len(clique)} different slots "
            f"but there are only {k}: {', '.join(clique)} (one shared attendee per pair: {shown})",
            events=list(clique)))
    # events that fit nowhere
    for code in sorted(allowed):
        if not allowed[code]:
            reasons = why_not.get(code, {})
            sample = next(iter(reasons.values()), "no slot is long or large enough")
            out.append(Witness("fit", f"{code} fits no slot: {sample}", events=[code]))
    # fixed slots
    fixed: dict[int, list[str]] = {}
    for code, ev in sorted(problem.events.items()):
        if ev.fixed_slot is None or not str(ev.fixed_slot).strip():
            continue
        s = problem.slot_number(ev.fixed_slot, slots)
        if s is None:
            out.append(Witness("fixed", f"{code} is fixed to '{ev.fixed_slot}', which is not one of the {k} slots",
                               events=[code]))
            continue
        if any(problem.slot_number(r, slots) == s for r in ev.barred_slots):
            out.append(Witness("fixed", f"{code} is fixed to slot {s} and also barred from it", events=[code]))
        fixed.setdefault(s, []).append(code)
    for s, codes in sorted(fixed.items()):
        for i, a in enumerate(codes):
            for b in codes[i + 1:]:
                if graph.has_edge(a, b):
                    who = shared_attendee(attendees_of, a, b)
                    out.append(Witness("fixed", f"{a} and {b} are both fixed to slot {s} ({slots[s - 1].label}) "
                                                f"but share attendees, for example {who}",
                                       events=[a, b], attendees=[who] if who else []))
    return out


def room_count_witness(problem: Problem, slots: list[Slot], sizes: dict[str, int], *,
                       sharing: bool = True) -> Witness | None:
    """No splitting: events needing at least ``need`` seats (of a room type) cannot outnumber the places
    for them over all slots. A room that may not be shared (``Room.shared`` False, or ``sharing``
    off) gives one place per slot it is free; a shared room of ``cap`` seats gives ``cap // need``,
    since every such event takes at least ``need`` of its seats."""
    if not problem.rooms:
        return None
    types = {None} | {(e.room_type or "").casefold() or None for e in problem.events.values()}
    for ty in sorted(types, key=lambda t: (t is not None, t or "")):
        members = [c for c, e in problem.events.items() if sizes.get(c, 0) > 0
                   and (ty is None or (e.room_type or "").casefold() == ty)]
        rooms = [r for r in problem.rooms if ty is None or (r.room_type or "").casefold() == ty]
        free = {r.name: sum(1 for s in range(1, len(slots) + 1)
                            if not any(problem.slot_number(u, slots) == s for u in r.unavailable_slots)) for r in rooms}
        shared = {r.name: sharing and r.shared for r in rooms}
        needs = {r.capacity + 1 for r in rooms} | {min((sizes[c] for c in members), default=1)}
        if any(shared.values()):
            needs |= {sizes[c] for c in members}
        for need in sorted(needs):
            big = [c for c in members if sizes[c] >= need]
            places = sum(free[r.name] * (r.capacity // need if shared[r.name] else 1)
                         for r in rooms if r.capacity >= need)
            if len(big) > places:
                word = f"rooms of type '{ty}'" if ty else "rooms"
                count = sum(1 for r in rooms if r.capacity >= need)
                how = ("one event per room; sharing or splitting rooms may help" if not any(shared.values()) else
                       "a shared room holds as many of them as its seats allow, a room marked not shared one; "
                       "splitting events over rooms may help")
                return Witness("rooms", f"{len(big)} events need {word} with at least {need} seats, but the "
                                        f"{count} such rooms give only {places} places over {len(slots)} slots "
                                        f"({how})",
                               events=sorted(big))
    return None
