"""Bootstrap over grains: 95 % intervals for fabric and seismic numbers.

Each resample draws the grains of every phase with replacement (fractions of the phases held as
in the estimate). Resamples are weights, not recomputations: the Voigt, Reuss and geometric sums
are linear in per-grain tensors rotated once (so all resamples are one matrix product), and the
J-index of a resample is the quadratic form w^T A w over the kernel's neighbour pairs (A built a
block of rows at a time and applied to all resamples at once), without the pairs of a grain's
copies with each other, which would bias it up by about J_1/N; likewise the misorientation histogram of the M-index is a weighted histogram of the pairs of the
original grains, measured once, and the M values are shifted by their bootstrap bias.
Orientations are the grains' mean orientations weighted by grain area (maps) or by the file's
weights (grain lists), so intervals describe the sampling of grains, the unit that is counted.
"""

from __future__ import annotations

import os

import numpy as np

from fabric2seis import elastic, fabric, waves
from fabric2seis.orientations import to_matrices

INTERVAL = (2.5, 97.5)
#: independent random streams (and threads) of the resample counts
COUNT_STREAMS = 4
#: direction grid of the velocity statistics of each resample (degrees)
RESAMPLE_GRID_STEP_DEG = 3.0
#: phases with fewer grains get no fabric intervals (a resample would hold too few distinct grains)
MIN_GRAINS_FOR_FABRIC = 10
#: above this many grains the bootstrap leaves out the J-index interval (its cost grows as N^2:
#: about a minute at 30,000 grains)
MAX_J_GRAINS = 30_000


def resample_counts(n: int, n_resamples: int, rng: np.random.Generator) -> np.ndarray:
    """How often each of n grains is drawn in each resample (n_resamples, n), as float32.

    One resample at a time (a count vector of n fits in cache), the resamples split into
    COUNT_STREAMS fixed groups, each drawn from its own stream spawned from ``rng`` and filled by
    a thread (numpy releases the GIL while drawing and counting). The split does not depend on
    the machine, so the counts are the same everywhere for the same seed.
    """
    from concurrent.futures import ThreadPoolExecutor

    out = np.empty((n_resamples, n), dtype=np.float32)      # small integers: exact
    groups = np.array_split(np.arange(n_resamples), COUNT_STREAMS)

    def fill(stream, rows):
        for r in rows:
            out[r] = np.bincount(stream.integers(0, n, size=n), minlength=n)

    with ThreadPoolExecutor(max_workers=min(COUNT_STREAMS, os.cpu_count() or 1)) as pool:
        list(pool.map(fill, rng.spawn(COUNT_STREAMS), groups))
    return out


def interval(values: np.ndarray) -> list[float]:
    lo, hi = np.nanpercentile(np.asarray(values, dtype=float), INTERVAL)
    return [round(float(lo), 6), round(float(hi), 6)]


def estimates_outside(intervals: dict, estimates: dict) -> list[str]:
    """Keys whose estimate lies outside its own 95 % interval (a sign of bias or too few grains)."""
    out = []
    for key, value in estimates.items():
        bounds = intervals.get(key)
        if bounds is not None and value is not None and np.isfinite(value) and not bounds[0] <= value <= bounds[1]:
            out.append(key)
    return out


def _resampled_means(x_kelvin: np.ndarray, g: np.ndarray, weights: np.ndarray, counts: np.ndarray) -> np.ndarray:
    """Weighted means (B, 6, 6) of the rotated Kelvin matrix for every resample: one product.

    ``x_kelvin`` may be a stack (T, 6, 6) of single-crystal matrices; then the result is
    (T, B, 6, 6). Mean_b = sum_i c_bi w_i X_i / sum_i c_bi w_i, so the weights multiply the
    per-grain matrices once and the counts enter one matrix product.
    """
    stack = np.asarray(x_kelvin)
    single = stack.ndim == 2
    stack = stack[None] if single else stack
    upper = np.triu_indices(6)                         # the matrices are symmetric: 21 entries
    w = np.asarray(weights, dtype=float)
    rotated = elastic.rotated_kelvin_upper(stack, g)                                # (N, 21 T)
    centre = (w @ rotated) / w.sum()
    # single precision for the one big product, on deviations from the weighted mean: its
    # rounding then scales with the (small) deviations, about 1e-9 of the result
    # (the weights ride along as the last column: their sums only divide the deviations' sums)
    columns = np.empty((len(w), rotated.shape[1] + 1), dtype=np.float32)
    columns[:, :-1] = (rotated - centre) * w[:, None]
    columns[:, -1] = w
    sums = (np.asarray(counts, dtype=np.float32) @ columns).astype(float)        # (B, 21 T + 1)
    part = centre + sums[:, :-1] / sums[:, -1:]
    part = part.reshape(len(counts), len(stack), 21)
    means = np.empty((len(stack), len(counts), 6, 6))
    means[:, :, upper[0], upper[1]] = part.swapaxes(0, 1)
    means[:, :, upper[1], upper[0]] = part.swapaxes(0, 1)
    return means[0] if single else means


