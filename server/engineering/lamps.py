"""Lamps and the light a converted luminaire gives on battery.

The lamp table holds nominal lengths and typical lumens of common
fluorescent lamps; the emergency output is rated lumens times the emergency
ballast lumen factor (EBLF), declared by the module or estimated from its
battery power.

References
----------
.. [1] IEC 60081, double-capped fluorescent lamps, lamp data sheets (lengths
   and wattages from memory; T5 549/849/1149 mm and T8 590/895/1199 mm
   checked against a lighting research centre's page).
.. [2] IEC 61347-2-7 clause 20: EBLF tested at 25 degC after a 24 h charge,
   the lower of the 60 s value and the value at the lowest battery voltage
   during the duration (checked against a page quoting it).
.. [3] Estimated EBLF = 0.75 * P_battery / P_lamp (common practice).
"""

from __future__ import annotations

from dataclasses import dataclass

from server.engineering.errors import InvalidInput, require_positive
from server.engineering.vocabulary import LampType

LINEAR_LAMP_TYPES = frozenset({LampType.T5, LampType.T8, LampType.T12})


@dataclass(frozen=True, slots=True)
class LampRating:
    """Catalogue figures of one lamp.

    Attributes
    ----------
    lamp_w : float
        Rated lamp power. [W]
    nominal_length_mm : float or None
        Nominal length; None for compact lamps. [mm]
    lumens_lm : float or None
        Typical initial lumens at 25 degC on high-frequency gear. [lm]
    source : str
        Where the figures come from.
    """

    lamp_type: LampType
    lamp_w: float
    nominal_length_mm: float | None
    lumens_lm: float | None
    source: str


_T8 = "IEC 60081 lamp data (from memory)"
_T8_LM = "IEC 60081 lamp data; lumens from memory"
_T8_US = "US 4 ft T8, lumens 2800-2950 lm checked against pages (2850 lm taken)"
_T5 = "IEC 60081 lamp data (from memory); T5 lengths checked against a lighting research page"
_T5_LM = "lumens at 25 degC checked against pages (about 2900 lm at the 35 degC rating)"
_T12 = "IEC 60081 lamp data (from memory)"

LAMP_TABLE: dict[tuple[LampType, float], LampRating] = {
    (rating.lamp_type, rating.lamp_w): rating
    for rating in (
        LampRating(LampType.T8, 18.0, 600.0, 1350.0, _T8_LM),
        LampRating(LampType.T8, 30.0, 900.0, None, _T8),
        LampRating(LampType.T8, 36.0, 1200.0, 3350.0, _T8_LM),
        LampRating(LampType.T8, 58.0, 1500.0, 5200.0, _T8_LM),
        LampRating(LampType.T8, 70.0, 1800.0, None, _T8),
        LampRating(LampType.T8, 17.0, 600.0, None, _T8 + "; US 2 ft"),
        LampRating(LampType.T8, 25.0, 900.0, None, _T8 + "; US 3 ft"),
        LampRating(LampType.T8, 32.0, 1200.0, 2850.0, _T8_US),
        LampRating(LampType.T5, 14.0, 549.0, None, _T5),
        LampRating(LampType.T5, 21.0, 849.0, None, _T5),
        LampRating(LampType.T5, 28.0, 1149.0, 2600.0, _T5 + "; " + _T5_LM),
        LampRating(LampType.T5, 35.0, 1449.0, None, _T5),
        LampRating(LampType.T5, 24.0, 549.0, None, _T5 + " (high output)"),
        LampRating(LampType.T5, 39.0, 849.0, None, _T5 + " (high output)"),
        LampRating(LampType.T5, 54.0, 1149.0, 5000.0, _T5 + " (high output); lumens checked"),
        LampRating(LampType.T5, 80.0, 1449.0, None, _T5 + " (high output)"),
        LampRating(LampType.T5, 49.0, 1449.0, None, _T5 + " (high output)"),
        LampRating(LampType.T12, 20.0, 600.0, None, _T12),
        LampRating(LampType.T12, 40.0, 1200.0, None, _T12),
        LampRating(LampType.T12, 65.0, 1500.0, None, _T12),
        LampRating(LampType.T12, 75.0, 2400.0, None, _T12 + "; US 8 ft slimline"),
    )
}

# A measured length within this of the nominal one matches (our choice: it
# admits both nominal and actual lengths, 600 vs 590 mm, 1200 vs 1219 mm).
LENGTH_TOLERANCE_MM = 25.0

# Typical efficacy by lamp type for lamps without table lumens. T5 and T8
# derived from the checked table rows (2600 lm / 28 W, 5200 lm / 58 W); T12 and
# 4-pin compact lamps from memory.
TYPICAL_EFFICACY_LM_PER_W: dict[LampType, float] = {
    LampType.T5: 2600.0 / 28.0,
    LampType.T8: 5200.0 / 58.0,
    LampType.T12: 70.0,
    LampType.CFL_4PIN: 65.0,
}

# Conversion efficiency from battery power to lamp light, relative to rated
# operation (common practice).
EBLF_ESTIMATE_EFFICIENCY = 0.75
EBLF_ESTIMATE_SOURCE = "estimate 0.75 x battery watts / lamp watts (common practice)"
EBLF_DECLARED_SOURCE = "declared by the module maker, tested per IEC 61347-2-7 clause 20"


