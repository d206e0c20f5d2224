"""What the files downloaded from the web page say about the upload (issue 15, item 6).

A workbook made by the page named the upload ``enrolments.xlsx`` (the name it is stored
under) and showed the server's private temporary path and the upload's token in the
Overview and in every warning row. On a laptop that path holds the user's name. The
files must name the file the user chose, made safe, and nothing of the private folder.
"""

from __future__ import annotations

import io
import zipfile

import openpyxl
import pytest
from starlette.testclient import TestClient

from timetabler.web.app import WebSettings, create_app
from test_web_routes import BASE, upload_ok
from test_web_solves import finished, start

pytestmark = pytest.mark.filterwarnings("ignore::DeprecationWarning")


def workbook_with_warnings() -> bytes:
    """Three exams, and two rows intake warns about (a duplicate enrolment, a row without an exam)."""
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = "Enrolments"
    for row in (["Student", "Exam"], ["HV-S0001", "A"], ["HV-S0001", "B"], ["HV-S0002", "B"],
                ["HV-S0002", "C"], ["HV-S0002", "C"], ["HV-S0003", None]):
        sheet.append(row)
    out = io.BytesIO()
    book.save(out)
    return out.getvalue()


def test_downloads_name_the_file_the_user_chose_and_nothing_private(tmp_path, monkeypatch):
    monkeypatch.setenv("XDG_CONFIG_HOME", str(tmp_path / "config"))
    with TestClient(create_app(WebSettings(count_budget_seconds=5.0)), base_url=BASE) as client:
        # A browser may send the folders of the name; only the name itself, made safe, is kept.
        token = upload_ok(client, "C:\\Users\\clerk\\Spring exams.xlsx", workbook_with_warnings())
        root = str(client.app.state.store.root)
        assert client.get(f"/files/{token}").status_code == 200
        base = start(client, token, {"slots": ["3"], "sessions_per_day": "3", "time_limit": "5"})
        assert finished(client, base)["state"] == "finished"

        private = (root, token, "enrolments.xlsx", "clerk", "timetabler-web-")
        book = openpyxl.load_workbook(io.BytesIO(client.get(f"{base}/download/timetable.xlsx").content))
        texts = [str(v) for sheet in book.worksheets for row in sheet.iter_rows(values_only=True) for v in row
                 if v is not None]
        leaks = [t for t in texts if any(p in t for p in private)]
        assert not leaks, leaks
        overview = [str(v) for row in book["Overview"].iter_rows(values_only=True) for v in row if v is not None]
        assert any("Spring exams.xlsx" in t for t in overview)
        warnings = [t for t in overview if "row 7" in t or "no event" in t]
        assert warnings and all(t.startswith("Spring exams.xlsx") for t in warnings if "sheet 'Enrolments'" in t)

        for name in ("tables-csv.zip",):
            with zipfile.ZipFile(io.BytesIO(client.get(f"{base}/download/{name}").content)) as archive:
                for member in archive.namelist():
                    text = archive.read(member).decode("utf-8-sig")
                    assert not any(p in text for p in private), member
