"""An area's escape route: the centre line on the floor plan and its width.

One route per area. The requirement profile and the duration are the area's
own (``Area.profile_id``), so a route never disagrees with the area it runs
through.
"""

from __future__ import annotations

from sqlalchemy import JSON, Float, ForeignKey, String
from sqlalchemy.orm import Mapped, mapped_column

from server.common.models import OrgOwned
from server.db import Base


class EscapeRoute(OrgOwned, Base):
    __tablename__ = "escape_routes"

    area_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("areas.id", ondelete="CASCADE"), unique=True
    )
    # The centre line as [[x_m, y_m], ...] in the area's plan coordinates, at least two points.
    points_m: Mapped[list[list[float]]] = mapped_column(JSON, default=list)
    width_m: Mapped[float] = mapped_column(Float)
    maintenance_factor: Mapped[float] = mapped_column(Float, default=0.8)
