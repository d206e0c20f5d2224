"""Cell values, encodings and delimiters, one function at a time."""

from __future__ import annotations

import codecs
import datetime as dt

import pytest

from intake_builders import text_of
from timetabler.intake.file_types import decode, sniff_delimiter
from timetabler.intake.header_detection import column_letter
from timetabler.intake.normalising import (
    date_value,
    duration_minutes,
    identifier,
    split_list,
    time_value,
    whole_number,
    yes_no,
)
from timetabler.intake.vocabulary import ATTENDEE, EVENT, key, numbered_event_column


@pytest.mark.parametrize("cell", [40001, 40001.0, "40001", " 40001 ", "40001.0", "40001.00"])
def test_one_identifier_however_typed(cell):
    assert identifier(cell) == "40001"


@pytest.mark.parametrize("cell,text", [("00123", "00123"), ("MA  101", "MA 101"), ("\u00a0PH110\t", "PH110"),
                                       (None, ""), (float("nan"), ""), (12.5, "12.5"), ("1.50", "1.50")])
def test_identifier_keeps_what_matters(cell, text):
    assert identifier(cell) == text


def test_split_list_accepts_the_usual_separators():
    assert split_list("MAT101; PHY110,CHM120\nBIO130;;") == ["MAT101", "PHY110", "CHM120", "BIO130"]
    assert split_list(40001.0) == ["40001"]


@pytest.mark.parametrize("cell,value", [("2027-01-11", dt.date(2027, 1, 11)), ("11/01/2027", dt.date(2027, 1, 11)),
                                        ("11.01.2027", dt.date(2027, 1, 11)), ("Mon 11 January 2027", dt.date(2027, 1, 11)),
                                        ("11th Jan 2027", dt.date(2027, 1, 11)), (dt.datetime(2027, 1, 11), dt.date(2027, 1, 11)),
                                        ("31/02/2027", None), ("next week", None), (45000, None)])
def test_dates(cell, value):
    assert date_value(cell) == value


@pytest.mark.parametrize("cell,value", [("09:30", dt.time(9, 30)), ("9.30", dt.time(9, 30)), ("2pm", dt.time(14)),
                                        ("12am", dt.time(0)), ("14h00", dt.time(14)), ("09:00:00", dt.time(9)),
                                        (0.5, dt.time(12)), ("25:00", None), ("9", None), ("soon", None)])
def test_times(cell, value):
    assert time_value(cell) == value


@pytest.mark.parametrize("cell,value", [(120, 120), ("120", 120), ("120 min", 120), ("2h", 120), ("1h30", 90),
                                        ("1:30", 90), (dt.time(2, 0), 120), ("long", None), (90.5, None)])
def test_durations(cell, value):
    assert duration_minutes(cell) == value


def test_whole_numbers_and_yes_no():
    assert whole_number("1,200") == 1200 and whole_number("12.0") == 12 and whole_number("twelve") is None
    assert [yes_no(v) for v in ("Yes", "n", None, "x", "maybe")] == [True, False, False, True, None]


def test_header_matching_ignores_case_spacing_punctuation_and_units():
    assert key("  Duration (minutes) ") == "duration"
    assert ATTENDEE.matches("STUDENT_ID") and ATTENDEE.matches("Candidate No.") and not ATTENDEE.matches("Exam")
    assert EVENT.matches("module-code") and not EVENT.matches("Student")
    assert numbered_event_column("Exam 12") == 12 and numbered_event_column("exams_3") == 3
    assert numbered_event_column("Exam") is None


def test_column_letters():
    assert [column_letter(i) for i in (0, 25, 26, 701, 702)] == ["A", "Z", "AA", "ZZ", "AAA"]


SAMPLE = [["Student", "Exam", "Note"], ["HV-S0001", "MAT101", "Zoë, late entry"], ["HV-S0002", "PHY110", ""]]


@pytest.mark.parametrize("encoding,bom,label", [
    ("utf-8", b"", "UTF-8"),
    ("utf-8", codecs.BOM_UTF8, "UTF-8 with byte-order mark"),
    ("utf-16-le", codecs.BOM_UTF16_LE, "UTF-16 (little-endian) with byte-order mark"),
    ("utf-16-be", codecs.BOM_UTF16_BE, "UTF-16 (big-endian) with byte-order mark"),
    ("utf-16-le", b"", "UTF-16 (little-endian)"),
    ("utf-16-be", b"", "UTF-16 (big-endian)"),
    ("cp1252", b"", "Windows-1252"),
])
def test_encodings_are_recognised(encoding, bom, label):
    original = text_of(SAMPLE)
    text, found = decode("a.csv", bom + original.encode(encoding))
    assert (text, found) == (original, label)


@pytest.mark.parametrize("delimiter", [",", ";", "\t", "|"])
@pytest.mark.parametrize("titles", [0, 2])
def test_delimiter_sniffing(delimiter, titles):
    text = "Harrowgate Vale College exam entries\r\n" * titles + text_of(SAMPLE, delimiter)
    assert sniff_delimiter(text) == delimiter
