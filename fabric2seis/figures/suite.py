"""Suite comparison: fabric strength against shear-wave anisotropy, delay per 100 km, and the
fabric shape of every sample's main phase in the point-girdle-random triangle (Vollmer 1990).

Samples are numbered in the order of the suite table; the numbers label the points (placed by
``place_labels`` so that no two labels, and no label and point, overlap) and a key beside the
panels gives each number's sample, and the samples that failed with their error.
"""

from __future__ import annotations

import textwrap

import numpy as np
from matplotlib.figure import Figure

from fabric2seis.figures.projection import plt, save

#: colours of the samples (Okabe & Ito 2008, readable with colour-blindness); numbers tell them apart too
SAMPLE_COLOURS = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000")
#: offsets tried for a label around its point, in points: nearest ring first, then wider rings
_RADII_PT = (5.0, 9.0, 14.0, 20.0, 28.0)
_ANGLES_DEG = (45, 135, 315, 225, 0, 180, 90, 270)


def _overlaps(box, boxes) -> bool:
    return any(box.x0 < b.x1 and b.x0 < box.x1 and box.y0 < b.y1 and b.y0 < box.y1 for b in boxes)


def place_labels(ax, xy: np.ndarray, labels: list[str], marker_pt: float = 5.0, fontsize: float = 7) -> list:
    """Put each label beside its point where it overlaps no other label, no point and no text of the
    panel, inside the panel; a label away from its point is joined to it by a thin leader line.

    Candidates are tried nearest first, on rings of growing radius, at eight directions each; a label
    that finds no free place goes above its point, beyond the widest ring. The
    figure's layout must be final before the call (the labels are placed in display space).

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        The panel, its limits set.
    xy : numpy.ndarray, shape (N, 2)
        Points in data coordinates (rows with NaN are skipped).
    labels : list of str
        One label per point.
    marker_pt : float
        Half the size of the markers drawn at the points, points.
    fontsize : float
        Font size of the labels, points.

    Returns
    -------
    list of matplotlib.text.Annotation
        The labels, in the order of ``xy`` (skipped points left out).
    """
    fig = ax.figure
    renderer = fig.canvas.get_renderer()
    inside = ax.get_window_extent(renderer)
    pixels = fig.dpi / 72.0
    xy = np.asarray(xy, dtype=float).reshape(-1, 2)
    good = np.all(np.isfinite(xy), axis=1)
    screen = ax.transData.transform(np.where(good[:, None], xy, 0.0))
    half = marker_pt * pixels
    from matplotlib.transforms import Bbox

    taken = [Bbox([[x - half, y - half], [x + half, y + half]]) for (x, y), ok in zip(screen, good) if ok]
    taken += [t.get_window_extent(renderer) for t in ax.texts if t.get_visible() and t.get_text().strip()]
    placed = []
    for point, label, ok in zip(xy, labels, good):
        if not ok:
            continue
        for ring, radius in enumerate(_RADII_PT):
            found = None
            leader = {"arrowprops": {"arrowstyle": "-", "lw": 0.5, "color": "0.4", "shrinkA": 0, "shrinkB": 3}
                      } if ring >= 2 else {}
            for angle in _ANGLES_DEG:
                dx, dy = radius * np.cos(np.radians(angle)), radius * np.sin(np.radians(angle))
                text = ax.annotate(label, point, xytext=(dx, dy), textcoords="offset points", fontsize=fontsize,
                                   ha="left" if dx > 1 else "right" if dx < -1 else "center",
                                   va="bottom" if dy > 1 else "top" if dy < -1 else "center", **leader)
                box = text.get_window_extent(renderer)
                if (box.x0 >= inside.x0 and box.x1 <= inside.x1 and box.y0 >= inside.y0 and box.y1 <= inside.y1
                        and not _overlaps(box, taken)):
                    found = text
                    break
                text.remove()
            if found is not None:
                break
        if found is None:                 # no free place: the widest ring, joined to its point
            found = ax.annotate(label, point, xytext=(0.0, _RADII_PT[-1] + 8), textcoords="offset points",
                                fontsize=fontsize, ha="center", va="bottom",
                                arrowprops={"arrowstyle": "-", "lw": 0.5, "color": "0.4", "shrinkA": 0, "shrinkB": 3})
        taken.append(found.get_window_extent(renderer))
        placed.append(found)
    return placed


