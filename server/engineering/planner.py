"""Which fixtures on a route to convert: the cheapest set that meets the profile.

Converting a fixture gives a dim emergency light, so the question on a route is
which of the existing fixtures must be converted. With x_j = 1 when candidate j
is converted, the illuminance at every sample is linear in the choices,
E_i = MF * sum_j A_ij x_j, so "every point meets the minimum (and the average,
and the end-of-duration levels, where the profile asks)" is a set of linear
constraints and the cheapest set is a 0/1 integer program:

    minimise sum_j cost_j x_j   subject to   G x >= 1,   x in {0, 1}^n

with each row of G one requirement divided by its level. It is solved by
``scipy.optimize.milp`` (HiGHS branch and bound) by row generation within a
time limit. When the limit comes before a proof, the cheapest of a greedy
choice (most shortfall covered per unit of cost, then redundant fixtures
dropped), the solver's sets and a rolling horizon (stretch by stretch) is
returned, with the gap to the best lower bound known (the solver's, else a
linear relaxation's).

The max:min ratio is not optimised: it is checked on the chosen set, and a
finding says so when it fails.

References
----------
.. [1] scipy.optimize.milp documentation (HiGHS MIP solver; status codes, time
   limit, mip_rel_gap, mip_dual_bound).
.. [2] Greedy set cover, cover inequalities, row generation and rolling
   horizons: common practice in operations research.
.. [3] Requirements as in :mod:`server.engineering.routes` (NFPA 101 §7.9.2.1,
   EN 1838:2013 §4.2).
"""

from __future__ import annotations

import math
import time
from collections.abc import Sequence
from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import NDArray
from scipy.optimize import Bounds, LinearConstraint, linprog, milp

from server.engineering.errors import InvalidInput
from server.engineering.findings import Finding, Severity, verdict_of, worst_first
from server.engineering.profiles import Evaluation, Profile
from server.engineering.routes import (
    DEFAULT_MAINTENANCE_FACTOR,
    DEFAULT_STEP_M,
    Luminaire,
    Route,
    RouteMatrices,
    RouteResult,
    position_along_route_m,
    result_for_selection,
    route_matrices,
)

FloatArray = NDArray[np.float64]
BoolArray = NDArray[np.bool_]

DEFAULT_TIME_LIMIT_S = 5.0  # project default: an answer within seconds; see bench/
# Relative margin added to each requirement inside the solver, so that a
# solution within HiGHS's primal feasibility tolerance (1e-7, HiGHS options
# documentation, from memory) still meets the level exactly.
SOLVER_MARGIN = 1e-6
# Relative optimality gap the solver stops at (HiGHS's own default is 1e-4,
# from memory): "optimal" means within one part in a million of the cheapest.
MIP_REL_GAP = 1e-6

# The first integer program takes every sample this far apart, plus the darkest
# points with all candidates and with the greedy set; rows found violated are
# added until none is. Our own tuning: light along a route varies over about a
# mounting height, so few rows are added after the first solve.
INITIAL_ROW_SPACING_M = 1.0

# Shares of the time limit: the whole problem first; what is left after the
# rolling horizon goes to a linear-relaxation bound when the solver gave none.
EXACT_TIME_SHARE = 0.4
BOUND_TIME_SHARE = 0.1
# The relaxation gets at least this long, past the limit if need be, so that a
# fallback answer always states its gap where it can (a loaded machine may
# leave the solver no time to prove any bound).
MIN_BOUND_TIME_S = 1.0
# Rolling horizon: stretches solved one at a time, with candidates this far
# beyond them. Our own tuning: a few mounting heights, beyond which a
# luminaire adds little light.
WINDOW_CORE_M = 20.0
WINDOW_MARGIN_M = 8.0
WINDOW_REL_GAP = 1e-2  # each stretch is a heuristic step: near-optimal is enough

MAX_COST = 1e9  # our own plausibility limit per fixture; keeps totals finite

PLANNER_SOURCE = "project method: 0/1 integer program solved by scipy.optimize.milp (HiGHS)"


