"""Quaternion helpers checked against orix (reference library)."""

import numpy as np
from orix.quaternion import Misorientation, Orientation, Rotation

from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.orientations import (
    from_axis_angle,
    from_bunge_euler,
    from_matrices,
    misorientation_angles,
    multiply,
    nearest_equivalent,
    proper_symmetry_quaternions,
    to_bunge_euler,
    to_matrices,
)
from fabric2seis.synth import random_quaternions


def test_product_matches_orix_and_matrix_product():
    rng = np.random.default_rng(0)
    a, b = random_quaternions(50, rng), random_quaternions(50, rng)
    assert np.allclose(multiply(a, b), (Rotation(a) * Rotation(b)).data)
    assert np.allclose(Rotation(multiply(a, b)).to_matrix(), Rotation(a).to_matrix() @ Rotation(b).to_matrix())


def test_misorientation_angles_match_orix_for_several_symmetries():
    rng = np.random.default_rng(1)
    for name in ("olivine", "pyrope", "quartz", "muscovite", "albite"):
        sym = find_mineral(name).orix_symmetry
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


def random_euler(n, rng):
    angles = rng.uniform([0, 0, 0], [2 * np.pi, np.pi, 2 * np.pi], (n, 3))
    angles[:20, 1] = 0.0            # Phi = 0 and pi: the two ends where only phi1 +- phi2 is defined
    angles[20:40, 1] = np.pi
    angles[40:60] = np.round(angles[40:60] / (np.pi / 2)) * (np.pi / 2)     # quarter turns: exact zeros
    return angles


def test_euler_angles_to_quaternions_are_orix_s_to_the_last_bit():
    # reference library: orix's Rotation.from_euler (Bunge, passive ZXZ; Rowenhorst et al. 2015,
    # Eqs. A.5-A.6); the readers use ours so that a run needs no orix; same bits, so results are unchanged
    euler = random_euler(20000, np.random.default_rng(3))
    assert np.array_equal(from_bunge_euler(euler), Rotation.from_euler(euler).data)


def test_quaternions_to_euler_angles_and_matrices_back_agree_with_orix():
    # reference library: orix's to_euler and from_matrix (Rowenhorst et al. 2015, Eqs. A.14, A.11);
    # orix compiles them with fast math, so the last bits may differ: 1e-12 rad
    rng = np.random.default_rng(4)
    q = np.vstack([Rotation.from_euler(random_euler(5000, rng)).data, rng.normal(size=(500, 4))])
    theirs = Rotation(q).to_euler()
    ours = to_bunge_euler(q)
    turn = np.abs((ours - theirs + np.pi) % (2 * np.pi) - np.pi)    # 0 and 2 pi are the same angle
    assert turn.max() < 1e-12
    assert np.all((ours >= 0) & (ours <= 2 * np.pi))
    unit = q / np.linalg.norm(q, axis=1)[:, None]
    assert np.allclose(from_matrices(to_matrices(q)), Rotation.from_matrix(Rotation(q).to_matrix()).data, atol=1e-11)
    same = np.abs(np.einsum("ij,ij->i", from_matrices(to_matrices(q)), unit))    # q and -q: one rotation
    assert np.allclose(same, 1.0, atol=1e-12)


def test_axis_angle_rotation_is_orix_s():
    # reference library: orix's Rotation.from_axes_angles; and the matrix of a quarter turn about z
    # takes x to y (right-hand rule, common practice)
    rng = np.random.default_rng(5)
    for axis, angle in zip(rng.normal(size=(50, 3)), rng.uniform(-np.pi, np.pi, 50)):
        assert np.allclose(from_axis_angle(axis, angle), Rotation.from_axes_angles(axis, angle).data, atol=1e-15)
    g = to_matrices(from_axis_angle([0, 0, 1], np.pi / 2))[0]
    assert np.allclose(g @ [1, 0, 0], [0, 1, 0])
