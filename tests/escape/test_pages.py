"""The route page: the route saved and read back, refused geometry beside its field,
the plot in the page, the plan accepted into proposals, tenancy and roles (the page
in Chromium: tests/browser/test_route_page.py).

Sample counts follow the project's route sampling (every 0.1 m from the start,
plus the end: server/engineering/routes.py); the levels are EN 1838:2013 §4.2
(1 lx on the centre line) as held in server/engineering/profiles.py.
"""

from __future__ import annotations

import math
import re
import uuid
from collections.abc import Callable, Iterator
from typing import Any

import pytest
from fastapi.testclient import TestClient
from sqlalchemy import select
from sqlalchemy.orm import Session

from server.db import make_engine, make_session_factory
from server.escape.models import EscapeRoute
from server.proposals.models import Proposal
from server.sites.models import Fixture
from tests.conftest import both_engines
from tests.pages import Element, field_error, field_value, form_fields, parse
from tests.planner_data import SERIES_FIXTURE, catalogue, created

LENGTH_M, WIDTH_M = 24.0, 2.0


def corridor(client: TestClient, *, fixtures: int = 7, **area: Any) -> dict[str, Any]:
    """A 24 m x 2 m corridor (EU escape route) with battens every 3 m along its middle,
    one placed only by its position along the route and one not placed at all."""
    building = created(client, "/api/v1/buildings", {"name": "Route block"})
    made_area = created(
        client,
        f"/api/v1/buildings/{building['id']}/areas",
        {
            "name": "Corridor R",
            "kind": "escape-route",
            "length_m": LENGTH_M,
            "width_m": WIDTH_M,
            "mounting_height_m": 2.7,
            "profile_id": "eu-escape-route",
            "required_duration_min": 60,
            **area,
        },
    )
    path = f"/api/v1/areas/{made_area['id']}/fixtures"
    made = [
        created(
            client,
            path,
            {**SERIES_FIXTURE, "tag": f"R-{i + 1:02d}", "x_m": 1.5 + 3 * i, "y_m": 1.0},
        )
        for i in range(fixtures)
    ]
    made.append(created(client, path, {**SERIES_FIXTURE, "tag": "R-P", "position_m": 22.5}))
    made.append(created(client, path, {**SERIES_FIXTURE, "tag": "R-X"}))
    return {"building": building, "area": made_area, "fixtures": made}


def route_path(area: dict[str, Any]) -> str:
    return f"/areas/{area['id']}/route"


def save(client: TestClient, area: dict[str, Any], **fields: str) -> Any:
    page = parse(client.get(route_path(area)).text)
    form = form_fields(page, "route-form")
    form.update(fields)
    return client.post(route_path(area), data=form, follow_redirects=False)


@pytest.fixture
def estimator(client_as: Callable[..., TestClient]) -> TestClient:
    client = client_as("estimator")
    catalogue(client)
    return client


@pytest.fixture
def session(database_url: str) -> Iterator[Session]:
    engine = make_engine(database_url)
    with make_session_factory(engine)() as opened:
        yield opened
    engine.dispose()


def lux_polyline(page: Element, key: str) -> Element:
    svg = page.find("svg", **{"aria-labelledby": f"lux-{key}-title lux-{key}-desc"})
    return svg.find("polyline", class_="lux-line")


@both_engines
def test_route_saved_and_read_back(estimator: TestClient, session: Session) -> None:
    made = corridor(estimator)
    first = parse(estimator.get(route_path(made["area"])).text)
    # Prefilled from the area: a straight line along its length at mid-width.
    assert field_value(first, "points") == "0,1; 24,1"
    assert field_value(first, "width_m") == "2"
    answer = save(estimator, made["area"], points="0,1; 12,1; 12,9", width_m="1.8")
    assert answer.status_code == 303
    assert answer.headers["location"] == route_path(made["area"]) + "?saved=1"
    again = parse(estimator.get(answer.headers["location"]).text)
    assert field_value(again, "points") == "0,1; 12,1; 12,9"
    assert field_value(again, "width_m") == "1.8"
    assert again.find(id="route-form").find("input", name="version").attrs["value"] == "1"
    stored = session.scalars(select(EscapeRoute)).one()
    assert stored.points_m == [[0.0, 1.0], [12.0, 1.0], [12.0, 9.0]]
    assert (stored.width_m, stored.maintenance_factor) == (1.8, 0.8)
    # A second save changes the same route, at its version.
    assert save(estimator, made["area"], maintenance_factor="0.7").status_code == 303
    session.expire_all()
    assert session.scalars(select(EscapeRoute)).one().version == 2


