"""Buildings, areas and fixtures through the JSON API, on a real migrated database."""

from __future__ import annotations

import uuid
from typing import Any

from tests.conftest import both_engines

FIXTURE = {
    "tag": "C-01",
    "lamp_type": "T8",
    "lamp_w": 58,
    "lamp_length_mm": 1500,
    "lamp_count": 2,
    "ballast": "electronic-instant-start",
    "wiring": "series",
    "unswitched_supply": False,
    "ambient_c": 28,
}


def make_area(client: Any) -> tuple[str, str]:
    building = client.post("/api/v1/buildings", json={"name": "Depot"}).json()
    area = client.post(
        f"/api/v1/buildings/{building['id']}/areas",
        json={"name": "Corridor", "kind": "escape-route", "length_m": 30, "width_m": 1.8},
    )
    assert area.status_code == 201, area.text
    return building["id"], area.json()["id"]


@both_engines
def test_crud_round_trip(client_as) -> None:
    api = client_as("surveyor")
    _, area_id = make_area(api)
    created = api.post(f"/api/v1/areas/{area_id}/fixtures", json=FIXTURE)
    assert created.status_code == 201, created.text
    fixture = created.json()
    assert fixture["version"] == 1 and fixture["area_id"] == area_id
    assert api.get(f"/api/v1/fixtures/{fixture['id']}").json()["tag"] == "C-01"

    changed = api.patch(f"/api/v1/fixtures/{fixture['id']}", json={"version": 1, "ambient_c": 35})
    assert changed.status_code == 200, changed.text
    assert changed.json()["ambient_c"] == 35 and changed.json()["version"] == 2

    listing = api.get(f"/api/v1/areas/{area_id}/fixtures").json()
    assert listing["total"] == 1 and listing["items"][0]["id"] == fixture["id"]

    assert api.delete(f"/api/v1/fixtures/{fixture['id']}").status_code == 204
    assert api.get(f"/api/v1/fixtures/{fixture['id']}").status_code == 404


def test_pagination(client_as) -> None:
    api = client_as("surveyor")
    for number in range(7):
        api.post("/api/v1/buildings", json={"name": f"Block {number}"})
    page = api.get("/api/v1/buildings", params={"limit": 3, "offset": 3}).json()
    assert page["total"] == 7 and page["limit"] == 3 and page["offset"] == 3
    assert [item["name"] for item in page["items"]] == ["Block 3", "Block 4", "Block 5"]
    assert api.get("/api/v1/buildings", params={"limit": 0}).status_code == 422


@both_engines
def test_stale_version_answers_409_and_changes_nothing(client_as) -> None:
    first, second = client_as("surveyor"), client_as("estimator")
    _, area_id = make_area(first)
    fixture = first.post(f"/api/v1/areas/{area_id}/fixtures", json=FIXTURE).json()
    assert (
        first.patch(
            f"/api/v1/fixtures/{fixture['id']}", json={"version": 1, "tag": "C-1A"}
        ).status_code
        == 200
    )

    stale = second.patch(f"/api/v1/fixtures/{fixture['id']}", json={"version": 1, "tag": "C-1B"})
    assert stale.status_code == 409
    assert stale.json()["current"]["tag"] == "C-1A"
    stored = first.get(f"/api/v1/fixtures/{fixture['id']}").json()
    assert stored["tag"] == "C-1A" and stored["version"] == 2


@both_engines
def test_create_with_client_id_is_idempotent(client_as) -> None:
    api = client_as("surveyor")
    _, area_id = make_area(api)
    body = {**FIXTURE, "id": str(uuid.uuid4())}
    first = api.post(f"/api/v1/areas/{area_id}/fixtures", json=body)
    again = api.post(f"/api/v1/areas/{area_id}/fixtures", json=body)
    assert (first.status_code, again.status_code) == (201, 200)
    assert again.json() == first.json()
    assert api.get(f"/api/v1/areas/{area_id}/fixtures").json()["total"] == 1

    different = api.post(f"/api/v1/areas/{area_id}/fixtures", json={**body, "lamp_w": 36})
    assert different.status_code == 409
    assert "lamp_w" in different.json()["detail"]


def _errors(answer: Any) -> dict[str, str]:
    assert answer.status_code == 422, answer.text
    return {error["loc"][-1]: error["msg"] for error in answer.json()["detail"]}


def test_bad_input_names_the_field_and_saves_nothing(client_as) -> None:
    api = client_as("surveyor")
    _, area_id = make_area(api)
    cases = {
        "lamp_w": {**FIXTURE, "lamp_w": -5},
        "lamp_type": {**FIXTURE, "lamp_type": "T99"},
        "tag": {**FIXTURE, "tag": "x" * 51},
        "loaded_v": {**FIXTURE, "open_circuit_v": 5.0, "loaded_v": 5.4},
        "lamps_to_back_up": {**FIXTURE, "lamps_to_back_up": 3},
        "pack_date_format": {**FIXTURE, "pack_date_code": "0512"},
        "unknown_field": {**FIXTURE, "unknown_field": 1},
    }
    for field, body in cases.items():
        errors = _errors(api.post(f"/api/v1/areas/{area_id}/fixtures", json=body))
        assert field in errors, (field, errors)
    assert api.get(f"/api/v1/areas/{area_id}/fixtures").json()["total"] == 0


def test_patch_is_checked_on_the_record_as_it_would_become(client_as) -> None:
    api = client_as("surveyor")
    _, area_id = make_area(api)
    fixture = api.post(
        f"/api/v1/areas/{area_id}/fixtures", json={**FIXTURE, "open_circuit_v": 5.2}
    ).json()
    errors = _errors(
        api.patch(f"/api/v1/fixtures/{fixture['id']}", json={"version": 1, "loaded_v": 6})
    )
    assert "loaded_v" in errors
    null_tag = api.patch(f"/api/v1/fixtures/{fixture['id']}", json={"version": 1, "tag": None})
    assert "tag" in _errors(null_tag)
    assert api.get(f"/api/v1/fixtures/{fixture['id']}").json()["version"] == 1


def test_catalogue_module_validation(client_as) -> None:
    api = client_as("estimator")
    module = {
        "name": "Inverter 7 W",
        "battery_w": 7,
        "chemistry": "NiCd",
        "cells": 4,
        "charge_a": 0.17,
        "lamp_types": ["T8", "T5"],
        "lamp_w_min": 14,
        "lamp_w_max": 58,
        "ballasts": ["electronic-instant-start"],
    }
    assert api.post("/api/v1/catalogue/modules", json=module).status_code == 201
    errors = _errors(api.post("/api/v1/catalogue/modules", json={**module, "battery_a": 1.4}))
    assert "battery_w" in errors
    pack = {"name": "Pack 4.8 V", "chemistry": "NiCd", "cells": 4, "capacity_ah": 0}
    assert "capacity_ah" in _errors(api.post("/api/v1/catalogue/packs", json=pack))


@both_engines
def test_nul_characters_are_refused_on_every_engine(client_as) -> None:
    api = client_as("surveyor")
    answer = api.post("/api/v1/buildings", json={"name": "Block\x00A"})
    assert "name" in _errors(answer)
    token = api.post("/api/v1/auth/token", data={"username": "a\x00@x.test", "password": "x"})
    assert token.status_code == 401
