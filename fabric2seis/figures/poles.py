"""Pole figures, inverse pole figures and the convergence of the fabric indices with the number of grains.

The pole figures and inverse pole figures share one layout, made so that no text can sit on
another: the figure's heading above everything, then one band per phase (a matplotlib subfigure,
placed by constrained layout) with its own heading line (mineral, grains, points), one panel per
pole or structural axis under short titles, one colour bar for the band, and a side table of the
numbers of each panel (largest and smallest density, and where the largest lies). A phase with
fewer than ``FEW_GRAINS`` grains gets a boxed note under its table. The foot of the figure says
which hemisphere and projection are drawn (``projection.projection_note``).

Inverse pole figures show the fundamental sector of the phase's Laue class, taken from orix
(``Symmetry.fundamental_sector``: its bounding normals and the ordered edge), drawn in an
equal-area projection of the crystal frame with c* at the centre and a to the right; the phase's
figure poles are marked where orix folds them into the sector (``Vector3d.in_fundamental_sector``).
"""

from __future__ import annotations

import functools
import textwrap
from collections.abc import Mapping, Sequence

import numpy as np
from matplotlib import transforms
from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.patches import PathPatch
from matplotlib.path import Path as DrawnPath
from matplotlib.ticker import FixedLocator, MaxNLocator, NullFormatter, NullLocator, ScalarFormatter

from fabric2seis import fabric
from fabric2seis.fabric.phase import LEVELLING_SIZES
from fabric2seis.fabric.poles import parse_pole, pole_direction
from fabric2seis.figures.projection import (
    disk_grid,
    frame_axes,
    plt,
    projection_note,
    projection_text,
    save,
    trend_plunge_text,
)
from fabric2seis.orientations import proper_symmetry_quaternions, to_matrices
from fabric2seis.point_groups import point_group

#: below this many grains a pole density shows the kernel's shape as much as the fabric
FEW_GRAINS = 100
#: contour levels when the settings give none (``figures.pole_levels``): about this many steps
DEFAULT_LEVELS = 10
#: the structural axes whose inverse pole figures are drawn
STRUCTURAL_AXES = (("X", (1.0, 0.0, 0.0)), ("Y", (0.0, 1.0, 0.0)), ("Z", (0.0, 0.0, 1.0)))
_PANEL_IN = 2.15            # width of one projection panel, inches
_BAND_IN = 2.75             # height of one phase's band, inches
_TABLE_PT = 7.5             # font size of the side tables and notes, points
_ROW_PT = 12.0              # pitch of their rows, points
_GAP_PT = 12.0              # space between their columns, points


def contour_levels(top: float, levels: int | Sequence[float] | None = None) -> tuple[np.ndarray, str]:
    """Contour levels of a density, in m.u.d., and how the filled contours extend beyond them.

    Parameters
    ----------
    top : float
        Largest density to show (m.u.d.).
    levels : int or sequence of float, optional
        About this many steps from 0 to at least ``top`` and 1 m.u.d. (rounded to plain numbers),
        or the levels themselves (m.u.d., non-negative; sorted here). By default
        ``DEFAULT_LEVELS`` steps.

    Returns
    -------
    levels : numpy.ndarray
        Increasing levels, m.u.d.
    extend : str
        ``"neither"`` for a count, ``"both"`` for levels given (densities beyond them take the
        end colours).

    Raises
    ------
    ValueError
        If a count is below 2, or fewer than two levels or a negative level are given.
    """
    if levels is None or isinstance(levels, (int, np.integer)):
        steps = DEFAULT_LEVELS if levels is None else int(levels)
        if steps < 2:
            raise ValueError(f"a count of contour levels must be at least 2, got {steps}")
        return np.asarray(MaxNLocator(nbins=steps).tick_values(0.0, max(float(top), 1.0))), "neither"
    chosen = np.unique(np.asarray(levels, dtype=float))
    if chosen.size < 2 or not np.all(np.isfinite(chosen)) or chosen[0] < 0:
        raise ValueError(f"contour levels must be at least two non-negative numbers (m.u.d.), got {list(levels)}")
    return chosen, "both"


