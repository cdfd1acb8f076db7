"""Predicted splitting against back-azimuth for one layer."""

from __future__ import annotations

import numpy as np

from fabric2seis.figures.projection import plt, save


def splitting_figure(stem, sample_name: str, sweep: dict, summary: dict) -> list[str]:
    """Fast azimuth and delay against back-azimuth as ``waves.splitting.field_summary`` computed them.

    ``sweep``: ``back_azimuth_deg``, ``fast_azimuth_deg``, ``delay_s`` (arrays (B,)); ``summary``:
    the vertical-incidence values and placement drawn as reference lines and title. Returns the
    files written (``stem`` .png and .pdf); nothing is computed here.

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    sample_name : str
        Name shown in the title.
    sweep : dict
        Back-azimuth (degrees), fast azimuth (degrees) and delay (s), arrays (B,).
    summary : dict
        The ``field`` summary of the layer.

    Returns
    -------
    list of str
        The files written.
    """
    fig, (ax1, ax2) = plt.subplots(2, 1, figsize=(6.0, 5.0), sharex=True)
    baz = sweep["back_azimuth_deg"]
    ax1.plot(baz, sweep["fast_azimuth_deg"], "o", ms=3, color="tab:blue")
    ax1.axhline(summary["fast_azimuth_deg"], color="0.5", lw=0.8, ls="--", label="vertical incidence")
    ax1.set_ylim(0, 180)
    ax1.set_yticks([0, 45, 90, 135, 180])
    ax1.set_ylabel("fast azimuth (deg from N)")
    ax1.legend(fontsize=7)
    ax2.plot(baz, sweep["delay_s"], "o", ms=3, color="tab:red")
    ax2.axhline(summary["delay_s"], color="0.5", lw=0.8, ls="--")
    ax2.set_ylim(0, max(0.1, float(np.max(sweep["delay_s"])) * 1.15))
    ax2.set_ylabel("delay time (s)")
    ax2.set_xlabel("back-azimuth (deg)")
    ax2.set_xticks(np.arange(0, 361, 45))
    fig.suptitle(f"{sample_name}: predicted splitting, one layer of {summary['layer_thickness_km']:g} km, "
                 f"incidence {summary['sweep_incidence_deg']:g} deg\nlineation trend "
                 f"{summary['lineation_trend_deg']:.0f}, plunge {summary['lineation_plunge_deg']:.0f} deg",
                 fontsize=9)
    fig.tight_layout()
    return save(fig, stem)
