"""The work-order PDF for the crew: cautions, sketches, a row per fixture, sign-off, pack labels."""

from __future__ import annotations

from reportlab.graphics import renderPDF
from reportlab.graphics.shapes import Drawing
from reportlab.lib.units import mm
from reportlab.platypus import (
    CondPageBreak,
    Flowable,
    KeepTogether,
    PageBreak,
    Spacer,
    Table,
    TableStyle,
)

from server import pdf
from server.safety import CAUTIONS
from server.workorders import sketches
from server.workorders.service import AreaBlock, FixtureRow, PackLabel, WorkOrderSheet

CREW_CAUTION = (
    "Follow the module maker's instructions and wiring diagram, the local codes and licensed "
    "practice; stop and ask the supervisor when the fixture differs from this order."
)
QR_SIZE_PT = 17 * mm
LABEL_WIDTH_PT = 60 * mm
LABEL_HEIGHT_PT = 31 * mm


def _info_table(sheet: WorkOrderSheet, width_pt: float) -> Table:
    rows = [
        (
            "Building",
            sheet.building_name + (f", {sheet.building_address}" if sheet.building_address else ""),
        ),
        ("From quote", sheet.quote_number),
        ("Crew", sheet.crew or "to be assigned"),
        ("Scheduled", sheet.scheduled_on.isoformat() if sheet.scheduled_on else "not yet"),
        ("Issued", f"{sheet.issued_on.isoformat()} by {sheet.issued_by}".strip()),
        (
            "Fixtures",
            f"{sheet.progress.total} to convert ({sheet.progress.done} done, "
            f"{sheet.progress.problem} with a problem)",
        ),
    ]
    table = Table(
        [[pdf.para(label, "cell_bold"), pdf.para(value, "cell")] for label, value in rows],
        colWidths=[28 * mm, width_pt - 28 * mm],
        hAlign="LEFT",
    )
    table.setStyle(
        TableStyle(
            [
                ("LINEBELOW", (0, 0), (-1, -1), 0.25, pdf.RULE),
                ("TOPPADDING", (0, 0), (-1, -1), 1.5),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5),
                ("LEFTPADDING", (0, 0), (-1, -1), 0),
            ]
        )
    )
    return table


def _sketches(sheet: WorkOrderSheet, width_pt: float) -> list[Flowable]:
    cells: list[list[Flowable]] = []
    for number, conversion in sheet.conversions:
        cells.append(
            [
                pdf.para(
                    f"<b>Sketch {number}</b> \u00b7 {pdf.escape(conversion.title)}",
                    "cell",
                    markup=True,
                ),
                sketches.sketch(conversion),
            ]
        )
    rows = [cells[i : i + 2] for i in range(0, len(cells), 2)]
    if rows and len(rows[-1]) == 1:
        rows[-1].append([])
    column = width_pt / 2
    scale = min(1.0, (column - 8) / sketches.WIDTH_PT)
    for row in rows:
        for cell in row:
            if cell:
                drawing = cell[1]
                assert isinstance(drawing, Drawing)
                drawing.scale(scale, scale)
                drawing.width, drawing.height = (
                    sketches.WIDTH_PT * scale,
                    sketches.HEIGHT_PT * scale,
                )
    table = Table(rows, colWidths=[column, column], hAlign="LEFT")
    table.setStyle(
        TableStyle(
            [
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("BOX", (0, 0), (-1, -1), 0.4, pdf.RULE),
                ("INNERGRID", (0, 0), (-1, -1), 0.4, pdf.RULE),
            ]
        )
    )
    return [
        pdf.heading("Kinds of conversion on this order"),
        pdf.para(
            "Each fixture row names its sketch. The sketches show the idea; the module maker's "
            "diagram decides the terminals (a module that switches one lamp end only shows "
            "which end).",
            "small",
        ),
        table,
    ]


class LinkedQr(Flowable):
    """A fixture's QR code, also a link to its page for a PDF read on a tablet."""

    def __init__(self, url: str) -> None:
        super().__init__()
        self.url = url

    def wrap(self, available_width: float, available_height: float) -> tuple[float, float]:
        return QR_SIZE_PT, QR_SIZE_PT

    def draw(self) -> None:
        drawing = Drawing(QR_SIZE_PT, QR_SIZE_PT)
        drawing.add(
            sketches.FixtureQr(self.url, barWidth=QR_SIZE_PT, barHeight=QR_SIZE_PT, barBorder=2)
        )
        renderPDF.draw(drawing, self.canv, 0, 0)
        self.canv.linkURL(self.url, (0, 0, QR_SIZE_PT, QR_SIZE_PT), relative=1)


def _bullets(items: list[str]) -> str:
    return "<br/>".join(f"\u2022 {pdf.escape(item)}" for item in items)


def _row(row: FixtureRow) -> list[object]:
    fixture = (
        f"<b>{pdf.escape(row.tag)}</b>"
        + (f"<br/>{pdf.escape(row.location)}" if row.location else "")
        + f"<br/><font color='#5a6472'>Sketch {row.sketch_number}</font>"
    )
    now_fit = (
        f"<font color='#5a6472'>Now:</font> {pdf.escape(row.now)}"
        f"<br/><font color='#5a6472'>Fit:</font> {pdf.escape(row.fit)}"
    )
    checks = "<br/>".join(f"{pdf.TICK_BOX} {pdf.escape(check)}" for check in row.checks)
    checks += "<br/>Done by ____________ on ________"
    if row.result:
        checks += f"<br/><b>{pdf.escape(row.result)}</b>"
    return [
        pdf.para(pdf.TICK_BOX, "tick"),
        pdf.para(fixture, "cell", markup=True),
        pdf.para(now_fit, "cell", markup=True),
        pdf.para(_bullets(row.wiring_notes), "cell", markup=True),
        pdf.para(checks, "cell", markup=True),
        LinkedQr(row.page_url),
    ]


