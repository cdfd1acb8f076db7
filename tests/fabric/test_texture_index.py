"""The J-index against its published definition and independent computations (fabric2seis.fabric.texture_index)."""

import numpy as np
import pytest
from scipy.integrate import quad

from fabric2seis import fabric
from fabric2seis.elastic.minerals import crystal_direction, find_mineral
from fabric2seis.orientations import multiply, proper_symmetry_quaternions
from fabric2seis.synth import fabric_orientations, ideal_orientation, random_quaternions

OLIVINE = find_mineral("olivine")
K_SYM = len(proper_symmetry_quaternions(OLIVINE.symmetry))


def kernel_square_integral(halfwidth_deg):
    """Integral of K^2 over SO(3) by quadrature over the rotation angle, Haar density (2/pi) sin^2(w/2)."""
    k = fabric.Kernel(halfwidth_deg)
    return quad(lambda w: k.value(w) ** 2 * (2 / np.pi) * np.sin(w / 2) ** 2, 0, np.pi, limit=400)[0]


def test_single_orientation_gives_the_j_of_the_kernel_and_m_near_one():
    # All grains identical: f is the kernel averaged over the |S| equivalents, so J is the integral
    # of K^2 divided by |S| (the equivalents of an orthorhombic crystal are 180 degrees apart and do
    # not overlap). The integral is computed here by direct quadrature, independently of the
    # character expansion the package uses.
    q = np.tile(ideal_orientation(OLIVINE, "[100]", "[010]"), (400, 1))
    j = fabric.j_index(q, np.ones(400), OLIVINE.symmetry, 10.0)
    assert j == pytest.approx(kernel_square_integral(10.0) / K_SYM, rel=1e-6)
    assert fabric.m_index(q, OLIVINE.symmetry) > 0.97   # Skemer et al. (2005): M -> 1 for a single crystal


def test_random_fabric_of_20000_grains():
    """J, pfJ, M and eigenvalues of a random fabric (Bunge 1982; Skemer et al. 2005; Woodcock 1977).

    Finite-sample bias of J: with f the kernel estimate of N independent uniform grains,
    E[J] = 1 + (J_1 - 1)/N, where J_1 = J of one grain (the self-pair terms); the pair terms are a
    U-statistic of zero mean with standard deviation about sqrt(2 var(Phi_S)) / N. We allow five
    standard deviations around the expected value.
    """
    n = 20000
    q = random_quaternions(n, np.random.default_rng(11))
    j = fabric.j_index(q, np.ones(n), OLIVINE.symmetry, 10.0)
    j1 = kernel_square_integral(10.0) / K_SYM
    grid, phi, _, _ = fabric.self_convolution_table(10.0)
    haar = (2 / np.pi) * np.sin(grid / 2) ** 2
    var_phi_s = np.trapezoid(phi ** 2 * haar, grid) / K_SYM - 1.0     # Phi averaged over S, non-overlapping
    sigma = np.sqrt(2 * var_phi_s) / n
    expected = 1 + (j1 - 1) / n
    assert expected - 1 == pytest.approx(0.00687, abs=2e-4)            # the bias itself: 0.7 % at 20,000
    assert abs(j - expected) < 5 * sigma
    for label in ("[100]", "[010]", "[001]"):
        v = fabric.pole_vectors(q, crystal_direction(OLIVINE, label), OLIVINE.symmetry)
        pfj, _, _ = fabric.pf_j(v, np.ones(n))
        assert pfj == pytest.approx(1.0, abs=0.02)
        e = fabric.eigen_analysis(fabric.orientation_tensor(v, np.ones(n)))
        assert np.allclose(e["eigenvalues"], 1 / 3, atol=0.01)
    assert fabric.m_index(q, OLIVINE.symmetry) < 0.02


