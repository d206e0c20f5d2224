"""Exact counts of the timetables that honour people: long events, extra time and quorums.

A timetable here is what :func:`timetabler.scheduling.validator.validate` accepts as far as
people and clashes go, given as a start slot for every event:

* every event starts in one of its allowed starts (:attr:`Availability.starts
  <timetabler.availability.Availability.starts>`: fixed and barred slots, a span that fits,
  every required attendee able to make every slot they would take, and a quorum met by the
  attendees' availability alone);
* no required attendee is in two events whose slots *for them* overlap: an event takes its
  span (:attr:`~timetabler.availability.Availability.spans`), and an attendee with extra time
  takes their own sitting (:attr:`~timetabler.availability.Availability.sittings`), which may
  run into the next slot;
* a quorum ``q`` holds: at least ``q`` attendees are free, a required attendee being free at
  every allowed start, an optional one when they can make every slot of their sitting and are
  booked in no other event at a slot overlapping it (booked: required there, or optional there
  and able to come).

The count is the number of such start assignments (the events' slots, fixed and barred slots
and the required attendees' clashes are exactly those of the list-colouring count when every
event takes one slot for everyone and no quorum depends on optional attendees; then the two
counts agree).

Method
------
The rules form a constraint network over the events' starts: a *clash table* for every pair of
events sharing a required attendee (the starts of the one that overlap, for that attendee, the
other's), and a *quorum check* over an event with a quorum and every other event of its
optional attendees. The network splits into groups that share no rule; the count is the
product of the groups' counts. A group is counted by dynamic programming along a vertex order
with a small frontier (:func:`.frontier.frontier_order`): the state after placing the first
``i`` events is the starts of those of them that still share a rule with an event to come, and
each state carries the number of ways to reach it. This is variable elimination along the
order (bucket elimination, R. Dechter, "Bucket elimination: a unifying framework for
reasoning", Artificial Intelligence 113 (1999) 41-85; the reference is recalled), the counting
form of backtracking with every sub-problem remembered by its frontier. Each group has a time
and memory budget (:class:`.budget.Budget`); a group that does not finish is not exact.

Examples
--------
>>> import datetime as dt
>>> from timetabler.availability import Availability
>>> from timetabler.model import Event, Problem, Slot
>>> day = dt.date(2027, 3, 1)
>>> slots = [Slot(f"{h}:00", date=day, start=dt.time(h), length_minutes=60) for h in (9, 10, 11)]
>>> problem = Problem([("ada", "BOARD"), ("ada", "AUDIT")],
...                   events={"BOARD": Event("BOARD", duration_minutes=120)})
>>> counter = PeopleCounter(problem)
>>> counter.total(Availability.of(problem, slots))  # BOARD at 9 (AUDIT at 11) or at 10 (AUDIT at 9)
2
"""

from __future__ import annotations

import functools
import math
import time
from dataclasses import dataclass, field, replace
from fractions import Fraction
from typing import Iterable, Sequence

import networkx as nx

from ..availability import Availability
from ..model import Problem, Slot
from .budget import Budget, BudgetExceeded
from .frontier import frontier_order

#: states kept at once by one group's count before it gives up (memory: a tuple and an int each)
MAX_STATES = 1_000_000
#: groups of up to this many events try greedy orders besides the frontier order (each try costs n² steps)
GREEDY_ORDER_MAX_EVENTS = 80
#: orders whose frontier could hold more than MAX_STATES × 10^this states are not tried (the rules prune
#: many states, so a little over the limit is still tried)
HOPELESS_LOG10 = 4.0
#: seconds the figures naming people may take in all
PEOPLE_WHAT_IF_SECONDS = 3.0


@dataclass
class Quorum:
    """The part of an event's quorum that depends on other events: optional attendees busy elsewhere.

    ``need`` free optional attendees are needed (the quorum less the required attendees, who are
    free at every allowed start). For each optional attendee: ``can``, the starts of the event they
    can make (a bit per slot number), and ``busy``, for each of their other events, start of this
    event → the starts of the other event at which they would be booked at an overlapping slot.
    """

    event: str
    need: int
    attendees: list[tuple[str, int, dict[str, dict[int, int]]]]
    scope: tuple[str, ...]

    def holds(self, at: dict) -> bool:
        s = at[self.event]
        free = 0
        for _, can, busy in self.attendees:
            if not (can >> s) & 1:
                continue
            if all(not (table.get(s, 0) >> at[f]) & 1 for f, table in busy.items()):
                free += 1
                if free >= self.need:
                    return True
        return free >= self.need


