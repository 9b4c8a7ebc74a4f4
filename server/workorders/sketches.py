"""Small wiring sketches of each kind of conversion, drawn with reportlab graphics.

Our own drawing style: the lighting circuit on the left (live and neutral
bars), the local switch on the switched live, the existing ballast at the
top, the emergency module below it with its changeover drawn as a two-way
contact, the pack under the module, and the lamps on the right: the lamp
that runs in emergency in warm yellow, a lamp that stays dark in grey with
a dashed outline. A new unswitched feed is drawn dashed and marked NEW.

A sketch explains the idea to the crew; the module maker's diagram decides
the terminals.
"""

from __future__ import annotations

import itertools
from functools import lru_cache

from PIL import Image
from reportlab.graphics.barcode import qrencoder
from reportlab.graphics.barcode.qr import QrCodeWidget
from reportlab.graphics.shapes import Circle, Drawing, Group, Line, Path, PolyLine, Rect, String
from reportlab.lib import colors

from server.pdf import FONT_CONDENSED, FONT_CONDENSED_BOLD
from server.workorders.service import Conversion, ConversionKind

WIDTH_PT = 255.0
HEIGHT_PT = 150.0

WIRE = colors.HexColor("#1d2430")
LIVE = colors.HexColor("#a4341b")
NEW_FEED = colors.HexColor("#0b6e99")
NEUTRAL = colors.HexColor("#2b59c3")
LIT = colors.HexColor("#ffd54a")
DARK = colors.HexColor("#d5d9de")
BOX = colors.HexColor("#eef1f5")
MODULE_FILL = colors.HexColor("#e4f1e6")
MUTED = colors.HexColor("#5a6472")

# Where things sit (points, origin bottom left).
BUS_L_X, BUS_N_X = 10.0, 22.0
BALLAST = (78.0, 104.0, 56.0, 26.0)  # x, y, width, height
MODULE = (78.0, 38.0, 70.0, 40.0)
LAMP_X, LAMP_W, LAMP_H = 172.0, 74.0, 10.0
LAMP_1_Y, LAMP_2_Y = 95.0, 122.0  # lamp 1 (runs in emergency) below lamp 2 (dark)


def _text(
    x: float,
    y: float,
    text: str,
    *,
    size: float = 6.0,
    bold: bool = False,
    color: colors.Color = WIRE,
    anchor: str = "start",
) -> String:
    return String(
        x,
        y,
        text,
        fontName=FONT_CONDENSED_BOLD if bold else FONT_CONDENSED,
        fontSize=size,
        fillColor=color,
        textAnchor=anchor,
    )


def _wire(
    points: list[float], *, color: colors.Color = WIRE, dashed: bool = False, width: float = 0.9
) -> PolyLine:
    return PolyLine(
        points,
        strokeColor=color,
        strokeWidth=width,
        strokeDashArray=[3, 2] if dashed else None,
        fillColor=None,
    )


def _box(
    rect: tuple[float, float, float, float], fill: colors.Color, title: str, subtitle: str = ""
) -> Group:
    x, y, w, h = rect
    group = Group(Rect(x, y, w, h, rx=2, ry=2, fillColor=fill, strokeColor=WIRE, strokeWidth=0.8))
    group.add(_text(x + 4, y + h - 9, title, bold=True, size=6.2))
    if subtitle:
        group.add(_text(x + 4, y + h - 17, subtitle, color=MUTED, size=5.5))
    return group


def _lamp(y: float, *, lit: bool, label: str) -> Group:
    group = Group(
        Rect(
            LAMP_X,
            y,
            LAMP_W,
            LAMP_H,
            rx=4,
            ry=4,
            fillColor=LIT if lit else DARK,
            strokeColor=WIRE if lit else MUTED,
            strokeWidth=0.8,
            strokeDashArray=None if lit else [2, 1.5],
        )
    )
    for end_x in (LAMP_X - 3, LAMP_X + LAMP_W):
        for dy in (2.0, LAMP_H - 3.0):
            group.add(Rect(end_x, y + dy, 3, 1.2, fillColor=WIRE, strokeColor=None))
    group.add(
        _text(
            LAMP_X + LAMP_W / 2,
            y + 3.3,
            label,
            anchor="middle",
            size=5.0,
            bold=lit,
            color=WIRE if lit else MUTED,
        )
    )
    return group


