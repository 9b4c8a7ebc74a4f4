"""Intensity distributions, the LM-63 reader and point-by-point illuminance.

Sources of the checks:
- Inverse-square cosine law, E = I cos(theta) / d**2 = I cos**3(theta) / h**2
  on a horizontal plane (IES definitions; lighting handbooks).
- Lambert's cosine law: a diffuse emitter of peak intensity I0 emits pi * I0
  into its hemisphere (exact).
- Line-source aspect-factor method, AF(beta) = (beta + sin beta cos beta) / 2
  (lighting handbooks).
- Five-times rule: a source is a point within 1 % beyond five times its largest
  dimension (IES definition of the inverse-square law).
- IES LM-63 file format (1995, 2002, 2019 editions), files in data/ written by
  hand for these tests.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from numpy.typing import ArrayLike, NDArray
from scipy import integrate

from server.engineering.photometry import (
    LAMBERTIAN,
    Lm63FormatError,
    aspect_factor,
    distribution_flux_lm,
    floor_illuminance_lx,
    lambertian_peak_intensity_cd,
    line_segment_count,
    line_source_illuminance_lx,
    parse_lm63,
    point_illuminance_lx,
)

DATA = Path(__file__).parent / "data"


class UniformDownward:
    """Test distribution: the same intensity in every downward direction.

    Per lumen: a uniform emitter over the lower hemisphere (2 pi sr) has
    I = 1 / (2 pi) cd/lm.
    """

    def intensity_cd_per_lm(self, theta_rad: ArrayLike, psi_rad: ArrayLike) -> NDArray[np.float64]:
        theta, _ = np.broadcast_arrays(np.asarray(theta_rad, float), np.asarray(psi_rad, float))
        return np.where(theta < math.pi / 2, 1.0 / (2.0 * math.pi), 0.0)


def read(name: str) -> str:
    return (DATA / name).read_text()


# --- inverse-square cosine law ---------------------------------------------


def test_point_illuminance_inverse_square_hand_case() -> None:
    # IES definitions: 100 cd at 2 m, normal incidence: E = 100 / 2**2 = 25 lx.
    assert point_illuminance_lx(100.0, 2.0, 1.0) == pytest.approx(25.0, rel=1e-12)
    # at 60 deg incidence: 25 * cos 60 = 12.5 lx
    assert point_illuminance_lx(100.0, 2.0, 0.5) == pytest.approx(12.5, rel=1e-12)


def test_point_illuminance_refuses_zero_distance() -> None:
    with pytest.raises(ValueError, match="distance_m"):
        point_illuminance_lx(100.0, 0.0, 1.0)


@pytest.mark.parametrize("offset_m", [0.0, 0.7, 2.5, 6.0])
def test_point_source_floor_illuminance_is_i_cos_cubed_over_h_squared(offset_m: float) -> None:
    # Inverse-square cosine law (IES definitions): E = I cos**3(theta) / h**2.
    # Uniform source 2 pi lm -> I = 1 cd in every downward direction.
    height_m = 2.5
    theta = math.atan2(offset_m, height_m)
    expected_lx = 1.0 * math.cos(theta) ** 3 / height_m**2
    got = floor_illuminance_lx(
        offset_m,
        0.0,
        luminaire_x_m=0.0,
        luminaire_y_m=0.0,
        mounting_height_m=height_m,
        flux_lm=2.0 * math.pi,
        distribution=UniformDownward(),
    )
    # Tolerance: floating point only, the formula is the same law.
    assert float(got) == pytest.approx(expected_lx, rel=1e-12)


def test_lambertian_point_source_hand_case() -> None:
    # Lambert + inverse-square cosine law: 1000 lm, I0 = 1000 / pi = 318.31 cd;
    # h = 2 m, 2 m to the side: theta = 45 deg, I = 318.31 * 0.70711 = 225.08 cd,
    # E = 225.08 * 0.70711**3 / 2**2 = 19.894 lx  (= 1000/pi * cos**4 45 / 4).
    got = floor_illuminance_lx(
        2.0,
        0.0,
        luminaire_x_m=0.0,
        luminaire_y_m=0.0,
        mounting_height_m=2.0,
        flux_lm=1000.0,
        distribution=LAMBERTIAN,
    )
    assert float(got) == pytest.approx(19.894, abs=5e-4)  # 3 decimals of the hand value


def test_floor_illuminance_refuses_luminaire_on_floor() -> None:
    with pytest.raises(ValueError, match="above the floor"):
        floor_illuminance_lx(
            0.0,
            0.0,
            luminaire_x_m=0.0,
            luminaire_y_m=0.0,
            mounting_height_m=0.0,
            flux_lm=100.0,
            distribution=LAMBERTIAN,
        )


# --- Lambertian flux --------------------------------------------------------


def test_lambertian_peak_intensity_is_flux_over_pi() -> None:
    # Lambert's cosine law, exact: I0 = flux / pi; 1000 lm -> 318.31 cd.
    assert lambertian_peak_intensity_cd(1000.0) == pytest.approx(318.3099, abs=1e-4)
    with pytest.raises(ValueError, match="negative"):
        lambertian_peak_intensity_cd(-1.0)


def test_lambertian_distribution_integrates_to_pi_times_peak() -> None:
    # Lambert's cosine law, exact: integral of I0 cos(theta) over the lower
    # hemisphere is pi * I0. Integrated here independently of our zonal sum,
    # with scipy's adaptive quadrature over the whole sphere.
    flux_lm = 1000.0

    def intensity(theta: float, psi: float) -> float:
        return flux_lm * float(LAMBERTIAN.intensity_cd_per_lm(theta, psi)) * math.sin(theta)

    total_lm, _ = integrate.dblquad(intensity, 0.0, 2.0 * math.pi, 0.0, math.pi)
    peak_cd = flux_lm * float(LAMBERTIAN.intensity_cd_per_lm(0.0, 0.0))
    # Tolerance: quadrature error of a kinked integrand at 90 deg.
    assert total_lm == pytest.approx(math.pi * peak_cd, rel=1e-6)
    assert total_lm == pytest.approx(flux_lm, rel=1e-6)


def test_zonal_sum_agrees_with_lambert() -> None:
    # Lambert (exact): one lumen per lumen. The integrand cos * sin / pi is
    # sin(2 theta) / (2 pi); the midpoint rule with 0.5 deg zones errs by about
    # (2 * 0.5 deg in rad)**2 / 24 = 1.27e-5.
    assert distribution_flux_lm(LAMBERTIAN) == pytest.approx(1.0, rel=2e-5)


def test_lambertian_emits_nothing_upward() -> None:
    values = LAMBERTIAN.intensity_cd_per_lm(np.radians([90.5, 120.0, 180.0]), 0.0)
    assert np.all(values == 0.0)
    assert float(LAMBERTIAN.intensity_cd_per_lm(math.pi / 2, 0.0)) == pytest.approx(0.0, abs=1e-15)


# --- line sources: aspect factor, segments, five-times rule ----------------


def test_aspect_factor_limits() -> None:
    # Lighting handbooks: AF(beta) = (beta + sin beta cos beta) / 2;
    # infinitely long line, beta = 90 deg: AF = pi / 4 = 0.785398 (hand).
    assert float(aspect_factor(math.pi / 2)) == pytest.approx(math.pi / 4, rel=1e-12)
    # beta = 45 deg: (0.785398 + 0.5) / 2 = 0.642699 (hand)
    assert float(aspect_factor(math.pi / 4)) == pytest.approx(0.642699, abs=1e-6)
    # odd in beta, 0 at 0
    assert float(aspect_factor(-0.3)) == pytest.approx(-float(aspect_factor(0.3)))
    assert float(aspect_factor(0.0)) == 0.0


def test_aspect_factor_hand_case_below_one_end() -> None:
    # Line-source method (lighting handbooks): cosine line 2 m long at h = 2 m,
    # point right under one end: D = h = 2 m, theta = 0, beta = atan(2/2) = 45 deg.
    # Transverse intensity of 1000 lm of cosine emitter: I(0) = 1000/pi = 318.31 cd.
    # E = I / (l h) * cos^2(0) * AF(45 deg) = 318.31 / 4 * 0.642699 = 51.144 lx.
    got = line_source_illuminance_lx(
        1000.0 / math.pi,
        length_m=2.0,
        mounting_height_m=2.0,
        offset_across_m=0.0,
        start_along_m=0.0,
        end_along_m=2.0,
    )
    assert float(got) == pytest.approx(51.144, abs=5e-4)  # 3 decimals of the hand value


def _cosine_line_closed_form_lx(
    flux_lm: float, length_m: float, height_m: float, x_m: float, y_m: float
) -> float:
    """Aspect-factor method for a cosine line along x centred at the origin.

    A cosine emitter split along its axis is a line of cosine axial
    distribution with transverse intensity I(theta) = flux / pi * cos(theta).
    """
    perpendicular_m = math.hypot(height_m, y_m)
    cos_theta = height_m / perpendicular_m
    return float(
        line_source_illuminance_lx(
            flux_lm / math.pi * cos_theta,
            length_m=length_m,
            mounting_height_m=height_m,
            offset_across_m=y_m,
            start_along_m=-length_m / 2 - x_m,
            end_along_m=length_m / 2 - x_m,
        )
    )


def _cosine_line_segments_lx(
    flux_lm: float, length_m: float, height_m: float, x_m: float, y_m: float, segments: int | None
) -> float:
    return float(
        floor_illuminance_lx(
            x_m,
            y_m,
            luminaire_x_m=0.0,
            luminaire_y_m=0.0,
            mounting_height_m=height_m,
            flux_lm=flux_lm,
            distribution=LAMBERTIAN,
            axis_deg=0.0,
            length_m=length_m,
            segments=segments,
        )
    )


POINTS_M = [(0.0, 0.0), (0.6, 0.0), (0.6, 1.5), (2.0, 0.3), (3.5, 2.0), (0.0, 4.0), (-7.0, 1.0)]


@pytest.mark.parametrize(("x_m", "y_m"), POINTS_M)
def test_fine_segment_sum_matches_aspect_factor(x_m: float, y_m: float) -> None:
    # Line-source aspect-factor method (lighting handbooks) vs 2000 segments.
    # Tolerance: the midpoint rule's error falls as 1/n**2, below 1e-6 here.
    closed = _cosine_line_closed_form_lx(500.0, 1.2, 2.5, x_m, y_m)
    summed = _cosine_line_segments_lx(500.0, 1.2, 2.5, x_m, y_m, segments=2000)
    assert summed == pytest.approx(closed, rel=1e-6)


@pytest.mark.parametrize("height_m", [0.4, 1.0, 2.5, 4.0])
@pytest.mark.parametrize(("x_m", "y_m"), POINTS_M)
def test_default_segments_within_one_percent_of_aspect_factor(
    height_m: float, x_m: float, y_m: float
) -> None:
    # The default count makes each segment at most h/5 long, hence a point by
    # the five-times rule (IES definition): the sum is within 1 % everywhere.
    closed = _cosine_line_closed_form_lx(500.0, 1.2, height_m, x_m, y_m)
    summed = _cosine_line_segments_lx(500.0, 1.2, height_m, x_m, y_m, segments=None)
    assert summed == pytest.approx(closed, rel=0.01)


@pytest.mark.parametrize("height_m", [0.5, 2.5])
@pytest.mark.parametrize("distance_in_lengths", [5.0, 6.0, 10.0])
def test_five_times_rule_broadside(height_m: float, distance_in_lengths: float) -> None:
    # IES definition of the inverse-square law: beyond five times its length a
    # line is a point within 1 %; checked across the lamp axis (broadside),
    # the direction the definition is made in.
    length_m = 1.2
    distance_m = distance_in_lengths * length_m
    across_m = math.sqrt(distance_m**2 - height_m**2)
    line = _cosine_line_closed_form_lx(500.0, length_m, height_m, 0.0, across_m)
    point = _cosine_line_segments_lx(500.0, 0.0, height_m, 0.0, across_m, segments=1)
    assert point == pytest.approx(line, rel=0.01)


def test_five_lengths_end_on_is_not_a_point_within_one_percent() -> None:
    # Why floor_illuminance_lx segments a linear lamp at every distance: end on,
    # at five lengths, the whole lamp as one point is off by more than the
    # rule's 1 % (2.6 % here; cos**4 / d**4 falls steeply along the axis).
    length_m, height_m = 1.2, 2.5
    along_m = math.sqrt((5 * length_m) ** 2 - height_m**2)
    line = _cosine_line_closed_form_lx(500.0, length_m, height_m, along_m, 0.0)
    point = _cosine_line_segments_lx(500.0, 0.0, height_m, along_m, 0.0, segments=1)
    assert 0.01 < abs(point / line - 1.0) < 0.035
    segmented = _cosine_line_segments_lx(500.0, length_m, height_m, along_m, 0.0, segments=None)
    assert segmented == pytest.approx(line, rel=0.01)


def test_segment_count() -> None:
    # ceil(5 L / h): 1.2 m lamp at 2.5 m -> ceil(2.4) = 3; at 0.3 m -> 20.
    assert line_segment_count(1.2, 2.5) == 3
    assert line_segment_count(1.2, 0.3) == 20
    assert line_segment_count(0.0, 2.5) == 1
    assert line_segment_count(1.2, 6.0) == 1
    assert line_segment_count(1.5, 0.001) == 100  # capped
    with pytest.raises(ValueError, match="above the floor"):
        line_segment_count(1.2, 0.0)


def test_axis_turns_the_lamp() -> None:
    # A lamp along y seen from a point on x is seen broadside; along x, end on.
    common = {
        "luminaire_x_m": 0.0,
        "luminaire_y_m": 0.0,
        "mounting_height_m": 2.5,
        "flux_lm": 500.0,
        "distribution": LAMBERTIAN,
        "length_m": 1.2,
    }
    along_y = float(floor_illuminance_lx(1.0, 0.0, axis_deg=90.0, **common))  # type: ignore[arg-type]
    along_x_at_y = float(floor_illuminance_lx(0.0, 1.0, axis_deg=0.0, **common))  # type: ignore[arg-type]
    assert along_y == pytest.approx(along_x_at_y, rel=1e-12)


# --- LM-63 files of our own --------------------------------------------------

COSINE_1995_CD = [318.31, 307.46, 275.66, 225.08, 159.15, 82.38, 0.00]


def test_lm63_1995_read_back() -> None:
    photometry = parse_lm63(read("cosine_1995.ies"))
    assert photometry.edition == "1995"
    assert photometry.keywords["TEST"] == "ERP-T-0001"
    assert photometry.keywords["LAMP"] == "One 1000 lm lamp"
    assert photometry.tilt == "NONE"
    assert photometry.lamp_count == 1
    assert photometry.lumens_per_lamp_lm == 1000.0
    assert photometry.rated_lamp_flux_lm == 1000.0
    assert photometry.candela_multiplier == 1.0
    assert photometry.ballast_factor == 1.0
    assert photometry.input_w == 20.0
    assert photometry.vertical_deg.tolist() == [0, 15, 30, 45, 60, 75, 90]
    assert photometry.horizontal_deg.tolist() == [0]
    assert photometry.candela_cd[0].tolist() == COSINE_1995_CD


def test_lm63_1995_matches_the_cosine_it_tabulates() -> None:
    # Lambert: the file tabulates 1000/pi * cos(theta), 2 decimals.
    photometry = parse_lm63(read("cosine_1995.ies"))
    angles = np.radians(np.arange(0, 91, 15))
    per_lm = photometry.intensity_cd_per_lm(angles, 0.0)
    # rounding to 0.01 cd in the file -> 1e-5 cd/lm
    np.testing.assert_allclose(per_lm, np.cos(angles) / math.pi, atol=1e-5)
    # Linear between the tabulated angles: 7.5 deg is the mean of 0 and 15 deg.
    midway = float(photometry.intensity_cd_per_lm(math.radians(7.5), 1.0))
    assert midway == pytest.approx((318.31 + 307.46) / 2 / 1000.0, rel=1e-12)
    # Zonal flux of the tabulated curve: linear interpolation of cos over 15 deg
    # runs below the curve by up to about (15 deg)**2 / 8 = 0.9 %.
    assert distribution_flux_lm(photometry) == pytest.approx(1.0, rel=0.01)


def test_lm63_scaled_by_emergency_lumens() -> None:
    # Scaling by emergency lumens over the file's lamp lumens: 100 lm in
    # emergency out of the file's 1000 lm; straight below at 2.5 m:
    # E = 318.31 * (100/1000) / 2.5**2 = 5.0930 lx (inverse-square law, hand).
    photometry = parse_lm63(read("cosine_1995.ies"))
    got = floor_illuminance_lx(
        0.0,
        0.0,
        luminaire_x_m=0.0,
        luminaire_y_m=0.0,
        mounting_height_m=2.5,
        flux_lm=100.0,
        distribution=photometry,
    )
    assert float(got) == pytest.approx(5.0930, abs=1e-4)


def test_lm63_2002_read_back_wrapped_feet_multiplier() -> None:
    photometry = parse_lm63(read("batten_2002.ies"))
    assert photometry.edition == "2002"
    assert photometry.keywords["LUMINAIRE"] == (
        "Linear batten, two lamps, quadrant symmetric\nvalues chosen for the tests, not measured"
    )
    assert photometry.lamp_count == 2
    assert photometry.rated_lamp_flux_lm == 5000.0
    # units 1 = feet: 0.25 ft, 4 ft, 0.1 ft at 0.3048 m/ft (exact)
    assert photometry.width_m == pytest.approx(0.0762, rel=1e-12)
    assert photometry.length_m == pytest.approx(1.2192, rel=1e-12)
    assert photometry.height_m == pytest.approx(0.03048, rel=1e-12)
    assert photometry.ballast_factor == 0.95
    assert photometry.input_w == 60.0
    assert photometry.vertical_deg.tolist() == [0, 22.5, 45, 67.5, 90]
    assert photometry.horizontal_deg.tolist() == [0, 45, 90]
    # multiplier 0.5 applied to the values as written
    assert photometry.candela_cd.tolist() == [
        [500, 475, 400, 250, 50],
        [500, 500, 450, 300, 75],
        [500, 525, 500, 350, 100],
    ]


@pytest.mark.parametrize(
    ("psi_deg", "same_as_deg"),
    [(45.0, 45.0), (135.0, 45.0), (225.0, 45.0), (-45.0, 45.0), (270.0, 90.0), (180.0, 0.0)],
)
def test_lm63_quadrant_symmetry(psi_deg: float, same_as_deg: float) -> None:
    # LM-63: last horizontal angle 90 -> the same in each quadrant.
    photometry = parse_lm63(read("batten_2002.ies"))
    theta = math.radians(22.5)
    got = float(photometry.intensity_cd_per_lm(theta, math.radians(psi_deg)))
    want = float(photometry.intensity_cd_per_lm(theta, math.radians(same_as_deg)))
    assert got == pytest.approx(want, rel=1e-12)


def test_lm63_horizontal_interpolation() -> None:
    # Between the 0 and 45 deg planes at 22.5 deg: the mean of the two; at
    # 22.5 deg vertical: (475 + 500) / 2 = 487.5 cd, per lamp lumen / 5000.
    photometry = parse_lm63(read("batten_2002.ies"))
    got = float(photometry.intensity_cd_per_lm(math.radians(22.5), math.radians(22.5)))
    assert got == pytest.approx(487.5 / 5000.0, rel=1e-12)


def test_lm63_2019_absolute_photometry() -> None:
    # Lambert: the file tabulates 100 cos(theta) cd absolute; flux = pi * 100 =
    # 314.16 lm. Scaled per lumen of that flux, 314.16 lm gives back about 100 cd.
    photometry = parse_lm63(read("disc_2019.ies"))
    assert photometry.edition == "2019"
    assert photometry.absolute
    assert photometry.rated_lamp_flux_lm is None
    assert photometry.keywords["FILEGENINFO"] == "Written by hand for the tests"
    assert photometry.width_m == pytest.approx(-0.2)  # negative: a round opening (2002 on)
    nadir_cd = 314.159 * float(photometry.intensity_cd_per_lm(0.0, 0.0))
    # tolerance: the tabulated curve's flux is up to 0.9 % below pi * 100
    assert nadir_cd == pytest.approx(100.0, rel=0.01)
    assert float(photometry.intensity_cd_per_lm(math.radians(120.0), 0.0)) == 0.0


def test_lm63_1986_without_identifier_and_1991() -> None:
    body = "TILT=NONE\n1 1000 1 2 1 1 2 0 0 0\n1 1 10\n0 90\n0\n100 0\n"
    old = parse_lm63("A free label line\nanother one\n" + body)
    assert old.edition == "1986"
    assert old.keywords["LABEL"] == "A free label line\nanother one"
    assert parse_lm63("IESNA91\n[TEST] T1\n" + body).edition == "1991"


def _lm63(horizontal: str, rows: list[str], first: str = "IESNA:LM-63-2002") -> str:
    count = len(horizontal.split())
    return (
        f"{first}\n[TEST] T\nTILT=NONE\n1 1000 1 3 {count} 1 2 0 0 0\n1 1 10\n0 45 90\n"
        f"{horizontal}\n" + "\n".join(rows) + "\n"
    )


def test_lm63_bilateral_0_180() -> None:
    # LM-63: last horizontal angle 180 -> mirror about the 0-180 plane.
    photometry = parse_lm63(_lm63("0 90 180", ["100 80 0", "100 60 0", "100 40 0"]))
    theta = math.radians(45.0)
    assert float(photometry.intensity_cd_per_lm(theta, math.radians(270.0))) == pytest.approx(0.06)
    assert float(photometry.intensity_cd_per_lm(theta, math.radians(200.0))) == pytest.approx(
        float(photometry.intensity_cd_per_lm(theta, math.radians(160.0)))
    )


def test_lm63_bilateral_90_270() -> None:
    # LM-63 (1995 wording): horizontal 90 to 270 -> mirror about the 90-270 plane.
    photometry = parse_lm63(_lm63("90 180 270", ["100 80 0", "100 60 0", "100 40 0"]))
    theta = math.radians(45.0)
    # psi = 0 mirrors onto 180 deg: 60 cd / 1000 lm
    assert float(photometry.intensity_cd_per_lm(theta, 0.0)) == pytest.approx(0.06)
    # psi = 300 mirrors onto 240 deg: between 180 (60) and 270 (40): 46.67 cd
    assert float(photometry.intensity_cd_per_lm(theta, math.radians(300.0))) == pytest.approx(
        (60 + (40 - 60) * 60 / 90) / 1000
    )


def test_lm63_full_circle() -> None:
    photometry = parse_lm63(
        _lm63("0 90 180 270 360", ["100 80 0", "100 60 0", "100 40 0", "100 20 0", "100 80 0"])
    )
    theta = math.radians(45.0)
    assert float(photometry.intensity_cd_per_lm(theta, math.radians(270.0))) == pytest.approx(0.02)
    assert float(photometry.intensity_cd_per_lm(theta, math.radians(-90.0))) == pytest.approx(0.02)


def test_lm63_tilt_include() -> None:
    # TILT=INCLUDE: geometry, count, angles, factors; the level (0 deg) factor applies.
    text = (
        "IESNA:LM-63-2002\n[TEST] T\nTILT=INCLUDE\n1\n3\n0 45 90\n0.8 0.9 1.0\n"
        "1 1000 1 2 1 1 2 0 0 0\n1 1 10\n0 90\n0\n100 0\n"
    )
    photometry = parse_lm63(text)
    assert photometry.tilt == "INCLUDE"
    assert photometry.tilt_angles_deg == (0.0, 45.0, 90.0)
    assert photometry.tilt_factors == (0.8, 0.9, 1.0)
    assert float(photometry.intensity_cd_per_lm(0.0, 0.0)) == pytest.approx(0.08)


# --- malformed files name the line -------------------------------------------

GOOD = read("cosine_1995.ies").splitlines()


def _with_line(number: int, text: str) -> str:
    lines = list(GOOD)
    lines[number - 1] = text
    return "\n".join(lines)


def test_lm63_without_light_or_beyond_computing() -> None:
    dark = "IES:LM-63-2019\n[TEST] T\nTILT=NONE\n1 -1 1 2 1 1 2 0 0 0\n1 1 10\n0 90\n0\n0 0\n"
    with pytest.raises(Lm63FormatError, match="line 8: all candela values are 0"):
        parse_lm63(dark)
    huge = dark.replace("1 -1 1 2", "1 1e-300 1e300 2").replace("\n0 0\n", "\n1e10 0\n")
    with pytest.raises(Lm63FormatError, match="line 4: .*too large to compute"):
        parse_lm63(huge)


@pytest.mark.parametrize(
    ("text", "pattern"),
    [
        ("", r"line 1: the file is empty"),
        (_with_line(1, "IESNA:LM-63-2099"), r"line 1: unknown format line"),
        (_with_line(4, "ISSUEDATE 2026"), r"line 4: expected a keyword line"),
        (_with_line(2, "[MORE] text"), r"line 2: \[MORE\] continues a keyword"),
        (_with_line(9, "[X] no tilt"), r"line 10: expected a keyword line .* or the TILT= line"),
        ("\n".join(GOOD[:8]), r"line 8: no TILT= line found"),
        (_with_line(9, "TILT=lamp.tlt"), r"line 9: TILT=lamp.tlt refers to a separate tilt"),
        (_with_line(10, "1 1000 1.0 7 1 2 2 0.0 0.0 0.0"), r"line 10: type B photometry"),
        (_with_line(10, "1 1000 1.0 7 1 3 2 0.0 0.0 0.0"), r"line 10: type A photometry"),
        (_with_line(10, "1 1000 1.0 7 1 1 3 0.0 0.0 0.0"), r"line 10: the units type"),
        (_with_line(10, "1 0 1.0 7 1 1 2 0.0 0.0 0.0"), r"line 10: the lumens per lamp"),
        (_with_line(10, "1 1000 1.0 7 1.5 1 2 0.0 0.0 0.0"), r"line 10: .*whole number"),
        (_with_line(11, "1.0 x 20"), r"line 11: .*'x' is not a number"),
        (_with_line(12, "0 15 30 30 60 75 90"), r"line 12: vertical angles must increase"),
        (_with_line(12, "5 15 30 45 60 75 90"), r"line 12: type C vertical angles start"),
        (_with_line(13, "10"), r"line 13: type C horizontal angles run"),
        (_with_line(14, "318.31 307.46 -1 225.08 159.15 82.38 0.00"), r"line 14: .*negative"),
        (_with_line(14, "318.31 307.46 275.66"), r"line 14: the file ends before the candela"),
        (_with_line(14, GOOD[13] + "\n5"), r"line 15: numbers follow the last candela"),
    ],
)
def test_malformed_lm63_names_the_line(text: str, pattern: str) -> None:
    with pytest.raises(Lm63FormatError, match=pattern) as caught:
        parse_lm63(text)
    assert isinstance(caught.value, ValueError)
    assert caught.value.line_number >= 1
