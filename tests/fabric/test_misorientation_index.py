"""The M-index and random misorientation distributions (fabric2seis.fabric.misorientation_index)."""

import numpy as np
import pytest

from fabric2seis import fabric
from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.synth import random_quaternions

OLIVINE = find_mineral("olivine")


def test_mackenzie_limits_of_random_misorientation_distributions():
    # Mackenzie (1958): cubic (m-3m) random misorientations end at 62.8 degrees with the mode near
    # 45 degrees; orthorhombic (mmm) ones reach 120 degrees (common practice, e.g. Morawiec 2004).
    cubic = fabric.random_distribution(find_mineral("pyrope").symmetry)
    centres = np.arange(len(cubic)) + 0.5
    assert centres[np.flatnonzero(cubic)[-1]] == pytest.approx(62.5, abs=0.6)
    assert 42 <= centres[np.argmax(cubic)] <= 47
    ortho = fabric.random_distribution(OLIVINE.symmetry)
    assert centres[np.flatnonzero(ortho)[-1]] == pytest.approx(119.5, abs=1.0)
    assert cubic.sum() == pytest.approx(1) and ortho.sum() == pytest.approx(1)


def test_random_distribution_is_the_same_from_a_cold_and_a_warm_cache(tmp_path, monkeypatch):
    # The disk cache only saves time: the histogram is simulated with a fixed seed, written, and
    # read back bit for bit (numpy's .npy format stores float64 exactly; common practice).
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    fabric.clear_memory()
    cold = fabric.random_distribution(OLIVINE.symmetry).copy()
    assert len(list(tmp_path.glob("fabric2seis/random_misorientation_*.npy"))) == 1
    fabric.clear_memory()
    warm = fabric.random_distribution(OLIVINE.symmetry)
    assert np.array_equal(cold, warm)


def test_m_index_needs_two_grains_as_an_n_by_4_array():
    q = random_quaternions(6, np.random.default_rng(4))
    with pytest.raises(ValueError, match="at least 2 orientations"):
        fabric.m_index(q[:1], OLIVINE.symmetry)
    with pytest.raises(ValueError, match=r"shape \(N, 4\)"):
        fabric.m_index(q[:, 1:], OLIVINE.symmetry)
    with pytest.raises(ValueError, match=r"shape \(N, 4\)"):
        fabric.uncorrelated_misorientations(q.T, OLIVINE.symmetry)
