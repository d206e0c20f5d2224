"""The one error type for bad input, and the findings it carries.

Every problem that intake (or a command-line argument check) finds in the registrar's
input is a :class:`Finding`: where it is (file, sheet, row, column), what was found, what
was expected, and a suggestion. Errors stop the run (:class:`InputError`, exit status 2);
warnings are kept and shown beside the result.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from .model import Location


@dataclass
class Finding:
    message: str
    where: Location | None = None
    found: str | None = None
    expected: str | None = None
    suggestion: str | None = None
    severity: str = "error"  # "error" or "warning"

    def __str__(self) -> str:
        text = f"{self.where}: {self.message}" if self.where else self.message
        if self.found is not None:
            text += f" Found: {self.found!r}."
        if self.expected:
            text += f" Expected: {self.expected}."
        if self.suggestion:
            text += f" {self.suggestion}"
        return text

    def to_dict(self) -> dict:
        w = self.where
        return {
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


class InputError(Exception):
    """Bad input: a file that cannot be read as the registrar meant, or a bad argument."""

    def __init__(self, findings: list[Finding] | Finding | str, where: Location | None = None):
        if isinstance(findings, str):
            findings = [Finding(findings, where=where)]
        elif isinstance(findings, Finding):
            findings = [findings]
        self.findings: list[Finding] = list(findings)
        super().__init__("\n".join(str(f) for f in self.findings))