def _changeover(x: float, y: float) -> Group:
    """A two-way contact: common on the lamp side, ballast above, module below."""
    group = Group(
        Circle(x, y, 1.4, fillColor=WIRE, strokeColor=None),
        Circle(x - 10, y + 6, 1.4, fillColor=None, strokeColor=WIRE, strokeWidth=0.7),
        Circle(x - 10, y - 6, 1.4, fillColor=None, strokeColor=WIRE, strokeWidth=0.7),
        Line(x, y, x - 9, y - 5.2, strokeColor=WIRE, strokeWidth=1),
    )
    group.add(_text(x - 13, y + 6, "mains", size=4.8, color=MUTED, anchor="end"))
    group.add(_text(x - 13, y - 10, "emergency", size=4.8, color=MUTED, anchor="end"))
    return group


def _pack(x: float, y: float) -> Group:
    group = Group()
    for i in range(4):
        cx = x + i * 7
        group.add(Line(cx, y - 5, cx, y + 5, strokeColor=WIRE, strokeWidth=1))
        group.add(Line(cx + 3, y - 2.5, cx + 3, y + 2.5, strokeColor=WIRE, strokeWidth=2))
    group.add(_text(x + 32, y - 2, "pack (unplug before work)", size=5.5))
    return group


def sketch(conversion: Conversion) -> Drawing:
    """The sketch of one kind of conversion, ``WIDTH_PT`` x ``HEIGHT_PT``."""
    drawing = Drawing(WIDTH_PT, HEIGHT_PT)
    kind = conversion.kind

    # The lighting circuit: live and neutral bars.
    drawing.add(Line(BUS_L_X, 20, BUS_L_X, 136, strokeColor=LIVE, strokeWidth=1.6))
    drawing.add(Line(BUS_N_X, 20, BUS_N_X, 136, strokeColor=NEUTRAL, strokeWidth=1.6))
    drawing.add(_text(BUS_L_X, 140, "L", bold=True, color=LIVE, anchor="middle"))
    drawing.add(_text(BUS_N_X, 140, "N", bold=True, color=NEUTRAL, anchor="middle"))
    drawing.add(_text(4, 8, "area's lighting circuit", size=5.5, color=MUTED))

    # Switched live through the local switch to the ballast.
    sw_y = 122.0
    drawing.add(_wire([BUS_L_X, sw_y, 34, sw_y], color=LIVE))
    drawing.add(Line(34, sw_y, 46, sw_y + 6, strokeColor=LIVE, strokeWidth=1.1))
    drawing.add(Circle(34, sw_y, 1.3, fillColor=LIVE, strokeColor=None))
    drawing.add(Circle(47, sw_y, 1.3, fillColor=None, strokeColor=LIVE, strokeWidth=0.7))
    drawing.add(_wire([47, sw_y, BALLAST[0], sw_y], color=LIVE))
    drawing.add(_text(40, sw_y + 9, "switch", size=5.5, anchor="middle", color=MUTED))
    drawing.add(_text(50, sw_y - 7, "switched L", size=5.5, color=LIVE))
    drawing.add(_wire([BUS_N_X, 110, BALLAST[0], 110], color=NEUTRAL))

    # Unswitched live, taken ahead of the switch, to the module's charger.
    un_y = 66.0
    new = conversion.new_feed
    feed_colour = NEW_FEED if new else LIVE
    drawing.add(_wire([BUS_L_X, un_y, MODULE[0], un_y], color=feed_colour, dashed=new))
    drawing.add(_text(28, un_y + 3, "unswitched L", size=5.5, color=feed_colour))
    if new:
        drawing.add(_text(28, un_y - 8, "NEW feed", size=5.5, bold=True, color=NEW_FEED))
    drawing.add(_wire([BUS_N_X, 48, MODULE[0], 48], color=NEUTRAL))

    drawing.add(_box(BALLAST, BOX, "Existing ballast", "stays in circuit"))
    drawing.add(_box(MODULE, MODULE_FILL, "Emergency module", "charger + inverter"))
    drawing.add(_pack(MODULE[0] + 6, 22))
    drawing.add(
        _wire(
            [
                MODULE[0] + 3,
                22,
                MODULE[0] - 4,
                22,
                MODULE[0] - 4,
                MODULE[1] + 6,
                MODULE[0],
                MODULE[1] + 6,
            ]
        )
    )

    # The changeover beside the module switches lamp 1 between ballast and module.
    lamp_1_mid = LAMP_1_Y + LAMP_H / 2
    co_x, co_y = MODULE[0] + MODULE[2] + 12, lamp_1_mid
    drawing.add(_changeover(co_x, co_y))
    ballast_out = BALLAST[0] + BALLAST[2]
    drawing.add(_wire([ballast_out, 110, co_x - 10, 110, co_x - 10, co_y + 6]))
    module_out = MODULE[0] + MODULE[2]
    drawing.add(_wire([module_out, 60, co_x - 10, 60, co_x - 10, co_y - 6]))
    # Common contact to lamp 1, at both ends.
    far_x = LAMP_X + LAMP_W + 6
    drawing.add(_wire([co_x, co_y, LAMP_X - 3, co_y]))
    drawing.add(
        _wire(
            [
                co_x + 5,
                co_y,
                co_x + 5,
                LAMP_1_Y - 5,
                far_x,
                LAMP_1_Y - 5,
                far_x,
                lamp_1_mid,
                LAMP_X + LAMP_W + 3,
                lamp_1_mid,
            ]
        )
    )
    drawing.add(Circle(co_x + 5, co_y, 1.1, fillColor=WIRE, strokeColor=None))
    drawing.add(
        _text(far_x, LAMP_1_Y - 12, "both ends switched", size=5, color=MUTED, anchor="end")
    )
    drawing.add(_lamp(LAMP_1_Y, lit=True, label="lamp 1 \u00b7 runs in emergency"))

    if kind in (ConversionKind.SERIES, ConversionKind.PARALLEL):
        drawing.add(_lamp(LAMP_2_Y, lit=False, label="lamp 2 \u00b7 dark in emergency"))
        lamp_2_mid = LAMP_2_Y + LAMP_H / 2
        drawing.add(_wire([ballast_out, lamp_2_mid, LAMP_X - 3, lamp_2_mid], color=MUTED))
    if kind is ConversionKind.SERIES:
        # The link between the lamps, cut.
        link_x = LAMP_X + LAMP_W - 12
        drawing.add(_wire([link_x, LAMP_1_Y + LAMP_H, link_x, LAMP_2_Y], color=MUTED, dashed=True))
        mid = (LAMP_1_Y + LAMP_H + LAMP_2_Y) / 2
        for dx in (-3, 3):
            drawing.add(
                Line(link_x - 3, mid - dx, link_x + 3, mid + dx, strokeColor=LIVE, strokeWidth=1.3)
            )
        drawing.add(
            _text(link_x - 6, mid - 2, "series link broken", size=5.5, color=LIVE, anchor="end")
        )
    if kind is ConversionKind.GLOW_STARTER:
        starter_x, starter_y = LAMP_X + 10, LAMP_1_Y - 22
        drawing.add(_wire([LAMP_X + 4, LAMP_1_Y, starter_x, starter_y + 5], color=MUTED))
        drawing.add(
            Circle(
                starter_x, starter_y, 5, fillColor=colors.white, strokeColor=WIRE, strokeWidth=0.8
            )
        )
        drawing.add(_text(starter_x, starter_y - 2, "S", bold=True, anchor="middle"))
        drawing.add(_text(starter_x + 8, starter_y + 1, "starter: isolated", size=5.5, color=LIVE))
        drawing.add(_text(starter_x + 8, starter_y - 6, "in emergency", size=5.5, color=LIVE))
    return drawing


