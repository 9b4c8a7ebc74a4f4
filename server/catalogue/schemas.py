"""API shapes for the catalogue: ballast types, emergency modules, battery packs."""

from __future__ import annotations

from decimal import Decimal
from typing import Annotated

from pydantic import Field, model_validator

from server.common.schemas import CreateBase, LongText, Name, ReadBase, update_model
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
