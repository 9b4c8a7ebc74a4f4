"""The demo scenario: an invented contracting firm, its client's building and a catalogue.

Everything here is made up for trying the planner out: the firm, the
building, the people and every catalogue entry (no real product data). The
figures are plausible for the trade, never check values for the engineering
core. Each record passes the same create schema the JSON API uses, so the
demo never holds data the API would refuse.

Dates of tests are counted back from ``today`` so the maintenance screens
always have something due, overdue and done.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date, timedelta
from decimal import Decimal
from typing import Any

from sqlalchemy import delete, func, select, update
from sqlalchemy.orm import Session

from server.accounts import service as accounts
from server.accounts.models import Organisation, PaperSize, Role, User
from server.catalogue.models import BallastType, BatteryPack, EmergencyModule
from server.catalogue.schemas import BallastTypeCreate, ModuleCreate, PackCreate
from server.db import Base, import_all_models
from server.maintenance.models import TestRecord
from server.maintenance.schemas import TestRecordCreate
from server.proposals import service as proposals
from server.sites.models import Area, Building, Fixture
from server.sites.schemas import AreaCreate, BuildingCreate, FixtureCreate

DEMO_ORG_NAME = "Tallowmere Emergency Lighting Services (demo)"
# Shared by every demo user and printed by `python -m server demo`: demo only.
DEMO_PASSWORD = "tallowmere-demo-2026"
DEMO_EMAIL_DOMAIN = "tallowmere.example.com"  # example.com is reserved (RFC 2606)
DEMO_PEOPLE: dict[Role, str] = {
    Role.SURVEYOR: "Demo Surveyor",
    Role.ESTIMATOR: "Demo Estimator",
    Role.SUPERVISOR: "Demo Supervisor",
    Role.ADMIN: "Demo Administrator",
}


@dataclass(frozen=True, slots=True)
class DemoSignIn:
    """How to sign in to the demo: the firm, the shared password, an email per role."""

    org_name: str
    password: str
    users: tuple[tuple[Role, str], ...]


def demo_sign_in() -> DemoSignIn:
    return DemoSignIn(
        org_name=DEMO_ORG_NAME,
        password=DEMO_PASSWORD,
        users=tuple((role, demo_email(role)) for role in DEMO_PEOPLE),
    )


def demo_email(role: Role) -> str:
    return f"{role.value}@{DEMO_EMAIL_DOMAIN}"


# --- the catalogue -----------------------------------------------------------

BALLAST_TYPES: tuple[dict[str, Any], ...] = (
    {
        "name": "Switch-start choke with glow starter, 1 x 58 W T8",
        "technology": "magnetic-glow-starter",
        "lamp_type": "T8",
        "notes": "The starter must be isolated in emergency mode.",
    },
    {
        "name": "Switch-start choke with glow starter, 1 x 36 W T8",
        "technology": "magnetic-glow-starter",
        "lamp_type": "T8",
    },
    {
        "name": "Rapid-start magnetic ballast, 2 x 58 W T8",
        "technology": "magnetic-rapid-start",
        "lamp_type": "T8",
        "lamp_count": 2,
    },
    {
        "name": "HF instant-start ballast, 1 x 36 W T8",
        "technology": "electronic-instant-start",
        "lamp_type": "T8",
    },
    {
        "name": "HF programmed-start ballast, 2 x 36 W T8 (series lamps)",
        "technology": "electronic-programmed-start",
        "lamp_type": "T8",
        "lamp_count": 2,
    },
    {
        "name": "HF programmed-start ballast, 1 x 28/54 W T5",
        "technology": "electronic-programmed-start",
        "lamp_type": "T5",
    },
    {
        "name": "HF dimmable ballast, 1 x 54 W T5",
        "technology": "electronic-dimmable",
        "lamp_type": "T5",
    },
    {
        "name": "HF programmed-start ballast, 26/32 W 4-pin compact lamp",
        "technology": "electronic-programmed-start",
        "lamp_type": "CFL-4pin",
    },
)

_MAGNETIC = ["magnetic-glow-starter", "magnetic-rapid-start", "magnetic-instant-start"]
_ELECTRONIC = ["electronic-instant-start", "electronic-programmed-start"]

MODULES: tuple[dict[str, Any], ...] = (
    {
        "name": "Compact-lamp inverter 3 W, 3 h",
        "battery_w": 3.0,
        "output_w": 2.3,
        "chemistry": "NiCd",
        "cells": 3,
        "cutoff_v": 3.0,
        "charge_a": 0.25,
        "rated_min": 180.0,
        "lamp_types": ["CFL-4pin", "T5"],
        "lamp_w_min": 10.0,
        "lamp_w_max": 42.0,
        "ballasts": ["magnetic-glow-starter", *_ELECTRONIC],
        "price": Decimal("44.00"),
        "labour_h": 0.8,
    },
    {
        "name": "Universal inverter 4 W, 3 h",
        "battery_w": 4.0,
        "output_w": 3.1,
        "chemistry": "NiCd",
        "cells": 4,
        "cutoff_v": 4.0,
        "charge_a": 0.28,
        "rated_min": 180.0,
        "lamp_types": ["T5", "T8", "T12", "CFL-4pin"],
        "lamp_w_min": 14.0,
        "lamp_w_max": 70.0,
        "ballasts": [*_MAGNETIC, *_ELECTRONIC],
        "price": Decimal("58.00"),
        "labour_h": 1.0,
    },
    {
        "name": "Universal inverter 4 W with self-test, 3 h",
        "battery_w": 4.0,
        "output_w": 3.1,
        "declared_eblf": 0.06,
        "chemistry": "NiMH",
        "cells": 4,
        "cutoff_v": 4.0,
        "charge_a": 0.28,
        "rated_min": 180.0,
        "lamp_types": ["T5", "T8", "T12", "CFL-4pin"],
        "lamp_w_min": 14.0,
        "lamp_w_max": 70.0,
        "ballasts": [*_MAGNETIC, *_ELECTRONIC, "electronic-dimmable"],
        "self_test": True,
        "price": Decimal("76.00"),
        "labour_h": 1.0,
        "notes": "Runs its own monthly and annual tests and shows the result on its indicator.",
    },
    {
        "name": "High-output inverter 8 W, twin lamp, 90 min",
        "battery_w": 8.0,
        "output_w": 6.2,
        "declared_eblf": 0.14,
        "chemistry": "NiCd",
        "cells": 5,
        "cutoff_v": 5.0,
        "charge_a": 0.30,
        "rated_min": 90.0,
        "lamp_types": ["T5", "T8"],
        "lamp_w_min": 28.0,
        "lamp_w_max": 80.0,
        "ballasts": [*_MAGNETIC, *_ELECTRONIC, "electronic-dimmable"],
        "max_lamps": 2,
        "self_test": True,
        "price": Decimal("112.00"),
        "labour_h": 1.25,
    },
    {
        "name": "Budget inverter 6 W, one-end changeover, 90 min",
        "battery_a": 1.25,
        "output_w": 4.0,
        "chemistry": "NiCd",
        "cells": 4,
        "cutoff_v": 4.0,
        "charge_a": 0.12,
        "rated_min": 90.0,
        "lamp_types": ["T8", "T12"],
        "lamp_w_min": 18.0,
        "lamp_w_max": 65.0,
        "ballasts": list(_MAGNETIC),
        "changeover": "one-end",
        "waveform": "pulsed-dc",
        "price": Decimal("34.00"),
        "labour_h": 0.9,
        "notes": "Switches one lamp end only; for magnetic gear.",
    },
    {
        "name": "Lithium inverter 5 W with self-test, 3 h",
        "battery_w": 5.0,
        "output_w": 3.9,
        "chemistry": "LiFePO4",
        "cells": 2,
        "cutoff_v": 5.0,
        "charge_a": 0.25,
        "rated_min": 180.0,
        "lamp_types": ["T5", "T8", "CFL-4pin"],
        "lamp_w_min": 14.0,
        "lamp_w_max": 58.0,
        "ballasts": [*_ELECTRONIC, "electronic-dimmable"],
        "self_test": True,
        "price": Decimal("98.00"),
        "labour_h": 1.0,
        "notes": "Has its own lithium charger and protection; use only its matching pack.",
    },
)

PACKS: tuple[dict[str, Any], ...] = (
    {
        "name": "NiCd 3.6 V 4.0 Ah stick",
        "chemistry": "NiCd",
        "cells": 3,
        "nominal_v": 3.6,
        "capacity_ah": 4.0,
        "rated_hours": 5.0,
        "max_c": 50.0,
        "design_life_years": 4.0,
        "new_internal_ohm": 0.05,
        "price": Decimal("24.00"),
    },
    {
        "name": "NiCd 4.8 V 1.7 Ah stick",
        "chemistry": "NiCd",
        "cells": 4,
        "nominal_v": 4.8,
        "capacity_ah": 1.7,
        "rated_hours": 5.0,
        "max_c": 50.0,
        "design_life_years": 4.0,
        "new_internal_ohm": 0.12,
        "price": Decimal("18.50"),
    },
    {
        "name": "NiCd 4.8 V 4.0 Ah stick",
        "chemistry": "NiCd",
        "cells": 4,
        "nominal_v": 4.8,
        "capacity_ah": 4.0,
        "rated_hours": 5.0,
        "max_c": 50.0,
        "design_life_years": 4.0,
        "new_internal_ohm": 0.06,
        "price": Decimal("29.00"),
    },
    {
        "name": "NiCd 4.8 V 4.5 Ah high-temperature stick",
        "chemistry": "NiCd",
        "cells": 4,
        "nominal_v": 4.8,
        "capacity_ah": 4.5,
        "rated_hours": 5.0,
        "max_c": 55.0,
        "design_life_years": 4.0,
        "new_internal_ohm": 0.05,
        "price": Decimal("34.00"),
        "notes": "High-temperature cells for hot ceiling voids.",
    },
    {
        "name": "NiCd 6.0 V 4.5 Ah stick",
        "chemistry": "NiCd",
        "cells": 5,
        "nominal_v": 6.0,
        "capacity_ah": 4.5,
        "rated_hours": 5.0,
        "max_c": 50.0,
        "design_life_years": 4.0,
        "new_internal_ohm": 0.065,
        "price": Decimal("41.00"),
    },
    {
        "name": "NiMH 4.8 V 4.0 Ah stick",
        "chemistry": "NiMH",
        "cells": 4,
        "nominal_v": 4.8,
        "capacity_ah": 4.0,
        "rated_hours": 5.0,
        "max_c": 45.0,
        "design_life_years": 4.0,
        "new_internal_ohm": 0.09,
        "price": Decimal("27.00"),
    },
    {
        "name": "LiFePO4 6.4 V 3.3 Ah with protection board",
        "chemistry": "LiFePO4",
        "cells": 2,
        "nominal_v": 6.4,
        "capacity_ah": 3.3,
        "rated_hours": 1.0,
        "max_c": 50.0,
        "design_life_years": 8.0,
        "new_internal_ohm": 0.08,
        "price": Decimal("58.00"),
    },
)

# --- the client's building ---------------------------------------------------

BUILDING: dict[str, Any] = {
    "name": "Quillfield House",
    "address": "1 Example Street, Sampletown",
    "client_name": "Quillfield House Management (demo client)",
    "client_contact": "Facilities desk, ext. 200",
    "notes": "Two-storey office building. The client's fire risk assessment asks for 3 h "
    "on the escape routes because the building is re-occupied straight after an evacuation.",
}

# Lamp families as surveyed: (lamp_type, lamp_w, lamp_length_mm).
T8_58 = ("T8", 58.0, 1500.0)
T8_36 = ("T8", 36.0, 1200.0)
T5_28 = ("T5", 28.0, 1149.0)
T5_54 = ("T5", 54.0, 1149.0)
T5_14 = ("T5", 14.0, 549.0)
CFL4_26 = ("CFL-4pin", 26.0, None)
CFL4_32 = ("CFL-4pin", 32.0, None)
CFL2_26 = ("CFL-2pin", 26.0, None)
LED_22 = ("LED-tube", 22.0, 1500.0)


def _fixture(
    tag: str,
    lamp: tuple[str, float, float | None],
    ballast: str,
    *,
    lamp_count: int = 1,
    wiring: str = "single",
    unswitched_supply: bool = True,
    **extra: Any,
) -> dict[str, Any]:
    lamp_type, lamp_w, lamp_length_mm = lamp
    return {
        "tag": tag,
        "lamp_type": lamp_type,
        "lamp_w": lamp_w,
        "lamp_length_mm": lamp_length_mm,
        "lamp_count": lamp_count,
        "ballast": ballast,
        "wiring": wiring,
        "unswitched_supply": unswitched_supply,
        **extra,
    }


def _along(position_m: float, centre_y_m: float, **extra: Any) -> dict[str, Any]:
    """A fixture on a corridor's centre line, ``position_m`` from its start."""
    return {"position_m": position_m, "x_m": position_m, "y_m": centre_y_m, **extra}


