"""The route page of an area: its escape route, the fixtures along it, the emergency
light on the floor, and the cheapest set of fixtures to convert.

Views parse, authorise, call :mod:`server.escape.service` and render ready
values: the two inline SVG drawings (the plan view and the illuminance plot)
arrive at the template as coordinates, so the template computes nothing and
the page needs no script.
"""

from __future__ import annotations

import math
import uuid
from collections.abc import Sequence
from dataclasses import dataclass, field

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from sqlalchemy.orm import Session
from starlette.datastructures import FormData

from server.accounts.models import Role, User, role_at_least
from server.common import crud, forms
from server.common.errors import Conflict, InvalidInput
from server.common.forms import FormDep, FormView
from server.common.labels import label
from server.deps import EstimatorUser, SessionDep, SurveyorUser
from server.engineering.findings import Verdict
from server.engineering.profiles import Profile, lux_to_footcandles
from server.engineering.routes import RouteResult
from server.escape import service
from server.escape.service import PlanOutcome, RouteFixture, RoutePlotView, RouteState
from server.proposals.pages import FindingView, finding_views
from server.sites.models import Area
from server.templating import render

router = APIRouter(include_in_schema=False)

ROUTE_LABELS = {
    "points": "Centre line points",
    "width_m": "Route width",
    "maintenance_factor": "Maintenance factor",
}
DESIGN_NOTE = (
    "These figures count the direct light of the converted fixtures on a flat, unobstructed "
    "floor along the centre line, as a cosine emitter per fixture; they do not check the "
    "points of emphasis (exits, stairs, changes of direction), stairs or routes wider than "
    "2\u00a0m. They support, and do not replace, a design checked by a qualified person under the "
    "codes that apply locally."
)


# ---- the illuminance plot (inline SVG from ready coordinates) ----


@dataclass(frozen=True, slots=True)
class Level:
    """A required level drawn across the plot."""

    y: float
    label: str
    label_y: float
    kind: str  # "min" or "avg", the CSS class suffix


@dataclass(frozen=True, slots=True)
class LuxPlot:
    key: str  # unique on the page: ids of the title and description
    width: int
    height: int
    left: float
    right: float
    top: float
    bottom: float
    points: str  # the polyline, one x,y per sample
    sample_count: int
    x_ticks: list[tuple[float, str]]
    y_ticks: list[tuple[float, float, str]]  # line y, label y, label
    tick_label_x: float
    tick_label_y: float
    unit_x: float
    unit_y: float
    unit_x_label_y: float
    levels: list[Level]
    level_x: float
    level_anchor: str
    clipped_note: str
    worst_x: float
    worst_y: float
    worst_label: str
    worst_label_x: float
    worst_label_y: float
    worst_anchor: str
    title: str
    description: str


LUX_W, LUX_H = 1000, 340
LUX_MARGIN = {"left": 70.0, "right": 20.0, "top": 18.0, "bottom": 50.0}


