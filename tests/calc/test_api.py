"""The calculator API: each endpoint on a real migrated database, and its 422 answers."""

from __future__ import annotations

from collections.abc import Callable
from datetime import date, timedelta
from typing import Any

import pytest
from fastapi.testclient import TestClient
from hypothesis import given, settings
from hypothesis import strategies as st
from sqlalchemy import select

from server.accounts.models import Organisation
from server.catalogue.models import RequirementProfile
from server.safety import CAUTIONS

ClientAs = Callable[..., TestClient]


def field_errors(answer: Any) -> list[tuple[str, ...]]:
    assert answer.status_code == 422, answer.text
    return [tuple(str(part) for part in item["loc"]) for item in answer.json()["detail"]]


# ---- run-time ----


def test_runtime_with_k_of_one_is_capacity_over_current(client_as: ClientAs) -> None:
    # Peukert's law with k = 1 (battery handbooks): 1.7 Ah / 1.4 A = 1.214 h = 72.9 min;
    # an aging factor of 1 keeps the end-of-life figure at the new one.
    answer = client_as("surveyor").post(
        "/api/v1/calc/runtime",
        json={
            "chemistry": "NiCd",
            "cells": 4,
            "capacity_ah": 1.7,
            "peukert_k": 1.0,
            "load_a": 1.4,
            "aging_factor": 1.0,
        },
    )
    assert answer.status_code == 200, answer.text
    body = answer.json()
    assert body["runtime_new_min"] == pytest.approx(72.86, abs=0.01)
    assert body["runtime_end_of_life_min"] == pytest.approx(body["runtime_new_min"])
    assert body["c_rate"] == pytest.approx(1.4 / 1.7)
    assert body["verdict"] is None
    assert body["cautions"] == list(CAUTIONS)
    said = " | ".join(body["assumptions"])
    assert "5 h rate" in said and "ambient 25 degC" in said
    assert "Peukert" not in said  # k was given, so it is no assumption


def test_runtime_defaults_and_a_verdict(client_as: ClientAs) -> None:
    # 5 h * (1.7 / (1.4 * 5)) ** 1.10 = 1.054 h = 63.2 min new (battery handbooks'
    # Peukert form, NiCd k 1.10 from memory); 90 min required: fail.
    answer = client_as("estimator").post(
        "/api/v1/calc/runtime",
        json={
            "chemistry": "NiCd",
            "cells": 4,
            "capacity_ah": 1.7,
            "load_a": 1.4,
            "required_min": 90,
        },
    )
    body = answer.json()
    assert body["runtime_new_min"] == pytest.approx(63.2, abs=0.05)
    assert body["verdict"] == "fail"
    codes = [finding["code"] for finding in body["findings"]]
    assert codes[0] == "runtime.short"
    assert set(body["findings"][0]) == {"code", "severity", "message", "fix", "source"}
    assert any("Peukert exponent k = 1.1" in said for said in body["assumptions"])


def test_runtime_from_watts_says_it_assumed_constant_power(client_as: ClientAs) -> None:
    answer = client_as().post(
        "/api/v1/calc/runtime",
        json={"chemistry": "NiCd", "cells": 4, "capacity_ah": 4.5, "load_w": 7.0},
    )
    body = answer.json()
    assert body["current_a"] == pytest.approx(7.0 / 4.8)  # 4 x 1.2 V nominal
    assert any("constant power" in said for said in body["assumptions"])


