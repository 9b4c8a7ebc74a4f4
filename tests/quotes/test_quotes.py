"""The quote builder through the API: lines from proposals, money, overrides, states, PDF."""

from __future__ import annotations

import uuid
from collections.abc import Callable
from decimal import ROUND_HALF_UP, Decimal
from io import BytesIO
from typing import Any

import pytest
from fastapi.testclient import TestClient
from hypothesis import given
from hypothesis import strategies as st
from pypdf import PdfReader
from sqlalchemy import select

from server.accounts.models import Organisation
from server.audit.models import AuditEntry
from server.quotes.service import totals_of
from server.safety import CADMIUM, LAMP_VOLTAGE, QUALIFIED_PERSON, STAYS_LIVE
from tests.conftest import Directory, both_engines
from tests.quotes.factories import Made, make_building, org_of, orm_session

Clients = Callable[..., TestClient]
CENT = Decimal("0.01")

FIXTURES: list[dict[str, Any]] = [
    {"tag": "A-01", "location": "over the door"},
    {"tag": "A-02", "wiring": "series", "lamp_count": 2, "unswitched_supply": False},
    {"tag": "A-03", "verdict": "fail"},
    {"tag": "A-04", "accepted": False},
    {"tag": "B-01", "area": "Stair 2", "accessible": False},
]


def _made(directory: Directory, fixtures: list[dict[str, Any]] = FIXTURES, **kw: Any) -> Made:
    with orm_session(directory.database_url) as session:
        org = org_of(session, directory.email("estimator"))
        return make_building(session, org, fixtures=fixtures, **kw)


def _new_quote(client: TestClient, made: Made, **body: Any) -> dict[str, Any]:
    answer = client.post(f"/api/v1/buildings/{made.building_id}/quotes", json=body)
    assert answer.status_code == 201, answer.text
    return dict(answer.json())


def _by_tag(quote: dict[str, Any], kind: str) -> dict[str | None, dict[str, Any]]:
    return {line["fixture_tag"]: line for line in quote["lines"] if line["kind"] == kind}


def _independent_totals(quote: dict[str, Any]) -> dict[str, Decimal]:
    """Totals worked out here from the lines, half up to the cent, in the documented order."""

    def cents(value: Decimal) -> Decimal:
        return value.quantize(CENT, rounding=ROUND_HALF_UP)

    subtotal = Decimal(0)
    for line in quote["lines"]:
        subtotal += cents(Decimal(line["quantity"]) * Decimal(line["unit_price"]))
    markup = cents(subtotal * Decimal(quote["markup_pct"]) / 100)
    discount = cents((subtotal + markup) * Decimal(quote["discount_pct"]) / 100)
    net = subtotal + markup - discount
    tax = cents(net * Decimal(quote["tax_pct"]) / 100)
    return {
        "subtotal": subtotal,
        "markup": markup,
        "discount": discount,
        "tax": tax,
        "total": net + tax,
    }


@both_engines
def test_lines_are_made_from_the_accepted_proposals(
    client_as: Clients, directory: Directory
) -> None:
    made = _made(directory)
    quote = _new_quote(client_as("estimator"), made)
    assert quote["state"] == "draft" and quote["number"].startswith("Q-")
    materials = {line["description"]: line for line in quote["lines"] if line["kind"] == "material"}
    # and B-01 pass; A-03 fails (no override); A-04 has no accepted proposal.
    module = materials["Emergency module: Demo inverter 7 W"]
    pack = materials["Battery pack: Demo NiCd 4.8 V 2.2 Ah"]
    assert (Decimal(module["quantity"]), module["unit_price"]) == (3, "84.50")
    assert (Decimal(pack["quantity"]), pack["unit_price"]) == (3, "31.20")
    labour = _by_tag(quote, "labour")
    assert set(labour) == {"A-01", "A-02", "B-01"}
    # Fitting 1.00 h (the module's labour_h) + commissioning 0.50 h; A-02 adds 0.25 h for
    # breaking the series link.
    assert Decimal(labour["A-01"]["quantity"]) == Decimal("1.50")
    assert Decimal(labour["A-02"]["quantity"]) == Decimal("1.75")
    assert labour["A-02"]["unit_price"] == "65.00"  # the organisation's labour rate
    supply = _by_tag(quote, "supply")
    assert set(supply) == {"A-02"} and Decimal(supply["A-02"]["quantity"]) == Decimal("1.50")
    sundries = {line["item_ref"]: line for line in quote["lines"] if line["kind"] == "sundry"}
    assert Decimal(sundries["per-fixture"]["quantity"]) == 3
    assert Decimal(sundries["per-feed"]["quantity"]) == 1
    assert [item["tag"] for item in quote["needs_override"]] == ["A-03"]
    assert "61 min" in quote["needs_override"][0]["reasons"][0]
    # 3 x 84.50 + 3 x 31.20 + (1.5 + 1.75 + 1.5) h x 65 + 1.5 h x 65 + 3 x 6 + 1 x 18
    # = 253.50 + 93.60 + 308.75 + 97.50 + 18 + 18 = 789.35
    assert quote["totals"]["subtotal"] == "789.35"
    assert {k: Decimal(v) for k, v in quote["totals"].items() if k != "net"} == (
        _independent_totals(quote)
    )


