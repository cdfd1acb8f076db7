"""Bootstrap over grains: 95 % intervals for fabric and seismic numbers.

Each resample draws the grains of every phase with replacement (fractions of the phases held as
in the estimate). Resamples are weights, not recomputations: the Voigt, Reuss and geometric sums
are linear in per-grain tensors rotated once (so all resamples are one matrix product), and the
J-index of a resample is the quadratic form w^T A w over the kernel's neighbour pairs (A built a
block of rows at a time and applied to all resamples at once), by the estimate's own definition
(self-pair term kept, the pairs of a grain's copies with each other left out: ``resampled_j``);
likewise the misorientation histogram of the M-index is a weighted histogram of the pairs of the
original grains, measured once, and the M values are shifted by their bootstrap bias.
Maxima over directions (AVs max, AVp, Vp max) and the delay along Z are biased up by noise: their
intervals are basic bootstrap intervals (``seismic_intervals``), and ``random_aggregate_floor``
gives AVs and AVp of random aggregates of as many grains.
Orientations are the grains' mean orientations weighted by grain area (maps) or by the file's
weights (grain lists), so intervals describe the sampling of grains, the unit that is counted.
"""

from __future__ import annotations

import os
from collections.abc import Callable

import numpy as np

from fabric2seis import elastic, fabric, waves
from fabric2seis.orientations import to_matrices
from fabric2seis.progress import share
from fabric2seis.threads import shared_results

INTERVAL = (2.5, 97.5)
#: independent random streams (and threads) of the resample counts
COUNT_STREAMS = 4
#: direction grid of the velocity statistics of each resample (degrees)
RESAMPLE_GRID_STEP_DEG = 3.0
#: phases with fewer grains get no fabric intervals (a resample would hold too few distinct grains)
MIN_GRAINS_FOR_FABRIC = 10
#: above this many grains the J-index is not resampled whole (its cost grows as N^2: 2.5 s at
#: 17,000 grains on one thread of the benchmark machine, so about 8 s at 30,000): two random subsets
#: of a quarter and half as many are, and their spread is carried to N (:func:`j_by_subsets`)
MAX_J_GRAINS = 30_000
#: grain pairs of the M-index bootstrap per block (the blocks shared among the threads)
PAIRS_IN_MEMORY = 100_000


def resample_counts(n: int, n_resamples: int, rng: np.random.Generator) -> np.ndarray:
    """Draw bootstrap resamples of n grains, as how often each grain is drawn in each resample.

    One resample at a time (a count vector of n fits in cache), the resamples split into
    COUNT_STREAMS fixed groups, each drawn from its own stream spawned from ``rng`` and filled on
    up to ``threads.thread_count()`` threads (numpy releases the GIL while drawing and counting).
    The split depends neither on the machine nor on the threads, so the counts are the same
    everywhere for the same seed.

    Parameters
    ----------
    n : int
        Number of grains.
    n_resamples : int
        Number of resamples B.
    rng : numpy.random.Generator
        Source of the random streams.

    Returns
    -------
    numpy.ndarray, shape (B, n), float32
        Draw counts; each row sums to n.

    References
    ----------
    Efron, B. & Tibshirani, R. J. (1993). An Introduction to the Bootstrap. Chapman & Hall, New York.
    """
    out = np.empty((n_resamples, n), dtype=np.float32)      # small integers: exact
    groups = np.array_split(np.arange(n_resamples), COUNT_STREAMS)

    def fill(group: tuple[np.random.Generator, np.ndarray]) -> None:
        stream, rows = group
        for r in rows:
            out[r] = np.bincount(stream.integers(0, n, size=n), minlength=n)

    for _ in shared_results(fill, zip(rng.spawn(COUNT_STREAMS), groups)):
        pass
    return out


def interval(values: np.ndarray) -> list[float]:
    """Percentile interval (2.5 and 97.5 percentiles) of resampled values, NaNs ignored.

    Parameters
    ----------
    values : array_like, shape (B,)
        A statistic of every resample, in its own unit.

    Returns
    -------
    list of float
        Lower and upper bound, rounded to 1e-6, in the unit of ``values``.

    References
    ----------
    Efron, B. & Tibshirani, R. J. (1993). An Introduction to the Bootstrap. Chapman & Hall, New York.
    """
    lo, hi = np.nanpercentile(np.asarray(values, dtype=float), INTERVAL)
    return [round(float(lo), 6), round(float(hi), 6)]


