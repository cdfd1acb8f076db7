"""Readers of EBSD exports, one module per format, all returning one :class:`EBSDData` record.

``read_ebsd(path)`` picks the reader from the file name: ``.ang`` (EDAX TSL and others), ``.ctf``
(Oxford Instruments and others), ``.h5`` / ``.hdf5`` (orix-readable HDF5), ``.csv`` (the table of
CONTRACT.md: pixel maps with x, y columns, or grain lists without). ``.gz`` compressed text files
of these formats are read too.

Orientations are taken as the files store them, read by orix where orix has a reader: Bunge
Euler angles of the crystal with respect to the map axes x, y, z, no vendor-specific correction
applied. Where a vendor's angles refer to other axes than the map's, the settings key
``frame.rotation`` rotates the data (config/README.md).
"""

from __future__ import annotations

from pathlib import Path

from fabric2seis.errors import InputError
from fabric2seis.ingest.io.record import EBSDData

SUPPORTED_SUFFIXES = (".ang", ".ctf", ".h5", ".hdf5", ".csv")


def format_of(path: str | Path) -> tuple[str, bool]:
    """Tell a file's format from its name.

    Parameters
    ----------
    path : str or Path
        File name; only the name is looked at.

    Returns
    -------
    suffix : str
        Lower-case suffix without ``.gz`` (one of ``SUPPORTED_SUFFIXES``).
    compressed : bool
        Whether the name ends in ``.gz``.

    Raises
    ------
    InputError
        If the suffix is not supported, or an HDF5 file is gzip-compressed.
    """
    name = Path(path).name.lower()
    compressed = name.endswith(".gz")
    if compressed:
        name = name[:-3]
    suffix = Path(name).suffix
    if suffix not in SUPPORTED_SUFFIXES or (compressed and suffix in (".h5", ".hdf5")):
        raise InputError(f"unsupported file type '{suffix or name}'; supported: "
                         f"{', '.join(SUPPORTED_SUFFIXES)} (text formats also as .gz)", path)
    return suffix, compressed


def is_supported(path: str | Path) -> bool:
    """Tell whether a file name has a format ``read_ebsd`` reads (:func:`format_of` without raising).

    Parameters
    ----------
    path : str or Path
        File name.

    Returns
    -------
    bool
        True if supported.
    """
    try:
        format_of(path)
    except InputError:
        return False
    return True


def read_ebsd(path: str | Path, angle_units: str = "degrees") -> EBSDData:
    """Read one EBSD export into an :class:`EBSDData` record, choosing the reader by file name.

    ``angle_units`` applies to CSV tables only; the other formats fix their own units.

    Parameters
    ----------
    path : str or Path
        An .ang, .ctf, .h5/.hdf5 or .csv file (text formats also gzip-compressed).
    angle_units : {"degrees", "radians"}
        Unit of the Bunge Euler angles of a CSV table.

    Returns
    -------
    EBSDData
        Orientations as orix quaternions (N, 4), phases, coordinates and quality measures.

    Raises
    ------
    InputError
        If the format is unsupported, the file is missing, or its contents fail the checks.

    References
    ----------
    Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
    """
    from fabric2seis.ingest.io import ang, ctf, h5, table  # each imports only what its format needs

    path = Path(path)
    suffix, compressed = format_of(path)
    if not path.is_file():
        raise InputError("no such file", path)
    if suffix == ".csv":
        return table.read(path, compressed, angle_units)
    if suffix in (".h5", ".hdf5"):
        return h5.read(path)
    return {".ang": ang.read, ".ctf": ctf.read}[suffix](path, compressed)