@pytest.mark.parametrize(
    ("fields", "field", "words"),
    [
        ({"points": "0,1"}, "points", "at least two points"),
        ({"points": "3,1; 3,1"}, "points", "no length"),
        ({"points": "0,1; twelve,1"}, "points", "point 2"),
        ({"width_m": "-1.5"}, "width_m", "more than 0 m"),
        ({"width_m": ""}, "width_m", "enter a value"),
        ({"maintenance_factor": "1.4"}, "maintenance_factor", "at most 1"),
    ],
)
def test_bad_geometry_is_shown_beside_its_field_with_the_input_kept(
    estimator: TestClient, session: Session, fields: dict[str, str], field: str, words: str
) -> None:
    made = corridor(estimator)
    assert save(estimator, made["area"]).status_code == 303
    answer = save(estimator, made["area"], **fields)
    assert answer.status_code == 422
    page = parse(answer.text)
    assert words in field_error(page, field).lower()
    for name, typed in fields.items():
        assert field_value(page, name) == typed
    assert page.find(id=f"f-{field}").attrs.get("aria-invalid") == "true"
    # What was saved before is untouched.
    stored = session.scalars(select(EscapeRoute)).one()
    assert stored.points_m == [[0.0, 1.0], [24.0, 1.0]] and stored.version == 1


def test_the_plot_has_one_point_per_sample(estimator: TestClient) -> None:
    made = corridor(estimator)
    save(estimator, made["area"], points="0,1; 12,1; 12,7.35")
    page = parse(estimator.get(route_path(made["area"])).text)
    polyline = lux_polyline(page, "now")
    points = polyline.attrs["points"].split()
    # 18.35 m of centre line every 0.1 m from 0, plus the end point (routes.py sampling).
    expected = math.floor(18.35 / 0.1 + 1e-9) + 1 + 1
    assert len(points) == expected == 185
    assert all(re.fullmatch(r"-?\d+(\.\d+)?,-?\d+(\.\d+)?", point) for point in points)
    svg = page.find("svg", **{"data-samples": str(expected)})
    assert svg.find_all("line", class_="lux-level-min")  # the profile's threshold line
    assert svg.find_all("circle", class_="lux-worst")  # the darkest point
    # Nothing converted yet: every point is dark, and the verdict says so.
    assert page.find("span", **{"data-verdict": "fail"})
    plan_view = page.find("figure", class_="route-plan").find("svg")
    tags = [text.text() for text in plan_view.find_all("text", class_="plan-tag")]
    assert sorted(tags) == [f"R-{i:02d}" for i in range(1, 8)] + ["R-P"]  # R-X is not placed
    assert "Left out: no plan x and y" in page.text()


def _accepted(session: Session, area_id: str) -> set[str]:
    session.expire_all()
    rows = session.execute(
        select(Fixture.tag)
        .join(Proposal, Proposal.fixture_id == Fixture.id)
        .where(Fixture.area_id == area_id, Proposal.status == "accepted")
    ).all()
    return {tag for (tag,) in rows}


@both_engines
def test_plan_then_accept_makes_proposals_for_exactly_the_chosen(
    estimator: TestClient, session: Session
) -> None:
    made = corridor(estimator)
    save(estimator, made["area"])
    answer = estimator.post(route_path(made["area"]) + "/plan")
    assert answer.status_code == 200
    page = parse(answer.text)
    chosen_values = [element.attrs["value"] for element in page.find_all("input", name="chosen")]
    by_id = {fixture["id"]: fixture["tag"] for fixture in made["fixtures"]}
    chosen = {by_id[value.partition(":")[0]] for value in chosen_values}
    assert chosen and chosen < set(by_id.values()) - {"R-X"}
    # The plan view marks the chosen fixtures.
    marked = {
        group.find("text", class_="plan-tag").text()
        for group in page.find_all("g", class_="plan-chosen")
    }
    assert marked == chosen
    # With the chosen set lit the route meets the minimum (EN 1838:2013 §4.2).
    assert lux_polyline(page, "plan")
    assert session.scalars(select(Proposal)).all() == []
    done = estimator.post(route_path(made["area"]) + "/plan/accept", data={"chosen": chosen_values})
    assert done.status_code == 200
    assert _accepted(session, made["area"]["id"]) == chosen
    assert len(session.scalars(select(Proposal)).all()) == len(chosen)  # no others made
    outcome = parse(done.text).find(id="accepted").text()
    assert "Proposals made and accepted" in outcome
    # The route now gets its light from the converted fixtures and passes.
    now = parse(estimator.get(route_path(made["area"])).text)
    assert now.find("section", **{"aria-labelledby": "now-title"}).find(
        "span", **{"data-verdict": "pass"}
    )
    # Accepting again changes nothing and says so.
    again = estimator.post(
        route_path(made["area"]) + "/plan/accept", data={"chosen": chosen_values}
    )
    text = parse(again.text).find(id="accepted").text()
    assert "Already accepted before" not in text  # the versions moved on: nothing overwritten
    assert "changed or made its proposal after the plan" in text
    assert _accepted(session, made["area"]["id"]) == chosen