def basic_interval(estimate: float, values: np.ndarray) -> list[float]:
    """Basic bootstrap interval [2 t - q_97.5, 2 t - q_2.5] (Efron & Tibshirani 1993, section 13.4).

    It reflects the resamples' percentiles about the estimate t, so a statistic whose resamples lie
    above the estimate (a maximum over directions of noisy velocities: the noise only raises a
    maximum) gets an interval shifted down by that bias, where the percentile interval is shifted
    up by it.

    Parameters
    ----------
    estimate : float
        The statistic of the sample itself.
    values : array_like, shape (B,)
        The statistic of every resample (NaNs ignored), in the unit of ``estimate``.

    Returns
    -------
    list of float
        Lower and upper bound, rounded to 1e-6.

    References
    ----------
    Efron, B. & Tibshirani, R. J. (1993). An Introduction to the Bootstrap. Chapman & Hall, New York.
    """
    lo, hi = np.nanpercentile(np.asarray(values, dtype=float), INTERVAL)
    return [round(float(2.0 * estimate - hi), 6), round(float(2.0 * estimate - lo), 6)]


def bias_corrected_interval(estimate: float, values: np.ndarray) -> list[float]:
    """Bias-corrected percentile interval (BC: BCa with acceleration 0, Efron & Tibshirani 1993, 14.3).

    Parameters
    ----------
    estimate : float
        The statistic of the sample itself.
    values : array_like, shape (B,)
        The statistic of every resample (non-finite values dropped), in the unit of ``estimate``.

    Returns
    -------
    list of float
        Lower and upper bound, rounded to 1e-6.

    References
    ----------
    Efron, B. & Tibshirani, R. J. (1993). An Introduction to the Bootstrap. Chapman & Hall, New York.
    """
    from scipy.stats import norm

    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    below = np.clip(np.mean(v < estimate), 0.5 / len(v), 1.0 - 0.5 / len(v))
    z0 = norm.ppf(below)
    levels = 100.0 * norm.cdf(2.0 * z0 + norm.ppf(np.array(INTERVAL) / 100.0))
    lo, hi = np.percentile(v, levels)
    return [round(float(lo), 6), round(float(hi), 6)]


#: interval of each seismic statistic, chosen by the coverage measured in tests/test_coverage.py
SEISMIC_INTERVAL_METHOD = {"avs_max_pct": "basic", "avp_pct": "basic", "vp_max_km_s": "basic",
                           "delay_s_per_100km": "basic"}


