"""The conversion planner against brute force over every subset.

Sources of the checks:
- Brute force: every one of the 2**n subsets of n <= 12 candidates is
  evaluated against the profile's levels, written out here from NFPA 101
  §7.9.2.1 (US egress) and EN 1838:2013 §4.2 (EU escape route); the cheapest
  subset that meets them is the optimum the planner must find.
- Inverse-square cosine law with Lambert's law (IES definitions) for the hand
  cases, E = (flux / pi) * h**2 / (r**2 + h**2)**2, times the maintenance
  factor 0.8 (common practice).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from server.engineering.errors import InvalidInput
from server.engineering.findings import Severity, Verdict
from server.engineering.planner import (
    MIP_REL_GAP,
    Candidate,
    Plan,
    greedy_selection,
    plan_conversions,
)
from server.engineering.profiles import Profile, get_profile
from server.engineering.routes import Luminaire, Route, evaluate_route, route_matrices

MF = 0.8  # common practice
STEP_M = 0.1
LEVEL_CODES = {
    "route-minimum",
    "route-average",
    "route-central-band",
    "route-end-minimum",
    "route-end-average",
}


def brute_force_cheapest(
    route: Route, candidates: list[Candidate], profile: Profile
) -> tuple[float | None, np.ndarray]:
    """Cheapest cost over every subset meeting the profile's levels, or None.

    Also returns which subsets (rows of the 0/1 table) meet them.
    """
    count = len(candidates)
    matrices = route_matrices(route, [c.luminaire for c in candidates], profile, step_m=STEP_M)
    subsets = ((np.arange(2**count)[:, None] >> np.arange(count)) & 1).astype(float)
    centre = MF * matrices.centre_lx @ subsets.T  # (points, subsets)
    meets = centre.min(axis=0) >= profile.min_lux  # NFPA 101 / EN 1838 minimum
    if profile.central_band_min_share is not None:  # EN 1838: band >= 50 % of 1 lx
        band = MF * matrices.band_lx @ subsets.T
        meets &= band.min(axis=0) >= profile.min_lux * profile.central_band_min_share
    length = matrices.samples.weights_m.sum()
    if profile.avg_lux is not None:  # NFPA 101: average >= 1 fc
        meets &= matrices.samples.weights_m @ centre / length >= profile.avg_lux
    end = MF * (matrices.centre_lx * matrices.end_flux_factors) @ subsets.T
    if profile.end_min_lux is not None:  # NFPA 101: >= 0.06 fc at the end
        meets &= end.min(axis=0) >= profile.end_min_lux
    if profile.end_avg_lux is not None:  # NFPA 101: average >= 0.6 fc at the end
        meets &= matrices.samples.weights_m @ end / length >= profile.end_avg_lux
    costs = subsets @ np.array([c.cost for c in candidates])
    if not np.any(meets):
        return None, meets
    return float(costs[meets].min()), meets


def random_case(seed: int, profile_id: str, count: int) -> tuple[Route, list[Candidate]]:
    rng = np.random.default_rng(seed)
    length_m = float(rng.uniform(12.0, 22.0))
    if seed % 3 == 0:  # an L-shaped route now and then
        corner = float(rng.uniform(4.0, length_m - 4.0))
        route = Route(((0.0, 0.0), (corner, 0.0), (corner, length_m - corner)), 1.5)
        along = rng.uniform(0.0, length_m, count)
        xy = [(min(s, corner), max(0.0, s - corner)) for s in along]
    else:
        route = Route(((0.0, 0.0), (length_m, 0.0)), 1.5)
        xy = [(float(s), 0.0) for s in rng.uniform(0.0, length_m, count)]
    flux = (60.0, 250.0) if profile_id.startswith("eu") else (150.0, 700.0)
    candidates = [
        Candidate(
            id=f"F{index}",
            cost=round(float(rng.uniform(50.0, 150.0)), 2),
            luminaire=Luminaire(
                x_m=x + float(rng.uniform(-0.4, 0.4)),
                y_m=y + float(rng.uniform(-0.4, 0.4)),
                mounting_height_m=float(rng.uniform(2.4, 3.0)),
                emergency_flux_lm=float(rng.uniform(*flux)),
                length_m=float(rng.choice([0.0, 0.6, 1.2])),
                axis_deg=float(rng.uniform(0.0, 180.0)),
                end_flux_factor=float(rng.choice([1.0, 1.0, 0.7])),
            ),
        )
        for index, (x, y) in enumerate(xy)
    ]
    return route, candidates


def level_failures(plan: Plan) -> set[str]:
    return {
        finding.code
        for finding in plan.result.findings
        if finding.severity is Severity.FAIL and finding.code in LEVEL_CODES
    }


CASES = [(seed, "eu-escape-route", 8 + seed % 5) for seed in range(1, 9)] + [
    (seed, "us-egress", 7 + seed % 6) for seed in range(11, 17)
]


@pytest.mark.parametrize(("seed", "profile_id", "count"), CASES)
def test_planner_matches_brute_force(seed: int, profile_id: str, count: int) -> None:
    route, candidates = random_case(seed, profile_id, count)
    profile = get_profile(profile_id)
    cheapest, meets = brute_force_cheapest(route, candidates, profile)
    plan = plan_conversions(route, candidates, profile, maintenance_factor=MF, step_m=STEP_M)
    if cheapest is None:
        assert plan.shortfall is not None
        assert plan.chosen_ids == tuple(c.id for c in candidates)
        assert plan.shortfall.lux_best < plan.shortfall.lux_needed
        return
    assert plan.shortfall is None
    assert plan.optimal
    assert plan.gap is not None and plan.gap <= MIP_REL_GAP
    # Tolerance: the solver stops within MIP_REL_GAP of the optimum.
    assert plan.cost == pytest.approx(cheapest, rel=MIP_REL_GAP)
    chosen = sum(1 << int(c.id[1:]) for c in candidates if c.id in plan.chosen_ids)
    assert meets[chosen]
    assert level_failures(plan) == set()
    assert plan.cost == pytest.approx(
        sum(c.cost for c in candidates if c.id in plan.chosen_ids), rel=1e-12
    )


def test_brute_force_cases_are_not_trivial() -> None:
    # The random cases must exercise the planner: the cheapest set needs more
    # than one candidate and not all of them, and some case cannot be met.
    sizes = []
    for seed, profile_id, count in CASES:
        route, candidates = random_case(seed, profile_id, count)
        cheapest, meets = brute_force_cheapest(route, candidates, get_profile(profile_id))
        subsets = (np.arange(2**count)[:, None] >> np.arange(count)) & 1
        costs = subsets @ np.array([c.cost for c in candidates])
        if cheapest is None:
            sizes.append(None)
        else:
            sizes.append(int(subsets[meets][np.argmin(costs[meets])].sum()))
            assert 1 < sizes[-1] < count
    assert None in sizes


def test_time_out_falls_back_with_a_true_gap() -> None:
    # A time limit too short for the solver: greedy (or whatever was found),
    # not proven, and the stated gap must bracket the brute-force optimum:
    # cost * (1 - gap) <= optimum <= cost.
    route, candidates = random_case(4, "eu-escape-route", 12)
    profile = get_profile("eu-escape-route")
    cheapest, _ = brute_force_cheapest(route, candidates, profile)
    assert cheapest is not None
    plan = plan_conversions(route, candidates, profile, time_limit_s=1e-4)
    assert not plan.optimal
    assert plan.gap is not None
    assert plan.cost * (1.0 - plan.gap) <= cheapest * (1 + 1e-9)
    assert cheapest <= plan.cost * (1 + 1e-9)
    assert level_failures(plan) == set()
    fallback = next(f for f in plan.result.findings if f.code == "plan-fallback")
    assert fallback.severity is Severity.WARN
    assert plan.result.verdict is not Verdict.PASS


def test_greedy_meets_every_row_and_costs_no_less_than_the_optimum() -> None:
    route, candidates = random_case(2, "eu-escape-route", 10)
    profile = get_profile("eu-escape-route")
    cheapest, meets = brute_force_cheapest(route, candidates, profile)
    assert cheapest is not None
    matrices = route_matrices(route, [c.luminaire for c in candidates], profile)
    rows = np.vstack(
        [
            MF * matrices.centre_lx / profile.min_lux,
            MF * matrices.band_lx / (profile.min_lux * 0.5),
        ]
    )
    costs = np.array([c.cost for c in candidates])
    chosen = greedy_selection(rows, costs, np.ones(rows.shape[0]))
    assert meets[int(sum(1 << i for i in np.flatnonzero(chosen)))]
    assert float(costs @ chosen) >= cheapest - 1e-9


# --- nothing is enough -------------------------------------------------------


def test_shortfall_where_and_by_how_much() -> None:
    # One 500 lm candidate at the start of a 20 m route, 2.5 m up. At 20 m:
    # 0.8 * 500/pi * 2.5**2 / (20**2 + 2.5**2)**2 = 795.77 / 165039 = 0.00482 lx,
    # where EN 1838 asks 1 lx on the centre line.
    route = Route(((0.0, 0.0), (20.0, 0.0)), 1.0)
    candidate = Candidate("F1", 100.0, Luminaire(0.0, 0.0, 2.5, 500.0))
    plan = plan_conversions(route, [candidate], get_profile("eu-escape-route"))
    assert plan.shortfall is not None
    assert plan.shortfall.s_m == pytest.approx(20.0)
    assert plan.shortfall.lux_needed == 1.0
    expected = MF * 500.0 / math.pi * 2.5**2 / (20.0**2 + 2.5**2) ** 2
    assert plan.shortfall.lux_best == pytest.approx(expected, rel=1e-12)
    assert plan.shortfall.lux_best == pytest.approx(0.00482, abs=1e-5)
    assert plan.shortfall.check == "minimum on the centre line"
    assert plan.chosen_ids == ("F1",)
    assert (plan.cost, plan.optimal, plan.gap, plan.method) == (100.0, False, None, "none")
    finding = next(f for f in plan.result.findings if f.code == "plan-shortfall")
    assert finding.severity is Severity.FAIL
    assert "20.0 m" in finding.message and "100 % short" in finding.message


def test_shortfall_on_the_us_average() -> None:
    # Eleven dim candidates a metre apart meet the 0.1 fc minimum everywhere but
    # not the 1 fc average (NFPA 101 §7.9.2.1): the average is what falls short,
    # and it has no one position.
    route = Route(((0.0, 0.0), (10.0, 0.0)), 1.0)
    candidates = [Candidate(f"F{i}", 50.0, Luminaire(float(i), 0.0, 2.5, 60.0)) for i in range(11)]
    profile = get_profile("us-egress")
    all_on = evaluate_route(route, [c.luminaire for c in candidates], profile)
    assert all_on.min_lux >= profile.min_lux
    assert all_on.avg_lux < profile.avg_lux  # type: ignore[operator]
    plan = plan_conversions(route, candidates, profile)
    assert plan.shortfall is not None
    assert plan.shortfall.s_m is None
    assert plan.shortfall.check == "average along the path"
    assert plan.shortfall.lux_needed == pytest.approx(profile.avg_lux)
    assert plan.shortfall.lux_best == pytest.approx(all_on.avg_lux, rel=1e-12)


def test_no_candidates_is_a_shortfall() -> None:
    plan = plan_conversions(Route(((0.0, 0.0), (5.0, 0.0)), 1.0), [], get_profile("us-egress"))
    assert plan.shortfall is not None
    assert plan.shortfall.lux_best == 0.0
    assert plan.chosen_ids == ()


# --- the max:min check after planning -----------------------------------------


def test_cheapest_plan_that_fails_uniformity_says_so() -> None:
    # A cheap, very bright candidate in the middle of a 24 m route meets 1 lx at
    # the ends on its own: 0.8 * 15000/pi * 6.25 / (12**2 + 6.25)**2 = 1.06 lx.
    # Its max:min is ((144 + 6.25) / 6.25)**2 = 578:1, far above EN 1838's 40:1.
    route = Route(((0.0, 0.0), (24.0, 0.0)), 1.0)
    candidates = [
        Candidate("bright", 10.0, Luminaire(12.0, 0.0, 2.5, 15000.0)),
        *(
            Candidate(f"F{i}", 100.0, Luminaire(x, 0.0, 2.5, 300.0))
            for i, x in enumerate((2, 7, 17, 22))
        ),
    ]
    plan = plan_conversions(route, candidates, get_profile("eu-escape-route"))
    assert plan.chosen_ids == ("bright",)
    assert plan.optimal
    assert plan.result.max_min_ratio == pytest.approx(((144 + 6.25) / 6.25) ** 2, rel=1e-3)
    codes = {f.code: f.severity for f in plan.result.findings}
    assert codes["plan-uniformity"] is Severity.FAIL
    assert "route-uniformity" not in codes
    assert plan.result.verdict is Verdict.FAIL


# --- input errors -------------------------------------------------------------


def test_planner_input_errors() -> None:
    route = Route(((0.0, 0.0), (5.0, 0.0)), 1.0)
    lum = Luminaire(2.5, 0.0, 2.5, 300.0)
    profile = get_profile("eu-escape-route")
    with pytest.raises(InvalidInput, match="unique; 'A' repeats") as caught:
        plan_conversions(route, [Candidate("A", 1.0, lum), Candidate("A", 2.0, lum)], profile)
    assert caught.value.field == "id"
    with pytest.raises(InvalidInput, match="0 or more") as caught:
        plan_conversions(route, [Candidate("A", -1.0, lum)], profile)
    assert caught.value.field == "cost"
    with pytest.raises(InvalidInput, match="at most 1,000,000,000"):
        plan_conversions(route, [Candidate("A", 1e300, lum)], profile)
    with pytest.raises(InvalidInput, match="time limit"):
        plan_conversions(route, [Candidate("A", 1.0, lum)], profile, time_limit_s=0.0)
    with pytest.raises(InvalidInput, match="maintenance_factor"):
        plan_conversions(route, [Candidate("A", 1.0, lum)], profile, maintenance_factor=0.0)
