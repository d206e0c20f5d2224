"""Repair on the web page: keep an earlier timetable, move as few events as possible, list every move.

Driven through the ASGI test client as a registrar would use the page: upload enrolments,
solve, download the workbook, upload changed enrolments (a late enrolment), solve again
with the downloaded workbook as the earlier timetable. The moves the page lists are checked
against the two timetables read independently (the earlier one from the workbook with
openpyxl, the new one from the page's grid), and their number against the fewest moves any
clash-free timetable needs, found by trying every assignment of the small instance.
"""

from __future__ import annotations

import io
import itertools
import re
import time

import openpyxl
import pytest
from starlette.testclient import TestClient

from timetabler.web.app import WebSettings, create_app

pytestmark = pytest.mark.filterwarnings("ignore::DeprecationWarning")

BASE = "http://127.0.0.1:8765"
SAME = {"origin": BASE}
SLOTS = 4

# Harrowgate Vale College, a short resit week: six papers, a handful of students.
ENROLMENTS = [
    ("HV-S0001", "HVM101"), ("HV-S0001", "HVM102"),
    ("HV-S0002", "HVM102"), ("HV-S0002", "HVM103"),
    ("HV-S0003", "HVM101"), ("HV-S0003", "HVM103"),
    ("HV-S0004", "HVP201"), ("HV-S0004", "HVP202"),
    ("HV-S0005", "HVP202"), ("HV-S0005", "HVC301"),
    ("HV-S0006", "HVM101"), ("HV-S0006", "HVC301"),
]
EVENTS = sorted({e for _, e in ENROLMENTS})

# Every soft goal off except moves, so the best repair is exactly the one with the fewest moves.
ONLY_MOVES = {f"weight_{name}": "0" for name in ("back_to_back", "overnight", "same_day", "proximity", "large_late",
                                                  "preferred_slot", "penalised_slot", "room_split", "preferred_room",
                                                  "penalised_room")}
ONLY_MOVES["weight_moved"] = "20"


def as_csv(pairs) -> bytes:
    return ("Student,Exam\n" + "".join(f"{a},{e}\n" for a, e in pairs)).encode()


@pytest.fixture
def client():
    with TestClient(create_app(WebSettings(count_budget_seconds=5.0)), base_url=BASE) as c:
        yield c


def upload(client, name: str, data: bytes) -> str:
    r = client.post("/upload", files={"file": (name, io.BytesIO(data), "application/octet-stream")},
                    headers=SAME, follow_redirects=False)
    assert r.status_code == 303, r.text[:300]
    token = r.headers["location"].rsplit("/", 1)[1]
    assert client.get(f"/files/{token}").status_code == 200  # the overview reads the file
    return token


def solve(client, token: str, earlier: tuple[str, bytes] | None = None, slots: int = SLOTS, **extra):
    form = {"slots": [str(slots)], "sessions_per_day": "2", "time_limit": "10", **extra}
    files = {"earlier": (earlier[0], io.BytesIO(earlier[1]), "application/octet-stream")} if earlier else \
        {"earlier": ("", io.BytesIO(b""), "application/octet-stream")}  # a browser sends an empty part
    return client.post(f"/files/{token}/solve", data=form, files=files, headers=SAME, follow_redirects=False)


def solved(client, token: str) -> dict:
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        doc = client.get(f"/files/{token}/solving.json").json()
        if doc["state"] not in ("running", "starting"):
            assert doc["state"] == "finished", doc
            return doc
        time.sleep(0.1)
    raise AssertionError("the solve did not finish in time")


def grid_of(page: str) -> dict[str, int]:
    """Event -> slot number, read from the page's grid (slot heads 'Slot N')."""
    grid = re.search(r'<table class="grid" id="grid">(.*?)</table>', page, re.S).group(1)
    placed = {}
    for number, cell in re.findall(r'<td><div class="slot-head">Slot (\d+).*?</div>(.*?)</td>', grid, re.S):
        for code in re.findall(r'<span class="code"[^>]*>([^<]+)</span>', cell):
            placed[code] = int(number)
    return placed


