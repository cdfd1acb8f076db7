"""Interference colours: against colour-science's own conversion of an independently computed
spectrum, and the colours every petrographer knows."""

import colour
import numpy as np
import pytest

from fabric2seis.optics import ORDER_NM, PLATE_NM, InterferenceTable, interference_srgb

VISIBLE = colour.SpectralShape(380, 780, 1)                 # the tables as colour-science holds them, 1 nm
CMFS = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(VISIBLE)
D65 = colour.SDS_ILLUMINANTS["D65"].copy().align(VISIBLE)
WHITE = colour.CCS_ILLUMINANTS["CIE 1931 2 Degree Standard Observer"]["D65"]


def retarder(theta, phase):
    """Jones matrix of a linear retarder, fast axis at theta, slow wave delayed by ``phase`` (Hecht, Optics)."""
    c, s = np.cos(theta), np.sin(theta)
    rotate = np.array([[c, -s], [s, c]])
    return rotate @ np.diag([1.0, np.exp(1j * phase)]) @ rotate.T


def spectrum_by_jones(retardation_nm, fast_deg, plate, wavelengths):
    """Fraction of the polarised light passing the analyser, wavelength by wavelength: polariser along
    x (E), analyser along y (N), plate with its slow axis at +45 degrees (NE-SW)."""
    out = []
    for lam in wavelengths:
        field = retarder(np.radians(fast_deg), 2 * np.pi * retardation_nm / lam) @ np.array([1.0, 0.0])
        if plate:
            field = retarder(np.radians(-45.0), 2 * np.pi * PLATE_NM / lam) @ field   # fast at -45: slow NE
        out.append(abs(field[1]) ** 2)
    return np.array(out)


def srgb_by_colour_science(transmission, wavelengths):
    """colour-science's own chain: spectral distribution -> XYZ (CIE 1931 2 degree, D65) -> sRGB, clipped."""
    sd = colour.SpectralDistribution(dict(zip(wavelengths, transmission)))
    xyz = colour.sd_to_XYZ(sd, CMFS, D65, method="Integration") / 100.0
    return np.clip(colour.XYZ_to_sRGB(xyz), 0.0, 1.0), xyz


def chroma(rgb):
    """CIELab chroma of sRGB colours (colour-science), D65 white."""
    lab = colour.XYZ_to_Lab(colour.sRGB_to_XYZ(rgb), WHITE)
    return np.hypot(lab[..., 1], lab[..., 2]), lab[..., 0]


@pytest.mark.parametrize("retardation, fast_deg, plate", [
    (0.0, 45.0, False), (123.4, 45.0, False), (270.0, 30.0, False), (812.7, 45.0, False), (1630.2, 10.0, False),
    (0.0, 0.0, True), (150.0, 45.0, True), (150.0, -45.0, True), (431.9, 17.0, True), (980.0, 120.0, True),
])
def test_colours_agree_with_colour_science_on_a_jones_calculus_spectrum(retardation, fast_deg, plate):
    wavelengths = np.arange(380.0, 781.0, 1.0)
    expected, xyz = srgb_by_colour_science(spectrum_by_jones(retardation, fast_deg, plate, wavelengths), wavelengths)
    table = InterferenceTable(2000.0)
    assert table.xyz(np.array([retardation]), np.array([fast_deg]), plate)[0] == pytest.approx(xyz, abs=5e-5)
    assert interference_srgb(retardation, fast_deg, plate, table) == pytest.approx(expected, abs=1e-3)


def test_zero_retardation_is_black_and_a_first_order_grey_is_neutral():
    assert np.array_equal(interference_srgb(np.zeros(3), [0.0, 22.5, 45.0]), np.zeros((3, 3)))
    # first-order grey to white (common practice): somewhere below the first-order yellow the
    # three channels of colour-science's conversion are equal within 0.05, bright but not black
    wavelengths = np.arange(380.0, 781.0, 1.0)
    greys = np.arange(150.0, 300.0, 5.0)
    spread = []
    for r in greys:
        rgb, _ = srgb_by_colour_science(spectrum_by_jones(r, 45.0, False, wavelengths), wavelengths)
        spread.append(np.ptp(rgb))
        assert interference_srgb(r) == pytest.approx(rgb, abs=1e-3)
    best = greys[int(np.argmin(spread))]
    assert min(spread) < 0.05 and interference_srgb(best).min() > 0.5


def test_quartz_in_a_30_micrometre_section_shows_first_order_greys_and_white_at_most(library):
    # birefringence about 0.009, retardation about 270 nm (common practice): grey to white, while
    # the second order (550-1100 nm) holds strongly coloured blues, greens, yellows and reds
    r_max = library["quartz"].optics.max_birefringence * 30_000.0
    assert r_max == pytest.approx(270.0, abs=10.0)
    first, _ = chroma(interference_srgb(np.linspace(0.0, r_max, 60)))
    second, _ = chroma(interference_srgb(np.linspace(ORDER_NM, 2 * ORDER_NM, 60)))
    assert first.max() < 20.0 and second.max() > 60.0


def test_olivine_shows_second_to_third_order_colours(library):
    # olivine in a 30 micrometre section: second- to third-order colours (common practice)
    r_max = library["olivine"].optics.max_birefringence * 30_000.0
    assert ORDER_NM < r_max <= 3 * ORDER_NM
    c, _ = chroma(interference_srgb(r_max))
    assert c > 30.0                                         # a saturated colour, not grey or white


def test_calcite_shows_high_order_white(library):
    # calcite: extreme birefringence, "high-order white" (common practice): pale and unsaturated
    r_max = library["calcite"].optics.max_birefringence * 30_000.0
    assert r_max > 7 * ORDER_NM
    c, lightness = chroma(interference_srgb(np.linspace(0.8 * r_max, r_max, 40)))
    assert c.max() < 6.0 and lightness.min() > 70.0


def test_plate_adds_its_retardation_when_slow_directions_are_parallel_and_subtracts_when_crossed():
    # common practice (compensation): slow || slow gives R + 530 nm, slow || fast gives |R - 530| nm
    r = np.array([0.0, 100.0, 270.0, 530.0, 700.0, 1200.0])
    table = InterferenceTable(2000.0)
    assert interference_srgb(r, -45.0, True, table) == pytest.approx(interference_srgb(r + PLATE_NM, 45.0), abs=1e-9)
    assert interference_srgb(r, 45.0, True, table) == pytest.approx(
        interference_srgb(np.abs(r - PLATE_NM), 45.0), abs=1e-9)
    red = interference_srgb(0.0, 0.0, True)                  # the plate alone: first-order magenta
    assert red[0] > red[1] + 0.2 and red[2] > red[1] + 0.2


def test_lookup_beyond_the_table_is_refused():
    with pytest.raises(ValueError, match="outside the table"):
        InterferenceTable(100.0).xyz(np.array([500.0]), np.array([45.0]))
