"""The validator's own reading of the people's rules: hand-made timetables it must reject, one of each kind.

Every expected verdict below is worked out by hand from the contract's definitions (the module
docstring of timetabler/availability.py), not taken from the tool; the slots are an invented
meeting week of an invented guild of clockmakers.
"""

from __future__ import annotations

import datetime as dt

from timetabler.model import Attendee, Event, Problem, Room, Slot, Weights
from timetabler.scheduling import validate

MON, TUE = dt.date(2027, 3, 1), dt.date(2027, 3, 2)


def hourly(day, hours, length=60):
    return [Slot(f"{day:%a} {h}:00", date=day, start=dt.time(h), length_minutes=length) for h in hours]


SLOTS = hourly(MON, (9, 10, 11)) + hourly(TUE, (9, 10))  # 1 2 3 | 4 5


def test_a_required_attendee_in_a_slot_they_cannot_make_is_named():
    p = Problem([("ida", "BOARD"), ("jon", "BOARD")], people={"ida": Attendee("ida", unavailable=("Mon 10:00",))})
    bad = validate(p, SLOTS, {"BOARD": 2})
    assert bad.violations == ["ida must attend BOARD in slot 2 (Mon 10:00) but they cannot make slot 2 (Mon 10:00)"]
    assert validate(p, SLOTS, {"BOARD": 1}).ok


def test_a_date_means_every_slot_of_that_day_and_a_number_one_slot():
    p = Problem([("ida", "A"), ("jon", "B")], people={"ida": Attendee("ida", unavailable=("2027-03-01",)),
                                                      "jon": Attendee("jon", unavailable=("4",))})
    for s in (1, 2, 3):
        assert not validate(p, SLOTS, {"A": s, "B": 1}).ok
    assert not validate(p, SLOTS, {"A": 5, "B": 4}).ok
    assert validate(p, SLOTS, {"A": 4, "B": 5}).ok


def test_a_long_event_must_have_touching_slots_of_one_day():
    # 120 minutes from Mon 11:00: no slot after it that day; from Tue 10:00 none either
    p = Problem([("ida", "BOARD")], events={"BOARD": Event("BOARD", duration_minutes=120)})
    for s in (3, 5):
        v = validate(p, SLOTS, {"BOARD": s})
        assert any("BOARD lasts 120 minutes but from slot" in t for t in v.violations), v.violations
    assert validate(p, SLOTS, {"BOARD": 1}).ok and validate(p, SLOTS, {"BOARD": 4}).ok
    gap = hourly(MON, (9,)) + hourly(MON, (11,))  # 9-10 and 11-12 do not touch
    assert not validate(p, gap, {"BOARD": 1}).ok


def test_a_long_event_clashes_in_its_second_slot():
    p = Problem([("ida", "BOARD"), ("ida", "AUDIT")], events={"BOARD": Event("BOARD", duration_minutes=120)})
    assert validate(p, SLOTS, {"BOARD": 1, "AUDIT": 2}).violations == [
        "ida is booked twice in slot 2 (Mon 10:00): AUDIT and BOARD"]
    ok = validate(p, SLOTS, {"BOARD": 1, "AUDIT": 3})
    assert ok.ok and ok.soft["back_to_back"] == 1  # slots 1-2 then 3: touching, as the contract says


def test_unavailability_bars_the_second_slot_of_a_long_event():
    p = Problem([("ida", "BOARD")], events={"BOARD": Event("BOARD", duration_minutes=90)},
                people={"ida": Attendee("ida", unavailable=("Mon 10:00",))})
    assert not validate(p, SLOTS, {"BOARD": 1}).ok  # 9:00-10:30 takes 10:00
    assert validate(p, SLOTS, {"BOARD": 4}).ok


def test_extra_time_runs_into_the_next_slot_and_clashes_there():
    # 60-minute paper, 50 % extra time: ida sits 9:00-10:30, so slot 2 is hers too
    p = Problem([("ida", "LAW1"), ("ida", "LAW2"), ("jon", "LAW1")],
                events={"LAW1": Event("LAW1", duration_minutes=60), "LAW2": Event("LAW2", duration_minutes=60)},
                people={"ida": Attendee("ida", extra_time_percent=50)})
    assert validate(p, SLOTS, {"LAW1": 1, "LAW2": 2}).violations == [
        "ida is booked twice in slot 2 (Mon 10:00): LAW1 and LAW2"]
    assert validate(p, SLOTS, {"LAW1": 1, "LAW2": 4}).ok  # slot 3 is the last of Monday: no room for her 50 %


def test_extra_time_that_fits_neither_the_slot_nor_the_next_is_refused():
    # 150 % of 60 minutes = 150 minutes from 9:00 ends 11:30, after 11:00 (end of the next slot)
    p = Problem([("ida", "LAW1")], events={"LAW1": Event("LAW1", duration_minutes=60)},
                people={"ida": Attendee("ida", extra_time_percent=150)})
    v = validate(p, SLOTS, {"LAW1": 1})
    assert v.violations == ["ida must attend LAW1 in slot 1 (Mon 9:00) but with 150 % extra time their sitting "
                            "would end at 11:30, after 11:00"]
    # in the last slot of a day there is no next slot: even 50 % does not fit
    q = Problem([("ida", "LAW1")], events={"LAW1": Event("LAW1", duration_minutes=60)},
                people={"ida": Attendee("ida", extra_time_percent=50)})
    assert not validate(q, SLOTS, {"LAW1": 3}).ok and validate(q, SLOTS, {"LAW1": 2}).ok


