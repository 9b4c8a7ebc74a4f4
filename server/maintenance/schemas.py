"""API shapes of the maintenance log: test records, due lists, pack condition."""

from __future__ import annotations

import uuid
from datetime import date, datetime
from enum import StrEnum
from typing import Annotated

from pydantic import BaseModel, ConfigDict, Field, model_validator

from server.common.schemas import LongText, Name, StrictModel
from server.engineering.schedule import DueState, TestKind

Minutes = Annotated[float, Field(gt=0, le=24 * 60, description="[min]")]
Volts = Annotated[float, Field(gt=0, le=100, description="[V]")]
Amps = Annotated[float, Field(gt=0, le=50, description="[A]")]
Ohms = Annotated[float, Field(gt=0, le=10_000, description="[ohm]")]
DueSoonDays = Annotated[int, Field(ge=0, le=365)]


class TestResult(StrEnum):
    """How a test went; ``void`` only in a correction: the record was entered in error."""

    __test__ = False  # not a pytest test class

    PASS = "pass"
    FAIL = "fail"
    VOID = "void"


class TestRecordCreate(StrictModel):
    """One test of one luminaire, as the technician reports it.

    A correction is a new record with ``corrects_id`` set to the record it
    replaces; nothing stored is ever changed or deleted.
    """

    __test__ = False

    id: uuid.UUID | None = Field(
        default=None,
        description="Optional client-made UUID. Sending the same test twice makes one record.",
    )
    kind: TestKind = Field(description="function (the monthly test) or duration (annual)")
    tested_on: date
    tested_by: Name = Field(description="Who did the test (name as it goes in the log book).")
    result: TestResult
    observed_duration_min: Minutes | None = Field(
        default=None, description="Duration tests: time the lamp stayed lit on battery. [min]"
    )
    ran_to_cutoff: bool | None = Field(
        default=None,
        description=(
            "Duration tests: true when the test ran until the lamp went out, false when it was "
            "stopped with the lamp still lit. Left out: true when the time is short of the "
            "required duration, false otherwise."
        ),
    )
    open_circuit_v: Volts | None = None
    loaded_v: Volts | None = None
    load_a: Amps | None = Field(default=None, description="Load test current. [A]")
    load_ohm: Ohms | None = Field(default=None, description="Or the load test resistor. [ohm]")
    pack_replaced: bool = Field(
        default=False,
        description="The pack was replaced on this visit; the test is of the new pack.",
    )
    action_taken: LongText = ""
    notes: LongText = ""
    corrects_id: uuid.UUID | None = Field(
        default=None, description="The record this one corrects (it then shows as superseded)."
    )

    @model_validator(mode="after")
    def _cross_field(self) -> TestRecordCreate:
        if (
            self.kind is TestKind.DURATION
            and self.result is not TestResult.VOID
            and self.observed_duration_min is None
        ):
            raise ValueError(
                "observed_duration_min: a duration test needs the time the lamp stayed lit"
            )
        if self.kind is TestKind.FUNCTION and (
            self.observed_duration_min is not None or self.ran_to_cutoff is not None
        ):
            raise ValueError(
                "observed_duration_min: a function test has no duration; record it as a "
                "duration test instead"
            )
        if self.result is TestResult.VOID and self.corrects_id is None:
            raise ValueError(
                "result: 'void' withdraws a record entered in error; say which (corrects_id)"
            )
        if (self.open_circuit_v is None) != (self.loaded_v is None):
            raise ValueError(
                "loaded_v: a load test needs both the open-circuit and the loaded voltage"
            )
        if (
            self.open_circuit_v is not None
            and self.loaded_v is not None
            and self.loaded_v > self.open_circuit_v
        ):
            raise ValueError(
                f"loaded_v: the loaded reading ({self.loaded_v:g} V) cannot be above the "
                f"open-circuit reading ({self.open_circuit_v:g} V); check the meter leads"
            )
        if self.load_a is not None and self.load_ohm is not None:
            raise ValueError("load_a: give the load test's current or its resistor, not both")
        if (self.load_a is not None or self.load_ohm is not None) and self.loaded_v is None:
            raise ValueError("loaded_v: a test load needs the voltages read with it")
        return self