GLOW = "magnetic-glow-starter"
RAPID = "magnetic-rapid-start"
INSTANT = "electronic-instant-start"
PROGRAMMED = "electronic-programmed-start"
DIMMABLE = "electronic-dimmable"
NO_FEED = "Only the switched lighting circuit reaches this fitting: no permanent feed."

HEALTHY_PACK: dict[str, Any] = {
    "existing_kit": True,
    "pack_chemistry": "NiCd",
    "pack_cells": 4,
    "pack_capacity_ah": 4.5,
    "pack_date_code": "2337",
    "pack_date_format": "YYWW",
    "open_circuit_v": 5.34,
    "loaded_v": 5.08,
    "load_a": 3.0,
    "commissioned_on": date(2023, 10, 2),
    "notes": "Kit fitted 2023; indicator green.",
}
# Reads "fine" open-circuit but sags under 3 V on a 9.1 ohm resistor: worn out.
# The digits 0512 read as May 2012 (MMYY) or as week 12 of 2005 (YYWW).
WORN_PACK: dict[str, Any] = {
    "existing_kit": True,
    "pack_chemistry": "NiCd",
    "pack_cells": 4,
    "pack_capacity_ah": 1.7,
    "pack_date_code": "0512",
    "pack_date_format": "MMYY",
    "open_circuit_v": 5.2,
    "loaded_v": 2.9,
    "load_ohm": 9.1,
    "commissioned_on": date(2012, 6, 11),
    "notes": "Pack sleeve discoloured by heat; label partly legible.",
}
AGEING_NIMH_PACK: dict[str, Any] = {
    "existing_kit": True,
    "pack_chemistry": "NiMH",
    "pack_cells": 4,
    "pack_capacity_ah": 2.2,
    "pack_date_code": "3821",
    "pack_date_format": "WWYY",
    "open_circuit_v": 5.4,
    "loaded_v": 5.02,
    "load_ohm": 9.1,
    "commissioned_on": date(2021, 10, 18),
}
LABEL_ONLY_PACK: dict[str, Any] = {
    "existing_kit": True,
    "pack_chemistry": "NiCd",
    "pack_cells": 4,
    "pack_capacity_ah": 4.0,
    "pack_date_code": "2204",
    "pack_date_format": "YYMM",
    "commissioned_on": date(2022, 5, 9),
    "notes": "Label read from the ladder; no meter readings taken.",
}

