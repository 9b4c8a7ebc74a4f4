"""Emergency illuminance along an escape route, checked against a profile.

A route is a polyline on the floor plan with a width. Its centre line is
sampled every ``step_m`` (0.1 m by default); for profiles with a central band
(EU escape routes) the band of half the route width is sampled too, at its two
edges and halfway to them, at the same positions along the route. Each sample
gets the horizontal illuminance of every luminaire by the inverse-square cosine
law (:mod:`server.engineering.photometry`), times the maintenance factor.

End of duration (US egress): the light at the end of the rated duration is each
luminaire's emergency flux times its ``end_flux_factor``, 1 unless given. That
default rests on how the emergency ballast lumen factor is declared: the lower
of the 60 s value and the value at the lowest battery voltage during the
duration (IEC 61347-2-7 clause 20, checked against a page quoting it), so a
declared factor already holds at the end. For an *estimated* factor, give the
end-of-duration share the module is known to keep.

References
----------
.. [1] NFPA 101 Life Safety Code §7.9.2.1: average 1 fc and minimum 0.1 fc along
   the egress path at floor level initially, 0.6 fc and 0.06 fc at the end of
   90 min, max:min 40:1 (checked against a page quoting it).
.. [2] EN 1838:2013 §4.2: 1 lx on the centre line of routes up to 2 m wide,
   the central band of half the width at least 50 % of that, max:min 40:1 on
   the centre line (checked against pages quoting it).
.. [3] IES definitions: inverse-square cosine law, see photometry.py.
.. [4] Maintenance factor 0.8 for emergency luminaires: common practice.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from server.engineering.errors import InvalidInput
from server.engineering.findings import Finding, Severity, Verdict, verdict_of, worst_first
from server.engineering.photometry import (
    LAMBERTIAN,
    Distribution,
    LambertianDistribution,
    floor_illuminance_lx,
)
from server.engineering.profiles import Evaluation, Profile, lux_to_footcandles

FloatArray = NDArray[np.float64]
BoolArray = NDArray[np.bool_]

DEFAULT_MAINTENANCE_FACTOR = 0.8  # common practice ([4])
DEFAULT_STEP_M = 0.1  # project default sampling interval along the centre line
MAX_SAMPLES = 10_000  # our own limit on centre-line points (1 km at 0.1 m), for response time
MAX_MATRIX_ENTRIES = 6_000_000  # our own limit on points x luminaires (about 50 MB of floats)
# Our own plausibility limits, well beyond any building, that keep the sums finite.
MAX_PLAN_M = 100_000.0  # plan coordinates within 100 km of the origin
MAX_HEIGHT_M = 1_000.0  # mounting height and luminous length
MAX_FLUX_LM = 10_000_000.0  # emergency lumens of one luminaire

# Lateral positions sampled across the central band, as fractions of its half
# width: both edges and halfway to them (the centre line is sampled anyway).
# Our own choice: under a row of luminaires the band's darkest points are its edges.
BAND_LATERAL_FRACTIONS = (-1.0, -0.5, 0.5, 1.0)

CAUTION_SOURCE = "common practice: emergency lighting is life-safety equipment"


def _finite(value: float) -> bool:
    return isinstance(value, int | float) and math.isfinite(value)


def _on_plan(value: float) -> bool:
    return _finite(value) and abs(value) <= MAX_PLAN_M


@dataclass(frozen=True, slots=True)
class Route:
    """An escape route: a polyline at floor level and its width.

    Attributes
    ----------
    points_m : tuple of (float, float)
        Plan coordinates of the centre line, at least two points. [m]
    width_m : float
        Width of the route, more than 0. [m]

    Raises
    ------
    InvalidInput
        A ValueError naming ``points`` (fewer than two, not finite, or no
        length) or ``width_m``.
    """

    points_m: tuple[tuple[float, float], ...]
    width_m: float

    def __post_init__(self) -> None:
        points = tuple(tuple(point) for point in self.points_m)
        if len(points) < 2:
            raise InvalidInput(
                "points", "a route needs at least two points (its start and its end)"
            )
        for index, point in enumerate(points):
            if len(point) != 2 or not all(_on_plan(value) for value in point):
                raise InvalidInput(
                    "points",
                    f"point {index + 1} must be two numbers, x and y in metres, within "
                    f"{MAX_PLAN_M / 1000:.0f} km of the plan's origin",
                )
        object.__setattr__(self, "points_m", tuple((float(x), float(y)) for x, y in points))
        if self.length_m <= 0:
            raise InvalidInput(
                "points", "all the points are in the same place, so the route has no length"
            )
        if not _finite(self.width_m) or not 0 < self.width_m <= MAX_PLAN_M:
            raise InvalidInput("width_m", "the route width must be more than 0 m")

    @property
    def length_m(self) -> float:
        """Length of the centre line. [m]"""
        points = np.asarray(self.points_m, dtype=float)
        return float(np.sum(np.hypot(*np.diff(points, axis=0).T)))


@dataclass(frozen=True, slots=True)
class Luminaire:
    """An emergency luminaire above the floor plan.

    Attributes
    ----------
    x_m, y_m : float
        Centre in plan. [m]
    mounting_height_m : float
        Height of the light centre above the floor, more than 0. [m]
    emergency_flux_lm : float
        Emergency lumens: rated lamp lumens times the emergency ballast lumen
        factor. [lm]
    length_m : float
        Luminous length; 0 for a point source. [m]
    axis_deg : float
        Lamp axis in plan, counter-clockwise from the x axis. [deg]
    distribution : Distribution
        Intensity per lumen; the cosine emitter unless a file is given.
    end_flux_factor : float
        Emergency flux at the end of the duration over that at the start,
        0 to 1. [-]

    Raises
    ------
    InvalidInput
        A ValueError naming the field out of range.
    """

    x_m: float
    y_m: float
    mounting_height_m: float
    emergency_flux_lm: float
    length_m: float = 0.0
    axis_deg: float = 0.0
    distribution: Distribution = LAMBERTIAN
    end_flux_factor: float = 1.0

    def __post_init__(self) -> None:
        for name in ("x_m", "y_m"):
            if not _on_plan(getattr(self, name)):
                raise InvalidInput(
                    name,
                    f"must be a number of metres within {MAX_PLAN_M / 1000:.0f} km of the origin",
                )
        if not _finite(self.axis_deg):
            raise InvalidInput("axis_deg", "must be a finite number of degrees")
        if not _finite(self.mounting_height_m) or self.mounting_height_m <= 0:
            raise InvalidInput(
                "mounting_height_m",
                "the luminaire must be above the floor: give its height above floor level, "
                "more than 0 m",
            )
        if self.mounting_height_m > MAX_HEIGHT_M:
            raise InvalidInput(
                "mounting_height_m", f"a height above {MAX_HEIGHT_M:.0f} m is not a luminaire's"
            )
        if not _finite(self.emergency_flux_lm) or not 0 <= self.emergency_flux_lm <= MAX_FLUX_LM:
            raise InvalidInput(
                "emergency_flux_lm",
                f"the emergency lumens must be 0 or more, and at most {MAX_FLUX_LM:,.0f}",
            )
        if not _finite(self.length_m) or not 0 <= self.length_m <= MAX_HEIGHT_M:
            raise InvalidInput("length_m", "the luminous length must be 0 (a point source) or more")
        if not _finite(self.end_flux_factor) or not 0 <= self.end_flux_factor <= 1:
            raise InvalidInput(
                "end_flux_factor",
                "the end-of-duration share of the emergency lumens must be between 0 and 1",
            )


@dataclass(frozen=True, eq=False)
class RouteSamples:
    """Where a route is evaluated.

    Attributes
    ----------
    s_m, x_m, y_m : ndarray
        Distance along the centre line and plan position of each centre-line
        sample. [m]
    weights_m : ndarray
        Trapezoid weights of the samples, summing to the route length. [m]
    band_s_m, band_x_m, band_y_m : ndarray
        The central-band samples (empty when the profile has no band). [m]
    length_m : float
        Route length. [m]
    """

    s_m: FloatArray
    x_m: FloatArray
    y_m: FloatArray
    weights_m: FloatArray
    band_s_m: FloatArray
    band_x_m: FloatArray
    band_y_m: FloatArray
    length_m: float


def sample_route(
    route: Route, *, step_m: float = DEFAULT_STEP_M, band_fraction: float | None = None
) -> RouteSamples:
    """Sample a route's centre line every ``step_m``, and its central band.

    Parameters
    ----------
    route : Route
        The route.
    step_m : float
        Spacing of the samples along the centre line; the end point is always
        included. [m]
    band_fraction : float, optional
        Width of the central band as a fraction of the route width (0.5 for
        EN 1838); None for no band. [-]

    Returns
    -------
    RouteSamples

    Raises
    ------
    InvalidInput
        ``step_m`` not above 0, or so small that the route has more than
        :data:`MAX_SAMPLES` points.

    References
    ----------
    EN 1838:2013 §4.2 (central band of half the route width).
    """
    if not _finite(step_m) or step_m <= 0:
        raise InvalidInput("step_m", "the step along the route must be more than 0 m")
    points = np.asarray(route.points_m, dtype=float)
    vectors = np.diff(points, axis=0)
    lengths = np.hypot(vectors[:, 0], vectors[:, 1])
    keep = lengths > 0
    starts, vectors, lengths = points[:-1][keep], vectors[keep], lengths[keep]
    units = vectors / lengths[:, None]
    cumulative = np.concatenate(([0.0], np.cumsum(lengths)))
    length_m = float(cumulative[-1])
    count = math.floor(length_m / step_m + 1e-9) + 1
    if count > MAX_SAMPLES:
        raise InvalidInput(
            "step_m",
            f"a {step_m:g} m step gives {count} points on this {length_m:.1f} m route, more "
            f"than the {MAX_SAMPLES} allowed; use a step of at least "
            f"{length_m / (MAX_SAMPLES - 1):.2f} m",
        )
    s: FloatArray = np.arange(count, dtype=float) * step_m
    if length_m - s[-1] > 1e-9 * max(1.0, length_m):
        s = np.append(s, length_m).astype(float)
    segment = np.clip(np.searchsorted(cumulative, s, side="right") - 1, 0, lengths.size - 1)
    along = s - cumulative[segment]
    x = starts[segment, 0] + along * units[segment, 0]
    y = starts[segment, 1] + along * units[segment, 1]
    steps = np.diff(s)
    weights = np.zeros_like(s)
    weights[:-1] += steps / 2.0
    weights[1:] += steps / 2.0

    if band_fraction is None:
        empty = np.zeros(0)
        return RouteSamples(s, x, y, weights, empty, empty, empty, length_m)
    half_band_m = band_fraction * route.width_m / 2.0
    normal_x, normal_y = -units[segment, 1], units[segment, 0]
    offsets = half_band_m * np.asarray(BAND_LATERAL_FRACTIONS)
    band_x = np.concatenate([x + offset * normal_x for offset in offsets])
    band_y = np.concatenate([y + offset * normal_y for offset in offsets])
    band_s = np.tile(s, offsets.size)
    return RouteSamples(s, x, y, weights, band_s, band_x, band_y, length_m)


def position_along_route_m(route: Route, x_m: FloatArray, y_m: FloatArray) -> FloatArray:
    """Distance along the centre line of the route point nearest each plan point.

    Parameters
    ----------
    route : Route
    x_m, y_m : ndarray
        Plan points (luminaire positions, say). [m]

    Returns
    -------
    ndarray
        Distance along the route of the nearest centre-line point. [m]

    References
    ----------
    Orthogonal projection onto line segments (plane geometry).
    """
    points = np.asarray(route.points_m, dtype=float)
    vectors = np.diff(points, axis=0)
    lengths = np.hypot(vectors[:, 0], vectors[:, 1])
    keep = lengths > 0
    starts, vectors, lengths = points[:-1][keep], vectors[keep], lengths[keep]
    cumulative = np.concatenate(([0.0], np.cumsum(lengths)))[:-1]
    px = np.asarray(x_m, dtype=float)[:, None] - starts[None, :, 0]
    py = np.asarray(y_m, dtype=float)[:, None] - starts[None, :, 1]
    along = np.clip((px * vectors[:, 0] + py * vectors[:, 1]) / lengths, 0.0, lengths)
    across2 = (px - along * vectors[:, 0] / lengths) ** 2 + (
        py - along * vectors[:, 1] / lengths
    ) ** 2
    nearest = np.argmin(across2, axis=1)
    rows = np.arange(nearest.size)
    return np.asarray(cumulative[nearest] + along[rows, nearest], dtype=float)


def illuminance_matrix_lx(
    x_m: FloatArray, y_m: FloatArray, luminaires: Sequence[Luminaire]
) -> FloatArray:
    """Initial floor illuminance of each luminaire at each point, no maintenance factor.

    Parameters
    ----------
    x_m, y_m : ndarray
        Floor points in plan. [m]
    luminaires : sequence of Luminaire

    Returns
    -------
    ndarray
        Shape (points, luminaires). [lx]

    References
    ----------
    Inverse-square cosine law (IES definitions), see
    :func:`server.engineering.photometry.floor_illuminance_lx`.
    """
    matrix = np.zeros((np.size(x_m), len(luminaires)))
    for column, luminaire in enumerate(luminaires):
        matrix[:, column] = floor_illuminance_lx(
            x_m,
            y_m,
            luminaire_x_m=luminaire.x_m,
            luminaire_y_m=luminaire.y_m,
            mounting_height_m=luminaire.mounting_height_m,
            flux_lm=luminaire.emergency_flux_lm,
            distribution=luminaire.distribution,
            axis_deg=luminaire.axis_deg,
            length_m=luminaire.length_m,
        )
    return matrix


@dataclass(frozen=True, eq=False)
class RouteMatrices:
    """Per-luminaire illuminance at a route's samples (linear in each choice).

    Attributes
    ----------
    samples : RouteSamples
    centre_lx : ndarray
        Initial illuminance of each luminaire on the centre line, shape
        (samples, luminaires), no maintenance factor. [lx]
    band_lx : ndarray
        The same on the central-band samples. [lx]
    end_flux_factors : ndarray
        Each luminaire's end-of-duration share. [-]
    default_distribution : ndarray of bool
        True where a luminaire uses the cosine default.
    """

    samples: RouteSamples
    centre_lx: FloatArray
    band_lx: FloatArray
    end_flux_factors: FloatArray
    default_distribution: BoolArray


def route_matrices(
    route: Route,
    luminaires: Sequence[Luminaire],
    profile: Profile,
    *,
    step_m: float = DEFAULT_STEP_M,
) -> RouteMatrices:
    """Sample the route for the profile and compute every luminaire's share.

    Parameters
    ----------
    route : Route
    luminaires : sequence of Luminaire
    profile : Profile
        Decides whether the central band is sampled.
    step_m : float
        Spacing along the centre line. [m]

    Returns
    -------
    RouteMatrices

    Raises
    ------
    InvalidInput
        ``step_m`` when the points times the luminaires exceed
        :data:`MAX_MATRIX_ENTRIES`; ``mounting_height_m`` when the sums
        overflow (a luminaire almost on the floor).

    References
    ----------
    Inverse-square cosine law (IES definitions); EN 1838:2013 §4.2 (band).
    """
    band_fraction = profile.central_band_fraction if profile.central_band_min_share else None
    samples = sample_route(route, step_m=step_m, band_fraction=band_fraction)
    points = samples.s_m.size + samples.band_s_m.size
    if points * len(luminaires) > MAX_MATRIX_ENTRIES:
        raise InvalidInput(
            "step_m",
            f"{points} points for {len(luminaires)} luminaires is more than this calculation "
            f"takes ({MAX_MATRIX_ENTRIES:,} point-luminaire pairs); use a larger step, or "
            "split the route into sections",
        )
    centre_lx = illuminance_matrix_lx(samples.x_m, samples.y_m, luminaires)
    band_lx = illuminance_matrix_lx(samples.band_x_m, samples.band_y_m, luminaires)
    if not (np.all(np.isfinite(centre_lx)) and np.all(np.isfinite(band_lx))):
        raise InvalidInput(
            "mounting_height_m",
            "the illuminance is too large to compute: a luminaire is mounted almost on the "
            "floor, or its lumens are far too high",
        )
    return RouteMatrices(
        samples=samples,
        centre_lx=centre_lx,
        band_lx=band_lx,
        end_flux_factors=np.array([lum.end_flux_factor for lum in luminaires], dtype=float),
        default_distribution=np.array(
            [isinstance(lum.distribution, LambertianDistribution) for lum in luminaires],
            dtype=bool,
        ),
    )


@dataclass(frozen=True, slots=True)
class RouteSample:
    """Illuminance at one centre-line point (maintenance factor applied)."""

    s_m: float
    x_m: float
    y_m: float
    illuminance_lx: float


@dataclass(frozen=True, slots=True)
class RouteResult:
    """Illuminance along a route and its verdict against a profile.

    Attributes
    ----------
    profile_id : str
    maintenance_factor : float
        Applied to every figure below. [-]
    samples : tuple of RouteSample
        The centre line.
    min_lux, max_lux, avg_lux : float
        Along the centre line; the average is length-weighted. [lx]
    max_min_ratio : float or None
        None when some point gets no light. [-]
    worst_s_m, worst_lux : float
        Darkest centre-line point. [m], [lx]
    band_min_lux, band_worst_s_m : float or None
        Darkest central-band point, for profiles with a band. [lx], [m]
    end_min_lux, end_avg_lux : float or None
        At the end of the duration, for profiles asking for it. [lx]
    verdict : Verdict
    findings : tuple of Finding
        Worst first.
    """

    profile_id: str
    maintenance_factor: float
    samples: tuple[RouteSample, ...]
    min_lux: float
    max_lux: float
    avg_lux: float
    max_min_ratio: float | None
    worst_s_m: float
    worst_lux: float
    band_min_lux: float | None
    band_worst_s_m: float | None
    end_min_lux: float | None
    end_avg_lux: float | None
    verdict: Verdict
    findings: tuple[Finding, ...]


def _check_maintenance_factor(maintenance_factor: float) -> None:
    if not _finite(maintenance_factor) or not 0 < maintenance_factor <= 1:
        raise InvalidInput(
            "maintenance_factor", "the maintenance factor must be more than 0 and at most 1"
        )


def _lux_text(illuminance_lx: float, profile: Profile) -> str:
    if profile.evaluation is Evaluation.PATH:
        return f"{illuminance_lx:.2f} lx ({lux_to_footcandles(illuminance_lx):.3f} fc)"
    return f"{illuminance_lx:.2f} lx"


def _level_finding(
    *,
    code: str,
    what: str,
    have_lux: float,
    need_lux: float,
    where_s_m: float | None,
    profile: Profile,
) -> Finding:
    where = f" at {where_s_m:.1f} m along the route" if where_s_m is not None else ""
    if have_lux >= need_lux:
        return Finding(
            code=code,
            severity=Severity.INFO,
            message=f"{what} is {_lux_text(have_lux, profile)}{where}; "
            f"{profile.name} asks for at least {_lux_text(need_lux, profile)}.",
            fix="None needed.",
            source=profile.source,
        )
    return Finding(
        code=code,
        severity=Severity.FAIL,
        message=f"{what} is only {_lux_text(have_lux, profile)}{where}; "
        f"{profile.name} asks for at least {_lux_text(need_lux, profile)}.",
        fix="Convert another fixture near there, use a module with more emergency lumens, "
        "or add an emergency luminaire; then check again.",
        source=profile.source,
    )


def _route_findings(
    *,
    route: Route,
    profile: Profile,
    maintenance_factor: float,
    min_lux: float,
    max_lux: float,
    worst_s_m: float,
    avg_lux: float,
    band: tuple[float, float] | None,
    end: tuple[float, float, float] | None,
    uses_default_distribution: bool,
) -> list[Finding]:
    line = "the path" if profile.evaluation is Evaluation.PATH else "the centre line"
    # (code, what, have, need, where along the route) for each level the profile sets
    levels: list[tuple[str, str, float, float | None, float | None]] = [
        ("route-minimum", f"The lowest illuminance on {line}", min_lux, profile.min_lux, worst_s_m),
        ("route-average", f"The average illuminance along {line}", avg_lux, profile.avg_lux, None),
    ]
    if band is not None and profile.central_band_min_share is not None:
        levels.append(
            (
                "route-central-band",
                "The lowest illuminance in the central band (half the route width)",
                band[0],
                profile.min_lux * profile.central_band_min_share,
                band[1],
            )
        )
    if end is not None:
        at_end = f"At the end of the {profile.duration_min:.0f} min, the"
        end_min_lux, end_s_m, end_avg_lux = end
        levels.append(
            (
                "route-end-minimum",
                f"{at_end} lowest illuminance on {line}",
                end_min_lux,
                profile.end_min_lux,
                end_s_m,
            )
        )
        levels.append(
            (
                "route-end-average",
                f"{at_end} average illuminance along {line}",
                end_avg_lux,
                profile.end_avg_lux,
                None,
            )
        )
    findings = [
        _level_finding(
            code=code, what=what, have_lux=have, need_lux=need, where_s_m=where, profile=profile
        )
        for code, what, have, need, where in levels
        if need is not None
    ]
    findings.append(_uniformity_finding(min_lux, max_lux, worst_s_m, profile))
    if end is not None:
        findings.append(
            Finding(
                code="route-end-model",
                severity=Severity.INFO,
                message="End-of-duration levels take each luminaire's emergency lumens times "
                "its end-of-duration share (1 unless given: a declared emergency ballast lumen "
                "factor is already the lowest output over the duration).",
                fix="For a module whose factor is only estimated, give the share of its "
                "output it keeps at the end of the duration.",
                source="IEC 61347-2-7 clause 20 (checked against a page quoting it)",
            )
        )
    if profile.max_route_width_m is not None and route.width_m > profile.max_route_width_m:
        findings.append(
            Finding(
                code="route-too-wide",
                severity=Severity.WARN,
                message=f"The route is {route.width_m:.2f} m wide; the centre-line method "
                f"covers routes up to {profile.max_route_width_m:.1f} m.",
                fix=f"Check it as strips of {profile.max_route_width_m:.1f} m, each with its "
                "own centre line, or as an open area.",
                source=profile.source,
            )
        )
    if profile.evaluation is Evaluation.CORE_AREA:
        findings.append(
            Finding(
                code="route-area-profile",
                severity=Severity.WARN,
                message=f"{profile.name} applies to the floor of an area less a 0.5 m border, "
                "not to a line; these figures cover the line only.",
                fix="Check the area's floor on a grid, with a qualified designer.",
                source=profile.source,
            )
        )
    if uses_default_distribution:
        findings.append(
            Finding(
                code="route-default-distribution",
                severity=Severity.INFO,
                message="Luminaires without a photometric file are taken as ideal cosine "
                "emitters sending every emergency lumen downward; a real body and diffuser "
                "lose some, so the figures may be high.",
                fix="Import the luminaire's LM-63 photometric file where one is available.",
                source="Lambert's cosine law; project method",
            )
        )
    findings.append(
        Finding(
            code="route-caution",
            severity=Severity.INFO,
            message=f"Figures include a maintenance factor of {maintenance_factor:.2f} and "
            f"must hold for the whole {profile.duration_min:.0f} min (check the pack run-time "
            "too). They support, and do not replace, a design checked by a qualified person "
            "under the codes that apply locally.",
            fix="Have the layout checked and the installation tested and certified as the "
            "local codes require.",
            source=CAUTION_SOURCE,
        )
    )
    return findings


def _uniformity_finding(
    min_lux: float, max_lux: float, worst_s_m: float, profile: Profile
) -> Finding:
    limit = profile.max_min_ratio
    if min_lux <= 0:
        return Finding(
            code="route-uniformity",
            severity=Severity.FAIL,
            message=f"A point at {worst_s_m:.1f} m gets no light, so the max:min ratio "
            f"cannot meet {limit:.0f}:1.",
            fix="Light every part of the route.",
            source=profile.source,
        )
    ratio = max_lux / min_lux
    if ratio <= limit:
        return Finding(
            code="route-uniformity",
            severity=Severity.INFO,
            message=f"The max:min ratio is {ratio:.1f}:1, within {limit:.0f}:1.",
            fix="None needed.",
            source=profile.source,
        )
    return Finding(
        code="route-uniformity",
        severity=Severity.FAIL,
        message=f"The max:min ratio is {ratio:.1f}:1, above the {limit:.0f}:1 allowed; the "
        f"darkest point is at {worst_s_m:.1f} m.",
        fix="Raise the darkest parts (convert a fixture near them) rather than adding light "
        "where it is already bright.",
        source=profile.source,
    )


def result_for_selection(
    route: Route,
    matrices: RouteMatrices,
    profile: Profile,
    selected: BoolArray,
    *,
    maintenance_factor: float = DEFAULT_MAINTENANCE_FACTOR,
) -> RouteResult:
    """Evaluate a route with only the selected luminaires lit.

    Parameters
    ----------
    route : Route
    matrices : RouteMatrices
        From :func:`route_matrices` for the same route and profile.
    profile : Profile
    selected : ndarray of bool
        Which luminaires (columns) are emergency luminaires.
    maintenance_factor : float
        Multiplies every illuminance, more than 0 and at most 1. [-]

    Returns
    -------
    RouteResult

    References
    ----------
    NFPA 101 §7.9.2.1; EN 1838:2013 §4.2 (see the module docstring).
    """
    _check_maintenance_factor(maintenance_factor)
    samples = matrices.samples
    chosen = np.asarray(selected, dtype=float)
    centre_lx = maintenance_factor * (matrices.centre_lx @ chosen)
    worst = int(np.argmin(centre_lx))
    min_lux, max_lux = float(centre_lx[worst]), float(np.max(centre_lx))
    avg_lux = float(samples.weights_m @ centre_lx / samples.length_m)
    band: tuple[float, float] | None = None
    if samples.band_s_m.size:
        band_lx = maintenance_factor * (matrices.band_lx @ chosen)
        band_worst = int(np.argmin(band_lx))
        band = (float(band_lx[band_worst]), float(samples.band_s_m[band_worst]))
    end: tuple[float, float, float] | None = None
    if profile.end_min_lux is not None or profile.end_avg_lux is not None:
        end_lx = maintenance_factor * (matrices.centre_lx @ (chosen * matrices.end_flux_factors))
        end_worst = int(np.argmin(end_lx))
        end = (
            float(end_lx[end_worst]),
            float(samples.s_m[end_worst]),
            float(samples.weights_m @ end_lx / samples.length_m),
        )
    findings = worst_first(
        _route_findings(
            route=route,
            profile=profile,
            maintenance_factor=maintenance_factor,
            min_lux=min_lux,
            max_lux=max_lux,
            worst_s_m=float(samples.s_m[worst]),
            avg_lux=avg_lux,
            band=band,
            end=end,
            uses_default_distribution=bool(np.any(matrices.default_distribution[selected])),
        )
    )
    return RouteResult(
        profile_id=profile.id,
        maintenance_factor=maintenance_factor,
        samples=tuple(
            RouteSample(float(s), float(x), float(y), float(e))
            for s, x, y, e in zip(samples.s_m, samples.x_m, samples.y_m, centre_lx, strict=True)
        ),
        min_lux=min_lux,
        max_lux=max_lux,
        avg_lux=avg_lux,
        max_min_ratio=max_lux / min_lux if min_lux > 0 else None,
        worst_s_m=float(samples.s_m[worst]),
        worst_lux=min_lux,
        band_min_lux=None if band is None else band[0],
        band_worst_s_m=None if band is None else band[1],
        end_min_lux=None if end is None else end[0],
        end_avg_lux=None if end is None else end[2],
        verdict=verdict_of(findings),
        findings=tuple(findings),
    )


def evaluate_route(
    route: Route,
    luminaires: Sequence[Luminaire],
    profile: Profile,
    *,
    maintenance_factor: float = DEFAULT_MAINTENANCE_FACTOR,
    step_m: float = DEFAULT_STEP_M,
) -> RouteResult:
    """Emergency illuminance along a route and its verdict against a profile.

    Parameters
    ----------
    route : Route
    luminaires : sequence of Luminaire
        The emergency luminaires (all lit).
    profile : Profile
        The area's requirement profile.
    maintenance_factor : float
        Multiplies every illuminance; 0.8 by default (common practice). [-]
    step_m : float
        Spacing of the samples along the centre line. [m]

    Returns
    -------
    RouteResult
        Min, max, length-weighted average, max:min, the darkest point, the
        central band and end-of-duration levels where the profile asks, and
        findings with the verdict.

    Raises
    ------
    InvalidInput
        A ValueError naming ``maintenance_factor`` or ``step_m`` out of range.

    References
    ----------
    NFPA 101 §7.9.2.1; EN 1838:2013 §4.2; IES definitions (inverse-square
    cosine law); maintenance factor 0.8: common practice.
    """
    _check_maintenance_factor(maintenance_factor)
    matrices = route_matrices(route, luminaires, profile, step_m=step_m)
    return result_for_selection(
        route,
        matrices,
        profile,
        np.ones(len(luminaires), dtype=bool),
        maintenance_factor=maintenance_factor,
    )