def moves_of(page: str) -> set[tuple[str, str, str]]:
    table = re.search(r'<table class="moves" id="moves">(.*?)</table>', page, re.S)
    if table is None:
        return set()
    rows = re.findall(r'<tr><td class="code">([^<]+)</td><td>[^<]*</td><td>([^<]+)</td><td>([^<]+)</td><td class="num">\d+</td></tr>',
                      table.group(1))
    assert len(rows) == table.group(1).count('<td class="code">')  # every row read
    return set(rows)


def workbook_assignment(data: bytes) -> dict[str, int]:
    """Event -> slot number from the Events sheet of a published workbook, read with openpyxl only."""
    book = openpyxl.load_workbook(io.BytesIO(data), read_only=True)
    sheet = book["Events"] if "Events" in book.sheetnames else next(s for s in book.worksheets if s.title.startswith("Events"))
    rows = [list(r) for r in sheet.iter_rows(values_only=True)]
    head_at = next(i for i, r in enumerate(rows) if "Event" in r and "Slot" in r)
    head = rows[head_at]
    ev, sl = head.index("Event"), head.index("Slot")
    out = {}
    for r in rows[head_at + 1:]:
        if r[ev] is None or r[sl] is None:
            continue
        out[str(r[ev])] = int(re.search(r"\d+", str(r[sl])).group())
    return out


def clash_free(assignment: dict[str, int], pairs) -> bool:
    """Directly from the enrolments: nobody has two events in one slot."""
    seen = set()
    for student, event in pairs:
        key = (student, assignment[event])
        if key in seen:
            return False
        seen.add(key)
    return True


def fewest_moves(earlier: dict[str, int], pairs, k: int) -> int:
    """The fewest events any clash-free k-slot timetable moves, by trying all k^n assignments (4^6 = 4096)."""
    events = sorted({e for _, e in pairs})
    best = len(events)
    for slots in itertools.product(range(1, k + 1), repeat=len(events)):
        assignment = dict(zip(events, slots))
        if clash_free(assignment, pairs):
            best = min(best, sum(assignment[e] != earlier.get(e) for e in events if e in earlier))
    return best


def test_a_late_enrolment_is_repaired_with_the_fewest_moves_and_every_move_listed(client):
    first = upload(client, "resits.csv", as_csv(ENROLMENTS))
    assert solve(client, first).status_code == 303
    assert solved(client, first)["slots"][0]["status"] in ("optimal", "feasible")
    page = client.get(f"/files/{first}/timetable").text
    assert 'id="moves"' not in page and 'id="no-moves"' not in page  # no earlier timetable, no moves section
    workbook = client.get(f"/files/{first}/download/timetable.xlsx")
    assert workbook.status_code == 200
    earlier = workbook_assignment(workbook.content)
    assert earlier == grid_of(page) and sorted(earlier) == EVENTS
    assert clash_free(earlier, ENROLMENTS)

    # A late enrolment: a student now sits two papers the earlier timetable put in one slot.
    together = next((a, b) for a, b in itertools.combinations(EVENTS, 2) if earlier[a] == earlier[b])
    changed = ENROLMENTS + [("HV-S0099", together[0]), ("HV-S0099", together[1])]
    assert not clash_free(earlier, changed)
    second = upload(client, "resits-late.csv", as_csv(changed))
    r = solve(client, second, earlier=("published-timetable.xlsx", workbook.content), **ONLY_MOVES)
    assert r.status_code == 303, r.text[:500]
    doc = solved(client, second)
    assert doc["slots"][0]["status"] == "optimal"

    page = client.get(f"/files/{second}/timetable").text
    now = grid_of(page)
    assert sorted(now) == EVENTS and clash_free(now, changed)
    # The listed moves are exactly the differences between the two timetables, by slot label.
    differences = {(e, f"Slot {earlier[e]}", f"Slot {now[e]}") for e in EVENTS if earlier[e] != now[e]}
    listed = moves_of(page)
    assert listed == differences
    assert "published-timetable.xlsx" in page
    # And there are as few as possible: the fewest any clash-free timetable needs (at least one here).
    least = fewest_moves(earlier, changed, SLOTS)
    assert least >= 1 and len(listed) == least
    for event, _, _ in listed:  # attendees affected by each move, recounted from the enrolments
        attendees = sum(1 for _, e in changed if e == event)
        assert re.search(rf'<td class="code">{event}</td>.*?<td class="num">{attendees}</td></tr>', page)

    # The published workbook lists the same moves on its Moves sheet.
    book = openpyxl.load_workbook(io.BytesIO(client.get(f"/files/{second}/download/timetable.xlsx").content), read_only=True)
    moves_sheet = next(s for s in book.worksheets if s.title.startswith("Moves"))
    cells = {str(c) for row in moves_sheet.iter_rows(values_only=True) for c in row if c is not None}
    assert {e for e, _, _ in listed} <= cells

    # The earlier timetable was kept under our own name in the upload's folder, and goes with it.
    folder = client.app.state.store.get(second).folder
    assert sorted(p.name for p in folder.iterdir() if p.name.startswith("earlier")) == ["earlier.xlsx"]
    client.post(f"/files/{second}/delete", headers=SAME)
    assert not folder.exists()


