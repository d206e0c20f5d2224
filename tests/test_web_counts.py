"""Counts on the web page go on in the background until exact (issue 15, item 4).

The page used to cut the count off at an 8 s budget, and its workbook then said "exact: no,
0 – 20,316,635,136,000" for a number of slots the command line counts as exactly 0 in a
few seconds. Now the page shows the bounds of a quick first look, keeps counting in a
child process with at least the command line's budget, and replaces the table (and what
the downloads say) when the exact figures arrive.
"""

from __future__ import annotations

import csv
import io
import json
import random
import re
import subprocess
import sys
import time
import zipfile

import openpyxl
import pytest
from ortools.sat.python import cp_model
from starlette.testclient import TestClient

from timetabler.web.app import WebSettings, create_app
from test_web_routes import BASE, plain, upload_ok
from test_web_solves import finished, start

pytestmark = pytest.mark.filterwarnings("ignore::DeprecationWarning")


def random_clashes(n: int = 30, p: float = 0.2, seed: int = 1) -> list[tuple[int, int]]:
    """Each pair of n exams clashes with probability p (the G(n, p) model), seeded."""
    rng = random.Random(seed)
    return [(i, j) for i in range(n) for j in range(i + 1, n) if rng.random() < p]


def enrolments(edges: list[tuple[int, int]]) -> bytes:
    """One invented student per clash, sitting both exams: the conflict graph is exactly ``edges``."""
    lines = ["Student,Exam"]
    for s, (i, j) in enumerate(edges):
        lines += [f"HV-S{s:04d},EX{i:02d}", f"HV-S{s:04d},EX{j:02d}"]
    return ("\n".join(lines) + "\n").encode()


def colourable(edges: list[tuple[int, int]], n: int, k: int) -> bool:
    """An independent check, with a CP-SAT model of our own: can the exams take k slots with no clash?"""
    model = cp_model.CpModel()
    slot = [model.new_int_var(0, k - 1, f"x{i}") for i in range(n)]
    for i, j in edges:
        model.add(slot[i] != slot[j])
    solver = cp_model.CpSolver()
    solver.parameters.max_time_in_seconds = 60
    solver.parameters.num_workers = 1
    status = solver.solve(model)
    assert status in (cp_model.OPTIMAL, cp_model.FEASIBLE, cp_model.INFEASIBLE)
    return status != cp_model.INFEASIBLE


def count_cell(fragment: str, k: int) -> str:
    row = re.search(rf'<tr>\s*<th scope="row" class="num">{k}</th>(.*?)</tr>', fragment, re.S).group(1)
    return plain(row)


def first_look(client, token: str, query: str):
    """The overview once the quick first look is done (on a busy machine it may take a moment)."""
    deadline = time.monotonic() + 30
    while client.get(f"/files/{token}/counts.json{query}").json()["state"] in ("none", "counting"):
        assert time.monotonic() < deadline, "no first look at the counts in 30 s"
        time.sleep(0.1)
    return client.get(f"/files/{token}{query}")


def test_a_count_cut_short_goes_on_until_exact_and_an_impossible_count_is_zero(tmp_path):
    edges = random_clashes()
    # Three slots are impossible here (checked by our own model), though no four exams pairwise
    # clash, so no clique shows it: only an exact count (or a proof) does.
    assert not colourable(edges, 30, 3) and colourable(edges, 30, 4)
    data = enrolments(edges)
    source = tmp_path / "clashes.csv"
    source.write_bytes(data)
    # The command line's own figure (its default time limit), the page must end up with the same.
    cli = subprocess.run([sys.executable, "-m", "timetabler", "count", str(source), "--slots", "3", "4", "--json"],
                         capture_output=True, text=True, timeout=300)
    assert cli.returncode == 0, cli.stderr
    reference = {c["slots"]: c for c in json.loads(cli.stdout)["counts"]}
    assert reference[3]["timetables"] == "0" and reference[3]["exact"] and reference[4]["exact"]

    settings = WebSettings(count_first_seconds=0.5, count_budget_seconds=120)
    with TestClient(create_app(settings), base_url=BASE) as client:
        token = upload_ok(client, "clashes.csv", data)
        assert client.get(f"/files/{token}?slots=3+4").status_code == 200
        first = first_look(client, token, "?slots=3+4")
        # The quick look is shown at once, marked as bounds, with a word that counting goes on.
        assert 'data-state="refining"' in first.text, "the first look was exact: this machine is too fast for the test"
        assert "bounds" in count_cell(first.text, 3) and "goes on in the background" in plain(first.text)
        deadline = time.monotonic() + 150
        doc = client.get(f"/files/{token}/counts.json?slots=3+4").json()
        while doc["state"] == "refining" and time.monotonic() < deadline:
            time.sleep(0.5)
            doc = client.get(f"/files/{token}/counts.json?slots=3+4").json()
        assert doc["state"] == "done"
        fragment = client.get(f"/files/{token}/counts.json?slots=3+4&html=1").json()["html"]
        assert 'id="counting"' not in fragment
        assert "none" in count_cell(fragment, 3) and "exact" in count_cell(fragment, 3)
        assert reference[4]["timetables"] in count_cell(fragment, 4).replace(" ", "")

        # The downloads say the same: 3 slots exactly 0, 4 slots the command line's figure.
        base = start(client, token, {"slots": ["3", "4"], "sessions_per_day": "2", "time_limit": "2"})
        assert finished(client, base)["state"] == "finished"
        with zipfile.ZipFile(io.BytesIO(client.get(f"{base}/download/tables-csv.zip").content)) as archive:
            name = next(n for n in archive.namelist() if n.lower().startswith("counts"))
            rows = list(csv.DictReader(io.StringIO(archive.read(name).decode("utf-8-sig"))))
        by_k = {int(r["Slots"]): r for r in rows}
        assert by_k[3]["Clash-free timetables"] == "0" and by_k[3]["Exact"].lower() in ("yes", "true")
        assert by_k[4]["Clash-free timetables"] == reference[4]["timetables"]
        book = openpyxl.load_workbook(io.BytesIO(client.get(f"{base}/download/timetable.xlsx").content), read_only=True)
        sheet = book["Counts"]
        table = [row for row in sheet.iter_rows(values_only=True) if any(v is not None for v in row)]
        header = next(i for i, row in enumerate(table) if "Slots" in row and "Exact" in row)
        columns = list(table[header])
        found = {int(row[columns.index("Slots")]): row for row in table[header + 1:] if row[0] is not None}
        assert str(found[3][columns.index("Clash-free timetables")]) == "0"
        assert str(found[3][columns.index("Exact")]).lower() in ("yes", "true")


def test_deleting_the_upload_ends_its_background_count():
    edges = random_clashes()
    settings = WebSettings(count_first_seconds=0.5, count_budget_seconds=120)
    with TestClient(create_app(settings), base_url=BASE) as client:
        token = upload_ok(client, "clashes.csv", enrolments(edges))
        assert client.get(f"/files/{token}?slots=3+4").status_code == 200
        assert 'data-state="refining"' in first_look(client, token, "?slots=3+4").text
        stored = client.app.state.store.get(token)
        task = next(iter(next(iter(stored.state["analyses"].values())).tasks.values()))
        deadline = time.monotonic() + 20
        while task._process is None and time.monotonic() < deadline:
            time.sleep(0.05)
        assert task._process is not None
        assert client.post(f"/files/{token}/delete", headers={"origin": BASE}).status_code == 200
        assert task._process.poll() is not None and task.state == "stopped"