def _main_phase(row) -> str | None:
    main = row.get("uncertainty.main_phase")
    if isinstance(main, str):
        return main
    return next((c.split(".")[1] for c in row.index if c.startswith("phases.") and c.endswith(".fraction")
                 and row.get(c) == row.get(c)), None)


def _number(row, key: str, default: float = np.nan) -> float:
    value = row.get(key, default)
    try:
        return float(value)
    except (TypeError, ValueError):
        return default


def suite_figure(stem, table) -> list[str]:
    """Draw the suite comparison (:func:`suite_sheet`) and write it as PNG and PDF.

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    table : pandas.DataFrame
        As :func:`suite_sheet` takes it.

    Returns
    -------
    list of str
        The files written.
    """
    return save(suite_sheet(table), stem)


def suite_sheet(table) -> Figure:
    """The suite comparison: fabric strength against AVs, delay per 100 km, and the P-G-R triangle.

    The layout is fixed once drawn (the number labels are placed on screen), so the figure comes
    back without a layout engine.

    Parameters
    ----------
    table : pandas.DataFrame
        The suite table (``workflow.suite.suite_table``); samples whose status is not ``ok`` are
        listed in the key with their error and left out of the panels.

    Returns
    -------
    matplotlib.figure.Figure
        The figure: the three panels and the key.
    """
    ok = table[table["status"] == "ok"].reset_index(drop=True)
    failed = table[table["status"] != "ok"]
    numbers = [str(k + 1) for k in range(len(ok))]
    colours = [SAMPLE_COLOURS[k % len(SAMPLE_COLOURS)] for k in range(len(ok))]
    fig = plt.figure(figsize=(14.5, 5.0), layout="constrained")
    gs = fig.add_gridspec(1, 4, width_ratios=[1.0, 0.75, 1.1, 0.8])
    ax1, ax2, ax3 = (fig.add_subplot(gs[0, k]) for k in range(3))
    key = fig.add_subplot(gs[0, 3])
    key.axis("off")

    j = np.array([_number(row, f"phases.{_main_phase(row)}.J") for _, row in ok.iterrows()])
    avs = ok["seismic.avs_max_pct"].to_numpy(float) if len(ok) else np.array([])
    for k, row in ok.iterrows():
        # intervals drawn as lines, not symmetric error bars: bootstrap intervals may be skewed
        ax1.plot([_number(row, "uncertainty.J.low", j[k]), _number(row, "uncertainty.J.high", j[k])], [avs[k]] * 2,
                 color=colours[k], lw=1)
        ax1.plot([j[k]] * 2, [_number(row, "uncertainty.avs_max_pct.low", avs[k]),
                              _number(row, "uncertainty.avs_max_pct.high", avs[k])], color=colours[k], lw=1)
        ax1.plot(j[k], avs[k], "o", ms=6, color=colours[k], mec="black", mew=0.5)
    ax1.set_xlabel("J-index of the main phase (no unit)")
    ax1.set_ylabel("maximum AVs (%)")
    ax1.set_title("fabric strength and anisotropy", fontsize=9)
    ax1.margins(0.15)

    delay = ok["splitting.along_z.delay_s_per_100km"].to_numpy(float) if len(ok) else np.array([])
    ax2.bar(range(len(ok)), delay, color=colours, alpha=0.8, edgecolor="black", lw=0.5)
    for k, row in ok.iterrows():
        ax2.plot([k, k], [_number(row, "uncertainty.delay_s_per_100km.low", delay[k]),
                          _number(row, "uncertainty.delay_s_per_100km.high", delay[k])], color="black", lw=1.5)
    ax2.set_xticks(range(len(ok)))
    ax2.set_xticklabels(numbers, fontsize=8)
    ax2.set_xlabel("sample (number in the key)")
    ax2.set_ylabel("delay along Z (s per 100 km)")
    ax2.set_title("splitting normal to the foliation", fontsize=9)

    pole_names, first_poles = shape_triangle(ax3, ok, colours)
    _key(key, ok, failed, colours, pole_names)
    fig.suptitle(f"Suite of {len(table)} samples: {len(ok)} processed"
                 + (f", {len(failed)} failed (see the key)" if len(failed) else "")
                 + "; lines: 95 % bootstrap intervals", fontsize=10)
    fig.canvas.draw()                        # the layout is final from here: labels go in display space
    fig.set_layout_engine("none")
    place_labels(ax1, np.c_[j, avs], numbers, marker_pt=4.0)
    place_labels(ax3, first_poles, numbers, marker_pt=4.0)
    return fig


