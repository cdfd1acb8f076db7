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
        return len(self.phase_id)

    @property
    def is_map(self) -> bool:
        return self.x is not None

    @property
    def pixel_area(self) -> float:
        """Area of one map point (square: step^2; hexagonal: step^2 sqrt(3)/2)."""
        if self.step is None:
            return 1.0
        return self.step ** 2 * (np.sqrt(3.0) / 2.0 if self.grid == "hex" else 1.0)


def check_angles(euler: np.ndarray, units: str, source, first_line: int | None = None) -> None:
    """Refuse NaN angles, and angles whose range contradicts the declared units.

    Bunge angles span phi1, phi2 in [0, 360) and Phi in [0, 180] degrees. Angles that never exceed
    2 pi in a set of more than 20 points look like radians declared as degrees; angles beyond
    2 pi (plus rounding) cannot be radians. Both are refused rather than guessed.
    """
    bad = np.flatnonzero(~np.all(np.isfinite(euler), axis=1))
    if len(bad):
        where = f"line {first_line + bad[0]}" if first_line is not None else f"point {bad[0] + 1}"
        raise InputError("Euler angle is not a number (NaN or infinite)", source, where)
    if len(euler) == 0:
        return
    largest = np.abs(euler).max()
    if units == "degrees" and len(euler) > 20 and largest <= 2 * np.pi + 1e-3:
        raise InputError(f"the Euler angles look like radians (largest {largest:.3f}) but degrees are "
                         "declared; set table.angle_units: radians in the settings if they are",
                         source)
    if units == "radians" and largest > 2 * np.pi + 1e-2:
        raise InputError(f"the Euler angles look like degrees (largest {largest:.1f}) but this format "
                         "stores radians", source)


def check_map(x: np.ndarray, y: np.ndarray, source) -> None:
    """Refuse maps of one point and maps with repeated coordinates."""
    if len(x) < 2:
        raise InputError(f"a map needs at least two points, this one has {len(x)}", source)
    if not (np.all(np.isfinite(x)) and np.all(np.isfinite(y))):
        raise InputError("map coordinates are not all numbers", source)
    # coordinates to integers at a resolution far below any step, then one sort of int64 keys
    scale = 1e5 / max(np.ptp(x), np.ptp(y), 1e-12)
    ix = np.rint((x - x.min()) * scale).astype(np.int64)
    iy = np.rint((y - y.min()) * scale).astype(np.int64)
    key = np.sort(iy * (int(ix.max()) + 1) + ix)
    if np.any(key[1:] == key[:-1]):
        dup_key = key[1:][key[1:] == key[:-1]][0]
        i = int(np.flatnonzero(iy * (int(ix.max()) + 1) + ix == dup_key)[1])
        raise InputError(f"duplicate map coordinates x = {x[i]:g}, y = {y[i]:g} (point {i + 1}); "
                         "each point of a map must be at its own place", source)


def infer_grid(x: np.ndarray, y: np.ndarray) -> tuple[str, float]:
    """Grid type and step of a map from its coordinates.

    A hexagonal grid has rows sqrt(3)/2 steps apart with every other row shifted by half a step.
    """
    xs = np.unique(np.round(x, 6))
    ys = np.unique(np.round(y, 6))
    dx = np.diff(xs)
    dy = np.diff(ys)
    step_x = float(np.min(dx[dx > 0])) if np.any(dx > 0) else float(np.min(dy[dy > 0]))
    if len(ys) > 1:
        row_gap = float(np.min(dy[dy > 0]))
        # a hexagonal map has half-step offsets between rows: the x spacing seen is step/2
        if abs(row_gap - step_x * np.sqrt(3.0)) < 1e-3 * row_gap:
            return "hex", 2 * step_x
    return "square", step_x
