"""The independent validator: every hard rule caught, every soft goal counted by hand."""

from __future__ import annotations

import datetime as dt

from timetabler.model import Event, Problem, Room, Rule, RuleKind, Slot, Weights, generic_slots
from timetabler.scheduling import validate


def _p(enrol, **kw) -> Problem:
    return Problem(list(enrol), **kw)


def test_double_booking_is_caught_and_named():
    p = _p([("HV-S0001", "A"), ("HV-S0001", "B"), ("HV-S0002", "C")])
    v = validate(p, generic_slots(2), {"A": 1, "B": 1, "C": 1})
    assert not v.ok
    assert v.violations == ["HV-S0001 is booked twice in slot 1 (Slot 1): A and B"]
    assert validate(p, generic_slots(2), {"A": 1, "B": 2, "C": 1}).ok


def test_missing_unknown_and_out_of_range_events():
    p = _p([("s", "A"), ("s", "B")])
    v = validate(p, generic_slots(2), {"A": 3, "Z": 1})
    text = " | ".join(v.violations)
    assert "B has no slot" in text and "A is in slot 3" in text and "Z is in the timetable" in text


def test_fixed_barred_and_length():
    slots = [Slot("Mon AM", length_minutes=120), Slot("Mon PM", length_minutes=180)]
    p = _p([("s", "A"), ("t", "B"), ("u", "C")],
           events={"A": Event("A", fixed_slot="Mon PM"), "B": Event("B", barred_slots=("1",)),
                   "C": Event("C", duration_minutes=150)})
    bad = validate(p, slots, {"A": 1, "B": 1, "C": 1})
    text = " | ".join(bad.violations)
    assert "A is fixed to slot 2" in text and "barred" in text and "C lasts 150 minutes" in text
    assert validate(p, slots, {"A": 2, "B": 2, "C": 2}).ok


def test_relations_between_events():
    p = _p([("s", "A"), ("t", "B"), ("u", "C"), ("v", "D")], rules=[
        Rule(RuleKind.BEFORE, ("A", "B")), Rule(RuleKind.SAME_SLOT, ("C", "D")),
        Rule(RuleKind.DIFFERENT_DAYS, ("A", "C")), Rule(RuleKind.ALONE, ("B",))])
    slots = generic_slots(4, 2)  # days: 1 1 2 2
    v = validate(p, slots, {"A": 2, "B": 1, "C": 1, "D": 2})
    text = " | ".join(v.violations)
    for words in ("A must come before B", "C and D must share a slot", "A and C must be on different days",
                  "B must be alone in its slot"):
        assert words in text
    assert validate(p, slots, {"A": 1, "B": 4, "C": 3, "D": 3}).ok


def test_seats_and_daily_limit():
    enrol = [(f"s{i}", "BIG") for i in range(30)] + [("s0", "X"), ("s0", "Y")]
    p = _p(enrol, max_per_day=2)
    slots = [Slot("1", seat_capacity=25, day=1), Slot("2", seat_capacity=100, day=1), Slot("3", day=1)]
    v = validate(p, slots, {"BIG": 1, "X": 2, "Y": 3})
    text = " | ".join(v.violations)
    assert "seats 30 attendees, more than its 25 seats" in text
    assert "s0 has 3 events on day 1, more than the limit of 2" in text


