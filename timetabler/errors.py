"""The one error type for bad input, and the findings it carries.

Every problem that intake (or a command-line argument check) finds in the registrar's
input is a :class:`Finding`: where it is (file, sheet, row, column), what was found, what
was expected, and a suggestion. Errors stop the run (:class:`InputError`, exit status 2);
warnings are kept and shown beside the result.
"""

from __future__ import annotations

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


@dataclass
class Finding:
    message: str
    where: Location | None = None
    found: str | None = None
    expected: str | None = None
    suggestion: str | None = None
    severity: str = "error"  # "error" or "warning"

    def __str__(self) -> str:
        """The finding in one paragraph; every part that may come from a user's file passes :func:`visible`."""
        text = f"{self.where}: {self.message}" if self.where else self.message
        if self.found is not None:
            text += f" Found: '{self.found}'."  # quoted as typed; visible() below escapes what must be
        if self.expected:
            text += f" Expected: {self.expected}."
        if self.suggestion:
            text += f" {self.suggestion}"
        return visible(text)

    def to_dict(self) -> dict:
        """The finding's parts (for JSON documents and the web page), each passed through :func:`visible`."""
        w = self.where
        out = {
            "severity": self.severity,
            "message": self.message,
            "file": w.file if w else None,
            "sheet": w.sheet if w else None,
            "row": w.row if w else None,
            "column": w.column if w else None,
            "found": self.found,
            "expected": self.expected,
            "suggestion": self.suggestion,
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
