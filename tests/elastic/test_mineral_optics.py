"""Optical constants of the mineral library: against handbook values, in the right crystal directions,
and checked on load."""

import itertools
import textwrap

import numpy as np
import pytest
from orix.vector import Miller

from fabric2seis.elastic.minerals import DATA_DIR, load_mineral_file
from fabric2seis.elastic.minerals.optical import two_v_z_deg
from fabric2seis.errors import InputError

DHZ = "Deer, Howie & Zussman (1992), An Introduction to the Rock-Forming Minerals, 2nd ed."
NESSE = "Nesse (2013), Introduction to Optical Mineralogy, 4th ed."
# Handbook values, all from memory (the books not at hand): (kind, birefringence range,
# 2V measured across Z in degrees (range), optic sign). A measured 2V_alpha of a negative mineral
# is 180 - 2V_z. Sources: DHZ and NESSE for the minerals, Petrenko & Whitworth (1999) for ice.
HANDBOOK = {
    "olivine": ("biaxial", (0.035, 0.037), (84.0, 90.0), "+"),      # Fo90: forsterite 2V_z 82, sign change ~Fo85
    "enstatite": ("biaxial", (0.007, 0.009), (50.0, 90.0), "+"),    # En100-En88 positive
    "diopside": ("biaxial", (0.030, 0.031), (56.0, 60.0), "+"),     # 2V_z 58-59, Z^c 38
    "pyrope": ("isotropic", (0.0, 0.0), None, None),
    "quartz": ("uniaxial", (0.009, 0.009), (0.0, 0.0), "+"),
    "calcite": ("uniaxial", (0.172, 0.172), (180.0, 180.0), "-"),
    "albite": ("biaxial", (0.010, 0.011), (76.0, 78.0), "+"),       # low albite 2V_z 77
    "hornblende": ("biaxial", (0.014, 0.026), (100.0, 120.0), "-"),  # 2V_alpha mostly 60-80
    "muscovite": ("biaxial", (0.036, 0.049), (133.0, 150.0), "-"),  # 2V_alpha 30-47
    "antigorite": ("biaxial", (0.004, 0.007), (119.0, 143.0), "-"),  # 2V_alpha 37-61
    "ice": ("uniaxial", (0.0014, 0.0014), (0.0, 0.0), "+"),
}


def two_v_range(n_alpha, n_beta, n_gamma, rounding):
    """Least and greatest 2V_z of indices each within +-rounding of the values given."""
    values = [two_v_z_deg(*sorted([n_alpha + da, n_beta + db, n_gamma + dg]))
              for da, db, dg in itertools.product((-rounding, 0.0, rounding), repeat=3)]
    return min(values), max(values)


@pytest.mark.parametrize("name", sorted(HANDBOOK))
def test_birefringence_two_v_and_sign_agree_with_the_handbook(library, name):
    kind, (d_low, d_high), two_v, sign = HANDBOOK[name]
    o = library[name].optics
    assert o is not None and o.source and isinstance(o.recalled, bool)
    assert o.kind == kind and o.optic_sign == sign
    rounding = 0.00005 if name == "ice" else 0.0005       # indices are given to 4 (ice) or 3 decimals
    assert d_low - 2 * rounding <= o.max_birefringence <= d_high + 2 * rounding
    if kind == "biaxial":
        low, high = two_v_range(o.n_alpha, o.n_beta, o.n_gamma, rounding)
        # a measured 2V and one computed from rounded indices differ by a few degrees (common practice)
        assert low - 3.0 <= two_v[1] and two_v[0] <= high + 3.0, (low, high, two_v)
        assert (o.two_v_z_deg() < 90.0) == (sign == "+")
    elif kind == "uniaxial":
        assert o.two_v_z_deg() == two_v[0]


def test_two_v_formula_against_the_optic_axes_found_by_search():
    # the optic axes are the directions in the XZ plane whose central section is a circle; found
    # here by bisection on the difference of the section's semi-axes (independent of the formula)
    n_a, n_b, n_g = 1.654, 1.671, 1.690

    def section_difference(v):   # angle from Z in the XZ plane; semi-axes n_beta (along Y) and n'(v)
        n_prime = (np.cos(v) ** 2 / n_a ** 2 + np.sin(v) ** 2 / n_g ** 2) ** -0.5  # normal at v from Z
        return n_prime - n_b

    lo, hi = 0.0, np.pi / 2
    for _ in range(80):
        mid = (lo + hi) / 2
        lo, hi = (mid, hi) if section_difference(lo) * section_difference(mid) > 0 else (lo, mid)
    assert two_v_z_deg(n_a, n_b, n_g) == pytest.approx(2 * np.degrees(lo), abs=1e-9)


