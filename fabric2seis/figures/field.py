"""Field comparison figures: data against predictions, the misfit surface, predicted fast directions.

Every figure of a fit carries its verdicts (foliation, sense of the lineation) and, in red, the
reasons a fit is poor (``poor_fit_reasons`` of ``waves.field.fit_station``). The figures draw
what ``waves.field.fit_field`` computed (a ``StationFit``: measurements, model, coarse grid,
predicted curve) and solve nothing themselves.
"""

from __future__ import annotations

import numpy as np

from fabric2seis.figures.projection import plt, save


def _interval_text(model: dict) -> str:
    """One line of the best model with its 68 % intervals."""
    thick, az = model.get("thickness_interval_km"), model.get("lineation_azimuth_interval_deg")
    t = f"{model['thickness_km']:.0f} km" + (f" ({thick[0]:.0f}-{thick[1]:.0f})" if thick else "")
    a = f"lineation azimuth {model['lineation_azimuth_deg']:.0f} deg" + (f" ({az[0]:.0f} to {az[1]:.0f})" if az else "")
    return f"{t}, {a}, foliation {model['foliation']}; 68 % intervals in brackets"


def _verdict_text(model: dict) -> str:
    parts = [f"reduced chi-square {model['reduced_chi_square']:.2f}" if model.get("reduced_chi_square") is not None
             else "no degrees of freedom left"]
    if model.get("foliation_verdict"):
        parts.append(f"foliation {model['foliation_verdict']} (chi-square difference "
                     f"{model['foliation_chi_square_difference']:.1f})")
    if model.get("sense_verdict"):
        parts.append(f"sense of lineation {model['sense_verdict']} "
                     f"(difference {model['sense_chi_square_difference']:.1f})")
    return "; ".join(parts)


def poor_fit_note(fig, model: dict) -> None:
    """Add a red box at the foot of the figure naming why the fit is poor (nothing for a good fit).

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The figure.
    model : dict
        The best model of a station fit, with its verdict.
    """
    if model.get("poor_fit"):
        fig.text(0.5, 0.005, "POOR FIT: " + "; ".join(model["poor_fit_reasons"]), ha="center", va="bottom",
                 fontsize=7, color="darkred", wrap=True,
                 bbox={"boxstyle": "round", "facecolor": "mistyrose", "edgecolor": "darkred"})


def data_and_predictions(stem, fit) -> list[str]:
    """Draw measured fast azimuths and delays against back-azimuth, with the best model's predicted curve.

    ``fit`` is a ``waves.field.StationFit``; returns the files written (``stem`` .png and .pdf).

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    fit : waves.field.StationFit
        Measurements (degrees, s) and best model of one station.

    Returns
    -------
    list of str
        The files written.
    """
    sample, station, data, m = fit.sample, fit.station, fit.measurements, fit.model
    fig, (ax1, ax2) = plt.subplots(2, 1, figsize=(6.5, 5.6), sharex=True)
    ok = ~data["null"].to_numpy(bool)
    ax1.errorbar(data["baz_deg"][ok], data["fast_azimuth_deg"][ok] % 180, yerr=data["fast_azimuth_err_deg"][ok],
                 fmt="o", ms=4, color="black", capsize=2, label="measured")
    if (~ok).any():
        ax1.plot(data["baz_deg"][~ok], np.full((~ok).sum(), 5.0), "x", color="tab:red", label="null (back-azimuth)")
    ax1.plot(fit.curve_back_azimuth_deg, fit.curve_fast_azimuth_deg, ".", ms=2, color="tab:blue", label="predicted")
    ax1.set_ylim(0, 180)
    ax1.set_ylabel("fast azimuth (deg from N)")
    ax1.legend(fontsize=7)
    ax2.errorbar(data["baz_deg"][ok], data["delay_s"][ok], yerr=data["delay_err_s"][ok], fmt="o", ms=4,
                 color="black", capsize=2)
    ax2.plot(fit.curve_back_azimuth_deg, fit.curve_delay_s, ".", ms=2, color="tab:blue")
    ax2.set_ylabel("delay time (s)")
    ax2.set_xlabel("back-azimuth (deg)")
    ax2.set_xticks(np.arange(0, 361, 45))
    fig.suptitle(f"{sample} at station {station}: best layer {_interval_text(m)}\n{_verdict_text(m)}", fontsize=8)
    fig.tight_layout(rect=(0, 0.06 if m.get("poor_fit") else 0, 1, 1))
    poor_fit_note(fig, m)
    return save(fig, stem)


