"""The calculators: turn API shapes into engineering dataclasses, call the core.

A figure the core refuses (``InvalidInput``, a ``ValueError``) becomes a 422
that names the field, never a 500.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from contextlib import contextmanager
from datetime import date

from fastapi.exceptions import RequestValidationError
from sqlalchemy import select
from sqlalchemy.orm import Session

from server.calc import schemas
from server.catalogue.models import RequirementProfile
from server.engineering import calculators, compatibility
from server.engineering.batteries import Pack, PackReading
from server.engineering.errors import InvalidInput
from server.engineering.findings import Finding
from server.engineering.profiles import (
    BUILTIN_PROFILES,
    AreaKind,
    Evaluation,
    Profile,
    make_profile,
)
from server.safety import CAUTIONS


@contextmanager
def refused_as_422(*where: str) -> Iterator[None]:
    """Report a figure the core refuses as a 422 at ``body.<where>.<field>``."""
    try:
        yield
    except InvalidInput as exc:
        raise RequestValidationError(
            [{"loc": ("body", *where, exc.field), "msg": exc.reason, "type": "value_error"}]
        ) from exc
    except ValueError as exc:
        raise RequestValidationError(
            [{"loc": ("body", *where), "msg": str(exc), "type": "value_error"}]
        ) from exc


def findings_out(findings: Iterable[Finding]) -> list[schemas.FindingOut]:
    return [
        schemas.FindingOut(
            code=f.code, severity=f.severity, message=f.message, fix=f.fix, source=f.source
        )
        for f in findings
    ]


def runtime(*, payload: schemas.RuntimeIn) -> schemas.RuntimeOut:
    with refused_as_422():
        pack = Pack(
            chemistry=payload.chemistry,
            cells=payload.cells,
            capacity_ah=payload.capacity_ah,
            rated_hours=payload.rated_hours,
            peukert_k=payload.peukert_k,
            aging_factor=payload.aging_factor,
        )
        result = calculators.runtime_calc(
            pack,
            load_w=payload.load_w,
            load_a=payload.load_a,
            ambient_c=payload.ambient_c,
            required_min=payload.required_min,
        )
    return schemas.RuntimeOut(
        current_a=result.current_a,
        c_rate=result.c_rate,
        runtime_new_min=result.runtime_new_min,
        runtime_end_of_life_min=result.runtime_end_of_life_min,
        verdict=result.verdict,
        findings=findings_out(result.findings),
        assumptions=list(result.assumptions),
        cautions=list(CAUTIONS),
    )


def recharge(*, payload: schemas.RechargeIn) -> schemas.RechargeOut:
    with refused_as_422():
        result = calculators.recharge_calc(
            payload.chemistry,
            payload.cells,
            payload.capacity_ah,
            payload.charge_a,
            charge_factor=payload.charge_factor,
        )
    return schemas.RechargeOut(
        hours=result.hours,
        charge_factor=result.charge_factor,
        c_rate=result.c_rate,
        verdict=result.verdict,
        findings=findings_out(result.findings),
        assumptions=list(result.assumptions),
        cautions=list(CAUTIONS),
    )


def pack_health(*, payload: schemas.PackHealthIn) -> schemas.PackHealthOut:
    with refused_as_422():
        reading = PackReading(
            open_circuit_v=payload.open_circuit_v,
            loaded_v=payload.loaded_v,
            load_a=payload.load_a,
            load_ohm=payload.load_ohm,
        )
        result = calculators.pack_health_calc(
            payload.chemistry,
            payload.cells,
            reading,
            module_draw_a=payload.module_draw_a,
            cutoff_v=payload.cutoff_v,
            new_internal_ohm=payload.new_internal_ohm,
        )
    return schemas.PackHealthOut(
        internal_resistance_ohm=result.internal_resistance_ohm,
        terminal_v_under_module=result.terminal_v_under_module,
        cutoff_v=result.cutoff_v,
        verdict=result.verdict,
        findings=findings_out(result.findings),
        assumptions=list(result.assumptions),
        cautions=list(CAUTIONS),
    )


def find_profile(*, session: Session, org_id: str, profile_id: str) -> Profile:
    """A built-in profile, or one of the organisation's own, by id.

    Raises
    ------
    InvalidInput
        When neither the built-in profiles nor the organisation's have it
        (another firm's profile included).
    """
    builtin = BUILTIN_PROFILES.get(profile_id)
    if builtin is not None:
        return builtin
    row = session.scalars(
        select(RequirementProfile).where(
            RequirementProfile.id == profile_id, RequirementProfile.org_id == org_id
        )
    ).one_or_none()
    if row is None:
        known = ", ".join(sorted(BUILTIN_PROFILES))
        raise InvalidInput(
            "profile", f"no profile {profile_id!r}: use one of {known} or one of your firm's"
        )
    return make_profile(
        id=row.id,
        name=row.name,
        area_kind=AreaKind(row.area_kind),
        evaluation=Evaluation(row.evaluation),
        duration_min=row.duration_min,
        min_lux=row.min_lux,
        avg_lux=row.avg_lux,
        end_min_lux=row.end_min_lux,
        end_avg_lux=row.end_avg_lux,
        max_min_ratio=row.max_min_ratio,
        monthly_test_days=row.monthly_test_days,
        annual_test_days=row.annual_test_days,
        source=row.source,
    )


def to_fixture(fixture: schemas.FixtureIn) -> compatibility.Fixture:
    return compatibility.Fixture(
        lamp_type=fixture.lamp_type,
        lamp_w=fixture.lamp_w,
        lamp_count=fixture.lamp_count,
        ballast=fixture.ballast,
        wiring=fixture.wiring,
        unswitched_supply=fixture.unswitched_supply,
        lamps_to_back_up=fixture.lamps_to_back_up,
        lamp_length_mm=fixture.lamp_length_mm,
        ambient_c=fixture.ambient_c,
    )


def to_module(module: schemas.ModuleIn) -> compatibility.Module:
    return compatibility.Module(
        chemistry=module.chemistry,
        cells=module.cells,
        charge_a=module.charge_a,
        rated_min=module.rated_min,
        lamp_types=frozenset(module.lamp_types),
        lamp_w_min=module.lamp_w_min,
        lamp_w_max=module.lamp_w_max,
        ballasts=frozenset(module.ballasts),
        changeover=module.changeover,
        max_lamps=module.max_lamps,
        waveform=module.waveform,
        battery_w=module.battery_w,
        battery_a=module.battery_a,
        output_w=module.output_w,
        declared_eblf=module.declared_eblf,
        cutoff_v=module.cutoff_v,
    )


def to_pack(pack: schemas.PackIn) -> Pack:
    reading = None
    if pack.open_circuit_v is not None and pack.loaded_v is not None:
        reading = PackReading(
            open_circuit_v=pack.open_circuit_v,
            loaded_v=pack.loaded_v,
            load_a=pack.load_a,
            load_ohm=pack.load_ohm,
        )
    return Pack(
        chemistry=pack.chemistry,
        cells=pack.cells,
        capacity_ah=pack.capacity_ah,
        rated_hours=pack.rated_hours,
        peukert_k=pack.peukert_k,
        nominal_v=pack.nominal_v,
        design_life_years=pack.design_life_years,
        max_ambient_c=pack.max_c,
        new_internal_ohm=pack.new_internal_ohm,
        installed_on=pack.installed_on,
        reading=reading,
    )


def check(
    *, session: Session, org_id: str, payload: schemas.CheckIn, today: date
) -> schemas.CheckOut:
    """Run every compatibility rule over the combination in ``payload``."""
    with refused_as_422("fixture"):
        fixture = to_fixture(payload.fixture)
    with refused_as_422("module"):
        module = to_module(payload.module)
    with refused_as_422("pack"):
        pack = to_pack(payload.pack)
    with refused_as_422("requirement"):
        profile = None
        if payload.requirement.profile is not None:
            profile = find_profile(
                session=session, org_id=org_id, profile_id=payload.requirement.profile
            )
        requirement = compatibility.Requirement(
            duration_min=payload.requirement.duration_min,
            profile=profile,
            min_emergency_lm=payload.requirement.min_emergency_lm,
        )
    with refused_as_422("pack"):
        result = compatibility.evaluate(fixture, module, pack, requirement, today=today)
    case = result.case
    return schemas.CheckOut(
        verdict=result.verdict,
        findings=findings_out(result.findings),
        runtime_new_min=case.runtime_new_min,
        runtime_end_of_life_min=case.runtime_end_of_life_min,
        c_rate=case.c_rate,
        recharge_h=case.recharge_h,
        eblf=case.eblf,
        eblf_is_estimate=case.eblf_is_estimate,
        emergency_lumens=case.emergency_lm,
        backup_power_pct=100.0 * case.backup_power_fraction,
        service_life_years=case.service_life_years,
        required_min=case.required_min,
        assumptions=result.assumptions,
        cautions=list(CAUTIONS),
    )
