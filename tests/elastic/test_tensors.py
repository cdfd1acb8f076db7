"""Tensor algebra and the four averages, checked against closed forms, pymatgen and scipy."""

import numpy as np
import pytest
import scipy.linalg
from conftest import random_rotation_matrices
from hypothesis import given, settings
from hypothesis import strategies as st
from pymatgen.analysis.elasticity import ElasticTensor

from fabric2seis import elastic as el
from fabric2seis.errors import InputError


def hill1952_moduli(c):
    """Voigt and Reuss bulk and shear moduli written out from Hill (1952), independently of the package."""
    s = np.linalg.inv(c)
    kv = (c[0, 0] + c[1, 1] + c[2, 2] + 2 * (c[0, 1] + c[0, 2] + c[1, 2])) / 9
    gv = (c[0, 0] + c[1, 1] + c[2, 2] - (c[0, 1] + c[0, 2] + c[1, 2]) + 3 * (c[3, 3] + c[4, 4] + c[5, 5])) / 15
    kr = 1 / (s[0, 0] + s[1, 1] + s[2, 2] + 2 * (s[0, 1] + s[0, 2] + s[1, 2]))
    gr = 15 / (4 * (s[0, 0] + s[1, 1] + s[2, 2]) - 4 * (s[0, 1] + s[0, 2] + s[1, 2])
               + 3 * (s[3, 3] + s[4, 4] + s[5, 5]))
    return kv, gv, kr, gr


def full_tensor_rotation(c, r):
    """Rotation of the full 3x3x3x3 tensor by direct contraction (textbook definition)."""
    t = el.voigt_to_tensor(c)
    return el.tensor_to_voigt(np.einsum("ia,jb,kc,ld,abcd->ijkl", r, r, r, r, t))


def test_voigt_tensor_round_trip_and_minor_symmetries(library):
    c = library["albite"].stiffness_gpa  # triclinic: all 21 constants non-zero
    t = el.voigt_to_tensor(c)
    assert np.allclose(t, t.transpose(1, 0, 2, 3)) and np.allclose(t, t.transpose(2, 3, 0, 1))
    assert t[0, 1, 0, 1] == c[5, 5] and t[1, 2, 0, 0] == c[3, 0]  # Voigt order 11 22 33 23 13 12
    assert np.array_equal(el.tensor_to_voigt(t), c)


def test_kelvin_compliance_is_inverse_of_kelvin_stiffness(library):
    # CONVENTIONS.md: the 6x6 inverse of the Voigt stiffness is the Voigt compliance with its 2 and 4
    # factors; its Kelvin form must be the inverse of the Kelvin stiffness.
    c = library["muscovite"].stiffness_gpa
    s_voigt = el.compliance(c)
    # the full tensor is singular as a 9x9 map (minor symmetry); its pseudo-inverse is the
    # compliance tensor on symmetric strains
    s_tensor = np.linalg.pinv(el.voigt_to_tensor(c).reshape(9, 9)).reshape(3, 3, 3, 3)
    # Voigt compliance factors (common practice): S_ij = s_ijkl * (1, 2 or 4)
    factor = np.ones((6, 6)); factor[:3, 3:] = factor[3:, :3] = 2; factor[3:, 3:] = 4
    assert np.allclose(s_voigt, el.tensor_to_voigt(s_tensor) * factor, rtol=1e-10, atol=1e-14)
    assert np.allclose(el.voigt_to_kelvin(s_voigt, "compliance"),
                       np.linalg.inv(el.voigt_to_kelvin(c)), rtol=1e-10, atol=1e-14)
    assert np.allclose(el.kelvin_to_voigt(el.voigt_to_kelvin(s_voigt, "compliance"), "compliance"), s_voigt)


