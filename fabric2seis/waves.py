"""Plane waves in an anisotropic elastic solid: the Christoffel equation and direction grids.

For a unit propagation direction n the Christoffel matrix is ``Gamma_ik = C_ijkl n_j n_l``;
``rho v^2 p = Gamma p`` gives three phase velocities with orthogonal polarisations p. The
largest root is Vp, the other two Vs1 > Vs2 (CONVENTIONS.md). Stiffness is in GPa, density in
kg/m^3 and velocities in km/s: ``v = sqrt(1e3 * lambda_gpa / rho_kg_m3)``.

All functions are vectorised over many directions.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from fabric2seis.elastic import voigt_to_tensor

#: km^2/s^2 per (GPa / (kg/m^3))
_GPA_PER_DENSITY_TO_KM2_S2 = 1.0e3


@dataclass(frozen=True)
class PlaneWaves:
    """Christoffel solutions for M directions.

    Attributes
    ----------
    directions
        Unit propagation directions (M, 3).
    vp_km_s, vs1_km_s, vs2_km_s
        Phase velocities (M,), Vp > Vs1 >= Vs2.
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
        """Shear-wave anisotropy 200 (Vs1 - Vs2) / (Vs1 + Vs2) per direction, in percent."""
        return 200.0 * (self.vs1_km_s - self.vs2_km_s) / (self.vs1_km_s + self.vs2_km_s)


def christoffel_matrices(c_voigt: np.ndarray, directions: np.ndarray) -> np.ndarray:
    """Christoffel matrices ``Gamma_ik = C_ijkl n_j n_l`` (M, 3, 3) in GPa."""
    n = _unit(directions)
    t = voigt_to_tensor(c_voigt)
    # Gamma[m, i, k] = sum_jl T[i, j, k, l] n_j n_l, done as one (M, 9) @ (9, 9) product
    nn = (n[:, :, None] * n[:, None, :]).reshape(-1, 9)
    return (nn @ t.transpose(1, 3, 0, 2).reshape(9, 9)).reshape(-1, 3, 3)


def plane_waves(c_voigt: np.ndarray, density_kg_m3: float, directions: np.ndarray) -> PlaneWaves:
    """Phase velocities and polarisations for every direction (vectorised Christoffel solution)."""
    n = _unit(directions)
    if not density_kg_m3 > 0:
        raise ValueError(f"density must be positive, got {density_kg_m3}")
    gamma = christoffel_matrices(c_voigt, n)
    eigval, eigvec = np.linalg.eigh(gamma)  # ascending: S2, S1, P
    v = np.sqrt(np.clip(eigval, 0.0, None) * _GPA_PER_DENSITY_TO_KM2_S2 / density_kg_m3)
    pol = np.swapaxes(eigvec[:, :, ::-1], 1, 2)  # rows: P, S1, S2
    return PlaneWaves(n, v[:, 2], v[:, 1], v[:, 0], pol)


def group_velocities(c_voigt: np.ndarray, density_kg_m3: float, waves: PlaneWaves) -> np.ndarray:
    """Group (energy) velocity vectors (M, 3, 3) in km/s of the P, S1 and S2 waves.

    ``V_i = C_ijkl p_j p_k n_l / (rho v)`` for unit polarisation p (Auld 1973); its component
    along n equals the phase velocity.
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

    Returns
    -------
    directions (M, 3), azimuth_deg (M,), plunge_deg (M,)
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
    """Unit vectors from azimuth (from +x towards +y) and downward plunge (towards -z), degrees."""
    a = np.radians(np.asarray(azimuth_deg, dtype=float))
    p = np.radians(np.asarray(plunge_deg, dtype=float))
    return np.stack([np.cos(p) * np.cos(a), np.cos(p) * np.sin(a), -np.sin(p)], axis=-1)


def to_lower_hemisphere(v: np.ndarray) -> np.ndarray:
    """Axial vectors flipped so that z <= 0 (CONVENTIONS.md)."""
    v = np.asarray(v, dtype=float)
    return np.where(v[..., 2:3] > 0, -v, v)


def _unit(v: np.ndarray) -> np.ndarray:
    v = np.atleast_2d(np.asarray(v, dtype=float))
    norm = np.linalg.norm(v, axis=-1, keepdims=True)
    if np.any(norm == 0) or not np.all(np.isfinite(norm)):
        raise ValueError("directions must be finite, non-zero vectors")
    return v / norm
