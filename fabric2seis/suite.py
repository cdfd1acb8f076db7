"""A suite of samples: discovery in a folder and the one-row-per-sample summary table."""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd

from fabric2seis.io import is_supported
from fabric2seis.pipeline import sample_name


def is_measurements_file(path: Path) -> bool:
    """A CSV whose header names the columns of field measurements (station, baz_deg ...)."""
    if path.suffix.lower() != ".csv":
        return False
    try:
        with path.open("r", errors="replace") as f:
            header = {c.strip() for c in f.readline().split(",")}
    except OSError:
        return False
    return {"station", "baz_deg"} <= header


def discover_measurements(folder: str | Path) -> list[Path]:
    folder = Path(folder)
    return sorted(p for p in folder.iterdir() if p.is_file() and is_measurements_file(p)) if folder.is_dir() else []


def discover_samples(folder: str | Path) -> dict[str, Path]:
    """Every supported EBSD export in ``folder`` (not recursive), by sample name.

    CSV files of field measurements (a header with ``station`` and ``baz_deg``) are not samples.
    """
    folder = Path(folder)
    found: dict[str, Path] = {}
    for path in sorted(folder.iterdir()) if folder.is_dir() else []:
        if (path.is_file() and is_supported(path) and not path.name.startswith(".")
                and not is_measurements_file(path)):
            name = sample_name(path)
            if name in found:
                raise ValueError(f"two files in {folder} give the sample name '{name}': "
                                 f"{found[name].name} and {path.name}")
            found[name] = path
    return found


def flatten(data: dict, prefix: str = "") -> dict:
    """Scalar entries of a nested mapping, keys joined with dots."""
    out = {}
    for key, value in data.items():
        name = f"{prefix}{key}"
        if isinstance(value, dict):
            out.update(flatten(value, name + "."))
        elif isinstance(value, list) and prefix.startswith("uncertainty") and len(value) == 2:
            out[f"{name}.low"], out[f"{name}.high"] = value      # a 95 % interval
        elif not isinstance(value, list):
            out[name] = value
    return out


def suite_table(summary_files: list[str | Path]) -> pd.DataFrame:
    """One row per sample: the scalar keys of each summary.json and a status column."""
    rows = []
    for f in summary_files:
        summary = json.loads(Path(f).read_text())
        rows.append({"sample": summary["sample"], "status": summary.get("status", "ok"), **flatten(summary)})
    return pd.DataFrame(rows)


def suite_table_from_status(status_files: list[str | Path]) -> pd.DataFrame:
    """The suite table from the workflow's per-sample status files (failed samples keep a row)."""
    rows = []
    for f in status_files:
        status = json.loads(Path(f).read_text())
        if status["status"] == "ok":
            summary = json.loads(Path(status["summary"]).read_text())
            rows.append({"sample": summary["sample"], "status": "ok", **flatten(summary)})
        else:
            rows.append({"sample": status["sample"], "status": status["status"]})
    return pd.DataFrame(rows)


# What of a sample's results goes into the workflow report: its figures (PNG) and small tables.
# velocities.csv and grains.csv stay in results/<sample>/: they would make the report tens of MB.
REPORT_FIGURES = ("pole_figures", "inverse_pole_figures", "fabric_convergence", "velocities",
                  "splitting_vs_backazimuth")
REPORT_TABLES = ("splitting_vs_backazimuth",)


def key_numbers(summary: dict) -> pd.DataFrame:
    """A short table of one sample's main numbers: quantity, value, 95 % interval, unit."""
    interval = summary.get("uncertainty") or {}
    rows = [("points", summary["n_points"], None, ""), ("grains", summary["n_grains"], None, ""),
            ("density", summary["density_kg_m3"], None, "kg/m^3")]
    for mineral, phase in summary["phases"].items():
        rows += [(f"{mineral} fraction", phase["fraction"], None, ""),
                 (f"{mineral} J-index", phase["J"], f"{mineral}.J", ""),
                 (f"{mineral} M-index", phase["M"], f"{mineral}.M", "")]
        rows += [(f"{mineral} pfJ {pole}", value, None, "") for pole, value in phase["pfJ"].items()]
    seis = summary["seismic"]
    rows += [(f"Vp max ({seis['average']})", seis["vp_max_km_s"], "vp_max_km_s", "km/s"),
             ("Vp min", seis["vp_min_km_s"], None, "km/s"),
             ("AVp", seis["avp_pct"], "avp_pct", "%"),
             ("AVs max", seis["avs_max_pct"], "avs_max_pct", "%"),
             ("Vs1 max", seis["vs1_max_km_s"], None, "km/s"),
             ("Vs2 min", seis["vs2_min_km_s"], None, "km/s")]
    along_z = summary["splitting"]["along_z"]
    rows += [("fast polarisation along Z, from X", along_z["fast_polarisation_from_x_deg"], None, "deg"),
             ("delay along Z per 100 km", along_z["delay_s_per_100km"], "delay_s_per_100km", "s")]
    field = summary["splitting"].get("field")
    if field:
        rows += [("fast azimuth in the ground", field["fast_azimuth_deg"], None, "deg from north"),
                 ("delay in the ground", field["delay_s"], None, "s"),
                 ("layer thickness", field["layer_thickness_km"], None, "km")]
    table = [{"quantity": "status", "value": "ok", "low": None, "high": None, "unit": ""}]
    for quantity, value, key, unit in rows:
        low, high = interval.get(key, (None, None)) if key else (None, None)
        table.append({"quantity": quantity, "value": value, "low": low, "high": high, "unit": unit})
    return pd.DataFrame(table)


def gather_report_files(status_file: str | Path, out_dir: str | Path) -> list[Path]:
    """Copy one sample's figures and small tables into ``out_dir`` for the workflow report.

    Always writes ``key_numbers.csv``: the sample's main numbers, or for a sample that failed one
    row with its error, so a bad sample shows in the report without stopping it.
    """
    import shutil

    status = json.loads(Path(status_file).read_text())
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    written = [out / "key_numbers.csv"]
    if status["status"] != "ok":
        pd.DataFrame([{"quantity": "status", "value": status["status"]}]).to_csv(written[0], index=False)
        return written
    results = Path(status["summary"]).parent
    key_numbers(json.loads(Path(status["summary"]).read_text())).to_csv(written[0], index=False)
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
    """
    import shutil

    field_dir, out = Path(field_dir), Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    sources = sorted(field_dir.glob("*.png")) + [field_dir / "predictions.csv"]
    return [Path(shutil.copyfile(f, out / f.name)) for f in sources if f.is_file()]
