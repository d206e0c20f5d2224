"""Why no timetable exists: fast pre-checks with witnesses, then rules that cannot all hold.

The pre-checks need no search and name concrete evidence:

* K+1 events that pairwise share attendees (a clique of the conflict graph), with one
  shared attendee named for each pair;
* an attendee with more events than slots;
* an event that fits no slot (too long, too many attendees for the slot's seats or for the
  rooms free then), or whose fixed slot is not a slot or is barred;
* two events fixed to the same slot that share an attendee;
* (no splitting) more events needing a room of some size than there are places for them over
  all slots: one per (room, slot) for a room not shared, ``capacity // size`` for a shared one;
* with people (:func:`people_witnesses`, from :class:`~timetabler.availability.Availability`):
  an event with no start left, naming who cannot make which slots, the slots fixed or barred,
  too short for its length or short of its quorum; an attendee whose required events need more
  slots than are left for them (Hall's condition, found by a maximum matching of the events to
  the slots, Hopcroft–Karp, and the König set of events reachable from an unmatched one by
  alternating paths: they are more than the slots they can take);

When these find nothing and CP-SAT proves the slot count infeasible, the model is built
again with one enforcement literal per user rule, each taken as an assumption; CP-SAT's
``SufficientAssumptionsForInfeasibility`` returns a subset of them that already cannot
all hold, which is shrunk further by dropping one rule at a time while the rest stays
infeasible (deletion filtering: Chinneck & Dravnieks, "Locating minimal infeasible
constraint sets in linear programs", ORSA J. Computing 3 (1991) 157-168).
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass, field

import networkx as nx

from ..availability import Availability
from ..model import Problem, Slot, days_of


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
    required = problem.required_enrolments()  # optional attendees make no clash and need no slot of their own
    attendees_of: dict[str, set[str]] = {}
    for a, c in required:
        attendees_of.setdefault(c, set()).add(a)
    # busiest attendee
    load: dict[str, list[str]] = {}
    for a, c in required:
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
    # people, long events and quorums (one reason per event that no slot is left for; else Hall witnesses)
    if needs_availability(problem, slots):
        named = people_witnesses(problem, slots, Availability.of(problem, slots), allowed, why_not)
        out.extend(named)
        allowed = {c: v for c, v in allowed.items() if v or not any(c in w.events for w in named)}
    # events that fit nowhere
    for code in sorted(allowed):
        if not allowed[code]:
            reasons = why_not.get(code, {})
            sample = next(iter(reasons.values()), "no slot is long or large enough")
            out.append(Witness("fit", f"{code} fits no slot: {sample}", events=[code]))
    # fixed slots
    fixed: dict[int, list[str]] = {}
    refs = problem.slot_refs(slots)
    for code, ev in sorted(problem.events.items()):
        if code not in refs.fixed:
            continue
        s = refs.fixed[code]
        if s is None:
            out.append(Witness("fixed", f"{code} is fixed to '{ev.fixed_slot}', which is not one of the {k} slots",
                               events=[code]))
            continue
        if s in refs.barred.get(code, ()):
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


#: How many slots a reason lists before "...".
SHOWN_SLOTS = 8


def _slot_words(slots: list[Slot], numbers) -> str:
    numbers = sorted(numbers)
    shown = ", ".join(f"{s} ({slots[s - 1].label})" for s in numbers[:SHOWN_SLOTS])
    more = f" and {len(numbers) - SHOWN_SLOTS} more" if len(numbers) > SHOWN_SLOTS else ""
    return ("slot " if len(numbers) == 1 else "slots ") + shown + more


def _names(people: list[str], most: int = 6) -> str:
    people = sorted(people)
    return ", ".join(people[:most]) + (f" and {len(people) - most} more" if len(people) > most else "")


SHOWN_PEOPLE = 4


def _extra(problem: Problem, who: str) -> int:
    person = problem.people.get(who)
    return person.extra_time_percent if person is not None else 0


def _who_blocks(person_slots: dict[str, set[int]], bar: set[int], slots: list[Slot],
                late_slots: dict[str, set[int]] | None = None, problem: Problem | None = None) -> str:
    """The people who rule out the slots ``bar``, one phrase per person with all their slots.

    The people are chosen greedily, each time the one ruling out most of the slots not yet
    named (ties by name), so a short list covers the slots; the rest is counted.
    """
    left, parts = set(bar), []
    while left and len(parts) < SHOWN_PEOPLE:
        who = min(person_slots, key=lambda w: (-len(person_slots[w] & left), w))
        if not person_slots[who] & left:
            break
        mine = person_slots[who] & bar
        if late_slots is not None and problem is not None and mine <= late_slots.get(who, set()):
            parts.append(f"{who}'s sitting with {_extra(problem, who)} % extra time would run past the day's slots "
                         f"from {_slot_words(slots, mine)}")
        else:
            parts.append(f"{who} cannot make {_slot_words(slots, mine)}")
        left -= person_slots[who]
    if left:
        parts.append(f"others cannot make {_slot_words(slots, left)}")
    return "; ".join(parts)


def needs_availability(problem: Problem, slots: list[Slot]) -> bool:
    """True when people's rules or events longer than a slot bear on these slots."""
    if problem.has_people:
        return True
    shortest = min((s.length_minutes for s in slots if s.length_minutes), default=None)
    return shortest is not None and any(e.duration_minutes and e.duration_minutes > shortest
                                        for e in problem.events.values())