@both_engines
def test_totals_round_half_up_at_line_level_and_add_up(
    client_as: Clients, directory: Directory
) -> None:
    made = _made(directory, [{"tag": "A-01"}])
    client = client_as("estimator")
    quote = _new_quote(client, made)
    answer = client.post(
        f"/api/v1/quotes/{quote['id']}/lines",
        json={
            "version": quote["version"],
            "description": "Access tower, per day",
            "quantity": "3",
            "unit": "day",
            "unit_price": "0.335",
        },
    )
    assert answer.status_code == 422  # unit prices carry two decimals
    answer = client.post(
        f"/api/v1/quotes/{quote['id']}/lines",
        json={
            "version": quote["version"],
            "description": "Warning signs",
            "quantity": "0.5",
            "unit": "set",
            "unit_price": "0.25",
        },
    )
    assert answer.status_code == 201, answer.text
    quote = answer.json()
    signs = next(line for line in quote["lines"] if line["description"] == "Warning signs")
    assert signs["amount"] == "0.13"  # 0.125 rounds half up, not to even (0.12)
    answer = client.patch(
        f"/api/v1/quotes/{quote['id']}",
        json={
            "version": quote["version"],
            "markup_pct": "12.5",
            "discount_pct": "5",
            "tax_pct": "8.25",
        },
    )
    assert answer.status_code == 200, answer.text
    quote = answer.json()
    expected = _independent_totals(quote)
    totals = {k: Decimal(v) for k, v in quote["totals"].items()}
    assert {k: totals[k] for k in expected} == expected
    assert (
        totals["subtotal"] + totals["markup"] - totals["discount"] + totals["tax"]
        == (totals["total"])
    )


@given(
    amounts=st.lists(
        st.decimals(min_value=-1000, max_value=100_000, places=2, allow_nan=False), max_size=40
    ),
    markup=st.decimals(min_value=0, max_value=100, places=2),
    discount=st.decimals(min_value=0, max_value=100, places=2),
    tax=st.decimals(min_value=0, max_value=100, places=2),
)
def test_totals_always_add_up_to_the_cent(
    amounts: list[Decimal], markup: Decimal, discount: Decimal, tax: Decimal
) -> None:
    totals = totals_of(amounts, markup_pct=markup, discount_pct=discount, tax_pct=tax)
    assert totals.subtotal == sum(amounts, Decimal(0))
    for value in (totals.markup, totals.discount, totals.tax, totals.total):
        assert value == value.quantize(CENT)
    assert totals.subtotal + totals.markup - totals.discount + totals.tax == totals.total


def test_a_failing_fixture_is_quoted_only_with_a_reason(
    client_as: Clients, directory: Directory
) -> None:
    made = _made(directory)
    client = client_as("estimator")
    a_03 = made.fixture_ids[2]
    short = client.post(
        f"/api/v1/buildings/{made.building_id}/quotes",
        json={"overrides": [{"fixture_id": a_03, "reason": "ok"}]},
    )
    assert short.status_code == 422
    assert short.json()["detail"][0]["loc"][-1] == "reason"
    passing = client.post(
        f"/api/v1/buildings/{made.building_id}/quotes",
        json={"overrides": [{"fixture_id": made.fixture_ids[0], "reason": "no reason at all"}]},
    )
    assert passing.status_code == 422 and "needs no override" in passing.text
    quote = _new_quote(client, made)
    reason = "Client replaces the pack with a larger one at the first annual test <soon>"
    answer = client.post(
        f"/api/v1/quotes/{quote['id']}/overrides",
        json={"version": quote["version"], "fixture_id": a_03, "reason": reason},
    )
    assert answer.status_code == 200, answer.text
    quote = answer.json()
    assert _by_tag(quote, "labour")["A-03"]["override_reason"] == reason
    assert quote["needs_override"] == []
    text = _pdf_text(client.get(f"/api/v1/quotes/{quote['id']}/pdf").content)
    assert f"A-03: {reason}" in text