AREAS: tuple[tuple[dict[str, Any], tuple[dict[str, Any], ...]], ...] = (
    (
        {
            "name": "Ground-floor corridor",
            "floor": "Ground",
            "kind": "escape-route",
            "length_m": 32.0,
            "width_m": 1.8,
            "mounting_height_m": 2.7,
            "required_duration_min": 180.0,
            "profile_id": "eu-3h-premises",
            "survey_complete": True,
            "notes": "From the entrance doors to the rear final exit.",
        },
        (
            _fixture(
                "GF-01",
                T8_58,
                GLOW,
                lamp_count=2,
                wiring="parallel",
                location="by the entrance doors",
                **_along(1.6, 0.9),
            ),
            _fixture("GF-02", T8_58, GLOW, lamp_count=2, wiring="parallel", **_along(4.8, 0.9)),
            _fixture(
                "GF-03",
                T8_58,
                GLOW,
                lamp_count=2,
                wiring="parallel",
                **_along(8.0, 0.9),
                **HEALTHY_PACK,
            ),
            _fixture("GF-04", T8_36, INSTANT, **_along(11.2, 0.9)),
            _fixture(
                "GF-05",
                T8_36,
                PROGRAMMED,
                lamp_count=2,
                wiring="series",
                location="junction with the lobby",
                **_along(14.4, 0.9),
            ),
            _fixture(
                "GF-06", T8_36, PROGRAMMED, lamp_count=2, wiring="series", **_along(17.6, 0.9)
            ),
            _fixture("GF-07", T8_58, RAPID, lamp_count=2, wiring="parallel", **_along(20.8, 0.9)),
            _fixture(
                "GF-08",
                LED_22,
                GLOW,
                **_along(24.0, 0.9),
                notes="LED tube fitted by others; starter replaced by a fuse link.",
            ),
            _fixture(
                "GF-09",
                T8_58,
                GLOW,
                lamp_count=2,
                wiring="parallel",
                unswitched_supply=False,
                **_along(27.2, 0.9),
                notes=NO_FEED,
            ),
            _fixture("GF-10", T8_58, GLOW, location="by the rear final exit", **_along(30.4, 0.9)),
        ),
    ),
    (
        {
            "name": "Entrance lobby",
            "floor": "Ground",
            "kind": "open-area",
            "length_m": 8.0,
            "width_m": 6.0,
            "mounting_height_m": 3.0,
            "required_duration_min": 180.0,
            "profile_id": "eu-open-area",
        },
        (
            _fixture(
                "LB-01",
                CFL2_26,
                GLOW,
                x_m=2.0,
                y_m=2.0,
                location="downlight by reception",
                notes="2-pin lamp: the starter is inside the lamp cap.",
            ),
            _fixture("LB-02", CFL4_26, PROGRAMMED, x_m=6.0, y_m=2.0),
            _fixture("LB-03", CFL4_32, PROGRAMMED, x_m=2.0, y_m=4.5),
            _fixture(
                "LB-04",
                CFL4_32,
                PROGRAMMED,
                x_m=6.0,
                y_m=4.5,
                unswitched_supply=False,
                notes=NO_FEED,
            ),
        ),
    ),
    (
        {
            "name": "Main stair",
            "floor": "Ground to first",
            "kind": "stairway",
            "length_m": 12.0,
            "width_m": 1.2,
            "mounting_height_m": 2.6,
            "required_duration_min": 180.0,
            "profile_id": "eu-3h-premises",
            "notes": "Length measured along the flights and landings.",
        },
        (
            _fixture("ST-01", T5_28, PROGRAMMED, location="foot of the stair", **_along(0.5, 0.6)),
            _fixture(
                "ST-02",
                T5_28,
                PROGRAMMED,
                location="half landing",
                **_along(4.5, 0.6),
                mounting_height_m=2.4,
                **LABEL_ONLY_PACK,
            ),
            _fixture(
                "ST-03",
                T5_28,
                PROGRAMMED,
                location="upper flight",
                **_along(8.0, 0.6),
                mounting_height_m=2.4,
            ),
            _fixture(
                "ST-04",
                T5_28,
                PROGRAMMED,
                location="head of the stair",
                **_along(11.5, 0.6),
                mounting_height_m=2.7,
            ),
        ),
    ),
    (
        {
            "name": "First-floor corridor",
            "floor": "First",
            "kind": "escape-route",
            "length_m": 28.0,
            "width_m": 1.6,
            "mounting_height_m": 2.7,
            "required_duration_min": 180.0,
            "profile_id": "eu-3h-premises",
        },
        (
            _fixture("FF-01", T5_54, PROGRAMMED, location="head of the stair", **_along(1.75, 0.8)),
            _fixture("FF-02", T5_54, PROGRAMMED, **_along(5.25, 0.8)),
            _fixture("FF-03", T5_54, PROGRAMMED, **_along(8.75, 0.8), **AGEING_NIMH_PACK),
            _fixture(
                "FF-04",
                T5_54,
                DIMMABLE,
                **_along(12.25, 0.8),
                notes="On the daylight-dimming circuit.",
            ),
            _fixture("FF-05", T8_58, GLOW, lamp_count=2, wiring="parallel", **_along(15.75, 0.8)),
            _fixture(
                "FF-06", T8_36, PROGRAMMED, lamp_count=2, wiring="series", **_along(19.25, 0.8)
            ),
            _fixture(
                "FF-07",
                T5_54,
                PROGRAMMED,
                unswitched_supply=False,
                **_along(22.75, 0.8),
                notes=NO_FEED,
            ),
            _fixture("FF-08", T8_36, INSTANT, location="by the office door", **_along(26.25, 0.8)),
        ),
    ),
    (
        {
            "name": "Open-plan office",
            "floor": "First",
            "kind": "open-area",
            "length_m": 18.0,
            "width_m": 12.0,
            "mounting_height_m": 2.8,
            "required_duration_min": 180.0,
            "profile_id": "eu-open-area",
            "notes": "Recessed twin T5 fittings; ceiling void under the roof runs warm.",
        },
        (
            *(
                _fixture(
                    f"OF-{number:02d}",
                    T5_28,
                    PROGRAMMED,
                    lamp_count=2,
                    wiring="parallel",
                    unswitched_supply=number > 6,
                    x_m=x_m,
                    y_m=y_m,
                    ambient_c=30.0,
                    **({} if number > 6 else {"notes": NO_FEED}),
                )
                for number, (y_m, x_m) in enumerate(
                    ((y, x) for y in (2.0, 6.0, 10.0) for x in (3.0, 9.0, 15.0)), start=1
                )
            ),
            _fixture(
                "OF-10",
                T5_28,
                DIMMABLE,
                lamp_count=2,
                wiring="parallel",
                x_m=16.5,
                y_m=11.0,
                ambient_c=30.0,
                location="by the fire exit",
            ),
        ),
    ),
    (
        {
            "name": "Accessible WC",
            "floor": "Ground",
            "kind": "other",
            "length_m": 2.4,
            "width_m": 2.2,
            "mounting_height_m": 2.5,
            "required_duration_min": 180.0,
            "profile_id": "eu-open-area",
            "notes": "Emergency light asked for by the client's fire risk assessment.",
        },
        (_fixture("WC-01", T5_14, PROGRAMMED, x_m=1.2, y_m=1.1, location="over the basin"),),
    ),
    (
        {
            "name": "Plant room",
            "floor": "Ground",
            "kind": "high-risk",
            "length_m": 6.0,
            "width_m": 5.0,
            "mounting_height_m": 3.2,
            "required_duration_min": 60.0,
            "profile_id": "eu-high-risk",
            "notes": "Boilers and pumps; the ceiling runs at about 40 °C in winter.",
        },
        (
            _fixture("PR-01", T8_58, GLOW, x_m=1.5, y_m=2.5, ambient_c=40.0, **WORN_PACK),
            _fixture("PR-02", T8_58, GLOW, x_m=4.5, y_m=2.5, ambient_c=40.0),
            _fixture(
                "PR-03",
                T8_36,
                GLOW,
                lamp_count=2,
                wiring="parallel",
                x_m=3.0,
                y_m=4.5,
                ambient_c=40.0,
                location="over the boiler controls",
            ),
            _fixture(
                "PR-04",
                T8_58,
                RAPID,
                lamp_count=2,
                wiring="parallel",
                x_m=5.5,
                y_m=0.5,
                ambient_c=40.0,
                unswitched_supply=False,
                location="by the door",
                notes=NO_FEED,
            ),
        ),
    ),
)

