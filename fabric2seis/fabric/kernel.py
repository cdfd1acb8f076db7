"""The de la Vallee Poussin kernel, its coefficients and self-convolutions, and the kernel ODF.

The orientation density (ODF) is estimated in multiples of a uniform distribution (m.u.d.) as

    f(g) = sum_i w_i (1/|S|) sum_{s in S} K(g^-1 s g_i),     sum_i w_i = 1,

with the de la Vallee Poussin kernel K(w) = C cos^(2 kappa)(w/2) of rotation angle w, whose
halfwidth (K(h) = K(0)/2) sets kappa, normalised to integrate to 1 over SO(3) (Schaeben 1997);
S are the proper rotations of the crystal's point group.

K expands in the characters of SO(3), K = sum_l (2l+1) k_l chi_l, and its self-convolution
Phi = K * K = sum_l (2l+1) k_l^2 chi_l is the integral over g of K(g^-1 a) K(g^-1 b), a function of
the angle between a and b: the J-index is a sum of Phi over pairs of grains, or the series of the
k_l^2 (``fabric.texture_index``). The kernel's image on a pole figure, (1 + kappa) ((1 + cos a)/2)^kappa
(Schaeben 1997), smooths pole densities; its self-convolution on the sphere Psi serves pfJ as a
pair sum (``fabric.poles.pf_j_pairs``).

References
----------
Schaeben, H. (1997). A simple standard orientation density function: the hyperspherical de la
Vallee Poussin kernel. Physica Status Solidi (b) 200, 367-376 (details from memory).
Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np
from scipy.special import betaln

from fabric2seis.fabric.checks import check_halfwidth, check_quaternions, check_weights
from fabric2seis.orientations import multiply, proper_symmetry_quaternions

#: bound on the part of the J-index series left out (J >= 1), which fixes the last degree of the k_l
J_SERIES_TOLERANCE = 1e-7
#: the ODF sums grains where K exceeds this fraction of K(0)
ODF_SUPPORT = 1e-10


@dataclass(frozen=True)
class Kernel:
    """de la Vallee Poussin kernel of a halfwidth, and its pole-figure image.

    Parameters
    ----------
    halfwidth_deg : float
        Angle (degrees, strictly between 0 and 180) at which the kernel has fallen to half its peak.

    References
    ----------
    Schaeben, H. (1997). Physica Status Solidi (b) 200, 367-376.
    """

    halfwidth_deg: float

    def __post_init__(self):
        check_halfwidth(self.halfwidth_deg)

    @property
    def kappa(self) -> float:
        """The exponent: K(w) is proportional to cos^(2 kappa)(w/2), with cos^(2 kappa)(h/2) = 1/2."""
        return np.log(0.5) / (2.0 * np.log(np.cos(np.radians(self.halfwidth_deg) / 2.0)))

    @property
    def norm(self) -> float:
        """C with integral of C cos^(2 kappa)(w/2) over SO(3) equal to 1: pi / (2 B(kappa + 1/2, 3/2))."""
        return np.pi / (2.0 * np.exp(betaln(self.kappa + 0.5, 1.5)))

    def value(self, angle_rad: np.ndarray) -> np.ndarray:
        """K at rotation angles (rad), in m.u.d. (integral 1 over SO(3) of Haar measure 1)."""
        return self.norm * np.cos(np.asarray(angle_rad) / 2.0) ** (2.0 * self.kappa)

    def pole_value(self, cos_angle: np.ndarray) -> np.ndarray:
        """Pole-figure kernel (1 + kappa) ((1 + cos a)/2)^kappa at cosines of angles; uniform = 1 on the sphere."""
        return (1.0 + self.kappa) * ((1.0 + np.asarray(cos_angle)) / 2.0) ** self.kappa


@functools.lru_cache(maxsize=16)
def self_convolution_table(halfwidth_deg: float) -> tuple[np.ndarray, np.ndarray, float, np.ndarray]:
    """Phi = K * K tabulated on [0, pi], the angle beyond which it is negligible, and the k_l.

    K = sum_l (2l+1) k_l chi_l with chi_l(w) = sin((2l+1) w/2) / sin(w/2) the characters of SO(3)
    and k_l = (1/(2l+1)) integral K chi_l dg; then K * K = sum_l (2l+1) k_l^2 chi_l.

    Parameters
    ----------
    halfwidth_deg : float
        Kernel halfwidth (degrees). Pass a float: the table is cached by this value.

    Returns
    -------
    grid : numpy.ndarray
        Angles (4001,), rad, evenly spaced on [0, pi].
    phi : numpy.ndarray
        Phi (4001,) at those angles (m.u.d. of a density on SO(3)).
    cutoff : float
        Angle (rad) beyond which Phi stays below 1e-8 of its peak.
    k_l : numpy.ndarray
        Character coefficients (L,) of K, l = 0 .. L-1 (k_0 = 1).
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
    """Phi = K * K at rotation angles (rad), interpolated in ``self_convolution_table``.

    Parameters
    ----------
    halfwidth_deg : float
        Kernel halfwidth (degrees).
    angle_rad : numpy.ndarray
        Rotation angles (any shape), rad, in [0, pi].

    Returns
    -------
    numpy.ndarray
        Phi, same shape as ``angle_rad``.
    """
    check_halfwidth(halfwidth_deg)
    grid, phi, _, _ = self_convolution_table(float(halfwidth_deg))
    return np.interp(angle_rad, grid, phi)


