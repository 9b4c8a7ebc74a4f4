"""Requirement profiles: what an area's emergency lighting must achieve.

A profile is data: the duration, the illuminance levels at floor level, the
uniformity limit and the test intervals, each with the source it comes from.
Users may define their own profiles per organisation; those are built with
:func:`make_profile` so they pass the same validation as the built-in ones.

References
----------
.. [1] NFPA 101 Life Safety Code, section 7.9.2.1 (illuminance, duration) and
   7.9.3 (periodic testing), checked against a page quoting it.
.. [2] EN 1838:2013 Lighting applications - Emergency lighting, sections 4.2
   (escape routes), 4.3 (open areas), 4.4 (high-risk task areas), checked
   against pages quoting it; 4.4 uniformity wording from memory.
.. [3] BS 5266-1 and EN 50172:2004 (3 h duration for premises not evacuated at
   once, monthly and annual tests), checked against pages summarising them.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum

# 1 fc = 1 lm/ft^2 with 1 ft = 0.3048 m exactly, so 1 fc = 1 / 0.3048**2 lx.
LUX_PER_FOOTCANDLE = 1.0 / 0.3048**2


def footcandles_to_lux(illuminance_fc: float) -> float:
    """Convert foot-candles to lux.

    Parameters
    ----------
    illuminance_fc : float
        Illuminance. [fc]

    Returns
    -------
    float
        Illuminance. [lx]

    References
    ----------
    Definition of the foot-candle (lumen per square foot; international foot).
    """
    return illuminance_fc * LUX_PER_FOOTCANDLE


def lux_to_footcandles(illuminance_lx: float) -> float:
    """Convert lux to foot-candles (inverse of :func:`footcandles_to_lux`)."""
    return illuminance_lx / LUX_PER_FOOTCANDLE


class AreaKind(StrEnum):
    ESCAPE_ROUTE = "escape-route"
    OPEN_AREA = "open-area"
    HIGH_RISK = "high-risk"
    STAIRWAY = "stairway"
    OTHER = "other"


class Evaluation(StrEnum):
    """Where along a route a profile's levels are checked."""

    CENTRE_LINE = "centre-line"  # EU escape routes: centre line plus central band
    PATH = "path"  # US egress: the path at floor level, average and minimum
    CORE_AREA = "core-area"  # EU open and high-risk areas: floor less a 0.5 m border


@dataclass(frozen=True, slots=True)
class Profile:
    """What an area's emergency lighting must achieve.

    Attributes
    ----------
    id : str
        Stable identifier used by the API (``us-egress`` ...).
    duration_min : float
        Required duration. [min]
    min_lux : float
        Minimum illuminance at floor level at the start of the duration. [lx]
    avg_lux : float or None
        Minimum average illuminance, where the profile asks for one. [lx]
    end_min_lux, end_avg_lux : float or None
        Levels still required at the end of the duration (US egress). [lx]
    max_min_ratio : float
        Largest allowed ratio of maximum to minimum illuminance. [-]
    central_band_fraction : float or None
        Fraction of the route width whose band must get
        ``central_band_min_share`` of the centre-line level (EU). [-]
    central_band_min_share : float or None
        Share of ``min_lux`` the central band must reach. [-]
    max_route_width_m : float or None
        Widest route the centre-line method covers; wider ones are treated as
        strips or as an open area. [m]
    response_s : float or None
        Time to reach the full level. [s]
    monthly_test_days, annual_test_days : int
        Test intervals. [day]
    monthly_test_s : float
        Shortest monthly function test. [s]
    source : str
        Where the figures come from.
    builtin : bool
        True for the profiles shipped with the planner.
    """

    id: str
    name: str
    area_kind: AreaKind
    evaluation: Evaluation
    duration_min: float
    min_lux: float
    max_min_ratio: float
    source: str
    avg_lux: float | None = None
    end_min_lux: float | None = None
    end_avg_lux: float | None = None
    central_band_fraction: float | None = None
    central_band_min_share: float | None = None
    max_route_width_m: float | None = None
    response_s: float | None = None
    monthly_test_days: int = 30
    annual_test_days: int = 365
    monthly_test_s: float = 30.0
    builtin: bool = False


def make_profile(**fields: object) -> Profile:
    """Build a profile and check that its figures are physical.

    Raises
    ------
    ValueError
        When a duration, level, ratio or interval is not positive, or the end
        of duration asks for more light than the start.
    """
    profile = Profile(**fields)  # type: ignore[arg-type]
    if profile.duration_min <= 0:
        raise ValueError("duration_min: the required duration must be more than 0 minutes")
    if profile.min_lux <= 0:
        raise ValueError("min_lux: the minimum illuminance must be more than 0 lx")
    if profile.max_min_ratio < 1:
        raise ValueError("max_min_ratio: a max:min ratio below 1 cannot be met")
    if profile.avg_lux is not None and profile.avg_lux < profile.min_lux:
        raise ValueError("avg_lux: the average cannot be required below the minimum")
    if profile.end_min_lux is not None and profile.end_min_lux > profile.min_lux:
        raise ValueError("end_min_lux: the end-of-duration level cannot exceed the initial one")
    if profile.monthly_test_days <= 0 or profile.annual_test_days <= 0:
        raise ValueError("test intervals must be at least one day")
    return profile


