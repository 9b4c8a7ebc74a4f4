"""Battery packs: run-time, charge, internal resistance, life and date codes.

Each check value names its source beside it. "common practice" marks a fact
of the trade; "from memory" a value recalled, not checked against the text.
"""

from __future__ import annotations

import math
from datetime import date

import pytest
from hypothesis import given
from hypothesis import strategies as st

from server.engineering import batteries
from server.engineering.batteries import (
    CHEMISTRY_DEFAULTS,
    Pack,
    PackReading,
    ResistanceCondition,
)
from server.engineering.errors import InvalidInput
from server.engineering.vocabulary import Chemistry, DateCodeFormat

NICD = Chemistry.NICD

# ---- Peukert run-time ----


def test_k_of_one_is_capacity_over_current() -> None:
    # Peukert's law with k = 1 is the plain ampere-hour balance (battery
    # handbooks): 1.7 Ah / 1.4 A = 1.2143 h = 72.86 min.
    hours = batteries.peukert_runtime_h(1.7, 1.4, rated_hours=5.0, peukert_k=1.0)
    assert hours == pytest.approx(1.7 / 1.4)
    assert hours * 60 == pytest.approx(72.9, abs=0.05)


def test_peukert_exponent_shortens_a_heavy_discharge() -> None:
    # Peukert's law written with the rated hours (battery handbooks):
    # t = 5 h * (1.7 Ah / (1.4 A * 5 h)) ** 1.10 = 5 * 0.24286 ** 1.1
    #   = 5 * exp(1.1 * ln 0.24286) = 5 * exp(-1.5567) = 5 * 0.21085 = 1.054 h (63.2 min).
    hours = batteries.peukert_runtime_h(1.7, 1.4, rated_hours=5.0, peukert_k=1.10)
    assert hours == pytest.approx(1.054, abs=0.001)
    assert hours * 60 == pytest.approx(63.2, abs=0.05)


def test_at_the_rated_current_peukert_gives_the_rated_hours() -> None:
    # Definition of the rated capacity: C at the H-hour rate means the current
    # C / H lasts H hours whatever k is (battery handbooks).
    for k in (1.0, 1.1, 1.3):
        assert batteries.peukert_runtime_h(
            4.0, 4.0 / 5.0, rated_hours=5.0, peukert_k=k
        ) == pytest.approx(5.0)


def test_a_small_pack_on_a_7_w_module_cannot_meet_90_min_even_new() -> None:
    # Common practice: a 4.8 V NiCd pack feeding a module that draws about 7 W
    # (about 1.4 A); a 1.7 Ah pack of that kind cannot meet 90 min even new.
    pack = Pack(chemistry=NICD, cells=4, capacity_ah=1.7)
    assert pack.nominal_v_used == pytest.approx(4.8)  # 4 cells x 1.2 V (IEC 61951-1)
    estimate = batteries.estimate_runtime(pack, batteries.battery_current_a(7.0, 4.8), 25.0)
    assert estimate.current_a == pytest.approx(1.46, abs=0.01)
    assert estimate.runtime_new_h * 60 < 90
    assert estimate.runtime_end_of_life_h < estimate.runtime_new_h


def test_end_of_life_uses_80_percent_of_capacity() -> None:
    # IEEE Std 1115 aging factor 1.25 = design for 80 % at end of life (from memory).
    # With k = 1 the run-time scales with capacity: 0.8 x the new run-time.
    pack = Pack(chemistry=NICD, cells=4, capacity_ah=4.0, peukert_k=1.0)
    estimate = batteries.estimate_runtime(pack, 1.0, 25.0)
    assert estimate.runtime_new_h == pytest.approx(4.0)
    assert estimate.runtime_end_of_life_h == pytest.approx(3.2)
    assert batteries.END_OF_LIFE_FACTOR == 0.80


def test_peukert_exponent_outside_its_range_is_refused() -> None:
    with pytest.raises(InvalidInput, match="peukert_k"):
        batteries.peukert_runtime_h(1.0, 1.0, rated_hours=5.0, peukert_k=0.9)
    with pytest.raises(InvalidInput, match="capacity_ah"):
        Pack(chemistry=NICD, cells=4, capacity_ah=0.0)
    with pytest.raises(InvalidInput, match="cells"):
        Pack(chemistry=NICD, cells=0, capacity_ah=1.0)