def _count_text(n: int, noun: str, points: int | None) -> str:
    extra = f", {points:,} points" if points is not None and noun != "points" else ""
    return f"{n:,} {noun}{extra}"


def _few_grains_note(n_grains: int, halfwidth_deg: float) -> str | None:
    if n_grains >= FEW_GRAINS:
        return None
    return "\n".join(textwrap.wrap(f"Only {n_grains} grains (fewer than {FEW_GRAINS}): the density is dominated "
                                   f"by the {halfwidth_deg:g}° kernel, not by the fabric; read maxima with care.",
                                   width=42))


def _side_table(ax, header: Sequence[Sequence[str]], rows: Sequence[Sequence[str]], right: Sequence[bool],
                note: str | None) -> None:
    """Write a small table from the top-left corner of ``ax`` (axis off), columns sized to their text.

    ``header`` holds the heading rows (names in bold, then units in grey); ``right`` says which
    columns are aligned right (numbers). ``note``, if any, goes in a box under the table.
    """
    root = ax.get_figure(root=True)
    renderer = root.canvas.get_renderer()
    cells = [list(h) for h in header] + [list(r) for r in rows]
    heads = len(header)

    def style(k: int) -> dict:
        return {"fontsize": _TABLE_PT, "fontweight": "bold" if k == 0 else "normal",
                "color": "0.35" if 0 < k < heads else "black"}

    probe = [[ax.text(0, 0, c, **style(k)) for c in row] for k, row in enumerate(cells)]
    widths = [max(t.get_window_extent(renderer).width for t in col) * 72.0 / root.dpi for col in zip(*probe)]
    for row in probe:
        for t in row:
            t.remove()
    x = np.concatenate([[0.0], np.cumsum(np.array(widths) + _GAP_PT)])
    for k, row in enumerate(cells):
        for j, c in enumerate(row):
            at = x[j] + (widths[j] if right[j] else 0.0)
            place = transforms.offset_copy(ax.transAxes, fig=root, x=at, y=-(k + 0.5) * _ROW_PT, units="points")
            ax.text(0.0, 1.0, c, transform=place, ha="right" if right[j] else "left", va="center", **style(k))
    rule = transforms.offset_copy(ax.transAxes, fig=root, x=0, y=-heads * _ROW_PT, units="points")
    ax.plot([0.0, x[-1] - _GAP_PT], [0.0, 0.0], transform=rule, color="0.5", lw=0.5)
    if note:
        place = transforms.offset_copy(ax.transAxes, fig=root, x=2.0, y=-(len(cells) + 0.8) * _ROW_PT,
                                       units="points")
        ax.text(0.0, 1.0, note, transform=place, fontsize=_TABLE_PT, ha="left", va="top", linespacing=1.3,
                bbox={"boxstyle": "round,pad=0.4", "facecolor": "#fde9c8", "edgecolor": "#c07a00", "lw": 0.8})
    ax.axis("off")


def _bands(n_phases: int, n_panels: int, table_in: float, height_in: float = _BAND_IN):
    """A figure with one subfigure per phase, each with panels, room for a colour bar and a table."""
    width = n_panels * _PANEL_IN + 0.9 + table_in
    fig = plt.figure(figsize=(width, height_in * n_phases + 0.9), layout="constrained")
    bands = np.atleast_1d(np.asarray(fig.subfigures(n_phases, 1, hspace=0.02), dtype=object))
    grids = []
    for band in bands:
        axes = band.subplots(1, n_panels + 1, width_ratios=[1.0] * n_panels + [table_in / _PANEL_IN])
        grids.append(axes)
    return fig, bands, grids


def _band_heading(band, text: str) -> None:
    band.suptitle(text, x=0.01, ha="left", fontsize=9, fontweight="bold")