def people_witnesses(problem: Problem, slots: list[Slot], found: Availability,
                     allowed: dict[str, set[int]] | None = None,
                     why_not: dict[str, dict[int, str]] | None = None) -> list[Witness]:
    """Reasons that name people, from the slots left to each event (``found``, with ``allowed``, the
    slots each event fits by its seats and rooms, when given):

    * an event with no slot left: "PERSON cannot make any slot left for EVENT" when one required
      attendee bars every slot the other causes leave, else each slot with its cause;
    * an event short of its quorum in every slot it could otherwise take;
    * an event too long for every run of touching slots of one day;
    * an attendee whose required events are more than the slots left for them (a Hall witness).
    """
    k = len(slots)
    out: list[Witness] = []
    def left(code: str) -> set[int]:
        return set(found.starts.get(code, ())) & (allowed[code] if allowed is not None and code in allowed else
                                                   set(range(1, k + 1)))
    events = problem.events
    refs = problem.slot_refs(slots)
    resolve_fixed = dict(refs.fixed)
    for code in sorted(events):
        if left(code):
            continue
        event = events[code]
        blocked = found.blocked.get(code, {})
        short = found.quorum_short.get(code, {})
        fixed = resolve_fixed.get(code, "none")
        barred = set(refs.barred.get(code, ()))
        by_cause: dict[str, set[int]] = {}
        person_slots: dict[str, set[int]] = {}
        late_slots: dict[str, set[int]] = {}  # of person_slots: extra time past the day's slots
        for s, names in found.late.get(code, {}).items():
            for who in names:
                late_slots.setdefault(who, set()).add(s)
        physical: dict[int, str] = {}
        for s in range(1, k + 1):
            if fixed != "none" and fixed != s:
                by_cause.setdefault("fixed", set()).add(s)
            elif s in barred:
                by_cause.setdefault("barred", set()).add(s)
            elif s in blocked:
                for who in blocked[s]:
                    person_slots.setdefault(who, set()).add(s)
                by_cause.setdefault("people", set()).add(s)
            elif s in short:
                by_cause.setdefault("quorum", set()).add(s)
            elif allowed is not None and code in allowed and s not in allowed[code] \
                    and s in found.starts.get(code, ()):
                by_cause.setdefault("seats", set()).add(s)
                physical.setdefault(s, (why_not or {}).get(code, {}).get(s, ""))
            else:
                by_cause.setdefault("length", set()).add(s)
        others = []
        if by_cause.get("fixed"):
            others.append(f"{_slot_words(slots, by_cause['fixed'])} by its fixed slot")
        if by_cause.get("barred"):
            others.append(f"{_slot_words(slots, by_cause['barred'])} barred for it")
        if by_cause.get("length"):
            others.append(f"{_slot_words(slots, by_cause['length'])} too short for its "
                          f"{event.duration_minutes or '?'} minutes (touching slots of one day)")
        if by_cause.get("seats"):
            sample = next((t for t in physical.values() if t), "no seats or rooms for it")
            others.append(f"{_slot_words(slots, by_cause['seats'])} where it does not fit ({sample})")
        if by_cause.get("quorum"):
            worst = max(short[s] for s in by_cause["quorum"])
            others.append(f"{_slot_words(slots, by_cause['quorum'])} where at most {worst} of its attendees can "
                          f"come, short of its quorum of {event.quorum}")
        people_bar = by_cause.get("people", set())
        whole = [who for who, mine in person_slots.items() if mine == people_bar]
        rest = ("; the other slots are out: " + "; ".join(others)) if others else ""
        if people_bar and whole:
            who = sorted(whole)[0]
            also = f" (nor can {_names([w for w in whole if w != who])})" if len(whole) > 1 else ""
            if people_bar <= late_slots.get(who, set()):  # extra time, not unavailability
                text = (f"{who} cannot sit {code} in any slot left: with {_extra(problem, who)} % extra time "
                        f"their sitting would run past the day's slots from {_slot_words(slots, people_bar)}{rest}")
            else:
                text = f"{who} cannot make any slot left for {code}{also}: {_slot_words(slots, people_bar)}{rest}"
            out.append(Witness("person", text, events=[code], attendees=sorted(whole)))
        elif people_bar:
            out.append(Witness("person", f"no slot is left for {code}: "
                                         f"{_who_blocks(person_slots, people_bar, slots, late_slots, problem)}"
                                         f"{rest}", events=[code], attendees=sorted(person_slots)))
        elif by_cause.get("quorum"):
            worst = max(short[s] for s in by_cause["quorum"])
            best = [s for s in by_cause["quorum"] if short[s] == worst]
            besides = [o for o in others if "quorum" not in o]
            out.append(Witness("quorum", f"{code} needs {event.quorum} of its attendees free; at most {worst} can "
                                         f"make any one slot ({_slot_words(slots, best)})"
                               + ("; the other slots are out: " + "; ".join(besides) if besides else ""),
                               events=[code]))
        elif by_cause.get("length"):
            minutes, first = _longest_run(slots, by_cause["length"])
            besides = [o for o in others if "too short" not in o]
            longest = (f" (the longest left for it: {minutes} minutes from {_slot_words(slots, [first])})"
                       if first is not None else "")
            out.append(Witness("length", f"{code} lasts {event.duration_minutes} minutes and no run of touching "
                                         f"slots of one day is that long{longest}"
                               + ("; the other slots are out: " + "; ".join(besides) if besides else ""),
                               events=[code]))
        # fixed, barred and seats alone: the pre-checks' own reasons say it
    if out or not problem.has_people:  # without people the clique and rule reasons say it better
        return out
    out.extend(hall_witnesses(problem, slots, {c: left(c) for c in events}, found.unavailable))
    return out


