"""Reader of .ctf files (Oxford Instruments channel text layout), through orix.

Columns: Phase, X, Y, Bands, Error, Euler1, Euler2, Euler3 (Bunge, degrees), MAD, BC, BS.
Phase 0 is not indexed. Orientations are taken as stored, with respect to the map's x, y axes,
with no vendor correction. CTF maps are square grids.
"""

from __future__ import annotations

from pathlib import Path

from orix.io.plugins import ctf as orix_ctf

from fabric2seis.errors import InputError
from fabric2seis.io._crystal_map import from_crystal_map
from fabric2seis.io.record import EBSDData, check_angles
from fabric2seis.io.text import find_bad_row, first_rows, plain_text_file, quiet


def _data_start(path: Path) -> int:
    """1-based number of the first data line: the line after the 'Phase X Y ...' column names."""
    with path.open("r", errors="replace") as f:
        for number, line in enumerate(f, start=1):
            if line.startswith("Phase\tX\tY") or line.split()[:3] == ["Phase", "X", "Y"]:
                return number + 1
    return 0


def _step(path: Path) -> float | None:
    with path.open("r", errors="replace") as f:
        for line in f:
            parts = line.split()
            if len(parts) == 2 and parts[0] == "XStep":
                return float(parts[1])
            if parts[:3] == ["Phase", "X", "Y"]:
                break
    return None


def read(path: Path, compressed: bool = False) -> EBSDData:
    with plain_text_file(path, compressed) as plain:
        start = _data_start(plain)
        if start == 0:
            raise InputError("no 'Phase X Y ...' column line: not a .ctf file", path)
        sample = first_rows(plain, start - 1, comment="\x00")
        if sample.size == 0:
            problem = find_bad_row(plain, start, None, comment="\x00")
            raise InputError(problem or "the file has a header but no data rows", path)
        if sample.shape[1] < 11:
            raise InputError(f"line {start}: {sample.shape[1]} columns, a .ctf row has 11", path)
        try:
            xmap = quiet(orix_ctf.file_reader, str(plain))
        except Exception as exc:
            problem = find_bad_row(plain, start, sample.shape[1], comment="\x00")
            raise InputError(problem or f"not a readable .ctf file ({exc})", path) from None
        step = _step(plain)
    check_angles(sample[:, 5:8], "degrees", path, start)
    return from_crystal_map(xmap, path, "square", step, start, {"bc": "BC", "bs": "BS", "mad": "MAD"})
