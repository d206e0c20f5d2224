"""The store through the real command: solve --publish and --keep LABEL, changes, history, forget.

The changes list is checked against a diff written here from the raw enrolment rows and
the two timetables that ``solve --json`` printed, sharing no code with
``timetabler.store.changes``. The invented data belong to Brackenmoor Institute, a
fictional college.
"""

from __future__ import annotations

import csv
import datetime as dt
import random
import re
from pathlib import Path

import pytest

from store_builders import EVENTS, late_changes as _late_changes, rows as _rows, write_csv as _write_csv, write_xlsx as _write_xlsx

from timetabler.store import Store
from timetabler.store.schema import SCHEMA_VERSION

def _stored(path: Path):
    with Store(path) as store:
        return store.inputs(), store.runs(), store.labels()


def _independent_diff(rows_a, rows_b, timetable_a, timetable_b):
    """From the raw rows and the two {event: slot label} timetables: moved events and per-attendee changes."""
    pairs_a, pairs_b = set(rows_a), set(rows_b)
    moved = {e: (timetable_a[e], timetable_b[e], sorted({a for a, x in pairs_b if x == e}))
             for e in set(timetable_a) & set(timetable_b) if timetable_a[e] != timetable_b[e]}
    added = {e for e in timetable_b if e not in timetable_a}
    removed = {e for e in timetable_a if e not in timetable_b}
    people = {}
    for attendee in {a for a, _ in pairs_a | pairs_b}:
        old = {e: timetable_a[e] for a, e in pairs_a if a == attendee and e in timetable_a}
        new = {e: timetable_b[e] for a, e in pairs_b if a == attendee and e in timetable_b}
        diff = {e: (old.get(e), new.get(e)) for e in set(old) | set(new) if old.get(e) != new.get(e)}
        if diff:
            people[attendee] = diff
    return moved, added, removed, people


def test_changes_match_an_independent_diff_of_the_timetables_and_enrolments(run_command, tmp_path):
    rows_a = _rows()
    first = run_command("solve", _write_csv(tmp_path / "autumn.csv", rows_a), "--slots", "6", "--time-limit", "3",
                        "--publish", "first", "--json")
    assert first.status == 0, first.stderr
    run_a = first.json()["runs"][0]
    rows_b = _late_changes(rows_a, run_a["assignment"], random.Random(5))
    second = run_command("solve", _write_csv(tmp_path / "late.csv", rows_b), "--slots", "6", "--time-limit", "3",
                         "--keep", "first", "--publish", "second", "--json")
    assert second.status == 0, second.stderr
    run_b = second.json()["runs"][0]
    label_a = {e: run_a["slot_labels"][n - 1] for e, n in run_a["assignment"].items()}
    label_b = {e: run_b["slot_labels"][n - 1] for e, n in run_b["assignment"].items()}
    moved, added, removed, people = _independent_diff(rows_a, rows_b, label_a, label_b)
    assert moved  # the forced clashes made the repair move something

    result = run_command("changes", "first", "second", "--json")
    assert result.status == 0, result.stderr
    doc = result.json()
    assert {m["event"]: (m["from"]["label"], m["to"]["label"], m["attendees"]) for m in doc["moved"]} == moved
    assert {m["event"] for m in doc["added"]} == added == {"BRK900"}
    assert {m["event"] for m in doc["removed"]} == removed == {EVENTS[-1]}
    got = {p["attendee"]: {e["event"]: (e["from"] and e["from"]["label"], e["to"] and e["to"]["label"])
                           for e in p["events"]} for p in doc["attendees"]}
    assert got == people
    # slot numbers in from/to agree with the labels
    for m in doc["moved"]:
        assert run_a["assignment"][m["event"]] == m["from"]["slot"]
        assert run_b["assignment"][m["event"]] == m["to"]["slot"]

    # the notification list in CSV has one row per attendee to tell, and one per attendee and change
    listed = run_command("changes", "first", "second", "--csv", tmp_path / "notices")
    assert listed.status == 0, listed.stderr
    assert "Write the notification list" not in listed.stdout  # no advice to do what was just done
    assert "Write the notification list" in run_command("changes", "first", "second").stdout
    with open(tmp_path / "notices" / "notices.csv", encoding="utf-8-sig") as fh:
        notices = list(csv.DictReader(fh))
    assert sorted(r["Attendee"] for r in notices) == sorted(people)
    with open(tmp_path / "notices" / "changes_by_attendee.csv", encoding="utf-8-sig") as fh:
        long_rows = list(csv.DictReader(fh))
    assert {(r["Attendee"], r["Event"]): (r["Old slot"] or None, r["New slot"] or None) for r in long_rows} == \
        {(a, e): v for a, d in people.items() for e, v in d.items()}

    # the workbook holds the same list
    from openpyxl import load_workbook

    assert run_command("changes", "first", "second", "--out", tmp_path / "notices.xlsx").status == 0
    wb = load_workbook(tmp_path / "notices.xlsx", read_only=True)
    values = list(wb["Notices"].iter_rows(values_only=True))
    assert sorted(r[0] for r in values[1:]) == sorted(people)


