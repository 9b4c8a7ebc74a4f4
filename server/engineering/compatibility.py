"""Compatibility rules: does this module and pack suit this fixture and area?

A rule is a small function over a :class:`Case` (the fixture, module, pack
and requirement, with the figures derived from them once) that returns a list of
:class:`~server.engineering.findings.Finding` objects. What a finding says
lives in :data:`FINDINGS`, one entry per code; the rules only choose codes
and fill in numbers. Adding a rule is an entry in :data:`FINDINGS`, a
function decorated with :func:`rule`, and a test that makes it fire.

The verdict of a combination is fail when any finding fails, else warn when
any warns, else pass (:func:`~server.engineering.findings.verdict_of`).

References
----------
docs/engineering.md ("Compatibility rules"); the source of each finding is
given in its :data:`FINDINGS` entry.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from datetime import date
from enum import StrEnum

from server.engineering import batteries, lamps
from server.engineering.batteries import Pack
from server.engineering.errors import InvalidInput, require_positive
from server.engineering.findings import Finding, Severity, Verdict, verdict_of, worst_first
from server.engineering.profiles import Profile
from server.engineering.vocabulary import (
    BallastTech,
    Changeover,
    Chemistry,
    LampType,
    Waveform,
    Wiring,
)

# Ambient assumed when the survey gives none: the rating temperature of T8
# lamps and of the EBLF test (IEC 61347-2-7 clause 20).
DEFAULT_AMBIENT_C = 25.0
# Warn when the ambient comes this close to the pack's marked maximum: the
# pack sits warmer inside the luminaire than the ceiling air (common practice).
NEAR_MAX_AMBIENT_K = 10.0
# Warn when a pack has less than this left of its expected life (our choice:
# one annual duration-test cycle).
AGE_WARNING_YEARS = 1.0


@dataclass(slots=True)
class Fixture:
    """An existing luminaire as surveyed.

    Attributes
    ----------
    lamp_w : float
        Rated power of one lamp. [W]
    lamp_length_mm : float or None
        Lamp length measured or read. [mm]
    ambient_c : float or None
        Ceiling ambient temperature; None takes 25 degC. [degC]
    lamp_lm : float or None
        Rated lumens of one lamp, where known; None takes the lamp table. [lm]
    """

    lamp_type: LampType
    lamp_w: float
    lamp_count: int
    ballast: BallastTech
    wiring: Wiring
    unswitched_supply: bool
    lamps_to_back_up: int = 1
    lamp_length_mm: float | None = None
    ambient_c: float | None = None
    lamp_lm: float | None = None

    def __post_init__(self) -> None:
        require_positive("lamp_w", self.lamp_w)
        if self.lamp_count < 1:
            raise InvalidInput("lamp_count", "a fixture has at least one lamp")
        if not 1 <= self.lamps_to_back_up <= self.lamp_count:
            raise InvalidInput(
                "lamps_to_back_up", "back up at least one lamp and no more than the fixture has"
            )
        if self.wiring is Wiring.SERIES and self.lamp_count < 2:
            raise InvalidInput("wiring", "series wiring needs at least two lamps")
        if self.lamp_length_mm is not None:
            require_positive("lamp_length_mm", self.lamp_length_mm)
        if self.lamp_lm is not None:
            require_positive("lamp_lm", self.lamp_lm)


@dataclass(slots=True)
class Module:
    """An emergency module (inverter plus charger) as catalogued.

    Give the battery side as ``battery_w`` or ``battery_a``, not both.

    Attributes
    ----------
    battery_w, battery_a : float or None
        Battery-side power or current in emergency mode. [W], [A]
    output_w : float or None
        Power the module delivers to the lamp. [W]
    declared_eblf : float or None
        Emergency ballast lumen factor declared by the maker. [-]
    cutoff_v : float or None
        Pack voltage at which the module stops; None takes cells times the
        end-of-discharge cell voltage. [V]
    charge_a : float
        Charge current. [A]
    rated_min : float
        Rated duration. [min]
    lamp_w_min, lamp_w_max : float
        Lamp watts the module is listed for. [W]
    """

    chemistry: Chemistry
    cells: int
    charge_a: float
    rated_min: float
    lamp_types: frozenset[LampType]
    lamp_w_min: float
    lamp_w_max: float
    ballasts: frozenset[BallastTech]
    changeover: Changeover
    max_lamps: int
    waveform: Waveform
    battery_w: float | None = None
    battery_a: float | None = None
    output_w: float | None = None
    declared_eblf: float | None = None
    cutoff_v: float | None = None

    def __post_init__(self) -> None:
        if (self.battery_w is None) == (self.battery_a is None):
            raise InvalidInput("battery_w", "give the battery side as battery_w or battery_a")
        for name in ("battery_w", "battery_a", "output_w", "cutoff_v"):
            value = getattr(self, name)
            if value is not None:
                require_positive(name, value)
        if self.cells < 1:
            raise InvalidInput("cells", "the module charges a pack of at least one cell")
        require_positive("charge_a", self.charge_a)
        require_positive("rated_min", self.rated_min)
        require_positive("lamp_w_min", self.lamp_w_min)
        if self.lamp_w_max < self.lamp_w_min:
            raise InvalidInput("lamp_w_max", "the top of the watt range is below its bottom")
        if self.max_lamps < 1:
            raise InvalidInput("max_lamps", "a module runs at least one lamp")
        if self.declared_eblf is not None and not 0 < self.declared_eblf <= 1:
            raise InvalidInput("declared_eblf", "an EBLF lies above 0 and at most 1")


@dataclass(slots=True)
class Requirement:
    """What the area asks of the luminaire.

    Attributes
    ----------
    duration_min : float
        Required duration. [min]
    profile : Profile or None
        Requirement profile of the area.
    min_emergency_lm : float or None
        Emergency lumens this luminaire must give, where a route calculation
        has found it. [lm]
    """

    duration_min: float
    profile: Profile | None = None
    min_emergency_lm: float | None = None

    def __post_init__(self) -> None:
        require_positive("duration_min", self.duration_min)
        if self.min_emergency_lm is not None:
            require_positive("min_emergency_lm", self.min_emergency_lm)


@dataclass(frozen=True, slots=True)
class FindingText:
    """What one finding code says; ``message`` and ``fix`` are format strings."""

    severity: Severity
    message: str
    fix: str
    source: str


_IEC_LUMINAIRE = "IEC 60598-2-22 / IEC 61347-2-7 (checked against pages quoting them)"
_MODULE_LISTING = "the module's listing and installation instructions (common practice)"

FINDINGS: dict[str, FindingText] = {
    "ballast.magnetic-only-module": FindingText(
        Severity.FAIL,
        "This module is listed for magnetic gear only; the fixture has an electronic "
        "{ballast} ballast.",
        "Choose a module listed for electronic ballasts of this kind.",
        _MODULE_LISTING,
    ),
    "ballast.electronic-only-module": FindingText(
        Severity.FAIL,
        "This module is listed for electronic ballasts only; the fixture has magnetic "
        "{ballast} gear.",
        "Choose a module listed for magnetic gear, or change the ballast to one the module lists.",
        _MODULE_LISTING,
    ),
    "ballast.not-listed": FindingText(
        Severity.FAIL,
        "The module is not listed for {ballast} ballasts (it lists {listed}).",
        "Choose a module listed for this ballast, or change the ballast to one the module lists.",
        _MODULE_LISTING,
    ),
    "ballast.glow-starter": FindingText(
        Severity.ACTION,
        "Glow-starter gear: the starter must be cut out of the circuit while the module "
        "runs the lamp.",
        "Wire the starter through the module's changeover contacts (or remove it as the "
        "module's diagram shows) so it is isolated in emergency mode.",
        _MODULE_LISTING,
    ),
    "lamp.compact-2pin": FindingText(
        Severity.FAIL,
        "2-pin compact lamps have their starter inside the cap; a fluorescent emergency "
        "module cannot run them.",
        "Re-gear the luminaire for 4-pin compact lamps, or fit a self-contained emergency "
        "luminaire nearby.",
        "common practice",
    ),
    "lamp.led-tube": FindingText(
        Severity.FAIL,
        "LED tubes need an LED emergency driver; a fluorescent emergency module must not "
        "feed them.",
        "Choose an LED emergency driver listed for the tube, or a self-contained emergency "
        "luminaire.",
        "common practice",
    ),
    "lamp.type-not-listed": FindingText(
        Severity.FAIL,
        "The module is not listed for {lamp_type} lamps (it lists {listed}).",
        "Choose a module listed for {lamp_type} lamps.",
        _MODULE_LISTING,
    ),
    "lamp.watts-out-of-range": FindingText(
        Severity.FAIL,
        "{lamp_w:g} W lamps are outside the module's range of {low:g} to {high:g} W.",
        "Choose a module whose range covers {lamp_w:g} W.",
        _MODULE_LISTING,
    ),
    "lamp.length-mismatch": FindingText(
        Severity.WARN,
        "A {lamp_type} {lamp_w:g} W lamp is {nominal:g} mm long, but {length:g} mm was "
        "entered{hint}.",
        "Read the lamp label and measure again: the wattage decides which module fits.",
        "IEC 60081 lamp data (from memory; T5 and T8 lengths checked against pages)",
    ),
    "lamp.not-in-table": FindingText(
        Severity.INFO,
        "{lamp_type} {lamp_w:g} W is not in the planner's lamp table: its length is not "
        "checked and its lumens are estimated.",
        "Check the wattage on the lamp label; enter the lamp's lumens if they are known.",
        "IEC 60081 lamp data (from memory)",
    ),
    "wiring.series-one-end": FindingText(
        Severity.FAIL,
        "The lamps are wired in series on one ballast; a module that switches one lamp "
        "end only cannot take one lamp out of the series circuit.",
        "Choose a module with changeover on both lamp ends.",
        _MODULE_LISTING,
    ),
    "wiring.series-link": FindingText(
        Severity.ACTION,
        "Series wiring: the module must break the series link, and only the lamp it runs "
        "lights in emergency mode.",
        "Wire both ends of the backed-up lamp through the module's changeover contacts and "
        "break the link to the other lamp as the module's diagram shows.",
        _MODULE_LISTING,
    ),
    "lamps.too-many": FindingText(
        Severity.FAIL,
        "{wanted} lamps are to be backed up, but the module runs at most {max_lamps}.",
        "Back up {max_lamps} lamp(s) or choose a module that runs {wanted}.",
        _MODULE_LISTING,
    ),
    "supply.unswitched-missing": FindingText(
        Severity.ACTION,
        "No permanent unswitched supply at the fixture: the pack would stop charging and "
        "the module would light whenever the local switch is turned off.",
        "Run an unswitched live from the same branch circuit as the area's normal lighting, "
        "taken ahead of the local switch, and add the labour to the quote.",
        "NFPA 70 Article 700, unit equipment (section number varies by edition, from "
        "memory); UK practice the same",
    ),
    "pack.lifepo4-on-nickel-charger": FindingText(
        Severity.FAIL,
        "A LiFePO4 pack needs its own charger and protection circuit; it can never replace "
        "a {module_chemistry} pack on this module's charger.",
        "Fit the {module_chemistry} pack the module's label asks for.",
        "common practice",
    ),
    "pack.chemistry-mismatch": FindingText(
        Severity.FAIL,
        "The module charges {module_chemistry} packs; this pack is {pack_chemistry}.",
        "Fit a {module_chemistry} pack of {module_cells} cells as the module's label asks.",
        _MODULE_LISTING,
    ),
    "pack.cells-mismatch": FindingText(
        Severity.FAIL,
        "The module wants {module_cells} cells ({module_v:g} V); the pack has {pack_cells} "
        "({pack_v:g} V).",
        "Fit a pack of {module_cells} cells.",
        _MODULE_LISTING,
    ),
    "module.rated-short": FindingText(
        Severity.FAIL,
        "The module is rated for {rated:.0f} min; the area needs {required:.0f} min.",
        "Choose a module rated for at least {required:.0f} min.",
        _IEC_LUMINAIRE,
    ),
    "requirement.below-profile": FindingText(
        Severity.WARN,
        "The duration entered, {given:.0f} min, is shorter than the {profile} profile's "
        "{needed:.0f} min; the pack is checked against {needed:.0f} min.",
        "Correct the area's required duration, or choose the profile that applies.",
        "{profile_source}",
    ),
    "runtime.short": FindingText(
        Severity.FAIL,
        "At end of life the pack runs the module for about {end_of_life:.0f} min; "
        "{required:.0f} min are required (new: {new:.0f} min).",
        "Choose a pack of larger capacity, or a module that draws less from the battery.",
        "Peukert run-time; end of life at 80 % capacity (IEEE Std 1115 aging factor, from memory)",
    ),
    "runtime.thin-margin": FindingText(
        Severity.WARN,
        "At end of life the pack runs the module for about {end_of_life:.0f} min against "
        "{required:.0f} min required: less than 10 % to spare.",
        "Prefer a pack of larger capacity; a thin margin is lost to a cold or hot ceiling or "
        "a weak cell.",
        "IEEE Std 1115 design margin of 10-15 % (from memory)",
    ),
    "runtime.ok": FindingText(
        Severity.INFO,
        "At end of life the pack runs the module for about {end_of_life:.0f} min against "
        "{required:.0f} min required (new: {new:.0f} min).",
        "Confirm with the annual full-duration test.",
        "Peukert run-time; end of life at 80 % capacity (IEEE Std 1115, from memory)",
    ),
    "runtime.no-data": FindingText(
        Severity.FAIL,
        "The run-time could not be computed: {reason}.",
        "Correct the figure named, or choose a pack rated for the conditions.",
        "planner's battery model",
    ),
    "discharge.rate-high": FindingText(
        Severity.WARN,
        "The battery current, {current:.2f} A, is {c_rate:.2f} C; for a {required:.0f} min "
        "rating the luminaire standard is summarised as allowing about {limit:.2f} C.",
        "Choose a pack of larger capacity so the discharge is shallower.",
        batteries.DISCHARGE_LIMIT_SOURCE,
    ),
    "charge.recharge-slow": FindingText(
        Severity.FAIL,
        "Recharging from flat takes about {hours:.1f} h; an emergency pack must be back to "
        "full duration within 24 h.",
        "Choose a module with a larger charge current, or a pack of smaller capacity that "
        "still meets the duration.",
        "IEC 60598-2-22 24 h charge before the duration test (the 24 h requirement from memory)",
    ),
    "charge.trickle-high": FindingText(
        Severity.WARN,
        "The continuous charge current, {charge_a:.3g} A, is {charge_c:.3f} C, above C/10: "
        "the pack runs hot and wears out early.",
        "Choose a module whose charge current suits the pack's capacity.",
        "cell makers' pages: trickle 0.05-0.1 C",
    ),
    "charge.trickle-low": FindingText(
        Severity.WARN,
        "The continuous charge current, {charge_a:.3g} A, is {charge_c:.3f} C, below C/30: "
        "the pack may never reach full charge.",
        "Choose a pack of smaller capacity or a module with a larger charge current.",
        "high-temperature emergency cells charge at C/20-C/30 (from memory)",
    ),
    "temperature.over-max": FindingText(
        Severity.FAIL,
        "The ceiling ambient, {ambient:g} degC, is above the pack's marked maximum of "
        "{max_ambient:g} degC; its life there would be about {life:.1f} years instead of "
        "{design:g}.",
        "Choose a pack marked for this temperature, or mount the pack remotely in a cooler "
        "place as the module allows.",
        "IEC 61347-2-7 marked temperature; life halves per 10 K (Arrhenius rule, common practice)",
    ),
    "temperature.near-max": FindingText(
        Severity.WARN,
        "The ceiling ambient, {ambient:g} degC, is within {band:g} K of the pack's marked "
        "maximum of {max_ambient:g} degC; inside the luminaire the pack sits warmer still.",
        "Measure the temperature at the pack's position in the luminaire, or choose a pack "
        "marked for a higher temperature.",
        "common practice",
    ),
    "pack.sag-below-cutoff": FindingText(
        Severity.FAIL,
        "Under the module's draw of {draw_a:.2f} A the pack would sit at about "
        "{terminal_v:.2f} V, below the {cutoff_v:.2f} V cut-off: the module would shut "
        "down at once, however good the {open_circuit_v:.2f} V open-circuit reading looks "
        "(internal resistance {internal_ohm:.2f} ohm).",
        "Replace the pack.",
        "Thevenin model of a cell; load-test practice (common practice)",
    ),
    "pack.resistance-watch": FindingText(
        Severity.WARN,
        "The pack's internal resistance, {internal_ohm:.3f} ohm, is {ratio:.1f} times its "
        "new value.",
        "Watch it: test again at the next annual duration test and budget a replacement.",
        "common practice (2-4 times the new value: watch)",
    ),
    "pack.resistance-replace": FindingText(
        Severity.FAIL,
        "The pack's internal resistance, {internal_ohm:.3f} ohm, is {ratio:.1f} times its "
        "new value.",
        "Replace the pack.",
        "common practice (over 4 times the new value: replace)",
    ),
    "pack.age-due": FindingText(
        Severity.FAIL,
        "The pack is {age:.1f} years old; at this ambient it is expected to last about "
        "{life:.1f} years.",
        "Replace the pack and record the date of the new one.",
        "IEC 61347-2-7 design life (checked against pages quoting it)",
    ),
    "pack.age-near": FindingText(
        Severity.WARN,
        "The pack is {age:.1f} years old, within a year of the {life:.1f} years it is "
        "expected to last at this ambient.",
        "Budget its replacement before the next annual duration test.",
        "IEC 61347-2-7 design life (checked against pages quoting it)",
    ),
    "waveform.pulsed-dc": FindingText(
        Severity.WARN,
        "The module feeds the lamp unidirectional pulses: one electrode wears faster and "
        "mercury migrates to one end, shortening lamp life.",
        "Prefer a module with an AC output; otherwise replace lamps sooner.",
        "common practice",
    ),
    "light.output": FindingText(
        Severity.INFO,
        "On battery the luminaire gives about {lumens:.0f} lm{estimate}: EBLF {eblf:.3f}, "
        "the module giving {power_pct:.0f} % of the lamps' rated power.",
        "Check the route's illuminance with these lumens.",
        "{eblf_source}",
    ),
    "light.below-needed": FindingText(
        Severity.FAIL,
        "On battery the luminaire gives about {lumens:.0f} lm{estimate}; the route needs "
        "{needed:.0f} lm from it.",
        "Choose a module with more output, convert more fixtures along the route, or back up "
        "more lamps.",
        "the route illuminance calculation (docs/routes.md)",
    ),
}


# Findings whose texts hold no field are built once and shared (they are frozen).
_FIXED_FINDINGS: dict[str, Finding] = {
    code: Finding(code, text.severity, text.message, text.fix, text.source)
    for code, text in FINDINGS.items()
    if "{" not in text.message + text.fix + text.source
}


def make_finding(code: str, **values: object) -> Finding:
    """A :class:`Finding` for ``code`` with its texts filled in from ``values``."""
    fixed = _FIXED_FINDINGS.get(code)
    if fixed is not None:
        return fixed
    text = FINDINGS[code]
    message, fix, source = text.message, text.fix, text.source
    return Finding(
        code,
        text.severity,
        message.format_map(values) if "{" in message else message,
        fix.format_map(values) if "{" in fix else fix,
        source.format_map(values) if "{" in source else source,
    )


# ---- findings over plain figures, shared by the rules and the calculators ----


def runtime_findings(
    runtime_new_min: float, runtime_end_of_life_min: float, required_min: float
) -> list[Finding]:
    """Run-time at end of life against the required duration.

    Below it fails, within 10 % above it warns, else an info finding.

    References
    ----------
    IEEE Std 1115 design margin (from memory).
    """
    values = {
        "new": runtime_new_min,
        "end_of_life": runtime_end_of_life_min,
        "required": required_min,
    }
    if runtime_end_of_life_min < required_min:
        return [make_finding("runtime.short", **values)]
    if runtime_end_of_life_min < required_min * (1 + batteries.RUNTIME_MARGIN_FRACTION):
        return [make_finding("runtime.thin-margin", **values)]
    return [make_finding("runtime.ok", **values)]


def discharge_findings(current_a: float, c_rate: float, required_min: float) -> list[Finding]:
    """C-rate against the depth-of-discharge limit for the rated duration.

    References
    ----------
    IEC 60598-2-22 Annex A (second-hand summary).
    """
    limit = batteries.max_discharge_c_rate(required_min)
    if c_rate <= limit:
        return []
    return [
        make_finding(
            "discharge.rate-high",
            current=current_a,
            c_rate=c_rate,
            required=required_min,
            limit=limit,
        )
    ]


def temperature_findings(ambient_c: float, pack: Pack) -> list[Finding]:
    """Ambient against the pack's marked maximum: fail above, warn close below.

    The over-maximum finding shows the life shortened by the temperature.
    """
    max_ambient_c = pack.max_ambient_c_used
    if ambient_c <= max_ambient_c - NEAR_MAX_AMBIENT_K:
        return []
    code = "temperature.over-max" if ambient_c > max_ambient_c else "temperature.near-max"
    finding = make_finding(
        code,
        ambient=ambient_c,
        max_ambient=max_ambient_c,
        design=pack.design_life_years_used,
        band=NEAR_MAX_AMBIENT_K,
        life=pack.service_life_years_at(ambient_c),
    )
    return [finding]


def charge_findings(
    chemistry: Chemistry, capacity_ah: float, charge_a: float, recharge_h: float
) -> list[Finding]:
    """Recharge time against 24 h and the continuous-charge window."""
    found = []
    if recharge_h > batteries.MAX_RECHARGE_H:
        found.append(make_finding("charge.recharge-slow", hours=recharge_h))
    defaults = batteries.CHEMISTRY_DEFAULTS[chemistry]
    charge_c = charge_a / capacity_ah
    if defaults.trickle_max_c_rate is not None and charge_c > defaults.trickle_max_c_rate:
        found.append(make_finding("charge.trickle-high", charge_a=charge_a, charge_c=charge_c))
    if defaults.trickle_min_c_rate is not None and charge_c < defaults.trickle_min_c_rate:
        found.append(make_finding("charge.trickle-low", charge_a=charge_a, charge_c=charge_c))
    return found


def pack_health_findings(
    reading: batteries.PackReading,
    draw_a: float,
    cutoff_v: float,
    new_internal_ohm: float | None,
) -> list[Finding]:
    """Sag under the module's draw, and resistance against the new-pack value."""
    found = []
    internal_ohm = reading.internal_ohm
    terminal_v = batteries.terminal_voltage_v(reading.open_circuit_v, draw_a, internal_ohm)
    if terminal_v < cutoff_v:
        found.append(
            make_finding(
                "pack.sag-below-cutoff",
                draw_a=draw_a,
                terminal_v=terminal_v,
                cutoff_v=cutoff_v,
                open_circuit_v=reading.open_circuit_v,
                internal_ohm=internal_ohm,
            )
        )
    if new_internal_ohm is not None:
        condition = batteries.resistance_condition(internal_ohm, new_internal_ohm)
        if condition is not batteries.ResistanceCondition.OK:
            code = (
                "pack.resistance-replace"
                if condition is batteries.ResistanceCondition.REPLACE
                else "pack.resistance-watch"
            )
            found.append(
                make_finding(code, internal_ohm=internal_ohm, ratio=internal_ohm / new_internal_ohm)
            )
    return found


