"""Stable pseudonyms for attendees, so timetables can be shared without personal identifiers.

An attendee identifier becomes ``P-`` followed by ten characters of a keyed hash
(HMAC-SHA256, RFC 2104) of the identifier. The key is a random secret kept in a local
file: the same key gives the same pseudonym for the same attendee in every run (so
sheets published on different days can be joined), and without the key nobody can
recompute the mapping by hashing guessed student numbers — which a plain, unkeyed hash of
a short identifier would allow. The key never leaves this computer and is never written
into any output.
"""

from __future__ import annotations

import base64
import copy
import dataclasses
import hashlib
import hmac
import os
import re
import secrets
from pathlib import Path
from typing import Any, Iterable, Sequence

from ..errors import Finding, InputError
from ..model import Problem

PREFIX = "P-"


def default_key_file() -> Path:
    """Where the pseudonym key lives unless another file is given: the user's config folder."""
    base = os.environ.get("XDG_CONFIG_HOME") or (Path.home() / ".config")
    return Path(base) / "timetabler" / "pseudonym-key"


def load_or_create_key(path: str | Path | None = None) -> tuple[bytes, Path, bool]:
    """Read the key file, creating it (readable by the owner only) when it does not exist.

    Returns the key, the file used, and whether it was created now.
    """
    file = Path(path).expanduser() if path else default_key_file()
    if file.exists():
        try:
            text = file.read_text(encoding="ascii").strip()
            key = bytes.fromhex(text)
        except (OSError, ValueError, UnicodeDecodeError) as exc:
            raise InputError(
                Finding(f"The pseudonym key file {file} cannot be read as a key.", suggestion="Give the file timetabler created, or a new file name.")
            ) from exc
        if len(key) < 16:
            raise InputError(Finding(f"The pseudonym key in {file} is too short (under 16 bytes)."))
        return key, file, False
    try:
        file.parent.mkdir(parents=True, exist_ok=True)
        key = secrets.token_bytes(32)
        fd = os.open(file, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
        with os.fdopen(fd, "w", encoding="ascii") as fh:
            fh.write(key.hex() + "\n")
    except OSError as exc:
        raise InputError(Finding(f"Cannot create the pseudonym key file {file}: {exc.strerror}.")) from exc
    return key, file, True


class Pseudonyms:
    """A keyed, stable mapping from attendee identifiers to pseudonyms.

    Examples
    --------
    >>> p = Pseudonyms(b"0123456789abcdef")
    >>> p("HV-S0001") == p("HV-S0001"), p("HV-S0001") == p("HV-S0002")
    (True, False)
    >>> p("HV-S0001").startswith("P-")
    True
    """

    def __init__(self, key: bytes, length: int = 10):
        self.key = key
        self.length = length
        self._cache: dict[str, str] = {}

    def __call__(self, attendee: str) -> str:
        got = self._cache.get(attendee)
        if got is None:
            digest = hmac.new(self.key, attendee.encode("utf-8"), hashlib.sha256).digest()
            got = PREFIX + base64.b32encode(digest).decode("ascii")[: self.length]
            self._cache[attendee] = got
        return got

    def mapping(self, attendees: Iterable[str]) -> dict[str, str]:
        """Pseudonyms of many attendees; raises if two would collide (then lengthen)."""
        out = {a: self(a) for a in attendees}
        if len(set(out.values())) != len(out):
            longer = Pseudonyms(self.key, self.length + 6)
            return longer.mapping(out)
        return out


def pseudonymise(problem: Problem, runs: Sequence[Any], pseudonyms: Pseudonyms, reading: Any = None):
    """A copy of the problem, runs and reading with every attendee identifier replaced.

    Attendee identifiers are replaced in the enrolments and, as whole words, in the plain
    text the solver wrote (reasons, warnings), which may name an attendee as a witness.
    """
    mapping = pseudonyms.mapping(problem.attendees)
    # the Attendees sheet and the optional attendances are keyed by attendee too (issue 13)
    people = {mapping.get(name, name): dataclasses.replace(person, name=mapping.get(name, name))
              for name, person in problem.people.items() if name in mapping}
    new_problem = dataclasses.replace(problem, enrolments=[(mapping[a], e) for a, e in problem.enrolments],
                                      events=dict(problem.events), people=people,
                                      optional={(mapping[a], e) for a, e in problem.optional})
    replace = _text_replacer(mapping)
    new_runs = []
    for run in runs:
        clone = copy.copy(run)
        for attr in ("reason",):
            if isinstance(getattr(clone, attr, None), str):
                setattr(clone, attr, replace(getattr(clone, attr)))
        if isinstance(getattr(clone, "reasons", None), list):
            clone.reasons = [replace(r) if isinstance(r, str) else r for r in clone.reasons]
        own = getattr(clone, "own_rooms", None)
        if isinstance(own, dict) and own:  # attendees seated apart: (attendee, event) -> room
            clone.own_rooms = {((mapping.get(k[0], k[0]), k[1]) if isinstance(k, tuple) else k): v for k, v in own.items()}
        new_runs.append(clone)
    new_reading = reading
    if reading is not None:
        new_reading = copy.copy(reading)
        new_reading.problem = new_problem
        warnings = []
        for w in getattr(reading, "warnings", []) or []:
            w2 = copy.copy(w)
            for attr in ("message", "found", "suggestion"):
                if isinstance(getattr(w2, attr, None), str):
                    setattr(w2, attr, replace(getattr(w2, attr)))
            warnings.append(w2)
        new_reading.warnings = warnings
    return new_problem, new_runs, new_reading


def pseudonymise_counts(counts: Any, problem: Problem, pseudonyms: Pseudonyms) -> Any:
    """A copy of a count report with the attendees it names (``most_limiting_people``) replaced by
    the pseudonyms :func:`pseudonymise` gives them; the report itself is left as it was."""
    named = list(getattr(counts, "most_limiting_people", None) or [])
    if not named:
        return counts
    mapping = pseudonyms.mapping(problem.attendees)
    clone = copy.copy(counts)
    clone.most_limiting_people = [
        dict(item, attendee=mapping.get(str(item.get("attendee")), None) or pseudonyms(str(item.get("attendee"))))
        for item in named]
    return clone


def _text_replacer(mapping: dict[str, str]):
    if not mapping:
        return lambda text: text
    names = sorted(mapping, key=len, reverse=True)
    pattern = re.compile(r"(?<![\w-])(" + "|".join(re.escape(n) for n in names) + r")(?![\w-])")
    return lambda text: pattern.sub(lambda m: mapping[m.group(1)], text)