@pytest.mark.parametrize(
    ("module", "said", "status"),
    [
        ("both", "already had a draft proposal", "accepted"),
        # The one-end module fails the series fixture: never accepted without a reason.
        ("one", "accept it on its proposal page", "draft"),
    ],
)
def test_an_existing_draft_is_accepted_as_it_stands_or_left(
    estimator: TestClient, session: Session, module: str, said: str, status: str
) -> None:
    made = corridor(estimator, fixtures=3)
    items = catalogue(estimator)
    first = made["fixtures"][1]
    draft = estimator.put(
        f"/api/v1/fixtures/{first['id']}/proposal",
        json={"module_id": items[module]["id"], "pack_id": items["big"]["id"]},
    ).json()
    save(estimator, made["area"], points="0,1; 9,1")
    page = parse(estimator.post(route_path(made["area"]) + "/plan").text)
    values = [element.attrs["value"] for element in page.find_all("input", name="chosen")]
    assert f"{first['id']}:{draft['version']}" in values
    done = estimator.post(route_path(made["area"]) + "/plan/accept", data={"chosen": values})
    text = parse(done.text).find(id="accepted").text()
    assert f"{first['tag']}" in text and said in text
    session.expire_all()
    proposal = session.scalars(select(Proposal).where(Proposal.fixture_id == first["id"])).one()
    assert proposal.status == status
    assert proposal.module_id == items[module]["id"]  # its choice was never overwritten


def test_another_firms_area_answers_404(
    client_as: Callable[..., TestClient], estimator: TestClient
) -> None:
    made = corridor(estimator)
    save(estimator, made["area"])
    other = client_as("admin", org="B")
    missing = {"id": str(uuid.uuid4())}
    for area in (made["area"], missing):
        assert other.get(route_path(area)).status_code == 404
        assert other.post(route_path(area) + "/plan").status_code == 404
        assert other.post(route_path(area), data={"points": "0,0; 1,0"}).status_code == 404
        assert (
            other.post(route_path(area) + "/plan/accept", data={"chosen": "x:"}).status_code == 404
        )


def test_a_surveyor_sees_the_plan_but_cannot_accept_it(
    browser_session_as: Callable[..., TestClient], estimator: TestClient, session: Session
) -> None:
    made = corridor(estimator)
    save(estimator, made["area"])
    surveyor = browser_session_as("surveyor")
    page = parse(surveyor.get(route_path(made["area"])).text)
    token = page.find("input", name="csrf_token").attrs["value"]
    planned = surveyor.post(route_path(made["area"]) + "/plan", data={"csrf_token": token})
    assert planned.status_code == 200
    shown = parse(planned.text)
    assert shown.find_all("input", name="chosen") == []  # no accept form for a surveyor
    assert "An estimator can accept this plan" in shown.text()
    refused = surveyor.post(
        route_path(made["area"]) + "/plan/accept",
        data={"csrf_token": token, "chosen": f"{made['fixtures'][0]['id']}:"},
    )
    assert refused.status_code == 403
    assert "estimator" in refused.text
    assert session.scalars(select(Proposal)).all() == []


def test_nothing_is_enough_says_where_and_by_how_much(estimator: TestClient) -> None:
    made = corridor(estimator, fixtures=2, mounting_height_m=2.7)
    save(estimator, made["area"], points="0,1; 24,1")
    page = parse(estimator.post(route_path(made["area"]) + "/plan").text)
    alert = page.find("section", id="plan").find("div", class_="error").text()
    assert "Nothing is enough" in alert
    assert re.search(r"at \d+\.\d m along the route, \d+\.\d\d lx against the 1\.00 lx", alert)


def test_the_us_profile_draws_its_average_as_well(estimator: TestClient) -> None:
    made = corridor(estimator, profile_id="us-egress", required_duration_min=90)
    save(estimator, made["area"])
    page = parse(estimator.post(route_path(made["area"]) + "/plan").text)
    svg = lux_polyline(page, "plan").parent
    assert svg is not None
    labels = [text.text() for text in svg.find_all("text", class_="plot-label")]
    # NFPA 101 §7.9.2.1: 0.1 fc minimum and 1 fc average (1 fc = 10.764 lx).
    assert "minimum 1.08 lx" in labels and "average 10.8 lx" in labels
    assert len(svg.find_all("line", class_="lux-level-avg")) == 1
    assert "an average of 10.8 lx (1 fc)" in page.text()


def test_without_a_route_the_planner_asks_for_one(estimator: TestClient) -> None:
    made = corridor(estimator, fixtures=1, length_m=None, width_m=None)
    page = parse(estimator.get(route_path(made["area"])).text)
    assert field_value(page, "points") == ""
    answer = estimator.post(route_path(made["area"]) + "/plan")
    assert answer.status_code == 422
    assert "save the route first" in parse(answer.text).find("section", id="plan").text().lower()