@dataclass(frozen=True, slots=True)
class Candidate:
    """An existing fixture that could be converted.

    Attributes
    ----------
    id : str
        The fixture's identifier, unique among the candidates.
    cost : float
        Cost of converting it (from the quote rules), 0 or more. [currency]
    luminaire : Luminaire
        The fixture as an emergency luminaire once converted.
    """

    id: str
    cost: float
    luminaire: Luminaire


@dataclass(frozen=True, slots=True)
class Shortfall:
    """Where even every candidate converted is not enough.

    Attributes
    ----------
    check : str
        The requirement that falls furthest short, in words.
    s_m : float or None
        Position along the route; None for an average. [m]
    lux_needed : float
        The level asked for. [lx]
    lux_best : float
        The level with every candidate converted. [lx]
    """

    check: str
    s_m: float | None
    lux_needed: float
    lux_best: float


@dataclass(frozen=True, slots=True)
class Plan:
    """The planner's answer.

    Attributes
    ----------
    chosen_ids : tuple of str
        Candidates to convert, in the order given; all of them when no set is
        enough.
    cost : float
        Their total cost. [currency]
    optimal : bool
        True when proven the cheapest (within :data:`MIP_REL_GAP`).
    gap : float or None
        Relative distance above the best lower bound, (cost - bound) / cost;
        0 when optimal, None when no set meets the profile. [-]
    method : str
        "milp" (from the integer program over the whole route),
        "rolling-horizon" (integer programs stretch by stretch), "greedy",
        or "none" (nothing is enough).
    result : RouteResult
        The route with the chosen set lit; its findings include the planner's.
    shortfall : Shortfall or None
        Set when no set of candidates can meet the profile.
    """

    chosen_ids: tuple[str, ...]
    cost: float
    optimal: bool
    gap: float | None
    method: str
    result: RouteResult
    shortfall: Shortfall | None


@dataclass(frozen=True, eq=False)
class Requirements:
    """The planner's constraints: each candidate's share of each level needed.

    Attributes
    ----------
    rows : ndarray
        Shape (requirements, candidates): illuminance with the maintenance
        factor, divided by the level the row needs; a set meets the profile
        when every row sums to at least 1 over its candidates. [-]
    need_lux : ndarray
        The level each row needs. [lx]
    s_m : ndarray
        Position of each row along the route; nan for an average. [m]
    anchor : ndarray of int
        The centre-line row at the same sample; -1 for an average.
    group, group_names
        Which requirement each row belongs to, and its name in words.
    weights_m : ndarray
        Trapezoid weights of the centre-line rows, which come first. [m]
    averages : tuple of (float, ndarray)
        Each average asked for: its level [lx] and each candidate's factor on
        the centre-line light [-].
    """

    rows: FloatArray  # (requirements, candidates), maintenance factor applied, / need
    need_lux: FloatArray
    s_m: FloatArray  # nan for an average
    anchor: NDArray[np.int_]  # the centre-line row at the same sample, -1 for an average
    group: NDArray[np.int_]
    group_names: tuple[str, ...]
    weights_m: FloatArray  # trapezoid weights of the centre-line rows, which come first
    # each average asked for: (level needed, each candidate's factor on the centre line)
    averages: tuple[tuple[float, FloatArray], ...]


