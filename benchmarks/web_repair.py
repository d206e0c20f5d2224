"""Repair through the local web page: how many events move after late enrolments, and how fast. Prints a table.

For each file: solve K slots on the page, download the workbook, add late enrolments (each
a new attendee sitting two events that the published timetable put in the same slot, the
pairs chosen disjoint), upload the changed enrolments and solve again with the workbook as
the earlier timetable. Every soft goal but "moved" is switched off, so the best repair is
the one with the fewest moves. Each late pair forces at least one of its two events to move
and the pairs share no event, so the number of pairs is a lower bound on the moves;
"optimal" proves the moves listed are the fewest possible. Runs through the ASGI test client
in this process; no network is involved.

    python benchmarks/web_repair.py                    # exam_week sample and a 300-exam session
    python benchmarks/web_repair.py --time-limit 20 --late 1 5 20
"""

from __future__ import annotations

import argparse
import io
import random
import re
import tempfile
import time
import warnings
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
BASE = "http://127.0.0.1:8765"
SAME = {"origin": BASE}
QUIET = {f"weight_{n}": "0" for n in ("back_to_back", "overnight", "same_day", "proximity", "large_late", "preferred_slot",
                                     "penalised_slot", "room_split", "preferred_room", "penalised_room")}


def session_csv() -> tuple[str, bytes]:
    """A made-up exam session of Harrowgate Vale College: 1,000 students, 300 exams, 3 each."""
    rng = random.Random(11)
    lines = ["Student,Exam"]
    for n in range(1000):
        for exam in rng.sample(range(300), 3):
            lines.append(f"HV-S{n:05d},EX{exam:03d}")
    return "session-300.csv", ("\n".join(lines) + "\n").encode()


def enrolment_rows(name: str, data: bytes) -> list[tuple[str, str]]:
    from timetabler.intake import read_problem

    with tempfile.TemporaryDirectory() as folder:
        tmp = Path(folder) / name
        tmp.write_bytes(data)
        return list(read_problem(tmp).problem.enrolments)


def solve(client, token: str, k: int, limit: int, earlier: tuple[str, bytes] | None = None) -> tuple[object, float]:
    files = {"earlier": (earlier[0], io.BytesIO(earlier[1]), "application/octet-stream")} if earlier else None
    t = time.perf_counter()
    r = client.post(f"/files/{token}/solve", data={"slots": [str(k)], "time_limit": str(limit), **(QUIET if earlier else {})},
                    files=files, headers=SAME, follow_redirects=False)
    assert r.status_code == 303, r.text[:400]
    job = client.app.state.store.get(token).state["job"]
    job.wait(limit * 4 + 60)
    return job.runs[k], time.perf_counter() - t


def upload(client, name: str, data: bytes) -> str:
    r = client.post("/upload", files={"file": (name, io.BytesIO(data))}, headers=SAME, follow_redirects=False)
    token = r.headers["location"].rsplit("/", 1)[1]
    client.get(f"/files/{token}")
    return token


def measure(name: str, data: bytes, k: int, late: int, limit: int) -> dict:
    from starlette.testclient import TestClient

    from timetabler.web.app import WebSettings, create_app

    rows = enrolment_rows(name, data)
    with TestClient(create_app(WebSettings(count_budget_seconds=2.0)), base_url=BASE) as client:
        first = upload(client, name, data)
        run, _ = solve(client, first, k, limit)
        book = client.get(f"/files/{first}/download/timetable.xlsx").content
        placed = dict(run.assignment)
        by_slot: dict[int, list[str]] = {}
        for event, s in sorted(placed.items()):
            by_slot.setdefault(s, []).append(event)
        pairs, used = [], set()
        for events in by_slot.values():
            for a, b in zip(events[0::2], events[1::2]):
                if len(pairs) < late and a not in used and b not in used:
                    pairs.append((a, b))
                    used |= {a, b}
        changed = rows + [(f"HV-L{i:04d}", e) for i, pair in enumerate(pairs) for e in pair]
        text = "Student,Exam\n" + "".join(f"{a},{e}\n" for a, e in changed)
        second = upload(client, "late.csv", text.encode())
        repaired, seconds = solve(client, second, k, limit, earlier=("published.xlsx", book))
        page = client.get(f"/files/{second}/timetable").text
        listed = len(re.findall(r'<td class="code">', re.search(r'id="moves">(.*?)</table>', page, re.S).group(1))) \
            if 'id="moves"' in page else 0
    return {"file": name, "events": len(placed), "slots": k, "late pairs": len(pairs), "moves": len(repaired.moves),
            "listed": listed, "status": repaired.status, "repair s": seconds}


def main() -> None:
    warnings.filterwarnings("ignore", category=DeprecationWarning)
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--time-limit", type=int, default=10)
    parser.add_argument("--late", type=int, nargs="+", default=[1, 5])
    args = parser.parse_args()
    cases = [("exam_week.xlsx", (ROOT / "sample_data" / "exam_week.xlsx").read_bytes(), 10), (*session_csv(), 14)]
    results = [measure(name, data, k, late, args.time_limit) for name, data, k in cases for late in args.late]
    heads = list(results[0])
    print(" | ".join(heads))
    for r in results:
        print(" | ".join(f"{r[h]:.2f}" if isinstance(r[h], float) else str(r[h]) for h in heads))


if __name__ == "__main__":
    main()
