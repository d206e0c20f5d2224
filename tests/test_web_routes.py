"""Every route of the local web page through the ASGI test client, bad uploads included.

The page must call the same engines as the commands: its figures are checked against
``timetabler inspect --json`` on the same file, its counts against closed forms of the
chromatic polynomial, its timetables against a direct clash check from the enrolments
and the independent validator, and its downloads are opened with openpyxl and zipfile.
"""

from __future__ import annotations

import html
import io
import random
import re
import time
import zipfile
from html.parser import HTMLParser
from pathlib import Path

import openpyxl
import pytest
from starlette.testclient import TestClient

from timetabler.web import analysis as web_analysis
from timetabler.web.app import WebSettings, create_app

pytestmark = pytest.mark.filterwarnings("ignore::DeprecationWarning")

BASE = "http://127.0.0.1:8765"
SAME = {"origin": BASE}
THIN = "\u2009"

# A triangle of clashing exams (A, B, C pairwise share a student) and one free exam D.
# Its conflict graph is K3 plus an isolated vertex, so the number of clash-free timetables
# with k slots is k(k-1)(k-2) * k: the chromatic polynomial of a complete graph is the
# falling factorial, and it multiplies over components (standard; e.g. Read, "An
# introduction to chromatic polynomials", J. Combin. Theory 4 (1968)).
TRIANGLE_CSV = "Student,Exam\nHV-S0001,A\nHV-S0001,B\nHV-S0002,B\nHV-S0002,C\nHV-S0003,A\nHV-S0003,C\nHV-S0004,D\n"


def triangle_count(k: int) -> int:
    return k * (k - 1) * (k - 2) * k


@pytest.fixture
def client():
    with TestClient(create_app(WebSettings(count_budget_seconds=5.0)), base_url=BASE) as c:
        yield c


def post_file(client, name: str, data: bytes, **headers):
    return client.post("/upload", files={"file": (name, io.BytesIO(data), "application/octet-stream")},
                       headers={**SAME, **headers}, follow_redirects=False)


def upload_ok(client, name: str, data: bytes) -> str:
    response = post_file(client, name, data)
    assert response.status_code == 303, response.text[:500]
    location = response.headers["location"]
    assert re.fullmatch(r"/files/[A-Za-z0-9_-]{16,64}", location)
    return location.rsplit("/", 1)[1]


def overview(client, token: str, query: str = ""):
    """The overview page once its count is ready (a big count first shows a placeholder)."""
    r = client.get(f"/files/{token}{query}")
    deadline = time.monotonic() + 60
    while 'id="counting"' in r.text and time.monotonic() < deadline:
        source = html.unescape(re.search(r'id="counting" class="key-fact" data-source="([^"]+)"', r.text).group(1))
        if client.get(source).json()["state"] in ("counting", "refining"):
            time.sleep(0.2)
            continue
        r = client.get(f"/files/{token}{query}")
    return r


def plain(text: str) -> str:
    """Page text with tags removed and thin spaces dropped (for finding numbers)."""
    return re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", text)).replace(THIN, "")


# -- first page, template, static files --------------------------------------------------------


def test_first_page_offers_an_accessible_upload_and_the_template(client):
    r = client.get("/")
    assert r.status_code == 200
    assert '<label for="file-input">' in r.text and 'id="file-input" name="file"' in r.text
    assert 'href="/template.xlsx"' in r.text
    csp = r.headers["content-security-policy"]
    assert "default-src 'none'" in csp and "http" not in csp
    assert r.headers["x-frame-options"] == "DENY" and r.headers["x-content-type-options"] == "nosniff"


def test_nothing_is_fetched_from_anywhere_else():
    """Templates, styles and scripts name no other site: the page works offline."""
    web = Path(__file__).resolve().parent.parent / "timetabler" / "web"
    files = [p for p in web.rglob("*") if p.suffix in (".html", ".css", ".js", ".py")]
    assert len(files) >= 10
    for path in files:
        text = path.read_text(encoding="utf-8")
        for url in re.findall(r"https?://[^\s\"'<>)]+", text):
            assert url.startswith("http://www.w3.org/2000/svg") or "127.0.0.1" in url, f"{path.name}: {url}"
        assert "@import" not in text and "fonts.googleapis" not in text