# ---- the combination and its derived figures ----

DEFAULT_AMBIENT_NOTE = f"ambient {DEFAULT_AMBIENT_C:g} degC (none was given)"


@dataclass(slots=True)
class Case:
    """A fixture/module/pack/requirement combination with its derived figures.

    Built once by :func:`derive_case`; every rule reads it. The run-time is
    None when it could not be computed, with the reason in
    ``runtime_problem``.

    Attributes
    ----------
    ambient_c : float
        Ambient temperature used. [degC]
    required_min : float
        Duration checked: the area's, or its profile's where that is longer. [min]
    current_a : float
        Battery current in emergency mode. [A]
    battery_w : float
        Battery-side power. [W]
    c_rate : float
        Battery current over rated capacity. [1/h]
    runtime_new_min, runtime_end_of_life_min : float or None
        Run-time new and at end of life. [min]
    charge_factor : float
        Charge factor at the module's charge current. [-]
    recharge_h : float
        Recharge time from flat. [h]
    cutoff_v : float
        Module cut-off voltage. [V]
    service_life_years : float
        Expected pack life at the ambient. [year]
    lamp_lm : float or None
        Rated lumens of one lamp. [lm]
    eblf : float
        Emergency ballast lumen factor, declared or estimated. [-]
    emergency_lm : float or None
        Light output on battery. [lm]
    backup_power_fraction : float
        Module power over the rated power of the lamps it runs. [-]
    """

    fixture: Fixture
    module: Module
    pack: Pack
    requirement: Requirement
    today: date | None
    ambient_c: float
    required_min: float
    current_a: float
    battery_w: float
    c_rate: float
    runtime_new_min: float | None
    runtime_end_of_life_min: float | None
    runtime_problem: str | None
    charge_factor: float
    recharge_h: float
    cutoff_v: float
    service_life_years: float
    lamp_lm: float | None
    lamp_lm_is_estimate: bool
    eblf: float
    eblf_is_estimate: bool
    emergency_lm: float | None
    backup_power_fraction: float