def pole_density_grid(mineral, quat: np.ndarray, weights: np.ndarray, pole, halfwidth_deg: float,
                      hemisphere: str = "lower", n: int = 161) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """The pole density a pole figure draws, on its square screen grid.

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        The phase's mineral.
    quat : numpy.ndarray
        Unit quaternions (N, 4), structural frame.
    weights : numpy.ndarray
        Weights (N,), non-negative with a positive sum.
    pole : str or fabric2seis.fabric.poles.Pole
        The pole label.
    halfwidth_deg : float
        Kernel halfwidth, degrees.
    hemisphere : {"lower", "upper"}
        Half of the sphere drawn.
    n : int
        Grid points along each side.

    Returns
    -------
    a, b : numpy.ndarray, shape (n, n)
        Screen coordinates (the disk has radius 1).
    density : numpy.ndarray, shape (n, n)
        Pole density, m.u.d.; NaN outside the disk.
    directions : numpy.ndarray, shape (n, n, 3)
        Structural-frame unit vector of each grid point.
    """
    a, b, dirs, inside = disk_grid(n, hemisphere)
    vectors = fabric.pole_vectors(quat, pole_direction(mineral, pole), mineral.symmetry)
    d = np.full(a.shape, np.nan)
    d[inside] = fabric.pole_density(dirs[inside], vectors, weights, halfwidth_deg)
    return a, b, d, dirs


def _pole_panel(ax, a, b, d, lv, extend: str, pole):
    """One pole figure panel: filled contours in m.u.d., the 1 m.u.d. line, the frame and the pole as title."""
    filled = ax.contourf(a, b, d, levels=lv, cmap="viridis", extend=extend)
    filled.set_rasterized(True)  # keeps the PDF small and quick to write
    ax.contour(a, b, d, levels=[1.0], colors="white", linewidths=0.6)
    frame_axes(ax)
    ax.set_title(pole.math_text(), fontsize=9, y=1.0)     # y given: no search for ticks above (axis off)
    return filled


def pole_figure_panel(mineral, quat: np.ndarray, weights: np.ndarray, pole, halfwidth_deg: float, *,
                      hemisphere: str = "lower", levels: int | Sequence[float] | None = None,
                      ax: Axes | None = None, heading: str = "") -> Figure:
    """Draw one pole figure (one pole of one phase) with its colour bar, on ``ax`` or a new figure.

    The same drawing as a panel of :func:`pole_figure_sheet`, for notebooks and figures of one's own.

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        The phase's mineral.
    quat : numpy.ndarray
        Unit quaternions (N, 4), structural frame.
    weights : numpy.ndarray
        Weights (N,), non-negative with a positive sum.
    pole : str or fabric2seis.fabric.poles.Pole
        The pole label (``"[100]"``, ``"(001)"``).
    halfwidth_deg : float
        Halfwidth of the density kernel, degrees.
    hemisphere : {"lower", "upper"}
        Half of the sphere drawn.
    levels : int or sequence of float, optional
        Contour levels (:func:`contour_levels`).
    ax : matplotlib.axes.Axes, optional
        Where to draw; a new figure of one panel if not given.
    heading : str
        For a new figure: its heading (sample, weighting); the panel's title names the mineral,
        the pole and the number of orientations.

    Returns
    -------
    matplotlib.figure.Figure
        The figure holding the panel.
    """
    pole = parse_pole(pole) if isinstance(pole, str) else pole
    if ax is None:
        fig = Figure(figsize=(3.4, 4.1), layout="constrained")
        FigureCanvasAgg(fig)
        ax = fig.add_subplot()
        if heading:
            fig.suptitle(heading, fontsize=8)
    a, b, d, _ = pole_density_grid(mineral, quat, weights, pole, halfwidth_deg, hemisphere)
    lv, extend = contour_levels(np.nanmax(d), levels)
    filled = _pole_panel(ax, a, b, d, lv, extend, pole)
    fig_of = ax.get_figure(root=True)
    assert fig_of is not None
    cbar = fig_of.colorbar(filled, ax=ax, location="bottom", shrink=0.8, pad=0.02, aspect=25)
    cbar.set_label("pole density (m.u.d.)", fontsize=8)
    cbar.ax.tick_params(labelsize=7)
    ax.set_title(f"{mineral.name} {pole.math_text()}, {len(quat):,} orientations\n"
                 f"{projection_text(hemisphere, 'structural frame')}", fontsize=8)
    return fig_of


