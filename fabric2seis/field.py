"""Comparison of predicted splitting with field measurements, and the fit of a layer to them.

For each sample (a results folder) and each station, a grid search over layer thickness, the
azimuth of the lineation (flow direction, horizontal) and the foliation attitude (horizontal, or
vertical and striking along the lineation) minimises the misfit

    misfit = mean over measurements of (fast azimuth residual / error)^2 + (delay residual / error)^2

with axial fast-azimuth residuals wrapped to +-90 degrees. A null measurement contributes only
the angle between the predicted fast azimuth and the back-azimuth (or its normal), which is zero
when the prediction is a null too. Errors default to 10 degrees and 0.2 s where the file has none.
Parameter intervals are the ranges over which the chi-square (misfit times the number of terms)
stays within 1 of its minimum (one parameter at a time, the others free).
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from fabric2seis import splitting, waves
from fabric2seis.errors import InputError
from fabric2seis.outputs import check_destination, folder_written_whole

REQUIRED = ("station", "baz_deg", "fast_azimuth_deg", "delay_s")
DEFAULT_AZIMUTH_ERR_DEG = 10.0
DEFAULT_DELAY_ERR_S = 0.2
CAUTIONS = ("The prediction assumes a fabric coherent over the whole layer, no melt or aligned cracks, and a "
            "plane-wave, ray-theory view (no ray bending, phase velocities); real splitting depends on frequency "
            "and on structure the sample does not see.")


def read_measurements(path: str | Path) -> pd.DataFrame:
    """The measurements table, checked row by row (InputError names the row and column)."""
    path = Path(path)
    try:
        table = pd.read_csv(path, skipinitialspace=True)
    except (OSError, pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read the measurements ({str(exc).strip()[:120]})", path) from None
    table.columns = [c.strip() for c in table.columns]
    missing = [c for c in REQUIRED if c not in table.columns]
    if missing:
        raise InputError(f"missing column(s) {', '.join(missing)}; needed: {', '.join(REQUIRED)}", path, "line 1")
    if len(table) == 0:
        raise InputError("no measurements", path)
    for column in ("baz_deg", "fast_azimuth_deg", "delay_s", "fast_azimuth_err_deg", "delay_err_s", "incidence_deg"):
        if column not in table.columns:
            continue
        values = pd.to_numeric(table[column], errors="coerce")
        bad = values.isna() & table[column].notna()
        if bad.any():
            row = int(np.flatnonzero(bad)[0])
            raise InputError(f"'{table[column].iloc[row]}' is not a number", path, f"line {row + 2}, column {column}")
        table[column] = values
    checks = [("baz_deg", lambda v: (v >= 0) & (v <= 360), "must lie in 0-360 degrees"),
              ("fast_azimuth_deg", lambda v: (v >= 0) & (v <= 360), "must lie in 0-360 degrees"),
              ("delay_s", lambda v: v >= 0, "must not be negative"),
              ("fast_azimuth_err_deg", lambda v: v > 0, "must be positive"),
              ("delay_err_s", lambda v: v > 0, "must be positive"),
              ("incidence_deg", lambda v: (v >= 0) & (v < 60), "must lie in 0-60 degrees")]
    for column, ok, what in checks:
        if column in table.columns:
            values = table[column]
            bad = values.notna() & ~ok(values.fillna(0))
            if bad.any():
                row = int(np.flatnonzero(bad)[0])
                raise InputError(f"{column} = {values.iloc[row]} {what}", path, f"line {row + 2}, column {column}")
    table["null"] = table["null"].astype(str).str.strip().str.lower().isin(["true", "1", "yes"]) \
        if "null" in table.columns else False
    table["fast_azimuth_err_deg"] = table.get("fast_azimuth_err_deg", pd.Series(np.nan, index=table.index)).fillna(DEFAULT_AZIMUTH_ERR_DEG)
    table["delay_err_s"] = table.get("delay_err_s", pd.Series(np.nan, index=table.index)).fillna(DEFAULT_DELAY_ERR_S)
    table["incidence_deg"] = table.get("incidence_deg", pd.Series(np.nan, index=table.index)).fillna(splitting.SKS_INCIDENCE_DEG)
    table["station"] = table["station"].astype(str)
    return table


@dataclass
class SampleTensor:
    name: str
    stiffness: np.ndarray
    density_kg_m3: float
    field: dict | None


def read_result(folder: str | Path) -> SampleTensor:
    folder = Path(folder)
    try:
        stiff = json.loads((folder / "stiffness.json").read_text())
        summary = json.loads((folder / "summary.json").read_text())
        prov = json.loads((folder / "provenance.json").read_text())
    except (OSError, json.JSONDecodeError) as exc:
        raise InputError(f"not a fabric2seis results folder ({exc.__class__.__name__})", folder) from None
    c = np.array(stiff[stiff.get("used_for_velocities", "hill")])
    return SampleTensor(summary["sample"], c, float(stiff["density_kg_m3"]), prov["settings"].get("field"))


def _attitude_field(attitude: str, azimuth_deg: float) -> dict:
    if attitude == "horizontal":
        return {"foliation_strike_deg": 0.0, "foliation_dip_deg": 0.0, "lineation_trend_deg": azimuth_deg % 360,
                "lineation_plunge_deg": 0.0}
    return {"foliation_strike_deg": azimuth_deg % 360, "foliation_dip_deg": 90.0, "lineation_pitch_deg": 0.0}


def _axial_difference(a, b):
    return (np.asarray(a) - np.asarray(b) + 90.0) % 180.0 - 90.0


def predict_many(c_list: list[np.ndarray], density: float, baz, incidence):
    """Fast azimuth (deg) and delay per km (s/km) for every tensor (T) and ray (M): arrays (T, M)."""
    n = splitting.ray_direction(baz, incidence)
    fast, per_km = [], []
    for c in c_list:
        w = waves.plane_waves(c, density, n)
        p = w.polarisations[:, 1]
        fast.append(np.degrees(np.arctan2(p[:, 1], p[:, 0])) % 180.0)
        per_km.append((1.0 / np.abs(n[:, 2])) * (1.0 / w.vs2_km_s - 1.0 / w.vs1_km_s))
    return np.array(fast), np.array(per_km)


def fit_station(sample: SampleTensor, data: pd.DataFrame, fixed: set[str], azimuth_step_deg: float = 2.0,
                thicknesses_km: np.ndarray | None = None) -> dict:
    """Grid search for one station; returns the best model, its misfit and intervals."""
    own = sample.field or {}
    thick = np.linspace(10.0, 300.0, 50) if thicknesses_km is None else np.asarray(thicknesses_km, float)
    if "thickness" in fixed:
        thick = np.array([float(own.get("layer_thickness_km", 100.0))])
    own_rot = splitting.placement(own) if own else None
    own_azimuth = float(np.degrees(np.arctan2(own_rot[1, 0], own_rot[0, 0])) % 360) if own_rot is not None else 0.0
    azimuths = np.array([own_azimuth]) if "azimuth" in fixed else np.arange(0.0, 360.0, azimuth_step_deg)
    attitudes = ["horizontal", "vertical"]
    if "foliation" in fixed:
        attitudes = ["horizontal" if float(own.get("foliation_dip_deg", 0.0)) < 45 else "vertical"]
    baz, inc = data["baz_deg"].to_numpy(float), data["incidence_deg"].to_numpy(float)
    obs_fast, obs_delay = data["fast_azimuth_deg"].to_numpy(float), data["delay_s"].to_numpy(float)
    err_fast, err_delay = data["fast_azimuth_err_deg"].to_numpy(float), data["delay_err_s"].to_numpy(float)
    null = data["null"].to_numpy(bool)
    misfit = np.empty((len(attitudes), len(azimuths), len(thick)))
    for a, attitude in enumerate(attitudes):
        tensors = [splitting.to_geographic(sample.stiffness, splitting.placement(_attitude_field(attitude, az)))
                   for az in azimuths]
        fast, per_km = predict_many(tensors, sample.density_kg_m3, baz, inc)          # (A, M)
        r_fast = np.where(null, 0.0, _axial_difference(fast, obs_fast) / err_fast)      # (A, M)
        r_null = np.where(null, np.minimum(np.abs(_axial_difference(fast, baz)),
                                           np.abs(_axial_difference(fast, baz + 90.0))) / err_fast, 0.0)
        delay = per_km[:, :, None] * thick[None, None, :]                               # (A, M, L)
        r_delay = np.where(null[None, :, None], 0.0, (delay - obs_delay[None, :, None]) / err_delay[None, :, None])
        terms = (r_fast ** 2 + r_null ** 2)[:, :, None] + r_delay ** 2
        misfit[a] = terms.mean(axis=1)
    n_terms = len(data) + int((~null).sum())
    best = np.unravel_index(np.argmin(misfit), misfit.shape)
    chi = misfit * n_terms
    inside = chi <= chi[best] + 1.0
    result = {
        "thickness_km": float(thick[best[2]]), "lineation_azimuth_deg": float(azimuths[best[1]]),
        "foliation": attitudes[best[0]], "misfit": float(misfit[best]), "n_measurements": int(len(data)),
        "thickness_interval_km": [float(thick[inside.any(axis=(0, 1))].min()), float(thick[inside.any(axis=(0, 1))].max())],
        "lineation_azimuth_interval_deg": _azimuth_interval(azimuths[inside.any(axis=(0, 2))], azimuth_step_deg),
        "fixed": sorted(fixed),
        "at_grid_edge": bool(len(thick) > 1 and best[2] in (0, len(thick) - 1)),
    }
    if result["at_grid_edge"]:
        result["warning"] = (f"best thickness at the edge of the searched range ({thick[0]:.0f}-{thick[-1]:.0f} km): "
                             "this fabric cannot explain the measurements well")
    return result, {"misfit": misfit, "azimuths": azimuths, "thicknesses": thick, "attitudes": attitudes}


def _azimuth_interval(values: np.ndarray, step: float):
    """Smallest arc (degrees) holding the accepted azimuths, as [from, to] clockwise."""
    if len(values) == 0:
        return None
    v = np.sort(values % 360)
    gaps = np.diff(np.r_[v, v[0] + 360])
    k = int(np.argmax(gaps))
    return [float(v[(k + 1) % len(v)]), float(v[k])]


def predictions_table(sample: SampleTensor, data: pd.DataFrame, model: dict) -> pd.DataFrame:
    c = splitting.to_geographic(sample.stiffness, splitting.placement(_attitude_field(model["foliation"],
                                                                                      model["lineation_azimuth_deg"])))
    fast, per_km = predict_many([c], sample.density_kg_m3, data["baz_deg"].to_numpy(float),
                                data["incidence_deg"].to_numpy(float))
    pred_delay = per_km[0] * model["thickness_km"]
    return pd.DataFrame({
        "sample": sample.name, "station": data["station"].to_numpy(), "baz_deg": data["baz_deg"].to_numpy(),
        "incidence_deg": data["incidence_deg"].to_numpy(), "null": data["null"].to_numpy(),
        "observed_fast_azimuth_deg": data["fast_azimuth_deg"].to_numpy(),
        "predicted_fast_azimuth_deg": fast[0].round(3),
        "fast_azimuth_residual_deg": _axial_difference(data["fast_azimuth_deg"].to_numpy(), fast[0]).round(3),
        "observed_delay_s": data["delay_s"].to_numpy(), "predicted_delay_s": pred_delay.round(4),
        "delay_residual_s": (data["delay_s"].to_numpy() - pred_delay).round(4),
    })


def run_field(result_dirs: list[str | Path], measurements: str | Path, out_dir: str | Path | None = None,
              fixed: set[str] | None = None, results_root: str | Path | None = "results") -> Path:
    """``fabric2seis field``: fit every sample to every station; outputs written whole or not at all.

    The destination is checked before any work (``outputs.check_destination``): never the results
    root, a folder holding an input, or a folder fabric2seis did not write.
    """
    from fabric2seis.figures.field import data_and_predictions, fast_direction_rose, misfit_surface

    fixed = set(fixed or ())
    unknown = fixed - {"thickness", "azimuth", "foliation"}
    if unknown:
        raise InputError(f"--fix takes thickness, azimuth or foliation, not {', '.join(sorted(unknown))}")
    out = Path(out_dir) if out_dir else Path("results") / "field"
    inputs = [*result_dirs, measurements]
    check_destination(out, "field", inputs, results_root)
    data = read_measurements(measurements)
    samples = [read_result(d) for d in result_dirs]
    for s in samples:
        if fixed and not s.field:
            raise InputError("--fix needs the sample's own field settings, which it has none of", s.name, "key field")
    with folder_written_whole(out, "field", inputs, results_root) as tmp:
        fits, tables = {}, []
        for s in samples:
            fits[s.name] = {}
            for station, rows in data.groupby("station", sort=True):
                model, grid = fit_station(s, rows, fixed)
                fits[s.name][station] = model
                table = predictions_table(s, rows, model)
                tables.append(table)
                baz = np.arange(0.0, 360.0, 2.0)
                c = splitting.to_geographic(s.stiffness, splitting.placement(
                    _attitude_field(model["foliation"], model["lineation_azimuth_deg"])))
                fast, per_km = predict_many([c], s.density_kg_m3, baz, np.full_like(baz, splitting.SKS_INCIDENCE_DEG))
                curve = {"baz": baz, "fast": fast[0], "delay": per_km[0] * model["thickness_km"], "model": model}
                safe = "".join(ch if ch.isalnum() or ch in "-_" else "_" for ch in f"{s.name}_{station}")
                data_and_predictions(tmp / f"splitting_{safe}", s.name, station, rows, curve)
                misfit_surface(tmp / f"misfit_{safe}", s.name, station, grid, model)
        predictions = pd.concat(tables, ignore_index=True)
        predictions.to_csv(tmp / "predictions.csv", index=False)
        fast_direction_rose(tmp / "fast_directions", predictions)
        (tmp / "field_fit.json").write_text(json.dumps({"fits": fits, "measurements": str(measurements),
                                                        "cautions": CAUTIONS}, indent=2) + "\n")
    return out
