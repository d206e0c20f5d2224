"""The people's rules through the real command: the reasons a registrar reads name the people.

Workbooks written here for the fictional Tallowmere Rowing Club (invented members). What the
tests expect is worked out by hand from the rows written below, never read from the tool.
"""

from __future__ import annotations

import datetime as dt

from intake_builders import write_xlsx

MONDAY = dt.date(2027, 4, 5)
SLOTS = [["Slot", "Date", "Start", "Length"]] + [
    [f"{(MONDAY + dt.timedelta(days=d)):%a} {h:02d}:00", MONDAY + dt.timedelta(days=d), f"{h:02d}:00", 60]
    for d in range(2) for h in (9, 10)]


def workbook(tmp_path, attendees, enrolments=None, events=None):
    sheets = {"Enrolments": [["Member", "Meeting", "Attendance"]] + (enrolments or [
        ["Ines Farrow", "CREW", None], ["Tobin Ash", "CREW", None], ["Tobin Ash", "KIT", None],
        ["Wren Hale", "KIT", "optional"]]),
        "Slots": SLOTS, "Attendees": [["Member", "Unavailable slots", "Extra time", "Own room"]] + attendees}
    if events:
        sheets["Events"] = events
    return write_xlsx(tmp_path / "club.xlsx", sheets)


def test_a_member_who_can_make_no_slot_is_named_with_the_slots(tmp_path, run_command):
    # Ines cannot come on Monday nor on Tuesday (two dates): CREW has no slot left
    path = workbook(tmp_path, [["Ines Farrow", "2027-04-05; 2027-04-06", None, None]])
    result = run_command("solve", path, "--slots", "4", "--json", "--no-record", "--time-limit", "5")
    assert result.status == 0, result.stderr
    run = result.json()["runs"][0]
    assert run["status"] == "infeasible"
    assert run["reason"].startswith("Ines Farrow cannot make any slot left for CREW: slots 1 (Mon 09:00), "
                                    "2 (Mon 10:00), 3 (Tue 09:00), 4 (Tue 10:00)")
    shown = run_command("solve", path, "--slots", "4", "--no-record", "--time-limit", "5")
    assert "Ines Farrow cannot make any slot left for CREW" in " ".join((shown.stdout + shown.stderr).split())


def test_an_optional_member_is_never_the_reason_and_the_timetable_keeps_the_required_free(tmp_path, run_command):
    # Wren is optional at KIT and away on Monday: KIT may still go on Monday; Tobin (required at both) is away
    # at 09:00 on both days, so CREW and KIT take the two 10:00 slots
    path = workbook(tmp_path, [["Wren Hale", "2027-04-05", None, None], ["Tobin Ash", "Mon 09:00; Tue 09:00", None, None]])
    result = run_command("solve", path, "--slots", "4", "--json", "--no-record", "--time-limit", "5")
    assert result.status == 0, result.stderr
    run = result.json()["runs"][0]
    assert run["status"] in ("optimal", "feasible")
    labels = {code: run["slot_labels"][s - 1] for code, s in run["assignment"].items()}
    assert {labels["CREW"], labels["KIT"]} == {"Mon 10:00", "Tue 10:00"}
    # the optional-missed goal puts KIT on Tuesday, when Wren can come
    assert labels["KIT"] == "Tue 10:00"


def test_a_quorum_no_slot_meets_names_the_quorum(tmp_path, run_command):
    events = [["Event", "Quorum"], ["CREW", 2]]
    path = workbook(tmp_path, [["Ines Farrow", "Mon 09:00; Mon 10:00"], ["Tobin Ash", "Tue 09:00; Tue 10:00"]],
                    enrolments=[["Ines Farrow", "CREW", "optional"], ["Tobin Ash", "CREW", "optional"]], events=events)
    result = run_command("solve", path, "--slots", "4", "--json", "--no-record", "--time-limit", "5")
    assert result.status == 0, result.stderr
    run = result.json()["runs"][0]
    assert run["status"] == "infeasible"
    assert "CREW needs 2 of its attendees free; at most 1 can make any one slot" in run["reason"]


