"""The goals of the CP-SAT model: the objective's terms, apart from the hard rules (:mod:`.cpsat_rules`).

Soft goals are weighted counts (weights from :class:`~timetabler.model.Weights`); a pair of events
sharing ``c`` attendees costs ``c`` times the weight, so the objective counts attendee-occurrences
exactly as :func:`.validator.validate` recounts them. The goals that count pairs (back-to-back,
overnight, two in a day, Carter's proximity) share per-pair literals (:func:`_add_pair_goals`,
only those the goals in force need: :func:`pair_plan`); the others count one event at a time: large
events late, preferred and avoided slots, optional attendees who cannot come, and moves from an
earlier timetable. Every term is kept with its meaning (``TimetableModel.terms``) so the penalty is
recounted from the timetable itself (:meth:`.cpsat_model.TimetableModel.evaluate`).

A new goal: a weight in :class:`~timetabler.model.Weights`, a function here called from
:func:`add_goals` that appends ``(coefficient, literal ref, meaning)`` to ``terms[name]`` (a meaning
:meth:`.cpsat_model.TimetableModel.value` can compute from a timetable), the same count in
:mod:`.penalty_state` for the local search, and its own count in :mod:`.validator`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

from ortools.sat.python import cp_model

from ..model import Problem, Slot, days_of
from .slot_domains import _cannot_starts, optional_missed_by_slot

if TYPE_CHECKING:
    from .cpsat_model import ModelBuild


#: Carter, Laporte & Lee (1996) proximity weights for gaps of 1..5 slots.
PROXIMITY_WEIGHTS = (16, 8, 4, 2, 1)


#: Up to this many clashing pairs the per-pair literals carry names (for reading a model dump); beyond, the
#: names alone would take tens of megabytes in the model and in each solver worker's copy.
NAMED_PAIRS = 10_000


#: Constraints a clashing pair adds to the goal model, roughly (for projecting the building time).
PAIR_STEP = 8


def objective_order_free(problem: Problem, slots: list[Slot], previous: dict) -> bool:
    """Whether no goal in force tells one slot from another (nor a move from an earlier timetable), so
    any clash-free timetable is optimal with penalty 0."""
    w = problem.weights
    order_terms = (w.back_to_back, w.overnight, w.same_day, w.proximity, w.large_late)
    if any(order_terms) and len(slots) > 1:
        return False
    if previous and w.moved:
        return False
    if w.penalised_slot and any(s.penalised for s in slots):
        return False
    if w.preferred_slot and any(e.preferred_slots for e in problem.events.values()):
        return False
    if w.optional_missed and problem.optional:  # unavailable, or booked in another event at the time
        return False
    return True


Terms = dict[str, list[tuple[int, int, tuple]]]  # goal -> (coefficient, literal ref, meaning)


def add_goals(b: ModelBuild) -> None:
    """Every goal weighted above 0, then the objective written into the model in bulk."""
    terms: Terms = {}
    plan = pair_plan(b.problem.weights, b.slots)
    if plan.any:
        _add_pair_goals(b, terms, plan)
    _add_large_late(b, terms)
    _add_preferred_slots(b, terms)
    _add_avoided_slots(b, terms)
    _add_optional_missed(b, terms)
    _add_moves(b, terms)
    b.tm.terms = terms
    if any(terms.values()):
        _write_objective(b, terms)


def _add_large_late(b: ModelBuild, terms: Terms) -> None:
    w, tm, large = b.problem.weights, b.tm, b.inputs.large or set()
    if w.large_late > 0:
        for c in tm.codes:
            if c in large:
                terms.setdefault("large_late", []).append((w.large_late, b.t(c).index, ("t", c)))
                tm.constant["large_late"] = tm.constant.get("large_late", 0) - w.large_late


def _add_preferred_slots(b: ModelBuild, terms: Terms) -> None:
    m, x, tm, problem, w = b.m, b.x, b.tm, b.problem, b.problem.weights
    if w.preferred_slot > 0:
        preferred = problem.slot_refs(b.slots).preferred
        for c in tm.codes:
            if c not in preferred:
                continue
            wanted = preferred[c]
            miss = m.new_bool_var(f"miss_preferred[{c}]")
            tm.derived.append((miss.index, "miss", c, wanted))
            m.add(sum(x[c][s - 1] for s in wanted) + miss == 1)
            terms.setdefault("preferred_slot", []).append((w.preferred_slot, miss.index, ("miss", c, wanted)))


def _add_avoided_slots(b: ModelBuild, terms: Terms) -> None:
    w, x, tm = b.problem.weights, b.x, b.tm
    if w.penalised_slot > 0:
        for s, slot in enumerate(b.slots):
            if slot.penalised:
                for c in tm.codes:
                    terms.setdefault("penalised_slot", []).append((w.penalised_slot, x[c][s].index, ("in", c, s + 1)))


def _add_optional_missed(b: ModelBuild, terms: Terms) -> None:
    """Optional attendees who cannot come at the start their event takes, or are booked elsewhere then."""
    m, x, tm, problem, slots, w = b.m, b.x, b.tm, b.problem, b.slots, b.problem.weights
    if w.optional_missed > 0:
        dynamic = set(tm.optional_busy)  # pairs also missed when booked elsewhere: one literal each, below
        for c, per in optional_missed_by_slot(problem, slots, tm.codes, leave_out=dynamic).items():
            for s, count in sorted(per.items()):
                terms.setdefault("optional_missed", []).append(
                    (w.optional_missed * count, x[c][s - 1].index, ("in", c, s)))
        for (a, c), (busy, meaning) in sorted(tm.optional_busy.items()):
            cannot = _cannot_starts(problem, slots, a, c, tm.found)
            miss = m.new_bool_var(f"optional_missed[{a},{c}]")
            m.add(miss >= busy)
            if cannot:
                m.add(miss >= sum(x[c][s - 1] for s in sorted(cannot)))
            tm.derived.append((miss.index, "optmiss", *meaning, cannot))
            terms.setdefault("optional_missed", []).append(
                (w.optional_missed, miss.index, ("optmiss", *meaning, cannot)))


def _add_moves(b: ModelBuild, terms: Terms) -> None:
    """Repair: each event away from its slot in the earlier timetable (``ModelInputs.previous``)."""
    w, x, tm, k, previous = b.problem.weights, b.x, b.tm, b.k, b.inputs.previous or {}
    if previous and w.moved > 0:
        for c in tm.codes:
            p = previous.get(c)
            if p is not None and 1 <= p <= k:
                terms.setdefault("moved", []).append((w.moved, -x[c][p - 1].index - 1, ("away", c, p)))


def _write_objective(b: ModelBuild, terms: Terms) -> None:
    """The terms written into the model in bulk (an expression of 10^5-10^6 terms is slow to build term by
    term); a negated literal ref -i-1 (1 - x_i) becomes a constant and a negative coefficient."""
    merged: dict[int, int] = {}
    offset = sum(b.tm.constant.values())
    for name in terms:
        for coef, ref, _ in terms[name]:
            if ref < 0:
                offset += coef
                ref, coef = -ref - 1, -coef
            merged[ref] = merged.get(ref, 0) + coef
    objective = b.m.proto.objective
    objective.vars.extend(merged.keys())
    objective.coeffs.extend(merged.values())
    objective.offset = float(offset)
    objective.scaling_factor = 1.0


def proximity_steps() -> list[tuple[int, int]]:
    """Carter's weights as steps over nested distance classes.

    A pair ``g`` slots apart costs ``PROXIMITY_WEIGHTS[g - 1]``; that equals the sum of
    ``step`` over the classes "at most ``d`` apart" with ``d >= g`` (``step`` = the weight
    at ``d`` minus the weight at ``d + 1``), so one literal per class and a positive
    coefficient each express the cost exactly, with no integer variable per pair.

    >>> proximity_steps()
    [(1, 8), (2, 4), (3, 2), (4, 1), (5, 1)]
    >>> sum(step for d, step in proximity_steps() if d >= 2) == PROXIMITY_WEIGHTS[1]
    True
    """
    weights = list(PROXIMITY_WEIGHTS) + [0]
    return [(d, weights[d - 1] - weights[d]) for d in range(1, len(PROXIMITY_WEIGHTS) + 1)
            if weights[d - 1] != weights[d]]


@dataclass
class PairPlan:
    """What the pair goals in force need of each clashing pair (nothing for a goal weighted 0)."""

    want_b2b: bool
    want_over: bool
    want_two: bool
    want_prox: bool
    one_day_each: bool
    at_most_two_a_day: bool
    monotone: bool  # days never go back as slots go on
    steps: list[tuple[int, int]]  # Carter classes (distance, step) that some pairs can fall outside
    always: int  # Carter steps every pair pays (classes as wide as the whole session)
    classes: list[int]  # distance classes with a literal each

    @property
    def any(self) -> bool:
        return self.want_b2b or self.want_over or self.want_two or self.want_prox

    @property
    def need_sday(self) -> bool:
        return not self.one_day_each and (self.want_b2b or self.want_two or self.want_over)

    def variables_per_pair(self) -> int:
        """CP-SAT variables one clashing pair costs."""
        if not self.any:
            return 0
        n = 1 + (len(self.classes) > 1) + len(self.classes)  # before, gap, near<d>
        if self.need_sday:
            n += 1 + (self.want_b2b and not self.at_most_two_a_day) + self.want_over + self.want_two
        return n


def pair_plan(weights, slots: list[Slot]) -> PairPlan:
    """The per-pair variables the goals weighted above 0 need with these slots."""
    k = len(slots)
    day = days_of(slots)
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
    want_b2b = weights.back_to_back > 0 and same_day_adjacent
    want_over = weights.overnight > 0 and cross_day_adjacent
    want_two = weights.same_day > 0 and not one_day_each and not at_most_two_a_day
    want_prox = weights.proximity > 0 and k > 1
    # a class "at most k - 1 apart" or wider holds for every pair: its cost is a constant
    steps = [(dist, step) for dist, step in proximity_steps() if dist < k - 1] if want_prox else []
    always = sum(step for dist, step in proximity_steps() if dist >= k - 1) if want_prox else 0
    classes = sorted({dist for dist, _ in steps} | ({1} if (want_b2b and not at_most_two_a_day) or want_over
                                                     or want_two else set()))
    return PairPlan(want_b2b=want_b2b, want_over=want_over, want_two=want_two, want_prox=want_prox,
                    one_day_each=one_day_each, at_most_two_a_day=at_most_two_a_day,
                    monotone=all(day[s] <= day[s + 1] for s in range(k - 1)), steps=steps, always=always,
                    classes=classes)


def model_memory_mb(k: int, cover_literals: int, pairs: int, plan: PairPlan | None, workers: int) -> float:
    """Peak resident memory of the whole process, in MiB, for a model of ``k`` slots whose clique cover holds
    ``cover_literals`` events in all, with the pair goals of ``plan`` on ``pairs`` clashing pairs, solved
    by ``workers`` CP-SAT workers.

    Fitted on pur-s-93 (2,419 exams, 86,261 pairs, 42 slots, OR-Tools 9.15, presolve off as
    :func:`.cpsat_run.set_parameters` sets it for large models): the Python side costs about 30 bytes a
    cover literal and slot and 0.7 KB a pair variable, each CP-SAT worker about 50 bytes and 2 KB
    (no goals: 0.86 GB with 2 workers; proximity: 2.0 GB with 1 worker, 3.6 GB with 2). An
    estimate to choose the workers and whether to build the goal model at all, not a bound.
    """
    slots_literals = cover_literals * k
    pair_vars = pairs * (plan.variables_per_pair() if plan is not None else 0)
    return 180 + slots_literals * (30 + 52 * workers) / 1e6 + pair_vars * (0.69 + 1.95 * workers) / 1e3


def _add_pair_goals(build: ModelBuild, terms: Terms, plan: PairPlan) -> None:
    """The goals that count pairs of clashing events: Booleans, and at most one small integer a pair.

    Per pair (``a``, ``b``, sharing ``c`` attendees, so weighing ``c`` in every goal):

    * ``before[a,b]``: ``t(a) < t(b)`` (they clash, so never equal); it picks the side of
      every distance inequality below, which CP-SAT propagates as plain precedences;
    * ``near<d>[a,b]``: at most ``d`` slots apart, one per distance class a goal needs
      (1 for consecutive slots; 1 to 5 for Carter's proximity, by :func:`proximity_steps`);
    * ``gap[a,b]``, with two classes or more: an integer in 1..(widest class + 1), at most
      the slot distance; "not near<d>" is then the single implication ``gap >= d + 1``, and
      ``gap >= 1`` on the side ``before`` picks orders the pair (7 constraints a pair for
      the proximity goal instead of 12);
    * ``sday[a,b]`` (same day), ``b2b``, ``over``, ``twoday``: the day goals.

    Every literal is minimised with a positive weight, so only the implication that forces
    it up is needed ("not near -> far apart"); the converse is added only where another
    literal uses it negated (consecutive for two-in-a-day, same day for overnight). The
    penalty is therefore read from the timetable itself (:meth:`TimetableModel.evaluate`),
    not from these literals, which may be 1 needlessly in a timetable that is not optimal.
    """
    tm, sub, t, d, end, weights = build.tm, build.sub, build.t, build.d, build.end_of, build.problem.weights
    m = tm.model
    classes, steps, always, monotone = plan.classes, plan.steps, plan.always, plan.monotone
    want_b2b, want_over, want_two = plan.want_b2b, plan.want_over, plan.want_two
    cap = max(classes, default=0) + 1  # a gap variable needs no value beyond the widest class
    exact_near1 = want_two
    need_sday = plan.need_sday
    exact_sday = want_over
    at_most_two_a_day = plan.at_most_two_a_day
    named = tm.pairs <= NAMED_PAIRS

    def var(family: str, a, b):  # every family is named in the docstring; each literal only on small models
        return m.new_bool_var(f"{family}[{a},{b}]" if named else "")

    for a, b, shared in sub.edges(data="shared", default=1):
        tm.clock.step(PAIR_STEP)
        c = int(shared or 1)
        if always:
            tm.constant["proximity"] = tm.constant.get("proximity", 0) + c * always * weights.proximity
        # distances run from the last slot of the earlier event (a long event's end) to the later's start
        ta, tb, ea, eb = t(a), t(b), end(a), end(b)
        before = var("before", a, b)
        tm.derived.append((before.index, "before", a, b))
        gap = None
        if len(classes) > 1:
            # gap[a,b] in 1..D+1 is at most the slot distance (so `before` needs no constraint of its own:
            # gap >= 1 forces the order it names); each class then costs one implication on gap
            gap = m.new_int_var(1, cap, f"gap[{a},{b}]" if named else "")
            tm.derived.append((gap.index, "gap", a, b, cap))
            m.add(gap <= tb - ea).only_enforce_if(before)
            m.add(gap <= ta - eb).only_enforce_if(~before)
        else:
            m.add(tb - ea >= 1).only_enforce_if(before)
            m.add(ta - eb >= 1).only_enforce_if(~before)
        near: dict[int, cp_model.IntVar] = {}
        for dist in classes:
            v = near[dist] = var(f"near{dist}", a, b)
            tm.derived.append((v.index, "near", a, b, dist))
            if gap is not None:
                m.add(gap >= dist + 1).only_enforce_if(~v)
            else:
                m.add(tb - ea >= dist + 1).only_enforce_if([~v, before])
                m.add(ta - eb >= dist + 1).only_enforce_if([~v, ~before])
            if dist == 1 and exact_near1:
                m.add(tb - ea <= 1).only_enforce_if([v, before])
                m.add(ta - eb <= 1).only_enforce_if([v, ~before])
        for dist, step in steps:
            terms.setdefault("proximity", []).append((c * step * weights.proximity, near[dist].index,
                                                      ("near", a, b, dist)))
        sday = None
        if need_sday:
            da, db = d(a), d(b)
            sday = var("sday", a, b)
            tm.derived.append((sday.index, "sday", a, b))
            if monotone:
                m.add(db - da >= 1).only_enforce_if([~sday, before])
                m.add(da - db >= 1).only_enforce_if([~sday, ~before])
            else:
                m.add(da != db).only_enforce_if(~sday)
            if exact_sday:
                m.add(da == db).only_enforce_if(sday)
        if want_b2b and sday is not None:
            if at_most_two_a_day:  # two events of one day are then always in consecutive slots
                v = sday
            else:
                v = var("b2b", a, b)
                tm.derived.append((v.index, "b2b", a, b))
                m.add_bool_or([~near[1], ~sday, v])
            terms.setdefault("back_to_back", []).append((c * weights.back_to_back, v.index, ("b2b", a, b)))
        if want_over:
            if sday is None:  # every slot its own day: consecutive slots are consecutive days
                v = near[1]
            else:
                v = var("over", a, b)
                tm.derived.append((v.index, "over", a, b))
                m.add_bool_or([~near[1], sday, v])
            terms.setdefault("overnight", []).append((c * weights.overnight, v.index, ("over", a, b)))
        if want_two and sday is not None:
            v = var("twoday", a, b)
            tm.derived.append((v.index, "twoday", a, b))
            m.add_bool_or([~sday, near[1], v])
            terms.setdefault("same_day", []).append((c * weights.same_day, v.index, ("twoday", a, b)))