def test_j_agrees_with_brute_force_all_pairs_on_5000_grains():
    # The same definition summed over every pair and symmetry operation, no support cut-off.
    n = 5000
    q = fabric_orientations(OLIVINE, "olivine-A", n, 25.0, seed=5)
    w = np.random.default_rng(6).uniform(0.5, 1.5, n)
    fast = fabric.j_index(q, w, OLIVINE.symmetry, 10.0)
    wn = w / w.sum()
    total = 0.0
    for t in proper_symmetry_quaternions(OLIVINE.symmetry):
        moved = multiply(t[None], q)
        for start in range(0, n, 1000):
            c = np.clip(np.abs(q[start:start + 1000] @ moved.T), 0, 1)
            total += wn[start:start + 1000] @ fabric.self_convolution(10.0, 2 * np.arccos(c)) @ wn
    brute = total / K_SYM
    assert fast == pytest.approx(brute, rel=1e-4)      # 1e-3 is what the J-index needs; the series holds 1e-5


@pytest.mark.parametrize("name", ["olivine", "quartz", "calcite", "pyrope", "diopside", "albite", "ice"])
def test_j_by_harmonics_and_by_pairs_agree_for_every_point_group(name):
    # Two independent sums of the same integral (Bunge 1982): the Parseval series over Wigner
    # matrices with the symmetry projector, and the pair sum over the kernel's self-convolution.
    # Point groups mmm, 32, -3m, m-3m, 2/m (2-fold along b: the frame is turned), -1 and 6/mmm.
    mineral = find_mineral(name)
    rng = np.random.default_rng(21)
    n = 1500
    clustered = multiply(random_quaternions(1, rng), random_quaternions(n, rng) * [1, 0.12, 0.12, 0.12])
    clustered /= np.linalg.norm(clustered, axis=1, keepdims=True)
    for q in (random_quaternions(n, rng), clustered):
        w = rng.uniform(0.5, 2.0, n)
        by_pairs = fabric.j_index(q, w, mineral.symmetry, 10.0, method="pairs")
        by_series = fabric.j_index(q, w, mineral.symmetry, 10.0, method="harmonics")
        assert by_series == pytest.approx(by_pairs, rel=2e-5)     # pairs leave 1e-5 of Phi's mass out


def test_dense_pair_sum_of_j_equals_the_harmonic_series():
    rng = np.random.default_rng(13)
    for name in ("olivine", "diopside", "pyrope"):
        mineral = find_mineral(name)
        q = fabric_orientations(OLIVINE, "olivine-B", 150, 30.0, seed=5)
        w = rng.uniform(0.5, 2.0, 150)
        assert fabric.j_index_dense(q, w, mineral.symmetry) == pytest.approx(
            fabric.j_index(q, w, mineral.symmetry, method="harmonics"), rel=2e-5)


def test_quadratic_forms_of_the_bootstrap_equal_the_harmonic_series_for_each_weight_vector():
    # The bootstrap's J of weights v_b is v_b^T A v_b / (sum v_b)^2 (fabric/pair_kernel.py fills A's
    # blocks in compiled code); each must be the J of the harmonic series (Bunge 1982) with those
    # weights, independent of the pair table. Blocks of 64 rows, so the diagonal blocks and the
    # rows to their right are both exercised; cubic (12 proper operations), trigonal, monoclinic.
    rng = np.random.default_rng(21)
    for name in ("pyrope", "quartz", "diopside"):
        mineral = find_mineral(name)
        q = fabric_orientations(OLIVINE, "olivine-A", 300, 30.0, seed=4)
        v = rng.multinomial(300, np.full(300, 1 / 300), size=4).T * rng.uniform(0.5, 2.0, (300, 1))
        forms, diagonal = fabric.j_quadratic_forms(q, v, mineral.symmetry, 10.0, chunk=64)
        for b in range(v.shape[1]):
            series = fabric.j_index(q, v[:, b], mineral.symmetry, 10.0, method="harmonics")
            assert forms[b] / v[:, b].sum() ** 2 == pytest.approx(series, rel=2e-5), name
        assert diagonal == pytest.approx(np.full(300, diagonal[0]), rel=1e-9)    # one grain's J, any grain
        assert diagonal[0] == pytest.approx(fabric.j_index(q[:1], np.ones(1), mineral.symmetry, 10.0,
                                                           method="harmonics"), rel=2e-5)


