"""Pack condition from duration tests: inversion, trend, forecast and reasons.

Check values come from ENGINEERING.md sections 2 and 4 (the Peukert check
values and the worn-pack load test, common practice), from hand arithmetic
written beside each case, and from numpy's least-squares polynomial fit as an
independent implementation of the trend.
"""

from __future__ import annotations

from datetime import date

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from server.engineering.batteries import Pack, PackReading, runtime_h
from server.engineering.condition import (
    CapacityEstimate,
    DurationTestResult,
    LoadTest,
    ReasonCode,
    Urgency,
    assess_pack,
    capacity_estimates,
    forecast_capacity,
    life_end_on,
    present_capacity_ah,
    runtime_threshold_capacity_ah,
)
from server.engineering.errors import InvalidInput
from server.engineering.vocabulary import Chemistry


def nicd(capacity_ah: float, *, k: float = 1.0, **overrides: object) -> Pack:
    return Pack(
        chemistry=Chemistry.NICD,
        cells=4,
        capacity_ah=capacity_ah,
        rated_hours=5.0,
        peukert_k=k,
        **overrides,  # type: ignore[arg-type]
    )


@given(
    capacity_ah=st.floats(0.5, 20.0),
    current_a=st.floats(0.05, 10.0),
    rated_hours=st.floats(1.0, 20.0),
    peukert_k=st.floats(1.0, 1.6),
)
def test_inversion_round_trips_the_forward_model(
    capacity_ah: float, current_a: float, rated_hours: float, peukert_k: float
) -> None:
    # Forward model: batteries.runtime_h (Peukert with the rated hours); the
    # inversion must give back the capacity it started from.
    observed_h = runtime_h(capacity_ah, current_a, rated_hours=rated_hours, peukert_k=peukert_k)
    recovered = present_capacity_ah(
        observed_h * 60.0, current_a, rated_hours=rated_hours, peukert_k=peukert_k
    )
    assert recovered == pytest.approx(capacity_ah, rel=1e-9)


def test_inversion_matches_the_engineering_check_value() -> None:
    # ENGINEERING.md §2: 1.7 Ah NiCd, 1.4 A, k = 1.10: t = 5 * (1.7 / 7.0) ** 1.10 h
    # = 1.054 h (63.2 min). Inverting the rounded 63.2 min gives 1.7 Ah within the
    # rounding of the minutes (0.05 min of 63.2 is 0.08 %, times 1/k).
    assert present_capacity_ah(63.2, 1.4, rated_hours=5.0, peukert_k=1.10) == pytest.approx(
        1.7, rel=1e-3
    )
    # With k = 1 it is plain I * t: 1.4 A * 72.9 min / 60 = 1.701 Ah (§2: 72.9 min).
    assert present_capacity_ah(72.9, 1.4, rated_hours=5.0, peukert_k=1.0) == pytest.approx(
        1.4 * 72.9 / 60
    )


def test_runtime_threshold() -> None:
    # k = 1: 90 min at 1.4 A needs 1.4 * 1.5 = 2.1 Ah.
    assert runtime_threshold_capacity_ah(90, 1.4, rated_hours=5.0, peukert_k=1.0) == pytest.approx(
        2.1
    )
    # k = 1.1: C = I * H * (t / H) ** (1 / k) = 1.4 * 5 * (1.5 / 5) ** (1 / 1.1)
    # = 7 * 0.3 ** 0.90909 = 7 * exp(-1.20397 / 1.1) = 7 * 0.33470 = 2.3429 Ah.
    assert runtime_threshold_capacity_ah(90, 1.4, rated_hours=5.0, peukert_k=1.1) == pytest.approx(
        2.3429, rel=1e-4
    )


HAND_PACK = nicd(3.2)  # 4-cell NiCd, 3.2 Ah at the 5 h rate, k = 1 for hand arithmetic
HAND_TESTS = [
    DurationTestResult(date(2027, 1, 1), observed_min=120.0, ran_to_cutoff=True),
    DurationTestResult(date(2028, 1, 1), observed_min=108.0, ran_to_cutoff=True),
]


