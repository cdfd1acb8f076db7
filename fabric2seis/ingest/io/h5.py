"""Reader of orix-readable HDF5 EBSD files (orix's own HDF5 format and the h5ebsd files orix reads)."""

from __future__ import annotations

from pathlib import Path

from fabric2seis.errors import InputError
from fabric2seis.ingest.io.orix_parts import from_crystal_map
from fabric2seis.ingest.io.record import EBSDData
from fabric2seis.ingest.io.text import quiet


def read(path: Path) -> EBSDData:
    """Read an HDF5 EBSD file through orix.

    Parameters
    ----------
    path : Path
        The file.

    Returns
    -------
    EBSDData
        Orientations (N, 4), phases, coordinates and the quality measures orix finds (``ci``,
        ``iq``, ``fit``, ``bc``, ``bs``, ``mad``).

    Raises
    ------
    InputError
        If the file is empty, orix cannot read it, or it holds fewer than two points.
    """
    from orix import io as orix_io  # here: only HDF5 files need orix on the reading path

    if path.stat().st_size == 0:
        raise InputError("the file is empty", path)
    try:
        xmap = quiet(orix_io.load, str(path))
    except Exception as exc:
        raise InputError(f"not an HDF5 EBSD file orix can read ({exc.__class__.__name__}: "
                         f"{str(exc)[:120]})", path) from None
    if xmap.size < 2:
        raise InputError(f"a map needs at least two points, this one has {xmap.size}", path)
    return from_crystal_map(xmap, path, {k: k for k in ("ci", "iq", "fit", "bc", "bs", "mad")})