def estimates_outside(intervals: dict, estimates: dict) -> list[str]:
    """List the keys whose estimate lies outside its own 95 % interval (a sign of bias or too few grains).

    Parameters
    ----------
    intervals : dict of str to [float, float]
        Interval of each statistic.
    estimates : dict of str to float
        The statistic of the sample itself; missing, None or non-finite values are skipped.

    Returns
    -------
    list of str
        The keys outside their interval, in the order of ``estimates``.
    """
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
    """Compute AVp, maximum AVs, Vp max and the delay per 100 km along Z of every resample.

    ``crystal_tensors``: per mineral, the Kelvin stiffness, compliance and logarithm the aggregate
    used (``Aggregate.crystal_matrices``, twin variants included); the library's ambient constants
    without twins where a mineral is missing.

    Parameters
    ----------
    grain_sets : iterable of (Mineral, numpy.ndarray, numpy.ndarray)
        Per phase: its library mineral, grain mean orientations as orix quaternions (N, 4) in the
        structural frame, and grain weights (N,).
    fractions : dict of str to float
        Volume fraction of each mineral, by name (renormalised over the phases given).
    average : {"voigt", "reuss", "hill", "geometric"}
        The average the statistics are computed from.
    density_kg_m3 : float
        Density of the rock, kg m^-3.
    counts : dict of str to numpy.ndarray, each shape (B, N)
        Draw counts of each mineral's grains in every resample (:func:`resample_counts`).
    crystal_tensors : dict, optional
        Per mineral, its Kelvin ``"stiffness"`` (GPa), ``"compliance"`` (1/GPa) and ``"log"``
        (each (6, 6)) as the aggregate used them (``Aggregate.crystal_matrices``).

    Returns
    -------
    dict of str to numpy.ndarray, each shape (B,)
        ``avp_pct`` and ``avs_max_pct`` (percent), ``vp_max_km_s`` (km/s) and
        ``delay_s_per_100km`` (s per 100 km along Z), over a grid of RESAMPLE_GRID_STEP_DEG degrees.

    Raises
    ------
    KeyError
        If ``average`` is not one of the four names, or a mineral is missing from ``fractions``
        or ``counts``.

    References
    ----------
    Efron, B. & Tibshirani, R. J. (1993). An Introduction to the Bootstrap. Chapman & Hall, New York.
    """
    total = sum(fractions[m.name] for m, _, _ in grain_sets)
    stiff: np.ndarray | float = 0.0              # sums of arrays once a mineral is added
    comp: np.ndarray | float = 0.0
    logs: np.ndarray | float = 0.0
    for mineral, quat, weights in grain_sets:
        x = (crystal_tensors or {}).get(mineral.name) or elastic.crystal_kelvin_matrices(mineral.stiffness_gpa)
        f = fractions[mineral.name] / total
        wanted = {"voigt": [x["stiffness"]], "reuss": [x["compliance"]], "hill": [x["stiffness"], x["compliance"]],
                  "geometric": [x["log"]]}[average]
        means = _resampled_means(np.stack(wanted), to_matrices(quat), weights, counts[mineral.name])
        if average in ("voigt", "hill"):
            stiff = stiff + f * means[0]
        if average in ("reuss", "hill"):
            comp = comp + f * means[-1]
        if average == "geometric":
            logs = logs + f * means[0]
    if average == "voigt":
        tensors = elastic.kelvin_to_voigt(np.asarray(stiff))
    elif average == "reuss":
        tensors = elastic.kelvin_to_voigt(np.linalg.inv(comp))
    elif average == "hill":
        tensors = (elastic.kelvin_to_voigt(np.asarray(stiff)) + elastic.kelvin_to_voigt(np.linalg.inv(comp))) / 2
    else:
        tensors = elastic.kelvin_to_voigt(elastic.expm_sym(np.asarray(logs)))
    tensors = (tensors + np.swapaxes(tensors, 1, 2)) / 2
    dirs, _, _ = waves.hemisphere_grid(RESAMPLE_GRID_STEP_DEG)
    dirs = np.vstack([dirs, [[0.0, 0.0, -1.0]]])          # the last one: along Z, for the delay
    # resampled aggregates lie close to their mean: velocities by perturbation about it
    vp, vs1, vs2 = waves.speeds_near(tensors.mean(axis=0), tensors, density_kg_m3, dirs)
    avs = 200 * (vs1 - vs2) / (vs1 + vs2)
    return {"avp_pct": 200 * (vp.max(1) - vp.min(1)) / (vp.max(1) + vp.min(1)),
            "avs_max_pct": avs.max(1), "vp_max_km_s": vp.max(1),
            "delay_s_per_100km": 100.0 * (1.0 / vs2[:, -1] - 1.0 / vs1[:, -1])}


def seismic_intervals(grain_sets, fractions: dict, average: str, density_kg_m3: float,
                      counts: dict[str, np.ndarray], crystal_tensors: dict | None = None,
                      methods: dict | None = None) -> tuple[dict, dict]:
    """95 % intervals of the seismic statistics, and the statistics of the grains themselves.

    The grains' own statistics (the bootstrap's estimate t, on the resamples' direction grid) are
    computed with the resamples, as one more row of counts (all ones). ``methods`` maps a key to
    "basic", "bc" or "percentile" (default ``SEISMIC_INTERVAL_METHOD``). A basic interval of a
    statistic that cannot be negative is cut at zero.

    Parameters
    ----------
    grain_sets : iterable of (Mineral, numpy.ndarray, numpy.ndarray)
        Per phase: its library mineral, grain mean orientations as orix quaternions (N, 4) in the
        structural frame, and grain weights (N,).
    fractions : dict of str to float
        Volume fraction of each mineral, by name (renormalised over the phases given).
    average : {"voigt", "reuss", "hill", "geometric"}
        The average the statistics are computed from.
    density_kg_m3 : float
        Density of the rock, kg m^-3.
    counts : dict of str to numpy.ndarray, each shape (B, N)
        Draw counts of each mineral's grains in every resample (:func:`resample_counts`).
    crystal_tensors : dict, optional
        Per mineral, its Kelvin ``"stiffness"`` (GPa), ``"compliance"`` (1/GPa) and ``"log"``
        (each (6, 6)) as the aggregate used them (``Aggregate.crystal_matrices``).
    methods : dict of str to str, optional
        Interval method by statistic, overriding ``SEISMIC_INTERVAL_METHOD``.

    Returns
    -------
    intervals : dict of str to [float, float]
        95 % interval of ``avp_pct``, ``avs_max_pct`` (percent), ``vp_max_km_s`` (km/s) and
        ``delay_s_per_100km`` (s per 100 km).
    estimates : dict of str to float
        The same statistics of the grains themselves.

    References
    ----------
    Efron, B. & Tibshirani, R. J. (1993). An Introduction to the Bootstrap. Chapman & Hall, New York.
    """
    with_sample = {name: np.vstack([np.ones((1, c.shape[1]), dtype=np.float32), c]) for name, c in counts.items()}
    values = seismic_bootstrap(grain_sets, fractions, average, density_kg_m3, with_sample, crystal_tensors)
    return intervals_from_resamples(values, methods), {key: float(v[0]) for key, v in values.items()}