# Past tests: (fixture tag, days before today, the test as the log API takes it).
_REPLACE = "Pack flagged for replacement."
TESTS: tuple[tuple[str, int, dict[str, Any]], ...] = (
    ("GF-03", 80, {"kind": "function", "result": "pass"}),
    ("GF-03", 50, {"kind": "function", "result": "pass"}),
    ("GF-03", 20, {"kind": "function", "result": "pass"}),
    (
        "GF-03",
        200,
        {
            "kind": "duration",
            "result": "pass",
            "observed_duration_min": 180.0,
            "ran_to_cutoff": False,
            "notes": "Full 3 h test; stopped with the lamp still lit.",
        },
    ),
    (
        "FF-03",
        695,
        {
            "kind": "duration",
            "result": "pass",
            "observed_duration_min": 203.0,
            "ran_to_cutoff": True,
            "notes": "Run on until the lamp went out.",
        },
    ),
    (
        "FF-03",
        330,
        {
            "kind": "duration",
            "result": "fail",
            "observed_duration_min": 151.0,
            "ran_to_cutoff": True,
            "action_taken": _REPLACE,
            "notes": "Lamp went out before 3 h.",
        },
    ),
    ("FF-03", 70, {"kind": "function", "result": "pass"}),
    (
        "FF-03",
        40,
        {
            "kind": "function",
            "result": "pass",
            "open_circuit_v": 5.38,
            "loaded_v": 4.98,
            "load_ohm": 9.1,
        },
    ),
    (
        "PR-01",
        45,
        {
            "kind": "function",
            "result": "fail",
            "action_taken": _REPLACE,
            "notes": "Lamp went out after about 5 s on test.",
        },
    ),
)


