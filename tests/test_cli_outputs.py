"""Output files from the command line: checked before solving, results kept when writing
fails, nothing left behind when interrupted, the usual file mode, a closed pipe, no rows."""

from __future__ import annotations

import errno
import os
import signal
import stat
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent


@pytest.fixture
def small_csv(tmp_path):
    """Harrowgate Vale College, a tiny exam week: A and B clash, C is free."""
    path = tmp_path / "week.csv"
    path.write_text("Student,Exam\ns1,A\ns1,B\ns2,B\ns3,C\n")
    return path


def _read_only(monkeypatch, folder: Path, calls=("open",)):
    """Make ``folder`` behave as on a read-only disk: creating (or renaming into) files there
    fails with EROFS, as the kernel reports it. Everything else works as usual."""
    folder = folder.resolve()
    real_open, real_replace = os.open, os.replace

    def guarded_open(path, flags, *args, **kwargs):
        if "open" in calls and flags & os.O_CREAT and Path(path).resolve().parent == folder:
            raise OSError(errno.EROFS, "Read-only file system", str(path))
        return real_open(path, flags, *args, **kwargs)

    def guarded_replace(src, dst, *args, **kwargs):
        if "replace" in calls and Path(dst).resolve().parent == folder:
            raise OSError(errno.EROFS, "Read-only file system", str(dst))
        return real_replace(src, dst, *args, **kwargs)

    monkeypatch.setattr(os, "open", guarded_open)
    monkeypatch.setattr(os, "replace", guarded_replace)


def test_a_read_only_output_folder_is_found_before_solving(run_command, small_csv, tmp_path, monkeypatch):
    locked = tmp_path / "locked"
    locked.mkdir()
    _read_only(monkeypatch, locked)
    result = run_command("solve", small_csv, "--slots", "2", "--out", locked / "t.xlsx")
    assert result.status == 2, result.stderr
    assert "read-only" in result.stderr and "--out" in result.stderr and "Traceback" not in result.stderr
    assert "Timetables" not in result.stdout  # stopped before any solving


@pytest.mark.parametrize("args,words", [
    (["--ics", "cal", "--ics-time-zone", "Europe/Atlantis"], "Unknown time zone"),
    (["--ics", "cal"], "need a date for every slot"),  # no slots sheet: numbered slots have no dates
    (["--out", "t.csv"], "should end in .xlsx"),
    (["--plot", "counts.pdf"], "should end in .png"),
    (["--ics-time-zone", "Europe/London"], "no --ics folder"),
])
def test_bad_output_options_are_found_before_solving(run_command, small_csv, tmp_path, args, words):
    args = [str(tmp_path / a) if a in ("cal", "t.csv", "counts.pdf") else a for a in args]
    for command in ("solve", "compare"):
        started = time.monotonic()
        result = run_command(command, small_csv, "--slots", "2", "--time-limit", "30", *args)
        assert result.status == 2, (command, result.stderr)
        assert words in result.stderr and "Traceback" not in result.stderr
        assert result.stdout == ""  # no results: nothing was solved
        assert time.monotonic() - started < 25  # not after a 30 s solve


def test_the_output_may_not_be_the_input_or_the_earlier_timetable(run_command, small_csv, tmp_path):
    earlier = tmp_path / "earlier.xlsx"
    first = run_command("solve", small_csv, "--slots", "2", "--time-limit", "2", "--out", earlier)
    assert first.status == 0
    before = earlier.read_bytes()
    result = run_command("solve", small_csv, "--slots", "2", "--keep", earlier, "--out", earlier)
    assert result.status == 2 and "never writes over its input" in result.stderr
    assert earlier.read_bytes() == before


def test_when_writing_fails_after_solving_the_results_are_shown_and_status_is_2(run_command, small_csv, tmp_path,
                                                                                 monkeypatch):
    """The folder turns read-only between the check and the write (a full or unplugged disk)."""
    folder = tmp_path / "out"
    folder.mkdir()
    _read_only(monkeypatch, folder, calls=("replace",))
    result = run_command("solve", small_csv, "--slots", "2", "--time-limit", "2", "--out", folder / "t.xlsx",
                         "--json")
    assert result.status == 2
    assert "read-only" in result.stderr and "t.xlsx" in result.stderr
    run = result.json()["runs"][0]  # the solve is not lost
    assert run["status"] == "optimal" and run["assignment"]["A"] != run["assignment"]["B"]
    assert not any(folder.iterdir())  # and no half-written file is left
    human = run_command("compare", small_csv, "--slots", "2", "--time-limit", "2", "--out", folder / "t.xlsx")
    assert human.status == 2 and "Slot counts side by side" in human.stdout


def test_an_interrupted_export_leaves_nothing_behind(run_command, small_csv, tmp_path, monkeypatch):
    """Ctrl-C while the workbook is being built: no .part file, no openpyxl sheet files (they
    hold attendee ids) in the temporary folder, a message, status 130."""
    private_tmp = tmp_path / "tmp"
    private_tmp.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(private_tmp))
    from timetabler.export import workbook

    real = workbook._grid_sheet
    seen = []

    def interrupted(*args, **kwargs):
        real(*args, **kwargs)
        seen.extend(p for p in private_tmp.rglob("openpyxl.*"))  # the sheet files exist now
        raise KeyboardInterrupt

    monkeypatch.setattr(workbook, "_grid_sheet", interrupted)
    out = tmp_path / "out"
    out.mkdir()
    result = run_command("solve", small_csv, "--slots", "2", "--time-limit", "2", "--out", out / "t.xlsx")
    assert result.status == 130
    assert "Interrupted: nothing was written" in result.stderr
    assert seen, "the test did not reach the moment sheet files exist"
    assert list(out.iterdir()) == []
    assert list(private_tmp.iterdir()) == []