def intervals_from_resamples(values: dict[str, np.ndarray], methods: dict | None = None) -> dict:
    """Build intervals from statistics whose first row is the sample's own and the rest the resamples'.

    Parameters
    ----------
    values : dict of str to numpy.ndarray, each shape (B + 1,)
        Each statistic: the sample's value first, then every resample's.
    methods : dict of str to str, optional
        ``"basic"``, ``"bc"`` or ``"percentile"`` by statistic, overriding
        ``SEISMIC_INTERVAL_METHOD``; statistics named in neither get a percentile interval.

    Returns
    -------
    dict of str to [float, float]
        Interval of each statistic, in its unit (basic intervals cut at zero).
    """
    methods = {**SEISMIC_INTERVAL_METHOD, **(methods or {})}
    out = {}
    for key, v in values.items():
        method = methods.get(key, "percentile")
        if method == "basic":
            lo, hi = basic_interval(v[0], v[1:])
            out[key] = [max(lo, 0.0), max(hi, 0.0)]
        elif method == "bc":
            out[key] = bias_corrected_interval(v[0], v[1:])
        else:
            out[key] = interval(v[1:])
    return out


def random_aggregate_floor(grain_sets, fractions: dict, average: str, density_kg_m3: float,
                           crystal_tensors: dict | None = None, n_sets: int = 100,
                           max_grains: int = 1000, seed: int = 20010917) -> dict:
    """AVp and maximum AVs of aggregates of random orientations with the sample's grain counts.

    Each phase gets its effective grain count N_eff = (sum w)^2 / sum w^2 of equal grains. The
    anisotropy of a random aggregate comes from the mean of N_eff random tensors about the isotropic
    one, so it falls as 1 / sqrt(N_eff) (central limit theorem; AVs and AVp are first order in the
    small anisotropic part): when a phase has more than ``max_grains``, all phases are simulated
    with their counts divided by one factor k and the anisotropies multiplied by 1 / sqrt(k).
    ``n_sets`` aggregates (fixed seed) give the mean (the floor) and the 2.5-97.5 percentile range.
    Cached in memory and in ``$XDG_CACHE_HOME/fabric2seis``.

    Parameters
    ----------
    grain_sets : iterable of (Mineral, numpy.ndarray, numpy.ndarray)
        Per phase: its library mineral, grain mean orientations as orix quaternions (N, 4) in the
        structural frame, and grain weights (N,).
    fractions : dict of str to float
        Volume fraction of each mineral, by name (renormalised over the phases given).
    average : {"voigt", "reuss", "hill", "geometric"}
        The average the statistics are computed from.
    density_kg_m3 : float
        Density of the rock, kg m^-3.
    crystal_tensors : dict, optional
        Per mineral, its Kelvin ``"stiffness"`` (GPa), ``"compliance"`` (1/GPa) and ``"log"``
        (each (6, 6)) as the aggregate used them (``Aggregate.crystal_matrices``).
    n_sets : int
        Number of random aggregates.
    max_grains : int
        Largest grain count simulated for one phase.
    seed : int
        Seed of the random orientations.

    Returns
    -------
    dict
        ``avs_max_pct`` and ``avp_pct`` (mean, percent) with their ``_95`` ranges, and
        ``random_sets``, ``simulated_grains`` (by mineral) and ``scaled_by`` (1 / sqrt(k)).
    """
    import hashlib
    import json
    from pathlib import Path

    n_eff = {m.name: float(np.sum(w) ** 2 / np.sum(np.asarray(w, dtype=float) ** 2)) for m, _, w in grain_sets}
    k = max(1.0, max(n_eff.values()) / max_grains)
    n_sim = {name: max(2, int(round(n / k))) for name, n in n_eff.items()}
    digest = hashlib.sha256()
    for mineral, _, _ in sorted(grain_sets, key=lambda s: s[0].name):
        x = (crystal_tensors or {}).get(mineral.name)
        x = {"stiffness": mineral.stiffness_gpa} if x is None else x if isinstance(x, dict) else {"stiffness": x}
        digest.update(mineral.name.encode() + b"".join(np.asarray(x[k], dtype=float).round(8).tobytes()
                                                        for k in sorted(x))
                      + f"{fractions[mineral.name]:.8f}-{n_sim[mineral.name]}".encode())
    digest.update(f"aggregate-floor-1-{average}-{density_kg_m3:.6f}-{k:.8f}-{n_sets}-{seed}-"
                  f"{RESAMPLE_GRID_STEP_DEG}".encode())
    key = digest.hexdigest()[:24]
    if key in _AGGREGATE_FLOORS:
        return _AGGREGATE_FLOORS[key]
    folder = Path(os.environ.get("XDG_CACHE_HOME", Path.home() / ".cache")) / "fabric2seis"
    path = folder / f"random_aggregate_{key}.json"
    try:
        _AGGREGATE_FLOORS[key] = json.loads(path.read_text())
        return _AGGREGATE_FLOORS[key]
    except (OSError, ValueError):
        pass
    rng = np.random.default_rng(seed)
    sets, counts = [], {}
    for mineral, _, _ in grain_sets:
        n = n_sim[mineral.name]
        sets.append((mineral, fabric.random_unit_quaternions(n * n_sets, rng), np.ones(n * n_sets)))
        block = np.zeros((n_sets, n * n_sets), dtype=np.float32)      # set b holds grains b n .. (b+1) n - 1
        block[np.repeat(np.arange(n_sets), n), np.arange(n * n_sets)] = 1.0
        counts[mineral.name] = block
    values = seismic_bootstrap(sets, fractions, average, density_kg_m3, counts, crystal_tensors)
    floor = {"random_sets": int(n_sets), "simulated_grains": n_sim, "scaled_by": round(1.0 / np.sqrt(k), 6)}
    for name in ("avs_max_pct", "avp_pct"):
        v = values[name] / np.sqrt(k)
        floor[name] = round(float(v.mean()), 6)
        floor[f"{name}_95"] = [round(float(x), 6) for x in np.percentile(v, INTERVAL)]
    _AGGREGATE_FLOORS[key] = floor
    try:
        folder.mkdir(parents=True, exist_ok=True)
        tmp = path.with_suffix(f".{os.getpid()}.tmp")
        tmp.write_text(json.dumps(floor))
        os.replace(tmp, path)
    except OSError:
        pass
    return floor


