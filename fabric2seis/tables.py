"""Tables people open in a spreadsheet: the suite's short and long tables, and tensors as plain text.

``suite_table`` gives one row per sample with a fixed set of headline columns, units in the headers;
``suite_long`` gives one row per number (sample, phase, quantity, value, low, high, unit), for
filtering and pivoting. Both read the samples' summaries (``summary.json`` as loaded) and keep a
row for a sample that failed in the short table; ``write_suite_tables`` writes both
(``suite_table.csv``, ``suite_long.csv``). ``write_tensor_texts`` writes each average's 6x6
stiffness as plain text that ``numpy.loadtxt`` or a spreadsheet reads, with a header of ``#`` lines.
Nothing here computes physics: every number is read from what the sample wrote.
"""

from __future__ import annotations

import csv
import math
import os
from pathlib import Path

import numpy as np
import pandas as pd

#: the averages of stiffness.json, in the order of CONVENTIONS.md
AVERAGES = ("voigt", "reuss", "hill", "geometric")
#: Voigt index order of the rows and columns of a 6x6 stiffness (CONVENTIONS.md)
VOIGT_ORDER = "11 22 33 23 13 12"
#: printed decimals of the text tensors: stiffness.json holds GPa rounded to 1e-6
TENSOR_DECIMALS = 6

#: the short table's columns, always all of them, in this order; units in brackets
SUITE_COLUMNS = (
    "sample", "status", "n_grains", "main phase", "main phase fraction (0-1)", "density (kg m^-3)",
    "J main phase", "J 95% low", "J 95% high", "M main phase", "M 95% low", "M 95% high",
    "tensor average", "Vp max (km/s)", "AVp (%)", "max AVs (%)", "delay along Z (s/100 km)",
    "fast polarisation along Z (deg from X)", "field delay (s)", "field fast azimuth (deg from N)",
)
#: text columns of the short table; n_grains is an integer (pandas Int64); the others are floats
TEXT_COLUMNS = ("sample", "status", "main phase", "tensor average")
INTEGER_COLUMNS = ("n_grains",)
#: the long table's columns
LONG_COLUMNS = ("sample", "phase", "quantity", "value", "low", "high", "unit")

NUMBER, COUNT, FRACTION, YES_NO = "dimensionless", "count", "0 to 1", "1 yes, 0 no"

# Whole-rock rows of the long table: (path in summary.json, quantity, unit, path of its interval or None).
# Bootstrap intervals sit under "uncertainty"; the random floors carry their 95 % range beside them.
_AXES = [(("seismic", "along_axes", axis, key), f"{name} along {axis}", unit)
         for axis in "XYZ" for key, name, unit in (("vp_km_s", "Vp", "km/s"), ("vs1_km_s", "Vs1", "km/s"),
                                                   ("vs2_km_s", "Vs2", "km/s"), ("avs_pct", "AVs", "%"))]
_SYMMETRY = [(("seismic", "decomposition", "percent", part), f"{part} part", "% of squared norm")
             for part in ("isotropic", "hexagonal", "tetragonal", "orthorhombic", "monoclinic", "triclinic")]
_THOMSEN = ([(("seismic", "decomposition", "thomsen", key), f"Thomsen {key}", NUMBER)
             for key in ("epsilon", "gamma", "delta")]
            + [(("seismic", "decomposition", "thomsen", "vp0_km_s"), "Thomsen Vp0", "km/s"),
               (("seismic", "decomposition", "thomsen", "vs0_km_s"), "Thomsen Vs0", "km/s")]
            + [(("seismic", "decomposition", "thomsen", "c_ti_axis_frame_gpa", c),
                f"{c.upper()} of the hexagonal approximation (its axis frame)", "GPa")
               for c in ("c11", "c33", "c44", "c66", "c13")])