def pole_figure_sheet(sample_name: str, phases: list[tuple], halfwidth_deg: float, weighting: str, *,
                      hemisphere: str = "lower", levels: int | Sequence[float] | None = None,
                      noun: str = "grains", grain_counts: Mapping[str, int] | None = None,
                      point_counts: Mapping[str, int] | None = None) -> Figure:
    """Draw contoured pole densities in m.u.d.: one band per phase, one panel per pole, a side table.

    Parameters
    ----------
    sample_name : str
        Name shown in the heading.
    phases : list of tuple
        Per phase: (mineral, quaternions (N, 4), weights (N,), pole labels (``fabric.parse_pole``)).
    halfwidth_deg : float
        Halfwidth of the density kernel, degrees.
    weighting : str
        How orientations were weighted, shown in the heading.
    hemisphere : {"lower", "upper"}
        Half of the sphere drawn (settings key ``figures.pole_hemisphere``).
    levels : int or sequence of float, optional
        Contour levels (``contour_levels``; settings key ``figures.pole_levels``).
    noun : str
        What one orientation is (``"grains"`` or ``"points"``).
    grain_counts, point_counts : mapping of str to int, optional
        Grains and points of each mineral, by name, for the band headings and the few-grains note
        (by default the number of orientations).

    Returns
    -------
    matplotlib.figure.Figure
        The figure.
    """
    grains, points = dict(grain_counts or {}), dict(point_counts or {})
    n_cols = max(len(p[3]) for p in phases)
    fig, bands, grids = _bands(len(phases), n_cols, 3.1)
    for band, axes, (mineral, quat, weights, labels) in zip(bands, grids, phases):
        poles = [parse_pole(label) for label in labels]
        densities = []
        for pole in poles:
            a, b, d, dirs = pole_density_grid(mineral, quat, weights, pole, halfwidth_deg, hemisphere)
            densities.append(d)
        lv, extend = contour_levels(max(np.nanmax(d) for d in densities), levels)
        rows = []
        for col, ax in enumerate(axes[:-1]):
            if col >= len(poles):
                ax.axis("off")
                continue
            d = densities[col]
            filled = _pole_panel(ax, a, b, d, lv, extend, poles[col])
            k = np.nanargmax(d)
            rows.append([poles[col].math_text(), f"{np.nanmax(d):.1f}", trend_plunge_text(dirs.reshape(-1, 3)[k]),
                         f"{np.nanmin(d):.1f}"])
        cbar = band.colorbar(filled, ax=list(axes[:len(poles)]), shrink=0.85, pad=0.02, aspect=25)
        cbar.set_label("pole density (m.u.d.)", fontsize=8)
        cbar.ax.tick_params(labelsize=7)
        n = grains.get(mineral.name, len(quat))
        _side_table(axes[-1], [["pole", "max", "max at", "min"], ["", "m.u.d.", "trend/plunge", "m.u.d."]], rows,
                    [False, True, False, True], _few_grains_note(n, halfwidth_deg))
        _band_heading(band, f"{mineral.name}: {_count_text(len(quat), noun, points.get(mineral.name))}")
    fig.suptitle(f"{sample_name}: pole figures\n{weighting} weighting, kernel halfwidth {halfwidth_deg:g}°; "
                 "white line: 1 m.u.d. (a uniform distribution)", fontsize=10)
    projection_note(fig, hemisphere, "structural frame: X lineation (right), Z foliation normal (up), Y centre")
    return fig


def pole_figures(stem, sample_name: str, phases: list[tuple], halfwidth_deg: float, weighting: str,
                 **options) -> list[str]:
    """Draw the pole figures (:func:`pole_figure_sheet`) and write them as PNG and PDF.

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    sample_name, phases, halfwidth_deg, weighting, **options
        As :func:`pole_figure_sheet` takes them.

    Returns
    -------
    list of str
        The files written.
    """
    return save(pole_figure_sheet(sample_name, phases, halfwidth_deg, weighting, **options), stem)


