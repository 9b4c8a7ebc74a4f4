"""The log book PDF, read back with pypdf."""

from __future__ import annotations

import io
from datetime import date

import pytest
from pypdf import PdfReader

from server.safety import CADMIUM, STAYS_LIVE
from tests.maintenance.factories import Site, make_site, org_of, orm_session

TODAY = date.today()
YEAR = TODAY.year


def _day(month: int, day: int) -> str:
    """A day of this year, not after today (the log refuses future tests)."""
    return min(date(YEAR, month, day), TODAY).isoformat()


@pytest.fixture
def site(directory) -> Site:
    with orm_session(directory.database_url) as session:
        org = org_of(session, directory.email("surveyor"))
        return make_site(
            session,
            org,
            commissioned_on=date(YEAR - 1, 6, 1),
            areas=(("Corridor 2A", "2", ("E-01", "E-02")), ("Stair B", "", ("S-01",))),
        )


def _text(pdf: bytes) -> str:
    reader = PdfReader(io.BytesIO(pdf))
    return "\n".join(page.extract_text() for page in reader.pages)


def test_log_book_prints_every_test_failures_and_sign_off(client_as, site: Site) -> None:
    surveyor = client_as("surveyor")
    e01, e02, s01 = site.fixture_ids

    def record(fixture_id: str, **body: object) -> dict[str, object]:
        answer = surveyor.post(
            f"/api/v1/fixtures/{fixture_id}/tests",
            json={"tested_by": "R. Sample", "tested_on": _day(1, 10), **body},
        )
        assert answer.status_code == 201, answer.text
        return answer.json()

    record(e01, kind="function", result="pass")
    wrong = record(e02, kind="function", result="pass", notes="<b>&</para> typed as is")
    record(e02, kind="function", result="fail", corrects_id=wrong["id"], notes="lamp dark")
    record(
        s01,
        kind="duration",
        result="fail",
        observed_duration_min=62,
        ran_to_cutoff=True,
        action_taken="pack replaced with a new one",
        tested_on=_day(1, 12),
    )
    answer = client_as("estimator").get(f"/api/v1/buildings/{site.building_id}/logbook/{YEAR}/pdf")
    assert answer.status_code == 200
    assert answer.headers["content-type"] == "application/pdf"
    text = _text(answer.content)
    assert f"Emergency lighting log book {YEAR}" in text
    assert "Harbour works" in text
    for tag in ("E-01", "E-02", "S-01"):
        assert tag in text
    assert "pack replaced with a new one" in text  # what was done about the failure
    flat = " ".join(text.split())  # table cells wrap: compare with the spaces folded
    assert "62 min (lamp went out)" in flat
    assert "superseded by a correction" in flat
    assert "<b>&</para> typed as is" in flat  # user text printed as typed
    assert "Sign-off" in text and "Signature" in text
    assert "Page 1 of" in text
    # The cautions and the deferral to local codes (server/safety.py).
    assert " ".join(STAYS_LIVE.split()[:6]) in flat
    assert " ".join(CADMIUM.split()[:5]) in flat
    assert "authority having jurisdiction" in flat


def test_log_book_of_another_year_and_bad_years(client_as, site: Site) -> None:
    reader = client_as("surveyor")
    empty = reader.get(f"/api/v1/buildings/{site.building_id}/logbook/{YEAR - 1}/pdf")
    assert empty.status_code == 200
    assert "No test failed this year." in _text(empty.content)
    for year in (1999, YEAR + 2):
        answer = reader.get(f"/api/v1/buildings/{site.building_id}/logbook/{year}/pdf")
        assert answer.status_code == 422
        assert answer.json()["detail"][0]["loc"][-1] == "year"


def test_longest_gap_is_flagged_over_the_interval(client_as, site: Site) -> None:
    # Commissioned 1 June last year and never tested: the stretch without a function
    # test runs from commissioning to today, far over the 30-day interval.
    answer = client_as("surveyor").get(f"/api/v1/buildings/{site.building_id}/logbook/{YEAR}/pdf")
    text = _text(answer.content)
    flat = " ".join(text.split())
    assert f"{(TODAY - date(YEAR - 1, 6, 1)).days} d over the 30 d interval" in flat