@given(
    capacity_ah=st.floats(0.1, 50.0),
    extra_ah=st.floats(0.0, 50.0),
    current_a=st.floats(0.01, 20.0),
    k=st.floats(1.0, 1.6),
)
def test_more_capacity_never_shortens_the_runtime(
    capacity_ah: float, extra_ah: float, current_a: float, k: float
) -> None:
    def runtime(c: float) -> float:
        return batteries.runtime_h(c, current_a, rated_hours=5.0, peukert_k=k)

    assert runtime(capacity_ah + extra_ah) >= runtime(capacity_ah)


@given(capacity_ah=st.floats(0.1, 50.0), current_a=st.floats(0.01, 20.0), hours=st.floats(0.5, 20))
def test_k_one_is_plain_c_over_i_for_any_rate(
    capacity_ah: float, current_a: float, hours: float
) -> None:
    assert batteries.runtime_h(
        capacity_ah, current_a, rated_hours=hours, peukert_k=1.0
    ) == pytest.approx(capacity_ah / current_a)


@given(
    capacity_ah=st.floats(0.1, 50.0),
    current_a=st.floats(0.01, 20.0),
    k=st.floats(1.0, 1.6),
)
def test_a_duration_test_inverts_the_runtime(
    capacity_ah: float, current_a: float, k: float
) -> None:
    # Round trip: the capacity found from an observed time gives that time back.
    hours = batteries.runtime_h(capacity_ah, current_a, rated_hours=5.0, peukert_k=k)
    found = batteries.capacity_from_duration_test_ah(hours, current_a, rated_hours=5.0, peukert_k=k)
    assert found == pytest.approx(capacity_ah, rel=1e-9)


# ---- temperature ----


def test_nicd_capacity_factor_table() -> None:
    # -20 degC 0.55: cell makers' pages (typical); 0 degC 0.85, 20-30 degC 1.00,
    # 50 degC 0.90: common practice, from memory.
    factor = batteries.temperature_capacity_factor
    assert factor(NICD, -20.0) == pytest.approx(0.55)
    assert factor(NICD, 0.0) == pytest.approx(0.85)
    assert factor(NICD, 25.0) == pytest.approx(1.00)
    assert factor(NICD, 50.0) == pytest.approx(0.90)
    # Linear between the points: 10 degC is half-way from 0.85 to 1.00 = 0.925.
    assert factor(NICD, 10.0) == pytest.approx(0.925)
    # 40 degC is half-way from 1.00 (30 degC) to 0.90 (50 degC) = 0.95.
    assert factor(NICD, 40.0) == pytest.approx(0.95)


def test_capacity_factor_outside_the_table_names_the_temperature() -> None:
    with pytest.raises(InvalidInput, match="ambient_c.*-20 to 50 degC"):
        batteries.temperature_capacity_factor(NICD, 60.0)


def test_a_cold_ceiling_shortens_the_runtime() -> None:
    pack = Pack(chemistry=NICD, cells=4, capacity_ah=4.0, peukert_k=1.0)
    warm = batteries.estimate_runtime(pack, 1.0, 25.0)
    cold = batteries.estimate_runtime(pack, 1.0, 0.0)
    # k = 1: run-time scales with f_temp, 0.85 at 0 degC (common practice, from memory).
    assert cold.runtime_new_h == pytest.approx(0.85 * warm.runtime_new_h)


# ---- depth of discharge ----


def test_discharge_limits_by_rated_duration() -> None:
    # IEC 60598-2-22 Annex A as summarised second hand: about 0.6 C for 1 h,
    # 0.4 C for 90 min, 0.25 C for 3 h.
    assert batteries.max_discharge_c_rate(60) == pytest.approx(0.60)
    assert batteries.max_discharge_c_rate(90) == pytest.approx(0.40)
    assert batteries.max_discharge_c_rate(180) == pytest.approx(0.25)
    # The same summary's example: 4.5 Ah at 1.125 A for 3 h is exactly 0.25 C.
    assert pytest.approx(batteries.max_discharge_c_rate(180)) == 1.125 / 4.5


