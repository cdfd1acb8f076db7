"""Comparison of predicted splitting with field measurements, and the fit of a layer to them.

This module computes only: ``read_measurements`` and ``read_result`` read the inputs,
``fit_station`` fits one sample to one station, and ``fit_field`` fits every sample to every
station and returns a ``FieldFit`` holding every number, table and curve the outputs need.
Writing the files and drawing the figures is ``fabric2seis.commands.run_field``'s work.
Predictions come from the one splitting kernel, ``splitting.one_layer`` / ``splitting.ray_splitting``.

For each sample (a results folder) and each station, the layer's thickness L, the azimuth of the
lineation (horizontal) and the foliation attitude (horizontal, or vertical and striking along the
lineation) are fitted to the measured splitting by minimising

    chi-square = sum over measurements i of (fast azimuth residual_i / fast azimuth error_i)^2
                                          + (delay residual_i / delay error_i)^2

the plain sum of squared normalised residuals, each measurement counted once: a measurement with
a fast azimuth and a delay gives two terms, a null one (its angle to the back-azimuth or to its
normal, zero when the prediction is a null too; its delay is not used). Fast-azimuth residuals
are axial, wrapped to +-90 degrees. Errors default to 10 degrees and 0.2 s where the file has
none. ``misfit`` is chi-square / number of measurements; ``reduced_chi_square`` is chi-square /
(number of terms - number of fitted continuous parameters).

The search: lineation trends every ``azimuth_step_deg`` over 0-360 degrees for both attitudes
(the two senses of the lineation differ for inclined rays and for a fabric without a two-fold
axis about the vertical), refined every ``FINE_AZIMUTH_STEP_DEG`` within one coarse step of every
coarse trend whose chi-square lies within 4 of its attitude's best and around the best of each
sense. The
predicted delay is linear in L, so for each trend and attitude the chi-square is an exact
quadratic in L: the best L, and the range of L where it stays below a level, are solved in closed
form over the searched range (no thickness grid). A tensor turned by an azimuth a about the
vertical splits a ray as the unturned tensor splits the ray turned by -a, with the fast azimuth
turned by +a, so every trend of an attitude comes from one Christoffel solution over all rays.

Intervals: 68 % where the profile of chi-square in one parameter, the others minimised, stays
within ``DELTA_CHI_SQUARE_68`` = 1 of its minimum, 95 % within ``DELTA_CHI_SQUARE_95`` = 4 (one
parameter of interest, Gaussian errors: common practice). The foliation attitude is a choice
between two models, to which that rule does not carry over (minimised like a parameter, a wrongly
preferred attitude left the true thickness inside 26 % of the time), so each attitude's own
profile is measured from its own minimum and the intervals are joined over the attitudes the
data cannot tell apart (undecided, below). The lineation azimuth is an axis: it is reported in
0-180 degrees, its interval is the smallest arc of axes holding the accepted axes, [from, to]
clockwise (to < from when it wraps through north), with its ends interpolated between the fine
samples and never narrower than the fine step; the thickness interval is never narrower than
``THICKNESS_RESOLUTION_KM``. The best trend of each sense and their chi-square difference are
reported, as is the difference between the attitudes; either choice is "undecided" when the
difference is below ``UNDECIDED_BELOW_DELTA_CHI_SQUARE`` = 4 (the worse choice is then less than
two standard deviations, a likelihood ratio of e^2 = 7.4, from the better one). Measured coverage
(tests/test_field_coverage.py, 400 synthetic stations): 68 % intervals held the true thickness
71 % and the true azimuth 73 % of the time (a little above 68 % where the attitude is undecided).

The sample's own uncertainty: its 95 % bootstrap interval of the delay per 100 km along Z
(``uncertainty.delay_s_per_100km`` in summary.json, when the sample was run with bootstrap n > 0),
divided by 2 x 1.96 and by the interval's centre, is a relative 1-sigma of the delay per km along
every ray (the fabric's anisotropy taken to scale as a whole). The fitted thickness scales as the
inverse of the delay per km, so L x that relative sigma is added in quadrature to each side of the
thickness interval from the measurements.

A fit is flagged poor (``poor_fit``, with its reasons) when the best thickness lies at an end of
the searched range (``edge_of_range``) or the reduced chi-square exceeds
``POOR_FIT_REDUCED_CHI_SQUARE`` = 2 (the residuals are then much larger than the errors claim).
"""

from __future__ import annotations

import io
import json
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from fabric2seis import elastic
from fabric2seis.cautions import LAYER_MODEL
from fabric2seis.errors import InputError
from fabric2seis.waves import splitting

REQUIRED = ("station", "baz_deg", "fast_azimuth_deg", "delay_s")
DEFAULT_AZIMUTH_ERR_DEG = 10.0
DEFAULT_DELAY_ERR_S = 0.2
CAUTIONS = LAYER_MODEL


