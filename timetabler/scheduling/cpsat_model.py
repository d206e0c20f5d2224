"""The CP-SAT model of an exam or meeting timetable.

Variables (one family per name):

``x[e][s]``
    event ``e`` sits in slot ``s`` (Boolean; exactly one per event).
``t[e]``, ``d[e]``
    slot number and day number of event ``e`` (integers linked to ``x``), made only when a
    rule or goal needs them.
``adj``, ``sday``, ``b2b``, ``over``, ``twoday``, ``gap``, ``prox``
    per clashing pair: in consecutive slots; on the same day; back-to-back on one day;
    last-of-day then first-of-next; two in a day (not consecutive); slot distance; Carter
    proximity weight.

Hard rules:

* no attendee double-booked: one at-most-one constraint per slot and per clique of an edge
  clique cover of the conflict graph (:func:`.cliques.clique_cover`);
* physical limits (event length within slot length, event seats within the slot's seats
  and the rooms that could hold it) shrink each event's slots;
* fixed and barred slots, "same slot", "before", "different days", "alone", the seat limit of
  each slot, the seats of the rooms of each type in each slot, the cap on events per
  attendee per day. In *explain* mode each of these carries its own enforcement literal,
  which the solver takes as an assumption; the sufficient assumptions for infeasibility
  then name a set of rules that cannot all hold.

Slot symmetry: when every slot is alike and no rule tells slots apart, the events of a
large clique are fixed to slots 1, 2, ... (a standard symmetry break for colouring; any
timetable can be relabelled to satisfy it).

Soft goals are weighted counts (weights from :class:`~timetabler.model.Weights`); a pair
of events sharing ``c`` attendees costs ``c`` times the weight, so the objective counts
attendee-occurrences exactly as :func:`.validator.validate` recounts them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Hashable

import networkx as nx
from ortools.sat.python import cp_model

from ..model import Problem, RuleKind, Slot, days_of
from .cliques import clique_cover

#: Carter, Laporte & Lee (1996) proximity weights for gaps of 1..5 slots.
PROXIMITY_WEIGHTS = (16, 8, 4, 2, 1)


@dataclass
class RuleLiteral:
    """A user rule and the literal that switches it on (explain mode)."""

    literal: cp_model.IntVar
    text: str
    kind: str


@dataclass
class TimetableModel:
    """A built model and the handles needed to read a solution back."""

    model: cp_model.CpModel
    codes: list[str]
    k: int
    x: dict[str, list[cp_model.IntVar]]
    terms: dict[str, list[tuple[int, object]]] = field(default_factory=dict)
    rules: list[RuleLiteral] = field(default_factory=list)
    symmetry_clique: list[str] = field(default_factory=list)
    cover_size: int = 0
    constant: dict[str, int] = field(default_factory=dict)
    derived: list[tuple] = field(default_factory=list)  # (var, kind, args...) to complete hints
    day: list[int] = field(default_factory=list)
    pairs: int = 0  # clashing pairs in the model

    def hint(self, assignment: dict[str, int]) -> None:
        """Hint a full solution: ``x`` from ``assignment`` and every derived variable computed from it,
        so CP-SAT can take the hint as its first solution without search."""
        m, k, day = self.model, self.k, self.day
        for c, s in assignment.items():
            if c in self.x and 1 <= s <= k:
                for i, v in enumerate(self.x[c], start=1):
                    m.AddHint(v, i == s)
        if any(c not in assignment for c in self.codes):
            return
        a = assignment
        for var, kind, *args in self.derived:
            if kind == "t":
                value = a[args[0]]
            elif kind == "d":
                value = day[a[args[0]] - 1]
            elif kind in ("adj", "sday", "b2b", "over", "twoday", "gap", "prox", "before"):
                e, f = args
                gap = abs(a[e] - a[f])
                same = day[a[e] - 1] == day[a[f] - 1]
                value = {"before": a[e] < a[f], "adj": gap == 1, "sday": same, "b2b": gap == 1 and same,
                         "over": gap == 1 and not same,
                         "twoday": gap != 1 and same, "gap": gap,
                         "prox": PROXIMITY_WEIGHTS[gap - 1] if 1 <= gap <= 5 else 0}[kind]
            elif kind == "miss":
                value = a[args[0]] not in args[1]
            else:
                continue
            m.AddHint(var, int(value))

    def assignment(self, solver: cp_model.CpSolver) -> dict[str, int]:
        out: dict[str, int] = {}
        for code in self.codes:
            for s, var in enumerate(self.x[code], start=1):
                if solver.BooleanValue(var):
                    out[code] = s
                    break
        return out

    def breakdown(self, solver: cp_model.CpSolver) -> dict[str, int]:
        """Weighted penalty of each soft goal in the solver's current solution."""
        out: dict[str, int] = {}
        for name, terms in self.terms.items():
            out[name] = self.constant.get(name, 0) + sum(coef * solver.Value(expr) for coef, expr in terms)
        return out


