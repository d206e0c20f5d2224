"""How quickly the local web page answers, on the sample workbooks. Prints a table.

For each file: the upload (POST until the redirect), the first overview response (reading,
inspect figures, and up to 1.5 s waiting for the count), the time until the counts are
ready, the time from pressing Solve until the solver's child process reports it has
started (process start and imports), and a whole solve of one slot count with the given
time limit. Runs through the ASGI test client in this process, so no network is involved.

    python benchmarks/web.py                 # both samples, 5 s per solve
    python benchmarks/web.py --time-limit 10 sample_data/exam_week.xlsx
"""

from __future__ import annotations

import argparse
import io
import os
import re
import time
import warnings
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
BASE = "http://127.0.0.1:8765"


def measure(path: Path, time_limit: int) -> dict:
    from starlette.testclient import TestClient

    from timetabler.web.app import WebSettings, create_app

    row: dict = {"file": path.name, "size kB": round(path.stat().st_size / 1024)}
    with TestClient(create_app(WebSettings()), base_url=BASE) as client:
        t = time.perf_counter()
        r = client.post("/upload", files={"file": (path.name, io.BytesIO(path.read_bytes()))},
                        headers={"origin": BASE}, follow_redirects=False)
        row["upload s"] = time.perf_counter() - t
        token = r.headers["location"].rsplit("/", 1)[1]
        t = time.perf_counter()
        page = client.get(f"/files/{token}")
        row["overview s"] = time.perf_counter() - t
        source = re.search(r'data-source="([^"]+counts\.json[^"]+)"', page.text)
        if source:
            while client.get(source.group(1).replace("&amp;", "&")).json()["state"] == "running":
                time.sleep(0.05)
        row["counts ready s"] = time.perf_counter() - t
        page = client.get(f"/files/{token}")
        ticked = re.findall(r'name="slots" value="(\d+)" checked', page.text)[:1]
        t = time.perf_counter()
        client.post(f"/files/{token}/solve", data={"slots": ticked, "time_limit": str(time_limit)},
                    headers={"origin": BASE}, follow_redirects=False)
        job = client.app.state.store.get(token).state["job"]
        k = int(ticked[0])
        while job.slots[k].started is None and job.running:
            time.sleep(0.01)
        row["solver start s"] = time.perf_counter() - t
        job.wait(time_limit * 4 + 60)
        row["solve s"] = time.perf_counter() - t
        row["slots"] = k
        row["status"] = job.runs[k].status if k in job.runs else job.state
    return row


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("files", nargs="*", type=Path)
    parser.add_argument("--time-limit", type=int, default=5, help="Seconds for the one solve (default 5).")
    args = parser.parse_args()
    files = args.files or [ROOT / "sample_data" / "exam_week.xlsx", ROOT / "sample_data" / "term_exams.xlsx"]
    warnings.simplefilter("ignore")
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(f"cores: {os.cpu_count()}, load average (1 min) at start: {load:.2f}")
    rows = [measure(f, args.time_limit) for f in files]
    columns = ["file", "size kB", "upload s", "overview s", "counts ready s", "solver start s", "slots", "solve s", "status"]
    widths = [max(len(c), *(len(_text(r.get(c))) for r in rows)) for c in columns]
    print("  ".join(c.ljust(w) for c, w in zip(columns, widths)))
    for r in rows:
        print("  ".join(_text(r.get(c)).ljust(w) for c, w in zip(columns, widths)))


def _text(value) -> str:
    return f"{value:.2f}" if isinstance(value, float) else str(value)


if __name__ == "__main__":
    main()