def _error_bars(model: dict) -> tuple[list | None, list | None]:
    """68 % intervals as error-bar lengths about the best thickness and lineation axis."""
    thick, az = model.get("thickness_interval_km"), model.get("lineation_azimuth_interval_deg")
    xerr = [[model["thickness_km"] - thick[0]], [thick[1] - model["thickness_km"]]] if thick else None
    axis = model["lineation_azimuth_deg"]
    yerr = [[(axis - az[0]) % 180.0], [(az[1] - axis) % 180.0]] if az else None
    return xerr, yerr


def misfit_surface(stem, fit) -> list[str]:
    """Chi-square above the best fit over the coarse grid of the best attitude (log colour scale), the
    best fit of each sense of the lineation and the 68 % intervals as error bars.

    ``fit`` is a ``waves.field.StationFit``; returns the files written (``stem`` .png and .pdf).

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    fit : waves.field.StationFit
        Misfit grid and best model of one station.

    Returns
    -------
    list of str
        The files written.
    """
    sample, station, grid, model = fit.sample, fit.station, fit.grid, fit.model
    a = grid["attitudes"].index(model["foliation"])
    above = np.clip(grid["chi_square"][a] - grid["best_chi_square"], 0.0, None)
    fig, ax = plt.subplots(figsize=(6.5, 4.4))
    xerr, yerr = _error_bars(model)
    if above.shape[0] > 1 and above.shape[1] > 1:
        filled = ax.contourf(grid["thicknesses"], grid["azimuths"], np.log10(1.0 + above), levels=20, cmap="cividis")
        fig.colorbar(filled, ax=ax).set_label("log10(1 + chi-square above best), no unit")
        for sense in (model.get("lineation_senses") or [])[1:]:
            ax.plot(sense["thickness_km"], sense["trend_deg"], "*", mfc="none", mec="red", ms=10,
                    label=f"other sense: chi-square +{model['sense_chi_square_difference']:.1f}")
        ax.errorbar(model["thickness_km"], model["lineation_trend_deg"], xerr=xerr, yerr=yerr, fmt="*", color="red",
                    ms=10, capsize=3, label="best fit with its 68 % intervals")
        ax.set_xlabel("layer thickness (km)")
        ax.set_ylabel("lineation trend (deg from N)")
        ax.set_ylim(0, 360)
        ax.set_yticks(np.arange(0, 361, 45))
    else:
        along_thickness = above.shape[1] > 1
        ax.plot(grid["thicknesses"] if along_thickness else grid["azimuths"], above.ravel(), color="black")
        ax.axhline(1.0, color="tab:red", lw=0.8, label="chi-square 1 above the best fit (68 %)")
        ax.set_xlabel("layer thickness (km)" if along_thickness else "lineation trend (deg from N)")
        ax.set_ylabel("chi-square above the best fit")
    ax.legend(fontsize=7, loc="upper right")
    ax.set_title(f"{sample} at {station}: chi-square, foliation {model['foliation']}\n{_verdict_text(model)}",
                 fontsize=7)
    fig.tight_layout(rect=(0, 0.07 if model.get("poor_fit") else 0, 1, 1))
    poor_fit_note(fig, model)
    return save(fig, stem)


def fast_direction_rose(stem, predictions) -> list[str]:
    """Draw rose diagrams of measured and predicted fast azimuths, one per station (the predictions table).

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    predictions : pandas.DataFrame
        The predictions table: station, measured and predicted fast azimuths (degrees).

    Returns
    -------
    list of str
        The files written.
    """
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
