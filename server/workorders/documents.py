"""The work-order PDF for the crew: cautions, sketches, a row per fixture, sign-off, pack labels."""

from __future__ import annotations

from dataclasses import dataclass

from reportlab.graphics.shapes import Drawing
from reportlab.lib.colors import Color
from reportlab.lib.units import mm
from reportlab.lib.utils import simpleSplit
from reportlab.pdfbase.pdfmetrics import stringWidth
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
from server.escape.documents import route_plot_flowables
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


# --- fixture rows ---------------------------------------------------------
#
# A 1,000-fixture order has 1,000 rows of five wrapped columns. Paragraphs in
# a Table are wrapped again each time the table splits at a page end, which
# costs seconds; these rows wrap their plain text once (no markup, so user
# text prints exactly as typed) and split between rows by their known heights.

COLUMNS_MM = (7, 24, 37, 55, 42, 19)
HEADER = ("", "Fixture", "Now \u2192 fit", "Wiring notes", "Commissioning", "Open in app")
PAD_PT = 2.5
LEADING_PT = 9.2
TEXT_PT = 7.5
HEADER_PT = 30.0
USER_TEXT_LIMIT = 400  # characters of a survey note printed in a row; the app has the rest


@dataclass(frozen=True, slots=True)
class Line:
    text: str
    font: str = pdf.FONT_CONDENSED
    size: float = TEXT_PT
    color: Color = pdf.INK
    indent_pt: float = 0.0


def wrap_lines(
    text: str,
    width_pt: float,
    *,
    font: str = pdf.FONT_CONDENSED,
    size: float = TEXT_PT,
    color: Color = pdf.INK,
    bullet: str = "",
) -> list[Line]:
    """``text`` wrapped to ``width_pt``; a bullet hangs in front of the first line."""
    indent = stringWidth(bullet + " ", font, size) if bullet else 0.0
    lines: list[Line] = []
    for paragraph in text.splitlines() or [""]:
        for piece in simpleSplit(paragraph, font, size, width_pt - indent) or [""]:
            while stringWidth(piece, font, size) > width_pt - indent and len(piece) > 1:
                cut = len(piece) - 1
                while cut > 1 and stringWidth(piece[:cut], font, size) > width_pt - indent:
                    cut -= 1
                lines.append(Line(piece[:cut], font, size, color, indent))
                piece = piece[cut:]
            lines.append(Line(piece, font, size, color, indent))
    if bullet and lines:
        lines[0] = Line(f"{bullet} {lines[0].text}", font, size, color, 0.0)
    return lines


def _clip(text: str) -> str:
    return text if len(text) <= USER_TEXT_LIMIT else text[:USER_TEXT_LIMIT] + "\u2026 (see the app)"


@dataclass(slots=True)
class PreparedRow:
    columns: list[list[Line]]
    url: str
    height_pt: float


def prepare_row(row: FixtureRow, widths_pt: list[float]) -> PreparedRow:
    inner = [width - 2 * PAD_PT for width in widths_pt]
    muted = pdf.MUTED
    fixture = wrap_lines(row.tag, inner[1], font=pdf.FONT_CONDENSED_BOLD, size=8)
    if row.location:
        fixture += wrap_lines(row.location, inner[1])
    fixture += wrap_lines(f"Sketch {row.sketch_number}", inner[1], color=muted)
    now_fit = [Line("Now", pdf.FONT_CONDENSED_BOLD, TEXT_PT, muted)]
    now_fit += wrap_lines(row.now, inner[2])
    now_fit += [Line("Fit", pdf.FONT_CONDENSED_BOLD, TEXT_PT, muted)]
    now_fit += wrap_lines(row.fit, inner[2])
    notes = [
        line for note in row.wiring_notes for line in wrap_lines(note, inner[3], bullet="\u2022")
    ]
    if row.survey_note:
        notes += wrap_lines(f"Survey note: {_clip(row.survey_note)}", inner[3], color=muted)
    checks = [
        line for check in row.checks for line in wrap_lines(check, inner[4], bullet=pdf.TICK_BOX)
    ]
    checks += wrap_lines("Done by ____________ on ________", inner[4])
    if row.result:
        checks += wrap_lines(_clip(row.result), inner[4], font=pdf.FONT_CONDENSED_BOLD)
    columns = [[], fixture, now_fit, notes, checks]
    text_h = max(len(column) for column in columns) * LEADING_PT
    return PreparedRow(columns, row.page_url, max(text_h, QR_SIZE_PT) + 2 * PAD_PT + 1)


