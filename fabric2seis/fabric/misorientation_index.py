"""The M-index: uncorrelated misorientation angles against those of a random fabric.

M-index (Skemer et al. 2005): half the summed absolute difference between the histogram of
uncorrelated misorientation angles (random pairs of distinct grains) and that of a random fabric
of the same symmetry, in 1-degree bins: 0 for a random fabric, 1 for a single crystal. The random
histogram of a point group is simulated once with a fixed seed (``RANDOM_DISTRIBUTION_PAIRS``
pairs of uniformly distributed orientations) and cached (``fabric.cache``); it follows Mackenzie's
(1958) distribution of random misorientations.

References
----------
Skemer, P., Katayama, I., Jiang, Z. & Karato, S. (2005). The misorientation index: development of
a new method for calculating the strength of lattice-preferred orientation. Tectonophysics 411,
157-167.
Mackenzie, J. K. (1958). Second paper on statistics associated with the random disorientation of
cubes. Biometrika 45, 229-240 (bibliographic details from memory).
"""

from __future__ import annotations

import functools
import hashlib

import numpy as np

from fabric2seis.fabric.cache import cached_result
from fabric2seis.fabric.checks import check_quaternions
from fabric2seis.orientations import misorientation_angles, proper_symmetry_quaternions

#: width of the histogram bins (degrees)
M_INDEX_BIN_DEG = 1.0
#: pairs of grains drawn at random when a set has more pairs than this
M_INDEX_PAIRS = 1_000_000
#: pairs of random orientations in the reference histogram, and their seed
RANDOM_DISTRIBUTION_PAIRS = 2_000_000
RANDOM_DISTRIBUTION_SEED = 20050501


def random_unit_quaternions(n: int, rng: np.random.Generator) -> np.ndarray:
    """``n`` uniformly distributed unit quaternions (N, 4): normalised Gaussian 4-vectors (common practice).

    The generator of every random set of the fabric floors (and of the aggregate floors of
    ``fabric2seis.uncertainty``); the sign of each quaternion is left as drawn.
    """
    q = rng.normal(size=(n, 4))
    return q / np.linalg.norm(q, axis=1, keepdims=True)


def misorientation_histogram(angles_rad: np.ndarray) -> np.ndarray:
    """Counts (180 / M_INDEX_BIN_DEG,) of misorientation angles (rad) in bins from 0 to 180 degrees."""
    bins = np.arange(0.0, 180.0 + M_INDEX_BIN_DEG / 2, M_INDEX_BIN_DEG)
    return np.histogram(np.degrees(angles_rad), bins=bins)[0].astype(float)


@functools.lru_cache(maxsize=32)
def random_misorientation_histogram(symmetry_key: bytes, n_ops: int) -> np.ndarray:
    """Histogram of misorientation angles of random pairs, simulated (fixed seed, no disk cache).

    Parameters
    ----------
    symmetry_key : bytes
        The proper rotations of the point group as float64 quaternions (n_ops, 4), ``tobytes()``.
    n_ops : int
        Their number.

    Returns
    -------
    numpy.ndarray
        Fractions (180 / M_INDEX_BIN_DEG,) per bin from 0 to 180 degrees, summing to 1.
    """
    sym = np.frombuffer(symmetry_key).reshape(n_ops, 4)
    rng = np.random.default_rng(RANDOM_DISTRIBUTION_SEED)
    counts = np.zeros(int(round(180 / M_INDEX_BIN_DEG)))
    left = RANDOM_DISTRIBUTION_PAIRS
    while left > 0:
        n = min(left, 500_000)
        a = random_unit_quaternions(n, rng)
        b = random_unit_quaternions(n, rng)
        counts += misorientation_histogram(misorientation_angles(a, b, sym))
        left -= n
    return counts / counts.sum()


