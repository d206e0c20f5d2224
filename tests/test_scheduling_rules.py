"""Each hard rule: a test where it binds, and a test where input that breaks it is explained.

Every timetable produced here is re-checked by the independent validator. Data are invented
for the fictional Harrowgate Vale College.
"""

from __future__ import annotations

import pytest

from timetabler.model import Event, Problem, Room, Rule, RuleKind, Slot, Weights, generic_slots
from timetabler.scheduling import SolveOptions, solve, validate

OPT = SolveOptions(time_limit=10, workers=2, seed=2)
ZERO = Weights(**{k: 0 for k in Weights().__dict__})


def solved(problem, slots, options=OPT, **kw):
    run = solve(problem, slots, options, **kw)
    assert run.status in ("optimal", "feasible"), (run.status, run.reasons)
    v = validate(problem, slots, run.assignment, run.rooms or None, previous=kw.get("previous"),
                 room_sharing=options.room_sharing, room_splitting=options.room_splitting)
    assert v.ok, v.violations
    return run, v


def infeasible(problem, slots, options=OPT):
    run = solve(problem, slots, options)
    assert run.status == "infeasible" and run.proven, (run.status, run.assignment)
    assert run.reason and run.reasons
    return run


def chain(n: int, prefix="HV") -> list[tuple[str, str]]:
    """Events E1..En that all share one attendee (a clique of n)."""
    return [(f"{prefix}-S0001", f"E{i}") for i in range(1, n + 1)]


# --- clashes ---------------------------------------------------------------------------------

def test_clique_larger_than_slots_is_explained_with_shared_attendees():
    p = Problem(chain(4) + [("HV-S0002", "E1"), ("HV-S0002", "F")], weights=ZERO)
    run = infeasible(p, generic_slots(3))
    text = " ".join(run.reasons)
    assert "HV-S0001 has 4 events" in text
    assert "4 events pairwise share attendees" in text and "E1/E2: HV-S0001" in text


def test_clashes_alone_need_more_slots_when_no_clique_shows_it():
    # C5 needs 3 slots and has no triangle: the pre-checks cannot see it, CP-SAT proves it
    enrol = []
    for i in range(5):
        enrol += [(f"HV-S{i:04d}", f"E{i}"), (f"HV-S{i:04d}", f"E{(i + 1) % 5}")]
    run = infeasible(Problem(enrol, weights=ZERO), generic_slots(2))
    assert "clashes alone need more than 2 slots" in run.reason


# --- fixed and barred slots ----------------------------------------------------------------

def test_fixed_slot_binds():
    p = Problem(chain(3), events={"E2": Event("E2", fixed_slot="Slot 1")}, weights=ZERO)
    run, _ = solved(p, generic_slots(3))
    assert run.assignment["E2"] == 1


def test_two_clashing_fixed_events_are_explained():
    p = Problem(chain(2), events={"E1": Event("E1", fixed_slot="2"), "E2": Event("E2", fixed_slot="Slot 2")})
    run = infeasible(p, generic_slots(3))
    assert "E1 and E2 are both fixed to slot 2" in run.reason and "HV-S0001" in run.reason


def test_fixed_to_a_slot_that_does_not_exist():
    p = Problem(chain(2), events={"E1": Event("E1", fixed_slot="Friday 9am")})
    run = infeasible(p, generic_slots(3))
    assert "fixed to 'Friday 9am', which is not one of the 3 slots" in run.reason


def test_barred_slots_bind():
    p = Problem(chain(2), events={"E1": Event("E1", barred_slots=("1", "2"))}, weights=ZERO)
    run, _ = solved(p, generic_slots(3))
    assert run.assignment["E1"] == 3


def test_barred_and_fixed_together_are_explained():
    p = Problem(chain(3), events={"E1": Event("E1", barred_slots=("1", "2")),
                                  "E2": Event("E2", fixed_slot="3")}, weights=ZERO)
    run = infeasible(p, generic_slots(3))
    assert "E1 may not go in slot(s) 1-2" in run.reasons and "E2 is fixed to slot 3 (Slot 3)" in run.reasons


# --- relations between events --------------------------------------------------------------

