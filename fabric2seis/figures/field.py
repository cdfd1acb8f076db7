"""Field comparison figures: data against predictions, the misfit surface, fast directions in map view.

Every figure of a fit says in its title whether the fit is poor or lies at the edge of the searched
thickness range, and gives the reasons in a box at its foot (``poor_fit_reasons`` of
``waves.field.fit_station``). The figures draw what ``waves.field.fit_field`` computed (a
``StationFit``: measurements, model, coarse grid, predicted curve) and solve nothing themselves;
the only numbers they derive are the contour levels of the misfit surface.

Grey-scale reading: measurements are filled (black dots, a grey rose), predictions are lines or open
markers, and each sample keeps one marker shape and ring through a figure, so nothing depends on
colour alone.
"""

from __future__ import annotations

import textwrap

import numpy as np
from matplotlib.figure import Figure
from scipy.stats import chi2

from fabric2seis.figures.projection import plt, save
from fabric2seis.figures.splitting import PREDICTED_COLOUR, broken_at_wraps, legend_in, sheet
from fabric2seis.waves.field import DELTA_CHI_SQUARE_68, DELTA_CHI_SQUARE_95, POOR_FIT_REDUCED_CHI_SQUARE

#: colours of the samples (Okabe & Ito 2008, a palette readable with colour-blindness)
SAMPLE_COLOURS = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9")


def joint_levels(n_parameters: int) -> tuple[float, float]:
    """Chi-square differences bounding the joint 68 % and 95 % regions of ``n_parameters``.

    The probabilities are those of the fit's one-parameter intervals (a difference of
    ``DELTA_CHI_SQUARE_68`` = 1 and ``DELTA_CHI_SQUARE_95`` = 4, i.e. 68.3 % and 95.4 %), so that the
    contours of a surface of one parameter fall on the fit's own intervals. For two parameters:
    2.30 and 6.18.

    Parameters
    ----------
    n_parameters : int
        Number of parameters varied together on the surface (1 or more).

    Returns
    -------
    tuple of float
        The two chi-square differences.

    References
    ----------
    Press, W. H. et al. (2007). Numerical Recipes, 3rd ed., section 15.6 (confidence regions of
    several parameters from delta chi-square, Gaussian errors).
    """
    if int(n_parameters) < 1:
        raise ValueError(f"n_parameters must be at least 1, got {n_parameters!r}")
    p = chi2.cdf([DELTA_CHI_SQUARE_68, DELTA_CHI_SQUARE_95], 1)
    low, high = chi2.ppf(p, int(n_parameters))
    return float(low), float(high)


def fit_flags(model: dict) -> str:
    """Short words for the title: ``EDGE FIT`` (best thickness at a limit of the searched range) and
    ``POOR FIT`` (reduced chi-square above ``POOR_FIT_REDUCED_CHI_SQUARE``) with their numbers, or ``""``.

    Parameters
    ----------
    model : dict
        The best model of a station fit.

    Returns
    -------
    str
        The flags, joined with ``; ``.
    """
    flags = []
    if model.get("edge_of_range"):
        low, high = model.get("searched_thickness_km", (None, None))
        where = f" ({low:.0f}-{high:.0f} km searched)" if low is not None else ""
        flags.append(f"EDGE FIT: best thickness at a limit of the range{where}")
    reduced = model.get("reduced_chi_square")
    if reduced is not None and reduced > POOR_FIT_REDUCED_CHI_SQUARE:
        flags.append(f"POOR FIT: reduced chi-square {reduced:.2f}")
    return "; ".join(flags)


def _best_text(model: dict) -> str:
    """The best model with its 68 % intervals, one line, whole km and degrees."""
    thick, az = model.get("thickness_interval_km"), model.get("lineation_azimuth_interval_deg")
    t = f"{model['thickness_km']:.0f} km" + (f" ({thick[0]:.0f}-{thick[1]:.0f})" if thick else "")
    a = f"lineation azimuth {model['lineation_azimuth_deg']:.0f}°" + (f" ({az[0]:.0f}-{az[1]:.0f})" if az else "")
    return f"best layer {t}, {a}, foliation {model['foliation']} (68 % intervals)"


