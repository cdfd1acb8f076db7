"""Figures of the predicted crossed-polar view: images at stage turns, retardation map, colour chart.

Images are drawn as the observer sees the section: polariser east-west (left-right), analyser
north-south (up-down). Looking along the map normal (+z) the map's x axis points east (right) and
its y axis south (down), as EBSD maps are usually shown; looking along -z the map is seen from the
other side, y up. A stage turn rotates the section anticlockwise on the screen, the polarisers
staying put. Points without data (not indexed, cleaned out, in grains below ``grains.min_pixels``,
or of a mineral without optical constants) are grey, ``NO_DATA``; grains in extinction are black.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from fabric2seis.figures.projection import plt, save
from fabric2seis.optics.colour import ORDER_NM, PLATE_NM, InterferenceTable, xyz_to_srgb

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

    from fabric2seis.optics.section import SectionResult

#: colour of points without data (grey, distinct from black extinction)
NO_DATA = (0.55, 0.55, 0.58)
_ORIENTATION = "polariser E-W (left-right), analyser N-S (up-down)"


def _y_down(result: SectionResult) -> bool:
    """Whether the map's y axis points down (south) in the image: every view but -z."""
    return not result.analyser[1] > 0.999


def _map_note(result: SectionResult) -> str:
    if result.analyser[1] > 0.999:
        return "map x to the right (east), map y up (north): seen from -z"
    if result.analyser[1] < -0.999:
        return "map x to the right (east), map y down (south)"
    return "points placed on the map grid (x right, y down); the section is normal to the view, not the map"


def map_raster(result: SectionResult, values: np.ndarray, fill) -> tuple[np.ndarray, tuple[float, ...]]:
    """Place per-point values on an image of the map, north (the image's top) first.

    Hexagonal maps are drawn on half-step columns, each point filling two of them.

    Parameters
    ----------
    result : SectionResult
        A map (``result.is_map``).
    values : numpy.ndarray, shape (N, C)
        Values of the points.
    fill : sequence of float
        Value (C,) of image cells without a point.

    Returns
    -------
    image : numpy.ndarray, shape (rows, columns, C)
        The image, top row north.
    extent : tuple of float
        (left, right, bottom, top) in map units, relative to the map's centre: east and north.
    """
    from fabric2seis.ingest.grains import grid_indices

    assert result.x is not None and result.y is not None and result.grid is not None and result.step is not None
    x, y, step = result.x, result.y, result.step
    row, col = grid_indices(x, y, result.grid, step)
    hexagonal = result.grid == "hex"
    width = step / 2.0 if hexagonal else step
    height = step * np.sqrt(3.0) / 2.0 if hexagonal else step
    n_rows, n_cols = int(row.max()) + 1, int(col.max()) + (2 if hexagonal else 1)
    image = np.empty((n_rows, n_cols, values.shape[1]))
    image[:] = np.asarray(fill, dtype=float)
    top_row = row if _y_down(result) else n_rows - 1 - row
    image[top_row, col] = values
    if hexagonal:
        image[top_row, col + 1] = values
    cx, cy = (x.min() + x.max()) / 2.0, (y.min() + y.max()) / 2.0
    left = x.min() - cx - (step / 2.0)
    right = left + n_cols * width
    if _y_down(result):                      # north = -(y - cy): the smallest y is the top row
        top = cy - y.min() + height / 2.0
        bottom = top - n_rows * height
    else:                                    # north = y - cy
        bottom = y.min() - cy - height / 2.0
        top = bottom + n_rows * height
    return image, (left, right, bottom, top)


def _polariser_cross(ax, size: float) -> None:
    """Label the polariser (E-W) and analyser (N-S) in the panel's corner."""
    x0, y0 = -size * 0.82, size * 0.82
    r = size * 0.1
    ax.annotate("", (x0 + r, y0), (x0 - r, y0), arrowprops={"arrowstyle": "<->", "lw": 0.8})
    ax.annotate("", (x0, y0 + r), (x0, y0 - r), arrowprops={"arrowstyle": "<->", "lw": 0.8})
    ax.text(x0 + r * 1.2, y0, "P", va="center", fontsize=6)
    ax.text(x0, y0 + r * 1.2, "A", ha="center", fontsize=6)


