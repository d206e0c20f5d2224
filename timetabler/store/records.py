"""The records of the store: what was read, how it was solved, and what was published.

:class:`Store` is one SQLite connection to the store file (WAL journal, a busy timeout so
two processes wait for each other instead of failing, foreign keys on, deleted data
overwritten). Every method that writes is one transaction (``BEGIN IMMEDIATE`` ...
``COMMIT``): a solve, a publication, a deletion is recorded whole or not at all.

What one solve records:

* the **input**, normalised (its events with their details, the enrolments, the slots with
  labels and dates, the rooms, the rules, the weights, the Attendees sheet and the optional
  enrolments) — never the raw file; the same input
  read again is stored once and only its ``last_used_at`` moves;
* one **run** per number of slots: the settings, the status, the penalty, the slots it used,
  the assignment with rooms, the moves from the timetable it repaired, and the validator's
  verdict;
* optionally a **published** label on one of those runs, with the time.

Examples
--------
>>> import tempfile, pathlib
>>> from timetabler.model import Problem, generic_slots
>>> from timetabler.scheduling import SolveRun
>>> folder = tempfile.mkdtemp()
>>> problem = Problem([("ann", "A"), ("ann", "B")], source="week.csv")
>>> run = SolveRun(slots=2, slot_list=generic_slots(2), status="optimal", assignment={"A": 1, "B": 2})
>>> with Store(pathlib.Path(folder) / "store.sqlite3") as store:
...     saved = store.record_solve(problem, [run], {"seed": 0}, publish=(2, "week 1"))
...     store.published_version("week 1").assignment
{'A': 1, 'B': 2}
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import hashlib
import json
import sqlite3
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Sequence

from ..errors import Finding, InputError
from ..model import FOUND_STATUSES, Attendee, Event, Problem, Room, Rule, RuleKind, Slot, Weights
from .schema import NewerStoreError, prepare

BUSY_TIMEOUT_MS = 30_000


def utc_now() -> dt.datetime:
    return dt.datetime.now(dt.timezone.utc).replace(microsecond=0)


def _stamp(moment: dt.datetime) -> str:
    return moment.astimezone(dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")


def _moment(text: str | None) -> dt.datetime | None:
    if not text:
        return None
    return dt.datetime.strptime(text, "%Y-%m-%dT%H:%M:%SZ").replace(tzinfo=dt.timezone.utc)


# ---------------------------------------------------------------------------- plain values


def _plain(value: Any) -> Any:
    """A JSON-ready copy of a model value (dates and times as ISO text, tuples as lists)."""
    if isinstance(value, (dt.date, dt.time)):
        return value.isoformat()
    if isinstance(value, RuleKind):
        return value.value
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: _plain(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple, set, frozenset)):
        return [_plain(v) for v in value]
    if value is None or isinstance(value, (str, int, float, bool)):
        return value
    return str(value)


def _json(value: Any) -> str:
    return json.dumps(_plain(value), ensure_ascii=False, sort_keys=True, separators=(",", ":"))


def slot_to_dict(slot: Slot) -> dict:
    # the row the slot was read from is not part of the input (the same slots from another file are the same)
    return {k: v for k, v in _plain(slot).items() if k != "where"}


def slot_from_dict(data: dict) -> Slot:
    known = {f.name for f in dataclasses.fields(Slot)}
    values = {k: v for k, v in data.items() if k in known}
    if values.get("date"):
        values["date"] = dt.date.fromisoformat(values["date"])
    if values.get("start"):
        values["start"] = dt.time.fromisoformat(values["start"])
    return Slot(**values)


def _fields_from(cls, data: dict) -> dict:
    known = {f.name: f for f in dataclasses.fields(cls)}
    out = {}
    for name, value in data.items():
        if name in known:
            out[name] = tuple(value) if isinstance(value, list) else value
    return out


# ---------------------------------------------------------------------------- what is read back


@dataclass
class StoredInput:
    """One input kept in the store, with its size and what was made from it."""

    id: int
    source_name: str
    created_at: dt.datetime
    last_used_at: dt.datetime | None
    events: int
    attendees: int
    enrolments: int
    runs: int
    labels: list[str] = field(default_factory=list)

    def to_json(self) -> dict:
        return {"input": self.id, "file": self.source_name, "stored_at": _stamp(self.created_at),
                "last_used_at": _stamp(self.last_used_at) if self.last_used_at else None,
                "events": self.events, "attendees": self.attendees, "enrolments": self.enrolments,
                "runs": self.runs, "published": list(self.labels)}


@dataclass
class StoredRun:
    """One result kept in the store (one number of slots of one solve)."""

    id: int
    input_id: int
    source_name: str
    created_at: dt.datetime
    slot_count: int
    status: str
    penalty: int | None
    valid: bool | None
    kept_from: str | None
    labels: list[str] = field(default_factory=list)

    def to_json(self) -> dict:
        return {"run": self.id, "input": self.input_id, "file": self.source_name,
                "solved_at": _stamp(self.created_at), "slots": self.slot_count, "status": self.status,
                "penalty": self.penalty, "valid": self.valid, "kept_from": self.kept_from,
                "published": list(self.labels)}


@dataclass
class PublishedVersion:
    """A published timetable as stored: its label and time, its slots, assignment and enrolments."""

    label: str
    published_at: dt.datetime
    run_id: int
    input_id: int
    source_name: str
    slots: list[Slot]
    assignment: dict[str, int]
    rooms: dict[str, list[tuple[str, int]]]
    enrolments: list[tuple[str, str]]
    titles: dict[str, str | None]
    status: str
    penalty: int | None
    durations: dict[str, int | None] = dataclasses.field(default_factory=dict)  # event -> minutes, for end times
    extra_time: dict[str, int] = dataclasses.field(default_factory=dict)  # attendee -> percent (Attendees sheet)
    own_rooms: dict[tuple[str, str], str] = dataclasses.field(default_factory=dict)  # (attendee, event) -> room

    @property
    def slot_count(self) -> int:
        return len(self.slots)

    def slot_references(self) -> dict[str, str]:
        """Event -> slot label: the earlier timetable for a repair (``--keep LABEL``), as the "Slot label"
        column of this version's workbook gives it, so keeping the label and keeping the workbook repair
        alike. Labels, not numbers: a number is a position among this version's slots, and the slots of
        the repair (another sheet, its rows in another order, labels that are numbers) may place it elsewhere."""
        return {code: self.slots[n - 1].label for code, n in sorted(self.assignment.items())}

    def summary_json(self) -> dict:
        return {"label": self.label, "published_at": _stamp(self.published_at), "run": self.run_id,
                "input": self.input_id, "file": self.source_name, "slots": self.slot_count,
                "events": len(self.assignment), "attendees": len({a for a, _ in self.enrolments}),
                "status": self.status, "penalty": self.penalty}


@dataclass
class RecordedSolve:
    input_id: int
    run_ids: dict[int, int]  # slot count -> run id
    published: str | None = None


# ---------------------------------------------------------------------------- the store


class Store:
    """The store file, opened (created or upgraded as needed). Use as a context manager."""

    def __init__(self, path: str | Path, *, timeout_ms: int = BUSY_TIMEOUT_MS):
        self.path = Path(path)
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
            conn = sqlite3.connect(str(self.path), timeout=timeout_ms / 1000, isolation_level=None)
        except (OSError, sqlite3.Error) as exc:
            raise InputError(Finding(f"The store {self.path} cannot be opened ({exc}).",
                                     suggestion="Give another file with --store PATH or TIMETABLER_STORE.")) from exc
        self.conn = conn
        try:
            conn.execute(f"PRAGMA busy_timeout = {int(timeout_ms)}")
            conn.execute("PRAGMA journal_mode = WAL")
            conn.execute("PRAGMA synchronous = FULL")
            conn.execute("PRAGMA foreign_keys = ON")
            conn.execute("PRAGMA secure_delete = ON")  # deleted personal data is overwritten, not left in free pages
            self.version = prepare(conn)
        except NewerStoreError as exc:
            conn.close()
            raise InputError(Finding(f"The store {self.path} cannot be used: {exc}.",
                                     suggestion="Use the newer timetabler that wrote it, or another store "
                                                "(--store PATH).")) from exc
        except sqlite3.DatabaseError as exc:
            conn.close()
            raise InputError(Finding(f"The store {self.path} is not a timetabler store ({exc}).",
                                     suggestion="Give another file with --store PATH.")) from exc

    # context manager and transactions

    def __enter__(self) -> "Store":
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def close(self) -> None:
        self.conn.close()

    def _write(self):
        return _Transaction(self.conn)

    # writing

    def record_solve(self, problem: Problem, runs: Sequence[Any], settings: dict, *, kept_from: str | None = None,
                     publish: tuple[int, str] | None = None, now: dt.datetime | None = None) -> RecordedSolve:
        """Record the input, one run per slot count and (``publish=(K, label)``) a label, in one transaction.

        A taken label raises :class:`InputError` and nothing of the solve is recorded.
        """
        moment = _stamp(now or utc_now())
        with self._write() as conn:
            input_id = self._input(conn, problem, moment)
            run_ids: dict[int, int] = {}
            for run in runs:
                run_ids[int(run.slots)] = self._run(conn, input_id, run, settings, kept_from, moment)
            label = None
            if publish is not None:
                k, label = publish
                if k not in run_ids:
                    raise InputError(f"No timetable for {k} slots was solved, so none can be published.")
                self._publish(conn, run_ids[k], label, moment)
        return RecordedSolve(input_id, run_ids, label)

    def publish(self, run_id: int, label: str, *, now: dt.datetime | None = None) -> None:
        """Mark a stored run as published under ``label`` (one transaction)."""
        with self._write() as conn:
            row = conn.execute("SELECT input_id FROM runs WHERE id = ?", (run_id,)).fetchone()
            if row is None:
                raise InputError(f"There is no stored result number {run_id}.")
            moment = _stamp(now or utc_now())
            conn.execute("UPDATE inputs SET last_used_at = ? WHERE id = ?", (moment, row[0]))
            self._publish(conn, run_id, label, moment)

    def _publish(self, conn: sqlite3.Connection, run_id: int, label: str, moment: str) -> None:
        label = check_label(label)
        if conn.execute("SELECT 1 FROM published WHERE label = ?", (label,)).fetchone():
            raise InputError(Finding(f"The label '{label}' is already published.",
                                     suggestion="Choose a new label (each published version keeps its own), or "
                                                f"delete the old one first: timetabler forget '{label}'."))
        conn.execute("INSERT INTO published (label, run_id, published_at) VALUES (?, ?, ?)", (label, run_id, moment))

    def _input(self, conn: sqlite3.Connection, problem: Problem, moment: str) -> int:
        parts = normalised_input(problem)
        fingerprint = hashlib.sha256(_json(parts).encode("utf-8")).hexdigest()
        row = conn.execute("SELECT id FROM inputs WHERE fingerprint = ?", (fingerprint,)).fetchone()
        if row is not None:
            conn.execute("UPDATE inputs SET last_used_at = ? WHERE id = ?", (moment, row[0]))
            return int(row[0])
        cur = conn.execute(
            "INSERT INTO inputs (fingerprint, source_name, created_at, weights_json, problem_json, last_used_at) "
            "VALUES (?, ?, ?, ?, ?, ?)",
            (fingerprint, parts["source_name"], moment, _json(parts["weights"]), _json(parts["problem"]), moment))
        input_id = int(cur.lastrowid)
        conn.executemany("INSERT INTO input_events (input_id, code, title, details_json) VALUES (?, ?, ?, ?)",
                         [(input_id, e["code"], e.get("title"), _json({k: v for k, v in e.items()
                                                                       if k not in ("code", "title")}))
                          for e in parts["events"]])
        conn.executemany("INSERT INTO input_enrolments (input_id, position, attendee, event) VALUES (?, ?, ?, ?)",
                         [(input_id, i, a, e) for i, (a, e) in enumerate(parts["enrolments"])])
        conn.executemany("INSERT INTO input_slots (input_id, position, label, date, start, details_json) "
                         "VALUES (?, ?, ?, ?, ?, ?)",
                         [(input_id, i, s["label"], s.get("date"), s.get("start"), _json(s))
                          for i, s in enumerate(parts["slots"], start=1)])
        conn.executemany("INSERT INTO input_rooms (input_id, position, name, details_json) VALUES (?, ?, ?, ?)",
                         [(input_id, i, r["name"], _json(r)) for i, r in enumerate(parts["rooms"], start=1)])
        conn.executemany("INSERT INTO input_rules (input_id, position, kind, events_json) VALUES (?, ?, ?, ?)",
                         [(input_id, i, r["kind"], _json(r["events"])) for i, r in enumerate(parts["rules"], start=1)])
        return input_id

    def _run(self, conn, input_id: int, run: Any, settings: dict, kept_from: str | None, moment: str) -> int:
        validation = getattr(run, "validation", None)
        valid = None if validation is None else int(bool(validation.ok))
        cur = conn.execute(
            "INSERT INTO runs (input_id, created_at, slot_count, slots_json, settings_json, status, penalty, reason, "
            "valid, validation_json, moves_json, kept_from) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
            (input_id, moment, int(run.slots), _json([slot_to_dict(s) for s in run.slot_list]), _json(settings),
             run.status, run.penalty, run.reason, valid,
             None if validation is None else _json(validation.to_json()), _json(run.moves or []), kept_from))
        run_id = int(cur.lastrowid)
        rooms = getattr(run, "rooms", None) or {}
        conn.executemany("INSERT INTO run_assignments (run_id, event, slot, rooms_json) VALUES (?, ?, ?, ?)",
                         [(run_id, code, int(slot), _json([[r, n] for r, n in rooms.get(code) or []]))
                          for code, slot in sorted(run.assignment.items())])
        own = getattr(run, "own_rooms", None) or {}
        conn.executemany("INSERT INTO run_own_rooms (run_id, attendee, event, room) VALUES (?, ?, ?, ?)",
                         [(run_id, a, c, str(r)) for (a, c), r in sorted(own.items())])
        return run_id

    # deleting

    def forget_label(self, label: str) -> StoredRun:
        """Delete a published label and the timetable (run) it marks, unless another label marks that run too;
        the input stays. One transaction."""
        with self._write() as conn:
            row = conn.execute("SELECT run_id FROM published WHERE label = ?", (label,)).fetchone()
            if row is None:
                raise self.unknown_label(label, conn)
            run = self._runs(conn, "WHERE r.id = ?", (row[0],))[0]
            conn.execute("DELETE FROM published WHERE label = ?", (label,))
            if not conn.execute("SELECT 1 FROM published WHERE run_id = ?", (row[0],)).fetchone():
                conn.execute("DELETE FROM runs WHERE id = ?", (row[0],))  # and its assignment (cascade)
        self._checkpoint()
        return run

    def forget_input(self, input_id: int) -> StoredInput:
        """Delete one input with every run and published label made from it. One transaction."""
        with self._write() as conn:
            found = self._inputs(conn, "WHERE i.id = ?", (input_id,))
            if not found:
                known = ", ".join(str(r[0]) for r in conn.execute("SELECT id FROM inputs ORDER BY id")) or "none"
                raise InputError(Finding(f"There is no stored input number {input_id}.", found=str(input_id),
                                         expected=f"one of: {known} (see timetabler history)"))
            conn.execute("DELETE FROM inputs WHERE id = ?", (input_id,))
        self._checkpoint()
        return found[0]

    def forget_everything(self) -> int:
        """Delete every input, run and label; return the number of inputs deleted."""
        with self._write() as conn:
            n = conn.execute("SELECT count(*) FROM inputs").fetchone()[0]
            conn.execute("DELETE FROM inputs")
        self._checkpoint()
        return int(n)

    def forget_older_than(self, days: float, *, now: dt.datetime | None = None) -> list[StoredInput]:
        """Delete the inputs (with their runs and labels) not used for ``days`` days; return them."""
        if days is None or days <= 0:
            return []
        cutoff = _stamp((now or utc_now()) - dt.timedelta(days=days))
        with self._write() as conn:
            old = self._inputs(conn, "WHERE coalesce(i.last_used_at, i.created_at) < ?", (cutoff,))
            conn.executemany("DELETE FROM inputs WHERE id = ?", [(s.id,) for s in old])
        if old:
            self._checkpoint()
        return old

    def _checkpoint(self) -> None:
        """Fold the journal into the main file so deleted rows leave the WAL file too (best effort)."""
        try:
            self.conn.execute("PRAGMA wal_checkpoint(TRUNCATE)")
        except sqlite3.OperationalError:  # another process is reading; its next checkpoint does it
            pass

    # reading

    def labels(self) -> list[str]:
        return [r[0] for r in self.conn.execute("SELECT label FROM published ORDER BY published_at, label")]

    def inputs(self) -> list[StoredInput]:
        return self._inputs(self.conn, "", ())

    def runs(self, input_id: int | None = None) -> list[StoredRun]:
        if input_id is None:
            return self._runs(self.conn, "", ())
        return self._runs(self.conn, "WHERE r.input_id = ?", (input_id,))

    def published_versions(self) -> list[PublishedVersion]:
        return [self.published_version(label) for label in self.labels()]

    def published_version(self, label: str) -> PublishedVersion:
        """The version published as ``label``; an unknown label raises :class:`InputError` listing the labels."""
        conn = self.conn
        row = conn.execute(
            "SELECT p.label, p.published_at, r.id, r.input_id, i.source_name, r.slots_json, r.status, r.penalty "
            "FROM published p JOIN runs r ON r.id = p.run_id JOIN inputs i ON i.id = r.input_id WHERE p.label = ?",
            (label,)).fetchone()
        if row is None:
            raise self.unknown_label(label, conn)
        _, published_at, run_id, input_id, source_name, slots_json, status, penalty = row
        assignment, rooms = {}, {}
        for event, slot, rooms_json in conn.execute(
                "SELECT event, slot, rooms_json FROM run_assignments WHERE run_id = ? ORDER BY event", (run_id,)):
            assignment[event] = int(slot)
            placed = json.loads(rooms_json)
            if placed:
                rooms[event] = [(str(r), int(n)) for r, n in placed]
        enrolments = [(a, e) for a, e in conn.execute(
            "SELECT attendee, event FROM input_enrolments WHERE input_id = ? ORDER BY position", (input_id,))]
        titles, durations = {}, {}
        for code, title, details in conn.execute(
                "SELECT code, title, details_json FROM input_events WHERE input_id = ?", (input_id,)):
            titles[code] = title
            durations[code] = json.loads(details).get("duration_minutes")
        (problem_json,) = conn.execute("SELECT problem_json FROM inputs WHERE id = ?", (input_id,)).fetchone()
        extra_time = {str(p["name"]): int(p["extra_time_percent"])
                      for p in json.loads(problem_json or "{}").get("people") or [] if p.get("extra_time_percent")}
        own_rooms = {(a, c): r for a, c, r in conn.execute(
            "SELECT attendee, event, room FROM run_own_rooms WHERE run_id = ? ORDER BY attendee, event", (run_id,))}
        return PublishedVersion(label=row[0], published_at=_moment(published_at), run_id=run_id, input_id=input_id,
                                source_name=source_name, slots=[slot_from_dict(s) for s in json.loads(slots_json)],
                                assignment=assignment, rooms=rooms, enrolments=enrolments, titles=titles,
                                status=status, penalty=penalty, durations=durations, extra_time=extra_time, own_rooms=own_rooms)

    def problem(self, input_id: int) -> Problem:
        """The stored input as a :class:`Problem` again (events, enrolments, slots, rooms, rules, weights)."""
        conn = self.conn
        row = conn.execute("SELECT source_name, weights_json, problem_json FROM inputs WHERE id = ?",
                           (input_id,)).fetchone()
        if row is None:
            raise InputError(f"There is no stored input number {input_id}.")
        source, weights_json, problem_json = row
        events = {}
        for code, title, details in conn.execute(
                "SELECT code, title, details_json FROM input_events WHERE input_id = ? ORDER BY code", (input_id,)):
            events[code] = Event(code=code, title=title, **_fields_from(Event, json.loads(details)))
        enrolments = [(a, e) for a, e in conn.execute(
            "SELECT attendee, event FROM input_enrolments WHERE input_id = ? ORDER BY position", (input_id,))]
        slots = [slot_from_dict(json.loads(d)) for (d,) in conn.execute(
            "SELECT details_json FROM input_slots WHERE input_id = ? ORDER BY position", (input_id,))]
        rooms = [Room(**_fields_from(Room, json.loads(d))) for (d,) in conn.execute(
            "SELECT details_json FROM input_rooms WHERE input_id = ? ORDER BY position", (input_id,))]
        rules = [Rule(RuleKind(kind), tuple(json.loads(evs))) for kind, evs in conn.execute(
            "SELECT kind, events_json FROM input_rules WHERE input_id = ? ORDER BY position", (input_id,))]
        weights = Weights(**_fields_from(Weights, json.loads(weights_json)))
        extra = json.loads(problem_json or "{}")
        problem = Problem(enrolments=enrolments, events=events, slots=slots, rooms=rooms, rules=rules,
                          weights=weights, source=source)
        if "max_per_day" in extra:
            problem.max_per_day = extra["max_per_day"]
        for data in extra.get("people") or []:
            person = Attendee(**_fields_from(Attendee, data))
            problem.people[person.name] = person
        problem.optional = {(a, e) for a, e in extra.get("optional") or []}
        return problem

    def integrity(self) -> str:
        return str(self.conn.execute("PRAGMA integrity_check").fetchone()[0])

    def unknown_label(self, label: str, conn: sqlite3.Connection | None = None) -> InputError:
        """The error for a label that is not published, listing the labels that are."""
        conn = conn or self.conn
        known = [r[0] for r in conn.execute("SELECT label FROM published ORDER BY published_at, label")]
        listed = ", ".join(f"'{k}'" for k in known) if known else "none yet (publish one with solve --publish LABEL)"
        return InputError(Finding(f"No published timetable is labelled '{label}'.", found=label,
                                  expected=f"a file, or one of the published labels: {listed}"))

    def _inputs(self, conn, where: str, params: tuple) -> list[StoredInput]:
        rows = conn.execute(
            "SELECT i.id, i.source_name, i.created_at, i.last_used_at, "
            "(SELECT count(*) FROM input_events WHERE input_id = i.id), "
            "(SELECT count(DISTINCT attendee) FROM input_enrolments WHERE input_id = i.id), "
            "(SELECT count(*) FROM input_enrolments WHERE input_id = i.id), "
            "(SELECT count(*) FROM runs WHERE input_id = i.id) "
            f"FROM inputs i {where} ORDER BY i.id", params).fetchall()
        labels = _labels_by(conn, "r.input_id")
        return [StoredInput(id=r[0], source_name=r[1], created_at=_moment(r[2]), last_used_at=_moment(r[3]),
                            events=r[4], attendees=r[5], enrolments=r[6], runs=r[7], labels=labels.get(r[0], []))
                for r in rows]

    def _runs(self, conn, where: str, params: tuple) -> list[StoredRun]:
        rows = conn.execute(
            "SELECT r.id, r.input_id, i.source_name, r.created_at, r.slot_count, r.status, r.penalty, r.valid, "
            f"r.kept_from FROM runs r JOIN inputs i ON i.id = r.input_id {where} ORDER BY r.id", params).fetchall()
        labels = _labels_by(conn, "r.id")
        return [StoredRun(id=r[0], input_id=r[1], source_name=r[2], created_at=_moment(r[3]), slot_count=r[4],
                          status=r[5], penalty=r[6], valid=None if r[7] is None else bool(r[7]), kept_from=r[8],
                          labels=labels.get(r[0], [])) for r in rows]


def _labels_by(conn, column: str) -> dict[int, list[str]]:
    out: dict[int, list[str]] = {}
    for key_value, label in conn.execute(
            f"SELECT {column}, p.label FROM published p JOIN runs r ON r.id = p.run_id ORDER BY p.published_at, p.label"):
        out.setdefault(key_value, []).append(label)
    return out


class _Transaction:
    """``BEGIN IMMEDIATE`` ... ``COMMIT``, or ``ROLLBACK`` on any exception (the connection is in autocommit mode)."""

    def __init__(self, conn: sqlite3.Connection):
        self.conn = conn

    def __enter__(self) -> sqlite3.Connection:
        self.conn.execute("BEGIN IMMEDIATE")
        return self.conn

    def __exit__(self, kind, value, tb) -> bool:
        if kind is None:
            self.conn.execute("COMMIT")
        else:
            self.conn.execute("ROLLBACK")
        return False


def publication_problems(problem: Any, run: Any) -> str:
    """Why ``run`` may not be published (empty when it may): not clash-free, events left out, not validated."""
    if run.status not in FOUND_STATUSES or not run.assignment:
        return f"the result is {run.status}" + (f" ({run.reason})" if run.reason else "") + "."
    missing = sorted(set(problem.events) - set(run.assignment))
    if missing:
        return f"{len(missing)} event(s) have no slot (for example {missing[0]})."
    validation = getattr(run, "validation", None)
    if validation is None:
        return "the validator did not check it."
    if not validation.ok:
        return "the validator found " + "; ".join(validation.violations[:3]) + "."
    return ""


def check_label(label: str) -> str:
    """A label as stored: trimmed, not empty, printable, at most 100 characters."""
    text = " ".join(str(label).split())
    if not text or len(text) > 100 or not text.isprintable():
        raise InputError(Finding("A published label must be 1 to 100 printable characters.", found=str(label),
                                 expected="a short name such as 'draft 1' or '2027-01-11 final'"))
    return text


def normalised_input(problem: Problem) -> dict:
    """The parts of ``problem`` the store keeps, as plain values (also hashed into the input's fingerprint)."""
    known = {"enrolments", "events", "slots", "rooms", "rules", "weights", "source", "people", "optional"}
    extra = {f.name: _plain(getattr(problem, f.name)) for f in dataclasses.fields(problem) if f.name not in known}
    if problem.people:  # the Attendees sheet, without the rows it was read from (as for slots)
        extra["people"] = [{k: v for k, v in _plain(problem.people[name]).items() if k != "where"}
                           for name in sorted(problem.people)]
    if problem.optional:  # sorted: a set's order would change the fingerprint from run to run
        extra["optional"] = sorted([a, e] for a, e in problem.optional)
    return {
        "source_name": Path(problem.source).name if problem.source else "",
        "events": [_plain(problem.events[c]) for c in sorted(problem.events)],
        "enrolments": [[a, e] for a, e in problem.enrolments],
        "slots": [slot_to_dict(s) for s in problem.slots],
        "rooms": [_plain(r) for r in problem.rooms],
        "rules": [{"kind": r.kind.value, "events": list(r.events)} for r in problem.rules],
        "weights": _plain(problem.weights),
        "problem": extra,
    }