def test_optional_attendees_make_no_clash_but_are_counted_missed():
    p = Problem([("ida", "A"), ("ida", "B"), ("jon", "C")], optional={("ida", "B"), ("jon", "C")},
                people={"jon": Attendee("jon", unavailable=("Mon 9:00",))}, weights=Weights(optional_missed=7))
    v = validate(p, SLOTS, {"A": 1, "B": 1, "C": 1})
    assert v.ok, v.violations
    # ida misses B (booked in A), jon misses C (cannot make slot 1)
    assert v.soft["optional_missed"] == 2 and v.penalty == 14
    assert validate(p, SLOTS, {"A": 1, "B": 2, "C": 2}).soft["optional_missed"] == 0


def test_two_optional_events_at_once_are_both_missed():
    p = Problem([("ida", "A"), ("ida", "B")], optional={("ida", "A"), ("ida", "B")})
    assert validate(p, SLOTS, {"A": 1, "B": 1}).soft["optional_missed"] == 2


def test_a_quorum_counts_only_the_free_attendees():
    members = [("ida", "BOARD"), ("jon", "BOARD"), ("kay", "BOARD"), ("kay", "AUDIT")]
    p = Problem(members, events={"BOARD": Event("BOARD", quorum=2)}, optional={("jon", "BOARD"), ("kay", "BOARD")},
                people={"jon": Attendee("jon", unavailable=("Mon 9:00",))})
    # slot 1: ida free, jon cannot make it, kay is at AUDIT: 1 < 2
    v = validate(p, SLOTS, {"BOARD": 1, "AUDIT": 1})
    assert len(v.violations) == 1 and v.violations[0].startswith(
        "BOARD needs 2 of its attendees free in slot 1 (Mon 9:00) but only 1 are; not free: jon (they cannot make")
    assert "kay (booked in AUDIT)" in v.violations[0]
    assert validate(p, SLOTS, {"BOARD": 1, "AUDIT": 2}).ok  # ida and kay
    assert validate(p, SLOTS, {"BOARD": 2, "AUDIT": 2}).ok  # ida and jon


def test_a_long_event_holds_its_room_in_every_slot():
    rooms = [Room("Orchard Room", 10, shared=False)]
    p = Problem([("ida", "BOARD"), ("jon", "AUDIT")], rooms=rooms,
                events={"BOARD": Event("BOARD", duration_minutes=120)})
    seat = {"BOARD": [("Orchard Room", 1)], "AUDIT": [("Orchard Room", 1)]}
    v = validate(p, SLOTS, {"BOARD": 1, "AUDIT": 2}, seat)
    assert any("Orchard Room holds AUDIT, BOARD together in slot 2" in t for t in v.violations), v.violations
    assert validate(p, SLOTS, {"BOARD": 1, "AUDIT": 3}, seat).ok
    unavailable = [Room("Orchard Room", 10, unavailable_slots=("Mon 10:00",))]
    q = Problem([("ida", "BOARD")], rooms=unavailable, events={"BOARD": Event("BOARD", duration_minutes=120)})
    assert not validate(q, SLOTS, {"BOARD": 1}, {"BOARD": [("Orchard Room", 1)]}).ok


def test_own_rooms_alone_of_the_right_type_for_the_whole_sitting():
    rooms = [Room("Hall", 50, room_type="hall"), Room("Snug", 1, room_type="quiet"),
             Room("Annex", 4, room_type="hall")]
    people = {"ida": Attendee("ida", extra_time_percent=50, own_room_type="quiet")}
    p = Problem([("ida", "LAW1"), ("jon", "LAW1"), ("kay", "LAW2")], rooms=rooms, people=people,
                events={"LAW1": Event("LAW1", duration_minutes=60), "LAW2": Event("LAW2", duration_minutes=60)})
    seats = {"LAW1": [("Hall", 1)], "LAW2": [("Hall", 1)]}
    good = validate(p, SLOTS, {"LAW1": 1, "LAW2": 3}, {"LAW1": [("Hall", 1)], "LAW2": [("Hall", 1)]},
                    own_rooms={("ida", "LAW1"): "Snug"})
    assert good.ok, good.violations
    # no own room given for her
    assert any("ida should sit LAW1 alone" in t for t in
               validate(p, SLOTS, {"LAW1": 1, "LAW2": 3}, seats, own_rooms={}).violations)
    # wrong type
    assert any("needs a room of type 'quiet'" in t for t in
               validate(p, SLOTS, {"LAW1": 1, "LAW2": 3}, {"LAW1": [("Hall", 1)], "LAW2": [("Hall", 1)]},
                        own_rooms={("ida", "LAW1"): "Annex"}).violations)
    # LAW2 in the Snug in slot 2, still hers (her sitting runs to 10:30)
    clash = validate(p, SLOTS, {"LAW1": 1, "LAW2": 2}, {"LAW1": [("Hall", 1)], "LAW2": [("Snug", 1)]},
                     own_rooms=[{"attendee": "ida", "event": "LAW1", "room": "Snug"}])
    assert any("ida should sit alone in Snug in slot 2 (Mon 10:00) but it also holds LAW2" in t
               for t in clash.violations), clash.violations
    # the main placement must seat one fewer
    assert any("LAW1 has 1 attendees to seat" in t for t in
               validate(p, SLOTS, {"LAW1": 1, "LAW2": 3}, {"LAW1": [("Hall", 2)], "LAW2": [("Hall", 1)]},
                        own_rooms={("ida", "LAW1"): "Snug"}).violations)


def test_a_quorum_alone_still_reports_each_double_booking_once():
    p = Problem([("ida", "A"), ("ida", "B"), ("jon", "A")], events={"A": Event("A", quorum=1)})
    assert validate(p, SLOTS, {"A": 1, "B": 1}).violations == ["ida is booked twice in slot 1 (Mon 9:00): A and B"]
