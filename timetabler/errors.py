"""The one error type for bad input, and the findings it carries.

Every problem that intake (or a command-line argument check) finds in the registrar's
input is a :class:`Finding`: where it is (file, sheet, row, column), what was found, what
was expected, and a suggestion. Errors stop the run (:class:`InputError`, exit status 2);
warnings are kept and shown beside the result.
"""

from __future__ import annotations

import dataclasses
import re
from dataclasses import dataclass

from .model import Location

#: Control characters (C0, DEL, C1: terminal escape sequences start with them) and the
#: Unicode controls that reorder the text shown (bidirectional embeddings and isolates).
_CONTROLS = re.compile("[\x00-\x1f\x7f-\x9f\u202a-\u202e\u2066-\u2069]")


def visible(text: str) -> str:
    r"""Text from a user's file made safe to print: each control character shown as an escape.

    A cell holding an escape sequence would otherwise recolour, move or clear the terminal
    when printed, and a line break inside a value could fake a line of output.

    >>> visible("MAT101\x1b[2J"), visible("Zoë\tÅ"), visible("plain")
    ('MAT101\\x1b[2J', 'Zoë\\tÅ', 'plain')
    """
    if text.isprintable():
        return text
    return _CONTROLS.sub(_escape, text)


def _escape(match: re.Match) -> str:
    ch = match.group()
    return {"\t": "\\t", "\n": "\\n", "\r": "\\r"}.get(ch) or (
        f"\\x{ord(ch):02x}" if ord(ch) < 0x100 else f"\\u{ord(ch):04x}")


#: The settings a message may point the reader to, in neutral words. Intake and the other layers
#: below the interfaces write :func:`setting` in their text; each interface names the settings
#: its own way with :meth:`Finding.worded` (the command line by its options, the page by its
#: boxes), and a finding shown as it is uses these words.
SETTINGS = {
    "sheet": "the sheet setting",
    "attendee_column": "the attendee column setting",
    "event_column": "the event column setting",
    "wide_layout": "the wide layout (one row per attendee, events listed across)",
    "case_sensitive_codes": "case-sensitive event codes",
    "slots": "the number of slots",
    "days": "the number of days",
    "force": "the setting that replaces an existing file",
    "timetable_workbook": "a timetable workbook written by timetabler",
}
_SETTING = re.compile("\ue000([a-z_]+)\ue001")


def setting(name: str) -> str:
    """A place in a message's text where a setting is named (one of :data:`SETTINGS`)."""
    if name not in SETTINGS:
        raise KeyError(f"no setting called {name!r}")
    return f"\ue000{name}\ue001"


def _named(text: str | None, names: dict[str, str] | None) -> str | None:
    if text is None or "\ue000" not in text:
        return text
    return _SETTING.sub(lambda m: (names or {}).get(m.group(1)) or SETTINGS.get(m.group(1), m.group(1)), text)


@dataclass
class Finding:
    message: str
    where: Location | None = None
    found: str | None = None
    expected: str | None = None
    suggestion: str | None = None
    severity: str = "error"  # "error" or "warning"

    def worded(self, names: dict[str, str]) -> "Finding":
        """A copy naming the settings its text points to in an interface's words (``names[setting]``).

        >>> f = Finding("Two sheets.", suggestion=f"Name the sheet to read with {setting('sheet')}.")
        >>> f.worded({"sheet": "--sheet"}).suggestion, str(f)
        ('Name the sheet to read with --sheet.', 'Two sheets. Name the sheet to read with the sheet setting.')
        """
        return dataclasses.replace(self, message=_named(self.message, names), expected=_named(self.expected, names),
                                   suggestion=_named(self.suggestion, names))

    def __str__(self) -> str:
        """The finding in one paragraph; every part that may come from a user's file passes :func:`visible`."""
        f = self.worded({})
        text = f"{f.where}: {f.message}" if f.where else f.message
        if f.found is not None:
            text += f" Found: '{f.found}'."  # quoted as typed; visible() below escapes what must be
        if f.expected:
            text += f" Expected: {f.expected}."
        if f.suggestion:
            text += f" {f.suggestion}"
        return visible(text)

    def to_dict(self) -> dict:
        """The finding's parts (for JSON documents and the web page), each passed through :func:`visible`."""
        f = self.worded({})
        w = f.where
        out = {
            "severity": f.severity,
            "message": f.message,
            "file": w.file if w else None,
            "sheet": w.sheet if w else None,
            "row": w.row if w else None,
            "column": w.column if w else None,
            "found": f.found,
            "expected": f.expected,
            "suggestion": f.suggestion,
        }
        return {k: visible(v) if isinstance(v, str) else v for k, v in out.items()}


class InputError(Exception):
    """Bad input: a file that cannot be read as the registrar meant, or a bad argument."""

    def __init__(self, findings: list[Finding] | Finding | str, where: Location | None = None):
        if isinstance(findings, str):
            findings = [Finding(findings, where=where)]
        elif isinstance(findings, Finding):
            findings = [findings]
        self.findings: list[Finding] = list(findings) or [
            Finding("The input could not be read, and no reason was recorded (a bug in timetabler: please report it).",
                    where=where)]
        super().__init__("\n".join(str(f) for f in self.findings))

    def worded(self, names: dict[str, str]) -> "InputError":
        """The same error naming settings in an interface's words (see :meth:`Finding.worded`)."""
        return InputError([f.worded(names) for f in self.findings])
