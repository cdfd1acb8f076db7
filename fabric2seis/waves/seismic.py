"""Seismic properties of an aggregate: its elastic tensor, velocities in every direction, and
splitting of a shear wave travelling along the foliation normal.

All outputs are in the structural frame (X lineation, Y, Z foliation normal), stiffness in GPa,
density kg m^-3, velocities km/s, anisotropy in percent (CONVENTIONS.md for the definitions of
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

    Attributes
    ----------
    tensors
        Voigt stiffness (6, 6) in GPa under ``"voigt"``, ``"reuss"``, ``"hill"``, ``"geometric"``.
    density_kg_m3
        Fraction-weighted density of the rock, kg m^-3.
    average
        Name of the average that feeds the seismic outputs (:attr:`stiffness`).
    crystal_tensors
        The single-crystal stiffness of each mineral at the conditions (Voigt (6, 6), GPa,
        crystal frame), by mineral name.
    crystal_matrices
        Its Kelvin stiffness, compliance and logarithm (each (6, 6)) as the averages used them
        (twin variants included), for the bootstrap.
    twins
        The twin laws applied, by mineral.
    sums
        Each mineral's weighted sums over its orientations (``elastic.phase_sums``), by mineral
        name: what a map's pieces add up (``fabric2seis.pieces``).
    fractions
        The volume fraction of each mineral as the averages used it (renormalised), by name.
    densities
        Each mineral's density at the conditions, kg m^-3, by name.
    """

    tensors: dict[str, np.ndarray]
    density_kg_m3: float
    average: str
    crystal_tensors: dict[str, np.ndarray] | None = None
    crystal_matrices: dict[str, dict[str, np.ndarray]] | None = None
    twins: dict[str, list[str]] | None = None
    sums: dict[str, elastic.WeightedSums] | None = None
    fractions: dict[str, float] | None = None
    densities: dict[str, float] | None = None

    @property
    def stiffness(self) -> np.ndarray:
        """The average chosen to feed the seismic outputs: Voigt stiffness (6, 6), GPa."""
        return self.tensors[self.average]


def mineral_at_conditions(mineral, pressure_gpa: float = 0.0, temperature_c: float = 25.0,
                          allow_ambient: bool = False) -> tuple[np.ndarray, float]:
    """Return a mineral's single-crystal stiffness (orix frame) and density at the given conditions.

    At the conditions the constants were measured at, they are returned as published. Other
    conditions need the mineral's derivatives beyond a small range; see fabric2seis.elastic.conditions.

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        Library entry of the mineral.
    pressure_gpa : float
        Pressure, GPa.
    temperature_c : float
        Temperature, degrees Celsius.
    allow_ambient : bool
        Use the constants as measured where the library lacks the derivatives needed.

    Returns
    -------
    stiffness : numpy.ndarray, shape (6, 6)
        Voigt stiffness in the crystal frame orix uses, GPa.
    density : float
        Density, kg m^-3.

    Raises
    ------
    InputError
        If the mineral lacks derivatives the conditions need and ``allow_ambient`` is false, or
        the corrected stiffness is not valid (:func:`fabric2seis.elastic.conditions.at_conditions`).
    """
    from fabric2seis.elastic.conditions import at_conditions, at_reference

    if at_reference(mineral, pressure_gpa, temperature_c):
        return mineral.stiffness_gpa, mineral.density_kg_m3

    return at_conditions(mineral, pressure_gpa, temperature_c, allow_ambient)