def derive_case(
    fixture: Fixture,
    module: Module,
    pack: Pack,
    requirement: Requirement,
    *,
    today: date | None = None,
) -> Case:
    """Compute once the figures the rules read.

    Parameters
    ----------
    fixture, module, pack, requirement
        The combination.
    today : date or None
        Date the pack's age is counted to; None leaves the age rule out.

    Returns
    -------
    Case
        The combination with its derived figures.
    """
    ambient_c = DEFAULT_AMBIENT_C if fixture.ambient_c is None else fixture.ambient_c
    required_min = requirement.duration_min
    profile = requirement.profile
    if profile is not None and profile.duration_min > required_min:
        required_min = profile.duration_min

    nominal_v = pack.nominal_v_used
    if module.battery_a is not None:
        current_a = module.battery_a
        battery_w = current_a * nominal_v
    else:
        assert module.battery_w is not None
        battery_w = module.battery_w
        current_a = batteries.battery_current_a(battery_w, nominal_v)

    runtime_new_min = runtime_end_of_life_min = None
    runtime_problem = None
    try:
        estimate = batteries.estimate_runtime(pack, current_a, ambient_c)
    except InvalidInput as exc:
        runtime_problem = exc.reason
    else:
        runtime_new_min = estimate.runtime_new_h * 60.0
        runtime_end_of_life_min = estimate.runtime_end_of_life_h * 60.0

    charge_factor = batteries.charge_factor(pack.chemistry, module.charge_a / pack.capacity_ah)

    lamp_lm = fixture.lamp_lm
    lamp_lm_is_estimate = False
    if lamp_lm is None and fixture.lamp_type in lamps.TYPICAL_EFFICACY_LM_PER_W:
        lamp_lm, lamp_lm_is_estimate = lamps.typical_lumens_lm(fixture.lamp_type, fixture.lamp_w)
    backed_up_w = fixture.lamp_w * fixture.lamps_to_back_up
    if module.declared_eblf is not None:
        eblf, eblf_is_estimate = module.declared_eblf, False
    else:
        eblf, eblf_is_estimate = lamps.estimated_eblf(battery_w, backed_up_w), True
    emergency_lm = None
    if lamp_lm is not None:
        emergency_lm = lamps.emergency_lumens_lm(lamp_lm * fixture.lamps_to_back_up, eblf)
    module_w = module.output_w if module.output_w is not None else battery_w

    return Case(
        fixture=fixture,
        module=module,
        pack=pack,
        requirement=requirement,
        today=today,
        ambient_c=ambient_c,
        required_min=required_min,
        current_a=current_a,
        battery_w=battery_w,
        c_rate=current_a / pack.capacity_ah,
        runtime_new_min=runtime_new_min,
        runtime_end_of_life_min=runtime_end_of_life_min,
        runtime_problem=runtime_problem,
        charge_factor=charge_factor,
        recharge_h=batteries.recharge_time_h(pack.capacity_ah, module.charge_a, charge_factor),
        cutoff_v=module.cutoff_v if module.cutoff_v is not None else pack.end_of_discharge_v,
        service_life_years=pack.service_life_years_at(ambient_c),
        lamp_lm=lamp_lm,
        lamp_lm_is_estimate=lamp_lm_is_estimate,
        eblf=eblf,
        eblf_is_estimate=eblf_is_estimate,
        emergency_lm=emergency_lm,
        backup_power_fraction=lamps.backup_power_fraction(backed_up_w, module_w),
    )