def lamp_rating(lamp_type: LampType, lamp_w: float) -> LampRating | None:
    """The table entry of a lamp, or None when the table does not list it."""
    return LAMP_TABLE.get((lamp_type, float(lamp_w)))


def length_matches(lamp_type: LampType, lamp_w: float, lamp_length_mm: float) -> bool | None:
    """Whether a measured lamp length fits the lamp's nominal length.

    Parameters
    ----------
    lamp_type : LampType
        Lamp type.
    lamp_w : float
        Rated lamp power. [W]
    lamp_length_mm : float
        Length the surveyor measured or read. [mm]

    Returns
    -------
    bool or None
        True within :data:`LENGTH_TOLERANCE_MM`, False outside it, None when
        the table has no length for this lamp.

    References
    ----------
    IEC 60081 lamp data (from memory; T5 and T8 lengths checked).
    """
    require_positive("lamp_length_mm", lamp_length_mm)
    rating = lamp_rating(lamp_type, lamp_w)
    if rating is None or rating.nominal_length_mm is None:
        return None
    return abs(lamp_length_mm - rating.nominal_length_mm) <= LENGTH_TOLERANCE_MM


def lamps_of_length(lamp_type: LampType, lamp_length_mm: float) -> list[float]:
    """Rated watts of the table lamps of a type whose length fits. [W]"""
    return sorted(
        rating.lamp_w
        for rating in LAMP_TABLE.values()
        if rating.lamp_type is lamp_type
        and rating.nominal_length_mm is not None
        and abs(lamp_length_mm - rating.nominal_length_mm) <= LENGTH_TOLERANCE_MM
    )


def typical_lumens_lm(lamp_type: LampType, lamp_w: float) -> tuple[float, bool]:
    """Typical initial lumens of a lamp and whether the figure is an estimate.

    Parameters
    ----------
    lamp_type : LampType
        Lamp type.
    lamp_w : float
        Rated lamp power. [W]

    Returns
    -------
    tuple of (float, bool)
        Lumens at 25 degC [lm]; True when estimated from the type's typical
        efficacy rather than read from the table.

    Raises
    ------
    InvalidInput
        For lamp types a fluorescent module cannot run (2-pin compact, LED).

    References
    ----------
    :data:`LAMP_TABLE`, :data:`TYPICAL_EFFICACY_LM_PER_W`.
    """
    require_positive("lamp_w", lamp_w)
    rating = lamp_rating(lamp_type, lamp_w)
    if rating is not None and rating.lumens_lm is not None:
        return rating.lumens_lm, False
    efficacy = TYPICAL_EFFICACY_LM_PER_W.get(lamp_type)
    if efficacy is None:
        raise InvalidInput(
            "lamp_type", f"no typical lumens for {lamp_type.value}: enter the lamp's own lumens"
        )
    return efficacy * lamp_w, True


def backup_power_fraction(lamp_w: float, module_w: float) -> float:
    """Share of the lamp's rated power the module gives it in emergency mode.

    Parameters
    ----------
    lamp_w : float
        Rated power of the lamps the module runs. [W]
    module_w : float
        The module's output power to the lamp or, when that is not stated,
        its battery power. [W]

    Returns
    -------
    float
        module_w / lamp_w; shown to users as a percentage. [-]

    References
    ----------
    Common practice.
    """
    require_positive("lamp_w", lamp_w)
    require_positive("module_w", module_w)
    return module_w / lamp_w


def estimated_eblf(
    battery_w: float, lamp_w: float, *, efficiency: float = EBLF_ESTIMATE_EFFICIENCY
) -> float:
    """Estimate the emergency ballast lumen factor from battery power.

    Parameters
    ----------
    battery_w : float
        Battery-side power of the module. [W]
    lamp_w : float
        Rated power of the lamps it runs. [W]
    efficiency : float
        Battery-to-lamp efficiency relative to rated operation (default 0.75,
        common practice). [-]

    Returns
    -------
    float
        EBLF = efficiency * battery_w / lamp_w, at most 1. [-]

    References
    ----------
    Common practice; a declared EBLF (IEC 61347-2-7 clause 20) is better.
    """
    require_positive("battery_w", battery_w)
    require_positive("lamp_w", lamp_w)
    if not 0 < efficiency <= 1:
        raise InvalidInput("efficiency", "the conversion efficiency lies above 0 and at most 1")
    return min(1.0, efficiency * battery_w / lamp_w)


def emergency_lumens_lm(lamp_lm: float, eblf: float) -> float:
    """Light output on battery, rated lumens times EBLF.

    Parameters
    ----------
    lamp_lm : float
        Rated lumens of the lamps the module runs. [lm]
    eblf : float
        Emergency ballast lumen factor. [-]

    Returns
    -------
    float
        Emergency lumens. [lm]

    References
    ----------
    IEC 61347-2-7 (definition of the emergency ballast lumen factor).
    """
    require_positive("lamp_lm", lamp_lm)
    if not 0 < eblf <= 1:
        raise InvalidInput("declared_eblf", "an EBLF lies above 0 and at most 1")
    return lamp_lm * eblf
