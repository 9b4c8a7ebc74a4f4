"""End to end through the real survey, catalogue and proposals APIs: the findings the
compatibility engine writes become the quote's extra labour and the crew's wiring notes."""

from __future__ import annotations

from collections.abc import Callable
from decimal import Decimal
from typing import Any

from fastapi.testclient import TestClient

from tests.conftest import Directory

Clients = Callable[..., TestClient]

# Invented catalogue entries (no real product): a 4-cell NiCd module and a pack big enough
# that the run-time passes: 4.5 Ah at about 7 W / 4.8 V = 1.46 A.
MODULE = {
    "name": "Invented inverter 7 W",
    "battery_w": 7,
    "chemistry": "NiCd",
    "cells": 4,
    "charge_a": 0.3,
    "rated_min": 90,
    "lamp_types": ["T8"],
    "lamp_w_min": 18,
    "lamp_w_max": 58,
    "ballasts": ["electronic-programmed-start"],
    "changeover": "both-ends",
    "price": "90.00",
    "labour_h": 1.25,
}
PACK = {
    "name": "Invented NiCd 4.8 V 4.5 Ah",
    "chemistry": "NiCd",
    "cells": 4,
    "capacity_ah": 4.5,
    "price": "35.00",
}


def _post(client: TestClient, path: str, body: dict[str, Any]) -> dict[str, Any]:
    answer = client.post(path, json=body)
    assert answer.status_code in (200, 201), (path, answer.text)
    return dict(answer.json())


def test_findings_from_the_engine_drive_the_lines_and_the_notes(
    client_as: Clients, directory: Directory
) -> None:
    estimator, supervisor = client_as("estimator"), client_as("supervisor")
    building = _post(estimator, "/api/v1/buildings", {"name": "Invented annex"})
    area = _post(
        estimator,
        f"/api/v1/buildings/{building['id']}/areas",
        {"name": "Corridor 3", "kind": "escape-route", "required_duration_min": 90},
    )
    fixture = _post(
        estimator,
        f"/api/v1/areas/{area['id']}/fixtures",
        {
            "tag": "K-01",
            "lamp_type": "T8",
            "lamp_w": 36,
            "lamp_length_mm": 1200,
            "lamp_count": 2,
            "wiring": "series",
            "ballast": "electronic-programmed-start",
            "unswitched_supply": False,
        },
    )
    module = _post(estimator, "/api/v1/catalogue/modules", MODULE)
    pack = _post(estimator, "/api/v1/catalogue/packs", PACK)
    put = estimator.put(
        f"/api/v1/fixtures/{fixture['id']}/proposal",
        json={"module_id": module["id"], "pack_id": pack["id"]},
    )
    assert put.status_code in (200, 201), put.text
    proposal = put.json()
    codes = {finding["code"] for finding in proposal["findings"]}
    assert {"wiring.series-link", "supply.unswitched-missing"} <= codes
    accepted = _post(
        estimator,
        f"/api/v1/fixtures/{fixture['id']}/proposal/accept",
        {"version": proposal["version"], "override_reason": ""},
    )
    assert (accepted["status"], accepted["verdict"]) == ("accepted", "pass"), accepted
    quote = _post(estimator, f"/api/v1/buildings/{building['id']}/quotes", {})
    assert quote["needs_override"] == []
    labour = next(line for line in quote["lines"] if line["kind"] == "labour")
    # 1.25 h fitting (the module's labour hours) + 0.25 h series link + 0.50 h commissioning
    assert Decimal(labour["quantity"]) == Decimal("2.00")
    assert any(line["kind"] == "supply" for line in quote["lines"])
    path = f"/api/v1/quotes/{quote['id']}/transitions"
    assert estimator.post(path, json={"to": "sent"}).status_code == 200
    assert supervisor.post(path, json={"to": "accepted"}).status_code == 200
    order = _post(supervisor, f"/api/v1/quotes/{quote['id']}/work-order", {})
    notes = " ".join(order["tasks"][0]["wiring_notes"])
    assert "break the series link and run the module on lamp 1, both ends" in notes
    assert "ahead of the switch" in notes
    pdf = supervisor.get(f"/api/v1/work-orders/{order['id']}/pdf")
    assert pdf.status_code == 200 and pdf.content.startswith(b"%PDF")