def test_forecast_against_a_hand_worked_example() -> None:
    # Hand-worked (k = 1, so C = I * t), module drawing 1.5 A, 25 degC (f_temp = 1):
    #   2027-01-01: 120 min -> 1.5 A * 2.0 h = 3.0 Ah
    #   2028-01-01: 108 min -> 1.5 A * 1.8 h = 2.7 Ah   (365 days later)
    #   the line loses 0.3 Ah per 365 days.
    # Required 90 min at 1.5 A needs 1.5 * 1.5 = 2.25 Ah: 0.75 Ah below the first
    #   test, 0.75 / 0.3 * 365 = 912.5 days after 2027-01-01, rounded down to day 912:
    #   2027-01-01 + 365 = 2028-01-01, + 366 (2028 is a leap year) = 2029-01-01,
    #   + 181 (Jan 31, Feb 28, Mar 31, Apr 30, May 31, Jun 30) = 2029-07-01.
    # End of life at 80 % of 3.2 Ah = 2.56 Ah: 0.44 / 0.3 * 365 = 535.3 days, day 535:
    #   2028-01-01 + 170 days (31 + 29 + 31 + 30 + 31 = 152 to 1 June, + 18) = 2028-06-19.
    estimates = capacity_estimates(HAND_TESTS, pack=HAND_PACK, current_a=1.5, ambient_c=25.0)
    assert [round(item.capacity_ah, 9) for item in estimates] == [3.0, 2.7]
    forecast = forecast_capacity(
        estimates, pack=HAND_PACK, current_a=1.5, ambient_c=25.0, required_min=90.0
    )
    assert forecast.runtime_threshold_ah == pytest.approx(2.25)
    assert forecast.end_of_life_ah == pytest.approx(2.56)
    assert forecast.runtime_short_on == date(2029, 7, 1)
    assert forecast.end_of_life_on == date(2028, 6, 19)
    assert forecast.trend is not None
    assert forecast.trend.slope_ah_per_year == pytest.approx(-0.3 * 365.25 / 365)


def test_trend_agrees_with_numpy_least_squares() -> None:
    # Independent implementation: numpy.polyfit of degree 1 on the same points.
    tests = [
        DurationTestResult(date(2027, 1, 10), 131.0, True),
        DurationTestResult(date(2027, 7, 3), 124.0, True),
        DurationTestResult(date(2028, 1, 20), 119.5, True),
        DurationTestResult(date(2028, 9, 1), 104.0, True),
    ]
    pack = nicd(4.0, k=1.1)
    estimates = capacity_estimates(tests, pack=pack, current_a=1.2, ambient_c=25.0)
    forecast = forecast_capacity(
        estimates, pack=pack, current_a=1.2, ambient_c=25.0, required_min=90.0
    )
    years = [(item.tested_on - date(2027, 1, 10)).days / 365.25 for item in estimates]
    slope, intercept = np.polyfit(years, [item.capacity_ah for item in estimates], 1)
    assert forecast.trend is not None
    assert forecast.trend.slope_ah_per_year == pytest.approx(slope)
    assert forecast.trend.intercept_ah == pytest.approx(intercept)


def test_tests_stopped_with_the_lamp_lit_are_lower_bounds_outside_the_fit() -> None:
    stopped = [
        DurationTestResult(date(2027, 1, 1), 90.0, ran_to_cutoff=False),
        DurationTestResult(date(2028, 1, 1), 90.0, ran_to_cutoff=False),
    ]
    estimates = capacity_estimates(stopped, pack=HAND_PACK, current_a=1.5, ambient_c=25.0)
    assert all(item.lower_bound for item in estimates)
    forecast = forecast_capacity(
        estimates, pack=HAND_PACK, current_a=1.5, ambient_c=25.0, required_min=90.0
    )
    assert forecast.trend is None and forecast.runtime_short_on is None