# ---- charge ----


def test_recharge_of_a_small_pack_at_a_fast_rate() -> None:
    # Common practice: a 1.2 Ah pack charged at 0.8 A is full in about 1.5 h
    # plus losses, roughly 1.7-1.9 h. Here 0.8 / 1.2 = 0.67 C, factor 1.2:
    # 1.2 Ah * 1.2 / 0.8 A = 1.8 h.
    factor = batteries.charge_factor(NICD, 0.8 / 1.2)
    assert factor == pytest.approx(1.2)
    hours = batteries.recharge_time_h(1.2, 0.8, factor)
    assert 1.7 <= hours <= 1.9


def test_c_over_10_charge_fits_inside_the_standard_16_h_charge() -> None:
    # Cell makers' pages: charge factor 1.4 at C/10; the IEC method charges
    # 0.1 C for 16 h (1.6 C put in), so our 14 h must fit inside those 16 h.
    factor = batteries.charge_factor(NICD, 0.1)
    assert factor == pytest.approx(1.4)
    assert batteries.recharge_time_h(4.0, 0.4, factor) == pytest.approx(14.0)
    assert batteries.recharge_time_h(4.0, 0.4, factor) <= 16.0


def test_charge_factor_falls_with_rate_between_the_points() -> None:
    # Linear from 1.4 at 0.1 C to 1.2 at 0.5 C (common practice): 0.3 C gives 1.3.
    assert batteries.charge_factor(NICD, 0.3) == pytest.approx(1.3)
    assert batteries.charge_factor(NICD, 2.0) == pytest.approx(1.2)
    assert batteries.charge_factor(Chemistry.LIFEPO4, 0.5) == pytest.approx(1.05)


def test_charge_factor_outside_its_range_is_refused() -> None:
    with pytest.raises(InvalidInput, match="charge_factor"):
        batteries.recharge_time_h(1.0, 0.1, 3.0)


def test_trickle_window_of_nicd() -> None:
    # Cell makers' pages: trickle 0.05-0.1 C after full charge; high-temperature
    # emergency cells C/20-C/30 (from memory): the window is C/30 to C/10.
    nicd = CHEMISTRY_DEFAULTS[NICD]
    assert nicd.trickle_max_c_rate == pytest.approx(0.1)
    assert nicd.trickle_min_c_rate == pytest.approx(1 / 30)
    assert CHEMISTRY_DEFAULTS[Chemistry.LIFEPO4].trickle_max_c_rate is None


# ---- internal resistance and sag ----


def test_a_worn_four_cell_pack_on_a_9_1_ohm_resistor() -> None:
    # Common practice: a 4-cell NiCd pack whose voltage falls below 3 V with a
    # 9.1 ohm resistor across it (about 0.3 A) is worn out. With V_oc = 5.2 V and
    # 3.0 V loaded: I = 3.0 / 9.1 = 0.330 A, R = (5.2 - 3.0) / 0.330 = 6.67 ohm
    # ("about 7 ohm").
    resistance = batteries.internal_resistance_ohm(5.2, 3.0, load_ohm=9.1)
    assert resistance == pytest.approx(2.2 / (3.0 / 9.1))
    assert resistance == pytest.approx(7.0, abs=0.5)
    # At the module's 1.4 A draw: 5.2 - 1.4 * 6.67 < 0, far below the 4.0 V cut-off.
    assert batteries.terminal_voltage_v(5.2, 1.4, resistance) < 4.0


def test_a_healthy_pack_delivers_3_a_with_little_drop() -> None:
    # Common practice: a healthy pack of the same size delivers about 3 A with
    # little drop (R_int well under 0.2 ohm). 5.3 V open, 4.9 V at 3 A: 0.133 ohm.
    resistance = batteries.internal_resistance_ohm(5.3, 4.9, load_a=3.0)
    assert resistance == pytest.approx(0.4 / 3.0)
    assert resistance < 0.2
    assert batteries.terminal_voltage_v(5.3, 1.4, resistance) == pytest.approx(5.3 - 1.4 * 0.4 / 3)