# --- QR codes -----------------------------------------------------------------

QR_MASK = 2
"""The mask pattern every fixture code uses. The standard lets an encoder use any
of the eight; choosing the best by its penalty score costs eight layouts per
code, which a 1,000-fixture order cannot afford. Pattern 2 (columns) is a
plain choice that scans well on printed labels."""


@lru_cache(maxsize=64)
def _generator_logs(ec_count: int) -> tuple[int, ...]:
    """log(alpha) of the coefficients of prod(x - alpha^i), i < ec_count, highest first."""
    exp, log = qrencoder.EXP_TABLE, qrencoder.LOG_TABLE
    poly = [1]
    for i in range(ec_count):
        factor = exp[i]
        nxt = poly + [0]
        for j, coefficient in enumerate(poly):
            if coefficient:
                nxt[j + 1] ^= exp[(log[coefficient] + log[factor]) % 255]
        poly = nxt
    return tuple(log[c] for c in poly[1:])


@lru_cache(maxsize=64)
def _multiples(ec_count: int) -> tuple[int, ...]:
    """For each byte f, f x the generator polynomial, packed big-endian into one int."""
    exp, log = qrencoder.EXP_TABLE, qrencoder.LOG_TABLE
    generator = _generator_logs(ec_count)
    table = [0]
    for factor in range(1, 256):
        coefficients = bytes(exp[(log[factor] + g) % 255] for g in generator)
        table.append(int.from_bytes(coefficients, "big"))
    return tuple(table)


