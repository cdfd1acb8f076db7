"""Field comparison figures: data against predictions, the misfit surface, predicted fast directions."""

from __future__ import annotations

import numpy as np

from fabric2seis.figures.projection import plt, save


def data_and_predictions(stem, sample: str, station: str, data, curve: dict) -> list[str]:
    fig, (ax1, ax2) = plt.subplots(2, 1, figsize=(6.5, 5.2), sharex=True)
    ok = ~data["null"].to_numpy(bool)
    ax1.errorbar(data["baz_deg"][ok], data["fast_azimuth_deg"][ok] % 180, yerr=data["fast_azimuth_err_deg"][ok],
                 fmt="o", ms=4, color="black", capsize=2, label="measured")
    if (~ok).any():
        ax1.plot(data["baz_deg"][~ok], np.full((~ok).sum(), 5.0), "x", color="tab:red", label="null (back-azimuth)")
    ax1.plot(curve["baz"], curve["fast"], ".", ms=2, color="tab:blue", label="predicted")
    ax1.set_ylim(0, 180)
    ax1.set_ylabel("fast azimuth (deg from N)")
    ax1.legend(fontsize=7)
    ax2.errorbar(data["baz_deg"][ok], data["delay_s"][ok], yerr=data["delay_err_s"][ok], fmt="o", ms=4,
                 color="black", capsize=2)
    ax2.plot(curve["baz"], curve["delay"], ".", ms=2, color="tab:blue")
    ax2.set_ylabel("delay time (s)")
    ax2.set_xlabel("back-azimuth (deg)")
    ax2.set_xticks(np.arange(0, 361, 45))
    m = curve["model"]
    fig.suptitle(f"{sample} at station {station}: best layer {m['thickness_km']:.0f} km, lineation azimuth "
                 f"{m['lineation_azimuth_deg']:.0f} deg, foliation {m['foliation']}, misfit {m['misfit']:.2f}",
                 fontsize=9)
    fig.tight_layout()
    return save(fig, stem)


def misfit_surface(stem, sample: str, station: str, grid: dict, model: dict) -> list[str]:
    a = grid["attitudes"].index(model["foliation"])
    surface = grid["misfit"][a]
    fig, ax = plt.subplots(figsize=(6.5, 4.0))
    if surface.shape[0] > 1 and surface.shape[1] > 1:
        filled = ax.contourf(grid["thicknesses"], grid["azimuths"], surface, levels=20, cmap="cividis")
        fig.colorbar(filled, ax=ax).set_label("misfit (mean squared normalised residual)")
    else:
        ax.plot(grid["thicknesses"] if surface.shape[1] > 1 else grid["azimuths"], surface.ravel())
    ax.plot(model["thickness_km"], model["lineation_azimuth_deg"], "r*", ms=10)
    ax.set_xlabel("layer thickness (km)")
    ax.set_ylabel("lineation azimuth (deg from N)")
    ax.set_title(f"{sample} at {station}: misfit, foliation {model['foliation']}", fontsize=9)
    fig.tight_layout()
    return save(fig, stem)


def fast_direction_rose(stem, predictions) -> list[str]:
    stations = sorted(set(predictions["station"]))
    fig, axes = plt.subplots(1, len(stations), subplot_kw={"projection": "polar"},
                             figsize=(3.0 * len(stations), 3.2), squeeze=False)
    for ax, station in zip(axes[0], stations):
        sel = predictions[predictions["station"] == station]
        for column, colour in (("observed_fast_azimuth_deg", "black"), ("predicted_fast_azimuth_deg", "tab:blue")):
            angles = np.radians(np.r_[sel[column], sel[column] + 180.0])
            ax.hist(angles, bins=36, range=(0, 2 * np.pi), color=colour, alpha=0.5)
        ax.set_theta_zero_location("N")
        ax.set_theta_direction(-1)
        ax.set_title(f"{station}\nblack measured, blue predicted", fontsize=8)
        ax.set_yticklabels([])
    fig.suptitle("Fast directions in map view (north up, clockwise)", fontsize=9)
    fig.tight_layout()
    return save(fig, stem)
