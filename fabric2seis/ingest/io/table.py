"""Reader of the CSV table of CONTRACT.md: pixel maps (with x, y) or grain lists (without).

Columns: ``phase``, ``phi1``, ``Phi``, ``phi2`` (Bunge Euler angles, degrees unless the settings
say ``table.angle_units: radians``), optional ``weight``, ``x``, ``y``, ``quality``. Header names
are matched case-sensitively for the angles (``phi`` vs ``Phi`` matter) and otherwise as written.
A phase of ``0``, empty, ``none``, ``not indexed`` or ``notindexed`` marks an unindexed point.
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
import pandas as pd

from fabric2seis.errors import InputError
from fabric2seis.ingest.io.record import EBSDData, check_angles, check_map
from fabric2seis.ingest.io.text import csv_line_of_row, csv_row_longer_than_header, decode, plain_text_file
from fabric2seis.orientations import from_bunge_euler

REQUIRED = ("phase", "phi1", "Phi", "phi2")
OPTIONAL = ("weight", "x", "y", "quality")
UNINDEXED = {"", "0", "none", "not indexed", "notindexed", "nan", "-1"}


def read(path: Path, compressed: bool = False, angle_units: str = "degrees") -> EBSDData:
    """Read a CSV table (pixel map or grain list), checking every row.

    Parameters
    ----------
    path : Path
        The file.
    compressed : bool
        Whether it is gzip-compressed.
    angle_units : {"degrees", "radians"}
        Unit of the Bunge Euler angles.

    Returns
    -------
    EBSDData
        Orientations (N, 4), phase ids numbered 1.. in the alphabetical order of the phase names
        (-1 unindexed), x, y and the grid for maps (None for grain lists), ``weight`` and
        ``quality`` where given.

    Raises
    ------
    InputError
        If the file is empty or not CSV, a required column is missing, a value is not a number,
        angles are out of range or contradict ``angle_units``, only one of x and y is given, the
        map is not on a grid, or a weight is negative.

    References
    ----------
    Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
    """
    with plain_text_file(path, compressed) as plain:
        text = decode(plain.read_bytes(), path)      # UTF-8, or refused naming the line of the first other byte
        try:
            frame = pd.read_csv(io.StringIO(text), dtype=str, keep_default_na=False, skipinitialspace=True)
        except pd.errors.EmptyDataError:
            raise InputError("the file is empty", path) from None
        except (pd.errors.ParserError, UnicodeDecodeError) as exc:
            raise InputError(f"not a readable CSV table ({str(exc).strip()[:150]})", path) from None

        if not isinstance(frame.index, pd.RangeIndex):  # pandas takes a first column with no name for an index
            raise InputError(f"a row has more values than the header's {len(frame.columns)} column names", path,
                             csv_row_longer_than_header(io.StringIO(text, newline="")))

        def where(row: int) -> str:     # the parser skips blank lines: count them back in
            return csv_line_of_row(text, row)

        return _record(frame, path, angle_units, where)


def _record(frame: pd.DataFrame, path: Path, angle_units: str, where) -> EBSDData:
    """The checked record of a table read as text (``where(row)`` names a data row's line)."""
    frame.columns = [c.strip() for c in frame.columns]
    missing = [c for c in REQUIRED if c not in frame.columns]
    if missing:
        raise InputError(f"missing column(s) {', '.join(missing)}; the table needs "
                         f"{', '.join(REQUIRED)} and may have {', '.join(OPTIONAL)}", path, "line 1")
    if len(frame) == 0:
        raise InputError("the table has a header but no data rows", path)
    numbers = {c: _numeric(frame, c, path, where) for c in ("phi1", "Phi", "phi2", *OPTIONAL) if c in frame.columns}
    euler = np.column_stack([numbers["phi1"], numbers["Phi"], numbers["phi2"]])
    check_angles(euler, angle_units, path, where, "columns phi1, Phi, phi2")
    if angle_units == "degrees":
        euler = np.radians(euler)
    names = frame["phase"].str.strip()
    unindexed = names.str.lower().isin(UNINDEXED).to_numpy()
    labels = sorted(set(names[~unindexed]))
    ids = {name: i + 1 for i, name in enumerate(labels)}
    phase_id = np.array([-1 if u else ids[n] for n, u in zip(names, unindexed)], dtype=int)
    x = numbers.get("x")
    y = numbers.get("y")
    if (x is None) != (y is None):
        raise InputError("a map needs both x and y columns; a grain list has neither", path, "line 1")
    grid: str | None = None
    step: float | None = None
    if x is not None and y is not None:
        grid, step = check_map(x, y, path, where=where)
    weights = numbers.get("weight")
    if weights is not None:
        for bad, what in ((~np.isfinite(weights), "is not a finite number"), (weights < 0, "is negative")):
            if np.any(bad):
                row = int(np.flatnonzero(bad)[0])
                raise InputError(f"a weight {what} ({weights[row]:g})", path, f"{where(row)}, column weight")
        for name, i in ids.items():     # a phase without weight has no fraction and no average
            if not weights[phase_id == i].sum() > 0:
                raise InputError(f"every weight of phase '{name}' is 0; give its grains their areas or volumes, "
                                 "or leave the weight column out", path, "column weight")
    quality = {"quality": numbers["quality"]} if "quality" in numbers else {}
    return EBSDData(source=str(path), quat=from_bunge_euler(euler), phase_id=phase_id,
                    phase_names={i: n for n, i in ids.items()},
                    phase_point_groups={i: None for i in ids.values()},
                    x=x, y=y, step=step, grid=grid, quality=quality, weights=weights)


def _numeric(frame: pd.DataFrame, column: str, path: Path, where) -> np.ndarray:
    raw = frame[column].str.strip()
    values = pd.to_numeric(raw, errors="coerce").to_numpy(dtype=float)
    bad = np.flatnonzero(np.isnan(values) & ~raw.str.lower().isin({"nan"}).to_numpy())
    if len(bad):
        row = int(bad[0])
        text = str(raw.iloc[row])
        what = "a value is missing (truncated row?)" if text == "" else f"'{text[:20]}' is not a number"
        raise InputError(what, path, f"{where(row)}, column {column}")
    return values