def crossed_polar_images(stem, result: SectionResult, plate: bool) -> list[str]:
    """Draw the crossed-polar images (:func:`crossed_polar_sheet`) and write them as PNG and PDF.

    Parameters
    ----------
    stem : str or Path
        Path of the figure without suffix.
    result, plate
        As :func:`crossed_polar_sheet` takes them.

    Returns
    -------
    list of str
        The files written (PNG and PDF).
    """
    return save(crossed_polar_sheet(result, plate), stem)


def crossed_polar_sheet(result: SectionResult, plate: bool) -> Figure:
    """The predicted crossed-polar image at every stage turn of the settings, one panel each.

    Parameters
    ----------
    result : SectionResult
        The section's optics (a map).
    plate : bool
        With the 530 nm accessory plate (slow direction NE-SW).

    Returns
    -------
    matplotlib.figure.Figure
        The figure: one panel per stage turn (``optics.stage_deg``).
    """
    from matplotlib.transforms import Affine2D

    opt, o = result.settings, result.optics
    known = np.isfinite(o.retardation_nm)
    table = InterferenceTable(float(o.retardation_nm[known].max()) if known.any() else 0.0)
    n = len(opt.stage_deg)
    fig, axes = plt.subplots(1, n, figsize=(3.3 * n, 3.9), squeeze=False)
    half = None
    for ax, stage in zip(axes[0], opt.stage_deg):
        rgb = np.empty((len(known), 3))
        rgb[:] = NO_DATA
        rgb[known] = xyz_to_srgb(table.xyz(o.retardation_nm[known], o.fast_vibration_deg[known] + stage, plate))
        image, extent = map_raster(result, rgb, NO_DATA)
        half = float(np.hypot(extent[1] - extent[0], extent[3] - extent[2]) / 2.0)
        shown = ax.imshow(image, extent=extent, origin="upper", interpolation="nearest")
        shown.set_transform(Affine2D().rotate_deg(stage) + ax.transData)
        tail = np.array([-0.75, -0.75]) * half
        head = tail + 0.2 * half * np.array([np.cos(np.radians(stage)), np.sin(np.radians(stage))])
        ax.annotate("", head, tail, arrowprops={"arrowstyle": "->", "lw": 0.8})
        ax.text(tail[0], tail[1] - 0.05 * half, "map x", fontsize=6, va="top", ha="center")
        _polariser_cross(ax, half)
        ax.set_xlim(-half, half)
        ax.set_ylim(-half, half)
        ax.set_aspect("equal")
        ax.set_xticks([])
        ax.set_yticks([])
        ax.set_title(f"stage {stage:g} deg", fontsize=8)
    if half is not None:
        bar = _round_length(half / 2.5)
        ax = axes[0][-1]
        ax.plot([half * 0.9 - bar, half * 0.9], [-half * 0.9] * 2, color="black", lw=2)
        ax.text(half * 0.9 - bar / 2, -half * 0.86, f"{bar:g} um", ha="center", va="bottom", fontsize=6)
    what = f"with the {PLATE_NM:g} nm plate (slow direction NE-SW)" if plate else "between crossed polars"
    fig.suptitle(f"{result.name}: predicted view {what}\n{opt.thickness_um:g} um section, view along "
                 f"{opt.view_text}, {len(known):,} points", fontsize=9)
    fig.text(0.5, 0.01, f"{_ORIENTATION}; {_map_note(result)} at stage 0; the stage turns the section "
             "anticlockwise.\nGrey: no data (not indexed, cleaned out, small grains or no optical constants); "
             "black: extinction. Map length unit: um (as in the file).", ha="center", va="bottom", fontsize=6)
    fig.subplots_adjust(bottom=0.14, top=0.82, wspace=0.05)
    return fig


