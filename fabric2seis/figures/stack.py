"""Apparent splitting of a stack of layers against back-azimuth, drawn from a ``waves.stack.StackSweep``."""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from fabric2seis.figures.projection import save
from fabric2seis.figures.splitting import PREDICTED_COLOUR, broken_at_wraps, legend_in, sheet


def stack_figure(stem, sweep) -> list[str]:
    """Draw the apparent splitting of a stack (:func:`stack_sheet`) and write it as PNG and PDF.

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    sweep : waves.stack.StackSweep
        As :func:`stack_sheet` takes it.

    Returns
    -------
    list of str
        The files written.
    """
    return save(stack_sheet(sweep), stem)


def stack_sheet(sweep) -> Figure:
    """Fast azimuth and delay against back-azimuth: analytic (line), waveform-measured (points),
    predicted nulls (vertical lines), measurements with their errors if given.

    ``sweep`` is a ``waves.stack.StackSweep``: the figure draws its fine analytic curve, table,
    nulls and measurements.

    Parameters
    ----------
    sweep : waves.stack.StackSweep
        Apparent splitting (fast azimuth in degrees, delay in s) against back-azimuth (degrees).

    Returns
    -------
    matplotlib.figure.Figure
        The figure: the fast-azimuth and delay panels, and the legend row.
    """
    stack, table, nulls, data = sweep.stack, sweep.table, sweep.nulls, sweep.measurements
    n_stations = 0 if data is None else data["station"].nunique()
    fig, gs, key = sheet(6.5, [2.3, 2.0], -(-(3 + 2 * n_stations) // 3))
    ax1 = fig.add_subplot(gs[0])
    ax2 = fig.add_subplot(gs[1], sharex=ax1)
    fine, fine_fast, fine_delay = sweep.fine_back_azimuth_deg, sweep.fine_fast_azimuth_deg, sweep.fine_delay_s
    ax1.plot(*broken_at_wraps(fine, fine_fast), color=PREDICTED_COLOUR, lw=1.4,
             label=f"analytic, period {stack['period_s']:g} s")
    ax2.plot(fine, fine_delay, color=PREDICTED_COLOUR, lw=1.4)
    ax1.plot(table["back_azimuth_deg"], table["waveform_fast_azimuth_deg"], "o", ms=4, mfc="white",
             color="#D55E00", mew=1.1, label="measured on a synthetic waveform")
    ax2.plot(table["back_azimuth_deg"], table["waveform_delay_s"], "o", ms=4, mfc="white", color="#D55E00", mew=1.1)
    if data is not None:
        for marker, (station, rows) in zip("s^Dvp<>h" * 8, data.groupby("station", sort=True)):
            ok = ~rows["null"].to_numpy(bool)
            ax1.errorbar(rows["baz_deg"][ok], rows["fast_azimuth_deg"][ok] % 180,
                         yerr=rows["fast_azimuth_err_deg"][ok], fmt=marker, ms=4, color="black", capsize=2,
                         label=f"measured at {station}")
            ax2.errorbar(rows["baz_deg"][ok], rows["delay_s"][ok], yerr=rows["delay_err_s"][ok], fmt=marker,
                         ms=4, color="black", capsize=2)
            if (~ok).any():
                ax1.plot(rows["baz_deg"][~ok], np.full((~ok).sum(), 5.0), "x", color="black",
                         label=f"null at {station} (drawn at 5°)")
    for k, null in enumerate(nulls):
        for ax in (ax1, ax2):
            ax.axvline(null["back_azimuth_deg"], color="0.3", lw=0.8, ls=(0, (4, 3)),
                       label="predicted null" if (k == 0 and ax is ax1) else None)
    ax1.set_ylim(0, 180)
    ax1.set_yticks([0, 45, 90, 135, 180])
    ax1.set_ylabel("apparent fast azimuth\n(° from N)")
    ax1.tick_params(labelbottom=False)
    top = np.nanmax(np.r_[fine_delay, table["waveform_delay_s"], 0.1])
    ax2.set_ylim(0, top * 1.15)
    ax2.set_ylabel("apparent delay time (s)")
    ax2.set_xlabel("back-azimuth = initial polarisation (° from N)")
    ax2.set_xticks(np.arange(0, 361, 45))
    ax2.set_xlim(0, 360)
    names = ", ".join(layer["name"] for layer in stack["layers"])
    fig.suptitle(f"Apparent splitting of {len(stack['layers'])} layers (bottom to top: {names})\n"
                 f"incidence {stack['incidence_deg']:g}°, dominant period {stack['period_s']:g} s",
                 fontsize=9)
    handles, labels = ax1.get_legend_handles_labels()
    legend_in(key, handles, labels, n_cols=3)
    return fig