def _sector_screen(v: np.ndarray) -> np.ndarray:
    """Equal-area projection of crystal directions, c* (e3) at the centre, a (e1) right, z >= 0 drawn."""
    v = np.asarray(v, dtype=float)
    v = np.where(v[..., 2:3] < -1e-9, -v, v)          # points on the rim stay where orix puts them
    return v[..., :2] / np.sqrt(1.0 + np.clip(v[..., 2:3], 0.0, 1.0))


def sector_outline(mineral) -> np.ndarray:
    """The edge of the fundamental sector of a mineral's Laue class, as the inverse pole figures draw it.

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        The mineral (its ``orix_symmetry.laue``).

    Returns
    -------
    numpy.ndarray, shape (M, 2)
        Screen coordinates of orix's ordered edge (``FundamentalSector.edges``), equal area, c* at
        the centre, a to the right, the unit circle being the plane normal to c*.
    """
    return _laue_sector(mineral)[1].copy()


def _laue_sector(mineral) -> tuple:
    """orix's Laue class of a mineral's point group, with its fundamental sector's edge on the screen
    (as :func:`sector_outline`), bounding normals (K, 3) and centre on the screen; the arrays are
    read-only."""
    return _group_sector(mineral.symmetry.name, mineral.symmetry.unique_axis)


@functools.lru_cache(maxsize=64)
def _group_sector(name: str, unique_axis: str | None) -> tuple:
    """:func:`_laue_sector` of a point group by name: computed once per group (a tenth of a second
    each in orix)."""
    laue = point_group(name, unique_axis).to_orix().laue
    sector = laue.fundamental_sector
    arrays = (_sector_screen(sector.edges.unit.data), np.array(sector.unit.data, dtype=float),
              _sector_screen(sector.center.unit.data[0]))
    for a in arrays:
        a.setflags(write=False)
    return (laue, *arrays)


def axis_density_grid(mineral, quat: np.ndarray, weights: np.ndarray, axis, halfwidth_deg: float, n: int = 121):
    """The density of a structural axis in crystal coordinates, on a grid over the fundamental sector.

    Every symmetry equivalent counts, so the density is in m.u.d. over the whole sphere and any
    sector shows the same values.

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        The phase's mineral.
    quat : numpy.ndarray
        Unit quaternions (N, 4), structural frame.
    weights : numpy.ndarray
        Weights (N,), non-negative with a positive sum.
    axis : array_like, shape (3,)
        The structural-frame axis.
    halfwidth_deg : float
        Kernel halfwidth, degrees.
    n : int
        Grid points along each side.

    Returns
    -------
    a, b : numpy.ndarray, shape (n, n)
        Screen coordinates over the sector's bounding box.
    density : numpy.ndarray, shape (n, n)
        Density, m.u.d.; NaN outside the unit disk.
    directions : numpy.ndarray, shape (n, n, 3)
        Crystal-frame unit vector (z >= 0) of each grid point.
    inside : numpy.ndarray of bool, shape (n, n)
        Which grid points lie in the sector (orix's bounding normals).
    """
    _, edge, normals, _ = _laue_sector(mineral)
    lo, hi = edge.min(axis=0), edge.max(axis=0)
    span = float(np.max(hi - lo))
    pad = 0.03 * span
    a, b = np.meshgrid(np.linspace(lo[0] - pad, lo[0] + span + pad, n), np.linspace(lo[1] - pad, lo[1] + span + pad, n))
    disk = a ** 2 + b ** 2 <= 1.0
    z = 1.0 - np.minimum(a ** 2 + b ** 2, 1.0)                        # inverse of _sector_screen
    dirs = np.stack([a * np.sqrt(1.0 + z), b * np.sqrt(1.0 + z), z], axis=-1)
    dirs /= np.linalg.norm(dirs, axis=-1, keepdims=True)
    inside = disk & np.all(dirs @ normals.T >= -1e-9, axis=-1)
    crystal = to_matrices(quat) @ np.asarray(axis, dtype=float)     # (N, 3) in the crystal frame
    ops = to_matrices(proper_symmetry_quaternions(mineral.symmetry))
    vectors = np.einsum("kij,nj->nki", ops, crystal)                  # all symmetry equivalents
    d = np.full(a.shape, np.nan)
    d[disk] = fabric.pole_density(dirs[disk], vectors, weights, halfwidth_deg)
    return a, b, d, dirs, inside