# The area whose fixtures get the planner's suggestions as proposals.
PROPOSED_AREA = "Ground-floor corridor"


# --- loading -----------------------------------------------------------------


def database_is_empty(*, session: Session) -> bool:
    """True when no organisation exists yet (a fresh, migrated database)."""
    return not session.scalar(select(func.count()).select_from(Organisation))


def demo_org(*, session: Session) -> Organisation | None:
    return session.scalar(select(Organisation).where(Organisation.name == DEMO_ORG_NAME))


def delete_demo(*, session: Session) -> bool:
    """Delete the demo organisation and everything it owns; other firms are untouched.

    Rows are deleted table by table, dependents first, so the RESTRICT
    foreign keys (a proposal's module, a work order's quote, a test record's
    correction) never block the delete. Returns whether there was one.
    """
    org = demo_org(session=session)
    if org is None:
        return False
    import_all_models()
    for table in reversed(Base.metadata.sorted_tables):
        org_id = table.columns.get("org_id")
        if org_id is None:
            continue
        for column in table.columns:
            if any(key.column.table is table for key in column.foreign_keys):
                session.execute(update(table).where(org_id == org.id).values({column.name: None}))
        session.execute(delete(table).where(org_id == org.id))
    session.execute(delete(Organisation).where(Organisation.id == org.id))
    session.expunge_all()
    return True


