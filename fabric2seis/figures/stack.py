"""Apparent splitting of a stack of layers against back-azimuth, drawn from a ``waves.stack.StackSweep``."""

from __future__ import annotations

import numpy as np

from fabric2seis.figures.projection import plt, save


def _broken_at_wraps(baz: np.ndarray, fast: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Insert gaps where the apparent fast azimuth jumps (wrapping from 180 to 0, or turning by 90
    degrees where the apparent delay passes half a period), so the line does not cross the panel."""
    jumps = np.flatnonzero(np.abs(np.diff(fast)) > 45.0) + 1
    return np.insert(baz.astype(float), jumps, np.nan), np.insert(fast.astype(float), jumps, np.nan)


def stack_figure(stem, sweep) -> list[str]:
    """Fast azimuth and delay against back-azimuth: analytic (line), waveform-measured (points),
    predicted nulls (vertical lines), measurements with their errors if given.

    ``sweep`` is a ``waves.stack.StackSweep``: the figure draws its fine analytic curve, table,
    nulls and measurements; returns the files written (``stem`` .png and .pdf).

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    sweep : waves.stack.StackSweep
        Apparent splitting (fast azimuth in degrees, delay in s) against back-azimuth (degrees).

    Returns
    -------
    list of str
        The files written.
    """
    stack, table, nulls, data = sweep.stack, sweep.table, sweep.nulls, sweep.measurements
    fig, (ax1, ax2) = plt.subplots(2, 1, figsize=(6.5, 5.4), sharex=True)
    fine, fine_fast, fine_delay = sweep.fine_back_azimuth_deg, sweep.fine_fast_azimuth_deg, sweep.fine_delay_s
    ax1.plot(*_broken_at_wraps(fine, fine_fast), color="tab:blue", lw=1.2,
             label=f"analytic, {stack['period_s']:g} s")
    ax2.plot(fine, fine_delay, color="tab:blue", lw=1.2)
    ax1.plot(table["back_azimuth_deg"], table["waveform_fast_azimuth_deg"], "o", ms=3.5, mfc="none",
             color="tab:orange", label="synthetic waveform, measured")
    ax2.plot(table["back_azimuth_deg"], table["waveform_delay_s"], "o", ms=3.5, mfc="none", color="tab:orange")
    if data is not None:
        for marker, (station, rows) in zip("s^Dvp<>h" * 8, data.groupby("station", sort=True)):
            ok = ~rows["null"].to_numpy(bool)
            ax1.errorbar(rows["baz_deg"][ok], rows["fast_azimuth_deg"][ok] % 180,
                         yerr=rows["fast_azimuth_err_deg"][ok], fmt=marker, ms=3.5, color="black", capsize=2,
                         label=f"measured at {station}")
            ax2.errorbar(rows["baz_deg"][ok], rows["delay_s"][ok], yerr=rows["delay_err_s"][ok], fmt=marker,
                         ms=3.5, color="black", capsize=2)
            if (~ok).any():
                ax1.plot(rows["baz_deg"][~ok], np.full((~ok).sum(), 5.0), "x", color="black",
                         label=f"null at {station}")
    for k, null in enumerate(nulls):
        for ax in (ax1, ax2):
            ax.axvline(null["back_azimuth_deg"], color="tab:red", lw=0.8, ls="--",
                       label="predicted null" if (k == 0 and ax is ax1) else None)
    ax1.set_ylim(0, 180)
    ax1.set_yticks([0, 45, 90, 135, 180])
    ax1.set_ylabel("apparent fast azimuth\n(deg from N)")
    top = np.nanmax(np.r_[fine_delay, table["waveform_delay_s"], 0.1])
    ax2.set_ylim(0, top * 1.15)
    ax2.set_ylabel("apparent delay time (s)")
    ax2.set_xlabel("back-azimuth = initial polarisation (deg)")
    ax2.set_xticks(np.arange(0, 361, 45))
    ax2.set_xlim(0, 360)
    names = ", ".join(layer["name"] for layer in stack["layers"])
    fig.suptitle(f"Apparent splitting of {len(stack['layers'])} layers (bottom to top: {names})\n"
                 f"incidence {stack['incidence_deg']:g} deg, dominant period {stack['period_s']:g} s",
                 fontsize=9)
    handles, labels = ax1.get_legend_handles_labels()
    fig.legend(handles, labels, loc="lower center", ncol=3, fontsize=7, frameon=False)
    fig.tight_layout(rect=(0, 0.07, 1, 1))
    return save(fig, stem)
