"""Reader of .ctf files (Oxford Instruments channel text layout).

Columns: Phase, X, Y, Bands, Error, Euler1, Euler2, Euler3 (Bunge, degrees), MAD, BC, BS.
Phase 0 is not indexed. Orientations are taken as stored, with respect to the map's x, y axes,
with no vendor correction. CTF maps are square grids. The phases of the header are read as orix
reads them (``headers``, without importing orix);
every row is checked: angle ranges, the point count against XCells x YCells, the step against
XStep, points off the grid.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from fabric2seis.errors import InputError
from fabric2seis.ingest.io.headers import ctf_phases
from fabric2seis.ingest.io.record import EBSDData, check_angles, check_map, check_phase_ids
from fabric2seis.ingest.io.text import line_of_row, plain_text_file, read_numbers
from fabric2seis.orientations import from_bunge_euler


def _header(path: Path) -> list[str]:
    """The lines up to and including the 'Phase X Y ...' column names (empty if there is none)."""
    lines = []
    with path.open("r", errors="replace") as f:
        for line in f:
            lines.append(line)
            if line.startswith("Phase\tX\tY") or line.split()[:3] == ["Phase", "X", "Y"]:
                return lines
    return []


def _header_place(header: list[str], key: str) -> str | None:
    """Name the header line of a key: ``"line 7 (XStep)"``, or None if the header lacks it."""
    for number, line in enumerate(header, start=1):
        if line.split()[:1] == [key]:
            return f"line {number} ({key})"
    return None


def _header_number(header: list[str], key: str) -> float | None:
    for line in header:
        parts = line.split()
        if len(parts) == 2 and parts[0] == key:
            try:
                value = float(parts[1])
            except ValueError:
                return None
            return value if np.isfinite(value) else None    # an unreadable value counts as none
    return None


def read(path: Path, compressed: bool = False) -> EBSDData:
    """Read a .ctf map, checking every row.

    Parameters
    ----------
    path : Path
        The file.
    compressed : bool
        Whether it is gzip-compressed.

    Returns
    -------
    EBSDData
        Orientations (N, 4) from Bunge angles in degrees, phase ids (-1 for phase 0), x, y in the
        file's length unit, square grid and step, and ``mad``, ``bc``, ``bs``.

    Raises
    ------
    InputError
        If the column line is missing, or on unreadable rows, angles out of range, a point count
        other than XCells x YCells, a step other than XStep, or points off the grid.

    References
    ----------
    Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
    """
    with plain_text_file(path, compressed) as plain:
        header = _header(plain)
        if not header:
            raise InputError("no 'Phase X Y ...' column line: not a .ctf file", path)
        start = len(header) + 1
        values = read_numbers(plain, start, path, comment=None, min_columns=11, columns=len(header[-1].split()))

        def where(row: int) -> str:
            return line_of_row(plain, start, row, None)

        check_angles(values[:, 5:8], "degrees", path, where, "columns 6-8 (Euler1, Euler2, Euler3)")
        phase_id = check_phase_ids(values[:, 0], path, where)
        names, groups = ctf_phases(header, np.unique(phase_id).tolist(), path)
        phase_id[phase_id == 0] = -1
        x_cells, y_cells = (_header_number(header, k) for k in ("XCells", "YCells"))
        expected = None
        if x_cells and y_cells and x_cells > 0 and y_cells > 0:
            nx, ny = int(x_cells), int(y_cells)
            expected = (nx * ny, f"XCells {nx} x YCells {ny}")
        places = {"grid": "the format (.ctf maps are square)", "step": _header_place(header, "XStep"),
                  "points": _header_place(header, "XCells")}
        grid, step = check_map(values[:, 1], values[:, 2], path, "square", _header_number(header, "XStep"),
                               expected, where, "columns 2-3 (X, Y)", places)
    quality = {"mad": values[:, 8].copy(), "bc": values[:, 9].copy(), "bs": values[:, 10].copy()}
    return EBSDData(source=str(path), quat=from_bunge_euler(np.radians(values[:, 5:8])),
                    phase_id=phase_id, phase_names=names, phase_point_groups=groups, x=values[:, 1].copy(),
                    y=values[:, 2].copy(), step=step, grid=grid, quality=quality)
