"""Reader of the CSV table of CONTRACT.md: pixel maps (with x, y) or grain lists (without).

Columns: ``phase``, ``phi1``, ``Phi``, ``phi2`` (Bunge Euler angles, degrees unless the settings
say ``table.angle_units: radians``), optional ``weight``, ``x``, ``y``, ``quality``. Header names
are matched case-sensitively for the angles (``phi`` vs ``Phi`` matter) and otherwise as written.
A phase of ``0``, empty, ``none``, ``not indexed`` or ``notindexed`` marks an unindexed point.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
from orix.quaternion import Rotation

from fabric2seis.errors import InputError
from fabric2seis.ingest.io.record import EBSDData, check_angles, check_map
from fabric2seis.ingest.io.text import plain_text_file

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
        try:
            frame = pd.read_csv(plain, dtype=str, keep_default_na=False, skipinitialspace=True)
        except pd.errors.EmptyDataError:
            raise InputError("the file is empty", path) from None
        except (pd.errors.ParserError, UnicodeDecodeError) as exc:
            raise InputError(f"not a readable CSV table ({str(exc).strip()[:150]})", path) from None
    frame.columns = [c.strip() for c in frame.columns]
    missing = [c for c in REQUIRED if c not in frame.columns]
    if missing:
        raise InputError(f"missing column(s) {', '.join(missing)}; the table needs "
                         f"{', '.join(REQUIRED)} and may have {', '.join(OPTIONAL)}", path, "line 1")
    if len(frame) == 0:
        raise InputError("the table has a header but no data rows", path)
    numbers = {c: _numeric(frame, c, path) for c in ("phi1", "Phi", "phi2", *OPTIONAL) if c in frame.columns}
    euler = np.column_stack([numbers["phi1"], numbers["Phi"], numbers["phi2"]])
    check_angles(euler, angle_units, path, lambda row: f"line {row + 2}")
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
        grid, step = check_map(x, y, path, where=lambda row: f"line {row + 2}")
    weights = numbers.get("weight")
    if weights is not None and np.any(weights < 0):
        row = int(np.flatnonzero(weights < 0)[0]) + 2
        raise InputError("a weight is negative", path, f"line {row}, column weight")
    quality = {"quality": numbers["quality"]} if "quality" in numbers else {}
    return EBSDData(source=str(path), quat=Rotation.from_euler(euler).data, phase_id=phase_id,
                    phase_names={i: n for n, i in ids.items()},
                    phase_point_groups={i: None for i in ids.values()},
                    x=x, y=y, step=step, grid=grid, quality=quality, weights=weights)


def _numeric(frame: pd.DataFrame, column: str, path: Path) -> np.ndarray:
    raw = frame[column].str.strip()
    values = pd.to_numeric(raw, errors="coerce").to_numpy(dtype=float)
    bad = np.flatnonzero(np.isnan(values) & ~raw.str.lower().isin({"nan"}).to_numpy())
    if len(bad):
        row = int(bad[0])
        text = raw.iloc[row]
        what = "a value is missing (truncated row?)" if text == "" else f"'{text[:20]}' is not a number"
        raise InputError(what, path, f"line {row + 2}, column {column}")
    return values