def aggregate(orientation_sets, fractions: dict[str, float], average: str = "hill",
              pressure_gpa: float = 0.0, temperature_c: float = 25.0, allow_ambient: bool = False,
              twin_average: bool = True) -> Aggregate:
    """Compute the aggregate tensors of a rock from (mineral, quaternions, weights) per phase and volume fractions.

    Single-crystal constants are brought to the conditions first. A mineral whose library entry
    lists twin laws (``twins``: the Dauphine twin of quartz) enters every measured orientation as
    the crystal and its variants in equal parts when ``twin_average`` (EBSD cannot tell them
    apart), each average in its own linear space (``elastic.crystal_kelvin_matrices``).

    Parameters
    ----------
    orientation_sets : iterable of (Mineral, numpy.ndarray, numpy.ndarray)
        Per phase: its library mineral, orix quaternions (N, 4) in the structural frame, and
        non-negative weights (N,).
    fractions : dict of str to float
        Volume fraction of each mineral, by mineral name (renormalised to sum to 1).
    average : {"voigt", "reuss", "hill", "geometric"}
        The average that feeds the seismic outputs.
    pressure_gpa : float
        Pressure, GPa.
    temperature_c : float
        Temperature, degrees Celsius.
    allow_ambient : bool
        Use the constants as measured where the library lacks the derivatives needed.
    twin_average : bool
        Whether twin laws of the library enter the averages.

    Returns
    -------
    Aggregate
        The four averages (6, 6) in GPa, the density in kg m^-3 and what went into them.

    Raises
    ------
    InputError
        If a mineral cannot be brought to the conditions, or an average is not a valid stiffness.
    KeyError
        If a mineral has no entry in ``fractions``.
    ValueError
        If orientations, weights or fractions are invalid (:func:`elastic.average_tensors`).

    References
    ----------
    Voigt (1928), Reuss (1929), Hill (1952), Matthies & Humbert (1993): see
    :func:`fabric2seis.elastic.tensors.average_tensors`.
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
        densities.append((mineral.name, f, rho))
    sums = [elastic.phase_sums(p) for p in parts]
    tensors = elastic.averages_from_sums(sums, [p.fraction for p in parts])
    for name, t in tensors.items():
        elastic.check_stiffness(t, where=f"{name} average")
    total = sum(f for _, f, _ in densities)
    if not total > 0:
        raise ValueError(f"phase fractions must have a positive sum: {fractions}")
    rho = sum(f * r for _, f, r in densities) / total
    return Aggregate(tensors=tensors, density_kg_m3=float(rho), average=average, crystal_tensors=used,
                     crystal_matrices=matrices, twins=twins,
                     sums={name: one for (name, _, _), one in zip(densities, sums)},
                     fractions={name: f / total for name, f, _ in densities},
                     densities={name: float(r) for name, _, r in densities})


@dataclass
class VelocityGrid:
    """Velocities on the lower-hemisphere grid (one entry per direction).

    Attributes
    ----------
    directions
        Unit propagation directions (M, 3), structural frame, z <= 0.
    azimuth_deg, plunge_deg
        Azimuth from X towards Y and plunge below the XY plane (M,), degrees.
    vp_km_s, vs1_km_s, vs2_km_s
        Phase velocities (M,), km/s.
    s1_polarisation
        Unit polarisation vectors of the fast shear wave (M, 3); their sign is arbitrary.
    """

    directions: np.ndarray
    azimuth_deg: np.ndarray
    plunge_deg: np.ndarray
    vp_km_s: np.ndarray
    vs1_km_s: np.ndarray
    vs2_km_s: np.ndarray
    s1_polarisation: np.ndarray

    @property
    def avs_pct(self):
        """Shear-wave anisotropy 200 (Vs1 - Vs2) / (Vs1 + Vs2) per direction (M,), percent."""
        return 200.0 * (self.vs1_km_s - self.vs2_km_s) / (self.vs1_km_s + self.vs2_km_s)

    @property
    def dvs_km_s(self):
        """Difference Vs1 - Vs2 per direction (M,), km/s."""
        return self.vs1_km_s - self.vs2_km_s

    def table(self):
        """Return the grid as a table, one row per direction (the columns of :meth:`columns`).

        Returns
        -------
        pandas.DataFrame
            Columns x, y, z, azimuth_deg, plunge_deg, vp_km_s, vs1_km_s, vs2_km_s, avs_pct,
            dvs_km_s, vp_vs1, vp_vs2 and the fast polarisation (flipped to z <= 0), rounded.
        """
        import pandas as pd

        return pd.DataFrame(self.columns())

    def write_csv(self, path) -> None:
        """Write ``velocities.csv``: the bytes pandas writes for :meth:`table` (``to_csv(index=False)``),
        by the csv module, about twice as fast (tables.write_number_csv)."""
        from fabric2seis.tables import write_number_csv

        write_number_csv(path, self.columns())

    def columns(self) -> dict[str, np.ndarray]:
        """The grid's table as named columns, one value per direction, rounded (see :meth:`table`)."""
        pol = waves.to_lower_hemisphere(self.s1_polarisation)
        return {
            "x": self.directions[:, 0].round(6), "y": self.directions[:, 1].round(6),
            "z": self.directions[:, 2].round(6),
            "azimuth_deg": self.azimuth_deg.round(3), "plunge_deg": self.plunge_deg.round(3),
            "vp_km_s": self.vp_km_s.round(5), "vs1_km_s": self.vs1_km_s.round(5),
            "vs2_km_s": self.vs2_km_s.round(5), "avs_pct": self.avs_pct.round(4),
            "dvs_km_s": self.dvs_km_s.round(5),
            "vp_vs1": (self.vp_km_s / self.vs1_km_s).round(5), "vp_vs2": (self.vp_km_s / self.vs2_km_s).round(5),
            "fast_polarisation_x": pol[:, 0].round(5), "fast_polarisation_y": pol[:, 1].round(5),
            "fast_polarisation_z": pol[:, 2].round(5),
        }


