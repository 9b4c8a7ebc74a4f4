"""Escape routes: turn API shapes into engineering dataclasses and call the core.

A figure the core refuses (``InvalidInput``, an ``Lm63FormatError``, any
``ValueError``) becomes a 422 answer at the field it names, never a 500.

The second half serves the route page: an area's stored route, its fixtures
placed on it with what converting each would give and cost, the planner run
on them, and the plan accepted into proposals.
"""

from __future__ import annotations

import itertools
import math
import re
from collections.abc import Iterable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, replace
from dataclasses import field as dataclass_field
from dataclasses import fields as dataclass_fields
from datetime import date
from decimal import Decimal
from typing import Any

from fastapi.exceptions import RequestValidationError
from pydantic import BaseModel, Field, FiniteFloat
from sqlalchemy import select
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from server.accounts.models import Organisation, User
from server.calc.service import findings_out
from server.catalogue.models import BatteryPack, EmergencyModule
from server.common import crud
from server.common.errors import Conflict
from server.common.errors import InvalidInput as PageInvalidInput
from server.engineering import lamps
from server.engineering.errors import InvalidInput
from server.engineering.findings import verdict_of, worst_first
from server.engineering.photometry import LAMBERTIAN, Distribution, Lm63FormatError, parse_lm63
from server.engineering.planner import DEFAULT_TIME_LIMIT_S, Candidate, Plan, plan_conversions
from server.engineering.profiles import Profile, get_profile
from server.engineering.routes import (
    DEFAULT_MAINTENANCE_FACTOR,
    DEFAULT_STEP_M,
    MAX_SAMPLES,
    Luminaire,
    Route,
    RouteResult,
    evaluate_route,
)
from server.engineering.vocabulary import LampType, Wiring
from server.escape import schemas
from server.escape.models import EscapeRoute
from server.proposals import service as proposals
from server.proposals.models import Proposal
from server.quotes import service as quotes
from server.sites.models import Area, Building, Fixture

# Engineering field names that the API spells differently.
API_FIELD = {"emergency_flux_lm": "lumens", "points_m": "points"}

CANDIDATE_FIELDS = frozenset({"id", "cost"})

Where = tuple[str | int, ...]


def _refusal(where: Where, message: str) -> RequestValidationError:
    return RequestValidationError(
        [{"loc": ("body", *where), "msg": message, "type": "value_error"}]
    )


@contextmanager
def refused_as_422(*where: str | int) -> Iterator[None]:
    """Report a refusal of the core at ``body.<where>.<field>``."""
    try:
        yield
    except InvalidInput as exc:
        raise _refusal((*where, API_FIELD.get(exc.field, exc.field)), exc.reason) from exc
    except ValueError as exc:
        raise _refusal(where, str(exc)) from exc


def _profile(profile_id: str) -> Profile:
    with refused_as_422("profile"):
        return get_profile(profile_id)


def _route(route: schemas.RouteIn) -> Route:
    with refused_as_422("route"):
        return Route(tuple(route.points), route.width_m)


def _luminaires(items: Sequence[schemas.LuminaireIn], where: str) -> list[Luminaire]:
    files: dict[str, Distribution] = {}  # one parse per distinct file text
    luminaires = []
    for index, item in enumerate(items):
        distribution: Distribution = LAMBERTIAN
        if isinstance(item.distribution, schemas.Lm63In):
            text = item.distribution.lm63
            if text not in files:
                try:
                    files[text] = parse_lm63(text)
                except Lm63FormatError as exc:
                    raise _refusal((where, index, "distribution", "lm63"), str(exc)) from exc
            distribution = files[text]
        with refused_as_422(where, index):
            luminaires.append(
                Luminaire(
                    x_m=item.x_m,
                    y_m=item.y_m,
                    mounting_height_m=item.mounting_height_m,
                    emergency_flux_lm=item.lumens,
                    length_m=item.length_m or 0.0,
                    axis_deg=item.axis_deg,
                    distribution=distribution,
                    end_flux_factor=item.end_flux_factor,
                )
            )
    return luminaires


def result_out(result: RouteResult) -> schemas.RouteIlluminanceOut:
    return schemas.RouteIlluminanceOut(
        samples=[
            schemas.SampleOut(s_m=s.s_m, x_m=s.x_m, y_m=s.y_m, lux=s.illuminance_lx)
            for s in result.samples
        ],
        min_lux=result.min_lux,
        max_lux=result.max_lux,
        avg_lux=result.avg_lux,
        max_min_ratio=result.max_min_ratio,
        worst=schemas.WorstOut(s_m=result.worst_s_m, lux=result.worst_lux),
        verdict=result.verdict,
        findings=findings_out(result.findings),
    )


