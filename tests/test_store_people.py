"""The store keeps what the people's rules need: Attendees rows, optional attendance, quorums.

A stored input read back must schedule exactly as the file did: an attendee's unavailable
slots, extra time and own room, the optional enrolments and the events' quorums all come
back, and the input's fingerprint does not depend on the order a set happens to hold.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

from timetabler.model import Attendee, Event, Problem, generic_slots
from timetabler.scheduling import SolveRun
from timetabler.scheduling.validator import validate
from timetabler.store import Store
from timetabler.store.records import normalised_input


def _round() -> Problem:
    # Fernhollow Allotment Society (invented): two committees and a board
    enrolments = [("Ivo Brandt", "GARDENS"), ("Ivo Brandt", "BOARD"), ("Mira Kell", "GARDENS"),
                  ("Mira Kell", "TOOLS"), ("Ossian Pell", "TOOLS"), ("Ossian Pell", "BOARD")]
    events = {"GARDENS": Event("GARDENS"), "TOOLS": Event("TOOLS", quorum=2), "BOARD": Event("BOARD")}
    problem = Problem(enrolments, events=events, slots=generic_slots(3), source="round.xlsx")
    problem.people = {"Ivo Brandt": Attendee("Ivo Brandt", unavailable=("1",), extra_time_percent=25),
                      "Mira Kell": Attendee("Mira Kell", own_room_type="small")}
    problem.optional = {("Ossian Pell", "BOARD"), ("Mira Kell", "GARDENS")}
    return problem


def test_people_optional_and_quorum_come_back_from_the_store(tmp_path):
    problem = _round()
    run = SolveRun(slots=3, slot_list=generic_slots(3), status="optimal", assignment={"GARDENS": 2, "TOOLS": 3, "BOARD": 3})
    with Store(tmp_path / "store.sqlite3") as store:
        store.record_solve(problem, [run], {"seed": 0}, publish=(3, "round 1"))
        back = store.problem(store.inputs()[0].id)
    assert back.people == problem.people
    assert back.optional == problem.optional
    assert back.events["TOOLS"].quorum == 2
    # the stored problem judges a timetable as the original does: Ivo cannot make slot 1
    for assignment in ({"GARDENS": 1, "TOOLS": 2, "BOARD": 3}, {"GARDENS": 2, "TOOLS": 1, "BOARD": 3}):
        ours, theirs = validate(problem, generic_slots(3), assignment), validate(back, generic_slots(3), assignment)
        assert ours.violations == theirs.violations
        assert ours.soft == theirs.soft
    assert not validate(back, generic_slots(3), {"GARDENS": 1, "TOOLS": 2, "BOARD": 3}).ok


def test_the_fingerprint_does_not_depend_on_hash_order():
    # the optional enrolments are a set: two interpreters with different hash seeds must store one input
    code = (f"import json, sys; sys.path.insert(0, {str(Path(__file__).parent)!r}); from test_store_people import _round; "
            "from timetabler.store.records import normalised_input; "
            "print(json.dumps(normalised_input(_round()), sort_keys=True))")
    outs = {subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True,
                           env={"PYTHONHASHSEED": seed, "PATH": ""}).stdout for seed in ("1", "2", "3")}
    assert len(outs) == 1
    assert normalised_input(_round())["problem"]["optional"] == [["Mira Kell", "GARDENS"], ["Ossian Pell", "BOARD"]]


def test_change_calendars_give_an_attendee_with_extra_time_their_own_end(tmp_path):
    import datetime as dt

    from timetabler.export.change_calendars import write_change_calendars
    from timetabler.model import Slot
    from timetabler.store.changes import changes_between

    slots = [Slot("Mon AM", date=dt.date(2027, 6, 7), start=dt.time(9), length_minutes=180),
             Slot("Mon PM", date=dt.date(2027, 6, 7), start=dt.time(14), length_minutes=180)]
    enrolments = [("Ivo Brandt", "SOIL"), ("Mira Kell", "SOIL")]
    problem = Problem(enrolments, events={"SOIL": Event("SOIL", duration_minutes=120)}, slots=slots, source="exams.xlsx")
    problem.people = {"Ivo Brandt": Attendee("Ivo Brandt", extra_time_percent=50)}
    with Store(tmp_path / "store.sqlite3") as store:
        for label, where in (("v1", 1), ("v2", 2)):
            run = SolveRun(slots=2, slot_list=slots, status="optimal", assignment={"SOIL": where})
            store.record_solve(problem, [run], {"seed": 0}, publish=(2, label))
        before, after = store.published_version("v1"), store.published_version("v2")
    assert after.extra_time == {"Ivo Brandt": 50}
    written = write_change_calendars(tmp_path / "cal", before=before, after=after,
                                     changes=changes_between(before, after))
    ends = {}
    for path in written:
        text = path.read_text()
        confirmed = text.split("STATUS:CONFIRMED")[0].rsplit("BEGIN:VEVENT", 1)[1]
        ends[path.stem] = [line for line in confirmed.splitlines() if line.startswith("DTEND")][0]
    # 120 minutes from 14:00; with 50 % extra time 180 minutes (RFC 5545 DTEND, floating local time)
    assert ends == {"Ivo_Brandt": "DTEND:20270607T170000", "Mira_Kell": "DTEND:20270607T160000"}


def test_own_rooms_are_kept_and_sent_in_the_change_calendars(tmp_path):
    import datetime as dt

    from timetabler.export.change_calendars import write_change_calendars
    from timetabler.model import Slot
    from timetabler.store.changes import changes_between

    slots = [Slot("Mon AM", date=dt.date(2027, 6, 7), start=dt.time(9), length_minutes=180),
             Slot("Mon PM", date=dt.date(2027, 6, 7), start=dt.time(14), length_minutes=180)]
    problem = Problem([("Ivo Brandt", "SOIL"), ("Mira Kell", "SOIL")], events={"SOIL": Event("SOIL")}, slots=slots,
                      source="exams.xlsx")
    problem.people = {"Mira Kell": Attendee("Mira Kell", own_room_type="Quiet")}
    with Store(tmp_path / "store.sqlite3") as store:
        for label, where in (("v1", 1), ("v2", 2)):
            run = SolveRun(slots=2, slot_list=slots, status="optimal", assignment={"SOIL": where},
                           rooms={"SOIL": [("Great Barn", 1)]}, own_rooms={("Mira Kell", "SOIL"): "Hayloft"})
            store.record_solve(problem, [run], {"seed": 0}, publish=(2, label))
        before, after = store.published_version("v1"), store.published_version("v2")
    assert after.own_rooms == {("Mira Kell", "SOIL"): "Hayloft"}
    written = write_change_calendars(tmp_path / "cal", before=before, after=after,
                                     changes=changes_between(before, after))
    where = {p.stem: [line for line in p.read_text().splitlines() if line.startswith("LOCATION")] for p in written}
    assert where["Mira_Kell"] == ["LOCATION:Hayloft"]  # her own room, not the event's
    assert where["Ivo_Brandt"] == ["LOCATION:Great Barn"]


def test_a_store_of_version_2_upgrades_to_keep_own_rooms(tmp_path):
    import sqlite3

    from timetabler.store.schema import SCHEMA_VERSION

    path = tmp_path / "v2.sqlite3"
    problem = _round()
    run = SolveRun(slots=3, slot_list=generic_slots(3), status="optimal", assignment={"GARDENS": 2, "TOOLS": 3, "BOARD": 3})
    with Store(path) as store:
        store.record_solve(problem, [run], {"seed": 0}, publish=(3, "round 1"))
    # what a version-2 file holds: the same tables without run_own_rooms (version 3 added only that table)
    conn = sqlite3.connect(path)
    conn.execute("DROP TABLE run_own_rooms")
    conn.execute("PRAGMA user_version = 2")
    conn.commit()
    conn.close()
    with Store(path) as store:
        assert store.version == SCHEMA_VERSION == 3
        assert store.published_version("round 1").assignment == run.assignment
        assert store.published_version("round 1").own_rooms == {}
        again = SolveRun(slots=3, slot_list=generic_slots(3), status="optimal", assignment=run.assignment,
                         own_rooms={("Mira Kell", "TOOLS"): "Snug"})
        store.record_solve(problem, [again], {"seed": 1}, publish=(3, "round 2"))
        assert store.published_version("round 2").own_rooms == {("Mira Kell", "TOOLS"): "Snug"}
        assert store.integrity() == "ok"