@functools.lru_cache(maxsize=16)
def kernel_coefficients(halfwidth_deg: float) -> np.ndarray:
    """k_l, l = 0..L, with L the last degree whose remaining J series exceeds J_SERIES_TOLERANCE.

    The terms left out of the J-index series are bounded by sum (2l+1)^2 k_l^2 (see
    ``fabric.texture_index.j_index_harmonics``). Pass a float halfwidth (degrees): the result is cached.
    """
    _, _, _, k_l = self_convolution_table(halfwidth_deg)
    term = (2 * np.arange(len(k_l)) + 1) ** 2 * k_l ** 2
    tail = np.cumsum(term[::-1])[::-1]
    return k_l[:int(np.flatnonzero(tail > J_SERIES_TOLERANCE)[-1]) + 1]


#: points of the table of Phi against cos(angle/2) on its support (``self_convolution_by_cos_half``)
COS_HALF_TABLE_POINTS = 16385


@functools.lru_cache(maxsize=16)
def self_convolution_by_cos_half(halfwidth_deg: float) -> tuple[float, float, np.ndarray]:
    """Phi on an evenly spaced grid of c = cos(angle/2) over its support, for pair sums.

    Pair sums compare the support's edge with |q_i . q_j|, the cosine of half the angle between
    two unit quaternions, and look Phi up there. Phi is a polynomial in c (each character
    chi_l is the Chebyshev polynomial U_2l(c)), smooth on the grid: the table is summed from
    the series at every grid point, and linear interpolation on it (``phi_by_cos_half``) needs
    no search. The edge leaves out 1e-5 of Phi's mass. With ``COS_HALF_TABLE_POINTS`` points
    the interpolation error is about 1e-7 of Phi's peak, whatever the halfwidth (the support
    in c and Phi's curvature in c scale together). Pass a float halfwidth (degrees): cached.

    Returns
    -------
    edge : float
        cos(angle/2) of the support's edge; Phi is taken as 0 below it.
    step : float
        Spacing of the grid in c.
    values : numpy.ndarray
        Phi (COS_HALF_TABLE_POINTS,) at c = edge + k step, k = 0, 1, ...; c = 1 last.
    """
    grid, phi, _, k_l = self_convolution_table(halfwidth_deg)
    density = phi * (2.0 / np.pi) * np.sin(grid / 2.0) ** 2
    mass = np.cumsum(density) * (grid[1] - grid[0])
    edge = float(np.cos(grid[np.argmax(mass > 1.0 - 1e-5)] / 2.0))
    c = np.linspace(edge, 1.0, COS_HALF_TABLE_POINTS)
    half = np.arccos(np.minimum(c, 1.0))
    l = np.arange(len(k_l))[:, None]
    safe = np.maximum(np.sin(half), 1e-300)
    chi = np.where(np.sin(half) > 1e-12, np.sin((2 * l + 1) * half) / safe, 2 * l + 1.0)
    values = np.maximum(((2 * np.arange(len(k_l)) + 1) * k_l ** 2) @ chi, 0.0)
    return edge, (1.0 - edge) / (COS_HALF_TABLE_POINTS - 1), values


