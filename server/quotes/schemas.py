"""API shapes for quotes and their lines. Money travels as decimal strings."""

from __future__ import annotations

import uuid
from datetime import date, datetime
from decimal import Decimal
from typing import Annotated, Literal

from pydantic import BaseModel, Field, StringConstraints

from server.common.schemas import LongText, ShortText, StrictModel

Percent = Annotated[Decimal, Field(ge=0, le=100, max_digits=6, decimal_places=2)]
Rate = Annotated[Decimal, Field(ge=0, le=10_000, max_digits=10, decimal_places=2)]
Price = Annotated[Decimal, Field(ge=-1_000_000, le=1_000_000, max_digits=12, decimal_places=2)]
Quantity = Annotated[Decimal, Field(gt=0, le=100_000, max_digits=12, decimal_places=3)]
Hours = Annotated[Decimal, Field(ge=0, le=100, max_digits=6, decimal_places=2)]
Reason = Annotated[str, StringConstraints(min_length=10, max_length=1000, strip_whitespace=True)]
Description = Annotated[str, StringConstraints(min_length=1, max_length=500, strip_whitespace=True)]
Unit = Annotated[str, StringConstraints(min_length=1, max_length=20, strip_whitespace=True)]

QuoteStateName = Literal["draft", "sent", "accepted", "declined", "issued", "completed"]
LineKind = Literal["material", "labour", "supply", "sundry", "manual"]


class Override(StrictModel):
    fixture_id: str = Field(description="A fixture whose checks fail (or were not run).")
    reason: Reason = Field(description="Why it is quoted anyway; printed on the quote.")


class QuoteCreate(StrictModel):
    id: uuid.UUID | None = Field(
        default=None, description="Optional client-made UUID: the same create twice makes one."
    )
    overrides: list[Override] = Field(
        default_factory=list, description="Failing fixtures to quote anyway, each with a reason."
    )
    markup_pct: Percent | None = None
    discount_pct: Percent | None = None
    tax_pct: Percent | None = None


class QuoteSettings(StrictModel):
    """What a draft quote's PATCH may change; every field optional but ``version``."""

    version: int = Field(ge=1, description="The version the quote was read at.")
    client_name: ShortText | None = None
    client_address: Annotated[str, StringConstraints(max_length=500)] | None = None
    client_contact: ShortText | None = None
    labour_rate: Rate | None = None
    markup_pct: Percent | None = None
    discount_pct: Percent | None = None
    tax_pct: Percent | None = None
    series_link_h: Hours | None = None
    supply_run_h: Hours | None = None
    commissioning_h: Hours | None = None
    sundries_per_fixture: Rate | None = None
    supply_run_materials: Rate | None = None
    valid_until: date | None = None
    scope: LongText | None = None
    assumptions: LongText | None = None


class LineCreate(StrictModel):
    id: uuid.UUID | None = Field(default=None, description="Optional client-made UUID.")
    version: int = Field(ge=1, description="The quote's version.")
    kind: LineKind = "manual"
    description: Description
    quantity: Quantity
    unit: Unit = "ea"
    unit_price: Price


class LineUpdate(StrictModel):
    version: int = Field(ge=1, description="The quote's version.")
    description: Description | None = None
    quantity: Quantity | None = None
    unit: Unit | None = None
    unit_price: Price | None = None
    override_reason: Annotated[str, StringConstraints(max_length=1000)] | None = None


class OverrideCreate(Override):
    version: int = Field(ge=1, description="The quote's version.")


class VersionOnly(StrictModel):
    version: int = Field(ge=1, description="The quote's version.")


class Transition(StrictModel):
    to: QuoteStateName
    version: int | None = Field(default=None, ge=1, description="Refuse if the quote moved on.")


class LineRead(BaseModel):
    id: str
    position: int
    kind: str
    description: str
    quantity: Decimal
    unit: str
    unit_price: Decimal
    amount: Decimal
    fixture_id: str | None
    fixture_tag: str | None
    item_ref: str | None
    override_reason: str
    hand_edited: bool


class TotalsRead(BaseModel):
    subtotal: Decimal
    markup: Decimal
    discount: Decimal
    net: Decimal
    tax: Decimal
    total: Decimal


class NeedsOverride(BaseModel):
    fixture_id: str
    tag: str
    area: str
    verdict: str | None
    reasons: list[str]


class HistoryEntry(BaseModel):
    state: str
    by: str | None
    by_name: str
    at: datetime


class QuoteRead(BaseModel):
    id: str
    version: int
    number: str
    state: QuoteStateName
    building_id: str
    building_name: str
    client_name: str
    client_address: str
    client_contact: str
    currency: str
    labour_rate: Decimal
    markup_pct: Decimal
    discount_pct: Decimal
    tax_pct: Decimal
    series_link_h: Decimal
    supply_run_h: Decimal
    commissioning_h: Decimal
    sundries_per_fixture: Decimal
    supply_run_materials: Decimal
    valid_until: date | None
    scope: str
    assumptions: str
    lines: list[LineRead]
    totals: TotalsRead
    needs_override: list[NeedsOverride]
    history: list[HistoryEntry]
    allowed_transitions: list[str]
    work_order_id: str | None
    created_at: datetime
    updated_at: datetime


class QuoteSummary(BaseModel):
    id: str
    version: int
    number: str
    state: str
    building_id: str
    building_name: str
    total: Decimal
    currency: str
    updated_at: datetime


class QuotePage(BaseModel):
    items: list[QuoteSummary]
    total: int
    limit: int
    offset: int
