"""The stored-work pages: published versions survive a restart, the changes page and its downloads, publishing
from the timetable page, deleting. Figures on the page are checked against ``timetabler changes --json`` on the
same store, and the downloads are opened with openpyxl and zipfile."""

from __future__ import annotations

import io
import random
import re
import time
import zipfile

import openpyxl
import pytest
from starlette.testclient import TestClient

from store_builders import dated_slots, late_changes, rows, write_xlsx
from timetabler.store import Store
from timetabler.web.app import WebSettings, create_app

pytestmark = pytest.mark.filterwarnings("ignore::DeprecationWarning")

BASE = "http://127.0.0.1:8765"
SAME = {"origin": BASE}


@pytest.fixture
def two_versions(run_command, tmp_path):
    slots = dated_slots()
    first = run_command("solve", write_xlsx(tmp_path / "spring.xlsx", rows(seed=21, students=40), slots),
                        "--time-limit", "3", "--publish", "draft", "--json")
    assert first.status == 0, first.stderr
    late = late_changes(rows(seed=21, students=40), first.json()["runs"][0]["assignment"], random.Random(4))
    (tmp_path / "v2").mkdir()
    second = run_command("solve", write_xlsx(tmp_path / "v2" / "spring.xlsx", late, slots), "--time-limit", "3",
                         "--keep", "draft", "--publish", "final", "--json")
    assert second.status == 0, second.stderr
    return run_command("changes", "draft", "final", "--json").json()


def _wait_finished(client, upload_url: str) -> None:
    for _ in range(600):
        state = client.get(f"{upload_url}/solving.json").json()
        if state.get("state") == "finished":
            return
        time.sleep(0.1)
    raise AssertionError(f"the solve did not finish: {state}")


def _client(store_path, retention_days=180):
    return TestClient(create_app(WebSettings(store_path=str(store_path), retention_days=retention_days)), base_url=BASE)


def test_published_versions_are_listed_after_a_restart_and_their_changes_shown(two_versions, private_store):
    expected = two_versions
    for _restart in range(2):  # a new application each time: nothing is held in the server's memory
        with _client(private_store) as client:
            page = client.get("/stored")
            assert page.status_code == 200
            assert "draft" in page.text and "final" in page.text and str(private_store) in page.text
            assert "180 days" in page.text and "spring.xlsx" in page.text
    with _client(private_store) as client:
        page = client.get("/stored/changes", params={"from": "draft", "to": "final"})
        assert page.status_code == 200
        assert f"{len(expected['moved'])} event(s) moved" in page.text
        assert f"{len(expected['attendees'])} attendee(s) to tell" in page.text
        for m in expected["moved"]:
            assert m["event"] in page.text
        query = {"from": "draft", "to": "final"}
        book = client.get("/stored/changes/notices.xlsx", params=query)
        assert book.status_code == 200
        wb = openpyxl.load_workbook(io.BytesIO(book.content), read_only=True)
        listed = [r[0] for r in list(wb["Notices"].iter_rows(values_only=True))[1:]]
        assert sorted(listed) == sorted(p["attendee"] for p in expected["attendees"])
        calendars = client.get("/stored/changes/calendars-ics.zip", params=query)
        assert calendars.status_code == 200
        names = zipfile.ZipFile(io.BytesIO(calendars.content)).namelist()
        assert sorted(names) == sorted(f"attendees/{p['attendee']}.ics" for p in expected["attendees"])
        csvs = zipfile.ZipFile(io.BytesIO(client.get("/stored/changes/notices-csv.zip", params=query).content))
        assert sorted(csvs.namelist()) == ["changes_by_attendee.csv", "events_changed.csv", "notices.csv"]
        assert client.get("/stored/changes", params={"from": "draft", "to": "nope"}).status_code == 404
        assert client.get("/stored/changes/other.txt", params=query).status_code == 404


def test_deleting_from_the_page(two_versions, private_store):
    with _client(private_store) as client:
        assert client.post("/stored/forget", data={"label": "final"}).status_code == 403  # not from the page
        done = client.post("/stored/forget", data={"label": "final"}, headers=SAME)
        assert done.status_code == 200
        with Store(private_store) as store:
            assert store.labels() == ["draft"]
            first = store.inputs()[0].id
        assert client.post("/stored/forget", data={"input": str(first)}, headers=SAME).status_code == 200
        with Store(private_store) as store:
            assert [i.id for i in store.inputs()] != [first] and first not in [i.id for i in store.inputs()]
            assert store.labels() == []