@dataclass
class StartModel:
    """The constraint network of one group for one number of slots.

    ``starts[e]``: a bit per allowed start slot of ``e``. ``clash[(e, f)][s]``: the starts of ``f``
    that clash with ``e`` started in ``s`` (both directions are stored). ``quorums``: the quorum
    checks that depend on other events.
    """

    events: list[str]
    starts: dict[str, int]
    clash: dict[tuple[str, str], dict[int, int]] = field(default_factory=dict)
    quorums: list[Quorum] = field(default_factory=list)

    def primal_graph(self) -> nx.Graph:
        """Events linked when some rule involves both."""
        g = nx.Graph()
        g.add_nodes_from(self.events)
        g.add_edges_from(self.clash)
        for q in self.quorums:
            scope = list(q.scope)
            for i, u in enumerate(scope):
                for v in scope[i + 1:]:
                    g.add_edge(u, v)
        return g

    def allows(self, at: dict[str, int]) -> bool:
        """Whether the starts ``at`` (every event of the group) break no rule: for checks and lower bounds."""
        for e in self.events:
            if not (self.starts[e] >> at[e]) & 1:
                return False
        for (e, f), table in self.clash.items():
            if (table.get(at[e], 0) >> at[f]) & 1:
                return False
        return all(q.holds(at) for q in self.quorums)


@functools.lru_cache(maxsize=1 << 16)
def _bits(mask: int) -> tuple[int, ...]:
    """The slot numbers of a mask's bits, lowest first."""
    out = []
    while mask:
        low = mask & -mask
        out.append(low.bit_length() - 1)
        mask ^= low
    return tuple(out)


def live_quorum(problem: Problem, code: str, attendees: Sequence[str], events_of: dict[str, list[str]]) -> bool:
    """True when ``code``'s quorum can be broken by an optional attendee booked in another event."""
    event = problem.events.get(code)
    if event is None or not event.quorum:
        return False
    optional = [a for a in attendees if (a, code) in problem.optional]
    required = len(attendees) - len(optional)
    return event.quorum > required and any(len(events_of.get(a, ())) > 1 for a in optional)