def lux_plot(view: RoutePlotView, key: str) -> LuxPlot:
    """The illuminance along the route with the required levels and the darkest point."""
    left, right = LUX_MARGIN["left"], LUX_W - LUX_MARGIN["right"]
    top, bottom = LUX_MARGIN["top"], LUX_H - LUX_MARGIN["bottom"]
    top_lux, length_m = view.top_lux, max(view.length_m, 1e-9)

    def x_of(s_m: float) -> float:
        return round(left + (right - left) * s_m / length_m, 1)

    def y_of(lux: float) -> float:
        return round(bottom - (bottom - top) * min(max(lux, 0.0), top_lux) / top_lux, 1)

    y_step, x_step = view.lux_step, view.s_step_m
    y_ticks = [
        (y_of(i * y_step), y_of(i * y_step) + 5, f"{i * y_step:g}")
        for i in range(int(top_lux / y_step + 1e-9) + 1)
    ]
    x_ticks = [
        (x_of(i * x_step), f"{i * x_step:g}") for i in range(int(length_m / x_step + 1e-9) + 1)
    ]
    worst_x, worst_y = x_of(view.worst_s_m), y_of(view.worst_lux)
    on_right = worst_x > (left + right) / 2
    # The levels are named at the end away from the darkest point, whose label sits by it.
    level_x, level_anchor = (left + 8, "start") if on_right else (right - 8, "end")
    levels = [
        Level(
            y_of(view.min_lux_required),
            f"minimum {service.level_text(view.min_lux_required)} lx",
            y_of(view.min_lux_required) - 7,
            "min",
        )
    ]
    if view.avg_lux_required is not None:
        levels.append(
            Level(
                y_of(view.avg_lux_required),
                f"average {service.level_text(view.avg_lux_required)} lx",
                y_of(view.avg_lux_required) - 7,
                "avg",
            )
        )
    worst_label = f"darkest {view.worst_lux:.2f} lx at {view.worst_s_m:.1f} m"
    description = (
        f"Illuminance on the floor along {view.length_m:.1f} m of centre line, "
        f"{len(view.s_m)} points, maintenance factor {view.maintenance_factor:g}: "
        f"minimum {view.min_lux:.2f} lx at {view.worst_s_m:.1f} m, average {view.avg_lux:.2f} lx, "
        f"maximum {view.max_lux:.2f} lx"
        + (f" (drawn cut off at {view.top_lux:.3g} lx)" if view.clipped else "")
        + "; the profile asks at least "
        f"{service.level_text(view.min_lux_required)} lx"
        + (
            f" and an average of {service.level_text(view.avg_lux_required)} lx."
            if view.avg_lux_required is not None
            else "."
        )
    )
    return LuxPlot(
        key=key,
        width=LUX_W,
        height=LUX_H,
        left=left,
        right=right,
        top=top,
        bottom=bottom,
        points=" ".join(
            f"{x_of(s):.1f},{y_of(e):.1f}" for s, e in zip(view.s_m, view.lux, strict=True)
        ),
        sample_count=len(view.s_m),
        x_ticks=x_ticks,
        y_ticks=y_ticks,
        tick_label_x=left - 8,
        tick_label_y=bottom + 20,
        unit_x=(left + right) / 2,
        unit_y=(top + bottom) / 2,
        unit_x_label_y=LUX_H - 6,
        levels=levels,
        level_x=level_x,
        level_anchor=level_anchor,
        clipped_note=f"brighter than {view.top_lux:.3g} lx: drawn cut off at the top"
        if view.clipped
        else "",
        worst_x=worst_x,
        worst_y=worst_y,
        worst_label=worst_label,
        worst_label_x=worst_x - 12 if on_right else worst_x + 12,
        worst_label_y=max(worst_y - 12, top + 14),
        worst_anchor="end" if on_right else "start",
        title=view.title,
        description=description,
    )


# ---- the plan view (inline SVG from ready coordinates) ----


@dataclass(frozen=True, slots=True)
class PlanSymbol:
    tag: str
    kind: str  # "converted" (filled) or "open" (hollow)
    chosen: bool
    x: float  # centre
    y: float
    width: float
    height: float
    rotate: float  # degrees, SVG sense
    label_x: float
    label_y: float
    label_anchor: str
    title: str

    @property
    def rect_x(self) -> float:
        return round(self.x - self.width / 2, 1)

    @property
    def rect_y(self) -> float:
        return round(self.y - self.height / 2, 1)

    @property
    def halo(self) -> tuple[float, float, float, float]:
        """x, y, width, height of the frame around a chosen fixture."""
        return (
            round(self.rect_x - HALO_PX, 1),
            round(self.rect_y - HALO_PX, 1),
            round(self.width + 2 * HALO_PX, 1),
            round(self.height + 2 * HALO_PX, 1),
        )


@dataclass(frozen=True, slots=True)
class PlanDrawing:
    width: int
    height: int
    outline: tuple[float, float, float, float] | None  # x, y, w, h of the area
    line: str
    band_px: float
    start: tuple[float, float]
    end: tuple[float, float]
    worst: tuple[float, float, float, float] | None  # the cross: left, top, right, bottom
    symbols: list[PlanSymbol]
    scale_bar: tuple[float, float, float, str]  # x1, x2, y, label
    scale_label: tuple[float, float]  # x, y of the label
    title: str
    description: str


