"""Turn the rows of an enrolment sheet into (attendee, event) pairs, whatever the layout.

Three layouts are read (see :mod:`timetabler.intake.vocabulary` for the headers):

long
    one row per enrolment: an attendee column and an event column;
wide
    one row per attendee: the events in several columns (``Exam 1``, ``Exam 2``, ...), or
    listed in one cell separated by ``;`` or ``,``, or one column per event headed by its
    code with a tick (``x``, ``1``, ``yes``, ``✓``) where the attendee is enrolled;
clash list
    no attendees, one row per pair of events with the number of attendees they share.
    Each shared attendee becomes a *synthetic* attendee ``shared:A|B#i`` enrolled on both
    events, so the conflict graph (edges and their ``shared`` weights) comes out exactly as
    listed; event sizes and per-attendee figures then mean nothing, and
    ``Reading.synthetic_attendees`` says so.

Rows are skipped, with a warning naming the row, when they are blank (silently), repeat
the header, look like a total row, or lack the attendee or the event.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from ..errors import setting
from ..model import Location
from .file_types import RawSheet
from .findings import FindingList
from .header_detection import CLASH_LIST, Layout, tick
from .normalising import (
    attendance_value,
    identifier,
    is_blank,
    looks_like_total,
    looks_scientific,
    optional_mark,
    split_list,
    whole_number,
)
from .vocabulary import ATTENDANCE_WORDS, key

SYNTHETIC_PREFIX = "shared:"

#: Two codes joined by a mark the reader does not split on: ``ECN201 / ANT201``, ``ECN201|ANT201``,
#: ``MAT101 & MAT102``, ``MAT101+MAT102`` (``&`` and ``+`` only between codes holding digits, so that
#: committee names such as ``Finance & Estates`` pass).
_JOINED = re.compile(r"[^\s/|]\s*[/|]\s*[^\s/|]|\d\s*[&+]\s*[A-Za-z]*\d")
_JOINS = re.compile(r"\s*[/|&+]\s*")


@dataclass
class RawEnrolments:
    """Pairs as typed (before case folding), each with its spreadsheet row number."""

    pairs: list[tuple[str, str, int]] = field(default_factory=list)
    lone_events: list[tuple[str, int]] = field(default_factory=list)  # clash list: events with no clash
    synthetic: bool = False
    rows_read: int = 0
    blank_rows: int = 0
    separators_seen: int = 0  # event cells holding ; or , read as one code (long layout)
    separator_first: tuple[int, str] | None = None  # (row, cell) of the first of them
    #: (event code, title) -> the first row giving that title, from a title column beside the event column
    titles: dict[tuple[str, str], int] = field(default_factory=dict)
    #: indexes into ``pairs`` of the enrolments marked optional (Attendance column, or an ``optional`` grid cell)
    optional: set[int] = field(default_factory=set)


def read_enrolments(sheet: RawSheet, layout: Layout, file: str, findings: FindingList, max_pairs: int) -> RawEnrolments:
    if layout.kind == CLASH_LIST:
        return _clash_list(sheet, layout, file, findings, max_pairs)
    return _attendee_rows(sheet, layout, file, findings)


def _where(file: str, sheet: RawSheet, row: int, layout: Layout, col: int | None) -> Location:
    return Location(file, sheet.name, row, layout.column_label(col) if col is not None else None)


def _cell(row: list[object], i: int | None) -> object:
    return row[i] if i is not None and i < len(row) else None


def _attendee_rows(sheet: RawSheet, layout: Layout, file: str, findings: FindingList) -> RawEnrolments:
    out = RawEnrolments()
    header_keys = [key(h) for h in layout.headers]
    attendee_header = layout.headers[layout.attendee] if layout.attendee is not None else None
    totals: dict[object, bool] = {}

    def total(value: object) -> bool:
        try:
            return totals[value]
        except KeyError:
            totals[value] = found = looks_like_total(value)
            return found
        except TypeError:
            return looks_like_total(value)
    repeated_header_warned = False
    memo: dict[object, str] = {}

    def ident(value: object) -> str:
        """identifier(), remembered per distinct cell value (ids repeat on many rows)."""
        try:
            return memo[value]
        except KeyError:
            memo[value] = text = identifier(value)
            if looks_scientific(text) and len(scientific) < 5:
                scientific.append((text, r))
            return text
        except TypeError:  # unhashable cell value
            return identifier(value)

    scientific: list[tuple[str, int]] = []
    joined: list[tuple[int, str]] = []  # (row, event code) of codes holding / | & + between two codes

    for r in range(layout.header_row + 1, len(sheet.rows) + 1):
        row = sheet.rows[r - 1]
        if not row or all(is_blank(c) for c in row):
            out.blank_rows += 1
            continue
        out.rows_read += 1
        who = ident(_cell(row, layout.attendee))
        cells = [_cell(row, i) for i in layout.events]
        if who == attendee_header and [key(identifier(c)) for c in row] == header_keys[: len(row)]:
            if not repeated_header_warned:
                findings.warn("The header row is repeated here (two exports pasted together?); the row was skipped.",
                              _where(file, sheet, r, layout, layout.attendee), found=who)
                repeated_header_warned = True
            continue
        if total(who) or any(total(c) for c in cells):
            findings.warn("This looks like a total row, not an enrolment; it was skipped.",
                          _where(file, sheet, r, layout, layout.attendee), found=" | ".join(identifier(c) for c in row),
                          suggestion="Delete summary rows from the enrolment sheet.")
            continue
        events: list[str] = []
        optional_here: set[str] = set()
        if layout.attendance is not None:
            raw_attendance = _cell(row, layout.attendance)
            attendance = attendance_value(raw_attendance)
            if attendance is None:
                findings.error("The attendance is not one timetabler knows.",
                               _where(file, sheet, r, layout, layout.attendance), found=identifier(raw_attendance),
                               expected=_ATTENDANCE_EXPECTED)
            row_optional = attendance == "optional"
        else:
            row_optional = False
        if layout.grid:
            for i, c in zip(layout.events, cells):
                mark = tick(c)
                if mark:
                    events.append(layout.headers[i])
                    if optional_mark(c):
                        optional_here.add(layout.headers[i])
                elif mark is None:
                    findings.warn("This cell should hold a tick (x, 1, yes) or be blank; it was read as not enrolled.",
                                  _where(file, sheet, r, layout, i), found=identifier(c))
            cells = []
        for c in cells:
            if layout.split_cells:
                events.extend(split_list(c))
            else:
                text = ident(c)
                if text:
                    if ";" in text or "," in text:
                        out.separators_seen += 1
                        if out.separator_first is None:
                            out.separator_first = (r, text)
                    events.append(text)
        if layout.title is not None and events:
            title = identifier(_cell(row, layout.title))
            if title:
                for e in events:
                    out.titles.setdefault((e, title), r)
        for e in events:
            if ("/" in e or "|" in e or "&" in e or "+" in e) and _JOINED.search(e):
                joined.append((r, e))
        if not who and events:
            findings.warn("This row names an event but no attendee; it was skipped.",
                          _where(file, sheet, r, layout, layout.attendee), found=", ".join(events),
                          expected="an attendee in this column",
                          suggestion="If each attendee is written only on the first of their rows, "
                          "fill the attendee down into the rows below.")
            continue
        if who and not events:
            findings.warn("This row names an attendee but no event; it was skipped.",
                          _where(file, sheet, r, layout, layout.events[0]), found=who,
                          expected="an event code in this column")
            continue
        if not who:
            continue  # other columns filled, the two that matter blank
        for e in events:
            if row_optional or e in optional_here:
                out.optional.add(len(out.pairs))
            out.pairs.append((who, e, r))
    if joined:
        _joined_warning(joined, out, sheet, layout, file, findings)
    if scientific:
        text, row = scientific[0]
        findings.warn("Some identifiers look like long numbers shown in scientific notation; digits may have been "
                      "lost when the file was saved, so different ids may have become one.",
                      Location(file, sheet.name, row, None), found=", ".join(t for t, _ in scientific),
                      suggestion="Format the id column as text in the spreadsheet, then export the file again.")
    return out


_ATTENDANCE_EXPECTED = ("required (or blank) or optional; also "
                        + ", ".join(sorted(w for w in ATTENDANCE_WORDS if w not in ("required", "optional"))))


def _joined_warning(joined: list[tuple[int, str]], out: RawEnrolments, sheet: RawSheet, layout: Layout,
                    file: str, findings: FindingList) -> None:
    """One warning for the event codes that look like two codes joined by ``/``, ``|``, ``&`` or ``+``.

    They are kept as one code each: a cell such as ``ECN201 / ANT201`` may list two exams or
    name one exam known by two codes (a joint paper), and only the registrar knows which.
    """
    row, code = joined[0]
    distinct = sorted({c for _, c in joined})
    alone = {e for _, e, _ in out.pairs}
    parts = [p for p in _JOINS.split(code) if p]
    also = all(p in alone for p in parts)
    findings.warn(
        f"{len(joined)} event cells join two codes with a mark that is not a list separator"
        f" ({len(distinct)} different codes, first {code!r} in row {row}); each was read as one event code."
        + (f" {' and '.join(parts)} are also events on their own, so this cell may list several events." if also else ""),
        _where(file, sheet, row, layout, layout.events[0] if len(layout.events) == 1 else None),
        found=", ".join(distinct[:5]) + (", ..." if len(distinct) > 5 else ""),
        suggestion="If such a cell lists several events, give each its own row (or separate them with ; and use "
        f"{setting('wide_layout')}); if it is one event known by two codes, nothing needs changing.")


def _clash_list(sheet: RawSheet, layout: Layout, file: str, findings: FindingList, max_pairs: int) -> RawEnrolments:
    out = RawEnrolments(synthetic=True)
    first_col, other_col, shared_col = layout.events[0], layout.other, layout.shared
    seen: dict[frozenset, tuple[int, int]] = {}
    for r in range(layout.header_row + 1, len(sheet.rows) + 1):
        row = sheet.rows[r - 1]
        if all(is_blank(c) for c in row):
            out.blank_rows += 1
            continue
        out.rows_read += 1
        a, b = identifier(_cell(row, first_col)), identifier(_cell(row, other_col))
        raw_shared = _cell(row, shared_col)
        if looks_like_total(a) or looks_like_total(b):
            findings.warn("This looks like a total row, not a clash; it was skipped.",
                          _where(file, sheet, r, layout, first_col), found=a or b)
            continue
        if not a and not b:
            continue
        if not a or not b:
            out.lone_events.append((a or b, r))
            continue
        n = whole_number(raw_shared)
        if n is None or n < 0:
            findings.error("The number of shared attendees is not a whole number.",
                           _where(file, sheet, r, layout, shared_col), found=identifier(raw_shared),
                           expected="a whole number, 0 or more")
            continue
        if key(a) == key(b):
            findings.warn("An event cannot clash with itself; the row was skipped.",
                          _where(file, sheet, r, layout, other_col), found=f"{a} / {b}")
            continue
        pair = frozenset((a, b))
        if pair in seen:
            before, row_before = seen[pair]
            if before != n:
                findings.warn(f"This pair is listed twice with different numbers (row {row_before} says {before}); "
                              "the larger number was kept.", _where(file, sheet, r, layout, shared_col), found=n)
            if n <= before:
                continue
        seen[pair] = (n, r)
    total = sum(n for n, _ in seen.values())
    if total > max_pairs:
        findings.error("The clash list adds up to more shared attendees than timetabler reads.",
                       Location(file, sheet.name, None, layout.column_label(shared_col)),
                       found=f"{total:,}", expected=f"at most {max_pairs:,}")
        return out
    for pair, (n, r) in seen.items():
        a, b = sorted(pair)
        if n == 0:
            out.lone_events.extend(((a, r), (b, r)))
        for i in range(1, n + 1):
            who = f"{SYNTHETIC_PREFIX}{a}|{b}#{i}"
            out.pairs.append((who, a, r))
            out.pairs.append((who, b, r))
    return out
