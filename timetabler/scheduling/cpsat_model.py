"""The CP-SAT model of an exam or meeting timetable: its variables, and :func:`build_model`, which calls one
function per family of hard rules (:mod:`.cpsat_rules`) and then the goals (:mod:`.cpsat_goals`).

Variables (one family per name):

``x[e][s]``
    event ``e`` sits in slot ``s`` (Boolean; exactly one per event).
``occ[e][s]``
    a long event ``e`` holds slot ``s`` (its start or a later slot of its span); for other events
    ``occ`` is ``x``.
``t[e]``, ``d[e]``, ``end[e]``
    slot number, day number and last slot of event ``e`` (integers linked to ``x``), made only when a
    rule or goal needs them (:meth:`ModelBuild.t`, :meth:`ModelBuild.d`, :meth:`ModelBuild.end_of`).
``before``, ``gap``, ``near<d>``, ``sday``, ``b2b``, ``over``, ``twoday``
    per clashing pair, and only those the goals in force need (see :func:`.cpsat_goals._add_pair_goals`):
    the order of the two; their slot distance, capped; at most ``d`` slots apart; on the
    same day; back-to-back on one day; last-of-day then first-of-next; two in a day (not
    consecutive). One pair costs at most one small integer, never one per goal.
``rule[i]``, ``busy[a,e]``, ``miss_preferred[e]``, ``optional_missed[a,e]``
    explain mode's literal for each user rule; an optional attendee booked elsewhere; the goals'
    literals for one event.

The families are added in a fixed order (:func:`build_block_model`), which is also the order of the
model's variables and constraints: the same inputs and seed give the same model and the same timetable.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from typing import Hashable

import networkx as nx
from ortools.sat.python import cp_model

from ..availability import Availability
from ..model import Problem, Slot, days_of
from . import cpsat_goals, cpsat_rules
from .cliques import clique_cover
from .cpsat_goals import PAIR_STEP
from .cpsat_rules import _attendee_event_sets
from .slot_domains import Domains, large_event_codes, needs_availability, physical_domains

# _attendee_event_sets, large_event_codes and physical_domains are re-exported (tests and a doctest read them here)
__all__ = ["BuildStopped", "ModelBuild", "ModelInputs", "RuleLiteral", "TimetableModel", "_attendee_event_sets",
           "build_block_model", "build_model", "large_event_codes", "physical_domains"]


class BuildStopped(Exception):
    """Building the model would not end by the time given (``build_model(stop_at=...)``)."""


class _Clock:
    """Checks, every so many steps of a long loop, that the loop will end by ``stop_at``
    (``time.perf_counter()`` seconds), projecting from the pace so far; raises :class:`BuildStopped`."""

    def __init__(self, stop_at: float | None, total_steps: int):
        self.stop_at, self.total = stop_at, max(1, total_steps)
        self.start = time.perf_counter()
        self.done = 0

    def step(self, n: int = 1) -> None:
        before, self.done = self.done, self.done + n
        if self.stop_at is None or before // 20_000 == self.done // 20_000:
            return
        now = time.perf_counter()
        projected = now + (now - self.start) * (self.total - self.done) / self.done
        if now > self.stop_at or (self.done >= self.total // 20 and projected > self.stop_at):
            raise BuildStopped(f"the model would take until {projected - self.start:.0f} s after its start to build")


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
    terms: dict[str, list[tuple[int, int, tuple]]] = field(default_factory=dict)  # coef, literal ref, meaning
    rules: list[RuleLiteral] = field(default_factory=list)
    symmetry_clique: list[str] = field(default_factory=list)
    cover_size: int = 0
    constant: dict[str, int] = field(default_factory=dict)
    derived: list[tuple] = field(default_factory=list)  # (var index, kind, args...) to complete hints
    day: list[int] = field(default_factory=list)
    pairs: int = 0  # clashing pairs in the model
    clock: object = None  # the build's deadline check
    # optional attendee (a, e) -> [busy var, what it means]: a is also booked in another event during their sitting at e
    optional_busy: dict = field(default_factory=dict)
    found: Availability | None = None  # the people's rules over these slots, when they are in play
    last: dict[str, dict[int, int]] = field(default_factory=dict)  # long event -> start -> its last slot

    def hint(self, assignment: dict[str, int]) -> None:
        """Hint a full solution: ``x`` from ``assignment`` and every derived variable computed from it,
        so CP-SAT can take the hint as its first solution without search."""
        k = self.k
        refs: list[int] = []
        values: list[int] = []
        for c, s in assignment.items():
            if c in self.x and 1 <= s <= k:
                refs.extend(v.index for v in self.x[c])
                values.extend(int(i == s) for i in range(1, k + 1))
        if all(c in assignment for c in self.codes):
            for index, kind, *args in self.derived:
                refs.append(index)
                values.append(int(self.value(kind, args, assignment)))
        hint = self.model.proto.solution_hint  # in bulk: one call per variable is slow on large models
        hint.vars.extend(refs)
        hint.values.extend(values)

    def value(self, kind: str, args, a: dict[str, int]) -> int:
        """What a derived variable or goal term means, computed from a timetable ``a`` (event -> slot)."""
        day = self.day
        if kind == "t":
            return a[args[0]]
        if kind == "d":
            return day[a[args[0]] - 1]
        if kind == "in":
            return int(a[args[0]] == args[1])
        if kind == "away":
            return int(a[args[0]] != args[1])
        if kind == "miss":
            return int(a[args[0]] not in args[1])
        if kind == "busy":
            return int(_booked_elsewhere(args[0], args[1], args[2], a))
        if kind == "optmiss":
            return int(a[args[0]] in args[3] or _booked_elsewhere(args[0], args[1], args[2], a))
        if kind == "end":
            return self.last.get(args[0], {}).get(a[args[0]], a[args[0]])
        e, f = args[0], args[1]
        # slots from the last slot of the earlier event to the first of the later (long events take several)
        gap = a[f] - self.last.get(e, {}).get(a[e], a[e]) if a[e] < a[f] else a[e] - self.last.get(f, {}).get(a[f], a[f])
        same = day[a[e] - 1] == day[a[f] - 1]
        if kind == "before":
            return int(a[e] < a[f])
        if kind == "near":
            return int(gap <= args[2])
        if kind == "gap":
            return min(gap, args[2])
        if kind == "sday":
            return int(same)
        if kind == "b2b":
            return int(gap == 1 and same)
        if kind == "over":
            return int(gap == 1 and not same)
        if kind == "twoday":
            return int(gap != 1 and same)
        raise ValueError(f"unknown derived variable kind {kind!r}")

    def assignment(self, solver: cp_model.CpSolver) -> dict[str, int]:
        out: dict[str, int] = {}
        for code in self.codes:
            for s, var in enumerate(self.x[code], start=1):
                if solver.boolean_value(var):
                    out[code] = s
                    break
        return out

    def evaluate(self, assignment: dict[str, int]) -> dict[str, int]:
        """Weighted penalty of each soft goal of the model in ``assignment``, computed from the timetable
        (the goal literals bound the goals from above; they are exact only at the optimum)."""
        out: dict[str, int] = {}
        for name, terms in self.terms.items():
            out[name] = self.constant.get(name, 0) + sum(coef * self.value(key[0], key[1:], assignment)
                                                         for coef, _, key in terms)
        for name, value in self.constant.items():
            out.setdefault(name, value)
        return out

    def breakdown(self, solver: cp_model.CpSolver) -> dict[str, int]:
        """Weighted penalty of each soft goal in the solver's current solution (see :meth:`evaluate`)."""
        return self.evaluate(self.assignment(solver))

    def size(self) -> dict[str, int]:
        """Variables and constraints of the model (what memory grows with)."""
        proto = self.model.proto
        return {"variables": len(proto.variables), "constraints": len(proto.constraints),
                "objective_terms": len(proto.objective.vars)}


