"""The log book PDF: one building, one year, for handing to the inspector.

It prints every fixture and every test of the year (superseded entries kept
and marked, so nothing disappears from the record), the failures and what
was done about them, the longest gap between tests against the interval,
the cautions, the note that local codes prevail, and lines to sign.
"""

from __future__ import annotations

from collections.abc import Sequence

from reportlab.lib.units import mm
from reportlab.platypus import CondPageBreak, Flowable, KeepTogether, Spacer, Table, TableStyle

from server.engineering.schedule import TestKind
from server.maintenance.service import Logbook, LogbookEntry, LogbookFixture
from server.pdf import (
    INK,
    MUTED,
    RULE,
    PageFrame,
    bold,
    build_pdf,
    cautions_box,
    escape,
    heading,
    para,
)
from server.safety import CAUTIONS

KIND_WORDS = {TestKind.FUNCTION.value: "Function", TestKind.DURATION.value: "Duration"}
RESULT_WORDS = {"pass": "PASS", "fail": "FAIL", "void": "WITHDRAWN"}
LOCAL_CODES_NOTE = (
    "The intervals, durations and records required by the authority having jurisdiction under "
    "the codes that apply locally prevail over this log book's schedule. Tests are to be done "
    "and this log signed by a competent (qualified) person."
)
NOTHING = "\u2014"


def _table(rows: list[list[object]], widths: Sequence[float], *, header_rows: int = 1) -> Table:
    table = Table(rows, colWidths=list(widths), repeatRows=header_rows, hAlign="LEFT")
    table.setStyle(
        TableStyle(
            [
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("LINEBELOW", (0, 0), (-1, header_rows - 1), 0.9, INK),
                ("LINEBELOW", (0, header_rows), (-1, -1), 0.3, RULE),
                ("LEFTPADDING", (0, 0), (-1, -1), 2.5),
                ("RIGHTPADDING", (0, 0), (-1, -1), 2.5),
                ("TOPPADDING", (0, 0), (-1, -1), 1.5),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
            ]
        )
    )
    return table


def _head(*names: str) -> list[object]:
    return [para(name, "cell_bold") for name in names]


def _cell(text: object, *, struck: bool = False) -> object:
    shown = text if text not in (None, "") else NOTHING
    if struck:
        colour = "#" + MUTED.hexval()[2:]
        return para(
            f'<font color="{colour}"><strike>{escape(shown)}</strike></font>', "cell", markup=True
        )
    return para(shown, "cell")


def _duration(entry: LogbookEntry) -> str:
    record = entry.record
    if record.observed_duration_min is None:
        return NOTHING
    how = "lamp went out" if record.ran_to_cutoff else "stopped, lamp lit"
    return f"{record.observed_duration_min:g} min ({how})"


def _readings(entry: LogbookEntry) -> str:
    record = entry.record
    if record.open_circuit_v is None:
        return NOTHING
    load = ""
    if record.load_a is not None:
        load = f" at {record.load_a:g} A"
    elif record.load_ohm is not None:
        load = f" across {record.load_ohm:g} \u03a9"
    return f"{record.open_circuit_v:g} V open, {record.loaded_v:g} V loaded{load}"


def _status(entry: LogbookEntry, dates: dict[str, str]) -> str:
    record = entry.record
    words = []
    if entry.status == "superseded":
        words.append("superseded by a correction")
    if record.corrects_id:
        words.append(f"corrects the entry of {dates.get(record.corrects_id, 'an earlier day')}")
    if record.pack_replaced:
        words.append("pack replaced")
    return "; ".join(words)


def _gap(days: int | None, interval: int) -> object:
    if days is None:
        return _cell(NOTHING)
    if days > interval:
        return para(f"<b>{days} d</b><br/>over the {interval} d interval", "cell", markup=True)
    return para(f"{days} d<br/>within {interval} d", "cell", markup=True)


def _summary(book: Logbook, width: float) -> list[Flowable]:
    rows: list[list[object]] = [
        _head(
            "Area",
            "Fixture",
            "Commissioned",
            "Function tests",
            "Longest gap",
            "Duration tests",
            "Longest gap",
        )
    ]
    for item in book.fixtures:
        log = item.log
        commissioned = log.fixture.commissioned_on
        rows.append(
            [
                _cell(log.area.name + (f" (floor {log.area.floor})" if log.area.floor else "")),
                _cell(f"{log.fixture.tag} {log.fixture.location}".strip()),
                _cell(commissioned.isoformat() if commissioned else "not commissioned"),
                _cell(str(item.function_tests)),
                _gap(item.longest_function_gap_days, log.monthly_test_days),
                _cell(str(item.duration_tests)),
                _gap(item.longest_duration_gap_days, log.annual_test_days),
            ]
        )
    fractions = (0.2, 0.2, 0.13, 0.1, 0.14, 0.09, 0.14)
    return [
        heading("Luminaires and tests this year"),
        para(
            "The longest gap is the longest stretch without a passing test of that kind "
            "during the year (to today for the current year), counted from the last pass "
            "before it, against the interval of the area's profile.",
            "small",
        ),
        _table(rows, [width * f for f in fractions]),
    ]


