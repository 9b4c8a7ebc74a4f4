"""Compatibility rules: each one fires on the case it is for and keeps quiet otherwise."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field, replace
from datetime import date

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from server.engineering.batteries import Pack, PackReading
from server.engineering.compatibility import (
    FINDINGS,
    RULES,
    Fixture,
    Module,
    Requirement,
    evaluate,
)
from server.engineering.findings import SEVERITY_RANK, Severity, Verdict
from server.engineering.profiles import get_profile
from server.engineering.vocabulary import (
    BallastTech,
    Changeover,
    Chemistry,
    LampType,
    Waveform,
    Wiring,
)

TODAY = date(2025, 6, 1)


def good_fixture() -> Fixture:
    return Fixture(
        lamp_type=LampType.T8,
        lamp_w=36.0,
        lamp_count=2,
        ballast=BallastTech.ELECTRONIC_PROGRAMMED_START,
        wiring=Wiring.PARALLEL,
        unswitched_supply=True,
        lamps_to_back_up=1,
        lamp_length_mm=1200.0,
        ambient_c=25.0,
    )


def good_module() -> Module:
    # Invented generic module: 7 W from a 4-cell NiCd pack, 0.3 A charge.
    return Module(
        chemistry=Chemistry.NICD,
        cells=4,
        battery_w=7.0,
        charge_a=0.3,
        rated_min=90.0,
        lamp_types=frozenset({LampType.T8, LampType.T5}),
        lamp_w_min=14.0,
        lamp_w_max=58.0,
        ballasts=frozenset(
            {BallastTech.ELECTRONIC_PROGRAMMED_START, BallastTech.ELECTRONIC_INSTANT_START}
        ),
        changeover=Changeover.BOTH_ENDS,
        max_lamps=1,
        waveform=Waveform.AC,
    )


def good_pack() -> Pack:
    return Pack(chemistry=Chemistry.NICD, cells=4, capacity_ah=4.5)


@dataclass
class Combo:
    fixture: Fixture = field(default_factory=good_fixture)
    module: Module = field(default_factory=good_module)
    pack: Pack = field(default_factory=good_pack)
    requirement: Requirement = field(default_factory=lambda: Requirement(duration_min=90.0))

    def codes(self) -> list[str]:
        result = evaluate(self.fixture, self.module, self.pack, self.requirement, today=TODAY)
        return [finding.code for finding in result.findings]


def with_fixture(**changes: object) -> Combo:
    return Combo(fixture=replace(good_fixture(), **changes))  # type: ignore[arg-type]


def with_module(**changes: object) -> Combo:
    return Combo(module=replace(good_module(), **changes))  # type: ignore[arg-type]


def with_pack(**changes: object) -> Combo:
    return Combo(pack=replace(good_pack(), **changes))  # type: ignore[arg-type]


def test_the_good_combination_passes_with_only_info_findings() -> None:
    # 7 W / 4.8 V = 1.458 A from 4.5 Ah: 0.32 C (under 0.4 C for 90 min);
    # end of life 5 h * (0.8 * 4.5 / (1.458 * 5)) ** 1.1 = 2.30 h = 138 min >= 99 min;
    # charge 0.3 A = 0.067 C inside C/30..C/10; recharge 4.5 * 1.4 / 0.3 = 21 h <= 24 h.
    result = evaluate(good_fixture(), good_module(), good_pack(), Requirement(90.0), today=TODAY)
    assert result.verdict is Verdict.PASS
    assert [f.code for f in result.findings] == ["runtime.ok", "light.output"]
    assert result.case.runtime_end_of_life_min == pytest.approx(138, abs=1)
    assert result.case.recharge_h == pytest.approx(21.0)


ONE_YEAR_AGO = date(2024, 6, 1)
WORN_READING = PackReading(open_circuit_v=5.2, loaded_v=3.0, load_ohm=9.1)
TIRED_READING = PackReading(open_circuit_v=5.3, loaded_v=5.0, load_a=3.0)  # 0.1 ohm

# Each finding code: a combination that makes it fire, and (where the good
# combination itself fires it) one that keeps it quiet.
FIRING: dict[str, Callable[[], Combo]] = {
    "ballast.magnetic-only-module": lambda: with_module(
        ballasts=frozenset({BallastTech.MAGNETIC_RAPID_START})
    ),
    "ballast.electronic-only-module": lambda: with_fixture(
        ballast=BallastTech.MAGNETIC_RAPID_START
    ),
    "ballast.not-listed": lambda: with_fixture(ballast=BallastTech.ELECTRONIC_DIMMABLE),
    "ballast.glow-starter": lambda: Combo(
        fixture=replace(good_fixture(), ballast=BallastTech.MAGNETIC_GLOW_STARTER),
        module=replace(good_module(), ballasts=frozenset({BallastTech.MAGNETIC_GLOW_STARTER})),
    ),
    "lamp.compact-2pin": lambda: with_fixture(
        lamp_type=LampType.CFL_2PIN, lamp_w=26.0, lamp_length_mm=None
    ),
    "lamp.led-tube": lambda: with_fixture(lamp_type=LampType.LED_TUBE, lamp_w=18.0),
    "lamp.type-not-listed": lambda: with_fixture(lamp_type=LampType.T12, lamp_w=40.0),
    "lamp.watts-out-of-range": lambda: with_fixture(lamp_w=70.0, lamp_length_mm=1800.0),
    "lamp.length-mismatch": lambda: with_fixture(lamp_length_mm=1500.0),
    "lamp.not-in-table": lambda: with_fixture(lamp_w=40.0),
    "wiring.series-one-end": lambda: Combo(
        fixture=replace(good_fixture(), wiring=Wiring.SERIES),
        module=replace(good_module(), changeover=Changeover.ONE_END),
    ),
    "wiring.series-link": lambda: with_fixture(wiring=Wiring.SERIES),
    "lamps.too-many": lambda: with_fixture(lamps_to_back_up=2),
    "supply.unswitched-missing": lambda: with_fixture(unswitched_supply=False),
    "pack.lifepo4-on-nickel-charger": lambda: with_pack(chemistry=Chemistry.LIFEPO4, cells=2),
    "pack.chemistry-mismatch": lambda: with_pack(chemistry=Chemistry.NIMH),
    "pack.cells-mismatch": lambda: with_pack(cells=3),
    "module.rated-short": lambda: Combo(requirement=Requirement(duration_min=180.0)),
    "requirement.below-profile": lambda: Combo(
        requirement=Requirement(duration_min=60.0, profile=get_profile("us-egress"))
    ),
    "runtime.short": lambda: with_pack(capacity_ah=1.7),
    "runtime.thin-margin": lambda: with_pack(capacity_ah=3.2),
    "runtime.ok": Combo,
    "runtime.no-data": lambda: with_fixture(ambient_c=-25.0),
    "discharge.rate-high": lambda: with_pack(capacity_ah=3.2),
    "charge.recharge-slow": lambda: with_module(charge_a=0.18),
    "charge.trickle-high": lambda: with_module(charge_a=0.6),
    "charge.trickle-low": lambda: with_module(charge_a=0.1),
    "temperature.over-max": lambda: Combo(
        fixture=replace(good_fixture(), ambient_c=45.0),
        pack=replace(good_pack(), max_ambient_c=40.0),
    ),
    "temperature.near-max": lambda: with_fixture(ambient_c=45.0),
    "pack.sag-below-cutoff": lambda: with_pack(reading=WORN_READING),
    "pack.resistance-watch": lambda: with_pack(reading=TIRED_READING, new_internal_ohm=0.04),
    "pack.resistance-replace": lambda: with_pack(reading=TIRED_READING, new_internal_ohm=0.02),
    "pack.age-due": lambda: with_pack(installed_on=date(2020, 5, 1)),
    "pack.age-near": lambda: with_pack(installed_on=date(2022, 1, 1)),
    "waveform.pulsed-dc": lambda: with_module(waveform=Waveform.PULSED_DC),
    "light.output": Combo,
    "light.below-needed": lambda: Combo(
        requirement=Requirement(duration_min=90.0, min_emergency_lm=1000.0)
    ),
}
QUIET: dict[str, Callable[[], Combo]] = {
    "runtime.ok": lambda: with_pack(capacity_ah=1.7),
    "light.output": lambda: with_fixture(lamp_type=LampType.LED_TUBE, lamp_w=18.0),
    # A healthy pack's reading, and a young pack, keep the pack rules quiet.
    "pack.sag-below-cutoff": lambda: with_pack(reading=TIRED_READING),
    "pack.resistance-watch": lambda: with_pack(reading=TIRED_READING, new_internal_ohm=0.08),
    "pack.resistance-replace": lambda: with_pack(reading=TIRED_READING, new_internal_ohm=0.04),
    "pack.age-due": lambda: with_pack(installed_on=ONE_YEAR_AGO),
    "pack.age-near": lambda: with_pack(installed_on=ONE_YEAR_AGO),
}


def test_every_code_has_a_firing_case_and_belongs_to_one_rule() -> None:
    rule_codes = [code for each in RULES for code in each.codes]
    assert sorted(rule_codes) == sorted(FINDINGS)
    assert set(FIRING) == set(FINDINGS)


@pytest.mark.parametrize("code", sorted(FIRING))
def test_rule_fires(code: str) -> None:
    assert code in FIRING[code]().codes()


@pytest.mark.parametrize("code", sorted(FIRING))
def test_rule_keeps_quiet(code: str) -> None:
    assert code not in QUIET.get(code, Combo)().codes()


def test_each_finding_carries_message_fix_and_source() -> None:
    for code, make in FIRING.items():
        result = evaluate(*vars(make()).values(), today=TODAY)
        finding = next(f for f in result.findings if f.code == code)
        assert finding.message and finding.fix and finding.source
        assert "{" not in finding.message + finding.fix + finding.source


def test_the_worn_pack_message_speaks_of_the_cut_off() -> None:
    # Common practice: worn 4-cell pack, 5.2 V open, under 3 V on 9.1 ohm,
    # collapses below the 4.0 V cut-off at a 1.4 A module draw.
    combo = with_pack(reading=WORN_READING)
    result = evaluate(combo.fixture, combo.module, combo.pack, combo.requirement)
    sag = next(f for f in result.findings if f.code == "pack.sag-below-cutoff")
    assert sag.severity is Severity.FAIL
    assert "4.00 V cut-off" in sag.message and sag.fix == "Replace the pack."
    assert result.verdict is Verdict.FAIL


def test_a_pulsed_module_warns_and_missing_supply_adds_work_without_failing() -> None:
    combo = Combo(
        fixture=replace(good_fixture(), unswitched_supply=False),
        module=replace(good_module(), waveform=Waveform.PULSED_DC),
    )
    result = evaluate(combo.fixture, combo.module, combo.pack, combo.requirement)
    assert result.verdict is Verdict.WARN
    severities = [f.severity for f in result.findings]
    assert severities == sorted(severities, key=SEVERITY_RANK.__getitem__)


def test_action_findings_alone_leave_a_pass() -> None:
    combo = with_fixture(unswitched_supply=False)
    result = evaluate(combo.fixture, combo.module, combo.pack, combo.requirement)
    assert result.verdict is Verdict.PASS
    assert "supply.unswitched-missing" in [f.code for f in result.findings]


def test_the_longer_of_area_and_profile_duration_is_checked() -> None:
    combo = Combo(requirement=Requirement(duration_min=60.0, profile=get_profile("eu-3h-premises")))
    result = evaluate(combo.fixture, combo.module, combo.pack, combo.requirement)
    assert result.case.required_min == 180.0
    assert "module.rated-short" in [f.code for f in result.findings]


def test_emergency_lumens_estimate_for_a_58_w_lamp() -> None:
    # Common practice: about 7 W from the battery into a 58 W lamp gives an EBLF
    # near 0.09, roughly 470 lm (5200 lm x 0.75 x 7 / 58 = 470.7 lm).
    combo = with_fixture(lamp_w=58.0, lamp_length_mm=1500.0)
    result = evaluate(combo.fixture, combo.module, combo.pack, combo.requirement)
    assert result.case.eblf_is_estimate
    assert result.case.emergency_lm == pytest.approx(470.7, abs=0.5)
    light = next(f for f in result.findings if f.code == "light.output")
    assert "(estimated)" in light.message


def test_a_declared_eblf_is_used_as_declared() -> None:
    combo = Combo(
        fixture=replace(good_fixture(), lamp_w=58.0, lamp_length_mm=1500.0),
        module=replace(good_module(), declared_eblf=0.12),
    )
    result = evaluate(combo.fixture, combo.module, combo.pack, combo.requirement)
    assert not result.case.eblf_is_estimate
    assert result.case.emergency_lm == pytest.approx(5200 * 0.12)


def test_assumptions_name_the_defaults_used() -> None:
    result = evaluate(good_fixture(), good_module(), good_pack(), Requirement(90.0))
    said = " | ".join(result.assumptions)
    assert "Peukert exponent k = 1.1" in said
    assert "constant power" in said
    assert "cut-off 4.8 V" not in said and "cut-off 4 V" in said


def test_physical_nonsense_is_refused_on_construction() -> None:
    with pytest.raises(ValueError, match="lamps_to_back_up"):
        replace(good_fixture(), lamps_to_back_up=3)
    with pytest.raises(ValueError, match="series wiring needs at least two lamps"):
        replace(good_fixture(), lamp_count=1, wiring=Wiring.SERIES)
    with pytest.raises(ValueError, match="battery_w"):
        replace(good_module(), battery_a=1.4)
    with pytest.raises(ValueError, match="lamp_w_max"):
        replace(good_module(), lamp_w_max=10.0)


# ---- property: the verdict is the worst finding ----

combos = st.builds(
    lambda fixture_changes, module_changes, pack_changes, duration: Combo(
        fixture=replace(good_fixture(), **fixture_changes),
        module=replace(good_module(), **module_changes),
        pack=replace(good_pack(), **pack_changes),
        requirement=Requirement(duration_min=duration),
    ),
    st.fixed_dictionaries(
        {
            "lamp_type": st.sampled_from(list(LampType)),
            "lamp_w": st.sampled_from([14.0, 18.0, 28.0, 36.0, 40.0, 58.0, 70.0]),
            "ballast": st.sampled_from(list(BallastTech)),
            "wiring": st.sampled_from([Wiring.PARALLEL, Wiring.SERIES]),
            "unswitched_supply": st.booleans(),
            "ambient_c": st.floats(-30.0, 70.0),
        }
    ),
    st.fixed_dictionaries(
        {
            "charge_a": st.floats(0.05, 2.0),
            "changeover": st.sampled_from(list(Changeover)),
            "waveform": st.sampled_from(list(Waveform)),
        }
    ),
    st.fixed_dictionaries(
        {
            "capacity_ah": st.floats(0.5, 10.0),
            "chemistry": st.sampled_from(list(Chemistry)),
            "cells": st.integers(1, 6),
        }
    ),
    st.sampled_from([60.0, 90.0, 180.0]),
)


@settings(max_examples=200)
@given(combos)
def test_the_verdict_is_the_worst_finding(combo: Combo) -> None:
    result = evaluate(combo.fixture, combo.module, combo.pack, combo.requirement)
    severities = {finding.severity for finding in result.findings}
    if Severity.FAIL in severities:
        assert result.verdict is Verdict.FAIL
    elif Severity.WARN in severities:
        assert result.verdict is Verdict.WARN
    else:
        assert result.verdict is Verdict.PASS
    ranks = [SEVERITY_RANK[f.severity] for f in result.findings]
    assert ranks == sorted(ranks)
