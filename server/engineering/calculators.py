"""The stand-alone battery calculators: run-time, recharge and pack health.

Each takes plain figures, uses the chemistry defaults for whatever is not
given, and answers with the numbers, the findings, the verdict and the
assumptions it made. The full fixture/module/pack check is
:func:`server.engineering.compatibility.evaluate`.

References
----------
docs/engineering.md ("Battery packs"); each finding names its source.
"""

from __future__ import annotations

from dataclasses import dataclass

from server.engineering import batteries
from server.engineering.batteries import Pack, PackReading
from server.engineering.compatibility import (
    DEFAULT_AMBIENT_C,
    DEFAULT_AMBIENT_NOTE,
    charge_findings,
    discharge_findings,
    pack_health_findings,
    runtime_findings,
    temperature_findings,
)
from server.engineering.errors import InvalidInput, require_positive
from server.engineering.findings import Finding, Verdict, verdict_of, worst_first
from server.engineering.vocabulary import Chemistry


@dataclass(frozen=True, slots=True)
class RuntimeCalc:
    """Run-time of a pack at a load.

    Attributes
    ----------
    current_a : float
        Battery current. [A]
    c_rate : float
        Current over rated capacity. [1/h]
    runtime_new_min, runtime_end_of_life_min : float
        Run-time new and at end of life. [min]
    verdict : Verdict or None
        None when no required duration was given.
    """

    current_a: float
    c_rate: float
    runtime_new_min: float
    runtime_end_of_life_min: float
    verdict: Verdict | None
    findings: tuple[Finding, ...]
    assumptions: tuple[str, ...]


def runtime_calc(
    pack: Pack,
    *,
    load_w: float | None = None,
    load_a: float | None = None,
    ambient_c: float | None = None,
    required_min: float | None = None,
) -> RuntimeCalc:
    """Run-time of ``pack`` feeding a constant load.

    Parameters
    ----------
    pack : Pack
        The pack; ``None`` figures take the chemistry defaults.
    load_w, load_a : float or None
        The load as battery-side power or current; exactly one. [W], [A]
    ambient_c : float or None
        Ambient around the pack; None takes 25 degC. [degC]
    required_min : float or None
        Required duration; without it there is no verdict. [min]

    Returns
    -------
    RuntimeCalc
        Figures, findings (worst first), verdict and assumptions.

    Raises
    ------
    InvalidInput
        For both or neither load, or figures outside the model's range.

    References
    ----------
    Peukert's law with the rated hours; see :mod:`server.engineering.batteries`.
    """
    assumptions = pack.assumptions()
    if (load_w is None) == (load_a is None):
        raise InvalidInput("load_w", "give the load as load_w or as load_a, exactly one of them")
    if load_a is not None:
        require_positive("load_a", load_a)
        current_a = load_a
    else:
        assert load_w is not None
        current_a = batteries.battery_current_a(load_w, pack.nominal_v_used)
        assumptions.append(batteries.constant_power_note(load_w, pack.nominal_v_used))
    if ambient_c is None:
        ambient_c = DEFAULT_AMBIENT_C
        assumptions.append(DEFAULT_AMBIENT_NOTE)
    if required_min is not None:
        require_positive("required_min", required_min)
    estimate = batteries.estimate_runtime(pack, current_a, ambient_c)
    runtime_new_min = estimate.runtime_new_h * 60.0
    runtime_end_of_life_min = estimate.runtime_end_of_life_h * 60.0
    findings = temperature_findings(ambient_c, pack)
    verdict = None
    if required_min is not None:
        findings += discharge_findings(current_a, estimate.c_rate, required_min)
        findings += runtime_findings(runtime_new_min, runtime_end_of_life_min, required_min)
        verdict = verdict_of(findings)
    return RuntimeCalc(
        current_a=current_a,
        c_rate=estimate.c_rate,
        runtime_new_min=runtime_new_min,
        runtime_end_of_life_min=runtime_end_of_life_min,
        verdict=verdict,
        findings=tuple(worst_first(findings)),
        assumptions=tuple(assumptions),
    )


@dataclass(frozen=True, slots=True)
class RechargeCalc:
    """Recharge of a flat pack.

    Attributes
    ----------
    hours : float
        Recharge time. [h]
    charge_factor : float
        Charge factor used. [-]
    c_rate : float
        Charge current over rated capacity. [1/h]
    """

    hours: float
    charge_factor: float
    c_rate: float
    verdict: Verdict
    findings: tuple[Finding, ...]
    assumptions: tuple[str, ...]


