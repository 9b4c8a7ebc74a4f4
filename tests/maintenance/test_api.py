"""The maintenance API: recording tests, corrections, due lists, condition, replacements."""

from __future__ import annotations

import uuid
from datetime import date, timedelta

import pytest

from server.engineering.condition import present_capacity_ah
from tests.conftest import both_engines
from tests.maintenance.factories import (
    MODULE_A,
    Site,
    make_site,
    org_of,
    orm_session,
    record_rows,
)

TODAY = date.today()


@pytest.fixture
def site(directory) -> Site:
    with orm_session(directory.database_url) as session:
        org = org_of(session, directory.email("surveyor"))
        return make_site(session, org, commissioned_on=TODAY - timedelta(days=400))


def function_test(**overrides: object) -> dict[str, object]:
    return {
        "kind": "function",
        "tested_on": TODAY.isoformat(),
        "tested_by": "R. Sample",
        "result": "pass",
        **overrides,
    }


def duration_test(minutes: float, **overrides: object) -> dict[str, object]:
    return {
        "kind": "duration",
        "tested_on": TODAY.isoformat(),
        "tested_by": "R. Sample",
        "result": "pass" if minutes >= 90 else "fail",
        "observed_duration_min": minutes,
        **overrides,
    }


@both_engines
def test_record_and_list_tests(client_as, site: Site) -> None:
    surveyor = client_as("surveyor")
    fixture_id = site.fixture_ids[0]
    answer = surveyor.post(f"/api/v1/fixtures/{fixture_id}/tests", json=function_test())
    assert answer.status_code == 201, answer.text
    record = answer.json()
    assert record["kind"] == "function" and record["superseded_by"] is None
    listed = client_as("estimator").get(f"/api/v1/fixtures/{fixture_id}/tests").json()
    assert [item["id"] for item in listed["items"]] == [record["id"]]


def test_a_create_sent_twice_makes_one_record(client_as, site: Site) -> None:
    surveyor = client_as("surveyor")
    path = f"/api/v1/fixtures/{site.fixture_ids[0]}/tests"
    body = function_test(id=str(uuid.uuid4()))
    first = surveyor.post(path, json=body)
    again = surveyor.post(path, json=body)
    assert (first.status_code, again.status_code) == (201, 200)
    assert first.json()["id"] == again.json()["id"]
    other = surveyor.post(path, json={**body, "result": "fail"})
    assert other.status_code == 409
    elsewhere = surveyor.post(f"/api/v1/fixtures/{site.fixture_ids[1]}/tests", json=body)
    assert elsewhere.status_code == 409  # the same id for another fixture is not a retry
    assert surveyor.get(path).json()["total"] == 1


@pytest.mark.parametrize(
    ("body", "field"),
    [
        # A duration test shorter than the 90 min the area requires cannot pass.
        (duration_test(70, result="pass"), "result"),
        (function_test(observed_duration_min=90), "observed_duration_min"),
        ({**duration_test(95), "observed_duration_min": None}, "observed_duration_min"),
        (function_test(result="void"), "result"),
        (function_test(open_circuit_v=5.0, loaded_v=5.4), "loaded_v"),
        (function_test(open_circuit_v=5.0), "loaded_v"),
        (function_test(open_circuit_v=5.2, loaded_v=5.0, load_a=3, load_ohm=2), "load_a"),
        (function_test(tested_on=(TODAY + timedelta(days=5)).isoformat()), "tested_on"),
        (function_test(tested_on=(TODAY - timedelta(days=401)).isoformat()), "tested_on"),
        (function_test(tested_by=""), "tested_by"),
        (function_test(kind="weekly"), "kind"),
    ],
)
def test_bad_tests_are_refused_with_the_field_named(client_as, site: Site, body, field) -> None:
    answer = client_as("surveyor").post(f"/api/v1/fixtures/{site.fixture_ids[0]}/tests", json=body)
    assert answer.status_code == 422, answer.text
    fields = [detail["loc"][-1] for detail in answer.json()["detail"]]
    assert field in fields, answer.json()


