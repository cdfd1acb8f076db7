"""Fabric strength and shape: kernel ODF, J-index, pfJ, M-index, orientation-tensor eigenanalysis.

Orientation density (ODF) estimate, in multiples of a uniform distribution (m.u.d.):

    f(g) = sum_i w_i (1/|S|) sum_{s in S} K(g^-1 s g_i),     sum_i w_i = 1,

with the de la Vallee Poussin kernel K(w) = C cos^(2 kappa)(w/2) of rotation angle w, whose
halfwidth (K(h) = K(0)/2) sets kappa, normalised to integrate to 1 over SO(3) (Schaeben 1997);
S are the proper rotations of the crystal's point group.

J-index (Bunge 1982): J = integral of f^2 over SO(3) (uniform Haar measure of total 1), so a
random fabric has J = 1. Since the integral of K(g^-1 a) K(g^-1 b) over g is the kernel's
self-convolution Phi at the angle between a and b,

    J = sum_ij w_i w_j (1/|S|) sum_{t in S} Phi(angle(g_i, t g_j)),

a sum over pairs closer than Phi's support (screened by a matrix product of quaternions). Phi
comes from the kernel's expansion in SO(3) characters, whose coefficients convolution squares.
The same integral is summed faster, in time linear in the number of grains, as the Parseval
series of the ODF's Fourier coefficients (``j_index_harmonics``, the default).

Pole figures: the density of an axial crystal direction h in the structural frame, normalised
to 1 for uniform, smoothed by the pole figure image of the same kernel,
(1 + kappa) ((1 + cos a)/2)^kappa (Schaeben 1997); pfJ is the mean of its square over the sphere.

M-index (Skemer et al. 2005): half the summed absolute difference between the histogram of
uncorrelated misorientation angles (random pairs of grains) and that of a random fabric of the
same symmetry (computed once per point group with a fixed seed and cached), in 1-degree bins.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np
from scipy.special import betaln
from scipy.spatial import cKDTree

from fabric2seis import harmonics
from fabric2seis.orientations import (conjugate, misorientation_angles, multiply, proper_symmetry_quaternions,
                                      to_matrices)

M_INDEX_BIN_DEG = 1.0
M_INDEX_PAIRS = 1_000_000
RANDOM_DISTRIBUTION_PAIRS = 2_000_000
RANDOM_DISTRIBUTION_SEED = 20050501
J_SERIES_TOLERANCE = 1e-7       # bound on the J-index series left out
ODF_SUPPORT = 1e-10                # the ODF sums grains where K exceeds this fraction of K(0)
HARMONIC_DEGREE_LIMIT = 100     # beyond it (halfwidth below about 3.5 degrees) J is summed over pairs


# --- the kernel -------------------------------------------------------------------------------


@dataclass(frozen=True)
class Kernel:
    """de la Vallee Poussin kernel of a halfwidth, its self-convolution and pole-figure image."""

    halfwidth_deg: float

    @property
    def kappa(self) -> float:
        return np.log(0.5) / (2.0 * np.log(np.cos(np.radians(self.halfwidth_deg) / 2.0)))

    @property
    def norm(self) -> float:
        """C with integral of C cos^(2 kappa)(w/2) over SO(3) equal to 1: pi / (2 B(kappa + 1/2, 3/2))."""
        return np.pi / (2.0 * np.exp(betaln(self.kappa + 0.5, 1.5)))

    def value(self, angle_rad: np.ndarray) -> np.ndarray:
        return self.norm * np.cos(np.asarray(angle_rad) / 2.0) ** (2.0 * self.kappa)

    def pole_value(self, cos_angle: np.ndarray) -> np.ndarray:
        """Pole-figure kernel (1 + kappa) ((1 + cos a)/2)^kappa, uniform = 1 on the sphere."""
        return (1.0 + self.kappa) * ((1.0 + np.asarray(cos_angle)) / 2.0) ** self.kappa


@functools.lru_cache(maxsize=16)
def _self_convolution_table(halfwidth_deg: float) -> tuple[np.ndarray, np.ndarray, float, np.ndarray]:
    """Phi = K * K tabulated on [0, pi], the angle beyond which it is negligible, and the k_l.

    K = sum_l (2l+1) k_l chi_l with chi_l(w) = sin((2l+1) w/2) / sin(w/2) the characters of SO(3)
    and k_l = (1/(2l+1)) integral K chi_l dg; then K * K = sum_l (2l+1) k_l^2 chi_l.
    """
    kernel = Kernel(halfwidth_deg)
    n_l = int(np.ceil(kernel.kappa)) + 60
    x, wq = np.polynomial.legendre.leggauss(max(600, 4 * n_l))
    w = (x + 1.0) * np.pi / 2.0                     # nodes on [0, pi]
    weights = wq * np.pi / 2.0 * (2.0 / np.pi) * np.sin(w / 2.0) ** 2   # Haar density of the angle
    l = np.arange(n_l)[:, None]
    chi = np.sin((2 * l + 1) * w / 2.0) / np.sin(w / 2.0)
    k_l = (chi * (kernel.value(w) * weights)).sum(axis=1) / (2 * np.arange(n_l) + 1)
    grid = np.linspace(0.0, np.pi, 4001)
    safe = np.maximum(np.sin(grid / 2.0), 1e-300)
    chi_grid = np.sin((2 * l + 1) * grid / 2.0) / safe
    chi_grid[:, 0] = 2 * np.arange(n_l) + 1           # limit at w = 0
    phi = ((2 * np.arange(n_l) + 1) * k_l ** 2) @ chi_grid
    phi = np.maximum(phi, 0.0)
    # support: where Phi has fallen below 1e-8 of its peak
    cutoff = float(grid[np.flatnonzero(phi > 1e-8 * phi[0])[-1]])
    return grid, phi, cutoff, k_l


def self_convolution(halfwidth_deg: float, angle_rad: np.ndarray) -> np.ndarray:
    grid, phi, _, _ = _self_convolution_table(float(halfwidth_deg))
    return np.interp(angle_rad, grid, phi)


# --- J-index ----------------------------------------------------------------------------------


def j_quadratic_forms(quat: np.ndarray, v: np.ndarray, symmetry, halfwidth_deg: float = 10.0,
                      chunk: int = 1024) -> tuple[np.ndarray, np.ndarray]:
    """v_b^T A v_b for the columns of v (N, B), and the diagonal of A, without storing A.

    A is the matrix of ``j_pair_matrix``; it is built one block of rows at a time, dense, and
    multiplied into all columns at once, so memory stays at a block (chunk x N) whatever the
    fabric, and the cost is N^2 |S| like the pair sum plus one matrix product per block.
    """
    sym = proper_symmetry_quaternions(symmetry)
    q = np.asarray(quat, dtype=float)
    v = np.asarray(v, dtype=float)
    table_c, table_phi, cos_cut = _phi_by_cos_half(float(halfwidth_deg))
    table_phi = np.where(table_c < cos_cut, 0.0, table_phi)
    moved = [multiply(t[None], q) for t in sym]
    forms = np.zeros(v.shape[1])
    diagonal = np.zeros(len(q))
    for start in range(0, len(q), chunk):
        block = q[start:start + chunk]
        a = np.zeros((len(block), len(q)))
        for m in moved:
            c = np.abs(block @ m.T)
            c[c < cos_cut] = 0.0               # outside Phi's support, as in j_pair_matrix
            a += np.interp(c, table_c, table_phi)
        a /= len(sym)
        diagonal[start:start + len(block)] = a[np.arange(len(block)), np.arange(start, start + len(block))]
        forms += np.einsum("ib,ib->b", v[start:start + chunk], a @ v)
    return forms, diagonal


def j_pair_matrix(quat: np.ndarray, symmetry, halfwidth_deg: float = 10.0, chunk: int = 2048):
    """Sparse matrix A (N, N) with A_ij = (1/|S|) sum_t Phi(angle(g_i, t g_j)) over pairs in Phi's
    support, so that J = w^T A w for normalised weights w (a quadratic form: a bootstrap resample
    of grains only changes w)."""
    from scipy.sparse import coo_matrix

    sym = proper_symmetry_quaternions(symmetry)
    q = np.asarray(quat, dtype=float)
    n = len(q)
    table_c, table_phi, cos_cut = _phi_by_cos_half(float(halfwidth_deg))
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
            keep = exact > cos_cut
            rows_all.append(rows[keep] + start)
            cols_all.append(cols[keep])
            vals_all.append(np.interp(exact[keep], table_c, table_phi) / len(sym))
    return coo_matrix((np.concatenate(vals_all), (np.concatenate(rows_all), np.concatenate(cols_all))),
                      shape=(n, n)).tocsr()


def j_index(quat: np.ndarray, weights: np.ndarray, symmetry, halfwidth_deg: float = 10.0,
            method: str = "auto") -> float:
    """J-index (Bunge 1982) of the kernel ODF estimate; 1 for a uniform distribution.

    ``method``: "harmonics" sums the ODF's SO(3) Fourier coefficients (cost linear in the number
    of grains, see ``j_index_harmonics``), "pairs" sums Phi over close pairs of grains (cost
    quadratic, exact to 1e-5 of Phi's mass); "auto" takes harmonics unless the kernel is so
    narrow that its series needs more than HARMONIC_DEGREE_LIMIT degrees.
    """
    if method == "auto":
        method = "harmonics" if len(_kernel_coefficients(float(halfwidth_deg))) <= HARMONIC_DEGREE_LIMIT + 1 else "pairs"
    if method == "harmonics":
        return j_index_harmonics(quat, weights, symmetry, halfwidth_deg)
    if method == "pairs":
        return j_index_pairs(quat, weights, symmetry, halfwidth_deg)
    raise ValueError(f"unknown J-index method {method!r}")


def j_index_harmonics(quat: np.ndarray, weights: np.ndarray, symmetry, halfwidth_deg: float = 10.0) -> float:
    """J = sum_l (2l+1) k_l^2 |P_l C_l|^2 (Bunge 1982, the Parseval form of the integral of f^2).

    C_l = sum_i w_i D^l(g_i) are the Fourier coefficients of the grains, P_l the average of D^l
    over the crystal's proper rotations (it projects on functions with the crystal's symmetry),
    k_l the kernel's character coefficients. The series stops where the remaining terms, bounded
    by sum (2l+1)^2 k_l^2 since |P_l C_l|^2 <= 2l+1, fall below J_SERIES_TOLERANCE (J >= 1).
    Rows of C_l not fixed by the crystal's rotations about z are zero after P_l, so only those
    rows are summed (the frame is first turned so that the highest-order axis lies along z).
    """
    k_l = _kernel_coefficients(float(halfwidth_deg))
    degree = len(k_l) - 1
    w = np.asarray(weights, dtype=float) / np.sum(weights)
    turn, about_z = _symmetry_frame(symmetry)
    q = multiply(conjugate(turn)[None], np.asarray(quat, dtype=float))
    rows = np.arange(-(degree // about_z) * about_z, degree + 1, about_z)
    sums = harmonics.fourier_sums(q, w, rows, degree)
    total = 0.0
    for l in range(degree + 1):
        c, m = harmonics.degree_coefficients(sums, rows, degree, l)
        block = _symmetry_projector(symmetry, l)[np.ix_(m, m)]
        per_column = np.einsum("mn,mp,pn->n", c.conj(), block, c, optimize=True).real
        total += (2 * l + 1) * k_l[l] ** 2 * (per_column[0] + 2.0 * per_column[1:].sum())
    return float(total)


@functools.lru_cache(maxsize=16)
def _kernel_coefficients(halfwidth_deg: float) -> np.ndarray:
    """k_l, l = 0..L, with L the last degree whose remaining series exceeds J_SERIES_TOLERANCE."""
    _, _, _, k_l = _self_convolution_table(halfwidth_deg)
    term = (2 * np.arange(len(k_l)) + 1) ** 2 * k_l ** 2
    tail = np.cumsum(term[::-1])[::-1]
    return k_l[:int(np.flatnonzero(tail > J_SERIES_TOLERANCE)[-1]) + 1]


def _symmetry_key(symmetry):
    return symmetry.name, np.asarray(symmetry.data).round(12).tobytes()


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
    """
    sym = proper_symmetry_quaternions(symmetry)
    q = np.asarray(quat, dtype=float)
    w = np.asarray(weights, dtype=float) / np.sum(weights)
    table_c, table_phi, cos_cut = _phi_by_cos_half(float(halfwidth_deg))
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
                keep = exact > cos_cut
                total += np.sum(wb[rows[keep]] * w[cols[keep]] * np.interp(exact[keep], table_c, table_phi))
    return float(total / len(sym))


