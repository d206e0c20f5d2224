"""The blank input workbook that ``timetabler template`` writes.

Every sheet of :mod:`timetabler.intake.vocabulary` with its headers, a note on each
header explaining it, a help text on the cells of checked columns (shown when a cell is selected), drop-down lists and number checks on the columns
that take fixed words or numbers, and an *Instructions* sheet first. Identifier columns are
formatted as text so spreadsheet programs keep leading zeros. Intake reads the blank
workbook back without error (it warns that there are no enrolments yet).

With ``example=True`` the sheets hold a small invented example from Harrowgate Vale
College, a fictional institution, to show how rows are filled in.
"""

from __future__ import annotations

import datetime as dt
import os
import tempfile
from pathlib import Path

from ..errors import Finding, InputError, setting
from ..model import Location, Weights
from .vocabulary import (
    ATTENDANCE,
    ATTENDEES,
    ATTENDEES_COLUMNS,
    ENROLMENTS,
    EVENTS,
    EVENTS_COLUMNS,
    GOAL_HELP,
    GOAL_LABELS,
    INSTRUCTIONS,
    MAX_EXTRA_TIME_PERCENT,
    MOST_PER_DAY,
    ROOMS,
    ROOMS_COLUMNS,
    RULES,
    RULES_COLUMNS,
    SLOTS,
    SLOTS_COLUMNS,
    WEIGHTS,
    WEIGHTS_COLUMNS,
    Column,
)

MAX_ROWS = 5000  # rows covered by drop-downs and checks
RULE_CHOICES = ("before", "same slot", "different days", "alone")

ENROLMENT_COLUMNS = (
    Column("Attendee", help="who attends: a student number or a member's name; one row per attendee and event"),
    Column("Event", help="the code of the exam or meeting, the same code as in the Events sheet"),
    ATTENDANCE,
)

SHEETS: dict[str, tuple[Column, ...]] = {
    ENROLMENTS: ENROLMENT_COLUMNS,
    EVENTS: EVENTS_COLUMNS,
    SLOTS: SLOTS_COLUMNS,
    ROOMS: ROOMS_COLUMNS,
    RULES: RULES_COLUMNS,
    WEIGHTS: WEIGHTS_COLUMNS,
    ATTENDEES: ATTENDEES_COLUMNS,
}

PURPOSE = {
    ENROLMENTS: "Required. One row per attendee and event: who sits which exam, who sits on which committee.",
    EVENTS: "Optional. One row per event, for details: title, duration, room type, a fixed slot, barred slots.",
    SLOTS: "Optional. One row per slot (session) in time order. Without it, timetabler uses numbered slots.",
    ROOMS: "Optional. One row per room, with its seats. Without it, rooms are not planned.",
    RULES: "Optional. One row per rule between events. Rules must hold in every timetable.",
    WEIGHTS: "Optional. How much each soft goal matters; the defaults are filled in. 0 switches a goal off.",
    ATTENDEES: ("Optional. One row per attendee the timetable must know more of: the slots or days they cannot "
                "make, extra time, a room of their own. Attendees without a row can make every slot."),
}

TEXT_COLUMNS = {
    ENROLMENTS: ("Attendee", "Event"),
    EVENTS: ("Event", "Fixed slot", "Barred slots", "Preferred slots", "Preferred rooms"),
    SLOTS: ("Slot",),
    ROOMS: ("Room", "Unavailable slots"),
    RULES: ("First event", "Other events"),
    ATTENDEES: ("Attendee", "Unavailable slots"),
}

EXAMPLE = {
    ENROLMENTS: [
        ("HV-S0001", "MAT101"), ("HV-S0001", "PHY110"), ("HV-S0002", "MAT101"), ("HV-S0002", "CHM120"),
        ("HV-S0003", "PHY110"), ("HV-S0003", "CHM120"), ("HV-S0004", "HIS130"), ("HV-S0004", "MAT101"),
    ],
    EVENTS: [
        ("MAT101", "Mathematics I", 120, "Hall", None, None, "Science", None, "Orchard Hall"),
        ("PHY110", "Physics: mechanics", 90, "Hall", None, "Mon 3 May PM", "Science", None),
        ("CHM120", "Chemistry practical", 180, "Lab", None, None, "Science", None),
        ("HIS130", "Early modern history", 120, "Hall", "Tue 4 May AM", None, "Humanities", None),
    ],
    SLOTS: [
        ("Mon 3 May AM", dt.date(2027, 5, 3), dt.time(9, 30), 180, 120, None, "no"),
        ("Mon 3 May PM", dt.date(2027, 5, 3), dt.time(14, 0), 180, 120, None, "no"),
        ("Tue 4 May AM", dt.date(2027, 5, 4), dt.time(9, 30), 180, 120, None, "no"),
        ("Tue 4 May PM", dt.date(2027, 5, 4), dt.time(14, 0), 180, 120, None, "yes"),
    ],
    ROOMS: [("Orchard Hall", 100, "Hall", None, "no", "yes"), ("Beacon Lab", 20, "Lab", "Tue 4 May PM", "no", "no"),
            ("Cloister Room", 40, "Hall", None, "yes", "yes"), ("Linden Room", 4, "Quiet", None, "no", "no")],
    RULES: [("before", "MAT101", "PHY110"), ("different days", "PHY110", "CHM120")],
    ATTENDEES: [("HV-S0002", None, 25, None), ("HV-S0003", "Tue 4 May PM", None, "Quiet")],
}