def _key(ax, ok, failed, colours, pole_names: list[str]) -> None:
    """The key: number, colour and name of each sample, the markers of the poles, then the failures."""
    handles = [plt.Line2D([], [], ls="none", marker="o", ms=6, color=c, mec="black", mew=0.5) for c in colours]
    labels = [f"{k + 1}  {name}" for k, name in enumerate(ok["sample"])]
    handles += [plt.Line2D([], [], ls="none", marker=_POLE_MARKERS[k % len(_POLE_MARKERS)], mfc="none", mec="0.2")
                for k in range(len(pole_names))]
    labels += [f"pole: {name}" for name in pole_names]
    for _, row in failed.iterrows():
        handles.append(plt.Line2D([], [], ls="none", marker="x", color="darkred"))
        labels.append(textwrap.shorten(f"{row['sample']} failed: {row['status']}", 90).replace(": ", ":\n", 1))
    ax.legend(handles, labels, loc="upper left", fontsize=7, frameon=False, title="samples", title_fontsize=8,
              alignment="left", borderaxespad=0.0)


_CORNERS = {"P": (0.5, np.sqrt(3) / 2), "G": (0.0, 0.0), "R": (1.0, 0.0)}
_POLE_MARKERS = ("o", "s", "^", "D")


def shape_triangle(ax, ok, colours) -> tuple[list[str], np.ndarray]:
    """Plot P, G, R of each pole of each sample's main phase as a point of the triangle (P top, G and R below).

    A sample's poles are joined by a thin line; its number goes beside its first pole.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        Panel to draw on.
    ok : pandas.DataFrame
        Rows of the suite table of samples that succeeded.
    colours : list
        Colour of each sample (rows of ``ok``).

    Returns
    -------
    pole_names : list of str
        "mineral pole" names drawn with each marker, in marker order.
    first_poles : numpy.ndarray, shape (N, 2)
        Where each sample's first pole lies (NaN without poles), for its number label.

    References
    ----------
    Vollmer, F. W. (1990). An application of eigenvalue methods to structural domain analysis.
    Geol. Soc. Am. Bull. 102, 786-791.
    """
    corner = np.array([_CORNERS[k] for k in "PGR"])
    ax.plot(*np.vstack([corner, corner[:1]]).T, color="0.3", lw=1)
    for name, (x, y) in _CORNERS.items():
        ax.annotate({"P": "P (point)", "G": "G (girdle)", "R": "R (random)"}[name], (x, y), fontsize=8,
                    ha="center", va="bottom" if name == "P" else "top",
                    xytext=(0, 4 if name == "P" else -4), textcoords="offset points")
    poles_seen: dict[int, list[str]] = {}
    first = np.full((len(ok), 2), np.nan)
    for i, row in ok.iterrows():
        main = _main_phase(row)
        prefix = f"phases.{main}.vollmer."
        poles = list(dict.fromkeys(c[len(prefix):].rsplit(".", 1)[0] for c in row.index if c.startswith(prefix)))
        points = []
        for k, pole in enumerate(poles):
            pgr = np.array([_number(row, f"{prefix}{pole}.{x}") for x in "PGR"])
            if not np.all(np.isfinite(pgr)):
                continue
            x, y = pgr / pgr.sum() @ corner
            points.append((x, y))
            if f"{main} {pole}" not in poles_seen.setdefault(k, []):
                poles_seen[k].append(f"{main} {pole}")
            ax.plot(x, y, _POLE_MARKERS[k % len(_POLE_MARKERS)], color=colours[i], ms=6, mfc="none", mew=1.3)
        if points:
            ax.plot(*np.array(points).T, color=colours[i], lw=0.6, alpha=0.7)
            first[i] = points[0]
    ax.set_xlim(-0.08, 1.08)
    ax.set_ylim(-0.12, 0.98)
    ax.set_aspect("equal")
    ax.axis("off")
    ax.set_title("fabric shape of each pole\n(eigenvalues, Vollmer 1990)", fontsize=9)
    return [", ".join(poles_seen[k]) for k in sorted(poles_seen)], first