def case_assumptions(case: Case) -> list[str]:
    """Sentences naming every default and approximation the case relies on."""
    pack, module = case.pack, case.module
    said = pack.assumptions()
    if case.fixture.ambient_c is None:
        said.append(DEFAULT_AMBIENT_NOTE)
    if module.battery_w is not None:
        said.append(batteries.constant_power_note(module.battery_w, pack.nominal_v_used))
    if module.cutoff_v is None:
        said.append(batteries.cutoff_note(pack.chemistry, pack.cells))
    if case.fixture.lamp_lm is None and case.lamp_lm is not None:
        kind = "estimated from typical efficacy" if case.lamp_lm_is_estimate else "lamp table"
        said.append(f"lamp lumens {case.lamp_lm:.0f} lm at 25 degC ({kind})")
    if case.eblf_is_estimate:
        said.append(f"EBLF {case.eblf:.3f}: {lamps.EBLF_ESTIMATE_SOURCE}")
    return said


# ---- the rules ----

RuleCheck = Callable[[Case], list[Finding]]


@dataclass(frozen=True, slots=True)
class Rule:
    """A compatibility rule: its name, the codes it may emit, its check."""

    name: str
    codes: tuple[str, ...]
    check: RuleCheck


_rules: list[Rule] = []


def rule(name: str, *codes: str) -> Callable[[RuleCheck], RuleCheck]:
    """Register a rule that may emit ``codes`` (each must be in :data:`FINDINGS`)."""

    def register(check: RuleCheck) -> RuleCheck:
        for code in codes:
            if code not in FINDINGS:
                raise KeyError(f"rule {name!r} names unknown finding code {code!r}")
        _rules.append(Rule(name=name, codes=codes, check=check))
        return check

    return register


