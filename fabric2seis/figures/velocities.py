"""The velocity sheet: seismic properties against propagation direction, with a table of their extremes.

By default three hemispheres, in the order a seismologist asks about them: the P-wave speed, the
shear-wave anisotropy with bars along the fast shear-wave polarisation whose length shows the delay,
and the shear-wave delay per 100 km of path. Other quantities (:data:`PANELS`) are drawn on request
(settings key ``figures.velocities.panels``). Each extreme is labelled by a callout with its value
and its direction as trend/plunge in the structural frame, and the extremes of every panel are
listed in a table beside the hemispheres. Projection: equal area, lower hemisphere, structural frame
(:mod:`fabric2seis.figures.projection`: X right, Z up, Y at the centre).

Trend and plunge of an axis are those of its representative with z <= 0 (CONVENTIONS.md): trend
from X (lineation) towards Y, 0 to 360 degrees (0 to 180 for a horizontal axis), plunge below the XY
(foliation) plane, 0 to 90 degrees.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from functools import partial

import numpy as np
from matplotlib import patheffects
from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.collections import LineCollection
from matplotlib.figure import Figure
from matplotlib.ticker import FixedLocator, MaxNLocator

from fabric2seis import waves
from fabric2seis.figures.projection import disk_grid, frame_axes, project, save

#: the settings' default (``figures.velocities.panels``)
DEFAULT_PANELS = ("vp", "avs", "delay")
#: path length the delay is given for, km
DELAY_PATH_KM = 100.0
#: hemisphere panels per row
PANELS_PER_ROW = 3
_HALF_WIDTH = 1.4          # half-width of a hemisphere panel in projection units (the disk has radius 1)
_LONGEST_BAR = 0.17        # projected length of the bar of the largest delay, projection units


@dataclass(frozen=True)
class Quantity:
    """A quantity that can be drawn on a hemisphere.

    Attributes
    ----------
    title
        Panel title.
    symbol
        Short name, used in the table and the colour bar.
    unit
        Unit as shown (empty for a ratio).
    decimals
        Decimals shown.
    values
        The quantity from (Vp, Vs1, Vs2) in km/s, arrays of one shape.
    cmap
        Matplotlib colour map (perceptually uniform).
    """

    title: str
    symbol: str
    unit: str
    decimals: int
    values: Callable[[np.ndarray, np.ndarray, np.ndarray], np.ndarray]
    cmap: str

    def text(self, value: float) -> str:
        """The value with its precision and unit."""
        number = f"{value:.{self.decimals}f}"
        return f"{number} {self.unit}" if self.unit else number

    def uniform(self, low: float, high: float) -> bool:
        """Whether values from ``low`` to ``high`` look the same at the precision shown."""
        return high - low < 0.5 * 10.0 ** -self.decimals


def _delay(vp, vs1, vs2):
    return DELAY_PATH_KM * (1.0 / vs2 - 1.0 / vs1)


#: every panel the sheet can draw, by its settings name
PANELS: dict[str, Quantity] = {
    "vp": Quantity("P-wave speed", "Vp", "km/s", 2, lambda vp, vs1, vs2: vp, "cividis"),
    "avs": Quantity("S-wave anisotropy, fast polarisation", "AVs", "%", 1,
                    lambda vp, vs1, vs2: 200.0 * (vs1 - vs2) / (vs1 + vs2), "plasma"),
    "delay": Quantity(f"S-wave delay per {DELAY_PATH_KM:.0f} km of path", "delay", f"s per {DELAY_PATH_KM:.0f} km", 2,
                      _delay, "plasma"),
    "vs1": Quantity("fast S-wave speed", "Vs1", "km/s", 2, lambda vp, vs1, vs2: vs1, "cividis"),
    "vs2": Quantity("slow S-wave speed", "Vs2", "km/s", 2, lambda vp, vs1, vs2: vs2, "cividis"),
    "dvs": Quantity("S-wave speed difference", "dVs", "km/s", 2, lambda vp, vs1, vs2: vs1 - vs2, "plasma"),
    "vp_vs1": Quantity("ratio Vp/Vs1", "Vp/Vs1", "", 3, lambda vp, vs1, vs2: vp / vs1, "cividis"),
    "vp_vs2": Quantity("ratio Vp/Vs2", "Vp/Vs2", "", 3, lambda vp, vs1, vs2: vp / vs2, "cividis"),
}


@dataclass(frozen=True)
class Extreme:
    """The largest or smallest value of a quantity over the directions of a grid.

    Attributes
    ----------
    panel
        Name of the quantity (a key of :data:`PANELS`).
    kind
        ``"max"`` or ``"min"``.
    value
        The value, in the quantity's unit.
    direction
        Unit propagation direction (3,), structural frame, z <= 0.
    trend_deg, plunge_deg
        Trend from X towards Y and plunge below the XY plane, degrees.
    """

    panel: str
    kind: str
    value: float
    direction: np.ndarray
    trend_deg: float
    plunge_deg: float

    @property
    def trend_plunge(self) -> str:
        """Direction as ``ttt/pp`` (degrees, rounded; trend 0 to 179 for an axis shown as horizontal)."""
        plunge = int(round(self.plunge_deg))
        trend = int(round(self.trend_deg)) % (360 if plunge else 180)
        return f"{trend:03d}/{plunge:02d}"


def check_panels(panels: Sequence[str]) -> tuple[str, ...]:
    """Check a list of panel names.

    Parameters
    ----------
    panels : sequence of str
        Names from :data:`PANELS`, at least one, each once.

    Returns
    -------
    tuple of str
        The names.

    Raises
    ------
    ValueError
        If the list is empty, repeats a name or holds an unknown one.
    """
    panels = tuple(panels)
    unknown = [p for p in panels if p not in PANELS]
    if not panels or unknown or len(set(panels)) != len(panels):
        raise ValueError(f"panels must be distinct names from {', '.join(PANELS)}, got {list(panels)}")
    return panels


def trend_plunge(directions: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Trend and plunge of axes in the structural frame.

    Parameters
    ----------
    directions : array_like, shape (..., 3)
        Unit vectors; their sign is ignored (axes).

    Returns
    -------
    trend_deg, plunge_deg : numpy.ndarray, shape (...)
        Trend from X towards Y (0 to 360 degrees, 0 to 180 for a horizontal axis) and plunge below
        the XY plane (0 to 90 degrees) of the representative with z <= 0.
    """
    v = waves.to_lower_hemisphere(np.asarray(directions, dtype=float))
    horizontal = np.abs(v[..., 2]) < 1e-9
    trend = np.degrees(np.arctan2(v[..., 1], v[..., 0])) % 360.0
    trend = np.where(horizontal, trend % 180.0, trend)
    plunge = np.degrees(np.arcsin(np.clip(-v[..., 2], 0.0, 1.0)))
    return trend, plunge


