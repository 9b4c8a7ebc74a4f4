"""Battery packs of emergency modules: run-time, charge, health and life.

Every figure a chemistry brings by default lives in :data:`CHEMISTRY_DEFAULTS`
or in a table beside it, with its source; a pack may override each of them.

The discharge model is Peukert's law written with the rated hours, behind the
single function :func:`runtime_h` so that a better model can replace it.

References
----------
.. [1] IEC 61951-1 / cell makers' application pages: NiCd rated capacity at
   the 5 h rate (0.2 C to 1.0 V per cell), charge 0.1 C for 16 h.
.. [2] IEC 61347-2-7 and IEC 60598-2-22 (checked against pages quoting them):
   4-year design life of emergency packs at their marked temperature; Annex A
   depth-of-discharge limits (second-hand summary).
.. [3] IEEE Std 1115, sizing nickel-cadmium batteries for stationary use:
   aging factor 1.25, i.e. 80 % of rated capacity at end of life (from memory).
.. [4] W. Peukert (1897): t = H * (C / (I * H)) ** k.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date, timedelta
from enum import StrEnum

from server.engineering.errors import InvalidInput, require_positive
from server.engineering.vocabulary import Chemistry, DateCodeFormat


@dataclass(frozen=True, slots=True)
class ChemistryDefaults:
    """Per-cell figures and defaults of one chemistry.

    Attributes
    ----------
    nominal_v_per_cell : float
        Nominal cell voltage. [V]
    end_of_discharge_v_per_cell : float
        Voltage per cell at which a discharge counts as finished. [V]
    rated_hours : float
        Discharge time at which the rated capacity is stated. [h]
    peukert_k : float
        Peukert exponent. [-]
    design_life_years : float
        Life at the marked temperature. [year]
    max_ambient_c : float
        Marked maximum ambient assumed when the pack gives none. [degC]
    life_halving_c : float
        Temperature rise above the marked maximum that halves the life. [K]
    trickle_min_c_rate, trickle_max_c_rate : float or None
        Window for the continuous charge current; None where the chemistry
        needs its own charger instead. [1/h]
    source : str
        Where these figures come from.
    """

    nominal_v_per_cell: float
    end_of_discharge_v_per_cell: float
    rated_hours: float
    peukert_k: float
    design_life_years: float
    max_ambient_c: float
    life_halving_c: float
    trickle_min_c_rate: float | None
    trickle_max_c_rate: float | None
    source: str


CHEMISTRY_DEFAULTS: dict[Chemistry, ChemistryDefaults] = {
    Chemistry.NICD: ChemistryDefaults(
        nominal_v_per_cell=1.2,
        end_of_discharge_v_per_cell=1.0,
        rated_hours=5.0,  # 0.2 C to 1.0 V/cell: cell makers' pages (IEC method)
        peukert_k=1.10,  # k 1.05-1.15, from memory
        design_life_years=4.0,  # IEC 61347-2-7 / IEC 60598-2-22, checked against pages
        max_ambient_c=50.0,  # high-temperature emergency cells, common practice, from memory
        life_halving_c=10.0,  # generic Arrhenius rule (the lead-acid figure), configurable
        trickle_min_c_rate=1 / 30,  # below C/30 may never reach full: from memory
        trickle_max_c_rate=1 / 10,  # trickle 0.05-0.1 C: cell makers' pages
        source="IEC 61951-1 rate and charge method (cell makers' pages); 4-year life "
        "IEC 61347-2-7 / IEC 60598-2-22 (checked against pages quoting them); "
        "Peukert k 1.10 from memory; 50 degC marking common practice, from memory",
    ),
    Chemistry.NIMH: ChemistryDefaults(
        nominal_v_per_cell=1.2,
        end_of_discharge_v_per_cell=1.0,
        rated_hours=5.0,  # IEC 61951-2, from memory
        peukert_k=1.15,  # common practice
        design_life_years=4.0,  # IEC 61951-2 / IEC 61347-2-7, from memory
        max_ambient_c=45.0,  # common practice, from memory
        life_halving_c=10.0,  # generic Arrhenius rule, configurable
        trickle_min_c_rate=1 / 30,  # as NiCd: common practice
        trickle_max_c_rate=1 / 10,  # as NiCd: common practice
        source="IEC 61951-2 (from memory); Peukert k 1.15 common practice; "
        "45 degC marking common practice, from memory",
    ),
    Chemistry.LIFEPO4: ChemistryDefaults(
        nominal_v_per_cell=3.2,
        end_of_discharge_v_per_cell=2.5,
        rated_hours=1.0,  # 1 h or as marked: common practice
        peukert_k=1.03,  # common practice
        design_life_years=8.0,  # common practice
        max_ambient_c=45.0,  # charge limit of common cells, from memory
        life_halving_c=10.0,  # generic Arrhenius rule, configurable
        trickle_min_c_rate=None,  # needs its own charger and protection circuit
        trickle_max_c_rate=None,
        source="common practice (figures as marked on the pack take precedence); "
        "45 degC marking from memory",
    ),
}

# Capacity factor against the pack's ambient temperature, piecewise linear
# between the points; (ambient [degC], factor [-]) pairs in rising order.
TEMPERATURE_CAPACITY_FACTORS: dict[Chemistry, tuple[tuple[float, float], ...]] = {
    # -20 degC from cell makers' pages (typical); the rest common practice, from memory.
    Chemistry.NICD: ((-20.0, 0.55), (0.0, 0.85), (20.0, 1.00), (30.0, 1.00), (50.0, 0.90)),
    # From memory: NiMH loses more in the cold and at heat than NiCd.
    Chemistry.NIMH: ((-20.0, 0.50), (0.0, 0.80), (20.0, 1.00), (30.0, 1.00), (50.0, 0.85)),
    # From memory: LiFePO4 keeps its capacity in the heat, loses it in the cold.
    Chemistry.LIFEPO4: ((-20.0, 0.70), (0.0, 0.90), (20.0, 1.00), (30.0, 1.00), (50.0, 1.00)),
}
TEMPERATURE_SOURCE = (
    "NiCd -20 degC factor from cell makers' pages (typical); other points common practice, "
    "from memory"
)

# End-of-life design factor: 80 % of rated capacity (IEEE Std 1115 aging factor
# 1.25, from memory).
END_OF_LIFE_FACTOR = 0.80

# Thin-margin band: end-of-life run-time within 10 % above the requirement
# warns (IEEE Std 1115 adds a 10-15 % design margin, from memory).
RUNTIME_MARGIN_FRACTION = 0.10

# Largest battery current for a rated duration, as (rated duration [min],
# C-rate [1/h]); IEC 60598-2-22 Annex A, second-hand summary. Linear between
# the points, the end value outside them (our choice).
MAX_DISCHARGE_C_BY_DURATION: tuple[tuple[float, float], ...] = (
    (60.0, 0.60),
    (90.0, 0.40),
    (180.0, 0.25),
)
DISCHARGE_LIMIT_SOURCE = (
    "IEC 60598-2-22 Annex A (second-hand summary, not checked against the text)"
)

# Charge factor of nickel chemistries against the charge C-rate: 1.4 at C/10
# (cell makers' pages; vented cells 1.5-1.6), falling toward 1.2 at 0.5 C and
# above (common practice). LiFePO4 charges with little loss (common practice).
NICKEL_CHARGE_FACTOR_POINTS: tuple[tuple[float, float], ...] = ((0.1, 1.4), (0.5, 1.2))
LIFEPO4_CHARGE_FACTOR = 1.05
CHARGE_FACTOR_SOURCE = (
    "1.4 at C/10 from cell makers' pages; 1.2 at 0.5 C and above common practice; "
    "LiFePO4 1.05 common practice"
)

# Emergency packs recharge for their rated duration within 24 h (the standards
# charge 24 h before the duration test; the 24 h requirement itself from memory).
MAX_RECHARGE_H = 24.0

# Internal resistance against the new-pack value: up to 2x fine, 2-4x watch,
# above 4x replace (common practice, configurable).
RESISTANCE_WATCH_RATIO = 2.0
RESISTANCE_REPLACE_RATIO = 4.0

# Valid range of the Peukert exponent for these chemistries (our bound: the
# published values lie between 1.0 and about 1.4).
PEUKERT_K_RANGE = (1.0, 1.6)


# Inputs are plain (not frozen) dataclasses: a frozen one costs several times
# as much to build, and the planner builds 10,000 combinations at a time.
# Treat them as read-only all the same.


@dataclass(slots=True)
class PackReading:
    """A load test of a pack: open-circuit and loaded voltages.

    Give the load as a current (``load_a``) or as the resistor put across the
    pack (``load_ohm``), not both.
    """

    open_circuit_v: float
    loaded_v: float
    load_a: float | None = None
    load_ohm: float | None = None

    def __post_init__(self) -> None:
        require_positive("open_circuit_v", self.open_circuit_v)
        require_positive("loaded_v", self.loaded_v)
        if self.loaded_v > self.open_circuit_v:
            raise InvalidInput(
                "loaded_v",
                "the reading under load cannot be above the open-circuit reading; "
                "check the meter leads and take both readings again",
            )
        if (self.load_a is None) == (self.load_ohm is None):
            raise InvalidInput("load_a", "give the test load as load_a or as load_ohm, not both")
        if self.load_a is not None:
            require_positive("load_a", self.load_a)
        if self.load_ohm is not None:
            require_positive("load_ohm", self.load_ohm)

    @property
    def current_a(self) -> float:
        """Test current: given, or the loaded voltage over the resistor. [A]"""
        if self.load_a is not None:
            return self.load_a
        assert self.load_ohm is not None
        return self.loaded_v / self.load_ohm

    @property
    def internal_ohm(self) -> float:
        """Internal resistance, (V_oc - V_load) / I_load. [ohm]"""
        return (self.open_circuit_v - self.loaded_v) / self.current_a


@dataclass(slots=True)
class Pack:
    """A rechargeable pack; every ``None`` figure takes the chemistry default.

    Attributes
    ----------
    capacity_ah : float
        Rated capacity at the rated rate. [Ah]
    rated_hours : float or None
        Hours of the rate the capacity is stated at. [h]
    nominal_v : float or None
        Nominal pack voltage as marked; None takes cells times the nominal
        cell voltage. [V]
    max_ambient_c : float or None
        Marked maximum ambient temperature. [degC]
    aging_factor : float or None
        Share of rated capacity left at end of life. [-]
    new_internal_ohm : float or None
        Internal resistance when new. [ohm]
    """

    chemistry: Chemistry
    cells: int
    capacity_ah: float
    rated_hours: float | None = None
    peukert_k: float | None = None
    nominal_v: float | None = None
    design_life_years: float | None = None
    max_ambient_c: float | None = None
    aging_factor: float | None = None
    new_internal_ohm: float | None = None
    installed_on: date | None = None
    reading: PackReading | None = None

    def __post_init__(self) -> None:
        if self.cells < 1:
            raise InvalidInput("cells", "a pack has at least one cell")
        require_positive("capacity_ah", self.capacity_ah)
        for name in ("rated_hours", "nominal_v", "design_life_years", "new_internal_ohm"):
            value = getattr(self, name)
            if value is not None:
                require_positive(name, value)
        if self.peukert_k is not None:
            check_peukert_k(self.peukert_k)
        if self.aging_factor is not None:
            check_aging_factor(self.aging_factor)

    @property
    def defaults(self) -> ChemistryDefaults:
        return CHEMISTRY_DEFAULTS[self.chemistry]

    @property
    def nominal_v_used(self) -> float:
        """Nominal pack voltage: as marked, or cells times the nominal cell voltage. [V]"""
        if self.nominal_v is not None:
            return self.nominal_v
        return self.cells * CHEMISTRY_DEFAULTS[self.chemistry].nominal_v_per_cell

    @property
    def end_of_discharge_v(self) -> float:
        """Cells times the end-of-discharge cell voltage. [V]"""
        return self.cells * CHEMISTRY_DEFAULTS[self.chemistry].end_of_discharge_v_per_cell

    @property
    def rated_hours_used(self) -> float:
        return self.rated_hours if self.rated_hours is not None else self.defaults.rated_hours

    @property
    def peukert_k_used(self) -> float:
        return self.peukert_k if self.peukert_k is not None else self.defaults.peukert_k

    @property
    def aging_factor_used(self) -> float:
        return self.aging_factor if self.aging_factor is not None else END_OF_LIFE_FACTOR

    @property
    def design_life_years_used(self) -> float:
        if self.design_life_years is not None:
            return self.design_life_years
        return self.defaults.design_life_years

    @property
    def max_ambient_c_used(self) -> float:
        return self.max_ambient_c if self.max_ambient_c is not None else self.defaults.max_ambient_c

    def service_life_years_at(self, ambient_c: float) -> float:
        """Expected life at an ambient, shortened above the marked maximum. [year]"""
        return service_life_years(
            self.design_life_years_used,
            ambient_c,
            self.max_ambient_c_used,
            life_halving_c=self.defaults.life_halving_c,
        )

    def assumptions(self) -> list[str]:
        """Sentences naming each chemistry default this pack relies on."""
        defaults = self.defaults
        chem = self.chemistry.value
        said: list[str] = []
        if self.rated_hours is None:
            said.append(f"capacity rated at the {defaults.rated_hours:g} h rate ({chem} default)")
        if self.peukert_k is None:
            said.append(f"Peukert exponent k = {defaults.peukert_k:g} ({chem} default)")
        if self.aging_factor is None:
            said.append(
                f"end of life at {END_OF_LIFE_FACTOR:.0%} of rated capacity "
                "(IEEE Std 1115 aging factor 1.25, from memory)"
            )
        if self.max_ambient_c is None:
            said.append(
                f"marked maximum ambient {defaults.max_ambient_c:g} degC ({chem} default; "
                "use the figure on the pack label)"
            )
        if self.design_life_years is None:
            said.append(f"design life {defaults.design_life_years:g} years ({chem} default)")
        return said


def check_peukert_k(peukert_k: float) -> None:
    """Raise :class:`InvalidInput` for a Peukert exponent outside its valid range."""
    low, high = PEUKERT_K_RANGE
    if not low <= peukert_k <= high:
        raise InvalidInput(
            "peukert_k", f"the Peukert exponent must lie between {low:g} and {high:g}"
        )


def check_aging_factor(aging_factor: float) -> None:
    """Raise :class:`InvalidInput` for an end-of-life factor outside (0, 1]."""
    if not 0 < aging_factor <= 1:
        raise InvalidInput(
            "aging_factor", "the end-of-life capacity share must be above 0 and at most 1"
        )


def constant_power_note(load_w: float, pack_nominal_v: float) -> str:
    """The assumption behind :func:`battery_current_a`, as a sentence."""
    return (
        f"battery current {load_w / pack_nominal_v:.3f} A = {load_w:g} W / {pack_nominal_v:g} V "
        "nominal (constant power at nominal volts: the real current rises as the pack "
        "discharges, so the run-time is somewhat optimistic)"
    )


def cutoff_note(chemistry: Chemistry, cells: int) -> str:
    """The default cut-off voltage, as a sentence."""
    per_cell = CHEMISTRY_DEFAULTS[chemistry].end_of_discharge_v_per_cell
    return (
        f"cut-off {cells * per_cell:g} V = {cells} cells x {per_cell:g} V end of discharge "
        f"({chemistry.value} default; use the module's own cut-off when known)"
    )


def battery_current_a(load_w: float, pack_nominal_v: float) -> float:
    """Battery current of a constant-power load at the pack's nominal voltage.

    Parameters
    ----------
    load_w : float
        Battery-side power the module draws. [W]
    pack_nominal_v : float
        Nominal pack voltage. [V]

    Returns
    -------
    float
        Battery current. [A]

    Notes
    -----
    An approximation: the real current rises as the pack voltage falls
    through the discharge, so the run-time is somewhat optimistic.

    References
    ----------
    Common practice (I = P / V).
    """
    require_positive("load_w", load_w)
    require_positive("pack_nominal_v", pack_nominal_v)
    return load_w / pack_nominal_v


def _interpolate(points: tuple[tuple[float, float], ...], x: float) -> float:
    """Piecewise-linear interpolation; the end values outside the points."""
    x0, y0 = points[0]
    if x <= x0:
        return y0
    for x1, y1 in points[1:]:
        if x <= x1:
            return y0 + (y1 - y0) * (x - x0) / (x1 - x0)
        x0, y0 = x1, y1
    return y0


def temperature_capacity_factor(chemistry: Chemistry, ambient_c: float) -> float:
    """Share of rated capacity available at the pack's ambient temperature.

    Parameters
    ----------
    chemistry : Chemistry
        Pack chemistry.
    ambient_c : float
        Ambient temperature around the pack. [degC]

    Returns
    -------
    float
        Capacity factor f_temp. [-]

    Raises
    ------
    InvalidInput
        Outside the temperatures the table covers.

    References
    ----------
    :data:`TEMPERATURE_CAPACITY_FACTORS` (NiCd -20 degC from cell makers'
    pages; the other points common practice, from memory).
    """
    points = TEMPERATURE_CAPACITY_FACTORS[chemistry]
    low, high = points[0][0], points[-1][0]
    if not low <= ambient_c <= high:
        raise InvalidInput(
            "ambient_c",
            f"no {chemistry.value} capacity data outside {low:g} to {high:g} degC; "
            "measure the ceiling temperature or choose a pack rated for it",
        )
    return _interpolate(points, ambient_c)


def peukert_runtime_h(
    capacity_ah: float, current_a: float, *, rated_hours: float, peukert_k: float
) -> float:
    """Run-time at a constant current by Peukert's law with the rated hours.

    Parameters
    ----------
    capacity_ah : float
        Capacity available (rated capacity times the temperature and aging
        factors). [Ah]
    current_a : float
        Battery current. [A]
    rated_hours : float
        Hours of the rate the capacity is stated at. [h]
    peukert_k : float
        Peukert exponent; 1 gives plain C / I. [-]

    Returns
    -------
    float
        Run-time, t = H * (C / (I * H)) ** k. [h]

    References
    ----------
    W. Peukert (1897), written with the rated hours as in battery handbooks.
    """
    require_positive("capacity_ah", capacity_ah)
    require_positive("current_a", current_a)
    require_positive("rated_hours", rated_hours)
    check_peukert_k(peukert_k)
    return rated_hours * (capacity_ah / (current_a * rated_hours)) ** peukert_k


def runtime_h(
    capacity_ah: float, current_a: float, *, rated_hours: float, peukert_k: float
) -> float:
    """Run-time at a constant current with the planner's discharge model.

    The one place the discharge model is chosen; today it is
    :func:`peukert_runtime_h` (an approximation that fails for NiCd at very
    low and very high currents, where a fit of C = Cm / (1 + (i/i0)**n)
    does better).
    """
    return peukert_runtime_h(capacity_ah, current_a, rated_hours=rated_hours, peukert_k=peukert_k)


def capacity_from_duration_test_ah(
    observed_h: float, current_a: float, *, rated_hours: float, peukert_k: float
) -> float:
    """Capacity a pack showed in a duration test, inverting Peukert's law.

    Parameters
    ----------
    observed_h : float
        Time the luminaire stayed lit on battery. [h]
    current_a : float
        Battery current during the test. [A]
    rated_hours, peukert_k : float
        As for :func:`peukert_runtime_h`. [h], [-]

    Returns
    -------
    float
        C = I * H * (t / H) ** (1 / k), at the temperature of the test. [Ah]

    References
    ----------
    Inverse of :func:`peukert_runtime_h`.
    """
    require_positive("observed_h", observed_h)
    require_positive("current_a", current_a)
    require_positive("rated_hours", rated_hours)
    check_peukert_k(peukert_k)
    return current_a * rated_hours * (observed_h / rated_hours) ** (1.0 / peukert_k)


def max_discharge_c_rate(rated_min: float) -> float:
    """Largest battery C-rate for a luminaire of a given rated duration.

    Parameters
    ----------
    rated_min : float
        Rated duration. [min]

    Returns
    -------
    float
        0.6 C at 1 h, 0.4 C at 90 min, 0.25 C at 3 h; linear between, the
        end value beyond (our choice). [1/h]

    References
    ----------
    IEC 60598-2-22 Annex A, second-hand summary (not checked against the text).
    """
    require_positive("rated_min", rated_min)
    return _interpolate(MAX_DISCHARGE_C_BY_DURATION, rated_min)


def charge_factor(chemistry: Chemistry, charge_c_rate: float) -> float:
    """Ampere-hours to put in per ampere-hour rated, at a charge rate.

    Parameters
    ----------
    chemistry : Chemistry
        Pack chemistry.
    charge_c_rate : float
        Charge current over rated capacity. [1/h]

    Returns
    -------
    float
        NiCd/NiMH: 1.4 at C/10 and below, falling linearly to 1.2 at 0.5 C
        and above; LiFePO4: 1.05. [-]

    References
    ----------
    1.4 at C/10 from cell makers' pages; 1.2 at 0.5 C common practice;
    LiFePO4 common practice.
    """
    require_positive("charge_c_rate", charge_c_rate)
    if chemistry is Chemistry.LIFEPO4:
        return LIFEPO4_CHARGE_FACTOR
    return _interpolate(NICKEL_CHARGE_FACTOR_POINTS, charge_c_rate)


def recharge_time_h(capacity_ah: float, charge_a: float, factor: float) -> float:
    """Time to recharge a flat pack, t = C * factor / I.

    Parameters
    ----------
    capacity_ah : float
        Rated capacity. [Ah]
    charge_a : float
        Charge current. [A]
    factor : float
        Charge factor (see :func:`charge_factor`). [-]

    Returns
    -------
    float
        Recharge time. [h]

    References
    ----------
    Cell makers' charge instructions (common practice).
    """
    require_positive("capacity_ah", capacity_ah)
    require_positive("charge_a", charge_a)
    if not 1.0 <= factor <= 2.0:
        raise InvalidInput("charge_factor", "a charge factor lies between 1.0 and 2.0")
    return capacity_ah * factor / charge_a


def internal_resistance_ohm(
    open_circuit_v: float,
    loaded_v: float,
    *,
    load_a: float | None = None,
    load_ohm: float | None = None,
) -> float:
    """Internal resistance from a load test, R = (V_oc - V_load) / I_load.

    Parameters
    ----------
    open_circuit_v : float
        Pack voltage with nothing connected. [V]
    loaded_v : float
        Pack voltage under the test load. [V]
    load_a : float, optional
        Test current. [A]
    load_ohm : float, optional
        Resistor across the pack instead; then I_load = V_load / R. [ohm]

    Returns
    -------
    float
        Internal resistance. [ohm]

    References
    ----------
    Ohm's law on the Thevenin model of a cell (common practice).
    """
    reading = PackReading(
        open_circuit_v=open_circuit_v, loaded_v=loaded_v, load_a=load_a, load_ohm=load_ohm
    )
    return reading.internal_ohm


def terminal_voltage_v(open_circuit_v: float, current_a: float, internal_ohm: float) -> float:
    """Terminal voltage under a draw, V = V_oc - I * R, not below 0.

    Parameters
    ----------
    open_circuit_v : float
        Open-circuit voltage. [V]
    current_a : float
        Current drawn. [A]
    internal_ohm : float
        Internal resistance. [ohm]

    Returns
    -------
    float
        Terminal voltage; 0 where the linear model would go negative (the
        pack has collapsed). [V]

    References
    ----------
    Thevenin model of a cell (common practice).
    """
    return max(0.0, open_circuit_v - current_a * internal_ohm)


class ResistanceCondition(StrEnum):
    OK = "ok"
    WATCH = "watch"
    REPLACE = "replace"


def resistance_condition(
    internal_ohm: float,
    new_internal_ohm: float,
    *,
    watch_ratio: float = RESISTANCE_WATCH_RATIO,
    replace_ratio: float = RESISTANCE_REPLACE_RATIO,
) -> ResistanceCondition:
    """Classify a measured resistance against the new-pack value.

    Up to ``watch_ratio`` times new is fine, up to ``replace_ratio`` times is
    to watch, above it the pack is to be replaced (common practice).
    """
    require_positive("new_internal_ohm", new_internal_ohm)
    ratio = internal_ohm / new_internal_ohm
    if ratio > replace_ratio:
        return ResistanceCondition.REPLACE
    if ratio > watch_ratio:
        return ResistanceCondition.WATCH
    return ResistanceCondition.OK


def service_life_years(
    design_life_years: float,
    ambient_c: float,
    rated_ambient_c: float,
    *,
    life_halving_c: float = 10.0,
) -> float:
    """Expected service life, shortened above the marked temperature.

    Parameters
    ----------
    design_life_years : float
        Life at the marked temperature. [year]
    ambient_c : float
        Ambient temperature the pack lives in. [degC]
    rated_ambient_c : float
        Temperature the design life is marked for. [degC]
    life_halving_c : float
        Rise that halves the life (default 10 K, the generic Arrhenius rule;
        a vented-NiCd manual gives about 20 % less per 9 K). [K]

    Returns
    -------
    float
        The design life at or below the marked temperature; above it,
        design_life * 0.5 ** ((ambient - rated) / halving). [year]

    References
    ----------
    IEC 61347-2-7 (4 years at the marked temperature, checked against pages
    quoting it); Arrhenius halving rule (common practice, the lead-acid figure).
    """
    require_positive("design_life_years", design_life_years)
    require_positive("life_halving_c", life_halving_c)
    if ambient_c <= rated_ambient_c:
        return design_life_years
    return design_life_years * 0.5 ** ((ambient_c - rated_ambient_c) / life_halving_c)


def pack_age_years(installed_on: date, today: date) -> float:
    """Age of a pack from its installation (or manufacture) date. [year]"""
    if installed_on > today:
        raise InvalidInput("installed_on", "the installation date lies in the future")
    return (today - installed_on).days / 365.25


# A date code reading older than this is not taken as plausible (our choice:
# no emergency pack stays in service that long).
PLAUSIBLE_DATE_CODE_YEARS = 25


@dataclass(frozen=True, slots=True)
class DateCodeReading:
    """What a pack's date code says, and what else it could say.

    Attributes
    ----------
    made_on : date
        First day of the week or month the code names in the chosen format.
    alternatives : tuple of (DateCodeFormat, date)
        Other formats that read the same digits as a plausible date in a
        different month.
    warning : str or None
        A sentence for the surveyor when there are alternatives.
    """

    made_on: date
    alternatives: tuple[tuple[DateCodeFormat, date], ...]
    warning: str | None


def _two_digit_year(yy: int, today: date) -> int:
    year = 2000 + yy
    return year if year <= today.year else year - 100


def _decode(digits: str, fmt: DateCodeFormat, today: date) -> date:
    head, tail = int(digits[:2]), int(digits[2:])
    if fmt in (DateCodeFormat.YYWW, DateCodeFormat.YYMM):
        year, period = _two_digit_year(head, today), tail
    else:
        year, period = _two_digit_year(tail, today), head
    if fmt in (DateCodeFormat.YYWW, DateCodeFormat.WWYY):
        try:
            return date.fromisocalendar(year, period, 1)
        except ValueError:
            raise InvalidInput(
                "date_code", f"week {period:02d} does not exist in {year} ({fmt.value})"
            ) from None
    if not 1 <= period <= 12:
        raise InvalidInput("date_code", f"month {period:02d} does not exist ({fmt.value})")
    return date(year, period, 1)


def _plausible(made_on: date, today: date) -> bool:
    oldest = today - timedelta(days=round(PLAUSIBLE_DATE_CODE_YEARS * 365.25))
    return oldest <= made_on <= today


def read_date_code(code: str, fmt: DateCodeFormat, today: date) -> DateCodeReading:
    """Read a four-digit pack date code and flag other plausible readings.

    Parameters
    ----------
    code : str
        The four digits printed on the pack (spaces, dots and slashes ignored).
    fmt : DateCodeFormat
        The format the surveyor says the maker uses.
    today : date
        The survey date: a code is not read as a date after it.

    Returns
    -------
    DateCodeReading
        The date read, and the other formats that would read the same digits
        as a plausible date in another month, with a warning.

    Raises
    ------
    InvalidInput
        When the code is not four digits, names no real week or month in the
        chosen format, or reads as a date after ``today``.

    References
    ----------
    ISO 8601 week numbering (weeks start on Monday); the four formats are
    those found on packs (common practice).
    """
    digits = "".join(ch for ch in code if ch not in " ./-")
    if len(digits) != 4 or not digits.isdigit():
        raise InvalidInput("date_code", "a date code has four digits, such as 1834")
    made_on = _decode(digits, fmt, today)
    if made_on > today:
        raise InvalidInput(
            "date_code", f"{digits} read as {fmt.value} is after today; check the format"
        )
    alternatives: list[tuple[DateCodeFormat, date]] = []
    for other in DateCodeFormat:
        if other is fmt:
            continue
        try:
            reading = _decode(digits, other, today)
        except InvalidInput:
            continue
        different_month = (reading.year, reading.month) != (made_on.year, made_on.month)
        if different_month and _plausible(reading, today):
            alternatives.append((other, reading))
    warning = None
    if alternatives:
        others = "; ".join(f"{f.value} gives {d:%B %Y}" for f, d in alternatives)
        warning = (
            f"{digits} read as {fmt.value} is {made_on:%B %Y}, but {others}. "
            "Confirm the maker's format before trusting the pack's age."
        )
    return DateCodeReading(made_on=made_on, alternatives=tuple(alternatives), warning=warning)


def capacity_needed_ah(
    required_h: float,
    current_a: float,
    *,
    rated_hours: float,
    peukert_k: float,
    temperature_factor: float = 1.0,
) -> float:
    """Rated capacity that just gives the required run-time at a current.

    Parameters
    ----------
    required_h : float
        Required run-time. [h]
    current_a : float
        Battery current. [A]
    rated_hours, peukert_k : float
        As for :func:`peukert_runtime_h`. [h], [-]
    temperature_factor : float
        f_temp at the pack's ambient. [-]

    Returns
    -------
    float
        Present capacity below which the run-time falls short. [Ah]

    References
    ----------
    Inverse of :func:`peukert_runtime_h`.
    """
    require_positive("temperature_factor", temperature_factor)
    return (
        capacity_from_duration_test_ah(
            required_h, current_a, rated_hours=rated_hours, peukert_k=peukert_k
        )
        / temperature_factor
    )


@dataclass(frozen=True, slots=True)
class CapacityTrend:
    """Least-squares line of measured capacity against time.

    Attributes
    ----------
    intercept_ah : float
        Capacity on ``origin``. [Ah]
    slope_ah_per_year : float
        Change of capacity per year; negative as a pack wears. [Ah/year]
    origin : date
        Date of the first measurement.
    """

    intercept_ah: float
    slope_ah_per_year: float
    origin: date

    def capacity_on_ah(self, day: date) -> float:
        """Capacity the line gives on a day. [Ah]"""
        return self.intercept_ah + self.slope_ah_per_year * (day - self.origin).days / 365.25

    def date_reaching(self, capacity_ah: float) -> date | None:
        """Day (to the nearest) the line falls to ``capacity_ah``; None when it never does."""
        if self.slope_ah_per_year >= 0:
            return None if self.intercept_ah > capacity_ah else self.origin
        years = (capacity_ah - self.intercept_ah) / self.slope_ah_per_year
        return self.origin + timedelta(days=round(max(0.0, years) * 365.25))


def fit_capacity_trend(measurements: list[tuple[date, float]]) -> CapacityTrend:
    """Fit capacity against time by ordinary least squares.

    Parameters
    ----------
    measurements : list of (date, float)
        Test dates and the capacity each showed. [Ah]

    Returns
    -------
    CapacityTrend
        The fitted line.

    Raises
    ------
    InvalidInput
        With fewer than two measurements on different days.

    References
    ----------
    Ordinary least squares (any statistics text).
    """
    if len({day for day, _ in measurements}) < 2:
        raise InvalidInput(
            "measurements", "a trend needs duration tests on at least two different days"
        )
    origin = min(day for day, _ in measurements)
    xs = [(day - origin).days / 365.25 for day, _ in measurements]
    ys = [capacity for _, capacity in measurements]
    mean_x = sum(xs) / len(xs)
    mean_y = sum(ys) / len(ys)
    sxx = sum((x - mean_x) ** 2 for x in xs)
    sxy = sum((x - mean_x) * (y - mean_y) for x, y in zip(xs, ys, strict=True))
    slope = sxy / sxx
    return CapacityTrend(
        intercept_ah=mean_y - slope * mean_x, slope_ah_per_year=slope, origin=origin
    )


@dataclass(frozen=True, slots=True)
class RuntimeEstimate:
    """Run-time of a pack at a constant current, new and at end of life.

    Attributes
    ----------
    current_a : float
        Battery current. [A]
    c_rate : float
        Current over rated capacity. [1/h]
    temperature_factor : float
        f_temp at the ambient. [-]
    runtime_new_h, runtime_end_of_life_h : float
        Run-time with f_age = 1 and with the pack's end-of-life factor. [h]
    """

    current_a: float
    c_rate: float
    temperature_factor: float
    runtime_new_h: float
    runtime_end_of_life_h: float


def estimate_runtime(pack: Pack, current_a: float, ambient_c: float) -> RuntimeEstimate:
    """Run-time of ``pack`` at ``current_a`` and ``ambient_c``, new and at end of life.

    Parameters
    ----------
    pack : Pack
        The pack; its overrides replace the chemistry defaults.
    current_a : float
        Battery current. [A]
    ambient_c : float
        Ambient temperature around the pack. [degC]

    Returns
    -------
    RuntimeEstimate
        With C_eff = C_rated * f_temp * f_age in :func:`runtime_h`.

    References
    ----------
    Peukert's law with the rated hours; f_temp from
    :data:`TEMPERATURE_CAPACITY_FACTORS`; f_age IEEE Std 1115 (from memory).
    """
    require_positive("current_a", current_a)
    f_temp = temperature_capacity_factor(pack.chemistry, ambient_c)
    hot_capacity_ah = pack.capacity_ah * f_temp
    rated_hours = pack.rated_hours_used
    peukert_k = pack.peukert_k_used
    return RuntimeEstimate(
        current_a=current_a,
        c_rate=current_a / pack.capacity_ah,
        temperature_factor=f_temp,
        runtime_new_h=runtime_h(
            hot_capacity_ah, current_a, rated_hours=rated_hours, peukert_k=peukert_k
        ),
        runtime_end_of_life_h=runtime_h(
            hot_capacity_ah * pack.aging_factor_used,
            current_a,
            rated_hours=rated_hours,
            peukert_k=peukert_k,
        ),
    )
