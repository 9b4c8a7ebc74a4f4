"""Speed and memory of a 1,000-fixture work order PDF, beside plain reportlab.

The budget: the crew's PDF of a 1,000-fixture order (cautions, sketches, a
row with notes, checks and a QR code per fixture, sign-off, pack labels)
renders in under 3 s and under 300 MB. Beside it runs a floor measured in
the same run: plain reportlab drawing the same rows' texts straight onto a
canvas (no tables, no wrapping, no QR codes), so a slow machine shows in
both numbers; the ratio says what our layout costs over the bare library.
A second row reads the same size of order back from a temporary SQLite
database (issued from an accepted quote through the services) and renders
it as the PDF route does; the budget holds for both. Each render runs
several times and the fastest counts (slower runs measure the neighbours);
memory is the tracemalloc peak of one more run, with the process's maximum
resident size beside it.

Run with ``python -m bench.bench_workorder_pdf`` from the repo root.
"""

from __future__ import annotations

import resource
import sys
import tempfile
import time
import tracemalloc
from collections.abc import Callable
from datetime import date
from decimal import Decimal
from io import BytesIO
from pathlib import Path

from pypdf import PdfReader
from reportlab.lib.pagesizes import A4
from reportlab.pdfgen.canvas import Canvas

from server import migrate
from server.accounts import service as accounts
from server.accounts.models import Role, User
from server.catalogue.models import BatteryPack, EmergencyModule
from server.config import Mode, Settings
from server.db import make_engine, make_session_factory
from server.pdf import FONT_CONDENSED, MARGIN_PT
from server.proposals.models import Proposal
from server.quotes import service as quotes
from server.quotes.schemas import QuoteCreate
from server.sites.models import Area, Building, Fixture
from server.workorders import schemas
from server.workorders import service as workorders
from server.workorders.documents import work_order_pdf
from server.workorders.service import (
    AreaBlock,
    FixtureRow,
    PackLabel,
    WorkOrderSheet,
    commissioning_checks,
    conversion_of,
    replace_by,
    wiring_notes,
)

FIXTURES = 1_000
PER_AREA = 25
BUDGET_S = 3.0
BUDGET_MB = 300.0
REPEATS = 3
MODULE = EmergencyModule(name="Bench inverter 7 W", changeover="both-ends", max_lamps=1)
WIRINGS = [("single", 1, True), ("series", 2, False), ("parallel", 2, True), ("single", 1, False)]
BALLASTS = ["electronic-programmed-start"] * 3 + ["magnetic-glow-starter"]