def test_rooms_type_capacity_availability_sharing_splitting():
    rooms = [Room("Hall", 50), Room("Lab 1", 10, room_type="lab", unavailable_slots=("2",)), Room("Small", 5)]
    enrol = [(f"a{i}", "E1") for i in range(8)] + [(f"b{i}", "E2") for i in range(12)]
    p = _p(enrol, rooms=rooms, events={"E1": Event("E1", room_type="lab")})
    slots = generic_slots(2)
    ok = validate(p, slots, {"E1": 1, "E2": 1}, {"E1": [("Lab 1", 8)], "E2": [("Hall", 12)]})
    assert ok.ok, ok.violations
    wrong_type = validate(p, slots, {"E1": 1, "E2": 1}, {"E1": [("Hall", 8)], "E2": [("Lab 1", 10), ("Small", 2)]})
    text = " | ".join(wrong_type.violations)
    assert "needs a room of type 'lab'" in text and "split over 2 rooms" in text
    unavailable = validate(p, slots, {"E1": 2, "E2": 1}, {"E1": [("Lab 1", 8)], "E2": [("Hall", 12)]})
    assert any("not available" in t for t in unavailable.violations)
    too_many = validate(p, slots, {"E1": 1, "E2": 1}, {"E1": [("Lab 1", 8)], "E2": [("Small", 12)]})
    assert any("more than its 5 seats" in t for t in too_many.violations)
    shared = validate(p, slots, {"E1": 1, "E2": 1}, {"E1": [("Lab 1", 8)], "E2": [("Lab 1", 2), ("Hall", 10)]},
                      room_splitting=True, room_sharing=False)
    assert any("sharing is not allowed" in t for t in shared.violations)
    # sharing is the default: two events in one room within its seats pass, whatever their lengths
    p.events["E2"] = Event("E2", duration_minutes=60)
    p.events["E1"] = Event("E1", duration_minutes=180)
    both = {"E1": [("Hall", 8)], "E2": [("Hall", 12)]}
    assert validate(p, slots, {"E1": 1, "E2": 1}, both).ok
    # ... except in a room marked not shared (the Rooms sheet's Shared column)
    p.rooms[0].shared = False
    alone = validate(p, slots, {"E1": 1, "E2": 1}, both)
    assert any("marked as not shared" in t for t in alone.violations)
    assert validate(p, slots, {"E1": 1, "E2": 2}, both).ok
    assert validate(p, slots, {"E1": 1, "E2": 1}, {"E1": [("Lab 1", 8)], "E2": [("Small", 5), ("Hall", 7)]},
                    room_splitting=True).soft["room_split"] == 1


def test_soft_counts_by_hand():
    # one attendee, events in slots 1, 2, 3, 5 of days [1,1 | 2,2 | 3,3]
    p = _p([("s", "A"), ("s", "B"), ("s", "C"), ("s", "D")])
    slots = generic_slots(6, 2)
    v = validate(p, slots, {"A": 1, "B": 2, "C": 3, "D": 5})
    # pairs: A-B gap1 same day (b2b); B-C gap1 days 1/2 (overnight); A-C gap2; C-D gap2; B-D gap3; A-D gap4
    assert v.soft["back_to_back"] == 1
    assert v.soft["overnight"] == 1
    assert v.soft["same_day"] == 0
    # Carter, Laporte & Lee (1996): 16/8/4/2/1 for gaps 1..5
    assert v.soft["proximity"] == 16 + 16 + 8 + 8 + 4 + 2
    assert v.attendee_load["s"] == {"events": 4, "most_in_one_day": 2}
    three = generic_slots(6, 3)  # days [1,1,1 | 2,2,2]
    v3 = validate(p, three, {"A": 1, "B": 3, "C": 4, "D": 6})
    assert (v3.soft["back_to_back"], v3.soft["same_day"], v3.soft["overnight"]) == (0, 2, 1)


def test_penalty_weights_and_preferences():
    w = Weights(back_to_back=7, overnight=0, same_day=0, proximity=1, large_late=0, preferred_slot=4,
                penalised_slot=3, room_split=0, moved=11)
    slots = [Slot("1", day=1), Slot("2", day=1, penalised=True), Slot("3", day=2)]
    p = _p([("s", "A"), ("s", "B")], weights=w, events={"A": Event("A", preferred_slots=("3",))})
    v = validate(p, slots, {"A": 1, "B": 2}, previous={"A": 1, "B": 3})
    assert v.soft["preferred_slot"] == 1 and v.soft["penalised_slot"] == 1 and v.soft["moved"] == 1
    assert v.penalty == 7 * 1 + 1 * 16 + 4 + 3 + 11


def test_large_late_counts_slots_after_the_first_for_the_largest_tenth():
    enrol = [(f"s{i}", "BIG") for i in range(50)] + [(f"t{i}", f"E{i}") for i in range(9)]
    p = _p(enrol)
    v = validate(p, generic_slots(5), {"BIG": 4, **{f"E{i}": 1 for i in range(9)}})
    assert v.soft["large_late"] == 3


def test_dates_group_days_when_no_day_given():
    d1, d2 = dt.date(2026, 6, 1), dt.date(2026, 6, 2)
    slots = [Slot("a", date=d1), Slot("b", date=d1), Slot("c", date=d2)]
    p = _p([("s", "A"), ("s", "B")])
    assert validate(p, slots, {"A": 1, "B": 2}).soft["back_to_back"] == 1
    assert validate(p, slots, {"A": 2, "B": 3}).soft["overnight"] == 1