def _longest_run(slots: list[Slot], starts) -> tuple[int, int | None]:
    """The most minutes of touching slots of one day from any of ``starts``, and where that run starts."""
    days = days_of(slots)
    best, where = 0, None
    for s in sorted(starts):
        first = slots[s - 1]
        if first.start is None or not first.length_minutes:
            continue
        minutes, t = first.length_minutes, s
        end = _dt.datetime.combine(_dt.date(2000, 1, 1), first.start) + _dt.timedelta(minutes=first.length_minutes)
        while t < len(slots) and days[t] == days[t - 1] and slots[t].start is not None and slots[t].length_minutes \
                and _dt.datetime.combine(_dt.date(2000, 1, 1), slots[t].start) == end:
            minutes += slots[t].length_minutes
            end += _dt.timedelta(minutes=slots[t].length_minutes)
            t += 1
        if minutes > best:
            best, where = minutes, s
    return best, where


def hall_witnesses(problem: Problem, slots: list[Slot], starts: dict[str, set[int]],
                   unavailable: dict[str, frozenset[int]] | None = None, most: int = 3) -> list[Witness]:
    """Attendees whose required events need more distinct start slots than are left for them.

    Two events of one required attendee never start in the same slot, so an attendee's events
    must be matched to distinct starts. A maximum matching (Hopcroft–Karp, networkx) that leaves
    an event unmatched gives, by König's theorem, the set ``S`` of events reachable from the
    unmatched ones along alternating paths: every slot they could start in is matched to another
    event of ``S``, so ``S`` has more events than slots. Attendees with the same events are
    checked once; an attendee whose every event has as many starts as they have events cannot
    fail and is skipped. At most ``most`` witnesses are returned.
    """
    by_attendee: dict[str, set[str]] = {}
    for a, c in problem.required_enrolments():
        by_attendee.setdefault(a, set()).add(c)
    seen: set[frozenset[str]] = set()
    out: list[Witness] = []
    for person in sorted(by_attendee):
        mine = frozenset(by_attendee[person])
        if len(mine) < 2 or mine in seen:
            continue
        seen.add(mine)
        if all(len(starts.get(c, ())) >= len(mine) for c in mine):
            continue
        graph = nx.Graph()
        left_nodes = [("e", c) for c in sorted(mine)]
        graph.add_nodes_from(left_nodes)
        for c in mine:
            for s in starts.get(c, ()):
                graph.add_edge(("e", c), ("s", s))
        matching = nx.bipartite.hopcroft_karp_matching(graph, top_nodes=left_nodes)
        free = [n for n in left_nodes if n not in matching]
        if not free:
            continue
        reach, frontier = set(free), list(free)
        while frontier:
            node = frontier.pop()
            for slot in graph.neighbors(node):
                if slot in reach:
                    continue
                reach.add(slot)
                partner = matching.get(slot)
                if partner is not None and partner not in reach:
                    reach.add(partner)
                    frontier.append(partner)
        group = sorted(c for kind, c in reach if kind == "e")
        numbers = sorted(s for kind, s in reach if kind == "s")
        sharing = [a for a, evs in by_attendee.items() if set(group) <= evs]
        also = f" (as do {_names([a for a in sharing if a != person], 4)})" if len(sharing) > 1 else ""
        slot_text = _slot_words(slots, numbers) if numbers else "none"
        away = (unavailable or {}).get(person, frozenset())
        missing = set(range(1, len(slots) + 1)) - set(numbers)
        if missing and missing <= away:  # the slots they lack are exactly theirs to miss
            words = (f"these {len(group)} events share {person}{also}: {', '.join(group)}, and {person} can make "
                     f"only {len(numbers)} of their slots ({slot_text})")
        else:
            left_words = "1 slot is" if len(numbers) == 1 else f"{len(numbers)} slots are"
            words = (f"these {len(group)} events share {person}{also}: {', '.join(group)}, and only {left_words} "
                     f"left for them ({slot_text}"
                     + (f"; {person} cannot make {_slot_words(slots, missing & away)}" if missing & away else "")
                     + ")")
        out.append(Witness("hall", words, events=group, attendees=[person]))
        if len(out) >= most:
            break
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
        refs = problem.slot_refs(slots)
        free = {r.name: sum(1 for s in range(1, len(slots) + 1) if refs.room_free(r.name, s)) for r in rooms}
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
                how = ("one event per room; sharing or splitting rooms may help" if not any(shared.values())
                       and not sharing else
                       "one event per room, as each is marked not shared; splitting events over rooms may help"
                       if not any(shared.values()) else
                       "a shared room holds as many of them as its seats allow, a room marked not shared one; "
                       "splitting events over rooms may help")
                rooms_word = "the one such room gives" if count == 1 else f"the {count} such rooms give"
                places_word = "1 place" if places == 1 else f"{places} places"
                return Witness("rooms", f"{len(big)} events need {word} with at least {need} seats, but "
                                        f"{rooms_word} only {places_word} over {len(slots)} {'slot' if len(slots) == 1 else 'slots'} "
                                        f"({how})",
                               events=sorted(big))
    return None
