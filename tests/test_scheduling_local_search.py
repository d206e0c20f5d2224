"""The local search (kempe_search) and its arrays (penalty_state), checked against the independent
validator and against brute force.

Instances are generated so that a known timetable meets every hard rule: a random timetable first,
then students who take events from distinct slots only, then rules that this timetable keeps.
"""

from __future__ import annotations

import itertools
import random
from dataclasses import replace

import numpy as np
import pytest

from timetabler.conflicts import conflict_graph
from timetabler.model import Event, Problem, Rule, RuleKind, Slot, Weights, generic_slots
from timetabler.scheduling import SolveOptions, solve
from timetabler.scheduling.cpsat_model import large_event_codes, physical_domains
from timetabler.scheduling.kempe_search import _Search, improve
from timetabler.scheduling.penalty_state import build_state
from timetabler.scheduling.validator import validate


def generated(seed: int, *, n: int = 14, k: int = 6, per_day: int = 2, rules: bool = True):
    """A problem, its slots, a timetable meeting every hard rule, and an earlier timetable."""
    rng = random.Random(seed)
    codes = [f"E{i:02d}" for i in range(n)]
    start = {c: rng.randint(1, k) for c in codes}
    by_slot: dict[int, list[str]] = {}
    for c, s in start.items():
        by_slot.setdefault(s, []).append(c)
    enrol = []
    for a in range(40):
        chosen = rng.sample(sorted(by_slot), rng.randint(1, min(4, len(by_slot))))
        enrol += [(f"p{a}", rng.choice(by_slot[s])) for s in chosen]
    slots = [replace(s, penalised=(i == k - 1)) for i, s in enumerate(generic_slots(k, per_day))]
    events = {c: Event(c) for c in codes}
    problem_rules: list[Rule] = []
    max_per_day = None
    if rules:
        a, b = rng.sample(codes, 2)
        if start[a] != start[b]:
            first, second = sorted((a, b), key=lambda c: start[c])
            problem_rules.append(Rule(RuleKind.BEFORE, (first, second)))
        day = {c: (start[c] - 1) // per_day for c in codes}
        apart = [c for c in codes if day[c] != day[codes[0]]][:1]
        if apart:
            problem_rules.append(Rule(RuleKind.DIFFERENT_DAYS, (codes[0], apart[0])))
        alone = [s for s, evs in by_slot.items() if len(evs) == 1]
        if alone:
            problem_rules.append(Rule(RuleKind.ALONE, (by_slot[alone[0]][0],)))
        pairs = [evs[:2] for evs in by_slot.values() if len(evs) >= 2]
        if pairs:
            problem_rules.append(Rule(RuleKind.SAME_SLOT, tuple(pairs[0])))
        fixed = codes[3]
        events[fixed] = Event(fixed, fixed_slot=str(start[fixed]),
                              preferred_slots=(str(rng.randint(1, k)),))
        barred = codes[4]
        events[barred] = Event(barred, barred_slots=tuple(str(s) for s in range(1, k + 1) if s != start[barred])[:2])
        if n > 5:
            events[codes[5]] = Event(codes[5], preferred_slots=(str(rng.randint(1, k)), str(rng.randint(1, k))))
        per_attendee_day: dict[tuple[str, int], int] = {}
        for p, c in enrol:
            key = (p, day[c])
            per_attendee_day[key] = per_attendee_day.get(key, 0) + 1
        max_per_day = max(per_attendee_day.values())  # the start keeps it; tighter days are for the search to avoid
    load = {s: 0 for s in range(1, k + 1)}
    for _, c in set(enrol):
        load[start[c]] += 1
    slots = [replace(s, seat_capacity=load[i + 1] + rng.randint(0, 6)) if rules else s for i, s in enumerate(slots)]
    weights = Weights(back_to_back=rng.randint(0, 10), overnight=rng.randint(0, 4), same_day=rng.randint(0, 3),
                      proximity=rng.randint(0, 2), large_late=rng.randint(0, 2), preferred_slot=rng.randint(0, 3),
                      penalised_slot=rng.randint(0, 3), moved=rng.randint(0, 5))
    problem = Problem(enrol, events=events, rules=problem_rules, weights=weights, max_per_day=max_per_day)
    previous = {c: rng.randint(1, k) for c in rng.sample(codes, n // 3)}
    return problem, slots, start, previous


def state_of(problem: Problem, slots: list[Slot], previous):
    graph = conflict_graph(problem)
    codes = sorted(graph)
    sizes = {c: int(graph.nodes[c]["size"]) for c in codes}
    domains = physical_domains(problem, slots, codes, sizes, room_splitting=False)
    return build_state(problem, slots, graph, codes, sizes=sizes, domains=domains, previous=previous,
                       large=large_event_codes(sizes))


@pytest.mark.parametrize("seed", range(12))
def test_delta_evaluation_matches_the_validator_after_random_moves(seed):
    # reference: the independent validator recounts every goal from the raw enrolments
    problem, slots, start, previous = generated(seed)
    state = state_of(problem, slots, previous)
    assert validate(problem, slots, start, previous=previous).ok
    search = _Search(state, state.slots_of(start), seed)
    assert search.current == validate(problem, slots, start, previous=previous).penalty
    for _ in range(5):
        search.run(300, 1e6, 1e6)  # hot: nearly every move that keeps the hard rules is taken
        now = state.assignment_of(search.x)
        check = validate(problem, slots, now, previous=previous)
        assert check.ok, check.violations
        assert search.current == check.penalty == state.penalty(search.x)
        assert state.hard_violations(search.x) == []
    assert search.stats[4] > 0  # moves were taken


@pytest.mark.parametrize("seed", range(8))
def test_improvement_keeps_every_hard_rule_and_is_never_worse(seed):
    problem, slots, start, previous = generated(100 + seed, n=18, k=7, per_day=3)
    kinds = {r.kind for r in problem.rules}
    assert kinds, "the generator gave rules"
    state = state_of(problem, slots, previous)
    result = improve(state, start, seconds=0.3, seed=seed)
    check = validate(problem, slots, result.assignment, previous=previous)
    assert check.ok, check.violations
    assert result.penalty == check.penalty
    assert result.penalty <= validate(problem, slots, start, previous=previous).penalty


@pytest.mark.parametrize("seed", range(6))
def test_reaches_the_brute_force_optimum_on_tiny_instances(seed):
    # reference: every one of K^n timetables scored by the validator
    problem, slots, start, previous = generated(200 + seed, n=5, k=4, per_day=2)
    best = min(v.penalty for combo in itertools.product(range(1, 5), repeat=5)
               if (v := validate(problem, slots, dict(zip(sorted(problem.events), combo)), previous=previous)).ok)
    result = improve(state_of(problem, slots, previous), start, seconds=0.3, seed=seed)
    assert result.penalty == best


def test_slot_swaps_respect_unlike_slots():
    # two events, each barred from the other's slot: no swap or move may exchange them
    p = Problem([("a", "A"), ("a", "B")], events={"A": Event("A", barred_slots=("2",)), "B": Event("B", barred_slots=("1",))},
                weights=Weights(back_to_back=0, overnight=0, same_day=0, large_late=0, proximity=1))
    slots = generic_slots(2)
    result = improve(state_of(p, slots, {}), {"A": 1, "B": 2}, seconds=0.1)
    assert result.assignment == {"A": 1, "B": 2}


def test_solve_reports_local_search_progress_and_validates():
    # a 60-event session with the Carter proximity goal: CP-SAT does not prove it in the time, the
    # local search follows; its progress reports never go up, and the validator agrees with the result
    rng = random.Random(7)
    enrol = sorted({(f"s{a}", f"X{rng.randint(0, 59):02d}") for a in range(150) for _ in range(3)})
    p = Problem(enrol, weights=Weights(back_to_back=0, overnight=0, same_day=0, proximity=1))
    slots = generic_slots(16, 1)
    seen: list[dict] = []
    run = solve(p, slots, SolveOptions(time_limit=4, workers=1), progress=seen.append)
    assert run.status in ("feasible", "optimal")
    check = validate(p, slots, run.assignment)
    assert check.ok and check.penalty == run.penalty
    local = [e["penalty"] for e in seen if e.get("phase") == "local search"]
    assert local and local == sorted(local, reverse=True)
    goals = [e["penalty"] for e in seen if e.get("event") == "solution" and e.get("phase") == "goals"]
    assert run.penalty <= min(goals + local)
    assert np.all(np.diff(local) <= 0)
    # across the phases too the best so far never rises, and the first timetable is reported
    every = [e for e in seen if e.get("event") == "solution"]
    assert every[0]["phase"] == "first timetable"
    assert np.all(np.diff([e["penalty"] for e in every]) <= 0)


def test_repeatable_mode_gives_the_same_timetable_twice():
    # in repeatable mode the search counts moves instead of seconds: same seed, same timetable
    problem, slots, start, previous = generated(300, n=18, k=7, per_day=3)
    state = state_of(problem, slots, previous)
    a, b = (improve(state, start, seconds=0.05, seed=3, deterministic=True) for _ in range(2))
    assert a.assignment == b.assignment and a.moves == b.moves and a.penalty == b.penalty
    assert validate(problem, slots, a.assignment, previous=previous).penalty == a.penalty