def test_same_slot_binds_and_is_explained():
    p = Problem(chain(2) + [("HV-S0009", "F")], rules=[Rule(RuleKind.SAME_SLOT, ("E1", "F"))], weights=ZERO)
    run, _ = solved(p, generic_slots(2))
    assert run.assignment["E1"] == run.assignment["F"]
    bad = Problem(chain(2), rules=[Rule(RuleKind.SAME_SLOT, ("E1", "E2"))], weights=ZERO)
    run = infeasible(bad, generic_slots(3))
    assert run.reasons == ["E1 and E2 must share a slot"]


def test_before_binds_and_a_cycle_is_explained():
    p = Problem([("a", "A"), ("b", "B")], rules=[Rule(RuleKind.BEFORE, ("B", "A"))], weights=ZERO)
    run, _ = solved(p, generic_slots(2))
    assert run.assignment["B"] < run.assignment["A"]
    cyc = Problem([("a", "A"), ("b", "B"), ("c", "C")], weights=ZERO, rules=[
        Rule(RuleKind.BEFORE, ("A", "B")), Rule(RuleKind.BEFORE, ("B", "C")), Rule(RuleKind.BEFORE, ("C", "A")),
        Rule(RuleKind.SAME_SLOT, ("A", "A"))])
    run = infeasible(cyc, generic_slots(5))
    assert sorted(run.reasons) == ["A must come before B", "B must come before C", "C must come before A"]


def test_before_needs_enough_slots():
    p = Problem([("a", "A"), ("b", "B"), ("c", "C")], weights=ZERO,
                rules=[Rule(RuleKind.BEFORE, ("A", "B")), Rule(RuleKind.BEFORE, ("B", "C"))])
    solved(p, generic_slots(3))
    run = infeasible(p, generic_slots(2))
    assert set(run.reasons) <= {"A must come before B", "B must come before C"} and run.reasons


def test_different_days_binds_and_is_explained():
    p = Problem([("a", "A"), ("b", "B")], rules=[Rule(RuleKind.DIFFERENT_DAYS, ("A", "B"))], weights=ZERO)
    slots = generic_slots(4, 2)
    run, _ = solved(p, slots)
    assert (run.assignment["A"] - 1) // 2 != (run.assignment["B"] - 1) // 2
    three = Problem([("a", "A"), ("b", "B"), ("c", "C")], weights=ZERO,
                    rules=[Rule(RuleKind.DIFFERENT_DAYS, ("A", "B", "C"))])
    run = infeasible(three, slots)
    assert run.reasons == ["A and B and C must be on different days"]


def test_alone_binds_and_is_explained():
    p = Problem([("a", "A"), ("b", "B"), ("c", "C")], rules=[Rule(RuleKind.ALONE, ("A",))], weights=ZERO)
    run, _ = solved(p, generic_slots(2))
    assert [c for c, s in run.assignment.items() if s == run.assignment["A"]] == ["A"]
    bad = Problem(chain(2) + [("x", "A")], rules=[Rule(RuleKind.ALONE, ("A",))], weights=ZERO)
    run = infeasible(bad, generic_slots(2))
    assert run.reasons == ["A must be alone in its slot"]


# --- lengths, seats, rooms -----------------------------------------------------------------

def test_event_length_binds_and_is_explained():
    slots = [Slot("Mon 9:00", length_minutes=120, day=1), Slot("Mon 14:00", length_minutes=180, day=1)]
    p = Problem([("a", "LONG"), ("b", "SHORT")], events={"LONG": Event("LONG", duration_minutes=180)}, weights=ZERO)
    run, _ = solved(p, slots)
    assert run.assignment["LONG"] == 2
    p2 = Problem([("a", "LONG")], events={"LONG": Event("LONG", duration_minutes=240)})
    run = infeasible(p2, slots)
    assert "LONG fits no slot: it lasts 240 minutes and slot 1 only 120" in run.reason
    # two long events that clash, one long slot: the length limits and the clash together
    p3 = Problem([("a", "L1"), ("a", "L2")], weights=ZERO,
                 events={"L1": Event("L1", duration_minutes=180), "L2": Event("L2", duration_minutes=180)})
    run = infeasible(p3, slots)
    assert any("L1 cannot go in slot(s) 1" in r for r in run.reasons)
    assert any("L2 cannot go in slot(s) 1" in r for r in run.reasons)


