"""The whole job in a real browser: headless Chromium drives ``timetabler serve``.

Uploads the sample workbook of the fictional Harrowgate Vale College, waits for the counts
table, runs a solve, downloads the workbook and opens it with openpyxl. A screenshot of
each page is written under the test's temporary folder; with
``TIMETABLER_SCREENSHOT_DIR`` set, the overview and timetable screenshots are also copied
there (that is how ``docs/screenshots/`` is made for the README).

Needs Debian's ``chromium`` and ``chromium-driver`` packages and the ``selenium`` package;
skips, saying so, when any is missing. The server binds 127.0.0.1 on a free port and is
stopped at the end whatever happens; the browser fetches nothing but that address.
"""

from __future__ import annotations

import os
import shutil
import signal
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

import openpyxl
import pytest

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
DRIVER = shutil.which("chromedriver")

selenium = pytest.importorskip("selenium", reason="selenium is not installed (pip install '.[test]')")
if CHROMIUM is None or DRIVER is None:
    pytest.skip(
        "Chromium or its driver is not installed (Debian: apt-get install chromium chromium-driver); "
        "the real-browser test is skipped",
        allow_module_level=True,
    )

from selenium import webdriver  # noqa: E402
from selenium.webdriver.chrome.service import Service  # noqa: E402
from selenium.webdriver.common.by import By  # noqa: E402
from selenium.webdriver.support import expected_conditions as EC  # noqa: E402
from selenium.webdriver.support.ui import WebDriverWait  # noqa: E402

SAMPLE = Path(__file__).resolve().parents[2] / "sample_data" / "exam_week.xlsx"

# Selenium Manager is never needed (the driver's path is given); make sure it would send nothing either.
os.environ.setdefault("SE_AVOID_STATS", "true")

DROP_SCRIPT = """
const [name, text] = arguments;
const data = new DataTransfer();
data.items.add(new File([text], name, {type: "text/csv"}));
const zone = document.getElementById("drop-zone");
for (const type of ["dragenter", "dragover", "drop"]) {
  zone.dispatchEvent(new DragEvent(type, {dataTransfer: data, bubbles: true, cancelable: true}));
}
"""


def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


@pytest.fixture
def server(tmp_path):
    """``timetabler serve`` on a free loopback port; stopped (Ctrl+C, then kill) at the end."""
    port = _free_port()
    log = open(tmp_path / "server.log", "wb")
    process = subprocess.Popen(
        [sys.executable, "-m", "timetabler", "serve", "--port", str(port), "--count-seconds", "10"],
        stdout=log, stderr=subprocess.STDOUT, env={**os.environ, "PYTHONUNBUFFERED": "1"},
    )
    url = f"http://127.0.0.1:{port}/"
    deadline = time.monotonic() + 30
    while True:
        try:
            with urllib.request.urlopen(url, timeout=2) as response:
                if response.status == 200:
                    break
        except OSError:
            pass
        if process.poll() is not None or time.monotonic() > deadline:
            process.kill()
            log.close()
            pytest.fail("the page server did not start:\n" + (tmp_path / "server.log").read_text(errors="replace"))
        time.sleep(0.2)
    try:
        yield url
    finally:
        process.send_signal(signal.SIGINT)
        try:
            process.wait(15)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait(5)
        log.close()


@pytest.fixture
def browser(tmp_path):
    downloads = tmp_path / "downloads"
    downloads.mkdir()
    options = webdriver.ChromeOptions()
    options.binary_location = CHROMIUM
    for arg in ("--headless=new", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                "--disable-background-networking", "--disable-component-update", "--disable-sync",
                "--disable-default-apps", "--disable-extensions", "--disable-dev-shm-usage",
                "--window-size=1280,1700", f"--user-data-dir={tmp_path / 'profile'}"):
        options.add_argument(arg)
    options.add_experimental_option("prefs", {
        "download.default_directory": str(downloads),
        "download.prompt_for_download": False,
        "safebrowsing.enabled": False,
    })
    driver = webdriver.Chrome(service=Service(executable_path=DRIVER), options=options)
    driver.execute_cdp_cmd("Browser.setDownloadBehavior", {"behavior": "allow", "downloadPath": str(downloads)})
    driver.downloads = downloads
    try:
        yield driver
    finally:
        driver.quit()


def _shot(driver, folder: Path, name: str) -> Path:
    """Screenshot of the whole page (the window is grown to the page's height first)."""
    driver.set_window_size(1280, 900)
    height = driver.execute_script("return Math.max(document.body.scrollHeight, document.documentElement.scrollHeight)")
    driver.set_window_size(1280, min(max(int(height) + 40, 900), 6000))
    path = folder / f"{name}.png"
    assert driver.save_screenshot(str(path))
    assert path.stat().st_size > 10_000  # a blank page compresses to far less
    return path


def test_upload_count_solve_download_in_chromium(server, browser, tmp_path):
    shots = tmp_path / "screenshots"
    shots.mkdir()
    try:
        _whole_job(server, browser, shots)
    except Exception as exc:
        # Leave what a person would need to see why: the page, a picture of it, the server's log.
        (shots / "failure.html").write_text(browser.page_source, encoding="utf-8")
        browser.save_screenshot(str(shots / "failure.png"))
        log = (tmp_path / "server.log").read_text(errors="replace")[-4000:]
        raise AssertionError(f"{type(exc).__name__} at {browser.current_url}: {exc}\n--- server log ---\n{log}") from exc