@functools.lru_cache(maxsize=16)
def _phi_by_cos_half(halfwidth_deg: float) -> tuple[np.ndarray, np.ndarray, float]:
    """Phi tabulated against cos(angle/2) (increasing), and the cos(angle/2) of its support edge."""
    grid, phi, _, _ = _self_convolution_table(halfwidth_deg)
    density = phi * (2.0 / np.pi) * np.sin(grid / 2.0) ** 2
    mass = np.cumsum(density) * (grid[1] - grid[0])
    edge = grid[np.argmax(mass > 1.0 - 1e-5)]
    c = np.cos(grid / 2.0)[::-1]
    return c, phi[::-1], float(np.cos(edge / 2.0))


def odf_values(quat_at: np.ndarray, quat: np.ndarray, weights: np.ndarray, symmetry,
               halfwidth_deg: float = 10.0) -> np.ndarray:
    """f at orientations ``quat_at`` (m.u.d.).

    Only grains within the kernel's support (where K has fallen below ODF_SUPPORT of its peak)
    are summed: the symmetry equivalents of all grains, with both signs of each quaternion, go
    into one k-d tree and each point gathers its neighbours within the chord distance of the
    support angle (the kernel is a function of |q_at . t q_i| = cos(angle/2) alone).
    """
    sym = proper_symmetry_quaternions(symmetry)
    kernel = Kernel(halfwidth_deg)
    w = np.asarray(weights, dtype=float) / np.sum(weights)
    cos_cut = ODF_SUPPORT ** (1.0 / (2.0 * kernel.kappa))        # cos(angle/2) at the support edge
    moved = multiply(sym[:, None, :], np.asarray(quat, dtype=float)[None]).reshape(-1, 4)
    points = np.vstack([moved, -moved])
    owner = np.tile(np.arange(len(quat)), 2 * len(sym))
    at = np.asarray(quat_at, dtype=float)
    out = np.zeros(len(at))
    radius = np.sqrt(2.0 - 2.0 * cos_cut)
    tree = cKDTree(points)
    for start in range(0, len(at), 20_000):
        block = at[start:start + 20_000]
        near = cKDTree(block).sparse_distance_matrix(tree, radius, output_type="coo_matrix")
        c = 1.0 - near.data ** 2 / 2.0                          # |q - p|^2 = 2 - 2 q.p
        out[start:start + len(block)] = np.bincount(
            near.row, weights=w[owner[near.col]] * kernel.norm * np.clip(c, 0, 1) ** (2.0 * kernel.kappa),
            minlength=len(block))
    return out / len(sym)


