"""JSON shapes of the calculator API: SI units, the unit in every name.

Unknown fields are refused (422), so a misspelt optional figure is never
silently replaced by a default. Rules across fields name their field first
(``"loaded_v: ..."``) so the 422 answer points at it.
"""

from __future__ import annotations

from datetime import date
from typing import Annotated

from pydantic import BaseModel, Field, model_validator

from server.common.schemas import StrictModel
from server.engineering.findings import Severity, Verdict
from server.engineering.vocabulary import (
    BallastTech,
    Changeover,
    Chemistry,
    LampType,
    Waveform,
    Wiring,
)

Cells = Annotated[int, Field(ge=1, le=40, description="Cells in the pack.")]
CapacityAh = Annotated[float, Field(ge=0.01, le=500, description="Rated capacity. [Ah]")]
# Floors far below any emergency pack or module (10 mAh, 1 mA, 10 mW, 1 mohm) keep every
# result finite: a vanishing current would otherwise give an infinite time.
Amps = Annotated[float, Field(ge=0.001, le=100)]
Watts = Annotated[float, Field(ge=0.01, le=1000)]
Volts = Annotated[float, Field(gt=0, le=200)]
Ohms = Annotated[float, Field(ge=0.001, le=1000)]
Celsius = Annotated[float, Field(ge=-60, le=120)]
Minutes = Annotated[float, Field(gt=0, le=7 * 24 * 60)]
RatedHours = Annotated[float, Field(gt=0, le=100, description="Hours of the capacity rate. [h]")]
PeukertK = Annotated[float, Field(ge=1.0, le=1.6, description="Peukert exponent. [-]")]


def _exactly_one(model: BaseModel, first: str, second: str) -> None:
    if (getattr(model, first) is None) == (getattr(model, second) is None):
        raise ValueError(f"{first}: give exactly one of {first} and {second}")


def _reading_complete(model: PackIn | PackHealthIn) -> None:
    """The loaded voltage must not be above the open-circuit one."""
    loaded_v, open_circuit_v = model.loaded_v, model.open_circuit_v
    if loaded_v is not None and open_circuit_v is not None and loaded_v > open_circuit_v:
        raise ValueError(
            "loaded_v: the reading under load cannot be above the open-circuit reading; "
            "check the meter leads and take both readings again"
        )


class FindingOut(BaseModel):
    code: str
    severity: Severity
    message: str
    fix: str
    source: str


class RuntimeIn(StrictModel):
    chemistry: Chemistry
    cells: Cells
    capacity_ah: CapacityAh
    rated_hours: RatedHours | None = None
    peukert_k: PeukertK | None = None
    load_w: Watts | None = Field(None, description="Battery-side power of the load. [W]")
    load_a: Amps | None = Field(None, description="Battery current of the load. [A]")
    ambient_c: Celsius | None = Field(None, description="Ambient at the pack; default 25. [degC]")
    aging_factor: Annotated[float, Field(gt=0, le=1)] | None = Field(
        None, description="Share of rated capacity left at end of life; default 0.8. [-]"
    )
    required_min: Minutes | None = Field(None, description="Required duration. [min]")

    @model_validator(mode="after")
    def _one_load(self) -> RuntimeIn:
        _exactly_one(self, "load_w", "load_a")
        return self


class RuntimeOut(BaseModel):
    current_a: float
    c_rate: float
    runtime_new_min: float
    runtime_end_of_life_min: float
    verdict: Verdict | None
    findings: list[FindingOut]
    assumptions: list[str]
    cautions: list[str]


class RechargeIn(StrictModel):
    chemistry: Chemistry
    cells: Cells
    capacity_ah: CapacityAh
    charge_a: Amps = Field(description="Charge current. [A]")
    charge_factor: Annotated[float, Field(ge=1.0, le=2.0)] | None = Field(
        None, description="Ah put in per Ah rated; default by chemistry and rate. [-]"
    )


class RechargeOut(BaseModel):
    hours: float
    charge_factor: float
    c_rate: float
    verdict: Verdict
    findings: list[FindingOut]
    assumptions: list[str]
    cautions: list[str]


class PackHealthIn(StrictModel):
    chemistry: Chemistry
    cells: Cells
    open_circuit_v: Volts = Field(description="Pack voltage with nothing connected. [V]")
    loaded_v: Volts = Field(description="Pack voltage under the test load. [V]")
    load_a: Amps | None = Field(None, description="Test current. [A]")
    load_ohm: Ohms | None = Field(None, description="Resistor across the pack instead. [ohm]")
    module_draw_a: Amps = Field(description="Battery current of the module. [A]")
    cutoff_v: Volts | None = Field(
        None, description="Module cut-off; default cells x end-of-discharge volts. [V]"
    )
    new_internal_ohm: Ohms | None = None

    @model_validator(mode="after")
    def _reading(self) -> PackHealthIn:
        _exactly_one(self, "load_a", "load_ohm")
        _reading_complete(self)
        return self