@pytest.mark.parametrize(
    ("change", "field"),
    [
        ({"load_w": 7.0}, "load_w"),  # both loads
        ({"load_a": None}, "load_w"),  # neither
        ({"capacity_ah": 0}, "capacity_ah"),
        ({"capacity_ah": -1.0}, "capacity_ah"),
        ({"cells": 0}, "cells"),
        ({"peukert_k": 0.8}, "peukert_k"),
        ({"ambient_c": 60.0}, "ambient_c"),  # outside the NiCd capacity table
        ({"chemistry": "lead-acid"}, "chemistry"),
        ({"load_watts": 7.0}, "load_watts"),  # misspelt: refused, not ignored
    ],
)
def test_runtime_refuses_non_physical_input(
    client_as: ClientAs, change: dict[str, Any], field: str
) -> None:
    body: dict[str, Any] = {"chemistry": "NiCd", "cells": 4, "capacity_ah": 1.7, "load_a": 1.4}
    body.update(change)
    body = {key: value for key, value in body.items() if value is not None}
    answer = client_as().post("/api/v1/calc/runtime", json=body)
    assert any(loc[-1] == field for loc in field_errors(answer)), answer.json()


def test_calculators_need_sign_in(client: TestClient) -> None:
    answer = client.post("/api/v1/calc/runtime", json={})
    assert answer.status_code == 401


# ---- recharge ----


def test_recharge_of_a_small_pack(client_as: ClientAs) -> None:
    # Common practice: 1.2 Ah at 0.8 A is full in roughly 1.7-1.9 h; at 0.67 C
    # the charge factor is 1.2: 1.2 * 1.2 / 0.8 = 1.8 h. That continuous current
    # is above C/10, which wears the pack: warn.
    body = (
        client_as()
        .post(
            "/api/v1/calc/recharge",
            json={"chemistry": "NiCd", "cells": 4, "capacity_ah": 1.2, "charge_a": 0.8},
        )
        .json()
    )
    assert 1.7 <= body["hours"] <= 1.9
    assert body["charge_factor"] == pytest.approx(1.2)
    assert body["c_rate"] == pytest.approx(0.8 / 1.2)
    assert body["verdict"] == "warn"
    assert [f["code"] for f in body["findings"]] == ["charge.trickle-high"]


def test_recharge_beyond_24_h_fails(client_as: ClientAs) -> None:
    # 4.5 Ah at 0.1 A: 4.5 * 1.4 / 0.1 = 63 h > 24 h; 0.022 C is below C/30.
    body = (
        client_as()
        .post(
            "/api/v1/calc/recharge",
            json={"chemistry": "NiCd", "cells": 4, "capacity_ah": 4.5, "charge_a": 0.1},
        )
        .json()
    )
    assert body["hours"] == pytest.approx(63.0)
    assert body["verdict"] == "fail"
    assert {f["code"] for f in body["findings"]} == {"charge.recharge-slow", "charge.trickle-low"}


def test_recharge_with_a_given_factor_and_bad_input(client_as: ClientAs) -> None:
    client = client_as()
    body = client.post(
        "/api/v1/calc/recharge",
        json={
            "chemistry": "NiCd",
            "cells": 4,
            "capacity_ah": 4.0,
            "charge_a": 0.4,
            "charge_factor": 1.5,
        },
    ).json()
    assert body["hours"] == pytest.approx(15.0)  # 4.0 * 1.5 / 0.4
    assert body["assumptions"] == []
    answer = client.post(
        "/api/v1/calc/recharge",
        json={"chemistry": "NiCd", "cells": 4, "capacity_ah": 4.0, "charge_a": 0},
    )
    assert ("body", "charge_a") in field_errors(answer)


# ---- pack health ----


def test_a_worn_pack_reads_fine_open_circuit_but_collapses(client_as: ClientAs) -> None:
    # Common practice: 4-cell NiCd, 5.2 V open, 3.0 V across 9.1 ohm (0.33 A):
    # R = 2.2 / 0.33 = 6.67 ohm ("about 7 ohm"); at 1.4 A it collapses below 4.0 V.
    body = (
        client_as()
        .post(
            "/api/v1/calc/pack-health",
            json={
                "chemistry": "NiCd",
                "cells": 4,
                "open_circuit_v": 5.2,
                "loaded_v": 3.0,
                "load_ohm": 9.1,
                "module_draw_a": 1.4,
            },
        )
        .json()
    )
    assert body["internal_resistance_ohm"] == pytest.approx(6.67, abs=0.01)
    assert body["cutoff_v"] == pytest.approx(4.0)  # 4 cells x 1.0 V end of discharge
    assert body["terminal_v_under_module"] < 4.0
    assert body["verdict"] == "fail"
    assert body["findings"][0]["code"] == "pack.sag-below-cutoff"
    assert body["findings"][0]["fix"] == "Replace the pack."
    assert any("cut-off 4 V" in said for said in body["assumptions"])