def _angle_to(direction: np.ndarray, targets: np.ndarray, ops: np.ndarray) -> np.ndarray:
    """Angles (degrees) between an axis and each target axis, the least over the symmetry operations."""
    cos = np.abs(np.einsum("kij,tj,i->tk", ops, targets, direction)).max(axis=1)
    return np.degrees(np.arccos(np.clip(cos, 0.0, 1.0)))


def inverse_pole_figure_sheet(sample_name: str, phases: list[tuple], halfwidth_deg: float, weighting: str,
                              sample_directions=STRUCTURAL_AXES, *, levels: int | Sequence[float] | None = None,
                              noun: str = "grains", grain_counts: Mapping[str, int] | None = None,
                              point_counts: Mapping[str, int] | None = None) -> Figure:
    """Density of structural axes in crystal coordinates, in the fundamental sector of the Laue class.

    The sector and its edge come from orix (``Symmetry.fundamental_sector`` of the Laue class);
    the density, in m.u.d., counts every symmetry equivalent, so that it is the same whichever
    sector is drawn. The phase's poles are marked where orix folds them into the sector.

    Parameters
    ----------
    sample_name : str
        Name shown in the heading.
    phases : list of tuple
        Per phase: (mineral, quaternions (N, 4), weights (N,), pole labels marked in the sector).
    halfwidth_deg : float
        Halfwidth of the density kernel, degrees.
    weighting : str
        How orientations were weighted, shown in the heading.
    sample_directions : sequence of (str, tuple)
        Label and structural-frame vector (3,) of each axis drawn (X, Y and Z by default).
    levels : int or sequence of float, optional
        Contour levels (``contour_levels``; settings key ``figures.pole_levels``).
    noun : str
        What one orientation is (``"grains"`` or ``"points"``).
    grain_counts, point_counts : mapping of str to int, optional
        Grains and points of each mineral, by name (see ``pole_figure_sheet``).

    Returns
    -------
    matplotlib.figure.Figure
        The figure.
    """
    grains, points = dict(grain_counts or {}), dict(point_counts or {})
    n_cols = len(sample_directions)
    fig, bands, grids = _bands(len(phases), n_cols, 2.9)
    from orix.vector import Vector3d  # here, not at the top: the convergence figure needs no orix

    for band, axes, (mineral, quat, weights, labels) in zip(bands, grids, phases):
        laue, edge, _, centre = _laue_sector(mineral)
        ops = to_matrices(proper_symmetry_quaternions(mineral.symmetry))
        poles = [parse_pole(label) for label in labels]
        pole_dirs = np.array([pole_direction(mineral, p) for p in poles])
        grids_here = [axis_density_grid(mineral, quat, weights, v, halfwidth_deg) for _, v in sample_directions]
        a, b, _, dirs, inside = grids_here[0]
        densities = [g[2] for g in grids_here]
        lv, extend = contour_levels(max(np.nanmax(np.where(inside, d, np.nan)) for d in densities), levels)
        folded = _sector_screen(Vector3d(pole_dirs).in_fundamental_sector(laue).unit.data)
        rows = []
        for ax, (name, _), d in zip(axes, sample_directions, densities):
            filled = ax.contourf(a, b, d, levels=lv, cmap="cividis", extend=extend)
            filled.set_rasterized(True)
            lines = ax.contour(a, b, d, levels=[1.0], colors="white", linewidths=0.6)
            # add_artist, not add_patch: the limits are set below, and add_patch would walk the
            # edge's hundreds of segments to update them (a second per sheet)
            edge_patch = PathPatch(DrawnPath(edge), transform=ax.transData, facecolor="none", edgecolor="none")
            ax.add_artist(edge_patch)
            filled.set_clip_path(edge_patch)
            lines.set_clip_path(edge_patch)
            ax.add_artist(PathPatch(DrawnPath(edge), facecolor="none", edgecolor="black", lw=0.9))
            ax.plot(folded[:, 0], folded[:, 1], ls="none", marker="o", ms=3.5, mfc="white", mec="black", mew=0.7)
            for p, xy in zip(poles, folded):
                away = xy - centre
                away = away / (np.linalg.norm(away) or 1.0)
                ax.annotate(p.math_text(), xy, xytext=(7 * away[0], 7 * away[1]), textcoords="offset points",
                            fontsize=7, ha="left" if away[0] >= -0.3 else "right",
                            va="bottom" if away[1] >= -0.3 else "top")
            span = np.ptp(edge, axis=0).max()
            middle = (edge.min(axis=0) + edge.max(axis=0)) / 2.0
            ax.set_xlim(middle[0] - 0.72 * span, middle[0] + 0.72 * span)
            ax.set_ylim(middle[1] - 0.72 * span, middle[1] + 0.72 * span)
            ax.set_aspect("equal")
            ax.axis("off")
            ax.set_title(f"{name} in crystal axes", fontsize=9, y=1.0)
            here = np.where(inside, d, np.nan)
            k = int(np.nanargmax(here))
            near = _angle_to(dirs.reshape(-1, 3)[k], pole_dirs, ops)
            j = int(np.argmin(near))
            rows.append([name, f"{np.nanmax(here):.1f}", f"{poles[j].math_text()}, {near[j]:.0f}°",
                         f"{np.nanmin(here):.1f}"])
        for ax in axes[len(sample_directions):-1]:
            ax.axis("off")
        cbar = band.colorbar(filled, ax=list(axes[:n_cols]), shrink=0.85, pad=0.02, aspect=25)
        cbar.set_label("density (m.u.d.)", fontsize=8)
        cbar.ax.tick_params(labelsize=7)
        n = grains.get(mineral.name, len(quat))
        _side_table(axes[-1], [["axis", "max", "max near", "min"], ["", "m.u.d.", "pole, angle", "m.u.d."]], rows,
                    [False, True, False, True], _few_grains_note(n, halfwidth_deg))
        _band_heading(band, f"{mineral.name} (Laue class {laue.name}): "
                            f"{_count_text(len(quat), noun, points.get(mineral.name))}")
    fig.suptitle(f"{sample_name}: inverse pole figures, where the structural axes lie in the crystal\n"
                 f"{weighting} weighting, kernel halfwidth {halfwidth_deg:g}°; white line: 1 m.u.d.; "
                 "one fundamental sector of the Laue class; dots: the phase's poles", fontsize=10)
    projection_note(fig, "upper", "crystal frame: c* at the centre, a to the right")
    return fig