def _booked_elsewhere(code: str, others: tuple[str, ...], held: dict, a: dict[str, int]) -> bool:
    """Whether one attendee's sitting at ``code`` meets their sitting at one of ``others`` in timetable ``a``
    (``held[(event, start)]``: the slots they hold at that event started there)."""
    if code not in a:
        return False
    mine = held[(code, a[code])]
    return any(c in a and held[(c, a[c])] & mine for c in others)


@dataclass(frozen=True, eq=False)
class ModelInputs:
    """The inputs of one block's model (see :func:`build_model` for what each means)."""

    problem: Problem
    slots: list[Slot]
    graph: nx.Graph
    codes: list[str]
    sizes: dict[str, int]
    domains: Domains
    objective: bool = True
    explain: bool = False
    symmetry: list[str] | None = None
    previous: dict[str, int] | None = None
    large: set[str] | None = None
    room_splitting: bool = False
    room_sharing: bool = True
    nogoods: list | None = None
    cover: list[list[Hashable]] | None = None
    stop_at: float | None = None


class ModelBuild:
    """One model being built: its inputs, the CP-SAT model and its :class:`TimetableModel`, the start
    literals ``x`` and occupancy literals ``occ``, and what every family of rules and goals reads."""

    def __init__(self, inputs: ModelInputs):
        self.inputs = inputs
        self.problem, self.slots, self.codes = inputs.problem, inputs.slots, inputs.codes
        m = self.m = cp_model.CpModel()
        k = self.k = len(self.slots)
        self.code_set = set(self.codes)
        self.sub = inputs.graph.subgraph(self.codes)
        self.day = days_of(self.slots)
        self.x = {c: [m.new_bool_var(f"x[{c}][{s}]") for s in range(1, k + 1)] for c in self.codes}
        self.tm = TimetableModel(model=m, codes=list(self.codes), k=k, x=self.x, day=list(self.day),
                                 pairs=self.sub.number_of_edges())
        self.found = self.tm.found = (Availability.of(self.problem, self.slots)
                                      if needs_availability(self.problem, self.slots) else None)
        self.occ = {c: self.x[c] for c in self.codes}  # long events get their own (cpsat_rules.add_long_event_slots)
        self.spans = self.found.spans if self.found is not None else {}
        self.tm.last = {c: {s: span[-1] for s, span in own.items()} for c, own in self.spans.items()}
        self.day_slots: dict[int, list[int]] = {}
        for s in range(k):
            self.day_slots.setdefault(self.day[s], []).append(s)
        self._t: dict[str, cp_model.IntVar] = {}
        self._d: dict[str, cp_model.IntVar] = {}
        self._end: dict[str, cp_model.IntVar] = {}

    def rule_literal(self, text: str, kind: str):
        """Explain mode: a new literal switching one user rule on, taken as an assumption (else None)."""
        if not self.inputs.explain:
            return None
        lit = self.m.new_bool_var(f"rule[{len(self.tm.rules)}]")
        self.tm.rules.append(RuleLiteral(lit, text, kind))
        self.m.add_assumption(lit)
        return lit

    @staticmethod
    def enforce(ct, lit):
        """``ct`` only when ``lit`` holds (always when ``lit`` is None)."""
        if lit is not None:
            ct.only_enforce_if(lit)
        return ct

    def t(self, c: str):
        """The slot ``c`` starts in, an integer made on first use."""
        if c not in self._t:
            k, x = self.k, self.x
            v = self.m.new_int_var(1, max(k, 1), f"t[{c}]")
            self.m.add(v == sum((s + 1) * x[c][s] for s in range(k)))
            self._t[c] = v
            self.tm.derived.append((v.index, "t", c))
        return self._t[c]

    def end_of(self, c: str):
        """The last slot ``c`` takes: its start, or a long event's last slot."""
        if c not in self.tm.last:
            return self.t(c)
        if c not in self._end:
            k, x = self.k, self.x
            v = self.m.new_int_var(1, max(k, 1), f"end[{c}]")
            self.m.add(v == sum(self.tm.last[c].get(s + 1, s + 1) * x[c][s] for s in range(k)))
            self._end[c] = v
            self.tm.derived.append((v.index, "end", c))
        return self._end[c]

    def d(self, c: str):
        """The day ``c`` is on, an integer made on first use."""
        if c not in self._d:
            k, x, day = self.k, self.x, self.day
            v = self.m.new_int_var(min(day, default=1), max(day, default=1), f"d[{c}]")
            self.m.add(v == sum(day[s] * x[c][s] for s in range(k)))
            self._d[c] = v
            self.tm.derived.append((v.index, "d", c))
        return self._d[c]


