"""JSON shapes of the escape-route API: metres, lumens and lux, the unit in every name.

The names are fixed so that other tools can rely on them. Unknown fields are
refused (422). Geometry is checked by the engineering core, whose refusals
come back as 422 answers naming the field.
"""

from __future__ import annotations

from typing import Literal

from pydantic import BaseModel, Field, FiniteFloat

from server.calc.schemas import FindingOut
from server.common.schemas import StrictModel
from server.engineering.findings import Verdict
from server.engineering.routes import DEFAULT_MAINTENANCE_FACTOR, DEFAULT_STEP_M

MAX_POINTS = 1000  # our own limits, to keep an answer within a few seconds
MAX_LUMINAIRES = 500
MAX_FILE_CHARS = 1_000_000


class Lm63In(StrictModel):
    lm63: str = Field(
        max_length=MAX_FILE_CHARS,
        description="The whole text of an IES LM-63 photometric file (1986 to 2019 editions, "
        "TILT=NONE or INCLUDE, type C).",
    )


class RouteIn(StrictModel):
    points: list[tuple[FiniteFloat, FiniteFloat]] = Field(
        max_length=MAX_POINTS,
        description="The centre line on the floor plan, at least two points [[x_m, y_m], ...]. [m]",
    )
    width_m: FiniteFloat = Field(description="Width of the route. [m]")


class LuminaireIn(StrictModel):
    x_m: FiniteFloat = Field(description="Centre in plan. [m]")
    y_m: FiniteFloat = Field(description="Centre in plan. [m]")
    mounting_height_m: FiniteFloat = Field(description="Height above the floor. [m]")
    lumens: FiniteFloat = Field(
        description="Emergency lumens: rated lamp lumens times the emergency ballast lumen "
        "factor. [lm]"
    )
    length_m: FiniteFloat | None = Field(
        default=None, description="Luminous length; 0 or absent for a point source. [m]"
    )
    axis_deg: FiniteFloat = Field(
        default=0.0, description="Lamp axis in plan, counter-clockwise from x. [deg]"
    )
    distribution: Literal["lambertian"] | Lm63In = Field(
        default="lambertian",
        description='"lambertian" (a cosine emitter, the default) or {"lm63": "<file text>"}.',
    )
    end_flux_factor: FiniteFloat = Field(
        default=1.0,
        description="Share of the emergency lumens left at the end of the duration, 0 to 1; "
        "1 when the module declares its emergency ballast lumen factor. [-]",
    )


class CandidateIn(LuminaireIn):
    id: str = Field(min_length=1, max_length=100, description="The fixture's id.")
    cost: FiniteFloat = Field(description="Cost of converting it. [currency]")


class _RouteRequest(StrictModel):
    route: RouteIn
    profile: str = Field(description="Requirement profile id, e.g. eu-escape-route, us-egress.")
    maintenance_factor: FiniteFloat = Field(default=DEFAULT_MAINTENANCE_FACTOR)
    step_m: FiniteFloat = Field(
        default=DEFAULT_STEP_M, description="Spacing along the centre line. [m]"
    )


class RouteIlluminanceIn(_RouteRequest):
    luminaires: list[LuminaireIn] = Field(max_length=MAX_LUMINAIRES)


class RoutePlanIn(_RouteRequest):
    candidates: list[CandidateIn] = Field(max_length=MAX_LUMINAIRES)


class SampleOut(BaseModel):
    s_m: float
    x_m: float
    y_m: float
    lux: float


class WorstOut(BaseModel):
    s_m: float
    lux: float


class RouteIlluminanceOut(BaseModel):
    samples: list[SampleOut]
    min_lux: float
    max_lux: float
    avg_lux: float
    max_min_ratio: float | None = Field(description="null when some point gets no light.")
    worst: WorstOut
    verdict: Verdict
    findings: list[FindingOut]


class ShortfallOut(BaseModel):
    s_m: float | None = Field(description="Where; null when an average falls short. [m]")
    lux_needed: float
    lux_best: float = Field(description="With every candidate converted. [lx]")


class RoutePlanOut(BaseModel):
    chosen: list[str]
    cost: float
    optimal: bool
    gap: float | None = Field(
        description="(cost - lower bound) / cost; 0 when optimal, null without a bound."
    )
    result: RouteIlluminanceOut
    shortfall: ShortfallOut | None
