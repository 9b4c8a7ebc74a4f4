"""Requirement profiles: their figures against the sources, and the unit conversion."""

from __future__ import annotations

import pint
import pytest
from hypothesis import given
from hypothesis import strategies as st

from server.engineering import profiles

UNITS = pint.UnitRegistry()


def pint_fc_to_lux(value: float) -> float:
    # A foot-candle is a lumen per square foot (international foot, 0.3048 m).
    quantity = value * UNITS.lumen / UNITS.foot**2
    return float(quantity.to(UNITS.lux).magnitude)


def test_one_footcandle_against_a_units_library() -> None:
    # 1 fc = 10.7639 lx (pint's foot and lux definitions).
    assert profiles.footcandles_to_lux(1.0) == pytest.approx(pint_fc_to_lux(1.0), rel=1e-12)
    assert profiles.footcandles_to_lux(1.0) == pytest.approx(10.7639, abs=1e-4)


@given(st.floats(0.0, 1e4))
def test_conversion_round_trips_and_agrees_with_pint(value_fc: float) -> None:
    assert profiles.footcandles_to_lux(value_fc) == pytest.approx(pint_fc_to_lux(value_fc))
    assert profiles.lux_to_footcandles(profiles.footcandles_to_lux(value_fc)) == pytest.approx(
        value_fc
    )


def test_us_egress_profile() -> None:
    # NFPA 101 §7.9.2.1 (checked against a page quoting it): 90 min; initial
    # average 1 fc (10.76 lx) and minimum 0.1 fc (1.08 lx); at the end average
    # 0.6 fc (6.46 lx) and minimum 0.06 fc (0.65 lx); max:min 40:1.
    us = profiles.get_profile("us-egress")
    assert us.duration_min == 90
    assert us.avg_lux == pytest.approx(10.76, abs=0.01)
    assert us.min_lux == pytest.approx(1.08, abs=0.01)
    assert us.end_avg_lux == pytest.approx(6.46, abs=0.01)
    assert us.end_min_lux == pytest.approx(0.65, abs=0.01)
    assert us.max_min_ratio == 40


def test_eu_profiles() -> None:
    # EN 1838:2013 §4.2 escape routes: 1 lx on the centre line, 40:1, 1 h; §4.3
    # open areas 0.5 lx; §4.4 high-risk 15 lx and 10:1 (second-hand); BS 5266-1 /
    # EN 50172: 3 h for premises not evacuated at once (pages summarising them).
    route = profiles.get_profile("eu-escape-route")
    assert (route.min_lux, route.max_min_ratio, route.duration_min) == (1.0, 40.0, 60.0)
    assert route.central_band_min_share == 0.5 and route.max_route_width_m == 2.0
    assert profiles.get_profile("eu-3h-premises").duration_min == 180
    assert profiles.get_profile("eu-open-area").min_lux == 0.5
    high_risk = profiles.get_profile("eu-high-risk")
    assert (high_risk.min_lux, high_risk.max_min_ratio) == (15.0, 10.0)


def test_high_risk_level_is_ten_percent_but_not_below_15_lx() -> None:
    # EN 1838:2013 §4.4 (second-hand): 10 % of 500 lx = 50 lx; 10 % of 100 lx is
    # 10 lx, raised to the 15 lx floor.
    assert profiles.high_risk_min_lux(500.0) == pytest.approx(50.0)
    assert profiles.high_risk_min_lux(100.0) == pytest.approx(15.0)


def test_a_user_profile_is_validated() -> None:
    with pytest.raises(ValueError, match="duration_min"):
        profiles.make_profile(
            id="org-1",
            name="Ours",
            area_kind=profiles.AreaKind.OTHER,
            evaluation=profiles.Evaluation.PATH,
            duration_min=0.0,
            min_lux=1.0,
            max_min_ratio=40.0,
            source="ours",
        )
    with pytest.raises(ValueError, match="unknown profile"):
        profiles.get_profile("no-such-profile")


def test_points_of_emphasis_and_test_intervals() -> None:
    # EN 1838:2013 §4.1 (checked against a page quoting it): a luminaire within
    # 2 m of each point of emphasis; 5 lx vertical at first-aid points, fire
    # equipment and call points. NFPA 101 §7.9.3: a functional test of at least
    # 30 s at 30-day intervals and an annual full-duration test.
    assert profiles.POINTS_OF_EMPHASIS_RADIUS_M == 2.0
    assert profiles.SAFETY_EQUIPMENT_VERTICAL_LUX == 5.0
    us = profiles.get_profile("us-egress")
    assert (us.monthly_test_days, us.monthly_test_s, us.annual_test_days) == (30, 30.0, 365)
