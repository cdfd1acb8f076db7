"""The one in-memory record every reader returns, and the checks all readers share."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from fabric2seis.errors import InputError


@dataclass
class EBSDData:
    """What an EBSD export holds, in the sample frame, before any cleaning.

    Attributes
    ----------
    source
        The file read.
    quat
        Orientations as orix quaternions (N, 4) (``orix.quaternion.Rotation(quat).to_matrix()``
        are Bunge's passive matrices g, ``v_crystal = g v_sample``).
    phase_id
        Phase of each point (N,); -1 for points that were not indexed.
    phase_names, phase_point_groups
        Per phase id: its name in the file, and its point group as the file states it
        (None where the file does not say).
    x, y
        Map coordinates (N,) in the file's length unit (micrometres for most vendors);
        None for grain lists.
    step
        Map step (spacing of neighbouring points along x); None for grain lists.
    grid
        ``"square"``, ``"hex"`` or None (grain list).
    quality
        Quality measures the file has, by name (``ci``, ``iq``, ``fit``, ``bc``, ``bs``, ``mad``,
        ``quality``...).
    weights
        Weight of each point from the file (grain lists: area or volume), or None.
    """

    source: str
    quat: np.ndarray
    phase_id: np.ndarray
    phase_names: dict[int, str]
    phase_point_groups: dict[int, str | None]
    x: np.ndarray | None = None
    y: np.ndarray | None = None
    step: float | None = None
    grid: str | None = None
    quality: dict[str, np.ndarray] = field(default_factory=dict)
    weights: np.ndarray | None = None

    @property
    def n_points(self) -> int:
        """Number of points (map pixels or listed grains), indexed or not."""
        return len(self.phase_id)

    @property
    def is_map(self) -> bool:
        """True for a map with coordinates, False for a list of grains."""
        return self.x is not None

    @property
    def pixel_area(self) -> float:
        """Area of one map point (square: step^2; hexagonal: step^2 sqrt(3)/2), in the file's length unit squared.

        1.0 for grain lists, which have no step.
        """
        if self.step is None:
            return 1.0
        return self.step ** 2 * (np.sqrt(3.0) / 2.0 if self.grid == "hex" else 1.0)


OFF_GRID_TOLERANCE = 0.1     # of a step: farther from a grid node than this, a point is off the grid
RADIANS_TOLERANCE = 1e-3     # 2 pi plus rounding of written angles


def _row_place(where, row: int) -> str:
    return where(row) if where is not None else f"point {row + 1}"


def check_angles(euler: np.ndarray, units: str, source, where=None, columns: str = "the Euler angle columns") -> None:
    """Refuse NaN angles, angles out of the Bunge ranges, and angles that contradict the units.

    Every row is checked. Bunge angles span phi1, phi2 in [0, 360) and Phi in [0, 180] degrees
    (common practice; negative phi1, phi2 down to -360 are accepted, as some programs write
    them). Angles that never exceed 2 pi look like radians declared as degrees, however few rows
    there are (only an all-zero set is not suspect: it is the same rotation in either unit);
    angles beyond 2 pi (plus rounding) cannot be radians. Both are refused rather than guessed.

    ``where(row) -> str`` names the place of a 0-based data row in the file ("line 12").

    Parameters
    ----------
    euler : array_like, shape (N, 3)
        Bunge Euler angles phi1, Phi, phi2, one row per point.
    units : {"degrees", "radians"}
        The unit the angles are declared in.
    source : str or path
        The file, named in error messages.
    where : callable, optional
        Maps a 0-based row to its place in the file; "point n" if not given.
    columns : str
        Names the angle columns, the place of faults of the whole set (units).

    Raises
    ------
    InputError
        On a NaN or infinite angle, angles that contradict the declared unit, Phi outside half a
        turn, or phi1, phi2 beyond a full turn.

    References
    ----------
    Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
    """
    euler = np.asarray(euler, dtype=float)
    if len(euler) == 0:
        return
    bad = np.flatnonzero(~np.all(np.isfinite(euler), axis=1))
    if len(bad):
        raise InputError("Euler angle is not a number (NaN or infinite)", source, _row_place(where, int(bad[0])))
    largest = float(np.abs(euler).max())
    if units == "degrees" and 0.0 < largest <= 2 * np.pi + RADIANS_TOLERANCE:
        raise InputError(f"the Euler angles look like radians (largest {largest:.3f} in {len(euler)} rows) but "
                         "degrees are declared; set table.angle_units: radians in the settings if they are",
                         source, columns)
    beyond = (np.flatnonzero(np.abs(euler).max(axis=1) > 2 * np.pi + 1e-2) if units == "radians"
              else np.empty(0, dtype=np.int64))
    if len(beyond) > max(1, 0.05 * len(euler)):
        raise InputError(f"the Euler angles look like degrees (largest {largest:.1f}) but radians are "
                         "expected here", source, _row_place(where, int(beyond[0])))
    full_turn, half_turn = (2 * np.pi, np.pi) if units == "radians" else (360.0, 180.0)
    slack = 1e-6 * full_turn + (RADIANS_TOLERANCE if units == "radians" else 0.05)
    phi = euler[:, 1]
    wrong_phi = np.flatnonzero((phi < -slack) | (phi > half_turn + slack))
    if len(wrong_phi):
        row = int(wrong_phi[0])
        raise InputError(f"Phi = {phi[row]:g} {units} lies outside 0-{half_turn:g}; Bunge's second angle "
                         "spans half a turn", source, _row_place(where, row))
    outer = np.abs(euler[:, [0, 2]]).max(axis=1)
    wrong = np.flatnonzero(outer > full_turn + slack)
    if len(wrong):
        row = int(wrong[0])
        raise InputError(f"phi1 or phi2 = {outer[row]:g} {units} lies beyond a full turn", source,
                         _row_place(where, row))


MAX_PHASE_ID = 2**31 - 1


def check_phase_ids(ids: np.ndarray, source, where=None) -> np.ndarray:
    """Return a phase column as integers, refusing values that are not whole numbers from -1 up.

    Parameters
    ----------
    ids : array_like, shape (N,)
        The phase column as read (floats).
    source : str or path
        The file, named in error messages.
    where : callable, optional
        Maps a 0-based row to its place in the file; "point n" if not given.

    Returns
    -------
    numpy.ndarray of int, shape (N,)
        The phase ids.

    Raises
    ------
    InputError
        On a phase id that is not a finite whole number in -1 to ``MAX_PHASE_ID``.
    """
    ids = np.asarray(ids, dtype=float)
    with np.errstate(invalid="ignore"):
        bad = np.flatnonzero(~np.isfinite(ids) | (ids != np.round(ids)) | (ids < -1) | (ids > MAX_PHASE_ID))
    if len(bad):
        row = int(bad[0])
        raise InputError(f"phase id {ids[row]:g} is not a whole number from -1 up", source, _row_place(where, row))
    return ids.astype(np.int64)


def _levels(values: np.ndarray, tol: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Distinct values (closer than ``tol`` merged), each point's level and each level's count."""
    order = np.argsort(values, kind="stable")
    ordered = values[order]
    new = np.ones(len(ordered), dtype=bool)
    new[1:] = np.diff(ordered) > tol
    level_sorted = np.cumsum(new) - 1
    level = np.empty(len(values), dtype=np.int64)
    level[order] = level_sorted
    return ordered[new], level, np.bincount(level_sorted)


def _spacing(levels: np.ndarray, counts: np.ndarray, only_shared: bool) -> float | None:
    """The grid spacing: the smallest gap between levels (those shared by two or more points if asked,
    so that a few stray points do not set it; all levels where fewer than two are shared)."""
    used = levels[counts >= 2] if only_shared else levels
    if len(used) < 2:
        used = levels
    if len(used) < 2:
        return None
    return float(np.min(np.diff(used)))


def check_map(x: np.ndarray, y: np.ndarray, source, declared_grid: str | None = None,
              declared_step: float | None = None, expected_points: tuple[int, str] | None = None,
              where=None, columns: str = "columns x, y", header: dict[str, str | None] | None = None
              ) -> tuple[str, float]:
    """Check a map's coordinates and return its grid type and step.

    Refused: fewer than two points, coordinates that are not numbers, a point count other than the
    header announces (``expected_points`` = (count, how the header gives it)), coordinates that are
    not on a grid (no two points share a row or a column), points farther than
    ``OFF_GRID_TOLERANCE`` of a step from the nearest node, repeated coordinates, unequal x and y
    steps on a square grid, a grid type or step other than the header declares, and points that
    fill less than an eighth of their bounding grid. A hexagonal grid has rows sqrt(3)/2 steps
    apart with every other row shifted by half a step.

    Parameters
    ----------
    x, y : array_like, shape (N,)
        Map coordinates, in the file's length unit.
    source : str or path
        The file, named in error messages.
    declared_grid : {"square", "hex"}, optional
        Grid type the header declares.
    declared_step : float, optional
        Step the header declares, in the unit of ``x``.
    expected_points : (int, str), optional
        Point count the header announces, and how the header gives it.
    where : callable, optional
        Maps a 0-based row to its place in the file.
    columns : str
        Names the coordinate columns, the place of faults of the whole map.
    header : dict of str to str, optional
        The places of the header's ``"grid"``, ``"step"`` and ``"points"``, where it has them.

    Returns
    -------
    grid : {"square", "hex"}
        Grid type.
    step : float
        Spacing of neighbouring points along x, in the unit of ``x``.

    Raises
    ------
    InputError
        On any of the faults listed above.
    """
    header = header or {}
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    n = len(x)
    if n < 2:
        raise InputError(f"a map needs at least two points, this one has {n}", source, columns)
    for name, v in (("x", x), ("y", y)):
        bad = np.flatnonzero(~np.isfinite(v))
        if len(bad):
            raise InputError(f"map coordinate {name} is not a number", source, _row_place(where, int(bad[0])))
    if expected_points is not None and expected_points[0] != n:
        raise InputError(f"the header announces {expected_points[0]:,} points ({expected_points[1]}) but the file "
                         f"has {n:,} (truncated, or rows added?)", source, header.get("points"))
    span = max(float(np.ptp(x)), float(np.ptp(y)))
    if span == 0.0:
        raise InputError(f"every point of the map is at x = {x[0]:g}, y = {y[0]:g}; each point of a map must "
                         "be at its own place", source, columns)
    tol = 1e-7 * span
    xv, _, x_counts = _levels(x, tol)
    yv, _, y_counts = _levels(y, tol)
    if n >= 4 and x_counts.max() < 2 and y_counts.max() < 2:
        raise InputError("map coordinates are not on a grid: no two points share a row or a column", source, columns)
    spacing_x = _spacing(xv, x_counts, only_shared=len(yv) > 1)
    spacing_y = _spacing(yv, y_counts, only_shared=len(xv) > 1)
    if spacing_x is None and spacing_y is None:
        raise InputError("map coordinates are not on a grid: no row or column holds two points", source, columns)
    dx: float = spacing_x if spacing_x is not None else spacing_y  # type: ignore[assignment]
    dy: float = spacing_y if spacing_y is not None else dx
    fx, fy = (x - xv[0]) / dx, (y - yv[0]) / dy
    kx, ky = np.rint(fx), np.rint(fy)
    off = np.flatnonzero((np.abs(fx - kx) > OFF_GRID_TOLERANCE) | (np.abs(fy - ky) > OFF_GRID_TOLERANCE))
    if len(off) > n // 2:
        raise InputError(f"map coordinates are not on a grid: {len(off):,} of {n:,} points lie between the "
                         "nodes of any grid their rows and columns suggest", source, columns)
    if len(off):
        i = int(off[0])
        raise InputError(f"point off the grid: x = {x[i]:g}, y = {y[i]:g} lies between the grid's nodes "
                         f"(spacing {dx:g} along x, {dy:g} along y; {len(off):,} such points)", source,
                         _row_place(where, i))
    cell = ky.astype(np.int64) * (int(kx.max()) + 1) + kx.astype(np.int64)
    order = np.argsort(cell, kind="stable")
    repeated = np.flatnonzero(cell[order][1:] == cell[order][:-1])
    if len(repeated):
        i = int(order[repeated[0] + 1])
        raise InputError(f"duplicate map coordinates x = {x[i]:g}, y = {y[i]:g}; each point of a map must be "
                         "at its own place", source, _row_place(where, i))
    hexagonal = (len(yv) > 1 and len(xv) > 1 and abs(dy / dx - np.sqrt(3.0)) < 1e-3 * np.sqrt(3.0)
                 and len(np.unique((kx + ky).astype(np.int64) % 2)) == 1)
    grid, step = ("hex", 2.0 * dx) if hexagonal else ("square", dx)
    if grid == "square" and len(xv) > 1 and len(yv) > 1 and abs(dx - dy) > 1e-3 * max(dx, dy):
        raise InputError(f"the map's steps differ along x ({dx:g}) and y ({dy:g}); fabric2seis needs a square "
                         "grid with equal steps or a hexagonal grid", source, columns)
    if declared_grid is not None and declared_grid != grid and len(yv) > 1:
        said = {"hex": "hexagonal", "square": "square"}
        raise InputError(f"the header declares a {said[declared_grid]} grid but the coordinates lie on a "
                         f"{said[grid]} grid", source, header.get("grid"))
    if declared_step is not None and declared_step > 0 and abs(declared_step - step) > 0.01 * step:
        raise InputError(f"the header declares a step of {declared_step:g} but the points lie {step:g} apart",
                         source, header.get("step"))
    cells = (int(kx.max()) + 1) * (int(ky.max()) + 1)
    if cells > 8 * n + 1024:
        raise InputError(f"the map's {n:,} points fill only {100 * n / cells:.1f} % of the grid they span; "
                         "is the step or a coordinate column wrong?", source, columns)
    return grid, step
