"""Turn an orix CrystalMap into the common record (shared by the .ang, .ctf and .h5 readers)."""

from __future__ import annotations

import numpy as np

from fabric2seis.errors import InputError
from fabric2seis.io.record import EBSDData, check_map


def from_crystal_map(xmap, source, grid: str, step: float | None, first_data_line: int | None,
                     quality_names: dict[str, str]) -> EBSDData:
    """Build an EBSDData from ``xmap`` (all points, indexed or not)."""
    # every point of a freshly read map is "in data"; orix's public .rotations would copy them
    # through a mask, so take the stored rotations directly when that is the case
    rotations = getattr(xmap, "_rotations", None)
    if rotations is None or not np.all(xmap.is_in_data) or rotations.size != xmap.size:
        rotations = xmap.rotations
    quat = np.asarray(rotations.data, dtype=float).reshape(-1, 4)
    phase_id = np.asarray(xmap.phase_id, dtype=int).copy()
    bad = np.flatnonzero(~np.all(np.isfinite(quat), axis=1))
    if len(bad):
        where = f"line {first_data_line + bad[0]}" if first_data_line else f"point {bad[0] + 1}"
        raise InputError("Euler angle is not a number (NaN or infinite)", source, where)
    names, groups = {}, {}
    for pid, phase in xmap.phases:
        if pid < 0:
            continue
        names[int(pid)] = phase.name or f"phase {pid}"
        groups[int(pid)] = phase.point_group.name if phase.point_group is not None else None
    x = np.asarray(xmap.x, dtype=float)
    y = np.asarray(xmap.y, dtype=float) if xmap.y is not None else np.zeros_like(x)
    check_map(x, y, source)
    quality = {}
    for name, key in quality_names.items():
        if key in xmap.prop:
            quality[name] = np.asarray(xmap.prop[key], dtype=float)
    return EBSDData(source=str(source), quat=quat, phase_id=phase_id, phase_names=names,
                    phase_point_groups=groups, x=x, y=y, step=step, grid=grid, quality=quality)