class TestRecordRead(BaseModel):
    """A stored test record, with where it stands in the log."""

    __test__ = False
    model_config = ConfigDict(from_attributes=True)

    id: str
    fixture_id: str
    kind: TestKind
    tested_on: date
    tested_by: str
    result: TestResult
    observed_duration_min: float | None
    ran_to_cutoff: bool | None
    open_circuit_v: float | None
    loaded_v: float | None
    load_a: float | None
    load_ohm: float | None
    pack_replaced: bool
    action_taken: str
    notes: str
    corrects_id: str | None
    recorded_by: str | None
    recorded_at: datetime
    superseded_by: str | None = Field(
        default=None, description="The correction that replaced this record, if any."
    )


class TestRecordList(BaseModel):
    items: list[TestRecordRead]
    total: int


class NextTestRead(BaseModel):
    kind: TestKind
    due_on: date
    state: DueState
    days_left: int = Field(description="Days from today to the due date; negative when overdue.")
    basis: str = Field(description="commissioned, last-pass or failed")
    counted_from: date
    interval_days: int


class DueItem(BaseModel):
    """One test due (or overdue, or soon due) for one luminaire."""

    building_id: str
    building_name: str
    area_id: str
    area_name: str
    floor: str
    fixture_id: str
    fixture_tag: str
    location: str
    kind: TestKind
    due_on: date
    state: DueState
    days_left: int
    basis: str


class DueList(BaseModel):
    today: date
    due_soon_days: int
    items: list[DueItem]
    counts: dict[str, int] = Field(description="Number of items per state.")


class CapacityPoint(BaseModel):
    tested_on: date
    observed_min: float
    capacity_ah: float
    share_of_rated: float
    lower_bound: bool = Field(description="Test stopped with the lamp lit: at least this much.")


class TrendRead(BaseModel):
    origin: date
    intercept_ah: float
    slope_ah_per_year: float
    assumed_start: bool = Field(
        description="The line starts from the rated capacity at installation (one measurement)."
    )


class ReasonRead(BaseModel):
    code: str
    urgency: str = Field(description="replace (by due_on) or watch")
    due_on: date | None
    message: str
    source: str


class ConditionRead(BaseModel):
    """A pack's condition from the log; ``available`` false says why not."""

    fixture_id: str
    available: bool
    unavailable_reason: str = ""
    module_name: str | None = None
    pack_name: str | None = None
    current_a: float | None = Field(default=None, description="Battery current used. [A]")
    current_note: str = ""
    required_duration_min: float | None = None
    ambient_c: float | None = None
    rated_capacity_ah: float | None = None
    installed_on: date | None = None
    installed_basis: str = ""
    estimates: list[CapacityPoint] = []
    trend: TrendRead | None = None
    runtime_threshold_ah: float | None = Field(
        default=None, description="Capacity that just gives the required duration. [Ah]"
    )
    end_of_life_ah: float | None = Field(
        default=None, description="End-of-life share of the rated capacity. [Ah]"
    )
    runtime_short_on: date | None = Field(
        default=None, description="Forecast: the run-time falls below the required duration."
    )
    end_of_life_on: date | None = None
    service_life_years: float | None = None
    life_ends_on: date | None = None
    internal_ohm: float | None = None
    terminal_v: float | None = None
    cutoff_v: float | None = None
    reasons: list[ReasonRead] = []
    replace_by: date | None = None
    assumptions: list[str] = []


class ReplacementItem(BaseModel):
    building_id: str
    area_name: str
    floor: str
    fixture_id: str
    fixture_tag: str
    location: str
    pack_name: str
    chemistry: str
    replace_by: date
    overdue: bool
    reasons: list[ReasonRead]


class ReplacementList(BaseModel):
    today: date
    within_days: int
    items: list[ReplacementItem]
    unassessed: list[str] = Field(
        default=[], description="Tags of converted fixtures whose pack could not be assessed, why."
    )


class CalendarLinkRead(BaseModel):
    building_id: str
    url: str | None = Field(
        default=None, description="The secret address; given only when the link is made."
    )
    created_at: datetime
    active: bool


class ImportRowRead(BaseModel):
    line: int
    status: str = Field(description="ok, error or duplicate")
    message: str = ""
    fixture_tag: str = ""
    kind: str = ""
    tested_on: str = ""
    result: str = ""


class ImportReport(BaseModel):
    confirmed: bool
    saved: int
    ok: int
    errors: int
    duplicates: int
    rows: list[ImportRowRead]