def phi_by_cos_half(c: np.ndarray, table: tuple[float, float, np.ndarray]) -> np.ndarray:
    """Phi at c = cos(angle/2) >= the table's edge, by linear interpolation in ``self_convolution_by_cos_half``.

    Parameters
    ----------
    c : numpy.ndarray
        |q_i . q_j| (any shape), each at least the table's edge (select them first).
    table : tuple
        ``self_convolution_by_cos_half(halfwidth_deg)``.

    Returns
    -------
    numpy.ndarray
        Phi, same shape as ``c``.
    """
    edge, step, values = table
    x = (np.asarray(c, dtype=float) - edge) * (1.0 / step)
    i = np.clip(x.astype(np.intp), 0, len(values) - 2)
    x -= i
    return values[i] + x * (values[i + 1] - values[i])


@functools.lru_cache(maxsize=16)
def pole_self_convolution_table(halfwidth_deg: float) -> tuple[np.ndarray, np.ndarray]:
    """Psi, the axial pole kernel convolved with itself on the sphere, against the angle (0 to 90 degrees).

    The axial kernel (Kp(t) + Kp(-t))/2 = sum_l (2l+1) a_l P_l(t) (even l) with
    a_l = (1/2) integral Kp P_l dt; then the mean over the sphere of Ka(u.p) Ka(u.q) is
    Psi(p.q) = sum_l (2l+1) a_l^2 P_l(p.q) (Funk-Hecke, common practice).

    Returns
    -------
    angle : numpy.ndarray
        Angles (4001,), rad, evenly spaced on [0, pi/2].
    psi : numpy.ndarray
        Psi (4001,) at those angles (m.u.d.^2 averaged over the sphere).
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


def interpolate_on_uniform_grid(x: np.ndarray, grid: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Linear interpolation in a table on an evenly spaced grid (np.interp without its search)."""
    step = grid[1] - grid[0]
    at = np.clip((x - grid[0]) / step, 0.0, len(grid) - 1.000001)
    i = at.astype(np.intp)
    frac = at - i
    return values[i] * (1.0 - frac) + values[i + 1] * frac


def odf_values(quat_at: np.ndarray, quat: np.ndarray, weights: np.ndarray, symmetry,
               halfwidth_deg: float = 10.0) -> np.ndarray:
    """The kernel ODF estimate f at orientations ``quat_at``.

    Only grains within the kernel's support (where K has fallen below ODF_SUPPORT of its peak)
    are summed: the symmetry equivalents of all grains, with both signs of each quaternion, go
    into one k-d tree and each point gathers its neighbours within the chord distance of the
    support angle (the kernel is a function of |q_at . t q_i| = cos(angle/2) alone).

    Parameters
    ----------
    quat_at : numpy.ndarray
        Unit quaternions (M, 4) at which f is evaluated (orix's convention).
    quat : numpy.ndarray
        Unit quaternions (N, 4) of the grains.
    weights : numpy.ndarray
        Weights (N,), non-negative with a positive sum (normalised here).
    symmetry : orix.quaternion.Symmetry
        Point group of the crystal; its proper rotations S enter the sum.
    halfwidth_deg : float
        Kernel halfwidth (degrees).

    Returns
    -------
    numpy.ndarray
        f (M,) in multiples of a uniform distribution (m.u.d.).

    References
    ----------
    Schaeben, H. (1997). Physica Status Solidi (b) 200, 367-376.
    """
    check_quaternions(quat_at, "quat_at", at_least=0)
    check_quaternions(quat)
    check_weights(weights, len(quat))
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
    from scipy.spatial import cKDTree  # here: a second to import, and no run's stage needs it

    tree = cKDTree(points)
    for start in range(0, len(at), 20_000):
        block = at[start:start + 20_000]
        near = cKDTree(block).sparse_distance_matrix(tree, radius, output_type="coo_matrix")
        c = 1.0 - near.data ** 2 / 2.0                          # |q - p|^2 = 2 - 2 q.p
        out[start:start + len(block)] = np.bincount(
            near.row, weights=w[owner[near.col]] * kernel.norm * np.clip(c, 0, 1) ** (2.0 * kernel.kappa),
            minlength=len(block))
    return out / len(sym)
