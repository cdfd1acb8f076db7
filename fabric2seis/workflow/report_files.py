"""Files gathered for the workflow report (``snakemake --report``): a sample's figures and small
tables, and those of the field comparison.

Kept apart from ``suite`` so that the workflow's gathering jobs import only pandas (a second,
not three, per job).
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path
from typing import Any

import pandas as pd

from fabric2seis.workflow.status import read_status

# What of a sample's results goes into the workflow report: its figures (PNG) and small tables.
# velocities.csv and grains.csv stay in results/<sample>/: they would make the report tens of MB.
REPORT_FIGURES = ("pole_figures", "inverse_pole_figures", "fabric_convergence", "velocities",
                  "splitting_vs_backazimuth")
REPORT_TABLES = ("splitting_vs_backazimuth",)


def key_numbers(summary: dict) -> pd.DataFrame:
    """Build a short table of one sample's main numbers: quantity, value, 95 % interval, unit.

    Parameters
    ----------
    summary : dict
        The sample's ``summary.json``.

    Returns
    -------
    pandas.DataFrame
        Columns quantity, value, low, high, unit (km/s, %, s, degrees, kg/m^3 or none); the first
        row is the status, the last ones the cautions.

    Raises
    ------
    KeyError
        If the summary lacks a key every summary has.
    """
    interval = summary.get("uncertainty") or {}
    rows: list[tuple[str, Any, Any, str]] = [
        ("points", summary["n_points"], None, ""), ("grains", summary["n_grains"], None, ""),
            ("density", summary["density_kg_m3"], None, "kg/m^3")]
    for mineral, phase in summary["phases"].items():
        rows += [(f"{mineral} fraction", phase["fraction"], None, ""),
                 (f"{mineral} J-index", phase["J"], f"{mineral}.J", ""),
                 (f"{mineral} M-index", phase["M"], f"{mineral}.M", "")]
        rows += [(f"{mineral} pfJ {pole}", value, None, "") for pole, value in phase["pfJ"].items()]
        floor = phase.get("random_floor")
        if floor:       # random sets of as many grains: mean and 95 % range
            rows += [(f"{mineral} J-index of random grains", floor["J"], floor["J_95"], ""),
                     (f"{mineral} M-index of random grains", floor["M"], floor["M_95"], ""),
                     (f"{mineral} indistinguishable from random", phase["indistinguishable_from_random"], None, "")]
    seis = summary["seismic"]
    rows += [(f"Vp max ({seis['average']})", seis["vp_max_km_s"], "vp_max_km_s", "km/s"),
             ("Vp min", seis["vp_min_km_s"], None, "km/s"),
             ("AVp", seis["avp_pct"], "avp_pct", "%"),
             ("AVs max", seis["avs_max_pct"], "avs_max_pct", "%"),
             ("Vs1 max", seis["vs1_max_km_s"], None, "km/s"),
             ("Vs2 min", seis["vs2_min_km_s"], None, "km/s")]
    aggregate_floor = interval.get("random_aggregate")
    if aggregate_floor:
        rows += [("AVp of random aggregates", aggregate_floor["avp_pct"], aggregate_floor["avp_pct_95"], "%"),
                 ("AVs max of random aggregates", aggregate_floor["avs_max_pct"],
                  aggregate_floor["avs_max_pct_95"], "%")]
    along_z = summary["splitting"]["along_z"]
    rows += [("fast polarisation along Z, from X", along_z["fast_polarisation_from_x_deg"], None, "deg"),
             ("delay along Z per 100 km", along_z["delay_s_per_100km"], "delay_s_per_100km", "s")]
    field = summary["splitting"].get("field")
    if field:
        rows += [("fast azimuth in the ground", field["fast_azimuth_deg"], None, "deg from north"),
                 ("delay in the ground", field["delay_s"], None, "s"),
                 ("layer thickness", field["layer_thickness_km"], None, "km")]
    rows += [("caution", note, None, "") for note in summary.get("cautions", [])]
    table = [{"quantity": "status", "value": "ok", "low": None, "high": None, "unit": ""}]
    for quantity, value, key, unit in rows:
        if isinstance(key, list):                     # a range given with the row itself
            low, high = key
        else:
            low, high = interval.get(key, (None, None)) if key else (None, None)
        table.append({"quantity": quantity, "value": value, "low": low, "high": high, "unit": unit})
    return pd.DataFrame(table)


def gather_report_files(status_file: str | Path, out_dir: str | Path) -> list[Path]:
    """Copy one sample's figures and small tables into ``out_dir`` for the workflow report.

    Always writes ``key_numbers.csv``: the sample's main numbers, or for a sample that failed one
    row with its error, so a bad sample shows in the report without stopping it.

    Parameters
    ----------
    status_file : str or Path
        The workflow's status file of the sample (``status.read_status``).
    out_dir : str or Path
        Folder to copy into (created if missing).

    Returns
    -------
    list of Path
        The files written.
    """
    status = read_status(status_file)
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    written = [out / "key_numbers.csv"]
    if not status.ok or status.folder is None:
        pd.DataFrame([{"quantity": "status", "value": status.status}]).to_csv(written[0], index=False)
        return written
    results = status.folder
    key_numbers(json.loads((results / "summary.json").read_text())).to_csv(written[0], index=False)
    for name in REPORT_FIGURES:
        if (results / f"{name}.png").is_file():         # the splitting figure needs field settings
            written.append(Path(shutil.copyfile(results / f"{name}.png", out / f"{name}.png")))
    for name in REPORT_TABLES:
        if (results / f"{name}.csv").is_file():
            written.append(Path(shutil.copyfile(results / f"{name}.csv", out / f"{name}.csv")))
    return written


def gather_field_report_files(field_dir: str | Path, out_dir: str | Path) -> list[Path]:
    """Copy the field comparison's figures (PNG) and ``predictions.csv`` into ``out_dir``.

    ``field_fit.json`` itself is reported from the field folder, so it is not copied.

    Parameters
    ----------
    field_dir : str or Path
        The field comparison's results folder.
    out_dir : str or Path
        Folder to copy into (created if missing).

    Returns
    -------
    list of Path
        The files written.
    """
    field_dir, out = Path(field_dir), Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    sources = sorted(field_dir.glob("*.png")) + [field_dir / "predictions.csv"]
    return [Path(shutil.copyfile(f, out / f.name)) for f in sources if f.is_file()]


#: what of a sample's optics results goes into the workflow report (figures, PNG) besides its table
OPTICS_REPORT_FIGURES = ("crossed_polars", "crossed_polars_plate", "retardation_map", "interference_chart")


def gather_optics_report_files(status_file: str | Path, out_dir: str | Path) -> list[Path]:
    """Copy one sample's optics figures and ``birefringence.csv`` into ``out_dir`` for the workflow report.

    Always writes ``optics_status.csv`` (``ok`` or the error that stopped the sample's optics), so
    a sample whose optics failed shows in the report without stopping it.

    Parameters
    ----------
    status_file : str or Path
        The workflow's optics status file of the sample (``status.read_status``).
    out_dir : str or Path
        Folder to copy into (created if missing).

    Returns
    -------
    list of Path
        The files written.
    """
    status = read_status(status_file)
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    written = [out / "optics_status.csv"]
    row: dict[str, Any] = {"sample": status.sample, "status": status.status}
    if status.ok and status.summary is not None:
        summary = json.loads(Path(status.summary).read_text())
        row.update({"thickness_um": summary["thickness_um"], "view": summary["view"]["setting"],
                    "images": summary["images"]})
        results = Path(status.summary).parent
        for name in OPTICS_REPORT_FIGURES:
            if (results / f"{name}.png").is_file():       # no images for a grain list
                written.append(Path(shutil.copyfile(results / f"{name}.png", out / f"{name}.png")))
        written.append(Path(shutil.copyfile(results / "birefringence.csv", out / "birefringence.csv")))
    pd.DataFrame([row]).to_csv(written[0], index=False)
    return written
