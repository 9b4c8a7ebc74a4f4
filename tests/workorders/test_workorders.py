"""Work orders through the API: issuing, the crew's tasks, closing, and the crew's PDF."""

from __future__ import annotations

import uuid
from collections.abc import Callable
from datetime import date, timedelta
from io import BytesIO
from typing import Any

from fastapi.testclient import TestClient
from pypdf import PdfReader
from sqlalchemy import select

from server.quotes.models import Quote
from server.safety import CADMIUM, LAMP_VOLTAGE, QUALIFIED_PERSON, STAYS_LIVE
from server.sites.models import Fixture
from tests.conftest import Directory, both_engines
from tests.quotes.factories import Made, make_building, org_of, orm_session

Clients = Callable[..., TestClient]

FIXTURES: list[dict[str, Any]] = [
    {"tag": "A-01", "location": "over the fire door"},
    {"tag": "A-02", "wiring": "series", "lamp_count": 2, "unswitched_supply": False},
    {"tag": "S-01", "area": "Stair 2", "ballast": "magnetic-glow-starter", "ambient_c": 60.0},
    {"tag": "<b>&</para>", "area": "Stair 2", "notes": "x", "accessible": False},
    {
        "tag": "P-01",
        "area": "Plant room",
        "wiring": "parallel",
        "lamp_count": 2,
        "existing_kit": True,
    },
]


def _accepted_quote(
    client_as: Clients, directory: Directory, fixtures: list[dict[str, Any]] = FIXTURES
) -> tuple[Made, dict[str, Any]]:
    with orm_session(directory.database_url) as session:
        made = make_building(
            session, org_of(session, directory.email("estimator")), fixtures=fixtures
        )
    estimator, supervisor = client_as("estimator"), client_as("supervisor")
    quote = estimator.post(f"/api/v1/buildings/{made.building_id}/quotes", json={}).json()
    path = f"/api/v1/quotes/{quote['id']}/transitions"
    assert estimator.post(path, json={"to": "sent"}).status_code == 200
    accepted = supervisor.post(path, json={"to": "accepted"})
    assert accepted.status_code == 200, accepted.text
    return made, accepted.json()


def _issue(client: TestClient, quote: dict[str, Any], **body: Any) -> dict[str, Any]:
    answer = client.post(f"/api/v1/quotes/{quote['id']}/work-order", json=body)
    assert answer.status_code == 201, answer.text
    return dict(answer.json())


def _task(order: dict[str, Any], tag: str) -> dict[str, Any]:
    return next(task for task in order["tasks"] if task["tag"] == tag)


@both_engines
def test_issuing_needs_an_accepted_quote_and_a_supervisor(
    client_as: Clients, directory: Directory
) -> None:
    _, quote = _accepted_quote(client_as, directory)
    refused = client_as("estimator").post(f"/api/v1/quotes/{quote['id']}/work-order", json={})
    assert refused.status_code == 403 and "supervisor" in refused.json()["detail"]
    supervisor = client_as("supervisor")
    order = _issue(supervisor, quote, crew="Crew 1", scheduled_on="2027-03-01")
    assert order["state"] == "issued" and order["number"].startswith("WO-")
    assert sorted(task["tag"] for task in order["tasks"]) == sorted(f["tag"] for f in FIXTURES)
    assert order["progress"] == {"total": 5, "open": 5, "done": 0, "problem": 0}
    again = supervisor.post(f"/api/v1/quotes/{quote['id']}/work-order", json={})
    assert again.status_code == 200 and again.json()["id"] == order["id"]
    moved = supervisor.get(f"/api/v1/quotes/{quote['id']}").json()
    assert moved["state"] == "issued" and moved["work_order_id"] == order["id"]


def test_a_draft_quote_issues_no_work_order(client_as: Clients, directory: Directory) -> None:
    with orm_session(directory.database_url) as session:
        made = make_building(
            session, org_of(session, directory.email("estimator")), fixtures=[{"tag": "A-01"}]
        )
    quote = (
        client_as("estimator").post(f"/api/v1/buildings/{made.building_id}/quotes", json={}).json()
    )
    answer = client_as("supervisor").post(f"/api/v1/quotes/{quote['id']}/work-order", json={})
    assert answer.status_code == 409 and "accepted" in answer.json()["detail"]
    assert answer.json()["current"]["allowed"] == ["sent"]


