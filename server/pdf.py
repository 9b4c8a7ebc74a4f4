"""The planner's PDF base: fonts, page frame, styles, the cautions box, escaping.

Every PDF the planner prints (quotes, work orders, the log book) is built the
same way, so that each carries the same frame and the same safety texts:

>>> frame = PageFrame(title="Work order", reference="WO-2027-0001",
...                   building="North block", organisation="Firm", paper_size="A4")
>>> story = [heading("Before you start"), cautions_box(CAUTIONS), para(user_note)]
>>> pdf_bytes = build_pdf(story, frame)

- :func:`build_pdf` lays out a platypus story on A4 or US Letter (the
  organisation's ``paper_size``), with the reference and the building at the
  top of every page and "Page X of Y" at the bottom, in one layout pass.
- :func:`para` is the only way user text reaches a Paragraph: it escapes
  ``<``, ``>`` and ``&`` (:func:`escape`), so a note of ``<b>&</para>`` prints
  as typed. Pass ``markup=True`` only for text the program wrote itself.
- :func:`cautions_box` frames the life-safety cautions (``server.safety``).
- :data:`STYLES` holds the few paragraph styles (``body``, ``small``,
  ``cell``, ``cell_bold``, ``heading``, ``title``, ``caution``).

Body text is DejaVu Sans (Debian ``fonts-dejavu-core``): the base-14 fonts
lack many accented letters and the ballot-box glyphs the forms use.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from io import BytesIO
from pathlib import Path
from typing import Any
from xml.sax.saxutils import escape as _xml_escape

from reportlab.lib import colors
from reportlab.lib.pagesizes import A4, LETTER
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.ttfonts import TTFont
from reportlab.pdfgen.canvas import Canvas
from reportlab.platypus import Flowable, Paragraph, SimpleDocTemplate, Table, TableStyle

FONT_DIR = Path("/usr/share/fonts/truetype/dejavu")
FONT = "DejaVuSans"
FONT_BOLD = "DejaVuSans-Bold"
FONT_CONDENSED = "DejaVuSansCondensed"
FONT_CONDENSED_BOLD = "DejaVuSansCondensed-Bold"

PAPER_SIZES: dict[str, tuple[float, float]] = {"A4": A4, "Letter": LETTER}
MARGIN_PT = 15 * mm
HEADER_PT = 9 * mm  # room above the frame for the running header

INK = colors.HexColor("#1d2430")
MUTED = colors.HexColor("#5a6472")
RULE = colors.HexColor("#b9c0ca")
CAUTION_FILL = colors.HexColor("#fff4d6")
CAUTION_EDGE = colors.HexColor("#b26b00")
TICK_BOX = "\u2610"  # ☐, drawn in DejaVu Sans


def _register_fonts() -> None:
    for name, file in (
        (FONT, "DejaVuSans.ttf"),
        (FONT_BOLD, "DejaVuSans-Bold.ttf"),
        (FONT_CONDENSED, "DejaVuSansCondensed.ttf"),
        (FONT_CONDENSED_BOLD, "DejaVuSansCondensed-Bold.ttf"),
    ):
        if name not in pdfmetrics.getRegisteredFontNames():
            pdfmetrics.registerFont(TTFont(name, str(FONT_DIR / file)))
    pdfmetrics.registerFontFamily(FONT, normal=FONT, bold=FONT_BOLD, italic=FONT, boldItalic=FONT)
    pdfmetrics.registerFontFamily(
        FONT_CONDENSED,
        normal=FONT_CONDENSED,
        bold=FONT_CONDENSED_BOLD,
        italic=FONT_CONDENSED,
        boldItalic=FONT_CONDENSED_BOLD,
    )


_register_fonts()


def _style(name: str, **values: Any) -> ParagraphStyle:
    base: dict[str, Any] = {"fontName": FONT, "fontSize": 9, "leading": 11.5, "textColor": INK}
    return ParagraphStyle(name, **{**base, **values})


STYLES: dict[str, ParagraphStyle] = {
    "title": _style("title", fontName=FONT_BOLD, fontSize=16, leading=20, spaceAfter=2 * mm),
    "heading": _style(
        "heading",
        fontName=FONT_BOLD,
        fontSize=11,
        leading=14,
        spaceBefore=3 * mm,
        spaceAfter=1 * mm,
    ),
    "body": _style("body", spaceAfter=1.2 * mm),
    "small": _style("small", fontSize=7.5, leading=9.5, textColor=MUTED),
    "cell": _style("cell", fontName=FONT_CONDENSED, fontSize=7.5, leading=9.2),
    "cell_bold": _style("cell_bold", fontName=FONT_CONDENSED_BOLD, fontSize=8, leading=9.8),
    "cell_right": _style(
        "cell_right", fontName=FONT_CONDENSED, fontSize=8, leading=9.8, alignment=2
    ),
    "tick": _style("tick", fontSize=13, leading=14),
    "caution": _style("caution", fontSize=8.5, leading=11, leftIndent=9, bulletIndent=0),
    "caution_title": _style("caution_title", fontName=FONT_BOLD, fontSize=10, leading=13),
}


def escape(text: object) -> str:
    """User text made safe for a Paragraph: ``<``, ``>`` and ``&`` escaped, newlines kept."""
    return _xml_escape(str(text)).replace("\r\n", "\n").replace("\n", "<br/>")


def para(text: object, style: str = "body", *, markup: bool = False) -> Paragraph:
    """A Paragraph of ``text`` in one of :data:`STYLES`.

    ``text`` is escaped unless ``markup`` is true; only text the program
    composed itself (its own ``<b>`` around escaped values) may set it.
    """
    return Paragraph(str(text) if markup else escape(text), STYLES[style])


def heading(text: object) -> Paragraph:
    return para(text, "heading")


def bold(text: object) -> str:
    """Escaped ``text`` in bold, as markup for :func:`para` with ``markup=True``."""
    return f"<b>{escape(text)}</b>"


def cautions_box(
    cautions: Iterable[str], *, title: str = "Safety first", width_pt: float | None = None
) -> Table:
    """A framed box of cautions, one bullet each, under a bold title."""
    rows: list[list[Flowable]] = [[para(f"\u26a0 {escape(title)}", "caution_title", markup=True)]]
    rows += [[Paragraph(escape(text), STYLES["caution"], bulletText="\u2022")] for text in cautions]
    box = Table(rows, colWidths=[width_pt] if width_pt else None, hAlign="LEFT")
    box.setStyle(
        TableStyle(
            [
                ("BACKGROUND", (0, 0), (-1, -1), CAUTION_FILL),
                ("BOX", (0, 0), (-1, -1), 1.5, CAUTION_EDGE),
                ("LEFTPADDING", (0, 0), (-1, -1), 7),
                ("RIGHTPADDING", (0, 0), (-1, -1), 7),
                ("TOPPADDING", (0, 0), (-1, -1), 2),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
                ("TOPPADDING", (0, 0), (-1, 0), 5),
                ("BOTTOMPADDING", (0, -1), (-1, -1), 6),
            ]
        )
    )
    return box


@dataclass(frozen=True, slots=True)
class PageFrame:
    """What every page of one document shows around its content."""

    title: str  # "Quote", "Work order", "Log book"
    reference: str  # the document's number
    building: str
    organisation: str
    paper_size: str = "A4"  # Organisation.paper_size: "A4" or "Letter"

    @property
    def page_size(self) -> tuple[float, float]:
        return PAPER_SIZES.get(self.paper_size, A4)

    @property
    def content_width_pt(self) -> float:
        return self.page_size[0] - 2 * MARGIN_PT


def _framed_canvas(frame: PageFrame) -> type[Canvas]:
    """A canvas that draws the header and "Page X of Y" once the page count is known.

    Pages are kept as they are laid out and stamped at ``save()``, so one
    layout pass is enough (a two-pass build would double the time of a
    long work order).
    """
    header = f"{frame.title} {frame.reference} \u00b7 {frame.building}"

    class FramedCanvas(Canvas):
        def __init__(self, *args: Any, **kwargs: Any) -> None:
            super().__init__(*args, **kwargs)
            self._pages: list[dict[str, Any]] = []

        def showPage(self) -> None:  # noqa: N802 - reportlab's name
            self._pages.append(dict(self.__dict__))
            self._startPage()

        def save(self) -> None:
            total = len(self._pages)
            for number, state in enumerate(self._pages, start=1):
                self.__dict__.update(state)
                self._stamp(number, total)
                Canvas.showPage(self)
            Canvas.save(self)

        def _stamp(self, number: int, total: int) -> None:
            width, height = frame.page_size
            top = height - MARGIN_PT + 2 * mm
            self.saveState()
            self.setFillColor(MUTED)
            self.setFont(FONT, 7.5)
            self.drawString(MARGIN_PT, top, _fit(self, header, width - 2 * MARGIN_PT - 50 * mm))
            self.drawRightString(width - MARGIN_PT, top, frame.organisation[:60])
            self.setStrokeColor(RULE)
            self.setLineWidth(0.5)
            self.line(MARGIN_PT, top - 1.5 * mm, width - MARGIN_PT, top - 1.5 * mm)
            self.line(MARGIN_PT, MARGIN_PT - 3 * mm, width - MARGIN_PT, MARGIN_PT - 3 * mm)
            self.drawString(MARGIN_PT, MARGIN_PT - 7 * mm, _fit(self, header, width / 2))
            self.drawRightString(width - MARGIN_PT, MARGIN_PT - 7 * mm, f"Page {number} of {total}")
            self.restoreState()

    return FramedCanvas


def _fit(canvas: Canvas, text: str, width_pt: float) -> str:
    """``text`` cut with an ellipsis to fit ``width_pt`` in the header font."""
    if canvas.stringWidth(text, FONT, 7.5) <= width_pt:
        return text
    while text and canvas.stringWidth(text + "\u2026", FONT, 7.5) > width_pt:
        text = text[:-1]
    return text + "\u2026"


def build_pdf(story: Sequence[Flowable], frame: PageFrame) -> bytes:
    """Lay out ``story`` in ``frame``'s page size and frame; the PDF's bytes."""
    buffer = BytesIO()
    document = SimpleDocTemplate(
        buffer,
        pagesize=frame.page_size,
        leftMargin=MARGIN_PT,
        rightMargin=MARGIN_PT,
        topMargin=MARGIN_PT + HEADER_PT - 4 * mm,
        bottomMargin=MARGIN_PT,
        title=f"{frame.title} {frame.reference}",
        author=frame.organisation,
        subject=frame.building,
    )
    document.build(list(story), canvasmaker=_framed_canvas(frame))
    return buffer.getvalue()