def inverse_pole_figures(stem, sample_name: str, phases: list[tuple], halfwidth_deg: float, weighting: str,
                         **options) -> list[str]:
    """Draw the inverse pole figures (:func:`inverse_pole_figure_sheet`) and write them as PNG and PDF.

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    sample_name, phases, halfwidth_deg, weighting, **options
        As :func:`inverse_pole_figure_sheet` takes them.

    Returns
    -------
    list of str
        The files written.
    """
    return save(inverse_pole_figure_sheet(sample_name, phases, halfwidth_deg, weighting, **options), stem)


def convergence_figure(stem, sample_name: str, results: dict) -> list[str]:
    """Draw the convergence of the fabric indices (:func:`convergence_sheet`) and write it as PNG and PDF.

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    sample_name : str
        Name shown in the heading.
    results : dict
        Convergence of the fabric indices by mineral name (``PhaseFabricResult.convergence``).

    Returns
    -------
    list of str
        The files written.
    """
    return save(convergence_sheet(sample_name, results), stem)


def convergence_sheet(sample_name: str, results: dict) -> Figure:
    """Draw J, M and the maximum pole density against the number of grains, one line per phase.

    The grain axis is logarithmic with plain numbers at the subset sizes; each value axis spans at
    least 5 % either side of every phase's value with all grains (a shaded band), so that changes
    of a percent or so look as small as they are.

    Parameters
    ----------
    sample_name : str
        Name shown in the heading.
    results : dict
        Convergence of the fabric indices by mineral name (``PhaseFabricResult.convergence``).

    Returns
    -------
    matplotlib.figure.Figure
        The figure.
    """
    fig, axes = plt.subplots(1, 3, figsize=(10.5, 3.6), layout="constrained")
    keys = (("J", "J-index"), ("M", "M-index"), ("max_mud", "largest pole density (m.u.d.)"))
    sizes: set[int] = set()
    markers = "osD^v<>"
    for k, (mineral, conv) in enumerate(results.items()):
        n = np.array([r["n"] for r in conv["rows"]])
        sizes.update(int(x) for x in n)
        label = f"{mineral}, {n[-1]:,} grains: {_settled_text(conv)}; density of {conv['pole']}"
        for ax, (key, _) in zip(axes, keys):
            y = np.array([r[key] for r in conv["rows"]], dtype=float)
            (line,) = ax.plot(n, y, marker=markers[k % len(markers)], ms=4, lw=1.2, label=label if key == "J" else None)
            final = y[-1]
            if np.isfinite(final):
                ax.axhspan(0.95 * final, 1.05 * final, color=line.get_color(), alpha=0.12, lw=0)
    ticks = _size_ticks(sizes, [conv["rows"][-1]["n"] for conv in results.values()])
    for ax, (key, title) in zip(axes, keys):
        ax.set_xscale("log")
        ax.xaxis.set_major_locator(FixedLocator(ticks))
        ax.xaxis.set_major_formatter(ScalarFormatter())
        ax.xaxis.set_minor_locator(NullLocator())
        ax.xaxis.set_minor_formatter(NullFormatter())
        plain = ScalarFormatter(useOffset=False)
        plain.set_scientific(False)
        ax.yaxis.set_major_formatter(plain)
        ax.tick_params(labelsize=7)
        ax.set_xlabel("number of grains (nested random subsets)", fontsize=8)
        ax.set_ylabel(title, fontsize=8)
        ax.set_ylim(*_value_range(ax, results, key))
    fig.legend(loc="outside lower center", ncols=1, fontsize=7, frameon=False)
    fig.suptitle(f"{sample_name}: fabric indices on nested random subsets of the grains\n"
                 "shaded: within 5 % of the value with all grains", fontsize=9)
    return fig