def test_wiring_notes_come_from_the_fixture_and_its_findings(
    client_as: Clients, directory: Directory
) -> None:
    _, quote = _accepted_quote(client_as, directory)
    order = _issue(client_as("supervisor"), quote)
    series = " ".join(_task(order, "A-02")["wiring_notes"])
    assert "break the series link and run the module on lamp 1, both ends" in series
    assert "lamp 2 stays dark in emergency" in series
    assert "take one from the area's lighting circuit ahead of the switch" in series
    assert "isolate the starter in emergency mode" in " ".join(_task(order, "S-01")["wiring_notes"])
    parallel = " ".join(_task(order, "P-01")["wiring_notes"])
    assert "run the module on lamp 1" in parallel and "lamp 2 stays dark" in parallel
    assert "recycle the old pack" in parallel
    assert "Not accessible at the survey" in " ".join(_task(order, "<b>&</para>")["wiring_notes"])
    single = " ".join(_task(order, "A-01")["wiring_notes"])
    assert "Unswitched live is there" in single and "series" not in single


def test_the_crew_ticks_fixtures_and_the_supervisor_closes(
    client_as: Clients, directory: Directory
) -> None:
    made, quote = _accepted_quote(client_as, directory)
    supervisor, crew = client_as("supervisor"), client_as("surveyor")
    order = _issue(supervisor, quote)
    path = f"/api/v1/work-orders/{order['id']}/tasks"
    a_01 = _task(order, "A-01")
    not_lit = crew.patch(
        f"{path}/{a_01['id']}",
        json={
            "version": a_01["version"],
            "status": "done",
            "charge_indicator_ok": False,
            "function_test_ok": True,
        },
    )
    assert not_lit.status_code == 422
    assert not_lit.json()["detail"][0]["loc"][-1] == "charge_indicator_ok"
    short = crew.patch(
        f"{path}/{a_01['id']}",
        json={
            "version": a_01["version"],
            "status": "done",
            "charge_indicator_ok": True,
            "function_test_ok": True,
            "duration_test_min": 61,
        },
    )
    assert short.status_code == 422 and "record a problem" in short.text
    done = {
        "version": a_01["version"],
        "status": "done",
        "charge_indicator_ok": True,
        "function_test_ok": True,
        "duration_test_min": 96,
    }
    first = crew.patch(f"{path}/{a_01['id']}", json=done)
    assert first.status_code == 200, first.text
    assert first.json()["done_by_name"] == directory.email("surveyor")
    retry = crew.patch(f"{path}/{a_01['id']}", json=done)  # the tablet sent it twice
    assert retry.status_code == 200 and retry.json()["version"] == first.json()["version"]
    stale = crew.patch(
        f"{path}/{a_01['id']}",
        json={"version": a_01["version"], "status": "problem", "problem": "flicker"},
    )
    assert stale.status_code == 409
    assert stale.json()["current"]["status"] == "done"
    no_words = crew.patch(
        f"{path}/{_task(order, 'A-02')['id']}",
        json={"version": 1, "status": "problem", "problem": "  "},
    )
    assert no_words.status_code == 422 and no_words.json()["detail"][0]["loc"][-1] == "problem"
    problem = crew.patch(
        f"{path}/{_task(order, 'A-02')['id']}",
        json={"version": 1, "status": "problem", "problem": "No lighting circuit in the void"},
    )
    assert problem.status_code == 200
    close = f"/api/v1/work-orders/{order['id']}/complete"
    assert crew.post(close, json={}).status_code == 403
    early = supervisor.post(close, json={})
    assert early.status_code == 409
    assert early.json()["current"] == {"total": 5, "open": 3, "done": 1, "problem": 1}
    for task in supervisor.get(f"/api/v1/work-orders/{order['id']}").json()["tasks"]:
        if task["status"] != "done":
            answer = crew.patch(
                f"{path}/{task['id']}",
                json={
                    "version": task["version"],
                    "status": "done",
                    "charge_indicator_ok": True,
                    "function_test_ok": True,
                },
            )
            assert answer.status_code == 200, answer.text
    closed = supervisor.post(close, json={})
    assert closed.status_code == 200
    assert closed.json()["state"] == "completed"
    assert closed.json()["signed_off_by_name"] == directory.email("supervisor")
    late = crew.patch(f"{path}/{a_01['id']}", json={**done, "version": 9, "status": "open"})
    assert late.status_code == 409
    with orm_session(directory.database_url) as session:
        assert session.get(Quote, quote["id"]).state == "completed"  # type: ignore[union-attr]
        commissioned = session.scalars(
            select(Fixture.commissioned_on).where(Fixture.id.in_(made.fixture_ids))
        ).all()
    assert set(commissioned) == {date.today()}


def test_work_orders_are_scoped_to_the_firm(client_as: Clients, directory: Directory) -> None:
    _, quote = _accepted_quote(client_as, directory)
    order = _issue(client_as("supervisor"), quote)
    other = client_as("admin", org="B")
    for path in (f"/api/v1/work-orders/{order['id']}", f"/api/v1/work-orders/{order['id']}/pdf"):
        theirs, nobodys = other.get(path), other.get(path.replace(order["id"], str(uuid.uuid4())))
        assert theirs.status_code == nobodys.status_code == 404
        assert theirs.json() == nobodys.json()
    task = order["tasks"][0]
    answer = other.patch(
        f"/api/v1/work-orders/{order['id']}/tasks/{task['id']}",
        json={"version": 1, "status": "problem", "problem": "x"},
    )
    assert answer.status_code == 404
    assert other.get("/api/v1/work-orders").json()["total"] == 0