def _whole_job(server, browser, shots):
    wait = WebDriverWait(browser, 60)

    browser.get(server)
    assert "Build a timetable" in browser.find_element(By.TAG_NAME, "h1").text
    home = _shot(browser, shots, "1-upload")

    browser.find_element(By.ID, "file-input").send_keys(str(SAMPLE))
    browser.find_element(By.CSS_SELECTOR, "#upload-form button[type=submit]").click()
    counts = wait.until(EC.presence_of_element_located((By.ID, "counts")))
    rows = counts.find_elements(By.CSS_SELECTOR, "tbody tr")
    assert len(rows) >= 3
    assert "exact" in counts.text
    assert browser.find_element(By.CSS_SELECTOR, "figure.chart svg").is_displayed()
    overview = _shot(browser, shots, "2-overview")

    limit = browser.find_element(By.ID, "time_limit")
    limit.clear()
    limit.send_keys("8")
    ticked = [box for box in browser.find_elements(By.CSS_SELECTOR, "input[name=slots]") if box.is_selected()]
    assert ticked, "the page suggests slot counts to solve"
    browser.find_element(By.ID, "solve-button").click()
    wait.until(EC.presence_of_element_located((By.ID, "progress")))
    # The page's script fills in the live figures once the solver has started.
    wait.until(lambda d: "solving" in d.find_element(By.ID, "progress").text or "grid" in d.page_source)
    progress = _shot(browser, shots, "3-solving")

    grid = WebDriverWait(browser, 120).until(EC.presence_of_element_located((By.ID, "grid")))
    assert "Session 1" in grid.text
    assert "valid" in browser.find_element(By.ID, "compare").text
    timetable = _shot(browser, shots, "4-timetable")

    browser.find_element(By.ID, "download-xlsx").click()
    deadline = time.monotonic() + 60
    target = browser.downloads / "timetable.xlsx"
    while not target.exists() and time.monotonic() < deadline:
        time.sleep(0.2)
    assert target.exists(), f"no download; folder holds {list(browser.downloads.iterdir())}"
    book = openpyxl.load_workbook(target)
    assert len(book.sheetnames) >= 3
    codes = {str(c.value) for sheet in book.worksheets for row in sheet.iter_rows() for c in row if c.value}
    assert {"BIO101", "MTH110"} <= codes

    # Drag and drop on the first page uploads too (the page's script puts the file in the form).
    browser.get(server)
    browser.execute_script(DROP_SCRIPT, "dropped.csv", "Student,Exam\nHV-S0001,A\nHV-S0001,B\nHV-S0002,B\n")
    figures = wait.until(EC.presence_of_element_located((By.ID, "figures")))
    assert "dropped.csv" in browser.find_element(By.TAG_NAME, "h1").text
    assert "Events" in figures.text

    for path in (home, overview, progress, timetable):
        assert path.exists()
    keep = os.environ.get("TIMETABLER_SCREENSHOT_DIR")
    if keep:
        Path(keep).mkdir(parents=True, exist_ok=True)
        for path in (overview, progress, timetable):
            shutil.copy(path, Path(keep) / f"web-{path.stem.split('-', 1)[1]}.png")


def test_a_slow_upload_shows_its_progress_then_the_reading(server, browser, tmp_path):
    """A large file on a slow link: the first page shows how much is sent, then that it is reading
    (issue 15, item 13: a 19 MB upload showed nothing for 22 s). The link is slowed by Chromium's
    own network emulation; everything stays on 127.0.0.1."""
    big = tmp_path / "large-session.csv"
    lines = ["Student,Exam"] + [f"HV-S{n:06d},EX{n % 97:03d}" for n in range(60_000)]
    big.write_text("\n".join(lines) + "\n", encoding="utf-8")  # about 1.1 MB
    browser.get(server)
    browser.execute_cdp_cmd("Network.enable", {})
    browser.execute_cdp_cmd("Network.emulateNetworkConditions", {
        "offline": False, "latency": 0, "downloadThroughput": -1, "uploadThroughput": 256 * 1024})
    browser.find_element(By.ID, "file-input").send_keys(str(big))
    browser.find_element(By.ID, "upload-button").click()
    seen = []
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline and "/files/" not in browser.current_url:
        try:
            text = browser.find_element(By.ID, "upload-progress-text").text
            value = browser.execute_script("var b = document.getElementById('upload-bar'); return b ? [b.value, b.max] : null")
        except Exception:  # the next page is loading
            break
        if text:
            seen.append((text, value))
        time.sleep(0.1)
    sending = [v for t, v in seen if t.startswith("Sending") and v and 0 < v[0] < v[1]]
    assert sending, f"no partial upload progress was shown: {seen[:5]}"
    assert any("MB" in t and "%" in t for t, _ in seen)
    browser.execute_cdp_cmd("Network.emulateNetworkConditions", {
        "offline": False, "latency": 0, "downloadThroughput": -1, "uploadThroughput": -1})
    figures = WebDriverWait(browser, 60).until(EC.presence_of_element_located((By.ID, "figures")))
    assert "large-session.csv" in browser.find_element(By.TAG_NAME, "h1").text and "Events" in figures.text