def extremes(c: np.ndarray | None, density_kg_m3: float | None, panels: Sequence[str] = DEFAULT_PANELS,
             grid=None, step_deg: float = 1.0) -> list[Extreme]:
    """Find the largest and smallest value of each panel's quantity over all directions.

    The extremes are searched on a grid of directions, then, when the stiffness is given, refined
    around the best direction of the grid on three ever finer patches (steps of about 0.15, 0.015
    and 0.0015 degrees). The refinement matters where an extreme is a cusp rather than a smooth
    peak: the vanishing shear-wave anisotropy along an acoustic axis, or a Vs2 maximum where the
    two shear sheets touch, which a grid misses by its own spacing times the slope.

    Parameters
    ----------
    c : numpy.ndarray, shape (6, 6), or None
        Voigt stiffness, GPa, structural frame; None: the grid values, unrefined.
    density_kg_m3 : float or None
        Density, kg m^-3.
    panels : sequence of str
        Names from :data:`PANELS`.
    grid : fabric2seis.waves.seismic.VelocityGrid, optional
        Velocities the seismic stage computed; by default solved here on a grid of ``step_deg``.
    step_deg : float
        Spacing of the default grid, degrees.

    Returns
    -------
    list of Extreme
        For each panel in order, its maximum then its minimum.

    Raises
    ------
    ValueError
        If a panel name is unknown, or neither a grid nor a stiffness and density are given.
    """
    panels = check_panels(panels)
    solvable = c is not None and density_kg_m3 is not None
    if grid is None:
        if c is None or density_kg_m3 is None:
            raise ValueError("give a velocity grid or a stiffness and a density")
        from fabric2seis.waves.seismic import velocity_grid

        grid = velocity_grid(c, density_kg_m3, step_deg)
    out = []
    for name in panels:
        q = PANELS[name]
        values = q.values(grid.vp_km_s, grid.vs1_km_s, grid.vs2_km_s)
        for kind, sign in (("max", 1.0), ("min", -1.0)):
            k = int(np.argmax(sign * values))
            direction, value = np.asarray(grid.directions[k], dtype=float), float(values[k])
            if solvable:
                direction, value = _refine(direction, partial(_score, c, density_kg_m3, q, sign))
                value *= sign
            direction = waves.to_lower_hemisphere(direction)
            trend, plunge = trend_plunge(direction)
            out.append(Extreme(name, kind, value, direction, float(trend), float(plunge)))
    return out