_AGGREGATE_FLOORS: dict = {}


def fabric_bootstrap(mineral, quat: np.ndarray, weights: np.ndarray, counts: np.ndarray,
                     halfwidth_deg: float, rng: np.random.Generator,
                     done: Callable[[float], None] | None = None) -> dict[str, np.ndarray]:
    """Compute J (quadratic form over the pair matrix) and M (weighted pairs of distinct grains) of every resample.

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        Library entry of the phase (its crystal symmetry).
    quat : numpy.ndarray, shape (N, 4)
        Grain mean orientations, orix quaternions.
    weights : numpy.ndarray, shape (N,)
        Grain weights.
    counts : numpy.ndarray, shape (B, N)
        Draw counts of every resample (:func:`resample_counts`).
    halfwidth_deg : float
        Halfwidth of the kernel of the ODF behind J, degrees.
    rng : numpy.random.Generator
        Picks the grain pairs of the M-index when there are too many to take all.
    done : callable, optional
        Told the share of the work finished (0 to 1) as blocks of grains (J) and of grain pairs
        (M) are finished, for a progress bar; the numbers do not depend on it.

    Returns
    -------
    dict
        ``"J"``: J-index of every resample, shape (B,); above MAX_J_GRAINS grains the values of
        :func:`j_by_subsets`, whose percentiles are the interval;
        ``"M"``: bias-shifted M-index of every resample, shape (B,), NaN where a resample has no pair.

    References
    ----------
    Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
    Skemer, P., Katayama, I., Jiang, Z. & Karato, S. (2005). Tectonophysics 411, 157-167.
    Efron, B. & Tibshirani, R. J. (1993). An Introduction to the Bootstrap. Chapman & Hall, New York.
    """
    tell = done or (lambda _fraction: None)
    j_part = 0.5                                                 # shares of the bar: J, then M
    if len(quat) <= MAX_J_GRAINS:
        v = (counts * weights[None, :]).T                            # (N, B), unnormalised
        forms, diagonal = fabric.j_quadratic_forms(quat, v, mineral.symmetry, halfwidth_deg,
                                                   done=lambda f: tell(j_part * f))
        j = resampled_j(forms, diagonal, counts, weights)
    else:
        j = j_by_subsets(mineral, quat, len(counts), halfwidth_deg, rng, lambda f: tell(j_part * f))
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
    hist = _resampled_histograms(np.ascontiguousarray(np.asarray(counts).T), i, k, bins, len(reference),
                                 lambda f: tell(j_part + (1.0 - j_part) * f))
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