def test_loaded_reading_above_open_circuit_is_refused() -> None:
    with pytest.raises(InvalidInput, match="loaded_v"):
        PackReading(open_circuit_v=5.0, loaded_v=5.2, load_a=1.0)
    with pytest.raises(InvalidInput, match="load_a.*not both"):
        PackReading(open_circuit_v=5.0, loaded_v=4.0, load_a=1.0, load_ohm=4.0)


@given(
    open_v=st.floats(1.0, 60.0),
    drop=st.floats(0.0, 1.0),
    load_a=st.floats(0.01, 10.0),
    draw_a=st.floats(0.0, 10.0),
)
def test_terminal_voltage_never_exceeds_open_circuit_nor_falls_below_zero(
    open_v: float, drop: float, load_a: float, draw_a: float
) -> None:
    loaded_v = max(open_v * (1 - drop), 1e-3)
    resistance = batteries.internal_resistance_ohm(open_v, loaded_v, load_a=load_a)
    assert 0.0 <= batteries.terminal_voltage_v(open_v, draw_a, resistance) <= open_v


def test_resistance_against_the_new_value() -> None:
    # Common practice: up to 2x new fine, 2-4x watch, above 4x replace.
    assert batteries.resistance_condition(0.10, 0.05) is ResistanceCondition.OK
    assert batteries.resistance_condition(0.15, 0.05) is ResistanceCondition.WATCH
    assert batteries.resistance_condition(0.25, 0.05) is ResistanceCondition.REPLACE


# ---- life ----


def test_design_life_holds_up_to_the_marked_temperature_then_halves_per_10_k() -> None:
    # IEC 61347-2-7: 4 years at the marked temperature (checked against pages);
    # above it the generic Arrhenius rule halves life per 10 K (common practice).
    assert batteries.service_life_years(4.0, 40.0, 50.0) == pytest.approx(4.0)
    assert batteries.service_life_years(4.0, 60.0, 50.0) == pytest.approx(2.0)
    # 5 K over: 4 * 0.5 ** 0.5 = 2.83 years.
    assert batteries.service_life_years(4.0, 55.0, 50.0) == pytest.approx(4 / math.sqrt(2))


def test_the_life_factor_is_configurable_per_chemistry() -> None:
    # A vented-NiCd manual: about 20 % less life per 9 K. A halving step h with
    # 0.5 ** (9 / h) = 0.8 is h = 9 * ln 2 / ln 1.25 = 27.96 K.
    halving = 9 * math.log(2) / math.log(1.25)
    assert batteries.service_life_years(4.0, 34.0, 25.0, life_halving_c=halving) == pytest.approx(
        3.2
    )


@given(
    cooler_c=st.floats(-20.0, 90.0),
    rise=st.floats(0.0, 40.0),
    rated_c=st.floats(20.0, 70.0),
)
def test_a_hotter_ceiling_never_lengthens_life(
    cooler_c: float, rise: float, rated_c: float
) -> None:
    cooler = batteries.service_life_years(4.0, cooler_c, rated_c)
    hotter = batteries.service_life_years(4.0, cooler_c + rise, rated_c)
    assert hotter <= cooler


def test_pack_age() -> None:
    # 2020-01-01 to 2024-01-01 is 1461 days = 4 years of 365.25 days.
    assert batteries.pack_age_years(date(2020, 1, 1), date(2024, 1, 1)) == pytest.approx(4.0)
    with pytest.raises(InvalidInput, match="installed_on"):
        batteries.pack_age_years(date(2030, 1, 1), date(2024, 1, 1))


# ---- date codes ----

TODAY = date(2025, 6, 1)


def test_iso_week_reading() -> None:
    # ISO 8601: week 1 of 2019 starts on Monday 31 December 2018; 2020 has 53
    # weeks, its week 53 starting on Monday 28 December 2020 (from memory).
    assert batteries.read_date_code("1901", DateCodeFormat.YYWW, TODAY).made_on == date(
        2018, 12, 31
    )
    assert batteries.read_date_code("5320", DateCodeFormat.WWYY, TODAY).made_on == date(
        2020, 12, 28
    )
    with pytest.raises(InvalidInput, match="week 53 does not exist in 2021"):
        batteries.read_date_code("2153", DateCodeFormat.YYWW, TODAY)