def test_an_interruption_after_one_output_says_what_was_written(run_command, small_csv, tmp_path, monkeypatch):
    from timetabler.export import csv_folder

    def interrupted(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr(csv_folder, "write_table_csv", interrupted)
    out = tmp_path / "t.xlsx"
    result = run_command("solve", small_csv, "--slots", "2", "--time-limit", "2", "--out", out, "--csv", tmp_path / "c")
    assert result.status == 130
    assert f"Interrupted: wrote {out}; nothing else was written." in " ".join(result.stderr.split())
    assert out.exists() and not [p for p in (tmp_path / "c").iterdir()]


@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGINT])
def test_a_signal_during_the_export_cleans_up(tmp_path, sig):
    """A real SIGTERM or SIGINT (Ctrl-C) while a workbook is written, after CP-SAT has run (a
    subprocess). CP-SAT used to leave both signals at their defaults after a search, so the
    process died on the spot, leaving the .part file and the openpyxl sheet files.

    The child (``signal_child.py``) touches a flag once the sheet files exist and then holds the
    export until the signal comes, so the signal always lands mid-export (it used to be sent on
    seeing the .part file, racing the export's end)."""
    enrolments = tmp_path / "many.csv"
    enrolments.write_text("Student,Exam\n" + "".join(f"s{i},E{i % 200}\n" for i in range(400)))
    env = {"PYTHONPATH": str(ROOT), "PATH": "/usr/bin:/bin", "TMPDIR": str(tmp_path / "tmp"), "HOME": str(tmp_path),
           "TIMETABLER_STORE": str(tmp_path / "store.sqlite3")}
    (tmp_path / "tmp").mkdir()
    out = tmp_path / "out"
    out.mkdir()
    flag = tmp_path / "exporting"
    child = subprocess.Popen([sys.executable, str(ROOT / "tests" / "signal_child.py"), str(flag), "export",
                              "solve", str(enrolments), "--slots", "3", "--time-limit", "1", "--out",
                              str(out / "t.xlsx")],
                             stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env, cwd=tmp_path)
    deadline = time.monotonic() + 60
    while not flag.exists():
        assert child.poll() is None, child.communicate()
        assert time.monotonic() < deadline, "the export never began"
        time.sleep(0.005)
    assert list((tmp_path / "tmp").rglob("openpyxl.*")), "the sheet files should exist at this moment"
    assert [p.name.endswith(".xlsx.part") for p in out.iterdir()] == [True], "the half-written workbook should exist"
    child.send_signal(sig)
    stdout, stderr = child.communicate(timeout=60)
    assert child.returncode == 130, stderr
    assert "Interrupted: nothing was written." in stderr and "Traceback" not in stderr
    assert list(out.iterdir()) == []
    assert list((tmp_path / "tmp").iterdir()) == []


def test_output_files_get_the_usual_mode(run_command, small_csv, tmp_path):
    """Files people forward are created 0666 less the umask (0644 under umask 022), not 0600."""
    old = os.umask(0o022)
    try:
        result = run_command("solve", small_csv, "--slots", "2", "--time-limit", "2", "--out", tmp_path / "t.xlsx",
                             "--csv", tmp_path / "c")
        template = run_command("template", tmp_path / "entries.xlsx")
    finally:
        os.umask(old)
    assert result.status == 0 and template.status == 0
    for path in [tmp_path / "t.xlsx", tmp_path / "entries.xlsx", *(tmp_path / "c").iterdir()]:
        assert stat.S_IMODE(path.stat().st_mode) == 0o644, path


def test_a_closed_pipe_is_not_a_bug(tmp_path):
    """`timetabler inspect FILE | head -1`: exit 141 (as for SIGPIPE), no message."""
    path = tmp_path / "many.csv"
    path.write_text("Student,Exam\n" + "".join(f"s{i},E{i % 40}\ns{i},E{(i + 1) % 40}\n" for i in range(400)))
    env = {"PYTHONPATH": str(ROOT), "PATH": "/usr/bin:/bin"}
    child = subprocess.Popen([sys.executable, "-m", "timetabler", "inspect", str(path)], stdout=subprocess.PIPE,
                             stderr=subprocess.PIPE, env=env)
    child.stdout.readline()
    child.stdout.close()  # the reader goes away after one line, as head -1 does
    stderr = child.stderr.read().decode()
    child.wait(timeout=60)
    assert child.returncode in (0, 141), stderr  # 0 when everything fit in the pipe before it closed
    assert stderr == ""


def test_solving_a_file_with_headers_and_no_rows_is_bad_input(run_command, tmp_path):
    path = tmp_path / "empty.csv"
    path.write_text("Student,Exam\n")
    for command in ("solve", "compare"):
        result = run_command(command, path, "--slots", "3")
        assert result.status == 2, result.stdout
        assert "empty.csv, row 1" in result.stderr and "No enrolments" in result.stderr
        assert "optimal" not in result.stdout