def _round_length(value: float) -> float:
    """A round length (1, 2 or 5 times a power of ten) not above ``value``."""
    power = 10.0 ** np.floor(np.log10(value))
    return float(max(m for m in (1.0, 2.0, 5.0) if m * power <= value) * power)


def retardation_map(stem, result: SectionResult) -> list[str]:
    """Draw the retardation map (:func:`retardation_sheet`) and write it as PNG and PDF.

    Parameters
    ----------
    stem : str or Path
        Path of the figure without suffix.
    result : SectionResult
        The section's optics (a map).

    Returns
    -------
    list of str
        The files written (PNG and PDF).
    """
    return save(retardation_sheet(result), stem)


def retardation_sheet(result: SectionResult) -> Figure:
    """The retardation map (:func:`retardation_panel`) on a figure of its own, with the orientation
    of the view in a note at its foot.

    Parameters
    ----------
    result : SectionResult
        The section's optics (a map).

    Returns
    -------
    matplotlib.figure.Figure
        The figure.
    """
    fig, ax = plt.subplots(figsize=(6.2, 5.0))
    retardation_panel(result, ax)
    fig.text(0.5, 0.005, f"{_ORIENTATION}; {_map_note(result)}. Grey: no data.", ha="center", va="bottom", fontsize=6)
    return fig