def test_seat_capacity_binds_and_is_explained():
    enrol = [(f"HV-S{i:04d}", "A") for i in range(30)] + [(f"HV-T{i:04d}", "B") for i in range(30)]
    slots = [Slot("1", seat_capacity=40, day=1), Slot("2", seat_capacity=40, day=2)]
    run, _ = solved(Problem(enrol, weights=ZERO), slots)
    assert run.assignment["A"] != run.assignment["B"]
    enrol += [(f"HV-U{i:04d}", "C") for i in range(30)]
    run = infeasible(Problem(enrol, weights=ZERO), slots)
    assert any("seats at most 40" in r for r in run.reasons)
    big = Problem([(f"HV-S{i:04d}", "HUGE") for i in range(50)])
    run = infeasible(big, slots)
    assert "HUGE fits no slot: it has 50 attendees and slot 1 only 40 seats" in run.reason


def test_rooms_bind_type_capacity_and_availability():
    rooms = [Room("North Hall", 60), Room("Chem Lab", 20, room_type="lab", unavailable_slots=("1",))]
    enrol = [(f"HV-S{i:04d}", "CHEM") for i in range(15)] + [(f"HV-T{i:04d}", "HIST") for i in range(50)]
    p = Problem(enrol, rooms=rooms, events={"CHEM": Event("CHEM", room_type="lab")}, weights=ZERO)
    run, _ = solved(p, generic_slots(2))
    assert run.assignment["CHEM"] == 2 and run.rooms["CHEM"] == [("Chem Lab", 15)]
    assert run.rooms["HIST"] == [("North Hall", 50)]


def test_room_too_small_is_explained_and_splitting_fixes_it():
    rooms = [Room("Room A", 30), Room("Room B", 30)]
    p = Problem([(f"HV-S{i:04d}", "BIG") for i in range(50)], rooms=rooms)
    run = infeasible(p, generic_slots(2))
    assert "BIG fits no slot" in run.reason and "largest of the rooms free in slot 1 seats 30" in run.reason
    split = SolveOptions(time_limit=10, workers=2, room_splitting=True)
    run, v = solved(p, generic_slots(2), split)
    assert sorted(n for _, n in run.rooms["BIG"]) == [20, 30] or sum(n for _, n in run.rooms["BIG"]) == 50
    assert v.soft["room_split"] == 1 and run.penalty_breakdown.get("room_split") == p.weights.room_split


def test_rooms_are_shared_by_default_even_by_events_of_different_lengths():
    rooms = [Room("Hall", 100)]
    enrol = [("a", "A"), ("b", "B")]
    p = Problem(enrol, rooms=rooms, weights=ZERO,
                events={"A": Event("A", duration_minutes=90), "B": Event("B", duration_minutes=180)})
    # the default: both sit in the one hall in the one slot (2 of its 100 seats)
    run, _ = solved(p, generic_slots(1))
    assert run.rooms["A"][0][0] == run.rooms["B"][0][0] == "Hall"
    # sharing switched off (--no-share-rooms), or the hall marked not shared: one event per room
    alone = SolveOptions(time_limit=10, workers=2, room_sharing=False)
    run, _ = solved(p, generic_slots(2), alone)
    assert run.assignment["A"] != run.assignment["B"]
    run = infeasible(p, generic_slots(1), alone)
    assert any("one event per room" in r for r in run.reasons)
    rooms[0].shared = False
    run, _ = solved(p, generic_slots(2))
    assert run.assignment["A"] != run.assignment["B"]
    run = infeasible(p, generic_slots(1))
    assert any("the one such room gives only 1 place over 1 slot (one event per room, as each is marked not "
               "shared" in r for r in run.reasons), run.reasons


def test_rooms_of_a_type_run_out_of_seats():
    rooms = [Room("Lab 1", 20, room_type="lab"), Room("Hall", 200)]
    enrol = [(f"a{i}", "L1") for i in range(15)] + [(f"b{i}", "L2") for i in range(15)]
    p = Problem(enrol, rooms=rooms, weights=ZERO,
                events={"L1": Event("L1", room_type="lab"), "L2": Event("L2", room_type="lab")})
    run, _ = solved(p, generic_slots(2))
    assert run.assignment["L1"] != run.assignment["L2"]
    run = infeasible(p, generic_slots(1))
    assert any("rooms of type 'lab'" in r for r in run.reasons)