def velocity_grid(c: np.ndarray, density_kg_m3: float, step_deg: float = 1.0) -> VelocityGrid:
    """Solve the Christoffel equation on a near-uniform lower-hemisphere grid of directions.

    Parameters
    ----------
    c : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa, structural frame.
    density_kg_m3 : float
        Density, kg m^-3.
    step_deg : float
        Spacing of the grid, degrees, in (0, 45] (:func:`waves.hemisphere_grid`).

    Returns
    -------
    VelocityGrid
        Velocities (km/s) and fast polarisations for every direction of the grid.

    Raises
    ------
    ValueError
        If ``step_deg`` is out of range or the density is not positive.
    """
    dirs, az, pl = waves.hemisphere_grid(step_deg)
    w = waves.plane_waves(c, density_kg_m3, dirs)
    return VelocityGrid(dirs, az, pl, w.vp_km_s, w.vs1_km_s, w.vs2_km_s, w.polarisations[:, 1])


def _direction(v):
    v = waves.to_lower_hemisphere(np.asarray(v, dtype=float))
    return [round(float(x), 6) for x in v]


def seismic_summary(grid: VelocityGrid, average: str) -> dict:
    """Build the ``seismic`` block of summary.json (CONTRACT.md keys plus a few more).

    Parameters
    ----------
    grid : VelocityGrid
        Velocities over the lower hemisphere (:func:`velocity_grid`).
    average : str
        Name of the average the velocities were computed from.

    Returns
    -------
    dict
        Extremes of Vp, Vs1, Vs2 (km/s) and of AVs (percent), AVp (percent), largest dVs (km/s),
        directions of the extremes as unit vectors with z <= 0, and the grid step (degrees).
    """
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
    """Compute Vp, Vs1, Vs2 and AVs for propagation along X, Y and Z.

    Parameters
    ----------
    c : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa, structural frame.
    density_kg_m3 : float
        Density, kg m^-3.

    Returns
    -------
    dict
        For each of ``"X"``, ``"Y"``, ``"Z"``: ``vp_km_s``, ``vs1_km_s``, ``vs2_km_s`` (km/s,
        rounded to 1e-5) and ``avs_pct`` (percent, rounded to 1e-4).

    Raises
    ------
    ValueError
        If the density is not positive.
    """
    w = waves.plane_waves(c, density_kg_m3, np.eye(3))
    return {axis: {"vp_km_s": round(float(w.vp_km_s[k]), 5), "vs1_km_s": round(float(w.vs1_km_s[k]), 5),
                   "vs2_km_s": round(float(w.vs2_km_s[k]), 5), "avs_pct": round(float(w.avs_pct[k]), 4)}
            for k, axis in enumerate("XYZ")}


def splitting_along(c: np.ndarray, density_kg_m3: float, direction=(0.0, 0.0, 1.0),
                    reference=(1.0, 0.0, 0.0), thickness_km: float = 100.0) -> dict:
    """Compute the fast polarisation and delay of a shear wave along ``direction`` through ``thickness_km``.

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
        Density, kg m^-3.
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
