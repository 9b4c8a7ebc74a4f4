"""The calendar feed, read back with the `icalendar` parser from the registry."""

from __future__ import annotations

from datetime import UTC, date, datetime, timedelta

import icalendar
import pytest

from server.maintenance.calendar import escape_text, fold, ics_calendar
from server.maintenance.service import CalendarEvent
from tests.maintenance.factories import Site, make_site, org_of, orm_session

TODAY = date.today()


@pytest.fixture
def site(directory) -> Site:
    with orm_session(directory.database_url) as session:
        org = org_of(session, directory.email("surveyor"))
        return make_site(
            session,
            org,
            commissioned_on=TODAY - timedelta(days=20),
            areas=(
                ("Corridor 2A", "2", ("E-01", "E-02")),
                ("Stair B; east, \\ core", "", ("S-01",)),
            ),
        )


def _events(feed: bytes) -> list[icalendar.Event]:
    calendar = icalendar.Calendar.from_ical(feed)
    return list(calendar.walk("VEVENT"))


def test_feed_parses_and_has_the_coming_tests(client, client_as, site: Site) -> None:
    made = client_as("supervisor").post(f"/api/v1/buildings/{site.building_id}/calendar-link")
    assert made.status_code == 201
    url = made.json()["url"]
    assert url.endswith(".ics") and "/calendar/" in url
    path = url[url.index("/calendar/") :]
    feed = client.get(path)  # no sign-in: the token is the key
    assert feed.status_code == 200
    assert feed.headers["content-type"].startswith("text/calendar")
    assert b"\r\n" in feed.content and b"\n\n" not in feed.content
    calendar = icalendar.Calendar.from_ical(feed.content)
    assert str(calendar["VERSION"]) == "2.0" and "PRODID" in calendar
    events = _events(feed.content)
    # Two areas x two kinds: one event per area, kind and day.
    assert len(events) == 4
    for event in events:
        for name in ("UID", "DTSTAMP", "DTSTART", "SUMMARY", "DESCRIPTION"):
            assert name in event, name
        start = event.decoded("DTSTART")
        assert isinstance(start, date) and not isinstance(start, datetime)  # all-day
        assert event.decoded("DTEND") - start == timedelta(days=1)
        assert event.decoded("DTSTAMP").tzinfo is not None
    function = [e for e in events if str(e["SUMMARY"]).startswith("Monthly function test")]
    # Commissioned 20 days ago: the function test falls due in 10 days (30-day interval).
    assert {e.decoded("DTSTART") for e in function} == {TODAY + timedelta(days=10)}
    stair = next(e for e in function if "Stair" in str(e["SUMMARY"]))
    # The escaped ; , and \ come back as typed.
    assert "Stair B; east, \\ core" in str(stair["SUMMARY"])
    assert "S-01" in str(stair["DESCRIPTION"])
    # UIDs stay the same from one fetch to the next, so a refresh moves, not duplicates.
    again = _events(client.get(path).content)
    assert sorted(str(e["UID"]) for e in again) == sorted(str(e["UID"]) for e in events)


def test_overdue_tests_show_on_today(client, client_as, directory) -> None:
    with orm_session(directory.database_url) as session:
        org = org_of(session, directory.email("surveyor"))
        late = make_site(session, org, commissioned_on=TODAY - timedelta(days=45))
    url = client_as("admin").post(f"/api/v1/buildings/{late.building_id}/calendar-link").json()
    events = _events(client.get(url["url"][url["url"].index("/calendar/") :]).content)
    overdue = [e for e in events if str(e["SUMMARY"]).startswith("OVERDUE")]
    assert len(overdue) == 1
    assert overdue[0].decoded("DTSTART") == TODAY
    assert (TODAY - timedelta(days=15)).isoformat() in str(overdue[0]["SUMMARY"])


def test_revoked_link_answers_404_and_a_new_one_works(client, client_as, site: Site) -> None:
    supervisor = client_as("supervisor")
    link = f"/api/v1/buildings/{site.building_id}/calendar-link"
    first = supervisor.post(link).json()["url"]
    first_path = first[first.index("/calendar/") :]
    assert client.get(first_path).status_code == 200
    status = supervisor.get(link)
    assert status.status_code == 200 and status.json()["url"] is None  # shown only once
    assert supervisor.delete(link).status_code == 204
    assert client.get(first_path).status_code == 404
    assert supervisor.get(link).status_code == 404
    assert supervisor.delete(link).status_code == 404
    second = supervisor.post(link).json()["url"]
    second_path = second[second.index("/calendar/") :]
    assert second_path != first_path
    assert client.get(second_path).status_code == 200
    # Making a link revokes the one before it.
    third = supervisor.post(link).json()["url"]
    assert client.get(second_path).status_code == 404
    assert client.get(third[third.index("/calendar/") :]).status_code == 200


def test_a_guessed_token_answers_404(client) -> None:
    assert client.get("/calendar/not-a-real-token.ics").status_code == 404


def test_long_lines_fold_at_75_octets_without_splitting_characters() -> None:
    # RFC 5545 §3.1: lines of at most 75 octets, continuation lines start with a space.
    summary = "Annual duration test: " + "Kühlraum Süd " * 12
    event = CalendarEvent(
        uid="duration-area-20270101@retrofit-planner",
        day=date(2027, 1, 1),
        summary=summary,
        description="line one\nline two; with, punctuation",
    )
    text = ics_calendar(name="Test", events=[event], stamp=datetime(2027, 1, 1, tzinfo=UTC))
    for line in text.split("\r\n"):
        assert len(line.encode("utf-8")) <= 75
    parsed = _events(text.encode("utf-8"))[0]
    assert str(parsed["SUMMARY"]) == summary
    assert str(parsed["DESCRIPTION"]) == "line one\nline two; with, punctuation"
    assert fold("x" * 75) == "x" * 75
    assert fold("x" * 76) == "x" * 75 + "\r\n x"
    assert escape_text("a;b,c\\d\ne") == "a\\;b\\,c\\\\d\\ne"
