"""The J-index of the kernel ODF: the Fourier (Parseval) series, pair sums, the pair matrix.

J-index (Bunge 1982): J = integral of f^2 over SO(3) (uniform Haar measure of total 1), the mean
square of the ODF (Mainprice & Silver 1993), so a random fabric has J = 1. Since the integral of
K(g^-1 a) K(g^-1 b) over g is the kernel's self-convolution Phi at the angle between a and b
(``fabric.kernel``),

    J = sum_ij w_i w_j (1/|S|) sum_{t in S} Phi(angle(g_i, t g_j)),

a sum over pairs closer than Phi's support (screened by a matrix product of quaternions). Phi
comes from the kernel's expansion in SO(3) characters, whose coefficients convolution squares.
The same integral is summed faster, in time linear in the number of grains, as the Parseval
series of the ODF's Fourier coefficients (``j_index_harmonics``, the default; the Wigner matrices
and Fourier sums are in ``fabric.harmonics``). J is a quadratic form w^T A w in the normalised
weights (``j_pair_matrix``, ``j_quadratic_forms``), which the bootstrap uses: a resample of
grains only changes w.

References
----------
Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
Mainprice, D. & Silver, P. G. (1993). Interpretation of SKS-waves using samples from the
subcontinental lithosphere. Physics of the Earth and Planetary Interiors 78, 257-280 (details
from memory).
"""

from __future__ import annotations

from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from fabric2seis.fabric import harmonics
from fabric2seis.fabric.checks import check_halfwidth, check_quaternions, check_weights
from fabric2seis.fabric.kernel import (
    interpolate_on_uniform_grid,
    kernel_coefficients,
    phi_by_cos_half,
    self_convolution_by_cos_half,
    self_convolution_table,
)
from fabric2seis.orientations import conjugate, multiply, proper_symmetry_quaternions
from fabric2seis.threads import worker_count

#: beyond this degree of the series (kernel halfwidth below about 3.5 degrees) J is summed over pairs
HARMONIC_DEGREE_LIMIT = 100
#: the methods of ``j_index``
J_METHODS = ("auto", "harmonics", "pairs")


def _check_grains(quat, weights, halfwidth_deg) -> None:
    check_quaternions(quat)
    check_weights(weights, len(quat))
    check_halfwidth(halfwidth_deg)


def j_index(quat: np.ndarray, weights: np.ndarray, symmetry, halfwidth_deg: float = 10.0,
            method: str = "auto") -> float:
    """J-index of the kernel ODF estimate: the mean square of the ODF, 1 for a uniform distribution.

    Parameters
    ----------
    quat : numpy.ndarray
        Unit quaternions (N, 4) of the grains (orix's convention), one per grain or point.
    weights : numpy.ndarray
        Weights (N,), non-negative with a positive sum (normalised here).
    symmetry : orix.quaternion.Symmetry
        Point group of the crystal (its proper rotations are used).
    halfwidth_deg : float
        Halfwidth of the de la Vallee Poussin kernel (degrees).
    method : {"auto", "harmonics", "pairs"}
        "harmonics" sums the ODF's SO(3) Fourier coefficients (cost linear in the number of grains,
        see ``j_index_harmonics``), "pairs" sums Phi over close pairs of grains (cost quadratic,
        exact to 1e-5 of Phi's mass, see ``j_index_pairs``); "auto" takes harmonics unless the
        kernel is so narrow that its series needs more than HARMONIC_DEGREE_LIMIT degrees.

    Returns
    -------
    float
        J, dimensionless (m.u.d.^2), at least 1 up to the series' tolerance.

    References
    ----------
    Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
    Mainprice, D. & Silver, P. G. (1993). Physics of the Earth and Planetary Interiors 78, 257-280.
    """
    if method not in J_METHODS:
        raise ValueError(f"unknown J-index method {method!r}; use one of {', '.join(J_METHODS)}")
    _check_grains(quat, weights, halfwidth_deg)
    if method == "auto":
        method = "harmonics" if harmonics_suffice(halfwidth_deg) else "pairs"
    if method == "harmonics":
        return j_index_harmonics(quat, weights, symmetry, halfwidth_deg)
    return j_index_pairs(quat, weights, symmetry, halfwidth_deg)