def _verdict_text(model: dict) -> str:
    """Reduced chi-square and the verdicts on the attitude and the sense, one line."""
    reduced = model.get("reduced_chi_square")
    parts = [f"reduced chi-square {reduced:.2f}" if reduced is not None else "no degrees of freedom left"]
    if model.get("foliation_verdict"):
        parts.append(f"foliation {model['foliation_verdict']} (Δχ² {model['foliation_chi_square_difference']:.1f})")
    if model.get("sense_verdict"):
        parts.append(f"sense {model['sense_verdict']} (Δχ² {model['sense_chi_square_difference']:.1f})")
    return "; ".join(parts)


def _title(first: str, model: dict, *lines: str) -> str:
    flags = fit_flags(model)
    return "\n".join([first, *lines] + ([flags] if flags else []))


def poor_fit_note(fig, model: dict) -> None:
    """Name at the foot of the figure, in a red box, why the fit is poor (nothing for a good fit).

    The box is the figure's ``supxlabel``, so a constrained layout keeps room for it.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The figure.
    model : dict
        The best model of a station fit, with its verdict.
    """
    if model.get("poor_fit"):
        text = textwrap.fill("POOR FIT: " + "; ".join(model["poor_fit_reasons"]), 120)
        fig.supxlabel(text, fontsize=7, color="darkred",
                      bbox={"boxstyle": "round", "facecolor": "mistyrose", "edgecolor": "darkred"})


def data_and_predictions(stem, fit) -> list[str]:
    """Draw the measurements against the best model (:func:`data_and_predictions_sheet`) and write it
    as PNG and PDF.

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    fit : waves.field.StationFit
        As :func:`data_and_predictions_sheet` takes it.

    Returns
    -------
    list of str
        The files written.
    """
    return save(data_and_predictions_sheet(fit), stem)


def data_and_predictions_sheet(fit) -> Figure:
    """Measured fast azimuths and delays against back-azimuth, with the best model's predicted curve.

    Measurements are filled black circles with their errors; a null is drawn as two open diamonds
    at the fast azimuths it allows (along its back-azimuth and at right angles to it); the
    prediction is a line.

    Parameters
    ----------
    fit : waves.field.StationFit
        Measurements (degrees, s) and best model of one station.

    Returns
    -------
    matplotlib.figure.Figure
        The figure: the fast-azimuth and delay panels, and the legend row.
    """
    data, m = fit.measurements, fit.model
    ok = ~data["null"].to_numpy(bool)
    fig, gs, key = sheet(6.5, [2.3, 2.0], 1 if ok.all() else 2)
    ax1 = fig.add_subplot(gs[0])
    ax2 = fig.add_subplot(gs[1], sharex=ax1)
    baz = data["baz_deg"].to_numpy(float)
    ax1.errorbar(baz[ok], data["fast_azimuth_deg"].to_numpy(float)[ok] % 180,
                 yerr=data["fast_azimuth_err_deg"].to_numpy(float)[ok], fmt="o", ms=4, color="black", capsize=2,
                 label="measured, with its error")
    if (~ok).any():
        both = np.r_[baz[~ok] % 180.0, (baz[~ok] + 90.0) % 180.0]
        ax1.plot(np.r_[baz[~ok], baz[~ok]], both, "D", ms=5, mfc="white", mec="0.3",
                 label="null: fast axis along or across the back-azimuth")
        ax2.plot(baz[~ok], np.zeros((~ok).sum()), "D", ms=5, mfc="white", mec="0.3", clip_on=False)
    ax1.plot(*broken_at_wraps(fit.curve_back_azimuth_deg, fit.curve_fast_azimuth_deg), "-", lw=1.5,
             color=PREDICTED_COLOUR, label="predicted by the best layer, SKS incidence")
    ax1.set_ylim(0, 180)
    ax1.set_yticks(np.arange(0, 181, 45))
    ax1.set_ylabel("fast azimuth (° from N)")
    ax1.tick_params(labelbottom=False)
    ax2.errorbar(baz[ok], data["delay_s"].to_numpy(float)[ok], yerr=data["delay_err_s"].to_numpy(float)[ok], fmt="o",
                 ms=4, color="black", capsize=2)
    ax2.plot(fit.curve_back_azimuth_deg, fit.curve_delay_s, "-", lw=1.5, color=PREDICTED_COLOUR)
    ax2.set_ylim(0, None)
    ax2.set_ylabel("delay time (s)")
    ax2.set_xlabel("back-azimuth (° from N)")
    ax2.set_xticks(np.arange(0, 361, 45))
    ax2.set_xlim(0, 360)
    handles, labels = ax1.get_legend_handles_labels()
    legend_in(key, handles, labels, n_cols=2)
    fig.suptitle(_title(f"{fit.sample} at station {fit.station}: measured and predicted splitting", m,
                        _best_text(m), _verdict_text(m)), fontsize=8)
    poor_fit_note(fig, m)
    return fig


