"""Christoffel solutions checked against analytic single-crystal and isotropic velocities."""

import numpy as np
import pytest
from conftest import random_rotation_matrices
from orix.quaternion import Orientation
from orix.vector import Vector3d

from fabric2seis import elastic as el
from fabric2seis import waves


def km_s(modulus_gpa, density):
    return np.sqrt(modulus_gpa * 1e9 / density) / 1e3


@pytest.mark.parametrize("name", ["olivine", "enstatite"])
def test_orthorhombic_axes_give_sqrt_cii_over_rho(library, name):
    # Analytic (e.g. Musgrave 1970, common practice): along a principal axis of an orthorhombic
    # crystal the waves are pure modes: Vp = sqrt(Cii/rho); S along [100] polarised along [010] is
    # sqrt(C66/rho), along [001] sqrt(C55/rho); along [010]: C66 ([100]) and C44 ([001]); along
    # [001]: C55 ([100]) and C44 ([010]).
    m = library[name]
    c, rho = m.stiffness_gpa, m.density_kg_m3
    axes = np.eye(3)
    w = waves.plane_waves(c, rho, axes)
    assert w.vp_km_s == pytest.approx(km_s(np.diag(c)[:3], rho), rel=1e-12)
    shear = {0: {1: c[5, 5], 2: c[4, 4]}, 1: {0: c[5, 5], 2: c[3, 3]}, 2: {0: c[4, 4], 1: c[3, 3]}}
    for d in range(3):
        for wave, v in ((1, w.vs1_km_s[d]), (2, w.vs2_km_s[d])):
            pol_axis = int(np.argmax(np.abs(w.polarisations[d, wave])))
            assert abs(w.polarisations[d, wave, pol_axis]) == pytest.approx(1.0, abs=1e-12)
            assert v == pytest.approx(km_s(shear[d][pol_axis], rho), rel=1e-12)


def test_olivine_values_quoted_with_abramson_constants(library):
    # For orientation (common practice): sqrt(Cii/rho) 9.77 km/s along [100], 7.65 km/s along [010]
    # with the Abramson et al. (1997) constants and density 3355 kg m^-3.
    m = library["olivine"]
    w = waves.plane_waves(m.stiffness_gpa, m.density_kg_m3, np.eye(3))
    assert w.vp_km_s[0] == pytest.approx(9.77, abs=0.005)
    assert w.vp_km_s[1] == pytest.approx(7.65, abs=0.005)


def test_bunge_90_0_0_puts_olivine_fast_p_along_sample_y(library):
    # CONVENTIONS.md: Euler angles (90, 0, 0) put the a axis along sample +y; olivine's fastest P
    # direction is [100] (Pbnm), so the fastest sample direction must be +-y.
    o = Orientation.from_euler(np.radians([[90.0, 0.0, 0.0]]))
    a_in_sample = ((~o) * Vector3d.xvector()).data[0]  # orix's own answer
    assert np.allclose(a_in_sample, [0, 1, 0], atol=1e-12)
    m = library["olivine"]
    c_sample = el.crystal_to_sample(m.stiffness_gpa, o.to_matrix())[0]
    dirs, _, _ = waves.hemisphere_grid(1.0)
    dirs = np.vstack([dirs, [[0, 1, 0], [1, 0, 0]]])
    w = waves.plane_waves(c_sample, m.density_kg_m3, dirs)
    fastest = dirs[np.argmax(w.vp_km_s)]
    assert abs(fastest[1]) == pytest.approx(1.0, abs=1e-9)


def test_isotropic_solid_has_the_textbook_velocities_everywhere():
    # Isotropic elasticity (common practice): Vp = sqrt((K + 4G/3)/rho), Vs = sqrt(G/rho).
    k, g, rho = 130.0, 80.0, 3300.0
    dirs, _, _ = waves.hemisphere_grid(5.0)
    w = waves.plane_waves(el.isotropic_stiffness(k, g), rho, dirs)
    assert np.allclose(w.vp_km_s, km_s(k + 4 * g / 3, rho), rtol=1e-12)
    assert np.allclose(w.vs1_km_s, km_s(g, rho), rtol=1e-12)
    assert np.allclose(w.vs2_km_s, km_s(g, rho), rtol=1e-12)
    assert np.allclose(w.avs_pct, 0.0, atol=1e-9)


def test_polarisations_are_orthonormal_and_solve_christoffel(library):
    m = library["albite"]
    dirs = random_rotation_matrices(200, seed=1)[:, 0]
    w = waves.plane_waves(m.stiffness_gpa, m.density_kg_m3, dirs)
    p = w.polarisations
    assert np.allclose(p @ np.swapaxes(p, 1, 2), np.eye(3), atol=1e-12)
    gamma = waves.christoffel_matrices(m.stiffness_gpa, dirs)
    direct = np.einsum("ijkl,mj,ml->mik", el.voigt_to_tensor(m.stiffness_gpa), dirs, dirs)
    assert np.allclose(gamma, direct, rtol=1e-12)
    v = np.stack([w.vp_km_s, w.vs1_km_s, w.vs2_km_s], axis=1)
    lhs = np.einsum("mik,mwk->mwi", gamma, p)
    rhs = (m.density_kg_m3 * (v * 1e3) ** 2 / 1e9)[:, :, None] * p
    assert np.allclose(lhs, rhs, rtol=1e-9, atol=1e-9)
    assert np.all(w.vp_km_s > w.vs1_km_s) and np.all(w.vs1_km_s >= w.vs2_km_s)


