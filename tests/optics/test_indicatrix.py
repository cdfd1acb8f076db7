"""The central section of the indicatrix: indices against independent computations, extinction,
the fast direction, and the frame of the polarisers."""

import numpy as np
import pytest

from fabric2seis.optics import interference_srgb, polariser_directions, section_optics
from fabric2seis.orientations import from_matrices, to_matrices

X, Y, Z = np.eye(3)


def orientation_with(crystal_vector, sample_vector, crystal_second=None, sample_second=None):
    """Quaternion of the orientation g taking the sample vector onto the crystal vector (v_crystal = g v_sample)."""
    def frame(u, w):
        u = np.asarray(u, float) / np.linalg.norm(u)
        w = np.asarray(w, float) - (np.asarray(w, float) @ u) * u
        w /= np.linalg.norm(w)
        return np.column_stack([u, w, np.cross(u, w)])
    helper = np.array([0.3, 0.8, 0.5])
    c2 = crystal_second if crystal_second is not None else np.cross(crystal_vector, helper)
    s2 = sample_second if sample_second is not None else np.cross(sample_vector, helper)
    g = frame(crystal_vector, c2) @ frame(sample_vector, s2).T
    return from_matrices(g[None])


def random_orientations(n, seed):
    """n uniformly distributed orientations (normalised Gaussian quaternions, common practice) and their g."""
    q = np.random.default_rng(seed).normal(size=(n, 4))
    q /= np.linalg.norm(q, axis=1, keepdims=True)
    return q, to_matrices(q)


def test_uniaxial_indices_follow_the_classical_formula(library):
    # n_e'(phi) = (cos^2 phi / n_o^2 + sin^2 phi / n_e^2)^-1/2 for a wave normal at phi from the
    # optic axis; the ordinary wave keeps n_o (Nesse 2013, ch. 6; common practice)
    p, a = polariser_directions("map_normal")
    q, g = random_orientations(500, seed=4)
    for name in ("quartz", "calcite", "ice"):
        o = library[name].optics
        n_o, n_e = o.principal_n[0], o.principal_n[2]
        c_sample = g[:, 2, :]                       # c (crystal e3) in sample axes: row 3 of g
        cos_phi = c_sample @ Z
        n_e_prime = (cos_phi ** 2 / n_o ** 2 + (1 - cos_phi ** 2) / n_e ** 2) ** -0.5
        s = section_optics(o.impermeability, q, p, a, 30.0)
        assert np.allclose(np.minimum(n_o, n_e_prime), s.n_fast, atol=1e-12)
        assert np.allclose(np.maximum(n_o, n_e_prime), s.n_slow, atol=1e-12)


@pytest.mark.parametrize("name", ["olivine", "diopside", "albite", "muscovite"])
def test_biaxial_indices_and_fast_direction_against_a_search_of_the_ellipse(library, name):
    # brute force: the refractive index of a vibration v is the radius of the indicatrix along v,
    # (v B v)^-1/2; the section's semi-axes are the extreme radii over v in the section plane
    o = library[name].optics
    p, a = polariser_directions("map_normal")
    q, g = random_orientations(12, seed=7)
    s = section_optics(o.impermeability, q, p, a, 30.0)
    psi = np.radians(np.arange(0.0, 180.0, 0.01))
    for k in range(len(g)):
        v = np.outer(np.cos(psi), g[k] @ p) + np.outer(np.sin(psi), g[k] @ a)   # in crystal axes
        radius = np.einsum("ij,jk,ik->i", v, o.impermeability, v) ** -0.5
        assert s.n_fast[k] == pytest.approx(radius.min(), abs=1e-9)
        assert s.n_slow[k] == pytest.approx(radius.max(), abs=1e-9)
        found = np.degrees(psi[np.argmin(radius)])
        off = abs((s.fast_vibration_deg[k] - found + 90.0) % 180.0 - 90.0)
        assert off < 0.02 or s.birefringence[k] < 1e-6


def test_birefringence_lies_between_zero_and_n_gamma_minus_n_alpha(library):
    # bounds of any central section (Nesse 2013; common practice), reached near Y and the optic axes
    p, a = polariser_directions("map_normal")
    q, _ = random_orientations(20000, seed=11)
    for m in library.values():
        o = m.optics
        d = section_optics(o.impermeability, q, p, a, 30.0).birefringence
        assert d.min() >= 0.0 and d.max() <= o.max_birefringence + 1e-12
        if o.kind != "isotropic":
            assert d.max() > 0.98 * o.max_birefringence and d.min() < 0.03 * o.max_birefringence


def test_retardation_is_linear_in_thickness(library):
    p, a = polariser_directions("map_normal")
    q, _ = random_orientations(200, seed=2)
    b = library["olivine"].optics.impermeability
    r10 = section_optics(b, q, p, a, 10.0).retardation_nm
    for t in (30.0, 45.0, 100.0):
        assert np.allclose(section_optics(b, q, p, a, t).retardation_nm, r10 * t / 10.0, rtol=1e-12)
    # retardation in nm = birefringence x thickness in micrometres x 1000
    s = section_optics(b, q, p, a, 30.0)
    assert np.allclose(s.retardation_nm, s.birefringence * 30000.0)


