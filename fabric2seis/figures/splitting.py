"""Predicted splitting against back-azimuth for one layer, and what every splitting figure shares:
a sheet whose legend has a row of its own, and fast-azimuth lines broken where they wrap."""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from fabric2seis.figures.projection import plt, save

#: colour of predicted curves (Okabe & Ito 2008 blue); measurements are black
PREDICTED_COLOUR = "#0072B2"


def broken_at_wraps(baz: np.ndarray, fast: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Insert gaps where a fast azimuth jumps by more than 45 degrees (wrapping from 180 to 0, or
    turning by 90 degrees near a null), so that its line does not cross the panel.

    Parameters
    ----------
    baz, fast : numpy.ndarray, shape (B,)
        Back-azimuths and fast azimuths, degrees.

    Returns
    -------
    tuple of numpy.ndarray
        The same with NaN inserted at each jump.
    """
    jumps = np.flatnonzero(np.abs(np.diff(fast)) > 45.0) + 1
    return np.insert(np.asarray(baz, float), jumps, np.nan), np.insert(np.asarray(fast, float), jumps, np.nan)


def sheet(width_in: float, plot_heights_in: list[float], legend_rows: int, n_cols: int = 1,
          width_ratios: list[float] | None = None):
    """Make a constrained figure of rows of plots, then a row without axes that holds the legend.

    Legends, titles and notes each get their own place, so no text lies on the data or on another
    text.

    Parameters
    ----------
    width_in : float
        Width of the figure, inches.
    plot_heights_in : list of float
        Height of each row of plots, inches.
    legend_rows : int
        Lines of the legend.
    n_cols : int
        Columns of plots.
    width_ratios : list of float, optional
        Relative widths of the columns.

    Returns
    -------
    fig : matplotlib.figure.Figure
        The figure.
    gs : matplotlib.gridspec.GridSpec
        Its grid: rows of plots, then the legend row.
    key : matplotlib.axes.Axes
        The legend row's axes, without axis lines.
    """
    legend_in = 0.2 * legend_rows + 0.1
    fig = plt.figure(figsize=(width_in, sum(plot_heights_in) + legend_in + 1.2), layout="constrained")
    gs = fig.add_gridspec(len(plot_heights_in) + 1, n_cols, height_ratios=[*plot_heights_in, legend_in],
                          width_ratios=width_ratios)
    key = fig.add_subplot(gs[-1, :])
    key.axis("off")
    return fig, gs, key


def legend_in(key, handles, labels, n_cols: int) -> None:
    """Put a legend in the middle of the legend row of a ``sheet``.

    Parameters
    ----------
    key : matplotlib.axes.Axes
        The legend row.
    handles, labels : list
        What the legend shows.
    n_cols : int
        Columns of the legend.
    """
    key.legend(handles, labels, loc="center", ncol=n_cols, fontsize=7, frameon=False)


def splitting_figure(stem, sample_name: str, sweep: dict, summary: dict) -> list[str]:
    """Draw the splitting against back-azimuth (:func:`splitting_sheet`) and write it as PNG and PDF.

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    sample_name, sweep, summary
        As :func:`splitting_sheet` takes them.

    Returns
    -------
    list of str
        The files written.
    """
    return save(splitting_sheet(sample_name, sweep, summary), stem)


def splitting_sheet(sample_name: str, sweep: dict, summary: dict) -> Figure:
    """Fast azimuth and delay against back-azimuth as ``waves.splitting.field_summary`` computed them.

    ``sweep``: ``back_azimuth_deg``, ``fast_azimuth_deg``, ``delay_s`` (arrays (B,)); ``summary``:
    the vertical-incidence values and placement drawn as reference lines and title. Nothing is
    computed here.

    Parameters
    ----------
    sample_name : str
        Name shown in the title.
    sweep : dict
        Back-azimuth (degrees), fast azimuth (degrees) and delay (s), arrays (B,).
    summary : dict
        The ``field`` summary of the layer.

    Returns
    -------
    matplotlib.figure.Figure
        The figure.
    """
    fig, gs, key = sheet(6.0, [2.1, 1.9], 1)
    ax1 = fig.add_subplot(gs[0])
    ax2 = fig.add_subplot(gs[1], sharex=ax1)
    baz = np.asarray(sweep["back_azimuth_deg"], float)
    ax1.plot(*broken_at_wraps(baz, np.asarray(sweep["fast_azimuth_deg"], float)), "-", lw=1.6,
             color=PREDICTED_COLOUR, label=f"rays at {summary['sweep_incidence_deg']:g}° incidence")
    ax1.axhline(summary["fast_azimuth_deg"], color="0.35", lw=1.0, ls="--", label="vertical ray")
    ax1.set_ylim(0, 180)
    ax1.set_yticks([0, 45, 90, 135, 180])
    ax1.set_ylabel("fast azimuth (° from N)")
    ax1.tick_params(labelbottom=False)
    ax2.plot(baz, sweep["delay_s"], "-", lw=1.6, color=PREDICTED_COLOUR)
    ax2.axhline(summary["delay_s"], color="0.35", lw=1.0, ls="--")
    ax2.set_ylim(0, max(0.1, float(np.max(sweep["delay_s"])) * 1.15))
    ax2.set_ylabel("delay time (s)")
    ax2.set_xlabel("back-azimuth (° from N)")
    ax2.set_xticks(np.arange(0, 361, 45))
    ax2.set_xlim(0, 360)
    handles, labels = ax1.get_legend_handles_labels()
    legend_in(key, handles, labels, n_cols=2)
    fig.suptitle(f"{sample_name}: predicted splitting of one layer {summary['layer_thickness_km']:g} km thick\n"
                 f"lineation trend {summary['lineation_trend_deg']:.0f}°, plunge "
                 f"{summary['lineation_plunge_deg']:.0f}°", fontsize=9)
    return fig