def _ics_entries(text: str) -> dict[str, dict]:
    """UID -> {SEQUENCE, DTSTART, STATUS} read from the iCalendar text by hand (RFC 5545 lines, unfolded)."""
    text = re.sub(r"\r\n[ \t]", "", text)
    out = {}
    for block in text.split("BEGIN:VEVENT")[1:]:
        fields = {}
        for line in block.split("END:VEVENT")[0].splitlines():
            name, _, value = line.partition(":")
            fields[name.split(";")[0]] = value
        out[fields["UID"]] = fields
    return out


def test_changes_ics_writes_the_affected_attendees_only_with_a_higher_sequence(run_command, tmp_path):
    start = dt.date(2027, 1, 11)
    slots = [(f"Day {d + 1} {half}", start + dt.timedelta(days=d), dt.time(9) if half == "AM" else dt.time(14))
             for d in range(3) for half in ("AM", "PM")]
    rows_a = _rows(seed=11, students=40)
    first = run_command("solve", _write_xlsx(tmp_path / "autumn.xlsx", rows_a, slots), "--time-limit", "3",
                        "--publish", "A", "--ics", tmp_path / "cal_a", "--json")
    assert first.status == 0, first.stderr
    rows_b = _late_changes(rows_a, first.json()["runs"][0]["assignment"], random.Random(2))
    # the same file name as before, as a registrar saving the updated workbook would
    (tmp_path / "v2").mkdir()
    second = run_command("solve", _write_xlsx(tmp_path / "v2" / "autumn.xlsx", rows_b, slots), "--time-limit", "3",
                         "--keep", "A", "--publish", "B", "--json")
    assert second.status == 0, second.stderr
    result = run_command("changes", "A", "B", "--ics", tmp_path / "cal_b", "--json")
    assert result.status == 0, result.stderr
    doc = result.json()
    affected = {p["attendee"] for p in doc["attendees"]}
    written = {p.stem for p in (tmp_path / "cal_b" / "attendees").glob("*.ics")}
    assert written == affected and affected
    assert not (tmp_path / "cal_b" / "session.ics").exists()
    run_b = second.json()["runs"][0]
    by_label = {label: (day, time) for label, day, time in slots}
    replaced = cancelled = 0
    for person in doc["attendees"]:
        old = _ics_entries((tmp_path / "cal_a" / "attendees" / f"{person['attendee']}.ics").read_text()) \
            if (tmp_path / "cal_a" / "attendees" / f"{person['attendee']}.ics").exists() else {}
        new = _ics_entries((tmp_path / "cal_b" / "attendees" / f"{person['attendee']}.ics").read_text())
        for uid, fields in new.items():
            if uid in old:  # the entry the attendee has: same UID, higher revision
                assert int(fields["SEQUENCE"]) > int(old[uid]["SEQUENCE"])
                replaced += 1
        for change in person["events"]:
            if change["to"] is not None:  # the new time, as the later version has it
                day, time = by_label[change["to"]["label"]]
                assert any(f["DTSTART"] == f"{day:%Y%m%d}T{time:%H%M%S}" and change["event"] in f["SUMMARY"]
                           and f["STATUS"] == "CONFIRMED" for f in new.values())
                assert run_b["slot_labels"][run_b["assignment"][change["event"]] - 1] == change["to"]["label"]
            elif change["event"] in first.json()["runs"][0]["assignment"]:
                assert any(f["STATUS"] == "CANCELLED" and change["event"] in f["SUMMARY"] for f in new.values())
                cancelled += 1
    assert replaced >= len(doc["moved"]) > 0 and cancelled > 0


@pytest.fixture
def small_csv(tmp_path) -> Path:
    return _write_csv(tmp_path / "week.csv", _rows())


