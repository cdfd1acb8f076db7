"""Bootstrap intervals: shrinking with the grain count, and resamples as weights."""

import numpy as np
import pytest

from fabric2seis import elastic, fabric, uncertainty
from fabric2seis.minerals import find_mineral
from fabric2seis.synth import fabric_orientations

OLIVINE = find_mineral("olivine")


def widths(n, seed=1):
    q = fabric_orientations(OLIVINE, "olivine-A", n, 25.0, seed=seed)
    counts = uncertainty.resample_counts(n, 200, np.random.default_rng(seed))
    values = uncertainty.seismic_bootstrap([(OLIVINE, q, np.ones(n))], {"olivine": 1.0}, "hill",
                                           OLIVINE.density_kg_m3, {"olivine": counts})
    return {k: np.diff(uncertainty.interval(v))[0] for k, v in values.items()}


def test_intervals_shrink_as_one_over_root_n():
    # Sampling theory of means (common practice): four times the grains, half the width.
    small, large = widths(400), widths(1600)
    for key in ("avp_pct", "avs_max_pct", "delay_s_per_100km"):
        assert 1.5 < small[key] / large[key] < 2.7, key


def test_resample_as_weights_equals_recomputing_on_the_drawn_grains():
    n = 150
    q = fabric_orientations(OLIVINE, "olivine-A", n, 25.0, seed=2)
    counts = uncertainty.resample_counts(n, 3, np.random.default_rng(4))
    a = fabric.j_pair_matrix(q, OLIVINE.symmetry)
    for row in counts:
        drawn = np.repeat(np.arange(n), row.astype(int))
        u = row / row.sum()
        assert u @ (a @ u) == pytest.approx(fabric.j_index(q[drawn], np.ones(len(drawn)), OLIVINE.symmetry, method="pairs"), rel=1e-9)
        means = uncertainty._resampled_means(elastic.voigt_to_kelvin(OLIVINE.stiffness_gpa),
                                             fabric.to_matrices(q), np.ones(n), row[None])[0]
        direct = elastic.weighted_rotated_mean(elastic.voigt_to_kelvin(OLIVINE.stiffness_gpa),
                                               fabric.to_matrices(q[drawn]), np.ones(len(drawn)))
        assert np.allclose(means, direct, rtol=1e-10, atol=1e-9)