_US_SOURCE = "NFPA 101 §7.9.2.1 and §7.9.3 (checked against a page quoting it)"
_EU_ROUTE_SOURCE = "EN 1838:2013 §4.2; EN 50172:2004 tests (checked against pages quoting them)"

BUILTIN_PROFILES: dict[str, Profile] = {
    profile.id: profile
    for profile in (
        make_profile(
            id="us-egress",
            name="US egress path (90 min)",
            area_kind=AreaKind.ESCAPE_ROUTE,
            evaluation=Evaluation.PATH,
            duration_min=90.0,
            min_lux=footcandles_to_lux(0.1),
            avg_lux=footcandles_to_lux(1.0),
            end_min_lux=footcandles_to_lux(0.06),
            end_avg_lux=footcandles_to_lux(0.6),
            max_min_ratio=40.0,
            response_s=10.0,
            monthly_test_days=30,
            annual_test_days=365,
            monthly_test_s=30.0,
            source=_US_SOURCE,
            builtin=True,
        ),
        make_profile(
            id="eu-escape-route",
            name="EU escape route (1 h)",
            area_kind=AreaKind.ESCAPE_ROUTE,
            evaluation=Evaluation.CENTRE_LINE,
            duration_min=60.0,
            min_lux=1.0,
            max_min_ratio=40.0,
            central_band_fraction=0.5,
            central_band_min_share=0.5,
            max_route_width_m=2.0,
            response_s=60.0,
            monthly_test_days=30,
            annual_test_days=365,
            monthly_test_s=30.0,
            source=_EU_ROUTE_SOURCE,
            builtin=True,
        ),
        make_profile(
            id="eu-3h-premises",
            name="EU escape route, 3 h premises (sleeping risk, re-occupied)",
            area_kind=AreaKind.ESCAPE_ROUTE,
            evaluation=Evaluation.CENTRE_LINE,
            duration_min=180.0,
            min_lux=1.0,
            max_min_ratio=40.0,
            central_band_fraction=0.5,
            central_band_min_share=0.5,
            max_route_width_m=2.0,
            response_s=60.0,
            source="BS 5266-1 / EN 50172 (checked against pages summarising them); "
            "levels as EN 1838:2013 §4.2",
            builtin=True,
        ),
        make_profile(
            id="eu-open-area",
            name="EU open (anti-panic) area",
            area_kind=AreaKind.OPEN_AREA,
            evaluation=Evaluation.CORE_AREA,
            duration_min=60.0,
            min_lux=0.5,
            max_min_ratio=40.0,
            response_s=60.0,
            source="EN 1838:2013 §4.3 (checked against pages quoting it)",
            builtin=True,
        ),
        make_profile(
            id="eu-high-risk",
            name="EU high-risk task area",
            area_kind=AreaKind.HIGH_RISK,
            evaluation=Evaluation.CORE_AREA,
            duration_min=60.0,
            min_lux=15.0,
            max_min_ratio=10.0,
            response_s=0.5,
            source="EN 1838:2013 §4.4 (second-hand summaries; uniformity wording from memory); "
            "at least 10 % of the normal task illuminance and not less than 15 lx",
            builtin=True,
        ),
    )
}


def get_profile(profile_id: str) -> Profile:
    """Return a built-in profile by id.

    Raises
    ------
    ValueError
        When no built-in profile has that id; the message lists the ids.
    """
    try:
        return BUILTIN_PROFILES[profile_id]
    except KeyError:
        known = ", ".join(sorted(BUILTIN_PROFILES))
        raise ValueError(f"unknown profile {profile_id!r}; choose one of: {known}") from None


def high_risk_min_lux(normal_task_lux: float) -> float:
    """Minimum emergency illuminance for a high-risk task area.

    Parameters
    ----------
    normal_task_lux : float
        Illuminance the task needs under normal lighting. [lx]

    Returns
    -------
    float
        The larger of 10 % of the normal level and 15 lx. [lx]

    References
    ----------
    EN 1838:2013 §4.4 (second-hand summaries).
    """
    if normal_task_lux <= 0:
        raise ValueError("normal_task_lux: the normal task illuminance must be more than 0 lx")
    return max(0.1 * normal_task_lux, 15.0)


POINTS_OF_EMPHASIS_RADIUS_M = 2.0  # EN 1838:2013 §4.1 (checked against a page quoting it)
SAFETY_EQUIPMENT_VERTICAL_LUX = 5.0  # EN 1838:2013 §4.1: first aid, fire equipment, call points
