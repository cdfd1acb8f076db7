"""Seismic properties of an aggregate: its elastic tensor, velocities in every direction, and
splitting of a shear wave travelling along the foliation normal.

All outputs are in the structural frame (X lineation, Y, Z foliation normal), stiffness in GPa,
density kg/m^3, velocities km/s, anisotropy in percent (CONVENTIONS.md for the definitions of
AVp, AVs and dVs).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from fabric2seis import elastic, waves
from fabric2seis.orientations import to_matrices


@dataclass
class Aggregate:
    """The four averages of a rock (6x6 Voigt, GPa, structural frame) and its density.

    ``crystal_tensors``: the single-crystal stiffness of each mineral at the conditions (Voigt,
    crystal frame); ``crystal_matrices``: its Kelvin stiffness, compliance and logarithm as the
    averages used them (twin variants included), for the bootstrap; ``twins``: the twin laws
    applied, by mineral.
    """

    tensors: dict[str, np.ndarray]
    density_kg_m3: float
    average: str
    crystal_tensors: dict[str, np.ndarray] | None = None
    crystal_matrices: dict[str, dict[str, np.ndarray]] | None = None
    twins: dict[str, list[str]] | None = None

    @property
    def stiffness(self) -> np.ndarray:
        """The average chosen to feed the seismic outputs."""
        return self.tensors[self.average]


def mineral_at_conditions(mineral, pressure_gpa: float = 0.0, temperature_c: float = 25.0,
                          allow_ambient: bool = False) -> tuple[np.ndarray, float]:
    """Single-crystal stiffness (orix frame) and density at the conditions (as published at the
    conditions the constants were measured at).

    Other conditions need the mineral's derivatives beyond a small range; see fabric2seis.elastic.conditions.
    """
    from fabric2seis.elastic.conditions import at_conditions, at_reference

    if at_reference(mineral, pressure_gpa, temperature_c):
        return mineral.stiffness_gpa, mineral.density_kg_m3

    return at_conditions(mineral, pressure_gpa, temperature_c, allow_ambient)


def aggregate(orientation_sets, fractions: dict[str, float], average: str = "hill",
              pressure_gpa: float = 0.0, temperature_c: float = 25.0, allow_ambient: bool = False,
              twin_average: bool = True) -> Aggregate:
    """Aggregate tensor of a rock from (mineral, quaternions, weights) per phase and volume fractions.

    Single-crystal constants are brought to the conditions first. A mineral whose library entry
    lists twin laws (``twins``: the Dauphine twin of quartz) enters every measured orientation as
    the crystal and its variants in equal parts when ``twin_average`` (EBSD cannot tell them
    apart), each average in its own linear space (``elastic.crystal_kelvin_matrices``).
    """
    parts, densities, used, matrices, twins = [], [], {}, {}, {}
    for mineral, quat, weights in orientation_sets:
        c, rho = mineral_at_conditions(mineral, pressure_gpa, temperature_c, allow_ambient)
        variants = tuple(mineral.twin_rotations()) if twin_average else ()
        if variants:
            twins[mineral.name] = [t["name"] for t in mineral.twins]
        used[mineral.name] = c
        matrices[mineral.name] = elastic.crystal_kelvin_matrices(c, variants)
        f = fractions[mineral.name]
        parts.append(elastic.PhaseTensors(c, to_matrices(quat), weights, f, variants))
        densities.append((f, rho))
    tensors = elastic.average_tensors(parts)
    for name, t in tensors.items():
        elastic.check_stiffness(t, where=f"{name} average")
    total = sum(f for f, _ in densities)
    rho = sum(f * r for f, r in densities) / total
    return Aggregate(tensors=tensors, density_kg_m3=float(rho), average=average, crystal_tensors=used,
                     crystal_matrices=matrices, twins=twins)


@dataclass
class VelocityGrid:
    """Velocities on the lower-hemisphere grid (one entry per direction)."""

    directions: np.ndarray
    azimuth_deg: np.ndarray
    plunge_deg: np.ndarray
    vp_km_s: np.ndarray
    vs1_km_s: np.ndarray
    vs2_km_s: np.ndarray
    s1_polarisation: np.ndarray

    @property
    def avs_pct(self):
        return 200.0 * (self.vs1_km_s - self.vs2_km_s) / (self.vs1_km_s + self.vs2_km_s)

    @property
    def dvs_km_s(self):
        return self.vs1_km_s - self.vs2_km_s

    def table(self):
        import pandas as pd

        pol = waves.to_lower_hemisphere(self.s1_polarisation)
        return pd.DataFrame({
            "x": self.directions[:, 0].round(6), "y": self.directions[:, 1].round(6),
            "z": self.directions[:, 2].round(6),
            "azimuth_deg": self.azimuth_deg.round(3), "plunge_deg": self.plunge_deg.round(3),
            "vp_km_s": self.vp_km_s.round(5), "vs1_km_s": self.vs1_km_s.round(5),
            "vs2_km_s": self.vs2_km_s.round(5), "avs_pct": self.avs_pct.round(4),
            "dvs_km_s": self.dvs_km_s.round(5),
            "vp_vs1": (self.vp_km_s / self.vs1_km_s).round(5), "vp_vs2": (self.vp_km_s / self.vs2_km_s).round(5),
            "fast_polarisation_x": pol[:, 0].round(5), "fast_polarisation_y": pol[:, 1].round(5),
            "fast_polarisation_z": pol[:, 2].round(5),
        })


def velocity_grid(c: np.ndarray, density_kg_m3: float, step_deg: float = 1.0) -> VelocityGrid:
    dirs, az, pl = waves.hemisphere_grid(step_deg)
    w = waves.plane_waves(c, density_kg_m3, dirs)
    return VelocityGrid(dirs, az, pl, w.vp_km_s, w.vs1_km_s, w.vs2_km_s, w.polarisations[:, 1])


def _direction(v):
    v = waves.to_lower_hemisphere(np.asarray(v, dtype=float))
    return [round(float(x), 6) for x in v]


def seismic_summary(grid: VelocityGrid, average: str) -> dict:
    """The ``seismic`` block of summary.json (CONTRACT.md keys plus a few more)."""
    i_max, i_min = int(np.argmax(grid.vp_km_s)), int(np.argmin(grid.vp_km_s))
    vp_max, vp_min = float(grid.vp_km_s[i_max]), float(grid.vp_km_s[i_min])
    avs = grid.avs_pct
    j = int(np.argmax(avs))
    return {
        "average": average,
        "vp_max_km_s": round(vp_max, 5), "vp_min_km_s": round(vp_min, 5),
        "vp_max_direction": _direction(grid.directions[i_max]),
        "vp_min_direction": _direction(grid.directions[i_min]),
        "avp_pct": round(200.0 * (vp_max - vp_min) / (vp_max + vp_min), 4),
        "avs_max_pct": round(float(avs[j]), 4), "avs_max_direction": _direction(grid.directions[j]),
        "avs_min_pct": round(float(avs.min()), 4),
        "vs1_max_km_s": round(float(grid.vs1_km_s.max()), 5),
        "vs1_min_km_s": round(float(grid.vs1_km_s.min()), 5),
        "vs2_max_km_s": round(float(grid.vs2_km_s.max()), 5),
        "vs2_min_km_s": round(float(grid.vs2_km_s.min()), 5),
        "dvs_max_km_s": round(float(grid.dvs_km_s.max()), 5),
        "direction_grid_step_deg": float(np.round(np.diff(np.unique(grid.plunge_deg))[0], 6)),
    }


def along_axes(c: np.ndarray, density_kg_m3: float) -> dict:
    """Vp, Vs1, Vs2 and AVs for propagation along X, Y and Z."""
    w = waves.plane_waves(c, density_kg_m3, np.eye(3))
    return {axis: {"vp_km_s": round(float(w.vp_km_s[k]), 5), "vs1_km_s": round(float(w.vs1_km_s[k]), 5),
                   "vs2_km_s": round(float(w.vs2_km_s[k]), 5), "avs_pct": round(float(w.avs_pct[k]), 4)}
            for k, axis in enumerate("XYZ")}


def splitting_along(c: np.ndarray, density_kg_m3: float, direction=(0.0, 0.0, 1.0),
                    reference=(1.0, 0.0, 0.0), thickness_km: float = 100.0) -> dict:
    """Fast polarisation and delay for a shear wave along ``direction`` through ``thickness_km``.

    The fast polarisation angle is measured in the plane normal to the ray, from ``reference``
    (projected into that plane) towards ``direction x reference``: for the default, a ray along Z,
    from X towards Y, 0 to 180 degrees. The delay is thickness (1/Vs2 - 1/Vs1) with phase velocities
    (ray bending and the phase/group difference neglected, common practice), computed by the one
    splitting kernel, ``waves.splitting.ray_splitting``.

    Parameters
    ----------
    c : numpy.ndarray
        Voigt stiffness (6, 6) in GPa, structural frame.
    density_kg_m3 : float
        Density, kg/m^3.
    direction : array_like
        Propagation vector (3,), not zero (normalised here).
    reference : array_like
        Vector (3,) not parallel to ``direction``: the origin of the angle.
    thickness_km : float
        Path length along the ray, km, positive.

    Returns
    -------
    dict
        ``fast_polarisation_from_x_deg`` (degrees, 0-180, rounded to 1e-4), ``delay_s_per_100km``
        (s per 100 km of path, rounded to 1e-6), ``avs_pct`` (percent, rounded to 1e-4).

    Raises
    ------
    ValueError
        A zero or non-finite ``direction``, a ``reference`` parallel to it, a thickness that is not
        positive.
    """
    from fabric2seis.waves import splitting

    thickness_km = splitting.check_positive(thickness_km, "thickness_km")
    n = np.asarray(direction, dtype=float)
    if n.shape != (3,) or not np.all(np.isfinite(n)) or not np.linalg.norm(n) > 0:
        raise ValueError(f"direction must be a non-zero vector of 3 finite numbers, got {direction!r}")
    n = n / np.linalg.norm(n)
    e1 = np.asarray(reference, dtype=float)
    if e1.shape != (3,) or not np.all(np.isfinite(e1)):
        raise ValueError(f"reference must be a vector of 3 finite numbers, got {reference!r}")
    e1 = e1 - (e1 @ n) * n
    if not np.linalg.norm(e1) > 1e-9 * max(1.0, float(np.linalg.norm(reference))):
        raise ValueError(f"reference {reference!r} is parallel to direction {direction!r}: it gives no angle")
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(n, e1)
    one = splitting.ray_splitting(c, density_kg_m3, n[None], thickness_km, axes=(e1, e2))
    angle = float(one["fast_azimuth_deg"][0])
    delay = one["delay_s"][0]
    return {"fast_polarisation_from_x_deg": round(angle, 4),
            "delay_s_per_100km": round(float(delay) * 100.0 / thickness_km, 6),
            "avs_pct": round(float(one["avs_pct"][0]), 4)}