def seismic_bootstrap(grain_sets, fractions: dict, average: str, density_kg_m3: float,
                      counts: dict[str, np.ndarray], crystal_tensors: dict | None = None) -> dict[str, np.ndarray]:
    """AVp, maximum AVs, Vp max and the delay per 100 km along Z of every resample."""
    total = sum(fractions[m.name] for m, _, _ in grain_sets)
    stiff = comp = logs = 0.0
    for mineral, quat, weights in grain_sets:
        c = (crystal_tensors or {}).get(mineral.name, mineral.stiffness_gpa)
        ck = elastic.voigt_to_kelvin(c)
        f = fractions[mineral.name] / total
        wanted = {"voigt": [ck], "reuss": [np.linalg.inv(ck)], "hill": [ck, np.linalg.inv(ck)],
                  "geometric": [elastic.logm_spd(ck)]}[average]
        means = _resampled_means(np.stack(wanted), to_matrices(quat), weights, counts[mineral.name])
        if average in ("voigt", "hill"):
            stiff = stiff + f * means[0]
        if average in ("reuss", "hill"):
            comp = comp + f * means[-1]
        if average == "geometric":
            logs = logs + f * means[0]
    if average == "voigt":
        tensors = elastic.kelvin_to_voigt(stiff)
    elif average == "reuss":
        tensors = elastic.kelvin_to_voigt(np.linalg.inv(comp))
    elif average == "hill":
        tensors = (elastic.kelvin_to_voigt(stiff) + elastic.kelvin_to_voigt(np.linalg.inv(comp))) / 2
    else:
        tensors = elastic.kelvin_to_voigt(elastic.expm_sym(logs))
    tensors = (tensors + np.swapaxes(tensors, 1, 2)) / 2
    dirs, _, _ = waves.hemisphere_grid(RESAMPLE_GRID_STEP_DEG)
    dirs = np.vstack([dirs, [[0.0, 0.0, -1.0]]])          # the last one: along Z, for the delay
    # resampled aggregates lie close to their mean: velocities by perturbation about it
    vp, vs1, vs2 = waves.speeds_near(tensors.mean(axis=0), tensors, density_kg_m3, dirs)
    avs = 200 * (vs1 - vs2) / (vs1 + vs2)
    return {"avp_pct": 200 * (vp.max(1) - vp.min(1)) / (vp.max(1) + vp.min(1)),
            "avs_max_pct": avs.max(1), "vp_max_km_s": vp.max(1),
            "delay_s_per_100km": 100.0 * (1.0 / vs2[:, -1] - 1.0 / vs1[:, -1])}


def fabric_bootstrap(mineral, quat: np.ndarray, weights: np.ndarray, counts: np.ndarray,
                     halfwidth_deg: float, rng: np.random.Generator) -> dict[str, np.ndarray | None]:
    """J (quadratic form over the pair matrix) and M (weighted pairs of distinct grains) of every resample."""
    j = None
    if len(quat) <= MAX_J_GRAINS:
        v = (counts * weights[None, :]).T                            # (N, B), unnormalised
        forms, diagonal = fabric.j_quadratic_forms(quat, v, mineral.symmetry, halfwidth_deg)
        # a grain drawn c times forms c (c - 1) pairs with its own copies: pairs at zero
        # misorientation that the sample never had, which raise J by about J_1 / N (J_1 the J of
        # one grain). They are left out of each resample's sum, and out of its normalisation.
        copies = (counts * (counts - 1.0) * (weights ** 2)[None, :]).T
        j = (forms - (copies * diagonal[:, None]).sum(axis=0)) / (v.sum(axis=0) ** 2 - copies.sum(axis=0))
    # M: the uncorrelated pairs of the original grains are found and measured once; a resample
    # weights pair (i, j) by how often both grains were drawn, c_i c_j (pairs of distinct grains)
    reference = fabric.random_distribution(mineral.symmetry)
    n = len(quat)
    if n * (n - 1) // 2 <= fabric.M_INDEX_PAIRS:
        i, k = np.triu_indices(n, k=1)
    else:
        i = rng.integers(0, n, fabric.M_INDEX_PAIRS)
        k = (i + rng.integers(1, n, fabric.M_INDEX_PAIRS)) % n
    angles = fabric.misorientation_angles(quat[i], quat[k], fabric.proper_symmetry_quaternions(mineral.symmetry))
    bins = np.minimum((np.degrees(angles) / fabric.M_INDEX_BIN_DEG).astype(int), len(reference) - 1)
    hist = np.zeros((len(counts), len(reference)))
    for start in range(0, len(i), 100_000):
        sl = slice(start, start + 100_000)
        weight = counts[:, i[sl]] * counts[:, k[sl]]                  # (B, pairs)
        one_hot = _one_hot(bins[sl], len(reference))
        hist += (one_hot.T @ weight.T).T
    total = hist.sum(axis=1, keepdims=True)
    m = np.full(len(counts), np.nan)          # a resample of one distinct grain has no pairs
    ok = total[:, 0] > 0
    m[ok] = 0.5 * np.abs(hist[ok] / total[ok] - reference[None, :]).sum(axis=1)
    # A resample holds about 63 % distinct grains, so its histogram is noisier and its M higher
    # (M of a random fabric is a noise floor above 0). The resampled values are shifted by the
    # bootstrap estimate of that bias, mean(M*) - M (Efron & Tibshirani 1993, section 10.2), M
    # here from the same pairs with every grain once.
    own = np.bincount(bins, minlength=len(reference)).astype(float)
    m_sample = 0.5 * np.abs(own / own.sum() - reference).sum()
    if np.any(ok):
        m = np.maximum(m - (np.nanmean(m) - m_sample), 0.0)
    return {"J": j, "M": m}


def _one_hot(index: np.ndarray, size: int):
    from scipy.sparse import csr_matrix

    return csr_matrix((np.ones(len(index)), (np.arange(len(index)), index)), shape=(len(index), size))