_FLOOR = ("uncertainty", "random_aggregate")
WHOLE_ROCK: list[tuple[tuple[str, ...], str, str, tuple[str, ...] | None]] = [
    (("n_points",), "points", COUNT, None),
    (("n_grains",), "grains", COUNT, None),
    (("dropped", "points_read"), "points read", COUNT, None),
    (("dropped", "unindexed_points"), "points not indexed", COUNT, None),
    (("dropped", "low_quality_points"), "points below the quality threshold", COUNT, None),
    (("dropped", "small_grain_points"), "points of grains below the size limit", COUNT, None),
    (("density_kg_m3",), "density", "kg m^-3", None),
    (("conditions", "pressure_gpa"), "pressure", "GPa", None),
    (("conditions", "temperature_c"), "temperature", "degC", None),
    (("seismic", "vp_max_km_s"), "Vp max", "km/s", ("uncertainty", "vp_max_km_s")),
    (("seismic", "vp_min_km_s"), "Vp min", "km/s", None),
    (("seismic", "avp_pct"), "AVp", "%", ("uncertainty", "avp_pct")),
    (("seismic", "avs_max_pct"), "AVs max", "%", ("uncertainty", "avs_max_pct")),
    (("seismic", "avs_min_pct"), "AVs min", "%", None),
    (("seismic", "vs1_max_km_s"), "Vs1 max", "km/s", None),
    (("seismic", "vs1_min_km_s"), "Vs1 min", "km/s", None),
    (("seismic", "vs2_max_km_s"), "Vs2 max", "km/s", None),
    (("seismic", "vs2_min_km_s"), "Vs2 min", "km/s", None),
    (("seismic", "dvs_max_km_s"), "dVs max", "km/s", None),
    (("seismic", "direction_grid_step_deg"), "direction grid step", "deg", None),
    *[(path, name, unit, None) for path, name, unit in _AXES + _SYMMETRY + _THOMSEN],
    (("splitting", "along_z", "fast_polarisation_from_x_deg"), "fast polarisation along Z", "deg from X", None),
    (("splitting", "along_z", "delay_s_per_100km"), "delay along Z", "s/100 km", ("uncertainty", "delay_s_per_100km")),
    (("splitting", "field", "fast_azimuth_deg"), "field fast azimuth", "deg from N", None),
    (("splitting", "field", "delay_s"), "field delay", "s", None),
    (("splitting", "field", "layer_thickness_km"), "field layer thickness", "km", None),
    (("splitting", "field", "incidence_deg"), "field incidence", "deg", None),
    (("splitting", "field", "lineation_trend_deg"), "field lineation trend", "deg from N", None),
    (("splitting", "field", "lineation_plunge_deg"), "field lineation plunge", "deg", None),
    ((*_FLOOR, "avp_pct"), "AVp of random aggregates", "%", (*_FLOOR, "avp_pct_95")),
    ((*_FLOOR, "avs_max_pct"), "AVs max of random aggregates", "%", (*_FLOOR, "avs_max_pct_95")),
    ((*_FLOOR, "anisotropy_indistinguishable_from_random"), "anisotropy indistinguishable from random",
     YES_NO, None),
    ((*_FLOOR, "random_sets"), "random aggregates", COUNT, None),
    (("uncertainty", "resamples"), "bootstrap resamples", COUNT, None),
]

# Rows of each phase: (path in the phase's entry of summary.json, quantity, unit); J and M take
# their intervals from "uncertainty" (<phase>.J, <phase>.M), the random floor's from its *_95 range.
PHASE_ROWS = [
    (("fraction",), "fraction", FRACTION), (("measured_fraction",), "measured area fraction", FRACTION),
    (("n",), "grains", COUNT), (("n_points",), "points", COUNT),
    (("J",), "J-index", NUMBER), (("M",), "M-index", NUMBER), (("BA",), "BA-index", NUMBER),
    (("odf_halfwidth_deg",), "ODF halfwidth", "deg"),
    (("indistinguishable_from_random",), "fabric indistinguishable from random", YES_NO),
]
POLE_ROWS = [
    (("pfJ",), "pfJ", NUMBER), (("eigen", 0), "eigenvalue 1", NUMBER), (("eigen", 1), "eigenvalue 2", NUMBER),
    (("eigen", 2), "eigenvalue 3", NUMBER), (("woodcock", "K"), "Woodcock K", NUMBER),
    (("woodcock", "C"), "Woodcock C", NUMBER), (("vollmer", "P"), "Vollmer P", NUMBER),
    (("vollmer", "G"), "Vollmer G", NUMBER), (("vollmer", "R"), "Vollmer R", NUMBER),
    (("max_pole_density_mud",), "maximum pole density", "m.u.d."),
]


