"""Reader of .ang files (EDAX TSL layout, also written by orix and others), through orix.

Euler angles are Bunge angles in radians, as the format stores them; orientations are taken
as stored, with respect to the map's x, y axes, with no vendor correction. Points with
confidence index -1 are not indexed (orix's convention). ``# GRID: HexGrid`` marks a hexagonal
grid.
"""

from __future__ import annotations

from pathlib import Path

from orix.io.plugins import ang as orix_ang

from fabric2seis.errors import InputError
from fabric2seis.io._crystal_map import from_crystal_map
from fabric2seis.io.record import EBSDData, check_angles
from fabric2seis.io.text import find_bad_row, first_rows, plain_text_file, quiet


def _header(path: Path) -> list[str]:
    lines = []
    with path.open("r", errors="replace") as f:
        for line in f:
            if not line.startswith("#"):
                break
            lines.append(line)
    return lines


def read(path: Path, compressed: bool = False) -> EBSDData:
    with plain_text_file(path, compressed) as plain:
        header = _header(plain)
        first_line = len(header) + 1
        sample = first_rows(plain, len(header))
        if sample.size == 0:
            problem = find_bad_row(plain, first_line, None)
            raise InputError(problem or "the file has a header but no data rows", path)
        try:
            xmap = quiet(orix_ang.file_reader, str(plain))
        except Exception as exc:  # orix raises several types; find the line for the user
            problem = find_bad_row(plain, first_line, sample.shape[1])
            raise InputError(problem or f"not a readable .ang file ({exc})", path) from None
    check_angles(sample[:, :3], "radians", path, first_line)
    text = "".join(header)
    grid = "hex" if "HexGrid" in text else "square"
    step = _header_value(header, "XSTEP")
    return from_crystal_map(xmap, path, grid, step, first_line,
                            {"ci": "ci", "iq": "iq", "fit": "fit"})


def _header_value(header: list[str], key: str) -> float | None:
    for line in header:
        parts = line.lstrip("#").split(":")
        if len(parts) == 2 and parts[0].strip() == key:
            try:
                return float(parts[1])
            except ValueError:
                return None
    return None