def recharge_calc(
    chemistry: Chemistry,
    cells: int,
    capacity_ah: float,
    charge_a: float,
    *,
    charge_factor: float | None = None,
) -> RechargeCalc:
    """Time to recharge a flat pack, against 24 h and the trickle window.

    Parameters
    ----------
    chemistry : Chemistry
        Pack chemistry.
    cells : int
        Cells in the pack.
    capacity_ah : float
        Rated capacity. [Ah]
    charge_a : float
        Charge current (continuous, as emergency modules charge). [A]
    charge_factor : float or None
        Ampere-hours in per ampere-hour rated; None takes the chemistry's
        rate-dependent factor. [-]

    Returns
    -------
    RechargeCalc
        Hours, factor, C-rate, verdict, findings and assumptions.

    References
    ----------
    Cell makers' pages (1.4 at C/10); common practice (1.2 at 0.5 C).
    """
    if cells < 1:
        raise InvalidInput("cells", "a pack has at least one cell")
    require_positive("capacity_ah", capacity_ah)
    require_positive("charge_a", charge_a)
    charge_c = charge_a / capacity_ah
    assumptions = []
    if charge_factor is None:
        charge_factor = batteries.charge_factor(chemistry, charge_c)
        assumptions.append(
            f"charge factor {charge_factor:.2f} at {charge_c:.3f} C ({chemistry.value} default: "
            f"{batteries.CHARGE_FACTOR_SOURCE})"
        )
    hours = batteries.recharge_time_h(capacity_ah, charge_a, charge_factor)
    findings = charge_findings(chemistry, capacity_ah, charge_a, hours)
    return RechargeCalc(
        hours=hours,
        charge_factor=charge_factor,
        c_rate=charge_c,
        verdict=verdict_of(findings),
        findings=tuple(worst_first(findings)),
        assumptions=tuple(assumptions),
    )


@dataclass(frozen=True, slots=True)
class PackHealthCalc:
    """What a load test says about a pack.

    Attributes
    ----------
    internal_resistance_ohm : float
        From the load test. [ohm]
    terminal_v_under_module : float
        Pack voltage under the module's draw. [V]
    cutoff_v : float
        Voltage at which the module stops. [V]
    """

    internal_resistance_ohm: float
    terminal_v_under_module: float
    cutoff_v: float
    verdict: Verdict
    findings: tuple[Finding, ...]
    assumptions: tuple[str, ...]


def pack_health_calc(
    chemistry: Chemistry,
    cells: int,
    reading: PackReading,
    *,
    module_draw_a: float,
    cutoff_v: float | None = None,
    new_internal_ohm: float | None = None,
) -> PackHealthCalc:
    """Internal resistance from a load test and the sag under the module.

    Parameters
    ----------
    chemistry : Chemistry
        Pack chemistry.
    cells : int
        Cells in the pack.
    reading : PackReading
        Open-circuit and loaded voltages and the test load.
    module_draw_a : float
        Battery current of the module in emergency mode. [A]
    cutoff_v : float or None
        The module's cut-off; None takes cells times the end-of-discharge
        cell voltage. [V]
    new_internal_ohm : float or None
        Resistance of the pack when new, for the comparison. [ohm]

    Returns
    -------
    PackHealthCalc
        Resistance, terminal voltage, cut-off, verdict, findings, assumptions.

    References
    ----------
    Thevenin model of a cell; load-test practice (common practice).
    """
    if cells < 1:
        raise InvalidInput("cells", "a pack has at least one cell")
    require_positive("module_draw_a", module_draw_a)
    if new_internal_ohm is not None:
        require_positive("new_internal_ohm", new_internal_ohm)
    assumptions = []
    if reading.load_ohm is not None:
        assumptions.append(
            f"test current {reading.current_a:.3f} A = {reading.loaded_v:g} V / "
            f"{reading.load_ohm:g} ohm"
        )
    if cutoff_v is None:
        cutoff_v = cells * batteries.CHEMISTRY_DEFAULTS[chemistry].end_of_discharge_v_per_cell
        assumptions.append(batteries.cutoff_note(chemistry, cells))
    else:
        require_positive("cutoff_v", cutoff_v)
    internal_ohm = reading.internal_ohm
    findings = pack_health_findings(reading, module_draw_a, cutoff_v, new_internal_ohm)
    return PackHealthCalc(
        internal_resistance_ohm=internal_ohm,
        terminal_v_under_module=batteries.terminal_voltage_v(
            reading.open_circuit_v, module_draw_a, internal_ohm
        ),
        cutoff_v=cutoff_v,
        verdict=verdict_of(findings),
        findings=tuple(worst_first(findings)),
        assumptions=tuple(assumptions),
    )