def test_count_names_the_member_whose_absence_costs_most_and_what_it_leaves_out(tmp_path, run_command):
    # CREW (Ines, Tobin) and KIT (Tobin, Wren optional) clash through Tobin, who cannot make slot 1:
    # both go in slots 2-4, apart: 3 × 2 = 6 timetables; with Tobin free, 4 × 3 = 12 (a factor of 2)
    path = workbook(tmp_path, [["Tobin Ash", "Mon 09:00", None, None]])
    result = run_command("count", path, "--slots", "4", "--json")
    assert result.status == 0, result.stderr
    doc = result.json()
    assert int(doc["counts"][0]["timetables"]) == 6 and doc["counts"][0]["exact"]
    assert [(d["attendee"], d["gain"]) for d in doc["most_limiting_people"]] == [("Tobin Ash", 2.0)]
    assert doc["not_counted"] is None
    shown = " ".join(run_command("count", path, "--slots", "4").stdout.split())
    assert "Tobin Ash: × 2.00" in shown and "leave out" not in shown
    # a rules sheet is left to the solver, and the count says so
    path = write_xlsx(tmp_path / "ruled.xlsx", {
        "Enrolments": [["Member", "Meeting"], ["Ines Farrow", "CREW"], ["Tobin Ash", "CREW"], ["Tobin Ash", "KIT"]],
        "Slots": SLOTS, "Rules": [["Rule", "First event", "Other events"], ["before", "KIT", "CREW"]]})
    doc = run_command("count", path, "--slots", "4", "--json").json()
    assert doc["not_counted"] == "the 1 rule of the rules sheet"
    shown = " ".join(run_command("count", path, "--slots", "4").stdout.split())
    assert "Counts leave out the 1 rule of the rules sheet" in shown


def test_inspect_shows_what_the_file_says_of_people(tmp_path, run_command):
    # the default club rows: Wren optional at KIT; Ines cannot make Monday; no extra time, no quorum
    path = workbook(tmp_path, [["Ines Farrow", "2027-04-05", None, None], ["Tobin Ash", None, "25", None]])
    doc = run_command("inspect", path, "--json").json()
    assert doc["people"]["Optional enrolments"] == 1
    assert doc["people"]["Attendees in the Attendees sheet"] == 2
    assert doc["people"]["Attendees with slots they cannot make"] == 1
    assert doc["people"]["Attendees with extra time"] == 1
    shown = " ".join(run_command("inspect", path).stdout.split())
    assert "Optional enrolments 1" in shown and "Attendees with extra time 1" in shown


def test_the_fewest_slots_of_the_clashes_alone_is_a_lower_bound_when_people_matter(tmp_path, run_command):
    # CREW and KIT clash through Tobin: 2 slots by the clashes; Ines (CREW) cannot come on Monday, the
    # first two slots, so 2 slots have no timetable at all (counted by hand: CREW has no slot)
    path = workbook(tmp_path, [["Ines Farrow", "2027-04-05", None, None]])
    doc = run_command("count", path, "--slots", "2", "--json").json()
    assert doc["counts"][0]["timetables"] == "0" and doc["counts"][0]["exact"]
    # a timetable of 2 slots would be one of 3: so at least 3, not proven (3 was not counted)
    assert doc["fewest_slots"]["slots"] == 3 and doc["fewest_slots"]["at_least"] is True
    assert "2 slots have no timetable in which every required attendee can come" in doc["fewest_slots"]["reason"]
    assert "the clashes alone need 2" in doc["fewest_slots"]["reason"]
    shown = " ".join(run_command("count", path, "--slots", "2").stdout.split())
    assert "Fewest slots: at least 3 — 2 slots have no timetable" in shown
    # with 3 and 4 counted too: 3 slots put CREW in slot 3 (Tuesday) and KIT in 1 or 2: 2 ways, so 3 exactly
    doc = run_command("count", path, "--slots", "2-4", "--json").json()
    assert [c["timetables"] for c in doc["counts"]] == ["0", "2", str(2 * 3)]  # 4 slots: CREW 3 or 4, KIT any other
    assert doc["fewest_slots"]["slots"] == 3 and doc["fewest_slots"]["at_least"] is False
    # the clashes alone say 2: with no people the fewest is 2, exactly
    plain = workbook(tmp_path, [])
    doc = run_command("count", plain, "--slots", "2-4", "--json").json()
    assert doc["fewest_slots"]["slots"] == 2