def test_kelvin_rotation_matches_full_tensor_and_pymatgen(library):
    c = library["albite"].stiffness_gpa
    r = random_rotation_matrices(25, seed=3)
    fast = el.rotate_voigt(c, r)
    q = el.kelvin_rotation(r)
    assert np.allclose(q @ np.swapaxes(q, 1, 2), np.eye(6), atol=1e-12)  # orthogonal
    for n in range(len(r)):
        assert np.allclose(fast[n], full_tensor_rotation(c, r[n]), rtol=0, atol=1e-10)
        pmg = ElasticTensor.from_voigt(c).rotate(r[n]).voigt  # pymatgen as reference library
        assert np.allclose(fast[n], pmg, rtol=0, atol=1e-9)


def test_crystal_to_sample_uses_transpose_of_bunge_matrix(library):
    # CONVENTIONS.md: v_crystal = g v_sample, so crystal tensors enter the sample frame by g^T.
    g = random_rotation_matrices(4, seed=5)
    c = library["olivine"].stiffness_gpa
    assert np.allclose(el.crystal_to_sample(c, g), el.rotate_voigt(c, np.swapaxes(g, 1, 2)))


@pytest.mark.parametrize("name", ["olivine", "enstatite", "diopside", "pyrope", "quartz", "calcite",
                                  "albite", "hornblende", "antigorite", "muscovite", "ice"])
def test_random_aggregate_is_isotropic_with_hill1952_moduli(library, name):
    """Voigt and Reuss averages of many random orientations (Hill 1952; pymatgen ElasticTensor).

    The bulk and shear moduli of the isotropic part come from rotation invariants (C_iijj, C_ijij
    for Voigt; S_iijj, S_ijij for Reuss), so they equal the closed forms for any sample of
    orientations: tolerance is rounding only. What depends on the sample size is the anisotropic
    remainder of the mean: each grain's tensor deviates from the isotropic one by a norm with RMS
    sigma and zero mean over SO(3), so the mean of N independent grains deviates by about
    sigma / sqrt(N); we allow five times that.
    """
    n = 20000
    m = library[name]
    g = random_rotation_matrices(n, seed=11)
    w = np.ones(n)
    out = el.average_tensors([el.PhaseTensors(m.stiffness_gpa, g, w)])
    kv, gv, kr, gr = hill1952_moduli(m.stiffness_gpa)
    ref = ElasticTensor.from_voigt(m.stiffness_gpa)
    for a, b in [(kv, ref.k_voigt), (gv, ref.g_voigt), (kr, ref.k_reuss), (gr, ref.g_reuss)]:
        assert a == pytest.approx(b, rel=1e-9)

    assert el.voigt_moduli(out["voigt"]) == pytest.approx((kv, gv), rel=1e-9)
    assert el.reuss_moduli(out["reuss"]) == pytest.approx((kr, gr), rel=1e-9)

    for key, (k, mu) in (("voigt", (kv, gv)), ("reuss", (kr, gr))):
        iso = el.isotropic_stiffness(k, mu)
        if key == "voigt":
            per_grain = el.voigt_to_kelvin(el.crystal_to_sample(m.stiffness_gpa, g[:2000]))
            target, mean = el.voigt_to_kelvin(iso), el.voigt_to_kelvin(out["voigt"])
        else:
            per_grain = np.linalg.inv(el.voigt_to_kelvin(el.crystal_to_sample(m.stiffness_gpa, g[:2000])))
            target = np.linalg.inv(el.voigt_to_kelvin(iso))
            mean = np.linalg.inv(el.voigt_to_kelvin(out["reuss"]))
        sigma = np.sqrt(np.mean(np.sum((per_grain - target) ** 2, axis=(1, 2))))
        assert np.linalg.norm(mean - target) < 5 * sigma / np.sqrt(n)


@pytest.mark.parametrize("name,k_ref,g_ref,source", [
    ("olivine", 129.4, 78.0, "Abramson et al. 1997, Hashin-Shtrikman at 1 bar"),
    ("diopside", 114.6, 72.7, "Sang et al. 2011, aggregate of sample 1"),
    ("pyrope", 172.8, 92.0, "O'Neill et al. 1991, Ks and mu"),
])
def test_hill_average_reproduces_published_aggregate(library, name, k_ref, g_ref, source):
    # Hashin-Shtrikman bounds lie inside Voigt-Reuss; for these weakly anisotropic minerals the Hill
    # mean lies within a few tenths of a GPa of the published aggregate (the sources named below).
    k, g = el.hill_moduli(library[name].stiffness_gpa)
    assert abs(k - k_ref) < 0.3, source
    assert abs(g - g_ref) < 0.3, source