def test_static_files_are_served(client):
    assert client.get("/static/style.css").headers["content-type"].startswith("text/css")
    js = client.get("/static/page.js")
    assert js.status_code == 200 and "solving" not in js.text.split("\n")[0]
    assert client.get("/static/../app.py").status_code == 404


def test_the_page_script_upload_gets_the_next_address_or_the_message(client):
    """The first page's script sends the file itself, to show its progress (issue 15, item 13): it is
    told where the overview is, or gets the same message page as a plain form upload."""
    progress = {"x-timetabler-upload": "progress"}
    r = post_file(client, "triangle.csv", TRIANGLE_CSV.encode(), **progress)
    assert r.status_code == 200 and re.fullmatch(r"/files/[A-Za-z0-9_-]{16,64}", r.json()["next"])
    assert client.get(r.json()["next"]).status_code == 200
    r = post_file(client, "scan.pdf", b"%PDF-1.7 not a spreadsheet", **progress)
    assert r.status_code == 400 and "<h1>This file cannot be used</h1>" in r.text and "PDF" in r.text
    script = client.get("/static/page.js").text
    assert "upload.addEventListener(\"progress\"" in script and "X-Timetabler-Upload" in script
    page = client.get("/").text
    assert 'id="upload-progress"' in page and '<progress id="upload-bar"' in page


def test_downloads_are_refused_to_other_sites(client):
    """Another site's link, image or script must not make the browser fetch a file from here
    (issue 15, item 13): the template download answered such requests."""
    for headers in ({"sec-fetch-site": "cross-site"}, {"sec-fetch-site": "same-site"},
                    {"origin": "http://timetabler.evil.example"}, {"referer": "http://timetabler.evil.example/page"}):
        for path in ("/template.xlsx", "/template.xlsx?example=1"):
            r = client.get(path, headers=headers)
            assert r.status_code == 403 and "another web site" in r.text, (path, headers)
            assert "spreadsheetml" not in r.headers["content-type"]
    # From the page itself, and typed into the address bar, it downloads as before.
    for headers in ({"sec-fetch-site": "same-origin", "referer": BASE + "/"}, {"sec-fetch-site": "none"}, {}):
        assert client.get("/template.xlsx", headers=headers).status_code == 200, headers


def test_template_workbook_downloads_and_opens(client):
    r = client.get("/template.xlsx")
    assert r.status_code == 200
    assert 'filename="timetabler-template.xlsx"' in r.headers["content-disposition"]
    book = openpyxl.load_workbook(io.BytesIO(r.content))
    assert "Enrolments" in book.sheetnames
    # The filled-in example reads back through intake as a problem with events.
    example = client.get("/template.xlsx?example=1")
    assert 'filename="timetabler-example.xlsx"' in example.headers["content-disposition"]
    token = upload_ok(client, "timetabler-example.xlsx", example.content)
    r = client.get(f"/files/{token}")
    assert r.status_code == 200 and re.search(r'<th scope="row">Events</th><td>[1-9]', r.text)


# -- upload and overview -----------------------------------------------------------------------


def test_overview_shows_the_same_figures_as_inspect(client, run_command, exam_week_xlsx):
    reference = run_command("inspect", exam_week_xlsx, "--json").json()
    token = upload_ok(client, "exam_week.xlsx", exam_week_xlsx.read_bytes())
    r = client.get(f"/files/{token}")
    assert r.status_code == 200
    figures = re.search(r'<table class="figures" id="figures">(.*?)</table>', r.text, re.S).group(1)
    cells = dict(re.findall(r'<th scope="row">([^<]+)</th><td>([^<]+)</td>', figures))
    assert int(cells["Events"].replace(THIN, "")) == reference["events"]
    assert int(cells["Attendees"].replace(THIN, "")) == reference["attendees"]
    assert int(cells["Enrolments"].replace(THIN, "")) == reference["enrolments"]
    assert int(cells["Clashing pairs of events"].replace(THIN, "")) == reference["conflict_pairs"]
    assert int(cells["Largest set of mutually clashing events"]) == reference["max_clique"]
    assert int(cells["Groups of events linked by clashes"]) == reference["components"]
    assert f"At least <strong>{reference['max_clique']}</strong> slots" in r.text
    # The private folder never shows; the user's own file name does.
    assert "exam_week.xlsx" in r.text and "timetabler-web-" not in r.text