def _pages(data: bytes) -> list[str]:
    return [page.extract_text() for page in PdfReader(BytesIO(data)).pages]


def test_work_order_pdf_puts_cautions_first_and_a_row_per_fixture(
    client_as: Clients, directory: Directory
) -> None:
    _, quote = _accepted_quote(client_as, directory)
    supervisor = client_as("supervisor")
    order = _issue(
        supervisor,
        quote,
        crew="Crew <1> & 2",
        scheduled_on="2027-03-01",
        crew_notes="Keys at reception </para>",
    )
    answer = supervisor.get(f"/api/v1/work-orders/{order['id']}/pdf")
    assert answer.status_code == 200 and answer.headers["content-type"] == "application/pdf"
    pages = _pages(answer.content)
    flat = " ".join(" ".join(pages).split())
    first = " ".join(pages[0].split())
    cautions_at = first.index(" ".join(STAYS_LIVE.split()))
    for caution in (LAMP_VOLTAGE, CADMIUM, QUALIFIED_PERSON):
        assert " ".join(caution.split()) in first
    assert cautions_at < first.index("Kinds of conversion")
    assert "Crew <1> & 2" in flat and "Keys at reception </para>" in flat
    for task in order["tasks"]:
        assert task["tag"] in flat, task["tag"]
    assert flat.index("A-01") > cautions_at
    # Recharge of the 2.2 Ah NiCd pack on the module's 0.17 A: 0.077 C is below C/10, so the
    # charge factor is 1.4 (cell makers' pages, ENGINEERING.md section 2):
    # 2.2 x 1.4 / 0.17 = 18.1 h, rounded up to 19 h before the full-duration test.
    assert "after 19 h on charge (computed 18.1 h): 90 min needed" in flat
    assert "Two lamps in series" in flat and "Glow-starter circuit" in flat
    assert "Lamps in parallel" in flat and "new unswitched feed" in flat
    for number, page in enumerate(pages, start=1):
        assert f"Page {number} of {len(pages)}" in page
        assert order["number"] in page and "North block" in page
    # Pack labels: installed on the scheduled day; a 4-year NiCd design life (IEC 61347-2-7),
    # halved at 60 degC, 10 K above the pack's 50 degC marking (Arrhenius rule, common practice).
    labels = " ".join(pages[-1].split())
    assert labels.count("EMERGENCY PACK") == len(FIXTURES)
    four_years = date(2027, 3, 1) + timedelta(days=1461)
    two_years = date(2027, 3, 1) + timedelta(days=730)
    assert labels.count(f"Replace by: {four_years.isoformat()}") == len(FIXTURES) - 1
    assert f"Replace by: {two_years.isoformat()} (2.0 years)" in labels
    links = [
        annotation.get_object()["/A"]["/URI"]
        for page in PdfReader(BytesIO(answer.content)).pages
        for annotation in page.get("/Annots", [])
    ]
    assert sorted(links) == sorted(
        f"http://127.0.0.1:8000/fixtures/{task['fixture_id']}" for task in order["tasks"]
    )


def test_the_quote_transitions_issue_and_complete_the_work_order(
    client_as: Clients, directory: Directory
) -> None:
    _, quote = _accepted_quote(client_as, directory, [{"tag": "A-01"}])
    supervisor = client_as("supervisor")
    path = f"/api/v1/quotes/{quote['id']}/transitions"
    refused = client_as("estimator").post(path, json={"to": "issued"})
    assert refused.status_code == 403
    issued = supervisor.post(path, json={"to": "issued"})
    assert issued.status_code == 200 and issued.json()["state"] == "issued"
    order = supervisor.get(f"/api/v1/work-orders/{issued.json()['work_order_id']}").json()
    early = supervisor.post(path, json={"to": "completed"})
    assert early.status_code == 409 and early.json()["current"]["open"] == 1
    task = order["tasks"][0]
    supervisor.patch(
        f"/api/v1/work-orders/{order['id']}/tasks/{task['id']}",
        json={
            "version": task["version"],
            "status": "done",
            "charge_indicator_ok": True,
            "function_test_ok": True,
        },
    )
    completed = supervisor.post(path, json={"to": "completed"})
    assert completed.status_code == 200 and completed.json()["state"] == "completed"
    assert completed.json()["allowed_transitions"] == []
    final = supervisor.post(path, json={"to": "draft"})
    assert final.status_code == 409 and "final state" in final.json()["detail"]
