"""Reader of .ang files (EDAX TSL layout, also written by orix and others).

Euler angles are Bunge angles in radians, as the format stores them; orientations are taken
as stored, with respect to the map's x, y axes, with no vendor correction. Columns 1-5 are
phi1, Phi, phi2, x, y and column 8 the phase id in every vendor's layout; the other columns'
names (ci, iq, fit ...) and the phases of the header are read as orix reads them
(``headers``, without importing orix). Points with confidence
index -1 are not indexed (orix's convention). Every row is checked: angle ranges, the point count
against NROWS / NCOLS_ODD / NCOLS_EVEN, the grid against ``# GRID:`` and ``# XSTEP:``, points off
the grid.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from fabric2seis.ingest.io.headers import ang_columns, ang_phases
from fabric2seis.ingest.io.record import EBSDData, check_angles, check_map, check_phase_ids
from fabric2seis.ingest.io.text import line_of_row, plain_text_file, read_numbers
from fabric2seis.orientations import from_bunge_euler

CORE_COLUMNS = (0, 1, 2, 3, 4, 7)      # phi1, Phi, phi2, x, y, phase id

#: the angle (radians) a point not indexed carries in all three Euler columns
NOT_INDEXED_ANGLE = 4.0 * np.pi


def _header(path: Path) -> list[str]:
    lines = []
    with path.open("r", errors="replace") as f:
        for line in f:
            if not line.startswith("#"):
                break
            lines.append(line)
    return lines


def read(path: Path, compressed: bool = False) -> EBSDData:
    """Read an .ang map, checking every row.

    Parameters
    ----------
    path : Path
        The file.
    compressed : bool
        Whether it is gzip-compressed.

    Returns
    -------
    EBSDData
        Orientations (N, 4) from Bunge angles in radians, phase ids (-1 where the confidence
        index is -1), x, y in the file's length unit, grid and step, and ``ci``, ``iq``, ``fit``
        where the file has them.

    Raises
    ------
    InputError
        On unreadable rows, angles out of range, a point count or grid other than the header
        announces, or points off the grid.

    References
    ----------
    Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
    """
    with plain_text_file(path, compressed) as plain:
        header = _header(plain)
        first_line = len(header) + 1
        values = read_numbers(plain, first_line, path, comment="#", min_columns=8)

        def where(row: int) -> str:
            return line_of_row(plain, first_line, row, "#")

        # a point not indexed carries 4 pi in all three angles (EDAX/TSL and orix's writer; common practice)
        marked = np.all(np.abs(values[:, :3] - NOT_INDEXED_ANGLE) < 1e-4, axis=1)
        values[marked, :3] = 0.0
        check_angles(values[:, :3], "radians", path, where, "columns 1-3 (phi1, Phi, phi2)")
        extra = [c for c in range(values.shape[1]) if c not in CORE_COLUMNS]
        phase_id = check_phase_ids(values[:, 7], path, where)
        # the header's phases go to the ids of the indexed points (orix marks ci = -1 first; the last
        # column named ci counts, as in orix)
        ci = [k for k, name in enumerate(ang_columns(header, values.shape[1], path)) if name == "ci"]
        indexed = phase_id if not ci else phase_id[values[:, ci[-1]] != -1]
        names, groups, props = ang_phases(header, values.shape[1], np.unique(indexed).tolist(), path)
        columns = dict(zip(props, extra))
        if "ci" in columns:
            phase_id[values[:, columns["ci"]] == -1] = -1
        phase_id[marked] = -1
        places = {"grid": _header_place(header, "GRID"), "step": _header_place(header, "XSTEP"),
                  "points": _header_place(header, "NROWS")}
        grid, step = check_map(values[:, 3], values[:, 4], path, _declared_grid(header),
                               _header_value(header, "XSTEP"), _expected_points(header), where,
                               "columns 4-5 (x, y)", places)
    quality: dict[str, np.ndarray] = {name: values[:, columns[name]].copy() for name in ("ci", "iq", "fit")
                                      if name in columns}
    return EBSDData(source=str(path), quat=from_bunge_euler(values[:, :3]), phase_id=phase_id,
                    phase_names=names, phase_point_groups=groups, x=values[:, 3].copy(), y=values[:, 4].copy(),
                    step=step, grid=grid, quality=quality)


def _header_place(header: list[str], key: str) -> str | None:
    """Name the header line of a key: ``"line 16 (# GRID)"``, or None if the header lacks it."""
    for number, line in enumerate(header, start=1):
        if line.lstrip("#").split(":")[0].strip() == key:
            return f"line {number} (# {key})"
    return None


def _header_value(header: list[str], key: str) -> float | None:
    for line in header:
        parts = line.lstrip("#").split(":")
        if len(parts) == 2 and parts[0].strip() == key:
            try:
                value = float(parts[1])
            except ValueError:
                return None
            return value if np.isfinite(value) else None    # an unreadable value counts as none
    return None


def _declared_grid(header: list[str]) -> str | None:
    for line in header:
        parts = line.lstrip("#").split(":")
        if len(parts) == 2 and parts[0].strip() == "GRID":
            return {"hexgrid": "hex", "sqrgrid": "square"}.get(parts[1].strip().lower())
    return None


def _expected_points(header: list[str]) -> tuple[int, str] | None:
    """Points announced by NROWS, NCOLS_ODD and NCOLS_EVEN (hexagonal rows alternate odd, even)."""
    rows, odd, even = (_header_value(header, k) for k in ("NROWS", "NCOLS_ODD", "NCOLS_EVEN"))
    if not rows or not odd or rows <= 0 or odd <= 0:
        return None
    rows, odd = int(rows), int(odd)
    even = int(even) if even else odd
    if _declared_grid(header) == "hex":
        return (rows + 1) // 2 * odd + rows // 2 * even, f"NROWS {rows}, NCOLS_ODD {odd}, NCOLS_EVEN {even}"
    return rows * odd, f"NROWS {rows} x NCOLS_ODD {odd}"