def _error_bars(model: dict) -> tuple[list | None, list | None]:
    """68 % intervals as error-bar lengths about the best thickness and lineation axis."""
    thick, az = model.get("thickness_interval_km"), model.get("lineation_azimuth_interval_deg")
    xerr = [[model["thickness_km"] - thick[0]], [thick[1] - model["thickness_km"]]] if thick else None
    axis = model["lineation_azimuth_deg"]
    yerr = [[(axis - az[0]) % 180.0], [(az[1] - axis) % 180.0]] if az else None
    return xerr, yerr


#: line styles of the 68 % and 95 % contours (told apart without colour)
CONTOUR_STYLES = ("-", "--")


def misfit_bands(level68: float, level95: float, largest: float) -> np.ndarray:
    """Edges of the colour bands of a misfit surface: 0, the two confidence levels, then doublings.

    Parameters
    ----------
    level68, level95 : float
        Chi-square differences of the 68 % and 95 % regions (``joint_levels``).
    largest : float
        The largest chi-square difference on the surface.

    Returns
    -------
    numpy.ndarray
        Increasing band edges, from 0 to the first doubling above ``largest`` (at most 12 edges).
    """
    doublings = level95 * 2.0 ** np.arange(1, 10)
    needed = int(np.searchsorted(doublings, largest)) + 1
    return np.r_[0.0, level68, level95, doublings[:max(2, needed)]]


def _around_best(grid: dict, above: np.ndarray, model: dict, level: float):
    """The coarse grid near the best fit: thickness window (km), trends as offsets kept continuous
    through north (deg, best +- 90), the misfit on them, and the trend window."""
    thick, trends = grid["thicknesses"], grid["azimuths"]
    best_t, best_trend = model["thickness_km"], model["lineation_trend_deg"]
    offset = (trends - best_trend + 180.0) % 360.0 - 180.0
    order = np.argsort(offset)
    keep = order[np.abs(offset[order]) <= 90.0]
    inside = above[keep] <= level
    step_t = np.ptp(thick) / max(len(thick) - 1, 1)
    step_a = 360.0 / len(trends)
    span = max(float(np.abs(offset[keep][inside.any(axis=1)]).max(initial=0.0)) * 1.5, 4 * step_a)
    low = min(float(thick[inside.any(axis=0)].min(initial=best_t)), best_t)
    high = max(float(thick[inside.any(axis=0)].max(initial=best_t)), best_t)
    pad = max(0.4 * (high - low), 3 * step_t)
    window_t = (max(thick.min(), low - pad), min(thick.max(), high + pad))
    return best_trend + offset[keep], above[keep], window_t, (best_trend - span, best_trend + span)