def test_a_correction_supersedes_and_cannot_be_made_twice(client_as, site: Site) -> None:
    surveyor = client_as("surveyor")
    path = f"/api/v1/fixtures/{site.fixture_ids[0]}/tests"
    wrong = surveyor.post(path, json=function_test(result="fail")).json()
    fixed = surveyor.post(
        path, json=function_test(corrects_id=wrong["id"], notes="entered as fail by mistake")
    )
    assert fixed.status_code == 201
    items = {item["id"]: item for item in surveyor.get(path).json()["items"]}
    assert items[wrong["id"]]["superseded_by"] == fixed.json()["id"]
    assert items[wrong["id"]]["result"] == "fail"  # the original is kept as it was
    twice = surveyor.post(path, json=function_test(corrects_id=wrong["id"]))
    assert twice.status_code == 409
    elsewhere = surveyor.post(
        f"/api/v1/fixtures/{site.fixture_ids[1]}/tests",
        json=function_test(corrects_id=fixed.json()["id"]),
    )
    assert elsewhere.status_code == 422
    # Void withdraws the correction itself; the schedule then has no standing test.
    void = surveyor.post(path, json=function_test(result="void", corrects_id=fixed.json()["id"]))
    assert void.status_code == 201
    schedule = surveyor.get(f"/api/v1/fixtures/{site.fixture_ids[0]}/schedule").json()
    assert schedule[0]["basis"] == "commissioned"


def test_due_lists_follow_the_log(client_as, site: Site) -> None:
    reader = client_as("estimator")
    # Commissioned 400 days ago, nothing logged: the function test fell due on day 30
    # and the duration test on day 365 (NFPA 101 §7.9.3 intervals of the us-egress profile).
    due = reader.get(f"/api/v1/buildings/{site.building_id}/due").json()
    assert due["counts"] == {"overdue": 6, "due": 0, "due-soon": 0}
    first = due["items"][0]
    assert first["due_on"] == (TODAY - timedelta(days=370)).isoformat()
    assert first["kind"] == "function" and first["state"] == "overdue"
    surveyor = client_as("surveyor")
    for fixture_id in site.fixture_ids:
        answer = surveyor.post(f"/api/v1/fixtures/{fixture_id}/tests", json=duration_test(95))
        assert answer.status_code == 201
    # A passing duration test today restarts both clocks: next function test in 30 days,
    # outside the default 7-day window and inside a 30-day one.
    assert reader.get(f"/api/v1/buildings/{site.building_id}/due").json()["items"] == []
    wide = reader.get(f"/api/v1/buildings/{site.building_id}/due?due_soon_days=30").json()
    assert wide["counts"]["due-soon"] == 3
    assert {item["kind"] for item in wide["items"]} == {"function"}
    firm = reader.get("/api/v1/maintenance/due?due_soon_days=30").json()
    assert len(firm["items"]) == 3
    assert reader.get("/api/v1/maintenance/due?due_soon_days=-1").status_code == 422


def test_condition_inverts_each_duration_test(client_as, site: Site) -> None:
    surveyor = client_as("surveyor")
    fixture_id = site.fixture_ids[0]
    path = f"/api/v1/fixtures/{fixture_id}/tests"
    last_year = (TODAY - timedelta(days=365)).isoformat()
    surveyor.post(path, json=duration_test(120, tested_on=last_year, ran_to_cutoff=True))
    surveyor.post(path, json=duration_test(108, ran_to_cutoff=True))
    condition = client_as("estimator").get(f"/api/v1/fixtures/{fixture_id}/condition").json()
    assert condition["available"]
    assert condition["current_a"] == MODULE_A
    capacities = [point["capacity_ah"] for point in condition["estimates"]]
    # k = 1: 1.5 A * 2.0 h = 3.0 Ah and 1.5 A * 1.8 h = 2.7 Ah; checked against the core too.
    assert capacities == pytest.approx([3.0, 2.7])
    assert capacities[1] == pytest.approx(present_capacity_ah(108, 1.5, rated_hours=5, peukert_k=1))
    assert condition["runtime_threshold_ah"] == pytest.approx(2.25)  # 1.5 A * 1.5 h
    # 0.3 Ah lost in 365 days; 0.45 Ah more to lose: 547.5 days, rounded down to 547.
    assert condition["runtime_short_on"] == (TODAY + timedelta(days=547)).isoformat()
    assert condition["trend"]["slope_ah_per_year"] < 0


def test_condition_says_why_it_is_unavailable(client_as, directory) -> None:
    with orm_session(directory.database_url) as session:
        org = org_of(session, directory.email("surveyor"))
        site = make_site(session, org, commissioned_on=TODAY, accepted=False)
    answer = client_as("surveyor").get(f"/api/v1/fixtures/{site.fixture_ids[0]}/condition")
    assert answer.status_code == 200
    assert answer.json()["available"] is False
    assert "No accepted proposal" in answer.json()["unavailable_reason"]