def _score(c, density_kg_m3, q: Quantity, sign: float, directions: np.ndarray) -> np.ndarray:
    """``sign`` times the quantity along ``directions`` (Christoffel solutions of the library)."""
    w = waves.plane_waves(c, density_kg_m3, directions)
    return sign * q.values(w.vp_km_s, w.vs1_km_s, w.vs2_km_s)


def _refine(direction: np.ndarray, score: Callable[[np.ndarray], np.ndarray], half_deg: float = 1.5,
            rounds: int = 3, n: int = 21) -> tuple[np.ndarray, float]:
    """The largest score on patches of n x n directions around ``direction``, each ten times finer."""
    best = direction / np.linalg.norm(direction)
    best_score = float(score(best[None, :])[0])
    offsets = np.linspace(-1.0, 1.0, n)
    for r in range(rounds):
        u = np.cross(best, [1.0, 0.0, 0.0] if abs(best[0]) < 0.9 else [0.0, 1.0, 0.0])
        u /= np.linalg.norm(u)
        v = np.cross(best, u)
        h = np.radians(half_deg) / 10.0 ** r
        a, b = np.meshgrid(offsets * h, offsets * h)
        trial = best + a.reshape(-1, 1) * u + b.reshape(-1, 1) * v
        trial /= np.linalg.norm(trial, axis=1, keepdims=True)
        scores = score(trial)
        k = int(np.argmax(scores))
        if scores[k] > best_score:
            best, best_score = trial[k], float(scores[k])
    return best, best_score


