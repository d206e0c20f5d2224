"""Find the header row and the columns that matter, below any title rows or blank rows.

Registrars' exports often start with a title (``Harrowgate Vale College — winter exam
entries``), a date line and a blank row before the headers. The header row is the first of
the top rows (up to :data:`SCAN_ROWS`) in which the columns needed for some enrolment
layout are all found, by the words of :mod:`timetabler.intake.vocabulary`, or by the
headers the registrar named with ``--attendee-column`` / ``--event-column``.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from .file_types import RawSheet
from .normalising import identifier, is_blank, looks_like_total, optional_mark, yes_no
from .vocabulary import (
    ATTENDANCE,
    ATTENDEE,
    ENROLMENT_TITLE,
    EVENT,
    EVENT_LIST,
    FIRST_EVENT_CLASH,
    OTHER_EVENT,
    SHARED,
    Column,
    key,
    numbered_event_column,
)

SCAN_ROWS = 30

LONG = "long"
WIDE = "wide"
CLASH_LIST = "clash list"
LAYOUTS = (LONG, WIDE, CLASH_LIST)


@dataclass
class Layout:
    """Where the enrolments are in a sheet. Column indexes are 0-based; ``header_row`` is 1-based."""

    kind: str
    header_row: int
    headers: list[str]
    attendee: int | None = None
    events: list[int] = field(default_factory=list)
    split_cells: bool = False
    grid: bool = False  # wide layout with event codes as headers and ticks in the cells
    other: int | None = None
    shared: int | None = None
    title: int | None = None  # long layout: a column giving each event's title
    attendance: int | None = None  # the Attendance column (required / optional), any layout with attendees

    def column_label(self, index: int) -> str:
        """``B (Exam)``: the column letter a spreadsheet shows, and its header."""
        header = self.headers[index] if index < len(self.headers) else ""
        return f"{column_letter(index)} ({header})" if header else column_letter(index)


def column_letter(index: int) -> str:
    """0 -> A, 25 -> Z, 26 -> AA."""
    letters = ""
    n = index + 1
    while n:
        n, r = divmod(n - 1, 26)
        letters = chr(65 + r) + letters
    return letters


def best_match(column: Column, headers: list[str], exclude: set[int] = frozenset()) -> int | None:
    """Index of the header that best matches a column (its own name first, then in the order of ``also``)."""
    names = (key(column.name),) + column.also
    rank = {name: i for i, name in reversed(list(enumerate(names)))}
    found = [(rank[key(h)], i) for i, h in enumerate(headers) if i not in exclude and key(h) in rank]
    return min(found)[1] if found else None


def find_named(headers: list[str], wanted: str) -> int | None:
    k = key(wanted)
    for i, h in enumerate(headers):
        if key(h) == k:
            return i
    return None


def detect_layout(
    sheet: RawSheet,
    *,
    layout: str = "auto",
    attendee_column: str | None = None,
    event_columns: tuple[str, ...] = (),
) -> Layout | None:
    """The enrolment layout of a sheet, or None when no row of its top rows looks like a header."""
    for r, row in enumerate(sheet.rows[:SCAN_ROWS], start=1):
        headers = [identifier(c) for c in row]
        if sum(1 for h in headers if h) < 2:
            continue
        found = _layout_at(headers, r, layout, attendee_column, event_columns)
        if found is not None:
            if found.kind == LONG and len(found.events) == 1:
                found.title = best_match(ENROLMENT_TITLE, headers, exclude={found.attendee, *found.events})
            if found.kind != CLASH_LIST:
                taken = {found.attendee, *found.events, found.title} - {None}
                found.attendance = best_match(ATTENDANCE, headers, exclude=taken)
            return found
    if layout in ("auto", WIDE) and not event_columns:
        return _tick_grid(sheet, attendee_column)
    return None


GRID_SAMPLE_ROWS = 500


def _tick_grid(sheet: RawSheet, attendee_column: str | None) -> Layout | None:
    """A wide layout with one column per event, headed by its code, and a tick where the attendee is enrolled.

    Tried only when no other layout fits. The event columns are those of the header row
    (after the attendee column is found) whose cells, in the first rows below, are
    ticks (``x``, ``1``, ``yes``, ``✓`` ...), blank or ``no``/``0`` — all but one, or
    all but 10%, of the filled ones, so that a stray note warns rather than dropping the
    column — with at least one tick.
    """
    for r, row in enumerate(sheet.rows[:SCAN_ROWS], start=1):
        headers = [identifier(c) for c in row]
        att = find_named(headers, attendee_column) if attendee_column else best_match(ATTENDEE, headers)
        if att is None:
            continue
        below = [row for row in sheet.rows[r : r + GRID_SAMPLE_ROWS]
                 if not (att < len(row) and looks_like_total(row[att]))]
        attendance = best_match(ATTENDANCE, headers, exclude={att})
        columns = []
        for i, h in enumerate(headers):
            if i in (att, attendance) or not h:
                continue
            marks = [tick(row[i]) for row in below if i < len(row) and not is_blank(row[i])]
            if any(marks) and sum(1 for m in marks if m is None) <= max(1, 0.1 * len(marks)):
                columns.append(i)
        if columns:
            return Layout(WIDE, r, headers, attendee=att, events=columns, grid=True, attendance=attendance)
    return None


def tick(value: object) -> bool | None:
    """True for a tick (x, 1, yes, ✓ ...) or a word enrolling as optional (``optional``: see
    :func:`~.normalising.optional_mark`), False for no/0/blank, None for anything else."""
    if isinstance(value, str) and (value.strip() in ("\u2713", "\u2714", "\u2611", "\u2022", "*")
                                   or optional_mark(value)):
        return True
    return yes_no(value)


def _layout_at(headers, r, layout, attendee_column, event_columns) -> Layout | None:
    if attendee_column or event_columns:
        att = find_named(headers, attendee_column) if attendee_column else best_match(ATTENDEE, headers)
        if att is None:
            return None
        if event_columns:
            evs = [find_named(headers, e) for e in event_columns]
            if any(e is None for e in evs):
                return None
        else:
            evs = _auto_event_columns(headers, att)
            if not evs:
                return None
        kind = WIDE if len(evs) > 1 or layout == WIDE else LONG
        split = layout == WIDE or (len(evs) == 1 and EVENT_LIST.matches(headers[evs[0]]))
        return Layout(kind, r, headers, attendee=att, events=list(evs), split_cells=split)  # type: ignore[arg-type]

    if layout in ("auto", CLASH_LIST):
        att = best_match(ATTENDEE, headers)
        if att is None or layout == CLASH_LIST:
            first = best_match(FIRST_EVENT_CLASH, headers)
            other = best_match(OTHER_EVENT, headers, exclude={first} if first is not None else set())
            shared = best_match(SHARED, headers, exclude={i for i in (first, other) if i is not None})
            if first is not None and other is not None and shared is not None:
                return Layout(CLASH_LIST, r, headers, events=[first], other=other, shared=shared)
            if layout == CLASH_LIST:
                return None
    att = best_match(ATTENDEE, headers)
    if att is None:
        return None
    numbered = sorted(
        (numbered_event_column(h), i) for i, h in enumerate(headers) if i != att and numbered_event_column(h) is not None
    )
    if len(numbered) >= 2:
        return Layout(WIDE, r, headers, attendee=att, events=[i for _, i in numbered], split_cells=False)
    lst = best_match(EVENT_LIST, headers, exclude={att})
    ev = best_match(EVENT, headers, exclude={att})
    if ev is None and lst is None and numbered:
        ev = numbered[0][1]
    if lst is not None and (ev is None or layout == WIDE):
        return Layout(WIDE, r, headers, attendee=att, events=[lst], split_cells=True)
    if ev is not None:
        kind = WIDE if layout == WIDE else LONG
        return Layout(kind, r, headers, attendee=att, events=[ev], split_cells=layout == WIDE)
    return None


def _auto_event_columns(headers: list[str], att: int) -> list[int]:
    numbered = [i for i, h in enumerate(headers) if i != att and numbered_event_column(h) is not None]
    if len(numbered) >= 2:
        return numbered
    for column in (EVENT, EVENT_LIST):
        i = best_match(column, headers, exclude={att})
        if i is not None:
            return [i]
    return []


def header_candidates(sheet: RawSheet) -> list[str]:
    """The headers of the most header-like top row, for error messages."""
    best: list[str] = []
    for row in sheet.rows[:SCAN_ROWS]:
        headers = [identifier(c) for c in row if identifier(c)]
        if len(headers) > len(best) and all(not h.replace(".", "").isdigit() for h in headers):
            best = headers
    return best