def _draw_surface(ax, x, y, above, bands, norm, levels):
    filled = ax.contourf(x, y, above, levels=bands, cmap="cividis_r", norm=norm, extend="max")
    ax.contour(x, y, above, levels=list(levels), colors="black", linestyles=CONTOUR_STYLES, linewidths=(1.6, 1.1))
    return filled


def misfit_surface(stem, fit) -> list[str]:
    """Draw the misfit of a station fit (:func:`misfit_sheet`) and write it as PNG and PDF.

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    fit : waves.field.StationFit
        As :func:`misfit_sheet` takes it.

    Returns
    -------
    list of str
        The files written.
    """
    return save(misfit_sheet(fit), stem)


def misfit_sheet(fit) -> Figure:
    """Chi-square above the best fit over the coarse grid of the best attitude: the whole searched
    range and a close-up of the best fit, banded at the joint 68 % and 95 % levels (contours),
    with the best fit marked with its one-parameter 68 % intervals.

    When only one parameter of thickness and trend was searched, the misfit is a curve over it,
    one panel, with the one-parameter levels.

    Parameters
    ----------
    fit : waves.field.StationFit
        Misfit grid and best model of one station.

    Returns
    -------
    matplotlib.figure.Figure
        The figure: the whole range and the close-up with their colour bar (or the curve), and the
        legend row.
    """
    from matplotlib.colors import BoundaryNorm
    from matplotlib.ticker import FuncFormatter

    grid, model = fit.grid, fit.model
    a = grid["attitudes"].index(model["foliation"])
    above = np.clip(grid["chi_square"][a] - grid["best_chi_square"], 0.0, None)
    surface = above.shape[0] > 1 and above.shape[1] > 1
    level68, level95 = joint_levels(2 if surface else 1)
    if surface:
        fig, gs, key = sheet(9.0, [3.6], 2, n_cols=2)
        whole, close = fig.add_subplot(gs[0, 0]), fig.add_subplot(gs[0, 1])
        bands = misfit_bands(level68, level95, float(above.max()))
        norm = BoundaryNorm(bands, 256, extend="max")
        filled = _draw_surface(whole, grid["thicknesses"], grid["azimuths"], above, bands, norm, (level68, level95))
        trends, near, window_t, window_a = _around_best(grid, above, model, 2 * level95)
        _draw_surface(close, grid["thicknesses"], trends, near, bands, norm, (level68, level95))
        whole.add_patch(plt.Rectangle((window_t[0], window_a[0] % 360.0), np.diff(window_t)[0], np.diff(window_a)[0],
                                      fill=False, ec="white", lw=1.0, ls="-"))
        for ax in (whole, close):          # unclipped on the whole range: a best fit at its edge shows whole
            ax.plot(model["thickness_km"], model["lineation_trend_deg"], "X", ms=10, mfc="black", mec="white",
                    clip_on=ax is close, zorder=4)
            for sense in (model.get("lineation_senses") or [])[1:]:
                ax.plot(sense["thickness_km"], sense["trend_deg"], "o", mfc="white", mec="black", ms=8,
                        clip_on=ax is close, zorder=4)
            ax.set_xlabel("layer thickness (km)")
        xerr, yerr = _error_bars(model)
        close.errorbar(model["thickness_km"], model["lineation_trend_deg"], xerr=xerr, yerr=yerr, fmt="none",
                       ecolor="black", capsize=3, lw=1)
        close.set_xlim(*window_t)
        close.set_ylim(*window_a)
        close.yaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v % 360.0:.0f}"))
        whole.set_ylim(0, 360)
        whole.set_yticks(np.arange(0, 361, 45))
        whole.set_ylabel("lineation trend (° from N)")
        whole.set_title("whole searched range (white box: close-up)", fontsize=8)
        close.set_title("close-up of the best fit", fontsize=8)
        bar = fig.colorbar(filled, ax=[whole, close], ticks=bands)
        bar.ax.set_yticklabels([f"{b:.2f}" if b < 10 else f"{b:.0f}" for b in bands], fontsize=7)
        bar.set_label("Δχ² above the best fit (no unit)", fontsize=8)
        proxies = [plt.Line2D([], [], color="black", ls=style) for style in CONTOUR_STYLES]
        proxies += [plt.Line2D([], [], ls="none", marker="X", ms=9, mfc="black", mec="white"),
                    plt.Line2D([], [], ls="none", marker="o", ms=7, mfc="white", mec="black")]
        labels = [f"joint 68 % region of thickness and trend (Δχ² {level68:.2f})",
                  f"joint 95 % region (Δχ² {level95:.2f})",
                  "best fit; bars: 68 % interval of each parameter alone (Δχ² 1)",
                  "best fit of the other sense of the lineation"
                  + (f" (Δχ² {model['sense_chi_square_difference']:.1f})"
                     if model.get("sense_chi_square_difference") is not None else "")]
        legend_in(key, proxies, labels, n_cols=2)
        what = "thickness and lineation trend"
    else:
        fig, gs, key = sheet(6.5, [3.4], 1)
        ax = fig.add_subplot(gs[0])
        along_thickness = above.shape[1] > 1
        ax.plot(grid["thicknesses"] if along_thickness else grid["azimuths"], above.ravel(), color="black",
                label="Δχ² above the best fit")
        for level, style, name in ((level68, CONTOUR_STYLES[0], "68"), (level95, CONTOUR_STYLES[1], "95")):
            ax.axhline(level, color="0.3", ls=style, lw=0.9, label=f"{name} % interval (Δχ² {level:.2f})")
        ax.set_xlabel("layer thickness (km)" if along_thickness else "lineation trend (° from N)")
        ax.set_ylabel("Δχ² above the best fit (no unit)")
        ax.set_ylim(0, min(float(above.max()) * 1.05 + 1e-9, 8 * level95) if above.max() > 3 * level95
                    else 3 * level95)
        handles, labels = ax.get_legend_handles_labels()
        legend_in(key, handles, labels, n_cols=3)
        what = "thickness" if along_thickness else "lineation trend"
    fig.suptitle(_title(f"{fit.sample} at station {fit.station}: chi-square misfit over {what}, "
                        f"foliation {model['foliation']}", model,
                        f"best {model['thickness_km']:.0f} km, lineation trend {model['lineation_trend_deg']:.0f}°; "
                        + _verdict_text(model)), fontsize=8)
    poor_fit_note(fig, model)
    return fig


