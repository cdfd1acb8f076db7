"""Harmonics on SO(3): Wigner D matrices of orientations and the Fourier sums of a set of grains.

For degree l the Wigner matrix of a rotation with unit quaternion q = (cos t/2, sin t/2 n) is
D^l(q) = exp(-i t n.J) in the basis |l m>, m = -l..l, with J the angular-momentum matrices of
the Condon-Shortley phase convention. It is a representation: D(a b) = D(a) D(b) for the Hamilton
product of ``orientations.multiply``.

Grains are summed through z-y-z Euler angles, q = q_z(alpha) q_y(beta) q_z(gamma), so
D_mn = exp(-i m alpha) d_mn(beta) exp(-i n gamma), and d(beta) = exp(-i beta J_y) is written
d_mn(beta) = sum_k V_mk exp(-i k beta) conj(V_nk) with V = D(rotation of -90 degrees about x),
which turns J_z into J_y. Then

    C^l_mn = sum_i w_i D^l_mn(q_i) = sum_k V_mk conj(V_nk) T[m, k, n],
    T[m, k, n] = sum_i w_i exp(-i (m alpha_i + k beta_i + n gamma_i)),

so one three-index Fourier sum over the grains (a matrix product) serves every degree at once.
"""

from __future__ import annotations

import functools

import numpy as np


@functools.lru_cache(maxsize=256)
def _generators(l: int) -> tuple[np.ndarray, np.ndarray]:
    """J_x (real symmetric) and the diagonal of J_z for degree l."""
    m = np.arange(-l, l + 1, dtype=float)
    up = np.diag(np.sqrt(l * (l + 1) - m[:-1] * (m[:-1] + 1)), -1)    # J+ |m> = c |m+1>
    return (up + up.T) / 2.0, m


@functools.lru_cache(maxsize=256)
def _y_from_z(l: int) -> np.ndarray:
    """V = D^l(-90 degrees about x) = exp(i pi/2 J_x), from the eigenvectors of J_x."""
    jx, _ = _generators(l)
    values, vectors = np.linalg.eigh(jx)
    return (vectors * np.exp(0.5j * np.pi * np.round(values))) @ vectors.T


def euler_zyz(quat: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """alpha, beta, gamma with q = q_z(alpha) q_y(beta) q_z(gamma) (up to the sign of q).

    q = (cos(b/2) cos(s), sin(b/2) sin(d), sin(b/2) cos(d), cos(b/2) sin(s)) with
    s = (alpha + gamma)/2, d = (gamma - alpha)/2, so both half-angles come from arguments of
    complex numbers, well defined also at beta = 0 or 180 degrees.
    """
    q = np.asarray(quat, dtype=float)
    s = np.arctan2(q[..., 3], q[..., 0])
    d = np.arctan2(q[..., 1], q[..., 2])
    beta = 2.0 * np.arctan2(np.hypot(q[..., 1], q[..., 2]), np.hypot(q[..., 0], q[..., 3]))
    return s - d, beta, s + d


def wigner_matrix(l: int, quat: np.ndarray) -> np.ndarray:
    """D^l (2l+1, 2l+1) of one rotation."""
    alpha, beta, gamma = euler_zyz(quat)
    m = np.arange(-l, l + 1)
    v = _y_from_z(l)
    d = (v * np.exp(-1j * m * beta)) @ v.conj().T
    return np.exp(-1j * m * alpha)[:, None] * d.real * np.exp(-1j * m * gamma)[None, :]


def fourier_sums(quat: np.ndarray, weights: np.ndarray, rows: np.ndarray, degree: int,
                 chunk: int = 4096) -> np.ndarray:
    """T[m, k, n] for m in ``rows``, k = -L..L, n = 0..L (L = ``degree``): shape (len(rows), 2L+1, L+1).

    Columns n < 0 are not needed for real functions: C_{-m,-n} = (-1)^(m-n) conj(C_mn). The beta
    factor is summed as real cosines and sines of k = 0..L (one real matrix product per chunk of
    grains, half the work of a complex one): exp(-i k beta) = cos(k beta) - i sign(k) sin(|k| beta).
    """
    alpha, beta, gamma = euler_zyz(quat)
    w = np.asarray(weights, dtype=float)
    k = np.arange(degree + 1)
    n = np.arange(degree + 1)
    cos_sum: np.ndarray = np.zeros((2 * len(rows) * len(n), len(k)))
    sin_sum: np.ndarray = np.zeros_like(cos_sum)
    for start in range(0, len(w), chunk):
        part = slice(start, start + chunk)
        phase = ((w[part, None] * np.exp(-1j * alpha[part, None] * rows[None, :]))[:, :, None]
                 * np.exp(-1j * gamma[part, None] * n[None, :])[:, None, :])
        flat = phase.reshape(len(phase), -1).view(float)          # (chunk, 2 len(rows) len(n)) real
        kb = beta[part, None] * k[None, :]
        cos_sum += flat.T @ np.cos(kb)
        sin_sum += flat.T @ np.sin(kb)
    cos_sum, sin_sum = ((x[0::2] + 1j * x[1::2]).reshape(len(rows), len(n), len(k)).transpose(0, 2, 1)
                        for x in (cos_sum, sin_sum))
    out = np.empty((len(rows), 2 * degree + 1, degree + 1), dtype=complex)
    out[:, degree:] = cos_sum - 1j * sin_sum
    out[:, :degree] = (cos_sum + 1j * sin_sum)[:, :0:-1]
    return out


def degree_coefficients(sums: np.ndarray, rows: np.ndarray, degree: int, l: int) -> tuple[np.ndarray, np.ndarray]:
    """C^l restricted to rows |m| <= l of ``rows`` and columns n = 0..l, and those rows' indices m + l."""
    keep = np.flatnonzero(np.abs(rows) <= l)
    m = rows[keep] + l
    v = _y_from_z(l)
    part = sums[keep][:, degree - l:degree + l + 1, :l + 1]
    # sum over k of V_mk conj(V_nk) T[m, k, n], as one product and a sum over k (a three-operand
    # einsum would search its contraction order on every call: most of the time of small degrees)
    return np.sum((v[m][:, :, None] * part) * v[l:].conj().T[None], axis=1), m