def _listed(values: frozenset[StrEnum]) -> str:
    return ", ".join(sorted(value.value for value in values)) or "none"


@rule(
    "ballast",
    "ballast.magnetic-only-module",
    "ballast.electronic-only-module",
    "ballast.not-listed",
    "ballast.glow-starter",
)
def _ballast(case: Case) -> list[Finding]:
    found = []
    ballast, listed = case.fixture.ballast, case.module.ballasts
    if ballast not in listed:
        families = {item.is_magnetic for item in listed}
        values = {"ballast": ballast.value, "listed": _listed(listed)}
        if families == {True} and not ballast.is_magnetic:
            found.append(make_finding("ballast.magnetic-only-module", **values))
        elif families == {False} and ballast.is_magnetic:
            found.append(make_finding("ballast.electronic-only-module", **values))
        else:
            found.append(make_finding("ballast.not-listed", **values))
    if ballast is BallastTech.MAGNETIC_GLOW_STARTER:
        found.append(make_finding("ballast.glow-starter"))
    return found


@rule("lamp type", "lamp.compact-2pin", "lamp.led-tube", "lamp.type-not-listed")
def _lamp_type(case: Case) -> list[Finding]:
    lamp_type = case.fixture.lamp_type
    if lamp_type is LampType.CFL_2PIN:
        return [make_finding("lamp.compact-2pin")]
    if lamp_type is LampType.LED_TUBE:
        return [make_finding("lamp.led-tube")]
    if lamp_type not in case.module.lamp_types:
        listed = _listed(case.module.lamp_types)
        return [make_finding("lamp.type-not-listed", lamp_type=lamp_type.value, listed=listed)]
    return []


