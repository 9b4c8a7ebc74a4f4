"""CSV export (formulas neutralised) and import (row by row, preview then confirm)."""

from __future__ import annotations

import csv
import io
from datetime import date, timedelta

import pytest

from server.maintenance.csvio import neutralise, read_csv, restore
from tests.maintenance.factories import Site, make_site, org_of, orm_session, record_rows

TODAY = date.today()
DAY = (TODAY - timedelta(days=10)).isoformat()


@pytest.fixture
def site(directory) -> Site:
    with orm_session(directory.database_url) as session:
        org = org_of(session, directory.email("surveyor"))
        return make_site(
            session,
            org,
            commissioned_on=TODAY - timedelta(days=200),
            areas=(("Corridor 2A", "2", ("E-01", "E-02")), ("Corridor 3A", "3", ("E-01",))),
        )


def _rows(text: str) -> list[dict[str, str]]:
    return list(csv.DictReader(io.StringIO(text.removeprefix("\ufeff"))))


@pytest.mark.parametrize(
    ("cell", "expected"),
    [
        ('=HYPERLINK("http://x")', '\'=HYPERLINK("http://x")'),
        ("+1+2", "'+1+2"),
        ("-2+3", "'-2+3"),
        ("@SUM(A1)", "'@SUM(A1)"),
        ("\tcmd", "'\tcmd"),
        ("replaced lamp", "replaced lamp"),
        ("a=b", "a=b"),
    ],
)
def test_neutralise(cell: str, expected: str) -> None:
    # OWASP "CSV Injection": a cell starting with = + - @ (tab, CR) gets an apostrophe.
    assert neutralise(cell) == expected
    assert restore(neutralise(cell)) == cell


def test_export_neutralises_formulas_and_marks_corrections(client_as, site: Site) -> None:
    surveyor = client_as("surveyor")
    path = f"/api/v1/fixtures/{site.fixture_ids[0]}/tests"
    wrong = surveyor.post(
        path,
        json={
            "kind": "function",
            "tested_on": DAY,
            "tested_by": "=cmd|' /C calc'!A0",
            "result": "fail",
            "notes": "@SUM(1)",
        },
    ).json()
    surveyor.post(
        path,
        json={
            "kind": "function",
            "tested_on": DAY,
            "tested_by": "R. Sample",
            "result": "pass",
            "corrects_id": wrong["id"],
        },
    )
    answer = client_as("estimator").get(f"/api/v1/buildings/{site.building_id}/tests.csv")
    assert answer.status_code == 200
    assert answer.headers["content-type"].startswith("text/csv")
    rows = _rows(answer.content.decode("utf-8"))
    assert len(rows) == 2
    first = next(row for row in rows if row["record_id"] == wrong["id"])
    assert first["tested_by"] == "'=cmd|' /C calc'!A0"
    assert first["notes"] == "'@SUM(1)"
    assert first["status"] == "superseded"
    assert {row["status"] for row in rows} == {"superseded", "standing"}
    assert (
        client_as("estimator")
        .get(f"/api/v1/buildings/{site.building_id}/tests.csv?year={TODAY.year - 5}")
        .content.decode("utf-8")
        .count("\r\n")
        == 1
    )  # header only


IMPORT = f"""fixture_tag,area,kind,tested_on,tested_by,result,observed_duration_min,notes
E-02,,function,{DAY},R. Sample,pass,,monthly round
E-01,Corridor 2A,duration,{DAY},R. Sample,pass,95,
E-09,,function,{DAY},R. Sample,pass,,
E-02,,function,03/04/2027,R. Sample,pass,,
E-01,,function,{DAY},R. Sample,pass,,
E-02,,duration,{DAY},R. Sample,pass,70,
E-02,,function,{DAY},R. Sample,pass,,monthly round again
E-02,,weekly,{DAY},R. Sample,pass,,
"E-02",,function,{DAY},"R. Sample","pass",,"a note
over two lines"
E-01,Corridor 3A,function,{DAY},R. Sample,fail,,'=1+1
"""


