"""Cell values as the registrar meant them: identifiers, numbers, dates, times, lists.

Spreadsheets store the same identifier in several ways: the student number ``40001`` may
be a number cell (read as ``40001`` or ``40001.0``) in one row and a text cell ``"40001"``
in the next. :func:`identifier` turns all of them into the same text, keeps leading zeros
where the cell is text (``"00123"`` stays ``00123``), trims the ends and collapses runs of
whitespace inside, and shows control characters as escapes (``\\x1b``; see
:func:`timetabler.errors.visible`), so that no value from a file can drive a terminal.
Blank cells (``None``, empty text, NaN) are ``""``.
"""

from __future__ import annotations

import datetime as _dt
import math
import re

import pandas as pd

from ..errors import visible
from .vocabulary import ATTENDANCE_WORDS, NO_WORDS, TOTAL_WORDS, YES_WORDS, key

_FLOAT_INTEGER = re.compile(r"^[+-]?\d+\.0+$")
_SCIENTIFIC = re.compile(r"^\d(\.\d+)?E\+\d+$", re.IGNORECASE)
LIST_SEPARATORS = re.compile(r"\s*[;,\n]\s*")


def is_blank(value: object) -> bool:
    if value is None:
        return True
    if type(value) is str:
        return not value.strip()
    if isinstance(value, float) and math.isnan(value):
        return True
    if isinstance(value, str) and not value.strip():
        return True
    return value is pd.NaT or value is pd.NA


def identifier(value: object) -> str:
    """A cell as an identifier (event code, attendee id, slot or room name).

    >>> identifier(40001.0), identifier("40001"), identifier(" 40001 "), identifier("40001.0")
    ('40001', '40001', '40001', '40001')
    >>> identifier("00123"), identifier("  MA   101 "), identifier("MA101\x1b[2J")
    ('00123', 'MA 101', 'MA101\\\\x1b[2J')
    """
    if type(value) is str:
        text = value.strip()
        if "  " in text or "\u00a0" in text or "\t" in text or "\n" in text or "\r" in text:
            text = " ".join(text.replace("\u00a0", " ").split())
        if text.endswith("0") and "." in text and _FLOAT_INTEGER.match(text):  # "40001.0": a number exported as text
            text = text.split(".")[0]
        return text if text.isprintable() else visible(text)
    if is_blank(value):
        return ""
    if isinstance(value, bool):
        return "TRUE" if value else "FALSE"
    if isinstance(value, float):
        if value.is_integer():
            return str(int(value))
        return repr(value)
    if isinstance(value, int):
        return str(value)
    if isinstance(value, _dt.datetime):
        if value.time() == _dt.time(0):
            return value.date().isoformat()
        return value.isoformat(sep=" ")
    if isinstance(value, (_dt.date, _dt.time)):
        return value.isoformat()
    text = " ".join(str(value).replace("\u00a0", " ").split())
    if _FLOAT_INTEGER.match(text):  # a number cell exported as text: "40001.0"
        text = text.split(".")[0]
    return visible(text)


def looks_scientific(text: str) -> bool:
    """True for ``1.23457E+11``: a long number that a spreadsheet exported in scientific notation, losing digits."""
    return bool(_SCIENTIFIC.match(text))


def split_list(value: object) -> list[str]:
    """A cell listing several items (``"MA101; PH102, CH103"``) as identifiers; blanks dropped."""
    if is_blank(value):
        return []
    if not isinstance(value, str):
        return [identifier(value)]
    return [t for t in (identifier(p) for p in LIST_SEPARATORS.split(value)) if t]


def whole_number(value: object) -> int | None:
    """A cell as a whole number, or None when it is not one (``"120"``, ``120.0``, ``"120 min"``)."""
    if is_blank(value) or isinstance(value, bool):
        return None
    if isinstance(value, int):
        return value
    if isinstance(value, float):
        return int(value) if value.is_integer() else None
    text = str(value).strip().casefold()
    text = re.sub(r"\s*(minutes|minute|mins|min|m|seats|places)\.?$", "", text)
    text = text.replace(",", "") if re.fullmatch(r"\d{1,3}(,\d{3})+", text) else text
    try:
        number = float(text)
    except ValueError:
        return None
    return int(number) if number.is_integer() else None


