"""Proposal pages: an area's list with its verdict filter, rows answered by htmx, accepting."""

from __future__ import annotations

from typing import Any

from tests.conftest import both_engines
from tests.pages import csrf_token, field_error, parse
from tests.planner_data import SERIES_FIXTURE, catalogue, survey


def _post(browser: Any, path: str, data: dict[str, Any], **extra: Any) -> Any:
    return browser.post(
        path, data={"csrf_token": csrf_token(browser), **data}, follow_redirects=False, **extra
    )


def _two_fixtures(client_as: Any) -> tuple[dict[str, Any], dict[str, Any], dict[str, Any]]:
    items = catalogue(client_as("estimator"))
    made = survey(client_as("surveyor"))
    second = client_as("surveyor").post(
        f"/api/v1/areas/{made['area']['id']}/fixtures",
        json={**SERIES_FIXTURE, "tag": "T-02", "ballast": "magnetic-glow-starter"},
    )
    assert second.status_code == 201
    return items, made, second.json()


def test_suggest_for_the_area_then_filter_by_verdict(browser_session_as, client_as) -> None:
    _, made, _ = _two_fixtures(client_as)
    area_id = made["area"]["id"]
    browser = browser_session_as("estimator")
    done = _post(browser, f"/areas/{area_id}/proposals/suggest", {})
    assert done.status_code == 303
    page = parse(browser.get(done.headers["location"]).text)
    notices = " ".join(n.text() for n in page.find_all(class_="notice"))
    assert "for 1 fixture(s)" in notices and "For 1 fixture(s) nothing" in notices
    filters = [a.text() for a in page.find(class_="filters").find_all("a")]
    assert filters == ["All (2)", "Pass (1)", "Warn (0)", "Fail (0)", "None yet (1)"]
    passing = parse(browser.get(f"/areas/{area_id}/proposals?verdict=pass").text)
    assert [a.text() for a in passing.find_all("a", class_="tag")] == ["T-01"]
    waiting = parse(browser.get(f"/areas/{area_id}/proposals?verdict=none").text)
    assert [a.text() for a in waiting.find_all("a", class_="tag")] == ["T-02"]


def test_htmx_suggest_and_accept_answer_the_row(browser_session_as, client_as) -> None:
    _, made, _ = _two_fixtures(client_as)
    fixture_id = made["fixture"]["id"]
    browser = browser_session_as("estimator")
    htmx = {"HX-Request": "true", "HX-Current-URL": "http://testserver/areas/x/proposals"}
    row = _post(browser, f"/fixtures/{fixture_id}/proposal/suggest", {}, headers=htmx)
    assert row.status_code == 200
    fragment = parse(row.text)
    assert fragment.find("li").attrs["id"] == f"row-{fixture_id}"
    assert fragment.find(class_="verdict-line").find(class_="badge").text() == "Pass"
    version = fragment.find("input", name="version").attrs["value"]
    accepted = _post(
        browser, f"/fixtures/{fixture_id}/proposal/accept", {"version": version}, headers=htmx
    )
    assert parse(accepted.text).find(class_="accepted").text() == "Accepted"
    stored = client_as("estimator").get(f"/api/v1/fixtures/{fixture_id}/proposal").json()
    assert stored["status"] == "accepted"


def test_accepting_a_failing_fixture_asks_for_a_reason_and_keeps_it(
    browser_session_as, client_as
) -> None:
    items, made, _ = _two_fixtures(client_as)
    fixture_id = made["fixture"]["id"]
    browser = browser_session_as("estimator")
    saved = _post(
        browser,
        f"/fixtures/{fixture_id}/proposal",
        {"module_id": items["one"]["id"], "pack_id": items["big"]["id"]},
    )
    assert saved.status_code == 303
    page = parse(browser.get(saved.headers["location"]).text)
    assert page.find(class_="verdict-line").find(class_="badge").text() == "Fail"
    version = page.find("form", action=f"/fixtures/{fixture_id}/proposal/accept").find(
        "input", name="version"
    )
    refused = _post(
        browser,
        f"/fixtures/{fixture_id}/proposal/accept",
        {"version": version.attrs["value"], "override_reason": "  "},
    )
    assert refused.status_code == 422
    assert "needs a reason" in field_error(parse(refused.text), "override_reason")
    reason = "Series link broken on site; engineer approved."
    accepted = _post(
        browser,
        f"/fixtures/{fixture_id}/proposal/accept",
        {"version": version.attrs["value"], "override_reason": reason},
    )
    assert accepted.status_code == 303
    page = parse(browser.get(accepted.headers["location"]).text)
    assert reason in page.find(id="accept-title").parent.text()


def test_choosing_without_a_module_is_refused_beside_the_field(
    browser_session_as, client_as
) -> None:
    items, made, _ = _two_fixtures(client_as)
    answer = _post(
        browser_session_as("estimator"),
        f"/fixtures/{made['fixture']['id']}/proposal",
        {"module_id": "", "pack_id": items["big"]["id"]},
    )
    assert answer.status_code == 422
    page = parse(answer.text)
    assert field_error(page, "module_id") == "Choose a module."
    chosen = page.find("select", name="pack_id").find_all("option", selected="")
    assert [option.attrs["value"] for option in chosen] == [items["big"]["id"]]


def test_a_surveyor_sees_proposals_without_the_buttons(browser_session_as, client_as) -> None:
    _, made, _ = _two_fixtures(client_as)
    browser = browser_session_as("surveyor")
    page = parse(browser.get(f"/areas/{made['area']['id']}/proposals").text)
    assert not page.find_all("form", action=f"/fixtures/{made['fixture']['id']}/proposal/suggest")
    refused = _post(browser, f"/fixtures/{made['fixture']['id']}/proposal/suggest", {})
    assert refused.status_code == 403


def test_the_cautions_are_on_the_proposal_pages(browser_session_as, client_as) -> None:
    _, made, _ = _two_fixtures(client_as)
    browser = browser_session_as("estimator")
    for path in (
        f"/areas/{made['area']['id']}/proposals",
        f"/fixtures/{made['fixture']['id']}/proposal",
    ):
        cautions = parse(browser.get(path).text).find(class_="cautions").text()
        assert "isolate the supply AND unplug the pack" in cautions
        assert "qualified person" in cautions


@both_engines
def test_each_role_sees_what_waits_for_it_at_home(browser_session_as, client_as) -> None:
    items, made, second = _two_fixtures(client_as)
    estimator = client_as("estimator")
    proposal = estimator.put(
        f"/api/v1/fixtures/{made['fixture']['id']}/proposal",
        json={"module_id": items["both"]["id"], "pack_id": items["big"]["id"]},
    ).json()
    estimator.post(
        f"/api/v1/fixtures/{made['fixture']['id']}/proposal/accept",
        json={"version": proposal["version"]},
    )
    queue = parse(browser_session_as("estimator").get("/").text).find(id="queue-title").parent
    cells = [cell.text() for cell in queue.find("tbody").find_all("td")]
    assert cells == ["1", "0", "1"]  # no proposal, draft, accepted not quoted
    surveyor = parse(browser_session_as("surveyor").get("/").text)
    assert surveyor.find_all(id="queue-title") == []
    assert "Corridor 1" in surveyor.find(id="survey-title").parent.text()
    supervisor = parse(browser_session_as("supervisor").get("/").text)
    assert "No quote is waiting for approval." in supervisor.find(id="quotes-title").parent.text()