COLUMNS_MM = (7, 24, 37, 55, 40, 19)
HEADER = ("", "Fixture", "Now \u2192 fit", "Wiring notes", "Commissioning", "Open in app")


def _area_table(block: AreaBlock, width_pt: float) -> Table:
    """The area's fixtures; its title and the column heads repeat on every page."""
    widths = [w * mm for w in COLUMNS_MM]
    widths[3] += width_pt - sum(widths)
    title = f"{block.title} \u00b7 {block.required_duration_min:.0f} min on battery"
    data: list[list[object]] = [
        [pdf.para(title, "heading"), "", "", "", "", ""],
        [pdf.para(text, "cell_bold") for text in HEADER],
    ]
    data += [_row(row) for row in block.rows]
    table = Table(data, colWidths=widths, repeatRows=2, hAlign="LEFT")
    table.setStyle(
        TableStyle(
            [
                ("SPAN", (0, 0), (-1, 0)),
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("LEFTPADDING", (0, 0), (-1, 0), 0),
                ("LINEBELOW", (0, 1), (-1, 1), 0.8, pdf.INK),
                ("LINEBELOW", (0, 2), (-1, -1), 0.4, pdf.RULE),
                ("LEFTPADDING", (0, 1), (-1, -1), 2),
                ("RIGHTPADDING", (0, 0), (-1, -1), 2),
                ("TOPPADDING", (0, 1), (-1, -1), 2.5),
                ("BOTTOMPADDING", (0, 1), (-1, -1), 3),
            ]
        )
    )
    return table


def _sign_off() -> Table:
    lines = [
        ["Crew lead", "Name ______________________", "Signature ______________", "Date ________"],
        ["Supervisor", "Name ______________________", "Signature ______________", "Date ________"],
    ]
    table = Table(
        [
            [pdf.para(text, "cell_bold" if i == 0 else "cell") for i, text in enumerate(row)]
            for row in lines
        ],
        hAlign="LEFT",
    )
    table.setStyle(TableStyle([("TOPPADDING", (0, 0), (-1, -1), 8)]))
    return table


def _label(label: PackLabel) -> list[Flowable]:
    installed = label.installed_on.isoformat() + (" (planned)" if label.planned else "")
    return [
        pdf.para("<b>EMERGENCY PACK</b>", "cell", markup=True),
        pdf.para(f"Fixture <b>{pdf.escape(label.tag)}</b>", "cell", markup=True),
        pdf.para(label.pack, "small"),
        pdf.para(f"Installed on: {installed}", "cell"),
        pdf.para(
            f"<b>Replace by: {label.replace_by.isoformat()}</b> ({label.life_years:.1f} years)",
            "cell",
            markup=True,
        ),
    ]


def _labels(labels: list[PackLabel], width_pt: float) -> list[Flowable]:
    per_row = max(1, int(width_pt // LABEL_WIDTH_PT))
    cells = [_label(label) for label in labels]
    rows = [cells[i : i + per_row] for i in range(0, len(cells), per_row)]
    if rows:
        rows[-1] += [[] for _ in range(per_row - len(rows[-1]))]
    table = Table(
        rows,
        colWidths=[LABEL_WIDTH_PT] * per_row,
        rowHeights=[LABEL_HEIGHT_PT] * len(rows),
        hAlign="LEFT",
    )
    table.setStyle(
        TableStyle(
            [
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("GRID", (0, 0), (-1, -1), 0.5, pdf.MUTED, None, (2, 2)),
                ("LEFTPADDING", (0, 0), (-1, -1), 5),
                ("TOPPADDING", (0, 0), (-1, -1), 4),
            ]
        )
    )
    return [
        PageBreak(),
        pdf.para("Pack labels", "title"),
        pdf.para(
            "Cut along the dashed lines and stick each label on its pack or inside the "
            "luminaire. Replace-by dates are the pack's design life, shortened for a ceiling "
            "warmer than the pack's marked temperature; a planned installation date is to be "
            "corrected by hand if the pack goes in later.",
            "small",
        ),
        Spacer(1, 2 * mm),
        table,
    ]


def work_order_pdf(sheet: WorkOrderSheet) -> bytes:
    """The crew's work order as PDF bytes."""
    frame = pdf.PageFrame(
        title="Work order",
        reference=sheet.number,
        building=sheet.building_name,
        organisation=sheet.firm_name,
        paper_size=sheet.paper_size,
    )
    width = frame.content_width_pt
    story: list[Flowable] = [
        pdf.para(f"Work order {sheet.number}", "title"),
        pdf.cautions_box(
            [*CAUTIONS, CREW_CAUTION], title="Before you touch a luminaire", width_pt=width
        ),
        Spacer(1, 3 * mm),
        _info_table(sheet, width),
    ]
    if sheet.crew_notes:
        story += [pdf.heading("Notes for the crew"), pdf.para(sheet.crew_notes)]
    story += _sketches(sheet, width)
    for block in sheet.areas:
        story += [CondPageBreak(50 * mm), Spacer(1, 2 * mm), _area_table(block, width)]
    story += [
        KeepTogether(
            [
                pdf.heading("Sign-off"),
                pdf.para(
                    "Every fixture above converted, its charge indicator on and its function "
                    "test passed; full-duration results recorded on this order.",
                ),
                _sign_off(),
            ]
        )
    ]
    story += _labels(sheet.labels, width)
    return pdf.build_pdf(story, frame)
