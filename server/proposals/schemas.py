"""API shapes for proposals: the chosen module and pack, the stored checks, suggestions."""

from __future__ import annotations

import uuid
from datetime import datetime
from decimal import Decimal
from enum import StrEnum

from pydantic import Field

from server.calc.schemas import FindingOut
from server.common.schemas import LongText, ReadBase, StrictModel
from server.engineering.findings import Verdict
from server.sites.schemas import FixtureCreate


class Status(StrEnum):
    """Where a proposal stands. The quote builder takes the accepted ones."""

    DRAFT = "draft"
    ACCEPTED = "accepted"


class VerdictFilter(StrEnum):
    """An area's fixtures by the verdict of their proposal, or those without one."""

    PASS = "pass"
    WARN = "warn"
    FAIL = "fail"
    NONE = "none"


class ProposalRead(ReadBase):
    fixture_id: str
    module_id: str
    pack_id: str
    status: Status
    verdict: Verdict | None
    findings: list[FindingOut] = Field(description="What the checks said, worst first.")
    runtime_new_min: float | None = Field(description="Run-time with a new pack. [min]")
    runtime_end_of_life_min: float | None = Field(
        description="Run-time at end of pack life (80 % capacity). [min]"
    )
    c_rate: float | None = Field(description="Battery current over rated capacity. [1/h]")
    recharge_h: float | None = Field(description="Recharge time from flat. [h]")
    eblf: float | None = Field(description="Emergency ballast lumen factor. [-]")
    eblf_is_estimate: bool | None = Field(description="True when the EBLF is estimated.")
    emergency_lumens: float | None = Field(description="Light output on battery. [lm]")
    computed_at: datetime | None
    override_reason: str


class ProposalPut(StrictModel):
    """Choose the module and pack. Send ``version`` to change an existing proposal."""

    module_id: str = Field(min_length=1, max_length=36)
    pack_id: str = Field(min_length=1, max_length=36)
    version: int | None = Field(
        default=None, ge=1, description="The version read; leave out to create."
    )
    id: uuid.UUID | None = Field(
        default=None, description="Optional client-made UUID for the proposal."
    )


class AcceptBody(StrictModel):
    version: int = Field(ge=1, description="The version read.")
    override_reason: LongText = Field(
        default="", description="Needed when the checks fail: why the fixture is accepted anyway."
    )


class UnacceptBody(StrictModel):
    version: int = Field(ge=1, description="The version read.")


class SuggestBody(StrictModel):
    apply: bool = Field(
        default=True, description="Store the suggestion as the proposal when it passes."
    )
    version: int | None = Field(
        default=None, ge=1, description="The version read, when a proposal exists."
    )


class CombinationRead(StrictModel):
    module_id: str
    module_name: str
    pack_id: str
    pack_name: str
    price: Decimal = Field(description="Module price plus pack price.")
    verdict: Verdict
    findings: list[FindingOut]


class SuggestionRead(StrictModel):
    passes: bool = Field(description="True when a combination passes every rule.")
    explanation: str
    combinations: int = Field(description="Module and pack pairs checked.")
    combination: CombinationRead | None = Field(
        description="The cheapest passing pair, or the nearest miss when none passes."
    )
    proposal: ProposalRead | None = Field(description="The proposal stored, when applied.")


class CheckBody(StrictModel):
    """A fixture as surveyed (saved or not) with a module and pack of the catalogue."""

    fixture: FixtureCreate
    module_id: str = Field(min_length=1, max_length=36)
    pack_id: str = Field(min_length=1, max_length=36)


class CheckRead(StrictModel):
    verdict: Verdict
    findings: list[FindingOut]
    runtime_new_min: float | None
    runtime_end_of_life_min: float | None
    required_min: float
    c_rate: float
    recharge_h: float
    eblf: float
    eblf_is_estimate: bool
    emergency_lumens: float | None
    assumptions: list[str]
    cautions: list[str]


class FixtureProposalRead(StrictModel):
    fixture_id: str
    tag: str
    stale: bool = Field(description="The survey or the catalogue changed after the checks ran.")
    proposal: ProposalRead | None


class AreaProposalsRead(StrictModel):
    area_id: str
    counts: dict[VerdictFilter, int]
    items: list[FixtureProposalRead]
