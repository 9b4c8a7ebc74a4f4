"""Lamps: the table, the length check, typical lumens and the light on battery."""

from __future__ import annotations

import pytest

from server.engineering import lamps
from server.engineering.errors import InvalidInput
from server.engineering.vocabulary import LampType

T5, T8 = LampType.T5, LampType.T8


@pytest.mark.parametrize(
    ("lamp_type", "lamp_w", "length_mm"),
    [
        # Actual lamp lengths from a lighting research centre's page (checked):
        # T5 549/849/1149 mm, T8 590/895/1199 mm.
        (T5, 14.0, 549.0),
        (T5, 21.0, 849.0),
        (T5, 28.0, 1149.0),
        (T8, 18.0, 590.0),
        (T8, 30.0, 895.0),
        (T8, 36.0, 1199.0),
        # Nominal lengths, IEC 60081 data sheets (from memory).
        (T8, 58.0, 1500.0),
        (T8, 70.0, 1800.0),
        (T5, 54.0, 1149.0),
        (T5, 49.0, 1449.0),
        # US 4 ft T8 measured in inches: 48 in = 1219.2 mm (definition of the inch).
        (T8, 32.0, 48 * 25.4),
    ],
)
def test_published_lengths_match(lamp_type: LampType, lamp_w: float, length_mm: float) -> None:
    assert lamps.length_matches(lamp_type, lamp_w, length_mm) is True


def test_a_wrong_length_is_caught_and_the_likely_lamp_named() -> None:
    # IEC 60081 (from memory): a 1500 mm T8 is the 58 W lamp, not the 36 W one.
    assert lamps.length_matches(T8, 36.0, 1500.0) is False
    assert lamps.lamps_of_length(T8, 1500.0) == [58.0]
    # 1200 mm T8: 36 W (European) or 32 W (US).
    assert lamps.lamps_of_length(T8, 1200.0) == [32.0, 36.0]


def test_a_lamp_not_in_the_table_is_not_judged() -> None:
    assert lamps.length_matches(T8, 40.0, 1200.0) is None
    assert lamps.length_matches(LampType.CFL_4PIN, 26.0, 150.0) is None


def test_typical_lumens() -> None:
    # T5 28 W about 2600 lm at 25 degC (checked against pages); US T8 32 W
    # 2800-2950 lm (checked against pages); T8 58 W about 5200 lm (from memory).
    assert lamps.typical_lumens_lm(T5, 28.0) == (2600.0, False)
    lumens, estimate = lamps.typical_lumens_lm(T8, 32.0)
    assert 2800.0 <= lumens <= 2950.0 and not estimate
    assert lamps.typical_lumens_lm(T8, 58.0) == (5200.0, False)


def test_lumens_of_an_unlisted_lamp_are_an_estimate() -> None:
    # T5 35 W has no table lumens: typical T5 efficacy 2600 / 28 = 92.9 lm/W
    # gives 35 * 92.86 = 3250 lm, flagged as an estimate.
    lumens, estimate = lamps.typical_lumens_lm(T5, 35.0)
    assert estimate is True
    assert lumens == pytest.approx(35.0 * 2600.0 / 28.0)
    with pytest.raises(InvalidInput, match="lamp_type"):
        lamps.typical_lumens_lm(LampType.LED_TUBE, 18.0)


def test_about_7_w_into_a_58_w_lamp_is_dim() -> None:
    # Common practice: about 7 W from the battery into a 58 W lamp gives an EBLF
    # near 0.09, roughly 470 lm. 0.75 * 7 / 58 = 0.0905; 0.0905 * 5200 = 470.7 lm.
    eblf = lamps.estimated_eblf(7.0, 58.0)
    assert eblf == pytest.approx(0.0905, abs=0.0005)
    assert lamps.emergency_lumens_lm(5200.0, eblf) == pytest.approx(470, abs=5)


def test_backup_power_fraction() -> None:
    # 7 W to a 58 W lamp: 7 / 58 = 12.1 %.
    assert lamps.backup_power_fraction(58.0, 7.0) == pytest.approx(0.1207, abs=0.0001)


def test_eblf_never_exceeds_one_and_a_declared_one_is_checked() -> None:
    assert lamps.estimated_eblf(100.0, 14.0) == 1.0
    with pytest.raises(InvalidInput, match="declared_eblf"):
        lamps.emergency_lumens_lm(1000.0, 1.5)
    with pytest.raises(InvalidInput, match="battery_w"):
        lamps.estimated_eblf(0.0, 58.0)