@dataclass
class Domains:
    """Slots each event may physically take, and why others are ruled out."""

    allowed: dict[str, set[int]]
    why_not: dict[str, dict[int, str]]


def physical_domains(problem: Problem, slots: list[Slot], codes, sizes: dict[str, int],
                     *, room_splitting: bool) -> Domains:
    """Slots where each event fits: its length, the slot's seats, and the rooms free then."""
    k = len(slots)
    allowed: dict[str, set[int]] = {}
    why: dict[str, dict[int, str]] = {}
    room_caps = _room_capacity_by_slot(problem, slots)
    for code in codes:
        ev = problem.events[code]
        ok: set[int] = set()
        reasons: dict[int, str] = {}
        for s in range(1, k + 1):
            slot = slots[s - 1]
            if ev.duration_minutes is not None and slot.length_minutes is not None \
                    and ev.duration_minutes > slot.length_minutes:
                reasons[s] = f"it lasts {ev.duration_minutes} minutes and slot {s} only {slot.length_minutes}"
                continue
            if slot.seat_capacity is not None and sizes[code] > slot.seat_capacity:
                reasons[s] = f"it has {sizes[code]} attendees and slot {s} only {slot.seat_capacity} seats"
                continue
            if problem.rooms and sizes[code] > 0:
                caps = room_caps[s].get(_type_key(ev.room_type), [])
                room_word = f"rooms of type '{ev.room_type}'" if ev.room_type else "rooms"
                if room_splitting:
                    if sizes[code] > sum(caps):
                        reasons[s] = f"it has {sizes[code]} attendees and the {room_word} free in slot {s} seat {sum(caps)}"
                        continue
                elif sizes[code] > max(caps, default=0):
                    reasons[s] = (f"it has {sizes[code]} attendees and the largest of the {room_word} free in "
                                  f"slot {s} seats {max(caps, default=0)}")
                    continue
            ok.add(s)
        allowed[code] = ok
        why[code] = reasons
    return Domains(allowed, why)


def _type_key(room_type: str | None) -> str | None:
    return room_type.casefold() if room_type else None


def _room_capacity_by_slot(problem: Problem, slots: list[Slot]) -> dict[int, dict[str | None, list[int]]]:
    """Capacities of the rooms free in each slot, by room type (key None: every room)."""
    out: dict[int, dict[str | None, list[int]]] = {}
    for s in range(1, len(slots) + 1):
        by_type: dict[str | None, list[int]] = {None: []}
        for room in problem.rooms:
            if any(problem.slot_number(ref, slots) == s for ref in room.unavailable_slots):
                continue
            by_type[None].append(room.capacity)
            if room.room_type:
                by_type.setdefault(room.room_type.casefold(), []).append(room.capacity)
        out[s] = by_type
    return out


def large_event_codes(sizes: dict[str, int]) -> set[str]:
    """The largest tenth of events by attendees (at least one), for the marking-time goal."""
    enrolled = sorted((n for n in sizes.values() if n > 0), reverse=True)
    if not enrolled:
        return set()
    cut = enrolled[max(1, math.ceil(len(enrolled) / 10)) - 1]
    return {c for c, n in sizes.items() if n >= cut and n > 0}


def slots_interchangeable(problem: Problem, slots: list[Slot], codes) -> bool:
    """Whether every permutation of the slots maps timetables to timetables (hard rules only)."""
    if len({(s.length_minutes, s.seat_capacity) for s in slots}) > 1:
        return False
    for code in codes:
        ev = problem.events[code]
        if (ev.fixed_slot and str(ev.fixed_slot).strip()) or ev.barred_slots:
            return False
    if any(room.unavailable_slots for room in problem.rooms):
        return False
    days = days_of(slots)
    one_day_each = len(set(days)) == len(days)
    for rule in problem.rules:
        if rule.kind is RuleKind.BEFORE:
            return False
        if rule.kind is RuleKind.DIFFERENT_DAYS and not one_day_each:
            return False
    if problem.max_per_day is not None and not one_day_each:
        return False
    return True