PLAN_W = 1000
PLAN_PAD = {"left": 64.0, "right": 64.0, "top": 40.0, "bottom": 56.0}
LABEL_GAP_PX = 12.0
HALO_PX = 6.0
CROSS_PX = 9.0
PLAN_MAX_H, PLAN_MIN_H = 620, 220
SYMBOL_THICK_PX, SYMBOL_MIN_PX = 11.0, 15.0


def plan_drawing(
    state: RouteState, *, chosen: frozenset[str] = frozenset(), worst_s_m: float | None = None
) -> PlanDrawing | None:
    """The route with its width, the area's outline and every placed fixture."""
    route = state.geometry
    if route is None:
        return None
    half = route.width_m / 2
    xs = [x for x, _ in route.points_m]
    ys = [y for _, y in route.points_m]
    placed = [f for f in state.fixtures if f.x_m is not None and f.y_m is not None]
    xs += [f.x_m for f in placed if f.x_m is not None]
    ys += [f.y_m for f in placed if f.y_m is not None]
    area = state.area
    if area.length_m and area.width_m:
        xs += [0.0, area.length_m]
        ys += [0.0, area.width_m]
    x_min, x_max = min(xs) - half, max(xs) + half
    y_min, y_max = min(ys) - half, max(ys) + half
    inner_w = PLAN_W - PLAN_PAD["left"] - PLAN_PAD["right"]
    inner_h = PLAN_MAX_H - PLAN_PAD["top"] - PLAN_PAD["bottom"]
    scale = min(inner_w / (x_max - x_min), inner_h / max(y_max - y_min, 1e-9))
    height = max(PLAN_MIN_H, round((y_max - y_min) * scale + PLAN_PAD["top"] + PLAN_PAD["bottom"]))
    used_w = (x_max - x_min) * scale
    used_h = (y_max - y_min) * scale
    left = PLAN_PAD["left"] + (inner_w - used_w) / 2
    top = PLAN_PAD["top"] + (height - PLAN_PAD["top"] - PLAN_PAD["bottom"] - used_h) / 2

    def px(x_m: float, y_m: float) -> tuple[float, float]:
        # Plan y grows upwards, as on a drawing.
        return round(left + (x_m - x_min) * scale, 1), round(top + (y_max - y_m) * scale, 1)

    outline = None
    if area.length_m and area.width_m:
        ox, oy = px(0.0, area.width_m)
        outline = (ox, oy, round(area.length_m * scale, 1), round(area.width_m * scale, 1))
    ordered = sorted(placed, key=lambda f: (f.s_m or 0.0, f.fixture.tag))
    symbols = []
    for index, item in enumerate(ordered):
        assert item.x_m is not None and item.y_m is not None
        cx, cy = px(item.x_m, item.y_m)
        long_px = max(item.length_m * scale, SYMBOL_MIN_PX)
        thick_px = SYMBOL_THICK_PX if item.length_m > 0 else SYMBOL_MIN_PX
        label_x, label_y, anchor = _label_place(cx, cy, item.axis_deg, thick_px, index)
        state_text = "converted" if item.converted else "not converted"
        if item.fixture.id in chosen:
            state_text += ", chosen by the plan"
        symbols.append(
            PlanSymbol(
                tag=item.fixture.tag,
                kind="converted" if item.converted else "open",
                chosen=item.fixture.id in chosen,
                x=cx,
                y=cy,
                width=round(long_px, 1),
                height=thick_px,
                rotate=round(-item.axis_deg, 1) if item.length_m > 0 else 0.0,
                label_x=label_x,
                label_y=label_y,
                label_anchor=anchor,
                title=f"{item.fixture.tag}: {state_text}, {item.s_m or 0:.1f} m along the route",
            )
        )
    start, end = px(*route.points_m[0]), px(*route.points_m[-1])
    worst = None
    if worst_s_m is not None:
        wx, wy = px(*service.point_at_m(route, worst_s_m)[:2])
        worst = (wx - CROSS_PX, wy - CROSS_PX, wx + CROSS_PX, wy + CROSS_PX)
    bar_m = service.nice_step((x_max - x_min) / 4, 1)
    bar_x1 = PLAN_PAD["left"]
    bar_y = height - 16.0
    description = (
        f"Plan of the route: {route.length_m:.1f} m of centre line, {route.width_m:g} m wide; "
        f"{len(symbols)} fixtures placed, "
        f"{sum(1 for s in symbols if s.kind == 'converted')} converted"
        + (f", {sum(1 for s in symbols if s.chosen)} chosen by the plan." if chosen else ".")
    )
    return PlanDrawing(
        width=PLAN_W,
        height=height,
        outline=outline,
        line=" ".join(f"{x},{y}" for x, y in (px(*p) for p in route.points_m)),
        band_px=round(route.width_m * scale, 1),
        start=start,
        end=end,
        worst=worst,
        symbols=symbols,
        scale_bar=(bar_x1, round(bar_x1 + bar_m * scale, 1), bar_y, f"{bar_m:g} m"),
        scale_label=(round(bar_x1 + bar_m * scale + 8, 1), bar_y + 5),
        title=f"Plan of the route through {area.name}",
        description=description,
    )