def write_template(path: str | Path, *, force: bool = False, example: bool = False) -> Path:
    """Write the input workbook to ``path`` (``.xlsx``); refuse to overwrite unless ``force``.

    The workbook is written to a temporary file in the same folder and renamed into place,
    so an existing file is never left half-written.
    """
    path = Path(path)
    name = str(path)
    if path.suffix.lower() != ".xlsx":
        raise InputError(Finding("The template is an Excel workbook; give a file name ending in .xlsx.",
                                 where=Location(name), found=path.suffix or "no extension", expected=".xlsx"))
    if path.exists() and not force:
        raise InputError(Finding("The file already exists; it was not overwritten.", where=Location(name),
                                 suggestion=f"Choose another name, or add {setting('force')}."))
    if path.is_dir():
        raise InputError(Finding("This is a folder, not a file name.", where=Location(name)))
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(Finding("The folder does not exist.", where=Location(name), found=str(folder)))
    book = build_template(example=example)
    try:
        handle, tmp = tempfile.mkstemp(prefix=".~timetabler-", suffix=".xlsx", dir=folder)
        os.close(handle)
        book.save(tmp)
        os.chmod(tmp, 0o666 & ~_umask())  # the usual mode of a new file (mkstemp makes it 0600)
        os.replace(tmp, path)
    except PermissionError:
        raise InputError(Finding("The file cannot be written: permission denied, or it is open in another program.",
                                 where=Location(name), suggestion="Close it, or choose another folder.")) from None
    finally:
        if "tmp" in locals() and os.path.exists(tmp):
            os.unlink(tmp)
    return path


def _umask() -> int:
    """The process's umask, read without changing it where the system allows (Linux), since
    setting it to read it would briefly affect files other threads create."""
    try:
        with open("/proc/self/status", encoding="ascii") as status:
            for line in status:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError):
        pass
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def build_template(example: bool = False):
    """The template as an openpyxl Workbook (not yet saved)."""
    from openpyxl import Workbook
    from openpyxl.comments import Comment
    from openpyxl.styles import Alignment, Font, PatternFill
    from openpyxl.utils import get_column_letter
    from openpyxl.worksheet.datavalidation import DataValidation

    book = Workbook()
    notes = book.active
    notes.title = INSTRUCTIONS
    bold = Font(bold=True)
    header_fill = PatternFill("solid", fgColor="DDE7F0")

    for sheet_name, columns in SHEETS.items():
        ws = book.create_sheet(sheet_name)
        for j, col in enumerate(columns, start=1):
            cell = ws.cell(row=1, column=j, value=col.name)
            cell.font = bold
            cell.fill = header_fill
            if col.help:
                note = Comment(f"{col.name}: {col.help}", "timetabler")
                note.width, note.height = 260, 80
                cell.comment = note
            ws.column_dimensions[get_column_letter(j)].width = max(14, len(col.name) + 4)
            if col.name in TEXT_COLUMNS.get(sheet_name, ()):
                ws.column_dimensions[get_column_letter(j)].number_format = "@"
        ws.freeze_panes = "A2"
        letters = {col.name: get_column_letter(j) for j, col in enumerate(columns, start=1)}

        def check(column: str, dv: DataValidation, sheet=ws, letters=letters, columns=columns) -> None:
            col = next(c for c in columns if c.name == column)
            dv.promptTitle = column[:32]
            dv.prompt = (col.help or column)[:255]
            dv.showInputMessage = True
            dv.showErrorMessage = True
            sheet.add_data_validation(dv)
            dv.add(f"{letters[column]}2:{letters[column]}{MAX_ROWS}")

        def whole(low: int, high: int, title: str) -> DataValidation:
            return DataValidation(type="whole", operator="between", formula1=str(low), formula2=str(high),
                                  errorTitle=title[:32], error=f"Type a whole number from {low} to {high}.")

        slot_list = f"={SLOTS}!$A$2:$A${MAX_ROWS}"
        if sheet_name == EVENTS:
            check("Duration", whole(1, 1440, "Duration in minutes"))
            dv = DataValidation(type="list", formula1=slot_list, errorStyle="warning",
                                error="Pick a slot from the Slots sheet, or type a slot number.")
            check("Fixed slot", dv)
            check("Room type", DataValidation(type="list", formula1=f"={ROOMS}!$C$2:$C$200", errorStyle="warning",
                                              error="Use a room type from the Rooms sheet."))
        elif sheet_name == SLOTS:
            check("Date", DataValidation(type="date", operator="greaterThan", formula1="1", error="Type a date."))
            check("Start", DataValidation(type="time", operator="between", formula1="0", formula2="0.999988",
                                          error="Type a time of day, e.g. 09:30."))
            check("Length", whole(1, 1440, "Length in minutes"))
            check("Seats", whole(0, 1_000_000, "Seats"))
            check("Day", whole(1, 366, "Day number"))
            check("Avoid", DataValidation(type="list", formula1='"yes,no"', allow_blank=True, error="Choose yes or no."))
        elif sheet_name == ROOMS:
            check("Capacity", whole(1, 100_000, "Seats in the room"))
            check("Avoid", DataValidation(type="list", formula1='"yes,no"', allow_blank=True, error="Choose yes or no."))
            check("Shared", DataValidation(type="list", formula1='"yes,no"', allow_blank=True, error="Choose yes or no."))
        elif sheet_name == ATTENDEES:
            check("Extra time", whole(0, MAX_EXTRA_TIME_PERCENT, "Extra time in percent"))
            check("Own room", DataValidation(type="list", formula1=f"={ROOMS}!$C$2:$C$200", errorStyle="warning",
                                             error="Use a room type from the Rooms sheet."))
        elif sheet_name == ENROLMENTS:
            check("Attendance", DataValidation(type="list", formula1='"required,optional"', allow_blank=True,
                                               error="Choose required or optional (blank means required)."))
        elif sheet_name == RULES:
            check("Rule", DataValidation(type="list", formula1='"' + ",".join(RULE_CHOICES) + '"',
                                         error="Choose a rule from the list."))
        elif sheet_name == WEIGHTS:
            goals = list(GOAL_LABELS.values()) + [MOST_PER_DAY[0]]
            check("Goal", DataValidation(type="list", formula1='"' + ",".join(goals) + '"',
                                         error="Choose a goal from the list."))
            check("Weight", whole(0, 1_000_000, "Weight"))
            defaults = Weights()
            for i, (attr, label) in enumerate(GOAL_LABELS.items(), start=2):
                ws.cell(row=i, column=1, value=label)
                ws.cell(row=i, column=2, value=getattr(defaults, attr))
                ws.cell(row=i, column=3, value=GOAL_HELP[attr]).font = Font(italic=True, color="666666")
            row = len(GOAL_LABELS) + 2
            ws.cell(row=row, column=1, value=MOST_PER_DAY[0])
            ws.cell(row=row, column=3, value="a hard limit per attendee and day; blank for none").font = Font(
                italic=True, color="666666")
            ws.column_dimensions["C"].width = 70
        if example and sheet_name in EXAMPLE:
            for i, values in enumerate(EXAMPLE[sheet_name], start=2):
                for j, value in enumerate(values, start=1):
                    cell = ws.cell(row=i, column=j, value=value)
                    if isinstance(value, dt.date):
                        cell.number_format = "yyyy-mm-dd"
                    elif isinstance(value, dt.time):
                        cell.number_format = "hh:mm"

    _write_instructions(notes, example)
    for ws in book.worksheets:
        for row in ws.iter_rows():
            for cell in row:
                if cell.alignment is None or not cell.alignment.wrap_text:
                    cell.alignment = Alignment(vertical="top", wrap_text=ws.title == INSTRUCTIONS)
    return book


