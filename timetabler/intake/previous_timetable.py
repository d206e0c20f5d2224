"""Read an earlier timetable (for repair: ``solve --keep PREVIOUS``).

Accepts a workbook written by ``timetabler solve --out`` (its "Events" sheet), or any
.xlsx/.csv whose header row (within the first 15 rows) has an event column ("Event",
"Exam", "Code", ...) and a "Slot" column holding slot numbers or slot labels. A CSV file
may be in any encoding and with any delimiter the enrolment reader accepts: the file is
opened by the enrolment reader's :func:`~timetabler.intake.file_types.load_book`, with the
same limits and the same located errors for damaged files.

:func:`resolve_previous` then turns the slot references into slot numbers for one list of
slots (the labels of a slots sheet, or numbers 1..K), as the command line and the web page
both need for each number of slots they solve.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from ..errors import Finding, InputError, setting
from ..model import Location, Problem, Slot
from .file_types import load_book
from .limits import Limits

EVENT_HEADERS = ("event", "exam", "code", "module", "meeting", "paper")
#: The label first: a workbook's slot numbers count in time order, and one written before slots were
#: sorted by time (or from a sheet reordered since) may number them otherwise; labels do not move
SLOT_HEADERS = ("slot label", "slot", "slot number", "session")
#: How the values of each slot column are read: a label column names slots by label only (a label
#: that is gone is not taken for the slot in that position), a number column by position in time
#: only; a bare "Slot" or "Session" column by label first, then by number
REFERENCE_KINDS = {"slot label": "label", "slot number": "number", "slot": "either", "session": "either"}


@dataclass
class PreviousTimetable:
    """Event code -> slot reference (number or label, as written), and where each came from."""

    slots: dict[str, str] = field(default_factory=dict)
    where: dict[str, Location] = field(default_factory=dict)
    sheet: str | None = None
    #: Where each event code was written (its cell in the event column), for findings about the code.
    event_where: dict[str, Location] = field(default_factory=dict)
    #: What the references are: "label" (slot labels only), "number" (positions 1..K in time order
    #: only) or "either" (a label first, else a number; a value that could be both is warned about)
    reference: str = "either"


@dataclass
class ResolvedPrevious:
    """An earlier timetable resolved against one list of slots.

    ``slots`` maps event code -> slot number (1..K) for the events that can be kept;
    ``dropped`` has a finding for each event of the earlier timetable that is not in the
    problem any more; ``unplaced`` one for each event whose earlier slot is not among the
    slots now. Both lists are warnings: the events concerned are simply placed afresh.
    ``ambiguous`` has a warning for each reference that is the label of one slot and the number
    of another (read as the label).
    """

    slots: dict[str, int] = field(default_factory=dict)
    dropped: list[Finding] = field(default_factory=list)
    unplaced: list[Finding] = field(default_factory=list)
    ambiguous: list[Finding] = field(default_factory=list)


def resolve_previous(problem: Problem, refs: PreviousTimetable, slots: list[Slot]) -> ResolvedPrevious:
    """Resolve the slot references of ``refs`` against ``slots``: by label, by number 1..K (the
    position in time), or, for ``refs.reference == "either"``, by label first, then by number.

    Examples
    --------
    >>> from timetabler.model import Event, Problem, generic_slots
    >>> problem = Problem(events={"A": Event("A"), "B": Event("B")}, enrolments=[])
    >>> refs = PreviousTimetable(slots={"A": "Slot 2", "B": "5", "Z": "1"})
    >>> out = resolve_previous(problem, refs, generic_slots(3))
    >>> out.slots, len(out.unplaced), len(out.dropped)
    ({'A': 2}, 1, 1)
    """
    out = ResolvedPrevious()
    labels: dict[str, int] = {}
    for i, slot in enumerate(slots, start=1):
        labels.setdefault(slot.label.strip().casefold(), i)
    for code, ref in refs.slots.items():
        if code not in problem.events:
            out.dropped.append(Finding(
                f"{code} is in the earlier timetable but not among the events now.",
                where=refs.event_where.get(code), found=code, severity="warning",
                suggestion="If it was cancelled, nothing is needed; otherwise check the spelling of the code."))
            continue
        by_label = labels.get(str(ref).strip().casefold())
        by_number = _position(ref, len(slots))
        if refs.reference == "label":
            number, expected = by_label, "a slot label of the slots now"
        elif refs.reference == "number":
            number, expected = by_number, f"a slot number from 1 to {len(slots)}"
        else:
            number, expected = (by_label or by_number), f"a slot number from 1 to {len(slots)} or a slot label"
            if by_label is not None and by_number is not None and by_label != by_number:
                out.ambiguous.append(Finding(
                    f"{code} was in slot '{ref}', read as the slot labelled '{ref}' (slot {by_label} in time), "
                    f"not slot number {by_number}.", where=refs.where.get(code), found=ref, severity="warning",
                    suggestion="Name the column 'Slot label' or 'Slot number' to say which is meant."))
        if number is None:
            out.unplaced.append(Finding(
                f"{code} was in slot '{ref}', which is not one of the {len(slots)} slots now.",
                where=refs.where.get(code), found=ref, severity="warning", expected=expected))
            continue
        out.slots[code] = number
    return out


def _position(ref: object, k: int) -> int | None:
    """A slot number 1..k written as text ("3", "3.0"), or None."""
    try:
        value = float(str(ref).strip())
    except ValueError:
        return None
    return int(value) if value.is_integer() and 1 <= value <= k else None


def _norm(text: object) -> str:
    return " ".join(str(text or "").replace("_", " ").split()).casefold()


def _cell(value: object) -> str:
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return " ".join(str(value).split()) if value is not None else ""


def read_previous_timetable(path: str | Path) -> PreviousTimetable:
    """Read ``path``; raise :class:`InputError` naming the file and sheet when no timetable is found."""
    path = Path(path)
    name = str(path)
    if not path.exists():
        raise InputError(f"The earlier timetable {name} does not exist.")
    suffix = path.suffix.lower()
    if suffix not in (".xlsx", ".xlsm", ".csv", ".txt", ".tsv"):
        raise InputError(Finding(f"{name}: an earlier timetable must be an .xlsx or .csv file.", found=suffix))
    # The enrolment reader's own file reading: limits, encodings, delimiters, and every damaged
    # cell of a workbook reported with its sheet, row and cell.
    book = load_book(path, Limits())
    order = sorted(book.sheets, key=lambda s: not (s.name or "").casefold().startswith("events"))
    tables: list[tuple[str | None, list[list[object]]]] = [(s.name, s.rows) for s in order]
    for sheet, rows in tables:
        found = _read_table(name, sheet, rows)
        if found is not None:
            return found
    raise InputError(Finding(
        f"{name}: no sheet has a header row with an event column and a 'Slot' column.",
        expected="a header such as 'Event' and 'Slot' in the first 15 rows",
        suggestion=f"Give {setting('timetable_workbook')}, or a .csv with columns Event,Slot."))


def _read_table(name: str, sheet: str | None, rows: list[list[object]]) -> PreviousTimetable | None:
    for r, row in enumerate(rows[:15]):
        heads = [_norm(c) for c in row]
        ev = next((i for i, h in enumerate(heads) if h in EVENT_HEADERS), None)
        sl, kind = next(((i, REFERENCE_KINDS[h_name]) for h_name in SLOT_HEADERS for i, h in enumerate(heads)
                         if h == h_name), (None, None))
        if ev is None or sl is None:
            continue
        out = PreviousTimetable(sheet=sheet, reference=kind)
        for n, data in enumerate(rows[r + 1:], start=r + 2):
            code = _cell(data[ev]) if ev < len(data) else ""
            slot = _cell(data[sl]) if sl < len(data) else ""
            if not code:
                continue
            where = Location(name, sheet, n, str(row[sl]))
            if not slot:
                continue  # an event without a slot in the earlier timetable is simply new
            if code in out.slots and out.slots[code] != slot:
                raise InputError(Finding(f"{code} appears twice with different slots.", where=where,
                                         found=slot, expected=out.slots[code]))
            out.slots[code] = slot
            out.where[code] = where
            out.event_where[code] = Location(name, sheet, n, str(row[ev]))
        return out
    return None
