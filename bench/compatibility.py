"""Speed of the compatibility rules: 10,000 fixture/module/pack combinations.

The budget is 0.5 s for building and checking all of them on the project's
machine (2 cores). Beside it runs a floor: the same loop building the same
dataclasses and checking nothing, so a slow machine shows in both numbers.
Each loop runs several times and the fastest run counts (the usual way to
time code on a shared machine: slower runs measure the neighbours); the
budget is judged on CPU time, with wall time shown beside it.

Run with ``python -m bench.compatibility`` (or ``make bench``).
"""

from __future__ import annotations

import json
import sys
import time
from collections import Counter
from collections.abc import Callable
from datetime import date
from pathlib import Path

from server.engineering.batteries import Pack, PackReading
from server.engineering.compatibility import Fixture, Module, Requirement, evaluate
from server.engineering.profiles import get_profile
from server.engineering.vocabulary import (
    BallastTech,
    Changeover,
    Chemistry,
    LampType,
    Waveform,
    Wiring,
)

COMBINATIONS = 10_000
BUDGET_S = 0.5
REPEATS = 5
TODAY = date(2025, 6, 1)

# Invented, generic survey variety. Most fixtures are ordinary linear lamps on
# electronic gear; one figure in a few is a problem case, as on a real survey.
LAMPS = [
    (LampType.T8, 36.0, 1200.0),
    (LampType.T8, 58.0, 1500.0),
    (LampType.T8, 18.0, 600.0),
    (LampType.T5, 28.0, 1149.0),
    (LampType.T5, 54.0, 1149.0),
    (LampType.T8, 36.0, 1200.0),
    (LampType.T5, 35.0, 1449.0),
    (LampType.CFL_4PIN, 26.0, None),
    (LampType.CFL_2PIN, 18.0, None),
    (LampType.T8, 36.0, 1500.0),
]
BALLASTS = [
    BallastTech.ELECTRONIC_PROGRAMMED_START,
    BallastTech.ELECTRONIC_INSTANT_START,
    BallastTech.ELECTRONIC_PROGRAMMED_START,
    BallastTech.MAGNETIC_GLOW_STARTER,
]
WIRINGS = [Wiring.PARALLEL, Wiring.PARALLEL, Wiring.SERIES, Wiring.SINGLE]
AMBIENTS_C = [25.0, 30.0, 35.0, None, 42.0, 10.0]
MODULE_WATTS = [4.0, 7.0, 5.5, 10.0]
CHARGE_A = [0.3, 0.35, 0.4, 0.3]
CAPACITIES_AH = [4.5, 4.0, 3.6, 4.5, 1.7]
CHEMISTRIES = [Chemistry.NICD] * 9 + [Chemistry.NIMH]
READINGS = [
    None,
    None,
    None,
    PackReading(open_circuit_v=5.3, loaded_v=5.0, load_a=3.0),
    PackReading(open_circuit_v=5.2, loaded_v=3.0, load_ohm=9.1),
]
REQUIREMENTS = [
    Requirement(duration_min=90.0, profile=get_profile("us-egress")),
    Requirement(duration_min=60.0, profile=get_profile("eu-escape-route")),
    Requirement(duration_min=90.0),
]
MODULE_LAMPS = frozenset({LampType.T8, LampType.T5, LampType.CFL_4PIN})
MODULE_BALLASTS = frozenset(
    {
        BallastTech.ELECTRONIC_PROGRAMMED_START,
        BallastTech.ELECTRONIC_INSTANT_START,
        BallastTech.MAGNETIC_GLOW_STARTER,
    }
)

Combination = tuple[Fixture, Module, Pack, Requirement]