def harmonics_suffice(halfwidth_deg: float) -> bool:
    """Whether ``j_index``'s "auto" sums the Fourier series (kernel series of at most HARMONIC_DEGREE_LIMIT degrees)."""
    return len(kernel_coefficients(float(halfwidth_deg))) <= HARMONIC_DEGREE_LIMIT + 1


def j_index_harmonics(quat: np.ndarray, weights: np.ndarray, symmetry, halfwidth_deg: float = 10.0) -> float:
    """J = sum_l (2l+1) k_l^2 |P_l C_l|^2 (Bunge 1982, the Parseval form of the integral of f^2).

    C_l = sum_i w_i D^l(g_i) are the Fourier coefficients of the grains, P_l the average of D^l
    over the crystal's proper rotations (it projects on functions with the crystal's symmetry),
    k_l the kernel's character coefficients. The series stops where the remaining terms, bounded
    by sum (2l+1)^2 k_l^2 since |P_l C_l|^2 <= 2l+1, fall below J_SERIES_TOLERANCE (J >= 1).
    Rows of C_l not fixed by the crystal's rotations about z are zero after P_l, so only those
    rows are summed (the frame is first turned so that the highest-order axis lies along z).

    Parameters
    ----------
    quat, weights, symmetry, halfwidth_deg
        As for ``j_index``: quaternions (N, 4), weights (N,), orix point group, degrees.

    Returns
    -------
    float
        J, dimensionless.

    References
    ----------
    Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
    """
    _check_grains(quat, weights, halfwidth_deg)
    return j_index_nested(quat, weights, symmetry, [len(quat)], halfwidth_deg)[0]