def test_counts_table_matches_the_closed_form(client):
    token = upload_ok(client, "triangle.csv", TRIANGLE_CSV.encode())
    r = overview(client, token, "?slots=2-5")
    assert r.status_code == 200
    table = re.search(r'<table class="counts" id="counts">(.*?)</table>', r.text, re.S).group(1)
    rows = re.findall(r'<th scope="row" class="num">(\d+)</th>\s*<td class="num count"[^>]*>(.*?)</td>\s*'
                      r'<td class="exactness">(.*?)</td>', table, re.S)
    shown = {int(k): plain(cell) for k, cell, _ in rows}
    exactness = {int(k): plain(flag).strip() for k, _, flag in rows}
    assert sorted(shown) == [2, 3, 4, 5]
    assert shown[2].split()[0] == "none"
    for k in (3, 4, 5):
        assert shown[k].split()[0] == str(triangle_count(k)) and exactness[k] == "exact"
    assert "<svg" in r.text and 'role="img"' in r.text
    # The triangle's group needs 3 slots on its own (K3's chromatic number); D stands alone.
    groups = re.search(r'<table class="components">(.*?)</table>', r.text, re.S).group(1)
    assert re.search(r'<td class="num">3</td><td class="num">3</td><td class="num">3</td><td>A, B, C</td>', groups)


def test_a_counts_column_has_one_format_with_every_digit_at_hand(client):
    """Issue 15, item 14: the column mixed full digits and powers of ten, and wrapped 'exact' under
    some rows. Ten exams with no shared student: P = k^10 (edgeless graph), 3^10 has 5 digits,
    20^10 has 14: past 12 digits every count of the column is a power of ten, rounded, with all
    its digits in the cell's title and in the list below the table; exactness has its own column."""
    csv = "Student,Exam\n" + "".join(f"HV-S{i:04d},E{i:02d}\n" for i in range(10))
    token = upload_ok(client, "free.csv", csv.encode())
    r = overview(client, token, "?slots=3+6+20")
    table = re.search(r'<table class="counts" id="counts">(.*?)</table>', r.text, re.S).group(1)
    rows = re.findall(r'<th scope="row" class="num">(\d+)</th>\s*<td class="num count" title="([^"]+)">(.*?)</td>\s*'
                      r'<td class="exactness">exact</td>', table, re.S)
    assert [int(k) for k, _, _ in rows] == [3, 6, 20]
    for k, title, cell in rows:
        value = int(k) ** 10
        assert title.replace(THIN, "") == str(value)  # every digit on hover
        mantissa, power = re.fullmatch(r"(\d\.\d\d) × 10<sup>(\d+)</sup>", cell.strip()).groups()
        assert abs(float(mantissa) * 10 ** int(power) - value) <= 0.005 * 10 ** int(power)  # rounded, 3 figures
    listed = re.search(r'<details class="all-digits" id="all-digits">(.*?)</details>', r.text, re.S).group(1)
    assert str(20 ** 10) in listed.replace(THIN, "") and str(3 ** 10) in listed.replace(THIN, "")
    assert "td.count { white-space: nowrap; }" in client.get("/static/style.css").text


def test_an_error_after_count_is_shown_at_the_top(client):
    token = upload_ok(client, "triangle.csv", TRIANGLE_CSV.encode())
    r = client.get(f"/files/{token}?slots=2-99999")
    top = r.text.index('id="page-errors"')
    assert top < r.text.index('id="figures"')  # above the figures: on the first screen
    assert "A number of slots must be between" in r.text[top:r.text.index('id="figures"')]
    assert 'href="#count-slots"' in r.text and 'aria-invalid="true"' in r.text


def test_the_fewest_slots_box_reads_plainly(client):
    # Issue 15, item 14: a reason in brackets inside brackets ended in a doubled bracket.
    token = upload_ok(client, "triangle.csv", TRIANGLE_CSV.encode())
    box = plain(re.search(r'id="fewest-count">(.*?)</p>', overview(client, token, "?slots=2-4").text, re.S).group(1))
    assert "3" in box and "))" not in box and box.count("(") == box.count(")")


