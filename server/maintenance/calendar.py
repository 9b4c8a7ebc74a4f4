"""A building's coming tests as an iCalendar (RFC 5545) feed.

Written by hand (it is a small text format): content lines end in CRLF and
are folded at 75 octets, text values escape backslash, semicolon, comma and
newline, each event is all-day (``DTSTART;VALUE=DATE`` with the next day as
``DTEND``) and keeps the same UID from one fetch to the next, so a calendar
program that refreshes the feed moves an event instead of adding another.

References
----------
RFC 5545 (iCalendar): §3.1 content lines and folding, §3.3.11 TEXT escaping,
§3.6.1 VEVENT, §3.8.4.7 UID, §3.8.7.2 DTSTAMP. RFC 7986 §5.1 NAME and §5.7
REFRESH-INTERVAL (newer properties; programs that do not know them skip them).
"""

from __future__ import annotations

from collections.abc import Iterable
from datetime import UTC, datetime, timedelta

from server.maintenance.service import CalendarEvent

PRODID = "-//Emergency Lighting Retrofit Planner//Maintenance calendar//EN"
MAX_LINE_OCTETS = 75
REFRESH = "PT6H"  # our choice: a test logged in the morning shows by the afternoon


def escape_text(value: str) -> str:
    """A TEXT value escaped per RFC 5545 §3.3.11."""
    return (
        value.replace("\\", "\\\\")
        .replace(";", "\\;")
        .replace(",", "\\,")
        .replace("\r\n", "\\n")
        .replace("\n", "\\n")
        .replace("\r", "\\n")
    )


def fold(line: str) -> str:
    """Fold a content line into pieces of at most 75 octets (RFC 5545 §3.1).

    Continuation pieces start with one space; a UTF-8 character is never
    split between pieces.
    """
    pieces: list[str] = []
    current, size, limit = "", 0, MAX_LINE_OCTETS
    for char in line:
        width = len(char.encode("utf-8"))
        if size + width > limit:
            pieces.append(current)
            current, size, limit = " ", 1, MAX_LINE_OCTETS
        current += char
        size += width
    pieces.append(current)
    return "\r\n".join(pieces)


def ics_calendar(*, name: str, events: Iterable[CalendarEvent], stamp: datetime) -> str:
    """The whole feed as text.

    Parameters
    ----------
    name : str
        The calendar's name as programs show it.
    events : iterable of CalendarEvent
        The tests to show.
    stamp : datetime
        When the feed is made (DTSTAMP of every event); a time-zone-aware
        datetime.
    """
    dtstamp = stamp.astimezone(UTC).strftime("%Y%m%dT%H%M%SZ")
    lines = [
        "BEGIN:VCALENDAR",
        "VERSION:2.0",
        f"PRODID:{PRODID}",
        "CALSCALE:GREGORIAN",
        "METHOD:PUBLISH",
        f"NAME:{escape_text(name)}",
        f"X-WR-CALNAME:{escape_text(name)}",
        f"REFRESH-INTERVAL;VALUE=DURATION:{REFRESH}",
    ]
    for event in events:
        lines += [
            "BEGIN:VEVENT",
            f"UID:{event.uid}",
            f"DTSTAMP:{dtstamp}",
            f"DTSTART;VALUE=DATE:{event.day:%Y%m%d}",
            f"DTEND;VALUE=DATE:{event.day + timedelta(days=1):%Y%m%d}",
            f"SUMMARY:{escape_text(event.summary)}",
            f"DESCRIPTION:{escape_text(event.description)}",
            "TRANSP:TRANSPARENT",
            "END:VEVENT",
        ]
    lines.append("END:VCALENDAR")
    return "".join(fold(line) + "\r\n" for line in lines)
