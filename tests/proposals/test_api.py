"""The proposals API: create, retry, versions, suggest, accept, the live check, roles, tenancy."""

from __future__ import annotations

from typing import Any

from tests.conftest import both_engines
from tests.planner_data import SERIES_FIXTURE, catalogue, survey


def _setup(client_as: Any) -> tuple[Any, dict[str, Any], dict[str, Any]]:
    estimator = client_as("estimator")
    return estimator, catalogue(estimator), survey(client_as("surveyor"))


@both_engines
def test_put_creates_then_answers_the_retry_then_needs_the_version(client_as) -> None:
    estimator, items, made = _setup(client_as)
    path = f"/api/v1/fixtures/{made['fixture']['id']}/proposal"
    choice = {"module_id": items["both"]["id"], "pack_id": items["big"]["id"]}
    first = estimator.put(path, json=choice)
    assert first.status_code == 201, first.text
    assert first.json()["verdict"] == "pass" and first.json()["status"] == "draft"
    assert estimator.put(path, json=choice).status_code == 200
    other = {**choice, "module_id": items["one"]["id"]}
    conflict = estimator.put(path, json=other)
    assert conflict.status_code == 409
    assert conflict.json()["current"]["module_id"] == items["both"]["id"]
    changed = estimator.put(path, json={**other, "version": first.json()["version"]})
    assert changed.status_code == 200 and changed.json()["verdict"] == "fail"
    codes = [finding["code"] for finding in changed.json()["findings"]]
    assert codes[0] == "wiring.series-one-end"  # worst first
    assert estimator.get(path).json()["module_id"] == items["one"]["id"]


def test_a_failing_proposal_needs_a_reason_to_be_accepted(client_as) -> None:
    estimator, items, made = _setup(client_as)
    path = f"/api/v1/fixtures/{made['fixture']['id']}/proposal"
    proposal = estimator.put(
        path, json={"module_id": items["one"]["id"], "pack_id": items["big"]["id"]}
    ).json()
    refused = estimator.post(path + "/accept", json={"version": proposal["version"]})
    assert refused.status_code == 422
    assert refused.json()["detail"][0]["loc"] == ["body", "override_reason"]
    accepted = estimator.post(
        path + "/accept",
        json={"version": proposal["version"], "override_reason": "Rewired to single lamp on site."},
    )
    assert accepted.status_code == 200 and accepted.json()["status"] == "accepted"
    assert accepted.json()["override_reason"] == "Rewired to single lamp on site."


def test_suggest_stores_the_cheapest_passing_pair(client_as) -> None:
    estimator, items, made = _setup(client_as)
    answer = estimator.post(f"/api/v1/fixtures/{made['fixture']['id']}/proposal/suggest", json={})
    assert answer.status_code == 200, answer.text
    body = answer.json()
    assert body["passes"] and body["combinations"] == 4
    assert body["combination"]["module_id"] == items["both"]["id"]
    assert body["combination"]["price"] == "137.00"
    assert body["proposal"]["pack_id"] == items["big"]["id"]


def test_suggest_without_a_pass_stores_nothing(client_as) -> None:
    estimator, _, made = _setup(client_as)
    fixture_id = made["fixture"]["id"]
    estimator.patch(
        f"/api/v1/fixtures/{fixture_id}",
        json={"version": made["fixture"]["version"], "lamp_type": "LED-tube"},
    )
    answer = estimator.post(f"/api/v1/fixtures/{fixture_id}/proposal/suggest", json={})
    assert answer.status_code == 200
    assert not answer.json()["passes"] and answer.json()["proposal"] is None
    assert "LED" in answer.json()["explanation"]
    assert estimator.get(f"/api/v1/fixtures/{fixture_id}/proposal").status_code == 404


def test_the_live_check_reads_a_form_not_saved_yet(client_as) -> None:
    estimator, items, made = _setup(client_as)
    surveyor = client_as("surveyor")
    answer = surveyor.post(
        f"/api/v1/areas/{made['area']['id']}/check",
        json={
            "fixture": {**SERIES_FIXTURE, "tag": "T-50"},
            "module_id": items["one"]["id"],
            "pack_id": items["big"]["id"],
        },
    )
    assert answer.status_code == 200, answer.text
    assert answer.json()["verdict"] == "fail"
    assert any("unplug the pack" in caution for caution in answer.json()["cautions"])
    wrong = surveyor.post(
        f"/api/v1/areas/{made['area']['id']}/check",
        json={"fixture": {**SERIES_FIXTURE, "lamp_w": -3}, "module_id": "x", "pack_id": "y"},
    )
    assert wrong.status_code == 422
    assert wrong.json()["detail"][0]["loc"][-1] == "lamp_w"


def test_area_proposals_filter_by_verdict(client_as) -> None:
    estimator, items, made = _setup(client_as)
    area_id = made["area"]["id"]
    second = estimator.post(
        f"/api/v1/areas/{area_id}/fixtures", json={**SERIES_FIXTURE, "tag": "T-02"}
    ).json()
    estimator.put(
        f"/api/v1/fixtures/{second['id']}/proposal",
        json={"module_id": items["one"]["id"], "pack_id": items["big"]["id"]},
    )
    listing = estimator.get(f"/api/v1/areas/{area_id}/proposals").json()
    assert listing["counts"] == {"pass": 0, "warn": 0, "fail": 1, "none": 1}
    failing = estimator.get(f"/api/v1/areas/{area_id}/proposals?verdict=fail").json()
    assert [item["tag"] for item in failing["items"]] == ["T-02"]
    waiting = estimator.get(f"/api/v1/areas/{area_id}/proposals?verdict=none").json()
    assert [item["tag"] for item in waiting["items"]] == ["T-01"]


def test_a_surveyor_reads_but_may_not_choose(client_as) -> None:
    _, items, made = _setup(client_as)
    surveyor = client_as("surveyor")
    path = f"/api/v1/fixtures/{made['fixture']['id']}/proposal"
    answer = surveyor.put(
        path, json={"module_id": items["both"]["id"], "pack_id": items["big"]["id"]}
    )
    assert answer.status_code == 403
    assert "estimator" in answer.json()["detail"]


def test_another_firm_sees_404_and_cannot_use_our_catalogue(client_as) -> None:
    _, items, made = _setup(client_as)
    other = client_as("estimator", org="B")
    path = f"/api/v1/fixtures/{made['fixture']['id']}/proposal"
    assert other.get(path).status_code == 404
    assert other.post(path + "/suggest", json={}).status_code == 404
    own = survey(client_as("surveyor", org="B"))
    answer = other.put(
        f"/api/v1/fixtures/{own['fixture']['id']}/proposal",
        json={"module_id": items["both"]["id"], "pack_id": items["big"]["id"]},
    )
    assert answer.status_code == 422
    assert answer.json()["detail"][0]["loc"] == ["body", "module_id"]


def test_the_operations_are_in_the_openapi_document(client) -> None:
    paths = client.get("/openapi.json").json()["paths"]
    assert {"get", "put"} <= set(paths["/api/v1/fixtures/{fixture_id}/proposal"])
    for action in ("suggest", "accept", "unaccept"):
        assert "post" in paths[f"/api/v1/fixtures/{{fixture_id}}/proposal/{action}"]
    assert "post" in paths["/api/v1/areas/{area_id}/check"]
