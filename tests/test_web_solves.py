"""Solves on the web page: each solve keeps its own page, and Stop keeps the best timetable found.

Both were defects found trying the page as a new user would (issue 15, item 12): Stop threw
away a timetable already found and landed on the overview with no word; a second solve on
the same upload silently replaced a finished one that another tab was showing.
"""

from __future__ import annotations

import io
import re
import time
from collections import defaultdict

import openpyxl
import pytest
from starlette.testclient import TestClient

from timetabler.web.app import WebSettings, create_app
from test_web_routes import BASE, SAME, TRIANGLE_CSV, plain, slow_to_prove_csv, upload_ok

pytestmark = pytest.mark.filterwarnings("ignore::DeprecationWarning")


@pytest.fixture
def client():
    with TestClient(create_app(WebSettings(count_budget_seconds=5.0)), base_url=BASE) as c:
        yield c


def start(client, token: str, form: dict) -> str:
    """Start a solve; return its own address (``/files/{token}/solves/{id}``)."""
    r = client.post(f"/files/{token}/solve", data=form, headers=SAME, follow_redirects=False)
    assert r.status_code == 303, r.text[:400]
    match = re.fullmatch(rf"(/files/{token}/solves/[A-Za-z0-9_-]{{8,32}})/solving", r.headers["location"])
    assert match, r.headers["location"]
    return match.group(1)


def finished(client, base: str, seconds: float = 90.0) -> dict:
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        doc = client.get(f"{base}/solving.json").json()
        if doc["state"] not in ("running", "starting", "stopping"):
            return doc
        time.sleep(0.2)
    raise AssertionError("the solve did not finish in time")


def grid_slots(page: str) -> dict[str, str]:
    """Event code -> slot label, read from the grid of a timetable page."""
    grid = re.search(r'<table class="grid" id="grid">(.*?)</table>', page, re.S).group(1)
    placed = {}
    for label, cell in re.findall(r'<td><div class="slot-head">([^<·]+?)\s*(?:·[^<]*)?<span class="seats">.*?</div>(.*?)</td>', grid, re.S):
        for code in re.findall(r'<span class="code"[^>]*>([^<]+)</span>', cell):
            placed[code] = label.strip()
    return placed


def test_stop_keeps_the_best_timetable_found_and_says_so(client, monkeypatch):
    # the download below need not wait for the background count to refine (what it checks is that the
    # stopped timetable can be downloaded): 13 s of the test's 20 went on that wait
    monkeypatch.setattr("timetabler.web.routes.DOWNLOAD_COUNT_WAIT", 0.0)
    data = slow_to_prove_csv()
    token = upload_ok(client, "session.csv", data)
    assert client.get(f"/files/{token}?slots=12").status_code == 200
    base = start(client, token, {"slots": ["12"], "sessions_per_day": "2", "time_limit": "120"})
    # Wait until the solver has a timetable in hand (a best penalty reaches the page), then stop.
    deadline = time.monotonic() + 90
    while time.monotonic() < deadline:
        row = client.get(f"{base}/solving.json").json()["slots"][0]
        if row["best"] is not None:
            break
        time.sleep(0.3)
    else:
        pytest.fail("the solver found no timetable to keep within 90 s")
    began = time.monotonic()
    r = client.post(f"{base}/stop", headers=SAME, follow_redirects=False)
    assert time.monotonic() - began < 20  # a stop answers in seconds, not at the time limit
    assert r.status_code == 303 and r.headers["location"] == f"{base}/timetable"
    job = client.app.state.store.get(token).state["job"]
    assert job.state == "cancelled" and job._process.poll() is not None  # the solver's process is gone
    assert job.stopped == {12}
    run = job.runs[12]
    assert run.assignment and run.validation is not None and run.validation.ok

    page = client.get(r.headers["location"])
    assert page.status_code == 200
    note = plain(re.search(r'<p class="note" role="status" id="stopped-note">(.*?)</p>', page.text, re.S).group(1))
    assert "stopped" in note and "12 slots" in note and "validator" in note
    status = re.search(r'<th scope="row">Status</th>(.*?)</tr>', page.text, re.S).group(1)
    assert "(stopped)" in plain(status)
    # Direct check from the enrolments, not through project code: every exam placed, nobody twice in a slot.
    placed = grid_slots(page.text)
    exams_of = defaultdict(set)
    for line in data.decode().splitlines()[1:]:
        student, exam = line.split(",")
        exams_of[student].add(exam)
    assert set(placed) == {e for exams in exams_of.values() for e in exams}
    for student, exams in exams_of.items():
        assert len({placed[e] for e in exams}) == len(exams), student
    # The overview says the solve was stopped and links to it; "the last timetables" exist.
    overview = client.get(f"/files/{token}").text
    assert re.search(rf'<a href="{base}/timetable">solve 1</a> \(12 slots, stopped\)', overview)
    assert client.get(f"{base}/download/timetable.xlsx").status_code == 200


def test_a_second_solve_keeps_the_first_on_its_own_page(client):
    token = upload_ok(client, "triangle.csv", TRIANGLE_CSV.encode())
    client.get(f"/files/{token}")
    first = start(client, token, {"slots": ["3"], "sessions_per_day": "3", "time_limit": "5"})
    assert finished(client, first)["state"] == "finished"
    first_page = client.get(f"{first}/timetable").text
    second = start(client, token, {"slots": ["5"], "sessions_per_day": "5", "time_limit": "5"})
    assert second != first
    assert finished(client, second)["state"] == "finished"

    # The first solve's page (open in another tab, say) still shows its own 3-slot timetable.
    again = client.get(f"{first}/timetable").text
    assert grid_slots(again) == grid_slots(first_page)
    assert set(grid_slots(again).values()) <= {"Slot 1", "Slot 2", "Slot 3"}
    assert "(solve 1)" in again and f'href="{second}/timetable">solve 2</a>' in again
    later = client.get(f"{second}/timetable").text
    assert "(solve 2)" in later and re.search(r'<th scope="col" class="num">5</th>', later)
    # Each solve's workbook holds its own slot counts: read back with openpyxl.
    for base, k in ((first, 3), (second, 5)):
        book = openpyxl.load_workbook(io.BytesIO(client.get(f"{base}/download/timetable.xlsx").content), read_only=True)
        texts = " ".join(str(c) for sheet in book.worksheets for row in sheet.iter_rows(values_only=True) for c in row if c)
        assert f"{k} slots" in texts or f"Slot {k}" in texts
        assert f"Slot {max(3, 5) if k == 3 else 99}" not in texts
    # The overview lists both; the older address without an id opens the newest solve.
    overview = client.get(f"/files/{token}").text
    assert f'href="{first}/timetable">solve 1</a>' in overview and f'href="{second}/timetable">solve 2</a>' in overview
    r = client.get(f"/files/{token}/timetable", follow_redirects=False)
    assert r.status_code == 303 and r.headers["location"] == f"{second}/timetable"
    # A solve id that is not this upload's is a plain 404.
    assert client.get(f"/files/{token}/solves/AAAAAAAAAAAA/timetable").status_code == 404
