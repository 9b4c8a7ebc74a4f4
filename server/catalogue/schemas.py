"""API shapes for the catalogue: ballast types, emergency modules, battery packs."""

from __future__ import annotations

from decimal import Decimal
from typing import Annotated

from pydantic import Field, StringConstraints, model_validator

from server.common.schemas import CreateBase, LongText, Name, ReadBase, update_model
from server.engineering.profiles import AreaKind, Evaluation
from server.engineering.vocabulary import BallastTech, Changeover, Chemistry, LampType, Waveform

Watts = Annotated[float, Field(gt=0, le=500)]
Amps = Annotated[float, Field(gt=0, le=50)]
Cells = Annotated[int, Field(ge=1, le=40)]
Price = Annotated[Decimal, Field(ge=0, le=100_000, max_digits=10, decimal_places=2)]
Hours = Annotated[float, Field(ge=0, le=100)]


class BallastTypeCreate(CreateBase):
    name: Name
    technology: BallastTech
    lamp_type: LampType
    lamp_count: Annotated[int, Field(ge=1, le=8)] = 1
    notes: LongText = ""


class BallastTypeRead(ReadBase):
    name: str
    technology: BallastTech
    lamp_type: LampType
    lamp_count: int
    notes: str


class ModuleCreate(CreateBase):
    name: Name
    battery_w: Watts | None = Field(None, description="Power drawn from the pack in emergency. [W]")
    battery_a: Amps | None = Field(None, description="Current drawn from the pack. [A]")
    output_w: Watts | None = Field(None, description="Power delivered to the lamp. [W]")
    declared_eblf: Annotated[float, Field(gt=0, le=1)] | None = None
    chemistry: Chemistry
    cells: Cells
    cutoff_v: Annotated[float, Field(gt=0, le=100)] | None = None
    charge_a: Amps
    rated_min: Annotated[float, Field(gt=0, le=24 * 60)] = 90.0
    lamp_types: list[LampType] = Field(min_length=1)
    lamp_w_min: Watts
    lamp_w_max: Watts
    ballasts: list[BallastTech] = Field(min_length=1)
    changeover: Changeover = Changeover.BOTH_ENDS
    max_lamps: Annotated[int, Field(ge=1, le=4)] = 1
    waveform: Waveform = Waveform.AC
    self_test: bool = False
    price: Price = Decimal("0")
    labour_h: Hours = 1.0
    notes: LongText = ""

    @model_validator(mode="after")
    def _cross_field(self) -> ModuleCreate:
        if (self.battery_w is None) == (self.battery_a is None):
            raise ValueError("battery_w: give the battery-side power or current (battery_a), one")
        if self.lamp_w_min > self.lamp_w_max:
            raise ValueError("lamp_w_min: the lowest lamp watts cannot be above lamp_w_max")
        return self


class ModuleRead(ReadBase):
    name: str
    battery_w: float | None
    battery_a: float | None
    output_w: float | None
    declared_eblf: float | None
    chemistry: Chemistry
    cells: int
    cutoff_v: float | None
    charge_a: float
    rated_min: float
    lamp_types: list[LampType]
    lamp_w_min: float
    lamp_w_max: float
    ballasts: list[BallastTech]
    changeover: Changeover
    max_lamps: int
    waveform: Waveform
    self_test: bool
    price: Decimal
    labour_h: float
    notes: str


class PackCreate(CreateBase):
    name: Name
    chemistry: Chemistry
    cells: Cells
    nominal_v: Annotated[float, Field(gt=0, le=100)] | None = None
    capacity_ah: Annotated[float, Field(gt=0, le=500)]
    rated_hours: Annotated[float, Field(gt=0, le=100)] | None = None
    peukert_k: Annotated[float, Field(ge=1, le=1.6)] | None = None
    max_c: Annotated[float, Field(ge=0, le=100)] = 50.0
    design_life_years: Annotated[float, Field(gt=0, le=30)] | None = None
    new_internal_ohm: Annotated[float, Field(gt=0, le=100)] | None = None
    price: Price = Decimal("0")
    notes: LongText = ""


class PackRead(ReadBase):
    name: str
    chemistry: Chemistry
    cells: int
    nominal_v: float | None
    capacity_ah: float
    rated_hours: float | None
    peukert_k: float | None
    max_c: float
    design_life_years: float | None
    new_internal_ohm: float | None
    price: Decimal
    notes: str


BallastTypeUpdate = update_model(BallastTypeCreate)
ModuleUpdate = update_model(ModuleCreate)
PackUpdate = update_model(PackCreate)


Lux = Annotated[float, Field(gt=0, le=10_000)]


class ProfileCreate(CreateBase):
    """A requirement profile of the organisation's own (a local code, a client's spec)."""

    name: Name
    area_kind: AreaKind = AreaKind.ESCAPE_ROUTE
    evaluation: Evaluation = Evaluation.CENTRE_LINE
    duration_min: Annotated[float, Field(gt=0, le=24 * 60)]
    min_lux: Lux
    avg_lux: Lux | None = None
    end_min_lux: Lux | None = None
    end_avg_lux: Lux | None = None
    max_min_ratio: Annotated[float, Field(ge=1, le=1000)] = 40.0
    monthly_test_days: Annotated[int, Field(ge=1, le=366)] = 30
    annual_test_days: Annotated[int, Field(ge=1, le=3660)] = 365
    source: Annotated[str, StringConstraints(min_length=1, max_length=500)] = (
        "defined by the organisation"
    )

    @model_validator(mode="after")
    def _levels_make_sense(self) -> ProfileCreate:
        # The same rules as the built-in profiles (server.engineering.profiles.make_profile).
        if self.avg_lux is not None and self.avg_lux < self.min_lux:
            raise ValueError("avg_lux: the average cannot be required below the minimum")
        if self.end_min_lux is not None and self.end_min_lux > self.min_lux:
            raise ValueError("end_min_lux: the end-of-duration level cannot exceed the initial one")
        if (
            self.end_avg_lux is not None
            and self.avg_lux is not None
            and self.end_avg_lux > self.avg_lux
        ):
            raise ValueError(
                "end_avg_lux: the end-of-duration average cannot exceed the initial one"
            )
        return self


class ProfileRead(ReadBase):
    name: str
    area_kind: AreaKind
    evaluation: Evaluation
    duration_min: float
    min_lux: float
    avg_lux: float | None
    end_min_lux: float | None
    end_avg_lux: float | None
    max_min_ratio: float
    monthly_test_days: int
    annual_test_days: int
    source: str


ProfileUpdate = update_model(ProfileCreate)