def test_replacements_list_reasons_and_dates(client_as, directory) -> None:
    with orm_session(directory.database_url) as session:
        org = org_of(session, directory.email("surveyor"))
        old = make_site(session, org, commissioned_on=TODAY - timedelta(days=5 * 365))
    surveyor = client_as("surveyor")
    fixture_id = old.fixture_ids[0]
    # A worn pack (ENGINEERING.md §2, common practice): 5.2 V open circuit, 3.0 V across
    # 9.1 ohm: about 6.7 ohm, which at the module's 1.5 A collapses below the 4.0 V cut-off.
    answer = surveyor.post(
        f"/api/v1/fixtures/{fixture_id}/tests",
        json=function_test(open_circuit_v=5.2, loaded_v=3.0, load_ohm=9.1),
    )
    assert answer.status_code == 201
    listed = client_as("estimator").get(f"/api/v1/buildings/{old.building_id}/replacements")
    items = {item["fixture_tag"]: item for item in listed.json()["items"]}
    assert set(items) == {"E-01", "E-02", "E-03"}
    # Four years of NiCd design life (IEC 61347-2-7, checked against pages quoting it)
    # ended about a year ago: every pack is overdue.
    assert all(item["overdue"] for item in items.values())
    codes = {reason["code"] for reason in items["E-01"]["reasons"]}
    assert {"sag-below-cutoff", "service-life"} <= codes
    assert {reason["code"] for reason in items["E-02"]["reasons"]} == {"service-life"}


def test_readings_on_the_fixture_count_only_without_an_old_kit(client_as, directory) -> None:
    with orm_session(directory.database_url) as session:
        org = org_of(session, directory.email("surveyor"))
        made = make_site(session, org, commissioned_on=TODAY - timedelta(days=30))
    surveyor = client_as("surveyor")
    first, second = made.fixture_ids[:2]
    # The worn-pack readings of ENGINEERING.md §2 (common practice) on both records;
    # the second fixture was surveyed with a kit, so its readings are the old pack's.
    worn = {"open_circuit_v": 5.2, "loaded_v": 3.0, "load_ohm": 9.1}
    for fixture_id, existing in ((first, False), (second, True)):
        read = surveyor.get(f"/api/v1/fixtures/{fixture_id}").json()
        extra = {"pack_chemistry": "NiCd", "pack_cells": 4} if existing else {}
        answer = surveyor.patch(
            f"/api/v1/fixtures/{fixture_id}",
            json={"version": read["version"], "existing_kit": existing, **extra, **worn},
        )
        assert answer.status_code == 200, answer.text
    codes = {
        fixture_id: {
            reason["code"]
            for reason in surveyor.get(f"/api/v1/fixtures/{fixture_id}/condition").json()["reasons"]
        }
        for fixture_id in (first, second)
    }
    assert "sag-below-cutoff" in codes[first]
    assert "sag-below-cutoff" not in codes[second]


def test_a_new_pack_restarts_age_and_trend(client_as, directory) -> None:
    with orm_session(directory.database_url) as session:
        org = org_of(session, directory.email("surveyor"))
        old = make_site(session, org, commissioned_on=TODAY - timedelta(days=5 * 365))
    surveyor = client_as("surveyor")
    fixture_id = old.fixture_ids[0]
    surveyor.post(
        f"/api/v1/fixtures/{fixture_id}/tests",
        json=duration_test(100, pack_replaced=True, action_taken="fitted a new pack"),
    )
    condition = surveyor.get(f"/api/v1/fixtures/{fixture_id}/condition").json()
    assert condition["installed_on"] == TODAY.isoformat()
    assert condition["installed_basis"].startswith("pack replaced")
    listed = surveyor.get(f"/api/v1/buildings/{old.building_id}/replacements").json()
    assert "E-01" not in {item["fixture_tag"] for item in listed["items"]}