def test_a_healthy_pack_passes_and_resistance_is_compared_with_new(client_as: ClientAs) -> None:
    # Common practice: 3 A with little drop, R well under 0.2 ohm; 0.133 ohm is
    # 3.3 x a new 0.04 ohm: watch (2-4 x).
    body = (
        client_as()
        .post(
            "/api/v1/calc/pack-health",
            json={
                "chemistry": "NiCd",
                "cells": 4,
                "open_circuit_v": 5.3,
                "loaded_v": 4.9,
                "load_a": 3.0,
                "module_draw_a": 1.4,
                "cutoff_v": 4.2,
                "new_internal_ohm": 0.04,
            },
        )
        .json()
    )
    assert body["internal_resistance_ohm"] == pytest.approx(0.4 / 3.0)
    assert body["terminal_v_under_module"] == pytest.approx(5.3 - 1.4 * 0.4 / 3.0)
    assert body["cutoff_v"] == 4.2
    assert body["verdict"] == "warn"
    assert [f["code"] for f in body["findings"]] == ["pack.resistance-watch"]


@pytest.mark.parametrize(
    ("change", "field"),
    [
        ({"loaded_v": 5.5}, "loaded_v"),  # above the open-circuit reading
        ({"load_ohm": 9.1}, "load_a"),  # both loads
        ({"load_a": None}, "load_a"),  # neither
        ({"module_draw_a": 0}, "module_draw_a"),
    ],
)
def test_pack_health_refuses_non_physical_input(
    client_as: ClientAs, change: dict[str, Any], field: str
) -> None:
    body: dict[str, Any] = {
        "chemistry": "NiCd",
        "cells": 4,
        "open_circuit_v": 5.2,
        "loaded_v": 4.8,
        "load_a": 1.0,
        "module_draw_a": 1.4,
    }
    body.update(change)
    body = {key: value for key, value in body.items() if value is not None}
    answer = client_as().post("/api/v1/calc/pack-health", json=body)
    assert any(loc[-1] == field for loc in field_errors(answer)), answer.json()


# ---- the full check ----


def combination(**changes: dict[str, Any]) -> dict[str, Any]:
    body: dict[str, Any] = {
        "fixture": {
            "lamp_type": "T8",
            "lamp_w": 36,
            "lamp_length_mm": 1200,
            "lamp_count": 2,
            "ballast": "electronic-programmed-start",
            "wiring": "parallel",
            "unswitched_supply": True,
            "ambient_c": 25,
        },
        "module": {
            "battery_w": 7.0,
            "chemistry": "NiCd",
            "cells": 4,
            "charge_a": 0.3,
            "rated_min": 90,
            "lamp_types": ["T8", "T5"],
            "lamp_w_min": 14,
            "lamp_w_max": 58,
            "ballasts": ["electronic-programmed-start"],
            "changeover": "both-ends",
            "max_lamps": 1,
            "waveform": "ac",
        },
        "pack": {"chemistry": "NiCd", "cells": 4, "capacity_ah": 4.5},
        "requirement": {"duration_min": 90, "profile": "us-egress"},
    }
    for part, fields in changes.items():
        body[part] = {**body[part], **fields}
    return body


