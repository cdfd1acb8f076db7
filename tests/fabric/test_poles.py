"""Pole densities, pfJ and the orientation-tensor indices (fabric2seis.fabric.poles)."""

import numpy as np
import pytest

from fabric2seis import fabric
from fabric2seis.elastic.minerals import crystal_direction, find_mineral
from fabric2seis.orientations import multiply
from fabric2seis.synth import fabric_orientations, ideal_orientation, random_quaternions

OLIVINE = find_mineral("olivine")


def _about_z(n, rng):
    """Rotations of the structural frame about Z by uniform angles (for fibre fabrics)."""
    angle = rng.uniform(0, 2 * np.pi, n)
    return np.column_stack([np.cos(angle / 2), np.zeros(n), np.zeros(n), np.sin(angle / 2)])


def _about_x(n, rng):
    angle = rng.uniform(0, 2 * np.pi, n)
    return np.column_stack([np.cos(angle / 2), np.sin(angle / 2), np.zeros(n), np.zeros(n)])


def eigen_of(q, label):
    v = fabric.pole_vectors(q, crystal_direction(OLIVINE, label), OLIVINE.symmetry)
    return fabric.eigen_analysis(fabric.orientation_tensor(v, np.ones(len(q))))


def test_point_girdle_and_random_fall_in_their_diagram_fields():
    # Woodcock (1977): clusters have K > 1, girdles K < 1. Vollmer (1990): P, G, R sum to 1 and
    # the largest names the field (point, girdle, random).
    rng = np.random.default_rng(7)
    base = ideal_orientation(OLIVINE, "[100]", "[010]")
    point = fabric_orientations(OLIVINE, "olivine-A", 3000, 8.0, seed=1)
    girdle = multiply(np.tile(base, (3000, 1)), _about_z(3000, rng))   # [100] spread in the XY plane
    rand = random_quaternions(3000, rng)
    p, g, r = eigen_of(point, "[100]"), eigen_of(girdle, "[100]"), eigen_of(rand, "[100]")
    assert p["woodcock_K"] > 1 and g["woodcock_K"] < 1
    for e in (p, g, r):
        assert e["vollmer_P"] + e["vollmer_G"] + e["vollmer_R"] == pytest.approx(1)
    assert max("PGR", key=lambda k: p[f"vollmer_{k}"]) == "P"
    assert max("PGR", key=lambda k: g[f"vollmer_{k}"]) == "G"
    assert max("PGR", key=lambda k: r[f"vollmer_{k}"]) == "R"
    assert r["woodcock_C"] < 0.2 < p["woodcock_C"]  # strength: random weakest


def test_ba_index_of_fibres_and_point_fabric():
    # Mainprice et al. (2014): BA near 0 for a [010]-fibre (axial-[010]), near 1 for a [100]-fibre
    # (axial-[100]), near 0.5 for an orthorhombic point fabric.
    rng = np.random.default_rng(8)
    base = np.tile(ideal_orientation(OLIVINE, "[100]", "[010]"), (3000, 1))   # a on X, b on Z
    b_fibre = multiply(base, _about_z(3000, rng))      # b fixed on Z, a anywhere in XY
    a_fibre = multiply(base, _about_x(3000, rng))      # a fixed on X, b anywhere in YZ

    def ba(q):
        return fabric.ba_index(eigen_of(q, "[100]"), eigen_of(q, "[010]"))

    assert ba(b_fibre) < 0.1
    assert ba(a_fibre) > 0.9
    assert ba(fabric_orientations(OLIVINE, "olivine-A", 3000, 5.0, seed=9)) == pytest.approx(0.5, abs=0.05)


def test_pole_density_is_one_for_uniform_poles():
    cells, area = fabric.hemisphere_cells(1.0)
    assert area.sum() == pytest.approx(2 * np.pi, rel=1e-12)
    q = random_quaternions(5000, np.random.default_rng(2))
    v = fabric.pole_vectors(q, crystal_direction(OLIVINE, "[100]"), OLIVINE.symmetry)
    d = fabric.pole_density(cells, v, np.ones(5000))
    assert np.sum(d * area) / np.sum(area) == pytest.approx(1.0, abs=1e-3)


