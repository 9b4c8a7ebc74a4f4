"""The quote pages in the browser: make a quote, edit a line, refuse bad input beside it."""

from __future__ import annotations

import re
import uuid
from collections.abc import Callable
from html.parser import HTMLParser

from fastapi.testclient import TestClient

from tests.conftest import Directory
from tests.quotes.factories import make_building, org_of, orm_session

Clients = Callable[..., TestClient]


class _Inputs(HTMLParser):
    """The name -> value of every input in a page, and the text beside error markers."""

    def __init__(self) -> None:
        super().__init__()
        self.values: dict[str, list[str]] = {}
        self.errors: list[str] = []
        self._in_error = False

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        found = dict(attrs)
        if tag == "input" and found.get("name"):
            self.values.setdefault(str(found["name"]), []).append(found.get("value") or "")
        if tag == "p" and "field-error" in (found.get("class") or ""):
            self._in_error = True

    def handle_data(self, data: str) -> None:
        if self._in_error:
            self.errors.append(data.strip())
            self._in_error = False


def _parse(html: str) -> _Inputs:
    parser = _Inputs()
    parser.feed(html)
    return parser


def _building(directory: Directory) -> str:
    with orm_session(directory.database_url) as session:
        made = make_building(
            session,
            org_of(session, directory.email("estimator")),
            fixtures=[{"tag": "A-01"}, {"tag": "A-02", "verdict": "fail"}],
        )
    return made.building_id


def test_make_a_quote_from_the_page_and_change_a_line(
    browser_session_as: Clients, directory: Directory
) -> None:
    building_id = _building(directory)
    browser = browser_session_as("estimator")
    page = browser.get("/quotes")
    assert page.status_code == 200 and "New quote" in page.text
    csrf = _parse(page.text).values["csrf_token"][0]
    form_id = str(uuid.uuid4())
    made = browser.post(
        "/quotes/new",
        data={"csrf_token": csrf, "id": form_id, "building_id": building_id},
        follow_redirects=False,
    )
    assert made.status_code == 303 and made.headers["location"] == f"/quotes/{form_id}"
    again = browser.post(
        "/quotes/new",
        data={"csrf_token": csrf, "id": form_id, "building_id": building_id},
        follow_redirects=False,
    )
    assert again.headers["location"] == f"/quotes/{form_id}"  # a double tap makes one quote
    builder = browser.get(f"/quotes/{form_id}")
    assert "Not in this quote: checks fail" in builder.text and "A-02" in builder.text
    assert "Before anyone works on these fixtures" in builder.text  # the cautions
    line_id = re.search(r'id="line-([0-9a-f-]{36})"', builder.text)
    assert line_id is not None
    version = _parse(builder.text).values["version"][0]
    bad = browser.post(
        f"/quotes/{form_id}/lines/{line_id.group(1)}",
        data={
            "csrf_token": csrf,
            "version": version,
            "description": "Module, kept",
            "quantity": "lots",
            "unit": "ea",
            "unit_price": "84.50",
        },
    )
    assert bad.status_code == 422
    shown = _parse(bad.text)
    assert "Module, kept" in bad.text  # the input is kept
    assert "lots" in shown.values["quantity"]
    assert "Enter an amount, like 24.50." in shown.errors
    good = browser.post(
        f"/quotes/{form_id}/lines/{line_id.group(1)}",
        data={
            "csrf_token": csrf,
            "version": version,
            "description": "Module, kept",
            "quantity": "4",
            "unit": "ea",
            "unit_price": "84.50",
        },
        follow_redirects=False,
    )
    assert good.status_code == 303
    stale = browser.post(
        f"/quotes/{form_id}/lines/{line_id.group(1)}",
        data={
            "csrf_token": csrf,
            "version": version,
            "description": "Other words",
            "quantity": "5",
            "unit": "ea",
            "unit_price": "84.50",
        },
    )
    assert stale.status_code == 409 and "Someone else changed quote" in stale.text
    assert "Other words" in stale.text