def _failures(book: Logbook, width: float) -> list[Flowable]:
    story: list[Flowable] = [heading("Failures and what was done")]
    if not book.failures:
        return [*story, para("No test failed this year.")]
    rows: list[list[object]] = [
        _head("Date", "Fixture", "Test", "Found", "What was done", "Passed again")
    ]
    for failure in book.failures:
        record = failure.record
        found = record.notes or (
            f"lit {record.observed_duration_min:g} min"
            if record.observed_duration_min is not None
            else ""
        )
        rows.append(
            [
                _cell(record.tested_on.isoformat()),
                _cell(f"{failure.log.fixture.tag} ({failure.log.area.name})"),
                _cell(KIND_WORDS.get(record.kind, record.kind)),
                _cell(found),
                _cell(record.action_taken or "nothing recorded"),
                _cell(
                    failure.retested_on.isoformat()
                    if failure.retested_on
                    else "no passing test logged since"
                ),
            ]
        )
    fractions = (0.11, 0.17, 0.09, 0.24, 0.25, 0.14)
    return [*story, _table(rows, [width * f for f in fractions])]


def _fixture_block(item: LogbookFixture, width: float) -> list[Flowable]:
    log = item.log
    fixture = log.fixture
    pack = log.installed.pack.name if log.installed else "no accepted proposal"
    title = para(
        f"{bold(fixture.tag)} {bold(fixture.location)} \u00b7 "
        f"{escape(log.area.name)} \u00b7 pack: {escape(pack)}",
        "body",
        markup=True,
    )
    if not item.entries:
        return [KeepTogether([title, para("No test recorded this year.", "small")])]
    dates = {entry.record.id: entry.record.tested_on.isoformat() for entry in item.entries}
    dates.update({record.id: record.tested_on.isoformat() for record in log.records})
    rows: list[list[object]] = [
        _head("Date", "Test", "Result", "Time on battery", "Readings", "By", "Action / notes", "")
    ]
    for entry in item.entries:
        record = entry.record
        text = "; ".join(part for part in (record.action_taken, record.notes) if part)
        struck = entry.status == "superseded"
        rows.append(
            [
                _cell(record.tested_on.isoformat(), struck=struck),
                _cell(KIND_WORDS.get(record.kind, record.kind), struck=struck),
                _cell(RESULT_WORDS.get(record.result, record.result), struck=struck),
                _cell(_duration(entry), struck=struck),
                _cell(_readings(entry), struck=struck),
                _cell(record.tested_by, struck=struck),
                _cell(text, struck=struck),
                para(_status(entry, dates), "cell"),
            ]
        )
    fractions = (0.1, 0.08, 0.09, 0.14, 0.16, 0.12, 0.19, 0.12)
    return [
        CondPageBreak(30 * mm),
        title,
        _table(rows, [width * f for f in fractions]),
        Spacer(1, 2 * mm),
    ]


def _sign_off(width: float) -> list[Flowable]:
    line = "_" * 38
    rows = [
        [para("Log reviewed by (name)", "cell_bold"), para(line, "cell"), para("", "cell")],
        [para("Qualification / company", "cell_bold"), para(line, "cell"), para("", "cell")],
        [para("Signature", "cell_bold"), para(line, "cell"), para("", "cell")],
        [para("Date", "cell_bold"), para(line, "cell"), para("", "cell")],
    ]
    blocks: list[Flowable] = [
        heading("Sign-off"),
        para(
            "Signed to confirm that the tests above were done as recorded and the failures "
            "dealt with as stated.",
            "small",
        ),
    ]
    for who in (
        "For the contractor (competent person who did or supervised the tests)",
        "For the building (responsible person)",
    ):
        table = Table(rows, colWidths=[width * 0.3, width * 0.5, width * 0.2], hAlign="LEFT")
        table.setStyle(
            TableStyle(
                [
                    ("TOPPADDING", (0, 0), (-1, -1), 5),
                    ("BOTTOMPADDING", (0, 0), (-1, -1), 5),
                    ("VALIGN", (0, 0), (-1, -1), "BOTTOM"),
                ]
            )
        )
        blocks += [para(who, "body"), table, Spacer(1, 4 * mm)]
    return [KeepTogether(blocks)]


def logbook_pdf(book: Logbook) -> bytes:
    """The log book as PDF bytes."""
    organisation, building = book.organisation, book.building
    frame = PageFrame(
        title="Log book",
        reference=str(book.year),
        building=building.name,
        organisation=organisation.name,
        paper_size=organisation.paper_size,
    )
    width = frame.content_width_pt
    intervals = sorted({(f.log.monthly_test_days, f.log.annual_test_days) for f in book.fixtures})
    schedule = "; ".join(
        f"function test every {monthly} days, full-duration test every {annual} days"
        for monthly, annual in intervals
    )
    story: list[Flowable] = [
        para(f"Emergency lighting log book {book.year}", "title"),
        para(bold(building.name), "body", markup=True),
    ]
    for line in (building.address, building.client_name, building.client_contact):
        if line:
            story.append(para(line, "body"))
    story += [
        para(
            f"Kept by {organisation.name}. Printed {book.made_on.isoformat()}. "
            f"{len(book.fixtures)} luminaires" + (f"; {schedule}." if schedule else "."),
            "body",
        ),
        Spacer(1, 2 * mm),
        cautions_box([*CAUTIONS, LOCAL_CODES_NOTE], width_pt=width),
        *_summary(book, width),
        *_failures(book, width),
        CondPageBreak(50 * mm),
        heading("The record, luminaire by luminaire"),
        para(
            "Every entry of the year is printed. An entry replaced by a correction is struck "
            "through and marked; the correction follows it. Nothing is removed from the record.",
            "small",
        ),
    ]
    for item in book.fixtures:
        story += _fixture_block(item, width)
    story += _sign_off(width)
    return build_pdf(story, frame)
