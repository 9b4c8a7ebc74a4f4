"""A pack's condition from its test results: capacity, trend, forecast, replacement.

A duration test that ends when the module cuts off, after ``t_obs`` at the
battery current ``I``, shows the capacity the pack has now by inverting the
run-time model (Peukert's law written with the rated hours ``H``)::

    t = H * (C / (I * H)) ** k    =>    C_now = I * H * (t_obs / H) ** (1 / k)

The capacities of successive tests are fitted with a least-squares line; the
line crossing the capacity that just gives the required duration is the date
the run-time falls short, and the line crossing the end-of-life share of the
rated capacity (80 %) is the date the pack is worn out by the maintenance
rule. With the pack's age against its temperature-shortened life and the
resistance a load test shows, each pack gets its reasons to be replaced, each
with the date it is due.

What the figures assume
-----------------------
- A test stopped with the lamp still lit (the usual annual test: run the
  required duration, check, restore the supply) proves only that the
  capacity is *at least* the inverted value. Such estimates are kept as lower
  bounds and stay out of the fit, which would otherwise read every passing
  test as a pack sitting exactly on the limit.
- The capacity is measured at the temperature of the test; the luminaire
  stays in its ceiling, so it is compared with thresholds at the same
  ambient (``ambient_c`` of the fixture).
- The battery current is the module's stated current, or its battery-side
  power over the pack's nominal voltage (an approximation: the current rises
  as the voltage falls, see :func:`server.engineering.batteries.battery_current_a`).

The discharge model, the trend fit, the service life and the resistance
rules are those of :mod:`server.engineering.batteries`; this module combines
them for the log.

References
----------
.. [1] W. Peukert (1897), written with the rated hours as in battery
   handbooks; inverse as :func:`server.engineering.batteries.capacity_from_duration_test_ah`.
.. [2] IEEE Std 1115: aging factor 1.25, i.e. a pack below 80 % of its rated
   capacity is at end of life (from memory); the same 80 % is the usual
   maintenance replacement point (common practice).
.. [3] IEC 61347-2-7 / IEC 60598-2-22: 4-year design life at the marked
   temperature (checked against pages quoting them); life halved per 10 K
   above it (generic Arrhenius rule, common practice).
.. [4] Internal resistance against the new-pack value: replace above 4x,
   watch above 2x (common practice); sag under the module's draw below the
   cut-off means replace at once (common practice).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date, timedelta
from enum import StrEnum

from server.engineering.batteries import (
    CapacityTrend,
    Pack,
    PackReading,
    ResistanceCondition,
    capacity_from_duration_test_ah,
    capacity_needed_ah,
    fit_capacity_trend,
    resistance_condition,
    runtime_h,
    temperature_capacity_factor,
    terminal_voltage_v,
)
from server.engineering.errors import require_positive

DAYS_PER_YEAR = 365.25  # mean Julian year, as the trend in batteries.py counts time


@dataclass(frozen=True, slots=True)
class DurationTestResult:
    """What a logged duration test shows of the pack.

    Attributes
    ----------
    tested_on : date
        Day of the test.
    observed_min : float
        Time the luminaire stayed lit on battery. [min]
    ran_to_cutoff : bool
        True when the test ran until the lamp went out (the module cut off);
        False when it was stopped with the lamp still lit.
    """

    tested_on: date
    observed_min: float
    ran_to_cutoff: bool


@dataclass(frozen=True, slots=True)
class CapacityEstimate:
    """The capacity one duration test shows.

    Attributes
    ----------
    tested_on : date
        Day of the test.
    observed_min : float
        Time the luminaire stayed lit on battery. [min]
    capacity_ah : float
        Present capacity at the test's ambient, C = I*H*(t/H)**(1/k). [Ah]
    share_of_rated : float
        ``capacity_ah`` over the rated capacity times f_temp at the ambient. [-]
    lower_bound : bool
        True when the test was stopped with the lamp lit: the capacity is at
        least this much.
    """

    tested_on: date
    observed_min: float
    capacity_ah: float
    share_of_rated: float
    lower_bound: bool


def present_capacity_ah(
    observed_min: float, current_a: float, *, rated_hours: float, peukert_k: float
) -> float:
    """Capacity a duration test shows, inverting the run-time model.

    Parameters
    ----------
    observed_min : float
        Time the luminaire stayed lit on battery. [min]
    current_a : float
        Battery current during the test. [A]
    rated_hours : float
        Hours of the rate the pack's capacity is stated at. [h]
    peukert_k : float
        Peukert exponent. [-]

    Returns
    -------
    float
        C_now = I * H * (t_obs / H) ** (1 / k). [Ah]

    References
    ----------
    Inverse of Peukert's law with the rated hours (W. Peukert, 1897).
    """
    require_positive("observed_min", observed_min)
    return capacity_from_duration_test_ah(
        observed_min / 60.0, current_a, rated_hours=rated_hours, peukert_k=peukert_k
    )


def runtime_threshold_capacity_ah(
    required_min: float, current_a: float, *, rated_hours: float, peukert_k: float
) -> float:
    """Present capacity below which the run-time falls short of the requirement.

    Parameters
    ----------
    required_min : float
        Required duration. [min]
    current_a : float
        Battery current. [A]
    rated_hours : float
        Hours of the rate the capacity is stated at. [h]
    peukert_k : float
        Peukert exponent. [-]

    Returns
    -------
    float
        The capacity that gives exactly ``required_min`` at ``current_a``,
        at the ambient the capacity is measured at. [Ah]

    References
    ----------
    Inverse of Peukert's law with the rated hours (W. Peukert, 1897).
    """
    require_positive("required_min", required_min)
    return capacity_needed_ah(
        required_min / 60.0, current_a, rated_hours=rated_hours, peukert_k=peukert_k
    )


def capacity_estimates(
    tests: Sequence[DurationTestResult], *, pack: Pack, current_a: float, ambient_c: float
) -> list[CapacityEstimate]:
    """The capacity each duration test shows, oldest first.

    Parameters
    ----------
    tests : sequence of DurationTestResult
        Duration tests of this pack (since it was installed).
    pack : Pack
        The pack; rated hours and Peukert exponent as marked or by chemistry.
    current_a : float
        Battery current of the module. [A]
    ambient_c : float
        Ambient of the luminaire, where the tests ran. [degC]

    Returns
    -------
    list of CapacityEstimate
        One per test; tests stopped with the lamp still lit are lower bounds
        (an aborted test included, whatever its length).
    """
    f_temp = temperature_capacity_factor(pack.chemistry, ambient_c)
    available_ah = pack.capacity_ah * f_temp
    estimates = []
    for test in sorted(tests, key=lambda item: item.tested_on):
        capacity_ah = present_capacity_ah(
            test.observed_min,
            current_a,
            rated_hours=pack.rated_hours_used,
            peukert_k=pack.peukert_k_used,
        )
        estimates.append(
            CapacityEstimate(
                tested_on=test.tested_on,
                observed_min=test.observed_min,
                capacity_ah=capacity_ah,
                share_of_rated=capacity_ah / available_ah,
                lower_bound=not test.ran_to_cutoff,
            )
        )
    return estimates


@dataclass(frozen=True, slots=True)
class CapacityForecast:
    """The trend of measured capacity and where it crosses the limits.

    Attributes
    ----------
    trend : CapacityTrend or None
        Least-squares line; None with too few measurements.
    assumed_start : bool
        True when the line starts from the rated capacity at installation
        (assumed) because only one test measured the capacity.
    runtime_threshold_ah : float
        Capacity that just gives the required duration. [Ah]
    end_of_life_ah : float
        End-of-life share of the rated capacity at the ambient. [Ah]
    runtime_short_on : date or None
        Day the line falls to ``runtime_threshold_ah``.
    end_of_life_on : date or None
        Day the line falls to ``end_of_life_ah``.
    """

    trend: CapacityTrend | None
    assumed_start: bool
    runtime_threshold_ah: float
    end_of_life_ah: float
    runtime_short_on: date | None
    end_of_life_on: date | None

    def runtime_min_on(
        self, day: date, *, current_a: float, rated_hours: float, peukert_k: float
    ) -> float | None:
        """Run-time the trend predicts on ``day``; None without a trend or once spent. [min]"""
        if self.trend is None:
            return None
        capacity_ah = self.trend.capacity_on_ah(day)
        if capacity_ah <= 0:
            return None
        return 60.0 * runtime_h(
            capacity_ah, current_a, rated_hours=rated_hours, peukert_k=peukert_k
        )


def forecast_capacity(
    estimates: Sequence[CapacityEstimate],
    *,
    pack: Pack,
    current_a: float,
    ambient_c: float,
    required_min: float,
    installed_on: date | None = None,
) -> CapacityForecast:
    """Fit the measured capacities and find where the line crosses the limits.

    Parameters
    ----------
    estimates : sequence of CapacityEstimate
        From :func:`capacity_estimates`; lower bounds are left out of the fit.
    pack : Pack
        The pack.
    current_a : float
        Battery current of the module. [A]
    ambient_c : float
        Ambient of the luminaire. [degC]
    required_min : float
        Required duration of the area. [min]
    installed_on : date, optional
        Day the pack was installed: with a single measurement, the line runs
        from the rated capacity (times f_temp) on that day to it (assumed).

    Returns
    -------
    CapacityForecast
        The trend and the two crossing dates (None where the line never
        falls to the limit).

    References
    ----------
    Ordinary least squares (:func:`server.engineering.batteries.fit_capacity_trend`);
    80 % end-of-life share, IEEE Std 1115 aging factor (from memory).
    """
    threshold_ah = runtime_threshold_capacity_ah(
        required_min, current_a, rated_hours=pack.rated_hours_used, peukert_k=pack.peukert_k_used
    )
    available_ah = pack.capacity_ah * temperature_capacity_factor(pack.chemistry, ambient_c)
    end_of_life_ah = pack.aging_factor_used * available_ah
    points = [(item.tested_on, item.capacity_ah) for item in estimates if not item.lower_bound]
    assumed_start = False
    single_day = len({day for day, _ in points}) == 1
    if single_day and installed_on is not None and installed_on < points[0][0]:
        points.insert(0, (installed_on, available_ah))
        assumed_start = True
    trend = fit_capacity_trend(points) if len({day for day, _ in points}) >= 2 else None
    return CapacityForecast(
        trend=trend,
        assumed_start=assumed_start,
        runtime_threshold_ah=threshold_ah,
        end_of_life_ah=end_of_life_ah,
        runtime_short_on=crossing_on(trend, threshold_ah) if trend else None,
        end_of_life_on=crossing_on(trend, end_of_life_ah) if trend else None,
    )


def crossing_on(trend: CapacityTrend, capacity_ah: float) -> date | None:
    """Last whole day before the trend line falls to ``capacity_ah``.

    Parameters
    ----------
    trend : CapacityTrend
        The fitted line.
    capacity_ah : float
        The limit. [Ah]

    Returns
    -------
    date or None
        The crossing rounded down to the day (replace no later than that:
        the conservative side of a date that is itself an estimate); the
        line's origin when it starts at or below the limit; None when a flat
        or rising line never reaches it.
    """
    if trend.slope_ah_per_year >= 0:
        return None if trend.intercept_ah > capacity_ah else trend.origin
    years = max(0.0, (capacity_ah - trend.intercept_ah) / trend.slope_ah_per_year)
    return trend.origin + timedelta(days=math.floor(years * DAYS_PER_YEAR))


def life_end_on(installed_on: date, service_life_years: float) -> date:
    """Day a pack reaches its service life.

    Parameters
    ----------
    installed_on : date
        Day the pack was installed (or made, from its date code).
    service_life_years : float
        Life at the luminaire's ambient. [year]

    Returns
    -------
    date
        ``installed_on`` plus the life in mean years of 365.25 days, rounded
        down to the day (replace no later than that).
    """
    require_positive("service_life_years", service_life_years)
    return installed_on + timedelta(days=int(service_life_years * DAYS_PER_YEAR))


class ReasonCode(StrEnum):
    SHORT_DURATION = "short-duration"
    LOW_CAPACITY = "low-capacity"
    RUNTIME_FORECAST = "runtime-forecast"
    CAPACITY_FORECAST = "capacity-forecast"
    SERVICE_LIFE = "service-life"
    HIGH_RESISTANCE = "high-resistance"
    SAG_BELOW_CUTOFF = "sag-below-cutoff"
    RESISTANCE_WATCH = "resistance-watch"


class Urgency(StrEnum):
    REPLACE = "replace"  # the pack is to be replaced by ``due_on``
    WATCH = "watch"  # look again at the next visit; no date


@dataclass(frozen=True, slots=True)
class ReplacementReason:
    """One reason to replace (or watch) a pack.

    Attributes
    ----------
    code : ReasonCode
        Our code for the reason.
    urgency : Urgency
        Replace by ``due_on``, or watch.
    due_on : date or None
        Day the pack is due for replacement on this ground; None for WATCH.
    message : str
        A sentence a technician can act on.
    source : str
        What the rule rests on.
    """

    code: ReasonCode
    urgency: Urgency
    due_on: date | None
    message: str
    source: str


@dataclass(frozen=True, slots=True)
class LoadTest:
    """A load test of the pack logged on a visit."""

    tested_on: date
    reading: PackReading


@dataclass(frozen=True, slots=True)
class PackAssessment:
    """Everything the log says about one pack.

    Attributes
    ----------
    current_a : float
        Battery current used. [A]
    estimates : list of CapacityEstimate
        Capacity shown by each duration test since installation.
    forecast : CapacityForecast
        Trend and crossing dates.
    service_life_years : float
        Life at the luminaire's ambient, shortened above the marked maximum. [year]
    life_ends_on : date or None
        Installation plus service life; None when the installation date is unknown.
    internal_ohm : float or None
        Resistance from the latest load test. [ohm]
    terminal_v : float or None
        Terminal voltage that resistance gives under the module's draw. [V]
    cutoff_v : float
        Module cut-off (or cells times end-of-discharge volts). [V]
    reasons : list of ReplacementReason
        Replace reasons, earliest first, then watch notes.
    due_on : date or None
        Earliest replacement date; None when nothing calls for one.
    assumptions : list of str
        Sentences naming the defaults and approximations used.
    """

    current_a: float
    estimates: list[CapacityEstimate]
    forecast: CapacityForecast
    service_life_years: float
    life_ends_on: date | None
    internal_ohm: float | None
    terminal_v: float | None
    cutoff_v: float
    reasons: list[ReplacementReason]
    due_on: date | None
    assumptions: list[str]


_CAPACITY_SOURCE = "Peukert's law inverted (W. Peukert, 1897); least-squares trend"
_END_OF_LIFE_SOURCE = "IEEE Std 1115 aging factor 1.25 (from memory); maintenance practice"
_LIFE_SOURCE = (
    "IEC 61347-2-7 / IEC 60598-2-22 design life (checked against pages quoting them); "
    "halved per 10 K above the marked temperature (generic Arrhenius rule, common practice)"
)
_RESISTANCE_SOURCE = (
    "resistance against the new-pack value: >4x replace, >2x watch (common practice)"
)
_SAG_SOURCE = "V = V_oc - I * R_int against the cut-off (Thevenin model, common practice)"


def _capacity_reasons(
    estimates: Sequence[CapacityEstimate],
    forecast: CapacityForecast,
    *,
    required_min: float,
    end_of_life_share: float,
) -> list[ReplacementReason]:
    reasons: list[ReplacementReason] = []
    if estimates and estimates[-1].observed_min < required_min:
        last = estimates[-1]
        reasons.append(
            ReplacementReason(
                code=ReasonCode.SHORT_DURATION,
                urgency=Urgency.REPLACE,
                due_on=last.tested_on,
                message=(
                    f"The duration test on {last.tested_on:%Y-%m-%d} lasted "
                    f"{last.observed_min:.0f} min, less than the required {required_min:.0f} min: "
                    "replace the pack now and test again."
                ),
                source="the area's required duration",
            )
        )
    measured = [item for item in estimates if not item.lower_bound]
    if measured and measured[-1].share_of_rated < end_of_life_share:
        last = measured[-1]
        reasons.append(
            ReplacementReason(
                code=ReasonCode.LOW_CAPACITY,
                urgency=Urgency.REPLACE,
                due_on=last.tested_on,
                message=(
                    f"The test on {last.tested_on:%Y-%m-%d} showed {last.share_of_rated:.0%} of "
                    f"the rated capacity, below the {end_of_life_share:.0%} end-of-life share: "
                    "replace the pack."
                ),
                source=_END_OF_LIFE_SOURCE,
            )
        )
    if forecast.runtime_short_on is not None:
        reasons.append(
            ReplacementReason(
                code=ReasonCode.RUNTIME_FORECAST,
                urgency=Urgency.REPLACE,
                due_on=forecast.runtime_short_on,
                message=(
                    f"The capacity trend falls to {forecast.runtime_threshold_ah:.2f} Ah on "
                    f"{forecast.runtime_short_on:%Y-%m-%d}; from then the pack no longer runs "
                    f"the required {required_min:.0f} min."
                ),
                source=_CAPACITY_SOURCE,
            )
        )
    if forecast.end_of_life_on is not None:
        reasons.append(
            ReplacementReason(
                code=ReasonCode.CAPACITY_FORECAST,
                urgency=Urgency.REPLACE,
                due_on=forecast.end_of_life_on,
                message=(
                    f"The capacity trend falls to {end_of_life_share:.0%} of rated "
                    f"({forecast.end_of_life_ah:.2f} Ah) on {forecast.end_of_life_on:%Y-%m-%d}."
                ),
                source=_END_OF_LIFE_SOURCE,
            )
        )
    return reasons


def _load_test_reasons(
    load_test: LoadTest, *, pack: Pack, current_a: float, cutoff_v: float
) -> tuple[float, float, list[ReplacementReason]]:
    reading = load_test.reading
    internal_ohm = reading.internal_ohm
    terminal_v = terminal_voltage_v(reading.open_circuit_v, current_a, internal_ohm)
    reasons: list[ReplacementReason] = []
    if terminal_v < cutoff_v:
        reasons.append(
            ReplacementReason(
                code=ReasonCode.SAG_BELOW_CUTOFF,
                urgency=Urgency.REPLACE,
                due_on=load_test.tested_on,
                message=(
                    f"The load test on {load_test.tested_on:%Y-%m-%d} gives "
                    f"{internal_ohm:.2f} ohm; at the module's {current_a:.2f} A the pack falls to "
                    f"{terminal_v:.2f} V, below the {cutoff_v:.2f} V cut-off: the module shuts "
                    "down at once. Replace the pack, however good its open-circuit voltage looks."
                ),
                source=_SAG_SOURCE,
            )
        )
    if pack.new_internal_ohm is not None:
        condition = resistance_condition(internal_ohm, pack.new_internal_ohm)
        ratio = internal_ohm / pack.new_internal_ohm
        if condition is ResistanceCondition.REPLACE:
            reasons.append(
                ReplacementReason(
                    code=ReasonCode.HIGH_RESISTANCE,
                    urgency=Urgency.REPLACE,
                    due_on=load_test.tested_on,
                    message=(
                        f"Internal resistance {internal_ohm:.2f} ohm is {ratio:.1f} times the "
                        f"new-pack {pack.new_internal_ohm:.2f} ohm: replace the pack."
                    ),
                    source=_RESISTANCE_SOURCE,
                )
            )
        elif condition is ResistanceCondition.WATCH:
            reasons.append(
                ReplacementReason(
                    code=ReasonCode.RESISTANCE_WATCH,
                    urgency=Urgency.WATCH,
                    due_on=None,
                    message=(
                        f"Internal resistance {internal_ohm:.2f} ohm is {ratio:.1f} times the "
                        "new-pack value: load-test it again at the next visit."
                    ),
                    source=_RESISTANCE_SOURCE,
                )
            )
    return internal_ohm, terminal_v, reasons


def assess_pack(
    *,
    pack: Pack,
    current_a: float,
    ambient_c: float,
    required_min: float,
    tests: Sequence[DurationTestResult],
    installed_on: date | None,
    load_test: LoadTest | None = None,
    module_cutoff_v: float | None = None,
) -> PackAssessment:
    """Capacity, trend, forecast and replacement reasons for one pack.

    Parameters
    ----------
    pack : Pack
        The pack in the luminaire.
    current_a : float
        Battery current of the module. [A]
    ambient_c : float
        Ambient of the luminaire. [degC]
    required_min : float
        Required duration of the area. [min]
    tests : sequence of DurationTestResult
        Duration tests of this pack (since ``installed_on``).
    installed_on : date or None
        Day the pack was installed or made; None when unknown.
    load_test : LoadTest, optional
        The latest load test of this pack.
    module_cutoff_v : float, optional
        The module's own cut-off; otherwise cells times the end-of-discharge
        cell voltage. [V]

    Returns
    -------
    PackAssessment
        With the replace reasons sorted by due date and ``due_on`` the
        earliest of them.

    Raises
    ------
    InvalidInput
        For a current or duration that is not positive, or an ambient
        outside the chemistry's temperature table.

    References
    ----------
    See the module docstring.
    """
    require_positive("current_a", current_a)
    require_positive("required_min", required_min)
    estimates = capacity_estimates(tests, pack=pack, current_a=current_a, ambient_c=ambient_c)
    forecast = forecast_capacity(
        estimates,
        pack=pack,
        current_a=current_a,
        ambient_c=ambient_c,
        required_min=required_min,
        installed_on=installed_on,
    )
    reasons = _capacity_reasons(
        estimates, forecast, required_min=required_min, end_of_life_share=pack.aging_factor_used
    )
    life_years = pack.service_life_years_at(ambient_c)
    life_ends = life_end_on(installed_on, life_years) if installed_on is not None else None
    if life_ends is not None:
        shortened = (
            f", shortened from {pack.design_life_years_used:g} years by the "
            f"{ambient_c:g} degC ambient"
            if life_years < pack.design_life_years_used
            else ""
        )
        reasons.append(
            ReplacementReason(
                code=ReasonCode.SERVICE_LIFE,
                urgency=Urgency.REPLACE,
                due_on=life_ends,
                message=(
                    f"Service life {life_years:.1f} years{shortened}: replace by "
                    f"{life_ends:%Y-%m-%d}."
                ),
                source=_LIFE_SOURCE,
            )
        )
    cutoff_v = module_cutoff_v if module_cutoff_v is not None else pack.end_of_discharge_v
    internal_ohm = terminal_v = None
    if load_test is not None:
        internal_ohm, terminal_v, load_reasons = _load_test_reasons(
            load_test, pack=pack, current_a=current_a, cutoff_v=cutoff_v
        )
        reasons.extend(load_reasons)
    replace = sorted(
        (reason for reason in reasons if reason.due_on is not None),
        key=lambda reason: reason.due_on or date.max,
    )
    watch = [reason for reason in reasons if reason.due_on is None]
    assumptions = [*pack.assumptions()]
    if forecast.assumed_start:
        assumptions.append(
            "only one test ran until the lamp went out: the trend starts from the rated "
            "capacity at installation (assumed)"
        )
    if any(item.lower_bound for item in estimates):
        assumptions.append(
            "tests stopped with the lamp still lit show only a lower bound of the capacity "
            "and are left out of the trend"
        )
    if installed_on is None:
        assumptions.append("installation date unknown: no age check")
    return PackAssessment(
        current_a=current_a,
        estimates=estimates,
        forecast=forecast,
        service_life_years=life_years,
        life_ends_on=life_ends,
        internal_ohm=internal_ohm,
        terminal_v=terminal_v,
        cutoff_v=cutoff_v,
        reasons=[*replace, *watch],
        due_on=replace[0].due_on if replace else None,
        assumptions=assumptions,
    )