#: subsets of j_by_subsets, as shares of MAX_J_GRAINS
J_SUBSET_SHARES = (0.25, 0.5)


def j_subset_sizes() -> list[int]:
    """Grains of the two subsets of :func:`j_by_subsets` (``J_SUBSET_SHARES`` of ``MAX_J_GRAINS``)."""
    return [max(int(share * MAX_J_GRAINS), 2) for share in J_SUBSET_SHARES]


def j_by_subsets(mineral, quat: np.ndarray, n_resamples: int, halfwidth_deg: float, rng: np.random.Generator,
                 done: Callable[[float], None] | None = None) -> np.ndarray:
    """Resampled J-index values of many grains, from the bootstraps of two random subsets.

    J is a V-statistic of the grains (its pair terms are a U-statistic), whose variance over
    samples of m grains is a / m + b / m^2 (Hoeffding 1948: the first term from each grain's own
    share, the second from the pairs; b dominates a fabric close to random, where a vanishes).
    The bootstrap of the whole would cost N^2; so two random subsets of m1 and m2 grains
    (``J_SUBSET_SHARES`` of ``MAX_J_GRAINS``, drawn without replacement) are resampled as a
    sample is (``resampled_j``), their variances v1, v2 give a and b (both kept >= 0), and the
    deviations of the larger subset's resamples from its own J, scaled by
    sqrt(var_N / v2) with var_N = a / N + b / N^2, are added to the J of all N grains. Their
    percentiles are the interval, as for fewer grains: the shape of the spread comes from m2
    grains, its width from the two sizes. tests/test_coverage.py measures how often it holds.

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        Library entry of the phase.
    quat : numpy.ndarray, shape (N, 4)
        Grain mean orientations (equal weights, as the bootstrap of fewer grains).
    n_resamples : int
        Resamples B of each subset, and values returned.
    halfwidth_deg : float
        Kernel halfwidth, degrees.
    rng : numpy.random.Generator
        Draws the subsets and their resamples.
    done : callable, optional
        Told the share finished (0 to 1).

    Returns
    -------
    numpy.ndarray, shape (B,)
        J-index values whose percentiles give the interval of the J of all N grains.

    References
    ----------
    Hoeffding, W. (1948). A class of statistics with asymptotically normal distribution. Ann. Math.
    Statist. 19, 293-325.
    Efron, B. & Tibshirani, R. J. (1993). An Introduction to the Bootstrap. Chapman & Hall, New York.
    """
    n = len(quat)
    tell = done or (lambda _fraction: None)
    sizes = j_subset_sizes()
    spreads = []
    for k, m in enumerate(sizes):
        sub = quat[rng.choice(n, m, replace=False)]
        counts = resample_counts(m, n_resamples, rng)
        v = np.concatenate([np.ones((m, 1)), counts.T.astype(float)], axis=1)     # the subset itself first
        forms, diagonal = fabric.j_quadratic_forms(sub, v, mineral.symmetry, halfwidth_deg,
                                                   done=share(tell, k / len(sizes), (k + 1) / len(sizes)))
        every = resampled_j(forms, diagonal, np.concatenate([np.ones((1, m)), counts]), np.ones(m))
        spreads.append((every[1:] - every[0], float(np.var(every[1:], ddof=1))))
    (m1, m2), ((_, v1), (deviations, v2)) = sizes, spreads
    a = max((m1 ** 2 * v1 - m2 ** 2 * v2) / (m1 - m2), 0.0)
    b = max(m2 ** 2 * v2 - a * m2, 0.0)
    var_n = a / n + b / n ** 2
    j_all = fabric.j_index(quat, np.ones(n), mineral.symmetry, halfwidth_deg)
    return j_all + deviations * (np.sqrt(var_n / v2) if v2 > 0 else 0.0)