def _textured_aggregate(library, seed=2):
    """Olivine and pyrope with a clustered olivine fabric: strongly anisotropic, two phases."""
    rng = np.random.default_rng(seed)
    g_ol = random_rotation_matrices(300, seed)
    # pull olivine towards the identity orientation to make a strong fabric
    small = scipy.spatial.transform.Rotation.from_rotvec(rng.normal(scale=0.25, size=(300, 3))).as_matrix()
    return [el.PhaseTensors(library["olivine"].stiffness_gpa, small, rng.uniform(0.5, 2, 300), 0.7),
            el.PhaseTensors(library["pyrope"].stiffness_gpa, g_ol[:50], np.ones(50), 0.3)]


import scipy.spatial.transform  # noqa: E402  (used by the helper above)


def test_geometric_mean_of_compliances_is_inverse_of_geometric_mean_of_stiffnesses(library):
    # Matthies & Humbert (1993): the geometric mean is self-consistent under inversion. Computed here
    # independently, grain by grain, with scipy's general matrix logarithm and exponential.
    phases = _textured_aggregate(library)
    out = el.average_tensors(phases)
    fractions = np.array([p.fraction for p in phases]) / sum(p.fraction for p in phases)
    log_mean = np.zeros((6, 6))
    for f, p in zip(fractions, phases):
        rotated = el.voigt_to_kelvin(el.crystal_to_sample(p.stiffness_gpa, p.g))
        logs = np.array([scipy.linalg.logm(np.linalg.inv(k)).real for k in rotated])
        log_mean += f * np.tensordot(p.weights / p.weights.sum(), logs, axes=1)
    geometric_compliance = scipy.linalg.expm(log_mean)
    assert np.allclose(np.linalg.inv(geometric_compliance), el.voigt_to_kelvin(out["geometric"]),
                       rtol=1e-8, atol=1e-8)


@settings(max_examples=200, deadline=None)
@given(st.lists(st.floats(-1, 1), min_size=6, max_size=6).filter(lambda e: np.linalg.norm(e) > 1e-3))
def test_geometric_mean_lies_between_reuss_and_voigt_in_strain_energy_for_a_textured_aggregate(library, strain):
    # Matthies & Humbert (1993); Hill (1952) for the Voigt and Reuss bounds. True here, for many
    # grains; not for every strain and every aggregate: tests/test_invariants.py shows two antigorite
    # grains where the geometric mean stores less energy than Reuss for one strain.
    out = _cached_textured_averages(library)
    e = np.array(strain)
    energy = {k: e @ el.voigt_to_kelvin(out[k]) @ e for k in el.AVERAGES}
    slack = 1e-9 * energy["voigt"]
    assert energy["reuss"] - slack <= energy["geometric"] <= energy["voigt"] + slack
    assert energy["reuss"] - slack <= energy["hill"] <= energy["voigt"] + slack


_AVERAGES_CACHE = {}


def _cached_textured_averages(library):
    if "out" not in _AVERAGES_CACHE:
        _AVERAGES_CACHE["out"] = el.average_tensors(_textured_aggregate(library))
    return _AVERAGES_CACHE["out"]


def test_weights_act_like_repeated_grains_and_phases_mix_by_fraction(library):
    # Definition of a weighted mean (common practice): weight 2 is the grain counted twice.
    g = random_rotation_matrices(40, seed=8)
    c = library["olivine"].stiffness_gpa
    w = np.r_[np.full(20, 2.0), np.ones(20)]
    weighted = el.average_tensors([el.PhaseTensors(c, g, w)])
    repeated = el.average_tensors([el.PhaseTensors(c, np.concatenate([g[:20], g]), np.ones(60))])
    for k in el.AVERAGES:
        assert np.allclose(weighted[k], repeated[k], rtol=1e-12, atol=1e-10)
    # two phases: Voigt is the fraction-weighted sum of the per-phase Voigt averages
    c2 = library["pyrope"].stiffness_gpa
    mixed = el.average_tensors([el.PhaseTensors(c, g, w, 0.25), el.PhaseTensors(c2, g, w, 0.75)])
    alone = [el.average_tensors([el.PhaseTensors(x, g, w)])["voigt"] for x in (c, c2)]
    assert np.allclose(mixed["voigt"], 0.25 * alone[0] + 0.75 * alone[1], rtol=1e-12)