def _label_place(
    x: float, y: float, axis_deg: float, thick_px: float, index: int
) -> tuple[float, float, str]:
    """Where a fixture's tag goes: beside the lamp, across the route, on alternate sides."""
    side = 1.0 if index % 2 == 0 else -1.0
    # The normal to the lamp axis, on screen (plan y grows upwards, the screen's downwards).
    normal_x = -math.sin(math.radians(axis_deg)) * side
    normal_y = -math.cos(math.radians(axis_deg)) * side
    reach = thick_px / 2 + LABEL_GAP_PX
    if abs(normal_x) > 0.7:  # the lamp runs up the plan: the tag to its left or right
        anchor = "start" if normal_x > 0 else "end"
        return round(x + normal_x * reach, 1), round(y + 6, 1), anchor
    baseline = -2.0 if normal_y < 0 else 14.0
    return round(x + normal_x * reach, 1), round(y + normal_y * reach + baseline, 1), "middle"


# ---- the rest of the page as ready values ----


@dataclass(frozen=True, slots=True)
class FixtureLine:
    id: str
    tag: str
    where: str
    height: str
    state: str  # badge class
    state_label: str
    light: str
    problem: str
    chosen: bool = False
    cost: str = ""
    cost_text: str = ""


@dataclass(frozen=True, slots=True)
class ResultPanel:
    verdict: str
    verdict_label: str
    figures: list[tuple[str, str]]
    findings: list[FindingView]
    plot: LuxPlot


@dataclass(frozen=True, slots=True)
class PlanPanel:
    cost: str
    added_count: int
    chosen_tags: str
    chosen_count: int
    candidate_count: int
    solution: str
    uniformity: str
    uniformity_ok: bool
    shortfall: str
    unrealisable: str
    kept: str
    result: ResultPanel
    lines: list[FixtureLine]
    accept_values: list[str]
    left_out: list[FixtureLine]


@dataclass(slots=True)
class Outcome:
    """What accepting a plan did, in sentences."""

    done: list[str] = field(default_factory=list)
    not_done: list[str] = field(default_factory=list)


def _tags(tags: Sequence[str]) -> str:
    return ", ".join(tags)


def requirement_text(profile: Profile) -> str:
    def lux(value: float) -> str:
        if profile.avg_lux is not None or profile.end_min_lux is not None:
            return f"{service.level_text(value)} lx ({lux_to_footcandles(value):.2g} fc)"
        return f"{service.level_text(value)} lx"

    parts = [f"at least {lux(profile.min_lux)} at every point of the centre line"]
    if profile.avg_lux is not None:
        parts.append(f"an average of {lux(profile.avg_lux)}")
    if profile.end_min_lux is not None and profile.end_avg_lux is not None:
        parts.append(
            f"{lux(profile.end_min_lux)} and an average of {lux(profile.end_avg_lux)} at the "
            f"end of {profile.duration_min:g} min"
        )
    if profile.central_band_min_share and profile.central_band_fraction:
        parts.append(
            f"{profile.central_band_min_share:.0%} of the minimum across the central band of "
            f"{profile.central_band_fraction:.0%} of the width"
        )
    parts.append(f"max:min at most {profile.max_min_ratio:g}:1")
    return f"{profile.name}: " + "; ".join(parts) + "."


