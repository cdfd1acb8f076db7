"""Map overview: what a map sample is made of and where, the first figure to check.

Two views of the same map side by side (or one above the other for wide maps): the phases, and
the orientations of the main mineral coloured by an inverse-pole-figure key (orix's TSL key, Nolze
& Hielscher 2016). Both show the grain boundaries of the reconstruction and the points left out of
the sample (not indexed, below the quality threshold, in grains too small). A side column holds
the legend, with each category's share of the points read, and the colour key drawn in the
fundamental sector of the mineral's Laue group.

Maps are drawn as images, never one marker per point: a square grid keeps every k-th row and
column so that at most ``max_cells`` cells are drawn; a hexagonal grid is resampled onto square
cells (each takes the nearest point). Lengths are in the file's unit, micrometres for .ang and
.ctf files (vendor convention); map x is drawn to the right and map y down, as acquired.

References
----------
Nolze, G. & Hielscher, R. (2016). Orientations - perfectly colored. J. Appl. Cryst. 49, 1786-1802.
Okabe, M. & Ito, K. (2008). Color Universal Design (CUD): how to make figures and presentations
that are friendly to colorblind people. https://jfly.uni-koeln.de/color/
"""

from __future__ import annotations

import textwrap
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from matplotlib.artist import Artist
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch
from matplotlib.transforms import ScaledTranslation, blended_transform_factory

from fabric2seis.figures.projection import save
from fabric2seis.ingest.grains import grid_indices
from fabric2seis.ingest.phases import DROPPED_REASONS
from fabric2seis.stages import Sample

#: phase colours (Okabe & Ito 2008, told apart with colour-blindness), then repeated
PHASE_COLOURS = ("#E69F00", "#56B4E9", "#009E73", "#CC79A7", "#0072B2", "#D55E00", "#F0E442")
#: grey levels of the points left out, by ``DROPPED_REASONS``, and of other phases on the orientation map
DROPPED_GREYS = (0.0, 0.35, 0.62)
OTHER_PHASE_GREY = 0.85
#: drawn cells of one map image at most (about 700 x 700), above what a panel of the 150 dpi PNG
#: shows across (600-1000 pixels); larger maps are sampled down
MAX_CELLS = 500_000
_MICRO = "\u00b5m"


@dataclass
class MapRaster:
    """Square cells of a map image and the point each cell shows.

    Attributes
    ----------
    index
        Point shown by every cell (rows, columns), an index into the coordinates given; -1 for
        cells without a point. Row 0 holds the smallest y.
    cell
        Side of a cell, in the map's length unit.
    extent
        (left, right, bottom, top) of the image in map units for ``imshow(origin="upper")``, with
        map y growing downwards.
    stride
        Square grids: every ``stride``-th row and column is drawn; None for a resampled hexagonal grid.
    """

    index: np.ndarray
    cell: float
    extent: tuple[float, float, float, float]
    stride: int | None


