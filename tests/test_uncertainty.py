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
        u = row.astype(float) / row.sum()
        assert u @ (a @ u) == pytest.approx(fabric.j_index(q[drawn], np.ones(len(drawn)), OLIVINE.symmetry, method="pairs"), rel=1e-9)
        means = uncertainty._resampled_means(elastic.voigt_to_kelvin(OLIVINE.stiffness_gpa),
                                             fabric.to_matrices(q), np.ones(n), row[None])[0]
        direct = elastic.weighted_rotated_mean(elastic.voigt_to_kelvin(OLIVINE.stiffness_gpa),
                                               fabric.to_matrices(q[drawn]), np.ones(len(drawn)))
        # the resampled means come from one single-precision product on deviations: ~1e-9
        assert np.allclose(means, direct, rtol=1e-8, atol=1e-6)      # GPa; entries reach 274


def test_resampled_j_leaves_out_pairs_of_a_grain_with_its_own_copies():
    # A resample with grain i drawn c_i times: its plain quadratic form counts c_i (c_i - 1) pairs
    # of copies at zero misorientation. The bootstrap leaves them out; with all counts 1 it is J.
    n = 120
    q = fabric_orientations(OLIVINE, "olivine-A", n, 40.0, seed=3)
    a = fabric.j_pair_matrix(q, OLIVINE.symmetry)
    counts = uncertainty.resample_counts(n, 5, np.random.default_rng(2))
    counts[0] = 1.0
    j = uncertainty.fabric_bootstrap(OLIVINE, q, np.ones(n), counts, 10.0, np.random.default_rng(0))["J"]
    assert j[0] == pytest.approx(fabric.j_index(q, np.ones(n), OLIVINE.symmetry, method="pairs"), rel=1e-9)
    for c, value in zip(counts[1:], j[1:]):
        pairs = np.outer(c, c) - np.diag(c * (c - 1))                 # copies of one grain never pair
        assert value == pytest.approx((pairs * a.toarray()).sum() / pairs.sum(), rel=1e-9)


def test_bootstrap_intervals_of_a_weak_fabric_hold_their_estimates():
    # The plain bootstrap of J is biased up by about (J_1 - J)/N, J_1 the J of one grain (the
    # V-statistic's diagonal, common practice; Efron & Tibshirani 1993 ch. 10 for bootstrap bias):
    # for 300 weakly aligned olivine grains that is ~0.45, several times the interval's width.
    # With copies' pairs left out (J) and the bias shift (M) the intervals must hold the estimates.
    n = 300
    q = fabric_orientations(OLIVINE, "olivine-A", n, 60.0, seed=3)
    counts = uncertainty.resample_counts(n, 200, np.random.default_rng(1))
    boot = uncertainty.fabric_bootstrap(OLIVINE, q, np.ones(n), counts, 10.0, np.random.default_rng(2))
    j, m = fabric.j_index(q, np.ones(n), OLIVINE.symmetry), fabric.m_index(q, OLIVINE.symmetry)
    low, high = uncertainty.interval(boot["J"])
    assert low < j < high and abs(np.mean(boot["J"]) - j) < 0.02 * j
    a = fabric.j_pair_matrix(q, OLIVINE.symmetry)
    u = counts.T / n
    plain = np.einsum("nb,nb->b", u, a @ u)
    j1 = a.diagonal().mean()
    assert np.mean(plain) - j == pytest.approx((j1 - j) / n, rel=0.15)
    low, high = uncertainty.interval(boot["M"])
    assert low <= m <= high