def route_illuminance(*, payload: schemas.RouteIlluminanceIn) -> schemas.RouteIlluminanceOut:
    profile = _profile(payload.profile)
    route = _route(payload.route)
    luminaires = _luminaires(payload.luminaires, "luminaires")
    with refused_as_422():
        result = evaluate_route(
            route,
            luminaires,
            profile,
            maintenance_factor=payload.maintenance_factor,
            step_m=payload.step_m,
        )
    return result_out(result)


def route_plan(
    *, payload: schemas.RoutePlanIn, time_limit_s: float = DEFAULT_TIME_LIMIT_S
) -> schemas.RoutePlanOut:
    profile = _profile(payload.profile)
    route = _route(payload.route)
    luminaires = _luminaires(payload.candidates, "candidates")
    candidates = [
        Candidate(id=item.id, cost=item.cost, luminaire=luminaire)
        for item, luminaire in zip(payload.candidates, luminaires, strict=True)
    ]
    try:
        plan = plan_conversions(
            route,
            candidates,
            profile,
            maintenance_factor=payload.maintenance_factor,
            step_m=payload.step_m,
            time_limit_s=time_limit_s,
        )
    except InvalidInput as exc:  # a repeated id or a negative cost is a candidates' field
        where = ("candidates", exc.field) if exc.field in CANDIDATE_FIELDS else (exc.field,)
        raise _refusal(where, exc.reason) from exc
    except ValueError as exc:
        raise _refusal((), str(exc)) from exc
    shortfall = plan.shortfall
    return schemas.RoutePlanOut(
        chosen=list(plan.chosen_ids),
        cost=plan.cost,
        optimal=plan.optimal,
        gap=plan.gap,
        result=result_out(plan.result),
        shortfall=None
        if shortfall is None
        else schemas.ShortfallOut(
            s_m=shortfall.s_m, lux_needed=shortfall.lux_needed, lux_best=shortfall.lux_best
        ),
    )


# ==== The route page: an area's route, its fixtures, the planner, the plan accepted ====
#
# Everything below reads and writes the database; the API calculators above do not.

MAX_COORDINATE_M = 10_000.0  # our own bound on a plan coordinate (10 km from the origin)
MAX_ROUTE_LENGTH_M = (MAX_SAMPLES - 1) * DEFAULT_STEP_M  # 1 km at the page's 0.1 m step
MAX_POINTS_TEXT = 5_000  # characters of the points field (some 300 points)

PLANNING_BATTERY_W = 7.0
"""Battery power assumed for a fixture the catalogue has no module for: a small
emergency module (the check value of ENGINEERING.md section 3: about 7 W into a
58 W lamp gives an EBLF near 0.09; common practice). Only for the estimate."""

COST_METHOD = (
    "Cost of converting a fixture, by the quote rules: module price + pack price + sundries "
    f"({quotes.DEFAULT_SUNDRIES_PER_FIXTURE} per fixture) + labour hours x the firm's labour "
    "rate, the hours being the module's fitting hours + "
    f"{quotes.DEFAULT_COMMISSIONING_H} h commissioning, + {quotes.DEFAULT_SERIES_LINK_H} h "
    f"where the lamps are in series, + {quotes.DEFAULT_SUPPLY_RUN_H} h and "
    f"{quotes.DEFAULT_SUPPLY_RUN_MATERIALS} of cable where no unswitched supply is at the "
    "fixture. These are the quote's default allowances; a quote may change them."
)
PLACEMENT_NOTE = (
    "Fixtures stand at their plan x and y; a fixture without them stands on the centre line "
    "at its position along the route. Its height is its own mounting height, else the "
    "area's. A linear lamp is taken as lying along the nearest stretch of the route (the "
    "survey does not record which way it points), and every luminaire as a cosine emitter "
    "(no photometric file)."
)


class EscapeRouteForm(BaseModel):
    """The route as the page's form sends it: the points as typed, width, maintenance factor."""

    points: str = Field(max_length=MAX_POINTS_TEXT)
    width_m: FiniteFloat
    maintenance_factor: FiniteFloat = DEFAULT_MAINTENANCE_FACTOR