def test_indicatrix_axes_lie_along_the_crystal_directions_the_handbooks_give(library):
    # orix's Miller class gives the crystal directions; rows of axes are X, Y, Z
    def direction(mineral, **index):
        return Miller(**index, phase=mineral.phase).unit.data[0]

    ol = library["olivine"]                                  # X || b, Y || c, Z || a (Pbnm), DHZ
    for row, uvw in zip(ol.optics.axes, ([0, 1, 0], [0, 0, 1], [1, 0, 0])):
        assert abs(row @ direction(ol, uvw=uvw)) == pytest.approx(1.0, abs=1e-12)
    di = library["diopside"]                                 # Y || b, Z^c = 38 in the obtuse angle beta, DHZ
    z, c, a = di.optics.axes[2], direction(di, uvw=[0, 0, 1]), direction(di, uvw=[1, 0, 0])
    assert abs(di.optics.axes[1] @ direction(di, uvw=[0, 1, 0])) == pytest.approx(1.0, abs=1e-12)
    assert np.degrees(np.arccos(abs(z @ c))) == pytest.approx(38.0, abs=1e-9)
    assert np.sign(z @ c) == np.sign(z @ a)                  # between +c and +a (or -c and -a)
    ms = library["muscovite"]                                # X normal to the cleavage (001), Z || b
    assert abs(ms.optics.axes[0] @ direction(ms, hkl=[0, 0, 1])) == pytest.approx(1.0, abs=1e-12)
    qz = library["quartz"]                                   # optic axis c
    assert abs(qz.optics.axes[2] @ direction(qz, uvw=[0, 0, 1])) == pytest.approx(1.0, abs=1e-12)
    ab = library["albite"].optics.axes                      # triclinic: orthonormal after loading
    assert np.allclose(ab @ ab.T, np.eye(3), atol=1e-12)


def test_impermeability_has_the_principal_indices_along_the_axes(library):
    for m in library.values():
        b = m.optics.impermeability
        for row, n in zip(m.optics.axes, m.optics.principal_n):
            assert np.allclose(b @ row, row / n ** 2, atol=1e-12)


def _olivine_with(tmp_path, optics: str):
    text = (DATA_DIR / "olivine.yaml").read_text()
    text = text[:text.index("\noptics:")] + "\n" + textwrap.dedent(optics)
    path = tmp_path / "olivine.yaml"
    path.write_text(text)
    return path


# bad entries: indices out of order, a sign the indices contradict, axes not perpendicular, axes
# perpendicular but off the 2-fold axes of mmm ([101] and the direction normal to it in (010)),
# an unknown key, no source, an angle from c for an orthorhombic mineral
@pytest.mark.parametrize("optics, where, words", [
    ("optics: {n_alpha: 1.67, n_beta: 1.65, n_gamma: 1.69, optic_sign: '+', axes: {x: b, y: c, z: a}, "
     "source: s, recalled: true}", "optics.n_beta", "n_alpha < n_beta < n_gamma"),
    ("optics: {n_alpha: 1.654, n_beta: 1.671, n_gamma: 1.690, optic_sign: '-', axes: {x: b, y: c, z: a}, "
     "source: s, recalled: true}", "optics.optic_sign", "positive"),
    ("optics: {n_alpha: 1.654, n_beta: 1.671, n_gamma: 1.690, optic_sign: '+', axes: {x: b, y: '[110]', z: a}, "
     "source: s, recalled: true}", "optics.axes", "perpendicular"),
    ("optics: {n_alpha: 1.654, n_beta: 1.671, n_gamma: 1.690, optic_sign: '+', axes: {x: b, y: '[101]', "
     "z: '[1.2584 0 -0.7947]'}, source: s, recalled: true}", "optics.axes", "point group"),
    ("optics: {n_o: 1.65, n_e: 1.69, optic_sign: '+', source: s, recalled: true, refraction: 1}",
     "optics.refraction", "unknown key"),
    ("optics: {n_alpha: 1.654, n_beta: 1.671, n_gamma: 1.690, optic_sign: '+', axes: {x: b, y: c, z: a}, "
     "recalled: true}", "optics.source", "source"),
    ("optics: {n_alpha: 1.654, n_beta: 1.671, n_gamma: 1.690, optic_sign: '+', axes: {y: b, z_to_c_deg: 10}, "
     "source: s, recalled: true}", "optics.axes.z_to_c_deg", "b-unique monoclinic"),
])
def test_bad_optical_constants_are_refused_naming_the_key(tmp_path, optics, where, words):
    path = _olivine_with(tmp_path, optics)
    with pytest.raises(InputError) as info:
        load_mineral_file(path)
    assert info.value.where == where and words in info.value.message, info.value.message

