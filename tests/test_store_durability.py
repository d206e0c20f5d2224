"""The store under stress: killed writers, two writers at once, and a store of the previous schema.

References: SQLite's own guarantees (https://www.sqlite.org/atomiccommit.html, WAL mode:
https://www.sqlite.org/wal.html) are what these tests hold the store to: a transaction
that committed survives the death of the process, one that did not leaves no trace, and
``PRAGMA integrity_check`` answers ``ok``.
"""

from __future__ import annotations

import json
import os
import random
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest

from timetabler.store import Store
from timetabler.store.schema import SCHEMA_VERSION

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
WRITER = HERE / "store_writer.py"

sys.path.insert(0, str(HERE))
from store_writer import instance  # noqa: E402


def _writer(path: Path, name: str, count: int, *extra: str) -> subprocess.Popen:
    return subprocess.Popen([sys.executable, str(WRITER), str(path), name, str(count), *extra],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


def _committed(text: str) -> list[int]:
    return [int(line.split()[2]) for line in text.splitlines() if line.startswith("committed ")]


def _check_records(store: Store, name: str, indices: list[int]) -> None:
    """Each record the writer reported is there, whole: its input's enrolments and its assignment."""
    by_source = {i.source_name: i for i in store.inputs()}
    for i in indices:
        problem, run = instance(name, i)
        stored = by_source[f"{name}-{i}.csv"]
        assert stored.enrolments == len(problem.enrolments)
        assert stored.events == len(problem.events)
        assert store.problem(stored.id).enrolments == problem.enrolments
        version = store.published_version(f"{name} {i}")
        assert version.assignment == run.assignment


def test_a_writer_killed_at_random_points_leaves_every_committed_record(tmp_path):
    path = tmp_path / "store.sqlite3"
    Store(path).close()  # created first: the writers below all find a store of the current version
    rng = random.Random(20261202)
    total = 0
    for round_number in range(6):
        name = f"w{round_number}"
        proc = _writer(path, name, 100_000, "--publish")
        assert proc.stdout.readline().strip() == "ready"  # imports done, store open: now kill it while it writes
        time.sleep(rng.uniform(0.0, 0.8))
        proc.send_signal(signal.SIGKILL)
        out, _ = proc.communicate()
        assert proc.returncode == -signal.SIGKILL
        reported = _committed(out)
        total += len(reported)
        conn = sqlite3.connect(path)
        assert conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        conn.close()
        with Store(path) as store:
            _check_records(store, name, reported)
            # at most one record more than reported: the one committed just before the kill, never half of one
            mine = [i for i in store.inputs() if i.source_name.startswith(f"{name}-")]
            assert len(reported) <= len(mine) <= len(reported) + 1
            runs = [r for r in store.runs() if r.source_name.startswith(f"{name}-")]
            assert len(runs) == len(mine)
            assert all(len(r.labels) == 1 for r in runs)
            for earlier in range(round_number):  # the earlier rounds' records are all still there
                kept = [i for i in store.inputs() if i.source_name.startswith(f"w{earlier}-")]
                _check_records(store, f"w{earlier}", sorted(int(i.source_name.split("-")[1][:-4]) for i in kept))
    assert total >= 6  # the kills fell among the writes, not before them


def test_a_real_solve_killed_at_random_points_leaves_the_store_readable(tmp_path, exam_week_xlsx):
    path = tmp_path / "store.sqlite3"
    env = {**os.environ, "TIMETABLER_STORE": str(path), "PYTHONPATH": str(ROOT)}
    first = subprocess.run([sys.executable, "-m", "timetabler", "solve", str(exam_week_xlsx), "--slots", "6",
                            "--time-limit", "2", "--publish", "before"], env=env, capture_output=True, text=True)
    assert first.returncode == 0, first.stderr
    with Store(path) as store:
        before = store.published_version("before")
    rng = random.Random(7)
    for n in range(3):
        proc = subprocess.Popen([sys.executable, "-m", "timetabler", "solve", str(exam_week_xlsx), "--slots", "6",
                                 "--time-limit", "2", "--publish", f"killed {n}"], env=env,
                                stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        time.sleep(rng.uniform(0.5, 4.0))
        proc.send_signal(signal.SIGKILL)
        proc.wait()
        conn = sqlite3.connect(path)
        assert conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        conn.close()
        with Store(path) as store:
            assert store.published_version("before").assignment == before.assignment
            labels = store.labels()
            assert labels[0] == "before"
            for label in labels[1:]:  # a solve that got as far as recording did so whole
                assert len(store.published_version(label).assignment) == len(before.assignment)


def test_two_writers_at_once_lose_nothing(tmp_path):
    path = tmp_path / "store.sqlite3"
    Store(path).close()
    a = _writer(path, "left", 25, "--publish")
    b = _writer(path, "right", 25, "--publish")
    out_a, err_a = a.communicate(timeout=240)
    out_b, err_b = b.communicate(timeout=240)
    assert a.returncode == 0, err_a
    assert b.returncode == 0, err_b
    assert _committed(out_a) == list(range(25)) and _committed(out_b) == list(range(25))
    with Store(path) as store:
        assert store.integrity() == "ok"
        assert len(store.inputs()) == 50 and len(store.runs()) == 50 and len(store.labels()) == 50
        _check_records(store, "left", list(range(25)))
        _check_records(store, "right", list(range(25)))


def test_two_processes_publishing_one_label_get_it_once(tmp_path):
    path = tmp_path / "store.sqlite3"
    Store(path).close()
    script = ("import sys; sys.path.insert(0, {root!r}); sys.path.insert(0, {here!r})\n"
              "from store_writer import instance\nfrom timetabler.store import Store\nfrom timetabler.errors import InputError\n"
              "problem, run = instance(sys.argv[1], 0)\n"
              "with Store({path!r}) as s:\n"
              "    try:\n        s.record_solve(problem, [run], {{}}, publish=(8, 'final'))\n        print('won')\n"
              "    except InputError:\n        print('refused')\n").format(root=str(ROOT), here=str(HERE), path=str(path))
    procs = [subprocess.Popen([sys.executable, "-c", script, name], stdout=subprocess.PIPE, text=True)
             for name in ("one", "two")]
    answers = sorted(p.communicate(timeout=120)[0].strip() for p in procs)
    assert answers == ["refused", "won"]
    with Store(path) as store:
        assert store.labels() == ["final"]
        assert len(store.inputs()) == 1  # the refused solve recorded nothing, not even its input


# The schema of version 1, written out here by hand (not taken from the code), as a store
# made by the first version of the store would hold it.
SCHEMA_V1 = """
CREATE TABLE inputs (id INTEGER PRIMARY KEY, fingerprint TEXT NOT NULL UNIQUE, source_name TEXT NOT NULL,
    created_at TEXT NOT NULL, weights_json TEXT NOT NULL, problem_json TEXT NOT NULL);
CREATE TABLE input_events (input_id INTEGER NOT NULL REFERENCES inputs(id) ON DELETE CASCADE, code TEXT NOT NULL,
    title TEXT, details_json TEXT NOT NULL, PRIMARY KEY (input_id, code)) WITHOUT ROWID;
CREATE TABLE input_enrolments (input_id INTEGER NOT NULL REFERENCES inputs(id) ON DELETE CASCADE,
    position INTEGER NOT NULL, attendee TEXT NOT NULL, event TEXT NOT NULL, PRIMARY KEY (input_id, position)) WITHOUT ROWID;
CREATE TABLE input_slots (input_id INTEGER NOT NULL REFERENCES inputs(id) ON DELETE CASCADE, position INTEGER NOT NULL,
    label TEXT NOT NULL, date TEXT, start TEXT, details_json TEXT NOT NULL, PRIMARY KEY (input_id, position)) WITHOUT ROWID;
CREATE TABLE input_rooms (input_id INTEGER NOT NULL REFERENCES inputs(id) ON DELETE CASCADE, position INTEGER NOT NULL,
    name TEXT NOT NULL, details_json TEXT NOT NULL, PRIMARY KEY (input_id, position)) WITHOUT ROWID;
CREATE TABLE input_rules (input_id INTEGER NOT NULL REFERENCES inputs(id) ON DELETE CASCADE, position INTEGER NOT NULL,
    kind TEXT NOT NULL, events_json TEXT NOT NULL, PRIMARY KEY (input_id, position)) WITHOUT ROWID;
CREATE TABLE runs (id INTEGER PRIMARY KEY, input_id INTEGER NOT NULL REFERENCES inputs(id) ON DELETE CASCADE,
    created_at TEXT NOT NULL, slot_count INTEGER NOT NULL, slots_json TEXT NOT NULL, settings_json TEXT NOT NULL,
    status TEXT NOT NULL, penalty INTEGER, reason TEXT, valid INTEGER, validation_json TEXT, moves_json TEXT NOT NULL);
CREATE TABLE run_assignments (run_id INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE, event TEXT NOT NULL,
    slot INTEGER NOT NULL, rooms_json TEXT NOT NULL, PRIMARY KEY (run_id, event)) WITHOUT ROWID;
CREATE TABLE published (label TEXT PRIMARY KEY, run_id INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE,
    published_at TEXT NOT NULL);
CREATE INDEX published_by_run ON published(run_id);
PRAGMA user_version = 1;
"""


def _version_1_store(path: Path) -> None:
    conn = sqlite3.connect(path)
    conn.executescript(SCHEMA_V1)
    conn.execute("INSERT INTO inputs VALUES (1, 'abc', 'autumn.csv', '2026-10-01T09:00:00Z', '{}', '{}')")
    conn.executemany("INSERT INTO input_events VALUES (1, ?, ?, '{}')", [("MA1", "Algebra"), ("PH1", None)])
    conn.executemany("INSERT INTO input_enrolments VALUES (1, ?, ?, ?)",
                     [(0, "ann", "MA1"), (1, "ann", "PH1"), (2, "bob", "PH1")])
    slots = json.dumps([{"label": "Mon AM", "date": "2026-10-12", "start": "09:00:00", "length_minutes": 120},
                        {"label": "Mon PM", "date": "2026-10-12", "start": "14:00:00", "length_minutes": 120}])
    conn.execute("INSERT INTO runs VALUES (1, 1, '2026-10-01T09:05:00Z', 2, ?, '{}', 'optimal', 0, NULL, 1, NULL, '[]')",
                 (slots,))
    conn.executemany("INSERT INTO run_assignments VALUES (1, ?, ?, '[]')", [("MA1", 1), ("PH1", 2)])
    conn.execute("INSERT INTO published VALUES ('autumn draft', 1, '2026-10-01T09:06:00Z')")
    conn.commit()
    conn.close()


def test_a_store_of_the_previous_version_upgrades_itself_and_keeps_its_records(tmp_path):
    path = tmp_path / "old.sqlite3"
    _version_1_store(path)
    with Store(path) as store:
        assert store.version == SCHEMA_VERSION == 3
        version = store.published_version("autumn draft")
        assert version.assignment == {"MA1": 1, "PH1": 2}
        assert [s.label for s in version.slots] == ["Mon AM", "Mon PM"]
        assert version.slots[0].date.isoformat() == "2026-10-12"
        assert sorted(version.enrolments) == [("ann", "MA1"), ("ann", "PH1"), ("bob", "PH1")]
        (old,) = store.inputs()
        assert old.last_used_at == old.created_at  # the upgrade fills the new column from the old one
        assert store.runs()[0].kept_from is None
        problem, run = instance("new", 0)
        store.record_solve(problem, [run], {}, kept_from="label autumn draft", publish=(8, "autumn final"))
        assert store.runs()[-1].kept_from == "label autumn draft"
        assert store.integrity() == "ok"
    conn = sqlite3.connect(path)
    assert conn.execute("PRAGMA user_version").fetchone()[0] == 3
    columns = {row[1] for row in conn.execute("PRAGMA table_info(runs)")}
    assert "kept_from" in columns
    conn.close()
    with Store(path) as store:  # opening again changes nothing
        assert store.labels() == ["autumn draft", "autumn final"]


def test_a_store_from_a_newer_timetabler_is_refused_untouched(tmp_path):
    from timetabler.errors import InputError

    path = tmp_path / "newer.sqlite3"
    conn = sqlite3.connect(path)
    conn.execute("CREATE TABLE future (x)")
    conn.execute(f"PRAGMA user_version = {SCHEMA_VERSION + 1}")
    conn.commit()
    conn.close()
    with pytest.raises(InputError, match="newer timetabler"):
        Store(path)
    conn = sqlite3.connect(path)
    assert conn.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION + 1
    conn.close()


def test_retention_deletes_only_inputs_not_used_for_the_period(tmp_path):
    import datetime as dt

    path = tmp_path / "store.sqlite3"
    with Store(path) as store:
        old_problem, old_run = instance("old", 0)
        new_problem, new_run = instance("new", 0)
        long_ago = dt.datetime(2026, 1, 1, tzinfo=dt.timezone.utc)
        store.record_solve(old_problem, [old_run], {}, publish=(8, "old"), now=long_ago)
        store.record_solve(new_problem, [new_run], {}, publish=(8, "new"), now=long_ago + dt.timedelta(days=100))
        gone = store.forget_older_than(30, now=long_ago + dt.timedelta(days=110))
        assert [g.source_name for g in gone] == ["old-0.csv"]
        assert store.labels() == ["new"]
        assert [i.source_name for i in store.inputs()] == ["new-0.csv"]
        assert store.conn.execute("SELECT count(*) FROM input_enrolments").fetchone()[0] == len(new_problem.enrolments)


def test_forgetting_one_of_two_labels_on_one_result_keeps_the_other(tmp_path):
    with Store(tmp_path / "store.sqlite3") as store:
        problem, run = instance("both", 0)
        saved = store.record_solve(problem, [run], {}, publish=(8, "sent to staff"))
        store.publish(saved.run_ids[8], "sent to students")
        store.forget_label("sent to staff")
        assert store.labels() == ["sent to students"]
        assert store.published_version("sent to students").assignment == run.assignment
        store.forget_label("sent to students")
        assert store.labels() == [] and store.runs() == [] and len(store.inputs()) == 1
