"""Plane waves in an anisotropic elastic solid: the Christoffel equation and direction grids.

For a unit propagation direction n the Christoffel matrix is ``Gamma_ik = C_ijkl n_j n_l``;
``rho v^2 p = Gamma p`` gives three phase velocities with orthogonal polarisations p. The
largest root is Vp, the other two Vs1 > Vs2 (CONVENTIONS.md). Stiffness is in GPa, density in
kg m^-3 and velocities in km/s: ``v = sqrt(1e3 * lambda_gpa / rho_kg_m3)``.

All functions are vectorised over many directions.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from fabric2seis.elastic import voigt_to_tensor

__all__ = [
    "SPEEDS_NEAR_TOLERANCE", "NEAR_BLOCK", "PlaneWaves", "speeds_near", "christoffel_matrices",
    "plane_waves", "EIGEN_BLOCK", "group_velocities", "hemisphere_grid",
    "direction_from_angles", "to_lower_hemisphere",
]

#: km^2/s^2 per (GPa / (kg m^-3))
_GPA_PER_DENSITY_TO_KM2_S2 = 1.0e3
#: largest third-order error of speeds_near, relative to the roots (else it solves exactly)
SPEEDS_NEAR_TOLERANCE = 1e-8
#: tensors per block of speeds_near
NEAR_BLOCK = 16


@dataclass(frozen=True)
class PlaneWaves:
    """Christoffel solutions for M directions: phase velocities and polarisations.

    Attributes
    ----------
    directions
        Unit propagation directions (M, 3).
    vp_km_s, vs1_km_s, vs2_km_s
        Phase velocities (M,) in km/s, Vp > Vs1 >= Vs2.
    polarisations
        Unit polarisation vectors (M, 3, 3): ``[:, 0]`` of P, ``[:, 1]`` of S1 (fast shear wave),
        ``[:, 2]`` of S2. Their sign is arbitrary (axial vectors).
    """

    directions: np.ndarray
    vp_km_s: np.ndarray
    vs1_km_s: np.ndarray
    vs2_km_s: np.ndarray
    polarisations: np.ndarray

    @property
    def avs_pct(self) -> np.ndarray:
        """Shear-wave anisotropy 200 (Vs1 - Vs2) / (Vs1 + Vs2) per direction, in percent, shape (M,)."""
        return 200.0 * (self.vs1_km_s - self.vs2_km_s) / (self.vs1_km_s + self.vs2_km_s)


def _christoffel_components(c_voigt: np.ndarray, n: np.ndarray) -> np.ndarray:
    """The six independent components (M, 6) of Gamma, order 11 22 33 23 13 12.

    Each is a quadratic form in n: one (M, 6) @ (6, 6) product over the monomials
    nx^2, ny^2, nz^2, ny nz, nx nz, nx ny.
    """
    return _component_rows(c_voigt, n).T


def _component_rows(c_voigt: np.ndarray, n: np.ndarray) -> np.ndarray:
    """The same components as rows (6, M), the layout the closed-form solution reads."""
    x, y, z = n[:, 0], n[:, 1], n[:, 2]
    mono = np.stack([x * x, y * y, z * z, y * z, x * z, x * y])
    return _component_coefficients(c_voigt).T @ mono


_PAIRS = ((0, 0), (1, 1), (2, 2), (1, 2), (0, 2), (0, 1))


def _component_coefficients(c_voigt: np.ndarray) -> np.ndarray:
    """(6, 6) matrix taking the monomials of n to the six components of Gamma."""
    t = voigt_to_tensor(c_voigt)
    coeff = np.zeros((6, 6))
    for row, (j, l) in enumerate(_PAIRS):
        for col, (i, k) in enumerate(_PAIRS):
            coeff[row, col] = t[i, j, k, l] if j == l else t[i, j, k, l] + t[i, l, k, j]
    return coeff


def speeds_near(c_reference: np.ndarray, c_voigt: np.ndarray, density_kg_m3: float, directions: np.ndarray):
    """Compute Vp, Vs1, Vs2 of B stiffnesses close to ``c_reference``, by perturbation about it.

    With Gamma = Gamma_ref + D and e_1 (P), e_2, e_3 (S) the reference polarisations, the P root is
    lam_1 + D_11 + sum_s D_1s^2 / (lam_1 - lam_s), and the S roots are the eigenvalues of the 2x2
    block lam_s delta_ss' + D_ss' - D_s1 D_1s' / (lam_1 - lam_s) (second-order partitioning,
    common practice, e.g. Loewdin 1951): exact within the S plane, so near-degenerate S waves are
    handled, with an error of third order, about D_1s^2 |D| / gap^2 for the P-S gap. D is linear in the stiffness
    difference, so all B tensors take one matrix product. Entries whose third-order bound exceeds
    SPEEDS_NEAR_TOLERANCE of their root are solved exactly. The bootstrap uses this: resampled
    aggregates differ from the estimate by a small fraction.

    Parameters
    ----------
    c_reference : numpy.ndarray, shape (6, 6)
        Voigt stiffness the others are close to, GPa.
    c_voigt : numpy.ndarray, shape (B, 6, 6)
        Voigt stiffnesses to solve, GPa.
    density_kg_m3 : float
        Density, kg m^-3.
    directions : numpy.ndarray, shape (M, 3)
        Propagation directions (normalised here).

    Returns
    -------
    tuple of numpy.ndarray, each shape (B, M)
        Vp, Vs1 and Vs2, km/s.

    Raises
    ------
    ValueError
        If a direction is zero or not finite.

    References
    ----------
    Loewdin, P.-O. (1951). A note on the quantum-mechanical perturbation theory. J. Chem. Phys. 19,
    1396-1401 (the partitioning used for the shear block).
    """
    n = _unit(directions)
    reference = _christoffel_components(c_reference, n)                           # (M, 6)
    lam, vec = _eigen_from_components(reference)                                  # (M, 3), (M, 3, 3)
    pairs = ((0, 0), (1, 1), (2, 2), (0, 1), (0, 2), (1, 2))
    # (M, 6 components, 6 pairs): u^T G v from the components 11 22 33 23 13 12 of G
    u, v = vec[:, [a for a, _ in pairs]], vec[:, [b for _, b in pairs]]
    project = np.stack([u[..., 0] * v[..., 0], u[..., 1] * v[..., 1], u[..., 2] * v[..., 2],
                        u[..., 1] * v[..., 2] + u[..., 2] * v[..., 1], u[..., 0] * v[..., 2] + u[..., 2] * v[..., 0],
                        u[..., 0] * v[..., 1] + u[..., 1] * v[..., 0]], axis=1)
    # linear maps from the 36 Voigt entries of the difference to the (M, 6) components of D and
    # to its (6 pairs, M) projections on the reference polarisations
    basis = np.stack([_christoffel_components(np.eye(36)[k].reshape(6, 6), n) for k in range(36)])
    gamma_map = basis.reshape(36, len(n), 6)                                         # (36, M, 6)
    pair_map = np.einsum("kmc,mcp->kpm", gamma_map, project).reshape(36, -1)         # (36, 6 M)
    many = np.asarray(c_voigt, dtype=float)
    diff = (many - np.asarray(c_reference)[None]).reshape(len(many), 36)
    gap1, gap2 = lam[:, 0] - lam[:, 1], lam[:, 0] - lam[:, 2]
    values = np.empty((len(many), len(n), 3))
    for start in range(0, len(many), NEAR_BLOCK):        # blocks of tensors, for the cache
        part = slice(start, start + NEAR_BLOCK)
        d00, d11, d22, d01, d02, d12 = (diff[part] @ pair_map).reshape(-1, 6, len(n)).transpose(1, 0, 2)
        s11 = lam[:, 1] + d11 - d01 ** 2 / gap1
        s22 = lam[:, 2] + d22 - d02 ** 2 / gap2
        s12 = d12 - d01 * d02 * 2.0 / (gap1 + gap2)
        mean, half = (s11 + s22) / 2.0, np.sqrt(((s11 - s22) / 2.0) ** 2 + s12 ** 2)
        block = values[part]
        block[..., 0] = lam[:, 0] + d00 + d01 ** 2 / gap1 + d02 ** 2 / gap2
        block[..., 1], block[..., 2] = mean + half, mean - half
        coupling = np.maximum(np.abs(d01), np.abs(d02))
        size = np.maximum.reduce([coupling, np.abs(d00), np.abs(d11), np.abs(d22), np.abs(d12)])
        redo = ~(coupling ** 2 * size / np.minimum(gap1, gap2) ** 2 <= SPEEDS_NEAR_TOLERANCE * np.abs(mean - half))
        if np.any(redo):           # the full Christoffel components of those entries, solved exactly
            g = (diff[part] @ gamma_map.reshape(36, -1)).reshape(-1, len(n), 6)
            exact, _ = _eigen_from_components((reference[None] + g)[redo])
            block[redo] = exact
    v = np.sqrt(np.clip(values, 0.0, None) * _GPA_PER_DENSITY_TO_KM2_S2 / density_kg_m3)
    return v[..., 0], v[..., 1], v[..., 2]


def christoffel_matrices(c_voigt: np.ndarray, directions: np.ndarray) -> np.ndarray:
    """Build the Christoffel matrices ``Gamma_ik = C_ijkl n_j n_l`` for many directions.

    Parameters
    ----------
    c_voigt : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa.
    directions : numpy.ndarray, shape (M, 3) or (3,)
        Propagation directions (normalised here).

    Returns
    -------
    numpy.ndarray, shape (M, 3, 3)
        Symmetric Christoffel matrices, GPa.

    Raises
    ------
    ValueError
        If a direction is zero or not finite.
    """
    g = _christoffel_components(c_voigt, _unit(directions))
    full = np.empty((len(g), 3, 3))
    for col, (i, k) in enumerate(((0, 0), (1, 1), (2, 2), (1, 2), (0, 2), (0, 1))):
        full[:, i, k] = full[:, k, i] = g[:, col]
    return full


def plane_waves(c_voigt: np.ndarray, density_kg_m3: float, directions: np.ndarray) -> PlaneWaves:
    """Solve the Christoffel equation for phase velocities and polarisations in every direction.

    Parameters
    ----------
    c_voigt : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa.
    density_kg_m3 : float
        Density, kg m^-3.
    directions : numpy.ndarray, shape (M, 3) or (3,)
        Propagation directions (normalised here).

    Returns
    -------
    PlaneWaves
        Unit directions (M, 3), Vp, Vs1, Vs2 (M,) in km/s and polarisations (M, 3, 3).

    Raises
    ------
    ValueError
        If a direction is zero or not finite, or the density is not positive.
    """
    n = _unit(directions)
    if not density_kg_m3 > 0:
        raise ValueError(f"density must be positive, got {density_kg_m3}")
    eigval, pol = _eigen_from_rows(_component_rows(c_voigt, n))
    v = np.sqrt(np.clip(eigval, 0.0, None) * _GPA_PER_DENSITY_TO_KM2_S2 / density_kg_m3)
    return PlaneWaves(n, v[:, 0], v[:, 1], v[:, 2], pol)


#: directions per block of the closed-form solution: its ~50 temporaries then stay in cache
EIGEN_BLOCK = 4096


def _eigen_from_components(g: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Eigenvalues ordered P, S1, S2 and unit eigenvectors of Christoffel matrices given by their six
    components (M, 6), in blocks of EIGEN_BLOCK directions.

    Vectorised closed form, accurate where the shear waves are nearly degenerate: the P root
    (always separated from the shear roots in a stable solid) from the trigonometric solution of
    the characteristic cubic (Smith 1961), its vector from cross products of the rows of
    Gamma - lambda_P I and its value refined as the Rayleigh quotient; then the two shear roots
    from the 2x2 matrix of Gamma in the plane normal to the P polarisation, whose discriminant is a
    sum of squares and loses no accuracy when the roots meet (shear-wave singularities).

    The results are filled component by component (contiguous rows) and returned as transposed
    views, values (M, 3) and vectors (M, 3, 3), row k of vectors[m] the polarisation of root k.
    """
    return _eigen_from_rows(np.ascontiguousarray(np.asarray(g, dtype=float).T))