@rule(
    "lamp watts and length",
    "lamp.watts-out-of-range",
    "lamp.length-mismatch",
    "lamp.not-in-table",
)
def _lamp_watts(case: Case) -> list[Finding]:
    found = []
    fixture, module = case.fixture, case.module
    lamp_type, lamp_w = fixture.lamp_type, fixture.lamp_w
    if not module.lamp_w_min <= lamp_w <= module.lamp_w_max:
        found.append(
            make_finding(
                "lamp.watts-out-of-range",
                lamp_w=lamp_w,
                low=module.lamp_w_min,
                high=module.lamp_w_max,
            )
        )
    if lamp_type not in lamps.TYPICAL_EFFICACY_LM_PER_W:
        return found
    rating = lamps.lamp_rating(lamp_type, lamp_w)
    if rating is None:
        found.append(make_finding("lamp.not-in-table", lamp_type=lamp_type.value, lamp_w=lamp_w))
        return found
    length = fixture.lamp_length_mm
    if length is not None and lamps.length_matches(lamp_type, lamp_w, length) is False:
        fitting = lamps.lamps_of_length(lamp_type, length)
        hint = ""
        if fitting:
            watts = " or ".join(f"{w:g} W" for w in fitting)
            hint = f" (a {lamp_type.value} of that length is usually {watts})"
        found.append(
            make_finding(
                "lamp.length-mismatch",
                lamp_type=lamp_type.value,
                lamp_w=lamp_w,
                nominal=rating.nominal_length_mm,
                length=length,
                hint=hint,
            )
        )
    return found