def read_measurements(path: str | Path) -> pd.DataFrame:
    """The measurements table, checked row by row (InputError names the row and column).

    Every row needs a station, a back-azimuth and a fast azimuth, and a delay unless it is a null;
    numbers must be finite and in range; ``null`` is true or false (also 1/0, yes/no; empty is
    false). Empty optional cells take the defaults.
    """
    from fabric2seis.ingest.io.text import csv_line_of_row, csv_row_longer_than_header, decode

    path = Path(path)
    try:
        text = decode(path.read_bytes(), path)
        table = pd.read_csv(io.StringIO(text), skipinitialspace=True, dtype=str, keep_default_na=False)
    except (OSError, pd.errors.ParserError, pd.errors.EmptyDataError) as exc:
        raise InputError(f"cannot read the measurements ({str(exc).strip()[:120]})", path) from None
    if not isinstance(table.index, pd.RangeIndex):      # pandas takes a first column with no name for an index
        raise InputError(f"a row has more values than the header's {len(table.columns)} column names", path,
                         csv_row_longer_than_header(io.StringIO(text, newline="")))

    def line(row: int) -> str:              # the parser skips blank lines: count them back in
        return csv_line_of_row(text, row)
    table.columns = [c.strip() for c in table.columns]
    missing = [c for c in REQUIRED if c not in table.columns]
    if missing:
        raise InputError(f"missing column(s) {', '.join(missing)}; needed: {', '.join(REQUIRED)}", path, "line 1")
    if len(table) == 0:
        raise InputError("no measurements", path)
    table = table.apply(lambda column: column.str.strip())
    words = {"true": True, "1": True, "yes": True, "false": False, "0": False, "no": False, "": False}
    null = table["null"].str.lower() if "null" in table.columns else pd.Series("", index=table.index)
    unknown = ~null.isin(list(words))
    if unknown.any():
        row = int(np.flatnonzero(unknown)[0])
        raise InputError(f"null = '{table['null'].iloc[row][:20]}' is neither true nor false", path,
                         f"{line(row)}, column null")
    table["null"] = null.map(words).astype(bool)
    for column in ("station", "baz_deg", "fast_azimuth_deg", "delay_s"):
        blank = (table[column] == "") | (table[column].str.lower() == "nan")
        if column == "delay_s":
            blank &= ~table["null"]                    # a null has no delay
        if blank.any():
            row = int(np.flatnonzero(blank)[0])
            raise InputError("a value is missing", path, f"{line(row)}, column {column}")
    for column in ("baz_deg", "fast_azimuth_deg", "delay_s", "fast_azimuth_err_deg", "delay_err_s", "incidence_deg"):
        if column not in table.columns:
            continue
        given = (table[column] != "") & (table[column].str.lower() != "nan")
        values = pd.to_numeric(table[column].where(given), errors="coerce")
        for bad, what in ((values.isna() & given, "is not a number"),
                          (given & ~np.isfinite(values.fillna(0.0)), "is not a finite number")):
            if bad.any():
                row = int(np.flatnonzero(bad)[0])
                raise InputError(f"'{table[column].iloc[row][:20]}' {what}", path, f"{line(row)}, column {column}")
        table[column] = values
    table.loc[table["null"] & table["delay_s"].isna(), "delay_s"] = 0.0   # a null shows no delay (NaN spoils sums)
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
                raise InputError(f"{column} = {values.iloc[row]} {what}", path, f"{line(row)}, column {column}")
    table["fast_azimuth_err_deg"] = table.get("fast_azimuth_err_deg", pd.Series(np.nan, index=table.index)) \
        .fillna(DEFAULT_AZIMUTH_ERR_DEG)
    table["delay_err_s"] = table.get("delay_err_s", pd.Series(np.nan, index=table.index)).fillna(DEFAULT_DELAY_ERR_S)
    table["incidence_deg"] = table.get("incidence_deg", pd.Series(np.nan, index=table.index)) \
        .fillna(splitting.SKS_INCIDENCE_DEG)
    table["station"] = table["station"].astype(str)
    return table


@dataclass
class SampleTensor:
    """A sample's stiffness (GPa, structural frame), density, own field settings and, when it was
    bootstrapped, the 95 % interval of its delay per 100 km along Z (s)."""

    name: str
    stiffness: np.ndarray
    density_kg_m3: float
    field: dict | None
    delay_interval_s_per_100km: tuple[float, float] | None = None


def read_result(folder: str | Path) -> SampleTensor:
    """Read what the field fit needs from a results folder of ``fabric2seis sample``, checked.

    Parameters
    ----------
    folder : str or Path
        The results folder (``stiffness.json``, ``summary.json``, ``provenance.json``).

    Returns
    -------
    SampleTensor
        The stiffness used for velocities (6, 6, GPa), density (kg m^-3), the sample's own field
        settings, and its 95 % interval of the delay per 100 km along Z (s) where it was bootstrapped.

    Raises
    ------
    InputError
        Naming the file and key, if a file is missing or not a JSON mapping, the stiffness is not a
        valid 6x6 stiffness, the density is not a positive number, or the sample name, field
        settings or delay interval are not what ``fabric2seis sample`` writes.
    """
    folder = Path(folder)
    files = {}
    for name in ("stiffness.json", "summary.json", "provenance.json"):
        try:
            files[name] = json.loads((folder / name).read_text())
        except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
            raise InputError(f"not a fabric2seis results folder ({exc.__class__.__name__})", folder / name) from None
        if not isinstance(files[name], dict):
            raise InputError("not a fabric2seis results file (not a JSON mapping)", folder / name)
    stiff, summary, prov = files["stiffness.json"], files["summary.json"], files["provenance.json"]
    source = folder / "stiffness.json"
    used = stiff.get("used_for_velocities", "hill")
    if not isinstance(used, str) or used not in stiff:
        raise InputError(f"no stiffness {used!r} to use for velocities", source, "key used_for_velocities")
    try:
        c = np.array(stiff[used], dtype=float)
    except (TypeError, ValueError, OverflowError):
        raise InputError("the stiffness is not a 6x6 matrix of numbers", source, f"key {used}") from None
    c = elastic.check_stiffness(c, str(source), f"key {used}")
    density = _positive_number(stiff.get("density_kg_m3"))
    if density is None:
        raise InputError("the density must be a positive number of kg m^-3", source, "key density_kg_m3")
    if not isinstance(summary.get("sample"), str):
        raise InputError("no sample name", folder / "summary.json", "key sample")
    settings = prov.get("settings")
    field = settings.get("field") if isinstance(settings, dict) else None
    if not isinstance(settings, dict) or not (field is None or isinstance(field, dict)):
        raise InputError("the settings as used are missing or not a mapping", folder / "provenance.json",
                         "key settings.field")
    if field is not None:
        from fabric2seis.settings import validate

        validate({"field": field}, folder / "provenance.json")
    uncertainty = summary.get("uncertainty") or {}
    written = uncertainty.get("delay_s_per_100km") if isinstance(uncertainty, dict) else None
    interval = None
    if written is not None:
        ends = [_positive_number(v, zero=True) for v in written] if isinstance(written, list) else []
        low, high = (ends + [None, None])[:2]
        if len(ends) != 2 or low is None or high is None:
            raise InputError("the delay interval must be two numbers, zero or more", folder / "summary.json",
                             "key uncertainty.delay_s_per_100km")
        interval = (low, high)
    return SampleTensor(summary["sample"], c, density, field, interval)


