"""The stack file of ``fabric2seis field --stack`` and the outputs it leads to.

A stack file is a YAML mapping (paths relative to the file)::

    period_s: 8                  # dominant period, s (default 8)
    incidence_deg: 10            # incidence of the rays, degrees from vertical (default 10, SKS)
    back_azimuth_step_deg: 5     # spacing of the back-azimuth sweep (default 5)
    layers:                      # bottom to top
      - result: results/VM01_dunite     # a results folder of 'fabric2seis sample'
        thickness_km: 80                # default: the sample's field.layer_thickness_km
        field: {foliation_strike_deg: 30, foliation_dip_deg: 5, lineation_pitch_deg: 15}
                                        # placement; default: the sample's own field settings
      - fast_azimuth_deg: 120           # or a layer given by its splitting alone
        delay_s: 0.6
        name: upper crust               # optional label of any layer

A sample layer's splitting is computed for every ray (it depends on back-azimuth at inclined
incidence); a plain layer splits every ray alike. The apparent splitting of the stack is computed
by ``layers.apparent_splitting`` (analytic, dominant period) and measured on synthetic waveforms
(``layers.synthetic_records``, ``layers.measure_splitting``).

This module computes only: ``read_stack`` checks the file, ``sweep_stack`` returns a ``StackSweep``
holding the table, the nulls, the fine analytic curve of the figure, the cautions and, with
measurements, their predictions and misfit. ``fabric2seis.commands.run_stack`` writes the files
and draws the figure.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from fabric2seis import budget
from fabric2seis.errors import InputError, nearest
from fabric2seis.waves import layers, splitting

TOP_KEYS = {"layers", "period_s", "incidence_deg", "back_azimuth_step_deg"}
SAMPLE_KEYS = {"result", "thickness_km", "field", "name"}
PLAIN_KEYS = {"fast_azimuth_deg", "delay_s", "name"}
FIELD_KEYS = {"foliation_strike_deg", "foliation_dip_deg", "lineation_pitch_deg", "lineation_trend_deg",
              "lineation_plunge_deg"}
#: the synthetic pulse (a Gaussian window of PULSE_WIDTH_PERIODS periods) must fit the trace within
#: three widths either side of its centre, and a period must span four samples (common practice)
MAX_PERIOD_S = layers.TRACE_SAMPLES * layers.SAMPLING_S / (2 * 3 * layers.PULSE_WIDTH_PERIODS)
MIN_PERIOD_S = 4 * layers.SAMPLING_S
RANGES = {  # key: (low, high, low allowed, what is valid)
    "period_s": (MIN_PERIOD_S, MAX_PERIOD_S, True,
                 f"{MIN_PERIOD_S:g}-{MAX_PERIOD_S:.1f} s, so that the pulse fits the "
                 f"{layers.TRACE_SAMPLES * layers.SAMPLING_S:g} s synthetic trace with four samples a period"),
    "incidence_deg": (0.0, 60.0, True, "0-60 degrees"),
    "back_azimuth_step_deg": (0.0, 90.0, False, "more than 0 and at most 90 degrees"),
    "thickness_km": (0.0, math.inf, False, "a positive number of km"),
    "fast_azimuth_deg": (0.0, 360.0, True, "0-360 degrees"),
    "delay_s": (0.0, math.inf, True, "zero or a positive number of seconds"),
}


def _number(value, key: str, path: Path, where: str) -> float:
    low, high, low_ok, valid = RANGES[key]
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not _finite(value):
        raise InputError(f"{key} = {value!r:.40} is not a number; it must be {valid}", path, where)
    if value < low or value > high or (value == low and not low_ok):
        raise InputError(f"{key} = {value} is out of range; it must be {valid}", path, where)
    return float(value)


def _finite(value: int | float) -> bool:
    """Whether a number is finite as a float (an integer too large for a float is not)."""
    try:
        return math.isfinite(value)
    except OverflowError:
        return False


def _unknown(keys, valid: set[str], path: Path, where: str) -> None:
    for key in keys:
        if key not in valid:
            raise InputError(f"unknown key '{key}'{nearest(str(key), valid)}; valid keys here: "
                             f"{', '.join(sorted(valid))}", path, f"{where}.{key}" if where else f"key {key}")


def _sample_layer(entry: dict, k: int, path: Path) -> dict:
    from fabric2seis.waves.field import read_result

    where = f"key layers[{k}]"
    if not isinstance(entry["result"], str) or not entry["result"]:
        raise InputError(f"result must name a results folder, not {str(entry['result'])[:40]!r}", path,
                         f"{where}.result")
    folder = Path(entry["result"])
    folder = folder if folder.is_absolute() else path.parent / folder
    try:
        found = folder.is_dir()
    except OSError as exc:              # a name too long for the file system, say
        raise InputError(f"no results folder {str(folder)[:80]} ({exc.strerror})", path, f"{where}.result") from None
    if not found:
        raise InputError(f"no results folder {folder}", path, f"{where}.result")
    try:
        sample = read_result(folder)
    except InputError as exc:
        raise InputError(f"{folder}: {exc.message}", path, f"{where}.result") from None
    own = sample.field or {}
    placement = entry.get("field", {k2: v for k2, v in own.items() if k2 in FIELD_KEYS} or None)
    if placement is None:
        raise InputError("needs a field placement (foliation strike, dip and lineation); the sample's "
                         "settings have none", path, f"{where}.field")
    if not isinstance(placement, dict):
        raise InputError("field must be a mapping of placement keys", path, f"{where}.field")
    _unknown(placement, FIELD_KEYS, path, f"{where}.field")
    try:
        rotation = splitting.placement(placement)
    except InputError as exc:
        inner = exc.where[len("key "):] if exc.where and exc.where.startswith("key ") else "field"
        raise InputError(exc.message, path, f"{where}.{inner}") from None
    if "thickness_km" in entry:
        thickness = _number(entry["thickness_km"], "thickness_km", path, f"{where}.thickness_km")
    elif "layer_thickness_km" in own:
        thickness = float(own["layer_thickness_km"])
    else:
        raise InputError("needs thickness_km (the sample's settings give no layer_thickness_km)", path,
                         f"{where}.thickness_km")
    c_geo = splitting.to_geographic(sample.stiffness, rotation)
    vertical = splitting.one_layer(c_geo, sample.density_kg_m3, thickness)
    return {"kind": "sample", "name": str(entry.get("name", sample.name)), "result": str(folder),
            "thickness_km": thickness, "field": placement, "stiffness_geographic": c_geo,
            "density_kg_m3": sample.density_kg_m3,
            "vertical_fast_azimuth_deg": float(vertical["fast_azimuth_deg"][0]),
            "vertical_delay_s": float(vertical["delay_s"][0])}


def read_stack(path: str | Path) -> dict:
    """The stack file, checked key by key; InputError names the file and the key or layer."""
    from fabric2seis.settings import read_yaml

    path = Path(path)
    if not path.is_file():
        raise InputError("no such stack file", path)
    try:
        data = read_yaml(path)
    except InputError as exc:                     # read_yaml speaks of settings files
        raise InputError(exc.message.replace("settings", "the stack file"), path, exc.where) from None
    _unknown(data, TOP_KEYS, path, "")
    if "layers" not in data:
        raise InputError("missing key 'layers' (a list of layers, bottom to top)", path, "key layers")
    entries = data["layers"]
    if not isinstance(entries, list) or not entries:
        raise InputError("layers must be a non-empty list of layers, bottom to top", path, "key layers")
    stack: dict[str, Any] = {"file": str(path),
             "period_s": _number(data.get("period_s", layers.DEFAULT_PERIOD_S), "period_s", path, "key period_s"),
             "incidence_deg": _number(data.get("incidence_deg", splitting.SKS_INCIDENCE_DEG), "incidence_deg",
                                      path, "key incidence_deg"),
             "back_azimuth_step_deg": _number(data.get("back_azimuth_step_deg", 5.0), "back_azimuth_step_deg",
                                              path, "key back_azimuth_step_deg"),
             "layers": []}
    budget.check(budget.stack_bytes(stack["back_azimuth_step_deg"], stack["period_s"]), "back_azimuth_step_deg",
                 path, f"a sweep every {stack['back_azimuth_step_deg']:g} degrees of back-azimuth")
    for k, entry in enumerate(entries):
        where = f"key layers[{k}]"
        if not isinstance(entry, dict):
            raise InputError("a layer must be a mapping: either result (and thickness_km, field) or "
                             "fast_azimuth_deg and delay_s", path, where)
        if "result" in entry:
            _unknown(entry, SAMPLE_KEYS, path, where)
            stack["layers"].append(_sample_layer(entry, k, path))
            continue
        _unknown(entry, PLAIN_KEYS, path, where)
        for key in ("fast_azimuth_deg", "delay_s"):
            if key not in entry:
                raise InputError(f"missing key '{key}': a layer is either result (a results folder) or "
                                 "fast_azimuth_deg and delay_s", path, f"{where}.{key}")
        stack["layers"].append({
            "kind": "splitting", "name": str(entry.get("name", f"layer {k + 1}")),
            "fast_azimuth_deg": _number(entry["fast_azimuth_deg"], "fast_azimuth_deg", path,
                                        f"{where}.fast_azimuth_deg") % 180.0,
            "delay_s": _number(entry["delay_s"], "delay_s", path, f"{where}.delay_s")})
    return stack


def _sweep_table(stack: dict) -> tuple[pd.DataFrame, list[dict]]:
    """Apparent splitting against back-azimuth (analytic and waveform-measured) and the nulls.

    Where the transverse energy fraction at the dominant period is below
    ``layers.NULL_TRANSVERSE_FRACTION`` a station records a null: the apparent fast azimuth and
    delay are undefined there and written as empty (NaN), with ``analytic_defined`` false.
    """
    period, incidence = stack["period_s"], stack["incidence_deg"]
    baz = np.arange(0.0, 360.0, stack["back_azimuth_step_deg"])
    fast, delay = layers.layer_splitting(stack["layers"], baz, incidence)
    analytic = layers.apparent_splitting(fast, delay, baz, period, undefined_below=layers.NULL_TRANSVERSE_FRACTION)
    north, east = layers.synthetic_records(fast, delay, baz, period)
    measured = layers.measure_splitting(north, east, baz, max_delay_s=period / 2.0)
    recorded_null = measured["transverse_fraction_before"] < layers.NULL_TRANSVERSE_FRACTION
    for key in ("fast_azimuth_deg", "delay_s"):        # a null: nothing to measure, not a large delay
        measured[key] = np.where(recorded_null, np.nan, measured[key])
    table = pd.DataFrame({
        "back_azimuth_deg": baz, "incidence_deg": incidence,
        "analytic_fast_azimuth_deg": analytic["fast_azimuth_deg"].round(3),
        "analytic_delay_s": analytic["delay_s"].round(4),
        "analytic_transverse_fraction": analytic["transverse_fraction"].round(6),
        "analytic_defined": analytic["transverse_fraction"] >= layers.NULL_TRANSVERSE_FRACTION,
        "waveform_fast_azimuth_deg": measured["fast_azimuth_deg"],
        "waveform_delay_s": measured["delay_s"].round(4),
        "waveform_transverse_fraction_before": measured["transverse_fraction_before"].round(6),
        "waveform_transverse_fraction_after": measured["transverse_fraction_after"].round(6)})
    for k in range(len(stack["layers"])):
        table[f"layer{k + 1}_fast_azimuth_deg"] = fast[k].round(3)
        table[f"layer{k + 1}_delay_s"] = delay[k].round(4)
    nulls = layers.predicted_nulls(lambda b: layers.layer_splitting(stack["layers"], b, incidence), None, period)
    return table, nulls


def measurement_predictions(stack: dict, data: pd.DataFrame) -> tuple[pd.DataFrame, dict]:
    """The stack's analytic apparent splitting at each measurement's back-azimuth and incidence."""
    baz, inc = data["baz_deg"].to_numpy(float), data["incidence_deg"].to_numpy(float)
    fast, delay = layers.layer_splitting(stack["layers"], baz, inc)
    app = layers.apparent_splitting(fast, delay, baz, stack["period_s"],
                                    undefined_below=layers.NULL_TRANSVERSE_FRACTION)
    pred_fast, pred_delay = app["fast_azimuth_deg"], np.nan_to_num(app["delay_s"])
    null = data["null"].to_numpy(bool)
    r_fast = np.nan_to_num(splitting.axial_difference(data["fast_azimuth_deg"].to_numpy(float), pred_fast))
    r_delay = data["delay_s"].to_numpy(float) - pred_delay
    r_null = np.nan_to_num(np.minimum(np.abs(splitting.axial_difference(pred_fast, baz)),
                                      np.abs(splitting.axial_difference(pred_fast, baz + 90.0))))
    table = pd.DataFrame({
        "station": data["station"].to_numpy(), "baz_deg": baz, "incidence_deg": inc, "null": null,
        "observed_fast_azimuth_deg": data["fast_azimuth_deg"].to_numpy(),
        "predicted_null": np.isnan(app["delay_s"]),
        "predicted_fast_azimuth_deg": pred_fast.round(3), "fast_azimuth_residual_deg": r_fast.round(3),
        "observed_delay_s": data["delay_s"].to_numpy(), "predicted_delay_s": pred_delay.round(4),
        "delay_residual_s": r_delay.round(4)})
    terms = np.where(null, (r_null / data["fast_azimuth_err_deg"]) ** 2,
                     (r_fast / data["fast_azimuth_err_deg"]) ** 2 + (r_delay / data["delay_err_s"]) ** 2)
    misfit = {station: float(terms[(data["station"] == station).to_numpy()].mean())
              for station in sorted(set(data["station"]))}
    return table, misfit


def _layer_record(layer: dict) -> dict:
    return {k: v for k, v in layer.items() if k != "stiffness_geographic"}


def stack_cautions(stack: dict) -> list[str]:
    from fabric2seis.cautions import LAYER_MODEL

    notes = [LAYER_MODEL, "Apparent splitting of several layers depends on the initial polarisation and on the "
             f"period; these predictions are for a dominant period of {stack['period_s']:g} s (Silver & Savage 1994)."]
    delays = [layer.get("delay_s", layer.get("vertical_delay_s", 0.0)) for layer in stack["layers"]]
    if sum(delays) >= stack["period_s"] / 2.0:
        notes.append(f"The layers' delays add up to {sum(delays):.2f} s, half the period or more: apparent delays "
                     "are only defined up to half a period here; use a longer period.")
    return notes


FINE_STEP_DEG = 0.5


@dataclass
class StackSweep:
    """Everything the outputs of ``field --stack`` show, computed once.

    ``table``: the back-azimuth sweep (stack_splitting.csv); ``nulls``: the predicted nulls;
    ``fine_*``: the analytic apparent splitting every ``FINE_STEP_DEG`` of back-azimuth (arrays
    (F,), degrees and seconds, NaN at nulls), the curve of the figure; ``cautions``; with
    measurements: the measurements, their ``predictions`` (stack_predictions.csv) and the
    ``misfit`` per station.
    """

    stack: dict
    table: pd.DataFrame
    nulls: list[dict]
    fine_back_azimuth_deg: np.ndarray
    fine_fast_azimuth_deg: np.ndarray
    fine_delay_s: np.ndarray
    cautions: list[str]
    stack_file: str
    measurements: pd.DataFrame | None = None
    measurements_file: str | None = None
    predictions: pd.DataFrame | None = None
    misfit: dict | None = None

    def record(self) -> dict:
        """The content of stack.json."""
        stack = self.stack
        record = {"stack_file": self.stack_file,
                  "settings": {"period_s": stack["period_s"], "incidence_deg": stack["incidence_deg"],
                               "back_azimuth_step_deg": stack["back_azimuth_step_deg"],
                               "pulse": f"cosine of the period under a Gaussian window of "
                                        f"{layers.PULSE_WIDTH_PERIODS:g} periods, "
                                        f"sampled every {layers.SAMPLING_S:g} s",
                               "measurement_grid": {"fast_step_deg": layers.FAST_STEP_DEG,
                                                    "delay_step_s": layers.DELAY_STEP_S,
                                                    "max_delay_s": stack["period_s"] / 2.0},
                               "null_transverse_fraction": layers.NULL_TRANSVERSE_FRACTION},
                  "layers_bottom_to_top": [_layer_record(layer) for layer in stack["layers"]],
                  "nulls": self.nulls, "measurements": self.measurements_file, "cautions": self.cautions}
        if self.misfit is not None:
            record["misfit"] = self.misfit
        return record


def sweep_stack(stack: dict, data: pd.DataFrame | None = None, stack_file: str | Path | None = None,
                measurements_file: str | Path | None = None) -> StackSweep:
    """Apparent splitting of a stack against back-azimuth, its nulls, and its fit to measurements.

    Where the transverse energy fraction at the dominant period is below
    ``layers.NULL_TRANSVERSE_FRACTION`` a station records a null: the apparent fast azimuth and
    delay are undefined there and written as empty (NaN), with ``analytic_defined`` false.

    Parameters
    ----------
    stack : dict
        A checked stack (``read_stack``): ``period_s``, ``incidence_deg``, ``back_azimuth_step_deg``
        and ``layers``, bottom to top.
    data : pandas.DataFrame, optional
        Measurements (``read_measurements`` columns) to predict and compare.
    stack_file, measurements_file : path, optional
        Where the stack and measurements came from, for the record (default ``stack["file"]``).

    Returns
    -------
    StackSweep
        The table (B = 360 / back_azimuth_step_deg rows), nulls, the fine curve
        (360 / ``FINE_STEP_DEG`` back-azimuths), cautions, and the predictions (one row per
        measurement) and misfit per station when ``data`` is given.

    Raises
    ------
    ValueError
        A stack without layers or without its settings.

    References
    ----------
    Silver, P. G. & Savage, M. K. (1994). The interpretation of shear-wave splitting parameters in
    the presence of two anisotropic layers. Geophys. J. Int. 119, 949-963.
    """
    missing = [k for k in ("period_s", "incidence_deg", "back_azimuth_step_deg", "layers") if k not in stack]
    if missing or not stack["layers"]:
        raise ValueError("stack must be a checked stack (read_stack) with layers; "
                         f"missing {', '.join(missing) or 'layers'}")
    table, nulls = _sweep_table(stack)
    fine = np.arange(0.0, 360.0, FINE_STEP_DEG)
    fast, delay = layers.layer_splitting(stack["layers"], fine, stack["incidence_deg"])
    curve = layers.apparent_splitting(fast, delay, fine, stack["period_s"],
                                      undefined_below=layers.NULL_TRANSVERSE_FRACTION)
    predictions, misfit = measurement_predictions(stack, data) if data is not None else (None, None)
    return StackSweep(stack, table, nulls, fine, curve["fast_azimuth_deg"], curve["delay_s"], stack_cautions(stack),
                      str(stack_file if stack_file is not None else stack.get("file")), data,
                      None if measurements_file is None else str(measurements_file), predictions, misfit)