def build_model(problem: Problem, slots: list[Slot], graph: nx.Graph, codes: list[str], **settings) -> TimetableModel:
    """Build the CP-SAT model for the events ``codes`` (a union of components of ``graph``); ``settings`` are
    the other fields of :class:`ModelInputs` (``sizes`` and ``domains`` are required).

    ``symmetry`` is a clique whose events are fixed to slots 1, 2, ...; pass it only when
    :func:`.slot_domains.slots_interchangeable` holds and the objective does not depend on slot order.
    ``nogoods`` are sets of (event, start slot) pairs that must not all hold at once (a group of
    events found impossible to seat in the rooms, with every slot they take; the older form
    (slot, [events]) means those events all starting in that slot). ``explain`` gives every user rule its own
    assumption literal. ``cover``: the clique cover of the block's conflict graph (computed when None).
    ``stop_at`` (a ``time.perf_counter()`` time): raise :class:`BuildStopped` as soon as the
    building pace shows it would not end by then (a large model takes tens of seconds).
    """
    return build_block_model(ModelInputs(problem, slots, graph, codes, **settings))


def build_block_model(inputs: ModelInputs) -> TimetableModel:
    """The model of :class:`ModelInputs`, family by family (see :func:`build_model`)."""
    b = ModelBuild(inputs)
    cpsat_rules.add_long_event_slots(b)
    cpsat_rules.add_one_slot_each(b)
    cpsat_rules.add_physical_limits(b)
    cliques = inputs.cover if inputs.cover is not None else clique_cover(b.sub)
    b.tm.cover_size = len(cliques)
    weights = inputs.problem.weights
    pair_goals = inputs.objective and b.k > 1 and any((weights.back_to_back, weights.overnight,
                                                       weights.same_day, weights.proximity))
    # steps weighed by the constraints each adds: a clique one per slot, a pair about eight
    b.tm.clock = _Clock(inputs.stop_at, len(cliques) * b.k + (b.tm.pairs * PAIR_STEP if pair_goals else 0))
    cpsat_rules.add_clash_cover(b, cliques)
    cpsat_rules.add_extra_time_clashes(b)
    cpsat_rules.add_optional_busy(b)
    cpsat_rules.add_fixed_and_barred(b)
    cpsat_rules.add_event_rules(b)
    cpsat_rules.add_slot_seats(b)
    cpsat_rules.add_room_limits(b)
    cpsat_rules.add_seating_cuts(b)
    cpsat_rules.add_daily_limit(b)
    cpsat_rules.add_slot_symmetry(b)
    if inputs.objective:
        cpsat_goals.add_goals(b)
    return b.tm