def _remainder(data: list[int], ec_count: int) -> list[int]:
    """Reed-Solomon check bytes of one block (GF(256), polynomial 0x11d)."""
    table = _multiples(ec_count)
    top_shift = 8 * (ec_count - 1)
    keep = (1 << (8 * ec_count)) - 1
    rest = 0
    for byte in data:
        factor = byte ^ (rest >> top_shift)
        rest = ((rest << 8) & keep) ^ table[factor]
    return list(rest.to_bytes(ec_count, "big"))


def _codewords(qr: qrencoder.QRCode, payload: bytes) -> list[int]:
    """The interleaved data and check codewords of a byte-mode code."""
    blocks = qrencoder.QRRSBlock.getRSBlocks(qr.version, qr.errorCorrectLevel)
    capacity = sum(block.dataCount for block in blocks)
    count_bits = 8 if qr.version < 10 else 16
    bits = "0100" + format(len(payload), f"0{count_bits}b")
    bits += "".join(format(byte, "08b") for byte in payload)
    bits += "0" * min(4, capacity * 8 - len(bits))
    bits += "0" * (-len(bits) % 8)
    data = [int(bits[i : i + 8], 2) for i in range(0, len(bits), 8)]
    data += [(0xEC, 0x11)[i % 2] for i in range(capacity - len(data))]
    data_blocks, check_blocks, offset = [], [], 0
    for block in blocks:
        chunk = data[offset : offset + block.dataCount]
        offset += block.dataCount
        data_blocks.append(chunk)
        check_blocks.append(_remainder(chunk, block.totalCount - block.dataCount))
    return [
        byte
        for group in (data_blocks, check_blocks)
        for column in itertools.zip_longest(*group)
        for byte in column
        if byte is not None
    ]


@lru_cache(maxsize=32)
def _layout(version: int, level: int) -> tuple[list[list[bool]], list[tuple[int, int, bool]]]:
    """The function patterns of a code, and where each data bit goes with its mask bit."""
    qr = qrencoder.QRCode(version, level)
    qr.moduleCount = count = version * 4 + 17
    qr.modules = [[False] * count for _ in range(count)]
    qr.setupPositionProbePattern(0, 0)
    qr.setupPositionProbePattern(count - 7, 0)
    qr.setupPositionProbePattern(0, count - 7)
    qr.setupPositionAdjustPattern()
    qr.setupTimingPattern()
    qr.setupTypeInfo(False, QR_MASK)
    if version >= 7:
        qr.setupTypeNumber(False)
    mask = qrencoder.QRUtil.getMask(QR_MASK)
    places = [(row, col, bool(mask(row, col))) for col, row in qr._dataPosIterator()]
    return qr.modules, places