def load_demo(*, session: Session, today: date | None = None) -> DemoSignIn:
    """Add the demo firm, its users, catalogue, building, test log and first proposals.

    Everything is added in the caller's session and committed at the end
    (the proposals service commits its own work). The proposals are the
    planner's own suggestions for one area, made as the demo estimator; the
    other areas are left for the user to try. Raises
    ``server.common.errors.Conflict`` when a demo email is already taken (by
    a user of another firm); nothing is committed then.
    """
    today = today or date.today()
    org = accounts.get_or_create_org(session=session, name=DEMO_ORG_NAME)
    org.address = "Unit 4, Example Trading Estate, Sampletown"
    org.phone = "01632 960123"  # a number reserved for drama and examples
    org.paper_size = PaperSize.A4.value
    org.currency = "GBP"
    org.labour_rate = Decimal("52.00")

    users = {
        role: accounts.create_user(
            session=session,
            org=org,
            email=demo_email(role),
            password=DEMO_PASSWORD,
            role=role,
            name=name,
        )
        for role, name in DEMO_PEOPLE.items()
    }
    _add_catalogue(session=session, org=org)
    areas, fixtures = _add_building(session=session, org=org)
    _add_tests(
        session=session, org=org, fixtures=fixtures, tester=users[Role.SUPERVISOR], today=today
    )
    session.flush()
    proposed_area_id = areas[PROPOSED_AREA].id
    for fixture in fixtures.values():
        if fixture.area_id == proposed_area_id:
            proposals.apply_suggestion(
                session=session, user=users[Role.ESTIMATOR], fixture_id=fixture.id, today=today
            )
    session.commit()
    return demo_sign_in()