# --- the cap on events per attendee per day -------------------------------------------------

def test_daily_limit_binds_and_is_explained():
    p = Problem(chain(3), max_per_day=1, weights=ZERO)
    run, v = solved(p, generic_slots(6, 2))
    assert v.attendee_load["HV-S0001"]["most_in_one_day"] == 1
    run = infeasible(p, generic_slots(4, 2))
    assert run.reasons == ["no attendee may have more than 1 events a day"]


# --- several rules at once: the explanation is a small subset -----------------------------

def test_explanation_names_only_the_rules_that_conflict():
    enrol = [("a", "A"), ("b", "B"), ("c", "C"), ("d", "D"), ("e", "E")]
    rules = [Rule(RuleKind.BEFORE, ("A", "B")), Rule(RuleKind.BEFORE, ("B", "A")),
             Rule(RuleKind.SAME_SLOT, ("C", "D")), Rule(RuleKind.DIFFERENT_DAYS, ("D", "E"))]
    p = Problem(enrol, rules=rules, weights=ZERO, events={"E": Event("E", fixed_slot="4")})
    run = infeasible(p, generic_slots(4, 2))
    assert sorted(run.reasons) == ["A must come before B", "B must come before A"]


@pytest.mark.parametrize("k", [3, 4])
def test_rules_and_soft_goals_together_pass_the_validator(k):
    enrol = chain(3) + [("HV-S0002", "E3"), ("HV-S0002", "F1"), ("HV-S0003", "F1"), ("HV-S0003", "F2")]
    p = Problem(enrol, rules=[Rule(RuleKind.BEFORE, ("E1", "E2")), Rule(RuleKind.ALONE, ("F2",))],
                events={"F1": Event("F1", preferred_slots=("1",))})
    run, v = solved(p, generic_slots(k + 1, 2))
    assert run.penalty == v.penalty


def test_too_few_large_rooms_over_the_session_is_explained_before_search():
    rooms = [Room("Great Hall", 100), Room("Seminar 1", 20), Room("Seminar 2", 20)]
    enrol = [(f"HV-S{e}{i:03d}", f"BIG{e}") for e in range(3) for i in range(50)]
    p = Problem(enrol, rooms=rooms, weights=ZERO)
    alone = SolveOptions(time_limit=10, workers=2, room_sharing=False)
    run = infeasible(p, generic_slots(2), alone)
    assert "3 events need rooms with at least 21 seats" in run.reason and "only 2 places over 2 slots" in run.reason
    run, v = solved(p, generic_slots(3), alone)
    assert all(r == [("Great Hall", 50)] for r in run.rooms.values())
    # shared (the default), the hall seats two events of 50 at once: 2 slots hold the 3 events ...
    run, v = solved(p, generic_slots(2))
    assert sorted(len([c for c in run.assignment if run.assignment[c] == s]) for s in (1, 2)) == [1, 2]
    # ... but not 5 of them: every one takes 50 of its 100 seats, so 2 places a slot, 4 over 2 slots,
    # though the 250 seats needed are fewer than the 280 the rooms give over the 2 slots
    five = Problem([(f"HV-S{e}{i:03d}", f"BIG{e}") for e in range(5) for i in range(50)], rooms=rooms, weights=ZERO)
    run = infeasible(five, generic_slots(2))
    assert "5 events need rooms with at least 50 seats" in run.reason and "only 4 places over 2 slots" in run.reason