def _eigen_from_rows(rows: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``_eigen_from_components`` on components given as rows (6, M)."""
    g = rows.T
    values, vectors = np.empty((3, rows.shape[1])), np.empty((3, 3, rows.shape[1]))
    for start in range(0, rows.shape[1], EIGEN_BLOCK):
        part = slice(start, start + EIGEN_BLOCK)
        _eigen_block(rows[:, part], values[:, part], vectors[:, :, part])
    values, vectors = values.T, vectors.transpose(2, 0, 1)
    bad = ~(values[:, 0] > values[:, 1])  # P not separated (not a stable solid): general solver
    if np.any(bad):
        full = np.empty((int(bad.sum()), 3, 3))
        for col, (i, k) in enumerate(((0, 0), (1, 1), (2, 2), (1, 2), (0, 2), (0, 1))):
            full[:, i, k] = full[:, k, i] = g[bad, col]
        ev, evec = np.linalg.eigh(full)
        values[bad] = ev[:, ::-1]
        vectors[bad] = np.swapaxes(evec[:, :, ::-1], 1, 2)
    return values, vectors


def _eigen_block(g: np.ndarray, values: np.ndarray, vectors: np.ndarray) -> None:
    """The closed form on one block of components g (6, m), every step a plain array operation,
    written into values (3, m) and vectors (3, 3, m)."""
    a00, a11, a22, a12, a02, a01 = g
    q = (a00 + a11 + a22) / 3.0
    b00, b11, b22 = a00 - q, a11 - q, a22 - q
    p = np.sqrt(np.maximum((b00 ** 2 + b11 ** 2 + b22 ** 2 + 2 * (a01 ** 2 + a02 ** 2 + a12 ** 2)) / 6.0, 1e-300))
    det = (b00 * (b11 * b22 - a12 ** 2) - a01 * (a01 * b22 - a12 * a02) + a02 * (a01 * a12 - b11 * a02))
    r = np.clip(det / (2.0 * p ** 3), -1.0, 1.0)
    lam = q + 2.0 * p * np.cos(np.arccos(r) / 3.0)
    # Gamma - lam I has rank 2: its adjugate is (a multiple of) p p^T, so the P vector is the
    # column of the adjugate with the largest diagonal cofactor (the cross products of its rows)
    d0, d1, d2 = a00 - lam, a11 - lam, a22 - lam
    c00, c11, c22 = d1 * d2 - a12 * a12, d0 * d2 - a02 * a02, d0 * d1 - a01 * a01
    c01, c02, c12 = a02 * a12 - a01 * d2, a01 * a12 - a02 * d1, a01 * a02 - d0 * a12
    e00, e11, e22 = np.abs(c00), np.abs(c11), np.abs(c22)
    use0 = (e00 >= e11) & (e00 >= e22)
    use1 = ~use0 & (e11 >= e22)
    px = np.where(use0, c00, np.where(use1, c01, c02))
    py = np.where(use0, c01, np.where(use1, c11, c12))
    pz = np.where(use0, c02, np.where(use1, c12, c22))
    norm = np.sqrt(px * px + py * py + pz * pz)
    px, py, pz = px / norm, py / norm, pz / norm

    lam_p = lam          # the largest root: the trigonometric form is well conditioned there
    # u1: the P vector crossed with the coordinate axis it is least aligned with
    ax, ay, az = np.abs(px), np.abs(py), np.abs(pz)
    hx = ((ax <= ay) & (ax <= az)).astype(float)
    hy = ((ay < ax) & (ay <= az)).astype(float)
    hz = 1.0 - hx - hy
    ux, uy, uz = py * hz - pz * hy, pz * hx - px * hz, px * hy - py * hx
    norm = np.sqrt(ux ** 2 + uy ** 2 + uz ** 2)
    ux, uy, uz = ux / norm, uy / norm, uz / norm
    wx, wy, wz = py * uz - pz * uy, pz * ux - px * uz, px * uy - py * ux
    # the S block in the (u, w) plane: Gamma u once; m22 from the trace, which the P root leaves
    gx, gy, gz = a00 * ux + a01 * uy + a02 * uz, a01 * ux + a11 * uy + a12 * uz, a02 * ux + a12 * uy + a22 * uz
    m11 = ux * gx + uy * gy + uz * gz
    m12 = wx * gx + wy * gy + wz * gz
    m22 = 3.0 * q - lam_p - m11
    diff = (m11 - m22) / 2.0
    mean, half = (m11 + m22) / 2.0, np.sqrt(diff * diff + m12 * m12)
    # rotation angle theta of the S1 vector in the (u, w) plane from cos 2theta and sin 2theta
    safe = np.where(half > 0, half, 1.0)
    cos2 = np.where(half > 0, diff / safe, 1.0)
    c = np.sqrt(np.maximum((1.0 + cos2) / 2.0, 0.0))
    s = np.copysign(np.sqrt(np.maximum((1.0 - cos2) / 2.0, 0.0)), m12)
    values[0], values[1], values[2] = lam_p, mean + half, mean - half
    vectors[0, 0], vectors[0, 1], vectors[0, 2] = px, py, pz
    vectors[1, 0], vectors[1, 1], vectors[1, 2] = c * ux + s * wx, c * uy + s * wy, c * uz + s * wz
    vectors[2, 0], vectors[2, 1], vectors[2, 2] = c * wx - s * ux, c * wy - s * uy, c * wz - s * uz


def group_velocities(c_voigt: np.ndarray, density_kg_m3: float, waves: PlaneWaves) -> np.ndarray:
    """Compute the group (energy) velocity vectors of the P, S1 and S2 waves.

    ``V_i = C_ijkl p_j p_k n_l / (rho v)`` for unit polarisation p (Auld 1973); its component
    along n equals the phase velocity.

    Parameters
    ----------
    c_voigt : numpy.ndarray, shape (6, 6)
        Voigt stiffness the plane waves were solved for, GPa.
    density_kg_m3 : float
        Density, kg m^-3.
    waves : PlaneWaves
        Christoffel solutions for M directions (:func:`plane_waves`).

    Returns
    -------
    numpy.ndarray, shape (M, 3, 3)
        Group velocity vectors in km/s; ``[:, k]`` is that of wave k (P, S1, S2).

    References
    ----------
    Auld, B. A. (1973). Acoustic Fields and Waves in Solids, vol. 1. Wiley, New York.
    """
    t = voigt_to_tensor(c_voigt)
    v = np.stack([waves.vp_km_s, waves.vs1_km_s, waves.vs2_km_s], axis=1)  # (M, 3)
    p = waves.polarisations  # (M, wave, 3)
    n = waves.directions
    num = np.einsum("ijkl,mwj,mwk,ml->mwi", t, p, p, n, optimize=True)
    return num * _GPA_PER_DENSITY_TO_KM2_S2 / (density_kg_m3 * v[:, :, None])


def hemisphere_grid(step_deg: float = 1.0) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Directions over the lower hemisphere (z <= 0) spaced about ``step_deg`` apart.

    Rings of constant plunge from 0 (horizontal) to 90 degrees (straight down, -z) every
    ``step_deg``; on each ring the azimuth step is widened by 1 / cos(plunge) so that points stay
    about ``step_deg`` apart (a near-uniform grid, not a longitude-latitude one). Azimuth is
    measured from +x towards +y. The horizontal ring runs all the way round (0 to 360 degrees)
    although n and -n are the same direction, so that plotted rings close.

    Parameters
    ----------
    step_deg : float
        Spacing of the rings and of the points on them, degrees, in (0, 45].

    Returns
    -------
    directions : numpy.ndarray, shape (M, 3)
        Unit vectors with z <= 0.
    azimuth_deg : numpy.ndarray, shape (M,)
        Azimuth from +x towards +y, degrees.
    plunge_deg : numpy.ndarray, shape (M,)
        Plunge below the horizontal, degrees.

    Raises
    ------
    ValueError
        If ``step_deg`` is not in (0, 45].
    """
    if not 0 < step_deg <= 45:
        raise ValueError(f"step_deg must lie in (0, 45], got {step_deg}")
    plunges = np.arange(0.0, 90.0 + 1e-9, step_deg)
    if plunges[-1] < 90.0 - 1e-9:
        plunges = np.append(plunges, 90.0)
    az_list, pl_list = [], []
    for pl in plunges:
        count = max(1, int(round(360.0 * np.cos(np.radians(pl)) / step_deg)))
        az = np.arange(count) * (360.0 / count)
        az_list.append(az)
        pl_list.append(np.full(count, pl))
    az = np.concatenate(az_list)
    pl = np.concatenate(pl_list)
    return direction_from_angles(az, pl), az, pl


def direction_from_angles(azimuth_deg: np.ndarray, plunge_deg: np.ndarray) -> np.ndarray:
    """Build unit vectors from azimuth (from +x towards +y) and downward plunge (towards -z).

    Parameters
    ----------
    azimuth_deg : array_like, shape (...)
        Azimuth, degrees.
    plunge_deg : array_like, shape (...)
        Plunge below the x-y plane, degrees (broadcast against ``azimuth_deg``).

    Returns
    -------
    numpy.ndarray, shape (..., 3)
        Unit vectors.
    """
    a = np.radians(np.asarray(azimuth_deg, dtype=float))
    p = np.radians(np.asarray(plunge_deg, dtype=float))
    return np.stack([np.cos(p) * np.cos(a), np.cos(p) * np.sin(a), -np.sin(p)], axis=-1)


def to_lower_hemisphere(v: np.ndarray) -> np.ndarray:
    """Flip axial vectors so that z <= 0 (CONVENTIONS.md).

    Parameters
    ----------
    v : array_like, shape (..., 3)
        Vectors standing for axes (their sign carries no meaning).

    Returns
    -------
    numpy.ndarray, shape (..., 3)
        ``v`` with those of positive z negated.
    """
    v = np.asarray(v, dtype=float)
    return np.where(v[..., 2:3] > 0, -v, v)


def _unit(v: np.ndarray) -> np.ndarray:
    v = np.atleast_2d(np.asarray(v, dtype=float))
    norm = np.sqrt(np.einsum("...i,...i->...", v, v))[..., None]
    smallest = norm.min() if norm.size else 1.0
    if not (smallest > 0 and np.isfinite(norm).all()):
        raise ValueError("directions must be finite, non-zero vectors")
    return v / norm