# --- poles --------------------------------------------------------------------------------------


def pole_vectors(quat: np.ndarray, crystal_direction: np.ndarray, symmetry) -> np.ndarray:
    """Unit pole vectors (N, m, 3) in the structural frame of all m axially distinct equivalents."""
    ops = to_matrices(proper_symmetry_quaternions(symmetry))
    h = crystal_direction / np.linalg.norm(crystal_direction)
    variants = ops @ h                                    # (K, 3) in the crystal frame
    distinct = []
    for v in variants:
        if not any(abs(abs(v @ u) - 1.0) < 1e-6 for u in distinct):
            distinct.append(v)
    distinct = np.array(distinct)
    g = to_matrices(quat)                                 # v_crystal = g v_structural
    return np.einsum("nji,mj->nmi", g, distinct)          # g^T h for each equivalent


def orientation_tensor(poles: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """Weighted second-moment tensor of axial unit vectors (N, m, 3); trace 1."""
    w = np.asarray(weights, dtype=float) / np.sum(weights)
    return np.einsum("n,nmi,nmj->ij", w, poles, poles) / poles.shape[1]


def eigen_analysis(tensor: np.ndarray) -> dict:
    """Eigenvalues (descending, sum 1), eigenvectors, Woodcock (1977) K and C, Vollmer (1990) P, G, R."""
    values, vectors = np.linalg.eigh(tensor)
    values, vectors = values[::-1], vectors[:, ::-1]
    values = np.clip(values, 1e-12, None)
    values = values / values.sum()
    l1, l2, l3 = values
    return {
        "eigenvalues": values, "eigenvectors": vectors.T,
        "woodcock_K": float(np.log(l1 / l2) / np.log(l2 / l3)) if l2 > l3 * (1 + 1e-12) else float("inf"),
        "woodcock_C": float(np.log(l1 / l3)),
        "vollmer_P": float(l1 - l2), "vollmer_G": float(2.0 * (l2 - l3)), "vollmer_R": float(3.0 * l3),
    }


def ba_index(eigen_100: dict, eigen_010: dict) -> float:
    """BA-index of olivine (Mainprice et al. 2014) from the Vollmer P and G of [100] and [010]."""
    p010, g010 = eigen_010["vollmer_P"], eigen_010["vollmer_G"]
    p100, g100 = eigen_100["vollmer_P"], eigen_100["vollmer_G"]
    return 0.5 * (2.0 - p010 / (g010 + p010) - g100 / (g100 + p100))


def hemisphere_cells(step_deg: float = 2.0) -> tuple[np.ndarray, np.ndarray]:
    """Directions covering the hemisphere z <= 0 and the solid angle of each (summing to 2 pi)."""
    edges = np.radians(np.arange(0.0, 90.0 + 1e-9, step_deg))
    if edges[-1] < np.pi / 2 - 1e-9:
        edges = np.append(edges, np.pi / 2)
    dirs, areas = [], []
    for lo, hi in zip(edges[:-1], edges[1:]):
        ring = 2.0 * np.pi * (np.sin(hi) - np.sin(lo))      # plunge from lo to hi
        mid = (lo + hi) / 2.0
        count = max(1, int(round(2.0 * np.pi * np.cos(mid) / np.radians(step_deg))))
        az = (np.arange(count) + 0.5) * 2.0 * np.pi / count
        dirs.append(np.column_stack([np.cos(mid) * np.cos(az), np.cos(mid) * np.sin(az),
                                     -np.full(count, np.sin(mid))]))
        areas.append(np.full(count, ring / count))
    return np.vstack(dirs), np.concatenate(areas)


def pole_density(at: np.ndarray, poles: np.ndarray, weights: np.ndarray, halfwidth_deg: float = 10.0,
                 bin_step_deg: float = 1.0) -> np.ndarray:
    """Axial pole density (m.u.d.) at unit directions ``at`` (M, 3).

    Poles are first binned on a hemisphere grid of ``bin_step_deg`` (a tenth of the kernel
    halfwidth), so the cost does not grow with the number of grains; each evaluation point then
    sums the bins within the kernel's support (where it exceeds 1e-6 of its peak), found with a
    k-d tree.
    """
    kernel = Kernel(halfwidth_deg)
    w = np.repeat(np.asarray(weights, dtype=float) / np.sum(weights) / poles.shape[1], poles.shape[1])
    p = poles.reshape(-1, 3)
    p = np.where(p[:, 2:3] > 0, -p, p)                    # axial: fold onto z <= 0
    cells, _ = hemisphere_cells(bin_step_deg)
    nearest = cKDTree(np.vstack([cells, -cells])).query(p)[1] % len(cells)
    mass = np.bincount(nearest, weights=w, minlength=len(cells))
    used = np.flatnonzero(mass)
    both = np.vstack([cells[used], -cells[used]])         # the axial kernel: half at +u, half at -u
    both_mass = np.concatenate([mass[used], mass[used]]) / 2.0
    support = 2.0 * np.arccos(1e-6 ** (1.0 / (2.0 * kernel.kappa)))
    pairs = cKDTree(np.asarray(at, dtype=float)).sparse_distance_matrix(
        cKDTree(both), 2.0 * np.sin(support / 2.0), output_type="ndarray")
    cos = 1.0 - pairs["v"] ** 2 / 2.0
    return np.bincount(pairs["i"], weights=both_mass[pairs["j"]] * kernel.pole_value(cos), minlength=len(at))


def pf_j(poles: np.ndarray, weights: np.ndarray, halfwidth_deg: float = 10.0, step_deg: float = 2.0) -> tuple[float, float, np.ndarray]:
    """pfJ (mean square pole density over the sphere), the maximum density and its direction."""
    cells, area = hemisphere_cells(step_deg)
    density = pole_density(cells, poles, weights, halfwidth_deg)
    top = int(np.argmax(density))
    return float(np.sum(density ** 2 * area) / np.sum(area)), float(density[top]), cells[top]


# --- M-index ----------------------------------------------------------------------------------


@functools.lru_cache(maxsize=32)
def random_misorientation_histogram(symmetry_key: bytes, n_ops: int) -> np.ndarray:
    """Histogram (fractions per 1-degree bin, 0-180) of misorientation angles of random pairs."""
    sym = np.frombuffer(symmetry_key).reshape(n_ops, 4)
    rng = np.random.default_rng(RANDOM_DISTRIBUTION_SEED)
    counts = np.zeros(int(round(180 / M_INDEX_BIN_DEG)))
    left = RANDOM_DISTRIBUTION_PAIRS
    while left > 0:
        n = min(left, 500_000)
        a = _random_unit_quaternions(n, rng)
        b = _random_unit_quaternions(n, rng)
        counts += _histogram(misorientation_angles(a, b, sym))
        left -= n
    return counts / counts.sum()


def random_distribution(symmetry) -> np.ndarray:
    """The random misorientation-angle histogram of a point group, cached in memory and on disk.

    The disk cache (``$XDG_CACHE_HOME/fabric2seis``, default ``~/.cache/fabric2seis``) only saves
    time; a missing or unwritable cache is recomputed, with the same fixed seed.
    """
    import hashlib
    import os
    from pathlib import Path

    sym = np.ascontiguousarray(proper_symmetry_quaternions(symmetry))
    key = hashlib.sha256(sym.round(10).tobytes() + f"{RANDOM_DISTRIBUTION_PAIRS}-{RANDOM_DISTRIBUTION_SEED}-"
                         f"{M_INDEX_BIN_DEG}".encode()).hexdigest()[:20]
    folder = Path(os.environ.get("XDG_CACHE_HOME", Path.home() / ".cache")) / "fabric2seis"
    path = folder / f"random_misorientation_{key}.npy"
    try:
        cached = np.load(path)
        if cached.shape == (int(round(180 / M_INDEX_BIN_DEG)),):
            return cached
    except (OSError, ValueError):
        pass
    hist = random_misorientation_histogram(sym.tobytes(), len(sym))
    try:
        folder.mkdir(parents=True, exist_ok=True)
        tmp = path.with_suffix(f".{os.getpid()}.tmp.npy")
        np.save(tmp, hist)
        os.replace(tmp, path)
    except OSError:
        pass
    return hist


def _random_unit_quaternions(n, rng):
    q = rng.normal(size=(n, 4))
    return q / np.linalg.norm(q, axis=1, keepdims=True)


def _histogram(angles_rad: np.ndarray) -> np.ndarray:
    bins = np.arange(0.0, 180.0 + M_INDEX_BIN_DEG / 2, M_INDEX_BIN_DEG)
    return np.histogram(np.degrees(angles_rad), bins=bins)[0].astype(float)


def uncorrelated_misorientations(quat: np.ndarray, symmetry, n_pairs: int = M_INDEX_PAIRS,
                                 seed: int = 0) -> np.ndarray:
    """Misorientation angles (rad) of random pairs of distinct grains (all pairs if fewer)."""
    n = len(quat)
    sym = proper_symmetry_quaternions(symmetry)
    if n < 2:
        raise ValueError("the M-index needs at least two grains")
    if n * (n - 1) // 2 <= n_pairs:
        i, j = np.triu_indices(n, k=1)
    else:
        rng = np.random.default_rng(seed)
        i = rng.integers(0, n, n_pairs)
        j = (i + rng.integers(1, n, n_pairs)) % n        # j != i
    return misorientation_angles(quat[i], quat[j], sym)


def m_index(quat: np.ndarray, symmetry, n_pairs: int = M_INDEX_PAIRS, seed: int = 0) -> float:
    """M-index (Skemer et al. 2005) from uncorrelated misorientation angles, one orientation per grain."""
    measured = _histogram(uncorrelated_misorientations(quat, symmetry, n_pairs, seed))
    measured /= measured.sum()
    return float(0.5 * np.abs(measured - random_distribution(symmetry)).sum())


# --- per-phase summary ------------------------------------------------------------------------


def default_poles(mineral) -> list[str]:
    """Principal poles of a crystal system: directions [uvw] and plane normals (hkl)."""
    laue = mineral.symmetry.laue.name
    if laue == "mmm":
        return ["[100]", "[010]", "[001]"]
    if laue == "2/m":
        return ["[100]", "[010]", "(001)"]
    if laue in ("-3m", "-3", "6/m", "6/mmm"):
        return ["[001]", "[100]", "(100)"]
    if laue in ("m-3m", "m-3"):
        return ["[100]", "[110]", "[111]"]
    if laue in ("4/m", "4/mmm"):
        return ["[001]", "[100]", "[110]"]
    return ["[100]", "(010)", "(001)"]


@dataclass
class PhaseFabric:
    """Fabric of one phase: indices, and per pole the eigenanalysis and maximum density."""

    mineral: str
    n: int
    weighting: str
    halfwidth_deg: float
    j: float
    m: float
    poles: dict          # label -> {"pfJ", "max_mud", "max_direction", "eigen": eigen_analysis(...)}
    ba: float | None

    def as_summary(self) -> dict:
        def vec(v):
            v = np.where(v[2] > 0, -v, v)  # lower hemisphere, CONVENTIONS.md
            return [round(float(x), 6) for x in v]
        return {
            "J": round(self.j, 6), "M": round(self.m, 6),
            "pfJ": {k: round(p["pfJ"], 6) for k, p in self.poles.items()},
            "eigen": {k: [round(float(x), 6) for x in p["eigen"]["eigenvalues"]] for k, p in self.poles.items()},
            "eigenvectors": {k: [vec(v) for v in p["eigen"]["eigenvectors"]] for k, p in self.poles.items()},
            "woodcock": {k: {"K": _finite(p["eigen"]["woodcock_K"]), "C": round(p["eigen"]["woodcock_C"], 6)}
                         for k, p in self.poles.items()},
            "vollmer": {k: {x: round(p["eigen"][f"vollmer_{x}"], 6) for x in "PGR"} for k, p in self.poles.items()},
            "max_pole_density_mud": {k: round(p["max_mud"], 4) for k, p in self.poles.items()},
            "max_pole_direction": {k: vec(p["max_direction"]) for k, p in self.poles.items()},
            "BA": None if self.ba is None else round(self.ba, 6),
            "fabric_weighting": self.weighting, "odf_halfwidth_deg": self.halfwidth_deg,
        }


def _finite(x: float):
    return round(x, 6) if np.isfinite(x) else None


def phase_fabric(mineral, quat: np.ndarray, weights: np.ndarray, weighting: str, halfwidth_deg: float = 10.0,
                 poles: list[str] | None = None, seed: int = 0) -> PhaseFabric:
    """J, M, pfJ, eigenanalysis and, for olivine, the BA-index of one phase."""
    from fabric2seis.synth import crystal_direction

    labels = poles or default_poles(mineral)
    result = {}
    for label in labels:
        vectors = pole_vectors(quat, crystal_direction(mineral, label), mineral.symmetry)
        pfj, top, where = pf_j(vectors, weights, halfwidth_deg)
        result[label] = {"pfJ": pfj, "max_mud": top, "max_direction": where,
                         "eigen": eigen_analysis(orientation_tensor(vectors, weights))}
    ba = None
    if mineral.name == "olivine":
        e100 = result.get("[100]", {}).get("eigen") or eigen_analysis(orientation_tensor(
            pole_vectors(quat, crystal_direction(mineral, "[100]"), mineral.symmetry), weights))
        e010 = result.get("[010]", {}).get("eigen") or eigen_analysis(orientation_tensor(
            pole_vectors(quat, crystal_direction(mineral, "[010]"), mineral.symmetry), weights))
        ba = ba_index(e100, e010)
    return PhaseFabric(mineral=mineral.name, n=len(quat), weighting=weighting, halfwidth_deg=halfwidth_deg,
                       j=j_index(quat, weights, mineral.symmetry, halfwidth_deg),
                       m=m_index(quat, mineral.symmetry, seed=seed), poles=result, ba=ba)


def convergence(mineral, quat: np.ndarray, weights: np.ndarray, halfwidth_deg: float = 10.0,
                seed: int = 0, pole: str | None = None) -> dict:
    """J, M and the maximum pole density on nested random subsets of the grains.

    Subsets of 100, 200, 500, 1000, 2000, 5000 ... grains and all of them, each containing the
    previous. J has levelled off when the last step changed it by less than 5 percent (common
    practice for judging whether a sample has enough grains).
    """
    from fabric2seis.synth import crystal_direction

    n = len(quat)
    order = np.random.default_rng(seed).permutation(n)
    sizes = [s for s in (100, 200, 500, 1000, 2000, 5000, 10000, 20000, 50000) if s < n] + [n]
    pole = pole or default_poles(mineral)[0]
    direction = crystal_direction(mineral, pole)
    rows = []
    for size in sizes:
        sel = order[:size]
        vectors = pole_vectors(quat[sel], direction, mineral.symmetry)
        rows.append({"n": int(size), "J": j_index(quat[sel], weights[sel], mineral.symmetry, halfwidth_deg),
                     "M": m_index(quat[sel], mineral.symmetry, seed=seed) if size > 1 else float("nan"),
                     "max_mud": pf_j(vectors, weights[sel], halfwidth_deg)[1]})
    levelled = len(rows) > 1 and abs(rows[-1]["J"] - rows[-2]["J"]) < 0.05 * rows[-1]["J"]
    return {"pole": pole, "rows": rows, "j_levelled": bool(levelled)}


# --- the floor of a random set of the same size -----------------------------------------------

#: random orientation sets simulated for the floor of J, M and pfJ (their 2.5 and 97.5 percentiles
#: give the 95 % range)
RANDOM_FLOOR_SETS = 100
RANDOM_FLOOR_SEED = 20110611
#: larger sets are simulated at this size and scaled (see ``random_floor``)
RANDOM_FLOOR_MAX_GRAINS = 200
_RANDOM_FLOORS: dict = {}


@functools.lru_cache(maxsize=16)
def _pole_self_convolution_table(halfwidth_deg: float) -> tuple[np.ndarray, np.ndarray]:
    """Psi, the axial pole kernel convolved with itself on the sphere, against the angle (0 to 90 degrees).

    The axial kernel (Kp(t) + Kp(-t))/2 = sum_l (2l+1) a_l P_l(t) (even l) with
    a_l = (1/2) integral Kp P_l dt; then the mean over the sphere of Ka(u.p) Ka(u.q) is
    Psi(p.q) = sum_l (2l+1) a_l^2 P_l(p.q) (Funk-Hecke, common practice).
    """
    kernel = Kernel(halfwidth_deg)
    degree = int(12 * np.sqrt(kernel.kappa)) + 20
    t, wq = np.polynomial.legendre.leggauss(max(800, 4 * degree))
    values = kernel.pole_value(t) * wq / 2.0
    a = np.zeros(degree + 1)
    p_prev, p_cur = np.ones_like(t), t.copy()                  # Legendre recurrence (Bonnet)
    a[0] = values.sum()
    a[1] = (values * t).sum()
    for l in range(1, degree):
        p_prev, p_cur = p_cur, ((2 * l + 1) * t * p_cur - l * p_prev) / (l + 1)
        a[l + 1] = (values * p_cur).sum()
    a[1::2] = 0.0                                              # axial: odd degrees cancel
    angle = np.linspace(0.0, np.pi / 2, 4001)
    psi = np.polynomial.legendre.legval(np.cos(angle), (2 * np.arange(degree + 1) + 1) * a ** 2)
    return angle, psi


def pf_j_pairs(poles: np.ndarray, weights: np.ndarray, halfwidth_deg: float = 10.0) -> float:
    """pfJ as the pair sum sum_ij w_i w_j (1/m^2) sum_kk' Psi(p_ik . p_jk') over the poles (N, m, 3).

    The exact mean square of the pole density that ``pf_j`` takes on a grid of binned poles; the
    cost grows as (N m)^2, so it serves small sets (the random floors) and the tests.
    """
    angle, psi = _pole_self_convolution_table(float(halfwidth_deg))
    m = poles.shape[1]
    w = np.repeat(np.asarray(weights, dtype=float) / np.sum(weights) / m, m)
    p = poles.reshape(-1, 3)
    gram = np.arccos(np.clip(np.abs(p @ p.T), 0.0, 1.0))
    return float(w @ _on_uniform_table(gram, angle, psi) @ w)


def j_index_dense(quat: np.ndarray, weights: np.ndarray, symmetry, halfwidth_deg: float = 10.0) -> float:
    """J as the pair sum of ``j_index_pairs`` over every pair, no screening: for small sets (N^2 |S|)."""
    grid, phi, _, _ = _self_convolution_table(float(halfwidth_deg))
    q = np.asarray(quat, dtype=float)
    w = np.asarray(weights, dtype=float) / np.sum(weights)
    sym = proper_symmetry_quaternions(symmetry)
    total = 0.0
    for t in sym:
        c = np.clip(np.abs(q @ multiply(t[None], q).T), 0.0, 1.0)
        total += w @ _on_uniform_table(2.0 * np.arccos(c), grid, phi) @ w
    return float(total / len(sym))


def _on_uniform_table(x: np.ndarray, grid: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Linear interpolation in a table on an evenly spaced grid (np.interp without its search)."""
    step = grid[1] - grid[0]
    at = np.clip((x - grid[0]) / step, 0.0, len(grid) - 1.000001)
    i = at.astype(np.intp)
    frac = at - i
    return values[i] * (1.0 - frac) + values[i + 1] * frac


def _m_index_variance(n: int) -> float:
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


def random_floor(mineral, n: int, halfwidth_deg: float = 10.0, weights: np.ndarray | None = None,
                 poles: list[str] | None = None, n_sets: int = RANDOM_FLOOR_SETS,
                 max_grains: int = RANDOM_FLOOR_MAX_GRAINS) -> dict:
    """J, M and pfJ of random orientation sets of ``n`` grains: mean (the floor) and 95 % range.

    A random set does not give J = 1, pfJ = 1 and M = 0: the self-pair term of each grain adds
    (J_1 - 1) sum w_i^2 to J on average (J_1 the J of one grain, sum w_i = 1), and a histogram of a
    finite number of pairs departs from the random one. ``n_sets`` sets (fixed seed) are drawn:
    of ``n`` grains with the sample's ``weights`` when n <= ``max_grains``; otherwise of
    ``max_grains`` equal grains, scaled to n. J - 1 and pfJ - 1 of a random set are pair sums of a
    kernel of zero mean plus the self-pair term, so they scale as sum w_i^2 (1 / N for equal
    weights); M scales as the square root of the bin variance (``_m_index_variance``). J and pfJ
    are summed over all pairs (``j_index_dense``, ``pf_j_pairs``), M as ``m_index``. The result is
    cached in memory and in ``$XDG_CACHE_HOME/fabric2seis`` (default ``~/.cache/fabric2seis``).
    """
    import hashlib
    import json
    import os
    from pathlib import Path

    from fabric2seis.synth import crystal_direction

    n = int(n)
    w = np.ones(n) if weights is None else np.asarray(weights, dtype=float)
    if len(w) != n or n < 2:
        raise ValueError("random_floor needs n >= 2 and one weight per grain")
    labels = list(poles or default_poles(mineral))
    directions = np.array([crystal_direction(mineral, label) for label in labels])
    sym = np.ascontiguousarray(proper_symmetry_quaternions(mineral.symmetry))
    equal = bool(np.allclose(w, w[0]))
    n_sim = min(n, int(max_grains))
    w_sim = np.ones(n_sim) if (equal or n > n_sim) else w
    key = hashlib.sha256(sym.round(10).tobytes() + directions.round(10).tobytes()
                         + (b"" if equal or n > n_sim else (w / w.sum()).round(12).tobytes())
                         + f"floor-2-{n}-{n_sim}-{float(halfwidth_deg)}-{n_sets}-{RANDOM_FLOOR_SEED}-"
                           f"{M_INDEX_PAIRS}-{M_INDEX_BIN_DEG}-{labels}".encode()).hexdigest()[:24]
    if key in _RANDOM_FLOORS:
        return _RANDOM_FLOORS[key]
    folder = Path(os.environ.get("XDG_CACHE_HOME", Path.home() / ".cache")) / "fabric2seis"
    path = folder / f"random_floor_{key}.json"
    try:
        _RANDOM_FLOORS[key] = json.loads(path.read_text())
        return _RANDOM_FLOORS[key]
    except (OSError, ValueError):
        pass
    rng = np.random.default_rng(RANDOM_FLOOR_SEED)
    j = np.empty(n_sets)
    m = np.empty(n_sets)
    pfj = np.empty((len(labels), n_sets))
    for k in range(n_sets):
        q = _random_unit_quaternions(n_sim, rng)
        j[k] = j_index_dense(q, w_sim, mineral.symmetry, halfwidth_deg)
        m[k] = m_index(q, mineral.symmetry, seed=k)
        for p, h in enumerate(directions):
            pfj[p, k] = pf_j_pairs(pole_vectors(q, h, mineral.symmetry), w_sim, halfwidth_deg)
    if n > n_sim:
        self_weight = float((w ** 2).sum() / w.sum() ** 2)          # 1 / N_eff
        j = 1.0 + (j - 1.0) * self_weight * n_sim
        pfj = 1.0 + (pfj - 1.0) * self_weight * n_sim
        m = m * np.sqrt(_m_index_variance(n) / _m_index_variance(n_sim))

    def spread(values):
        return [round(float(x), 6) for x in np.percentile(values, [2.5, 97.5])]

    floor = {"J": round(float(j.mean()), 6), "J_95": spread(j),
             "M": round(float(m.mean()), 6), "M_95": spread(m),
             "pfJ": {label: round(float(v.mean()), 6) for label, v in zip(labels, pfj)},
             "pfJ_95": {label: spread(v) for label, v in zip(labels, pfj)},
             "random_sets": int(n_sets), "simulated_grains": int(n_sim)}
    _RANDOM_FLOORS[key] = floor
    try:
        folder.mkdir(parents=True, exist_ok=True)
        tmp = path.with_suffix(f".{os.getpid()}.tmp")
        tmp.write_text(json.dumps(floor))
        os.replace(tmp, path)
    except OSError:
        pass
    return floor


def indistinguishable_from_random(j: float, m: float, floor: dict) -> bool:
    """True when neither J nor M lies above the upper end of the random sets' 95 % range."""
    return bool(j <= floor["J_95"][1] and m <= floor["M_95"][1])