def test_a_good_combination_passes(client_as: ClientAs) -> None:
    # 7 W / 4.8 V = 1.458 A; end of life 5 * (0.8 * 4.5 / (1.458 * 5)) ** 1.1 h
    # = 2.30 h = 138 min against 90 min; 0.3 A charge: 4.5 * 1.4 / 0.3 = 21 h.
    answer = client_as("surveyor").post("/api/v1/calc/check", json=combination())
    assert answer.status_code == 200, answer.text
    body = answer.json()
    assert body["verdict"] == "pass"
    assert body["runtime_end_of_life_min"] == pytest.approx(138, abs=1)
    assert body["recharge_h"] == pytest.approx(21.0)
    assert body["c_rate"] == pytest.approx(7.0 / 4.8 / 4.5)
    assert body["eblf_is_estimate"] is True
    # 0.75 * 7 / 36 = 0.146 (common-practice estimate); 3350 lm T8 36 W (from memory).
    assert body["eblf"] == pytest.approx(0.75 * 7 / 36)
    assert body["emergency_lumens"] == pytest.approx(3350 * 0.75 * 7 / 36)
    assert body["backup_power_pct"] == pytest.approx(100 * 7 / 36)
    assert body["cautions"] == list(CAUTIONS)
    for finding in body["findings"]:
        assert set(finding) == {"code", "severity", "message", "fix", "source"}


def test_series_wiring_on_a_one_end_module_fails(client_as: ClientAs) -> None:
    answer = client_as().post(
        "/api/v1/calc/check",
        json=combination(fixture={"wiring": "series"}, module={"changeover": "one-end"}),
    )
    body = answer.json()
    assert body["verdict"] == "fail"
    assert body["findings"][0]["code"] == "wiring.series-one-end"
    assert body["findings"][0]["severity"] == "fail"


def test_a_missing_supply_is_work_to_add_not_a_failure(client_as: ClientAs) -> None:
    body = (
        client_as()
        .post("/api/v1/calc/check", json=combination(fixture={"unswitched_supply": False}))
        .json()
    )
    assert body["verdict"] == "pass"
    action = next(f for f in body["findings"] if f["code"] == "supply.unswitched-missing")
    assert action["severity"] == "action"
    assert "ahead of the local switch" in action["fix"]


def test_a_measured_worn_pack_fails_the_check(client_as: ClientAs) -> None:
    body = (
        client_as()
        .post(
            "/api/v1/calc/check",
            json=combination(pack={"open_circuit_v": 5.2, "loaded_v": 3.0, "load_ohm": 9.1}),
        )
        .json()
    )
    assert body["verdict"] == "fail"
    assert "pack.sag-below-cutoff" in [f["code"] for f in body["findings"]]


def test_an_old_pack_and_the_profile_duration(client_as: ClientAs) -> None:
    old = (date.today() - timedelta(days=5 * 366)).isoformat()
    body = (
        client_as()
        .post(
            "/api/v1/calc/check",
            json=combination(
                pack={"installed_on": old},
                requirement={"duration_min": 60, "profile": "eu-3h-premises"},
            ),
        )
        .json()
    )
    codes = [f["code"] for f in body["findings"]]
    assert body["required_min"] == 180
    assert {"pack.age-due", "module.rated-short", "requirement.below-profile"} <= set(codes)


@pytest.mark.parametrize(
    ("changes", "where"),
    [
        ({"pack": {"capacity_ah": 0}}, ("body", "pack", "capacity_ah")),
        ({"pack": {"cells": 0}}, ("body", "pack", "cells")),
        (
            {"pack": {"open_circuit_v": 5.0, "loaded_v": 5.2, "load_a": 1.0}},
            ("body", "pack", "loaded_v"),
        ),
        ({"pack": {"loaded_v": 4.0}}, ("body", "pack", "open_circuit_v")),
        (
            {"pack": {"installed_on": (date.today() + timedelta(days=30)).isoformat()}},
            ("body", "pack", "installed_on"),
        ),
        ({"module": {"battery_a": 1.4}}, ("body", "module", "battery_w")),
        ({"module": {"lamp_w_min": 60}}, ("body", "module", "lamp_w_min")),
        ({"module": {"lamp_types": []}}, ("body", "module", "lamp_types")),
        ({"fixture": {"lamps_to_back_up": 3}}, ("body", "fixture", "lamps_to_back_up")),
        ({"fixture": {"lamp_count": 1, "wiring": "series"}}, ("body", "fixture", "wiring")),
        ({"fixture": {"lamp_type": "T9"}}, ("body", "fixture", "lamp_type")),
        ({"requirement": {"profile": "no-such-profile"}}, ("body", "requirement", "profile")),
        ({"requirement": {"duration_min": 0}}, ("body", "requirement", "duration_min")),
    ],
)
def test_check_refuses_non_physical_input(
    client_as: ClientAs, changes: dict[str, dict[str, Any]], where: tuple[str, ...]
) -> None:
    answer = client_as().post("/api/v1/calc/check", json=combination(**changes))
    assert where in field_errors(answer), answer.json()