def test_a_page_form_without_its_csrf_token_is_refused(
    browser_session_as: Clients, directory: Directory
) -> None:
    building_id = _building(directory)
    browser = browser_session_as("estimator")
    answer = browser.post("/quotes/new", data={"id": str(uuid.uuid4()), "building_id": building_id})
    assert answer.status_code == 403 and "CSRF" in answer.text


def test_an_empty_building_is_refused_beside_the_field(
    browser_session_as: Clients, directory: Directory
) -> None:
    with orm_session(directory.database_url) as session:
        made = make_building(
            session,
            org_of(session, directory.email("estimator")),
            fixtures=[{"tag": "A-01", "accepted": False}],
        )
    browser = browser_session_as("estimator")
    csrf = _parse(browser.get("/quotes").text).values["csrf_token"][0]
    answer = browser.post(
        "/quotes/new",
        data={"csrf_token": csrf, "id": str(uuid.uuid4()), "building_id": made.building_id},
    )
    assert answer.status_code == 422
    assert any("no accepted proposals" in message for message in _parse(answer.text).errors)


def test_the_supervisor_accepts_and_issues_from_the_page(
    browser_session_as: Clients, client_as: Clients, directory: Directory
) -> None:
    building_id = _building(directory)
    quote = client_as("estimator").post(f"/api/v1/buildings/{building_id}/quotes", json={}).json()
    client_as("estimator").post(f"/api/v1/quotes/{quote['id']}/transitions", json={"to": "sent"})
    browser = browser_session_as("supervisor")
    page = browser.get(f"/quotes/{quote['id']}")
    assert "Accept for the firm" in page.text
    csrf = _parse(page.text).values["csrf_token"][0]
    accepted = browser.post(
        f"/quotes/{quote['id']}/transitions",
        data={"csrf_token": csrf, "to": "accepted", "version": str(quote["version"] + 1)},
        follow_redirects=False,
    )
    assert accepted.status_code == 303
    page = browser.get(f"/quotes/{quote['id']}")
    assert "Issue the work order" in page.text
    issued = browser.post(
        f"/quotes/{quote['id']}/work-order",
        data={
            "csrf_token": csrf,
            "id": str(uuid.uuid4()),
            "crew": "Crew 2",
            "scheduled_on": "not a date",
            "crew_notes": "",
        },
    )
    assert issued.status_code == 422
    assert "Crew 2" in _parse(issued.text).values["crew"]
    issued = browser.post(
        f"/quotes/{quote['id']}/work-order",
        data={
            "csrf_token": csrf,
            "id": str(uuid.uuid4()),
            "crew": "Crew 2",
            "scheduled_on": "2027-04-01",
            "crew_notes": "",
        },
        follow_redirects=False,
    )
    assert issued.status_code == 303 and issued.headers["location"].startswith("/work-orders/")


def test_a_stale_settings_save_shows_the_stored_values_beside_the_fields(
    browser_session_as: Clients, client_as: Clients, directory: Directory
) -> None:
    building_id = _building(directory)
    quote = client_as("estimator").post(f"/api/v1/buildings/{building_id}/quotes", json={}).json()
    client_as("estimator").patch(
        f"/api/v1/quotes/{quote['id']}", json={"version": quote["version"], "tax_pct": "7.5"}
    )
    browser = browser_session_as("estimator")
    csrf = _parse(browser.get(f"/quotes/{quote['id']}").text).values["csrf_token"][0]
    stale = browser.post(
        f"/quotes/{quote['id']}/settings",
        data={
            "csrf_token": csrf,
            "version": str(quote["version"]),
            "tax_pct": "20",
            "labour_rate": "65.00",
            "markup_pct": "0",
            "discount_pct": "0",
            "series_link_h": "0.25",
            "supply_run_h": "1.50",
            "commissioning_h": "0.50",
            "sundries_per_fixture": "6.00",
            "supply_run_materials": "18.00",
            "valid_until": quote["valid_until"],
        },
    )
    assert stale.status_code == 409
    assert "20" in _parse(stale.text).values["tax_pct"]  # the user's value stays
    assert "Stored now: <strong>7.50</strong>" in stale.text