def test_j_of_nested_subsets_in_one_pass_equals_the_pair_sum_of_each_subset():
    # The convergence curve adds grains to the Fourier sums one subset after another; every
    # subset's J must still be the integral of f^2 of that subset alone (Bunge 1982), here the
    # independent pair sum over Phi with the subset's weights normalised on their own.
    rng = np.random.default_rng(8)
    q = fabric_orientations(OLIVINE, "olivine-A", 900, 35.0, seed=9)
    w = rng.uniform(0.5, 2.0, 900)
    sizes = [5, 40, 41, 300, 900]
    nested = fabric.j_index_nested(q, w, OLIVINE.symmetry, sizes, 10.0)
    for n, j in zip(sizes, nested):
        assert j == pytest.approx(fabric.j_index(q[:n], w[:n], OLIVINE.symmetry, 10.0, method="pairs"), rel=2e-5)
    with pytest.raises(ValueError, match="sizes must increase"):
        fabric.j_index_nested(q, w, OLIVINE.symmetry, [10, 5], 10.0)


# --- early errors (checked before any work) ----------------------------------------------------

Q = random_quaternions(6, np.random.default_rng(4))
J_FUNCTIONS = [fabric.j_index, fabric.j_index_harmonics, fabric.j_index_pairs, fabric.j_index_dense]


@pytest.mark.parametrize("j_function", J_FUNCTIONS)
@pytest.mark.parametrize("halfwidth", [0.0, -10.0, 180.0, float("inf")])
def test_j_refuses_a_halfwidth_that_is_not_positive_and_below_180_degrees(j_function, halfwidth):
    with pytest.raises(ValueError, match="halfwidth_deg must be positive"):
        j_function(Q, np.ones(6), OLIVINE.symmetry, halfwidth)


@pytest.mark.parametrize("j_function", J_FUNCTIONS)
@pytest.mark.parametrize("bad", [Q[:, :3], Q.ravel(), Q[None], np.zeros((0, 4))])
def test_j_refuses_quaternions_that_are_not_an_n_by_4_array(j_function, bad):
    with pytest.raises(ValueError, match="quat must"):
        j_function(bad, np.ones(len(bad)), OLIVINE.symmetry)


@pytest.mark.parametrize("j_function", J_FUNCTIONS)
@pytest.mark.parametrize("weights, message", [
    (np.ones(5), r"one value per orientation: expected shape \(6,\)"),
    (np.ones((6, 1)), r"one value per orientation"),
    (np.array([1, 1, 1, 1, 1, -0.5]), "must not be negative"),
    (np.zeros(6), "positive sum"),
    (np.array([1, 1, np.nan, 1, 1, 1]), "finite"),
])
def test_j_refuses_weights_of_another_length_negative_or_summing_to_zero(j_function, weights, message):
    with pytest.raises(ValueError, match=message):
        j_function(Q, weights, OLIVINE.symmetry)


def test_pair_matrix_and_quadratic_forms_check_their_arguments():
    with pytest.raises(ValueError, match="quat must"):
        fabric.j_pair_matrix(Q[:, :3], OLIVINE.symmetry)
    with pytest.raises(ValueError, match="halfwidth_deg"):
        fabric.j_pair_matrix(Q, OLIVINE.symmetry, 0.0)
    with pytest.raises(ValueError, match=r"v must be an array \(N, B\)"):
        fabric.j_quadratic_forms(Q, np.ones((5, 2)), OLIVINE.symmetry)
    with pytest.raises(ValueError, match="unknown J-index method 'series'"):
        fabric.j_index(Q, np.ones(6), OLIVINE.symmetry, method="series")
