"""The words of the input workbook: sheet names, column headers and the values they accept.

This module is the one place where the input format is written down. The reader, the
validator and ``timetabler template`` all take their names from here, and the README quotes
the table below.

Input workbook
--------------
Only the enrolments are required; every other sheet is optional. Headers are matched
without regard to case, spacing or punctuation (``Student ID``, ``student_id`` and
``STUDENT-ID`` are the same header) and a unit in brackets is ignored
(``Duration (minutes)`` matches ``Duration``). The first header listed is the one
``timetabler template`` writes; the others are also understood.

============  ==================  ===============================================================
Sheet         Column              Meaning
============  ==================  ===============================================================
Enrolments    Attendee            who attends (also: Student, Candidate, Member, Person, ...)
              Event               the exam or meeting they attend (also: Exam, Module, Course,
                                  Paper, Meeting, Committee, ...)
              Title               optional: the event's title (also: Exam title, Module name
                                  beside a Module code column, ...); the Events sheet's
                                  title, where it gives one, is kept
              Attendance          optional: ``required`` (the default; blank too) or
                                  ``optional`` (welcome, not needed: makes no clash, a
                                  soft goal); also ``req``/``opt``, ``compulsory``,
                                  ``if possible``, ``invited``
Events        Event               the event's code, as in Enrolments (sheet also named Exams,
                                  Meetings, Papers, Modules)
              Title               a longer name, for the timetable
              Duration            length in minutes; must fit in some slot
              Room type           the kind of room it needs (must match a Rooms type)
              Fixed slot          the slot it must take (slot name, or number 1..K)
              Barred slots        slots it must not take, separated by ``;`` or ``,``
              Group               a label shared by related events (reports only)
              Preferred slots     slots it should take if possible (a soft goal)
              Preferred rooms     rooms it should be seated in if possible, separated by
                                  ``;`` or ``,`` (a soft goal; names from the Rooms sheet)
              Quorum              at least this many of its attendees free in its slot
                                  (hard; a whole number, at most its attendees)
Slots         Slot                the slot's name, e.g. ``Mon 11 Jan AM`` (sheet also: Sessions)
              Date                a date (a date cell, ``2027-01-11`` or ``11/01/2027``, day first)
              Start               a time of day (a time cell or ``09:00``)
              Length              minutes
              Seats               seats available in the slot over all rooms
              Day                 day number, when there are no dates (optional); slots are
                                  used in time order (date or day, then start), whatever the
                                  order of the rows
              Avoid               ``yes`` to use the slot only when needed (a soft goal)
Rooms         Room                the room's name
              Capacity            seats
              Room type           e.g. Hall, Lab
              Unavailable slots   slots the room cannot be used, separated by ``;`` or ``,``
              Avoid               ``yes`` to use the room only when the others do not suffice
                                  (a soft goal)
              Shared              ``no`` for a room that holds one event at a time; blank or
                                  ``yes``: several events may sit in it at once, of any
                                  lengths, as long as their attendees fit in its seats
Rules         Rule                one of: ``before``, ``same slot``, ``different days``, ``alone``
              First event         the event the rule is about
              Other events        the other event(s), separated by ``;`` or ``,``
                                  (``A before B``: First event A, Other events B;
                                  ``alone`` takes no other events)
Weights       Goal                one of the soft goals below, or ``most events per day``
              Weight              a whole number (0 switches the goal off)
Attendees     Attendee            the attendee, as in Enrolments (sheet also named People,
                                  Availability, Candidates, Members, or ending in such a
                                  word: ``Exam candidates``)
              Unavailable slots   slots they cannot make: slot names, numbers, or dates
                                  (every slot of that day), separated by ``;`` or ``,``
              Extra time          a percentage (``25`` or ``25%``, 0 to 200) added to the
                                  length of each of their events, for them alone
              Own room            a room type: they sit alone in a room of that type
============  ==================  ===============================================================

Two other enrolment layouts are read from the first sheet that fits:

* **wide**: one row per attendee, with the events in several columns (``Exam 1``, ``Exam 2``,
  ...), or listed in one cell (header ``Exams`` or ``Events``; separated by ``;`` or ``,``),
  or one column per event headed by its code, with a tick (``x``, ``1``, ``yes``, ``✓``)
  where the attendee is enrolled;
* **clash list**: no attendees, one row per pair of events that share attendees, with
  columns ``Event``, ``Other event`` and ``Shared`` (how many attendees they share).

Soft goals (Weights sheet, column Goal): ``back-to-back``, ``overnight``, ``same day``,
``proximity``, ``large late``, ``preferred slot``, ``avoided slot``, ``room split``,
``moved``, ``preferred room``, ``avoided room``, ``optional attendee missed``.

A CSV or TSV file holds one sheet, the enrolments (with their Attendance column); the
other sheets, Attendees among them, need a workbook (.xlsx, .ods).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from ..model import GOAL_NAMES

# --- sheets ------------------------------------------------------------------------------

ENROLMENTS = "Enrolments"
EVENTS = "Events"
SLOTS = "Slots"
ROOMS = "Rooms"
RULES = "Rules"
WEIGHTS = "Weights"
ATTENDEES = "Attendees"
INSTRUCTIONS = "Instructions"

#: Other names a registrar may give the optional sheets (normalised form, see :func:`key`).
SHEET_NAMES: dict[str, tuple[str, ...]] = {
    EVENTS: ("events", "exams", "examinations", "meetings", "papers", "modules", "courses", "event list",
             "committees", "committee list", "committees list"),
    SLOTS: ("slots", "sessions", "periods", "timeslots"),
    ROOMS: ("rooms", "venues", "halls"),
    RULES: ("rules", "constraints", "conditions"),
    WEIGHTS: ("weights", "goals", "soft goals", "priorities"),
    ATTENDEES: ("attendees", "attendee list", "attendee details", "people", "persons", "availability",
                "unavailability", "arrangements", "special arrangements", "access arrangements",
                "candidates", "members", "students", "participants"),
}

#: Names that say a sheet is the Attendees sheet and nothing else: one of them without the
#: sheet's columns is an error; other attendee-like names (Students, Members) may name a roster
#: the registrar keeps for other reasons, which is then left unread with a warning.
ATTENDEES_SHEET_NAMES = ("attendees", "attendee list", "attendee details", "people", "persons", "availability",
                         "unavailability", "arrangements", "special arrangements", "access arrangements")

#: Words of a sheet name that make it the Attendees sheet when they end the name (``Exam candidates``,
#: ``Committee members``), before the words of the other sheets are tried (``Room availability`` stays Rooms:
#: availability alone is not among them).
_ATTENDEES_WORDS = ("attendee", "attendees", "people", "person", "persons", "candidate", "candidates", "member",
                    "members", "student", "students", "participant", "participants")

#: Sheets that never hold data (cover pages, notes, instructions).
NOTE_SHEETS = ("instructions", "notes", "readme", "read me", "cover", "about", "help", "contents")


def key(text: object) -> str:
    """A header or name reduced for matching: case folded, units in brackets and punctuation removed.

    >>> key("  Duration (minutes) ")
    'duration'
    >>> key("Student_ID")
    'student id'
    """
    text = re.sub(r"\([^)]*\)|\[[^\]]*\]", " ", str(text))
    text = re.sub(r"[^0-9a-z]+", " ", text.casefold())
    return " ".join(text.split())


def sheet_role(name: str) -> str | None:
    """Which optional sheet a sheet name denotes (``Events``, ``Slots``, ...), or None.

    The whole name is tried first (``Exams``), then each of its words, singular or plural
    (``Exam details`` -> Events, ``Room list`` -> Rooms).

    >>> sheet_role("Exams"), sheet_role("Exam details"), sheet_role("Entries")
    ('Events', 'Events', None)
    >>> sheet_role("Exam candidates"), sheet_role("Student exams"), sheet_role("Room availability")
    ('Attendees', 'Events', 'Rooms')
    """
    k = key(name)
    for role, names in SHEET_NAMES.items():
        if k in names:
            return role
    words = k.split()
    if words and words[-1] in _ATTENDEES_WORDS:
        return ATTENDEES
    for role, names in SHEET_NAMES.items():  # Attendees last: "Student exams" holds exams
        if any(w in names or w + "s" in names for w in words):
            return role
    return None


def is_note_sheet(name: str) -> bool:
    return key(name) in NOTE_SHEETS


# --- columns ----------------------------------------------------------------------------


@dataclass(frozen=True)
class Column:
    """One column of an input sheet: the header written by the template and the headers understood."""

    name: str
    also: tuple[str, ...] = ()
    help: str = ""

    def matches(self, header: object) -> bool:
        k = key(header)
        return bool(k) and (k == key(self.name) or k in self.also)


ATTENDEE_WORDS = (
    "attendee", "student", "candidate", "member", "person", "participant", "learner", "pupil",
    "delegate", "staff",
)
EVENT_WORDS = (
    "event", "exam", "examination", "module", "course", "paper", "meeting", "committee",
    "subject", "unit", "class", "assessment",
)
ID_WORDS = ("", " id", " ids", " number", " no", " code", " name", " ref", " reference")

ATTENDEE = Column(
    "Attendee",
    tuple(w + s for w in ATTENDEE_WORDS for s in ID_WORDS) + ("id", "name", "who"),
    "who attends: a student number, a member's name",
)
EVENT = Column(
    "Event",
    tuple(w + s for w in EVENT_WORDS for s in ID_WORDS) + ("code", "what"),
    "the code of the exam or meeting",
)
#: One cell listing several events (wide layout).
EVENT_LIST = Column(
    "Events",
    tuple(w + s for w in EVENT_WORDS for s in ("s", "s taken", "s list", " list", "s sat", "s attended"))
    + ("examinations", "classes", "committees", "enrolments", "entries"),
)
#: An optional title column beside the event column of a long enrolment sheet ("Module code", "Module name").
ENROLMENT_TITLE = Column(
    "Title",
    ("title", "event title", "long name", "description", "full title")
    + tuple(w + s for w in EVENT_WORDS for s in (" title", " name", " description", " long name")),
)
#: Clash-list layout.
OTHER_EVENT = Column(
    "Other event",
    tuple(p + w + s for p in ("other ", "second ", "event 2 ", "clashing ") for w in EVENT_WORDS for s in ("", " code"))
    + ("other", "clashes with", "with", "event b", "exam b", "second"),
)
FIRST_EVENT_CLASH = Column(
    "Event",
    EVENT.also + tuple("first " + w for w in EVENT_WORDS) + ("event a", "exam a", "first"),
)
SHARED = Column(
    "Shared",
    (
        "shared", "shared attendees", "shared students", "attendees shared", "students shared", "common",
        "in common", "students in common", "attendees in common", "overlap", "clash", "clashes",
        "clash count", "number shared", "count", "students", "attendees", "weight", "conflicts",
    ),
)

_NUMBERED_EVENT = re.compile(r"^(%s)s? ?(\d{1,3})$" % "|".join(EVENT_WORDS))


def numbered_event_column(header: object) -> int | None:
    """The number of a wide-layout column such as ``Exam 3`` or ``module_12``; None otherwise."""
    m = _NUMBERED_EVENT.match(key(header))
    return int(m.group(2)) if m else None


EVENTS_COLUMNS = (
    Column("Event", EVENT.also, "the event's code, exactly as in the Enrolments sheet"),
    Column("Title", ("name", "description", "long name", "event title", "exam title", "module title"), "a longer name"),
    Column("Duration", ("length", "minutes", "duration minutes", "duration mins"), "minutes, e.g. 120"),
    Column("Room type", ("room kind", "type of room", "room needed", "needs room"), "the kind of room it needs"),
    Column("Fixed slot", ("fixed", "must be in", "slot", "fixed session", "set slot"), "the slot it must take"),
    Column("Barred slots", ("barred", "not in", "unavailable", "unavailable slots", "excluded slots", "not in slots", "barred slot"), "slots it must not take"),
    Column("Group", ("faculty", "department", "school", "category"), "a label for reports"),
    Column("Preferred slots", ("preferred", "preferred slot", "prefer", "wished slots"), "slots it should take if possible"),
    Column("Preferred rooms", ("preferred room", "prefer room", "prefer rooms", "wished rooms", "wished room"),
           "rooms it should be seated in if possible"),
    Column("Quorum", ("quorum", "minimum attendance", "min attendance", "minimum attendees", "min attendees",
                      "at least"),
           "at least this many of its attendees must be free in its slot (a whole number, 1 or more)"),
)

SLOTS_COLUMNS = (
    Column("Slot", ("label", "name", "session", "period", "slot name", "slot label", "session name"), "the slot's name"),
    Column("Date", ("day date", "on"), "a date"),
    Column("Start", ("start time", "starts", "from", "time", "begins"), "a time of day, e.g. 09:00"),
    Column("Length", ("duration", "minutes", "length minutes"), "minutes"),
    Column("Seats", ("seat capacity", "capacity", "seats available", "places"), "seats in all rooms together"),
    Column("Day", ("day number", "day no"), "day number when there are no dates"),
    Column("Avoid", ("avoid if possible", "penalised", "discouraged", "use only if needed"), "yes to use only when needed"),
)

ROOMS_COLUMNS = (
    Column("Room", ("name", "room name", "venue", "hall"), "the room's name"),
    Column("Capacity", ("seats", "size", "places"), "seats"),
    Column("Room type", ("type", "kind", "room kind"), "e.g. Hall, Lab"),
    Column("Unavailable slots", ("unavailable", "not available", "closed", "barred slots", "closed slots"), "slots it cannot be used"),
    Column("Avoid", ("avoid if possible", "penalised", "discouraged", "use only if needed"),
           "yes to use the room only when the others do not suffice"),
    Column("Shared", ("share", "sharing", "can share", "shared use", "several events"),
           "yes (or blank) lets several events sit in the room at once; no: one event at a time"),
)

RULES_COLUMNS = (
    Column("Rule", ("kind", "type", "relation", "constraint", "rule type"), "before, same slot, different days, alone"),
    Column(
        "First event",
        tuple("first " + w for w in EVENT_WORDS) + EVENT.also + ("first", "event a", "a"),
        "the event the rule is about",
    ),
    Column(
        "Other events",
        tuple(p + w + s for p in ("other ", "second ") for w in EVENT_WORDS for s in ("", "s"))
        + ("other", "others", "second", "then", "event b", "b", "with"),
        "the other event(s)",
    ),
)

WEIGHTS_COLUMNS = (
    Column("Goal", ("soft goal", "name", "penalty", "item", "setting"), "a soft goal"),
    Column("Weight", ("value", "points", "penalty weight", "cost"), "a whole number; 0 switches it off"),
)

#: The Attendees sheet: one row per attendee with something the timetable must know of them.
ATTENDEES_COLUMNS = (
    Column("Attendee", ATTENDEE.also, "the attendee, exactly as in the Enrolments sheet"),
    Column("Unavailable slots", ("unavailable", "not available", "unavailability", "cannot make", "cannot attend",
                                 "unavailable dates", "unavailable days", "away", "absent", "away on"),
           "slots (names or numbers) or dates (every slot of that day) they cannot make, separated by ;"),
    Column("Extra time", ("extra time percent", "extra time percentage", "extra", "additional time",
                          "time allowance", "extra time allowance"),
           "a percentage of each event's length, e.g. 25 (or 25%)"),
    Column("Own room", ("own room type", "separate room", "room of their own", "room alone", "sits apart",
                        "separate room type"),
           "a room type (as in the Rooms sheet): they sit alone in a room of that type"),
)

#: Extra time above this percentage is taken for a typing slip (common practice grants 25 %, some
#: arrangements 50 % or 100 %: double time; no source sets a ceiling, 200 % is our own sane limit).
MAX_EXTRA_TIME_PERCENT = 200

#: The enrolments' optional Attendance column and the words it accepts (normalised, see :func:`key`).
ATTENDANCE = Column(
    "Attendance",
    ("attendance", "attendance type", "attending as", "required or optional", "presence"),
    "required (the default, also blank) or optional: an optional attendee is welcome but not needed",
)
ATTENDANCE_WORDS: dict[str, str] = {
    "required": "required", "req": "required", "r": "required", "compulsory": "required",
    "mandatory": "required", "must": "required", "must attend": "required", "essential": "required",
    "optional": "optional", "opt": "optional", "o": "optional", "if possible": "optional",
    "invited": "optional", "welcome": "optional", "may attend": "optional",
}

#: Rule kinds as written in the Rules sheet (normalised), mapped to RuleKind values.
RULE_WORDS: dict[str, str] = {
    "before": "before",
    "precedes": "before",
    "earlier than": "before",
    "same slot": "same slot",
    "same time": "same slot",
    "together": "same slot",
    "same session": "same slot",
    "different days": "different days",
    "different day": "different days",
    "not same day": "different days",
    "apart": "different days",
    "alone": "alone",
    "alone in slot": "alone",
    "alone in its slot": "alone",
    "on its own": "alone",
}

#: Goals of the Weights sheet (normalised) mapped to :class:`~timetabler.model.Weights` fields.
GOAL_WORDS: dict[str, str] = {
    "back to back": "back_to_back",
    "overnight": "overnight",
    "same day": "same_day",
    "two in a day": "same_day",
    "proximity": "proximity",
    "carter proximity": "proximity",
    "large late": "large_late",
    "large events late": "large_late",
    "preferred slot": "preferred_slot",
    "preferred slots": "preferred_slot",
    "avoided slot": "penalised_slot",
    "avoided slots": "penalised_slot",
    "penalised slot": "penalised_slot",
    "room split": "room_split",
    "moved": "moved",
    "moved event": "moved",
    "preferred room": "preferred_room",
    "preferred rooms": "preferred_room",
    "avoided room": "penalised_room",
    "avoided rooms": "penalised_room",
    "penalised room": "penalised_room",
    "optional attendee missed": "optional_missed",
    "optional attendees missed": "optional_missed",
    "optional missed": "optional_missed",
}
#: The Weights sheet row that sets a hard limit rather than a weight.
MOST_PER_DAY = ("most events per day", "max per day", "maximum per day", "most per day")

#: Written form of each goal, in the order the template lists them (one name per goal: model.GOAL_NAMES).
GOAL_LABELS: dict[str, str] = dict(GOAL_NAMES)

GOAL_HELP: dict[str, str] = {
    "back_to_back": "an attendee has two events in consecutive slots of one day",
    "overnight": "an attendee has the last slot of a day and the first of the next",
    "same_day": "an attendee has two events on one day",
    "proximity": "Carter proximity cost: events of one attendee close together in time",
    "large_late": "a large event placed late in the timetable",
    "preferred_slot": "an event not in one of its preferred slots",
    "penalised_slot": "an event placed in a slot marked Avoid (an avoided slot)",
    "room_split": "an event spread over more than one room",
    "moved": "an event moved from the previous timetable (repair mode)",
    "preferred_room": "an event with preferred rooms seated in none of them",
    "penalised_room": "each room marked Avoid (an avoided room) that an event is seated in",
    "optional_missed": "an optional attendee who cannot come: unavailable then, or booked elsewhere at the same time",
}

YES_WORDS = ("yes", "y", "true", "1", "x", "avoid")
NO_WORDS = ("no", "n", "false", "0", "")

#: Words that mark a total or summary row typed under the data.
TOTAL_WORDS = ("total", "totals", "grand total", "sum", "subtotal", "count", "overall")
