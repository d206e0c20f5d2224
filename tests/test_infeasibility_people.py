"""Reasons that name people when no timetable exists; each instance is confirmed impossible by brute force.

The brute force (``_any_timetable``) is the test's own: it tries every assignment of start slots
and checks each required attendee's availability and clashes with its own reading of the slots
(one slot per event here, so no spans are needed). Invented people of a guild of clockmakers.
"""

from __future__ import annotations

import datetime as dt
import itertools

from timetabler.model import Attendee, Event, Problem, Slot, generic_slots
from timetabler.scheduling.solve import SolveOptions, solve
from timetabler.scheduling.infeasibility import hall_witnesses

MON, TUE = dt.date(2027, 3, 1), dt.date(2027, 3, 2)
SLOTS = [Slot(f"{d:%a} {h}:00", date=d, start=dt.time(h), length_minutes=60) for d, h in
         ((MON, 9), (MON, 10), (MON, 11), (TUE, 9), (TUE, 10))]
QUICK = SolveOptions(time_limit=3, workers=1)


def _any_timetable(problem: Problem, slots) -> bool:
    """Brute force over one-slot events: is there any assignment meeting availability, fixed/barred and clashes?"""
    codes = sorted(problem.events)
    away = {}
    for name, person in problem.people.items():
        out = set()
        for ref in person.unavailable:
            out |= {i for i, s in enumerate(slots, 1) if s.label == ref or (s.date and s.date.isoformat() == ref)
                    or ref == str(i)}
        away[name] = out
    required = [(a, c) for a, c in problem.enrolments if (a, c) not in problem.optional]
    for combo in itertools.product(range(1, len(slots) + 1), repeat=len(codes)):
        at = dict(zip(codes, combo))
        if any(ref in ("1", "2", "3", "4", "5") and at[c] == int(ref)
               for c, e in problem.events.items() for ref in e.barred_slots):
            continue
        if any(at[c] in away.get(a, ()) for a, c in required):
            continue
        seen = set()
        if any((a, at[c]) in seen or seen.add((a, at[c])) for a, c in required):
            continue
        ok = True
        for c, e in problem.events.items():
            if e.quorum:
                free = sum(1 for a, cc in problem.enrolments if cc == c and at[c] not in away.get(a, ()))
                ok &= free >= e.quorum
        if ok:
            return True
    return False


def test_one_person_barring_every_slot_left_is_named_with_the_slots():
    p = Problem([("ida", "BOARD"), ("jon", "BOARD")], events={"BOARD": Event("BOARD", barred_slots=("5",))},
                people={"ida": Attendee("ida", unavailable=("2027-03-01", "Tue 9:00"))})
    assert not _any_timetable(p, SLOTS)
    run = solve(p, SLOTS, QUICK)
    assert run.status == "infeasible"
    assert run.reason == ("ida cannot make any slot left for BOARD: slots 1 (Mon 9:00), 2 (Mon 10:00), 3 (Mon 11:00), "
                          "4 (Tue 9:00); the other slots are out: slot 5 (Tue 10:00) barred for it")


def test_several_people_each_barring_some_slots():
    p = Problem([("ida", "BOARD"), ("jon", "BOARD")],
                people={"ida": Attendee("ida", unavailable=("2027-03-01",)),
                        "jon": Attendee("jon", unavailable=("2027-03-02",))})
    assert not _any_timetable(p, SLOTS)
    reason = solve(p, SLOTS, QUICK).reason
    # one phrase per person, with all the slots they rule out (not one phrase per slot naming them again)
    assert reason == ("no slot is left for BOARD: ida cannot make slots 1 (Mon 9:00), 2 (Mon 10:00), 3 (Mon 11:00); "
                      "jon cannot make slots 4 (Tue 9:00), 5 (Tue 10:00)")


def test_many_people_barring_slots_are_named_fewest_first_and_the_rest_counted():
    # eight members each away for one of eight slots: four are named, the other slots are "others"
    slots = generic_slots(8)
    members = [f"m{i}" for i in range(1, 9)]
    p = Problem([(m, "BOARD") for m in members],
                people={m: Attendee(m, unavailable=(str(i),)) for i, m in enumerate(members, start=1)})
    reason = solve(p, slots, QUICK).reason
    assert reason.startswith("no slot is left for BOARD: m1 cannot make slot 1 (Slot 1); m2 cannot make slot 2")
    assert reason.count("cannot make") == 5 and "others cannot make slots 5 (Slot 5), 6 (Slot 6), 7 (Slot 7), 8 (Slot 8)" in reason