def test_grain_viewed_down_an_optic_axis_is_dark_at_every_stage_turn(library):
    # the optic axes lie in the XZ plane at V_z from Z, tan^2 V_z = (n_a^-2 - n_b^-2) / (n_b^-2 - n_g^-2)
    # (Nesse 2013); a section normal to one is a circle: no birefringence, extinct at every turn
    p, a = polariser_directions("map_normal")
    stages = np.arange(0.0, 180.0, 5.0)
    for name in ("olivine", "diopside", "muscovite"):
        o = library[name].optics
        n_a, n_b, n_g = o.principal_n
        v_z = np.arctan(np.sqrt((n_a ** -2 - n_b ** -2) / (n_b ** -2 - n_g ** -2)))
        axis = np.cos(v_z) * o.axes[2] + np.sin(v_z) * o.axes[0]
        s = section_optics(o.impermeability, orientation_with(axis, Z), p, a, 30.0)
        assert s.birefringence[0] < 1e-12
        rgb = interference_srgb(np.repeat(s.retardation_nm, len(stages)), s.fast_vibration_deg[0] + stages)
        assert rgb.max() < 1e-4
    qz = library["quartz"].optics                                    # c along the light: uniaxial optic axis
    s = section_optics(qz.impermeability, orientation_with(qz.axes[2], -Z), p, a, 30.0)
    assert s.retardation_nm[0] == pytest.approx(0.0, abs=1e-9)
    assert interference_srgb(np.repeat(s.retardation_nm, len(stages)), stages).max() < 1e-4


def test_c_axis_in_the_section_is_dark_along_either_polariser_and_brightest_at_45(library):
    # common practice: a uniaxial grain goes extinct with its c axis along the polariser or analyser
    import colour

    p, a = polariser_directions("map_normal")                          # +x (E) and -y (N)
    qz = library["quartz"].optics
    s = section_optics(qz.impermeability, orientation_with(qz.axes[2], p), p, a, 30.0)   # c along E-W
    stages = np.arange(0.0, 180.0, 0.5)
    rgb = interference_srgb(np.repeat(s.retardation_nm, len(stages)), s.fast_vibration_deg[0] + stages)
    luminance = colour.sRGB_to_XYZ(rgb)[:, 1]
    for dark in (0.0, 90.0):                                           # c parallel to P, then to A
        assert rgb[stages == dark].max() < 1e-6
    brightest = stages[np.argsort(luminance)[-2:]]
    assert sorted(brightest) == [45.0, 135.0]


def test_fast_vibration_of_uniaxial_positive_is_the_ordinary_one(library):
    # quartz (+): n_o < n_e, the fast wave is the ordinary one, vibrating normal to c and to the wave
    # normal; calcite (-): the fast wave is the extraordinary one, vibrating in the plane of c and the
    # wave normal (Nesse 2013; common practice)
    p, a = polariser_directions("map_normal")
    q, g = random_orientations(300, seed=5)
    c_sample = g[:, 2, :]
    trace = np.degrees(np.arctan2(c_sample @ a, c_sample @ p)) % 180.0   # c's trace, from P towards A
    inclined = np.abs(c_sample @ Z) < 0.95                               # a trace worth the name
    for name, offset in (("quartz", 90.0), ("calcite", 0.0)):
        o = library[name].optics
        s = section_optics(o.impermeability, q, p, a, 30.0)
        off = np.abs((s.fast_vibration_deg - trace - offset + 90.0) % 180.0 - 90.0)
        assert off[inclined].max() < 1e-6


def test_polarisers_are_east_and_north_of_the_image_seen_along_the_view():
    # the observer looks along the view with the polariser to the right and the analyser up:
    # polariser x analyser points back at the observer (right-handed screen axes)
    for view, east, north in (("map_normal", X, -Y), ("+z", X, -Y), ("-z", X, Y), ("+x", Y, -Z)):
        p, a = polariser_directions(view)
        assert np.allclose(p, east) and np.allclose(a, north)
    for view in ([1.0, 2.0, 3.0], "-y", [0.0, 0.0, -2.0]):
        p, a = polariser_directions(view)
        d = np.asarray(view, float) if not isinstance(view, str) else -Y
        d = d / np.linalg.norm(d)
        assert np.allclose(np.cross(p, a), -d) and abs(p @ d) < 1e-12


def test_bad_arguments_are_refused(library):
    p, a = polariser_directions("map_normal")
    b = library["quartz"].optics.impermeability
    q, _ = random_orientations(2, seed=1)
    with pytest.raises(ValueError, match="thickness"):
        section_optics(b, q, p, a, 0.0)
    with pytest.raises(ValueError, match="orthonormal"):
        section_optics(b, q, p, p, 30.0)
    with pytest.raises(ValueError, match="view"):
        polariser_directions([0.0, 0.0, 0.0])
    with pytest.raises(ValueError, match="view"):
        polariser_directions("sideways")