def test_no_route_changes_or_deletes_a_test_record(app, client_as, site: Site, directory) -> None:
    """The log is append-only: call every route that could write, with the record's id
    in every path parameter, and check the stored record is exactly as it was."""
    from server.routing import route_table

    surveyor = client_as("surveyor")
    record = surveyor.post(
        f"/api/v1/fixtures/{site.fixture_ids[0]}/tests", json=function_test(result="fail")
    ).json()
    with orm_session(directory.database_url) as session:
        before = record_rows(session)
    admin = client_as("admin")
    writes = [e for e in route_table(app) if e.method in {"POST", "PUT", "PATCH", "DELETE"}]
    assert writes
    for entry in writes:
        path = entry.path
        while "{" in path:
            start, end = path.index("{"), path.index("}")
            path = path[:start] + record["id"] + path[end + 1 :]
        admin.request(entry.method, path, json={"version": 1, "result": "pass"})
    with orm_session(directory.database_url) as session:
        after = record_rows(session)
    assert after == before
    # No route addresses a single test record for writing at all.
    assert not [e for e in writes if "/tests/{" in e.path and e.method != "POST"]


def test_a_fixture_with_a_log_cannot_be_deleted(client_as, site: Site) -> None:
    surveyor = client_as("surveyor")
    fixture_id = site.fixture_ids[0]
    surveyor.post(f"/api/v1/fixtures/{fixture_id}/tests", json=function_test())
    answer = surveyor.delete(f"/api/v1/fixtures/{fixture_id}")
    assert answer.status_code == 409
    assert "log book" in answer.json()["detail"]
    area = surveyor.delete(f"/api/v1/areas/{site.area_ids[0]}")
    building = surveyor.delete(f"/api/v1/buildings/{site.building_id}")
    assert (area.status_code, building.status_code) == (409, 409)
    assert surveyor.get(f"/api/v1/fixtures/{fixture_id}/tests").json()["total"] == 1
    # A fixture without a log still deletes.
    assert surveyor.delete(f"/api/v1/fixtures/{site.fixture_ids[1]}").status_code == 204


def test_roles(client_as, client, site: Site) -> None:
    path = f"/api/v1/fixtures/{site.fixture_ids[0]}/tests"
    assert client.get(path).status_code == 401
    assert client.post(path, json=function_test()).status_code == 401
    link = f"/api/v1/buildings/{site.building_id}/calendar-link"
    for role in ("surveyor", "estimator"):
        refused = client_as(role).post(link)
        assert refused.status_code == 403
        assert "supervisor" in refused.json()["detail"]
    assert client_as("supervisor").post(link).status_code == 201
    assert client_as("surveyor").post(path, json=function_test()).status_code == 201


@both_engines
def test_another_firms_records_answer_404(client_as, site: Site, directory) -> None:
    other = client_as("supervisor", org="B")
    fixture, building = site.fixture_ids[0], site.building_id
    year = TODAY.year
    for method, path in [
        ("GET", f"/api/v1/fixtures/{fixture}/tests"),
        ("POST", f"/api/v1/fixtures/{fixture}/tests"),
        ("GET", f"/api/v1/fixtures/{fixture}/schedule"),
        ("GET", f"/api/v1/fixtures/{fixture}/condition"),
        ("GET", f"/api/v1/buildings/{building}/due"),
        ("GET", f"/api/v1/buildings/{building}/replacements"),
        ("GET", f"/api/v1/buildings/{building}/calendar-link"),
        ("POST", f"/api/v1/buildings/{building}/calendar-link"),
        ("DELETE", f"/api/v1/buildings/{building}/calendar-link"),
        ("GET", f"/api/v1/buildings/{building}/logbook/{year}/pdf"),
        ("GET", f"/api/v1/buildings/{building}/tests.csv"),
    ]:
        body = function_test() if method == "POST" and "tests" in path else None
        answer = other.request(method, path, json=body)
        assert answer.status_code == 404, (method, path, answer.status_code)
    imported = other.post(
        f"/api/v1/buildings/{building}/tests/import",
        content=b"fixture_tag,kind,tested_on,tested_by,result\nE-01,function,2027-01-01,X,pass\n",
        headers={"content-type": "text/csv"},
    )
    assert imported.status_code == 404
    assert other.get("/api/v1/maintenance/due").json()["items"] == []
    # And a correction may not point at another firm's record.
    mine = client_as("surveyor").post(f"/api/v1/fixtures/{fixture}/tests", json=function_test())
    with orm_session(directory.database_url) as session:
        theirs = make_site(
            session, org_of(session, directory.email("surveyor", "B")), commissioned_on=TODAY
        )
    answer = other.post(
        f"/api/v1/fixtures/{theirs.fixture_ids[0]}/tests",
        json=function_test(corrects_id=mine.json()["id"]),
    )
    assert answer.status_code == 422
    assert answer.json()["detail"][0]["loc"][-1] == "corrects_id"