def test_more_events_than_the_slots_a_person_can_make_is_a_hall_witness():
    # ida's A, B, C can only go on Monday 9:00 or 10:00 (the rest barred); D anywhere: {A, B, C} is the witness
    barred = ("3", "4", "5")
    p = Problem([("ida", c) for c in "ABCD"] + [("jon", "D")],
                events={c: Event(c, barred_slots=barred) for c in "ABC"})
    assert not _any_timetable(p, SLOTS)
    starts = {c: ({1, 2} if c in "ABC" else {1, 2, 3, 4, 5}) for c in "ABCD"}
    (witness,) = hall_witnesses(p, SLOTS, starts)
    assert witness.events == ["A", "B", "C"]  # the König set: D has slots of its own
    assert witness.text == ("these 3 events share ida: A, B, C, and only 2 slots are left for them "
                            "(slots 1 (Mon 9:00), 2 (Mon 10:00))")


def test_the_hall_witness_through_solve_uses_the_persons_own_words():
    p = Problem([("ida", c) for c in "ABCD"], people={"ida": Attendee("ida", unavailable=("2027-03-01",))})
    assert not _any_timetable(p, SLOTS)
    reasons = solve(p, SLOTS, QUICK).reasons
    assert "these 4 events share ida: A, B, C, D, and ida can make only 2 of their slots (slots 4 (Tue 9:00), " \
           "5 (Tue 10:00))" in reasons


def test_hall_witnesses_found_on_random_instances_are_true():
    # every witness's events really are more than the union of their starts (a check by counting)
    import random
    rng = random.Random(7)
    for _ in range(200):
        codes = [f"E{i}" for i in range(rng.randint(2, 6))]
        starts = {c: set(rng.sample(range(1, 6), rng.randint(0, 3))) for c in codes}
        p = Problem([("ida", c) for c in codes])
        found = hall_witnesses(p, SLOTS, starts)
        # brute force: does a system of distinct starts exist?
        exists = any(len(set(pick)) == len(codes) for pick in itertools.product(*[sorted(starts[c]) for c in codes]))
        assert bool(found) == (not exists)
        for w in found:
            union = set().union(*(starts[c] for c in w.events))
            assert len(union) < len(w.events)


def test_a_quorum_no_slot_meets():
    p = Problem([(x, "BOARD") for x in "abc"], optional={(x, "BOARD") for x in "abc"},
                events={"BOARD": Event("BOARD", quorum=3)},
                people={"a": Attendee("a", unavailable=("2027-03-01",)), "b": Attendee("b", unavailable=("2027-03-02",))})
    assert not _any_timetable(p, SLOTS)
    assert solve(p, SLOTS, QUICK).reason == (
        "BOARD needs 3 of its attendees free; at most 2 can make any one slot (slots 1 (Mon 9:00), 2 (Mon 10:00), "
        "3 (Mon 11:00), 4 (Tue 9:00), 5 (Tue 10:00))")


def test_a_long_event_that_fits_no_run_of_touching_slots():
    # 200 minutes; Monday's three touching hours give 180 at most (worked by hand)
    p = Problem([("ida", "BOARD")], events={"BOARD": Event("BOARD", duration_minutes=200)})
    assert solve(p, SLOTS, QUICK).reason == (
        "BOARD lasts 200 minutes and no run of touching slots of one day is that long (the longest left for it: "
        "180 minutes from slot 1 (Mon 9:00))")


def test_optional_enrolments_count_towards_no_attendees_load():
    # ida has three events in two slots, one of them optional: a timetable exists (found by hand: M0, M1 apart)
    p = Problem([("ida", "M0"), ("ida", "M1"), ("ida", "M2")], optional={("ida", "M2")})
    slots = SLOTS[:2]
    assert _any_timetable(p, slots)
    assert solve(p, slots, QUICK).status in ("optimal", "feasible")
    from timetabler.scheduling.fewest_slots_search import fewest_slots
    assert fewest_slots(p, options=QUICK).lower == 2


def test_extra_time_past_the_day_is_named_as_such_not_as_unavailability():
    # one day of two touching hours; ida's 50 % extra time on a 60-minute board needs 90 minutes: from 9:00 it
    # runs into 10:00 (allowed), from 10:00 past the day. The board is barred from 9:00.
    day = dt.date(2027, 3, 1)
    slots = [Slot(f"Mon {h}:00", date=day, start=dt.time(h), length_minutes=60) for h in (9, 10)]
    p = Problem([("ida", "A"), ("jon", "A")], events={"A": Event("A", duration_minutes=60, barred_slots=("Mon 9:00",))},
                people={"ida": Attendee("ida", extra_time_percent=50)})
    run = solve(p, slots, QUICK)
    assert run.status == "infeasible"
    text = " ".join(run.reasons)
    assert "cannot make" not in text  # ida is available all day
    assert "50 % extra time" in text and "past the day's slots" in text
