"""Grain reconstruction against synthetic maps whose grains are known."""

import numpy as np
import pytest

from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.ingest import grains
from fabric2seis.orientations import misorientation_angles, multiply, proper_symmetry_quaternions
from fabric2seis.synth import voronoi_map

OLIVINE = find_mineral("olivine")
SYM = proper_symmetry_quaternions(OLIVINE.symmetry)


def jittered_seeds(n_side, size, rng):
    """Cell centres on a jittered lattice: every cell is large and compact."""
    c = (np.arange(n_side) + 0.5) * size / n_side
    xx, yy = np.meshgrid(c, c)
    return np.column_stack([xx.ravel(), yy.ravel()]) + rng.uniform(-0.2, 0.2, (n_side ** 2, 2)) * size / n_side


def reconstruct(m, threshold=10.0):
    mineral_index = np.zeros(len(m.x), dtype=int)
    area = m.step ** 2 * (np.sqrt(3) / 2 if m.grid == "hex" else 1)
    return grains.reconstruct(m.x, m.y, m.grid, m.step, m.quat, mineral_index, [OLIVINE], threshold, area)


def matched(result, m):
    """For each true cell, the reconstructed grain holding most of its pixels."""
    out = {}
    for cell in np.unique(m.cell):
        ids, counts = np.unique(result.point_grain[m.cell == cell], return_counts=True)
        out[cell] = ids[np.argmax(counts)]
    return out


@pytest.fixture(scope="module")
def square_truth():
    rng = np.random.default_rng(5)
    seeds = jittered_seeds(5, 60, rng)
    return voronoi_map(25, 60, 60, step=1.0, noise_deg=0.5, seed=5, seeds_xy=seeds), seeds


def test_voronoi_grains_are_recovered_exactly(square_truth):
    m, _ = square_truth
    r = reconstruct(m)
    assert r.n_grains == len(np.unique(m.cell)) == 25
    match = matched(r, m)
    assert len(set(match.values())) == 25
    for cell, grain in match.items():
        true_pixels = np.flatnonzero(m.cell == cell)
        assert abs(r.n_pixels[grain] - len(true_pixels)) <= np.sqrt(len(true_pixels))  # one pixel row
        err = np.degrees(misorientation_angles(r.quat[grain:grain + 1], m.cell_quat[cell:cell + 1], SYM))[0]
        assert err < 0.5
        assert r.area[grain] == pytest.approx(r.n_pixels[grain] * 1.0)
        assert r.equivalent_diameter[grain] == pytest.approx(2 * np.sqrt(r.area[grain] / np.pi))


def test_symmetry_relabelled_pixels_stay_in_their_grain(square_truth):
    m, _ = square_truth
    q = m.quat.copy()
    inside = m.cell == 7
    half = inside & (m.x < np.median(m.x[inside]))
    # a 2-fold about [001] of olivine, a symmetry operation of mmm: same crystal, other Euler angles
    q[half] = multiply(SYM[3][None], q[half])
    relabelled = type(m)(**{**m.__dict__, "quat": q})
    r = reconstruct(relabelled)
    assert r.n_grains == 25
    assert len(np.unique(r.point_grain[inside])) == 1
    grain = r.point_grain[inside][0]
    assert np.degrees(misorientation_angles(r.quat[grain:grain + 1], m.cell_quat[7:8], SYM))[0] < 0.5


def test_hexagonal_grid_finds_the_same_grains_as_square(square_truth):
    m_sq, seeds = square_truth
    m_hex = voronoi_map(25, 60, 70, step=1.0, grid="hex", cell_quat=m_sq.cell_quat, noise_deg=0.5,
                        seed=6, seeds_xy=seeds)
    r_sq, r_hex = reconstruct(m_sq), reconstruct(m_hex)
    assert r_hex.n_grains == r_sq.n_grains == 25
    for cell, grain in matched(r_hex, m_hex).items():
        g_sq = matched(r_sq, m_sq)[cell]
        assert np.degrees(misorientation_angles(r_hex.quat[grain:grain + 1], r_sq.quat[g_sq:g_sq + 1], SYM))[0] < 0.5
        # hexagonal cells have area sqrt(3)/2: the same grain covers about the same area
        assert r_hex.area[grain] == pytest.approx(r_sq.area[g_sq], rel=0.15)


def test_neighbours_are_4_and_6_connected():
    x, y = np.meshgrid(np.arange(4.0), np.arange(3.0))
    i, j = grains.neighbour_pairs(x.ravel(), y.ravel(), "square", 1.0)
    assert len(i) == 3 * 3 + 4 * 2  # horizontal + vertical links of a 4 x 3 grid
    from fabric2seis.synth import grid_points
    hx, hy = grid_points(5, 4, 1.0, "hex")
    i, j = grains.neighbour_pairs(hx, hy, "hex", 1.0)
    d = np.hypot(hx[i] - hx[j], hy[i] - hy[j])
    assert np.allclose(d, 1.0)  # every hexagonal neighbour is one step away
    interior = np.bincount(np.r_[i, j], minlength=len(hx)).max()
    assert interior == 6


def test_shape_tensor_of_an_elongated_grain():
    # A 40 x 4 pixel rectangle: long axis along x, aspect ratio sqrt(var_x / var_y) of a uniform bar
    # (variance L^2/12 for side L, common practice).
    x, y = np.meshgrid(np.arange(40.0), np.arange(4.0))
    q = np.tile([1.0, 0, 0, 0], (160, 1))
    r = grains.grain_statistics(np.zeros(160, int), x.ravel(), y.ravel(), q, np.zeros(160, int),
                                [OLIVINE], 1.0, 1.0)
    assert r.aspect_ratio[0] == pytest.approx(10.0, rel=1e-6)
    assert min(r.long_axis_deg[0], 180 - r.long_axis_deg[0]) < 1e-6


def test_small_grains_are_removed_with_their_points(square_truth):
    m, _ = square_truth
    r = reconstruct(m)
    big, keep = grains.keep_large(r, int(np.sort(r.n_pixels)[3]))
    assert big.n_grains == 22 and keep.sum() == big.n_pixels.sum()
