"""The shared PDF base: escaping, fonts, page frame, paper sizes, the cautions box."""

from __future__ import annotations

from io import BytesIO

import pytest
from pypdf import PdfReader

from server import pdf
from server.safety import CAUTIONS

NASTY = "<b>&</para> x < y & z > w \u00e9\u00e8 \u2013 50 \u00b0C"


def _frame(paper_size: str = "A4") -> pdf.PageFrame:
    return pdf.PageFrame(
        title="Work order",
        reference="WO-2027-0042",
        building="Block <7> & annex",
        organisation="Invented Contractors & Co",
        paper_size=paper_size,
    )


def _pages(data: bytes) -> list[str]:
    return [page.extract_text() for page in PdfReader(BytesIO(data)).pages]


def test_escape_keeps_user_text_as_typed() -> None:
    assert pdf.escape("<b>&</para>") == "&lt;b&gt;&amp;&lt;/para&gt;"
    assert pdf.escape("line 1\nline 2") == "line 1<br/>line 2"


def test_user_text_prints_as_typed_and_breaks_nothing() -> None:
    data = pdf.build_pdf([pdf.para(NASTY), pdf.para(NASTY, "cell")], _frame())
    text = _pages(data)[0]
    assert text.count(NASTY) == 2


def test_every_page_has_reference_building_and_page_x_of_y() -> None:
    story = [pdf.para(f"row {i}") for i in range(200)]
    pages = _pages(pdf.build_pdf(story, _frame()))
    assert len(pages) >= 3
    for number, text in enumerate(pages, start=1):
        assert f"Page {number} of {len(pages)}" in text
        assert "WO-2027-0042" in text
        assert "Block <7> & annex" in text
        assert "Invented Contractors & Co" in text


@pytest.mark.parametrize(
    ("paper_size", "width_pt", "height_pt"),
    [("A4", 595.2756, 841.8898), ("Letter", 612.0, 792.0)],  # ISO 216 A4; ANSI US Letter
)
def test_paper_size_follows_the_organisation(
    paper_size: str, width_pt: float, height_pt: float
) -> None:
    reader = PdfReader(BytesIO(pdf.build_pdf([pdf.para("x")], _frame(paper_size))))
    box = reader.pages[0].mediabox
    assert float(box.width) == pytest.approx(width_pt, abs=0.01)
    assert float(box.height) == pytest.approx(height_pt, abs=0.01)


def test_cautions_box_prints_each_caution_and_its_title() -> None:
    frame = _frame()
    box = pdf.cautions_box(CAUTIONS, title="Before <you> start", width_pt=frame.content_width_pt)
    text = " ".join(_pages(pdf.build_pdf([box], frame))[0].split())
    assert "Before <you> start" in text
    for caution in CAUTIONS:
        assert " ".join(caution.split()) in text


def test_body_font_is_dejavu_sans_embedded() -> None:
    reader = PdfReader(BytesIO(pdf.build_pdf([pdf.para(NASTY)], _frame())))
    fonts = reader.pages[0]["/Resources"]["/Font"]
    names = {str(fonts[key].get_object()["/BaseFont"]) for key in fonts}
    assert any("DejaVuSans" in name for name in names), names