def parse_points(text: str) -> list[tuple[float, float]]:
    """``"0,0; 30,0; 30,12"`` as plan points: pairs split by ``;`` or new lines, x and y
    by a comma or a space.

    Raises
    ------
    server.common.errors.InvalidInput
        On ``points``, naming the pair that is not two finite numbers.
    """
    pairs = [pair.strip() for pair in re.split(r"[;\r\n]+", text) if pair.strip()]
    if not pairs:
        raise PageInvalidInput(
            "points", "enter the centre line as x,y pairs in metres, like 0,1; 30,1"
        )
    if len(pairs) > schemas.MAX_POINTS:
        raise PageInvalidInput(
            "points", f"a route takes at most {schemas.MAX_POINTS} points; this has {len(pairs)}"
        )
    points = []
    for number, pair in enumerate(pairs, start=1):
        parts = [part for part in re.split(r"[,\s]+", pair) if part]
        try:
            x_m, y_m = (float(part) for part in parts)
        except ValueError:
            raise PageInvalidInput(
                "points",
                f"point {number} ({pair}) must be two numbers, x and y in metres, like 30,12",
            ) from None
        if not all(math.isfinite(v) and abs(v) <= MAX_COORDINATE_M for v in (x_m, y_m)):
            raise PageInvalidInput(
                "points",
                f"point {number} ({pair}) must lie within {MAX_COORDINATE_M:,.0f} m of the "
                "plan's origin",
            )
        points.append((x_m, y_m))
    return points


def format_points(points: Sequence[Sequence[float]]) -> str:
    """Plan points as the form shows them: ``"0,1; 30,1"``."""
    return "; ".join(f"{x:.10g},{y:.10g}" for x, y in points)


def engine_route(points: Sequence[Sequence[float]], width_m: float) -> Route:
    """The core's route; its refusal becomes an InvalidInput on ``points`` or ``width_m``."""
    try:
        route = Route(tuple((float(x), float(y)) for x, y in points), width_m)
    except InvalidInput as exc:
        raise PageInvalidInput(API_FIELD.get(exc.field, exc.field), exc.reason) from None
    if route.length_m > MAX_ROUTE_LENGTH_M:
        raise PageInvalidInput(
            "points",
            f"this route is {route.length_m:,.1f} m long; the page checks up to "
            f"{MAX_ROUTE_LENGTH_M:,.0f} m: split it into areas",
        )
    return route


def route_of(*, session: Session, org_id: str, area_id: str) -> EscapeRoute | None:
    """The area's stored route, if it has one."""
    return session.scalars(
        select(EscapeRoute).where(EscapeRoute.org_id == org_id, EscapeRoute.area_id == area_id)
    ).one_or_none()


def route_form_values(route: EscapeRoute) -> dict[str, Any]:
    """A stored route as the form shows it (also what a stale save carries)."""
    return {
        "points": format_points(route.points_m),
        "width_m": route.width_m,
        "maintenance_factor": route.maintenance_factor,
        "version": route.version,
    }


def suggested_route(area: Area) -> dict[str, Any] | None:
    """A straight centre line along the area's length at mid-width, where both are known."""
    if not area.length_m or not area.width_m:
        return None
    middle_m = area.width_m / 2
    return {
        "points": format_points([(0.0, middle_m), (area.length_m, middle_m)]),
        "width_m": area.width_m,
        "maintenance_factor": DEFAULT_MAINTENANCE_FACTOR,
    }


def save_route(
    *,
    session: Session,
    user: User,
    area: Area,
    body: EscapeRouteForm,
    version: int | None,
    route_id: str | None = None,
) -> EscapeRoute:
    """Create or change the area's route, after the core has checked the geometry.

    Raises
    ------
    server.common.errors.InvalidInput
        On ``points``, ``width_m`` or ``maintenance_factor``, with the reason.
    Conflict
        When someone else saved the route first (``current`` holds theirs).
    """
    points = parse_points(body.points)
    engine_route(points, body.width_m)
    if not 0 < body.maintenance_factor <= 1:
        raise PageInvalidInput(
            "maintenance_factor",
            "the maintenance factor lies above 0 and at most 1 (0.8 is usual)",
        )
    values: dict[str, Any] = {
        "points_m": [[x_m, y_m] for x_m, y_m in points],
        "width_m": body.width_m,
        "maintenance_factor": body.maintenance_factor,
    }
    existing = route_of(session=session, org_id=user.org_id, area_id=area.id)
    if existing is None:
        try:
            record, _ = crud.create_idempotent(
                session,
                EscapeRoute,
                org_id=user.org_id,
                user=user,
                values={**values, "area_id": area.id},
                record_id=route_id,
            )
        except IntegrityError:
            session.rollback()
            raise Conflict("Someone else saved a route for this area at the same moment.") from None
        return record
    unchanged = all(getattr(existing, name) == value for name, value in values.items())
    if version is None and route_id == existing.id and unchanged:
        return existing  # the same create sent twice (a double tap, a retry)
    if version is None:
        raise Conflict(
            f"Someone else saved a route for this area first (version {existing.version}). "
            "Nothing was changed.",
            current=route_form_values(existing),
        )
    return crud.update_versioned(
        session,
        existing,
        user=user,
        version=version,
        changes=values,
        current=route_form_values(existing),
    )


# ---- the fixtures on the route ----


