"""Luminous intensity distributions and point-by-point floor illuminance.

A luminaire's light is described by how its intensity varies with direction.
Directions use type C angles: the vertical angle ``theta`` from the downward
vertical (nadir, 0) up to the zenith (pi), and the horizontal angle ``psi`` in
plan, measured counter-clockwise seen from above, from the luminaire's axis
(the lamp axis of a linear luminaire).

A distribution here is *per lumen*: :meth:`Distribution.intensity_cd_per_lm`
returns candela for each lumen of emergency flux, so one distribution (the
default cosine emitter, or an imported LM-63 file) serves every luminaire and
is scaled by that luminaire's emergency lumens.

References
----------
.. [1] IES, *Lighting Handbook*, and ANSI/IES RP-16 (nomenclature and
   definitions): the inverse-square cosine law E = I cos(theta) / d**2, and the
   rule that a source is a point within 1 % beyond five times its largest
   dimension.
.. [2] Lambert's cosine law: a perfectly diffusing emitter of peak intensity
   I0 emits the flux pi * I0 into the hemisphere it faces (exact).
.. [3] Lighting handbooks' line-source method: aspect factor
   AF(beta) = (beta + sin(beta) cos(beta)) / 2 for a line source of cosine
   axial distribution, with a horizontal receiving plane parallel to it.
.. [4] ANSI/IES LM-63 (1986, 1991, 1995, 2002, 2019 editions): standard file
   format for the electronic transfer of photometric data.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from typing import Protocol

import numpy as np
from numpy.typing import ArrayLike, NDArray

FloatArray = NDArray[np.float64]

# IES definition of the inverse-square law: a source is a point within 1 %
# beyond five times its largest dimension ([1]).
POINT_SOURCE_DISTANCE_RATIO = 5.0

# A linear luminaire is summed as segments no longer than a fifth of the
# mounting height; below about L/20 (6 cm for a 1.2 m lamp) the count is capped
# and the sum loses accuracy right under the lamp. Our own limit, for speed.
MAX_LINE_SEGMENTS = 100

FEET_TO_M = 0.3048  # international foot, exact

# First lines of the LM-63 editions ([4]); the 1986 edition has no identifier.
LM63_IDENTIFIERS: dict[str, str] = {
    "IESNA91": "1991",
    "IESNA:LM-63-1995": "1995",
    "IESNA:LM-63-2002": "2002",
    "IES:LM-63-2019": "2019",
}

LM63_PHOTOMETRIC_TYPES: dict[int, str] = {1: "C", 2: "B", 3: "A"}  # [4]
LM63_UNITS_TO_M: dict[int, float] = {1: FEET_TO_M, 2: 1.0}  # [4]: 1 feet, 2 metres

_KEYWORD_LINE = re.compile(r"^\[([A-Za-z0-9_\-]+)\]\s?(.*)$")


class Distribution(Protocol):
    """A luminous intensity distribution per lumen of emergency flux."""

    def intensity_cd_per_lm(self, theta_rad: ArrayLike, psi_rad: ArrayLike) -> FloatArray:
        """Intensity toward (theta, psi) for each lumen emitted. [cd/lm]"""
        ...


@dataclass(frozen=True, slots=True)
class LambertianDistribution:
    """A perfectly diffusing downward emitter: I(theta) = I0 cos(theta).

    All the flux goes into the lower hemisphere, so I0 = flux / pi per [2]; no
    light goes above the horizontal. Used when no photometric file is given:
    it counts every emergency lumen as leaving the luminaire, with no loss in
    the body or diffuser.

    References
    ----------
    Lambert's cosine law ([2] in the module docstring).
    """

    def intensity_cd_per_lm(self, theta_rad: ArrayLike, psi_rad: ArrayLike) -> FloatArray:
        """Intensity per lumen, cos(theta) / pi below the horizontal, else 0. [cd/lm]

        Parameters
        ----------
        theta_rad : array_like
            Vertical angle from the nadir. [rad]
        psi_rad : array_like
            Horizontal angle from the luminaire axis (no effect here). [rad]
        """
        theta, _ = np.broadcast_arrays(np.asarray(theta_rad, float), np.asarray(psi_rad, float))
        cos_theta = np.cos(theta)
        return np.where(cos_theta > 0.0, cos_theta / math.pi, 0.0)


LAMBERTIAN = LambertianDistribution()


def lambertian_peak_intensity_cd(flux_lm: float) -> float:
    """Peak (downward) intensity of a Lambertian emitter of a given flux.

    Parameters
    ----------
    flux_lm : float
        Flux emitted into the lower hemisphere. [lm]

    Returns
    -------
    float
        I0 = flux / pi. [cd]

    References
    ----------
    Lambert's cosine law: flux = pi * I0 (exact).
    """
    if flux_lm < 0:
        raise ValueError("flux_lm: the luminous flux cannot be negative")
    return flux_lm / math.pi


def distribution_flux_lm(
    distribution: Distribution, *, theta_steps: int = 360, psi_steps: int = 144
) -> float:
    """Total flux of a distribution per lumen, by the zonal (midpoint) sum.

    Flux = integral over the sphere of I(theta, psi) sin(theta) dtheta dpsi.
    For a per-lumen distribution the answer is 1 when it is normalised.

    Parameters
    ----------
    distribution : Distribution
        The distribution to integrate.
    theta_steps, psi_steps : int
        Zones in the vertical and horizontal angle.

    Returns
    -------
    float
        Flux for one lumen of the distribution's scale. [lm/lm]

    References
    ----------
    IES Lighting Handbook, zonal lumen method (flux from intensity by solid
    angle).
    """
    d_theta = math.pi / theta_steps
    d_psi = 2.0 * math.pi / psi_steps
    theta = (np.arange(theta_steps) + 0.5) * d_theta
    psi = (np.arange(psi_steps) + 0.5) * d_psi
    theta_grid, psi_grid = np.meshgrid(theta, psi, indexing="ij")
    intensity = distribution.intensity_cd_per_lm(theta_grid, psi_grid)
    return float(np.sum(intensity * np.sin(theta_grid)) * d_theta * d_psi)


class Lm63FormatError(ValueError):
    """A photometric file that does not follow LM-63, with the line at fault."""

    def __init__(self, line_number: int, problem: str) -> None:
        self.line_number = line_number
        self.problem = problem
        super().__init__(f"line {line_number}: {problem}")


@dataclass(frozen=True, eq=False)
class Lm63Photometry:
    """Photometric data read from an LM-63 file (type C only).

    Attributes
    ----------
    edition : str
        "1986", "1991", "1995", "2002" or "2019", from the first line.
    keywords : dict
        Keyword lines (``[TEST]``, ``[MANUFAC]`` ...), ``[MORE]`` joined with
        newlines; for 1986 files the free label lines under ``LABEL``.
    tilt : str
        "NONE" or "INCLUDE".
    lamp_count : int
        Number of lamps in the luminaire tested.
    lumens_per_lamp_lm : float or None
        Rated lumens of each lamp; None for absolute photometry (-1). [lm]
    candela_multiplier : float
        Factor applied to every candela value in the file. [-]
    width_m, length_m, height_m : float
        Luminous opening, converted to metres (negative values mean a round
        or elliptical opening in the 2002 and later editions). [m]
    ballast_factor : float
        Ballast factor of the test. Not applied: in emergency mode the
        emergency ballast lumen factor takes its place. [-]
    future_use : float
        The field after the ballast factor (ballast-lamp photometric factor in
        1995, file generation type in 2019). [-]
    input_w : float
        Input watts of the test. [W]
    vertical_deg, horizontal_deg : ndarray
        The angles of the candela grid. [deg]
    candela_cd : ndarray
        Candela values with the multiplier applied, shape
        (horizontal, vertical). [cd]
    tilt_angles_deg, tilt_factors : tuple of float
        The TILT=INCLUDE table, empty for TILT=NONE. [deg], [-]
    intensity_table_cd_per_lm : ndarray
        Candela per lumen of emergency flux, the grid actually interpolated
        (tilt factor at level mounting applied). [cd/lm]

    References
    ----------
    ANSI/IES LM-63 ([4] in the module docstring).
    """

    edition: str
    keywords: dict[str, str]
    tilt: str
    lamp_count: int
    lumens_per_lamp_lm: float | None
    candela_multiplier: float
    width_m: float
    length_m: float
    height_m: float
    ballast_factor: float
    future_use: float
    input_w: float
    vertical_deg: FloatArray
    horizontal_deg: FloatArray
    candela_cd: FloatArray
    intensity_table_cd_per_lm: FloatArray
    tilt_angles_deg: tuple[float, ...] = field(default=())
    tilt_factors: tuple[float, ...] = field(default=())

    @property
    def absolute(self) -> bool:
        """True for absolute photometry (lumens per lamp given as -1)."""
        return self.lumens_per_lamp_lm is None

    @property
    def rated_lamp_flux_lm(self) -> float | None:
        """Lamp lumens the relative candela values refer to, None when absolute. [lm]"""
        if self.lumens_per_lamp_lm is None:
            return None
        return self.lamp_count * self.lumens_per_lamp_lm

    def intensity_cd_per_lm(self, theta_rad: ArrayLike, psi_rad: ArrayLike) -> FloatArray:
        """Intensity per emergency lumen, interpolated in the file's grid. [cd/lm]

        Bilinear in the vertical and horizontal angle, after folding the
        horizontal angle by the file's symmetry (one plane; 0-90; 0-180;
        90-270; 0-360). Outside the file's vertical range the intensity is 0.

        Parameters
        ----------
        theta_rad : array_like
            Vertical angle from the nadir. [rad]
        psi_rad : array_like
            Horizontal angle from the luminaire axis, counter-clockwise seen
            from above; the file's 0 deg plane lies along the axis. [rad]
        """
        return _interpolate_grid(
            self.vertical_deg,
            self.horizontal_deg,
            self.intensity_table_cd_per_lm,
            np.degrees(np.asarray(theta_rad, float)),
            np.degrees(np.asarray(psi_rad, float)),
        )


def _fold_horizontal_deg(horizontal_deg: FloatArray, psi_deg: FloatArray) -> FloatArray:
    """Map any horizontal angle into the range the file covers, by its symmetry."""
    first, last = horizontal_deg[0], horizontal_deg[-1]
    psi = np.mod(psi_deg, 360.0)
    if last == 90.0:  # symmetric in each quadrant
        psi = np.where(psi > 180.0, 360.0 - psi, psi)
        return np.where(psi > 90.0, 180.0 - psi, psi)
    if first == 0.0 and last == 180.0:  # symmetric about the 0-180 plane
        return np.where(psi > 180.0, 360.0 - psi, psi)
    if first == 90.0:  # 90-270: symmetric about the 90-270 plane
        return np.where(psi < 90.0, 180.0 - psi, np.where(psi > 270.0, 540.0 - psi, psi))
    return psi  # 0-360: the whole circle is given


def _interpolate_grid(
    vertical_deg: FloatArray,
    horizontal_deg: FloatArray,
    table: FloatArray,
    theta_deg: FloatArray,
    psi_deg: FloatArray,
) -> FloatArray:
    theta, psi = np.broadcast_arrays(theta_deg, psi_deg)
    inside = (theta >= vertical_deg[0]) & (theta <= vertical_deg[-1])
    j = np.clip(np.searchsorted(vertical_deg, theta, side="right") - 1, 0, vertical_deg.size - 2)
    t = np.clip((theta - vertical_deg[j]) / (vertical_deg[j + 1] - vertical_deg[j]), 0.0, 1.0)
    if horizontal_deg.size == 1:
        values = table[0, j] * (1.0 - t) + table[0, j + 1] * t
    else:
        psi = _fold_horizontal_deg(horizontal_deg, psi)
        k = np.clip(
            np.searchsorted(horizontal_deg, psi, side="right") - 1, 0, horizontal_deg.size - 2
        )
        u = np.clip(
            (psi - horizontal_deg[k]) / (horizontal_deg[k + 1] - horizontal_deg[k]), 0.0, 1.0
        )
        low = table[k, j] * (1.0 - t) + table[k, j + 1] * t
        high = table[k + 1, j] * (1.0 - t) + table[k + 1, j + 1] * t
        values = low * (1.0 - u) + high * u
    return np.where(inside, values, 0.0)


class _NumberReader:
    """The numbers after the TILT line, read in order with their line numbers."""

    def __init__(self, lines: list[str], first_index: int) -> None:
        self._tokens: list[tuple[str, int]] = [
            (token, index + 1)
            for index in range(first_index, len(lines))
            for token in lines[index].replace(",", " ").split()
        ]
        self._position = 0
        self._last_line = len(lines)

    @property
    def exhausted(self) -> bool:
        return self._position >= len(self._tokens)

    @property
    def next_line(self) -> int:
        return self._tokens[self._position][1] if not self.exhausted else self._last_line

    def number(self, what: str) -> tuple[float, int]:
        if self.exhausted:
            raise Lm63FormatError(self._last_line, f"the file ends before {what}")
        token, line_number = self._tokens[self._position]
        self._position += 1
        try:
            value = float(token)
        except ValueError:
            raise Lm63FormatError(line_number, f"{what}: {token!r} is not a number") from None
        if not math.isfinite(value):
            raise Lm63FormatError(line_number, f"{what}: {token!r} is not a finite number")
        return value, line_number

    def integer(self, what: str) -> tuple[int, int]:
        value, line_number = self.number(what)
        if value != int(value):
            raise Lm63FormatError(line_number, f"{what} must be a whole number, not {value:g}")
        return int(value), line_number

    def numbers(self, count: int, what: str) -> tuple[FloatArray, list[int]]:
        values: list[float] = []
        line_numbers: list[int] = []
        for index in range(count):
            value, line_number = self.number(f"{what} (value {index + 1} of {count})")
            values.append(value)
            line_numbers.append(line_number)
        return np.array(values, dtype=float), line_numbers


def _check_ascending(values: FloatArray, line_numbers: list[int], what: str) -> None:
    for index in range(1, values.size):
        if values[index] <= values[index - 1]:
            raise Lm63FormatError(
                line_numbers[index],
                f"{what} must increase: {values[index]:g} follows {values[index - 1]:g}",
            )


def _read_header(lines: list[str]) -> tuple[str, dict[str, str], int]:
    """Edition, keywords and the index of the TILT line."""
    first = lines[0].strip().lstrip("\ufeff")
    edition = LM63_IDENTIFIERS.get(first.upper())
    if edition is None and first.upper().startswith(("IESNA", "IES:")):
        known = ", ".join(LM63_IDENTIFIERS)
        raise Lm63FormatError(1, f"unknown format line {first!r}; expected one of {known}")
    keywords: dict[str, str] = {}
    last_keyword: str | None = None
    for index in range(1 if edition else 0, len(lines)):
        text = lines[index].strip().lstrip("\ufeff")
        if text.upper().startswith("TILT"):
            return edition or "1986", keywords, index
        if not text:
            continue
        if edition is None:  # 1986: free label lines
            keywords["LABEL"] = f"{keywords['LABEL']}\n{text}" if "LABEL" in keywords else text
            continue
        match = _KEYWORD_LINE.match(text)
        if match is None:
            raise Lm63FormatError(
                index + 1,
                f"expected a keyword line such as '[TEST] ...' or the TILT= line, "
                f"found {text[:40]!r}",
            )
        keyword, value = match.group(1).upper(), match.group(2).strip()
        if keyword == "MORE":
            if last_keyword is None:
                raise Lm63FormatError(
                    index + 1, "[MORE] continues a keyword, but none comes before"
                )
            keywords[last_keyword] += "\n" + value
        else:
            keywords[keyword] = value
            last_keyword = keyword
    raise Lm63FormatError(
        len(lines), "no TILT= line found; a photometric file has TILT=NONE before its numbers"
    )


def _read_tilt(
    tilt_line: str, line_number: int, reader: _NumberReader
) -> tuple[str, tuple[float, ...], tuple[float, ...]]:
    text = tilt_line.strip()
    if not text.upper().startswith("TILT="):
        raise Lm63FormatError(line_number, f"expected TILT=NONE or TILT=INCLUDE, found {text!r}")
    value = text[5:].strip()
    if value.upper() == "NONE":
        return "NONE", (), ()
    if value.upper() != "INCLUDE":
        raise Lm63FormatError(
            line_number,
            f"TILT={value} refers to a separate tilt file, which cannot be read here; "
            "use a file with TILT=NONE or TILT=INCLUDE",
        )
    geometry, geometry_line = reader.integer("the lamp-to-luminaire geometry")
    if geometry not in (1, 2, 3):
        raise Lm63FormatError(
            geometry_line, f"the lamp-to-luminaire geometry must be 1, 2 or 3, not {geometry}"
        )
    count, count_line = reader.integer("the number of tilt angles")
    if count < 1:
        raise Lm63FormatError(count_line, "the number of tilt angles must be at least 1")
    angles, angle_lines = reader.numbers(count, "the tilt angles")
    _check_ascending(angles, angle_lines, "tilt angles")
    factors, factor_lines = reader.numbers(count, "the tilt multiplying factors")
    for factor, factor_line in zip(factors, factor_lines, strict=True):
        if factor < 0:
            raise Lm63FormatError(factor_line, f"a tilt factor cannot be negative ({factor:g})")
    return "INCLUDE", tuple(angles.tolist()), tuple(factors.tolist())


def _check_type_c_angles(
    vertical: FloatArray,
    vertical_lines: list[int],
    horizontal: FloatArray,
    horizontal_lines: list[int],
) -> None:
    _check_ascending(vertical, vertical_lines, "vertical angles")
    if vertical[0] not in (0.0, 90.0):
        raise Lm63FormatError(
            vertical_lines[0], f"type C vertical angles start at 0 or 90, not {vertical[0]:g}"
        )
    if vertical[-1] not in (90.0, 180.0):
        raise Lm63FormatError(
            vertical_lines[-1], f"type C vertical angles end at 90 or 180, not {vertical[-1]:g}"
        )
    _check_ascending(horizontal, horizontal_lines, "horizontal angles")
    first, last = horizontal[0], horizontal[-1]
    if not ((first == 0.0 and last in (0.0, 90.0, 180.0, 360.0)) or (first, last) == (90.0, 270.0)):
        raise Lm63FormatError(
            horizontal_lines[-1],
            f"type C horizontal angles run 0 to 0, 90, 180 or 360 (or 90 to 270), "
            f"not {first:g} to {last:g}",
        )


def parse_lm63(text: str) -> Lm63Photometry:
    """Read a photometric file in the IES LM-63 text format.

    Accepts the 1986 (no first-line identifier), 1991, 1995, 2002 and 2019
    editions, TILT=NONE or TILT=INCLUDE, type C photometry. Numbers may wrap
    across lines and be separated by blanks or commas.

    Parameters
    ----------
    text : str
        The whole file.

    Returns
    -------
    Lm63Photometry
        The data, with the per-lumen intensity grid ready to interpolate.

    Raises
    ------
    Lm63FormatError
        A ValueError naming the line at fault: an unknown first line, a bad
        keyword line, a missing TILT line, a missing or non-numeric value,
        type A or B photometry, angles out of order or range, negative candela,
        or numbers left over after the candela values.

    Notes
    -----
    Keywords the editions require ([TEST], [MANUFAC] ...) are read but not
    demanded: the numbers are what the calculation needs.

    References
    ----------
    ANSI/IES LM-63 ([4] in the module docstring).
    """
    lines = text.splitlines()
    if not any(line.strip() for line in lines):
        raise Lm63FormatError(1, "the file is empty")
    edition, keywords, tilt_index = _read_header(lines)
    reader = _NumberReader(lines, tilt_index + 1)
    tilt, tilt_angles, tilt_factors = _read_tilt(lines[tilt_index], tilt_index + 1, reader)

    lamp_count, lamp_line = reader.integer("the number of lamps")
    if lamp_count < 1:
        raise Lm63FormatError(
            lamp_line, f"the number of lamps must be at least 1, not {lamp_count}"
        )
    lumens_per_lamp, lumens_line = reader.number("the lumens per lamp")
    if lumens_per_lamp <= 0 and lumens_per_lamp != -1:
        raise Lm63FormatError(
            lumens_line,
            f"the lumens per lamp must be more than 0, or -1 for absolute photometry, "
            f"not {lumens_per_lamp:g}",
        )
    multiplier, multiplier_line = reader.number("the candela multiplier")
    if multiplier <= 0:
        raise Lm63FormatError(multiplier_line, "the candela multiplier must be more than 0")
    vertical_count, vertical_count_line = reader.integer("the number of vertical angles")
    if vertical_count < 2:
        raise Lm63FormatError(
            vertical_count_line, f"at least 2 vertical angles are needed, not {vertical_count}"
        )
    horizontal_count, horizontal_count_line = reader.integer("the number of horizontal angles")
    if horizontal_count < 1:
        raise Lm63FormatError(
            horizontal_count_line, f"at least 1 horizontal angle is needed, not {horizontal_count}"
        )
    photometric_type, type_line = reader.integer("the photometric type")
    if photometric_type != 1:
        name = LM63_PHOTOMETRIC_TYPES.get(photometric_type)
        if name is None:
            raise Lm63FormatError(
                type_line,
                f"the photometric type must be 1 (C), 2 (B) or 3 (A), not {photometric_type}",
            )
        raise Lm63FormatError(
            type_line,
            f"type {name} photometry is not supported; only type C (1), the usual one for "
            "ceiling luminaires, can be used on a route",
        )
    units, units_line = reader.integer("the units type")
    if units not in LM63_UNITS_TO_M:
        raise Lm63FormatError(
            units_line, f"the units type must be 1 (feet) or 2 (metres), not {units}"
        )
    to_m = LM63_UNITS_TO_M[units]
    width, _ = reader.number("the luminous width")
    length, _ = reader.number("the luminous length")
    height, _ = reader.number("the luminous height")
    ballast_factor, ballast_line = reader.number("the ballast factor")
    if ballast_factor <= 0:
        raise Lm63FormatError(ballast_line, "the ballast factor must be more than 0")
    future_use, _ = reader.number("the field after the ballast factor")
    input_w, input_line = reader.number("the input watts")
    if input_w < 0:
        raise Lm63FormatError(input_line, "the input watts cannot be negative")

    vertical, vertical_lines = reader.numbers(vertical_count, "the vertical angles")
    horizontal, horizontal_lines = reader.numbers(horizontal_count, "the horizontal angles")
    _check_type_c_angles(vertical, vertical_lines, horizontal, horizontal_lines)
    candela_rows = []
    first_candela_line = reader.next_line
    for angle in horizontal:
        row, row_lines = reader.numbers(vertical_count, f"the candela values at {angle:g} deg")
        for value, value_line in zip(row, row_lines, strict=True):
            if value < 0:
                raise Lm63FormatError(value_line, f"a candela value cannot be negative ({value:g})")
        candela_rows.append(row)
    if not reader.exhausted:
        raise Lm63FormatError(
            reader.next_line,
            f"numbers follow the last candela value; the counts promise {vertical_count} "
            f"vertical x {horizontal_count} horizontal values",
        )
    # Extreme multipliers or lumens overflow to inf; refused just below.
    with np.errstate(over="ignore", invalid="ignore"):
        candela = np.vstack(candela_rows) * multiplier
        tilt_factor = 1.0
        if tilt_factors:  # level mounting, as tested: the factor at 0 deg tilt
            tilt_factor = float(np.interp(0.0, tilt_angles, tilt_factors))
        if lumens_per_lamp == -1:
            lumens_per_lamp_lm: float | None = None
            absolute_flux_lm = distribution_flux_lm(
                _GridDistribution(vertical, horizontal, candela * tilt_factor)
            )
            if absolute_flux_lm <= 0:
                raise Lm63FormatError(
                    first_candela_line, "all candela values are 0: the file describes no light"
                )
            per_lm = candela * tilt_factor / absolute_flux_lm
        else:
            lumens_per_lamp_lm = lumens_per_lamp
            per_lm = candela * tilt_factor / (lamp_count * lumens_per_lamp)

    if not np.all(np.isfinite(per_lm)):
        raise Lm63FormatError(
            multiplier_line,
            "the candela values, multiplier and lumens give intensities too large to compute",
        )
    return Lm63Photometry(
        edition=edition,
        keywords=keywords,
        tilt=tilt,
        lamp_count=lamp_count,
        lumens_per_lamp_lm=lumens_per_lamp_lm,
        candela_multiplier=multiplier,
        width_m=width * to_m,
        length_m=length * to_m,
        height_m=height * to_m,
        ballast_factor=ballast_factor,
        future_use=future_use,
        input_w=input_w,
        vertical_deg=vertical,
        horizontal_deg=horizontal,
        candela_cd=candela,
        intensity_table_cd_per_lm=per_lm,
        tilt_angles_deg=tilt_angles,
        tilt_factors=tilt_factors,
    )


@dataclass(frozen=True, eq=False)
class _GridDistribution:
    """A candela grid as a distribution, to integrate absolute photometry."""

    vertical_deg: FloatArray
    horizontal_deg: FloatArray
    table: FloatArray

    def intensity_cd_per_lm(self, theta_rad: ArrayLike, psi_rad: ArrayLike) -> FloatArray:
        return _interpolate_grid(
            self.vertical_deg,
            self.horizontal_deg,
            self.table,
            np.degrees(np.asarray(theta_rad, float)),
            np.degrees(np.asarray(psi_rad, float)),
        )


def point_illuminance_lx(
    intensity_cd: ArrayLike, distance_m: ArrayLike, cos_incidence: ArrayLike
) -> FloatArray:
    """Illuminance from a point source: E = I cos(incidence) / d**2.

    Parameters
    ----------
    intensity_cd : array_like
        Intensity toward the point. [cd]
    distance_m : array_like
        Distance from the source to the point, more than 0. [m]
    cos_incidence : array_like
        Cosine of the angle between the light and the surface normal. [-]

    Returns
    -------
    ndarray
        Illuminance on the surface. [lx]

    References
    ----------
    Inverse-square cosine law (IES definitions, [1] in the module docstring).
    """
    distance = np.asarray(distance_m, float)
    if np.any(distance <= 0):
        raise ValueError("distance_m: the point must be away from the source (distance above 0 m)")
    return np.asarray(intensity_cd, float) * np.asarray(cos_incidence, float) / distance**2


def line_segment_count(length_m: float, mounting_height_m: float) -> int:
    """Segments a linear luminaire is split into for point-by-point sums.

    Each segment is no longer than a fifth of the mounting height, hence of
    its distance to any floor point, so each one is a point source by the
    five-times rule; at most :data:`MAX_LINE_SEGMENTS`.

    Parameters
    ----------
    length_m : float
        Luminous length; 0 for a point source. [m]
    mounting_height_m : float
        Height of the luminaire above the floor. [m]

    Returns
    -------
    int
        1 for a point source, else ceil(5 L / h) capped.

    References
    ----------
    IES definition of the inverse-square law ([1] in the module docstring).
    """
    if mounting_height_m <= 0:
        raise ValueError("mounting_height_m: the luminaire must be above the floor")
    if length_m <= 0:
        return 1
    count = math.ceil(POINT_SOURCE_DISTANCE_RATIO * length_m / mounting_height_m - 1e-9)
    return max(1, min(MAX_LINE_SEGMENTS, count))


def floor_illuminance_lx(
    x_m: ArrayLike,
    y_m: ArrayLike,
    *,
    luminaire_x_m: float,
    luminaire_y_m: float,
    mounting_height_m: float,
    flux_lm: float,
    distribution: Distribution,
    axis_deg: float = 0.0,
    length_m: float = 0.0,
    segments: int | None = None,
) -> FloatArray:
    """Horizontal illuminance at floor points from one luminaire.

    A point luminaire (length 0) uses E = I(theta, psi) cos(theta) / d**2.
    A linear luminaire is split along its axis into equal segments, each with
    its share of the flux and the luminaire's distribution, and the segment
    values are summed (see :func:`line_segment_count`). It is split at every
    distance, not only within five lengths: end-on, at five lengths, the
    whole lamp taken as one point is 2.6-3.3 % off for a cosine emitter
    (tests/engineering/test_photometry.py), more than the rule's 1 %.

    Parameters
    ----------
    x_m, y_m : array_like
        Floor points in plan. [m]
    luminaire_x_m, luminaire_y_m : float
        Luminaire centre in plan. [m]
    mounting_height_m : float
        Height of the luminaire above the floor, more than 0. [m]
    flux_lm : float
        Emergency flux the distribution is scaled by. [lm]
    distribution : Distribution
        Intensity per lumen.
    axis_deg : float
        Luminaire axis in plan, counter-clockwise from the x axis. [deg]
    length_m : float
        Luminous length; 0 for a point source. [m]
    segments : int, optional
        Override the segment count (tests).

    Returns
    -------
    ndarray
        Illuminance on the floor at each point; inf where the sum overflows
        (a luminaire almost on the floor). [lx]

    References
    ----------
    Inverse-square cosine law and the five-times rule (IES definitions, [1]).
    """
    if mounting_height_m <= 0:
        raise ValueError("mounting_height_m: the luminaire must be above the floor (more than 0 m)")
    x, y = np.broadcast_arrays(np.asarray(x_m, float), np.asarray(y_m, float))
    count = line_segment_count(length_m, mounting_height_m) if segments is None else segments
    if count < 1:
        raise ValueError("segments: at least one segment is needed")
    axis_rad = math.radians(axis_deg)
    ux, uy = math.cos(axis_rad), math.sin(axis_rad)
    offsets_m = ((np.arange(count) + 0.5) / count - 0.5) * length_m
    total = np.zeros(x.shape, dtype=float)
    h2 = mounting_height_m * mounting_height_m
    for offset_m in offsets_m:
        dx = x - (luminaire_x_m + offset_m * ux)
        dy = y - (luminaire_y_m + offset_m * uy)
        distance2 = dx * dx + dy * dy + h2
        cos_theta = mounting_height_m / np.sqrt(distance2)
        theta = np.arccos(np.clip(cos_theta, -1.0, 1.0))
        psi = np.arctan2(dy, dx) - axis_rad
        intensity = (flux_lm / count) * distribution.intensity_cd_per_lm(theta, psi)
        with np.errstate(over="ignore", invalid="ignore"):  # callers check for inf
            total += intensity * cos_theta / distance2
    return total


def aspect_factor(beta_rad: ArrayLike) -> FloatArray:
    """Parallel-plane aspect factor of a cosine line source.

    Parameters
    ----------
    beta_rad : array_like
        Angle the line subtends at the point, from the perpendicular to one
        end; negative for the part behind the perpendicular. [rad]

    Returns
    -------
    ndarray
        AF(beta) = (beta + sin(beta) cos(beta)) / 2, odd in beta. [-]

    References
    ----------
    Lighting handbooks' line-source method ([3] in the module docstring).
    """
    beta = np.asarray(beta_rad, float)
    return 0.5 * (beta + np.sin(beta) * np.cos(beta))


def line_source_illuminance_lx(
    transverse_intensity_cd: ArrayLike,
    *,
    length_m: float,
    mounting_height_m: float,
    offset_across_m: ArrayLike,
    start_along_m: ArrayLike,
    end_along_m: ArrayLike,
) -> FloatArray:
    """Horizontal illuminance from a line source by the aspect-factor method.

    The line runs parallel to the floor at height h; the point lies a
    horizontal distance ``offset_across_m`` from the vertical plane through
    the line, so the perpendicular from the point to the line has length
    D = sqrt(h**2 + p**2) and makes the angle theta with the vertical. With
    the line's ends at axial positions a < b measured from the foot of that
    perpendicular, and I(theta) the whole line's intensity in its transverse
    plane,

        E = I(theta) / (l h) * cos(theta) * cos(phi) * (AF(beta_b) - AF(beta_a)),

    phi = theta for a horizontal plane, beta = atan(position / D). For a point
    opposite one end (a = 0, b = l) this is the handbook formula; other points
    are the superposition of two such lines.

    Parameters
    ----------
    transverse_intensity_cd : array_like
        Intensity of the whole line in its transverse plane at angle theta. [cd]
    length_m : float
        Length of the line, more than 0. [m]
    mounting_height_m : float
        Height of the line above the floor, more than 0. [m]
    offset_across_m : array_like
        Horizontal distance of the point from the line's vertical plane. [m]
    start_along_m, end_along_m : array_like
        Axial positions of the ends relative to the point's perpendicular. [m]

    Returns
    -------
    ndarray
        Illuminance on the horizontal floor. [lx]

    References
    ----------
    Lighting handbooks' line-source method ([3] in the module docstring); valid
    for a cosine (diffuse) axial distribution.
    """
    if length_m <= 0:
        raise ValueError("length_m: a line source needs a length above 0 m")
    if mounting_height_m <= 0:
        raise ValueError("mounting_height_m: the line must be above the floor")
    offset = np.asarray(offset_across_m, float)
    perpendicular_m = np.sqrt(mounting_height_m**2 + offset**2)
    cos_theta = mounting_height_m / perpendicular_m
    beta_end = np.arctan(np.asarray(end_along_m, float) / perpendicular_m)
    beta_start = np.arctan(np.asarray(start_along_m, float) / perpendicular_m)
    return (
        np.asarray(transverse_intensity_cd, float)
        / (length_m * mounting_height_m)
        * cos_theta
        * cos_theta
        * (aspect_factor(beta_end) - aspect_factor(beta_start))
    )