def test_an_earlier_timetable_that_still_holds_moves_nothing(client):
    token = upload(client, "resits.csv", as_csv(ENROLMENTS))
    # A clash-free earlier timetable, written by hand as a CSV with slot numbers (semicolons, as
    # spreadsheet programs in many countries write them).
    earlier = {"HVM101": 1, "HVM102": 2, "HVM103": 3, "HVP201": 1, "HVP202": 2, "HVC301": 3}
    assert clash_free(earlier, ENROLMENTS)
    text = "Exam;Slot\n" + "".join(f"{e};{s}\n" for e, s in earlier.items())
    assert solve(client, token, earlier=("last-week.csv", text.encode()), **ONLY_MOVES).status_code == 303
    assert solved(client, token)["slots"][0]["status"] == "optimal"
    page = client.get(f"/files/{token}/timetable").text
    assert 'id="no-moves"' in page and "No event moved" in page and moves_of(page) == set()
    assert grid_of(page) == earlier


def test_an_event_whose_slot_is_beyond_the_slots_chosen_is_placed_afresh(client):
    token = upload(client, "resits.csv", as_csv(ENROLMENTS))
    text = "Event,Slot\nHVM101,Slot 1\nHVM102,Slot 2\nHVM103,Slot 4\n"
    r = solve(client, token, earlier=("last-week.csv", text.encode()), slots=3, more_slots="4", **ONLY_MOVES)
    assert r.status_code == 303
    solved(client, token)
    page = client.get(f"/files/{token}/timetable").text  # 3 slots shown first
    note = re.search(r'id="placed-afresh">(.*?)</p>', page, re.S)
    assert note is not None and "HVM103 (was Slot 4)" in note.group(1)
    four = client.get(f"/files/{token}/timetable?slots=4").text
    assert 'id="placed-afresh"' not in four  # slot 4 exists with four slots: HVM103 is kept there
    assert grid_of(four)["HVM103"] == 4 and "No event moved" in four
    assert "Events moved: 3 slots 0 · 4 slots 0." in re.sub(r"\s+", " ", four)


@pytest.mark.parametrize(
    ("text", "where"),
    [
        # A slot that names no slot at all.
        ("Event,Slot\nHVM101,Slot 1\nHVM102,Tuesday morning\n", ["row 3", "column “Slot”", "Tuesday morning"]),
    ],
)
def test_a_bad_earlier_timetable_is_explained_and_nothing_is_solved(client, text, where):
    token = upload(client, "resits.csv", as_csv(ENROLMENTS))
    r = solve(client, token, earlier=("kept-by-mistake.csv", text.encode()))
    assert r.status_code == 422
    assert "kept-by-mistake.csv" in r.text and "Nothing has been solved" in r.text
    for part in where:
        assert part in r.text
    assert str(client.app.state.store.root) not in r.text  # the private folder is never shown
    assert client.get(f"/files/{token}/solving.json").json() == {"state": "none"}


