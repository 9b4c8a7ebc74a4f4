"""API shapes for work orders and the crew's tasks."""

from __future__ import annotations

import uuid
from datetime import date, datetime
from typing import Annotated, Literal

from pydantic import BaseModel, Field, StringConstraints, model_validator

from server.common.schemas import LongText, StrictModel

Crew = Annotated[str, StringConstraints(max_length=500, strip_whitespace=True)]
TaskStatus = Literal["open", "done", "problem"]
WorkOrderStateName = Literal["issued", "completed"]
Minutes = Annotated[float, Field(ge=0, le=24 * 60)]


class WorkOrderIssue(StrictModel):
    id: uuid.UUID | None = Field(default=None, description="Optional client-made UUID.")
    crew: Crew = ""
    scheduled_on: date | None = None
    crew_notes: LongText = ""


class WorkOrderUpdate(StrictModel):
    version: int = Field(ge=1, description="The version the work order was read at.")
    crew: Crew | None = None
    scheduled_on: date | None = None
    crew_notes: LongText | None = None


class TaskUpdate(StrictModel):
    """A fixture ticked done with its commissioning readings, a problem, or reopened."""

    version: int = Field(ge=1, description="The version the task was read at.")
    status: TaskStatus
    charge_indicator_ok: bool | None = Field(
        default=None, description="The module's charge indicator lit on mains."
    )
    function_test_ok: bool | None = Field(
        default=None, description="The lamp lit on battery when the test switch was pressed."
    )
    duration_test_min: Minutes | None = Field(
        default=None, description="Minutes the lamp ran on battery in the full-duration test."
    )
    problem: LongText = ""

    @model_validator(mode="after")
    def _status_needs(self) -> TaskUpdate:
        if self.status == "done":
            if self.charge_indicator_ok is not True:
                raise ValueError(
                    "charge_indicator_ok: a fixture is done only when its charge indicator is "
                    "on; if it is not, record a problem"
                )
            if self.function_test_ok is not True:
                raise ValueError(
                    "function_test_ok: a fixture is done only when the function test lights "
                    "the lamp on battery; if it did not, record a problem"
                )
        if self.status == "problem" and not self.problem.strip():
            raise ValueError("problem: say what is wrong, so the supervisor can act on it")
        return self


class CompleteBody(StrictModel):
    version: int | None = Field(default=None, ge=1, description="Refuse if the order moved on.")


class TaskRead(BaseModel):
    id: str
    version: int
    fixture_id: str
    tag: str
    area: str
    location: str
    status: TaskStatus
    wiring_notes: list[str]
    charge_indicator_ok: bool | None
    function_test_ok: bool | None
    duration_test_min: float | None
    required_duration_min: float
    problem: str
    done_by_name: str | None
    done_at: datetime | None


class Progress(BaseModel):
    total: int
    open: int
    done: int
    problem: int

    @property
    def percent_done(self) -> int:
        return round(100 * self.done / self.total) if self.total else 0


class WorkOrderRead(BaseModel):
    id: str
    version: int
    number: str
    state: WorkOrderStateName
    quote_id: str
    quote_number: str
    building_id: str
    building_name: str
    crew: str
    scheduled_on: date | None
    crew_notes: str
    issued_by_name: str | None
    issued_at: datetime | None
    signed_off_by_name: str | None
    signed_off_at: datetime | None
    progress: Progress
    tasks: list[TaskRead]
    created_at: datetime
    updated_at: datetime


class WorkOrderSummary(BaseModel):
    id: str
    number: str
    state: str
    building_name: str
    quote_number: str
    scheduled_on: date | None
    progress: Progress


class WorkOrderPage(BaseModel):
    items: list[WorkOrderSummary]
    total: int
    limit: int
    offset: int