def _settled_text(conv: dict) -> str:
    """Whether J has levelled off, in words, with the last step it is judged on."""
    rows = conv["rows"]
    steps = [r for r in rows[:-1] if r["n"] in LEVELLING_SIZES]
    if not steps:
        return f"too few grains to judge J (no subset of {LEVELLING_SIZES[0]} or more)"
    change = 100.0 * (rows[-1]["J"] - steps[-1]["J"]) / rows[-1]["J"]
    verdict = "J has levelled off" if conv["j_levelled"] else "J still changes"
    return f"{verdict} ({change:+.1f} % from {steps[-1]['n']:,} to {rows[-1]['n']:,} grains)"


def _size_ticks(sizes: set[int], totals: list[int], apart: float = 1.35) -> list[int]:
    """Grain counts to label: every phase's total, and the 1-2-5 sizes at least ``apart`` from them."""
    kept = sorted(set(int(t) for t in totals))
    for s in sorted(sizes):
        lead = s / 10 ** np.floor(np.log10(s))
        if np.isclose(lead, (1, 2, 5)).any() and all(max(s, k) / min(s, k) >= apart for k in kept):
            kept.append(int(s))
    return sorted(kept)


def _value_range(ax, results: dict, key: str) -> tuple[float, float]:
    """A value range holding every point and at least 5 % either side of each final value."""
    values, finals = [], []
    for conv in results.values():
        y = np.array([r[key] for r in conv["rows"]], dtype=float)
        values.extend(y[np.isfinite(y)])
        if np.isfinite(y[-1]):
            finals.append(y[-1])
    lo = min(values + [0.95 * f for f in finals]) if values else 0.0
    hi = max(values + [1.05 * f for f in finals]) if values else 1.0
    pad = 0.04 * (hi - lo or 1.0)
    return lo - pad, hi + pad


__all__ = ["DEFAULT_LEVELS", "FEW_GRAINS", "STRUCTURAL_AXES", "axis_density_grid", "contour_levels",
           "convergence_figure", "inverse_pole_figures", "pole_density_grid", "pole_figures", "sector_outline"]
