"""Bench: the conversion planner beside greedy (and brute force where it is feasible).

Run from the repository root::

    python -m bench.bench_planner        (or: python bench/bench_planner.py)

Corridors of existing 1.2 m battens at 2.7 m, converted ones giving 10 % of
their lamp lumens (an emergency ballast lumen factor near 0.1 is usual: common
practice); costs invented for the bench, with an extra supply run on about a
third of the fixtures. Every case is planned, then solved greedily on the same
input in the same run (and by brute force over every subset when there are at
most 16 candidates); the table gives the times, the costs and their ratios.
Targets: 60 m with 40 candidates under 2 s, 200 m with 300 under 10 s.
Not part of the test suite.
"""

from __future__ import annotations

import os
import sys
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np

if __package__ in (None, ""):  # run as a script: make the repository importable
    sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from server.engineering.planner import (  # noqa: E402
    SOLVER_MARGIN,
    Candidate,
    greedy_selection,
    plan_conversions,
    requirement_rows,
)
from server.engineering.profiles import get_profile  # noqa: E402
from server.engineering.routes import (  # noqa: E402
    DEFAULT_MAINTENANCE_FACTOR,
    Luminaire,
    Route,
    route_matrices,
)

LAMP_LUMENS = (1350.0, 3350.0, 5200.0)  # T8 18/36/58 W, ENGINEERING.md §3 (from memory)
EBLF = 0.1  # common practice
BRUTE_FORCE_MAX = 16


@dataclass(frozen=True)
class Case:
    name: str
    length_m: float
    count: int
    rows: int  # rows of fittings along the corridor
    profile_id: str
    target_s: float | None


CASES = (
    Case("20 m, 12 candidates", 20.0, 12, 1, "eu-escape-route", None),
    Case("60 m, 40 candidates", 60.0, 40, 1, "eu-escape-route", 2.0),
    Case("60 m, 40 candidates", 60.0, 40, 1, "us-egress", 2.0),
    Case("200 m, 300 candidates", 200.0, 300, 2, "eu-escape-route", 10.0),
    Case("200 m, 300 candidates", 200.0, 300, 2, "us-egress", 10.0),
)


def corridor(case: Case, seed: int = 7) -> tuple[Route, list[Candidate]]:
    rng = np.random.default_rng(seed)
    route = Route(((0.0, 0.0), (case.length_m, 0.0)), 2.0)
    per_row = case.count // case.rows
    spacing_m = case.length_m / per_row
    candidates = []
    for row in range(case.rows):
        y_m = 0.0 if case.rows == 1 else (-0.6 if row == 0 else 0.6)
        for index in range(per_row):
            lamp_lm = float(rng.choice(LAMP_LUMENS))
            cost = float(rng.uniform(130.0, 160.0)) + (90.0 if rng.uniform() < 0.3 else 0.0)
            candidates.append(
                Candidate(
                    id=f"R{row}-{index:03d}",
                    cost=round(cost, 2),
                    luminaire=Luminaire(
                        x_m=(index + 0.5) * spacing_m,
                        y_m=y_m,
                        mounting_height_m=2.7,
                        emergency_flux_lm=lamp_lm * EBLF,
                        length_m=1.2,
                        axis_deg=0.0,
                    ),
                )
            )
    return route, candidates


def greedy_cost(route: Route, candidates: list[Candidate], profile_id: str) -> float | None:
    profile = get_profile(profile_id)
    matrices = route_matrices(route, [c.luminaire for c in candidates], profile)
    rows = requirement_rows(matrices, profile, DEFAULT_MAINTENANCE_FACTOR).rows
    if np.min(rows.sum(axis=1)) < 1.0:
        return None
    target = np.minimum(1.0 + SOLVER_MARGIN, rows.sum(axis=1))
    chosen = greedy_selection(rows, np.array([c.cost for c in candidates]), target)
    return float(sum(c.cost for c, pick in zip(candidates, chosen, strict=True) if pick))


def brute_force_cost(route: Route, candidates: list[Candidate], profile_id: str) -> float | None:
    profile = get_profile(profile_id)
    matrices = route_matrices(route, [c.luminaire for c in candidates], profile)
    rows = requirement_rows(matrices, profile, DEFAULT_MAINTENANCE_FACTOR).rows
    count = len(candidates)
    subsets = ((np.arange(2**count)[:, None] >> np.arange(count)) & 1).astype(float)
    meets = np.all(rows @ subsets.T >= 1.0, axis=0)
    if not np.any(meets):
        return None
    return float((subsets @ np.array([c.cost for c in candidates]))[meets].min())


def timed(function, *args):  # type: ignore[no-untyped-def]
    started = time.perf_counter()
    answer = function(*args)
    return answer, time.perf_counter() - started


def main() -> int:
    print(f"CPUs: {os.cpu_count()}, load average: {os.getloadavg()[0]:.1f} (1 min)")
    header = (
        f"{'case':<22} {'profile':<16} {'plan s':>7} {'target':>7} {'cost':>9} {'opt':>4} "
        f"{'gap':>6} | {'greedy s':>8} {'cost':>9} {'cost ratio':>10} {'time ratio':>10} | "
        f"{'brute s':>7} {'cost ratio':>10} {'time ratio':>10}"
    )
    print(header)
    print("-" * len(header))
    missed = 0
    for case in CASES:
        route, candidates = corridor(case)
        profile = get_profile(case.profile_id)
        plan, plan_s = timed(plan_conversions, route, candidates, profile)
        greedy, greedy_s = timed(greedy_cost, route, candidates, case.profile_id)
        brute_text = f"{'-':>7} {'-':>10} {'-':>10}"
        if case.count <= BRUTE_FORCE_MAX:
            brute, brute_s = timed(brute_force_cost, route, candidates, case.profile_id)
            cost_ratio = f"{plan.cost / brute:10.4f}" if brute else f"{'none met':>10}"
            brute_text = f"{brute_s:7.2f} {cost_ratio} {plan_s / brute_s:10.2f}"
        within = case.target_s is None or plan_s < case.target_s
        missed += not within
        gap = "-" if plan.gap is None else f"{100 * plan.gap:5.1f}%"
        greedy_text = (
            f"{greedy_s:8.2f} {'-':>9} {'-':>10}"
            if not greedy
            else f"{greedy_s:8.2f} {greedy:9.2f} {plan.cost / greedy:10.4f}"
        )
        print(
            f"{case.name:<22} {case.profile_id:<16} {plan_s:7.2f} "
            f"{'-' if case.target_s is None else f'<{case.target_s:g} s':>7} "
            f"{plan.cost:9.2f} {'yes' if plan.optimal else 'no':>4} {gap:>6} | {greedy_text} "
            f"{plan_s / greedy_s:10.1f} | {brute_text}" + ("" if within else "   <- over target")
        )
        if plan.shortfall is not None:
            print(f"    shortfall: {plan.shortfall}")
    print(
        "cost ratio: planner's cost over greedy's (or brute force's) on the same input; "
        "time ratio: planner's time over theirs."
    )
    return 1 if missed else 0


if __name__ == "__main__":
    raise SystemExit(main())