def map_raster(x: np.ndarray, y: np.ndarray, grid: str, step: float, max_cells: int = MAX_CELLS) -> MapRaster:
    """Place map points on square image cells, at most ``max_cells`` of them.

    A square grid keeps every k-th row and column, k the smallest that fits the budget. A
    hexagonal grid is resampled onto square cells of at least one step, each showing the nearest
    point (none when the nearest lies more than a step away).

    Parameters
    ----------
    x, y : numpy.ndarray, shape (N,)
        Map coordinates of every point, in the map's length unit.
    grid : {"square", "hex"}
        Grid type.
    step : float
        Map step, in the unit of ``x``.
    max_cells : int
        Most cells the image may have.

    Returns
    -------
    MapRaster
        The point of every cell, the cell size and the image extent.

    Raises
    ------
    ValueError
        If ``max_cells`` is below 1, the grid type is unknown or there are no points.
    """
    if max_cells < 1:
        raise ValueError(f"max_cells must be at least 1, got {max_cells}")
    if grid not in ("square", "hex") or len(x) == 0:
        raise ValueError(f"need points on a 'square' or 'hex' grid, got {len(x)} points on {grid!r}")
    x0, y0 = float(x.min()), float(y.min())
    row, col = grid_indices(x, y, grid, step)
    if grid == "square":
        n_rows, n_cols = int(row.max()) + 1, int(col.max()) + 1
        k = max(1, int(np.sqrt(n_rows * n_cols / max_cells)))
        while -(-n_rows // k) * -(-n_cols // k) > max_cells:
            k += 1
        table = np.full((n_rows, n_cols), -1, dtype=np.int64)
        table[row, col] = np.arange(len(x))
        index = table[::k, ::k]
        cell = k * step
        left, top = x0 - cell / 2.0, y0 - cell / 2.0
        return MapRaster(index, cell, (left, left + index.shape[1] * cell, top + index.shape[0] * cell, top), k)
    dy = step * np.sqrt(3.0) / 2.0
    width, height = float(x.max()) - x0 + step, float(y.max()) - y0 + dy
    cell = max(step, float(np.sqrt(width * height / max_cells)))
    while np.ceil(width / cell) * np.ceil(height / cell) > max_cells:
        cell *= 1.01
    n_cols, n_rows = int(np.ceil(width / cell)), int(np.ceil(height / cell))
    left, top = x0 - step / 2.0, y0 - dy / 2.0
    cx = left + (np.arange(n_cols) + 0.5) * cell
    cy = top + (np.arange(n_rows) + 0.5) * cell
    table = np.full((int(row.max()) + 3, int(col.max()) + 4), -1, dtype=np.int64)
    table[row + 1, col + 1] = np.arange(len(x))
    # candidates: the two grid rows either side of the cell centre (the last ones beyond the map),
    # three half-step columns in each: the nearest point is among them
    last_row, last_col = int(row.max()), int(col.max())
    below = np.clip(np.floor((cy - y0) / dy).astype(np.int64), 0, last_row)
    r = np.minimum(below[:, None] + np.array([0, 1]), last_row)[:, None, :, None] + 1
    nearest_col = np.clip(np.rint(2.0 * (cx - x0) / step).astype(np.int64), 0, last_col)
    c = nearest_col[None, :, None, None] + np.array([0, 1, 2])
    cand = table[r, c]                                             # (rows, columns, 2, 3)
    cand = cand.reshape(n_rows, n_cols, 6)
    safe = np.where(cand >= 0, cand, 0)
    d2 = (x[safe] - cx[None, :, None]) ** 2 + (y[safe] - cy[:, None, None]) ** 2
    d2 = np.where(cand >= 0, d2, np.inf)
    best = np.argmin(d2, axis=2)
    index = np.take_along_axis(cand, best[..., None], axis=2)[..., 0]
    index[np.take_along_axis(d2, best[..., None], axis=2)[..., 0] > step ** 2] = -1
    return MapRaster(index, cell, (left, left + n_cols * cell, top + n_rows * cell, top), None)


def ipf_colours(quat: np.ndarray, mineral, direction: np.ndarray) -> np.ndarray:
    """Inverse-pole-figure colours (orix's TSL key) of orientations for one sample direction.

    Parameters
    ----------
    quat : numpy.ndarray, shape (N, 4)
        Orientations, orix quaternions (``v_crystal = g v``).
    mineral : Mineral
        The mineral (its point group; the key uses its Laue group).
    direction : numpy.ndarray, shape (3,)
        The direction coloured, in the frame of the orientations.

    Returns
    -------
    numpy.ndarray, shape (N, 3)
        RGB in 0-1.

    References
    ----------
    Nolze, G. & Hielscher, R. (2016). J. Appl. Cryst. 49, 1786-1802.
    """
    from orix.plot import IPFColorKeyTSL
    from orix.quaternion import Orientation
    from orix.vector import Vector3d

    key = IPFColorKeyTSL(mineral.orix_symmetry, Vector3d(np.asarray(direction, dtype=float)))
    return np.asarray(key.orientation2color(Orientation(quat, mineral.orix_symmetry))).reshape(-1, 3)


def map_overview(sample: Sample, mineral: str | None = None, direction: str = "+z",
                 max_cells: int = MAX_CELLS, fig: Figure | None = None) -> Figure:
    """Draw the map overview of a map sample: phases, orientations, grain boundaries, points left out.

    Parameters
    ----------
    sample : Sample
        A map sample (:func:`fabric2seis.pipeline.ingest`), with its grains and dropped points.
    mineral : str, optional
        The mineral coloured by orientation; the one with the largest measured fraction if not given.
    direction : str
        Map axis whose crystal direction is coloured, signed or not (``"+z"``: the map normal).
    max_cells : int
        Most cells of each map image; larger maps are sampled down (:func:`map_raster`).
    fig : matplotlib.figure.Figure, optional
        Figure to draw into (resized to the layout); a new one if not given.

    Returns
    -------
    matplotlib.figure.Figure
        The figure. Its images carry the gids ``phase_map``, ``orientation_map`` and
        ``grain_boundaries``; the scale bar ``scale_bar`` and ``scale_bar_label``.

    Raises
    ------
    ValueError
        If the sample is not a map, ``mineral`` is not one of its minerals or ``direction`` is no
        map axis.
    """
    pts = sample.points
    if sample.grains is None or pts.x is None or pts.y is None or sample.grid is None or sample.step is None:
        raise ValueError(f"sample {sample.name} is not a map: a grain list has no map overview")
    axis = direction if direction[:1] in "+-" else f"+{direction}"
    if len(axis) != 2 or axis[0] not in "+-" or axis[1] not in "xyz":
        raise ValueError(f"direction must be a signed map axis such as '+z', got {direction!r}")
    names = [m.name for m in pts.minerals]
    if mineral is None:
        mineral = max(names, key=lambda n: sample.measured_fractions.get(n, 0.0))
    if mineral not in names:
        raise ValueError(f"mineral {mineral!r} is not in sample {sample.name} ({', '.join(names)})")
    main = names.index(mineral)
    dropped = pts.dropped
    reason = dropped.reason if dropped is not None else np.empty(0, dtype=np.int8)
    raster = map_raster(np.concatenate([pts.x, dropped.x if dropped is not None else []]),
                        np.concatenate([pts.y, dropped.y if dropped is not None else []]),
                        sample.grid, sample.step, max_cells)
    phase_img, orient_img, boundaries = _map_images(sample, raster, main, axis)

    titles = ("phases, grain boundaries and points left out", f"{mineral}: crystal direction along map {axis}")
    lay = _layout(raster, len(names) + len(DROPPED_REASONS) + 1 + (len(names) > 1), titles,
                  _caption(raster, int((raster.index >= 0).sum())))
    if fig is None:
        fig = Figure(figsize=lay.size)
        FigureCanvasAgg(fig)                 # drawable on its own, without pyplot's list of figures
    else:
        fig.set_size_inches(*lay.size)
    axes = []
    for rect, title, img, gid in zip(lay.panels, lay.titles, (phase_img, orient_img), ("phase_map", "orientation_map")):
        ax = fig.add_axes(rect)
        ax.set_title(title, fontsize=8, loc="left", pad=3, y=1.0)
        ax.set_xticks([])
        ax.set_yticks([])
        for image, name in ((img, gid), (boundaries, "grain_boundaries")):
            ax.imshow(image, extent=raster.extent, origin="upper", interpolation="antialiased",
                      interpolation_stage="rgba").set_gid(name)
        ax.set_xlim(raster.extent[0], raster.extent[1])
        ax.set_ylim(raster.extent[2], raster.extent[3])
        axes.append(ax)
    _scale_bar(fig, axes[1] if lay.stacked else axes[0], raster)
    lax = fig.add_axes(lay.legend)
    lax.axis("off")
    lax.legend(handles=_legend_handles(sample, reason), loc="upper left", frameon=False, fontsize=7,
               title="share of the points read", title_fontsize=7, alignment="left", borderaxespad=0.0,
               handlelength=1.4)
    kax = fig.add_axes(lay.key)
    _colour_key(kax, pts.minerals[main])
    kax.set_title(f"colour key: {mineral}\n(Laue group {pts.minerals[main].symmetry.laue_name})",
                  fontsize=7, loc="left", pad=3, y=1.0)
    grid_text = "square" if sample.grid == "square" else "hexagonal"
    x_left = lay.caption[0]
    fig.text(x_left, 1 - 0.12 / lay.size[1], f"{sample.name}: map overview",
             fontsize=10, va="top", ha="left", weight="bold")
    fig.text(x_left, 1 - 0.36 / lay.size[1],
             f"{pts.n_read:,} points read on a {grid_text} grid, step {sample.step:g} {_MICRO}; "
             f"{sample.grains.n_grains:,} grains kept", fontsize=8, va="top", ha="left")
    fig.text(*lay.caption, lay.caption_text, fontsize=7, va="top", ha="left", color="0.25")
    return fig


def _map_images(sample: Sample, raster: MapRaster, main: int, axis: str) -> tuple[np.ndarray, ...]:
    """The RGBA images of the phases, of the orientations of mineral ``main``, and of the grain boundaries.

    Cells of points left out take the grey of their reason in both maps; cells of other minerals
    a pale grey on the orientation map; cells without a point stay clear.
    """
    from fabric2seis.ingest.frames import signed_axis, structural_matrix

    pts, idx = sample.points, raster.index
    n_kept = len(pts.quat)
    reason = pts.dropped.reason if pts.dropped is not None else np.empty(0, dtype=np.int8)
    kept, lost = (idx >= 0) & (idx < n_kept), idx >= n_kept
    # category of every cell, a row of the colour tables: minerals, then the reasons to leave a
    # point out, then "no point" (clear)
    n = len(pts.minerals)
    category = np.full(idx.shape, n + len(DROPPED_GREYS), dtype=np.int64)
    category[kept] = pts.mineral_index[idx[kept]]
    category[lost] = n + reason[idx[lost] - n_kept]
    greys = [(g, g, g, 1.0) for g in DROPPED_GREYS] + [(1.0, 1.0, 1.0, 0.0)]
    phase_img = np.array([(*_phase_colour(k), 1.0) for k in range(n)] + greys)[category]
    orient_img = np.array([(OTHER_PHASE_GREY,) * 3 + (1.0,)] * n + greys)[category]
    is_main = category == main
    # the map axis in the frame of the orientations (structural: v_structural = F v_sample)
    along = structural_matrix(sample.settings["frame"], sample.settings_file) @ signed_axis(axis)
    orient_img[is_main, :3] = ipf_colours(pts.quat[idx[is_main]], pts.minerals[main], along)
    orient_img[is_main, 3] = 1.0
    grain = np.full(idx.shape, -1, dtype=np.int64)
    assert sample.grains is not None
    grain[kept] = sample.grains.point_grain[idx[kept]]
    return phase_img, orient_img, _boundary_image(grain)


def _legend_handles(sample: Sample, reason: np.ndarray) -> list[Artist]:
    """Legend entries: each mineral, each reason to leave points out (share of the points read), boundaries."""
    pts = sample.points
    n_read = max(pts.n_read, 1)
    counts = np.bincount(pts.mineral_index, minlength=len(pts.minerals))
    lost = np.bincount(reason, minlength=len(DROPPED_REASONS))
    handles: list[Artist] = [Patch(facecolor=_phase_colour(k), edgecolor="none",
                                   label=f"{m.name}: {_share(c, n_read)}")
                             for k, (m, c) in enumerate(zip(pts.minerals, counts))]
    handles += [Patch(facecolor=(g, g, g), edgecolor="0.5", lw=0.4, label=f"{why}: {_share(c, n_read)}")
                for why, g, c in zip(DROPPED_REASONS, DROPPED_GREYS, lost)]
    if len(pts.minerals) > 1:
        handles.append(Patch(facecolor=(OTHER_PHASE_GREY,) * 3, edgecolor="none",
                             label="other phases (orientation map)"))
    threshold = sample.settings["grains"]["threshold_deg"]
    handles.append(Line2D([], [], color="black", lw=1.0, label=f"grain boundary ({threshold:g}\u00b0 or more)"))
    return handles


def map_overview_figure(stem, sample: Sample, **options) -> list[str]:
    """Draw the map overview of a map sample and write ``stem``.png and ``stem``.pdf.

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix.
    sample : Sample
        The sample; a grain list has no map and gives no files.
    **options
        Passed to :func:`map_overview` (``mineral``, ``direction``, ``max_cells``).

    Returns
    -------
    list of str
        The files written; empty for a grain list.
    """
    if sample.grains is None or sample.points.x is None:
        return []
    return save(map_overview(sample, **options), Path(stem))


def _share(count: int, total: int) -> str:
    """A count as a percentage of the points read: ``none``, ``< 0.1 %`` or one decimal."""
    if count == 0:
        return "none"
    share = 100.0 * count / total
    return "< 0.1 %" if share < 0.05 else f"{share:.1f} %"


def _phase_colour(k: int) -> tuple[float, float, float]:
    from matplotlib.colors import to_rgb

    return to_rgb(PHASE_COLOURS[k % len(PHASE_COLOURS)])


def _boundary_image(grain: np.ndarray) -> np.ndarray:
    """An RGBA image, black on the edges between cells of different grains, clear elsewhere.

    Small rasters are drawn on sub-cells so that a boundary stays a thin line on the cell edge.
    """
    n_rows, n_cols = grain.shape
    sub = int(np.clip(np.sqrt(1.0e6 / grain.size), 1, 8))
    both = (grain[:, :-1] >= 0) & (grain[:, 1:] >= 0)
    across = both & (grain[:, :-1] != grain[:, 1:])              # edge right of cell (i, j)
    both = (grain[:-1] >= 0) & (grain[1:] >= 0)
    down = both & (grain[:-1] != grain[1:])                       # edge below cell (i, j)
    edge = np.zeros((n_rows, n_cols, sub, sub), dtype=bool)
    edge[:, :-1, :, sub - 1] |= across[:, :, None]
    edge[:-1, :, sub - 1, :] |= down[:, :, None]
    flat = edge.transpose(0, 2, 1, 3).reshape(n_rows * sub, n_cols * sub)
    image = np.zeros(flat.shape + (4,), dtype=np.uint8)
    image[flat, 3] = 255
    return image


def _colour_key(ax, mineral) -> None:
    """Draw orix's TSL colours over the fundamental sector of the mineral's Laue group (stereographic,
    upper hemisphere of the crystal frame), with the sector's corners labelled."""
    from orix.plot import IPFColorKeyTSL
    from orix.projections import InverseStereographicProjection, StereographicProjection
    from orix.vector import Vector3d

    laue = mineral.orix_symmetry.laue
    sector = laue.fundamental_sector
    n = 241
    u = np.linspace(-1.0, 1.0, n)
    gx, gy = np.meshgrid(u, u[::-1])
    disk = gx ** 2 + gy ** 2 <= 1.0
    v = InverseStereographicProjection(pole=-1).xy2vector(gx[disk], gy[disk])
    inside = np.zeros(disk.shape, dtype=bool)
    inside[disk] = np.all(np.abs(v.in_fundamental_sector(laue).data - v.unit.data) < 1e-9, axis=1)
    image = np.zeros(disk.shape + (4,))
    key = IPFColorKeyTSL(mineral.orix_symmetry).direction_color_key
    image[inside, :3] = key.direction2color(Vector3d(v.unit.data[inside[disk]]))
    image[inside, 3] = 1.0
    ax.imshow(image, extent=(-1 - 1 / (n - 1), 1 + 1 / (n - 1)) * 2, origin="upper", interpolation="antialiased")
    project = StereographicProjection(pole=-1)
    ex, ey = project.vector2xy(sector.edges)
    ax.plot(ex, ey, color="0.3", lw=0.6)
    pad = 0.25 * max(ex.max() - ex.min(), ey.max() - ey.min())
    ax.set_xlim(ex.min() - pad, ex.max() + pad)
    ax.set_ylim(ey.min() - pad, ey.max() + pad)
    ax.set_aspect("equal")
    ax.set_anchor("NW")
    ax.axis("off")
    cx, cy = project.vector2xy(sector.center)
    for label, vec in _corner_labels(mineral, sector):
        px, py = project.vector2xy(Vector3d(vec))
        away = np.array([px[0] - cx[0], py[0] - cy[0]])
        away = away / (np.linalg.norm(away) or 1.0)
        ax.annotate(label, (px[0], py[0]), xytext=(6 * away[0], 6 * away[1]), textcoords="offset points",
                    ha="left" if away[0] > 0.3 else "right" if away[0] < -0.3 else "center",
                    va="bottom" if away[1] > 0.3 else "top" if away[1] < -0.3 else "center", fontsize=7)


def _corner_labels(mineral, sector) -> list[tuple[str, np.ndarray]]:
    """Crystal directions at the sector's corners, and at the crystal axes on its rim when it has few corners."""
    from orix.vector import Miller, Vector3d

    hexagonal = abs(mineral.lattice["gamma"] - 120.0) < 1e-6
    points = [c for c in sector.vertices.unit.data] if sector.vertices.size else []
    if len(points) < 3:
        for axis in np.eye(3):
            on = np.allclose(Vector3d(axis).in_fundamental_sector(mineral.orix_symmetry.laue).data, axis, atol=1e-9)
            if on and all(np.degrees(np.arccos(np.clip(axis @ p, -1, 1))) > 5 for p in points):
                points.append(axis)
    out = []
    for p in points:
        m = Miller(xyz=p, phase=mineral.phase)
        m.coordinate_format = "UVTW" if hexagonal else "uvw"
        r = m.round(6)
        if np.degrees(r.angle_with(m)[0]) < 0.5:
            out.append((_bracket(r.coordinates[0]), p))
        elif np.allclose(p, [0, 0, 1]):
            out.append(("c*", p))
    return out


def _bracket(indices: np.ndarray) -> str:
    """``[1 -1 0 0]`` as ``[1\u03051\u03050]``-style mathtext: bars over negative indices."""
    parts = [rf"\bar{{{-int(round(i))}}}" if i < -0.5 else f"{int(round(abs(i)))}" for i in indices]
    return "$[" + "".join(parts) + "]$"


@dataclass
class _Layout:
    size: tuple[float, float]
    panels: list[tuple[float, float, float, float]]
    legend: tuple[float, float, float, float]
    key: tuple[float, float, float, float]
    caption: tuple[float, float]
    stacked: bool
    titles: tuple[str, ...]
    caption_text: str


def _layout(raster: MapRaster, n_entries: int, titles: tuple[str, str], caption: str) -> _Layout:
    """Place the two map panels (stacked for wide maps), the legend and the key: sizes in inches, then
    the rectangles as fractions of the figure. Titles and caption are wrapped to the width of the maps."""
    left, right, bottom, top = raster.extent
    aspect = (right - left) / (bottom - top)
    margin, gap, side, per_inch = 0.25, 0.35, 2.45, 13        # per_inch: characters of 8 pt text per inch
    stacked = aspect >= 1.6
    if stacked:
        pw = 6.5
        ph = pw / aspect
    else:
        ph = min(4.6, 4.0 / aspect)
        pw = ph * aspect
        if pw < 1.6:                    # a tall, narrow map: keep room for the titles, up to 9 inches high
            pw = min(1.6, 9.0 * aspect)
            ph = pw / aspect
    wrapped = tuple(textwrap.fill(t, max(12, int(pw * per_inch))) for t in titles)
    title_h = 0.1 + 0.15 * max(t.count("\n") + 1 for t in wrapped)
    head = 0.5 + title_h
    if stacked:
        maps_w, maps_h = pw, 2 * ph + title_h
        origins = [(margin, ph + title_h), (margin, 0.0)]
    else:
        maps_w, maps_h = 2 * pw + 0.2, ph
        origins = [(margin, 0.0), (margin + pw + 0.2, 0.0)]
    caption_text = "\n".join(textwrap.fill(line, max(30, int(maps_w * per_inch * 1.1)))
                              for line in caption.split("\n"))
    foot = 0.45 + 0.13 * (caption_text.count("\n") + 1)
    legend_h, key_gap, key_h = 0.19 * (n_entries + 1) + 0.05, 0.45, 1.5
    side_h = legend_h + key_gap + key_h
    body = max(maps_h + foot, side_h)
    width, height = margin + maps_w + gap + side + margin, body + head
    base = body - maps_h                         # maps at the top, beside the side column
    panels = [(x0 / width, (y0 + base) / height, pw / width, ph / height) for x0, y0 in origins]
    sx = margin + maps_w + gap
    legend = (sx / width, (body - legend_h) / height, side / width, legend_h / height)
    key = (sx / width, (body - side_h) / height, 1.8 / width, key_h / height)
    return _Layout((width, height), panels, legend, key, (margin / width, (base - 0.3) / height), stacked,
                   wrapped, caption_text)


def _round_length(value: float) -> float:
    """A round length (1, 2 or 5 times a power of ten) not above ``value``."""
    power = 10.0 ** np.floor(np.log10(value))
    return float(max(m for m in (1.0, 2.0, 5.0) if m * power <= value) * power)


def _scale_bar(fig: Figure, ax, raster: MapRaster) -> None:
    """A bar of a round length under the panel's left edge, its length in micrometres beside it."""
    left, right = raster.extent[0], raster.extent[1]
    length = _round_length(0.2 * (right - left))
    below = blended_transform_factory(ax.transData, ax.transAxes) + ScaledTranslation(0, -7 / 72, fig.dpi_scale_trans)
    ax.plot([left, left + length], [0, 0], color="black", lw=2.5, solid_capstyle="butt", transform=below,
            clip_on=False, gid="scale_bar")
    ax.text(left + length, 0, f"  {length:g} {_MICRO}", transform=below, va="center", ha="left", fontsize=7,
            gid="scale_bar_label")


def _caption(raster: MapRaster, n_cells: int) -> str:
    """The line at the foot: orientation of the map, unit, and how the map was sampled for drawing."""
    first = f"Map x to the right, map y down, as in the file; lengths in {_MICRO} (the file's unit)."
    if raster.stride is None:
        how = (f"Hexagonal grid drawn on {n_cells:,} square cells of {raster.cell:.3g} {_MICRO}, "
               "each showing the nearest point.")
    elif raster.stride > 1:
        how = f"One row and one column in {raster.stride} drawn ({n_cells:,} cells)."
    else:
        how = "Every point drawn."
    return f"{first}\n{how}"