def test_hand_edits_survive_a_reprice_and_lines_can_be_removed(
    client_as: Clients, directory: Directory
) -> None:
    made = _made(directory)
    client = client_as("estimator")
    quote = _new_quote(client, made)
    a_01 = _by_tag(quote, "labour")["A-01"]
    answer = client.patch(
        f"/api/v1/quotes/{quote['id']}/lines/{a_01['id']}",
        json={"version": quote["version"], "quantity": "2.5", "description": "A-01: high bay"},
    )
    assert answer.status_code == 200, answer.text
    quote = answer.json()
    answer = client.patch(
        f"/api/v1/quotes/{quote['id']}", json={"version": quote["version"], "labour_rate": "70"}
    )
    quote = answer.json()
    labour = _by_tag(quote, "labour")
    assert labour["A-01"]["hand_edited"] and labour["A-01"]["quantity"] == "2.500"
    assert labour["A-01"]["unit_price"] == "65.00"  # typed by hand: kept as it was
    assert labour["A-02"]["unit_price"] == "70.00"  # generated: re-priced
    stale = client.patch(f"/api/v1/quotes/{quote['id']}", json={"version": 1, "tax_pct": "10"})
    assert stale.status_code == 409 and stale.json()["current"]["version"] == quote["version"]
    sundry = next(line for line in quote["lines"] if line["kind"] == "sundry")
    answer = client.delete(
        f"/api/v1/quotes/{quote['id']}/lines/{sundry['id']}",
        params={"version": quote["version"]},
    )
    assert answer.status_code == 200
    assert sundry["id"] not in {line["id"] for line in answer.json()["lines"]}


def test_states_roles_history_and_audit(client_as: Clients, directory: Directory) -> None:
    made = _made(directory)
    estimator, supervisor = client_as("estimator"), client_as("supervisor")
    quote = _new_quote(estimator, made)
    path = f"/api/v1/quotes/{quote['id']}/transitions"
    illegal = estimator.post(path, json={"to": "accepted"})
    assert illegal.status_code == 409
    assert illegal.json()["current"]["allowed"] == ["sent"]
    assert estimator.post(path, json={"to": "sent"}).status_code == 200
    assert estimator.post(path, json={"to": "sent"}).status_code == 200  # a retry
    refused = estimator.post(path, json={"to": "accepted"})
    assert refused.status_code == 403 and "supervisor" in refused.json()["detail"]
    edit = estimator.patch(f"/api/v1/quotes/{quote['id']}", json={"version": 2, "tax_pct": "5"})
    assert edit.status_code == 409 and "only a draft" in edit.json()["detail"]
    accepted = supervisor.post(path, json={"to": "accepted"})
    assert accepted.status_code == 200
    body = accepted.json()
    assert [entry["state"] for entry in body["history"]] == ["draft", "sent", "accepted"]
    assert body["history"][-1]["by_name"] == directory.email("supervisor")
    assert body["allowed_transitions"] == ["issued"]
    final = _new_quote(estimator, made)
    estimator.post(f"/api/v1/quotes/{final['id']}/transitions", json={"to": "sent"})
    declined = estimator.post(f"/api/v1/quotes/{final['id']}/transitions", json={"to": "declined"})
    assert declined.status_code == 200
    stuck = estimator.post(f"/api/v1/quotes/{final['id']}/transitions", json={"to": "draft"})
    assert stuck.status_code == 409 and stuck.json()["current"]["allowed"] == []
    with orm_session(directory.database_url) as session:
        actions = session.scalars(
            select(AuditEntry.action).where(AuditEntry.entity_id == quote["id"])
        ).all()
    assert actions.count("transition") == 2 and "create" in actions


def test_scoped_to_the_firm_and_to_roles(client_as: Clients, directory: Directory) -> None:
    made = _made(directory)
    quote = _new_quote(client_as("estimator"), made)
    other = client_as("admin", org="B")
    theirs = other.get(f"/api/v1/quotes/{quote['id']}")
    nobodys = other.get(f"/api/v1/quotes/{uuid.uuid4()}")
    assert theirs.status_code == nobodys.status_code == 404
    assert theirs.json() == nobodys.json()
    assert other.get(f"/api/v1/quotes/{quote['id']}/pdf").status_code == 404
    assert other.post(f"/api/v1/buildings/{made.building_id}/quotes", json={}).status_code == 404
    assert other.get("/api/v1/quotes").json()["total"] == 0
    surveyor = client_as("surveyor")
    assert surveyor.get(f"/api/v1/quotes/{quote['id']}").status_code == 200
    made_by_surveyor = surveyor.post(f"/api/v1/buildings/{made.building_id}/quotes", json={})
    assert made_by_surveyor.status_code == 403
    assert "estimator" in made_by_surveyor.json()["detail"]


