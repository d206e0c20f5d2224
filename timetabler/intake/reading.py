"""Read a registrar's file into a :class:`~timetabler.model.Problem`: the one entry point of intake.

Steps, each in its own module:

1. :mod:`.file_types` opens the file by its content (xlsx/xlsm, ods, csv/tsv with the
   encoding and delimiter detected), within the :mod:`.limits`;
2. the enrolment sheet is chosen (:func:`choose_sheet`) and its header row and layout found
   (:mod:`.header_detection`);
3. :mod:`.layouts` turns its rows into (attendee, event) pairs; :mod:`.normalising` makes
   the identifiers agree (``40001`` = ``40001.0`` = ``"40001"``; codes compared without
   regard to case unless ``case_sensitive_codes``);
4. :mod:`.sheets` reads the optional sheets (events, slots, rooms, rules, weights);
5. :mod:`.validation` cross-checks them and adds warnings.

Every problem is collected (up to ``ReadOptions.max_findings``) before one
:class:`~timetabler.errors.InputError` is raised with all of them; warnings are returned in
:attr:`Reading.warnings`.

Case of codes: by default event codes and attendee ids are compared without regard to
upper/lower case (``ma101`` and ``MA101`` are one event), and each is shown as first
spelled in the enrolments. ``case_sensitive_codes=True`` (``--case-sensitive-codes``)
keeps them apart.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Callable

from ..errors import Finding, InputError, setting
from ..model import Event, Location, Problem, distinct_enrolments
from .file_types import DELIMITER_NAMES, RawBook, RawSheet, load_book
from .findings import FindingList
from .header_detection import CLASH_LIST, LAYOUTS, LONG, WIDE, Layout, column_letter, detect_layout, header_candidates
from .layouts import read_enrolments
from .limits import Limits
from .normalising import fold
from .people import attach_attendance, attach_people, check_quorums, sheet_looks_like_attendees
from .sheets import read_extras
from .validation import attach_event_details, attach_titles, cross_check, figure_warnings, leading_zero_variants
from .vocabulary import ATTENDEES, is_note_sheet, key, sheet_role

LAYOUT_CHOICES = ("auto",) + LAYOUTS


@dataclass
class ReadOptions:
    """How to read a file; anything left as None or ``"auto"`` is detected.

    ``event_column`` names one event column; ``event_columns`` names several (wide layout:
    ``Exam 1``, ``Exam 2``, ...). ``layout`` is ``auto``, ``long``, ``wide`` or
    ``clash list`` (also written ``clashes``). ``progress(stage, done, total)`` is called on long reads.
    """

    sheet: str | None = None
    attendee_column: str | None = None
    event_column: str | None = None
    event_columns: tuple[str, ...] = ()
    layout: str = "auto"
    case_sensitive_codes: bool = False
    read_other_sheets: bool = True
    max_findings: int = 50
    limits: Limits = field(default_factory=Limits)
    progress: Callable[[str, int, "int | None"], None] | None = None


@dataclass
class Reading:
    """What intake read: the problem, the warnings, and how it read the file."""

    problem: Problem
    warnings: list[Finding] = field(default_factory=list)
    sheet: str | None = None
    attendee_column: str | None = None
    event_column: str | None = None
    duplicates_dropped: int = 0
    file_type: str | None = None  # "xlsx", "ods" or "text"
    encoding: str | None = None  # text files: the encoding found
    delimiter: str | None = None  # text files: "comma", "semicolon", "tab" or "pipe"
    layout: str = LONG  # "long", "wide" or "clash list"
    header_row: int | None = None
    event_columns: list[str] = field(default_factory=list)
    synthetic_attendees: bool = False  # clash list: attendees are made up, one per shared seat
    other_sheets: dict[str, str] = field(default_factory=dict)  # "Events" -> the sheet read for it
    rows_read: int = 0
    blank_rows: int = 0
    case_sensitive_codes: bool = False

    def describe(self) -> str:
        """How the file was read, in one sentence for the terminal."""
        parts = []
        if self.sheet:
            parts.append(f"sheet '{self.sheet}'")
        if self.header_row and self.header_row > 1:
            parts.append(f"headers in row {self.header_row}")
        if self.encoding:
            parts.append(f"{self.encoding}, {self.delimiter}-separated")
        parts.append(f"{self.layout} layout")
        if self.layout == CLASH_LIST:
            parts.append("attendees are synthetic (one per shared seat)")
        elif self.attendee_column:
            cols = ", ".join(f"'{c}'" for c in self.event_columns) or f"'{self.event_column}'"
            parts.append(f"attendees from '{self.attendee_column}', events from {cols}")
        for role, name in self.other_sheets.items():
            parts.append(f"{role.lower()} from sheet '{name}'")
        return "; ".join(parts)

    def to_dict(self) -> dict:
        """How the file was read, for ``--json`` documents."""
        return {
            "sheet": self.sheet,
            "file_type": self.file_type,
            "encoding": self.encoding,
            "delimiter": self.delimiter,
            "layout": self.layout,
            "header_row": self.header_row,
            "attendee_column": self.attendee_column,
            "event_columns": self.event_columns,
            "synthetic_attendees": self.synthetic_attendees,
            "other_sheets": self.other_sheets,
            "rows_read": self.rows_read,
            "blank_rows": self.blank_rows,
            "duplicates_dropped": self.duplicates_dropped,
            "case_sensitive_codes": self.case_sensitive_codes,
        }


def read_problem(path: str | Path, options: ReadOptions | None = None) -> Reading:
    """Read an enrolment file (``.xlsx``, ``.xlsm``, ``.ods``, ``.csv``, ``.tsv``) into a :class:`Reading`.

    Raises :class:`~timetabler.errors.InputError` carrying every problem found (up to
    ``options.max_findings``), each with file, sheet, row and column.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> f = pathlib.Path(tempfile.mkdtemp()) / "entries.csv"
    >>> _ = f.write_text("Student;Exam\\nHV-S0001;ma101\\nHV-S0001;PH102\\nHV-S0002;MA101\\n")
    >>> r = read_problem(f)
    >>> r.delimiter, sorted(r.problem.enrolments)
    ('semicolon', [('HV-S0001', 'PH102'), ('HV-S0001', 'ma101'), ('HV-S0002', 'ma101')])
    """
    options = options or ReadOptions()
    if key(options.layout) in ("clashes", "clash list", "clash"):
        options = replace(options, layout=CLASH_LIST)  # never change the caller's options
    if options.layout not in LAYOUT_CHOICES:
        raise InputError(Finding("Unknown layout.", found=options.layout, expected=", ".join(LAYOUT_CHOICES)))
    path = Path(path)
    name = str(path)
    findings = FindingList(cap=options.max_findings)
    if options.progress:
        options.progress("opening the file", 0, None)
    book = load_book(path, options.limits, options.progress)
    for note in book.notes:
        findings.add(note)

    event_columns = tuple(options.event_columns) or ((options.event_column,) if options.event_column else ())
    sheet, layout, also_fit = choose_sheet(book, name, options, event_columns)
    if also_fit:
        findings.warn(f"Other sheets also look like enrolments ({', '.join(repr(n) for n in also_fit[:5])}); "
                      f"only '{sheet.name}', the one with most rows, was read.", Location(name, sheet.name),
                      suggestion=f"Name the sheet to read with {setting('sheet')}.")
    if options.progress:
        options.progress(f"reading enrolments from {sheet.name or name}", 0, len(sheet.rows))
    raw = read_enrolments(sheet, layout, name, findings, options.limits.max_cells)
    if layout.kind == LONG and options.layout == "auto" and raw.separators_seen:
        if 2 * raw.separators_seen >= len(raw.pairs):
            layout.kind, layout.split_cells = WIDE, True
            findings = FindingList(cap=options.max_findings)  # the second pass finds the row warnings again
            for note in book.notes:
                findings.add(note)
            raw = read_enrolments(sheet, layout, name, findings, options.limits.max_cells)
        else:
            row, text = raw.separator_first or (None, None)
            findings.warn(f"{raw.separators_seen} event cells hold a comma or semicolon"
                          + (f" (first in row {row})" if row else "") + "; each was read as one event code.",
                          Location(name, sheet.name, row, layout.column_label(layout.events[0])), found=text,
                          suggestion=f"If these cells list several events, use {setting('wide_layout')}.")

    cs = options.case_sensitive_codes
    event_names: dict[str, str] = {}
    attendee_names: dict[str, str] = {}
    case_merges: list[tuple[str, str]] = []

    def canonical(table: dict[str, str], text: str, record: bool = True) -> str:
        k = fold(text, cs)
        first = table.setdefault(k, text)
        if first != text and record and len(case_merges) < 50 and (first, text) not in case_merges:
            case_merges.append((first, text))
        return first

    pairs = [(canonical(attendee_names, a, not raw.synthetic), canonical(event_names, e)) for a, e, _ in raw.pairs]
    for code, _ in raw.lone_events:
        canonical(event_names, code)
    enrolments, dropped = distinct_enrolments(pairs)
    problem = Problem(enrolments=enrolments, source=name)
    for code in event_names.values():
        problem.events.setdefault(code, Event(code))

    other: dict[str, RawSheet] = {}
    if options.read_other_sheets:
        for s in book.sheets:
            role = sheet_role(str(s.name)) if s is not sheet and s.name is not None else None
            if (role is None and s is not sheet and s.name is not None and not is_note_sheet(s.name)
                    and s.name not in also_fit and sheet_looks_like_attendees(s.rows)):
                role = ATTENDEES  # named otherwise, but headed Attendee / Extra time / Own room / Unavailable slots
            if role is None:
                continue
            if role in other:
                findings.warn(f"Both sheets '{other[role].name}' and '{s.name}' look like the {role.lower()} sheet; "
                              f"only '{other[role].name}' was read.", Location(name, s.name))
                continue
            other[role] = s
    for s in book.sheets:
        if (s is sheet or s.name is None or not s.rows or is_note_sheet(s.name) or s.name in also_fit
                or any(s is o for o in other.values())):
            continue
        findings.warn(f"The sheet '{s.name}' was not read: its name does not say what it holds.",
                      Location(name, s.name),
                      expected="Enrolments, or an optional sheet named Events, Slots, Rooms, Rules, Weights or Attendees",
                      suggestion="Rename it if it holds details timetabler should use.")
    extras = read_extras(other, name, findings)
    event_where = attach_event_details(problem, extras.events, lambda c: canonical(event_names, c))
    if raw.titles:
        title_column = layout.column_label(layout.title) if layout.title is not None else None
        attach_titles(problem, raw.titles, lambda c: canonical(event_names, c, False), event_where,
                      findings, lambda r: Location(name, sheet.name, r, title_column))
    problem.slots = [s for s, _ in extras.slots]
    problem.rooms = [r for r, _ in extras.rooms]
    for rule in extras.rules:
        rule.events = tuple(event_names.get(fold(c, cs), c) for c in rule.events)
    problem.rules = extras.rules
    problem.weights = extras.weights
    problem.max_per_day = extras.max_per_day
    if raw.optional:
        where_attendance = layout.column_label(layout.attendance) if layout.attendance is not None else None
        marked = [(canonical(attendee_names, a, False), canonical(event_names, e, False), r, i in raw.optional)
                  for i, (a, e, r) in enumerate(raw.pairs)]
        attach_attendance(problem, marked, findings, lambda r: Location(name, sheet.name, r, where_attendance))
    if extras.people:
        attach_people(problem, extras.people, lambda a: attendee_names.get(fold(a, cs)), findings,
                      "Rooms" in extras.tables)

    enrolment_where = Location(name, sheet.name)
    if not problem.enrolments:
        findings.warn("No enrolments were found below the header row.",
                      Location(name, sheet.name, layout.header_row),
                      suggestion="Add one row per attendee and event under the headers.")
    cross_check(problem, extras, findings, event_where)
    events_table = extras.tables.get("Events")
    check_quorums(problem, findings, lambda code: events_table.where(event_where[code].row, "Quorum")
                  if events_table is not None and code in event_where else None)
    zeros = [] if raw.synthetic else leading_zero_variants(list(attendee_names.values()))
    zeros += leading_zero_variants(list(event_names.values()))
    figure_warnings(problem, findings, enrolment_where, raw.synthetic, event_where, zeros, case_merges)
    findings.stop_if_errors()

    att = layout.headers[layout.attendee] if layout.attendee is not None else None
    evs = [layout.headers[i] for i in layout.events]
    return Reading(
        problem=problem,
        warnings=findings.final_warnings(),
        sheet=sheet.name,
        attendee_column=att,
        event_column=evs[0] if evs else None,
        duplicates_dropped=dropped,
        file_type=book.kind,
        encoding=book.encoding,
        delimiter=DELIMITER_NAMES.get(book.delimiter) if book.delimiter else None,
        layout=layout.kind,
        header_row=layout.header_row,
        event_columns=evs,
        synthetic_attendees=raw.synthetic,
        other_sheets=extras.sheets_read,
        rows_read=raw.rows_read,
        blank_rows=raw.blank_rows,
        case_sensitive_codes=cs,
    )


def choose_sheet(book: RawBook, name: str, options: ReadOptions,
                 event_columns: tuple[str, ...]) -> tuple[RawSheet, Layout, list[str]]:
    """The enrolment sheet, its layout, and the other visible sheets that would also fit.

    The sheet named in the options, else among the sheets whose headers fit: visible ones
    first, then the one with most rows.
    """
    detect = dict(layout=options.layout, attendee_column=options.attendee_column, event_columns=event_columns)
    if options.sheet is not None:
        wanted = [s for s in book.sheets if s.name == options.sheet] or [
            s for s in book.sheets if key(s.name or "") == key(options.sheet)
        ]
        if not wanted:
            if book.kind == "text":
                raise InputError(Finding(f"A CSV file has no sheets; leave out {setting('sheet')}.", where=Location(name),
                                         found=options.sheet))
            raise InputError(Finding("The workbook has no sheet of that name.", where=Location(name),
                                     found=options.sheet, expected="one of " + ", ".join(f"'{s.name}'" for s in book.sheets)))
        sheet = wanted[0]
        layout = detect_layout(sheet, **detect)
        if layout is None:
            raise _no_header(name, [sheet], options, event_columns)
        return sheet, layout, []
    plain = [s for s in book.sheets if not is_note_sheet(str(s.name or "")) and sheet_role(str(s.name or "")) is None]
    named = [s for s in book.sheets if s not in plain and not is_note_sheet(str(s.name or ""))]
    for group in (plain, named):
        fits = [(s, lay) for s in group if (lay := detect_layout(s, **detect)) is not None]
        if fits:
            fits.sort(key=lambda sl: (sl[0].hidden, -len(sl[0].rows)))
            sheet, layout = fits[0]
            return sheet, layout, [str(s.name) for s, _ in fits[1:] if not s.hidden]
    raise _no_header(name, book.sheets, options, event_columns)


def _no_header(name: str, sheets: list[RawSheet], options: ReadOptions, event_columns: tuple[str, ...]) -> InputError:
    findings = []
    wanted = []
    if options.attendee_column:
        wanted.append(f"'{options.attendee_column}'")
    wanted += [f"'{e}'" for e in event_columns]
    for s in sheets:
        headers = header_candidates(s)
        if options.layout == CLASH_LIST:
            expected = "columns such as 'Event', 'Other event' and 'Shared'"
        elif wanted:
            expected = "the columns " + " and ".join(wanted) + " in one of the top rows"
        else:
            expected = "a column naming attendees (e.g. 'Student') and one naming events (e.g. 'Exam')"
        where = Location(name, s.name)
        if not s.rows:
            findings.append(Finding("The sheet is empty.", where=where, expected=expected))
            continue
        if len(headers) == 1 and s.name is None:
            suggestion = ("Only one column was found: check that the file separates columns with commas, "
                          "semicolons, tabs or |.")
        else:
            suggestion = (f"Name the columns with {setting('attendee_column')} and {setting('event_column')}"
                          + (f", and the sheet with {setting('sheet')}." if len(sheets) > 1 else "."))
        findings.append(Finding(
            "No enrolment header row was found" + (f" among the top {min(len(s.rows), 30)} rows." if s.rows else "."),
            where=where, found=", ".join(headers[:12]) or "no headers", expected=expected, suggestion=suggestion))
    return InputError(findings)


__all__ = ["Reading", "ReadOptions", "read_problem", "choose_sheet", "LAYOUT_CHOICES", "column_letter"]