def duration_minutes(value: object) -> int | None:
    """Minutes from ``120``, ``"120"``, ``"2h"``, ``"2:00"``, ``"1h30"`` or a time cell 02:00."""
    if isinstance(value, _dt.time):
        return value.hour * 60 + value.minute
    if isinstance(value, _dt.timedelta):
        return int(value.total_seconds() // 60)
    number = whole_number(value)
    if number is not None:
        return number
    if isinstance(value, str):
        text = value.strip().casefold().replace(" ", "")
        m = re.fullmatch(r"(\d+)(?:h|hours?|hrs?)(?:(\d+)(?:m|min|mins|minutes)?)?", text)
        if m:
            return int(m.group(1)) * 60 + int(m.group(2) or 0)
        m = re.fullmatch(r"(\d+):(\d{2})", text)
        if m:
            return int(m.group(1)) * 60 + int(m.group(2))
    return None


_DATE_FORMATS = (
    "%Y-%m-%d",
    "%d/%m/%Y",
    "%d/%m/%y",
    "%d.%m.%Y",
    "%d-%m-%Y",
    "%d %B %Y",
    "%d %b %Y",
    "%a %d %B %Y",
    "%a %d %b %Y",
    "%A %d %B %Y",
    "%Y/%m/%d",
)


def date_value(value: object) -> _dt.date | None:
    """A date cell, or text in ISO form or day-first form (``11/01/2027`` is 11 January)."""
    if isinstance(value, _dt.datetime):
        return value.date()
    if isinstance(value, _dt.date):
        return value
    if hasattr(value, "to_pydatetime"):  # pandas Timestamp
        return value.to_pydatetime().date()  # type: ignore[union-attr]
    if not isinstance(value, str):
        return None
    text = " ".join(value.replace(",", " ").split())
    text = re.sub(r"(\d)(st|nd|rd|th)\b", r"\1", text)
    if re.fullmatch(r"\d{4}-\d{2}-\d{2}[ T]00:00(:00)?", text):
        text = text[:10]
    for fmt in _DATE_FORMATS:
        try:
            return _dt.datetime.strptime(text, fmt).date()
        except ValueError:
            continue
    return None


def time_value(value: object) -> _dt.time | None:
    """A time cell, or text such as ``09:00``, ``9.30``, ``9:00:00``, ``2pm``, ``14h00``."""
    if isinstance(value, _dt.datetime):
        return value.time()
    if isinstance(value, _dt.time):
        return value
    if isinstance(value, _dt.timedelta):
        minutes = int(value.total_seconds() // 60)
        return _dt.time(minutes // 60 % 24, minutes % 60)
    if isinstance(value, float) and 0 <= value < 1:  # a time typed as a fraction of a day
        minutes = round(value * 24 * 60)
        return _dt.time(minutes // 60 % 24, minutes % 60)
    if not isinstance(value, str):
        return None
    text = value.strip().casefold().replace(" ", "")
    if text in ("noon", "midday"):
        return _dt.time(12, 0)
    m = re.fullmatch(r"(\d{1,2})(?:[:.h](\d{2}))?(?::(\d{2}))?(am|pm)?", text)
    if not m or (m.group(2) is None and m.group(4) is None):
        return None
    hour, minute = int(m.group(1)), int(m.group(2) or 0)
    if m.group(4) == "pm" and hour < 12:
        hour += 12
    if m.group(4) == "am" and hour == 12:
        hour = 0
    if hour > 23 or minute > 59:
        return None
    return _dt.time(hour, minute)


def yes_no(value: object) -> bool | None:
    """``yes``/``no`` (and y/n, true/false, 1/0, x/blank) as a bool; None when it is neither."""
    if isinstance(value, bool):
        return value
    k = key(identifier(value))
    if k in YES_WORDS:
        return True
    if k in NO_WORDS:
        return False
    return None


_TOTAL_STARTS = tuple(sorted({w.split()[0] for w in TOTAL_WORDS}))


def looks_like_total(value: object) -> bool:
    """True for a cell such as ``Total``, ``Grand total:`` or ``TOTALS`` typed under the data."""
    if type(value) is not str or len(value) > 20 or not value.lstrip()[:1].isalpha():
        return False
    if not value.strip().casefold().startswith(_TOTAL_STARTS):
        return False
    return key(value) in TOTAL_WORDS


def fold(code: str, case_sensitive: bool) -> str:
    """The key under which two spellings of a code are the same code."""
    return code if case_sensitive else code.casefold()


def attendance_value(value: object) -> str | None:
    """An Attendance cell as ``required`` or ``optional`` (blank: required); None for any other word.

    >>> attendance_value(" Optional "), attendance_value(None), attendance_value("REQ"), attendance_value("maybe")
    ('optional', 'required', 'required', None)
    """
    if is_blank(value):
        return "required"
    return ATTENDANCE_WORDS.get(key(identifier(value)))


def optional_mark(value: object) -> bool:
    """True for a tick-grid cell that enrols the attendee as optional (``optional``, ``opt``, ``invited``...):
    the words of :data:`ATTENDANCE_WORDS` meaning optional, longer than one letter (``o`` may be a tick)."""
    if not isinstance(value, str):
        return False
    k = key(value)
    return len(k) > 1 and ATTENDANCE_WORDS.get(k) == "optional"