@dataclass(frozen=True, slots=True)
class Conversion:
    """What converting one fixture gives and costs, and where the figures come from."""

    emergency_lm: float
    lumens_source: str
    passes: bool  # a module + pack that passes every rule (or the fixture's own proposal)
    module: EmergencyModule | None
    pack: BatteryPack | None
    cost: Decimal
    cost_text: str


@dataclass(frozen=True, slots=True)
class RouteFixture:
    """A fixture of the area as the route sees it.

    ``problem`` says why it is left out of the calculation (no place, no
    height, no lumens); empty when it takes part.
    """

    fixture: Fixture
    proposal: Proposal | None
    converted: bool  # its proposal is accepted
    x_m: float | None
    y_m: float | None
    s_m: float | None  # distance along the route of its nearest centre-line point
    placed_by: str
    mounting_height_m: float | None
    height_from: str
    length_m: float
    axis_deg: float
    conversion: Conversion | None
    problem: str = ""

    @property
    def usable(self) -> bool:
        return not self.problem and self.conversion is not None

    def luminaire(self) -> Luminaire:
        assert self.usable and self.conversion is not None
        assert self.x_m is not None and self.y_m is not None
        assert self.mounting_height_m is not None
        return Luminaire(
            x_m=self.x_m,
            y_m=self.y_m,
            mounting_height_m=self.mounting_height_m,
            emergency_flux_lm=self.conversion.emergency_lm,
            length_m=self.length_m,
            axis_deg=self.axis_deg,
        )


@dataclass(frozen=True, slots=True)
class RouteState:
    """An area with its route, its fixtures placed on it, and the light the converted ones give.

    ``now`` is None without a route; its illuminance counts the fixtures
    whose proposals are accepted.
    """

    area: Area
    building: Building
    profile: Profile
    route: EscapeRoute | None
    geometry: Route | None
    fixtures: list[RouteFixture]
    now: RouteResult | None
    labour_rate: Decimal
    currency: str


def _segments(route: Route) -> list[tuple[float, float, float, float, float]]:
    """(x0, y0, dx, dy, length) of each stretch of the centre line with a length."""
    stretches = []
    for (x0, y0), (x1, y1) in itertools.pairwise(route.points_m):
        length = math.hypot(x1 - x0, y1 - y0)
        if length > 0:
            stretches.append((x0, y0, x1 - x0, y1 - y0, length))
    return stretches


def point_at_m(route: Route, s_m: float) -> tuple[float, float, float]:
    """Plan point and direction (degrees from x) at distance ``s_m`` along the centre line."""
    remaining = min(max(s_m, 0.0), route.length_m)
    stretches = _segments(route)
    for x0, y0, dx, dy, length in stretches:
        if remaining <= length:
            share = remaining / length
            return x0 + share * dx, y0 + share * dy, math.degrees(math.atan2(dy, dx))
        remaining -= length
    x0, y0, dx, dy, _ = stretches[-1]
    return x0 + dx, y0 + dy, math.degrees(math.atan2(dy, dx))


def nearest_on_route(route: Route, x_m: float, y_m: float) -> tuple[float, float]:
    """Distance along the route of the nearest centre-line point, and the stretch's direction."""
    best: tuple[float, float, float] | None = None  # (distance squared, s, direction)
    start_m = 0.0
    for x0, y0, dx, dy, length in _segments(route):
        along = min(max(((x_m - x0) * dx + (y_m - y0) * dy) / length, 0.0), length)
        px, py = x0 + dx * along / length, y0 + dy * along / length
        distance2 = (x_m - px) ** 2 + (y_m - py) ** 2
        if best is None or distance2 < best[0] - 1e-12:
            best = (distance2, start_m + along, math.degrees(math.atan2(dy, dx)))
        start_m += length
    assert best is not None
    return best[1], best[2]


def _lamp_length_m(fixture: Fixture) -> float:
    """Luminous length of a linear lamp (survey, else the lamp table); 0 for a compact lamp."""
    try:
        lamp_type = LampType(fixture.lamp_type)
    except ValueError:
        return 0.0
    if lamp_type not in lamps.LINEAR_LAMP_TYPES:
        return 0.0
    if fixture.lamp_length_mm:
        return fixture.lamp_length_mm / 1000.0
    rating = lamps.lamp_rating(lamp_type, fixture.lamp_w)
    return (rating.nominal_length_mm or 0.0) / 1000.0 if rating else 0.0


def _money(value: Decimal) -> str:
    return f"{quotes.to_cents(value):,.2f}"