class PeopleCounter:
    """Counts of one problem's timetables honouring people, for any run of slots.

    The groups (events sharing no rule with other groups, whatever the slots) are worked out
    once: events linked by a required attendee they share, and an event whose quorum depends on
    optional attendees linked to those attendees' other events.
    """

    def __init__(self, problem: Problem, events: Iterable[str] | None = None):
        self.problem = problem
        codes = sorted(problem.events if events is None else events, key=str)
        self.events = codes
        inside = set(codes)
        self.attendees_of: dict[str, list[str]] = {c: [] for c in codes}
        self.events_of: dict[str, list[str]] = {}
        for attendee, code in problem.enrolments:
            if code in inside:
                self.attendees_of[code].append(attendee)
                self.events_of.setdefault(attendee, []).append(code)
        links = nx.Graph()
        links.add_nodes_from(codes)
        for attendee, mine in self.events_of.items():
            required = [c for c in mine if (attendee, c) not in problem.optional]
            for i, u in enumerate(required):
                for v in required[i + 1:]:
                    links.add_edge(u, v)
        self.live_quorums = [c for c in codes if live_quorum(problem, c, self.attendees_of[c], self.events_of)]
        for code in self.live_quorums:
            for attendee in self.attendees_of[code]:
                if (attendee, code) in problem.optional:
                    for other in self.events_of[attendee]:
                        if other != code:
                            links.add_edge(code, other)
        self.links = links
        self.groups: list[list[str]] = sorted((sorted(c, key=str) for c in nx.connected_components(links)),
                                              key=lambda c: (len(c), str(c[0])))
        self.group_of = {e: i for i, g in enumerate(self.groups) for e in g}

    # ------------------------------------------------------------------ the model

    def model(self, found: Availability, group: Sequence[str], budget: Budget | None = None) -> StartModel:
        """The constraint network of ``group`` with the starts, spans and sittings of ``found`` (building it
        checks ``budget`` too: a large group's clash tables take time)."""
        problem = self.problem
        optional = problem.optional
        members = set(group)
        starts = {e: sum(1 << s for s in found.starts.get(e, ())) for e in group}
        model = StartModel(list(group), starts)

        def held(e: str, s: int, who: str | None) -> frozenset[int] | None:
            taken = found.slots_taken(e, s, who)
            return None if taken is None else frozenset(taken)

        # clash tables: per pair of events, the distinct sitting profiles of the required attendees shared
        profiles: dict[tuple[str, str], set[tuple[str | None, str | None]]] = {}
        for attendee, mine in self.events_of.items():
            required = [c for c in mine if c in members and (attendee, c) not in optional]
            for i, e in enumerate(required):
                for f in required[i + 1:]:
                    pair = (e, f) if str(e) < str(f) else (f, e)
                    own = tuple(attendee if (attendee, c) in found.sittings else None for c in pair)
                    profiles.setdefault(pair, set()).add(own)  # type: ignore[arg-type]
        for (e, f), kinds in profiles.items():
            if budget is not None:
                budget.check_time("building the clash tables")
            forward: dict[int, int] = {}
            backward: dict[int, int] = {}
            for who_e, who_f in kinds:
                f_held = {t: held(f, t, who_f) for t in found.starts.get(f, ())}
                for s in found.starts.get(e, ()):
                    mine = held(e, s, who_e)
                    mask = 0
                    for t, theirs in f_held.items():
                        if mine is None or theirs is None or not mine.isdisjoint(theirs):
                            mask |= 1 << t
                    if mask:
                        forward[s] = forward.get(s, 0) | mask
            for s, mask in forward.items():
                for t in _bits(mask):
                    backward[t] = backward.get(t, 0) | (1 << s)
            if forward:
                model.clash[(e, f)] = forward
                model.clash[(f, e)] = backward
        # quorum checks that depend on optional attendees booked elsewhere
        for code in self.live_quorums:
            if code not in members:
                continue
            if budget is not None:
                budget.check_time("building the quorum checks")
            attendees = self.attendees_of[code]
            required = sum(1 for a in attendees if (a, code) not in optional)
            need = int(problem.events[code].quorum or 0) - required
            entries: list[tuple[str, int, dict[str, dict[int, int]]]] = []
            scope: set[str] = set()
            for attendee in attendees:
                if (attendee, code) not in optional:
                    continue
                away = found.unavailable.get(attendee, frozenset())
                can = 0
                busy: dict[str, dict[int, int]] = {}
                mine_at: dict[int, frozenset[int]] = {}
                for s in found.starts.get(code, ()):
                    mine = held(code, s, attendee)
                    if mine is not None and away.isdisjoint(mine):
                        can |= 1 << s
                        mine_at[s] = mine
                for other in self.events_of[attendee]:
                    if other == code:
                        continue
                    table: dict[int, int] = {}
                    theirs: dict[int, frozenset[int]] = {}
                    for t in found.starts.get(other, ()):
                        there = held(other, t, attendee)
                        if (attendee, other) in optional:
                            if there is not None and away.isdisjoint(there):
                                theirs[t] = there  # an optional attendance they cannot come to books them nowhere
                        else:
                            theirs[t] = there or held(other, t, None)  # type: ignore[assignment]
                    for s, mine in mine_at.items():
                        mask = 0
                        for t, slots_there in theirs.items():
                            if not mine.isdisjoint(slots_there):  # type: ignore[union-attr]
                                mask |= 1 << t
                        if mask:
                            table[s] = mask
                    if table:
                        busy[other] = table
                        scope.add(other)
                entries.append((attendee, can, busy))
            if scope:
                model.quorums.append(Quorum(code, need, entries, tuple(sorted({code} | scope, key=str))))
        return model

    # ------------------------------------------------------------------ counting

    def count_group(self, found: Availability, group: Sequence[str], budget: Budget | None = None) -> int:
        """The exact number of timetables of ``group``; raises :class:`BudgetExceeded` when over budget."""
        return count_model(self.model(found, group, budget), budget)

    def group_counts(self, found: Availability, budget: Budget | None = None,
                     groups: Iterable[int] | None = None) -> dict[int, int | None]:
        """Group index → its exact count, or None where the budget ran out (smallest groups first)."""
        out: dict[int, int | None] = {}
        for index in (range(len(self.groups)) if groups is None else groups):
            try:
                out[index] = self.count_group(found, self.groups[index], budget)
            except BudgetExceeded:
                out[index] = None
        return out

    def total(self, found: Availability, budget: Budget | None = None) -> int | None:
        """The number of timetables of the whole problem (None: a group did not finish)."""
        value = 1
        for count in self.group_counts(found, budget).values():
            if count is None:
                return None
            value *= count
        return value

    def lower_bound(self, found: Availability, group: Sequence[str], budget: Budget | None = None) -> int:
        """A proven lower bound on ``group``'s count: 0, or from one timetable found by search.

        With one timetable at hand, the events of an independent set of the rules' graph (no rule
        involves two of them) can each move to any start that keeps every rule with the others
        where they are; every combination is a timetable, so the product of their choices is.
        """
        try:
            model = self.model(found, group, budget)
        except BudgetExceeded:
            return 0
        at = find_timetable(model, budget)
        if at is None:
            return 0
        graph = model.primal_graph()
        choices = {}
        for v in model.events:
            n = 0
            mine = at[v]
            for s in _bits(model.starts[v]):
                at[v] = s
                if _local_ok(model, graph, at, v):
                    n += 1
            at[v] = mine
            choices[v] = n
        taken: set = set()
        blocked: set = set()
        value = 1
        for v in sorted(model.events, key=lambda v: (-choices[v], str(v))):
            if v in blocked:
                continue
            taken.add(v)
            blocked.add(v)
            blocked.update(graph[v])
            value *= choices[v]
        return max(value, 1)