def _add_catalogue(*, session: Session, org: Organisation) -> None:
    for spec in BALLAST_TYPES:
        values = BallastTypeCreate.model_validate(spec).model_dump(exclude={"id"})
        session.add(BallastType(org_id=org.id, **values))
    for spec in MODULES:
        values = ModuleCreate.model_validate(spec).model_dump(exclude={"id"})
        session.add(EmergencyModule(org_id=org.id, **values))
    for spec in PACKS:
        values = PackCreate.model_validate(spec).model_dump(exclude={"id"})
        session.add(BatteryPack(org_id=org.id, **values))


def _add_building(
    *, session: Session, org: Organisation
) -> tuple[dict[str, Area], dict[str, Fixture]]:
    building_values = BuildingCreate.model_validate(BUILDING).model_dump(exclude={"id"})
    building = Building(org_id=org.id, **building_values)
    session.add(building)
    session.flush()
    areas: dict[str, Area] = {}
    fixtures: dict[str, Fixture] = {}
    for area_spec, fixture_specs in AREAS:
        area_values = AreaCreate.model_validate(area_spec).model_dump(exclude={"id"})
        area = Area(org_id=org.id, building_id=building.id, **area_values)
        session.add(area)
        session.flush()
        areas[area.name] = area
        for spec in fixture_specs:
            values = FixtureCreate.model_validate(spec).model_dump(exclude={"id"})
            fixture = Fixture(org_id=org.id, area_id=area.id, **values)
            session.add(fixture)
            fixtures[fixture.tag] = fixture
    session.flush()
    return areas, fixtures


def _add_tests(
    *,
    session: Session,
    org: Organisation,
    fixtures: dict[str, Fixture],
    tester: User,
    today: date,
) -> None:
    for tag, days_ago, spec in TESTS:
        test = TestRecordCreate.model_validate(
            {**spec, "tested_on": today - timedelta(days=days_ago), "tested_by": tester.name}
        )
        values = test.model_dump(exclude={"id", "corrects_id"})
        session.add(
            TestRecord(org_id=org.id, fixture_id=fixtures[tag].id, recorded_by=tester.id, **values)
        )