def conversion_cost(
    fixture: Fixture,
    module: EmergencyModule | None,
    pack: BatteryPack | None,
    labour_rate: Decimal,
) -> tuple[Decimal, str]:
    """Cost of converting a fixture with this module and pack, by the quote rules
    (:data:`COST_METHOD`), and the sum written out.

    Without a module the fitting takes 1 h (the catalogue's default) and the
    materials are left out, which the text says.
    """
    materials = (module.price if module else Decimal(0)) + (pack.price if pack else Decimal(0))
    materials += quotes.DEFAULT_SUNDRIES_PER_FIXTURE
    hours = quotes.decimal_of(module.labour_h if module else 1.0) + quotes.DEFAULT_COMMISSIONING_H
    if fixture.wiring == Wiring.SERIES.value:
        hours += quotes.DEFAULT_SERIES_LINK_H
    if not fixture.unswitched_supply:
        hours += quotes.DEFAULT_SUPPLY_RUN_H
        materials += quotes.DEFAULT_SUPPLY_RUN_MATERIALS
    cost = quotes.to_cents(materials + quotes.to_cents(hours * labour_rate))
    text = f"{_money(materials)} materials + {hours:.2f} h x {_money(labour_rate)}"
    if module is None or pack is None:
        text += " (no module or pack price: the catalogue has none for it)"
    return cost, text


def _proposal_conversion(
    item: proposals.FixtureProposal, labour_rate: Decimal
) -> Conversion | None:
    proposal = item.proposal
    if proposal is None or proposal.emergency_lumens is None:
        return None
    cost, text = conversion_cost(item.fixture, item.module, item.pack, labour_rate)
    names = f"{item.module.name} + {item.pack.name}" if item.module and item.pack else ""
    state = "accepted" if proposal.status == "accepted" else "draft"
    estimate = " (EBLF estimated)" if proposal.eblf_is_estimate else ""
    return Conversion(
        emergency_lm=proposal.emergency_lumens,
        lumens_source=f"its {state} proposal {names}{estimate}".strip(),
        passes=proposal.verdict in ("pass", "warn"),
        module=item.module,
        pack=item.pack,
        cost=cost,
        cost_text=text,
    )


def _suggested_conversion(
    fixture: Fixture, suggestion: proposals.Suggestion, labour_rate: Decimal
) -> Conversion:
    """The cheapest passing module + pack; else an estimate of lamp lumens x EBLF."""
    module, pack = suggestion.module, suggestion.pack
    case = suggestion.result.case if suggestion.result is not None else None
    cost, text = conversion_cost(fixture, module, pack, labour_rate)
    if suggestion.passes and case is not None and case.emergency_lm is not None:
        assert module is not None and pack is not None
        estimate = " (EBLF estimated)" if case.eblf_is_estimate else ""
        return Conversion(
            emergency_lm=case.emergency_lm,
            lumens_source=f"the cheapest passing {module.name} + {pack.name}{estimate}",
            passes=True,
            module=module,
            pack=pack,
            cost=cost,
            cost_text=text,
        )
    lamp_lm, _ = lamps.typical_lumens_lm(LampType(fixture.lamp_type), fixture.lamp_w)
    backed_up_w = fixture.lamp_w * fixture.lamps_to_back_up
    battery_w = (module.battery_w if module else None) or PLANNING_BATTERY_W
    if module is not None and module.declared_eblf is not None:
        eblf = module.declared_eblf
    else:
        eblf = lamps.estimated_eblf(battery_w, backed_up_w)
    nearest = f"nearest miss {module.name}" if module else f"{battery_w:g} W from the battery"
    return Conversion(
        emergency_lm=lamps.emergency_lumens_lm(lamp_lm * fixture.lamps_to_back_up, eblf),
        lumens_source=(
            f"an estimate, {lamp_lm:.0f} lm x {fixture.lamps_to_back_up} lamp(s) x EBLF "
            f"{eblf:.3f} ({nearest}): no module and pack in the catalogue passes every rule"
        ),
        passes=False,
        module=module,
        pack=pack,
        cost=cost,
        cost_text=text,
    )