def random_distribution(symmetry) -> np.ndarray:
    """The random misorientation-angle histogram of a point group, cached in memory and on disk.

    Parameters
    ----------
    symmetry : orix.quaternion.Symmetry
        Point group of the crystal.

    Returns
    -------
    numpy.ndarray
        Fractions (180 / M_INDEX_BIN_DEG,) per bin from 0 to 180 degrees, summing to 1. The array
        is shared by every caller: do not change it in place.

    References
    ----------
    Mackenzie, J. K. (1958). Biometrika 45, 229-240.
    """
    sym = np.ascontiguousarray(proper_symmetry_quaternions(symmetry))
    key = hashlib.sha256(sym.round(10).tobytes() + f"{RANDOM_DISTRIBUTION_PAIRS}-{RANDOM_DISTRIBUTION_SEED}-"
                         f"{M_INDEX_BIN_DEG}".encode()).hexdigest()[:20]
    bins = int(round(180 / M_INDEX_BIN_DEG))
    return cached_result(f"random_misorientation_{key}.npy",
                         lambda: random_misorientation_histogram(sym.tobytes(), len(sym)),
                         accept=lambda cached: cached.shape == (bins,))


def uncorrelated_misorientations(quat: np.ndarray, symmetry, n_pairs: int = M_INDEX_PAIRS,
                                 seed: int = 0) -> np.ndarray:
    """Misorientation angles of random pairs of distinct grains (all pairs if there are fewer).

    Parameters
    ----------
    quat : numpy.ndarray
        Unit quaternions (N, 4), one per grain, N >= 2.
    symmetry : orix.quaternion.Symmetry
        Point group of the crystal.
    n_pairs : int
        Pairs drawn when N (N - 1) / 2 exceeds it.
    seed : int
        Seed of the drawing.

    Returns
    -------
    numpy.ndarray
        Angles (P,), rad, P = min(n_pairs, N (N - 1) / 2).
    """
    check_quaternions(quat, at_least=2)
    n = len(quat)
    sym = proper_symmetry_quaternions(symmetry)
    if n * (n - 1) // 2 <= n_pairs:
        i, j = np.triu_indices(n, k=1)
    else:
        rng = np.random.default_rng(seed)
        i = rng.integers(0, n, n_pairs)
        j = (i + rng.integers(1, n, n_pairs)) % n        # j != i
    return misorientation_angles(quat[i], quat[j], sym)


def m_index(quat: np.ndarray, symmetry, n_pairs: int = M_INDEX_PAIRS, seed: int = 0) -> float:
    """M-index from uncorrelated misorientation angles, one orientation per grain.

    Parameters
    ----------
    quat : numpy.ndarray
        Unit quaternions (N, 4), one per grain, N >= 2.
    symmetry : orix.quaternion.Symmetry
        Point group of the crystal.
    n_pairs : int
        Pairs of grains drawn at random when there are more pairs than this.
    seed : int
        Seed of the drawing.

    Returns
    -------
    float
        M, dimensionless, between 0 (random) and 1 (a single crystal).

    References
    ----------
    Skemer, P., Katayama, I., Jiang, Z. & Karato, S. (2005). Tectonophysics 411, 157-167.
    """
    measured = misorientation_histogram(uncorrelated_misorientations(quat, symmetry, n_pairs, seed))
    measured /= measured.sum()
    return float(0.5 * np.abs(measured - random_distribution(symmetry)).sum())


def m_index_bin_variance(n: int) -> float:
    """Relative sampling variance of a bin of the M-index histogram of n random grains.

    The indicator of a misorientation bin is a degenerate pair kernel for random orientations
    (the misorientation of a fixed crystal with a random one is random), so a bin fraction from
    all P = n(n-1)/2 pairs varies like one from P independent pairs; pairs drawn at random
    (``M_INDEX_PAIRS`` of them) add their own 1/P_drawn, and the reference histogram of
    ``RANDOM_DISTRIBUTION_PAIRS`` pairs its own.
    """
    pairs = n * (n - 1) / 2
    own = 1.0 / pairs if pairs <= M_INDEX_PAIRS else 1.0 / M_INDEX_PAIRS + 1.0 / pairs
    return own + 1.0 / RANDOM_DISTRIBUTION_PAIRS