class AreaRows(Flowable):
    """An area's fixture rows under its title and column heads, which repeat on
    every page the area runs onto."""

    def __init__(self, title: str, rows: list[PreparedRow], widths_pt: list[float]) -> None:
        super().__init__()
        self.title = title
        self.rows = rows
        self.widths_pt = widths_pt

    def wrap(self, available_width: float, available_height: float) -> tuple[float, float]:
        self.width = sum(self.widths_pt)
        self.height = HEADER_PT + sum(row.height_pt for row in self.rows)
        return self.width, self.height

    def split(self, available_width: float, available_height: float) -> list[Flowable]:
        room = available_height - HEADER_PT
        taken = 0
        for row in self.rows:
            if row.height_pt > room:
                break
            room -= row.height_pt
            taken += 1
        if taken == 0:
            return []
        title = self.title if self.title.endswith("(continued)") else f"{self.title} (continued)"
        return [
            AreaRows(self.title, self.rows[:taken], self.widths_pt),
            AreaRows(title, self.rows[taken:], self.widths_pt),
        ]

    def draw(self) -> None:
        canvas = self.canv
        y = self.height
        canvas.setFillColor(pdf.INK)
        canvas.setFont(pdf.FONT_BOLD, 11)
        canvas.drawString(0, y - 13, self.title)
        canvas.setFont(pdf.FONT_CONDENSED_BOLD, 8)
        x = 0.0
        for heading, width in zip(HEADER, self.widths_pt, strict=True):
            canvas.drawString(x + PAD_PT, y - 25, heading)
            x += width
        canvas.setStrokeColor(pdf.INK)
        canvas.setLineWidth(0.8)
        canvas.line(0, y - HEADER_PT + 1, self.width, y - HEADER_PT + 1)
        y -= HEADER_PT
        canvas.setStrokeColor(pdf.RULE)
        canvas.setLineWidth(0.4)
        for row in self.rows:
            self._draw_row(row, y)
            y -= row.height_pt
            canvas.line(0, y, self.width, y)

    def _draw_row(self, row: PreparedRow, top: float) -> None:
        canvas = self.canv
        canvas.setFillColor(pdf.INK)
        canvas.setFont(pdf.FONT, 13)
        canvas.drawString(PAD_PT, top - PAD_PT - 11, pdf.TICK_BOX)
        x = 0.0
        for column, width in zip(row.columns, self.widths_pt, strict=False):
            text = canvas.beginText()
            y = top - PAD_PT - LEADING_PT + 2
            for line in column:
                text.setTextOrigin(x + PAD_PT + line.indent_pt, y)
                text.setFont(line.font, line.size)
                text.setFillColor(line.color)
                text.textOut(line.text)
                y -= LEADING_PT
            canvas.drawText(text)
            x += width
        qr_x = x + PAD_PT
        qr_y = top - PAD_PT - QR_SIZE_PT
        widget = sketches.FixtureQr(row.url, barBorder=2)
        canvas.drawInlineImage(widget.bitmap(), qr_x, qr_y, QR_SIZE_PT, QR_SIZE_PT)
        canvas.linkURL(row.url, (qr_x, qr_y, qr_x + QR_SIZE_PT, qr_y + QR_SIZE_PT), relative=1)


def _area(block: AreaBlock, width_pt: float) -> AreaRows:
    widths = [w * mm for w in COLUMNS_MM]
    widths[3] += width_pt - sum(widths)
    title = f"{block.title} \u00b7 {block.required_duration_min:.0f} min on battery"
    return AreaRows(title, [prepare_row(row, widths) for row in block.rows], widths)


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


# --- pack labels ----------------------------------------------------------


class LabelSheet(Flowable):
    """Pack labels in a grid with dashed cut lines, split between label rows."""

    def __init__(self, labels: list[PackLabel], per_row: int) -> None:
        super().__init__()
        self.labels = labels
        self.per_row = per_row

    @property
    def rows(self) -> int:
        return -(-len(self.labels) // self.per_row)

    def wrap(self, available_width: float, available_height: float) -> tuple[float, float]:
        self.width = self.per_row * LABEL_WIDTH_PT
        self.height = self.rows * LABEL_HEIGHT_PT
        return self.width, self.height

    def split(self, available_width: float, available_height: float) -> list[Flowable]:
        fit = int(available_height // LABEL_HEIGHT_PT)
        if fit < 1:
            return []
        cut = fit * self.per_row
        return [
            LabelSheet(self.labels[:cut], self.per_row),
            LabelSheet(self.labels[cut:], self.per_row),
        ]

    def draw(self) -> None:
        canvas = self.canv
        canvas.setDash(2, 2)
        canvas.setStrokeColor(pdf.MUTED)
        canvas.setLineWidth(0.5)
        for index, label in enumerate(self.labels):
            column, row = index % self.per_row, index // self.per_row
            x = column * LABEL_WIDTH_PT
            y = self.height - (row + 1) * LABEL_HEIGHT_PT
            canvas.rect(x, y, LABEL_WIDTH_PT, LABEL_HEIGHT_PT, stroke=1, fill=0)
            self._draw_label(label, x + 5, y + LABEL_HEIGHT_PT - 11)
        canvas.setDash()

    def _draw_label(self, label: PackLabel, x: float, y: float) -> None:
        canvas = self.canv
        width = LABEL_WIDTH_PT - 10
        installed = label.installed_on.isoformat() + (" (planned)" if label.planned else "")
        lines = [
            Line("EMERGENCY PACK", pdf.FONT_CONDENSED_BOLD, 8),
            Line(f"Fixture {label.tag}", pdf.FONT_CONDENSED_BOLD, 8),
            *wrap_lines(label.pack, width, size=6.8, color=pdf.MUTED)[:2],
            Line(f"Installed on: {installed}"),
            Line(
                f"Replace by: {label.replace_by.isoformat()} ({label.life_years:.1f} years)",
                pdf.FONT_CONDENSED_BOLD,
                8,
            ),
        ]
        text = canvas.beginText()
        for line in lines:
            text.setTextOrigin(x, y)
            text.setFont(line.font, line.size)
            text.setFillColor(line.color)
            text.textOut(_fit(line.text, line.font, line.size, width))
            y -= LEADING_PT * 0.98
        canvas.drawText(text)


def _fit(text: str, font: str, size: float, width_pt: float) -> str:
    if stringWidth(text, font, size) <= width_pt:
        return text
    while text and stringWidth(text + "\u2026", font, size) > width_pt:
        text = text[:-1]
    return text + "\u2026"


def _labels(labels: list[PackLabel], width_pt: float) -> list[Flowable]:
    per_row = max(1, int(width_pt // LABEL_WIDTH_PT))
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
        LabelSheet(labels, per_row),
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
        story += [CondPageBreak(50 * mm), Spacer(1, 2 * mm), _area(block, width)]
        if block.route_plot is not None:
            story += [Spacer(1, 2 * mm), *route_plot_flowables(block.route_plot, width)]
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