def _place(
    item: proposals.FixtureProposal, area: Area, geometry: Route | None
) -> tuple[dict[str, Any], str]:
    """Where a fixture stands and how high, and what keeps it off the route (if anything)."""
    fixture = item.fixture
    placed: dict[str, Any] = {
        "x_m": None,
        "y_m": None,
        "s_m": None,
        "placed_by": "",
        "axis_deg": 0.0,
        "mounting_height_m": fixture.mounting_height_m or area.mounting_height_m,
        "height_from": "fixture" if fixture.mounting_height_m else "area",
    }
    if placed["mounting_height_m"] is None:
        placed["height_from"] = ""
    if geometry is None:
        return placed, "the area has no route yet"
    if fixture.x_m is not None and fixture.y_m is not None:
        s_m, axis_deg = nearest_on_route(geometry, fixture.x_m, fixture.y_m)
        placed.update(
            x_m=fixture.x_m, y_m=fixture.y_m, s_m=s_m, axis_deg=axis_deg, placed_by="plan x, y"
        )
    elif fixture.position_m is not None:
        x_m, y_m, axis_deg = point_at_m(geometry, fixture.position_m)
        beyond = not 0 <= fixture.position_m <= geometry.length_m
        placed.update(
            x_m=x_m,
            y_m=y_m,
            s_m=min(max(fixture.position_m, 0.0), geometry.length_m),
            axis_deg=axis_deg,
            placed_by="position along the route"
            + (
                f" (beyond the route's {geometry.length_m:.1f} m: put at its end)" if beyond else ""
            ),
        )
    else:
        return placed, "no plan x and y and no position along the route: give one on its form"
    if placed["mounting_height_m"] is None:
        return placed, "no mounting height (neither the fixture's nor the area's)"
    return placed, ""


def route_state(
    *,
    session: Session,
    org_id: str,
    area: Area,
    with_candidates: bool = False,
    today: date | None = None,
) -> RouteState:
    """The area's route, each fixture placed on it, and the light of the converted ones.

    With ``with_candidates`` every fixture also gets what converting it would
    give and cost (its proposal; else the cheapest passing module + pack;
    else an estimate), for the planner.
    """
    building = crud.get_owned(session, Building, org_id=org_id, record_id=area.building_id)
    org = session.get(Organisation, org_id)
    assert org is not None
    profile = proposals.area_profile(session=session, org_id=org_id, profile_id=area.profile_id)
    stored = route_of(session=session, org_id=org_id, area_id=area.id)
    geometry = engine_route(stored.points_m, stored.width_m) if stored else None
    suggestions: dict[tuple[Any, ...], proposals.Suggestion] = {}
    fixtures = []
    for item in proposals.area_proposals(session=session, org_id=org_id, area=area):
        placed, problem = _place(item, area, geometry)
        converted = item.proposal is not None and item.proposal.status == "accepted"
        conversion = _proposal_conversion(item, org.labour_rate)
        if conversion is None and (with_candidates and not problem):
            try:
                core = proposals.engine_fixture(item.fixture)
                key = tuple(getattr(core, name.name) for name in dataclass_fields(core))
                if key not in suggestions:
                    suggestions[key] = proposals.suggest_cheapest(
                        session=session, org_id=org_id, fixture=item.fixture, area=area, today=today
                    )
                conversion = _suggested_conversion(item.fixture, suggestions[key], org.labour_rate)
            except (PageInvalidInput, InvalidInput) as exc:
                reason = exc.message if isinstance(exc, PageInvalidInput) else exc.reason
                problem = f"its light on battery cannot be worked out: {reason}"
        if not problem and converted and conversion is None:
            problem = (
                "its accepted proposal has no emergency lumens (the lamp's lumens are unknown)"
            )
        fixtures.append(
            RouteFixture(
                fixture=item.fixture,
                proposal=item.proposal,
                converted=converted,
                length_m=_lamp_length_m(item.fixture),
                conversion=conversion,
                problem=problem,
                **placed,
            )
        )
    now = None
    if geometry is not None and stored is not None:
        lit = [f.luminaire() for f in fixtures if f.converted and f.usable]
        now = evaluate_route(geometry, lit, profile, maintenance_factor=stored.maintenance_factor)
    return RouteState(
        area=area,
        building=building,
        profile=profile,
        route=stored,
        geometry=geometry,
        fixtures=fixtures,
        now=now,
        labour_rate=org.labour_rate,
        currency=org.currency,
    )


# ---- the planner on the area's fixtures ----


@dataclass(frozen=True, slots=True)
class PlanOutcome:
    """The planner's answer for the area, with the fixtures it weighed.

    The converted fixtures (accepted proposals) are decided already: they
    take part at no cost and are always among the chosen. ``cost`` is what
    the further conversions cost; ``result`` the light with all of them.
    """

    state: RouteState
    plan: Plan
    result: RouteResult
    candidates: list[RouteFixture]
    chosen: list[RouteFixture]
    kept: list[RouteFixture]  # converted already, counted at no cost
    cost: Decimal
    unrealisable: list[RouteFixture]  # chosen, but no module and pack passes for them

    @property
    def chosen_ids(self) -> set[str]:
        return {item.fixture.id for item in self.chosen}