def _ratio(value: float | None) -> str:
    return "no light at some point" if value is None else f"{value:.1f}:1"


def result_panel(result: RouteResult, profile: Profile, *, title: str, key: str) -> ResultPanel:
    figures = [
        ("Minimum", f"{result.min_lux:.2f} lx"),
        ("Average", f"{result.avg_lux:.2f} lx"),
        ("Maximum", f"{result.max_lux:.2f} lx"),
        ("Max:min", _ratio(result.max_min_ratio)),
        ("Darkest point", f"{result.worst_s_m:.1f} m along"),
        ("Maintenance factor", f"{result.maintenance_factor:g}"),
    ]
    if result.band_min_lux is not None:
        figures.append(("Central band minimum", f"{result.band_min_lux:.2f} lx"))
    if result.end_min_lux is not None and result.end_avg_lux is not None:
        figures.append(
            ("End of duration", f"min {result.end_min_lux:.2f} / avg {result.end_avg_lux:.2f} lx")
        )
    return ResultPanel(
        verdict=result.verdict.value,
        verdict_label=label(result.verdict),
        figures=figures,
        findings=finding_views(result.findings),
        plot=lux_plot(service.plot_view(result, profile, title), key),
    )


def _where(item: RouteFixture) -> str:
    if item.s_m is None:
        return "not placed"
    return f"{item.s_m:.1f} m, by its {item.placed_by}"


def _height(item: RouteFixture) -> str:
    if item.mounting_height_m is None:
        return "unknown"
    return (
        f"{item.mounting_height_m:g} m ({'its own' if item.height_from == 'fixture' else 'area'})"
    )


def _state_badge(item: RouteFixture) -> tuple[str, str]:
    if item.converted:
        return "accepted", "Converted"
    if item.proposal is not None:
        return "none", "Draft proposal"
    return "none", "Not converted"


def fixture_line(
    item: RouteFixture, *, chosen: bool = False, own_only: bool = False
) -> FixtureLine:
    """A fixture as a table row; ``own_only`` shows the light of its own proposal only."""
    state, state_label = _state_badge(item)
    conversion = item.conversion
    light = ""
    if conversion is not None and (item.proposal is not None or not own_only):
        light = f"{conversion.emergency_lm:.0f} lm from {conversion.lumens_source}"
    return FixtureLine(
        id=item.fixture.id,
        tag=item.fixture.tag,
        where=_where(item),
        height=_height(item),
        state=state,
        state_label=state_label,
        light=light,
        problem=item.problem,
        chosen=chosen,
        cost=("0.00" if item.converted else f"{conversion.cost:,.2f}") if conversion else "",
        cost_text=(
            "converted already (its proposal is accepted): counted at no cost"
            if item.converted
            else conversion.cost_text
        )
        if conversion
        else "",
    )