def build_model(
    problem: Problem,
    slots: list[Slot],
    graph: nx.Graph,
    codes: list[str],
    *,
    sizes: dict[str, int],
    domains: Domains,
    objective: bool = True,
    explain: bool = False,
    symmetry: list[str] | None = None,
    previous: dict[str, int] | None = None,
    large: set[str] | None = None,
    room_splitting: bool = False,
    room_sharing: bool = False,
    nogoods: list[tuple[int, list[str]]] | None = None,
    cover: list[list[Hashable]] | None = None,
) -> TimetableModel:
    """Build the CP-SAT model for the events ``codes`` (a union of components of ``graph``).

    ``symmetry`` is a clique whose events are fixed to slots 1, 2, ...; pass it only when
    :func:`slots_interchangeable` holds and the objective does not depend on slot order.
    ``nogoods`` are (slot, events) pairs that must not all share that slot (rooms found
    impossible to allocate). ``explain`` gives every user rule its own assumption literal.
    """
    m = cp_model.CpModel()
    k = len(slots)
    code_set = set(codes)
    sub = graph.subgraph(codes)
    day = days_of(slots)
    x = {c: [m.NewBoolVar(f"x[{c}][{s}]") for s in range(1, k + 1)] for c in codes}
    tm = TimetableModel(model=m, codes=list(codes), k=k, x=x, day=list(day), pairs=sub.number_of_edges())

    def rule_literal(text: str, kind: str):
        if not explain:
            return None
        lit = m.NewBoolVar(f"rule[{len(tm.rules)}]")
        tm.rules.append(RuleLiteral(lit, text, kind))
        m.AddAssumption(lit)
        return lit

    def enforce(ct, lit):
        if lit is not None:
            ct.OnlyEnforceIf(lit)
        return ct

    for c in codes:
        m.AddExactlyOne(x[c])

    # physical limits (explain mode: one literal per event whose slots they restrict)
    for c in codes:
        banned = [s for s in range(1, k + 1) if s not in domains.allowed[c]]
        if not banned:
            continue
        reasons = domains.why_not[c]
        lit = rule_literal(f"{c} cannot go in slot(s) {_ranges(banned)}: {reasons[banned[0]]}", "physical")
        for s in banned:
            enforce(m.Add(x[c][s - 1] == 0), lit)

    # no attendee double-booked: clique at-most-one per slot
    cliques = cover if cover is not None else clique_cover(sub)
    tm.cover_size = len(cliques)
    for clique in cliques:
        if len(clique) < 2:
            continue
        # a clique of exactly K events fills every slot once (pigeonhole): exactly-one is valid and stronger
        tight = len(clique) == k
        for s in range(k):
            if tight:
                m.AddExactlyOne(x[c][s] for c in clique)
            else:
                m.AddAtMostOne(x[c][s] for c in clique)

    # fixed and barred slots
    for c in codes:
        ev = problem.events[c]
        if ev.fixed_slot is not None and str(ev.fixed_slot).strip():
            s = problem.slot_number(ev.fixed_slot, slots)
            lit = rule_literal(f"{c} is fixed to {_slot_name(slots, s, ev.fixed_slot)}", "fixed")
            if s is None:
                enforce(m.AddBoolOr([]), lit)  # refers to no slot: cannot hold
            else:
                enforce(m.Add(x[c][s - 1] == 1), lit)
        barred = sorted({n for ref in ev.barred_slots if (n := problem.slot_number(ref, slots)) is not None})
        if barred:
            lit = rule_literal(f"{c} may not go in slot(s) {_ranges(barred)}", "barred")
            for s in barred:
                enforce(m.Add(x[c][s - 1] == 0), lit)

    t_cache: dict[str, cp_model.IntVar] = {}
    d_cache: dict[str, cp_model.IntVar] = {}

    def t(c: str):
        if c not in t_cache:
            v = m.NewIntVar(1, max(k, 1), f"t[{c}]")
            m.Add(v == sum((s + 1) * x[c][s] for s in range(k)))
            t_cache[c] = v
            tm.derived.append((v, "t", c))
        return t_cache[c]

    def d(c: str):
        if c not in d_cache:
            v = m.NewIntVar(min(day, default=1), max(day, default=1), f"d[{c}]")
            m.Add(v == sum(day[s] * x[c][s] for s in range(k)))
            d_cache[c] = v
            tm.derived.append((v, "d", c))
        return d_cache[c]

    day_slots: dict[int, list[int]] = {}
    for s in range(k):
        day_slots.setdefault(day[s], []).append(s)

    # relations between events
    for rule in problem.rules:
        evs = [c for c in rule.events if c in code_set]
        if len(evs) != len(rule.events):
            continue  # rule belongs to another block, or names unknown events (intake reports those)
        lit = rule_literal(rule.describe(), rule.kind.value)
        if rule.kind is RuleKind.BEFORE:
            enforce(m.Add(t(evs[0]) + 1 <= t(evs[1])), lit)
        elif rule.kind is RuleKind.SAME_SLOT:
            for other in evs[1:]:
                for s in range(k):
                    enforce(m.Add(x[evs[0]][s] == x[other][s]), lit)
        elif rule.kind is RuleKind.DIFFERENT_DAYS:
            for slot_list in day_slots.values():
                enforce(m.Add(sum(x[c][s] for c in evs for s in slot_list) <= 1), lit)
        elif rule.kind is RuleKind.ALONE:
            e = evs[0]
            others = [c for c in codes if c != e]
            for s in range(k):
                if others:
                    cond = [x[e][s]] + ([lit] if lit is not None else [])
                    m.Add(sum(x[c][s] for c in others) == 0).OnlyEnforceIf(cond)

    # seats per slot
    for s in range(k):
        cap = slots[s].seat_capacity
        if cap is None:
            continue
        load = [(sizes[c], x[c][s]) for c in codes if sizes[c] > 0]
        if sum(n for n, _ in load) <= cap:
            continue
        lit = rule_literal(f"slot {s + 1} ({slots[s].label}) seats at most {cap}", "seats")
        enforce(m.Add(sum(n * v for n, v in load) <= cap), lit)

    # rooms: seats of the rooms of each type free in each slot
    if problem.rooms:
        caps = _room_capacity_by_slot(problem, slots)
        types = sorted({_type_key(problem.events[c].room_type) for c in codes}, key=lambda v: (v is not None, v or ""))
        for s in range(k):
            for ty in types:
                members = [c for c in codes if sizes[c] > 0
                           and (ty is None or _type_key(problem.events[c].room_type) == ty)]
                room_caps = caps[s + 1].get(ty, [])
                word = f"rooms of type '{ty}'" if ty else "rooms"
                if sum(sizes[c] for c in members) > sum(room_caps):
                    lit = rule_literal(f"the {word} free in slot {s + 1} seat {sum(room_caps)}", "rooms")
                    enforce(m.Add(sum(sizes[c] * x[c][s] for c in members) <= sum(room_caps)), lit)
                if not room_sharing and len(members) > len(room_caps):
                    lit = rule_literal(f"slot {s + 1} has {len(room_caps)} {word} free, one event per room", "rooms")
                    enforce(m.Add(sum(x[c][s] for c in members) <= len(room_caps)), lit)
                if not room_sharing and not room_splitting:
                    # Hall's condition for seating one event per room: the events needing at least
                    # `need` seats cannot outnumber the rooms that have them (exact for one room type,
                    # since the rooms an event fits are nested by size)
                    for need in sorted({cap + 1 for cap in room_caps} | {min((sizes[c] for c in members), default=1)}):
                        big = [c for c in members if sizes[c] >= need]
                        fits = sum(1 for cap in room_caps if cap >= need)
                        if len(big) > fits:
                            lit = rule_literal(f"slot {s + 1} has {fits} {word} free with {need} seats or more, "
                                               "one event per room", "rooms")
                            enforce(m.Add(sum(x[c][s] for c in big) <= fits), lit)
    for s, group in nogoods or ():
        if all(c in code_set for c in group):
            m.Add(sum(x[c][s - 1] for c in group) <= len(group) - 1)

    # the cap on events per attendee per day
    if problem.max_per_day is not None and k:
        sets = _attendee_event_sets(problem, code_set)
        lit = rule_literal(f"no attendee may have more than {problem.max_per_day} events a day", "per day")
        for events in sets:
            if len(events) <= problem.max_per_day:
                continue
            for slot_list in day_slots.values():
                if len(slot_list) <= problem.max_per_day:
                    continue  # one event per slot: this day cannot exceed the cap
                enforce(m.Add(sum(x[c][s] for c in events for s in slot_list) <= problem.max_per_day), lit)

    # slot symmetry
    if symmetry:
        for s, c in enumerate(symmetry[:k]):
            m.Add(x[c][s] == 1)
        tm.symmetry_clique = list(symmetry[:k])

    if objective:
        _add_objective(tm, problem, slots, sub, day, t, d, previous or {}, large or set())
    return tm