class PackHealthOut(BaseModel):
    internal_resistance_ohm: float
    terminal_v_under_module: float
    cutoff_v: float
    verdict: Verdict
    findings: list[FindingOut]
    assumptions: list[str]
    cautions: list[str]


class FixtureIn(StrictModel):
    lamp_type: LampType
    lamp_w: Watts = Field(description="Rated power of one lamp. [W]")
    lamp_length_mm: Annotated[float, Field(gt=0, le=3000)] | None = None
    lamp_count: Annotated[int, Field(ge=1, le=8)]
    lamps_to_back_up: Annotated[int, Field(ge=1, le=8)] = 1
    ballast: BallastTech
    wiring: Wiring
    unswitched_supply: bool
    ambient_c: Celsius | None = Field(None, description="Ceiling ambient; default 25. [degC]")

    @model_validator(mode="after")
    def _counts(self) -> FixtureIn:
        if self.lamps_to_back_up > self.lamp_count:
            raise ValueError("lamps_to_back_up: cannot back up more lamps than the fixture has")
        if self.wiring is Wiring.SERIES and self.lamp_count < 2:
            raise ValueError("wiring: series wiring needs at least two lamps")
        return self


class ModuleIn(StrictModel):
    battery_w: Watts | None = Field(None, description="Battery-side power. [W]")
    battery_a: Amps | None = Field(None, description="Battery-side current. [A]")
    output_w: Watts | None = Field(None, description="Power to the lamp. [W]")
    declared_eblf: Annotated[float, Field(gt=0, le=1)] | None = None
    chemistry: Chemistry
    cells: Cells
    cutoff_v: Volts | None = None
    charge_a: Amps = Field(description="Charge current. [A]")
    rated_min: Minutes = Field(description="Rated duration. [min]")
    lamp_types: list[LampType] = Field(min_length=1)
    lamp_w_min: Watts
    lamp_w_max: Watts
    ballasts: list[BallastTech] = Field(min_length=1)
    changeover: Changeover
    max_lamps: Annotated[int, Field(ge=1, le=8)]
    waveform: Waveform

    @model_validator(mode="after")
    def _cross_field(self) -> ModuleIn:
        _exactly_one(self, "battery_w", "battery_a")
        if self.lamp_w_min > self.lamp_w_max:
            raise ValueError("lamp_w_min: the lowest lamp watts cannot be above lamp_w_max")
        return self


class PackIn(StrictModel):
    chemistry: Chemistry
    cells: Cells
    capacity_ah: CapacityAh
    max_c: Celsius | None = Field(
        None, description="Marked maximum ambient; default by chemistry. [degC]"
    )
    design_life_years: Annotated[float, Field(gt=0, le=30)] | None = None
    installed_on: date | None = None
    open_circuit_v: Volts | None = None
    loaded_v: Volts | None = None
    load_a: Amps | None = None
    load_ohm: Ohms | None = None
    new_internal_ohm: Ohms | None = None
    rated_hours: RatedHours | None = None
    peukert_k: PeukertK | None = None
    nominal_v: Volts | None = Field(None, description="Nominal volts as marked. [V]")

    @model_validator(mode="after")
    def _reading(self) -> PackIn:
        given = [
            name
            for name in ("open_circuit_v", "loaded_v", "load_a", "load_ohm")
            if getattr(self, name) is not None
        ]
        if given:
            for needed in ("open_circuit_v", "loaded_v"):
                if getattr(self, needed) is None:
                    raise ValueError(f"{needed}: a load test needs both voltages and the load")
            _exactly_one(self, "load_a", "load_ohm")
            _reading_complete(self)
        return self


class RequirementIn(StrictModel):
    duration_min: Minutes = Field(description="Required duration. [min]")
    profile: str | None = Field(
        None, max_length=64, description="A built-in profile id or one of the firm's profiles."
    )
    min_emergency_lm: Annotated[float, Field(gt=0, le=1_000_000)] | None = Field(
        None,
        description="Emergency lumens the route needs from this fixture (for example from "
        "the route planner); the check fails below it. [lm]",
    )


class CheckIn(StrictModel):
    fixture: FixtureIn
    module: ModuleIn
    pack: PackIn
    requirement: RequirementIn


class CheckOut(BaseModel):
    verdict: Verdict
    findings: list[FindingOut]
    runtime_new_min: float | None
    runtime_end_of_life_min: float | None
    c_rate: float
    recharge_h: float
    eblf: float
    eblf_is_estimate: bool
    emergency_lumens: float | None
    backup_power_pct: float
    service_life_years: float
    required_min: float
    assumptions: list[str]
    cautions: list[str]