def _local_ok(model: StartModel, graph: nx.Graph, at: dict, v) -> bool:
    if not (model.starts[v] >> at[v]) & 1:
        return False
    for u in graph[v]:
        table = model.clash.get((v, u))
        if table is not None and (table.get(at[v], 0) >> at[u]) & 1:
            return False
    return all(q.holds(at) for q in model.quorums if v in q.scope)


def count_model(model: StartModel, budget: Budget | None = None) -> int:
    """The number of start assignments of ``model`` that break no rule (exact; see the module notes)."""
    graph = model.primal_graph()
    value = 1
    for part in sorted(nx.connected_components(graph), key=len):
        if len(part) == 1:
            (v,) = part
            value *= bin(model.starts[v]).count("1")
        else:
            value *= _count_connected(model, graph.subgraph(part), budget)
        if value == 0:
            return 0
    return value


def _order_cost(graph: nx.Graph, order: Sequence, size: dict) -> float:
    """log10 of the most states a frontier of ``order`` can hold: the product of its events' numbers of starts,
    summed over the steps (states beyond the largest are what the count pays for)."""
    position = {v: i for i, v in enumerate(order)}
    last = {v: max([position[u] for u in graph[v]] + [position[v]]) for v in order}
    total, logs = 0.0, 0.0
    leaving: dict[int, list] = {}
    for v in order:
        leaving.setdefault(last[v], []).append(v)
    for i, v in enumerate(order):
        logs += math.log10(max(size[v], 1))
        total += 10 ** min(logs, 300)
        for u in leaving.get(i, []):
            logs -= math.log10(max(size[u], 1))
    return math.log10(total) if total > 0 else 0.0


def _greedy_order(graph: nx.Graph, start, size: dict) -> list:
    """Grow the order from ``start``, each time taking the event that leaves the frontier's product of starts least."""
    weight = {v: math.log10(max(size[v], 1)) for v in graph}
    pending = {v: graph.degree(v) for v in graph}
    order, placed, frontier, candidates = [], set(), set(), set()
    current = start
    while True:
        order.append(current)
        placed.add(current)
        candidates.discard(current)
        frontier.add(current)
        for u in graph[current]:
            pending[u] -= 1
            if u not in placed:
                candidates.add(u)
        frontier = {u for u in frontier if pending[u] > 0}
        if len(order) == len(graph):
            return order
        pool = candidates or (set(graph) - placed)

        def score(v):
            leaving = sum(weight[u] for u in graph[v] if u in frontier and pending[u] == 1)
            stays = weight[v] if pending[v] > 0 else 0.0
            return (stays - leaving, -sum(1 for u in graph[v] if u in frontier), str(v))

        current = min(pool, key=score)


