"""API shapes for buildings, areas and fixtures."""

from __future__ import annotations

from datetime import date
from typing import Annotated

from pydantic import Field, StringConstraints, model_validator

from server.common.schemas import CreateBase, LongText, Name, ReadBase, ShortText, update_model
from server.engineering.profiles import AreaKind
from server.engineering.vocabulary import BallastTech, Chemistry, DateCodeFormat, LampType, Wiring

Metres = Annotated[float, Field(gt=0, le=1000)]
Position = Annotated[float, Field(ge=-10_000, le=10_000)]
Height = Annotated[float, Field(gt=0, le=30)]
Duration = Annotated[float, Field(gt=0, le=24 * 60)]
Tag = Annotated[str, StringConstraints(min_length=1, max_length=50, strip_whitespace=True)]
LampWatts = Annotated[float, Field(gt=0, le=400)]
LampLength = Annotated[float, Field(gt=0, le=3000)]
LampCount = Annotated[int, Field(ge=1, le=8)]
Ambient = Annotated[float, Field(ge=-40, le=100)]
Volts = Annotated[float, Field(ge=0, le=100)]
Amps = Annotated[float, Field(gt=0, le=50)]
Ohms = Annotated[float, Field(gt=0, le=10_000)]
Cells = Annotated[int, Field(ge=1, le=40)]
Capacity = Annotated[float, Field(gt=0, le=500)]
DateCode = Annotated[str, StringConstraints(pattern=r"^\d{4}$")]
ProfileId = Annotated[str, StringConstraints(min_length=1, max_length=64)]


class BuildingCreate(CreateBase):
    name: Name
    address: ShortText = ""
    client_name: ShortText = ""
    client_contact: ShortText = ""
    notes: LongText = ""


class BuildingRead(ReadBase):
    name: str
    address: str
    client_name: str
    client_contact: str
    notes: str


class AreaCreate(CreateBase):
    name: Name
    floor: ShortText = ""
    kind: AreaKind = AreaKind.ESCAPE_ROUTE
    length_m: Metres | None = None
    width_m: Metres | None = None
    mounting_height_m: Height | None = None
    required_duration_min: Duration = 90.0
    profile_id: ProfileId = "us-egress"
    survey_complete: bool = False
    notes: LongText = ""


class AreaRead(ReadBase):
    building_id: str
    name: str
    floor: str
    kind: AreaKind
    length_m: float | None
    width_m: float | None
    mounting_height_m: float | None
    required_duration_min: float
    profile_id: str
    survey_complete: bool
    notes: str


class FixtureCreate(CreateBase):
    tag: Tag
    location: ShortText = ""
    position_m: Position | None = None
    x_m: Position | None = None
    y_m: Position | None = None
    mounting_height_m: Height | None = None
    lamp_type: LampType
    lamp_w: LampWatts
    lamp_length_mm: LampLength | None = None
    lamp_count: LampCount = 1
    lamps_to_back_up: LampCount = 1
    ballast: BallastTech
    wiring: Wiring = Wiring.SINGLE
    unswitched_supply: bool = False
    ambient_c: Ambient = 25.0
    accessible: bool = True
    existing_kit: bool = False
    pack_chemistry: Chemistry | None = None
    pack_cells: Cells | None = None
    pack_capacity_ah: Capacity | None = None
    pack_date_code: DateCode | None = None
    pack_date_format: DateCodeFormat | None = None
    open_circuit_v: Volts | None = None
    loaded_v: Volts | None = None
    load_a: Amps | None = None
    load_ohm: Ohms | None = None
    commissioned_on: date | None = None
    notes: LongText = ""

    @model_validator(mode="after")
    def _cross_field(self) -> FixtureCreate:
        if self.lamps_to_back_up > self.lamp_count:
            raise ValueError(
                "lamps_to_back_up: cannot back up more lamps than the fixture holds "
                f"({self.lamps_to_back_up} > lamp_count {self.lamp_count})"
            )
        if self.wiring == Wiring.SERIES and self.lamp_count < 2:
            raise ValueError("wiring: series wiring needs at least two lamps (lamp_count)")
        if (
            self.open_circuit_v is not None
            and self.loaded_v is not None
            and self.loaded_v > self.open_circuit_v
        ):
            raise ValueError(
                f"loaded_v: the loaded reading ({self.loaded_v} V) cannot be above the "
                f"open-circuit reading ({self.open_circuit_v} V); check the meter leads"
            )
        if self.load_a is not None and self.load_ohm is not None:
            raise ValueError(
                "load_a: give the load test's current or its resistor (load_ohm), not both"
            )
        if self.pack_date_code and self.pack_date_format is None:
            raise ValueError(
                "pack_date_format: say how the date code reads (YYWW, WWYY, MMYY or YYMM)"
            )
        return self


BuildingUpdate = update_model(BuildingCreate)
AreaUpdate = update_model(AreaCreate)
FixtureUpdate = update_model(FixtureCreate)


class FixtureRead(ReadBase):
    area_id: str
    tag: str
    location: str
    position_m: float | None
    x_m: float | None
    y_m: float | None
    mounting_height_m: float | None
    lamp_type: LampType
    lamp_w: float
    lamp_length_mm: float | None
    lamp_count: int
    lamps_to_back_up: int
    ballast: BallastTech
    wiring: Wiring
    unswitched_supply: bool
    ambient_c: float
    accessible: bool
    existing_kit: bool
    pack_chemistry: Chemistry | None
    pack_cells: int | None
    pack_capacity_ah: float | None
    pack_date_code: str | None
    pack_date_format: DateCodeFormat | None
    open_circuit_v: float | None
    loaded_v: float | None
    load_a: float | None
    load_ohm: float | None
    commissioned_on: date | None
    notes: str