def resampled_j(forms: np.ndarray, diagonal: np.ndarray, counts: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """J of every resample by the estimate's own definition: self-pair term plus pairs of distinct grains.

    The estimate is J = s J_1 + (1 - s) U with s = sum w_i^2 (weights summing to 1), J_1 = A_ii the
    self-pair term and U the weighted mean of A_ij over pairs of distinct grains. A resample draws
    grain i c_i times; its N draws keep their own self-pair terms (s* = sum c_i w_i^2 / W^2, W =
    sum c_i w_i; s* = 1/N as in the estimate for equal weights), and U* is the mean over pairs of
    distinct grains, c_i c_j w_i w_j A_ij. The c_i (c_i - 1) pairs of a grain's copies with each
    other, at zero misorientation, are left out: a sample of N grains has no such pairs, and they
    would raise J by about J_1 / N.

    ``forms`` are v^T A v with v = c w (``fabric.j_quadratic_forms``), ``diagonal`` the A_ii.

    Parameters
    ----------
    forms : numpy.ndarray, shape (B,)
        v^T A v of every resample.
    diagonal : numpy.ndarray, shape (N,)
        Self-pair terms A_ii.
    counts : numpy.ndarray, shape (B, N)
        Draw counts of every resample.
    weights : numpy.ndarray, shape (N,)
        Grain weights.

    Returns
    -------
    numpy.ndarray, shape (B,)
        J-index of every resample, dimensionless.

    References
    ----------
    Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
    """
    c = np.asarray(counts, dtype=float)
    w2 = np.asarray(weights, dtype=float) ** 2
    total = c @ np.asarray(weights, dtype=float)                            # W per resample
    squares = (c ** 2) @ (w2 * diagonal)                                    # the c_i^2 diagonal terms
    distinct_weight = total ** 2 - (c ** 2) @ w2
    own = c @ (w2 * diagonal)
    u = (forms - squares) / distinct_weight
    return own / total ** 2 + (1.0 - (c @ w2) / total ** 2) * u


def _resampled_histograms(counts_by_grain: np.ndarray, i: np.ndarray, k: np.ndarray, bins: np.ndarray,
                          n_bins: int, done: Callable[[float], None]) -> np.ndarray:
    """hist[b, bin] = sum of c_i c_k over the pairs (i, k) in the bin, for every resample b.

    One compiled pass over the pairs (``fabric.pair_kernel.add_pair_counts``), in blocks of
    PAIRS_IN_MEMORY pairs shared among the run's threads, each block into its own histogram, added
    in the blocks' order. Counts and their products are small whole numbers, so every sum is exact:
    neither the blocks nor the threads change a bit.
    """
    from fabric2seis.fabric.pair_kernel import add_pair_counts  # numba: compiled on first use

    counts_by_grain = np.ascontiguousarray(counts_by_grain, dtype=float)
    i, k = np.ascontiguousarray(i, dtype=np.int64), np.ascontiguousarray(k, dtype=np.int64)
    bins = np.ascontiguousarray(bins, dtype=np.int64)
    hist = np.zeros((n_bins, counts_by_grain.shape[1]))
    block = PAIRS_IN_MEMORY

    def block_sums(start: int) -> np.ndarray:
        part = np.zeros_like(hist)
        sl = slice(start, start + block)
        add_pair_counts(counts_by_grain, i[sl], k[sl], bins[sl], part)
        return part

    starts = range(0, len(i), block)
    for start, part in zip(starts, shared_results(block_sums, starts)):
        hist += part
        done(min(start + block, len(i)) / len(i))
    return np.ascontiguousarray(hist.T)