def j_index_nested(quat: np.ndarray, weights: np.ndarray, symmetry, sizes, halfwidth_deg: float = 10.0) -> list[float]:
    """J (as ``j_index_harmonics``) of the first n grains, for every n in ``sizes``, in one pass.

    The Fourier sums are linear in the weights, so the sums of each first-n subset are those of
    the previous subset plus the grains added; each subset's weights are normalised on their own
    (J of unnormalised sums divided by the square of the subset's total weight).

    Parameters
    ----------
    quat, weights, symmetry, halfwidth_deg
        As for ``j_index``: quaternions (N, 4), weights (N,), orix point group, degrees.
    sizes : sequence of int
        Increasing subset sizes, 1 <= n <= N; each subset must have a positive total weight.

    Returns
    -------
    list of float
        J of each subset, dimensionless.

    References
    ----------
    Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
    """
    _check_grains(quat, weights, halfwidth_deg)
    sizes = [int(n) for n in sizes]
    if not sizes or sizes != sorted(sizes) or sizes[0] < 1 or sizes[-1] > len(quat):
        raise ValueError(f"sizes must increase from 1 to at most {len(quat)}, got {sizes}")
    k_l = kernel_coefficients(float(halfwidth_deg))
    degree = len(k_l) - 1
    w = np.asarray(weights, dtype=float)
    scale = np.sum(w)                     # sums of weights of order 1: same rounding as one subset
    turn, about_z = _symmetry_frame(symmetry)
    q = multiply(conjugate(turn)[None], np.asarray(quat, dtype=float))
    rows = np.arange(-(degree // about_z) * about_z, degree + 1, about_z)
    sums = np.zeros((len(rows), 2 * degree + 1, degree + 1), dtype=complex)
    out, done = [], 0
    for n in sizes:
        if n > done:
            sums = sums + harmonics.fourier_sums(q[done:n], w[done:n] / scale, rows, degree)
            done = n
        total_weight = np.sum(w[:n]) / scale
        if not total_weight > 0:
            raise ValueError(f"the first {n} grains have no weight")
        out.append(_parseval(sums, rows, degree, k_l, symmetry) / total_weight ** 2)
    return out


def _parseval(sums: np.ndarray, rows: np.ndarray, degree: int, k_l: np.ndarray, symmetry) -> float:
    """sum_l (2l+1) k_l^2 |P_l C_l|^2 from the Fourier sums of ``harmonics.fourier_sums``."""
    total = 0.0
    for l in range(degree + 1):
        c, m = harmonics.degree_coefficients(sums, rows, degree, l)
        block = _symmetry_projector(symmetry, l)[np.ix_(m, m)]
        per_column = np.sum(c.conj() * (block @ c), axis=0).real          # c_n^H P c_n per column n
        total += (2 * l + 1) * k_l[l] ** 2 * (per_column[0] + 2.0 * per_column[1:].sum())
    return float(total)


def _symmetry_key(symmetry):
    return symmetry.name, proper_symmetry_quaternions(symmetry).round(12).tobytes()


_FRAMES: dict = {}
_PROJECTORS: dict = {}


def _symmetry_frame(symmetry) -> tuple[np.ndarray, int]:
    """A turn r (quaternion) taking z to the crystal's highest-order rotation axis, and that order."""
    key = _symmetry_key(symmetry)
    if key not in _FRAMES:
        sym = proper_symmetry_quaternions(symmetry)
        axes = sym[:, 1:] / np.maximum(np.linalg.norm(sym[:, 1:], axis=1, keepdims=True), 1e-300)
        moving = np.linalg.norm(sym[:, 1:], axis=1) > 1e-9
        best, order = np.array([0.0, 0.0, 1.0]), 1
        for a in axes[moving]:
            n = int(np.sum(np.abs(np.abs(axes[moving] @ a) - 1.0) < 1e-9)) + 1
            if n > order or (n == order and abs(a[2]) > abs(best[2]) + 1e-9):
                best, order = a * np.sign(a[np.argmax(np.abs(a))]), n
        tilt = np.cross([0.0, 0.0, 1.0], best)
        angle = np.arctan2(np.linalg.norm(tilt), best[2])
        axis = tilt / np.linalg.norm(tilt) if np.linalg.norm(tilt) > 1e-12 else np.array([0.0, 0.0, 1.0])
        _FRAMES[key] = (np.concatenate([[np.cos(angle / 2)], np.sin(angle / 2) * axis]), order)
    return _FRAMES[key]


def _symmetry_projector(symmetry, l: int) -> np.ndarray:
    """P_l = mean of D^l(r^-1 s r) over the proper rotations s, in the turned frame of ``_symmetry_frame``."""
    key = (_symmetry_key(symmetry), l)
    if key not in _PROJECTORS:
        turn, _ = _symmetry_frame(symmetry)
        sym = multiply(multiply(conjugate(turn)[None], proper_symmetry_quaternions(symmetry)), turn[None])
        _PROJECTORS[key] = sum(harmonics.wigner_matrix(l, s) for s in sym) / len(sym)
    return _PROJECTORS[key]


def j_index_pairs(quat: np.ndarray, weights: np.ndarray, symmetry, halfwidth_deg: float = 10.0,
                  chunk: int = 2048) -> float:
    """J as the pair sum over Phi (see the module docstring).

    Pairs are screened by |q_i . t q_j| = cos(angle/2) from one matrix product per block of
    grains and symmetry operation; only pairs within Phi's support (tail mass below 1e-5) are
    evaluated. The cost grows as N^2 |S| times a fast product, see benchmarks/fabric_indices.py.

    Parameters
    ----------
    quat, weights, symmetry, halfwidth_deg
        As for ``j_index``: quaternions (N, 4), weights (N,), orix point group, degrees.
    chunk : int
        Grains per block of the screening product (memory chunk x N).

    Returns
    -------
    float
        J, dimensionless.

    References
    ----------
    Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
    """
    _check_grains(quat, weights, halfwidth_deg)
    sym = proper_symmetry_quaternions(symmetry)
    q = np.asarray(quat, dtype=float)
    w = np.asarray(weights, dtype=float) / np.sum(weights)
    table = self_convolution_by_cos_half(float(halfwidth_deg))
    cos_cut = table[0]
    total = 0.0
    moved = [multiply(t[None], q) for t in sym]
    q32 = q.astype(np.float32)
    screen = np.float32(cos_cut - 1e-5)   # float32 screening, then exact float64 values
    for start in range(0, len(q), chunk):
        block, wb = q32[start:start + chunk], w[start:start + chunk]
        for m in moved:
            c = block @ m.T.astype(np.float32)          # cos(angle/2), up to sign, for the block
            np.abs(c, out=c)
            rows, cols = np.nonzero(c > screen)
            if len(rows):
                exact = np.abs(np.einsum("nc,nc->n", q[rows + start], m[cols]))
                keep = exact >= cos_cut
                total += np.sum(wb[rows[keep]] * w[cols[keep]] * phi_by_cos_half(exact[keep], table))
    return float(total / len(sym))


def j_index_dense(quat: np.ndarray, weights: np.ndarray, symmetry, halfwidth_deg: float = 10.0) -> float:
    """J as the pair sum of ``j_index_pairs`` over every pair, no screening: for small sets (N^2 |S|).

    Parameters
    ----------
    quat, weights, symmetry, halfwidth_deg
        As for ``j_index``: quaternions (N, 4), weights (N,), orix point group, degrees.

    Returns
    -------
    float
        J, dimensionless.
    """
    _check_grains(quat, weights, halfwidth_deg)
    grid, phi, _, _ = self_convolution_table(float(halfwidth_deg))
    q = np.asarray(quat, dtype=float)
    w = np.asarray(weights, dtype=float) / np.sum(weights)
    sym = proper_symmetry_quaternions(symmetry)
    total = 0.0
    for t in sym:
        c = np.clip(np.abs(q @ multiply(t[None], q).T), 0.0, 1.0)
        total += w @ interpolate_on_uniform_grid(2.0 * np.arccos(c), grid, phi) @ w
    return float(total / len(sym))


def j_pair_matrix(quat: np.ndarray, symmetry, halfwidth_deg: float = 10.0, chunk: int = 2048):
    """The matrix A of the J-index as a quadratic form: J = w^T A w for normalised weights w.

    A_ij = (1/|S|) sum_t Phi(angle(g_i, t g_j)) over pairs within Phi's support (as in
    ``j_index_pairs``); a bootstrap resample of grains only changes w.

    Parameters
    ----------
    quat : numpy.ndarray
        Unit quaternions (N, 4) of the grains.
    symmetry : orix.quaternion.Symmetry
        Point group of the crystal.
    halfwidth_deg : float
        Kernel halfwidth (degrees).
    chunk : int
        Grains per block of the screening product.

    Returns
    -------
    scipy.sparse.csr_matrix
        A (N, N), symmetric, dimensionless.

    References
    ----------
    Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
    """
    from scipy.sparse import coo_matrix

    check_quaternions(quat)
    check_halfwidth(halfwidth_deg)
    sym = proper_symmetry_quaternions(symmetry)
    q = np.asarray(quat, dtype=float)
    n = len(q)
    table = self_convolution_by_cos_half(float(halfwidth_deg))
    cos_cut = table[0]
    q32 = q.astype(np.float32)
    screen = np.float32(cos_cut - 1e-5)
    rows_all, cols_all, vals_all = [], [], []
    for t in sym:
        m = multiply(t[None], q)
        m32 = m.T.astype(np.float32)
        for start in range(0, n, chunk):
            c = q32[start:start + chunk] @ m32
            np.abs(c, out=c)
            rows, cols = np.nonzero(c > screen)
            exact = np.abs(np.einsum("nc,nc->n", q[rows + start], m[cols]))
            keep = exact >= cos_cut
            rows_all.append(rows[keep] + start)
            cols_all.append(cols[keep])
            vals_all.append(phi_by_cos_half(exact[keep], table) / len(sym))
    return coo_matrix((np.concatenate(vals_all), (np.concatenate(rows_all), np.concatenate(cols_all))),
                      shape=(n, n)).tocsr()


def j_quadratic_forms(quat: np.ndarray, v: np.ndarray, symmetry, halfwidth_deg: float = 10.0,
                      chunk: int = 512, done: Callable[[float], None] | None = None) -> tuple[np.ndarray, np.ndarray]:
    """v_b^T A v_b for the columns of v, and the diagonal of A, without storing A.

    A is the matrix of ``j_pair_matrix``; it is built one block of rows at a time, dense, from
    the diagonal on (A is symmetric: the pairs left of it count twice), and multiplied into all
    columns at once, so memory stays at ``threads.MAX_WORKERS`` blocks (at most chunk x N)
    whatever the fabric, and the cost is N^2 |S| / 2 like half the pair sum plus one matrix
    product per block. The blocks are shared among ``threads.worker_count()`` threads.

    Parameters
    ----------
    quat : numpy.ndarray
        Unit quaternions (N, 4) of the grains.
    v : numpy.ndarray
        Weight vectors (N, B), one per column, not necessarily normalised: the J of column b is
        v_b^T A v_b / (sum v_b)^2.
    symmetry : orix.quaternion.Symmetry
        Point group of the crystal.
    halfwidth_deg : float
        Kernel halfwidth (degrees).
    chunk : int
        Rows of A built at a time.
    done : callable, optional
        Told the share of the blocks finished (0 to 1) after each block, for a progress bar.

    Returns
    -------
    forms : numpy.ndarray
        v_b^T A v_b (B,).
    diagonal : numpy.ndarray
        A_ii (N,), the self-pair terms.
    """
    check_quaternions(quat)
    check_halfwidth(halfwidth_deg)
    if np.ndim(v) != 2 or np.shape(v)[0] != len(quat):
        raise ValueError(f"v must be an array (N, B) with one row per orientation (N = {len(quat)}), "
                         f"got shape {np.shape(v)}")
    sym = proper_symmetry_quaternions(symmetry)
    q = np.asarray(quat, dtype=float)
    v = np.asarray(v, dtype=float)
    from fabric2seis.fabric.pair_kernel import fill_pair_block  # numba: compiled on first use

    edge, step, values = self_convolution_by_cos_half(float(halfwidth_deg))
    moved = np.ascontiguousarray(np.stack([multiply(t[None], q).T for t in sym]))     # (S, 4, N)

    def block_terms(start: int) -> tuple[np.ndarray, np.ndarray]:
        # rows start.. of A from its diagonal on: A is symmetric, so the pairs left of the
        # diagonal are the transposes of earlier blocks' and count twice in v^T A v. Phi is
        # looked up only within its support, as in j_pair_matrix, in one compiled pass
        block = np.ascontiguousarray(q[start:start + chunk])
        a = np.empty((len(block), len(q) - start))
        fill_pair_block(block, moved, start, edge, 1.0 / step, values, a)
        mine = v[start:start + chunk]
        square = a[:, :len(block)]
        return (np.einsum("ib,ib->b", mine, square @ mine + 2.0 * (a[:, len(block):] @ v[start + len(block):])),
                square.diagonal().copy())

    # blocks fixed in advance, shared among threads (numpy releases the GIL) and added in their
    # order: the number of threads changes the time, not the sums (fabric2seis/threads.py)
    starts = range(0, len(q), chunk)
    work = np.cumsum([len(q) - s for s in starts]) / sum(len(q) - s for s in starts)
    parts: list[tuple[np.ndarray, np.ndarray]] = []
    with ThreadPoolExecutor(worker_count()) as pool:
        for terms in pool.map(block_terms, starts):
            parts.append(terms)
            if done is not None:
                done(float(work[len(parts) - 1]))
    forms = np.zeros(v.shape[1])
    for part, _ in parts:
        forms += part
    return forms, np.concatenate([d for _, d in parts])