def requirement_rows(
    matrices: RouteMatrices, profile: Profile, maintenance_factor: float
) -> Requirements:
    """The profile's levels as rows linear in the 0/1 choice of each candidate.

    Parameters
    ----------
    matrices : RouteMatrices
        Each candidate's light at the route's samples.
    profile : Profile
        Minimum on the centre line (every profile), central band (EU escape
        routes), average and end-of-duration levels (US egress).
    maintenance_factor : float
        Multiplies every illuminance. [-]

    Returns
    -------
    Requirements

    References
    ----------
    NFPA 101 §7.9.2.1; EN 1838:2013 §4.2.
    """
    samples = matrices.samples
    line = "path" if profile.evaluation is Evaluation.PATH else "centre line"
    centre_index = np.arange(samples.s_m.size)
    no_position = np.array([math.nan])
    no_anchor = np.array([-1])
    # (what, illuminance per candidate, level needed, position, anchor row)
    blocks: list[tuple[str, FloatArray, float, FloatArray, NDArray[np.int_]]] = [
        (f"minimum on the {line}", matrices.centre_lx, profile.min_lux, samples.s_m, centre_index)
    ]
    if samples.band_s_m.size and profile.central_band_min_share is not None:
        blocks.append(
            (
                "minimum in the central band",
                matrices.band_lx,
                profile.min_lux * profile.central_band_min_share,
                samples.band_s_m,
                np.tile(centre_index, samples.band_s_m.size // samples.s_m.size),
            )
        )
    average = (samples.weights_m @ matrices.centre_lx / samples.length_m)[None, :]
    if profile.avg_lux is not None:
        blocks.append(
            (f"average along the {line}", average, profile.avg_lux, no_position, no_anchor)
        )
    if profile.end_min_lux is not None:
        blocks.append(
            (
                f"end-of-duration minimum on the {line}",
                matrices.centre_lx * matrices.end_flux_factors,
                profile.end_min_lux,
                samples.s_m,
                centre_index,
            )
        )
    if profile.end_avg_lux is not None:
        blocks.append(
            (
                f"end-of-duration average along the {line}",
                average * matrices.end_flux_factors,
                profile.end_avg_lux,
                no_position,
                no_anchor,
            )
        )
    return Requirements(
        rows=np.vstack([maintenance_factor * lux / need for _, lux, need, _, _ in blocks]),
        need_lux=np.concatenate([np.full(lux.shape[0], need) for _, lux, need, _, _ in blocks]),
        s_m=np.concatenate([position for _, _, _, position, _ in blocks]),
        anchor=np.concatenate([anchor for *_, anchor in blocks]),
        group=np.concatenate(
            [np.full(lux.shape[0], index) for index, (_, lux, *_) in enumerate(blocks)]
        ),
        group_names=tuple(name for name, *_ in blocks),
        weights_m=samples.weights_m,
        averages=tuple(
            (need, factor)
            for need, factor in (
                (profile.avg_lux, np.ones(matrices.end_flux_factors.size)),
                (profile.end_avg_lux, matrices.end_flux_factors),
            )
            if need is not None
        ),
    )


def _undominated_rows(
    rows: FloatArray, target: FloatArray, anchor: NDArray[np.int_]
) -> NDArray[np.int_]:
    """Rows not implied by the centre-line row at the same sample.

    A row that gets at least as large a share from every candidate as its
    anchor row, for no larger a target, is met whenever the anchor is: an
    exact reduction (typical for band rows under a central row of fittings,
    and for end-of-duration rows when the end share is 1).
    """
    index = np.arange(rows.shape[0])
    others = index[(anchor >= 0) & (anchor != index)]
    implied = np.all(rows[others] >= rows[anchor[others]], axis=1) & (
        target[others] <= target[anchor[others]]
    )
    keep = np.ones(rows.shape[0], dtype=bool)
    keep[others[implied]] = False
    return index[keep]


def _meets(rows: FloatArray, chosen: BoolArray) -> bool:
    return bool(np.all(rows @ chosen.astype(float) >= 1.0))


def greedy_selection(
    rows: FloatArray, costs: FloatArray, target: FloatArray, start: BoolArray | None = None
) -> BoolArray:
    """Greedy cover: add the candidate covering most shortfall per unit cost.

    Parameters
    ----------
    rows : ndarray
        Requirement rows, each candidate's share of the level needed. [-]
    costs : ndarray
        Candidate costs, 0 or more. [currency]
    target : ndarray
        What each row's sum must reach (1, or a little more). [-]
    start : ndarray of bool, optional
        Candidates already chosen (to repair a set that falls short).

    Returns
    -------
    ndarray of bool
        The chosen candidates, redundant ones (most expensive first) dropped.

    References
    ----------
    Greedy set-cover heuristic: common practice in operations research.
    """
    chosen = np.zeros(rows.shape[1], dtype=bool) if start is None else start.copy()
    have = rows @ chosen.astype(float)
    smallest_cost = max(float(np.max(costs, initial=0.0)), 1.0) * 1e-12
    while True:
        short = have < target
        if not np.any(short) or np.all(chosen):
            break
        deficit = (target - have)[short]
        gain = np.minimum(rows[short], deficit[:, None]).sum(axis=0)
        gain[chosen] = 0.0
        if np.max(gain) <= 0.0:
            break
        score = gain / np.maximum(costs, smallest_cost)
        score[chosen] = -1.0
        pick = int(np.argmax(score))
        chosen[pick] = True
        have += rows[:, pick]
    for pick in np.argsort(-costs, kind="stable"):
        if chosen[pick] and np.all(have - rows[:, pick] >= target):
            chosen[pick] = False
            have -= rows[:, pick]
    return chosen


def _local_minima(values: FloatArray) -> NDArray[np.int_]:
    left = np.concatenate(([True], values[1:] <= values[:-1]))
    right = np.concatenate((values[:-1] <= values[1:], [True]))
    return np.flatnonzero(left & right)


def _cover_cuts(rows: FloatArray, target: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Valid cuts "at least k of the t strongest candidates" for each row.

    If every candidate but the t strongest for a row were converted and the
    row would still fall short by ``need``, at least k of those t must be
    converted, k being the fewest of them whose shares reach ``need``. These
    cuts tighten the linear relaxation, which otherwise spreads fractional
    light evenly along the route.

    References
    ----------
    Cover inequalities for knapsack-type rows: common practice in integer
    programming.
    """
    cuts: list[FloatArray] = []
    levels: list[float] = []
    for row, row_target in zip(rows, target, strict=True):
        order = np.argsort(-row, kind="stable")
        cumulative = np.cumsum(row[order])
        need = row_target - (cumulative[-1] - cumulative)
        needed = np.searchsorted(cumulative, need, side="left") + 1
        last = 0
        for strongest in np.flatnonzero(need > 0):
            if needed[strongest] > last:
                last = int(needed[strongest])
                cut = np.zeros(rows.shape[1])
                cut[order[: strongest + 1]] = 1.0
                cuts.append(cut)
                levels.append(float(last))
    if not cuts:
        return np.zeros((0, rows.shape[1])), np.zeros(0)
    unique, first = np.unique(np.vstack(cuts), axis=0, return_index=True)
    return unique, np.asarray(levels)[first]


@dataclass(frozen=True, slots=True)
class _Solution:
    chosen: BoolArray
    optimal: bool
    lower_bound: float | None
    method: str


def _initial_rows(
    rows: FloatArray,
    kept_rows: NDArray[np.int_],
    anchor: NDArray[np.int_],
    incumbent: BoolArray,
    initial_stride: int,
) -> NDArray[np.int_]:
    """Rows likely to bind: every ``initial_stride``-th sample, the averages, and
    the darkest points with every candidate and with the incumbent set."""
    picked = [
        kept_rows[::initial_stride],
        kept_rows[anchor[kept_rows] < 0],
        kept_rows[_local_minima(rows[kept_rows].sum(axis=1))],
        kept_rows[_local_minima(rows[kept_rows] @ incumbent.astype(float))],
    ]
    return np.unique(np.concatenate(picked))


def _row_generation(
    rows: FloatArray,
    kept_rows: NDArray[np.int_],
    anchor: NDArray[np.int_],
    costs: FloatArray,
    target: FloatArray,
    incumbent: BoolArray,
    *,
    deadline: float,
    initial_stride: int,
) -> tuple[BoolArray | None, bool, float | None]:
    """Solve on the rows most likely to bind; add the rows found violated; repeat.

    Each integer program is a relaxation of the full one (fewer rows, valid
    cuts, and a cost no higher than the incumbent), so its bound is a lower
    bound of the full problem, and a solution of it that meets every row is
    optimal for the full problem.

    Returns
    -------
    tuple
        The best set found that meets every row (or None), whether it is
        proven optimal, and the best lower bound on the cost.
    """
    best: BoolArray | None = None
    best_cost = float(costs @ incumbent)
    bound: float | None = None
    active = set(_initial_rows(rows, kept_rows, anchor, incumbent, initial_stride).tolist())
    while (remaining_s := deadline - time.monotonic()) > 0:
        selected = np.array(sorted(active))
        cut_rows, cut_levels = _cover_cuts(rows[selected], target[selected])
        constraints = [
            LinearConstraint(rows[selected], lb=target[selected], ub=np.inf),
            LinearConstraint(costs[None, :], lb=-np.inf, ub=best_cost * (1 + 1e-9) + 1e-9),
        ]
        if cut_levels.size:
            constraints.append(LinearConstraint(cut_rows, lb=cut_levels, ub=np.inf))
        solution = milp(
            costs,
            constraints=constraints,
            integrality=np.ones(costs.size),
            bounds=Bounds(0.0, 1.0),
            options={"time_limit": remaining_s, "mip_rel_gap": MIP_REL_GAP, "disp": False},
        )
        dual_bound = getattr(solution, "mip_dual_bound", None)
        if dual_bound is not None and math.isfinite(dual_bound):
            bound = dual_bound if bound is None else max(bound, dual_bound)
        if solution.x is None:
            break
        chosen = np.asarray(solution.x) > 0.5
        shares = rows @ chosen.astype(float)
        violated = np.flatnonzero(shares < 1.0)
        if violated.size == 0:
            return chosen, solution.status == 0, bound
        repaired = greedy_selection(rows, costs, target, start=chosen)
        if float(costs @ repaired) < best_cost:
            best, best_cost = repaired, float(costs @ repaired)
        if solution.status != 0:
            break
        for run in np.split(violated, np.flatnonzero(np.diff(violated) != 1) + 1):
            active.add(int(run[np.argmin(shares[run])]))
    return best, False, bound


def _windowed_selection(
    requirements: Requirements,
    kept_rows: NDArray[np.int_],
    costs: FloatArray,
    target: FloatArray,
    candidate_s_m: FloatArray,
    *,
    deadline: float,
) -> BoolArray:
    """Rolling-horizon heuristic: an integer program per stretch of the route.

    Stretches of :data:`WINDOW_CORE_M` are solved in turn, each with the
    candidates up to :data:`WINDOW_MARGIN_M` beyond it and the ones already
    chosen; the choices inside the stretch are then fixed. An average the
    profile asks for is asked of every stretch, which is enough for the whole
    route. A greedy pass completes and prunes the result (and covers the
    stretches left when time runs out).

    References
    ----------
    Rolling-horizon decomposition: common practice in operations research.
    """
    rows = requirements.rows
    s_m = requirements.s_m
    centre_count = requirements.weights_m.size
    centre_need = requirements.need_lux[0]
    starts = np.arange(0.0, float(np.nanmax(s_m)), WINDOW_CORE_M)
    on = np.zeros(costs.size, dtype=bool)
    off = np.zeros(costs.size, dtype=bool)
    for number, start in enumerate(starts):
        remaining_s = deadline - time.monotonic()
        if remaining_s <= 0:  # out of time: the greedy pass completes the rest
            break
        last = number == starts.size - 1
        end = math.inf if last else start + WINDOW_CORE_M
        core = kept_rows[(s_m[kept_rows] >= start) & (s_m[kept_rows] < end)]
        centre = np.arange(centre_count)[(s_m[:centre_count] >= start) & (s_m[:centre_count] < end)]
        window_rows = [rows[core]]
        window_target = [target[core]]
        weight = float(requirements.weights_m[centre].sum())
        for need_lux, factor in requirements.averages:
            if weight > 0:
                local = requirements.weights_m[centre] @ rows[centre] * centre_need / weight
                window_rows.append((local * factor / need_lux)[None, :])
                window_target.append(np.array([1.0 + SOLVER_MARGIN]))
        block = np.vstack(window_rows)
        need = np.concatenate(window_target) - block @ on.astype(float)
        free = np.flatnonzero(
            (candidate_s_m >= start - WINDOW_MARGIN_M)
            & (candidate_s_m < end + WINDOW_MARGIN_M)
            & ~on
            & ~off
        )
        in_core = (candidate_s_m[free] >= start) & (candidate_s_m[free] < end)
        short = need > 0
        if free.size == 0 or not np.any(short):
            off[free[in_core]] = True
            continue
        block, need = block[short][:, free], need[short]
        reachable = block.sum(axis=1) >= need  # the rest is left to the greedy pass
        if not np.any(reachable):
            continue
        solution = milp(
            costs[free],
            constraints=LinearConstraint(block[reachable], lb=need[reachable], ub=np.inf),
            integrality=np.ones(free.size),
            bounds=Bounds(0.0, 1.0),
            options={
                "time_limit": remaining_s / (starts.size - number),
                "mip_rel_gap": WINDOW_REL_GAP,
                "disp": False,
            },
        )
        if solution.x is None:
            continue
        picked = np.asarray(solution.x) > 0.5
        on[free[picked & in_core]] = True
        off[free[~picked & in_core]] = True
    return greedy_selection(rows, costs, target, start=on)


def _solve(
    requirements: Requirements,
    costs: FloatArray,
    target: FloatArray,
    candidate_s_m: FloatArray,
    *,
    time_limit_s: float,
    initial_stride: int,
) -> _Solution:
    """The cheapest set meeting every row, or the best found with a bound.

    The whole problem is tried first by row generation for
    :data:`EXACT_TIME_SHARE` of the time. Unless that proves an optimum, the
    rolling-horizon heuristic follows, then the whole problem again with the
    best cost so far as a cut-off, until :data:`BOUND_TIME_SHARE` of the time
    is left. The cheapest set found (greedy, solver, rolling horizon) is
    returned with the best of the solver's bounds.
    """
    started = time.monotonic()
    rows = requirements.rows
    kept_rows = _undominated_rows(rows, target, requirements.anchor)
    greedy = greedy_selection(rows, costs, target)
    found: list[tuple[BoolArray, str]] = [(greedy, "greedy")]
    bounds: list[float] = []

    def whole_problem(deadline: float) -> bool:
        incumbent = min(found, key=lambda pair: float(costs @ pair[0]))[0]
        chosen, proven, bound = _row_generation(
            rows,
            kept_rows,
            requirements.anchor,
            costs,
            target,
            incumbent,
            deadline=deadline,
            initial_stride=initial_stride,
        )
        if bound is not None:
            bounds.append(bound)
        if chosen is not None:
            found.append((chosen, "milp"))
        return chosen is not None and proven

    if whole_problem(started + EXACT_TIME_SHARE * time_limit_s):
        return _Solution(found[-1][0], True, max(bounds, default=None), "milp")
    last_deadline = started + (1.0 - BOUND_TIME_SHARE) * time_limit_s
    windowed = _windowed_selection(
        requirements, kept_rows, costs, target, candidate_s_m, deadline=last_deadline
    )
    found.append((windowed, "rolling-horizon"))
    if last_deadline - time.monotonic() > BOUND_TIME_SHARE * time_limit_s and whole_problem(
        last_deadline
    ):
        return _Solution(found[-1][0], True, max(bounds, default=None), "milp")
    chosen, method = min(found, key=lambda pair: float(costs @ pair[0]))
    if max(bounds, default=0.0) <= 0.0:  # no bound, or only the trivial one
        remaining_s = started + time_limit_s - time.monotonic()
        some_rows = _initial_rows(rows, kept_rows, requirements.anchor, greedy, initial_stride)
        relaxed = _lower_bound(
            rows[some_rows], costs, target[some_rows], max(remaining_s, MIN_BOUND_TIME_S)
        )
        bounds.extend([] if relaxed is None else [relaxed])
    return _Solution(chosen, False, max(bounds, default=None), method)


def _lower_bound(
    rows: FloatArray, costs: FloatArray, target: FloatArray, time_limit_s: float
) -> float | None:
    """Linear relaxation over some rows, tightened by their cover cuts: a lower
    bound on the cost of any set meeting every row."""
    cut_rows, cut_levels = _cover_cuts(rows, target)
    relaxation = linprog(
        costs,
        A_ub=-np.vstack([rows, cut_rows]),
        b_ub=-np.concatenate([target, cut_levels]),
        bounds=(0.0, 1.0),
        method="highs",
        options={"time_limit": time_limit_s},
    )
    return float(relaxation.fun) if relaxation.status == 0 else None


def _relative_gap(cost: float, bound: float | None) -> float | None:
    if bound is None or not math.isfinite(bound):
        return None
    if cost <= 0:
        return 0.0
    return max(0.0, (cost - max(bound, 0.0)) / cost)


def _validate(candidates: Sequence[Candidate], time_limit_s: float) -> None:
    seen: set[str] = set()
    for candidate in candidates:
        if candidate.id in seen:
            raise InvalidInput("id", f"candidate ids must be unique; {candidate.id!r} repeats")
        seen.add(candidate.id)
        if not math.isfinite(candidate.cost) or not 0 <= candidate.cost <= MAX_COST:
            raise InvalidInput(
                "cost",
                f"the cost of {candidate.id!r} must be a number, 0 or more and at most "
                f"{MAX_COST:,.0f}",
            )
    if not math.isfinite(time_limit_s) or time_limit_s <= 0:
        raise InvalidInput("time_limit_s", "the planner's time limit must be more than 0 s")


def plan_conversions(
    route: Route,
    candidates: Sequence[Candidate],
    profile: Profile,
    *,
    maintenance_factor: float = DEFAULT_MAINTENANCE_FACTOR,
    step_m: float = DEFAULT_STEP_M,
    time_limit_s: float = DEFAULT_TIME_LIMIT_S,
) -> Plan:
    """The cheapest set of candidates whose emergency light meets the profile.

    Parameters
    ----------
    route : Route
    candidates : sequence of Candidate
        Existing fixtures that could be converted, with their costs.
    profile : Profile
        The minimum at every centre-line sample; the central band for EU
        escape routes; the average and the end-of-duration levels for US
        egress.
    maintenance_factor : float
        Multiplies every illuminance; 0.8 by default (common practice). [-]
    step_m : float
        Spacing of the samples along the centre line. [m]
    time_limit_s : float
        Time the integer programs may take before the fallback. [s]

    Returns
    -------
    Plan
        Chosen ids, cost, optimal flag, gap, the route result for the chosen
        set (findings include the planner's) and the shortfall when nothing is
        enough.

    Raises
    ------
    InvalidInput
        A ValueError naming ``id`` (repeated), ``cost`` (negative),
        ``time_limit_s``, ``maintenance_factor`` or ``step_m``.

    References
    ----------
    scipy.optimize.milp (HiGHS); greedy set cover and cover inequalities
    (common practice); NFPA 101 §7.9.2.1 and EN 1838:2013 §4.2 for the levels.
    """
    _validate(candidates, time_limit_s)
    luminaires: list[Luminaire] = [candidate.luminaire for candidate in candidates]
    matrices = route_matrices(route, luminaires, profile, step_m=step_m)
    all_on = np.ones(len(candidates), dtype=bool)
    # Evaluating first also checks the maintenance factor.
    best_result = result_for_selection(
        route, matrices, profile, all_on, maintenance_factor=maintenance_factor
    )
    requirements = requirement_rows(matrices, profile, maintenance_factor)
    costs = np.array([candidate.cost for candidate in candidates], dtype=float)
    best_share = requirements.rows.sum(axis=1)
    if len(candidates) == 0 or np.min(best_share) < 1.0:
        return _shortfall_plan(candidates, costs, requirements, best_share, best_result)

    target = np.minimum(1.0 + SOLVER_MARGIN, best_share)
    solution = _solve(
        requirements,
        costs,
        target,
        position_along_route_m(
            route,
            np.array([lum.x_m for lum in luminaires]),
            np.array([lum.y_m for lum in luminaires]),
        ),
        time_limit_s=time_limit_s,
        initial_stride=max(1, round(INITIAL_ROW_SPACING_M / step_m)),
    )
    cost = float(costs @ solution.chosen)
    gap = _relative_gap(cost, solution.lower_bound)
    result = result_for_selection(
        route, matrices, profile, solution.chosen, maintenance_factor=maintenance_factor
    )
    extra = [
        _solution_finding(
            solution.method, solution.optimal, gap, cost, len(candidates), time_limit_s
        )
    ]
    return Plan(
        chosen_ids=tuple(c.id for c, pick in zip(candidates, solution.chosen, strict=True) if pick),
        cost=cost,
        optimal=solution.optimal,
        gap=gap,
        method=solution.method,
        result=_with_planner_findings(result, extra),
        shortfall=None,
    )


def _solution_finding(
    method: str, optimal: bool, gap: float | None, cost: float, count: int, time_limit_s: float
) -> Finding:
    if optimal:
        return Finding(
            code="plan-optimal",
            severity=Severity.INFO,
            message=f"Proven the cheapest set of the {count} candidates that meets the "
            f"profile's levels (cost {cost:.2f}).",
            fix="None needed.",
            source=PLANNER_SOURCE,
        )
    how = {
        "milp": "the best set the solver found over the whole route",
        "rolling-horizon": "the best set found stretch by stretch along the route",
    }.get(method, "a greedy choice (most shortfall covered per unit of cost)")
    bound_text = (
        f"at most {100 * gap:.1f} % above the cheapest possible"
        if gap is not None
        else "with no lower bound to say how far from the cheapest it is"
    )
    return Finding(
        code="plan-fallback",
        severity=Severity.WARN,
        message=f"The solver did not prove a cheapest set within {time_limit_s:g} s; this is "
        f"{how}, {bound_text}.",
        fix="Accept it, or plan the route in shorter sections with fewer candidates each.",
        source=PLANNER_SOURCE,
    )


def _with_planner_findings(result: RouteResult, extra: list[Finding]) -> RouteResult:
    findings = list(extra)
    for finding in result.findings:
        if finding.code == "route-uniformity" and finding.severity is Severity.FAIL:
            findings.append(
                replace(
                    finding,
                    code="plan-uniformity",
                    message=f"{finding.message} The planner meets the levels at least cost; "
                    "it does not optimise the ratio.",
                    fix=f"{finding.fix} Convert a further fixture near the darkest point and "
                    "check again.",
                )
            )
        else:
            findings.append(finding)
    ordered = worst_first(findings)
    return replace(result, findings=tuple(ordered), verdict=verdict_of(ordered))


def _shortfall_plan(
    candidates: Sequence[Candidate],
    costs: FloatArray,
    requirements: Requirements,
    best_share: FloatArray,
    best_result: RouteResult,
) -> Plan:
    if best_share.size == 0:
        raise InvalidInput("points", "the route gives no points to check")
    worst = int(np.argmin(best_share))
    s_m = float(requirements.s_m[worst])
    shortfall = Shortfall(
        check=requirements.group_names[int(requirements.group[worst])],
        s_m=None if math.isnan(s_m) else s_m,
        lux_needed=float(requirements.need_lux[worst]),
        lux_best=float(best_share[worst] * requirements.need_lux[worst]),
    )
    where = f" at {shortfall.s_m:.1f} m along the route" if shortfall.s_m is not None else ""
    short_pct = 100.0 * (1.0 - shortfall.lux_best / shortfall.lux_needed)
    finding = Finding(
        code="plan-shortfall",
        severity=Severity.FAIL,
        message=f"No set of the {len(candidates)} candidates is enough: even with all of them "
        f"converted, the {shortfall.check} is {shortfall.lux_best:.2f} lx{where}, where "
        f"{shortfall.lux_needed:.2f} lx is needed ({short_pct:.0f} % short).",
        fix="Add emergency luminaires near there, use modules with more emergency lumens, or "
        "have a designer revise the layout.",
        source=PLANNER_SOURCE,
    )
    return Plan(
        chosen_ids=tuple(candidate.id for candidate in candidates),
        cost=float(np.sum(costs)),
        optimal=False,
        gap=None,
        method="none",
        result=_with_planner_findings(best_result, [finding]),
        shortfall=shortfall,
    )