def qr_modules(text: str, level: str = "L") -> list[list[bool]]:
    """The module matrix of ``text`` as a byte-mode QR code with mask :data:`QR_MASK`."""
    payload = text.encode("utf-8")
    qr = qrencoder.QRCode(None, getattr(qrencoder.QRErrorCorrectLevel, level))
    qr.addData(qrencoder.QR8bitByte(text))
    qr.version = qr.calculate_version()
    template, places = _layout(qr.version, qr.errorCorrectLevel)
    modules = [row[:] for row in template]
    bits = [
        (byte >> shift) & 1 == 1 for byte in _codewords(qr, payload) for shift in range(7, -1, -1)
    ]
    bits += [False] * (len(places) - len(bits))
    for (row, col, masked), bit in zip(places, bits, strict=False):
        modules[row][col] = bit ^ masked
    return modules


def dark_rects(modules: list[list[bool]]) -> list[tuple[int, int, int, int]]:
    """The dark modules as few rectangles (column, row, width, height), in module units
    from the top left: runs along each row, stacked where the same run repeats below."""
    open_runs: dict[tuple[int, int], tuple[int, int]] = {}  # (column, width) -> (row, height)
    rects = []
    for r, row in enumerate(modules):
        runs = set()
        column = 0
        for dark, run in itertools.groupby(row):
            length = len(list(run))
            if dark:
                runs.add((column, length))
            column += length
        for key in list(open_runs):
            if key not in runs:
                start, height = open_runs.pop(key)
                rects.append((key[0], start, key[1], height))
        for key in runs:
            start, height = open_runs.get(key, (r, 0))
            open_runs[key] = (start, height + 1)
    rects += [(key[0], start, key[1], height) for key, (start, height) in open_runs.items()]
    return rects


class FixtureQr(QrCodeWidget):
    """A QrCodeWidget that lays out fast enough for a thousand on one order: one
    fixed mask, cached layouts and check polynomials, and the dark modules drawn
    as one path of merged rectangles instead of a rectangle each. The text is
    always byte-mode.
    """

    def rects(self) -> tuple[float, list[tuple[float, float, float, float]]]:
        """The module size and the dark rectangles (x, y, width, height) in points."""
        modules = qr_modules(str(self.value), self.barLevel)
        size = float(min(self.barWidth, self.barHeight))
        box = size / (len(modules) + self.barBorder * 2.0)
        top = self.y + size - self.barBorder * box
        left = self.x + self.barBorder * box
        return box, [
            (left + c * box, top - (r + h) * box, w * box, h * box)
            for c, r, w, h in dark_rects(modules)
        ]

    def bitmap(self) -> Image.Image:
        """The code as a one-bit image, a pixel per module with the quiet border: drawn
        scaled up, it prints as sharp as the vector form and costs a fraction of it."""
        modules = qr_modules(str(self.value), self.barLevel)
        border = int(self.barBorder)
        side = len(modules) + 2 * border
        image = Image.new("1", (side, side), 1)
        blank = [1] * side
        pixels = blank * border
        for row in modules:
            pixels += [1] * border + [0 if dark else 1 for dark in row] + [1] * border
        image.putdata(pixels + blank * border)
        return image

    def draw(self) -> Group:
        points: list[float] = []
        operators: list[int] = []
        for x, y, w, h in self.rects()[1]:
            points += (x, y, x + w, y, x + w, y + h, x, y + h)
            operators += (0, 1, 1, 1, 3)  # move, line, line, line, close
        path = Path(fillColor=self.barFillColor, strokeColor=None, strokeWidth=0)
        # Set past the attribute checker: it would walk all the points once more.
        path.__dict__.update(points=points, operators=operators)
        return Group(path)
