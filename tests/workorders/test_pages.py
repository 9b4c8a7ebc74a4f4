"""The crew's pages: the task list on a tablet, ticking off, problems, stale saves, closing."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from fastapi.testclient import TestClient

from tests.conftest import Directory
from tests.quotes.factories import make_building, org_of, orm_session
from tests.quotes.test_pages import _parse

Clients = Callable[..., TestClient]


def _order(client_as: Clients, directory: Directory) -> dict[str, Any]:
    with orm_session(directory.database_url) as session:
        made = make_building(
            session,
            org_of(session, directory.email("estimator")),
            fixtures=[{"tag": "A-01"}, {"tag": "A-02", "wiring": "series", "lamp_count": 2}],
        )
    estimator, supervisor = client_as("estimator"), client_as("supervisor")
    quote = estimator.post(f"/api/v1/buildings/{made.building_id}/quotes", json={}).json()
    estimator.post(f"/api/v1/quotes/{quote['id']}/transitions", json={"to": "sent"})
    supervisor.post(f"/api/v1/quotes/{quote['id']}/transitions", json={"to": "accepted"})
    answer = supervisor.post(f"/api/v1/quotes/{quote['id']}/work-order", json={"crew": "Crew 1"})
    return dict(answer.json())


def test_the_crew_ticks_a_fixture_done_on_the_page(
    client_as: Clients, browser_session_as: Clients, directory: Directory
) -> None:
    order = _order(client_as, directory)
    crew = browser_session_as("surveyor")
    page = crew.get(f"/work-orders/{order['id']}")
    assert page.status_code == 200
    assert "0 of 2" in page.text and "break the series link" in page.text
    assert "Before anyone works on these fixtures" in page.text
    csrf = _parse(page.text).values["csrf_token"][0]
    task = order["tasks"][0]
    path = f"/work-orders/{order['id']}/tasks/{task['id']}"
    refused = crew.post(
        path,
        data={
            "csrf_token": csrf,
            "version": "1",
            "status": "done",
            "function_test_ok": "true",
            "duration_test_min": "95",
        },
    )
    assert refused.status_code == 422
    shown = _parse(refused.text)
    assert "95" in shown.values["duration_test_min"]  # what was typed stays
    assert any("charge indicator" in message for message in shown.errors)
    done = {
        "csrf_token": csrf,
        "version": "1",
        "status": "done",
        "charge_indicator_ok": "true",
        "function_test_ok": "true",
        "duration_test_min": "95",
    }
    assert crew.post(path, data=done, follow_redirects=False).status_code == 303
    assert crew.post(path, data=done, follow_redirects=False).status_code == 303  # retry
    stale = crew.post(
        path,
        data={"csrf_token": csrf, "version": "1", "status": "problem", "problem": "Flicker"},
    )
    assert stale.status_code == 409 and "Stored now" in stale.text
    assert "Flicker" in stale.text
    page = crew.get(f"/work-orders/{order['id']}")
    assert "1 of 2" in page.text
    assert "Complete and sign off" not in page.text  # the crew cannot close the order


def test_the_supervisor_cannot_close_with_open_fixtures_then_closes(
    client_as: Clients, browser_session_as: Clients, directory: Directory
) -> None:
    order = _order(client_as, directory)
    supervisor = browser_session_as("supervisor")
    page = supervisor.get(f"/work-orders/{order['id']}")
    csrf = _parse(page.text).values["csrf_token"][0]
    early = supervisor.post(f"/work-orders/{order['id']}/complete", data={"csrf_token": csrf})
    assert early.status_code == 409 and "2 open" in early.text
    for task in order["tasks"]:
        supervisor.post(
            f"/work-orders/{order['id']}/tasks/{task['id']}",
            data={
                "csrf_token": csrf,
                "version": str(task["version"]),
                "status": "done",
                "charge_indicator_ok": "true",
                "function_test_ok": "true",
            },
        )
    closed = supervisor.post(
        f"/work-orders/{order['id']}/complete", data={"csrf_token": csrf}, follow_redirects=False
    )
    assert closed.status_code == 303
    page = supervisor.get(f"/work-orders/{order['id']}")
    assert "Completed and signed off by" in page.text
    assert "/api/v1/work-orders/" in page.text  # the PDF link