def _fixture(i: int) -> Fixture:
    wiring, lamps, supply = WIRINGS[i % len(WIRINGS)]
    return Fixture(
        id=f"00000000-0000-4000-8000-{i:012d}",
        tag=f"F-{i:04d}",
        location=f"Corridor bay {i % 40 + 1}, over door {i % 7 + 1}",
        lamp_type="T8",
        lamp_w=36.0,
        lamp_count=lamps,
        lamps_to_back_up=1,
        ballast=BALLASTS[i // 5 % len(BALLASTS)],
        wiring=wiring,
        unswitched_supply=supply,
        existing_kit=i % 9 == 0,
        accessible=i % 31 != 0,
        ambient_c=25.0,
    )


def sheet(count: int = FIXTURES) -> WorkOrderSheet:
    """An invented order of ``count`` fixtures, 25 to an area."""
    fixtures = [_fixture(i) for i in range(count)]
    kinds = sorted({conversion_of(f) for f in fixtures})
    numbers = {kind: n for n, kind in enumerate(kinds, start=1)}
    checks = commissioning_checks(90.0, 18.1)
    installed = date(2027, 3, 1)
    areas = []
    for start in range(0, count, PER_AREA):
        rows = [
            FixtureRow(
                tag=f.tag,
                location=f.location,
                now=f"{f.lamp_count} x T8 36 W, {f.wiring}; {f.ballast} ballast",
                fit="Bench inverter 7 W + Bench NiCd 4.8 V 2.2 Ah (NiCd, 4 cells, 4.8 V, 2.2 Ah)",
                wiring_notes=wiring_notes(f, MODULE, []),
                checks=checks,
                sketch_number=numbers[conversion_of(f)],
                page_url=f"http://127.0.0.1:8000/fixtures/{f.id}",
                status="open",
                result="",
            )
            for f in fixtures[start : start + PER_AREA]
        ]
        areas.append(
            AreaBlock(
                title=f"Area {start // PER_AREA + 1} (Level 1)",
                required_duration_min=90.0,
                rows=rows,
            )
        )
    return WorkOrderSheet(
        number="WO-2027-0001",
        quote_number="Q-2027-0001",
        building_name="Bench tower",
        building_address="1 Invented Road",
        firm_name="Bench Contractors",
        paper_size="A4",
        crew="Crew 1",
        scheduled_on=installed,
        crew_notes="Keys at reception.",
        issued_by="supervisor@bench.test",
        issued_on=installed,
        areas=areas,
        conversions=[(n, kind) for kind, n in numbers.items()],
        labels=[
            PackLabel(
                tag=f.tag,
                pack="Bench NiCd 4.8 V 2.2 Ah",
                installed_on=installed,
                planned=True,
                replace_by=replace_by(installed, 4.0),
                life_years=4.0,
            )
            for f in fixtures
        ],
        progress=schemas.Progress(total=count, open=count, done=0, problem=0),
    )


def plain_reportlab(order: WorkOrderSheet) -> bytes:
    """The floor: the same rows' texts drawn line by line on a bare canvas."""
    buffer = BytesIO()
    canvas = Canvas(buffer, pagesize=A4)
    width, height = A4
    y = height - MARGIN_PT
    for block in order.areas:
        for row in block.rows:
            lines = [f"{row.tag}  {row.location}", row.now, row.fit, *row.wiring_notes, *row.checks]
            if y - 9 * len(lines) < MARGIN_PT:
                canvas.showPage()
                y = height - MARGIN_PT
            canvas.setFont(FONT_CONDENSED, 7.5)
            for line in lines:
                canvas.drawString(MARGIN_PT, y, line[:140])
                y -= 9
            y -= 4
    canvas.save()
    return buffer.getvalue()


def fastest(render: Callable[[], bytes]) -> tuple[float, float, bytes]:
    """The fastest wall and CPU seconds of ``REPEATS`` runs, and the last output."""
    best_wall = best_cpu = float("inf")
    output = b""
    for _ in range(REPEATS):
        wall, cpu = time.perf_counter(), time.process_time()
        output = render()
        best_wall = min(best_wall, time.perf_counter() - wall)
        best_cpu = min(best_cpu, time.process_time() - cpu)
    return best_wall, best_cpu, output


def peak_mb(render: Callable[[], bytes]) -> float:
    tracemalloc.start()
    render()
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return peak / 1e6


def through_the_service(count: int = FIXTURES) -> Callable[[], bytes]:
    """The same size of order stored in a temporary SQLite database, issued from an
    accepted quote; the returned call reads it back and renders it as the PDF route does."""
    folder = Path(tempfile.mkdtemp(prefix="bench-workorder-"))
    url = f"sqlite:///{folder / 'bench.sqlite3'}"
    migrate.upgrade(url)
    engine = make_engine(url)
    factory = make_session_factory(engine)
    with factory() as session:
        org = accounts.get_or_create_org(session=session, name="Bench Contractors")
        user = accounts.create_user(
            session=session,
            org=org,
            email="supervisor@bench.test",
            password="bench password 1",
            role=Role.SUPERVISOR,
        )
        building = Building(org_id=org.id, name="Bench tower")
        module = EmergencyModule(
            org_id=org.id,
            name="Bench inverter 7 W",
            battery_w=7.0,
            chemistry="NiCd",
            cells=4,
            charge_a=0.17,
            lamp_types=["T8"],
            lamp_w_min=14,
            lamp_w_max=58,
            ballasts=list(BALLASTS),
            price=Decimal("80.00"),
            labour_h=1.0,
        )
        pack = BatteryPack(
            org_id=org.id,
            name="Bench NiCd 4.8 V 2.2 Ah",
            chemistry="NiCd",
            cells=4,
            capacity_ah=2.2,
            price=Decimal("30.00"),
        )
        session.add_all([building, module, pack])
        session.flush()
        for start in range(0, count, PER_AREA):
            area = Area(
                org_id=org.id,
                building_id=building.id,
                name=f"Area {start // PER_AREA}",
                kind="escape-route",
            )
            session.add(area)
            session.flush()
            fixtures = [_fixture(i) for i in range(start, min(start + PER_AREA, count))]
            for fixture in fixtures:
                fixture.org_id, fixture.area_id = org.id, area.id
            session.add_all(fixtures)
            session.flush()  # the proposals point at the fixtures
            session.add_all(
                Proposal(
                    org_id=org.id,
                    fixture_id=fixture.id,
                    module_id=module.id,
                    pack_id=pack.id,
                    status="accepted",
                    verdict="pass",
                    findings=[],
                )
                for fixture in fixtures
            )
        session.commit()
        quote, _ = quotes.create_quote(
            session=session, user=user, building_id=building.id, body=QuoteCreate()
        )
        quote.state = "accepted"
        session.commit()
        order, _ = workorders.issue(session=session, user=user, quote_id=quote.id)
        order_id = order.id
    settings = Settings(mode=Mode.TEST, database_url=url, secret_key="bench")

    def render() -> bytes:
        with factory() as session:
            reader = session.get(User, user.id)
            assert reader is not None
            stored = workorders.get_work_order(session=session, user=reader, work_order_id=order_id)
            return work_order_pdf(
                workorders.work_order_sheet(
                    session=session, user=reader, order=stored, settings=settings
                )
            )

    return render


def main() -> int:
    order = sheet()
    service_wall, service_cpu, service_bytes = fastest(through_the_service())
    ours_wall, ours_cpu, pdf_bytes = fastest(lambda: work_order_pdf(order))
    floor_wall, floor_cpu, floor_bytes = fastest(lambda: plain_reportlab(order))
    ours_mb = peak_mb(lambda: work_order_pdf(order))
    floor_mb = peak_mb(lambda: plain_reportlab(order))
    max_rss_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    pages = len(PdfReader(BytesIO(pdf_bytes)).pages)
    print(f"work order of {FIXTURES} fixtures, fastest of {REPEATS} runs")
    print(f"{'':24}{'wall s':>9}{'cpu s':>9}{'peak MB':>10}{'PDF kB':>9}")
    print(
        f"{'planner work order':24}{ours_wall:9.2f}{ours_cpu:9.2f}{ours_mb:10.1f}"
        f"{len(pdf_bytes) / 1e3:9.0f}"
    )
    print(
        f"{'  read from the database':24}{service_wall:9.2f}{service_cpu:9.2f}{'':>10}"
        f"{len(service_bytes) / 1e3:9.0f}"
    )
    print(
        f"{'plain reportlab floor':24}{floor_wall:9.2f}{floor_cpu:9.2f}{floor_mb:10.1f}"
        f"{len(floor_bytes) / 1e3:9.0f}"
    )
    print(
        f"ratio (ours / floor): {ours_cpu / floor_cpu:.1f}x CPU; pages about {pages}; "
        f"process max RSS {max_rss_mb:.0f} MB"
    )
    within = max(ours_cpu, service_cpu) < BUDGET_S and ours_mb < BUDGET_MB
    print(f"budget {BUDGET_S:g} s and {BUDGET_MB:g} MB: {'met' if within else 'MISSED'}")
    return 0 if within else 1


if __name__ == "__main__":
    sys.exit(main())