@rule("lamp wiring", "wiring.series-one-end", "wiring.series-link")
def _wiring(case: Case) -> list[Finding]:
    if case.fixture.wiring is not Wiring.SERIES:
        return []
    if case.module.changeover is Changeover.ONE_END:
        return [make_finding("wiring.series-one-end")]
    return [make_finding("wiring.series-link")]


@rule("lamp count", "lamps.too-many")
def _lamp_count(case: Case) -> list[Finding]:
    wanted, max_lamps = case.fixture.lamps_to_back_up, case.module.max_lamps
    if wanted > max_lamps:
        return [make_finding("lamps.too-many", wanted=wanted, max_lamps=max_lamps)]
    return []


@rule("unswitched supply", "supply.unswitched-missing")
def _supply(case: Case) -> list[Finding]:
    if case.fixture.unswitched_supply:
        return []
    return [make_finding("supply.unswitched-missing")]


@rule(
    "pack match",
    "pack.lifepo4-on-nickel-charger",
    "pack.chemistry-mismatch",
    "pack.cells-mismatch",
)
def _pack_match(case: Case) -> list[Finding]:
    module, pack = case.module, case.pack
    if pack.chemistry is module.chemistry and pack.cells == module.cells:
        return []
    values = {
        "module_chemistry": module.chemistry.value,
        "pack_chemistry": pack.chemistry.value,
        "module_cells": module.cells,
        "pack_cells": pack.cells,
    }
    if pack.chemistry is Chemistry.LIFEPO4 and module.chemistry is not Chemistry.LIFEPO4:
        return [make_finding("pack.lifepo4-on-nickel-charger", **values)]
    if pack.chemistry is not module.chemistry:
        return [make_finding("pack.chemistry-mismatch", **values)]
    module_v = module.cells * pack.defaults.nominal_v_per_cell
    return [
        make_finding("pack.cells-mismatch", module_v=module_v, pack_v=pack.nominal_v_used, **values)
    ]


