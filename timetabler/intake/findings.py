"""Collecting findings: every problem in the input, up to a cap, before stopping.

A registrar fixing a file wants the whole list at once, not one error per run. Readers add
errors and warnings to a :class:`FindingList` as they go; :meth:`FindingList.stop_if_errors`
raises one :class:`~timetabler.errors.InputError` carrying all the errors.
"""

from __future__ import annotations

from ..errors import Finding, InputError
from ..model import Location


class FindingList:
    """Errors and warnings found so far, each list capped at ``cap`` entries (the rest are counted)."""

    def __init__(self, cap: int = 50):
        self.cap = cap
        self.errors: list[Finding] = []
        self.warnings: list[Finding] = []
        self.errors_left_off = 0
        self.warnings_left_off = 0

    def error(self, message: str, where: Location | None = None, found: object = None,
              expected: str | None = None, suggestion: str | None = None) -> None:
        if len(self.errors) >= self.cap:
            self.errors_left_off += 1
            return
        self.errors.append(Finding(message, where, _text(found), expected, suggestion, "error"))

    def warn(self, message: str, where: Location | None = None, found: object = None,
             expected: str | None = None, suggestion: str | None = None) -> None:
        if len(self.warnings) >= self.cap:
            self.warnings_left_off += 1
            return
        self.warnings.append(Finding(message, where, _text(found), expected, suggestion, "warning"))

    def add(self, finding: Finding) -> None:
        if finding.severity == "warning":
            self.warn(finding.message, finding.where, finding.found, finding.expected, finding.suggestion)
        else:
            self.error(finding.message, finding.where, finding.found, finding.expected, finding.suggestion)

    def stop_if_errors(self) -> None:
        """Raise InputError with every error collected (and a last line counting those left off)."""
        if not self.errors:
            return
        findings = list(self.errors)
        if self.errors_left_off:
            findings.append(Finding(f"... and {self.errors_left_off} more problems not listed; fix these first."))
        raise InputError(findings)

    def final_warnings(self) -> list[Finding]:
        out = list(self.warnings)
        if self.warnings_left_off:
            out.append(Finding(f"... and {self.warnings_left_off} more warnings not listed.", severity="warning"))
        return out


def _text(value: object) -> str | None:
    if value is None:
        return None
    return value if isinstance(value, str) else str(value)