def plan_panel(outcome: PlanOutcome) -> PlanPanel:
    plan, state = outcome.plan, outcome.state
    chosen = outcome.chosen_ids
    currency = state.currency
    if plan.shortfall is not None:
        where = (
            f"at {plan.shortfall.s_m:.1f} m along the route"
            if plan.shortfall.s_m is not None
            else "on the average"
        )
        shortfall = (
            f"Not enough even with every fixture converted: the {plan.shortfall.check} falls short "
            f"{where}, {plan.shortfall.lux_best:.2f} lx against the "
            f"{plan.shortfall.lux_needed:.2f} lx needed. Add emergency luminaires or choose "
            "modules giving more light; the plan below converts every candidate."
        )
    else:
        shortfall = ""
    if plan.optimal:
        solution = "Proven the cheapest set (integer program solved to optimality)."
    elif plan.gap is not None:
        solution = (
            f"Best set found in the time allowed ({plan.method}); it may cost up to "
            f"{plan.gap:.0%} more than the cheapest possible."
        )
    else:
        solution = "No set meets the profile, so no cheapest set exists."
    ratio = outcome.result.max_min_ratio
    uniformity_ok = ratio is not None and ratio <= state.profile.max_min_ratio
    uniformity = f"Max:min {_ratio(ratio)} against at most {state.profile.max_min_ratio:g}:1: " + (
        "met."
        if uniformity_ok
        else "NOT met; convert a further fixture near the darkest point and check again."
    )
    unrealisable = ""
    if outcome.unrealisable:
        unrealisable = (
            f"{_tags([item.fixture.tag for item in outcome.unrealisable])}: no module and pack "
            "in the catalogue passes every rule for these, so their light is an estimate and "
            "accepting the plan cannot make their proposals."
        )
    lines = [
        fixture_line(item, chosen=item.fixture.id in chosen)
        for item in sorted(outcome.candidates, key=lambda f: (f.s_m or 0.0, f.fixture.tag))
    ]
    return PlanPanel(
        cost=f"{outcome.cost:,.2f} {currency}",
        added_count=len(outcome.chosen) - len(outcome.kept),
        chosen_tags=_tags([item.fixture.tag for item in outcome.chosen]) or "none",
        chosen_count=len(outcome.chosen),
        candidate_count=len(outcome.candidates),
        solution=solution,
        uniformity=uniformity,
        uniformity_ok=uniformity_ok,
        shortfall=shortfall,
        unrealisable=unrealisable,
        kept=(
            f"Converted already and kept in the plan at no cost: "
            f"{_tags([item.fixture.tag for item in outcome.kept])}."
            if outcome.kept
            else ""
        ),
        result=result_panel(
            outcome.result,
            state.profile,
            title="Emergency light along the route with the plan's fixtures converted",
            key="plan",
        ),
        lines=lines,
        accept_values=[
            f"{item.fixture.id}:{item.proposal.version if item.proposal else ''}"
            for item in outcome.chosen
        ],
        left_out=[fixture_line(item) for item in state.fixtures if not item.usable],
    )


def outcome_sentences(done: service.AcceptedPlan) -> Outcome:
    outcome = Outcome()
    if done.created:
        outcome.done.append(
            f"Proposals made and accepted (the cheapest module and pack that pass): "
            f"{_tags(done.created)}."
        )
    for tag, names in done.accepted:
        outcome.done.append(
            f"{tag} already had a draft proposal ({names}); it was accepted as it was."
        )
    if done.already:
        outcome.done.append(f"Already accepted before, left as they were: {_tags(done.already)}.")
    outcome.not_done = [f"{tag}: {forms.sentence(reason)}" for tag, reason in done.not_done]
    return outcome


# ---- rendering ----


def _can_estimate(user: User) -> bool:
    return role_at_least(user.role_enum, Role.ESTIMATOR)


def _route_form(state: RouteState) -> tuple[FormView, bool]:
    """The stored route, else the straight line along the area, else a blank form."""
    if state.route is not None:
        values = service.route_form_values(state.route)
        version = values.pop("version")
        return (
            FormView(
                values={name: forms.shown(value) for name, value in values.items()},
                record_id=state.route.id,
                version=version,
            ),
            False,
        )
    suggested = service.suggested_route(state.area)
    view = forms.blank_form(service.EscapeRouteForm, **(suggested or {}))
    return view, suggested is not None


def _page(
    request: Request,
    user: User,
    state: RouteState,
    *,
    form: FormView | None = None,
    outcome: PlanOutcome | None = None,
    plan_error: str = "",
    accepted: Outcome | None = None,
    message: str = "",
    status_code: int = 200,
) -> HTMLResponse:
    suggested = False
    if form is None:
        form, suggested = _route_form(state)
    plan = plan_panel(outcome) if outcome is not None else None
    chosen = frozenset(outcome.chosen_ids) if outcome is not None else frozenset()
    worst_s_m = None
    if outcome is not None:
        worst_s_m = outcome.result.worst_s_m
    elif state.now is not None:
        worst_s_m = state.now.worst_s_m
    now = None
    if state.now is not None:
        now = result_panel(
            state.now,
            state.profile,
            title="Emergency light along the route from the converted fixtures",
            key="now",
        )
    converted = sum(1 for item in state.fixtures if item.converted)
    return render(
        request,
        "escape/route.html",
        {
            "section": "sites",
            "area": state.area,
            "building": state.building,
            "requirement": requirement_text(state.profile),
            "form": form,
            "labels": ROUTE_LABELS,
            "suggested": suggested,
            "has_route": state.route is not None,
            "drawing": plan_drawing(state, chosen=chosen, worst_s_m=worst_s_m),
            "fixtures": [
                fixture_line(item, chosen=item.fixture.id in chosen, own_only=True)
                for item in sorted(state.fixtures, key=lambda f: (f.s_m is None, f.s_m or 0.0))
            ],
            "converted_count": converted,
            "now": now,
            "plan": plan,
            "plan_error": plan_error,
            "accepted": accepted,
            "message": message,
            "can_estimate": _can_estimate(user),
            "cost_method": service.COST_METHOD,
            "placement_note": service.PLACEMENT_NOTE,
            "design_note": DESIGN_NOTE,
            "pass_verdict": Verdict.PASS.value,
        },
        status_code=status_code,
    )


