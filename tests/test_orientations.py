"""Quaternion helpers checked against orix (reference library)."""

import numpy as np
from orix.quaternion import Misorientation, Orientation, Rotation

from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.orientations import misorientation_angles, multiply, nearest_equivalent, proper_symmetry_quaternions
from fabric2seis.synth import random_quaternions


def test_product_matches_orix_and_matrix_product():
    rng = np.random.default_rng(0)
    a, b = random_quaternions(50, rng), random_quaternions(50, rng)
    assert np.allclose(multiply(a, b), (Rotation(a) * Rotation(b)).data)
    assert np.allclose(Rotation(multiply(a, b)).to_matrix(), Rotation(a).to_matrix() @ Rotation(b).to_matrix())


def test_misorientation_angles_match_orix_for_several_symmetries():
    rng = np.random.default_rng(1)
    for name in ("olivine", "pyrope", "quartz", "muscovite", "albite"):
        sym = find_mineral(name).symmetry
        a, b = random_quaternions(300, rng), random_quaternions(300, rng)
        ours = misorientation_angles(a, b, proper_symmetry_quaternions(sym))
        oa, ob = Orientation(a, sym.proper_subgroup), Orientation(b, sym.proper_subgroup)
        ref = Misorientation(ob * ~oa, (sym.proper_subgroup, sym.proper_subgroup)).reduce().angle
        assert np.allclose(ours, ref, atol=1e-9), name


def test_compiled_angles_equal_the_plain_numpy_formula_of_the_pairs():
    # the compiled loop (angle_kernel.py) against the textbook form written out here in numpy: the
    # misorientation angle is 2 arccos of the largest |scalar part| of s_k * qb * conj(qa) over the
    # proper operations (common practice; Mackenzie 1958 for the reduction to one crystal's operations)
    rng = np.random.default_rng(5)
    sym = proper_symmetry_quaternions(find_mineral("quartz").symmetry)
    a, b = random_quaternions(5000, rng), random_quaternions(5000, rng)
    b[:10] = a[:10]                                        # same orientation: 0
    b[10:20] = -a[10:20]                                   # the other quaternion of it: 0
    dq = multiply(b, a * np.array([1.0, -1.0, -1.0, -1.0]))
    every = multiply(sym[None, :, :], dq[:, None, :])[..., 0]          # (N, K) scalar parts
    plain = 2.0 * np.arccos(np.clip(np.abs(every).max(axis=1), 0.0, 1.0))
    ours = misorientation_angles(a, b, sym)
    assert np.allclose(ours, plain, rtol=0, atol=1e-12)
    assert np.allclose(ours[:20], 0.0, atol=1e-6)
    assert misorientation_angles(a[:0], b[:0], sym).shape == (0,)


def test_cubic_misorientations_never_exceed_mackenzie_limit():
    # Mackenzie (1958): the largest misorientation angle between cubic (m-3m) crystals is 62.8 degrees.
    rng = np.random.default_rng(2)
    sym = proper_symmetry_quaternions(find_mineral("pyrope").symmetry)
    angles = np.degrees(misorientation_angles(random_quaternions(20000, rng), random_quaternions(20000, rng), sym))
    assert 61.0 < angles.max() <= 62.81


def test_nearest_equivalent_is_an_equivalent_and_closest():
    rng = np.random.default_rng(3)
    sym = proper_symmetry_quaternions(find_mineral("olivine").symmetry)
    q, ref = random_quaternions(100, rng), random_quaternions(100, rng)
    near = nearest_equivalent(q, ref, sym)
    assert np.allclose(misorientation_angles(near, q, sym), 0, atol=1e-7)  # same orientation
    plain = 2 * np.arccos(np.clip(np.abs(np.sum(near * ref, axis=1)), 0, 1))
    assert np.allclose(plain, misorientation_angles(near, ref, sym), atol=1e-9)  # no variant is closer


def test_fast_paths_agree_with_the_full_symmetry_search():
    # within_angle and nearest_equivalent skip the symmetry search where the plain angle settles
    # it; mixing near pairs (fast path) and far or relabelled pairs (full path) must not matter.
    from fabric2seis.orientations import within_angle
    from fabric2seis.synth import scatter
    rng = np.random.default_rng(4)
    sym = proper_symmetry_quaternions(find_mineral("quartz").symmetry)
    a = random_quaternions(2000, rng)
    b = scatter(a, 6.0, rng)
    b[::3] = multiply(sym[rng.integers(1, len(sym), 667)], b[::3])  # other variants, same crystal
    b[1::7] = random_quaternions(len(b[1::7]), rng)
    full = misorientation_angles(a, b, sym)
    assert np.array_equal(within_angle(a, b, sym, np.radians(10)), full < np.radians(10))
    near = nearest_equivalent(b, a, sym)
    plain = 2 * np.arccos(np.clip(np.abs(np.sum(near * a, axis=1)), 0, 1))
    assert np.allclose(plain, full, atol=1e-7)


def test_matrices_of_quaternions_are_orix_matrices():
    # orix Rotation.to_matrix is the reference (a general-purpose library)
    from orix.quaternion import Rotation

    from fabric2seis.orientations import to_matrices
    q = np.random.default_rng(12).normal(size=(500, 4))
    q /= np.linalg.norm(q, axis=1, keepdims=True)
    assert np.allclose(to_matrices(q), Rotation(q).to_matrix().reshape(-1, 3, 3), atol=1e-14)
