"""Findings: what a check says about a fixture, a pack, a route.

Every rule in the engineering core answers with a list of :class:`Finding`.
A finding carries its own code (ours), a severity, a message a tradesperson
understands, the fix, and the source the rule rests on.

References
----------
Severity ordering and the verdict rule are the project's own convention:
the verdict is the worst of the fail/warn findings; ``action`` (work to add)
and ``info`` findings never change it.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from enum import StrEnum


class Severity(StrEnum):
    FAIL = "fail"
    WARN = "warn"
    ACTION = "action"
    INFO = "info"


class Verdict(StrEnum):
    PASS = "pass"
    WARN = "warn"
    FAIL = "fail"


# Worst first: used to sort findings for display.
SEVERITY_RANK: dict[Severity, int] = {
    Severity.FAIL: 0,
    Severity.WARN: 1,
    Severity.ACTION: 2,
    Severity.INFO: 3,
}


@dataclass(frozen=True, slots=True)
class Finding:
    """One statement a check makes, with what to do about it."""

    code: str
    severity: Severity
    message: str
    fix: str
    source: str


def verdict_of(findings: Iterable[Finding]) -> Verdict:
    """Fail when any finding fails, else warn when any warns, else pass."""
    severities = {finding.severity for finding in findings}
    if Severity.FAIL in severities:
        return Verdict.FAIL
    if Severity.WARN in severities:
        return Verdict.WARN
    return Verdict.PASS


def worst_first(findings: Iterable[Finding]) -> list[Finding]:
    """Findings sorted fail, warn, action, info; stable within a severity."""
    return sorted(findings, key=lambda finding: SEVERITY_RANK[finding.severity])
