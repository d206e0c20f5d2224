"""CSV folder, iCalendar files, PNG chart, pseudonyms and safe writing."""

from __future__ import annotations

import csv
import datetime as dt
import os

import numpy as np
import pytest
from icalendar import Calendar
from openpyxl import load_workbook

from export_cases import BruteRun, comparison_of, count_report, dated_slots, small_problem, solve_run
from timetabler.errors import InputError
from timetabler.export import safe_write
from timetabler.export.count_chart import write_count_chart
from timetabler.export.csv_folder import guard_text, write_csv_folder
from timetabler.export.icalendar_files import write_calendars
from timetabler.export.pseudonyms import Pseudonyms, load_or_create_key, pseudonymise
from timetabler.export.workbook import write_workbook
from timetabler.model import generic_slots


@pytest.fixture(scope="module")
def case():
    problem = small_problem("resits.xlsx")
    run = solve_run(problem, dated_slots(5))
    assert run.status in ("optimal", "feasible")
    return problem, run


# --------------------------------------------------------------------------- CSV


def test_csv_folder_matches_the_workbook(tmp_path, case):
    problem, run = case
    counts = count_report(problem, [4, 5])
    files = write_csv_folder(tmp_path / "lists", problem=problem, runs=[run], counts=counts)
    names = sorted(p.name for p in files)
    assert names == sorted(["comparison.csv", "counts.csv", "count-groups.csv", "what-if.csv", "events.csv",
                            "personal-timetables.csv", "seats.csv", "rooms.csv", "attendee-load.csv"])
    book = load_workbook(write_workbook(tmp_path / "b.xlsx", problem=problem, runs=[run], counts=counts))
    for stem, sheet in (("events", "Events"), ("personal-timetables", "Personal timetables"), ("seats", "Seats"),
                        ("count-groups", "Count groups")):
        raw = (tmp_path / "lists" / f"{stem}.csv").read_bytes()
        assert raw.startswith(b"\xef\xbb\xbf")  # UTF-8 with a byte-order mark
        with open(tmp_path / "lists" / f"{stem}.csv", encoding="utf-8-sig", newline="") as fh:
            from_csv = list(csv.reader(fh))
        from_book = list(book[sheet].iter_rows(values_only=True))
        assert from_csv[0] == list(from_book[0])
        assert len(from_csv) == len(from_book)
        for a, b in zip(from_csv[1:], from_book[1:]):
            for x, y in zip(a, b):
                if isinstance(y, dt.datetime):
                    y = y.date().isoformat()
                elif isinstance(y, dt.time):
                    y = y.strftime("%H:%M")
                if isinstance(y, (int, float)) and not isinstance(y, bool):
                    assert float(x) == pytest.approx(y, rel=1e-12)  # a spreadsheet keeps 15 significant digits
                else:
                    assert x == ("" if y is None else str(y))
    with open(tmp_path / "lists" / "comparison.csv", encoding="utf-8-sig") as fh:
        flat = list(csv.DictReader(fh))  # one row per slot count; the workbook turns it on its side
    side = comparison_of(book["Comparison"])
    assert [int(r["Slots"]) for r in flat] == [r["Slots"] for r in side]
    for a, b in zip(flat, side):
        assert (a["Status"], a["Validator"], a["Clash-free timetables"]) == (b["Status"], b["Validator"], b["Clash-free timetables"])
        assert int(a["Penalty"]) == b["Penalty"] and int(a["Peak seats"]) == b["Peak seats"]
    with open(tmp_path / "lists" / "counts.csv", encoding="utf-8-sig") as fh:
        rows = list(csv.DictReader(fh))
    assert [int(r["Clash-free timetables"]) for r in rows] == [c.timetables for c in counts.counts]


def test_csv_guards_formula_like_text():
    assert guard_text("=HYPERLINK(1)") == "'=HYPERLINK(1)"
    assert guard_text("@cmd") == "'@cmd"
    assert guard_text("-5") == "-5" and guard_text("-x") == "'-x"
    assert guard_text("MAT101") == "MAT101"


