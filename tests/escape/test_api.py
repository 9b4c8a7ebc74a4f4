"""The escape-route API: its exact names, the 422 answers, sign-in.

Sources of the checks: the inverse-square cosine law with Lambert's law (IES
definitions), E = 0.8 * (flux / pi) / h**2 straight below a cosine emitter with
the maintenance factor 0.8 (common practice); the levels of EN 1838:2013 §4.2
and NFPA 101 §7.9.2.1 held in server/engineering/profiles.py.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from fastapi.testclient import TestClient

DATA = Path(__file__).resolve().parents[1] / "engineering" / "data"
ILLUMINANCE = "/api/v1/calc/route-illuminance"
PLAN = "/api/v1/calc/route-plan"


def luminaire(x_m: float, **fields: Any) -> dict[str, Any]:
    return {"x_m": x_m, "y_m": 0.0, "mounting_height_m": 2.5, "lumens": 1000.0, **fields}


def illuminance_body(**changes: Any) -> dict[str, Any]:
    body: dict[str, Any] = {
        "route": {"points": [[0.0, 0.0], [10.0, 0.0]], "width_m": 1.0},
        "luminaires": [luminaire(5.0)],
        "profile": "eu-escape-route",
    }
    body.update(changes)
    return body


def plan_body(**changes: Any) -> dict[str, Any]:
    body: dict[str, Any] = {
        "route": {"points": [[0.0, 0.0], [12.0, 0.0]], "width_m": 1.0},
        "candidates": [
            {**luminaire(x, lumens=250.0), "id": f"F{i}", "cost": cost}
            for i, (x, cost) in enumerate(
                [(1.0, 90.0), (4.0, 120.0), (6.0, 80.0), (9.0, 100.0), (11.0, 95.0)]
            )
        ],
        "profile": "eu-escape-route",
    }
    body.update(changes)
    return body


@pytest.fixture
def estimator(client_as: Callable[..., TestClient]) -> TestClient:
    return client_as("estimator")


def test_sign_in_needed(client: TestClient) -> None:
    assert client.post(ILLUMINANCE, json=illuminance_body()).status_code == 401
    assert client.post(PLAN, json=plan_body()).status_code == 401


def test_any_role_may_calculate(client_as: Callable[..., TestClient]) -> None:
    answer = client_as("surveyor").post(ILLUMINANCE, json=illuminance_body())
    assert answer.status_code == 200, answer.text


def test_route_illuminance_names_and_values(estimator: TestClient) -> None:
    answer = estimator.post(ILLUMINANCE, json=illuminance_body())
    assert answer.status_code == 200, answer.text
    data = answer.json()
    assert set(data) == {
        "samples",
        "min_lux",
        "max_lux",
        "avg_lux",
        "max_min_ratio",
        "worst",
        "verdict",
        "findings",
    }
    assert set(data["samples"][0]) == {"s_m", "x_m", "y_m", "lux"}
    assert set(data["worst"]) == {"s_m", "lux"}
    assert set(data["findings"][0]) == {"code", "severity", "message", "fix", "source"}
    assert len(data["samples"]) == 101  # every 0.1 m over 10 m
    # Straight below: 0.8 * 1000/pi / 2.5**2 = 40.744 lx (inverse-square cosine law).
    assert data["max_lux"] == pytest.approx(0.8 * 1000.0 / math.pi / 2.5**2, rel=1e-12)
    middle = data["samples"][50]
    assert (middle["s_m"], middle["x_m"], middle["y_m"]) == pytest.approx((5.0, 5.0, 0.0))
    assert middle["lux"] == pytest.approx(data["max_lux"])
    # ends: cos**4 = 0.04, so max:min = 25 exactly
    assert data["max_min_ratio"] == pytest.approx(25.0, rel=1e-9)
    assert data["worst"]["s_m"] in (0.0, 10.0)
    assert data["verdict"] == "pass"
    assert any(f["code"] == "route-caution" for f in data["findings"])


def test_route_illuminance_factors_and_us_profile(estimator: TestClient) -> None:
    base = estimator.post(ILLUMINANCE, json=illuminance_body(profile="us-egress")).json()
    dimmer = estimator.post(
        ILLUMINANCE,
        json=illuminance_body(profile="us-egress", maintenance_factor=0.4, step_m=0.5),
    ).json()
    assert len(dimmer["samples"]) == 21
    assert dimmer["max_lux"] == pytest.approx(base["max_lux"] / 2, rel=1e-12)
    codes = {f["code"] for f in base["findings"]}
    assert {"route-average", "route-end-minimum", "route-end-average"} <= codes


def test_route_illuminance_with_lm63_file(estimator: TestClient) -> None:
    text = (DATA / "batten_2002.ies").read_text()
    body = illuminance_body(
        luminaires=[luminaire(5.0, length_m=1.2, axis_deg=0.0, distribution={"lm63": text})]
    )
    answer = estimator.post(ILLUMINANCE, json=body)
    assert answer.status_code == 200, answer.text
    codes = {f["code"] for f in answer.json()["findings"]}
    assert "route-default-distribution" not in codes


@pytest.mark.parametrize(
    ("body", "loc", "pattern"),
    [
        (
            illuminance_body(route={"points": [[0.0, 0.0]], "width_m": 1.0}),
            ["body", "route", "points"],
            "at least two points",
        ),
        (
            illuminance_body(route={"points": [[2.0, 2.0], [2.0, 2.0]], "width_m": 1.0}),
            ["body", "route", "points"],
            "no length",
        ),
        (
            illuminance_body(route={"points": [[0.0, 0.0], [5.0, 0.0]], "width_m": 0.0}),
            ["body", "route", "width_m"],
            "more than 0 m",
        ),
        (
            illuminance_body(luminaires=[luminaire(5.0), luminaire(3.0, mounting_height_m=-2.0)]),
            ["body", "luminaires", 1, "mounting_height_m"],
            "above the floor",
        ),
        (
            illuminance_body(luminaires=[luminaire(5.0, mounting_height_m=0.0)]),
            ["body", "luminaires", 0, "mounting_height_m"],
            "above the floor",
        ),
        (
            illuminance_body(luminaires=[luminaire(5.0, lumens=-5.0)]),
            ["body", "luminaires", 0, "lumens"],
            "0 or more",
        ),
        (illuminance_body(profile="mars-base"), ["body", "profile"], "unknown profile"),
        (illuminance_body(step_m=0.0), ["body", "step_m"], "more than 0 m"),
        (illuminance_body(maintenance_factor=1.5), ["body", "maintenance_factor"], "at most 1"),
    ],
)
def test_bad_geometry_is_422_naming_the_field(
    estimator: TestClient, body: dict[str, Any], loc: list[Any], pattern: str
) -> None:
    answer = estimator.post(ILLUMINANCE, json=body)
    assert answer.status_code == 422, answer.text
    detail = answer.json()["detail"]
    assert detail[0]["loc"] == loc
    assert pattern in detail[0]["msg"]
    assert detail[0]["type"] == "value_error"


def test_malformed_lm63_is_422_naming_the_line(estimator: TestClient) -> None:
    lines = (DATA / "cosine_1995.ies").read_text().splitlines()
    lines[9] = "1 1000 1.0 7 1 2 2 0.0 0.0 0.0"  # type B photometry on line 10
    body = illuminance_body(luminaires=[luminaire(5.0, distribution={"lm63": "\n".join(lines)})])
    answer = estimator.post(ILLUMINANCE, json=body)
    assert answer.status_code == 422, answer.text
    detail = answer.json()["detail"][0]
    assert detail["loc"] == ["body", "luminaires", 0, "distribution", "lm63"]
    assert detail["msg"].startswith("line 10: type B photometry")


def test_unknown_fields_and_non_numbers_are_422(estimator: TestClient) -> None:
    body = illuminance_body(luminaires=[luminaire(5.0, colour="green")])
    assert estimator.post(ILLUMINANCE, json=body).status_code == 422
    body = illuminance_body(luminaires=[luminaire(5.0, distribution="spot")])
    assert estimator.post(ILLUMINANCE, json=body).status_code == 422
    body = illuminance_body(route={"points": [[0.0, "a"], [5.0, 0.0]], "width_m": 1.0})
    assert estimator.post(ILLUMINANCE, json=body).status_code == 422


def test_route_plan_names_and_optimum(estimator: TestClient) -> None:
    answer = estimator.post(PLAN, json=plan_body())
    assert answer.status_code == 200, answer.text
    data = answer.json()
    assert set(data) == {"chosen", "cost", "optimal", "gap", "result", "shortfall"}
    assert data["optimal"] is True
    assert data["gap"] == pytest.approx(0.0, abs=1e-6)
    assert data["shortfall"] is None
    assert data["result"]["min_lux"] >= 1.0  # EN 1838 centre line
    prices = {c["id"]: c["cost"] for c in plan_body()["candidates"]}
    assert data["cost"] == pytest.approx(sum(prices[i] for i in data["chosen"]))
    assert 0 < len(data["chosen"]) < len(prices)
    assert any(f["code"] == "plan-optimal" for f in data["result"]["findings"])


def test_route_plan_shortfall(estimator: TestClient) -> None:
    body = plan_body(
        route={"points": [[0.0, 0.0], [20.0, 0.0]], "width_m": 1.0},
        candidates=[{**luminaire(0.0, lumens=500.0), "id": "F1", "cost": 100.0}],
    )
    answer = estimator.post(PLAN, json=body)
    assert answer.status_code == 200, answer.text
    data = answer.json()
    # 0.8 * 500/pi * 2.5**2 / (20**2 + 2.5**2)**2 = 0.00482 lx at 20 m, 1 lx needed
    assert data["shortfall"]["s_m"] == pytest.approx(20.0)
    assert data["shortfall"]["lux_needed"] == 1.0
    assert data["shortfall"]["lux_best"] == pytest.approx(0.00482, abs=1e-5)
    assert data["chosen"] == ["F1"]
    assert data["optimal"] is False and data["gap"] is None
    assert data["result"]["verdict"] == "fail"


def test_route_plan_422s(estimator: TestClient) -> None:
    twins = plan_body()
    twins["candidates"][1]["id"] = "F0"
    answer = estimator.post(PLAN, json=twins)
    assert answer.status_code == 422
    assert answer.json()["detail"][0]["loc"] == ["body", "candidates", "id"]
    negative = plan_body()
    negative["candidates"][2]["cost"] = -3.0
    answer = estimator.post(PLAN, json=negative)
    assert answer.status_code == 422
    assert answer.json()["detail"][0]["loc"] == ["body", "candidates", "cost"]
    low = plan_body()
    low["candidates"][3]["mounting_height_m"] = 0.0
    answer = estimator.post(PLAN, json=low)
    assert answer.json()["detail"][0]["loc"] == ["body", "candidates", 3, "mounting_height_m"]
    assert estimator.post(PLAN, json=plan_body(profile="nowhere")).status_code == 422