def test_a_very_long_event_code_wraps_in_the_grid_and_keeps_its_full_name(client):
    long_code = "MODULE-" + "X" * 110
    csv = f"Student,Exam\nHV-S0001,{long_code}\nHV-S0001,B\n"
    token = upload_ok(client, "long.csv", csv.encode())
    client.get(f"/files/{token}")
    assert client.post(f"/files/{token}/solve", data={"slots": ["2"], "time_limit": "5"},
                       headers=SAME).status_code == 200
    wait_finished(client, token)
    page = client.get(f"/files/{token}/timetable").text
    assert f'<span class="code" title="{long_code}">{long_code}</span>' in page
    style = client.get("/static/style.css").text
    assert re.search(r"\.code[^{]*\{[^}]*overflow-wrap: anywhere", style)
    assert re.search(r"\.grid td \{[^}]*max-width", style)


def test_big_counts_show_every_digit(client):
    # 30 exams with no shared student: P = k^30 (edgeless graph), 5^30 has 21 digits.
    csv = "Student,Exam\n" + "".join(f"HV-S{i:04d},E{i:02d}\n" for i in range(30))
    token = upload_ok(client, "free.csv", csv.encode())
    r = overview(client, token, "?slots=5")
    assert str(5**30) in r.text.replace(THIN, "")
    assert "9.31 × 10<sup>20</sup>" in r.text


def test_a_long_count_shows_the_page_first_and_fills_in(client, monkeypatch):
    from timetabler.web import routes

    real = web_analysis.count

    def slow(*args, **kwargs):
        time.sleep(1.0)
        return real(*args, **kwargs)

    monkeypatch.setattr(routes, "FIRST_COUNT_WAIT", 0.0)
    monkeypatch.setattr(web_analysis, "count", slow)
    token = upload_ok(client, "triangle.csv", TRIANGLE_CSV.encode())
    first = client.get(f"/files/{token}?slots=3")
    assert first.status_code == 200 and 'id="counting"' in first.text and 'id="counts"' not in first.text
    assert '<noscript><meta http-equiv="refresh"' in first.text  # without script, the page refreshes itself
    assert 'id="figures"' in first.text and 'id="solve-form"' in first.text  # the rest is there at once
    assert client.get(f"/files/{token}/counts.json?slots=3").json()["state"] == "counting"
    done = overview(client, token, "?slots=3")
    assert 'id="counts"' in done.text and client.get(f"/files/{token}/counts.json?slots=3").json()["state"] == "done"
    assert str(triangle_count(3)) in plain(done.text)


def test_bad_slot_choices_are_explained(client):
    token = upload_ok(client, "triangle.csv", TRIANGLE_CSV.encode())
    r = client.get(f"/files/{token}?slots=five")
    assert r.status_code == 200 and "'five' is not a number of slots" in html.unescape(r.text)


def test_unreadable_file_lists_findings_and_can_be_read_again(client):
    csv = "Col1,Col2\nHV-S0001,A\nHV-S0001,B\n"
    token = upload_ok(client, "odd-headers.csv", csv.encode())
    r = client.get(f"/files/{token}")
    assert r.status_code == 422
    text = html.unescape(r.text)
    assert '<table class="findings">' in text and "Col1, Col2" in text
    assert "Header of the attendee column" in text and "--attendee-column" not in text
    assert "Traceback" not in text and "timetabler-web-" not in text
    r = client.get(f"/files/{token}", params={"attendee_column": "Col1", "event_column": "Col2"})
    assert r.status_code == 200
    assert re.search(r"<th scope=\"row\">Events</th><td>2</td>", r.text)


def test_warnings_are_shown_with_their_row_and_column(client):
    csv = "Student,Exam\nHV-S0001,X1\nHV-S0001,X2\n,X3\nTotal,5\n"
    token = upload_ok(client, "with-gaps.csv", csv.encode())
    r = client.get(f"/files/{token}")
    assert r.status_code == 200
    table = html.unescape(re.search(r'<table class="findings">(.*?)</table>', r.text, re.S).group(1))
    rows = re.findall(r"<tr class=\"warning\">\s*<td>(.*?)</td>\s*<td>(.*?)</td>", table, re.S)
    where = [plain(w) for w, _ in rows]
    # Header on row 1, so the blank attendee is on row 4 and the total on row 5 (as a spreadsheet shows them).
    assert any("row 4" in w and "Student" in w for w in where), where
    assert any("row 5" in w for w in where), where


