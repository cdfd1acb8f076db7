"""What the HDF5 reader takes from orix: the crystal map orix reads, as an EBSDData record.

The .ang and .ctf readers need no orix: they parse the numbers themselves (one pass, every row
checked) and read the header's phases as orix does (``headers``).
"""

from __future__ import annotations

import numpy as np

from fabric2seis.errors import InputError
from fabric2seis.ingest.io.record import EBSDData, check_map, check_phase_ids


def from_crystal_map(xmap, source, quality_names: dict[str, str]) -> EBSDData:
    """Build an EBSDData from an orix CrystalMap read from an HDF5 file (all points).

    Parameters
    ----------
    xmap : orix.crystal_map.CrystalMap
        The map.
    source : str or Path
        The file, for the record and error messages.
    quality_names : dict of str to str
        Name in the record of each quality property, by orix property name.

    Returns
    -------
    EBSDData
        Orientations (N, 4), phases, x, y (y = 0 for a single line), grid, step and quality.

    Raises
    ------
    InputError
        If orix's map is inconsistent (arrays of different lengths), an orientation is not a
        finite unit quaternion, a phase id is not a phase of the file, or the points are not on
        a grid (:func:`check_map`).
    """
    try:  # orix builds a map from whatever the file holds; inconsistent arrays fail when read
        quat = np.asarray(xmap.rotations.data, dtype=float).reshape(-1, 4)
        phase_id = np.asarray(xmap.phase_id, dtype=float).reshape(-1)
        x = np.asarray(xmap.x, dtype=float).reshape(-1)
        y = np.asarray(xmap.y, dtype=float).reshape(-1) if xmap.y is not None else np.zeros_like(x)
        quality = {name: np.asarray(xmap.prop[key], dtype=float).reshape(-1) for name, key in quality_names.items()
                   if key in xmap.prop}
        names, groups = map_phases(xmap)
    except Exception as exc:  # orix raises several types for a map it cannot make sense of
        raise InputError(f"the crystal map is inconsistent ({type(exc).__name__}: {str(exc)[:120]})", source) from None
    lengths = {len(a) for a in (quat, phase_id, x, y, *quality.values())}
    if len(lengths) > 1:
        raise InputError(f"the crystal map's arrays differ in length ({', '.join(map(str, sorted(lengths)))} "
                         "points)", source)
    bad = np.flatnonzero(~np.all(np.isfinite(quat), axis=1) | (np.abs(np.linalg.norm(quat, axis=1) - 1.0) > 1e-6))
    if len(bad):
        raise InputError("orientation is not a finite unit quaternion", source, f"point {bad[0] + 1}")
    phase_id = check_phase_ids(phase_id, source)
    unknown = np.flatnonzero((phase_id != -1) & ~np.isin(phase_id, list(names)))
    if len(unknown):
        i = int(unknown[0])
        raise InputError(f"phase id {phase_id[i]} is not a phase of the file", source, f"point {i + 1}")
    grid, step = check_map(x, y, source)
    return EBSDData(source=str(source), quat=quat, phase_id=phase_id, phase_names=names, phase_point_groups=groups,
                    x=x, y=y, step=step, grid=grid, quality=quality)


def map_phases(xmap) -> tuple[dict[int, str], dict[int, str | None]]:
    """Phase names and point groups by id of an orix CrystalMap (unnamed phases as "phase <id>")."""
    names, groups = {}, {}
    for pid, phase in xmap.phases:
        if pid < 0:
            continue
        names[int(pid)] = phase.name or f"phase {pid}"
        groups[int(pid)] = phase.point_group.name if phase.point_group is not None else None
    return names, groups