def _rose_outline(angles_deg: np.ndarray, edges_deg: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Closed step outline (radians, counts) of an axial rose: each bin an arc at its count."""
    counts, _ = np.histogram(np.r_[angles_deg % 180.0, angles_deg % 180.0 + 180.0], bins=edges_deg)
    theta = np.radians(np.repeat(edges_deg, 2)[1:-1])
    radius = np.repeat(counts, 2)
    return np.r_[theta, theta[:1]], np.r_[radius, radius[:1]]


#: width of the bins of the map-view roses (degrees)
ROSE_BIN_DEG = 10.0
#: markers of the samples' predictions on their rings (open, told apart by shape)
RING_MARKERS = ("o", "s", "^", "D", "v", "P", "h", "<")


def fast_direction_rose(stem, predictions) -> list[str]:
    """Draw the fast directions in map view (:func:`fast_direction_sheet`) and write them as PNG and PDF.

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    predictions : pandas.DataFrame
        As :func:`fast_direction_sheet` takes it.

    Returns
    -------
    list of str
        The files written.
    """
    return save(fast_direction_sheet(predictions), stem)


def fast_direction_sheet(predictions) -> Figure:
    """Fast directions in map view, one panel per station: the measured ones as a filled grey
    rose, the predictions of each sample's best layer as open markers on a ring of their own.

    Directions are axial, so each is drawn at its azimuth and the opposite one. Each sample keeps
    its ring (the first sample innermost), marker shape and colour on every panel. Nulls (no fast
    direction) are counted in the panel's title, not drawn.

    Parameters
    ----------
    predictions : pandas.DataFrame
        The predictions table: sample, station, null, measured and predicted fast azimuths (degrees).

    Returns
    -------
    matplotlib.figure.Figure
        The figure: a polar panel per station and the legend row.
    """
    stations = sorted(set(predictions["station"]))
    samples = list(dict.fromkeys(predictions["sample"]))
    n_cols = min(3, len(stations))
    n_rows = -(-len(stations) // n_cols)
    fig, gs, key = sheet(3.4 * n_cols, [3.0] * n_rows, -(-(len(samples) + 1) // 2), n_cols=n_cols)
    edges = np.arange(0.0, 360.0 + ROSE_BIN_DEG / 2, ROSE_BIN_DEG)
    panels = [fig.add_subplot(gs[k // n_cols, k % n_cols], projection="polar") for k in range(len(stations))]
    for ax, station in zip(panels, stations):
        rows = predictions[predictions["station"] == station]
        first = rows[rows["sample"] == samples[0]]
        nulls = first["null"].to_numpy(bool)
        measured = first["observed_fast_azimuth_deg"].to_numpy(float)[~nulls]
        theta, radius = _rose_outline(measured, edges)
        top = max(float(radius.max()), 1.0)
        ax.fill(theta, radius, facecolor="0.7", edgecolor="black", lw=0.6, label="measured (rose, radius: count)")
        for j, sample in enumerate(samples):
            own = rows[(rows["sample"] == sample) & ~rows["null"].to_numpy(bool)]
            azimuth = own["predicted_fast_azimuth_deg"].to_numpy(float) % 180.0
            ring = top * (1.15 + 0.13 * j)
            ax.plot(np.linspace(0, 2 * np.pi, 181), np.full(181, ring), lw=0.5, ls=":", color="0.6")
            ax.plot(np.radians(np.r_[azimuth, azimuth + 180.0]), np.full(2 * len(azimuth), ring), ls="none",
                    marker=RING_MARKERS[j % len(RING_MARKERS)], ms=5, mfc="white", mew=1.2,
                    mec=SAMPLE_COLOURS[j % len(SAMPLE_COLOURS)], label=f"predicted by {sample} (ring {j + 1})")
        ax.set_ylim(0, top * (1.22 + 0.13 * (len(samples) - 1)))
        step = max(1.0, float(np.ceil(top / 3.0)))
        ax.set_rticks(np.arange(step, top + 0.5, step))
        ax.set_theta_zero_location("N")
        ax.set_theta_direction(-1)
        ax.set_thetagrids(np.arange(0, 360, 45), ["N", "", "E", "", "S", "", "W", ""], fontsize=8)
        ax.tick_params(axis="y", labelsize=6)
        ax.set_rlabel_position(67.5)
        ax.grid(lw=0.4, color="0.8")
        n_null = int(nulls.sum())
        ax.set_title(f"station {station}: {len(measured)} measured"
                     + (f", {n_null} null{'s' * (n_null > 1)}" if n_null else ""), fontsize=8)
    handles, labels = panels[0].get_legend_handles_labels()
    legend_in(key, handles, labels, n_cols=2)
    fig.suptitle("Fast polarisation azimuths in map view (north up, clockwise; each axis drawn both ways)\n"
                 f"measured: number per {ROSE_BIN_DEG:.0f}° bin; predicted by each sample's best layer: one marker "
                 "per measurement on the sample's ring", fontsize=8)
    return fig