def _add_objective(tm: TimetableModel, problem, slots, sub, day, t, d, previous, large) -> None:
    m, x, k = tm.model, tm.x, tm.k
    w = problem.weights
    terms: dict[str, list[tuple[int, object]]] = {}
    one_day_each = len(set(day)) == len(day)
    # a pair of consecutive slots exists on one day / across a day boundary?
    same_day_adjacent = any(day[s] == day[s + 1] for s in range(k - 1))
    cross_day_adjacent = any(day[s] != day[s + 1] for s in range(k - 1))
    per_day_count: dict[int, int] = {}
    for dd in day:
        per_day_count[dd] = per_day_count.get(dd, 0) + 1
    # two events of one day are then always back-to-back, provided each day's slots follow one another
    runs = sum(1 for s in range(k) if s == 0 or day[s] != day[s - 1])
    at_most_two_a_day = max(per_day_count.values(), default=0) <= 2 and runs == len(per_day_count)
    want_b2b = w.back_to_back > 0 and same_day_adjacent
    want_over = w.overnight > 0 and cross_day_adjacent
    want_two = w.same_day > 0 and not one_day_each and not at_most_two_a_day
    want_prox = w.proximity > 0 and k > 1
    if k > 1 and (want_b2b or want_over or want_two or want_prox):
        # days never go back as slots go on (true of generic slots and of dated slots in order): then one
        # order literal per pair, with plain enforced inequalities, encodes "consecutive" and "same day";
        # the domains with holes used otherwise are expanded by CP-SAT into about seven Booleans per pair
        monotone = all(day[s] <= day[s + 1] for s in range(k - 1))
        for a, b, shared in sub.edges(data="shared", default=1):
            c = int(shared or 1)
            delta = t(a) - t(b)
            adj = sday = before = None
            need_adj = (want_b2b and not at_most_two_a_day) or want_over or want_two
            need_sday = (want_b2b or want_two or want_over) and not one_day_each
            if monotone and (need_adj or need_sday):
                # a and b clash, so they never share a slot: `before` is t(a) < t(b)
                before = m.NewBoolVar(f"before[{a},{b}]")
                tm.derived.append((before, "before", a, b))
                m.Add(t(b) - t(a) >= 1).OnlyEnforceIf(before)
                m.Add(t(a) - t(b) >= 1).OnlyEnforceIf(before.Not())
            if need_adj:
                adj = m.NewBoolVar(f"adj[{a},{b}]")
                tm.derived.append((adj, "adj", a, b))
                if before is not None:
                    m.Add(delta <= 1).OnlyEnforceIf(adj)
                    m.Add(delta >= -1).OnlyEnforceIf(adj)
                    m.Add(t(b) - t(a) >= 2).OnlyEnforceIf([adj.Not(), before])
                    m.Add(t(a) - t(b) >= 2).OnlyEnforceIf([adj.Not(), before.Not()])
                else:
                    near = cp_model.Domain.FromValues([-1, 1])
                    far = cp_model.Domain.FromIntervals([[-k, -2], [0, 0], [2, k]])
                    m.AddLinearExpressionInDomain(delta, near).OnlyEnforceIf(adj)
                    m.AddLinearExpressionInDomain(delta, far).OnlyEnforceIf(adj.Not())
            if need_sday:
                sday = m.NewBoolVar(f"sday[{a},{b}]")
                tm.derived.append((sday, "sday", a, b))
                m.Add(d(a) == d(b)).OnlyEnforceIf(sday)
                if before is not None:
                    m.Add(d(b) - d(a) >= 1).OnlyEnforceIf([sday.Not(), before])
                    m.Add(d(a) - d(b) >= 1).OnlyEnforceIf([sday.Not(), before.Not()])
                else:
                    m.Add(d(a) != d(b)).OnlyEnforceIf(sday.Not())
            if want_b2b and sday is not None and at_most_two_a_day:
                # at most two slots a day: two events of one day always sit back-to-back
                terms.setdefault("back_to_back", []).append((c * w.back_to_back, sday))
            elif want_b2b and sday is not None:
                v = m.NewBoolVar(f"b2b[{a},{b}]")
                tm.derived.append((v, "b2b", a, b))
                m.AddBoolAnd([adj, sday]).OnlyEnforceIf(v)
                m.AddBoolOr([adj.Not(), sday.Not(), v])
                terms.setdefault("back_to_back", []).append((c * w.back_to_back, v))
            if want_over:
                if sday is None:  # every slot its own day: consecutive slots are consecutive days
                    v = adj
                else:
                    v = m.NewBoolVar(f"over[{a},{b}]")
                    tm.derived.append((v, "over", a, b))
                    m.AddBoolAnd([adj, sday.Not()]).OnlyEnforceIf(v)
                    m.AddBoolOr([adj.Not(), sday, v])
                terms.setdefault("overnight", []).append((c * w.overnight, v))
            if want_two and sday is not None:
                v = m.NewBoolVar(f"twoday[{a},{b}]")
                tm.derived.append((v, "twoday", a, b))
                m.AddBoolAnd([adj.Not(), sday]).OnlyEnforceIf(v)
                m.AddBoolOr([adj, sday.Not(), v])
                terms.setdefault("same_day", []).append((c * w.same_day, v))
            if want_prox:
                gap = m.NewIntVar(1, k - 1, f"gap[{a},{b}]")
                tm.derived.append((gap, "gap", a, b))
                m.AddAbsEquality(gap, delta)
                table = [0] + [PROXIMITY_WEIGHTS[g - 1] if g <= 5 else 0 for g in range(1, k)]
                prox = m.NewIntVar(0, 16, f"prox[{a},{b}]")
                tm.derived.append((prox, "prox", a, b))
                m.AddElement(gap, table, prox)
                terms.setdefault("proximity", []).append((c * w.proximity, prox))
    if w.large_late > 0:
        for c in tm.codes:
            if c in large:
                terms.setdefault("large_late", []).append((w.large_late, t(c)))
                tm.constant["large_late"] = tm.constant.get("large_late", 0) - w.large_late
    if w.preferred_slot > 0:
        for c in tm.codes:
            refs = problem.events[c].preferred_slots
            if not refs:
                continue
            wanted = {n for r in refs if (n := problem.slot_number(r, slots)) is not None}
            miss = m.NewBoolVar(f"miss_preferred[{c}]")
            tm.derived.append((miss, "miss", c, frozenset(wanted)))
            m.Add(sum(x[c][s - 1] for s in wanted) + miss >= 1)
            m.Add(sum(x[c][s - 1] for s in wanted) + miss <= 1)
            terms.setdefault("preferred_slot", []).append((w.preferred_slot, miss))
    if w.penalised_slot > 0:
        for s, slot in enumerate(slots):
            if slot.penalised:
                for c in tm.codes:
                    terms.setdefault("penalised_slot", []).append((w.penalised_slot, x[c][s]))
    if previous and w.moved > 0:
        for c in tm.codes:
            p = previous.get(c)
            if p is not None and 1 <= p <= k:
                terms.setdefault("moved", []).append((w.moved, x[c][p - 1].Not()))
    tm.terms = terms
    objective = [coef * expr for name in terms for coef, expr in terms[name]]
    if objective:
        m.Minimize(sum(objective) + sum(tm.constant.values()))


def _attendee_event_sets(problem: Problem, code_set: set[str]) -> list[tuple[str, ...]]:
    """Distinct event sets of attendees (within ``code_set``), dropping sets inside larger ones."""
    by: dict[str, set[str]] = {}
    for a, c in problem.enrolments:
        if c in code_set:
            by.setdefault(a, set()).add(c)
    sets = sorted({tuple(sorted(v)) for v in by.values()}, key=len, reverse=True)
    kept: list[tuple[str, ...]] = []
    kept_sets: list[set[str]] = []
    for s in sets:
        ss = set(s)
        if len(sets) < 3000 and any(ss <= other for other in kept_sets):
            continue
        kept.append(s)
        kept_sets.append(ss)
    return kept


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