def test_single_orientation_average_is_the_rotated_crystal(library):
    c = library["muscovite"].stiffness_gpa
    g = random_rotation_matrices(1, seed=4)
    out = el.average_tensors([el.PhaseTensors(c, g, np.ones(1))])
    for k in el.AVERAGES:
        assert np.allclose(out[k], full_tensor_rotation(c, g[0].T), atol=1e-9)


def test_chunked_mean_equals_unchunked(library):
    g = random_rotation_matrices(1000, seed=9)
    w = np.random.default_rng(1).uniform(size=1000)
    x = el.voigt_to_kelvin(library["albite"].stiffness_gpa)
    a = el.weighted_rotated_mean(x, g, w, chunk=77)
    b = np.tensordot(w / w.sum(), el.voigt_to_kelvin(el.crystal_to_sample(library["albite"].stiffness_gpa, g)), axes=1)
    assert np.allclose(a, b, rtol=1e-12, atol=1e-10)


def test_bad_tensors_are_refused_with_a_reason():
    c = el.isotropic_stiffness(100, 50)
    bad = c.copy(); bad[3, 3] = -1.0
    with pytest.raises(InputError, match="not positive definite"):
        el.check_stiffness(bad, "my.yaml", "cij_gpa")
    skew = c.copy(); skew[0, 1] += 5
    with pytest.raises(InputError, match="not symmetric: c12"):
        el.check_stiffness(skew)
    with pytest.raises(InputError, match="6x6"):
        el.check_stiffness(np.eye(3))
    with pytest.raises(InputError, match="my.yaml, cij_gpa"):
        el.check_stiffness(bad, "my.yaml", "cij_gpa")


def test_averaging_kernel_refuses_malformed_input(library):
    g = random_rotation_matrices(3, seed=1)
    x = el.voigt_to_kelvin(library["olivine"].stiffness_gpa)
    with pytest.raises(ValueError, match="non-negative"):
        el.weighted_rotated_mean(x, g, np.array([1.0, -0.5, 1.0]))
    with pytest.raises(ValueError, match=r"\(N, 3, 3\)"):
        el.weighted_rotated_mean(x, g.reshape(3, 9), np.ones(3))
    with pytest.raises(ValueError, match="symmetric 6x6"):
        el.weighted_rotated_mean(x[:3, :3], g, np.ones(3))


def test_rotations_are_checked_early():
    # Orthogonal matrices only (common practice): a sheared or scaled matrix is not a rotation, and
    # an orientation matrix must also be proper (determinant +1, Bunge's passive rotations).
    c = np.diag([200.0, 200.0, 200.0, 80.0, 80.0, 80.0])
    with pytest.raises(ValueError, match="not orthogonal"):
        el.rotate_voigt(c, np.diag([1.0, 1.0, 1.1]))
    assert np.allclose(el.rotate_voigt(c, -np.eye(3)), c)        # inversion leaves an even-rank tensor
    with pytest.raises(ValueError, match="reflections"):
        el.weighted_rotated_mean(el.voigt_to_kelvin(c), -np.eye(3)[None], np.ones(1))
    with pytest.raises(ValueError, match=r"shape \(N, 3, 3\)"):
        el.weighted_rotated_mean(el.voigt_to_kelvin(c), np.eye(3), np.ones(1))
    with pytest.raises(ValueError, match="weights of shape"):
        el.weighted_rotated_mean(el.voigt_to_kelvin(c), np.eye(3)[None], np.ones(2))