def _at(data, path):
    """The entry of nested mappings and lists at ``path``, or None where any step is missing."""
    for step in path:
        try:
            data = data[step]
        except (KeyError, IndexError, TypeError):
            return None
    return data


def _number(value) -> float:
    """A JSON scalar as a float: booleans as 1 and 0, anything else not a number as NaN."""
    if isinstance(value, bool):
        return float(value)
    if isinstance(value, (int, float)):
        return float(value)
    return math.nan


def _bounds(interval) -> tuple[float, float]:
    """An interval [low, high] as two floats, NaN when there is none."""
    if isinstance(interval, (list, tuple)) and len(interval) == 2:
        return _number(interval[0]), _number(interval[1])
    return math.nan, math.nan


def _status(entry: dict) -> str:
    if not isinstance(entry, dict) or not isinstance(entry.get("sample"), str):
        raise ValueError("each summary must be a mapping with a 'sample' name (summary.json as loaded, "
                         "or {'sample': name, 'status': error} for a sample that failed)")
    return str(entry.get("status", "ok"))


def main_phase(summary: dict) -> str | None:
    """The sample's main phase: the bootstrap's (``uncertainty.main_phase``), else the largest fraction.

    Parameters
    ----------
    summary : dict
        A sample's ``summary.json``.

    Returns
    -------
    str or None
        The mineral's name; None if the summary has no phases.
    """
    named = _at(summary, ("uncertainty", "main_phase"))
    phases = summary.get("phases") or {}
    if isinstance(named, str) and named in phases:
        return named
    if not phases:
        return None
    fractions = {name: _number(_at(phases, (name, "fraction"))) for name in phases}
    return max(phases, key=lambda name: -math.inf if math.isnan(fractions[name]) else fractions[name])


def _headline_row(summary: dict) -> dict:
    """The short table's row of a sample that succeeded (columns it lacks stay empty)."""
    main = main_phase(summary) or ""
    phase = (summary.get("phases") or {}).get(main, {})
    j_low, j_high = _bounds(_at(summary, ("uncertainty", f"{main}.J")))
    m_low, m_high = _bounds(_at(summary, ("uncertainty", f"{main}.M")))
    return {
        "n_grains": summary.get("n_grains"), "main phase": main or None,
        "main phase fraction (0-1)": _number(phase.get("fraction")),
        "density (kg m^-3)": _number(summary.get("density_kg_m3")),
        "J main phase": _number(phase.get("J")), "J 95% low": j_low, "J 95% high": j_high,
        "M main phase": _number(phase.get("M")), "M 95% low": m_low, "M 95% high": m_high,
        "tensor average": _at(summary, ("seismic", "average")),
        "Vp max (km/s)": _number(_at(summary, ("seismic", "vp_max_km_s"))),
        "AVp (%)": _number(_at(summary, ("seismic", "avp_pct"))),
        "max AVs (%)": _number(_at(summary, ("seismic", "avs_max_pct"))),
        "delay along Z (s/100 km)": _number(_at(summary, ("splitting", "along_z", "delay_s_per_100km"))),
        "fast polarisation along Z (deg from X)": _number(
            _at(summary, ("splitting", "along_z", "fast_polarisation_from_x_deg"))),
        "field delay (s)": _number(_at(summary, ("splitting", "field", "delay_s"))),
        "field fast azimuth (deg from N)": _number(_at(summary, ("splitting", "field", "fast_azimuth_deg"))),
    }


