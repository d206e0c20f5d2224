"""``timetabler serve`` as a real server process (no browser needed): it starts on the loopback
address, answers with the page and its safety headers, refuses foreign POSTs, and stops
cleanly on Ctrl+C."""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import time
import urllib.error
import urllib.request


def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def test_serve_starts_answers_and_stops_on_ctrl_c(tmp_path):
    port = _free_port()
    err = open(tmp_path / "stderr.txt", "wb")
    temp = tmp_path / "temp"  # the server's temporary folder, to watch its private upload folder
    temp.mkdir()
    process = subprocess.Popen([sys.executable, "-m", "timetabler", "serve", "--port", str(port)],
                               stdout=subprocess.DEVNULL, stderr=err, env={**os.environ, "TMPDIR": str(temp)})
    url = f"http://127.0.0.1:{port}/"
    try:
        deadline = time.monotonic() + 30
        while True:
            try:
                with urllib.request.urlopen(url, timeout=2) as response:
                    body = response.read().decode()
                    headers = response.headers
                    break
            except OSError:
                assert process.poll() is None, (tmp_path / "stderr.txt").read_text()
                assert time.monotonic() < deadline, "the server did not answer within 30 s"
                time.sleep(0.2)
        assert "Build a timetable" in body
        assert "default-src 'none'" in headers["content-security-policy"]
        request = urllib.request.Request(url + "upload", data=b"x", method="POST",
                                         headers={"Origin": "http://elsewhere.example", "Content-Type": "text/plain"})
        try:
            urllib.request.urlopen(request, timeout=5)
            raise AssertionError("a POST from another origin was accepted")
        except urllib.error.HTTPError as exc:
            assert exc.code == 403
        private = list(temp.glob("timetabler-web-*"))
        assert len(private) == 1 and (private[0].stat().st_mode & 0o777) == 0o700
    finally:
        process.send_signal(signal.SIGINT)
        try:
            status = process.wait(20)
        except subprocess.TimeoutExpired:
            process.kill()
            raise
        err.close()
    text = (tmp_path / "stderr.txt").read_text()
    assert status == 0, text
    assert f"page ready at http://127.0.0.1:{port}/" in text
    assert "Page stopped; uploaded files deleted." in text
    assert not private[0].exists()