def _add_profile(app: Any, org_name: str) -> str:
    with app.state.session_factory() as session:
        org = session.scalars(select(Organisation).where(Organisation.name == org_name)).one()
        profile = RequirementProfile(
            org_id=org.id,
            name="Our 2 h hotel standard",
            duration_min=120.0,
            min_lux=1.0,
            source="defined by the organisation",
        )
        session.add(profile)
        session.commit()
        return profile.id


def test_a_firms_own_profile_is_used_and_hidden_from_others(app: Any, client_as: ClientAs) -> None:
    profile_id = _add_profile(app, "Test firm A")
    ours = client_as("surveyor", org="A").post(
        "/api/v1/calc/check",
        json=combination(requirement={"duration_min": 60, "profile": profile_id}),
    )
    assert ours.status_code == 200, ours.text
    body = ours.json()
    assert body["required_min"] == 120
    assert body["verdict"] == "fail"  # the 90 min module cannot serve 120 min
    theirs = client_as("surveyor", org="B").post(
        "/api/v1/calc/check",
        json=combination(requirement={"duration_min": 60, "profile": profile_id}),
    )
    assert ("body", "requirement", "profile") in field_errors(theirs)


numbers = st.one_of(
    st.floats(allow_nan=False, allow_infinity=False, min_value=-1e6, max_value=1e6),
    st.integers(-10, 100),
)


def test_hostile_numbers_never_cause_a_500(client_as: ClientAs) -> None:
    client = client_as()

    @settings(max_examples=40, deadline=None)
    @given(
        capacity=numbers,
        charge=numbers,
        ambient=numbers,
        lamp_w=numbers,
        cells=numbers,
        open_circuit=numbers,
        loaded=numbers,
    )
    def post(
        capacity: float,
        charge: float,
        ambient: float,
        lamp_w: float,
        cells: float,
        open_circuit: float,
        loaded: float,
    ) -> None:
        body = combination(
            fixture={"lamp_w": lamp_w, "ambient_c": ambient},
            module={"charge_a": charge, "cells": cells},
            pack={
                "capacity_ah": capacity,
                "cells": cells,
                "open_circuit_v": open_circuit,
                "loaded_v": loaded,
                "load_a": 1.0,
            },
        )
        answer = client.post("/api/v1/calc/check", json=body)
        assert answer.status_code in (200, 422), answer.text

    post()


def test_check_fails_when_the_route_needs_more_light_than_the_fixture_gives(
    client_as: ClientAs,
) -> None:
    # The same 7 W module on a 36 W T8 gives 3350 * 0.75 * 7 / 36 = 489 lm (estimate as above).
    body = combination()
    body["requirement"]["min_emergency_lm"] = 600
    answer = client_as().post("/api/v1/calc/check", json=body).json()
    assert answer["verdict"] == "fail"
    assert any(f["code"] == "light.below-needed" for f in answer["findings"])
    body["requirement"]["min_emergency_lm"] = 400
    quiet = client_as().post("/api/v1/calc/check", json=body).json()
    assert not any(f["code"] == "light.below-needed" for f in quiet["findings"])