def _positive_number(value, zero: bool = False) -> float | None:
    """``value`` as a finite float above zero (or from zero), else None."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return None
    try:
        x = float(value)
    except OverflowError:
        return None
    return x if math.isfinite(x) and (x > 0 or (zero and x == 0)) else None


ATTITUDES = ("horizontal", "vertical")
FIXABLE = {"thickness", "azimuth", "foliation"}
CURVE_STEP_DEG = 2.0


def attitude_field(attitude: str, azimuth_deg: float) -> dict:
    """Field settings of a trial layer: the lineation trending ``azimuth_deg`` (degrees from north)
    in a horizontal foliation, or along the strike of a vertical one (``attitude``)."""
    if attitude not in ATTITUDES:
        raise ValueError(f"attitude must be one of {ATTITUDES}, got {attitude!r}")
    if attitude == "horizontal":
        return {"foliation_strike_deg": 0.0, "foliation_dip_deg": 0.0, "lineation_trend_deg": azimuth_deg % 360,
                "lineation_plunge_deg": 0.0}
    return {"foliation_strike_deg": azimuth_deg % 360, "foliation_dip_deg": 90.0, "lineation_pitch_deg": 0.0}


_attitude_field = attitude_field      # the former private name (demo_samples/generate.py uses it)


def predict_many(c_list: list[np.ndarray], density: float, baz, incidence) -> tuple[np.ndarray, np.ndarray]:
    """Fast azimuth and delay per km of layer for every tensor and ray (``splitting.one_layer``).

    Parameters
    ----------
    c_list : list of numpy.ndarray
        T Voigt stiffnesses (6, 6) in GPa, north-east-down.
    density : float
        Density, kg m^-3.
    baz, incidence : array_like
        M back-azimuths and incidences (degrees; incidence in [0, 90)), of equal length or one a
        single value.

    Returns
    -------
    fast : numpy.ndarray
        Fast azimuths (T, M), degrees from north in [0, 180).
    per_km : numpy.ndarray
        Delay per km of layer thickness (T, M), s/km.
    """
    out = [splitting.one_layer(c, density, 1.0, baz, incidence) for c in c_list]
    return np.array([o["fast_azimuth_deg"] for o in out]), np.array([o["delay_s"] for o in out])


def predict_turned(c_geographic: np.ndarray, density: float, turns_deg, baz,
                   incidence) -> tuple[np.ndarray, np.ndarray]:
    """``predict_many`` for the tensor turned clockwise (seen from above) by each of ``turns_deg``.

    Turning the tensor by a about the vertical splits a ray as the unturned tensor splits the ray
    from back-azimuth baz - a, with the fast azimuth turned by +a: one Christoffel solution for all
    A x M rays instead of A tensors.

    Parameters
    ----------
    c_geographic : numpy.ndarray
        Voigt stiffness (6, 6) in GPa, north-east-down, unturned.
    density : float
        Density, kg m^-3.
    turns_deg : array_like
        A turns, degrees clockwise seen from above.
    baz, incidence : array_like
        M back-azimuths and incidences, degrees, broadcast together.

    Returns
    -------
    fast : numpy.ndarray
        Fast azimuths (A, M), degrees in [0, 180).
    per_km : numpy.ndarray
        Delay per km of layer thickness (A, M), s/km.
    """
    turns = np.atleast_1d(np.asarray(turns_deg, float))
    if turns.ndim != 1:
        raise ValueError(f"turns_deg must be one-dimensional, got shape {turns.shape}")
    baz, incidence = splitting.broadcast_rays(baz, incidence)
    baz, incidence = np.atleast_1d(baz), np.atleast_1d(incidence)
    shifted = (baz[None, :] - turns[:, None]) % 360.0
    fast, per_km = predict_many([c_geographic], density, shifted.ravel(),
                                np.broadcast_to(incidence, shifted.shape).ravel())
    shape = shifted.shape
    return (fast[0].reshape(shape) + turns[:, None]) % 180.0, per_km[0].reshape(shape)


@dataclass
class _Observed:
    """The measurement columns as arrays."""

    baz: np.ndarray
    incidence: np.ndarray
    fast: np.ndarray
    delay: np.ndarray
    err_fast: np.ndarray
    err_delay: np.ndarray
    null: np.ndarray

    @classmethod
    def of(cls, data: pd.DataFrame) -> _Observed:
        col = lambda name: data[name].to_numpy(float)  # noqa: E731
        return cls(col("baz_deg"), col("incidence_deg"), col("fast_azimuth_deg"), col("delay_s"),
                   col("fast_azimuth_err_deg"), col("delay_err_s"), data["null"].to_numpy(bool))

    @property
    def n_terms(self) -> int:
        """Squared residuals in the chi-square: two per measurement with a delay, one per null."""
        return int(2 * (~self.null).sum() + self.null.sum())


def _angle_terms(fast: np.ndarray, obs: _Observed) -> np.ndarray:
    """Squared normalised angle residuals (..., M): fast azimuth, or for a null the angle to the
    back-azimuth or its normal."""
    r_fast = splitting.axial_difference(fast, obs.fast) / obs.err_fast
    r_null = np.minimum(np.abs(splitting.axial_difference(fast, obs.baz)),
                        np.abs(splitting.axial_difference(fast, obs.baz + 90.0))) / obs.err_fast
    return np.where(obs.null, r_null, r_fast) ** 2


@dataclass
class _Quadratic:
    """chi-square(L) = angle + a L^2 - 2 b L + c for every trend (arrays (K,)); L in km."""

    angle: np.ndarray
    a: np.ndarray
    b: np.ndarray
    c: np.ndarray

    @classmethod
    def of(cls, fast: np.ndarray, per_km: np.ndarray, obs: _Observed) -> _Quadratic:
        w = np.where(obs.null, 0.0, 1.0 / obs.err_delay ** 2)
        return cls(_angle_terms(fast, obs).sum(axis=-1), (per_km ** 2 * w).sum(axis=-1),
                   (per_km * obs.delay * w).sum(axis=-1), np.full(len(fast), (obs.delay ** 2 * w).sum()))

    def at(self, thickness_km) -> np.ndarray:
        L = np.asarray(thickness_km, float)
        return self.angle + self.a * L ** 2 - 2.0 * self.b * L + self.c

    def best(self, low_km: float, high_km: float) -> tuple[np.ndarray, np.ndarray]:
        """Best thickness within [low, high] for each trend, and its chi-square."""
        with np.errstate(divide="ignore", invalid="ignore"):
            free = np.where(self.a > 0, self.b / self.a, low_km)
        L = np.clip(free, low_km, high_km)
        return L, self.at(L)

    def below(self, level: np.ndarray | float, low_km: float, high_km: float) -> tuple[np.ndarray, np.ndarray]:
        """The range of L in [low, high] where chi-square <= level, per trend (NaN where empty)."""
        rest = self.angle + self.c - level
        with np.errstate(divide="ignore", invalid="ignore"):
            root = np.sqrt(np.clip(self.b ** 2 - self.a * rest, 0.0, None))
            lo = np.where(self.a > 0, (self.b - root) / self.a, low_km)
            hi = np.where(self.a > 0, (self.b + root) / self.a, high_km)
        empty = np.where(self.a > 0, self.b ** 2 - self.a * rest < 0, rest > 0)
        lo, hi = np.clip(lo, low_km, high_km), np.clip(hi, low_km, high_km)
        empty |= (lo > high_km) | (hi < low_km) | (hi < lo)
        return np.where(empty, np.nan, lo), np.where(empty, np.nan, hi)


FINE_AZIMUTH_STEP_DEG = 0.1
THICKNESS_RESOLUTION_KM = 0.1
DELTA_CHI_SQUARE_68 = 1.0
DELTA_CHI_SQUARE_95 = 4.0
UNDECIDED_BELOW_DELTA_CHI_SQUARE = 4.0
POOR_FIT_REDUCED_CHI_SQUARE = 2.0
SAMPLE_INTERVAL_Z = 1.96
CHI_SQUARE_DEFINITION = (
    "chi_square = sum over measurements of (fast azimuth residual / fast_azimuth_err_deg)^2 + (delay residual / "
    "delay_err_s)^2, each measurement counted once (a null adds one term: the angle between the predicted fast "
    "azimuth and the back-azimuth or its normal, over fast_azimuth_err_deg); fast azimuth residuals are axial, "
    "within +-90 degrees. misfit = chi_square / n_measurements; reduced_chi_square = chi_square / "
    "degrees_of_freedom, with degrees_of_freedom = number of squared terms - fitted continuous parameters "
    "(thickness, azimuth).")
INTERVAL_DEFINITION = (
    "68 % (95 %) intervals: the range where the profile of chi_square in that parameter (the other parameters at "
    "their best) stays within 1 (4) of its minimum, for each foliation attitude from its own minimum, joined over "
    "the attitudes not rejected (foliation_verdict undecided); lineation azimuths are axes in 0-180 degrees, "
    "intervals [from, to] clockwise (to < from when the arc wraps through north), never narrower than "
    f"{FINE_AZIMUTH_STEP_DEG} degrees; thickness intervals never narrower than {THICKNESS_RESOLUTION_KM} km and, "
    "when the sample was bootstrapped, widened on each side by the sample's own 1-sigma (1.96 sigma for 95 %) in "
    "quadrature "
    "(thickness_sample_sigma_km: thickness x half the 95 % bootstrap interval of its delay per 100 km / 1.96 / the "
    "interval's centre).")
THRESHOLDS = {
    "interval_delta_chi_square": DELTA_CHI_SQUARE_68,
    "undecided_below_delta_chi_square": UNDECIDED_BELOW_DELTA_CHI_SQUARE,
    "undecided_reason": "below a chi-square difference of 4 the worse choice lies within two standard deviations "
                        "(likelihood ratio below e^2 = 7.4) of the better one",
    "poor_fit_reduced_chi_square_above": POOR_FIT_REDUCED_CHI_SQUARE,
}


def _fine_trends(coarse_deg: np.ndarray, profiles: np.ndarray, step_deg: float) -> np.ndarray:
    """Fine trends (deg, 0-360) within one coarse step of every coarse trend whose profile (one row
    (K,) per attitude) lies within DELTA_CHI_SQUARE_95 of that attitude's best, and of the best of
    each sense, together with their opposite sense (so that every axis is seen in both senses) and
    the coarse trends themselves."""
    centres = set()
    for profile in profiles:
        best = int(np.argmin(profile))
        other = np.abs((coarse_deg - coarse_deg[best] + 180.0) % 360.0 - 180.0) > 90.0
        centres |= set(np.flatnonzero(profile <= profile[best] + DELTA_CHI_SQUARE_95)) | {best}
        if other.any():
            centres.add(int(np.flatnonzero(other)[np.argmin(profile[other])]))
    per_turn = int(round(360.0 / FINE_AZIMUTH_STEP_DEG))
    reach = int(np.ceil(step_deg / FINE_AZIMUTH_STEP_DEG))
    index = set(np.rint(coarse_deg / FINE_AZIMUTH_STEP_DEG).astype(int) % per_turn)
    for k in centres:
        mid = int(round(coarse_deg[k] / FINE_AZIMUTH_STEP_DEG))
        for j in range(mid - reach, mid + reach + 1):
            index.add(j % per_turn)
            index.add((j + per_turn // 2) % per_turn)
    return np.array(sorted(index)) * FINE_AZIMUTH_STEP_DEG


def _axis_interval(trends_deg: np.ndarray, chi: np.ndarray, level: float, best_axis_deg: float):
    """Smallest arc of axes (0-180) where the axial profile (min over senses) is <= level, [from, to]
    clockwise, its ends interpolated linearly to the level; None for a single trend (azimuth fixed)."""
    if len(trends_deg) < 2:
        return None
    key = np.rint((trends_deg % 180.0) / FINE_AZIMUTH_STEP_DEG).astype(int) % int(round(180.0 / FINE_AZIMUTH_STEP_DEG))
    order = np.argsort(key, kind="stable")
    keys, starts = np.unique(key[order], return_index=True)
    theta = keys * FINE_AZIMUTH_STEP_DEG
    value = np.minimum.reduceat(chi[order], starts)
    accepted = value <= level
    if accepted.all():
        return [0.0, 180.0]
    acc = np.flatnonzero(accepted)
    gaps = np.diff(np.r_[theta[acc], theta[acc[0]] + 180.0])
    k = int(np.argmax(gaps))
    first, last = acc[(k + 1) % len(acc)], acc[k]
    n = len(theta)

    def crossing(inside: int, outside: int) -> float:
        span = (theta[outside] - theta[inside] + 90.0) % 180.0 - 90.0       # signed, towards outside
        frac = (level - value[inside]) / (value[outside] - value[inside])
        return float(theta[inside] + span * np.clip(frac, 0.0, 1.0))

    start = crossing(first, (first - 1) % n) % 180.0
    end = crossing(last, (last + 1) % n) % 180.0
    if (end - start) % 180.0 < FINE_AZIMUTH_STEP_DEG:
        half = FINE_AZIMUTH_STEP_DEG / 2
        start, end = (best_axis_deg - half) % 180.0, (best_axis_deg + half) % 180.0
    return [round(start, 3), round(end, 3)]


def _thickness_interval(quads: list[_Quadratic], levels: list[float], best_km: float, low_km: float,
                        high_km: float) -> list[float]:
    """Union over every trend and the attitudes given of the thickness range where chi-square <= that
    attitude's level (its profile, the others minimised), within the searched range and never
    narrower than THICKNESS_RESOLUTION_KM."""
    ranges = [q.below(level, low_km, high_km) for q, level in zip(quads, levels)]
    lo = min(float(np.nanmin(np.concatenate([r[0] for r in ranges]))), best_km)
    hi = max(float(np.nanmax(np.concatenate([r[1] for r in ranges]))), best_km)
    if hi - lo < THICKNESS_RESOLUTION_KM:
        lo, hi = best_km - THICKNESS_RESOLUTION_KM / 2, best_km + THICKNESS_RESOLUTION_KM / 2
    return [lo, hi]


def _verdict(delta: float | None) -> str | None:
    if delta is None:
        return None
    return "undecided" if delta < UNDECIDED_BELOW_DELTA_CHI_SQUARE else "decided"


def sample_sigma_fraction(interval_s_per_100km) -> float | None:
    """Relative 1-sigma of the delay per km from its 95 % bootstrap interval: half-width / 1.96 / centre."""
    if interval_s_per_100km is None:
        return None
    low, high = (float(v) for v in interval_s_per_100km)
    centre = 0.5 * (low + high)
    if not (np.isfinite(low) and np.isfinite(high)) or centre <= 0 or high < low:
        return None
    return (high - low) / (2.0 * SAMPLE_INTERVAL_Z) / centre


@dataclass
class _Search:
    """What is searched: thickness grid and range (km), coarse trends (deg), attitudes and the
    sample turned into each attitude with its lineation trending north."""

    thicknesses_km: np.ndarray
    azimuths_deg: np.ndarray
    attitudes: list[str]
    base: dict
    fixed: set[str]

    @property
    def range_km(self) -> tuple[float, float]:
        return float(self.thicknesses_km.min()), float(self.thicknesses_km.max())


def _search_space(sample: SampleTensor, fixed: set[str], azimuth_step_deg: float, thicknesses_km) -> _Search:
    own = sample.field or {}
    thick = np.linspace(10.0, 300.0, 50) if thicknesses_km is None else np.asarray(thicknesses_km, float)
    if "thickness" in fixed:
        thick = np.array([float(own.get("layer_thickness_km", 100.0))])
    own_rot = splitting.placement(own) if own else None
    own_azimuth = float(np.degrees(np.arctan2(own_rot[1, 0], own_rot[0, 0])) % 360) if own_rot is not None else 0.0
    azimuths = np.array([own_azimuth]) if "azimuth" in fixed else np.arange(0.0, 360.0, azimuth_step_deg)
    attitudes = list(ATTITUDES)
    if "foliation" in fixed:
        attitudes = ["horizontal" if float(own.get("foliation_dip_deg", 0.0)) < 45 else "vertical"]
    base = {a: splitting.to_geographic(sample.stiffness, splitting.placement(attitude_field(a, 0.0)))
            for a in attitudes}
    return _Search(thick, azimuths, attitudes, base, set(fixed))


def _coarse_grid(sample: SampleTensor, search: _Search, obs: _Observed) -> tuple[np.ndarray, np.ndarray]:
    """chi-square on the coarse grid (attitudes, trends, thicknesses), residual by residual, and its
    profile over the continuous thickness range (attitudes, trends)."""
    thick = search.thicknesses_km
    chi = np.empty((len(search.attitudes), len(search.azimuths_deg), len(thick)))
    profile = np.empty(chi.shape[:2])
    for i, attitude in enumerate(search.attitudes):
        fast, per_km = predict_turned(search.base[attitude], sample.density_kg_m3, search.azimuths_deg, obs.baz,
                                      obs.incidence)
        r_delay = np.where(obs.null[None, :, None], 0.0,
                           (per_km[:, :, None] * thick[None, None, :] - obs.delay[None, :, None])
                           / obs.err_delay[None, :, None])
        chi[i] = _angle_terms(fast, obs).sum(axis=1)[:, None] + (r_delay ** 2).sum(axis=1)
        profile[i] = _Quadratic.of(fast, per_km, obs).best(*search.range_km)[1]
    return chi, profile


def _intervals(quads: list[_Quadratic], trends: np.ndarray, profile: np.ndarray, best: dict, search: _Search,
               sample: SampleTensor) -> dict:
    """68 % and 95 % intervals of thickness (with and without the sample's own uncertainty) and of the
    lineation axis.

    Each attitude's own profile, joined over the attitudes the data cannot tell apart: the attitude
    is a choice between two models, to which the delta chi-square rule does not carry over (a wrongly
    preferred attitude's own interval alone held the true thickness about a quarter of the time).
    """
    per_attitude = profile.min(axis=1)
    kept = [a for a in range(len(quads)) if per_attitude[a] - best["chi_square"] < UNDECIDED_BELOW_DELTA_CHI_SQUARE]
    above_own_best = np.min([profile[a] - per_attitude[a] for a in kept], axis=0)
    thickness, (low_km, high_km) = best["thickness_km"], search.range_km
    fraction = sample_sigma_fraction(sample.delay_interval_s_per_100km)
    sigma_km = None if fraction is None or "thickness" in search.fixed else thickness * fraction
    out = {"sample_sigma_km": sigma_km}
    for name, delta, z in (("68", DELTA_CHI_SQUARE_68, 1.0), ("95", DELTA_CHI_SQUARE_95, SAMPLE_INTERVAL_Z)):
        measured = None if "thickness" in search.fixed else _thickness_interval(
            [quads[a] for a in kept], [per_attitude[a] + delta for a in kept], thickness, low_km, high_km)
        combined = measured
        if measured is not None and sigma_km is not None:
            combined = [max(low_km, thickness - np.hypot(thickness - measured[0], z * sigma_km)),
                        min(high_km, thickness + np.hypot(measured[1] - thickness, z * sigma_km))]
        out[name] = {"thickness": None if combined is None else [round(float(v), 3) for v in combined],
                     "measured": None if measured is None else [round(float(v), 3) for v in measured],
                     "azimuth": _axis_interval(trends, above_own_best, delta, best["trend_deg"] % 180.0)}
    return out


def _senses(trends: np.ndarray, chi: np.ndarray, best_l: np.ndarray, k: int) -> tuple[list | None, float | None]:
    """The best trend of each sense of the lineation (this attitude) and their chi-square difference."""
    away = np.abs((trends - trends[k] + 180.0) % 360.0 - 180.0) > 90.0
    if not away.any():
        return None, None
    j = int(np.flatnonzero(away)[np.argmin(chi[away])])
    senses = [{"trend_deg": round(float(trends[i]), 3), "chi_square": round(float(chi[i]), 4),
               "thickness_km": round(float(best_l[i]), 3)} for i in (k, j)]
    return senses, float(chi[j] - chi[k])


def _poor_fit_reasons(edge: bool, reduced: float | None, range_km: tuple[float, float]) -> list[str]:
    reasons = []
    if edge:
        reasons.append(f"best thickness at the edge of the searched range ({range_km[0]:.0f}-{range_km[1]:.0f} km): "
                       "this fabric cannot explain the measurements well")
    if reduced is not None and reduced > POOR_FIT_REDUCED_CHI_SQUARE:
        reasons.append(f"reduced chi-square {reduced:.2f} above {POOR_FIT_REDUCED_CHI_SQUARE:g}: the residuals are "
                       "larger than the measurement errors allow")
    return reasons


def _check_fit_arguments(sample: SampleTensor, data: pd.DataFrame, fixed: set[str], azimuth_step_deg: float,
                         thicknesses_km) -> None:
    unknown = set(fixed) - FIXABLE
    if unknown:
        raise ValueError(f"fixed takes {', '.join(sorted(FIXABLE))}, not {', '.join(sorted(unknown))}")
    if fixed and not sample.field:
        raise ValueError(f"fixing {', '.join(sorted(fixed))} needs the sample's own field settings; "
                         f"{sample.name} has none")
    missing = [c for c in (*REQUIRED, "incidence_deg", "fast_azimuth_err_deg", "delay_err_s", "null")
               if c not in data.columns]
    if missing:
        raise ValueError(f"data lacks the column(s) {', '.join(missing)} (read it with read_measurements)")
    if len(data) == 0:
        raise ValueError("data holds no measurements")
    step = splitting.check_positive(azimuth_step_deg, "azimuth_step_deg")
    if step > 90.0:
        raise ValueError(f"azimuth_step_deg must be at most 90 degrees, got {step:g}")
    if thicknesses_km is not None:
        thick = np.atleast_1d(np.asarray(thicknesses_km, float))
        if thick.ndim != 1 or len(thick) == 0 or not np.all(np.isfinite(thick)) or np.any(thick <= 0):
            raise ValueError(f"thicknesses_km must be a non-empty list of positive km, got {thicknesses_km!r}")


def fit_station(sample: SampleTensor, data: pd.DataFrame, fixed: set[str], azimuth_step_deg: float = 2.0,
                thicknesses_km: np.ndarray | None = None) -> tuple[dict, dict]:
    """Fit one station: best model, chi-square, 68 % and 95 % profile intervals, verdicts, poor-fit flags.

    Parameters
    ----------
    sample : SampleTensor
        The sample's stiffness (structural frame), density and own field settings.
    data : pandas.DataFrame
        N measurements of one station, with the columns ``read_measurements`` returns
        (``baz_deg``, ``incidence_deg``, ``fast_azimuth_deg``, ``delay_s``, their errors, ``null``).
    fixed : set of str
        Parameters held at the sample's own field settings: any of ``thickness``, ``azimuth``,
        ``foliation`` (the sample must then have field settings).
    azimuth_step_deg : float
        Spacing of the coarse lineation trends, degrees, positive and at most 90 (default 2).
    thicknesses_km : numpy.ndarray, optional
        Coarse thicknesses, km, positive (default 50 from 10 to 300 km); its range is searched.

    Returns
    -------
    model : dict
        The keys of ``field_fit.json`` (thickness in km, azimuths in degrees, chi-square, intervals,
        verdicts, poor-fit flags; module docstring).
    grid : dict
        The coarse grid: ``chi_square`` and ``misfit`` (chi-square / N), arrays (attitudes, trends,
        thicknesses); ``attitudes`` (list), ``azimuths`` (trends, deg), ``thicknesses`` (km) and
        ``best_chi_square``.

    Raises
    ------
    ValueError
        An unknown name in ``fixed``, no measurements, missing columns, a step or thickness that is
        not positive, or ``fixed`` without the sample's own field settings.

    References
    ----------
    Press, W. H. et al. (2007). Numerical Recipes, 3rd ed., section 15.6 (confidence limits from
    delta chi-square; common practice).
    """
    _check_fit_arguments(sample, data, fixed, azimuth_step_deg, thicknesses_km)
    search = _search_space(sample, fixed, azimuth_step_deg, thicknesses_km)
    obs = _Observed.of(data)
    chi_grid, coarse_profile = _coarse_grid(sample, search, obs)
    trends = search.azimuths_deg
    if "azimuth" not in fixed:
        trends = _fine_trends(trends, coarse_profile, azimuth_step_deg)
    quads = [_Quadratic.of(*predict_turned(search.base[a], sample.density_kg_m3, trends, obs.baz, obs.incidence), obs)
             for a in search.attitudes]
    best_l = np.array([q.best(*search.range_km)[0] for q in quads])       # (attitudes, trends)
    profile = np.array([q.best(*search.range_km)[1] for q in quads])
    i_att, k = np.unravel_index(np.argmin(profile), profile.shape)
    best = {"chi_square": float(profile[i_att, k]), "trend_deg": float(trends[k]),
            "thickness_km": float(best_l[i_att, k])}
    intervals = _intervals(quads, trends, profile, best, search, sample)
    per_attitude = np.sort(profile.min(axis=1))
    foliation_delta = float(per_attitude[1] - per_attitude[0]) if len(per_attitude) > 1 else None
    senses, sense_delta = _senses(trends, profile[i_att], best_l[i_att], int(k))

    dof = obs.n_terms - (("thickness" not in fixed) + ("azimuth" not in fixed))
    reduced = best["chi_square"] / dof if dof > 0 else None
    low_km, high_km = search.range_km
    edge = bool("thickness" not in fixed and high_km > low_km and
                (best["thickness_km"] <= low_km + 1e-9 or best["thickness_km"] >= high_km - 1e-9))
    reasons = _poor_fit_reasons(edge, reduced, search.range_km)
    thickness_68 = intervals["68"]["thickness"]
    result = {
        "thickness_km": round(best["thickness_km"], 3),
        "lineation_azimuth_deg": round(best["trend_deg"] % 180.0, 3),
        "lineation_trend_deg": round(best["trend_deg"], 3),
        "foliation": search.attitudes[i_att],
        "misfit": best["chi_square"] / len(data),
        "chi_square": best["chi_square"],
        "degrees_of_freedom": int(dof),
        "reduced_chi_square": reduced,
        "n_measurements": int(len(data)),
        "thickness_interval_km": thickness_68,
        "thickness_interval_95_km": intervals["95"]["thickness"],
        "thickness_interval_measurements_only_km": intervals["68"]["measured"],
        "thickness_sample_sigma_km": None if intervals["sample_sigma_km"] is None
        else round(float(intervals["sample_sigma_km"]), 3),
        "thickness_interval_open": bool(thickness_68 is not None and high_km > low_km and
                                        (thickness_68[0] <= low_km or thickness_68[1] >= high_km)),
        "searched_thickness_km": [low_km, high_km],
        "lineation_azimuth_interval_deg": intervals["68"]["azimuth"],
        "lineation_azimuth_interval_95_deg": intervals["95"]["azimuth"],
        "lineation_senses": senses,
        "sense_chi_square_difference": sense_delta,
        "sense_verdict": _verdict(sense_delta),
        "foliation_chi_square_difference": foliation_delta,
        "foliation_verdict": _verdict(foliation_delta),
        "fixed": sorted(fixed),
        "edge_of_range": edge,
        "poor_fit": bool(reasons),
        "poor_fit_reasons": reasons,
    }
    if reasons:
        result["warning"] = "; ".join(reasons)
    grid = {"misfit": chi_grid / len(data), "chi_square": chi_grid, "best_chi_square": best["chi_square"],
            "azimuths": search.azimuths_deg, "thicknesses": search.thicknesses_km, "attitudes": search.attitudes}
    return result, grid


def model_tensor(sample: SampleTensor, model: dict) -> np.ndarray:
    """The sample's stiffness (6, 6, GPa) placed as a fitted model places it, north-east-down."""
    field = attitude_field(model["foliation"], model.get("lineation_trend_deg", model["lineation_azimuth_deg"]))
    return splitting.to_geographic(sample.stiffness, splitting.placement(field))


def predictions_table(sample: SampleTensor, data: pd.DataFrame, model: dict) -> pd.DataFrame:
    """Observed and predicted splitting with residuals, one row per measurement (predictions.csv)."""
    fast, per_km = predict_many([model_tensor(sample, model)], sample.density_kg_m3, data["baz_deg"].to_numpy(float),
                                data["incidence_deg"].to_numpy(float))
    pred_delay = per_km[0] * model["thickness_km"]
    return pd.DataFrame({
        "sample": sample.name, "station": data["station"].to_numpy(), "baz_deg": data["baz_deg"].to_numpy(),
        "incidence_deg": data["incidence_deg"].to_numpy(), "null": data["null"].to_numpy(),
        "observed_fast_azimuth_deg": data["fast_azimuth_deg"].to_numpy(),
        "predicted_fast_azimuth_deg": fast[0].round(3),
        "fast_azimuth_residual_deg": splitting.axial_difference(data["fast_azimuth_deg"].to_numpy(), fast[0]).round(3),
        "observed_delay_s": data["delay_s"].to_numpy(), "predicted_delay_s": pred_delay.round(4),
        "delay_residual_s": (data["delay_s"].to_numpy() - pred_delay).round(4),
    })


@dataclass
class StationFit:
    """One sample fitted to one station: every number, table and curve its outputs show.

    ``measurements``: the station's rows (``read_measurements`` columns); ``model`` and ``grid``:
    what ``fit_station`` returns; ``predictions``: ``predictions_table`` rows; the curve: the
    best model's fast azimuth (deg) and delay (s) at SKS incidence for back-azimuths every
    ``CURVE_STEP_DEG`` (arrays (B,)).
    """

    sample: str
    station: str
    measurements: pd.DataFrame
    model: dict
    grid: dict
    predictions: pd.DataFrame
    curve_back_azimuth_deg: np.ndarray
    curve_fast_azimuth_deg: np.ndarray
    curve_delay_s: np.ndarray

    @property
    def file_stem(self) -> str:
        """``<sample>_<station>`` with every character but letters, digits, - and _ replaced by _."""
        return "".join(ch if ch.isalnum() or ch in "-_" else "_" for ch in f"{self.sample}_{self.station}")


@dataclass
class FieldFit:
    """Every sample fitted to every station (``fit_field``), in the order samples x sorted stations."""

    measurements_file: str
    stations: list[StationFit]

    @property
    def fits(self) -> dict[str, dict[str, dict]]:
        """The models by sample and station (``fits`` of field_fit.json)."""
        out: dict[str, dict[str, dict]] = {}
        for one in self.stations:
            out.setdefault(one.sample, {})[one.station] = one.model
        return out

    @property
    def predictions(self) -> pd.DataFrame:
        """Every station's predictions table, one after the other (predictions.csv)."""
        return pd.concat([one.predictions for one in self.stations], ignore_index=True)

    @property
    def poor_fits(self) -> list[str]:
        """One line per poor fit: sample, station and the reasons."""
        return [f"{name} at {station}: {fit['warning']}" for name, stations in self.fits.items()
                for station, fit in stations.items() if fit["poor_fit"]]

    @property
    def cautions(self) -> list[str]:
        """What a user must be told: the assumptions of the prediction, then every poor fit."""
        return [CAUTIONS, *(f"poor fit: {poor}" for poor in self.poor_fits)]

    def record(self) -> dict:
        """The content of field_fit.json."""
        return {"fits": self.fits, "measurements": self.measurements_file,
                "chi_square_definition": CHI_SQUARE_DEFINITION, "interval_definition": INTERVAL_DEFINITION,
                "thresholds": THRESHOLDS, "poor_fits": self.poor_fits, "cautions": CAUTIONS}


def fit_field(samples: list[SampleTensor], data: pd.DataFrame, fixed: set[str] | None = None,
              measurements_file: str = "") -> FieldFit:
    """Fit every sample to every station's measurements (``fit_station``) and predict the curves.

    Parameters
    ----------
    samples : list of SampleTensor
        The samples (``read_result``), at least one.
    data : pandas.DataFrame
        All measurements (``read_measurements``), grouped here by ``station`` (sorted).
    fixed : set of str, optional
        Parameters held at each sample's own field settings (``fit_station``).
    measurements_file : str
        Where the measurements came from, for the record.

    Returns
    -------
    FieldFit
        One ``StationFit`` per sample and station, samples in the order given.

    Raises
    ------
    ValueError
        No samples, or what ``fit_station`` refuses.
    """
    fixed = set(fixed or ())
    if not samples:
        raise ValueError("fit_field needs at least one sample")
    stations = []
    for sample in samples:
        for station, rows in data.groupby("station", sort=True):
            model, grid = fit_station(sample, rows, fixed)
            baz = np.arange(0.0, 360.0, CURVE_STEP_DEG)
            fast, per_km = predict_many([model_tensor(sample, model)], sample.density_kg_m3, baz,
                                        np.full_like(baz, splitting.SKS_INCIDENCE_DEG))
            stations.append(StationFit(sample.name, station, rows, model, grid, predictions_table(sample, rows, model),
                                       baz, fast[0], per_km[0] * model["thickness_km"]))
    return FieldFit(str(measurements_file), stations)
