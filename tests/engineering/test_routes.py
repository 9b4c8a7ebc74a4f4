"""Illuminance along an escape route and its verdict against a profile.

Sources of the checks:
- Inverse-square cosine law for a cosine (Lambertian) emitter: on the floor
  at horizontal distance r below height h, E = (flux / pi) * h**2 / (r**2 + h**2)**2
  (IES definitions with Lambert's law, I0 = flux / pi).
- Its integral along a line, for the average: the standard antiderivative
  of 1 / (r**2 + a**2)**2, r / (2 a**2 (r**2 + a**2)) + atan(r / a) / (2 a**3).
- Levels: NFPA 101 §7.9.2.1 (US egress) and EN 1838:2013 §4.2 (EU escape
  route), as held in server/engineering/profiles.py.
- Maintenance factor 0.8: common practice.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from server.engineering.errors import InvalidInput
from server.engineering.findings import Severity, Verdict
from server.engineering.photometry import LAMBERTIAN, parse_lm63
from server.engineering.profiles import get_profile
from server.engineering.routes import (
    MAX_SAMPLES,
    Luminaire,
    Route,
    RouteResult,
    evaluate_route,
    position_along_route_m,
    sample_route,
)

FLUX_LM = 1000.0
HEIGHT_M = 2.5
MF = 0.8  # common practice


def cosine_floor_lx(flux_lm: float, height_m: float, r_m: float) -> float:
    """Lambert + inverse-square cosine law, written out independently."""
    return flux_lm / math.pi * height_m**2 / (r_m**2 + height_m**2) ** 2


def one_luminaire_route(profile_id: str, **luminaire: float) -> RouteResult:
    fields = {
        "x_m": 5.0,
        "y_m": 0.0,
        "mounting_height_m": HEIGHT_M,
        "emergency_flux_lm": FLUX_LM,
    }
    fields.update(luminaire)
    return evaluate_route(
        Route(((0.0, 0.0), (10.0, 0.0)), 1.0),
        [Luminaire(**fields)],  # type: ignore[arg-type]
        get_profile(profile_id),
    )


def codes(result: RouteResult, severity: Severity) -> set[str]:
    return {finding.code for finding in result.findings if finding.severity is severity}


# --- geometry errors name the field -----------------------------------------


@pytest.mark.parametrize(
    ("points", "width_m", "field", "pattern"),
    [
        (((0.0, 0.0),), 1.0, "points", "at least two points"),
        ((), 1.0, "points", "at least two points"),
        (((1.0, 1.0), (1.0, 1.0)), 1.0, "points", "no length"),
        (((0.0, 0.0), (math.nan, 1.0)), 1.0, "points", "point 2 must be two numbers"),
        (((0.0, 0.0), (1.0, 2.0, 3.0)), 1.0, "points", "point 2 must be two"),
        (((0.0, 0.0), (2e5, 0.0)), 1.0, "points", "within 100 km"),
        (((0.0, 0.0), (5.0, 0.0)), 0.0, "width_m", "more than 0 m"),
        (((0.0, 0.0), (5.0, 0.0)), -1.0, "width_m", "more than 0 m"),
    ],
)
def test_route_geometry_errors(
    points: tuple[tuple[float, ...], ...], width_m: float, field: str, pattern: str
) -> None:
    with pytest.raises(InvalidInput, match=pattern) as caught:
        Route(points, width_m)  # type: ignore[arg-type]
    assert caught.value.field == field


@pytest.mark.parametrize(
    ("changes", "field", "pattern"),
    [
        ({"mounting_height_m": 0.0}, "mounting_height_m", "above the floor"),
        ({"mounting_height_m": -2.5}, "mounting_height_m", "above the floor"),
        ({"mounting_height_m": math.inf}, "mounting_height_m", "above the floor"),
        ({"emergency_flux_lm": -1.0}, "emergency_flux_lm", "0 or more"),
        ({"emergency_flux_lm": 1e300}, "emergency_flux_lm", "at most 10,000,000"),
        ({"mounting_height_m": 5000.0}, "mounting_height_m", "not a luminaire's"),
        ({"y_m": -1e6}, "y_m", "within 100 km"),
        ({"length_m": -0.1}, "length_m", "0 \\(a point source\\) or more"),
        ({"x_m": math.nan}, "x_m", "must be a number of metres"),
        ({"axis_deg": math.inf}, "axis_deg", "finite"),
        ({"end_flux_factor": 1.2}, "end_flux_factor", "between 0 and 1"),
    ],
)
def test_luminaire_errors(changes: dict[str, float], field: str, pattern: str) -> None:
    fields = {"x_m": 0.0, "y_m": 0.0, "mounting_height_m": 2.5, "emergency_flux_lm": 300.0}
    fields.update(changes)
    with pytest.raises(InvalidInput, match=pattern) as caught:
        Luminaire(**fields)  # type: ignore[arg-type]
    assert caught.value.field == field


def test_overflowing_sums_are_refused() -> None:
    # 1e7 lm at 1e-160 m: E = I / h**2 overflows; refused, naming the height.
    with pytest.raises(InvalidInput, match="almost on the floor") as caught:
        evaluate_route(
            Route(((0.0, 0.0), (10.0, 0.0)), 1.0),
            [Luminaire(5.0, 0.0, 1e-160, 1e7)],
            get_profile("us-egress"),
        )
    assert caught.value.field == "mounting_height_m"


def test_step_and_maintenance_factor_errors() -> None:
    route = Route(((0.0, 0.0), (10.0, 0.0)), 1.0)
    profile = get_profile("eu-escape-route")
    with pytest.raises(InvalidInput, match="step_m: the step along the route must be more"):
        evaluate_route(route, [], profile, step_m=0.0)
    long_route = Route(((0.0, 0.0), (2000.0, 0.0)), 1.0)
    with pytest.raises(InvalidInput, match=f"more than the {MAX_SAMPLES} allowed"):
        evaluate_route(long_route, [], profile, step_m=0.1)
    many = [Luminaire(float(x), 0.0, 2.5, 300.0) for x in range(300)]
    # 500 m: 5001 centre-line and 20004 band points, times 300 luminaires
    with pytest.raises(InvalidInput, match="use a larger step, or split the route"):
        evaluate_route(Route(((0.0, 0.0), (500.0, 0.0)), 1.0), many, profile)
    for factor in (0.0, 1.5, math.nan):
        with pytest.raises(InvalidInput, match="maintenance_factor"):
            evaluate_route(route, [], profile, maintenance_factor=factor)


# --- sampling -----------------------------------------------------------------


def test_samples_every_step_and_the_end() -> None:
    samples = sample_route(Route(((0.0, 0.0), (10.05, 0.0)), 1.0), step_m=0.1)
    assert samples.s_m.size == 102  # 0.0 ... 10.0 and the end at 10.05
    assert samples.s_m[-1] == pytest.approx(10.05)
    assert samples.s_m[-2] == pytest.approx(10.0)
    assert samples.weights_m.sum() == pytest.approx(10.05, rel=1e-12)
    assert samples.band_s_m.size == 0


def test_samples_follow_the_polyline_and_its_band() -> None:
    # An L: 4 m along x, then 3 m along y; 7 m in all.
    route = Route(((0.0, 0.0), (4.0, 0.0), (4.0, 3.0)), 2.0)
    samples = sample_route(route, step_m=0.5, band_fraction=0.5)
    assert route.length_m == pytest.approx(7.0)
    assert samples.s_m.size == 15
    at = int(np.argmin(abs(samples.s_m - 5.5)))
    assert (samples.x_m[at], samples.y_m[at]) == pytest.approx((4.0, 1.5))
    # EN 1838 central band: half of 2 m, so its edges are 0.5 m either side.
    offsets = np.hypot(
        samples.band_x_m - np.tile(samples.x_m, 4), samples.band_y_m - np.tile(samples.y_m, 4)
    )
    assert sorted(set(np.round(offsets, 9))) == [0.25, 0.5]


def test_position_along_route() -> None:
    route = Route(((0.0, 0.0), (10.0, 0.0), (10.0, 5.0)), 1.0)
    got = position_along_route_m(
        route, np.array([3.0, 11.0, 9.0, -2.0]), np.array([1.0, 2.0, 4.0, 0.0])
    )
    # plane geometry: nearest centre-line points (3,0), (10,2), (10,4), (0,0)
    assert got.tolist() == pytest.approx([3.0, 12.0, 14.0, 0.0])


# --- one luminaire, checked by hand --------------------------------------------


def test_one_luminaire_levels_by_hand() -> None:
    result = one_luminaire_route("eu-escape-route")
    # Straight below, r = 0: 0.8 * 1000/pi / 2.5**2 = 0.8 * 50.930 = 40.744 lx.
    assert result.max_lux == pytest.approx(40.744, abs=1e-3)
    assert result.max_lux == pytest.approx(MF * cosine_floor_lx(FLUX_LM, HEIGHT_M, 0.0), rel=1e-12)
    # Ends, r = 5 m: cos(theta) = 2.5 / 5.590 = 0.4472, cos**4 = 0.04;
    # 0.8 * 318.31 * 0.04 / 6.25 = 1.6297 lx.
    assert result.min_lux == pytest.approx(1.6297, abs=1e-4)
    assert result.worst_s_m in (0.0, 10.0)
    # max:min = 1 / cos**4 = 25 exactly
    assert result.max_min_ratio == pytest.approx(25.0, rel=1e-12)
    # Average: 0.8 * 1000/pi * (5/31.25 + atan(2)/2.5) / 10 = 0.8 * 318.31 * 0.60286 / 10
    # = 15.352 lx. Tolerance: the trapezoid rule on a 0.1 m step, about 1e-4.
    assert result.avg_lux == pytest.approx(15.352, rel=1e-3)
    centre = next(sample for sample in result.samples if sample.s_m == pytest.approx(5.0))
    assert centre.illuminance_lx == pytest.approx(result.max_lux)
    assert len(result.samples) == 101


def test_one_luminaire_meets_eu_escape_route() -> None:
    # EN 1838:2013 §4.2: centre line >= 1 lx, central band >= 0.5 lx, max:min <= 40.
    result = one_luminaire_route("eu-escape-route")
    assert result.verdict is Verdict.PASS
    assert codes(result, Severity.FAIL) == set()
    assert {"route-minimum", "route-central-band", "route-uniformity"} <= codes(
        result, Severity.INFO
    )
    # band edge 0.25 m off the line at the end: r**2 = 25.0625;
    # 0.8 * 318.31 * 6.25 / 31.3125**2 = 1.6233 lx
    assert result.band_min_lux == pytest.approx(1.6233, abs=1e-4)
    assert result.end_min_lux is None


def test_band_of_an_off_centre_luminaire() -> None:
    # Luminaire 1 m off the centre line of a 2 m route: the far band edge
    # (0.5 m the other side) at the route's end is 1.5 m across and 5 m along:
    # r**2 = 27.25, E = 0.8 * 318.31 * 6.25 / 33.5**2 = 1.4182 lx.
    result = evaluate_route(
        Route(((0.0, 0.0), (10.0, 0.0)), 2.0),
        [Luminaire(5.0, 1.0, HEIGHT_M, FLUX_LM)],
        get_profile("eu-escape-route"),
    )
    assert result.band_min_lux == pytest.approx(
        MF * cosine_floor_lx(FLUX_LM, HEIGHT_M, math.sqrt(27.25)), rel=1e-9
    )
    assert result.band_min_lux == pytest.approx(1.4182, abs=1e-4)
    assert result.band_min_lux < result.min_lux


def test_one_luminaire_us_egress_with_end_of_duration() -> None:
    # NFPA 101 §7.9.2.1: avg >= 1 fc (10.76 lx), min >= 0.1 fc (1.08 lx); at the
    # end avg >= 0.6 fc (6.46 lx), min >= 0.06 fc (0.65 lx); max:min <= 40.
    result = one_luminaire_route("us-egress")
    assert result.verdict is Verdict.PASS
    assert result.end_min_lux == pytest.approx(result.min_lux)  # end share 1 by default
    half = one_luminaire_route("us-egress", end_flux_factor=0.5)
    assert half.end_min_lux == pytest.approx(0.5 * half.min_lux, rel=1e-12)
    assert half.end_avg_lux == pytest.approx(0.5 * half.avg_lux, rel=1e-12)
    assert half.verdict is Verdict.PASS  # 0.81 lx min and 7.68 lx average
    # 0.4 of 15.35 lx = 6.14 lx < 6.46 lx at the end: fails, the minimum
    # (0.4 * 1.63 = 0.652 lx >= 0.646 lx) still passes.
    low = one_luminaire_route("us-egress", end_flux_factor=0.4)
    assert codes(low, Severity.FAIL) == {"route-end-average"}
    assert "route-end-minimum" in codes(low, Severity.INFO)
    assert low.verdict is Verdict.FAIL
    assert any(finding.code == "route-end-model" for finding in low.findings)


def test_us_average_too_low_fails() -> None:
    # Same luminaire at 690 lm: average 0.69 * 15.35 = 10.59 lx < 10.76 lx,
    # minimum 0.69 * 1.630 = 1.125 lx >= 1.076 lx.
    result = one_luminaire_route("us-egress", emergency_flux_lm=690.0)
    assert result.avg_lux == pytest.approx(0.69 * 15.352, rel=1e-3)
    assert codes(result, Severity.FAIL) == {"route-average"}
    message = next(f.message for f in result.findings if f.code == "route-average")
    assert "fc" in message


def test_long_route_fails_minimum_and_uniformity() -> None:
    # 30 m with one luminaire at 5 m: at 30 m, r = 25 m:
    # 0.8 * 318.31 * 6.25 / 631.25**2 = 0.0040 lx; ratio far above 40.
    result = evaluate_route(
        Route(((0.0, 0.0), (30.0, 0.0)), 1.0),
        [Luminaire(5.0, 0.0, HEIGHT_M, FLUX_LM)],
        get_profile("eu-escape-route"),
    )
    assert result.worst_s_m == pytest.approx(30.0)
    assert result.worst_lux == pytest.approx(0.0040, abs=5e-5)
    assert {"route-minimum", "route-uniformity", "route-central-band"} <= codes(
        result, Severity.FAIL
    )
    assert result.verdict is Verdict.FAIL


def test_no_light_at_all() -> None:
    result = evaluate_route(
        Route(((0.0, 0.0), (5.0, 0.0)), 1.0), [], get_profile("eu-escape-route")
    )
    assert result.min_lux == 0.0
    assert result.max_min_ratio is None
    assert "route-uniformity" in codes(result, Severity.FAIL)


def test_wide_route_and_area_profiles_warn() -> None:
    # EN 1838 §4.2 covers routes up to 2 m wide.
    wide = evaluate_route(
        Route(((0.0, 0.0), (10.0, 0.0)), 3.0),
        [Luminaire(5.0, 0.0, HEIGHT_M, FLUX_LM)],
        get_profile("eu-escape-route"),
    )
    assert "route-too-wide" in codes(wide, Severity.WARN)
    assert wide.verdict is Verdict.WARN
    # EN 1838 §4.3 is for an area's core, not a line.
    area = one_luminaire_route("eu-open-area")
    assert "route-area-profile" in codes(area, Severity.WARN)


def test_every_result_carries_the_caution() -> None:
    result = one_luminaire_route("eu-escape-route")
    caution = next(f for f in result.findings if f.code == "route-caution")
    assert "qualified person" in caution.message
    assert "0.80" in caution.message
    assert "route-default-distribution" in codes(result, Severity.INFO)


def test_findings_are_worst_first() -> None:
    result = one_luminaire_route("us-egress", end_flux_factor=0.4)
    order = [finding.severity for finding in result.findings]
    rank = {Severity.FAIL: 0, Severity.WARN: 1, Severity.ACTION: 2, Severity.INFO: 3}
    assert order == sorted(order, key=rank.__getitem__)


def test_lm63_luminaire_on_a_route() -> None:
    # The 1995 test file tabulates 1000/pi cos(theta); with 1000 emergency lumens
    # it matches the cosine default to the file's interpolation (within 1 %).
    photometry = parse_lm63((Path(__file__).parent / "data" / "cosine_1995.ies").read_text())
    from_file = one_luminaire_route("eu-escape-route", distribution=photometry)  # type: ignore[arg-type]
    default = one_luminaire_route("eu-escape-route", distribution=LAMBERTIAN)  # type: ignore[arg-type]
    assert from_file.max_lux == pytest.approx(default.max_lux, rel=1e-4)
    assert from_file.min_lux == pytest.approx(default.min_lux, rel=0.01)
    assert "route-default-distribution" not in codes(from_file, Severity.INFO)
