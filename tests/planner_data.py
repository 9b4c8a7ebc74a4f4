"""Invented survey and catalogue entries for the page, proposal and browser tests.

Nothing here is real product data: the names are made up and the figures are
chosen to land on either side of the rules (never used as check values).
"""

from __future__ import annotations

import uuid
from typing import Any

from fastapi.testclient import TestClient

BOTH_ENDS_MODULE: dict[str, Any] = {
    "name": "Test module, both ends, 7 W",
    "battery_w": 7.0,
    "chemistry": "NiCd",
    "cells": 4,
    "charge_a": 0.3,
    "rated_min": 90,
    "lamp_types": ["T8", "T5"],
    "lamp_w_min": 14,
    "lamp_w_max": 58,
    "ballasts": ["electronic-programmed-start", "electronic-instant-start"],
    "changeover": "both-ends",
    "max_lamps": 1,
    "waveform": "ac",
    "price": "95.00",
    "labour_h": 1.0,
}
ONE_END_MODULE: dict[str, Any] = {
    **BOTH_ENDS_MODULE,
    "name": "Test module, one end, 7 W",
    "changeover": "one-end",
    "price": "70.00",
}
BIG_PACK: dict[str, Any] = {
    "name": "Test pack NiCd 4.8 V 4.5 Ah",
    "chemistry": "NiCd",
    "cells": 4,
    "capacity_ah": 4.5,
    "max_c": 50,
    "price": "42.00",
}
SMALL_PACK: dict[str, Any] = {
    "name": "Test pack NiCd 4.8 V 1.7 Ah",
    "chemistry": "NiCd",
    "cells": 4,
    "capacity_ah": 1.7,
    "max_c": 50,
    "price": "18.00",
}
SERIES_FIXTURE: dict[str, Any] = {
    "tag": "T-01",
    "lamp_type": "T8",
    "lamp_w": 36,
    "lamp_length_mm": 1200,
    "lamp_count": 2,
    "lamps_to_back_up": 1,
    "ballast": "electronic-programmed-start",
    "wiring": "series",
    "unswitched_supply": True,
    "ambient_c": 25,
}


def created(client: TestClient, path: str, body: dict[str, Any]) -> dict[str, Any]:
    answer = client.post(path, json={"id": str(uuid.uuid4()), **body})
    assert answer.status_code == 201, answer.text
    result: dict[str, Any] = answer.json()
    return result


def catalogue(client: TestClient) -> dict[str, dict[str, Any]]:
    """Both modules and both packs, made through the API by an estimator's client."""
    return {
        "both": created(client, "/api/v1/catalogue/modules", BOTH_ENDS_MODULE),
        "one": created(client, "/api/v1/catalogue/modules", ONE_END_MODULE),
        "big": created(client, "/api/v1/catalogue/packs", BIG_PACK),
        "small": created(client, "/api/v1/catalogue/packs", SMALL_PACK),
    }


def survey(client: TestClient, **fixture: Any) -> dict[str, dict[str, Any]]:
    """A building, a 90-minute escape route and one fixture in it."""
    building = created(client, "/api/v1/buildings", {"name": "Test block"})
    area = created(
        client,
        f"/api/v1/buildings/{building['id']}/areas",
        {"name": "Corridor 1", "kind": "escape-route", "required_duration_min": 90},
    )
    made = created(client, f"/api/v1/areas/{area['id']}/fixtures", {**SERIES_FIXTURE, **fixture})
    return {"building": building, "area": area, "fixture": made}


def form_of(values: dict[str, Any]) -> dict[str, Any]:
    """API values as an HTML form sends them (booleans as true/false)."""
    return {
        name: ("true" if value else "false") if isinstance(value, bool) else value
        for name, value in values.items()
    }
