"""The de la Vallee Poussin kernel and the kernel ODF (fabric2seis.fabric.kernel)."""

import numpy as np
import pytest
from scipy.integrate import quad

from fabric2seis import fabric
from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.orientations import multiply, proper_symmetry_quaternions
from fabric2seis.synth import fabric_orientations, random_quaternions

OLIVINE = find_mineral("olivine")
K_SYM = len(proper_symmetry_quaternions(OLIVINE.symmetry))


def test_kernel_is_normalised_and_has_its_halfwidth():
    # de la Vallee Poussin kernel (Schaeben 1997): integral 1 over SO(3), K(h) = K(0)/2
    k = fabric.Kernel(10.0)
    total = quad(lambda w: k.value(w) * (2 / np.pi) * np.sin(w / 2) ** 2, 0, np.pi, limit=400)[0]
    assert total == pytest.approx(1, rel=1e-9)
    assert k.value(np.radians(10)) / k.value(0) == pytest.approx(0.5, rel=1e-12)
    # its pole-figure image integrates to 1 over the sphere (uniform = 1)
    assert quad(lambda t: k.pole_value(t) / 2, -1, 1)[0] == pytest.approx(1, rel=1e-9)


def test_odf_estimate_integrates_to_one():
    # f has mean 1 over SO(3) (m.u.d.): Monte Carlo over uniform rotations
    rng = np.random.default_rng(3)
    grains = fabric_orientations(OLIVINE, "olivine-A", 50, 20.0, seed=2)
    at = random_quaternions(200000, rng)
    f = fabric.odf_values(at, grains, np.ones(50), OLIVINE.symmetry)
    assert f.mean() == pytest.approx(1.0, abs=4 * f.std() / np.sqrt(len(f)))


def test_odf_by_neighbour_search_equals_the_sum_over_all_grains():
    # f(g) = sum_i w_i (1/|S|) sum_t K(angle(g, t g_i)) (Schaeben 1997) summed here over every grain
    # and operation, no support cut-off, against the neighbour-search estimate.
    rng = np.random.default_rng(9)
    grains = fabric_orientations(OLIVINE, "olivine-A", 400, 20.0, seed=4)
    w = rng.uniform(0.5, 2.0, 400)
    at = np.vstack([random_quaternions(300, rng), grains[:50]])
    kernel = fabric.Kernel(10.0)
    full = np.zeros(len(at))
    for t in proper_symmetry_quaternions(OLIVINE.symmetry):
        c = np.abs(at @ multiply(t[None], grains).T)
        full += kernel.value(2 * np.arccos(np.clip(c, 0, 1))) @ (w / w.sum())
    full /= K_SYM
    assert np.allclose(fabric.odf_values(at, grains, w, OLIVINE.symmetry, 10.0), full, rtol=1e-9, atol=1e-8)
    assert full.max() > 5      # the check includes points on the fabric's maximum


@pytest.mark.parametrize("halfwidth", [0.0, -5.0, 180.0, float("nan"), "wide"])
def test_kernel_and_odf_refuse_a_halfwidth_that_is_not_positive_and_below_180_degrees(halfwidth):
    # K(h) = K(0)/2 needs 0 < h < 180 degrees: cos(h/2) must lie strictly between 0 and 1 (Schaeben 1997)
    with pytest.raises(ValueError, match="halfwidth_deg"):
        fabric.Kernel(halfwidth)
    q = random_quaternions(5, np.random.default_rng(1))
    with pytest.raises(ValueError, match="halfwidth_deg"):
        fabric.odf_values(q, q, np.ones(5), OLIVINE.symmetry, halfwidth)


def test_odf_refuses_quaternions_and_weights_of_the_wrong_shape():
    q = random_quaternions(5, np.random.default_rng(1))
    with pytest.raises(ValueError, match=r"quat must be .* shape \(N, 4\)"):
        fabric.odf_values(q, q[:, :3], np.ones(5), OLIVINE.symmetry)
    with pytest.raises(ValueError, match=r"quat_at must be .* shape \(N, 4\)"):
        fabric.odf_values(q[0], q, np.ones(5), OLIVINE.symmetry)
    with pytest.raises(ValueError, match="one value per orientation"):
        fabric.odf_values(q, q, np.ones(4), OLIVINE.symmetry)