def _write_instructions(ws, example: bool) -> None:
    from openpyxl.styles import Font

    lines: list[tuple[str, str | None]] = [
        ("How to fill in this workbook for timetabler", "title"),
        ("Fill in the Enrolments sheet; the other sheets are optional. Keep the header row (row 1) of "
         "each sheet. Headers are matched without regard to case or spacing. Leave a sheet empty when "
         "you do not need it.", None),
        ("Enrolment data is personal data: timetabler reads this workbook on this computer only and "
         "sends nothing anywhere.", None),
        ("", None),
    ]
    if example:
        lines.insert(1, ("This copy holds an invented example from Harrowgate Vale College, a fictional "
                         "college. Replace it with your own rows.", None))
    for sheet_name, columns in SHEETS.items():
        lines.append((sheet_name, "heading"))
        lines.append((PURPOSE[sheet_name], None))
        for col in columns:
            lines.append((f"{col.name}: {col.help}", "column"))
        lines.append(("", None))
    lines += [
        ("Other layouts", "heading"),
        ("Instead of the Enrolments sheet, timetabler also reads one row per attendee with the events "
         "in columns 'Event 1', 'Event 2', ..., listed in one 'Events' cell separated by ;, or "
         "as a grid with one column per event code and an x where the attendee is enrolled; "
         "and, when only clash counts are known, a sheet with columns 'Event', 'Other event' and "
         "'Shared' (how many attendees the two events share).", None),
        ("Slots are named in the Slots sheet ('Mon 3 May AM') or numbered 1, 2, 3 ... in time order "
         "(by date, then start time, whatever the order of the rows). "
         "Several slots in one cell are separated by ; (semicolon).", None),
        ("Check the workbook with:  timetabler inspect FILE.xlsx", None),
    ]
    ws.column_dimensions["A"].width = 110
    for i, (text, style) in enumerate(lines, start=1):
        cell = ws.cell(row=i, column=1, value=text or None)
        if style == "title":
            cell.font = Font(bold=True, size=14)
        elif style == "heading":
            cell.font = Font(bold=True, size=12)
        elif style == "column":
            cell.value = "    " + text