def suite_table(summaries: list[dict]) -> pd.DataFrame:
    """Build the short suite table: one row per sample, the headline numbers, units in the headers.

    The columns are always :data:`SUITE_COLUMNS`, in that order, whatever the samples hold; a
    number a sample lacks (no field placement, no bootstrap) or a sample that failed leaves its
    cells empty. J and M are the main phase's (:func:`main_phase`) with their 95 % bootstrap
    intervals; the seismic numbers come from the average named in ``tensor average``.

    Parameters
    ----------
    summaries : list of dict
        One per sample, in the suite's order: its ``summary.json`` as loaded, or, for a sample
        that failed, ``{"sample": name, "status": one-line error}`` (:func:`summaries_from_status`).
        A summary's status is its ``status`` key, ``"ok"`` when absent.

    Returns
    -------
    pandas.DataFrame
        One row per sample; ``n_grains`` is a nullable integer (pandas ``Int64``), the text
        columns (:data:`TEXT_COLUMNS`) are objects, the others floats.

    Raises
    ------
    ValueError
        If an entry is not a mapping with a ``sample`` name.
    """
    rows = []
    for entry in summaries:
        status = _status(entry)
        row = {"sample": entry["sample"], "status": status}
        if status == "ok":
            row.update(_headline_row(entry))
        rows.append(row)
    table = pd.DataFrame(rows, columns=list(SUITE_COLUMNS))
    for column in SUITE_COLUMNS:
        if column in INTEGER_COLUMNS:
            table[column] = pd.array([None if pd.isna(v) else int(v) for v in table[column]], dtype="Int64")
        elif column in TEXT_COLUMNS:
            table[column] = table[column].astype(object)
        else:
            table[column] = table[column].astype(float)
    return table


def _long_rows(summary: dict) -> list[tuple]:
    """The long table's rows of one sample that succeeded: whole rock, then each phase."""
    rows = []
    for path, quantity, unit, interval in WHOLE_ROCK:
        value = _at(summary, path)
        if value is not None:
            bounds = _bounds(_at(summary, interval)) if interval else (math.nan, math.nan)
            rows.append(("", quantity, _number(value), *bounds, unit))
    for name, phase in (summary.get("phases") or {}).items():
        intervals = {"J-index": _at(summary, ("uncertainty", f"{name}.J")),
                     "M-index": _at(summary, ("uncertainty", f"{name}.M"))}
        for path, quantity, unit in PHASE_ROWS:
            value = _at(phase, path)
            if value is not None:
                rows.append((name, quantity, _number(value), *_bounds(intervals.get(quantity)), unit))
        for pole in phase.get("pfJ") or {}:
            for (key, *rest), quantity, unit in POLE_ROWS:
                value = _at(phase, (key, pole, *rest))
                if value is not None:
                    rows.append((name, f"{quantity} {pole}", _number(value), math.nan, math.nan, unit))
        floor = phase.get("random_floor") or {}
        for key, quantity in (("J", "J-index"), ("M", "M-index")):
            if floor.get(key) is not None:
                rows.append((name, f"{quantity} random floor", _number(floor[key]), *_bounds(floor.get(f"{key}_95")),
                             NUMBER))
        for pole, value in (floor.get("pfJ") or {}).items():
            rows.append((name, f"pfJ {pole} random floor", _number(value),
                         *_bounds(_at(floor, ("pfJ_95", pole))), NUMBER))
        for key, quantity in (("random_sets", "random sets"), ("simulated_grains", "grains per random set")):
            if floor.get(key) is not None:
                rows.append((name, quantity, _number(floor[key]), math.nan, math.nan, COUNT))
    return rows


def suite_long(summaries: list[dict]) -> pd.DataFrame:
    """Build the long suite table: one row per number of each sample's summary a user may publish.

    Columns :data:`LONG_COLUMNS`. Rows come sample by sample in the order given, each sample's
    in a fixed order: counts, density, conditions, the seismic block (extremes, along X, Y, Z,
    symmetry decomposition, Thomsen parameters), splitting along Z and in the ground, AVp and AVs
    of random aggregates, the bootstrap's resamples (``phase`` empty for these), then each phase
    in the summary's order: fraction, counts, J, M, BA, ODF halfwidth, whether the fabric is
    indistinguishable from random, per pole pfJ, eigenvalues, Woodcock K and C, Vollmer P, G, R
    and the maximum pole density, and the random floors. ``low`` and ``high`` hold the 95 %
    bootstrap interval of J, M, Vp max, AVp, AVs max and the delay along Z, and the 95 % range of
    the random sets on a random-floor row. A basic bootstrap interval (Vp max, AVp, AVs max,
    delay) and the percentile interval of a biased statistic can exclude the value itself; the
    summary names those in ``uncertainty.estimate_outside_interval`` and in its cautions.
    Yes/no numbers are 1 and 0. A quantity the summary lacks (no field placement, BA of a mineral
    other than olivine, no bootstrap) has no row; a sample that failed has no row (the short
    table gives its status). Directions, texts and settings stay in ``summary.json``.

    Parameters
    ----------
    summaries : list of dict
        As for :func:`suite_table`.

    Returns
    -------
    pandas.DataFrame
        ``value``, ``low`` and ``high`` are floats (NaN where empty), the others text.

    Raises
    ------
    ValueError
        If an entry is not a mapping with a ``sample`` name.
    """
    rows = []
    for entry in summaries:
        if _status(entry) == "ok":
            rows += [(entry["sample"], *row) for row in _long_rows(entry)]
    table = pd.DataFrame(rows, columns=list(LONG_COLUMNS))
    for column in ("value", "low", "high"):
        table[column] = table[column].astype(float)
    return table