def test_an_ambiguous_code_warns_with_the_other_readings() -> None:
    reading = batteries.read_date_code("1203", DateCodeFormat.YYWW, TODAY)
    assert reading.made_on == date(2012, 1, 16)  # ISO week 3 of 2012 starts on Monday 16 Jan
    formats = {fmt for fmt, _ in reading.alternatives}
    assert formats == {DateCodeFormat.WWYY, DateCodeFormat.MMYY, DateCodeFormat.YYMM}
    assert dict(reading.alternatives)[DateCodeFormat.MMYY] == date(2003, 12, 1)
    assert reading.warning is not None and "December 2003" in reading.warning


def test_a_code_only_one_format_can_read_gives_no_warning() -> None:
    # 2530: YYWW week 30 of 2025; as WWYY, 2030 is in the future (so 1930, too
    # old); as MMYY or YYMM, months 25 and 30 do not exist.
    reading = batteries.read_date_code("2530", DateCodeFormat.YYWW, date(2025, 8, 1))
    assert reading.made_on == date(2025, 7, 21)
    assert reading.alternatives == ()
    assert reading.warning is None


def test_readings_in_the_same_month_are_not_an_ambiguity() -> None:
    # YYWW 1201 is Monday 2 January 2012 and YYMM 1201 is January 2012: same month.
    reading = batteries.read_date_code("1201", DateCodeFormat.YYMM, TODAY)
    assert DateCodeFormat.YYWW not in dict(reading.alternatives)


def test_bad_codes_are_refused_with_a_reason() -> None:
    with pytest.raises(InvalidInput, match="four digits"):
        batteries.read_date_code("12A4", DateCodeFormat.YYWW, TODAY)
    with pytest.raises(InvalidInput, match="month 13"):
        batteries.read_date_code("1312", DateCodeFormat.MMYY, TODAY)
    with pytest.raises(InvalidInput, match="after today"):
        batteries.read_date_code("2550", DateCodeFormat.YYWW, TODAY)


# ---- capacity trend ----


def test_trend_and_forecast_by_hand() -> None:
    # Capacities 4.0, 3.6, 3.2 Ah four years (1461 days = 4 x 365.25) apart: the
    # points lie on a line, slope -0.4 / 4 = -0.1 Ah/year; it reaches 2.0 Ah after
    # (2.0 - 4.0) / -0.1 = 20 years = 7305 days, i.e. on 1 January 2040.
    start = date(2020, 1, 1)
    trend = batteries.fit_capacity_trend(
        [(start, 4.0), (date(2024, 1, 1), 3.6), (date(2028, 1, 1), 3.2)]
    )
    assert trend.slope_ah_per_year == pytest.approx(-0.1)
    assert trend.intercept_ah == pytest.approx(4.0)
    assert trend.capacity_on_ah(date(2032, 1, 1)) == pytest.approx(2.8)
    assert trend.date_reaching(2.0) == date(2040, 1, 1)
    assert (
        batteries.fit_capacity_trend([(start, 4.0), (date(2021, 1, 1), 4.1)]).date_reaching(2.0)
        is None
    )


def test_a_trend_needs_two_test_days() -> None:
    with pytest.raises(InvalidInput, match="two different days"):
        batteries.fit_capacity_trend([(date(2020, 1, 1), 4.0), (date(2020, 1, 1), 3.9)])


def test_capacity_needed_inverts_the_required_runtime() -> None:
    # k = 1: 90 min at 1.5 A needs 2.25 Ah; at 0.85 f_temp it needs 2.25 / 0.85 Ah.
    needed = batteries.capacity_needed_ah(
        1.5, 1.5, rated_hours=5.0, peukert_k=1.0, temperature_factor=0.85
    )
    assert needed == pytest.approx(2.25 / 0.85)