def retardation_panel(result: SectionResult, ax: Axes) -> None:
    """Draw the retardation of every point (nm) on the map into ``ax``, with a colour bar and the
    order limits.

    Parameters
    ----------
    result : SectionResult
        The section's optics (a map).
    ax : matplotlib.axes.Axes
        Where to draw; the colour bar takes room from it.
    """
    import matplotlib

    opt = result.settings
    r = result.optics.retardation_nm
    image, (left, right, bottom, top) = map_raster(result, r[:, None], [np.nan])
    assert result.x is not None and result.y is not None
    cx, cy = (result.x.min() + result.x.max()) / 2.0, (result.y.min() + result.y.max()) / 2.0
    # back to map coordinates: y = cy - north when y points south (down), cy + north otherwise
    extent = ((left + cx, right + cx, cy - bottom, cy - top) if _y_down(result)
              else (left + cx, right + cx, cy + bottom, cy + top))
    cmap = matplotlib.colormaps["cividis"].with_extremes(bad=NO_DATA)
    shown = ax.imshow(np.ma.masked_invalid(image[..., 0]), extent=extent, origin="upper", cmap=cmap,
                      interpolation="nearest", vmin=0.0)
    fig = ax.get_figure(root=True)
    assert fig is not None
    bar = fig.colorbar(shown, ax=ax, shrink=0.85)
    bar.set_label("retardation (nm)")
    top = float(np.nanmax(r)) if np.isfinite(r).any() else 0.0
    for k in range(1, int(top // ORDER_NM) + 1):
        bar.ax.axhline(k * ORDER_NM, color="white", lw=0.8)
    ax.set_xlabel("map x (um)")
    ax.set_ylabel("map y (um)")
    ax.set_title(f"{result.name}: retardation, {opt.thickness_um:g} um section, view along {opt.view_text}\n"
                 f"{len(r):,} points; white lines on the bar: ends of the orders ({ORDER_NM:g} nm each)", fontsize=8)


def interference_chart(stem, result: SectionResult, statistics: list[dict]) -> list[str]:
    """Draw the interference-colour chart (:func:`interference_chart_sheet`) and write it as PNG and PDF.

    Parameters
    ----------
    stem : str or Path
        Path of the figure without suffix.
    result, statistics
        As :func:`interference_chart_sheet` takes them.

    Returns
    -------
    list of str
        The files written (PNG and PDF).
    """
    return save(interference_chart_sheet(result, statistics), stem)


def interference_chart_sheet(result: SectionResult, statistics: list[dict]) -> Figure:
    """The interference colours of the section's thickness, each phase's retardation range beneath.

    Three strips of colour against retardation (at 45 degrees from extinction): between crossed
    polars, and with the plate, slow directions parallel (adding 530 nm) or crossed (subtracting).
    The top axis reads the same scale as birefringence for this thickness. Per phase: the range a
    section can show (0 to n_gamma - n_alpha, thin line), the 5-95 % range of its points (bar),
    median (white tick) and largest value seen (diamond).

    Parameters
    ----------
    result : SectionResult
        The section's optics.
    statistics : list of dict
        :func:`optics.section.phase_statistics`.

    Returns
    -------
    matplotlib.figure.Figure
        The figure: the colour strips above, the phases' ranges below.
    """
    t_nm = result.settings.thickness_um * 1000.0
    reach = max([3.0 * ORDER_NM] + [1.05 * row["retardation_possible_max_nm"] for row in statistics])
    table = InterferenceTable(reach + PLATE_NM)
    r = np.linspace(0.0, reach, 1200)
    strips = [("crossed polars", table.xyz(r, 45.0)),
              ("+ plate, adding\n(slow || plate's slow)", table.xyz(r, -45.0, plate=True)),
              ("+ plate, subtracting\n(slow || plate's fast)", table.xyz(r, 45.0, plate=True))]
    n_phases = max(len(statistics), 1)
    fig, (top, bottom) = plt.subplots(2, 1, figsize=(8.0, 2.6 + 0.35 * n_phases), sharex=True,
                                      gridspec_kw={"height_ratios": [3, max(n_phases, 1.5)]})
    rows = np.stack([xyz_to_srgb(xyz) for _, xyz in strips])
    top.imshow(rows, extent=(0.0, reach, len(strips), 0.0), aspect="auto", interpolation="nearest")
    top.set_yticks(np.arange(len(strips)) + 0.5, [name for name, _ in strips], fontsize=7)
    for k in range(1, int(reach // ORDER_NM) + 1):
        for ax in (top, bottom):
            ax.axvline(k * ORDER_NM, color="black", lw=0.5, ls=":")
    for k in range(int(np.ceil(reach / ORDER_NM))):
        centre = min((k + 0.5) * ORDER_NM, reach)
        bottom.text(centre, n_phases - 0.3, f"order {k + 1}", ha="center", va="top", fontsize=6, color="0.3")
    upper = top.secondary_xaxis("top", functions=(lambda v: v / t_nm, lambda v: v * t_nm))
    upper.set_xlabel(f"birefringence for {result.settings.thickness_um:g} um", fontsize=7, labelpad=10)
    upper.tick_params(labelsize=6)
    for k, row in enumerate(statistics):
        y = n_phases - 1 - k
        bottom.plot([0.0, row["retardation_possible_max_nm"]], [y, y], color="0.4", lw=1)
        low, high = row["birefringence_p05"] * t_nm, row["birefringence_p95"] * t_nm
        bottom.barh(y, high - low, left=low, height=0.45, color="0.15")
        bottom.plot([row["retardation_median_nm"]] * 2, [y - 0.22, y + 0.22], color="white", lw=1.5)
        bottom.plot([row["retardation_max_nm"]], [y], marker="D", color="black", ms=4)
    if not statistics:
        bottom.text(reach / 2, 0.0, "no phase with optical constants", ha="center", fontsize=8)
    bottom.set_yticks([n_phases - 1 - k for k in range(len(statistics))],
                      [f"{row['phase']}\n{row['n_points']:,} points" for row in statistics], fontsize=7)
    bottom.set_ylim(-0.8, n_phases + 0.1)
    bottom.set_xlim(0.0, reach)
    bottom.set_xlabel("retardation (nm)")
    fig.suptitle(f"{result.name}: interference colours of a {result.settings.thickness_um:g} um section, view along "
                 f"{result.settings.view_text}", fontsize=9)
    fig.text(0.5, 0.005, "Colours at 45 degrees from extinction, CIE 1931 2-degree observer, D65 light, sRGB; "
             "plate 530 nm. Bars: 5-95 % of the phase's points, white tick median, diamond largest seen, "
             "thin line up to n_gamma - n_alpha.", ha="center", va="bottom", fontsize=6)
    fig.subplots_adjust(bottom=0.2, top=0.78, hspace=0.08)
    return fig