def summaries_from_status(status_files: list[str | Path]) -> list[dict]:
    """Read the samples' summaries through the workflow's status files, failed samples included.

    Parameters
    ----------
    status_files : list of str or Path
        The workflow's per-sample status files (``workflow.status``), in the suite's order.

    Returns
    -------
    list of dict
        Each sample's ``summary.json`` as loaded, or ``{"sample": name, "status": line}`` for a
        sample that failed, or whose summary is missing.
    """
    import json

    from fabric2seis.workflow.status import read_statuses

    out: list[dict] = []
    for status in read_statuses(status_files):
        if status.ok and Path(str(status.summary)).is_file():
            out.append(json.loads(Path(str(status.summary)).read_text(encoding="utf-8")))
        elif status.ok:
            out.append({"sample": status.sample, "status": f"results missing: no {status.summary}"})
        else:
            out.append({"sample": status.sample, "status": status.status})
    return out


def _cell(value) -> str:
    """One CSV cell: empty for a missing value, integers without a decimal point, floats in full."""
    if value is None or value is pd.NA or (isinstance(value, float) and math.isnan(value)):
        return ""
    if isinstance(value, float):
        return str(int(value)) if value.is_integer() and abs(value) < 2**53 else repr(value)
    return str(value)


def write_csv(table: pd.DataFrame, path: str | Path) -> Path:
    """Write a table as CSV for spreadsheets: no index, empty cells for missing values, whole numbers
    without ``.0``, other floats with every digit they hold (Python's shortest round-trip form).

    The file is written beside ``path`` and renamed into place, so it is whole or absent.

    Parameters
    ----------
    table : pandas.DataFrame
        The table.
    path : str or Path
        The CSV file (UTF-8).

    Returns
    -------
    Path
        ``path``.
    """
    path = Path(path)
    text = table.astype(object).apply(lambda column: column.map(_cell))
    tmp = path.with_name(f".{path.name}.partial-{os.getpid()}")
    try:
        text.to_csv(tmp, index=False, encoding="utf-8")
        os.replace(tmp, path)
    finally:
        tmp.unlink(missing_ok=True)
    return path


def write_suite_tables(summaries: list[dict], results_dir: str | Path) -> tuple[Path, Path]:
    """Write ``suite_table.csv`` (:func:`suite_table`) and ``suite_long.csv`` (:func:`suite_long`).

    Parameters
    ----------
    summaries : list of dict
        As for :func:`suite_table` (e.g. :func:`summaries_from_status`).
    results_dir : str or Path
        The suite's results folder (it must exist).

    Returns
    -------
    tuple of Path
        The two files.
    """
    results_dir = Path(results_dir)
    return (write_csv(suite_table(summaries), results_dir / "suite_table.csv"),
            write_csv(suite_long(summaries), results_dir / "suite_long.csv"))