def _best_order(graph: nx.Graph, size: dict, budget: Budget | None = None) -> list:
    """The cheapest of the frontier order (:func:`.frontier.frontier_order`) and, on groups of up to
    ``GREEDY_ORDER_MAX_EVENTS``, greedy orders from a few starts."""
    tries = [frontier_order(nx.Graph(graph)).order]
    if len(graph) <= GREEDY_ORDER_MAX_EVENTS:
        for start in sorted(graph, key=lambda v: (size[v], graph.degree(v), str(v)))[:8]:
            if budget is not None:
                budget.check_time("ordering the events")
            tries.append(_greedy_order(graph, start, size))
    return min(tries, key=lambda order: _order_cost(graph, order, size))


def _count_connected(model: StartModel, graph: nx.Graph, budget: Budget | None) -> int:
    size = {v: bin(model.starts[v]).count("1") for v in graph}
    order = _best_order(graph, size, budget)
    if _order_cost(graph, order, size) > math.log10(max(MAX_STATES, 1)) + HOPELESS_LOG10:
        raise BudgetExceeded("the events' frontier is too wide to count exactly")
    position = {v: i for i, v in enumerate(order)}
    last_needed = {v: max([position[u] for u in graph[v]] + [position[v]]) for v in order}
    quorums_at: dict[int, list[Quorum]] = {}
    for q in model.quorums:
        if q.event in position:
            quorums_at.setdefault(max(position[v] for v in q.scope), []).append(q)
    states: dict[tuple, int] = {(): 1}
    frontier: list = []
    work = 0
    for i, v in enumerate(order):
        slot_of = {u: p for p, u in enumerate(frontier)}
        checks = [(slot_of[u], model.clash[(u, v)]) for u in graph[v] if position[u] < i and (u, v) in model.clash]
        quorums = quorums_at.get(i, [])
        quorum_places = [[(u, slot_of[u]) for u in q.scope if u != v] for q in quorums]
        keep = [p for p, u in enumerate(frontier) if last_needed[u] > i]
        stays = last_needed[v] > i
        domain = model.starts[v]
        new: dict[tuple, int] = {}
        for state, ways in states.items():
            mask = domain
            for p, table in checks:
                mask &= ~table.get(state[p], 0)
                if not mask:
                    break
            if not mask:
                continue
            base = tuple(state[p] for p in keep)
            if not stays and not quorums:
                new[base] = new.get(base, 0) + ways * bin(mask).count("1")
                continue
            for s in _bits(mask):
                if quorums:
                    ok = True
                    for q, places in zip(quorums, quorum_places):
                        at = {u: state[p] for u, p in places}
                        at[v] = s
                        if not q.holds(at):
                            ok = False
                            break
                    if not ok:
                        continue
                key = base + (s,) if stays else base
                new[key] = new.get(key, 0) + ways
            work += 1
            if work % 4096 == 0 and budget is not None:
                budget.check_time("counting starts with people")
        if len(new) > MAX_STATES:
            raise BudgetExceeded(f"more than {MAX_STATES:,} frontier states")
        if budget is not None:
            budget.check_time("counting starts with people")
            budget.check_memory(len(new) * (120 + 8 * (len(keep) + 1)), "counting starts with people")
        states = new
        frontier = [frontier[p] for p in keep] + ([v] if stays else [])
        if not states:
            return 0
    return sum(states.values())


def find_timetable(model: StartModel, budget: Budget | None = None) -> dict | None:
    """One start assignment breaking no rule, by backtracking with forward checking (None: none found in time)."""
    graph = model.primal_graph()
    domains = {v: model.starts[v] for v in model.events}
    at: dict = {}
    steps = [0]

    def pick():
        free = [v for v in model.events if v not in at]
        return min(free, key=lambda v: (bin(domains[v]).count("1"), -graph.degree(v), str(v)))

    def search() -> bool:
        if len(at) == len(model.events):
            return model.allows(at)
        steps[0] += 1
        if budget is not None and steps[0] % 256 == 0:
            try:
                budget.check_time("searching for a timetable")
            except BudgetExceeded:
                return False
        v = pick()
        for s in _bits(domains[v]):
            at[v] = s
            saved = {}
            dead = False
            for u in graph[v]:
                if u in at:
                    continue
                table = model.clash.get((v, u))
                if table is not None:
                    narrowed = domains[u] & ~table.get(s, 0)
                    if narrowed != domains[u]:
                        saved.setdefault(u, domains[u])
                        domains[u] = narrowed
                    if not narrowed:
                        dead = True
                        break
            if not dead and all(q.holds(at) for q in model.quorums if v in q.scope and all(u in at for u in q.scope)):
                if search():
                    return True
            for u, d in saved.items():
                domains[u] = d
            del at[v]
        return False

    return dict(at) if search() else None