@rule("rated duration", "module.rated-short", "requirement.below-profile")
def _rated_duration(case: Case) -> list[Finding]:
    found = []
    profile = case.requirement.profile
    if profile is not None and profile.duration_min > case.requirement.duration_min:
        found.append(
            make_finding(
                "requirement.below-profile",
                given=case.requirement.duration_min,
                needed=profile.duration_min,
                profile=profile.name,
                profile_source=profile.source,
            )
        )
    if case.module.rated_min < case.required_min:
        found.append(
            make_finding(
                "module.rated-short", rated=case.module.rated_min, required=case.required_min
            )
        )
    return found


@rule("run-time", "runtime.short", "runtime.thin-margin", "runtime.ok", "runtime.no-data")
def _runtime(case: Case) -> list[Finding]:
    if case.runtime_new_min is None or case.runtime_end_of_life_min is None:
        return [make_finding("runtime.no-data", reason=case.runtime_problem)]
    return runtime_findings(case.runtime_new_min, case.runtime_end_of_life_min, case.required_min)


@rule("discharge rate", "discharge.rate-high")
def _discharge(case: Case) -> list[Finding]:
    return discharge_findings(case.current_a, case.c_rate, case.required_min)


@rule("charge", "charge.recharge-slow", "charge.trickle-high", "charge.trickle-low")
def _charge(case: Case) -> list[Finding]:
    pack = case.pack
    return charge_findings(pack.chemistry, pack.capacity_ah, case.module.charge_a, case.recharge_h)


@rule("ambient temperature", "temperature.over-max", "temperature.near-max")
def _temperature(case: Case) -> list[Finding]:
    return temperature_findings(case.ambient_c, case.pack)


@rule(
    "measured pack",
    "pack.sag-below-cutoff",
    "pack.resistance-watch",
    "pack.resistance-replace",
)
def _measured_pack(case: Case) -> list[Finding]:
    reading = case.pack.reading
    if reading is None:
        return []
    return pack_health_findings(reading, case.current_a, case.cutoff_v, case.pack.new_internal_ohm)


@rule("pack age", "pack.age-due", "pack.age-near")
def _pack_age(case: Case) -> list[Finding]:
    if case.pack.installed_on is None or case.today is None:
        return []
    age = batteries.pack_age_years(case.pack.installed_on, case.today)
    life = case.service_life_years
    if age >= life:
        return [make_finding("pack.age-due", age=age, life=life)]
    if age > life - AGE_WARNING_YEARS:
        return [make_finding("pack.age-near", age=age, life=life)]
    return []


@rule("output waveform", "waveform.pulsed-dc")
def _waveform(case: Case) -> list[Finding]:
    if case.module.waveform is Waveform.PULSED_DC:
        return [make_finding("waveform.pulsed-dc")]
    return []


@rule("light output", "light.output", "light.below-needed")
def _light(case: Case) -> list[Finding]:
    if case.emergency_lm is None:
        return []
    found = []
    values = {
        "lumens": case.emergency_lm,
        "estimate": " (estimated)" if case.eblf_is_estimate or case.lamp_lm_is_estimate else "",
        "eblf": case.eblf,
        "power_pct": 100.0 * case.backup_power_fraction,
        "eblf_source": lamps.EBLF_ESTIMATE_SOURCE
        if case.eblf_is_estimate
        else lamps.EBLF_DECLARED_SOURCE,
    }
    needed = case.requirement.min_emergency_lm
    if needed is not None and case.emergency_lm < needed:
        found.append(make_finding("light.below-needed", needed=needed, **values))
    found.append(make_finding("light.output", **values))
    return found


RULES: tuple[Rule, ...] = tuple(_rules)


@dataclass(frozen=True, slots=True)
class CheckResult:
    """The verdict on a combination and its findings, worst first.

    The figures behind them are on ``case``; :attr:`assumptions` lists the
    defaults and approximations used.
    """

    verdict: Verdict
    findings: tuple[Finding, ...]
    case: Case

    @property
    def assumptions(self) -> list[str]:
        return case_assumptions(self.case)


def evaluate_case(case: Case, rules: tuple[Rule, ...] = RULES) -> CheckResult:
    """Run ``rules`` over a derived case."""
    findings: list[Finding] = []
    for each in rules:
        findings.extend(each.check(case))
    return CheckResult(
        verdict=verdict_of(findings), findings=tuple(worst_first(findings)), case=case
    )


def evaluate(
    fixture: Fixture,
    module: Module,
    pack: Pack,
    requirement: Requirement,
    *,
    today: date | None = None,
) -> CheckResult:
    """Check a fixture/module/pack combination against every rule.

    Parameters
    ----------
    fixture, module, pack, requirement
        The combination.
    today : date or None
        Date the pack's age is counted to; None leaves the age rule out.

    Returns
    -------
    CheckResult
        Verdict, findings worst first, and the case with its figures.

    References
    ----------
    docs/engineering.md ("Compatibility rules"); each finding names its source.
    """
    return evaluate_case(derive_case(fixture, module, pack, requirement, today=today))