def plan_route(
    *,
    session: Session,
    org_id: str,
    area: Area,
    time_limit_s: float = DEFAULT_TIME_LIMIT_S,
    today: date | None = None,
) -> PlanOutcome:
    """The cheapest set of the area's fixtures to convert so that its route meets the profile.

    Fixtures converted already are candidates at no cost, and kept in the
    chosen set even where the solver could leave them out (adding light
    never breaks a minimum or an average; max:min is checked on the result).

    Raises
    ------
    server.common.errors.InvalidInput
        On ``route`` when the area has no route yet.
    """
    state = route_state(
        session=session, org_id=org_id, area=area, with_candidates=True, today=today
    )
    if state.geometry is None or state.route is None:
        raise PageInvalidInput("route", "save the route first: the planner needs its centre line")
    candidates = [item for item in state.fixtures if item.usable]
    kept = [item for item in candidates if item.converted]
    try:
        plan = plan_conversions(
            state.geometry,
            [
                Candidate(
                    id=item.fixture.id,
                    cost=0.0 if item.converted else float(item.conversion.cost),
                    luminaire=item.luminaire(),
                )
                for item in candidates
                if item.conversion is not None
            ],
            state.profile,
            maintenance_factor=state.route.maintenance_factor,
            time_limit_s=time_limit_s,
        )
    except InvalidInput as exc:
        raise PageInvalidInput("route", exc.reason) from None
    picked = set(plan.chosen_ids) | {item.fixture.id for item in kept}
    chosen = [item for item in candidates if item.fixture.id in picked]
    result = plan.result
    if len(picked) > len(plan.chosen_ids):
        lit = evaluate_route(
            state.geometry,
            [item.luminaire() for item in chosen],
            state.profile,
            maintenance_factor=state.route.maintenance_factor,
        )
        said = [f for f in plan.result.findings if f.code in ("plan-optimal", "plan-fallback")]
        findings = worst_first([*said, *lit.findings])
        result = replace(lit, findings=tuple(findings), verdict=verdict_of(findings))
    added = [item for item in chosen if not item.converted]
    return PlanOutcome(
        state=state,
        plan=plan,
        result=result,
        candidates=candidates,
        chosen=chosen,
        kept=kept,
        cost=sum((item.conversion.cost for item in added if item.conversion), Decimal("0.00")),
        unrealisable=[
            item for item in added if item.conversion is not None and not item.conversion.passes
        ],
    )


# ---- accepting the plan into proposals ----


@dataclass(slots=True)
class AcceptedPlan:
    """What accepting a plan did, fixture by fixture (tags)."""

    created: list[str] = dataclass_field(default_factory=list)  # new proposal, accepted
    accepted: list[tuple[str, str]] = dataclass_field(
        default_factory=list
    )  # draft accepted as it was
    already: list[str] = dataclass_field(default_factory=list)  # accepted before
    not_done: list[tuple[str, str]] = dataclass_field(default_factory=list)  # tag, why


def accept_plan(
    *,
    session: Session,
    user: User,
    area: Area,
    chosen: Sequence[tuple[str, int | None]],
    today: date | None = None,
) -> AcceptedPlan:
    """Turn a plan's choice into accepted proposals; the other fixtures are left as they are.

    ``chosen`` holds each chosen fixture's id with the version of its proposal
    when the plan was made (None: it had none). A fixture without a proposal
    gets the cheapest module + pack that passes every rule, accepted. A draft
    is accepted as it stands; a proposal that changed after the plan, or one
    whose checks fail, is left untouched and reported, never overwritten.

    Raises
    ------
    server.common.errors.InvalidInput
        On ``chosen`` when a fixture is not one of the area's.
    """
    done = AcceptedPlan()
    fixtures = []
    for fixture_id, seen in chosen:
        fixture = session.get(Fixture, fixture_id)
        if fixture is None or fixture.org_id != user.org_id or fixture.area_id != area.id:
            raise PageInvalidInput("chosen", "the plan names a fixture that is not in this area")
        fixtures.append((fixture, seen))
    for fixture, seen in fixtures:
        proposal = proposals.proposal_of(session=session, org_id=user.org_id, fixture_id=fixture.id)
        try:
            if proposal is None and seen is not None:
                done.not_done.append(
                    (fixture.tag, "its proposal was deleted after the plan was made; plan again")
                )
            elif proposal is None:
                _propose_and_accept(session, user, fixture, done, today)
            elif seen != proposal.version:
                done.not_done.append(
                    (
                        fixture.tag,
                        "someone changed or made its proposal after the plan was made (now "
                        f"version {proposal.version}); it was left as it is: plan again",
                    )
                )
            elif proposal.status == "accepted":
                done.already.append(fixture.tag)
            else:
                proposals.accept(
                    session=session,
                    user=user,
                    fixture_id=fixture.id,
                    version=proposal.version,
                    today=today,
                )
                done.accepted.append((fixture.tag, _choice_names(session, proposal)))
        except PageInvalidInput as exc:
            session.rollback()
            done.not_done.append(
                (fixture.tag, f"{exc.message}; it stays a draft: accept it on its proposal page")
            )
        except Conflict as exc:
            session.rollback()
            done.not_done.append((fixture.tag, exc.message))
    return done