# ---------------------------------------------------------------------- what-if figures naming people


def starts_blocked(found: Availability, problem: Problem) -> dict[str, int]:
    """Attendee → the starts their unavailability rules out (required) or leaves short of a quorum (optional)."""
    out: dict[str, int] = {}
    for code, by_start in found.blocked.items():
        for s, names in by_start.items():
            for a in names:
                if found.unavailable.get(a, frozenset()).intersection(found.slots_taken(code, s, a) or ()):
                    out[a] = out.get(a, 0) + 1
    for code, short in found.quorum_short.items():
        for a, c in problem.optional:
            if c == code and a in found.unavailable:
                hit = sum(1 for s in short if set(found.slots_taken(code, s, a) or ()) & found.unavailable[a])
                if hit:
                    out[a] = out.get(a, 0) + hit
    return out


def lifted(problem: Problem, attendee: str, codes: Iterable[str]) -> Problem:
    """The events ``codes`` alone, with ``attendee`` able to make every slot (their other details kept)."""
    keep = set(codes)
    people = {name: person for name, person in problem.people.items()}
    if attendee in people:
        people[attendee] = replace(people[attendee], unavailable=())
    return replace(problem, enrolments=[(a, c) for a, c in problem.enrolments if c in keep],
                   events={c: e for c, e in problem.events.items() if c in keep}, people=people,
                   optional={(a, c) for a, c in problem.optional if c in keep}, rules=[], rooms=[])


def most_limiting_people(problem: Problem, slots: Sequence[Slot], counter: PeopleCounter, found: Availability,
                         *, seconds: float = PEOPLE_WHAT_IF_SECONDS, top: int = 5,
                         base: dict[int, int | None] | None = None) -> list[dict]:
    """The attendees whose unavailability removes most timetables, with the factor they cost.

    For each attendee who cannot make some slot, biggest first by the starts they block, the
    groups holding their events are counted again with that attendee able to make every slot;
    ``gain`` is the new count over the old one (the other groups cancel, so it is exact even when
    another group's count is not). ``base``: group index → its count, None where it did not
    finish (its attendees are then left out); groups missing from it are counted here. Within
    ``seconds`` in all, each recount at most half of what is left; attendees whose recount does
    not finish are left out, and so are those whose unavailability removes no timetable.
    """
    stop = time.monotonic() + seconds
    blocked = starts_blocked(found, problem)
    quorum_events = {c for c, e in problem.events.items() if e.quorum}
    candidates = [a for a in counter.events_of if a in found.unavailable
                  and (blocked.get(a) or any((a, c) in problem.optional for c in counter.events_of[a] if c in quorum_events))]
    candidates.sort(key=lambda a: (-blocked.get(a, 0), a))
    base = dict(base or {})
    out = []
    for attendee in candidates:
        if time.monotonic() > stop:
            break
        groups = sorted({counter.group_of[c] for c in counter.events_of[attendee]})
        if any(g in base and base[g] is None for g in groups):
            continue  # a group too large to count: no ratio
        budget = Budget(time.monotonic() + (stop - time.monotonic()) / 2)
        try:
            old = 1
            for g in groups:
                if g not in base:
                    try:
                        base[g] = counter.count_group(found, counter.groups[g], budget)
                    except BudgetExceeded:
                        base[g] = None
                        raise
                old *= base[g]  # type: ignore[operator]
            if old == 0:
                continue
            codes = [c for g in groups for c in counter.groups[g]]
            freed = lifted(problem, attendee, codes)
            again = Availability.of(freed, list(slots))
            sub = PeopleCounter(freed, codes)
            new = 1
            for g in groups:
                new *= sub.count_group(again, counter.groups[g], budget)
        except BudgetExceeded:
            continue
        if new != old:
            out.append({"attendee": attendee, "slots": found.k, "gain": float(Fraction(new, old)),
                        "starts_blocked": blocked.get(attendee, 0)})
    out.sort(key=lambda d: (-d["gain"], d["attendee"]))
    return out[:top]