def test_publish_is_refused_with_nothing_recorded(run_command, tmp_path, small_csv, private_store):
    cases = [
        (["--slots", "1", "--publish", "x"], "infeasible"),  # no clash-free timetable in one slot
        (["--slots", "5", "6", "--publish", "x"], "Choose one"),
        (["--fewest", "--slots", "6", "--publish", "x"], "--fewest"),
        (["--slots", "6", "--publish", "x", "--no-record"], "--no-record"),
        (["--slots", "6", "--publish", "   "], "label"),
    ]
    for extra, words in cases:
        result = run_command("solve", small_csv, "--time-limit", "2", *extra)
        assert result.status == 2, (extra, result.stderr)
        assert words in result.stderr, (extra, result.stderr)
        assert "Traceback" not in result.stderr
        assert not private_store.exists() or _stored(private_store) == ([], [], []), extra
    ok = run_command("solve", small_csv, "--slots", "6", "--time-limit", "2", "--publish", "week 1")
    assert ok.status == 0, ok.stderr
    before = _stored(private_store)
    taken = run_command("solve", small_csv, "--slots", "7", "--time-limit", "2", "--publish", "week 1")
    assert taken.status == 2 and "already published" in taken.stderr
    assert _stored(private_store) == before


def test_keep_label_repairs_exactly_as_keep_file(run_command, tmp_path, small_csv):
    first = run_command("solve", small_csv, "--slots", "6", "--time-limit", "2", "--repeatable", "--publish", "v1",
                        "--out", tmp_path / "v1.xlsx", "--json")
    assert first.status == 0, first.stderr
    rows_b = _late_changes(_rows(), first.json()["runs"][0]["assignment"], random.Random(1))
    late = _write_csv(tmp_path / "late.csv", rows_b)
    by_file = run_command("solve", late, "--slots", "6", "--time-limit", "2", "--repeatable", "--keep",
                          tmp_path / "v1.xlsx", "--json", "--no-record")
    by_label = run_command("solve", late, "--slots", "6", "--time-limit", "2", "--repeatable", "--keep", "v1",
                           "--json", "--no-record")
    assert by_file.status == by_label.status == 0, (by_file.stderr, by_label.stderr)
    a, b = by_file.json()["runs"][0], by_label.json()["runs"][0]
    assert a["assignment"] == b["assignment"] and a["moves"] == b["moves"] and a["moves"]
    unknown = run_command("solve", late, "--slots", "6", "--keep", "v9")
    assert unknown.status == 2 and "'v1'" in unknown.stderr and "v9" in unknown.stderr


def test_history_and_forget(run_command, small_csv, private_store):
    assert run_command("solve", small_csv, "--slots", "6", "--time-limit", "2", "--publish", "draft").status == 0
    assert run_command("solve", small_csv, "--slots", "7", "--time-limit", "2").status == 0
    doc = run_command("history", "--json").json()
    assert doc["store"] == str(private_store) and doc["schema_version"] == SCHEMA_VERSION == 3
    (stored,) = doc["inputs"]  # the same input read twice is stored once
    assert stored["attendees"] == len({a for a, _ in _rows()}) and stored["enrolments"] == len(set(_rows()))
    assert stored["runs"] == 2 and stored["published"] == ["draft"]
    assert [p["label"] for p in doc["published"]] == ["draft"]
    assert sorted(r["slots"] for r in doc["runs"]) == [6, 7]
    assert all(r["valid"] is True for r in doc["runs"])
    missing = run_command("forget", "nope")
    assert missing.status == 2 and "'draft'" in missing.stderr
    assert run_command("forget", "draft").status == 0
    doc = run_command("history", "--json").json()
    assert doc["published"] == [] and len(doc["runs"]) == 1 and len(doc["inputs"]) == 1
    assert run_command("forget", "--input", str(stored["input"])).status == 0
    assert run_command("history", "--json").json()["inputs"] == []
    with Store(private_store) as store:  # nothing of the attendees is left in the tables
        assert store.conn.execute("SELECT count(*) FROM input_enrolments").fetchone()[0] == 0
    assert run_command("forget").status == 2
    assert run_command("history", "--help").status == 0 and run_command("changes", "--help").status == 0


def test_changes_of_an_unknown_label_lists_the_known_ones(run_command, small_csv):
    assert run_command("solve", small_csv, "--slots", "6", "--time-limit", "2", "--publish", "one").status == 0
    result = run_command("changes", "one", "two")
    assert result.status == 2 and "'one'" in result.stderr and "Traceback" not in result.stderr


def test_a_store_that_cannot_be_opened_costs_only_the_record(run_command, tmp_path, small_csv):
    blocked = tmp_path / "a file, not a folder"
    blocked.write_text("x")
    where = blocked / "store.sqlite3"
    plain = run_command("solve", small_csv, "--slots", "6", "--time-limit", "2", "--store", where, "--json")
    assert plain.status == 0 and plain.json()["runs"][0]["status"] in ("optimal", "feasible")
    assert "warning: this run was not recorded" in plain.stderr
    assert "[yellow]" not in plain.stderr  # the console reads no markup: a style must not be typed as text
    publishing = run_command("solve", small_csv, "--slots", "6", "--time-limit", "2", "--store", where,
                             "--publish", "x")
    assert publishing.status == 2 and "cannot be opened" in publishing.stderr