def test_pole_density_equals_the_kernel_summed_over_every_pole():
    # The density is the pole-figure kernel (1 + kappa) ((1 + cos)/2)^kappa (Schaeben 1997) summed
    # over every pole and its antipode, here directly at scattered directions of both hemispheres;
    # binning on a grid and the FFT in azimuth must reproduce it to 3e-3 of the peak (random, strong
    # and few-grain fabrics).
    from fabric2seis.fabric.kernel import Kernel

    rng = np.random.default_rng(21)
    at = rng.normal(size=(2000, 3))
    at /= np.linalg.norm(at, axis=1)[:, None]
    kernel = Kernel(10.0)
    for q in (random_quaternions(3000, rng), fabric_orientations(OLIVINE, "olivine-A", 3000, 5.0, seed=3),
              fabric_orientations(OLIVINE, "olivine-A", 40, 15.0, seed=4)):
        w = rng.uniform(0.5, 2.0, len(q))
        for label in ("[100]", "[010]", "(021)"):
            v = fabric.pole_vectors(q, crystal_direction(OLIVINE, label), OLIVINE.symmetry)
            p = v.reshape(-1, 3)
            share = np.repeat(w / w.sum() / v.shape[1], v.shape[1])
            exact = 0.5 * (kernel.pole_value(np.clip(at @ p.T, -1, 1))
                           + kernel.pole_value(np.clip(-at @ p.T, -1, 1))) @ share
            d = fabric.pole_density(at, v, w)
            assert np.abs(d - exact).max() < 3e-3 * exact.max(), (label, np.abs(d - exact).max(), exact.max())


def test_pole_figure_j_on_the_grid_equals_the_pair_sum_of_the_kernel():
    # pfJ is the mean square of the pole density; summed exactly over pairs of poles with the
    # kernel's self-convolution on the sphere (Legendre series, Funk-Hecke theorem, common practice)
    # it must match the binned, gridded estimate of pf_j to the grid's accuracy.
    rng = np.random.default_rng(12)
    for name in ("olivine", "pyrope"):
        mineral = find_mineral(name)
        for q in (random_quaternions(300, rng), fabric_orientations(OLIVINE, "olivine-A", 300, 15.0, seed=3)):
            w = rng.uniform(0.5, 2.0, 300)
            for label in fabric.default_poles(mineral):
                v = fabric.pole_vectors(q, crystal_direction(mineral, label), mineral.symmetry)
                assert fabric.pf_j(v, w)[0] == pytest.approx(fabric.pf_j_pairs(v, w), rel=4e-3)


# --- early errors (checked before any work) ----------------------------------------------------

Q = random_quaternions(6, np.random.default_rng(4))
POLES = fabric.pole_vectors(Q, crystal_direction(OLIVINE, "[100]"), OLIVINE.symmetry)
CELLS, _ = fabric.hemisphere_cells(5.0)
WEIGHTED = [
    lambda w, h=10.0: fabric.pf_j(POLES, w, h),
    lambda w, h=10.0: fabric.pf_j_pairs(POLES, w, h),
    lambda w, h=10.0: fabric.pole_density(CELLS, POLES, w, h),
]


@pytest.mark.parametrize("call", WEIGHTED)
@pytest.mark.parametrize("halfwidth", [0.0, -1.0, 200.0])
def test_pole_densities_refuse_a_halfwidth_that_is_not_positive_and_below_180_degrees(call, halfwidth):
    with pytest.raises(ValueError, match="halfwidth_deg must be positive"):
        call(np.ones(6), halfwidth)


@pytest.mark.parametrize("call", WEIGHTED + [lambda w: fabric.orientation_tensor(POLES, w)])
@pytest.mark.parametrize("weights, message", [
    (np.ones(7), r"one value per pole set: expected shape \(6,\)"),
    (-np.ones(6), "must not be negative"),
    (np.zeros(6), "positive sum"),
])
def test_pole_densities_refuse_weights_of_another_length_negative_or_summing_to_zero(call, weights, message):
    with pytest.raises(ValueError, match=message):
        call(weights)


def test_pole_vectors_and_densities_refuse_arrays_of_the_wrong_shape():
    with pytest.raises(ValueError, match=r"quat must be .* shape \(N, 4\)"):
        fabric.pole_vectors(Q[:, :3], crystal_direction(OLIVINE, "[100]"), OLIVINE.symmetry)
    with pytest.raises(ValueError, match="crystal_direction"):
        fabric.pole_vectors(Q, np.zeros(3), OLIVINE.symmetry)
    with pytest.raises(ValueError, match=r"poles must be an array of shape \(N, m, 3\)"):
        fabric.pf_j(POLES[:, 0], np.ones(6))
    with pytest.raises(ValueError, match=r"at must be .* \(M, 3\)"):
        fabric.pole_density(CELLS[:, :2], POLES, np.ones(6))