def test_create_is_idempotent_on_the_clients_id(client_as: Clients, directory: Directory) -> None:
    made = _made(directory)
    client = client_as("estimator")
    quote_id = str(uuid.uuid4())
    first = client.post(f"/api/v1/buildings/{made.building_id}/quotes", json={"id": quote_id})
    again = client.post(f"/api/v1/buildings/{made.building_id}/quotes", json={"id": quote_id})
    assert (first.status_code, again.status_code) == (201, 200)
    assert again.json()["number"] == first.json()["number"]
    assert client.get("/api/v1/quotes").json()["total"] == 1
    line_id = str(uuid.uuid4())
    line = {
        "id": line_id,
        "version": first.json()["version"],
        "description": "Ladder hire",
        "quantity": "1",
        "unit_price": "25.00",
    }
    client.post(f"/api/v1/quotes/{quote_id}/lines", json=line)
    twice = client.post(f"/api/v1/quotes/{quote_id}/lines", json=line)
    assert [item["id"] for item in twice.json()["lines"]].count(line_id) == 1


def test_a_building_without_accepted_proposals_cannot_be_quoted(
    client_as: Clients, directory: Directory
) -> None:
    made = _made(directory, [{"tag": "A-01", "accepted": False}])
    answer = client_as("estimator").post(f"/api/v1/buildings/{made.building_id}/quotes", json={})
    assert answer.status_code == 422
    assert answer.json()["detail"][0]["loc"] == ["body", "building_id"]


def _pdf_text(data: bytes) -> str:
    return "\n".join(page.extract_text() for page in PdfReader(BytesIO(data)).pages)


def test_quote_pdf_has_blocks_scope_lines_totals_assumptions_and_cautions(
    client_as: Clients, directory: Directory
) -> None:
    fixtures = [*FIXTURES, {"tag": "<b>&</para>", "notes": "<i>note</i>"}]
    made = _made(directory, fixtures)
    with orm_session(directory.database_url) as session:
        org = session.get(Organisation, made.org_id)
        assert org is not None
        org.paper_size, org.address, org.currency = "Letter", "1 Invented Way", "EUR"
        session.commit()
    client = client_as("estimator")
    quote = _new_quote(client, made, tax_pct="20")
    answer = client.get(f"/api/v1/quotes/{quote['id']}/pdf")
    assert answer.status_code == 200 and answer.headers["content-type"] == "application/pdf"
    reader = PdfReader(BytesIO(answer.content))
    assert float(reader.pages[0].mediabox.width) == pytest.approx(612.0)  # US Letter
    text = _pdf_text(answer.content)
    flat = " ".join(text.split())
    for expected in (
        "Test firm A",
        "1 Invented Way",
        "Sample Estates",
        "North block",
        quote["number"],
        "Scope of work",
        "Valid until",
    ):
        assert expected in text, expected
    for line in quote["lines"]:
        assert " ".join(line["description"].split())[:40] in flat, line["description"]
    assert "<b>&</para>" in text  # the tag, as typed
    totals = quote["totals"]
    assert f"Subtotal EUR {Decimal(totals['subtotal']):,.2f}" in flat
    assert f"Tax (20 %) EUR {Decimal(totals['tax']):,.2f}" in flat
    assert f"Total EUR {Decimal(totals['total']):,.2f}" in flat
    assert Decimal(totals["total"]) == _independent_totals(quote)["total"]
    assert "B-01 in Stair 2: not accessible at the survey" in flat
    assert "A-03 in Corridor 1: its checks fail" in flat
    assert "A-04 in Corridor 1: no module and pack accepted" in flat
    for caution in (QUALIFIED_PERSON, STAYS_LIVE, LAMP_VOLTAGE, CADMIUM):
        assert " ".join(caution.split()) in flat
    pages = [page.extract_text() for page in reader.pages]
    for number, page in enumerate(pages, start=1):
        assert f"Page {number} of {len(pages)}" in page and quote["number"] in page