def _import(client, building_id: str, text: str, *, confirm: bool):
    return client.post(
        f"/api/v1/buildings/{building_id}/tests/import?confirm={'true' if confirm else 'false'}",
        content=text.encode("utf-8"),
        headers={"content-type": "text/csv"},
    )


def test_import_reports_each_bad_row_with_its_line_and_keeps_only_on_confirm(
    client_as, site: Site, directory
) -> None:
    surveyor = client_as("surveyor")
    with orm_session(directory.database_url) as session:
        before = record_rows(session)
    preview = _import(surveyor, site.building_id, IMPORT, confirm=False)
    assert preview.status_code == 200, preview.text
    report = preview.json()
    lines = {row["line"]: row for row in report["rows"]}
    assert lines[2]["status"] == "ok"
    assert lines[3]["status"] == "ok"
    assert lines[4]["status"] == "error" and "no fixture tagged 'E-09'" in lines[4]["message"]
    assert lines[5]["status"] == "error" and "YYYY-MM-DD" in lines[5]["message"]
    # Tag E-01 is in two areas: without the area column the row cannot say which.
    assert lines[6]["status"] == "error" and "add the area column" in lines[6]["message"]
    assert lines[7]["status"] == "error" and lines[7]["message"].startswith("result:")
    assert lines[8]["status"] == "duplicate"  # same test as line 2 (notes aside)
    assert lines[9]["status"] == "error" and lines[9]["message"].startswith("kind:")
    # A quoted cell over two lines: the row starts on line 10, the next row on line 12.
    assert lines[10]["status"] == "duplicate"
    assert lines[12]["status"] == "ok"
    assert (report["ok"], report["errors"], report["duplicates"]) == (3, 5, 2)
    assert report["saved"] == 0 and report["confirmed"] is False
    with orm_session(directory.database_url) as session:
        assert record_rows(session) == before  # the preview wrote nothing
    confirmed = _import(surveyor, site.building_id, IMPORT, confirm=True).json()
    assert confirmed["saved"] == 3
    with orm_session(directory.database_url) as session:
        rows = record_rows(session)
    assert len(rows) == 3
    restored = next(row for row in rows if row["result"] == "fail")
    assert restored["notes"] == "=1+1"  # the export's apostrophe taken off again
    # Sent again, every good row is now a duplicate: nothing more is kept.
    again = _import(surveyor, site.building_id, IMPORT, confirm=True).json()
    assert (again["saved"], again["duplicates"]) == (0, 5)


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("", "empty"),
        ("fixture_tag,kind,tested_on,tested_by\n", "missing column(s): result"),
        ("kind,tested_on,tested_by,result\n", "fixture_tag (or fixture_id)"),
        ("fixture_tag,kind,tested_on,tested_by,result,colour\n", "unknown column(s) colour"),
    ],
)
def test_import_refuses_a_bad_header(client_as, site: Site, text: str, message: str) -> None:
    answer = _import(client_as("surveyor"), site.building_id, text, confirm=False)
    assert answer.status_code == 422
    detail = answer.json()["detail"][0]
    assert detail["loc"][-1] == "file" and message in detail["msg"]


def test_import_needs_sign_in(client, site: Site) -> None:
    assert _import(client, site.building_id, IMPORT, confirm=False).status_code == 401


def test_export_round_trips_through_import(client_as, site: Site) -> None:
    surveyor = client_as("surveyor")
    surveyor.post(
        f"/api/v1/fixtures/{site.fixture_ids[1]}/tests",
        json={"kind": "function", "tested_on": DAY, "tested_by": "R. Sample", "result": "pass"},
    )
    exported = surveyor.get(f"/api/v1/buildings/{site.building_id}/tests.csv").content
    rows = read_csv(exported.decode("utf-8"))
    assert rows[0].line == 2 and rows[0].cells["fixture_tag"] == "E-02"
    report = _import(surveyor, site.building_id, exported.decode("utf-8"), confirm=True).json()
    assert (report["saved"], report["duplicates"]) == (0, 1)