def test_retention_period_deletes_old_inputs_when_the_page_is_shown(two_versions, private_store):
    import datetime as dt

    with Store(private_store) as store:
        store.conn.execute("UPDATE inputs SET last_used_at = '2026-01-01T00:00:00Z'")
    with _client(private_store, retention_days=30) as client:
        page = client.get("/stored")
        assert "Deleted just now" in page.text and "30 days" in page.text
    with Store(private_store) as store:
        assert store.inputs() == [] and store.labels() == []
    assert dt.date.today().year >= 2026


def test_publishing_from_the_timetable_page(private_store):
    csv_text = "Student,Exam\nBI-1,A\nBI-1,B\nBI-2,B\nBI-2,C\nBI-3,A\nBI-3,C\nBI-4,D\n"
    with _client(private_store) as client:
        sent = client.post("/upload", files={"file": ("week.csv", io.BytesIO(csv_text.encode()), "text/csv")},
                           headers=SAME, follow_redirects=False)
        assert sent.status_code == 303
        token_url = sent.headers["location"]
        assert client.get(token_url).status_code == 200  # the overview reads the file first
        started = client.post(f"{token_url}/solve", data={"slots": ["3"], "sessions_per_day": "2", "time_limit": "3"},
                              headers=SAME, follow_redirects=False)
        assert started.status_code == 303, started.text[:300]
        _wait_finished(client, token_url)
        page = client.get(f"{token_url}/timetable")
        assert page.status_code == 200
        with Store(private_store) as store:  # shown once: the solve is recorded, not yet published
            assert [r.slot_count for r in store.runs()] == [3] and store.labels() == []
        assert client.get(f"{token_url}/timetable").status_code == 200
        (action,) = re.findall(r'<form action="([^"]+)" method="post" id="publish-form">', page.text)
        done = client.post(action, data={"slots": "3", "label": "web 1"}, headers=SAME)
        assert done.status_code == 200, done.text[:500]
        again = client.post(action, data={"slots": "3", "label": "web 1"}, headers=SAME)
        assert again.status_code == 400 and "already published" in again.text
    with Store(private_store) as store:
        assert len(store.runs()) == 1  # shown twice and published: still the one recorded result
        version = store.published_version("web 1")
        # the triangle A, B, C needs three different slots
        assert len({version.assignment[e] for e in "ABC"}) == 3
        assert sorted(version.enrolments) == sorted(tuple(l.split(",")) for l in csv_text.splitlines()[1:])


def test_repairing_against_a_published_version_from_the_solve_form(run_command, tmp_path, private_store):
    from store_builders import write_csv

    base = rows(seed=8, students=40)
    first = run_command("solve", write_csv(tmp_path / "week.csv", base), "--slots", "6", "--time-limit", "2",
                        "--publish", "week 1", "--out", tmp_path / "week1.xlsx", "--json")
    assert first.status == 0, first.stderr
    late = late_changes(base, first.json()["runs"][0]["assignment"], random.Random(3))
    late_text = "Student,Exam\n" + "".join(f"{a},{e}\n" for a, e in late)
    results = {}
    with _client(private_store) as client:
        for how in ("label", "file"):
            sent = client.post("/upload", files={"file": ("late.csv", io.BytesIO(late_text.encode()), "text/csv")},
                               headers=SAME, follow_redirects=False)
            token_url = sent.headers["location"]
            overview = client.get(token_url)
            assert 'name="earlier_label"' in overview.text and "week 1" in overview.text
            form = {"slots": ["6"], "sessions_per_day": "2", "time_limit": "3", "repeatable": "on"}
            files = None
            if how == "label":
                form["earlier_label"] = "week 1"
            else:
                files = {"earlier": ("week1.xlsx", (tmp_path / "week1.xlsx").read_bytes(),
                                     "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet")}
            started = client.post(f"{token_url}/solve", data=form, files=files, headers=SAME, follow_redirects=False)
            assert started.status_code == 303, started.text[:400]
            _wait_finished(client, token_url)
            page = client.get(f"{token_url}/timetable")
            assert page.status_code == 200
            (table,) = re.findall(r'id="moves".*?</table>', page.text, re.S)
            cells = [re.findall(r"<td[^>]*>(.*?)</td>", row) for row in re.findall(r"<tr>(.*?)</tr>", table, re.S)]
            results[how] = {c[0]: c[2] for c in cells if c}
        bad = client.post(f"{token_url}/solve", data={"slots": ["6"], "time_limit": "2", "earlier_label": "nope"},
                          headers=SAME)
        assert bad.status_code == 400 and "week 1" in bad.text
    # either way the moves start from the published slots (ties may move different events; the page has no
    # repeatable mode), and the late enrolments forced at least one move
    published = {e: first.json()["runs"][0]["slot_labels"][n - 1] for e, n in first.json()["runs"][0]["assignment"].items()}
    for how in ("label", "file"):
        assert results[how], how
        assert all(published[e] == was for e, was in results[how].items()), how
