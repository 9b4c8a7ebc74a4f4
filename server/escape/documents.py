"""The route plot for PDFs: illuminance along an escape route as a reportlab Drawing.

The same ready values as the page's SVG plot (:class:`server.escape.service.RoutePlotView`):
the light on the floor along the centre line, the profile's minimum (and average,
for the US profile) as dashed lines, and the darkest point marked.
"""

from __future__ import annotations

from reportlab.graphics.shapes import Circle, Drawing, Line, PolyLine, Rect, String
from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.platypus import Flowable, KeepTogether

from server import pdf
from server.escape.service import RoutePlotView, level_text

PLOT_HEIGHT_PT = 58 * mm
MARGIN_PT = {"left": 34.0, "right": 8.0, "top": 10.0, "bottom": 26.0}
LINE = colors.HexColor("#003f7d")
THRESHOLD = colors.HexColor("#a3001b")
AVERAGE = colors.HexColor("#8a6500")
GRID = colors.HexColor("#e3e7eb")
TICK_PT = 6.5
LABEL_PT = TICK_PT + 0.5


def _label(
    drawing: Drawing, x: float, y: float, text: str, colour: colors.Color, anchor: str
) -> None:
    """A bold label on a white ground, so a curve running behind it does not hide it."""
    width = stringWidth(text, pdf.FONT_CONDENSED_BOLD, LABEL_PT)
    left = {"start": x, "end": x - width}.get(anchor, x - width / 2)
    drawing.add(
        Rect(left - 1.5, y - 2, width + 3, LABEL_PT + 1.5, fillColor=colors.white, strokeColor=None)
    )
    drawing.add(
        String(
            x,
            y,
            text,
            fontName=pdf.FONT_CONDENSED_BOLD,
            fontSize=LABEL_PT,
            fillColor=colour,
            textAnchor=anchor,
        )
    )


def route_plot_drawing(
    view: RoutePlotView, *, width_pt: float = 170 * mm, height_pt: float = PLOT_HEIGHT_PT
) -> Drawing:
    """Illuminance along the route with the required levels and the darkest point.

    Parameters
    ----------
    view : RoutePlotView
        Samples, required levels and the darkest point, from the service.
    width_pt, height_pt : float
        Size of the drawing. [pt]
    """
    drawing = Drawing(width_pt, height_pt)
    left, right = MARGIN_PT["left"], width_pt - MARGIN_PT["right"]
    bottom, top = MARGIN_PT["bottom"], height_pt - MARGIN_PT["top"]
    top_lux, length_m = view.top_lux, max(view.length_m, 1e-9)

    def x_of(s_m: float) -> float:
        return left + (right - left) * s_m / length_m

    def y_of(lux: float) -> float:
        return bottom + (top - bottom) * min(max(lux, 0.0), top_lux) / top_lux

    for index in range(int(top_lux / view.lux_step + 1e-9) + 1):
        y = y_of(index * view.lux_step)
        drawing.add(Line(left, y, right, y, strokeColor=GRID, strokeWidth=0.5))
        drawing.add(
            String(
                left - 3,
                y - 2.2,
                f"{index * view.lux_step:g}",
                fontName=pdf.FONT_CONDENSED,
                fontSize=TICK_PT,
                fillColor=pdf.MUTED,
                textAnchor="end",
            )
        )
    for index in range(int(length_m / view.s_step_m + 1e-9) + 1):
        x = x_of(index * view.s_step_m)
        drawing.add(Line(x, bottom, x, top, strokeColor=GRID, strokeWidth=0.5))
        drawing.add(
            String(
                x,
                bottom - 9,
                f"{index * view.s_step_m:g}",
                fontName=pdf.FONT_CONDENSED,
                fontSize=TICK_PT,
                fillColor=pdf.MUTED,
                textAnchor="middle",
            )
        )
    drawing.add(Line(left, bottom, right, bottom, strokeColor=pdf.INK, strokeWidth=0.8))
    drawing.add(Line(left, bottom, left, top, strokeColor=pdf.INK, strokeWidth=0.8))
    drawing.add(
        String(
            (left + right) / 2,
            3,
            "distance along the route [m]",
            fontName=pdf.FONT_CONDENSED,
            fontSize=TICK_PT + 0.5,
            fillColor=pdf.MUTED,
            textAnchor="middle",
        )
    )
    drawing.add(
        String(
            2,
            top + 2,
            "[lx]",
            fontName=pdf.FONT_CONDENSED,
            fontSize=TICK_PT + 0.5,
            fillColor=pdf.MUTED,
        )
    )
    worst_x, worst_y = x_of(view.worst_s_m), y_of(view.worst_lux)
    on_right = worst_x > (left + right) / 2
    # The levels are named at the end away from the darkest point, whose label sits by it.
    level_x, level_anchor = (left + 3, "start") if on_right else (right - 3, "end")
    levels = [(view.min_lux_required, "minimum", THRESHOLD, [4, 2.5])]
    if view.avg_lux_required is not None:
        levels.append((view.avg_lux_required, "average", AVERAGE, [1.2, 2]))
    for lux, _, colour, dash in levels:
        y = y_of(lux)
        drawing.add(
            Line(left, y, right, y, strokeColor=colour, strokeWidth=1.1, strokeDashArray=dash)
        )
    points: list[float] = []
    for s_m, lux in zip(view.s_m, view.lux, strict=True):
        points += [x_of(s_m), y_of(lux)]
    drawing.add(PolyLine(points, strokeColor=LINE, strokeWidth=1.4, strokeLineJoin=1))
    for lux, name, colour, _ in levels:
        _label(
            drawing, level_x, y_of(lux) + 3, f"{name} {level_text(lux)} lx", colour, level_anchor
        )
    drawing.add(
        Circle(
            worst_x, worst_y, 3.2, strokeColor=THRESHOLD, strokeWidth=1.4, fillColor=colors.white
        )
    )
    _label(
        drawing,
        worst_x - 6 if on_right else worst_x + 6,
        min(worst_y + 6, top - 8),
        f"darkest {view.worst_lux:.2f} lx at {view.worst_s_m:.1f} m",
        THRESHOLD,
        "end" if on_right else "start",
    )
    return drawing


def route_plot_flowables(view: RoutePlotView, width_pt: float) -> list[Flowable]:
    """The plot under a heading with its figures, kept on one page (for the work order)."""
    ratio = (
        "none (a point gets no light)"
        if view.max_min_ratio is None
        else (f"{view.max_min_ratio:.1f}:1")
    )
    figures = (
        f"Minimum {view.min_lux:.2f} lx at {view.worst_s_m:.1f} m, average {view.avg_lux:.2f} lx, "
        f"maximum {view.max_lux:.2f} lx, max:min {ratio}; maintenance factor "
        f"{view.maintenance_factor:g}; verdict {view.verdict}."
        + (f" Peaks above {view.top_lux:.3g} lx are drawn at the top." if view.clipped else "")
        + " Direct light of the converted "
        "fixtures on the floor along the centre line; a design check by a qualified person "
        "under the local codes decides."
    )
    return [
        KeepTogether(
            [
                pdf.para(view.title, "cell_bold"),
                route_plot_drawing(view, width_pt=width_pt),
                pdf.para(figures, "small"),
            ]
        )
    ]