@pytest.mark.parametrize(
    "name, data, status, words",
    [
        ("enrolments.csv", b"%PDF-1.5 not a table", 400, "PDF"),
        ("enrolments.xlsx", b"\x89PNG\r\n\x1a\n" + b"\x00" * 64, 400, "PNG"),
        ("enrolments.xls", b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\x00" * 64, 400, ".xlsx workbook"),
        ("empty.csv", b"", 400, "nothing in it"),
        ("notes.zip", None, 400, "not a workbook"),
    ],
)
def test_bad_uploads_are_refused_with_a_message(client, name, data, status, words):
    if data is None:
        buffer = io.BytesIO()
        with zipfile.ZipFile(buffer, "w") as archive:
            archive.writestr("notes.txt", "hello")
        data = buffer.getvalue()
    r = post_file(client, name, data)
    assert r.status_code == status
    assert words in r.text and "Traceback" not in r.text
    assert len(client.app.state.store) == 0  # nothing kept


def test_too_large_uploads_are_refused_before_they_are_kept():
    with TestClient(create_app(WebSettings(max_upload_bytes=2048)), base_url=BASE) as c:
        r = post_file(c, "big.csv", b"Student,Exam\n" + b"HV-S0001,A\n" * 1000)
        assert r.status_code == 413 and "larger than" in r.text
        # Just under the cap passes (with the form's own bytes on top).
        assert post_file(c, "ok.csv", b"Student,Exam\n" + b"HV-S0001,A\n" * 150).status_code == 303
        assert len(c.app.state.store) == 1

        # Without a Content-Length (a chunked body) the cap holds while the body streams in.
        def body():
            yield b"--cut\r\nContent-Disposition: form-data; name=\"file\"; filename=\"big.csv\"\r\n\r\n"
            for _ in range(100):
                yield b"HV-S0001,A\n" * 100
            yield b"\r\n--cut--\r\n"

        r = c.post("/upload", content=body(), headers={**SAME, "content-type": "multipart/form-data; boundary=cut"})
        assert r.status_code == 413 and len(c.app.state.store) == 1


def test_a_request_without_a_file_is_answered(client):
    r = client.post("/upload", data={"nothing": "here"}, headers=SAME)
    assert r.status_code == 400 and "Choose a file" in r.text
    r = client.post("/upload", content=b"raw", headers={**SAME, "content-type": "text/plain"})
    assert r.status_code == 400


def test_client_file_names_never_reach_the_file_system(client):
    token = upload_ok(client, "../../../../tmp/evil.csv", TRIANGLE_CSV.encode())
    upload = client.app.state.store.get(token)
    assert upload.path.parent.parent == client.app.state.store.root
    assert upload.path.name == "enrolments.csv" and upload.name == "evil.csv"
    # Names and cell values are shown escaped: markup in them stays text.
    token = upload_ok(client, "<img src=x onerror=alert(1)>.csv",
                      b"Student,Exam\n<b>HV-S0001</b>,<script>alert(2)</script>\nHV-S0002,X\n")
    page = client.get(f"/files/{token}").text
    assert "<img src=x" not in page and "&lt;img src=x onerror=alert(1)&gt;.csv" in page
    assert "<script>alert(2)</script>" not in page


# -- safety: origin, host, unknown tokens, errors ------------------------------------------------


def test_posts_from_elsewhere_are_refused(client):
    data = {"file": ("t.csv", io.BytesIO(TRIANGLE_CSV.encode()), "text/csv")}
    assert client.post("/upload", files=data).status_code == 403  # no Origin, no Referer
    data["file"][1].seek(0)
    assert client.post("/upload", files=data, headers={"origin": "http://evil.example"}).status_code == 403
    data["file"][1].seek(0)
    r = client.post("/upload", files=data, headers={**SAME, "sec-fetch-site": "cross-site"})
    assert r.status_code == 403 and "did not come from the timetabler page" in r.text
    data["file"][1].seek(0)
    # A Referer of the page itself is enough when a browser sends no Origin.
    r = client.post("/upload", files=data, headers={"referer": BASE + "/"}, follow_redirects=False)
    assert r.status_code == 303
    assert len(client.app.state.store) == 1


def test_other_host_names_are_refused():
    with TestClient(create_app(), base_url="http://timetabler.evil.example") as c:
        r = c.get("/")
        assert r.status_code == 400 and "only at its own address" in r.text


def test_unknown_files_are_a_plain_404(client):
    for path in ("/files/AAAAAAAAAAAAAAAAAAAAAAAA", "/files/..%2F..%2Fetc", "/files/AAAAAAAAAAAAAAAAAAAAAAAA/timetable",
                 "/files/AAAAAAAAAAAAAAAAAAAAAAAA/download/timetable.xlsx"):
        r = client.get(path)
        assert r.status_code == 404, path
        assert "no longer here" in r.text or "Not here" in r.text
    assert client.get("/nowhere").status_code == 404
    wrong = client.get("/upload")  # a GET where only POST is served
    assert wrong.status_code == 405 and "<h1>" in wrong.text and "Traceback" not in wrong.text


def test_a_bug_shows_a_message_not_a_traceback(monkeypatch):
    def broken(path, options):
        raise RuntimeError("secret internals /home/clerk")

    monkeypatch.setattr(web_analysis, "analyse", broken)
    with TestClient(create_app(), base_url=BASE, raise_server_exceptions=False) as c:
        token = upload_ok(c, "t.csv", TRIANGLE_CSV.encode())
        r = c.get(f"/files/{token}")
        assert r.status_code == 500
        assert "bug in timetabler" in r.text
        assert "Traceback" not in r.text and "secret internals" not in r.text


# -- solve, progress, stop, results, downloads, delete ------------------------------------------


def wait_finished(client, token: str, seconds: float = 90.0) -> dict:
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        doc = client.get(f"/files/{token}/solving.json").json()
        if doc["state"] not in ("running", "starting"):
            return doc
        time.sleep(0.2)
    raise AssertionError("the solve did not finish in time")


def test_solve_then_timetable_then_downloads(client, tmp_path, monkeypatch):
    monkeypatch.setenv("XDG_CONFIG_HOME", str(tmp_path / "config"))  # the pseudonym key goes here
    token = upload_ok(client, "triangle.csv", TRIANGLE_CSV.encode())
    assert client.get(f"/files/{token}").status_code == 200
    assert client.get(f"/files/{token}/solving.json").json() == {"state": "none"}
    r = client.post(f"/files/{token}/solve", data={"slots": ["2", "3"], "more_slots": "4", "sessions_per_day": "2",
                                                   "time_limit": "5", "find_fewest": "on"},
                    headers=SAME, follow_redirects=False)
    assert r.status_code == 303 and re.fullmatch(rf"/files/{token}/solves/[A-Za-z0-9_-]{{8,32}}/solving", r.headers["location"])
    doc = wait_finished(client, token)
    assert doc["state"] == "finished"
    states = {s["slots"]: s["status"] for s in doc["slots"]}
    assert states[2] == "infeasible" and states[3] in ("optimal", "feasible") and states[4] in ("optimal", "feasible")

    assert doc["fewest"]["upper"] == 3 and doc["fewest"]["proven"] is True

    page = client.get(f"/files/{token}/timetable")
    assert page.status_code == 200
    # A triangle needs exactly 3 slots (its chromatic number), and the clique proves it.
    assert re.search(r'id="fewest">Fewest slots: <strong>3</strong> — proven', page.text)
    compare = re.search(r'<table class="compare" id="compare">(.*?)</table>', page.text, re.S).group(1)
    verdicts = re.search(r'<th scope="row">Validator</th>(.*?)</tr>', compare, re.S).group(1)
    # The independent validator's verdict: nothing for 2 slots (no timetable), valid for 3 and 4.
    assert [plain(c).strip() for c in re.findall(r"<td[^>]*>(.*?)</td>", verdicts, re.S)] == ["", "valid", "valid"]
    assert re.search(r"A, B, C|pairwise share|3 events", page.text)  # the reason 2 slots cannot work
    grid = re.search(r'<table class="grid" id="grid">(.*?)</table>', page.text, re.S).group(1)
    placed = dict()
    for number, cell in re.findall(r'<td><div class="slot-head">Slot (\d+).*?</div>(.*?)</td>', grid, re.S):
        for code in re.findall(r'<span class="code"[^>]*>([^<]+)</span>', cell):
            placed[code] = int(number)
    # Direct check from the enrolments, not through any project code: nobody sits two exams at once.
    assert sorted(placed) == ["A", "B", "C", "D"]
    assert len({placed["A"], placed["B"], placed["C"]}) == 3

    book_bytes = client.get(f"/files/{token}/download/timetable.xlsx")
    assert book_bytes.status_code == 200
    book = openpyxl.load_workbook(io.BytesIO(book_bytes.content))
    texts = {str(cell.value) for sheet in book.worksheets for row in sheet.iter_rows() for cell in row if cell.value is not None}
    assert {"A", "B", "C", "D"} <= texts and "HV-S0001" in texts

    hidden = client.get(f"/files/{token}/download/timetable.xlsx?pseudonyms=1")
    assert hidden.status_code == 200 and "timetable-pseudonyms.xlsx" in hidden.headers["content-disposition"]
    book = openpyxl.load_workbook(io.BytesIO(hidden.content))
    texts = {str(cell.value) for sheet in book.worksheets for row in sheet.iter_rows() for cell in row if cell.value is not None}
    assert not any("HV-S000" in t for t in texts) and any(t.startswith("P-") for t in texts)
    assert (tmp_path / "config" / "timetabler" / "pseudonym-key").exists()

    csv_zip = client.get(f"/files/{token}/download/tables-csv.zip")
    assert csv_zip.status_code == 200
    with zipfile.ZipFile(io.BytesIO(csv_zip.content)) as archive:
        names = archive.namelist()
        assert names and all(n.endswith(".csv") for n in names)
        assert any("HV-S0003" in archive.read(n).decode("utf-8-sig") for n in names)

    # Generic slots have no dates, so calendars are not offered, and asking anyway is answered.
    assert "need slots with dates" in page.text
    r = client.get(f"/files/{token}/download/calendars-ics.zip")
    assert r.status_code == 400 and "Traceback" not in r.text
    assert client.get(f"/files/{token}/download/passwd").status_code == 404

    # Delete: the folder goes, and the page says so afterwards.
    folder = client.app.state.store.get(token).folder
    r = client.post(f"/files/{token}/delete", headers=SAME)
    assert r.status_code == 200 and "deleted" in r.text
    assert not folder.exists()
    assert client.get(f"/files/{token}").status_code == 404


def slow_to_prove_csv() -> bytes:
    """An exam session large enough that CP-SAT finds timetables at once but cannot prove the
    best one within seconds (the sample week is now proven optimal in about two), so that a
    solve is still running while the test watches its progress and stops it."""
    rng = random.Random(11)
    lines = ["Student,Exam"]
    for n in range(1000):
        for exam in rng.sample(range(300), 3):
            lines.append(f"HV-S{n:05d},EX{exam:03d}")
    return ("\n".join(lines) + "\n").encode()


def test_one_solve_at_a_time_and_stop_ends_the_child(client):
    token = upload_ok(client, "session.csv", slow_to_prove_csv())
    assert client.get(f"/files/{token}?slots=12").status_code == 200
    form = {"slots": ["12", "13"], "sessions_per_day": "2", "time_limit": "60"}
    assert client.post(f"/files/{token}/solve", data=form, headers=SAME, follow_redirects=False).status_code == 303
    second = client.post(f"/files/{token}/solve", data=form, headers=SAME)
    assert second.status_code == 409 and "already running" in second.text
    page = client.get(f"/files/{token}/solving")
    assert page.status_code == 200 and 'id="stop-button"' in page.text
    job = client.app.state.store.get(token).state["job"]
    # Live progress: the best penalty so far and the bound arrive while the solver runs (a busy
    # machine shared with other work may take a while to the first timetable).
    deadline = time.monotonic() + 60
    seen = None
    while time.monotonic() < deadline and seen is None:
        rows = client.get(f"/files/{token}/solving.json").json()["slots"]
        seen = next((row for row in rows if row["state"] == "solving" and row["best"] is not None), None)
        time.sleep(0.2)
    assert seen is not None, "no progress reached the page"
    assert seen["bound"] is None or seen["bound"] <= seen["best"]
    r = client.post(f"/files/{token}/stop", headers=SAME, follow_redirects=False)
    assert r.status_code == 303
    assert job.state == "cancelled" and job.wait(10)
    assert job._process.poll() is not None  # the solver's process is gone
    assert client.get(f"/files/{token}/solving.json").json()["state"] == "cancelled"
    # After a stop a new solve may start at once.
    assert client.post(f"/files/{token}/solve", data={**form, "slots": ["7"], "time_limit": "3"},
                       headers=SAME, follow_redirects=False).status_code == 303
    assert wait_finished(client, token)["state"] == "finished"


def test_bad_solve_choices_are_explained(client):
    token = upload_ok(client, "triangle.csv", TRIANGLE_CSV.encode())
    client.get(f"/files/{token}")
    for data, words in [
        ({"time_limit": "5"}, "at least one number of slots"),
        ({"slots": ["3"], "time_limit": "zero"}, "Time limit must be a whole number"),
        ({"slots": ["3"], "weight_back_to_back": "-4"}, "a weight must be a whole number, 0 or more"),
        ({"more_slots": "1-40"}, "at most"),
    ]:
        r = client.post(f"/files/{token}/solve", data=data, headers=SAME)
        assert r.status_code == 400 and words in r.text, data


def test_calendars_download_for_dated_slots(client, tmp_path):
    from timetabler.intake.template import write_template

    example = write_template(tmp_path / "example.xlsx", example=True)
    token = upload_ok(client, "example.xlsx", Path(example).read_bytes())
    page = client.get(f"/files/{token}")
    assert page.status_code == 200, page.text[:2000]
    slots = re.findall(r'name="slots" value="(\d+)"', page.text)
    r = client.post(f"/files/{token}/solve", data={"slots": slots[-1:], "time_limit": "5"}, headers=SAME, follow_redirects=False)
    assert r.status_code == 303
    assert wait_finished(client, token)["state"] == "finished"
    r = client.get(f"/files/{token}/download/calendars-ics.zip")
    assert r.status_code == 200, r.text[:1000]
    with zipfile.ZipFile(io.BytesIO(r.content)) as archive:
        calendars = [n for n in archive.namelist() if n.endswith(".ics")]
        assert calendars
        assert archive.read(calendars[0]).startswith(b"BEGIN:VCALENDAR")


def test_uploads_are_deleted_when_the_server_stops():
    with TestClient(create_app(), base_url=BASE) as c:
        upload_ok(c, "t.csv", TRIANGLE_CSV.encode())
        root = c.app.state.store.root
        assert any(root.iterdir())
    assert not root.exists()


def test_serve_command_help_teaches_and_a_busy_port_is_a_clear_error(run_command):
    import socket

    help_text = run_command("serve", "--help")
    words = " ".join(help_text.stdout.split())
    assert help_text.status == 0
    assert "Everything stays on this computer" in words and "--port" in words and "--open" in words
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        sock.listen()
        port = sock.getsockname()[1]
        result = run_command("serve", "--port", str(port))
    assert result.status == 2 and "already in use" in result.stderr


class _FormAudit(HTMLParser):
    """Collects the form controls of a page and the labels that name them."""

    def __init__(self):
        super().__init__()
        self.controls, self.labelled, self.open_labels, self.buttons = [], set(), 0, []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "label":
            self.open_labels += 1
            if a.get("for"):
                self.labelled.add(a["for"])
        elif tag in ("input", "select", "textarea") and a.get("type") not in ("hidden", "submit"):
            self.controls.append((a.get("id"), self.open_labels > 0, a.get("name")))
        elif tag == "button":
            self.buttons.append(a)

    def handle_endtag(self, tag):
        if tag == "label":
            self.open_labels -= 1


def test_every_control_has_a_label(client):
    """Keyboard and screen-reader use: each input is named by a label (wrapped or by for=id)."""
    token = upload_ok(client, "triangle.csv", TRIANGLE_CSV.encode())
    for path in ("/", f"/files/{token}"):
        audit = _FormAudit()
        audit.feed(client.get(path).text)
        assert audit.controls, path
        for control_id, wrapped, name in audit.controls:
            assert wrapped or control_id in audit.labelled, f"{path}: control {name!r} has no label"
        assert all(b.get("type") == "submit" for b in audit.buttons)


def test_weights_from_the_form_reach_the_solver(client):
    # One student sits A and B; with 2 slots on one day they are back to back whatever the order,
    # so the penalty is the back-to-back weight: 10 by default (model.Weights), 0 when switched off.
    token = upload_ok(client, "pair.csv", b"Student,Exam\nHV-S0001,A\nHV-S0001,B\n")
    client.get(f"/files/{token}")
    penalties = {}
    for weight in ("10", "0"):
        r = client.post(f"/files/{token}/solve", data={"slots": ["2"], "sessions_per_day": "2", "time_limit": "5",
                                                       "weight_back_to_back": weight}, headers=SAME, follow_redirects=False)
        assert r.status_code == 303
        assert wait_finished(client, token)["state"] == "finished"
        job = client.app.state.store.get(token).state["job"]
        penalties[weight] = job.runs[2].penalty
        assert job.runs[2].validation.soft.get("back_to_back") == 1
    assert penalties == {"10": 10, "0": 0}