def _area(session: Session, user: User, area_id: str) -> Area:
    return crud.get_owned(session, Area, org_id=user.org_id, record_id=area_id)


def _state(session: Session, user: User, area: Area) -> RouteState:
    return service.route_state(session=session, org_id=user.org_id, area=area)


@router.get("/areas/{area_id}/route", response_class=HTMLResponse)
def route_page(
    request: Request, area_id: str, session: SessionDep, user: SurveyorUser, saved: str = ""
) -> HTMLResponse:
    area = _area(session, user, area_id)
    message = "Route saved." if saved else ""
    return _page(request, user, _state(session, user, area), message=message)


@router.post("/areas/{area_id}/route")
def save_route(
    request: Request,
    area_id: str,
    session: SessionDep,
    user: SurveyorUser,
    form: FormData = FormDep,
) -> Response:
    area = _area(session, user, area_id)
    body, view = forms.read_form(service.EscapeRouteForm, form)
    status = 422
    if body is not None:
        try:
            service.save_route(
                session=session,
                user=user,
                area=area,
                body=body,
                version=view.version,
                route_id=_uuid_or_none(str(form.get("id") or "")),
            )
        except InvalidInput as exc:
            session.rollback()
            view.errors[exc.field if exc.field in ROUTE_LABELS else forms.FORM_LEVEL] = (
                forms.sentence(exc.message)
            )
        except Conflict as exc:
            session.rollback()
            view, status = forms.show_conflict(view, exc), 409
        else:
            return RedirectResponse(f"/areas/{area.id}/route?saved=1", status_code=303)
    return _page(request, user, _state(session, user, area), form=view, status_code=status)


def _uuid_or_none(text: str) -> str | None:
    try:
        return str(uuid.UUID(text))
    except ValueError:
        return None


@router.post("/areas/{area_id}/route/plan", response_class=HTMLResponse)
def plan_route(
    request: Request, area_id: str, session: SessionDep, user: SurveyorUser
) -> HTMLResponse:
    area = _area(session, user, area_id)
    try:
        outcome = service.plan_route(session=session, org_id=user.org_id, area=area)
    except InvalidInput as exc:
        return _page(
            request,
            user,
            _state(session, user, area),
            plan_error=forms.sentence(exc.message),
            status_code=422,
        )
    return _page(request, user, outcome.state, outcome=outcome)


def _chosen(form: FormData) -> list[tuple[str, int | None]]:
    chosen = []
    for value in form.getlist("chosen"):
        fixture_id, _, version = str(value).partition(":")
        chosen.append((fixture_id, int(version) if version.isdigit() else None))
    return chosen


@router.post("/areas/{area_id}/route/plan/accept", response_class=HTMLResponse)
def accept_plan(
    request: Request,
    area_id: str,
    session: SessionDep,
    user: EstimatorUser,
    form: FormData = FormDep,
) -> HTMLResponse:
    area = _area(session, user, area_id)
    chosen = _chosen(form)
    if not chosen:
        return _page(
            request,
            user,
            _state(session, user, area),
            plan_error="The plan chose no fixture, so there is nothing to accept.",
            status_code=422,
        )
    try:
        done = service.accept_plan(session=session, user=user, area=area, chosen=chosen)
    except InvalidInput as exc:
        session.rollback()
        return _page(
            request,
            user,
            _state(session, user, area),
            plan_error=forms.sentence(exc.message),
            status_code=422,
        )
    return _page(request, user, _state(session, user, area), accepted=outcome_sentences(done))
