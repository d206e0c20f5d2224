"""The tables of the store, the schema version and the upgrades between versions.

The version is SQLite's ``PRAGMA user_version``: 0 for a new, empty file, then the number
of the schema the file holds. :func:`prepare` creates the current schema in a new file,
upgrades an older one step by step (each step in the same transaction as the version
change, so an upgrade is all or nothing), and refuses a file written by a newer timetabler.

Versions
--------
1
    inputs (with their events, enrolments, slots, rooms and rules), runs (settings, status,
    penalty, validator verdict, assignment), published labels.
2
    ``inputs.last_used_at`` (when an input was last recorded again or published from: the
    retention period counts from it) and ``runs.kept_from`` (the earlier timetable a run
    repaired: a file name or a published label); an index of runs by input.
3
    ``run_own_rooms``: the room each attendee seated apart (an Own room) sits alone in, per
    run, so published versions, change calendars and repairs give them their own room.

To change the schema: add the statements of version N+1 to :data:`UPGRADES` under key N,
make :data:`CURRENT_TABLES` the full schema of N+1, raise :data:`SCHEMA_VERSION`, and add a
test that builds a store of version N by hand and opens it with the current code.
"""

from __future__ import annotations

import sqlite3

SCHEMA_VERSION = 3

#: Version 3's table, in the whole schema and in the upgrade from version 2.
RUN_OWN_ROOMS = """
CREATE TABLE run_own_rooms (
    run_id INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE,
    attendee TEXT NOT NULL,
    event TEXT NOT NULL,
    room TEXT NOT NULL,                        -- the room the attendee sits alone in (Attendees sheet's Own room)
    PRIMARY KEY (run_id, attendee, event)
) WITHOUT ROWID;
"""

#: The whole current schema, for a new store.
CURRENT_TABLES = """
CREATE TABLE inputs (
    id INTEGER PRIMARY KEY,
    fingerprint TEXT NOT NULL UNIQUE,          -- sha256 of the normalised input: the same input is stored once
    source_name TEXT NOT NULL,                 -- the input file's name (not its folder)
    created_at TEXT NOT NULL,                  -- UTC, ISO 8601
    weights_json TEXT NOT NULL,
    problem_json TEXT NOT NULL,                -- the other settings of the instance (max per day, ...)
    last_used_at TEXT NOT NULL
);
CREATE TABLE input_events (
    input_id INTEGER NOT NULL REFERENCES inputs(id) ON DELETE CASCADE,
    code TEXT NOT NULL,
    title TEXT,
    details_json TEXT NOT NULL,
    PRIMARY KEY (input_id, code)
) WITHOUT ROWID;
CREATE TABLE input_enrolments (
    input_id INTEGER NOT NULL REFERENCES inputs(id) ON DELETE CASCADE,
    position INTEGER NOT NULL,
    attendee TEXT NOT NULL,
    event TEXT NOT NULL,
    PRIMARY KEY (input_id, position)
) WITHOUT ROWID;
CREATE TABLE input_slots (
    input_id INTEGER NOT NULL REFERENCES inputs(id) ON DELETE CASCADE,
    position INTEGER NOT NULL,
    label TEXT NOT NULL,
    date TEXT,
    start TEXT,
    details_json TEXT NOT NULL,
    PRIMARY KEY (input_id, position)
) WITHOUT ROWID;
CREATE TABLE input_rooms (
    input_id INTEGER NOT NULL REFERENCES inputs(id) ON DELETE CASCADE,
    position INTEGER NOT NULL,
    name TEXT NOT NULL,
    details_json TEXT NOT NULL,
    PRIMARY KEY (input_id, position)
) WITHOUT ROWID;
CREATE TABLE input_rules (
    input_id INTEGER NOT NULL REFERENCES inputs(id) ON DELETE CASCADE,
    position INTEGER NOT NULL,
    kind TEXT NOT NULL,
    events_json TEXT NOT NULL,
    PRIMARY KEY (input_id, position)
) WITHOUT ROWID;
CREATE TABLE runs (
    id INTEGER PRIMARY KEY,
    input_id INTEGER NOT NULL REFERENCES inputs(id) ON DELETE CASCADE,
    created_at TEXT NOT NULL,
    slot_count INTEGER NOT NULL,
    slots_json TEXT NOT NULL,                  -- the slots the run used, in order (labels, dates, times)
    settings_json TEXT NOT NULL,
    status TEXT NOT NULL,                      -- optimal | feasible | infeasible | unknown
    penalty INTEGER,
    reason TEXT,
    valid INTEGER,                             -- the validator's verdict: 1 passed, 0 failed, NULL not checked
    validation_json TEXT,
    moves_json TEXT NOT NULL,
    kept_from TEXT
);
CREATE TABLE run_assignments (
    run_id INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE,
    event TEXT NOT NULL,
    slot INTEGER NOT NULL,                     -- 1..slot_count, a position in runs.slots_json
    rooms_json TEXT NOT NULL,
    PRIMARY KEY (run_id, event)
) WITHOUT ROWID;
""" + RUN_OWN_ROOMS + """CREATE TABLE published (
    label TEXT PRIMARY KEY,
    run_id INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE,
    published_at TEXT NOT NULL
);
CREATE INDEX runs_by_input ON runs(input_id);
CREATE INDEX published_by_run ON published(run_id);
"""

#: UPGRADES[n]: the statements that take a store of version n to version n + 1.
UPGRADES: dict[int, str] = {
    1: """
ALTER TABLE inputs ADD COLUMN last_used_at TEXT;
UPDATE inputs SET last_used_at = created_at;
ALTER TABLE runs ADD COLUMN kept_from TEXT;
CREATE INDEX runs_by_input ON runs(input_id);
""",
    2: RUN_OWN_ROOMS,
}


class NewerStoreError(Exception):
    """The store was written by a newer timetabler (its schema version is above ours)."""


def schema_version(conn: sqlite3.Connection) -> int:
    return int(conn.execute("PRAGMA user_version").fetchone()[0])


def prepare(conn: sqlite3.Connection) -> int:
    """Create or upgrade the schema of ``conn`` (in autocommit mode); return the version now held.

    The check and the work happen inside one ``BEGIN IMMEDIATE`` transaction, so two
    processes opening an old store at once upgrade it once, and a process killed during
    an upgrade leaves the old version intact.
    """
    if schema_version(conn) == SCHEMA_VERSION:
        return SCHEMA_VERSION
    conn.execute("BEGIN IMMEDIATE")
    try:
        version = schema_version(conn)  # again, under the write lock: another process may have done it
        if version > SCHEMA_VERSION:
            raise NewerStoreError(
                f"schema version {version}; this timetabler understands up to {SCHEMA_VERSION}")
        if version == 0:
            if conn.execute("SELECT count(*) FROM sqlite_master WHERE type = 'table'").fetchone()[0]:
                raise NewerStoreError("the file holds tables but no timetabler schema version")
            _run_script(conn, CURRENT_TABLES)
        else:
            while version < SCHEMA_VERSION:
                _run_script(conn, UPGRADES[version])
                version += 1
        conn.execute(f"PRAGMA user_version = {SCHEMA_VERSION}")
        conn.execute("COMMIT")
    except BaseException:
        conn.execute("ROLLBACK")
        raise
    return SCHEMA_VERSION


def _run_script(conn: sqlite3.Connection, script: str) -> None:
    # executescript() would commit the open transaction first; run the statements one by one instead.
    for statement in script.split(";"):
        if statement.strip():
            conn.execute(statement)
