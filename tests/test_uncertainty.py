"""Bootstrap intervals: shrinking with the grain count, and resamples as weights."""

import numpy as np
import pytest

from fabric2seis import elastic, fabric, uncertainty
from fabric2seis.elastic.minerals import find_mineral
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
        pairs = fabric.j_index(q[drawn], np.ones(len(drawn)), OLIVINE.symmetry, method="pairs")
        assert u @ (a @ u) == pytest.approx(pairs, rel=1e-9)
        means = uncertainty._resampled_means(elastic.voigt_to_kelvin(OLIVINE.stiffness_gpa),
                                             fabric.to_matrices(q), np.ones(n), row[None])[0]
        direct = elastic.weighted_rotated_mean(elastic.voigt_to_kelvin(OLIVINE.stiffness_gpa),
                                               fabric.to_matrices(q[drawn]), np.ones(len(drawn)))
        # the resampled means come from one single-precision product on deviations: ~1e-9
        assert np.allclose(means, direct, rtol=1e-8, atol=1e-6)      # GPa; entries reach 274


def test_resampled_j_keeps_the_self_pair_term_and_leaves_out_pairs_of_copies():
    # J = s J_1 + (1 - s) U (s = sum w_i^2 for weights summing to 1, U the mean of A_ij over pairs of
    # distinct grains): a resample keeps the self-pair term of its N draws and takes U over pairs of
    # distinct grains, never the c_i (c_i - 1) pairs of a grain's copies. Written out here with the
    # dense pair matrix; with all counts 1 it is the sample's J.
    n = 120
    q = fabric_orientations(OLIVINE, "olivine-A", n, 40.0, seed=3)
    w = np.random.default_rng(5).uniform(0.5, 2.0, n)
    a = fabric.j_pair_matrix(q, OLIVINE.symmetry).toarray()
    counts = uncertainty.resample_counts(n, 5, np.random.default_rng(2))
    counts[0] = 1.0
    j = uncertainty.fabric_bootstrap(OLIVINE, q, w, counts, 10.0, np.random.default_rng(0))["J"]
    assert j[0] == pytest.approx(fabric.j_index(q, w, OLIVINE.symmetry, method="pairs"), rel=1e-9)
    for c, value in zip(counts[1:], j[1:]):
        v = c * w
        total = v.sum()
        distinct = np.outer(v, v) - np.diag(v ** 2)                  # pairs of distinct grains only
        u = (distinct * a).sum() / distinct.sum()
        s = (c * w ** 2).sum() / total ** 2                          # one self pair per draw
        assert value == pytest.approx((c * w ** 2 * np.diag(a)).sum() / total ** 2 + (1 - s) * u, rel=1e-9)
    # equal weights: the self-pair weight of every resample is 1/N, as in the estimate
    c = counts[1]
    assert (c @ np.ones(n)) / (c @ np.ones(n)) ** 2 == pytest.approx(1 / n)


def test_basic_and_bias_corrected_intervals_by_their_formulas():
    # Efron & Tibshirani (1993): basic [2t - q(0.975), 2t - q(0.025)] (section 13.4); BC percentiles
    # Phi(2 z0 +- 1.96) with z0 = Phi^-1(fraction of resamples below t) (section 14.3).
    from scipy.stats import norm
    values = np.random.default_rng(3).normal(5.0, 1.0, 4000)
    lo, hi = np.percentile(values, [2.5, 97.5])
    assert uncertainty.basic_interval(4.0, values) == pytest.approx([8.0 - hi, 8.0 - lo], abs=1e-6)
    z0 = norm.ppf(np.mean(values < 4.0))
    expected = np.percentile(values, 100 * norm.cdf(2 * z0 + np.array([-1.959964, 1.959964])))
    assert uncertainty.bias_corrected_interval(4.0, values) == pytest.approx(expected, abs=1e-5)
    # at t = the resamples' median BC is the percentile interval
    assert uncertainty.bias_corrected_interval(np.median(values), values) == pytest.approx([lo, hi], abs=2e-3)


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



def test_sample_command_gives_a_j_interval_carried_from_subsets_above_the_grain_limit(tmp_path, monkeypatch):
    # through the command (cli.main, as the console script runs it): a grain list with more grains than
    # MAX_J_GRAINS (lowered to 400 here: 1,000 grains) gets a J interval around its J, marked as carried
    # from subsets, with a note; the interval's coverage is measured in tests/test_coverage.py
    import json

    from fabric2seis.cli import main
    from fabric2seis.ingest.io.write import write_table

    monkeypatch.setattr(uncertainty, "MAX_J_GRAINS", 400)
    q = fabric_orientations(OLIVINE, "olivine-A", 1000, 30.0, seed=11)
    write_table(tmp_path / "big.csv", q, ["olivine"] * len(q))
    (tmp_path / "big.yaml").write_text("bootstrap: {n: 100}\n")
    assert main(["sample", str(tmp_path / "big.csv"), "--out", str(tmp_path / "out"), "--threads", "1"]) == 0
    summary = json.loads((tmp_path / "out" / "summary.json").read_text())
    low, high = summary["uncertainty"]["olivine.J"]
    j = summary["phases"]["olivine"]["J"]
    assert low < j < high and high - low < 0.5 * j
    assert summary["uncertainty"]["interval_method"]["olivine.J"] == "percentile_of_subsets"
    assert "subsets of 100 and 200 grains" in summary["uncertainty"]["olivine.note"]
