"""The hard rules of the CP-SAT model, one function per family.

Each function adds one family of constraints to a :class:`.cpsat_model.ModelBuild` (the model being
built, its start literals ``x`` and occupancy literals ``occ``, and the helpers every family uses);
:func:`.cpsat_model.build_model` calls them in a fixed order, which is also the order of the model's
variables and constraints (a seed then gives the same timetable). The families:

* clashes: one slot per event (:func:`add_one_slot_each`) and no attendee double-booked, one
  at-most-one constraint per slot and per clique of an edge clique cover of the conflict graph
  (:func:`add_clash_cover`, :func:`.cliques.clique_cover`);
* domains: the physical limits (event length within slot length, event seats within the slot's
  seats and the rooms that could hold it, :func:`.slot_domains.physical_domains`) and the fixed and
  barred slots (:func:`add_physical_limits`, :func:`add_fixed_and_barred`);
* people: the slots a long event holds (:func:`add_long_event_slots`), an attendee's extra time
  running into the next slot (:func:`add_extra_time_clashes`), and optional attendees booked
  elsewhere, with the quorums that count them (:func:`add_optional_busy`);
* the Rules sheet: "same slot", "before", "different days", "alone" (:func:`add_event_rules`);
* seats and rooms (:func:`add_slot_seats`, :func:`add_room_limits`, :func:`add_seating_cuts`): the
  seat limit of each slot, the seats of the rooms of each type in each slot (and, without
  splitting, the places they have for events of each size: one per room not shared,
  ``capacity // size`` per shared room). Attendees with an own room (``Attendee.own_room_type``)
  take no seat in their event's rooms; each holds a room of their type for every slot of their
  sitting, so per slot and type they cannot outnumber the rooms free, each takes at least the seats
  of the smallest such room from the type's (and all rooms') seats, and where no room may be shared
  events and attendees apart together cannot outnumber the rooms. An attendee seated with their
  event whose extra time runs into the next slot keeps a seat in one of the event's rooms then
  (:mod:`.rooms`' rule): those seats count in that slot's seats of the rooms of the event's type
  and, as one more event there, in its places and room counts (:func:`_tail_seats`). Seating
  (:mod:`.rooms`) checks the rest and returns cuts, each a group of (event, start) pairs that
  cannot all hold;
* daily limits: the cap on events per attendee per day (:func:`add_daily_limit`);
* slot symmetry (:func:`add_slot_symmetry`): when every slot is alike and no rule tells slots
  apart, the events of a large clique are fixed to slots 1, 2, ... (a standard symmetry break for
  colouring; any timetable can be relabelled to satisfy it).

In *explain* mode each user rule carries its own enforcement literal
(:meth:`.cpsat_model.ModelBuild.rule_literal`), which the solver takes as an assumption; the
sufficient assumptions for infeasibility then name a set of rules that cannot all hold.

A new hard rule: a function here, called from :func:`.cpsat_model.build_model` in its place (after
the families it reads), with its own ``rule_literal`` so explain mode can name it.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from ..availability import Availability
from ..model import Problem, RuleKind, Slot
from .rooms import seated_apart, seats_in_rooms
from .slot_domains import Domains, _cannot_starts, _room_capacity_by_slot, _type_key

if TYPE_CHECKING:
    from .cpsat_model import ModelBuild, TimetableModel


def add_long_event_slots(b: ModelBuild) -> None:
    """``occ[c][s]``: event ``c`` holds slot ``s`` (its start, or a later slot of a long event's span); the
    clash, seat, room and "alone" limits read occ, the goals and the other rules read the start x."""
    m, x, k = b.m, b.x, b.k
    spans = b.spans
    for c in b.codes:
        if c in spans:
            held = [m.new_bool_var(f"occ[{c}][{s}]") for s in range(1, k + 1)]
            for t_ in range(1, k + 1):
                covering = [x[c][s - 1] for s in range(1, k + 1) if t_ in spans[c].get(s, (s,))]
                m.add(held[t_ - 1] == sum(covering))
            b.occ[c] = held


def add_one_slot_each(b: ModelBuild) -> None:
    for c in b.codes:
        b.m.add_exactly_one(b.x[c])


def add_physical_limits(b: ModelBuild) -> None:
    """The slots an event cannot physically take (explain mode: one literal per event whose slots they restrict)."""
    m, x, k, domains = b.m, b.x, b.k, b.inputs.domains
    for c in b.codes:
        banned = [s for s in range(1, k + 1) if s not in domains.allowed[c]]
        if not banned:
            continue
        reasons = domains.why_not[c]
        causes = list(dict.fromkeys(reasons[s] for s in banned if s in reasons))
        cause = "; ".join(causes[:3]) + (f"; and {len(causes) - 3} more reasons" if len(causes) > 3 else "")
        lit = b.rule_literal(f"{c} cannot go in slot(s) {_ranges(banned)}: {cause}", "physical")
        for s in banned:
            b.enforce(m.add(x[c][s - 1] == 0), lit)


def add_clash_cover(b: ModelBuild, cliques) -> None:
    """No attendee double-booked: one at-most-one per slot and per clique of the cover."""
    m, x, k, occ, spans, clock = b.m, b.x, b.k, b.occ, b.spans, b.tm.clock
    for clique in cliques:
        clock.step(k)
        if len(clique) < 2:
            continue
        # a clique of exactly K events fills every slot once (pigeonhole): exactly-one is valid and stronger
        tight = len(clique) == k
        for s in range(k):
            if tight and not spans:
                m.add_exactly_one(x[c][s] for c in clique)
            else:
                m.add_at_most_one(occ[c][s] for c in clique)


def add_extra_time_clashes(b: ModelBuild) -> None:
    """An attendee whose extra time takes the slot after the event's own: none of their other events there."""
    m, x, occ, found, code_set = b.m, b.x, b.occ, b.found, b.code_set
    if found is None or not found.sittings:
        return
    mine = _required_events_by_attendee(b.problem, code_set)
    for (attendee, c), own in found.sittings.items():
        if c not in code_set:
            continue
        for start, taken in own.items():
            if taken is None:
                continue
            extra = set(taken) - set(found.slots_taken(c, start))
            for other in mine.get(attendee, ()):
                if other != c:
                    for t_ in extra:
                        m.add(x[c][start - 1] + occ[other][t_ - 1] <= 1)


def add_optional_busy(b: ModelBuild) -> None:
    if b.found is not None and b.problem.optional:
        _add_optional_busy(b.tm, b.problem, b.found, b.code_set, b.inputs.objective, b.inputs.domains,
                           b.rule_literal)


def add_fixed_and_barred(b: ModelBuild) -> None:
    m, x, problem, slots = b.m, b.x, b.problem, b.slots
    refs = problem.slot_refs(slots)
    for c in b.codes:
        ev = problem.events[c]
        if c in refs.fixed:
            s = refs.fixed[c]
            lit = b.rule_literal(f"{c} is fixed to {_slot_name(slots, s, ev.fixed_slot)}", "fixed")
            if s is None:
                b.enforce(m.add_bool_or([]), lit)  # refers to no slot: cannot hold
            else:
                b.enforce(m.add(x[c][s - 1] == 1), lit)
        barred = sorted(refs.barred.get(c, ()))
        if barred:
            lit = b.rule_literal(f"{c} may not go in slot(s) {_ranges(barred)}", "barred")
            for s in barred:
                b.enforce(m.add(x[c][s - 1] == 0), lit)


def add_event_rules(b: ModelBuild) -> None:
    """The relations of the Rules sheet between events."""
    m, x, k, occ, spans, code_set, codes = b.m, b.x, b.k, b.occ, b.spans, b.code_set, b.codes
    t, enforce = b.t, b.enforce
    for rule in b.problem.rules:
        evs = [c for c in rule.events if c in code_set]
        if len(evs) != len(rule.events):
            continue  # rule belongs to another block, or names unknown events (intake reports those)
        lit = b.rule_literal(rule.describe(), rule.kind.value)
        if rule.kind is RuleKind.BEFORE:  # a long event ends (its last slot) before the other starts
            last = {s: max(taken) for s, taken in spans.get(evs[0], {}).items()}
            end = sum(last.get(s + 1, s + 1) * x[evs[0]][s] for s in range(k)) if last else t(evs[0])
            enforce(m.add(end + 1 <= t(evs[1])), lit)
        elif rule.kind is RuleKind.SAME_SLOT:
            for other in evs[1:]:
                for s in range(k):
                    enforce(m.add(x[evs[0]][s] == x[other][s]), lit)
        elif rule.kind is RuleKind.DIFFERENT_DAYS:
            for slot_list in b.day_slots.values():
                enforce(m.add(sum(x[c][s] for c in evs for s in slot_list) <= 1), lit)
        elif rule.kind is RuleKind.ALONE:
            e = evs[0]
            others = [c for c in codes if c != e]
            for s in range(k):
                if others:
                    cond = [occ[e][s]] + ([lit] if lit is not None else [])
                    m.add(sum(occ[c][s] for c in others) == 0).only_enforce_if(cond)


def add_slot_seats(b: ModelBuild) -> None:
    """Seats per slot, with the seats of extra-time sittings that run into the slot past their event's."""
    m, x, k, occ, slots, codes, sizes = b.m, b.x, b.k, b.occ, b.slots, b.codes, b.inputs.sizes
    slot_tails = _tail_seats({}, b.found, x, b.code_set, {c: 1 for c in codes}) \
        if any(slot.seat_capacity is not None for slot in slots) else {}
    for s in range(k):
        cap = slots[s].seat_capacity
        if cap is None:
            continue
        load = [(sizes[c], occ[c][s]) for c in codes if sizes[c] > 0] + [(n, lit) for _, n, lit in slot_tails.get(s + 1, ())]
        if sum(n for n, _ in load) <= cap:
            continue
        lit = b.rule_literal(f"slot {s + 1} ({slots[s].label}) seats at most {cap}", "seats")
        b.enforce(m.add(sum(n * v for n, v in load) <= cap), lit)


def add_room_limits(b: ModelBuild) -> None:
    """The seats of the rooms of each type free in each slot; attendees seated apart (Own room) sit in no
    room of their event's, each holds a room of their type alone for their sitting."""
    problem, codes, code_set, k = b.problem, b.codes, b.code_set, b.k
    if not problem.rooms:
        return
    caps = _room_capacity_by_slot(problem, b.slots, shared_only=not b.inputs.room_sharing)
    types = sorted({_type_key(problem.events[c].room_type) for c in codes}, key=lambda v: (v is not None, v or ""))
    apart = {c: v for c, v in seated_apart(problem).items() if c in code_set}
    seated = seats_in_rooms({c: b.inputs.sizes[c] for c in codes}, apart)
    holds = _own_room_holds(apart, b.found, b.x, k)
    late = _tail_seats(apart, b.found, b.x, code_set, seated)  # slot -> (event, seats, start literal)
    _add_own_room_counts(b, apart, holds, caps)
    for s in range(k):
        for ty in types:
            _add_room_type_limits(b, s, ty, caps, seated, holds, late)


def _add_own_room_counts(b: ModelBuild, apart, holds, caps) -> None:
    """Per slot and own room type, the attendees apart holding one cannot outnumber the rooms free."""
    alone_by_kind: dict[str, list[str]] = {}
    spelled: dict[str, str] = {}  # the type as the Attendees sheet first wrote it
    for people in apart.values():
        for attendee, kind in people:
            alone_by_kind.setdefault(kind.casefold(), []).append(attendee)
            spelled.setdefault(kind.casefold(), kind)
    for kind, per_slot in sorted(holds.items()):
        names = sorted(set(alone_by_kind[kind]))
        who = ", ".join(names[:3]) + (f" and {len(names) - 3} more" if len(names) > 3 else "")
        for s in range(b.k):
            lits = per_slot.get(s + 1, [])
            rooms_free = sum(1 for cap, _ in caps[s + 1].get(kind, []) if cap >= 1)
            if len(lits) > rooms_free:
                lit = b.rule_literal(f"slot {s + 1} has {rooms_free} room(s) of type '{spelled[kind]}' free, one "
                                     f"for each attendee who sits alone in one ({who})", "rooms")
                b.enforce(b.m.add(sum(lits) <= rooms_free), lit)


def _add_room_type_limits(b: ModelBuild, s: int, ty: str | None, caps, seated: dict[str, int], holds, late) -> None:
    """The limits of slot ``s + 1`` (0-based ``s``) for the events of room type ``ty`` (None: every room)."""
    m, occ, problem, codes = b.m, b.occ, b.problem, b.codes
    rule_literal, enforce = b.rule_literal, b.enforce
    members = [c for c in codes if seated[c] > 0
               and (ty is None or _type_key(problem.events[c].room_type) == ty)]
    # extra-time seats held past an event's slots, each in one room of the event's type
    tails = [(n, lit) for c, n, lit in late.get(s + 1, ())
             if ty is None or _type_key(problem.events[c].room_type) == ty]
    room_caps = caps[s + 1].get(ty, [])
    word = f"rooms of type '{ty}'" if ty else "rooms"
    # each attendee apart in these rooms takes a whole room: at least the smallest of its type
    own = [(min((cap for cap, _ in caps[s + 1].get(kind, [])), default=0), per_slot[s + 1])
           for kind, per_slot in sorted(holds.items())
           if (ty is None or kind == ty) and per_slot.get(s + 1)]
    own_most = sum(least * len(lits) for least, lits in own)
    total = sum(cap for cap, _ in room_caps)
    if sum(seated[c] for c in members) + own_most + sum(n for n, _ in tails) > total:
        lit = rule_literal(f"the {word} free in slot {s + 1} seat {total}", "rooms")
        enforce(m.add(sum(seated[c] * occ[c][s] for c in members)
                      + sum(least * sum(lits) for least, lits in own)
                      + sum(n * v for n, v in tails) <= total), lit)
    if (own or tails) and not any(shared for _, shared in room_caps):
        # one room for each event, for each attendee apart and for each event's extra-time seats
        count = sum(1 for cap, _ in room_caps if cap >= 1)
        if len(members) + sum(len(lits) for _, lits in own) + len(tails) > count:
            lit = rule_literal(f"slot {s + 1} has {count} {word} free, one event or one attendee "
                               "apart per room", "rooms")
            enforce(m.add(sum(occ[c][s] for c in members) + sum(sum(lits) for _, lits in own)
                          + sum(v for _, v in tails) <= count), lit)
    if not b.inputs.room_splitting:
        _add_room_places(b, s, word, [(seated[c], occ[c][s]) for c in members] + tails, room_caps)
    elif not any(shared for _, shared in room_caps) and len(members) + len(tails) > len(room_caps):
        # split events still take a room each, and no room takes two (extra-time seats: one room)
        lit = rule_literal(f"slot {s + 1} has {len(room_caps)} {word} free, one event per room", "rooms")
        enforce(m.add(sum(occ[c][s] for c in members) + sum(v for _, v in tails) <= len(room_caps)), lit)


def _add_room_places(b: ModelBuild, s: int, word: str, items, room_caps) -> None:
    """Hall's condition: the events needing at least `need` seats cannot outnumber the places for them, a room
    of `cap` seats holding one such event, or cap // need when shared (exact without sharing for one room
    type, since the rooms an event fits are nested by size); an event's extra-time seats past its slots take
    a place of their own (its room then). ``items``: (seats, literal) of the events and extra-time seats."""
    needs = {cap + 1 for cap, _ in room_caps} | {min((n for n, _ in items), default=1)}
    if any(shared for _, shared in room_caps):
        needs |= {n for n, _ in items}
    for need in sorted(needs):
        big = [v for n, v in items if n >= need]
        fits = sum((cap // need if shared else 1) for cap, shared in room_caps if cap >= need)
        if len(big) > fits:
            lit = b.rule_literal(f"slot {s + 1} has places for {fits} events with {need} seats or more "
                                 f"in its {word}", "rooms")
            b.enforce(b.m.add(sum(big) <= fits), lit)


def add_seating_cuts(b: ModelBuild) -> None:
    """Groups of (event, start) pairs that seating found impossible together (``ModelInputs.nogoods``)."""
    for cut in b.inputs.nogoods or ():
        if isinstance(cut, tuple) and len(cut) == 2 and isinstance(cut[0], int):  # (slot, events): one slot's group
            cut = [(c, cut[0]) for c in cut[1]]
        if cut and all(c in b.code_set for c, _ in cut):
            b.m.add(sum(b.x[c][start - 1] for c, start in cut) <= len(cut) - 1)


def add_daily_limit(b: ModelBuild) -> None:
    """The cap on events per attendee per day."""
    problem, x = b.problem, b.x
    if problem.max_per_day is None or not b.k:
        return
    sets = _attendee_event_sets(problem, b.code_set)
    lit = b.rule_literal(f"no attendee may have more than {problem.max_per_day} events a day", "per day")
    for events in sets:
        if len(events) <= problem.max_per_day:
            continue
        for slot_list in b.day_slots.values():
            if len(slot_list) <= problem.max_per_day:
                continue  # one event per slot: this day cannot exceed the cap
            b.enforce(b.m.add(sum(x[c][s] for c in events for s in slot_list) <= problem.max_per_day), lit)


def add_slot_symmetry(b: ModelBuild) -> None:
    """The events of ``ModelInputs.symmetry`` (a clique) fixed to slots 1, 2, ..."""
    symmetry = b.inputs.symmetry
    if symmetry:
        for s, c in enumerate(symmetry[:b.k]):
            b.m.add(b.x[c][s] == 1)
        b.tm.symmetry_clique = list(symmetry[:b.k])


def _required_events_by_attendee(problem: Problem, codes) -> dict[str, list[str]]:
    out: dict[str, list[str]] = {}
    for attendee, code in problem.required_enrolments():
        if code in codes:
            out.setdefault(attendee, []).append(code)
    return out


def _add_optional_busy(tm: "TimetableModel", problem: Problem, found: Availability, code_set: set[str],
                       objective: bool, domains: "Domains", rule_literal) -> None:
    """Optional attendees booked elsewhere: the part of quorums and of ``optional_missed`` that depends on
    two events' slots.

    For an optional attendee ``a`` of event ``e`` who has other events, ``busy[a, e]`` is forced to 1
    when a slot of their sitting at ``e`` is also a slot of their sitting at another of their events
    that they can come to (the validator's definition: an optional attendee is not free when booked
    elsewhere then; an optional attendance they cannot come to books nobody). It is
    only bounded from below: CP-SAT leaves it 0 where it may, since it only costs (the goal, the quorum).
    A quorum ``q`` of ``e`` started in ``s`` then reads: of the optional attendees who can make ``s``,
    at most ``free[e][s] - q`` may be busy.
    """
    m, x, k = tm.model, tm.x, tm.k
    events_of: dict[str, list[str]] = {}
    for a, c in problem.enrolments:
        if c in code_set:
            events_of.setdefault(a, []).append(c)
    goal = objective and problem.weights.optional_missed > 0
    for a, e in sorted(problem.optional):
        if e not in code_set or len(events_of.get(a, ())) < 2 or not (goal or problem.events[e].quorum):
            continue
        # the slots they hold at each of their events and starts; none where, optional, they cannot come
        held = {}
        for c in events_of[a]:
            cannot = _cannot_starts(problem, [], a, c, found) if (a, c) in problem.optional else frozenset()
            for s in range(1, k + 1):
                held[(c, s)] = frozenset() if s in cannot else frozenset(found.slots_taken(c, s, a)
                                                                         or found.slots_taken(c, s))
        busy = m.new_bool_var(f"busy[{a},{e}]")
        others = tuple(c for c in events_of[a] if c != e)
        for c in others:
            for t in range(1, k + 1):
                mine = [x[e][s - 1] for s in sorted(domains.allowed[e]) if t in held[(e, s)]]
                theirs = [x[c][s - 1] for s in sorted(domains.allowed[c]) if t in held[(c, s)]]
                if mine and theirs:
                    m.add(busy >= sum(mine) + sum(theirs) - 1)
        meaning = (e, others, held)
        tm.derived.append((busy.index, "busy", *meaning))
        tm.optional_busy[(a, e)] = (busy, meaning)
    for e in sorted(code_set):
        quorum = problem.events[e].quorum
        mine = [(a, v) for (a, c), (v, _) in tm.optional_busy.items() if c == e]
        if not quorum or not mine:
            continue
        lit = rule_literal(f"{e} needs {quorum} of its attendees free (an optional attendee booked in another "
                           "event then is not free)", "quorum")
        cannot = {a: _cannot_starts(problem, [], a, e, found) for a, _ in mine}
        for s in sorted(domains.allowed[e]):
            can = [v for a, v in mine if s not in cannot[a]]
            slack = found.free.get(e, {}).get(s, 0) - quorum
            if len(can) > slack:
                m.add(sum(can) <= max(slack, 0)).only_enforce_if([x[e][s - 1]] + ([lit] if lit is not None else []))


def _own_room_holds(apart: dict[str, list[tuple[str, str]]], found: Availability | None, x, k: int
                    ) -> dict[str, dict[int, list]]:
    """Own room type (folded) -> slot -> one start literal ``x[c][start]`` per (attendee apart, event, start)
    whose sitting holds that slot (extra time included): summed, the attendees apart holding rooms of that type
    in that slot (each attendee's event has one start)."""
    out: dict[str, dict[int, list]] = {}
    for c, people in sorted(apart.items()):
        for attendee, kind in people:
            per = out.setdefault(kind.casefold(), {})
            for start in range(1, k + 1):
                sitting = ((found.slots_taken(c, start, attendee) or found.slots_taken(c, start))
                           if found is not None else (start,))
                for t_ in sitting:
                    per.setdefault(t_, []).append(x[c][start - 1])
    return out


def _tail_seats(apart: dict[str, list[tuple[str, str]]], found: Availability | None, x, code_set: set[str],
                seated: dict[str, int]) -> dict[int, list[tuple[str, int, object]]]:
    """Slot -> (event, seats, start literal ``x[c][start]``) for every event and start whose attendees seated
    with it (not apart) have an extra-time sitting running into that slot past the event's own: the seats
    they keep in the event's room then (one room, :func:`.rooms.tail_room`)."""
    out: dict[int, list[tuple[str, int, object]]] = {}
    if found is None or not found.sittings:
        return out
    counts: dict[tuple[str, int, int], int] = {}
    for (attendee, c), own in found.sittings.items():
        if c not in code_set or seated.get(c, 0) <= 0 or any(a == attendee for a, _ in apart.get(c, ())):
            continue
        for start, taken in own.items():
            if taken is None:
                continue
            span = found.slots_taken(c, start) or (start,)
            for t_ in taken:
                if t_ not in span:
                    counts[(c, start, t_)] = counts.get((c, start, t_), 0) + 1
    for (c, start, t_), n in sorted(counts.items()):
        out.setdefault(t_, []).append((c, n, x[c][start - 1]))
    return out


def _attendee_event_sets(problem: Problem, code_set: set[str]) -> list[tuple[str, ...]]:
    """Distinct event sets of attendees (within ``code_set``), dropping sets inside larger ones.

    Attendees with the same events weigh one set; a set inside another needs no constraint of
    its own (a cap that holds for the larger set holds for it). Larger sets come first, and a
    set can only lie inside a kept set that holds its rarest event, so each check looks at a
    few candidates rather than at every kept set.
    """
    by: dict[str, set[str]] = {}
    for a, c in problem.enrolments:
        if c in code_set:
            by.setdefault(a, set()).add(c)
    sets = sorted({frozenset(v) for v in by.values()}, key=lambda v: (-len(v), sorted(v)))
    kept: list[frozenset[str]] = []
    holding: dict[str, list[int]] = {}  # event -> the kept sets holding it
    for events in sets:
        rarest = min(events, key=lambda c: len(holding.get(c, ())))
        if any(events <= kept[i] for i in holding.get(rarest, ())):
            continue
        for c in events:
            holding.setdefault(c, []).append(len(kept))
        kept.append(events)
    return [tuple(sorted(v)) for v in kept]


def _slot_name(slots: list[Slot], s: int | None, ref: str) -> str:
    if s is None:
        return f"'{ref}' (which is not one of the {len(slots)} slots)"
    return f"slot {s} ({slots[s - 1].label})"


def _ranges(numbers: list[int]) -> str:
    out: list[str] = []
    start = prev = None
    for n in numbers:
        if start is None:
            start = prev = n
        elif n == prev + 1:
            prev = n
        else:
            out.append(str(start) if start == prev else f"{start}-{prev}")
            start = prev = n
    if start is not None:
        out.append(str(start) if start == prev else f"{start}-{prev}")
    return ", ".join(out)