def test_one_measurement_runs_the_line_from_rated_capacity_at_installation() -> None:
    # Installed 2027-01-01 at the rated 3.2 Ah (assumed); one test a year later shows
    # 1.5 A * 1.92 h = 2.88 Ah (115.2 min): 0.32 Ah lost in 365 days. The 2.25 Ah
    # threshold is 0.95 Ah below 3.2: 0.95 / 0.32 * 365 = 1083.6 days, rounded down 1083:
    # 2027-01-01 + 365 = 2028-01-01, + 366 = 2029-01-01, + 352 = 2029-12-19.
    tests = [DurationTestResult(date(2028, 1, 1), 115.2, ran_to_cutoff=True)]
    estimates = capacity_estimates(tests, pack=HAND_PACK, current_a=1.5, ambient_c=25.0)
    forecast = forecast_capacity(
        estimates,
        pack=HAND_PACK,
        current_a=1.5,
        ambient_c=25.0,
        required_min=90.0,
        installed_on=date(2027, 1, 1),
    )
    assert forecast.assumed_start
    assert forecast.runtime_short_on == date(2029, 12, 19)


def test_assessment_lists_reasons_earliest_first() -> None:
    assessment = assess_pack(
        pack=HAND_PACK,
        current_a=1.5,
        ambient_c=25.0,
        required_min=90.0,
        tests=HAND_TESTS,
        installed_on=date(2026, 12, 1),
    )
    codes = [(reason.code, reason.due_on) for reason in assessment.reasons]
    # Service life: NiCd 4 years (IEC 61347-2-7, checked against pages quoting it),
    # int(4 * 365.25) = 1461 days after 2026-12-01 = 2030-12-01 (2028 is a leap year).
    assert codes == [
        (ReasonCode.CAPACITY_FORECAST, date(2028, 6, 19)),
        (ReasonCode.RUNTIME_FORECAST, date(2029, 7, 1)),
        (ReasonCode.SERVICE_LIFE, date(2030, 12, 1)),
    ]
    assert assessment.due_on == date(2028, 6, 19)
    # The run-time the trend predicts on the forecast day is the required 90 min.
    assert assessment.forecast.runtime_min_on(
        date(2029, 7, 1), current_a=1.5, rated_hours=5.0, peukert_k=1.0
    ) == pytest.approx(90.0, abs=0.05)


def test_short_duration_and_low_capacity_are_due_on_the_test_day() -> None:
    # 70 min at 1.5 A = 1.75 Ah = 55 % of 3.2 Ah: short of 90 min and below 80 %.
    tests = [DurationTestResult(date(2027, 6, 1), 70.0, ran_to_cutoff=True)]
    assessment = assess_pack(
        pack=HAND_PACK,
        current_a=1.5,
        ambient_c=25.0,
        required_min=90.0,
        tests=tests,
        installed_on=None,
    )
    reasons = {reason.code: reason for reason in assessment.reasons}
    assert reasons[ReasonCode.SHORT_DURATION].due_on == date(2027, 6, 1)
    assert reasons[ReasonCode.LOW_CAPACITY].due_on == date(2027, 6, 1)
    assert "55%" in reasons[ReasonCode.LOW_CAPACITY].message
    assert ReasonCode.SERVICE_LIFE not in reasons
    assert "installation date unknown: no age check" in assessment.assumptions


def test_worn_pack_sags_below_cutoff_whatever_its_open_circuit_voltage() -> None:
    # ENGINEERING.md §2 check value (common practice): a 4-cell NiCd pack at 5.2 V
    # open circuit falling to 3.0 V across 9.1 ohm (0.33 A) has
    # R = 2.2 / (3.0 / 9.1) = 6.67 ohm (about 7), and at a 1.4 A draw collapses
    # far below the 4.0 V cut-off (4 cells x 1.0 V).
    load_test = LoadTest(date(2027, 3, 1), PackReading(5.2, 3.0, load_ohm=9.1))
    assessment = assess_pack(
        pack=nicd(1.7),
        current_a=1.4,
        ambient_c=25.0,
        required_min=90.0,
        tests=[],
        installed_on=date(2026, 1, 1),
        load_test=load_test,
    )
    assert assessment.internal_ohm == pytest.approx(6.673, rel=1e-3)
    assert assessment.cutoff_v == pytest.approx(4.0)
    assert assessment.terminal_v == 0.0
    first = assessment.reasons[0]
    assert first.code is ReasonCode.SAG_BELOW_CUTOFF and first.due_on == date(2027, 3, 1)


