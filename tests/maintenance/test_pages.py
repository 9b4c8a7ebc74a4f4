"""The maintenance pages on a signed-in browser session: parsed, not grepped."""

from __future__ import annotations

from datetime import date, timedelta

import pytest

from tests.maintenance.factories import Site, make_site, org_of, orm_session, record_rows
from tests.pages import csrf_token, form_fields, parse

TODAY = date.today()


@pytest.fixture
def site(directory) -> Site:
    with orm_session(directory.database_url) as session:
        org = org_of(session, directory.email("surveyor"))
        return make_site(
            session,
            org,
            commissioned_on=TODAY - timedelta(days=40),
            areas=(
                ("Corridor 2A", "2", ("E-01", "E-02", "E-03")),
                ("Corridor 2B", "2", ("E-04",)),
            ),
        )


def _walk_path(site: Site, kind: str) -> str:
    return f"/maintenance/buildings/{site.building_id}/walk?area={site.area_ids[0]}&kind={kind}"


def test_walk_presets_every_fixture_to_pass(browser_session_as, site: Site) -> None:
    browser = browser_session_as("surveyor")
    answer = browser.get(_walk_path(site, "function"))
    assert answer.status_code == 200
    fields = form_fields(parse(answer.text), "walk-form")
    results = {name: value for name, value in fields.items() if name.endswith(".result")}
    assert results == {f"{fixture_id}.result": "pass" for fixture_id in site.fixture_ids[:3]}
    assert fields["tested_on"] == TODAY.isoformat()
    assert fields["tested_by"]  # the signed-in user's name or email


def test_all_passed_except_one_in_one_step(browser_session_as, site: Site, directory) -> None:
    browser = browser_session_as("surveyor")
    page = parse(browser.get(_walk_path(site, "function")).text)
    fields = form_fields(page, "walk-form")
    e02 = site.fixture_ids[1]
    fields[f"{e02}.result"] = "fail"
    fields[f"{e02}.action_taken"] = "lamp replaced"
    fields[f"{site.fixture_ids[2]}.result"] = "skip"
    sent = browser.post(_walk_path(site, "function"), data=fields, follow_redirects=False)
    assert sent.status_code == 303, sent.text
    assert sent.headers["location"].endswith("?saved=2")
    with orm_session(directory.database_url) as session:
        rows = record_rows(session)
    assert sorted((row["fixture_id"], row["result"]) for row in rows) == sorted(
        [(site.fixture_ids[0], "pass"), (e02, "fail")]
    )
    assert next(row for row in rows if row["fixture_id"] == e02)["action_taken"] == "lamp replaced"
    # The same form sent again (a double tap, a retry on a bad signal) adds nothing.
    again = browser.post(_walk_path(site, "function"), data=fields, follow_redirects=False)
    assert again.headers["location"].endswith("?repeated=1")
    with orm_session(directory.database_url) as session:
        assert len(record_rows(session)) == 2
    building = parse(browser.get(sent.headers["location"]).text)
    assert "2 tests recorded" in building.find("div", class_="notice").text()


def test_a_bad_row_keeps_what_was_typed_and_saves_nothing(
    browser_session_as, site: Site, directory
) -> None:
    browser = browser_session_as("surveyor")
    path = _walk_path(site, "duration")
    fields = form_fields(parse(browser.get(path).text), "walk-form")
    e01, e02 = site.fixture_ids[:2]
    assert fields[f"{e01}.observed_duration_min"] == "90"  # preset to the required duration
    fields[f"{e02}.observed_duration_min"] = "70"  # still marked pass: refused
    fields[f"{e01}.notes"] = "charge light green"
    answer = browser.post(path, data=fields, follow_redirects=False)
    assert answer.status_code == 422
    page = parse(answer.text)
    row = page.find("li", id=f"row-{e02}")
    assert "record the test as a fail" in row.find("p", class_="field-error").text()
    kept = form_fields(page, "walk-form")
    assert kept[f"{e02}.observed_duration_min"] == "70"
    assert kept[f"{e01}.notes"] == "charge light green"
    assert kept["batch_id"] == fields["batch_id"]
    with orm_session(directory.database_url) as session:
        assert record_rows(session) == []


def test_a_whole_floor_is_walked_in_one_form(browser_session_as, site: Site) -> None:
    browser = browser_session_as("surveyor")
    path = f"/maintenance/buildings/{site.building_id}/walk?floor=2&kind=function"
    fields = form_fields(parse(browser.get(path).text), "walk-form")
    assert len([name for name in fields if name.endswith(".result")]) == 4


def test_walk_needs_the_csrf_token(browser_session_as, site: Site) -> None:
    browser = browser_session_as("surveyor")
    fields = form_fields(parse(browser.get(_walk_path(site, "function")).text), "walk-form")
    fields.pop("csrf_token")
    assert browser.post(_walk_path(site, "function"), data=fields).status_code == 403