def build(i: int) -> Combination:
    """The i-th combination: every figure picked from the lists above by i."""
    lamp_type, lamp_w, length_mm = LAMPS[i % len(LAMPS)]
    fixture = Fixture(
        lamp_type=lamp_type,
        lamp_w=lamp_w,
        lamp_count=2,
        ballast=BALLASTS[i // 3 % len(BALLASTS)],
        wiring=WIRINGS[i // 7 % len(WIRINGS)],
        unswitched_supply=i % 5 != 0,
        lamps_to_back_up=1,
        lamp_length_mm=length_mm,
        ambient_c=AMBIENTS_C[i // 11 % len(AMBIENTS_C)],
    )
    module = Module(
        chemistry=Chemistry.NICD,
        cells=4,
        battery_w=MODULE_WATTS[i // 13 % len(MODULE_WATTS)],
        charge_a=CHARGE_A[i // 17 % len(CHARGE_A)],
        rated_min=90.0,
        lamp_types=MODULE_LAMPS,
        lamp_w_min=14.0,
        lamp_w_max=58.0,
        ballasts=MODULE_BALLASTS,
        changeover=Changeover.BOTH_ENDS if i % 6 else Changeover.ONE_END,
        max_lamps=1,
        waveform=Waveform.AC if i % 9 else Waveform.PULSED_DC,
        declared_eblf=0.1 if i % 8 == 0 else None,
    )
    pack = Pack(
        chemistry=CHEMISTRIES[i // 19 % len(CHEMISTRIES)],
        cells=4,
        capacity_ah=CAPACITIES_AH[i // 2 % len(CAPACITIES_AH)],
        installed_on=date(2021 + i % 4, 1 + i % 5, 1),
        new_internal_ohm=0.04,
        reading=READINGS[i // 23 % len(READINGS)],
    )
    return fixture, module, pack, REQUIREMENTS[i % len(REQUIREMENTS)]


def floor_loop(n: int) -> None:
    for i in range(n):
        build(i)


def check_loop(n: int) -> None:
    for i in range(n):
        fixture, module, pack, requirement = build(i)
        evaluate(fixture, module, pack, requirement, today=TODAY)


def fastest_s(loop: Callable[[int], None], n: int, repeats: int = REPEATS) -> tuple[float, float]:
    """Fastest wall-clock and fastest CPU time of ``repeats`` runs. [s]"""
    wall, cpu = [], []
    for _ in range(repeats):
        wall_start, cpu_start = time.perf_counter(), time.process_time()
        loop(n)
        wall.append(time.perf_counter() - wall_start)
        cpu.append(time.process_time() - cpu_start)
    return min(wall), min(cpu)


def verdict_mix(n: int) -> Counter[str]:
    """How many combinations pass, warn and fail: the bench must exercise all three."""
    return Counter(evaluate(*build(i), today=TODAY).verdict.value for i in range(n))


def run(n: int = COMBINATIONS, repeats: int = REPEATS) -> dict[str, object]:
    """Time both loops; the budget is judged on CPU time, which other processes
    sharing the machine's two cores do not inflate (wall time is shown beside it)."""
    floor_wall_s, floor_cpu_s = fastest_s(floor_loop, n, repeats)
    full_wall_s, full_cpu_s = fastest_s(check_loop, n, repeats)
    return {
        "combinations": n,
        "floor_build_only_cpu_s": round(floor_cpu_s, 4),
        "build_and_check_cpu_s": round(full_cpu_s, 4),
        "check_only_cpu_s": round(full_cpu_s - floor_cpu_s, 4),
        "floor_build_only_wall_s": round(floor_wall_s, 4),
        "build_and_check_wall_s": round(full_wall_s, 4),
        "per_combination_us": round(1e6 * full_cpu_s / n, 1),
        "budget_s": BUDGET_S,
        "within_budget": full_cpu_s < BUDGET_S,
        "verdicts": dict(verdict_mix(n)),
    }


def main() -> int:
    result = run()
    print(json.dumps(result, indent=2))
    out = Path(__file__).parent / "results"
    out.mkdir(exist_ok=True)
    (out / "compatibility.json").write_text(json.dumps(result, indent=2) + "\n")
    return 0 if result["within_budget"] else 1


if __name__ == "__main__":
    sys.exit(main())
