"""The kernel pairs of a block of grains in one compiled pass (numba), for the J-index bootstrap.

``texture_index.j_quadratic_forms`` needs, for every pair (i, j) of a block of rows, the mean over
the crystal's proper symmetry operations of Phi(|q_i . (s q_j)|) (``kernel.phi_by_cos_half``, zero
outside Phi's support). In numpy that is one matrix product per operation, then a selection of the
pairs within the support and a lookup, each a pass over the block with its temporaries; in a strong
fabric almost every pair is within the support and the lookups dominate the bootstrap (7 s of
17,000 grains). Here the same arithmetic runs in one loop per pair, compiled by numba (a dependency
of orix) on first use and cached on disk, releasing the GIL so that threads share the blocks.
The numbers agree with the numpy form to rounding (``tests/fabric/test_pair_kernel.py``).
"""

from __future__ import annotations

import numba
import numpy as np


@numba.njit(nogil=True, cache=True)
def fill_pair_block(block: np.ndarray, moved: np.ndarray, start: int, edge: float,
                    inverse_step: float, values: np.ndarray, out: np.ndarray) -> None:
    """out[i, j - start] = mean over k of Phi(|block_i . moved[k, :, j]|), Phi 0 below ``edge``.

    Parameters
    ----------
    block : numpy.ndarray
        Unit quaternions (R, 4) of the block's rows.
    moved : numpy.ndarray
        (S, 4, N): the grains' quaternions moved by each of the S proper symmetry operations.
    start : int
        First column of N in the block.
    edge, inverse_step, values
        Phi's table (``kernel.self_convolution_by_cos_half``): the edge of its support in
        cos(angle/2), where the table starts, 1 / step and the values.
    out : numpy.ndarray
        (R, N - start), written.
    """
    rows = block.shape[0]
    ops = moved.shape[0]
    width = moved.shape[2] - start
    last = values.shape[0] - 2
    cosines = np.empty(width)
    for i in range(rows):
        row = out[i]
        row[:] = 0.0
        a0, a1, a2, a3 = block[i, 0], block[i, 1], block[i, 2], block[i, 3]
        for k in range(ops):         # in the order of the operations, as numpy's passes add them
            m0, m1, m2, m3 = moved[k, 0, start:], moved[k, 1, start:], moved[k, 2, start:], moved[k, 3, start:]
            # two passes: the cosines without a branch (vectorised by the compiler), then the
            # lookups of the pairs within the support; the same arithmetic as one pass
            for j in range(width):
                cosines[j] = abs(a0 * m0[j] + a1 * m1[j] + a2 * m2[j] + a3 * m3[j])
            for j in range(width):
                c = cosines[j]
                if c >= edge:
                    x = (c - edge) * inverse_step
                    m = min(max(int(x), 0), last)
                    x -= m
                    row[j] += values[m] + x * (values[m + 1] - values[m])
        for j in range(width):
            row[j] /= ops


@numba.njit(nogil=True, cache=True)
def add_pair_counts(counts_by_grain: np.ndarray, i: np.ndarray, k: np.ndarray, bins: np.ndarray,
                    hist: np.ndarray) -> None:
    """hist[bins[p], b] += counts_by_grain[i[p], b] * counts_by_grain[k[p], b] for every pair p and resample b.

    For the M-index bootstrap (``uncertainty._resampled_histograms``): the counts are small whole
    numbers, so every product and sum is exact in double precision (below 2^53) and the result does
    not depend on the order of the pairs.

    Parameters
    ----------
    counts_by_grain : numpy.ndarray
        (N, B) draw counts, grains by resamples, C-contiguous.
    i, k : numpy.ndarray
        The pairs' grains (P,).
    bins : numpy.ndarray
        The pairs' misorientation bins (P,).
    hist : numpy.ndarray
        (number of bins, B), added to (bins by resamples: the inner loop runs along a row).
    """
    resamples = counts_by_grain.shape[1]
    for p in range(i.shape[0]):
        a = counts_by_grain[i[p]]
        c = counts_by_grain[k[p]]
        row = hist[bins[p]]
        for b in range(resamples):
            row[b] += a[b] * c[b]
