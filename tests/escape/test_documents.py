"""The route plot for PDFs: one point per sample, the required levels, the darkest point,
and a PDF that carries it.

Check values: a single cosine emitter of 1000 lm at 2.5 m over the middle of a
10 m route gives, straight below it, E = 0.8 x (1000 / pi) / 2.5**2 = 40.74 lx
(inverse-square cosine law with Lambert's law, IES definitions; maintenance
factor 0.8, common practice); the levels are those of
server/engineering/profiles.py (EN 1838:2013 §4.2, NFPA 101 §7.9.2.1).
"""

from __future__ import annotations

import io
import math
from collections.abc import Callable

import pytest
from fastapi.testclient import TestClient
from pypdf import PdfReader
from reportlab.graphics.shapes import Circle, Drawing, Line, PolyLine, String

from server import pdf
from server.engineering.profiles import BUILTIN_PROFILES
from server.engineering.routes import Luminaire, Route, evaluate_route
from server.escape import documents
from server.escape.service import RoutePlotView, plot_view
from tests.escape.test_pages import corridor, route_path, save
from tests.live_server import ROOT
from tests.pages import parse
from tests.planner_data import catalogue

ARTIFACTS = ROOT / "test-artifacts" / "pdf"


def _view(profile_id: str = "eu-escape-route") -> RoutePlotView:
    profile = BUILTIN_PROFILES[profile_id]
    result = evaluate_route(
        Route(((0.0, 0.0), (10.0, 0.0)), 1.0),
        [Luminaire(x_m=5.0, y_m=0.0, mounting_height_m=2.5, emergency_flux_lm=1000.0)],
        profile,
    )
    return plot_view(result, profile, "Corridor <1> & stairs")


def _shapes(drawing: Drawing, kind: type) -> list:
    return [shape for shape in drawing.contents if isinstance(shape, kind)]


def test_the_plot_has_a_point_per_sample_and_the_levels() -> None:
    view = _view()
    assert max(view.lux) == pytest.approx(0.8 * 1000 / math.pi / 2.5**2, rel=1e-6)
    drawing = documents.route_plot_drawing(view)
    (curve,) = _shapes(drawing, PolyLine)
    assert len(curve.points) == 2 * len(view.s_m) == 2 * 101  # 10 m every 0.1 m, both ends
    labels = [shape.text for shape in _shapes(drawing, String)]
    assert "minimum 1 lx" in labels
    assert not any(label.startswith("average") for label in labels)
    # At either end, 5 m from the emitter: 0.8 x (1000 / pi) x 2.5**2 / (2.5**2 + 5**2)**2
    # = 1.63 lx (cosine law for a cosine emitter, I = I0 cos(theta)).
    assert "darkest 1.63 lx at 0.0 m" in labels
    (worst,) = _shapes(drawing, Circle)
    # The darkest point is an end of the route, the left one here (s = 0 sorts first).
    assert worst.cx == pytest.approx(documents.MARGIN_PT["left"])
    dashed = [line for line in _shapes(drawing, Line) if line.strokeDashArray]
    assert len(dashed) == 1


def test_the_us_profile_draws_the_average_too() -> None:
    drawing = documents.route_plot_drawing(_view("us-egress"))
    labels = [shape.text for shape in _shapes(drawing, String)]
    assert "minimum 1.08 lx" in labels and "average 10.8 lx" in labels
    assert len([line for line in _shapes(drawing, Line) if line.strokeDashArray]) == 2


def test_peaks_above_the_scale_are_drawn_at_its_top() -> None:
    view = _view()
    assert view.clipped and view.top_lux == pytest.approx(10.0)  # ten times the 1 lx minimum
    drawing = documents.route_plot_drawing(view, height_pt=200)
    (curve,) = _shapes(drawing, PolyLine)
    top = 200 - documents.MARGIN_PT["top"]
    assert max(curve.points[1::2]) == pytest.approx(top)


def test_a_pdf_carries_the_plot_with_its_figures() -> None:
    frame = pdf.PageFrame(
        title="Route", reference="R-1", building="Block", organisation="Firm", paper_size="A4"
    )
    story = documents.route_plot_flowables(_view(), frame.content_width_pt)
    text = "".join(
        page.extract_text() for page in PdfReader(io.BytesIO(pdf.build_pdf(story, frame))).pages
    )
    assert "Corridor <1> & stairs" in text  # user text printed as typed
    assert "darkest" in text and "minimum 1 lx" in text
    assert "qualified person" in " ".join(text.split())


def test_the_work_order_prints_the_route_plot_of_each_area_with_a_route(
    client_as: Callable[..., TestClient],
) -> None:
    estimator, supervisor = client_as("estimator"), client_as("supervisor")
    catalogue(estimator)
    made = corridor(estimator)
    save(estimator, made["area"])
    planned = parse(estimator.post(route_path(made["area"]) + "/plan").text)
    chosen = [element.attrs["value"] for element in planned.find_all("input", name="chosen")]
    estimator.post(route_path(made["area"]) + "/plan/accept", data={"chosen": chosen})
    quote = estimator.post(f"/api/v1/buildings/{made['building']['id']}/quotes", json={})
    assert quote.status_code == 201, quote.text
    transitions = f"/api/v1/quotes/{quote.json()['id']}/transitions"
    assert estimator.post(transitions, json={"to": "sent"}).status_code == 200
    assert supervisor.post(transitions, json={"to": "accepted"}).status_code == 200
    order = supervisor.post(f"/api/v1/quotes/{quote.json()['id']}/work-order", json={})
    assert order.status_code == 201, order.text
    answer = supervisor.get(f"/api/v1/work-orders/{order.json()['id']}/pdf")
    assert answer.status_code == 200
    text = " ".join(
        " ".join(page.extract_text().split())
        for page in PdfReader(io.BytesIO(answer.content)).pages
    )
    assert "Emergency light along the route of Corridor R" in text
    assert "minimum 1 lx" in text and "verdict pass" in text
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    (ARTIFACTS / "work-order-with-route.pdf").write_bytes(answer.content)