# --------------------------------------------------------------------------- iCalendar


def test_icalendar_files_parse_back_with_the_icalendar_library(tmp_path, case):
    problem, run = case
    files = write_calendars(tmp_path / "cal", problem=problem, run=run)
    assert len(files) == 1 + len(problem.attendees)
    session = Calendar.from_ical((tmp_path / "cal" / "session.ics").read_bytes())
    events = list(session.walk("VEVENT"))
    assert sorted(str(e["summary"]) for e in events) == sorted(problem.events)
    for e in events:
        slot = run.slot_list[run.assignment[str(e["summary"])] - 1]
        start = e.decoded("dtstart")
        assert start == dt.datetime.combine(slot.date, slot.start)
        assert e.decoded("dtend") - start == dt.timedelta(minutes=slot.length_minutes)
        assert str(e["location"]) == ", ".join(n for n, _ in run.rooms[str(e["summary"])])
    assert len({str(e["uid"]) for e in events}) == len(events)
    # the revision number grows with the time of writing, so a later publication wins (RFC 5545 3.8.7.4)
    from timetabler.export.icalendar_files import revision
    stamp = events[0].decoded("dtstamp")
    assert {int(e["sequence"]) for e in events} == {revision(stamp)} and revision(stamp) > 0
    assert revision(stamp + dt.timedelta(minutes=5)) == revision(stamp) + 5
    for attendee, codes in problem.events_by_attendee().items():
        mine = Calendar.from_ical((tmp_path / "cal" / "attendees" / f"{attendee}.ics").read_bytes())
        assert sorted(str(e["summary"]) for e in mine.walk("VEVENT")) == sorted(codes)


def test_icalendar_with_a_time_zone_carries_vtimezone(tmp_path, case):
    problem, run = case
    write_calendars(tmp_path / "cal", problem=problem, run=run, timezone="Europe/London")
    for path in [tmp_path / "cal" / "session.ics", tmp_path / "cal" / "attendees" / "HV-S0001.ics"]:
        cal = Calendar.from_ical(path.read_bytes())
        assert [str(tz["tzid"]) for tz in cal.walk("VTIMEZONE")] == ["Europe/London"]
        start = next(iter(cal.walk("VEVENT"))).decoded("dtstart")
        assert start.utcoffset() == dt.timedelta(hours=1)  # British Summer Time in June


def test_icalendar_needs_dated_slots(tmp_path, case):
    problem, run = case
    undated = BruteRun(run.slots, generic_slots(run.slots, 2), run.status, dict(run.assignment), dict(run.rooms))
    with pytest.raises(InputError, match="need a date for every slot"):
        write_calendars(tmp_path / "cal", problem=problem, run=undated)


# --------------------------------------------------------------------------- chart


def test_count_chart_renders_a_png_that_is_not_blank(tmp_path, case):
    import matplotlib.image as mpimg

    problem, _ = case
    counts = count_report(problem, [3, 4, 5, 6, 7])
    path = write_count_chart(tmp_path / "counts.png", counts)
    assert path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    pixels = mpimg.imread(path)
    assert pixels.shape[:2] == (675, 1200)
    grey = pixels[..., :3].mean(axis=2)
    assert (grey < 0.9).mean() > 0.01  # ink: axes, labels, the line
    assert np.unique(pixels[..., :3].reshape(-1, 3), axis=0).shape[0] > 20


def test_count_chart_refuses_when_nothing_is_positive(tmp_path, case):
    problem, _ = case
    with pytest.raises(InputError, match="no positive count"):
        write_count_chart(tmp_path / "c.png", count_report(problem, [1, 2]))


# --------------------------------------------------------------------------- pseudonyms


