"""The words of the trade the planner uses, as closed sets of values.

The values are the ones the JSON API carries (``"T8"``, ``"electronic-
programmed-start"``, ``"series"`` ...), so the database, the API, the pages
and the engineering core all speak the same vocabulary.

References
----------
Ballast technologies and lamp families: common practice of the trade.
"""

from __future__ import annotations

from enum import StrEnum


class LampType(StrEnum):
    T5 = "T5"
    T8 = "T8"
    T12 = "T12"
    CFL_4PIN = "CFL-4pin"
    CFL_2PIN = "CFL-2pin"
    LED_TUBE = "LED-tube"


class BallastTech(StrEnum):
    MAGNETIC_GLOW_STARTER = "magnetic-glow-starter"
    MAGNETIC_RAPID_START = "magnetic-rapid-start"
    MAGNETIC_INSTANT_START = "magnetic-instant-start"
    ELECTRONIC_INSTANT_START = "electronic-instant-start"
    ELECTRONIC_PROGRAMMED_START = "electronic-programmed-start"
    ELECTRONIC_DIMMABLE = "electronic-dimmable"

    @property
    def is_magnetic(self) -> bool:
        return self.value.startswith("magnetic")


class Wiring(StrEnum):
    SINGLE = "single"
    SERIES = "series"
    PARALLEL = "parallel"


class Chemistry(StrEnum):
    NICD = "NiCd"
    NIMH = "NiMH"
    LIFEPO4 = "LiFePO4"


class Changeover(StrEnum):
    ONE_END = "one-end"
    BOTH_ENDS = "both-ends"


class Waveform(StrEnum):
    AC = "ac"
    PULSED_DC = "pulsed-dc"


class DateCodeFormat(StrEnum):
    """How the digits of a pack's date code are to be read."""

    YYWW = "YYWW"
    WWYY = "WWYY"
    MMYY = "MMYY"
    YYMM = "YYMM"