def _choice_names(session: Session, proposal: Proposal) -> str:
    module = session.get(EmergencyModule, proposal.module_id)
    pack = session.get(BatteryPack, proposal.pack_id)
    return f"{module.name if module else '?'} + {pack.name if pack else '?'}"


def _propose_and_accept(
    session: Session, user: User, fixture: Fixture, done: AcceptedPlan, today: date | None
) -> None:
    suggestion = proposals.suggest_cheapest(
        session=session, org_id=user.org_id, fixture=fixture, today=today
    )
    if not suggestion.passes or suggestion.module is None or suggestion.pack is None:
        done.not_done.append(
            (fixture.tag, f"no proposal was made: {suggestion.explanation}".rstrip("."))
        )
        return
    proposal, _ = proposals.save_proposal(
        session=session,
        user=user,
        fixture_id=fixture.id,
        module_id=suggestion.module.id,
        pack_id=suggestion.pack.id,
        today=today,
    )
    proposals.accept(
        session=session, user=user, fixture_id=fixture.id, version=proposal.version, today=today
    )
    done.created.append(fixture.tag)


# ---- the plot the page and the work order draw ----


@dataclass(frozen=True, slots=True)
class RoutePlotView:
    """Illuminance along a route, ready to draw: samples, required levels, darkest point."""

    title: str
    length_m: float
    s_m: tuple[float, ...]
    lux: tuple[float, ...]
    min_lux_required: float
    avg_lux_required: float | None
    min_lux: float
    max_lux: float
    avg_lux: float
    max_min_ratio: float | None
    worst_s_m: float
    worst_lux: float
    verdict: str
    maintenance_factor: float
    top_lux: float  # the scale: top of the illuminance axis [lx]
    clipped: bool  # the brightest points lie above it
    lux_step: float  # between illuminance ticks [lx]
    s_step_m: float  # between distance ticks [m]


def level_text(lux: float) -> str:
    """A required level in three figures: 1, 1.08, 10.8, 15. [lx]"""
    return f"{lux:.3g}" if lux < 1000 else f"{lux:.0f}"


def nice_step(span: float, most: int) -> float:
    """The smallest 1-2-5 step that cuts ``span`` into at most ``most`` parts."""
    if span <= 0:
        return 1.0
    base = 10 ** math.floor(math.log10(span / most))
    return next(m * base for m in (1, 2, 5, 10, 20) if span / (m * base) <= most)


def plot_view(result: RouteResult, profile: Profile, title: str) -> RoutePlotView:
    """The plot's values, with a scale that shows the required levels with room above.

    The scale stops at ten times the minimum (twice the average where one is
    asked): the levels that decide stay readable, and higher peaks are drawn
    cut off at the top (``clipped``).
    """
    floor_lux = max(profile.min_lux * 2.0, (profile.avg_lux or 0.0) * 1.25)
    cap_lux = max(profile.min_lux * 10.0, (profile.avg_lux or 0.0) * 2.0)
    top_lux = min(max(result.max_lux * 1.08, floor_lux), cap_lux)
    length_m = result.samples[-1].s_m
    return RoutePlotView(
        title=title,
        length_m=length_m,
        s_m=tuple(sample.s_m for sample in result.samples),
        lux=tuple(sample.illuminance_lx for sample in result.samples),
        min_lux_required=profile.min_lux,
        avg_lux_required=profile.avg_lux,
        min_lux=result.min_lux,
        max_lux=result.max_lux,
        avg_lux=result.avg_lux,
        max_min_ratio=result.max_min_ratio,
        worst_s_m=result.worst_s_m,
        worst_lux=result.worst_lux,
        verdict=result.verdict.value,
        maintenance_factor=result.maintenance_factor,
        top_lux=top_lux,
        clipped=result.max_lux > top_lux,
        lux_step=nice_step(top_lux, 6),
        s_step_m=nice_step(length_m, 10),
    )


def route_plots(
    *, session: Session, org_id: str, area_ids: Iterable[str]
) -> dict[str, RoutePlotView]:
    """For each of these areas that has a route: the light along it from its converted
    fixtures (accepted proposals), as the work order prints it."""
    plots = {}
    for area_id in area_ids:
        area = session.get(Area, area_id)
        if area is None or area.org_id != org_id:
            continue
        if route_of(session=session, org_id=org_id, area_id=area.id) is None:
            continue
        state = route_state(session=session, org_id=org_id, area=area)
        if state.now is not None:
            plots[area.id] = plot_view(
                state.now, state.profile, f"Emergency light along the route of {area.name}"
            )
    return plots