def test_pseudonyms_are_stable_for_a_key_and_differ_across_keys(tmp_path):
    key, file, created = load_or_create_key(tmp_path / "k")
    assert created and (file.stat().st_mode & 0o777) == 0o600
    again, _, created_again = load_or_create_key(tmp_path / "k")
    assert again == key and not created_again
    a, b, other = Pseudonyms(key), Pseudonyms(again), Pseudonyms(os.urandom(32))
    ids = [f"HV-S{i:04d}" for i in range(1, 2001)]
    assert [a(x) for x in ids] == [b(x) for x in ids]
    assert len(set(a.mapping(ids).values())) == len(ids)
    assert sum(a(x) == other(x) for x in ids) == 0


def test_no_attendee_identifier_survives_pseudonymising(tmp_path, case):
    from timetabler.cli.output_options import publish

    problem, run = case
    infeasible = solve_run(problem, dated_slots(2))
    infeasible.reason = (infeasible.reason or "") + " (HV-S0001 and HV-S0012 share MAT101)"
    written = publish({"out": str(tmp_path / "p.xlsx"), "csv": str(tmp_path / "csv"), "ics": str(tmp_path / "ics"),
                       "pseudonyms": True, "pseudonym_key": str(tmp_path / "key")},
                      problem=problem, runs=[run, infeasible], quiet=True)
    assert written
    blobs = []
    for path in written:
        if path.suffix == ".xlsx":
            wb = load_workbook(path)
            blobs += [str(v) for ws in wb for row in ws.iter_rows(values_only=True) for v in row if v is not None]
        else:
            blobs.append(path.read_text(encoding="utf-8-sig"))
            blobs.append(path.name)
    text = "\n".join(blobs)
    for attendee in problem.attendees:
        assert attendee not in text
    key, _, _ = load_or_create_key(tmp_path / "key")
    assert Pseudonyms(key)("HV-S0001") in text  # the reason names the pseudonym instead


def test_pseudonymise_keeps_the_timetable(case):
    problem, run = case
    new_problem, (new_run,), _ = pseudonymise(problem, [run], Pseudonyms(b"k" * 32))
    assert new_run.assignment == run.assignment
    assert sorted(e for _, e in new_problem.enrolments) == sorted(e for _, e in problem.enrolments)
    assert problem.enrolments[0][0] == "HV-S0001"  # the original is not changed


# --------------------------------------------------------------------------- safe writing


def test_never_writes_over_the_input(tmp_path, case):
    problem, run = case
    source = tmp_path / "enrolments.xlsx"
    source.write_bytes(b"the registrar's file")
    problem = small_problem(str(source))
    with pytest.raises(InputError, match="never writes over its input"):
        write_workbook(source, problem=problem, runs=[run])
    with pytest.raises(InputError, match="never writes over its input"):
        write_workbook(tmp_path / "." / "enrolments.xlsx", problem=problem, runs=[run])
    assert source.read_bytes() == b"the registrar's file"


def test_a_failed_write_leaves_the_old_file_and_no_litter(tmp_path, monkeypatch, case):
    problem, run = case
    target = tmp_path / "out.xlsx"
    target.write_bytes(b"previous workbook")

    def refuse(src, dst):
        raise PermissionError(13, "Permission denied")

    monkeypatch.setattr(safe_write.os, "replace", refuse)
    with pytest.raises(InputError) as info:
        write_workbook(target, problem=problem, runs=[run])
    message = str(info.value)
    assert str(target) in message and "open in another program" in message
    assert target.read_bytes() == b"previous workbook"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.xlsx"]


def test_a_target_open_in_a_spreadsheet_program_is_named(tmp_path, case):
    problem, run = case
    (tmp_path / ".~lock.out.xlsx#").write_text("someone,host")
    with pytest.raises(InputError, match="open in a spreadsheet program"):
        write_workbook(tmp_path / "out.xlsx", problem=problem, runs=[run])
    with pytest.raises(InputError, match="should end in .xlsx"):
        write_workbook(tmp_path / "out.xls", problem=problem, runs=[run])
    with pytest.raises(InputError, match="does not exist"):
        write_workbook(tmp_path / "nowhere" / "out.xlsx", problem=problem, runs=[run])
