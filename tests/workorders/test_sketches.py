"""Wiring sketches, conversion kinds, commissioning texts and the fast QR encoder."""

from __future__ import annotations

from typing import Any

import pytest
from reportlab.graphics.barcode import qrencoder
from reportlab.graphics.shapes import Drawing, Group, String

from server.sites.models import Fixture
from server.workorders import sketches
from server.workorders.service import (
    Conversion,
    ConversionKind,
    commissioning_checks,
    conversion_of,
)


def _texts(node: Any) -> list[str]:
    if isinstance(node, String):
        return [node.text]
    if isinstance(node, Group | Drawing):
        return [text for child in node.contents for text in _texts(child)]
    return []


@pytest.mark.parametrize("kind", list(ConversionKind))
@pytest.mark.parametrize("new_feed", [False, True])
def test_each_sketch_labels_its_parts(kind: ConversionKind, new_feed: bool) -> None:
    texts = " ".join(_texts(sketches.sketch(Conversion(kind, new_feed))))
    for label in (
        "Existing ballast",
        "Emergency module",
        "switched L",
        "unswitched L",
        "mains",
        "emergency",
        "pack",
        "lamp 1 \u00b7 runs in emergency",
    ):
        assert label in texts, label
    assert ("NEW feed" in texts) is new_feed
    two_lamps = kind in (ConversionKind.SERIES, ConversionKind.PARALLEL)
    assert ("lamp 2 \u00b7 dark in emergency" in texts) is two_lamps
    assert ("series link broken" in texts) is (kind is ConversionKind.SERIES)
    assert ("starter: isolated" in texts) is (kind is ConversionKind.GLOW_STARTER)


@pytest.mark.parametrize(
    ("values", "kind"),
    [
        ({"wiring": "single", "lamp_count": 1}, ConversionKind.SINGLE),
        ({"wiring": "series", "lamp_count": 2}, ConversionKind.SERIES),
        ({"wiring": "parallel", "lamp_count": 2}, ConversionKind.PARALLEL),
        ({"wiring": "parallel", "lamp_count": 1}, ConversionKind.SINGLE),
        ({"wiring": "single", "ballast": "magnetic-glow-starter"}, ConversionKind.GLOW_STARTER),
    ],
)
def test_conversion_kind_of_a_fixture(values: dict[str, Any], kind: ConversionKind) -> None:
    fixture = Fixture(
        **{
            "ballast": "electronic-programmed-start",
            "lamp_count": 1,
            "unswitched_supply": False,
            **values,
        }
    )
    assert conversion_of(fixture) == Conversion(kind, new_feed=True)


def test_commissioning_checks_name_the_charge_time() -> None:
    checks = commissioning_checks(180, 15.2)
    assert checks[0].startswith("Charge indicator on")
    assert checks[1].startswith("Function test")
    assert "after 16 h on charge (computed 15.2 h): 180 min needed" in checks[2]
    assert "24 h on charge (recharge time not computed)" in commissioning_checks(90, None)[2]


@pytest.mark.parametrize("level", ["L", "M", "Q", "H"])
@pytest.mark.parametrize(
    "text",
    [
        "http://127.0.0.1:8000/fixtures/9b4b2b7f-b4d6-41ef-abd6-383ede2b98ee",
        "https://planner.example.org/fixtures/" + "0123456789abcdef" * 8,  # several blocks
        "http://x.test/\u00e9",
    ],
)
def test_fast_qr_matches_reportlabs_encoder(text: str, level: str) -> None:
    """Reference: reportlab's own encoder (ISO/IEC 18004) laid out with the same mask."""
    reference = qrencoder.QRCode(None, getattr(qrencoder.QRErrorCorrectLevel, level))
    reference.addData(qrencoder.QR8bitByte(text))
    reference.version = reference.calculate_version()
    reference.makeImpl(False, sketches.QR_MASK)
    assert sketches.qr_modules(text, level) == reference.modules


def test_qr_widget_draws_one_path_inside_its_box() -> None:
    widget = sketches.FixtureQr("http://127.0.0.1:8000/fixtures/x", barWidth=48, barHeight=48)
    group = widget.draw()
    (path,) = group.contents
    xs, ys = path.points[0::2], path.points[1::2]
    assert min(xs) >= 0 and max(xs) <= 48 and min(ys) >= 0 and max(ys) <= 48
    assert path.operators.count(3) >= 50  # one closed rectangle per run of dark modules


def test_qr_bitmap_is_the_module_matrix_with_its_border() -> None:
    url = "http://127.0.0.1:8000/fixtures/x"
    modules = sketches.qr_modules(url)
    image = sketches.FixtureQr(url, barBorder=2).bitmap()
    side = len(modules) + 4
    assert image.size == (side, side) and image.mode == "1"
    pixels = [image.getpixel((i % side, i // side)) for i in range(side * side)]
    for r, row in enumerate(modules):
        for c, dark in enumerate(row):
            assert (pixels[(r + 2) * side + c + 2] == 0) is dark
    assert all(pixels[i] for i in range(2 * side))  # the quiet zone is white


def test_dark_rects_cover_exactly_the_dark_modules() -> None:
    modules = sketches.qr_modules("http://127.0.0.1:8000/fixtures/y")
    covered = [[False] * len(modules) for _ in modules]
    for column, row, width, height in sketches.dark_rects(modules):
        for r in range(row, row + height):
            for c in range(column, column + width):
                assert not covered[r][c]
                covered[r][c] = True
    assert covered == modules