def test_group_velocity_is_the_gradient_of_frequency(library):
    # Independent check: group velocity = d omega / d k with omega(k) = |k| v(k/|k|) (common practice),
    # here by central finite differences of the phase velocity of the P wave and fast S wave.
    m = library["olivine"]
    c, rho = m.stiffness_gpa, m.density_kg_m3
    dirs = random_rotation_matrices(20, seed=7)[:, 2]
    w = waves.plane_waves(c, rho, dirs)
    vg = waves.group_velocities(c, rho, w)
    h = 1e-6
    for wave in (0, 1):
        for n, d in enumerate(dirs):
            if wave == 1 and (w.vs1_km_s[n] - w.vs2_km_s[n]) < 0.05:
                continue  # too near a shear-wave singularity for finite differences
            grad = np.zeros(3)
            for i in range(3):
                e = np.zeros(3); e[i] = h
                vals = []
                for k in (d + e, d - e):
                    s = waves.plane_waves(c, rho, k[None])
                    vals.append(np.linalg.norm(k) * (s.vp_km_s if wave == 0 else s.vs1_km_s)[0])
                grad[i] = (vals[0] - vals[1]) / (2 * h)
            assert np.allclose(vg[n, wave], grad, rtol=1e-6, atol=1e-6)
    # along n the group velocity projects onto the phase velocity
    assert np.allclose(np.einsum("mwi,mi->mw", vg, w.directions),
                       np.stack([w.vp_km_s, w.vs1_km_s, w.vs2_km_s], 1), rtol=1e-10)


def test_hemisphere_grid_is_near_uniform_and_covers_the_lower_hemisphere():
    dirs, az, pl = waves.hemisphere_grid(1.0)
    assert np.allclose(np.linalg.norm(dirs, axis=1), 1.0) and np.all(dirs[:, 2] <= 1e-12)
    # a hemisphere is 2 pi sr; a 1-degree grid should hold about 2 pi / (pi/180)^2 ~ 20,600 points
    assert 19000 < len(dirs) < 22500
    probe = -np.abs(random_rotation_matrices(3000, seed=2)[:, 0])
    nearest = np.degrees(np.arccos(np.clip((probe @ dirs.T).max(axis=1), -1, 1)))
    assert nearest.max() < 1.0
    assert np.allclose(waves.direction_from_angles(az, pl), dirs)
    below = dirs[dirs[:, 2] < -1e-9]  # on the horizon n and -n are both 'lower'
    assert np.allclose(waves.to_lower_hemisphere(-below), below)


def test_speeds_near_a_reference_match_the_exact_solution():
    # Perturbation about a reference tensor (used by the bootstrap) against numpy.linalg.eigh of
    # each Christoffel matrix: bootstrap-like aggregates of 30 olivine crystals (large, uneven
    # differences), and a transversely isotropic tensor along its axis, where Vs1 = Vs2 exactly
    # (degenerate S waves: common practice, Thomsen 1986), perturbed slightly.
    from fabric2seis.elastic.minerals import find_mineral
    olivine = find_mineral("olivine")
    rng = np.random.default_rng(5)
    ck = el.voigt_to_kelvin(olivine.stiffness_gpa)
    g = random_rotation_matrices(30, seed=3)
    tensors = []
    for _ in range(40):
        counts = np.bincount(rng.integers(0, 30, 30), minlength=30).astype(float)
        tensors.append(el.kelvin_to_voigt(el.weighted_rotated_mean(ck, g, counts)))
    ti = np.zeros((6, 6))
    ti[:3, :3] = [[220, 80, 70], [80, 220, 70], [70, 70, 180]]
    ti[3, 3] = ti[4, 4] = 55.0
    ti[5, 5] = 70.0
    wobble = rng.normal(0, 0.3, (40, 6, 6))
    sets = [np.array(tensors), ti[None] + (wobble + np.swapaxes(wobble, 1, 2)) / 2]
    dirs = np.vstack([waves.hemisphere_grid(6.0)[0], [[0.0, 0.0, -1.0]]])
    for many in sets:
        reference = many.mean(axis=0)
        near = waves.speeds_near(reference, many, 3300.0, dirs)
        for b in range(0, len(many), 7):
            gamma = waves.christoffel_matrices(many[b], dirs)
            exact = np.sqrt(np.linalg.eigvalsh(gamma)[:, ::-1] * 1e3 / 3300.0)
            for wave in range(3):
                assert np.allclose(near[wave][b], exact[:, wave], rtol=1e-7)