def test_correction_page_and_fixture_log(browser_session_as, client_as, site: Site) -> None:
    surveyor = client_as("surveyor")
    fixture_id = site.fixture_ids[0]
    path = f"/api/v1/fixtures/{fixture_id}/tests"
    for days, minutes in ((30, 130), (1, 118)):
        answer = surveyor.post(
            path,
            json={
                "kind": "duration",
                "tested_on": (TODAY - timedelta(days=days)).isoformat(),
                "tested_by": "R. Sample",
                "result": "pass",
                "observed_duration_min": minutes,
                "ran_to_cutoff": True,
            },
        )
        assert answer.status_code == 201
    wrong = surveyor.post(
        path,
        json={
            "kind": "function",
            "tested_on": TODAY.isoformat(),
            "tested_by": "X",
            "result": "fail",
        },
    ).json()
    browser = browser_session_as("surveyor")
    page = parse(browser.get(f"/maintenance/fixtures/{fixture_id}").text)
    svg = page.find("svg")
    assert len(svg.find_all("circle", class_="plot-point")) == 2
    assert svg.find("line", class_="plot-threshold") and svg.find("line", class_="plot-trend")
    correct_path = f"/maintenance/fixtures/{fixture_id}/record?corrects={wrong['id']}"
    assert page.find("a", href=correct_path)
    form = parse(browser.get(correct_path).text)
    fields = form_fields(form, "walk-form")
    assert fields[f"{fixture_id}.result"] == "fail"  # prefilled from the corrected record
    fields[f"{fixture_id}.result"] = "pass"
    sent = browser.post(correct_path, data=fields, follow_redirects=False)
    assert sent.status_code == 303
    log = parse(browser.get(f"/maintenance/fixtures/{fixture_id}").text)
    superseded = log.find_all("tr", class_="superseded")
    assert len(superseded) == 1 and "superseded by the correction" in superseded[0].text()


def test_import_preview_writes_nothing_until_confirmed(
    browser_session_as, site: Site, directory
) -> None:
    browser = browser_session_as("surveyor")
    day = (TODAY - timedelta(days=3)).isoformat()
    text = (
        "fixture_tag,kind,tested_on,tested_by,result\n"
        f"E-01,function,{day},R. Sample,pass\n"
        "E-77,function,2026-01-01,R. Sample,pass\n"
    )
    token = csrf_token(browser)
    preview = browser.post(
        f"/maintenance/buildings/{site.building_id}/import",
        data={"csrf_token": token},
        files={"file": ("log.csv", text.encode(), "text/csv")},
    )
    assert preview.status_code == 200
    page = parse(preview.text)
    table = page.find("table")
    assert "no fixture tagged 'E-77'" in table.text() and "Refused" in table.text()
    with orm_session(directory.database_url) as session:
        assert record_rows(session) == []
    confirm = form_fields(page, "import-confirm")
    assert confirm["confirm"] == "yes"
    done = browser.post(f"/maintenance/buildings/{site.building_id}/import", data=confirm)
    assert "1 test(s) added to the log" in parse(done.text).find("div", class_="notice").text()
    with orm_session(directory.database_url) as session:
        assert len(record_rows(session)) == 1


def test_calendar_link_page_shows_the_address_once(browser_session_as, site: Site) -> None:
    supervisor = browser_session_as("supervisor")
    path = f"/maintenance/buildings/{site.building_id}"
    made = supervisor.post(path + "/calendar-link", data={"csrf_token": csrf_token(supervisor)})
    assert made.status_code == 200
    url = parse(made.text).find("input", class_="calendar-url").attrs["value"]
    assert url.endswith(".ics")
    again = parse(supervisor.get(path).text)
    assert not again.find_all("input", class_="calendar-url")
    surveyor = browser_session_as("surveyor")
    page = parse(surveyor.get(path).text)
    assert not page.find_all("form", action=path + "/calendar-link")
    refused = surveyor.post(path + "/calendar-link", data={"csrf_token": csrf_token(surveyor)})
    assert refused.status_code == 403


def test_pages_of_another_firm_answer_404(browser_session_as, site: Site) -> None:
    other = browser_session_as("supervisor", org="B")
    for path in (
        f"/maintenance/buildings/{site.building_id}",
        _walk_path(site, "function"),
        f"/maintenance/fixtures/{site.fixture_ids[0]}",
        f"/maintenance/fixtures/{site.fixture_ids[0]}/record",
        f"/maintenance/buildings/{site.building_id}/import",
    ):
        assert other.get(path).status_code == 404, path
    token = csrf_token(other)
    assert other.post(_walk_path(site, "function"), data={"csrf_token": token}).status_code == 404
    overview = parse(other.get("/maintenance").text)
    assert "Harbour works" not in overview.text()


def test_overview_lists_overdue_tests(browser_session_as, site: Site) -> None:
    page = parse(browser_session_as("estimator").get("/maintenance").text)
    # Commissioned 40 days ago: every function test fell due 10 days ago.
    rows = page.find("table").find("tbody").find_all("tr")
    assert len(rows) == 4
    assert all("Overdue" in row.text() for row in rows)
