"""The life-safety cautions shown where a user acts on a result, and printed on every PDF.

References
----------
Common practice of the trade; codes named as examples: NFPA 101 and NFPA 70
(US), BS 5266-1, EN 1838 and EN 50172 (UK and Europe).
"""

from __future__ import annotations

STAYS_LIVE = (
    "Battery-backed luminaires stay live after the mains is isolated: isolate the supply "
    "AND unplug the pack before working on the fixture."
)
LAMP_VOLTAGE = (
    "Emergency modules put several hundred volts on the lamp terminals, in emergency mode "
    "and during tests: treat the lamp circuit as live."
)
CADMIUM = (
    "Nickel-cadmium packs contain cadmium: do not put them in general waste; recycle them as "
    "the local rules require."
)
QUALIFIED_PERSON = (
    "Emergency lighting is life-safety equipment. The design must be checked, and the work done "
    "and certified, by a qualified person under the codes that apply locally (for example "
    "NFPA 101 and NFPA 70 in the US, BS 5266-1, EN 1838 and EN 50172 in the UK and Europe). "
    "This tool's results support that judgement; they do not replace it."
)

CAUTIONS: tuple[str, ...] = (STAYS_LIVE, LAMP_VOLTAGE, CADMIUM, QUALIFIED_PERSON)
