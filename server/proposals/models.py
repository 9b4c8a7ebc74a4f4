"""A proposal: the module and pack chosen for one fixture, with the stored checks."""

from __future__ import annotations

from datetime import datetime
from typing import Any

from sqlalchemy import JSON, Float, ForeignKey, String, Text
from sqlalchemy.orm import Mapped, mapped_column

from server.common.models import OrgOwned
from server.db import Base, UtcDateTime


class Proposal(OrgOwned, Base):
    __tablename__ = "proposals"

    fixture_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("fixtures.id", ondelete="CASCADE"), unique=True
    )
    module_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("emergency_modules.id", ondelete="RESTRICT"), index=True
    )
    pack_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("battery_packs.id", ondelete="RESTRICT"), index=True
    )
    status: Mapped[str] = mapped_column(String(20), default="draft")
    verdict: Mapped[str | None] = mapped_column(String(10))
    findings: Mapped[list[dict[str, Any]]] = mapped_column(JSON, default=list)
    runtime_new_min: Mapped[float | None] = mapped_column(Float)
    runtime_end_of_life_min: Mapped[float | None] = mapped_column(Float)
    c_rate: Mapped[float | None] = mapped_column(Float)
    recharge_h: Mapped[float | None] = mapped_column(Float)
    eblf: Mapped[float | None] = mapped_column(Float)
    eblf_is_estimate: Mapped[bool | None] = mapped_column()
    emergency_lumens: Mapped[float | None] = mapped_column(Float)
    computed_at: Mapped[datetime | None] = mapped_column(UtcDateTime())
    override_reason: Mapped[str] = mapped_column(Text, default="")
