"""Escape routes: turn API shapes into engineering dataclasses and call the core.

A figure the core refuses (``InvalidInput``, an ``Lm63FormatError``, any
``ValueError``) becomes a 422 answer at the field it names, never a 500.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from contextlib import contextmanager

from fastapi.exceptions import RequestValidationError

from server.calc.service import findings_out
from server.engineering.errors import InvalidInput
from server.engineering.photometry import LAMBERTIAN, Distribution, Lm63FormatError, parse_lm63
from server.engineering.planner import DEFAULT_TIME_LIMIT_S, Candidate, plan_conversions
from server.engineering.profiles import Profile, get_profile
from server.engineering.routes import Luminaire, Route, RouteResult, evaluate_route
from server.escape import schemas

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
