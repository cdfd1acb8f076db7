"""What the readers take from orix: the phases of a file's header, and HDF5 crystal maps.

The .ang and .ctf readers parse the numbers themselves (one pass, every row checked) and ask
orix only for what the header says about the phases: orix reads a copy of the header with the
first data row, so its own header parsing (names, point groups, vendor columns) is used through
its public reader and nothing is read twice.
"""

from __future__ import annotations

import tempfile
from pathlib import Path

import numpy as np

from fabric2seis.errors import InputError
from fabric2seis.ingest.io.record import EBSDData, check_map, check_phase_ids
from fabric2seis.ingest.io.text import quiet


def header_phases(file_reader, header: list[str], rows: np.ndarray, source: Path, suffix: str
                  ) -> tuple[dict[int, str], dict[int, str | None], list[str]]:
    """Read phase names and point groups by id, and the names of the extra columns, as orix reads them.

    ``file_reader`` is orix's reader of the format, ``header`` the header lines, ``rows`` one data
    row (as numbers) for each phase id that occurs in the file, so that orix matches the header's
    phases to the ids exactly as it would reading the whole file.

    Parameters
    ----------
    file_reader : callable
        orix's reader of the format (takes a file name, returns a CrystalMap).
    header : list of str
        The header lines, with their line ends.
    rows : numpy.ndarray, shape (P, C)
        One data row per phase id.
    source : Path
        The file, for error messages.
    suffix : str
        The format's suffix, e.g. ``".ang"``.

    Returns
    -------
    names : dict of int to str
        Phase name by id.
    point_groups : dict of int to str or None
        Point group by id, None where the header gives none.
    columns : list of str
        Names of the columns beyond the ones every file of the format has.

    Raises
    ------
    InputError
        If orix cannot read the header.
    """
    if len(rows) == 1:
        rows = np.repeat(rows, 2, axis=0)      # orix's text loading needs two rows to see a table
    rows = np.where(np.isfinite(rows), rows, 0.0)  # orix needs only the phase ids; the caller checks the rest
    with tempfile.TemporaryDirectory(prefix="fabric2seis-") as tmp:
        head = Path(tmp) / f"header{suffix}"
        body = "".join("\t".join(repr(float(v)) for v in row) + "\n" for row in rows)
        head.write_text("".join(header) + body)
        try:
            xmap = quiet(file_reader, str(head))
        except Exception as exc:  # orix raises several types for a header it cannot read
            raise InputError(f"the header cannot be read ({type(exc).__name__}: {str(exc)[:120]})", source) from None
    names, groups = _phases(xmap)
    return names, groups, list(xmap.prop)


def one_row_per_phase(phase_id: np.ndarray) -> np.ndarray:
    """Find the first row of every distinct phase id (-1 included).

    Parameters
    ----------
    phase_id : numpy.ndarray of int, shape (N,)
        Phase of each point.

    Returns
    -------
    numpy.ndarray of int, shape (P,)
        Row indices, in increasing order of phase id.
    """
    return np.unique(phase_id, return_index=True)[1]


def _phases(xmap) -> tuple[dict[int, str], dict[int, str | None]]:
    names, groups = {}, {}
    for pid, phase in xmap.phases:
        if pid < 0:
            continue
        names[int(pid)] = phase.name or f"phase {pid}"
        groups[int(pid)] = phase.point_group.name if phase.point_group is not None else None
    return names, groups


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
        names, groups = _phases(xmap)
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
