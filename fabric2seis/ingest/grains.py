"""Grain reconstruction on EBSD maps and grain statistics.

Neighbours on the grid (4-connected square, 6-connected hexagonal) of the same mineral are in one
grain when their misorientation, the smallest over the crystal symmetry, is below the threshold;
grains are the connected components of that graph. The mean orientation of a grain is the
normalised sum of its pixels' quaternions after each pixel is brought to the symmetry variant
nearest the grain's first pixel.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from fabric2seis.orientations import nearest_equivalent, proper_symmetry_quaternions, to_bunge_euler, within_angle

if TYPE_CHECKING:       # pandas and scipy are imported where they are used, to keep start-up short
    import pandas as pd

    from fabric2seis.elastic.minerals import Mineral


@dataclass
class Grains:
    """Per-grain arrays (G,) and the grain of every point (N,).

    Attributes
    ----------
    point_grain
        Grain of every point (N,), 0-based.
    mineral_index
        Mineral of every grain (G,), an index into the sample's list of minerals.
    quat
        Mean orientation of every grain (G, 4), orix quaternions.
    n_pixels
        Points in every grain (G,).
    area
        Area of every grain (G,), in the map's length unit squared (square micrometres).
    x, y
        Centroid of every grain (G,), in the map's length unit.
    equivalent_diameter
        Diameter of the circle of the same area (G,), in the map's length unit.
    aspect_ratio
        Ratio of the long to the short axis of the grain's second-moment ellipse (G,).
    long_axis_deg
        Direction of the long axis (G,), degrees from map x towards map y, 0-180.
    """

    point_grain: np.ndarray
    mineral_index: np.ndarray
    quat: np.ndarray
    n_pixels: np.ndarray
    area: np.ndarray
    x: np.ndarray
    y: np.ndarray
    equivalent_diameter: np.ndarray
    aspect_ratio: np.ndarray
    long_axis_deg: np.ndarray

    @property
    def n_grains(self) -> int:
        """Number of grains G."""
        return len(self.n_pixels)


def grid_indices(x: np.ndarray, y: np.ndarray, grid: str, step: float) -> tuple[np.ndarray, np.ndarray]:
    """Place every point on integer grid (row, column) indices; hexagonal columns count half steps.

    Parameters
    ----------
    x, y : numpy.ndarray, shape (N,)
        Map coordinates, in the map's length unit.
    grid : {"square", "hex"}
        Grid type.
    step : float
        Map step, in the unit of ``x``.

    Returns
    -------
    row, column : numpy.ndarray of int, each shape (N,)
        Indices counted from the smallest y and x.
    """
    if grid == "hex":
        row = np.rint((y - y.min()) / (step * np.sqrt(3.0) / 2.0)).astype(np.int64)
        col = np.rint(2.0 * (x - x.min()) / step).astype(np.int64)
    else:
        row = np.rint((y - y.min()) / step).astype(np.int64)
        col = np.rint((x - x.min()) / step).astype(np.int64)
    return row, col


def neighbour_pairs(x: np.ndarray, y: np.ndarray, grid: str, step: float) -> tuple[np.ndarray, np.ndarray]:
    """Index pairs (i, j) of grid neighbours, each pair once.

    Points are placed in a dense table of grid cells (maps are nearly full rectangles), so finding
    a neighbour is a lookup, not a search.

    Parameters
    ----------
    x, y : numpy.ndarray, shape (N,)
        Map coordinates, in the map's length unit.
    grid : {"square", "hex"}
        Grid type: 4 neighbours on a square grid, 6 on a hexagonal one.
    step : float
        Map step, in the unit of ``x``.

    Returns
    -------
    i, j : numpy.ndarray of int, each shape (P,)
        Point indices of the neighbouring pairs.

    Raises
    ------
    ValueError
        If the points fill too little of their grid for the step.
    """
    row, col = grid_indices(x, y, grid, step)
    n_rows, n_cols = int(row.max()) + 2, int(col.max()) + 3
    if n_rows * n_cols > 8 * len(x) + 1024:
        raise ValueError("map coordinates are too sparse for their step; check the file's step")
    table = np.full((n_rows, n_cols), -1, dtype=np.int32)
    table[row, col] = np.arange(len(x), dtype=np.int32)
    offsets = [(0, 2), (1, 1), (1, -1)] if grid == "hex" else [(0, 1), (1, 0)]
    first, second = [], []
    for dr, dc in offsets:
        c = col + dc
        ok = c >= 0
        other = np.full(len(x), -1, dtype=np.int32)
        other[ok] = table[row[ok] + dr, c[ok]]
        hit = np.flatnonzero(other >= 0)
        first.append(hit)
        second.append(other[hit])
    return np.concatenate(first), np.concatenate(second)


def reconstruct(x, y, grid: str, step: float, quat: np.ndarray, mineral_index: np.ndarray,
                minerals: list[Mineral], threshold_deg: float, pixel_area: float) -> Grains:
    """Reconstruct the grains of a map (see the module docstring); all grains, before any size filter.

    Parameters
    ----------
    x, y : numpy.ndarray, shape (N,)
        Map coordinates, in the map's length unit.
    grid : {"square", "hex"}
        Grid type.
    step : float
        Map step, in the unit of ``x``.
    quat : numpy.ndarray, shape (N, 4)
        Orientations, orix quaternions.
    mineral_index : numpy.ndarray of int, shape (N,)
        Mineral of every point, an index into ``minerals``.
    minerals : list of Mineral
        The sample's minerals (their crystal symmetry).
    threshold_deg : float
        Largest misorientation between neighbours of one grain, degrees.
    pixel_area : float
        Area of one point, in the unit of ``x`` squared.

    Returns
    -------
    Grains
        Every grain's mean orientation, size and shape, and the grain of every point.

    Raises
    ------
    ValueError
        If the points fill too little of their grid (:func:`neighbour_pairs`).
    """
    n = len(quat)
    i, j = neighbour_pairs(x, y, grid, step)
    same = mineral_index[i] == mineral_index[j]
    i, j = i[same], j[same]
    threshold = np.radians(threshold_deg)
    if len(minerals) == 1:
        linked = within_angle(quat[i], quat[j], proper_symmetry_quaternions(minerals[0].symmetry), threshold)
    else:
        linked = np.zeros(len(i), dtype=bool)
        pair_mineral = mineral_index[i]
        for k, m in enumerate(minerals):
            sel = np.flatnonzero(pair_mineral == k)
            if len(sel):
                sym = proper_symmetry_quaternions(m.symmetry)
                linked[sel] = within_angle(quat[i[sel]], quat[j[sel]], sym, threshold)
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    graph = coo_matrix((np.ones(int(linked.sum()), dtype=np.int8), (i[linked], j[linked])), shape=(n, n))
    _, label = connected_components(graph, directed=False)
    return grain_statistics(label, x, y, quat, mineral_index, minerals, pixel_area, step)


def grain_statistics(label, x, y, quat, mineral_index, minerals, pixel_area, step) -> Grains:
    """Compute the mean orientation, size and shape of every labelled grain.

    Parameters
    ----------
    label : numpy.ndarray of int, shape (N,)
        Grain label of every point (any numbering; grains are renumbered by first point).
    x, y : numpy.ndarray, shape (N,)
        Map coordinates, in the map's length unit.
    quat : numpy.ndarray, shape (N, 4)
        Orientations, orix quaternions.
    mineral_index : numpy.ndarray of int, shape (N,)
        Mineral of every point, an index into ``minerals``.
    minerals : list of Mineral
        The sample's minerals.
    pixel_area : float
        Area of one point, in the unit of ``x`` squared.
    step : float
        Map step, in the unit of ``x`` (each pixel's own second moment).

    Returns
    -------
    Grains
        Per-grain mean orientation, pixel count, area, centroid, equivalent diameter, aspect
        ratio and long-axis direction (degrees).
    """
    # renumber grains by first appearance so results do not depend on the graph library
    g = int(label.max()) + 1
    first = np.empty(g, dtype=np.int64)
    first[label[::-1]] = np.arange(len(label) - 1, -1, -1)  # later writes win: the smallest index stays
    if np.any(np.diff(first) < 0):
        order = np.argsort(first)
        rank = np.empty_like(order)
        rank[order] = np.arange(g)
        label, first = rank[label], first[order]
    grain_mineral = mineral_index[first]
    # One pass suffices: within a grain neighbours differ by less than the threshold, while
    # symmetry variants of one orientation lie at least 60 degrees apart.
    aligned = np.empty_like(quat)
    for k, m in enumerate(minerals):
        sel = mineral_index == k
        if sel.any():
            sym = proper_symmetry_quaternions(m.symmetry)
            aligned[sel] = nearest_equivalent(quat[sel], quat[first][label[sel]], sym)
    mean = np.stack([np.bincount(label, weights=aligned[:, c], minlength=g) for c in range(4)], axis=1)
    mean = mean / np.linalg.norm(mean, axis=1, keepdims=True)
    count = np.bincount(label, minlength=g)
    cx = np.bincount(label, weights=x, minlength=g) / count
    cy = np.bincount(label, weights=y, minlength=g) / count
    dx, dy = x - cx[label], y - cy[label]
    # shape tensor: second moments of the pixel centres plus each pixel's own (a square of side step)
    own = step ** 2 / 12.0
    sxx = np.bincount(label, weights=dx * dx, minlength=g) / count + own
    syy = np.bincount(label, weights=dy * dy, minlength=g) / count + own
    sxy = np.bincount(label, weights=dx * dy, minlength=g) / count
    half_trace = (sxx + syy) / 2.0
    root = np.sqrt(((sxx - syy) / 2.0) ** 2 + sxy ** 2)
    major, minor = half_trace + root, np.maximum(half_trace - root, 1e-300)
    long_axis = np.degrees(0.5 * np.arctan2(2.0 * sxy, sxx - syy)) % 180.0
    area = count * pixel_area
    return Grains(point_grain=label, mineral_index=grain_mineral, quat=mean, n_pixels=count, area=area,
                  x=cx, y=cy, equivalent_diameter=2.0 * np.sqrt(area / np.pi),
                  aspect_ratio=np.sqrt(major / minor), long_axis_deg=long_axis)


def keep_large(grains: Grains, min_pixels: int) -> tuple[Grains, np.ndarray]:
    """Keep the grains with at least ``min_pixels`` pixels.

    Parameters
    ----------
    grains : Grains
        All grains of a map.
    min_pixels : int
        Fewest pixels a grain must have.

    Returns
    -------
    kept : Grains
        The grains kept, renumbered, with the grain of every point kept.
    point_keep : numpy.ndarray of bool, shape (N,)
        Which points of the map lie in a kept grain.
    """
    big = grains.n_pixels >= min_pixels
    new_id = np.full(grains.n_grains, -1)
    new_id[big] = np.arange(int(big.sum()))
    point_keep = big[grains.point_grain]
    kept = Grains(point_grain=new_id[grains.point_grain[point_keep]],
                  **{f: getattr(grains, f)[big] for f in
                     ("mineral_index", "quat", "n_pixels", "area", "x", "y", "equivalent_diameter",
                      "aspect_ratio", "long_axis_deg")})
    return kept, point_keep


def grains_table(grains: Grains, minerals: list[Mineral]) -> pd.DataFrame:
    """Build ``grains.csv``: one row per grain, orientation as Bunge angles in the structural frame.

    Parameters
    ----------
    grains : Grains
        The grains (orientations in the structural frame).
    minerals : list of Mineral
        The sample's minerals, indexed by ``grains.mineral_index``.

    Returns
    -------
    pandas.DataFrame
        Grain number (1-based), mineral, Bunge angles (degrees), pixels, area (um^2), equivalent
        diameter (um), aspect ratio, long-axis direction (degrees from map x) and centroid (um).

    References
    ----------
    Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
    """
    import pandas as pd

    euler = np.degrees(to_bunge_euler(grains.quat)) % 360.0
    return pd.DataFrame({
        "grain": np.arange(grains.n_grains) + 1,
        "mineral": [minerals[k].name for k in grains.mineral_index],
        "phi1_deg": euler[:, 0].round(4), "Phi_deg": euler[:, 1].round(4), "phi2_deg": euler[:, 2].round(4),
        "n_pixels": grains.n_pixels,
        "area_um2": grains.area.round(6),
        "equivalent_diameter_um": grains.equivalent_diameter.round(6),
        "aspect_ratio": grains.aspect_ratio.round(4),
        "long_axis_deg_from_map_x": grains.long_axis_deg.round(3),
        "centroid_map_x_um": grains.x.round(6), "centroid_map_y_um": grains.y.round(6),
    })
