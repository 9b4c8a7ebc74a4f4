"""Words the pages show for the trade vocabulary's API values.

Choices go to templates as ``(value, label)`` pairs made here, so a select,
a radio group and a table cell say the same thing for the same value.
"""

from __future__ import annotations

from collections.abc import Iterable
from enum import StrEnum

from server.engineering.findings import Severity, Verdict
from server.engineering.profiles import AreaKind, Evaluation
from server.engineering.vocabulary import (
    BallastTech,
    Changeover,
    Chemistry,
    DateCodeFormat,
    LampType,
    Waveform,
    Wiring,
)

LABELS: dict[StrEnum, str] = {
    LampType.T5: "T5 (16 mm)",
    LampType.T8: "T8 (26 mm)",
    LampType.T12: "T12 (38 mm)",
    LampType.CFL_4PIN: "Compact, 4-pin",
    LampType.CFL_2PIN: "Compact, 2-pin",
    LampType.LED_TUBE: "LED tube",
    BallastTech.MAGNETIC_GLOW_STARTER: "Magnetic, glow starter",
    BallastTech.MAGNETIC_RAPID_START: "Magnetic, rapid start",
    BallastTech.MAGNETIC_INSTANT_START: "Magnetic, instant start",
    BallastTech.ELECTRONIC_INSTANT_START: "Electronic, instant start",
    BallastTech.ELECTRONIC_PROGRAMMED_START: "Electronic, programmed start",
    BallastTech.ELECTRONIC_DIMMABLE: "Electronic, dimmable",
    Wiring.SINGLE: "Single lamp",
    Wiring.SERIES: "Series",
    Wiring.PARALLEL: "Parallel",
    Chemistry.NICD: "NiCd",
    Chemistry.NIMH: "NiMH",
    Chemistry.LIFEPO4: "LiFePO4",
    Changeover.ONE_END: "One lamp end",
    Changeover.BOTH_ENDS: "Both lamp ends",
    Waveform.AC: "AC",
    Waveform.PULSED_DC: "Unidirectional pulses",
    DateCodeFormat.YYWW: "YYWW (year, week)",
    DateCodeFormat.WWYY: "WWYY (week, year)",
    DateCodeFormat.MMYY: "MMYY (month, year)",
    DateCodeFormat.YYMM: "YYMM (year, month)",
    AreaKind.ESCAPE_ROUTE: "Escape route",
    AreaKind.OPEN_AREA: "Open area",
    AreaKind.HIGH_RISK: "High-risk task area",
    AreaKind.STAIRWAY: "Stairway",
    AreaKind.OTHER: "Other",
    Evaluation.CENTRE_LINE: "Centre line of the route (and its central band)",
    Evaluation.PATH: "Along the path: minimum and average",
    Evaluation.CORE_AREA: "Core area of the floor (0.5 m border left out)",
    Severity.FAIL: "Fail",
    Severity.WARN: "Warn",
    Severity.ACTION: "Action",
    Severity.INFO: "Info",
    Verdict.PASS: "Pass",
    Verdict.WARN: "Warn",
    Verdict.FAIL: "Fail",
}


def label(value: StrEnum | str | None, enum: type[StrEnum] | None = None) -> str:
    """The words for one value; unknown values are shown as stored."""
    if value is None or value == "":
        return ""
    if enum is not None and not isinstance(value, enum):
        try:
            value = enum(value)
        except ValueError:
            return str(value)
    return LABELS.get(value, str(value)) if isinstance(value, StrEnum) else str(value)


def choices(enum: type[StrEnum], only: Iterable[StrEnum] | None = None) -> list[tuple[str, str]]:
    """``(value, label)`` pairs for a select or radio group, in the enum's order."""
    members = list(only) if only is not None else list(enum)
    return [(member.value, LABELS.get(member, member.value)) for member in members]


def _number(value: float | None, unit: str) -> str:
    return "" if value is None else f"{value:g} {unit}"


def fixture_summary(fixture: object) -> str:
    """One line about a fixture's lamps and gear: "2 x T8 (26 mm) 36 W, series, ..."."""
    count = getattr(fixture, "lamp_count", 1)
    lamp = label(getattr(fixture, "lamp_type", None), LampType)
    watts = _number(getattr(fixture, "lamp_w", None), "W")
    wiring = label(getattr(fixture, "wiring", None), Wiring).lower()
    ballast = label(getattr(fixture, "ballast", None), BallastTech)
    return f"{count} \u00d7 {lamp} {watts}, {wiring}, {ballast}"


def fixture_situation(fixture: object) -> str:
    """Where the fixture is and what the survey noted about its supply and ceiling."""
    parts = []
    location = getattr(fixture, "location", "")
    if location:
        parts.append(location)
    ambient = getattr(fixture, "ambient_c", None)
    if ambient is not None:
        parts.append(f"ceiling {ambient:g} \u00b0C")
    parts.append(
        "unswitched supply there"
        if getattr(fixture, "unswitched_supply", False)
        else "no unswitched supply"
    )
    if getattr(fixture, "existing_kit", False):
        parts.append("kit fitted")
    if not getattr(fixture, "accessible", True):
        parts.append("not accessible")
    return " \u00b7 ".join(parts)