def velocity_sheet(c: np.ndarray, density_kg_m3: float, *, sample_name: str = "", average: str = "",
                   n_grains: int | None = None, panels: Sequence[str] = DEFAULT_PANELS, grid=None,
                   fig: Figure | None = None) -> Figure:
    """Draw the velocity sheet: one hemisphere per panel and a table of the extremes beside them.

    Parameters
    ----------
    c : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa, structural frame.
    density_kg_m3 : float
        Density, kg m^-3.
    sample_name, average : str
        Sample and average named in the header.
    n_grains : int, optional
        Grain count named in the header.
    panels : sequence of str
        Names from :data:`PANELS`, in the order drawn (at most three per row).
    grid : fabric2seis.waves.seismic.VelocityGrid, optional
        The seismic stage's velocities, where the search for the extremes starts (:func:`extremes`:
        smooth extremes then equal those of summary.json to the digits shown); by default a
        1-degree grid is solved here.
    fig : matplotlib.figure.Figure, optional
        An empty figure to draw on (its size is set); by default a new one.

    Returns
    -------
    matplotlib.figure.Figure
        The sheet, in constrained layout (no text overlaps another).

    Raises
    ------
    ValueError
        If a panel name is unknown or repeated.
    """
    panels = check_panels(panels)
    found = extremes(c, density_kg_m3, panels, grid)
    n_cols = min(len(panels), PANELS_PER_ROW)
    n_rows = -(-len(panels) // PANELS_PER_ROW)
    if fig is None:
        fig = Figure()
        FigureCanvasAgg(fig)
    fig.set_size_inches(3.3 * n_cols + 3.4, 3.9 * n_rows + 0.9)
    fig.set_layout_engine("constrained", h_pad=0.08, hspace=0.04)
    spec = fig.add_gridspec(n_rows, n_cols + 1, width_ratios=[1.0] * n_cols + [1.05])
    a, b, dirs, inside = disk_grid(161)
    w = waves.plane_waves(c, density_kg_m3, dirs[inside])
    for k, name in enumerate(panels):
        ax = fig.add_subplot(spec[k // n_cols, k % n_cols], label=f"hemisphere {name}")
        _hemisphere(fig, ax, name, a, b, inside, w, [e for e in found if e.panel == name])
        if name == "avs":
            _fast_bars(ax, c, density_kg_m3, float(_delay(w.vp_km_s, w.vs1_km_s, w.vs2_km_s).max()))
    side = fig.add_subplot(spec[:, n_cols], label="extremes")
    _extremes_table(side, found, "avs" in panels, fig.get_figheight() - 1.5)
    name = f"{sample_name}: " if sample_name else ""
    used = f", {average} average" if average else ""
    grains = "" if n_grains is None else f", {n_grains} grain{'' if n_grains == 1 else 's'}"
    fig.suptitle(f"{name}seismic velocities{used}{grains}, density "
                 f"{density_kg_m3:.0f} kg/m³\nlower hemisphere, equal area, structural frame: X lineation "
                 "(right), Z foliation normal (up), Y centre", fontsize=9)
    return fig


def velocity_figure(stem, sample_name: str, c: np.ndarray, density_kg_m3: float, average: str,
                    n_grains: int | None, panels: Sequence[str] = DEFAULT_PANELS, grid=None) -> list[str]:
    """Draw the velocity sheet (:func:`velocity_sheet`) and write it as PNG and PDF.

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    sample_name : str
        Name shown in the header.
    c : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa, structural frame.
    density_kg_m3 : float
        Density, kg m^-3.
    average : str
        Name of the average ``c`` is, shown in the header.
    n_grains : int or None
        Number of grains, shown in the header; None leaves it out (a map combined from pieces).
    panels : sequence of str
        Names from :data:`PANELS` (settings key ``figures.velocities.panels``).
    grid : fabric2seis.waves.seismic.VelocityGrid, optional
        The seismic stage's velocities, where the search for the extremes starts.

    Returns
    -------
    list of str
        The files written.
    """
    fig = velocity_sheet(c, density_kg_m3, sample_name=sample_name, average=average, n_grains=n_grains,
                         panels=panels, grid=grid)
    return save(fig, stem)


def velocity_hemisphere(c: np.ndarray, density_kg_m3: float, panel: str = "vp", *, grid=None,
                        ax: Axes | None = None, heading: str = "") -> Figure:
    """Draw one hemisphere of the velocity sheet (one quantity of :data:`PANELS`) on ``ax`` or a new figure.

    The same drawing as a panel of :func:`velocity_sheet`: filled contours, a colour bar with
    units and callouts of the extremes (and the fast polarisation bars on ``"avs"``).

    Parameters
    ----------
    c : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa, structural frame.
    density_kg_m3 : float
        Density, kg/m^3.
    panel : str
        A name from :data:`PANELS` (``"vp"``, ``"avs"``, ``"delay"`` ...).
    grid : fabric2seis.waves.seismic.VelocityGrid, optional
        The seismic stage's velocities, where the search for the extremes starts (:func:`extremes`).
    ax : matplotlib.axes.Axes, optional
        Where to draw; a new figure of one panel if not given.
    heading : str
        For a new figure: its first heading line (sample, grains, average); the projection and
        frame follow on a second line.

    Returns
    -------
    matplotlib.figure.Figure
        The figure holding the panel.

    Raises
    ------
    ValueError
        If the panel name is unknown.
    """
    (name,) = check_panels([panel])
    if ax is None:
        fig = Figure(figsize=(3.6, 4.6), layout="constrained")
        FigureCanvasAgg(fig)
        ax = fig.add_subplot(label=f"hemisphere {name}")
        fig.suptitle(f"{heading}\n" * bool(heading) + "lower hemisphere, equal area, structural frame\n"
                     "X lineation (right), Z foliation normal (up)", fontsize=8)
    root = ax.get_figure(root=True)
    assert root is not None
    a, b, dirs, inside = disk_grid(161)
    w = waves.plane_waves(c, density_kg_m3, dirs[inside])
    _hemisphere(root, ax, name, a, b, inside, w, extremes(c, density_kg_m3, [name], grid))
    if name == "avs":
        _fast_bars(ax, c, density_kg_m3, float(_delay(w.vp_km_s, w.vs1_km_s, w.vs2_km_s).max()))
    return root


def _hemisphere(fig: Figure, ax, name: str, a, b, inside, w, found: list[Extreme]) -> None:
    """One panel: filled contours, colour bar, frame and the two callouts (none for a uniform quantity)."""
    q = PANELS[name]
    grid = np.full(a.shape, np.nan)
    grid[inside] = q.values(w.vp_km_s, w.vs1_km_s, w.vs2_km_s)
    low, high = (next(e.value for e in found if e.kind == kind) for kind in ("min", "max"))
    uniform = q.uniform(low, high)
    unit = 10.0 ** -q.decimals
    levels = [low - unit, high + unit] if uniform else 12   # a uniform quantity: one colour, not its noise
    filled = ax.contourf(a, b, grid, levels=levels, cmap=q.cmap)
    filled.set_rasterized(True)
    frame_axes(ax)
    ax.set_xlim(-_HALF_WIDTH, _HALF_WIDTH)
    ax.set_ylim(-_HALF_WIDTH, _HALF_WIDTH)
    ax.set_title(q.title, fontsize=9, y=1.0)
    bar = fig.colorbar(filled, ax=ax, location="bottom", shrink=0.8, pad=0.02, aspect=25)
    bar.set_label(f"{q.symbol} ({q.unit})" if q.unit else q.symbol, fontsize=8)
    bar.ax.tick_params(labelsize=7)
    bar.ax.xaxis.set_major_locator(FixedLocator([low]) if uniform else MaxNLocator(4))
    bar.ax.xaxis.set_major_formatter(f"{{x:.{q.decimals}f}}")
    if uniform:
        return
    corners: dict[str, tuple[float, float]] = {}
    for e in found:
        x, y = project(e.direction[None, :])[0]
        corner = (1.0 if x > 1e-9 else -1.0, 1.0 if y >= -1e-9 else -1.0)   # centre: up-left, clear of "Y"
        if corner in corners.values():           # the other extreme is there: take the corner below or above
            corner = (corner[0], -corner[1])
        corners[e.kind] = corner
        _callout(ax, e, q, (x, y), corner)


def _callout(ax, e: Extreme, q: Quantity, point, corner) -> None:
    """Label an extreme in a corner of its panel (outside the disk) with a leader line to it."""
    sx, sy = corner
    anchor = (sx * 1.02, sy * (_HALF_WIDTH - 0.02))
    ax.text(*anchor, f"{e.kind} {q.text(e.value)}\nat {e.trend_plunge}", fontsize=7, ha="center",
            va="top" if sy > 0 else "bottom", linespacing=1.1)
    start = (sx * 1.02, sy * 1.12)
    ax.plot([start[0], point[0]], [start[1], point[1]], color="black", lw=0.7,
            path_effects=[patheffects.withStroke(linewidth=2.0, foreground="white")])
    ax.plot([point[0]], [point[1]], marker=".", ms=4, color="black")


def _fast_bars(ax, c, density_kg_m3: float, delay_max: float, step_deg: float = 11.0) -> None:
    """Bars along the fast shear-wave polarisation, their length proportional to the delay."""
    dirs, _, plunge = waves.hemisphere_grid(step_deg)
    dirs = dirs[plunge > 1.0]
    # the grid covers z <= 0; the panels show y >= 0: take the same pattern turned about X
    dirs = np.column_stack([dirs[:, 0], -dirs[:, 2], dirs[:, 1]])
    w = waves.plane_waves(c, density_kg_m3, dirs)
    delay = _delay(w.vp_km_s, w.vs1_km_s, w.vs2_km_s)
    keep = delay > 0.02 * delay_max                 # no polarisation where the shear waves travel alike
    if PANELS["delay"].uniform(0.0, delay_max) or not keep.any():
        return
    centre = project(dirs[keep])
    p = w.polarisations[keep, 1]
    along = project(dirs[keep] + 1e-4 * p) - project(dirs[keep] - 1e-4 * p)
    along /= np.linalg.norm(along, axis=1, keepdims=True)
    half = along * (0.5 * _LONGEST_BAR * delay[keep] / delay_max)[:, None]
    bars = LineCollection(list(np.stack([centre - half, centre + half], axis=1)), colors="black", linewidths=1.1,
                          path_effects=[patheffects.withStroke(linewidth=2.2, foreground="white")])
    ax.add_collection(bars)


def _extremes_table(ax, found: list[Extreme], bars: bool, height_in: float) -> None:
    """The extremes of every panel (value and trend/plunge), AVp, and how to read the sheet; rows about
    0.2 inch high in a column about ``height_in`` high."""
    rows = []
    for high, low in zip(found[::2], found[1::2]):
        q = PANELS[high.panel]
        if q.uniform(low.value, high.value):
            rows.append([q.symbol, q.text(high.value), "uniform"])
        else:
            rows += [[f"{q.symbol} {e.kind}", q.text(e.value), e.trend_plunge] for e in (high, low)]
        if high.panel == "vp":
            rows.append(["AVp", f"{200.0 * (high.value - low.value) / (high.value + low.value):.1f} %", "-"])
    ax.axis("off")
    ax.set_title("extremes", fontsize=9, y=1.0)
    table = ax.table(cellText=rows, colLabels=["quantity", "value", "trend/plunge"], loc="upper center",
                     cellLoc="left", colLoc="left")
    table.auto_set_font_size(False)
    table.set_fontsize(7)
    table.auto_set_column_width([0, 1, 2])
    row_height = min(0.2 / height_in, 0.8 / (len(rows) + 1))
    for cell in table.get_celld().values():
        cell.set_linewidth(0.4)
        cell.set_height(row_height)
    notes = ["trend from X towards Y, plunge below", "the XY (foliation) plane, degrees"]
    if bars:
        notes += ["", "bars on AVs: fast S-wave polarisation,", "length proportional to the delay"]
    ax.text(0.02, 1.0 - (len(rows) + 1) * row_height - 0.04, "\n".join(notes), fontsize=7, va="top", ha="left",
            transform=ax.transAxes)