def tensor_text(matrix, sample: str, average: str, density_kg_m3: float, used_for_velocities: bool = False) -> str:
    """One average's 6x6 stiffness as plain text: ``#`` header lines, then six rows of six numbers.

    Parameters
    ----------
    matrix : array_like, shape (6, 6)
        Voigt stiffness, GPa, structural frame.
    sample : str
        The sample's name.
    average : str
        The average's name (``voigt``, ``reuss``, ``hill`` or ``geometric``).
    density_kg_m3 : float
        The aggregate's density, kg/m^3.
    used_for_velocities : bool
        Whether this average fed the velocities of the sample.

    Returns
    -------
    str
        The file's text; numbers in GPa with :data:`TENSOR_DECIMALS` decimals.

    Raises
    ------
    ValueError
        If ``matrix`` is not 6x6 or holds a non-finite number.
    """
    rows = [[float(x) for x in row] for row in matrix]
    if len(rows) != 6 or any(len(row) != 6 for row in rows) or not all(math.isfinite(x) for row in rows for x in row):
        raise ValueError(f"the {average} stiffness must be 6x6 finite numbers")
    name = " ".join(str(sample).split())       # one line whatever the name holds
    header = [
        f"sample: {name}",
        f"average: {average}" + (" (the one the velocities were computed from)" if used_for_velocities else ""),
        "quantity: elastic stiffness C_ij, Voigt notation",
        f"rows and columns: Voigt index order {VOIGT_ORDER}",
        "units: GPa",
        "frame: structural (X lineation, Y = Z x X, Z foliation normal)",
        f"density: {density_kg_m3:.3f} kg m^-3",
    ]
    body = [" ".join(f"{x:{TENSOR_DECIMALS + 6}.{TENSOR_DECIMALS}f}" for x in row) for row in rows]
    return "".join(f"# {line}\n" for line in header) + "".join(f"{line}\n" for line in body)


def write_tensor_texts(stiffness: dict, out_dir: str | Path, sample: str) -> list[Path]:
    """Write each average's stiffness as ``stiffness_<average>.txt`` (:func:`tensor_text`).

    Parameters
    ----------
    stiffness : dict
        The contents of ``stiffness.json``: a 6x6 list in GPa under each of :data:`AVERAGES`,
        ``density_kg_m3``, and optionally ``used_for_velocities`` (an average's name).
    out_dir : str or Path
        The folder to write into (a sample's results folder as it is being written).
    sample : str
        The sample's name.

    Returns
    -------
    list of Path
        The files, in the order of :data:`AVERAGES`.

    Raises
    ------
    ValueError
        If an average or the density is missing, or a tensor is not 6x6 finite numbers.
    """
    missing = [key for key in (*AVERAGES, "density_kg_m3") if key not in stiffness]
    if missing:
        raise ValueError(f"stiffness lacks {', '.join(missing)}")
    out_dir = Path(out_dir)
    written = []
    for average in AVERAGES:
        path = out_dir / f"stiffness_{average}.txt"
        path.write_text(tensor_text(stiffness[average], sample, average, float(stiffness["density_kg_m3"]),
                                    stiffness.get("used_for_velocities") == average), encoding="utf-8")
        written.append(path)
    return written


def write_number_csv(path: str | Path, columns: dict[str, np.ndarray]) -> None:
    """Write columns of numbers as CSV: the bytes of ``pandas.DataFrame(columns).to_csv(path, index=False)``.

    Numbers are written as Python writes a float (the shortest text that reads back to the same
    float, as pandas does), missing values (NaN) as empty cells, lines ended by ``os.linesep``.
    Unlike pandas, whose text of a float follows numpy's print options (a library that sets
    numpy's 1.13 style makes it 12 digits), the text never depends on the process's settings.
    The csv module does it in about half of pandas' time: ``velocities.csv`` has 20,809 rows of 15
    numbers whatever the sample, written by every run (tests/test_tables.py compares the bytes).

    Parameters
    ----------
    path : str or Path
        The CSV file (UTF-8).
    columns : dict of str to numpy.ndarray
        Column names and their values, all of the same length, as floats.
    """
    cells = []
    for values in columns.values():
        values = np.asarray(values, dtype=float)
        listed = values.tolist()
        if np.isnan(values).any():
            listed = ["" if x != x else x for x in listed]
        cells.append(listed)
    with open(path, "w", newline="", encoding="utf-8") as out:
        writer = csv.writer(out, lineterminator=os.linesep)
        writer.writerow(list(columns))
        writer.writerows(zip(*cells))