@pytest.mark.parametrize("proven", [True, False])
def test_a_seating_that_only_ran_out_of_time_is_not_called_impossible(monkeypatch, proven):
    # Seating a slot that the greedy and the assignment step cannot seat falls to CP-SAT; here
    # that CP-SAT is made to stop on time (proven=False) or to prove the slot unseatable (True).
    from timetabler.scheduling import rooms as seating
    monkeypatch.setattr(seating, "_greedy", lambda *a, **k: None)
    monkeypatch.setattr(seating, "_assignment", lambda *a, **k: None)
    monkeypatch.setattr(seating, "_exact", lambda *a, **k: (None, proven))
    p = Problem([(f"HV-S{i:04d}", "BIG") for i in range(50)] + [(f"HV-T{i:04d}", "SMALL") for i in range(10)],
                rooms=[Room("Room A", 30), Room("Room B", 30)], weights=ZERO)
    run = solve(p, generic_slots(1), SolveOptions(time_limit=10, workers=2, room_splitting=True))
    if proven:
        assert run.status == "infeasible" and run.proven
    else:
        assert run.status == "unknown" and not run.proven
        assert "not proven impossible" in run.reason and "slot(s) 1" in run.reason


def test_groups_are_not_moved_between_slots_when_a_rule_ties_an_event_to_its_slot(monkeypatch):
    # Moving whole groups of events between slots (arrangement.py) keeps clashes away but not a
    # fixed slot; it must run only when the slots are interchangeable. Before this was checked,
    # the sample term's first timetable lost its fixed paper's slot and was thrown away.
    import importlib
    solve_module = importlib.import_module("timetabler.scheduling.block_solver")
    calls = []
    real = solve_module.arrange
    monkeypatch.setattr(solve_module, "arrange", lambda *a, **k: calls.append(1) or real(*a, **k))
    enrol = chain(4) + [("HV-S0002", "E1"), ("HV-S0002", "F1"), ("HV-S0003", "F1"), ("HV-S0003", "E4")]
    events = {c: Event(c) for c in ("E1", "E2", "E3", "E4", "F1")}
    events["E4"] = Event("E4", fixed_slot="1")
    # a rule DSATUR does not know, so its first timetable fails and CP-SAT searches for one
    rules = [Rule(RuleKind.SAME_SLOT, ("E3", "F1"))]
    p = Problem(enrol, events=events, rules=rules)  # default weights: the order of the slots matters
    run, v = solved(p, generic_slots(6, 2))
    assert run.assignment["E4"] == 1 and run.assignment["E3"] == run.assignment["F1"] and not calls
    free = Problem(enrol, rules=rules)  # nothing fixed: the slots are alike and arranging is used
    solved(free, generic_slots(6, 2))
    assert calls


def test_fewest_slots_gives_the_reason_the_slot_count_below_fails():
    from timetabler.scheduling import fewest_slots
    enrol = [(f"HV-S{i:04d}", e) for e, base in (("A", 0), ("B", 100), ("C", 200)) for i in range(base, base + 60)]
    p = Problem(enrol, rooms=[Room("Great Hall", 100)], weights=ZERO)
    res = fewest_slots(p, options=SolveOptions(time_limit=10, workers=2))
    # seats alone ask for 2 slots (180 seats, 100 a slot); one event per room asks for 3
    assert res.upper == res.lower == 3 and res.proven
    assert res.lower_reason.startswith("2 slots cannot hold a timetable: ") and "places over 2 slots" in res.lower_reason


def test_local_search_limits_count_places_in_shared_rooms():
    # the local search's additive limits (penalty_state) mirror the slot model's: a shared room of 100
    # seats has 2 places for events of 50 or more, a room marked not shared 1 (counted by hand)
    from timetabler.scheduling.penalty_state import _resources
    enrol = [(f"HV-S{e}{i:03d}", f"BIG{e}") for e in range(4) for i in range(50)]
    p = Problem(enrol, rooms=[Room("Great Hall", 100), Room("Annexe", 60, shared=False)], weights=ZERO)
    codes, sizes = sorted(p.events), p.event_sizes()
    use, cap = _resources(p, generic_slots(1), codes, sizes, True, False)
    limits = {tuple(use[:, j]): int(cap[0, j]) for j in range(use.shape[1])}
    assert limits[(50, 50, 50, 50)] == 160  # seats
    assert limits[(1, 1, 1, 1)] == 2 + 1  # places for events of 50 seats or more
    use, cap = _resources(p, generic_slots(1), codes, sizes, False, False)  # sharing off: one event a room
    assert {tuple(use[:, j]): int(cap[0, j]) for j in range(use.shape[1])}[(1, 1, 1, 1)] == 2