def test_an_earlier_timetable_goes_through_the_upload_checks(client):
    token = upload(client, "resits.csv", as_csv(ENROLMENTS))
    r = solve(client, token, earlier=("timetable.xlsx", b"%PDF-1.7 not a workbook"))
    assert r.status_code == 400 and "not a spreadsheet" in r.text
    # A workbook that is not one: a zip archive without the workbook parts.
    archive = io.BytesIO()
    import zipfile

    with zipfile.ZipFile(archive, "w") as z:
        z.writestr("notes.txt", "hello")
    r = solve(client, token, earlier=("timetable.xlsx", archive.getvalue()))
    assert r.status_code == 400 and "not a workbook" in r.text
    assert client.get(f"/files/{token}/solving.json").json() == {"state": "none"}
    folder = client.app.state.store.get(token).folder
    assert not [p for p in folder.iterdir() if p.name.startswith("earlier")]  # nothing rejected is kept


def test_labelled_slots_of_a_slots_sheet_are_kept_and_moves_named_by_label(client, tmp_path):
    import datetime as dt

    from intake_builders import write_xlsx

    labels = ["Mon 11 Jan AM", "Mon 11 Jan PM", "Tue 12 Jan AM", "Tue 12 Jan PM"]
    slots_sheet = [("Slot", "Date", "Start", "Length (minutes)")] + [
        (label, dt.datetime(2027, 1, 11 + i // 2), "09:00" if i % 2 == 0 else "14:00", 120) for i, label in enumerate(labels)]
    late = ENROLMENTS + [("HV-S0099", "HVM101"), ("HV-S0099", "HVP201")]
    book = write_xlsx(tmp_path / "resits-late.xlsx", {"Enrolments": [("Student", "Exam"), *late], "Slots": slots_sheet})
    token = upload(client, "resits-late.xlsx", book.read_bytes())
    # The earlier timetable by label: HVM101 and HVP201 shared the first slot; now one student sits both.
    earlier = {"HVM101": 1, "HVM102": 2, "HVM103": 3, "HVP201": 1, "HVP202": 2, "HVC301": 3}
    assert clash_free(earlier, ENROLMENTS) and not clash_free(earlier, late)
    text = "Exam,Slot\n" + "".join(f"{e},{labels[s - 1]}\n" for e, s in earlier.items())
    assert solve(client, token, earlier=("published.csv", text.encode()), **ONLY_MOVES).status_code == 303
    assert solved(client, token)["slots"][0]["status"] == "optimal"
    page = client.get(f"/files/{token}/timetable").text
    listed = moves_of(page)
    assert len(listed) == fewest_moves(earlier, late, 4) == 1
    (event, before, after), = listed
    assert event in ("HVM101", "HVP201") and before == labels[0] and after in labels[1:]

    # A label the slots sheet does not have stops the solve, naming the cell.
    bad = "Exam,Slot\nHVM101,Mon 11 Jan AM\nHVM102,Wed 13 Jan AM\n"
    r = solve(client, token, earlier=("published.csv", bad.encode()))
    assert r.status_code == 422 and "row 3" in r.text and "column “Slot”" in r.text
    assert "a slot label of the slots sheet" in r.text


def test_an_enrolment_file_given_as_the_earlier_timetable_is_explained(client):
    token = upload(client, "resits.csv", as_csv(ENROLMENTS))
    r = solve(client, token, earlier=("resits.csv", as_csv(ENROLMENTS)))
    assert r.status_code == 422 and "no sheet has a header row with an event column and a &#39;Slot&#39; column" in r.text
    assert "resits.csv" in r.text and str(client.app.state.store.root) not in r.text


def test_an_event_no_longer_enrolled_is_left_out_and_named(client):
    # as `solve --keep` does: a cancelled event in the earlier timetable does not stop the repair
    token = upload(client, "resits.csv", as_csv(ENROLMENTS))
    text = "Event,Slot\nHVM101,Slot 1\nHVX999,Slot 2\n"
    r = solve(client, token, earlier=("last-week.csv", text.encode()), slots=3, **ONLY_MOVES)
    assert r.status_code == 303
    solved(client, token)
    page = client.get(f"/files/{token}/timetable").text
    note = re.search(r'id="left-out">(.*?)</p>', page, re.S)
    assert note is not None and "HVX999" in note.group(1) and "HVM101" not in note.group(1)
    assert grid_of(page)["HVM101"] == 1  # the event still enrolled keeps its slot
