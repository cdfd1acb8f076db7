"""Suite comparison: fabric strength against shear-wave anisotropy, delay per 100 km, and the
fabric shape of every sample's main phase in the point-girdle-random triangle (Vollmer 1990)."""

from __future__ import annotations

import numpy as np

from fabric2seis.figures.projection import plt, save


def suite_figure(stem, table) -> list[str]:
    """Draw the suite comparison: fabric strength against AVs, delay per 100 km, and the P-G-R triangle.

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    table : pandas.DataFrame
        The suite table (``workflow.suite.suite_table``); samples whose status is not ``ok`` are
        left out.

    Returns
    -------
    list of str
        The files written.
    """
    ok = table[table["status"] == "ok"].copy()
    fig, (ax1, ax2, ax3) = plt.subplots(1, 3, figsize=(14, 4.4), gridspec_kw={"width_ratios": [1, 1, 0.9]})
    colours = {}
    for _, row in ok.iterrows():
        main = row.get("uncertainty.main_phase")
        j = row.get(f"phases.{main}.J") if isinstance(main, str) else np.nan
        avs = row.get("seismic.avs_max_pct", np.nan)
        # intervals drawn as lines, not symmetric error bars: bootstrap intervals may be skewed
        line = ax1.plot(j, avs, "o", ms=5)[0]
        colours[row["sample"]] = line.get_color()
        ax1.plot([row.get("uncertainty.J.low", j), row.get("uncertainty.J.high", j)], [avs, avs],
                 color=line.get_color(), lw=1)
        ax1.plot([j, j], [row.get("uncertainty.avs_max_pct.low", avs), row.get("uncertainty.avs_max_pct.high", avs)],
                 color=line.get_color(), lw=1)
        ax1.annotate(row["sample"], (j, avs), fontsize=7, xytext=(4, 4), textcoords="offset points")
    ax1.set_xlabel("J-index of the main phase")
    ax1.set_ylabel("maximum AVs (%)")
    names = list(ok["sample"])
    delay = ok["splitting.along_z.delay_s_per_100km"].to_numpy(dtype=float) if len(ok) else np.array([])
    lo = ok.get("uncertainty.delay_s_per_100km.low", delay)
    hi = ok.get("uncertainty.delay_s_per_100km.high", delay)
    ax2.bar(range(len(names)), delay, color="tab:blue", alpha=0.7)
    for k, (a, b) in enumerate(zip(np.asarray(lo, float), np.asarray(hi, float))):
        ax2.plot([k, k], [a, b], color="black", lw=1.5)
    ax2.set_xticks(range(len(names)))
    ax2.set_xticklabels(names, rotation=30, ha="right", fontsize=7)
    ax2.set_ylabel("delay along Z (s per 100 km)")
    shape_triangle(ax3, ok, colours)
    failed = table[table["status"] != "ok"]["sample"].tolist()
    fig.suptitle(f"Suite of {len(table)} samples ({len(ok)} processed"
                 + (f"; failed: {', '.join(failed)}" if failed else "") + "); lines: 95 % bootstrap intervals",
                 fontsize=9)
    fig.tight_layout()
    return save(fig, stem)


_CORNERS = {"P": (0.5, np.sqrt(3) / 2), "G": (0.0, 0.0), "R": (1.0, 0.0)}
_POLE_MARKERS = ("o", "s", "^", "D")


def shape_triangle(ax, ok, colours) -> None:
    """Plot P, G, R of each pole of each sample's main phase as a point of the triangle (P top, G and R below).

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        Panel to draw on.
    ok : pandas.DataFrame
        Rows of the suite table of samples that succeeded.
    colours : dict
        Colour of each sample.

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
    for _, row in ok.iterrows():
        main = row.get("uncertainty.main_phase")
        if not isinstance(main, str):
            main = next((c.split(".")[1] for c in row.index
                         if c.startswith("phases.") and c.endswith(".fraction")), None)
        prefix = f"phases.{main}.vollmer."
        poles = list(dict.fromkeys(c[len(prefix):].rsplit(".", 1)[0] for c in row.index if c.startswith(prefix)))
        for k, pole in enumerate(poles):
            pgr = np.array([row.get(f"{prefix}{pole}.{x}", np.nan) for x in "PGR"], dtype=float)
            if not np.all(np.isfinite(pgr)):
                continue
            x, y = pgr / pgr.sum() @ corner
            marker = _POLE_MARKERS[k % len(_POLE_MARKERS)]
            named = f"{main} {pole}"
            if named not in poles_seen.setdefault(k, []):
                poles_seen[k].append(named)
            ax.plot(x, y, marker, color=colours.get(row["sample"], "0.4"), ms=6, mfc="none", mew=1.3)
            if k == 0:
                ax.annotate(row["sample"], (x, y), fontsize=6, xytext=(4, -6), textcoords="offset points")
    for k in sorted(poles_seen):
        ax.plot([], [], _POLE_MARKERS[k % len(_POLE_MARKERS)], color="0.3", mfc="none", label=", ".join(poles_seen[k]))
    if poles_seen:
        ax.legend(fontsize=6, loc="upper left", frameon=False, title="main phase, pole", title_fontsize=7)
    ax.set_xlim(-0.08, 1.08)
    ax.set_ylim(-0.12, 0.98)
    ax.set_aspect("equal")
    ax.axis("off")
    ax.set_title("fabric shape, eigenvalues of each pole (Vollmer 1990)", fontsize=9)
