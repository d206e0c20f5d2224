"""The people's rules turned into slot numbers (timetabler.availability), on small hand-made weeks.

Each expectation is worked out by hand from the definitions in the module's docstring.
"""

import datetime as dt

from timetabler.availability import Availability, unavailable_slots
from timetabler.model import Attendee, Event, Problem, Slot

MON, TUE = dt.date(2027, 3, 1), dt.date(2027, 3, 2)


def hourly(day, hours, length=60):
    return [Slot(f"{day:%a} {h}:00", date=day, start=dt.time(h), length_minutes=length) for h in hours]


def test_references_by_label_date_and_number():
    slots = hourly(MON, (9, 10)) + hourly(TUE, (9, 10))
    problem = Problem([("ada", "A")], people={
        "ada": Attendee("ada", unavailable=("mon 9:00",)),
        "ben": Attendee("ben", unavailable=("2027-03-02",)),
        "cy": Attendee("cy", unavailable=("2", "9", "no such slot")),
    })
    got = unavailable_slots(problem, slots)
    assert got == {"ada": {1}, "ben": {3, 4}, "cy": {2}}


def test_a_two_hour_meeting_takes_two_touching_slots_of_one_day():
    # 9, 10, 11 touch; 14 follows a gap; Tuesday 9 starts a new day.
    slots = hourly(MON, (9, 10, 11, 14)) + hourly(TUE, (9,))
    problem = Problem([("ada", "M")], events={"M": Event("M", duration_minutes=120)})
    found = Availability.of(problem, slots)
    assert sorted(found.starts["M"]) == [1, 2]
    assert found.slots_taken("M", 2) == (2, 3)
    assert not found.one_slot_each


def test_required_unavailability_bars_every_slot_the_event_would_take():
    slots = hourly(MON, (9, 10, 11))
    problem = Problem([("ada", "M"), ("ben", "M")], events={"M": Event("M", duration_minutes=120)},
                      people={"ben": Attendee("ben", unavailable=("Mon 10:00",))})
    found = Availability.of(problem, slots)
    assert found.starts["M"] == frozenset()  # 9-11 and 10-12 both need 10:00
    assert found.cannot_make("M", 1) == ["ben"]


def test_optional_attendees_do_not_bar_but_count_towards_a_quorum():
    slots = hourly(MON, (9, 10, 11))
    enrolments = [("ada", "C"), ("ben", "C"), ("cy", "C")]
    people = {"ben": Attendee("ben", unavailable=("1",)), "cy": Attendee("cy", unavailable=("1", "2"))}
    problem = Problem(enrolments, events={"C": Event("C", quorum=2)}, people=people,
                      optional={("ben", "C"), ("cy", "C")})
    found = Availability.of(problem, slots)
    # free: slot 1 ada only; slot 2 ada, ben; slot 3 all three.
    assert sorted(found.starts["C"]) == [2, 3]
    assert found.quorum_short["C"] == {1: 1}
    assert found.one_slot_each


def test_extra_time_runs_into_the_next_slot_only_where_the_slots_allow():
    # Exams 9:00-12:00 and 12:00-15:00 touch; 16:00-19:00 is the day's last slot.
    slots = [Slot(f"Mon {h}", date=MON, start=dt.time(h), length_minutes=180) for h in (9, 12, 16)]
    problem = Problem([("ada", "E"), ("ben", "E")], events={"E": Event("E", duration_minutes=180)},
                      people={"ben": Attendee("ben", extra_time_percent=25)})
    found = Availability.of(problem, slots)
    # 180 min + 25 % = 225 min: from 9:00 to 12:45 (takes 12:00 too), from 12:00 to 15:45 (runs
    # into the gap before 16:00: the next slot is not touched), from 16:00 to 19:45: no slot
    # follows on Monday, so it cannot end by 19:00.
    assert found.slots_taken("E", 1, "ben") == (1, 2)
    assert found.slots_taken("E", 2, "ben") == (2,)
    assert found.slots_taken("E", 1, "ada") == (1,)
    assert found.slots_taken("E", 3, "ben") is None
    assert sorted(found.starts["E"]) == [1, 2]


def test_fixed_and_barred_slots_are_part_of_the_starts():
    slots = hourly(MON, (9, 10, 11))
    problem = Problem([("ada", "A"), ("ada", "B")],
                      events={"A": Event("A", fixed_slot="Mon 10:00"), "B": Event("B", barred_slots=("3",))})
    found = Availability.of(problem, slots)
    assert found.starts == {"A": frozenset({2}), "B": frozenset({1, 2})}


def test_optional_enrolments_make_no_clash():
    from timetabler.conflicts import conflict_graph

    problem = Problem([("ada", "A"), ("ada", "B"), ("ben", "B"), ("ben", "C")], optional={("ada", "B")})
    graph = conflict_graph(problem)
    assert sorted(graph.edges()) == [("B", "C")]
    assert graph.nodes["B"]["size"] == 2  # the optional attendee still needs a seat