@pytest.mark.parametrize(
    ("loaded_v", "expected"),
    [
        # 3 A load on a 5.2 V pack, new resistance 0.05 ohm (common practice: a healthy
        # pack of this size delivers about 3 A with R well under 0.2 ohm).
        (5.2 - 3 * 0.09, None),  # 0.09 ohm: 1.8x new, fine
        (5.2 - 3 * 0.15, ReasonCode.RESISTANCE_WATCH),  # 3x new: watch
        (5.2 - 3 * 0.25, ReasonCode.HIGH_RESISTANCE),  # 5x new: replace
    ],
)
def test_resistance_against_new(loaded_v: float, expected: ReasonCode | None) -> None:
    load_test = LoadTest(date(2027, 3, 1), PackReading(5.2, loaded_v, load_a=3.0))
    assessment = assess_pack(
        pack=nicd(4.0, new_internal_ohm=0.05),
        current_a=1.4,
        ambient_c=25.0,
        required_min=90.0,
        tests=[],
        installed_on=None,
        load_test=load_test,
    )
    codes = {reason.code for reason in assessment.reasons}
    if expected is None:
        assert not codes & {ReasonCode.RESISTANCE_WATCH, ReasonCode.HIGH_RESISTANCE}
    else:
        assert expected in codes
    watch = [reason for reason in assessment.reasons if reason.urgency is Urgency.WATCH]
    assert all(reason.due_on is None for reason in watch)


def test_heat_shortens_the_service_life() -> None:
    # Halved per 10 K above the marked temperature (generic Arrhenius rule, ENGINEERING.md
    # §2): marked 40 degC, living at 50 degC, 4 years -> 2 years, 730 days (int(2 * 365.25)).
    assessment = assess_pack(
        pack=nicd(4.0, max_ambient_c=40.0),
        current_a=1.0,
        ambient_c=50.0,
        required_min=90.0,
        tests=[],
        installed_on=date(2027, 1, 1),
    )
    assert assessment.service_life_years == pytest.approx(2.0)
    # 2027-01-01 + 730 days: + 365 = 2028-01-01, + 365 more = 2028-12-31 (2028 has 366).
    assert assessment.life_ends_on == date(2028, 12, 31)
    assert "shortened from 4 years" in assessment.reasons[0].message


def test_bad_input_is_refused_with_the_field_named() -> None:
    with pytest.raises(InvalidInput, match="observed_min"):
        present_capacity_ah(0.0, 1.0, rated_hours=5.0, peukert_k=1.1)
    with pytest.raises(InvalidInput, match="ambient_c"):
        capacity_estimates(HAND_TESTS, pack=HAND_PACK, current_a=1.5, ambient_c=70.0)
    with pytest.raises(InvalidInput, match="service_life_years"):
        life_end_on(date(2027, 1, 1), 0.0)


def test_share_of_rated_uses_the_temperature_factor() -> None:
    # NiCd at 0 degC keeps 85 % (ENGINEERING.md §2 table, common practice, from memory):
    # 120 min at 1.5 A = 3.0 Ah against 3.2 * 0.85 = 2.72 Ah available -> 110 %.
    estimates = capacity_estimates(HAND_TESTS[:1], pack=HAND_PACK, current_a=1.5, ambient_c=0.0)
    assert isinstance(estimates[0], CapacityEstimate)
    assert estimates[0].share_of_rated == pytest.approx(3.0 / (3.2 * 0.85))
