"""Files gathered for the workflow report (``snakemake --report``), and the labels of its entries.

The report has four categories (``fabric2seis/workflow/rules/report.smk``): Suite (the suite table and
figure, and ``suite_overview``: every sample with its status and settings digest), Samples (one
subcategory per sample: its figures and tables, or its error), Field comparison (one
subcategory per station, and one for all stations) and Stacks (one subcategory per stack folder
in the results). Every file gathered here has a stable name, so that an entry's caption and
labels follow from its name alone.

Kept apart from ``suite``. pandas is imported by the functions that build tables, not here: the
Snakefile imports this module for the labels, and a sample's gathering job (``gather_report_files``)
writes its two small tables with the csv module, so that it starts in a fraction of a second.
"""

from __future__ import annotations

import csv
import hashlib
import json
import shutil
from pathlib import Path
from typing import TYPE_CHECKING, Any

from fabric2seis.workflow.status import read_status, read_statuses

if TYPE_CHECKING:
    import pandas as pd

# What of a sample's results goes into the workflow report: its figures (PNG) and small tables.
# velocities.csv and grains.csv stay in results/<sample>/: they would make the report tens of MB.
REPORT_FIGURES = ("map_overview", "pole_figures", "inverse_pole_figures", "fabric_convergence", "velocities",
                  "splitting_vs_backazimuth")
REPORT_TABLES = ("splitting_vs_backazimuth",)


def key_number_rows(summary: dict) -> list[dict[str, Any]]:
    """Build a short table of one sample's main numbers: quantity, value, 95 % interval, unit.

    Parameters
    ----------
    summary : dict
        The sample's ``summary.json``.

    Returns
    -------
    list of dict
        Rows with keys quantity, value, low, high, unit (km/s, %, s, degrees, kg m^-3 or none); the
        first row is the status, the last ones the cautions.

    Raises
    ------
    KeyError
        If the summary lacks a key every summary has.
    """
    interval = summary.get("uncertainty") or {}
    rows: list[tuple[str, Any, Any, str]] = [
        ("points", summary["n_points"], None, ""), ("grains", summary["n_grains"], None, ""),
            ("density", summary["density_kg_m3"], None, "kg m^-3")]
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
    return table


def key_numbers(summary: dict) -> pd.DataFrame:
    """The rows of :func:`key_number_rows` as a table (pandas.DataFrame)."""
    import pandas as pd

    return pd.DataFrame(key_number_rows(summary))


def write_small_table(path: Path, rows: list[dict[str, Any]]) -> Path:
    """Write rows (dicts of the same keys) as CSV: a header, empty cells for None (as pandas writes them)."""
    with path.open("w", newline="", encoding="utf-8") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(rows[0]), lineterminator="\n")
        writer.writeheader()
        writer.writerows(rows)
    return path


def gather_report_files(status_file: str | Path, out_dir: str | Path) -> list[Path]:
    """Copy one sample's figures and small tables into ``out_dir`` for the workflow report.

    A sample that succeeded gets ``key_numbers.csv`` (its main numbers) and its figures; a sample
    that failed gets ``error.csv`` alone (its name, input file and the one-line error), so that it
    has an entry of its own in the report without stopping it.

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
    if not status.ok or status.folder is None:
        error = out / "error.csv"
        return [write_small_table(error, [{"sample": status.sample, "status": "failed", "error": status.status}])]
    results = status.folder
    written = [write_small_table(out / "key_numbers.csv", key_number_rows(json.loads((results / "summary.json")
                                                                                     .read_text())))]
    for name in REPORT_FIGURES:
        if (results / f"{name}.png").is_file():         # the splitting figure needs field settings
            written.append(Path(shutil.copyfile(results / f"{name}.png", out / f"{name}.png")))
    for name in REPORT_TABLES:
        if (results / f"{name}.csv").is_file():
            written.append(Path(shutil.copyfile(results / f"{name}.csv", out / f"{name}.csv")))
    return written


def entry_title(stem: str, table: bool = False) -> str:
    """The name a report entry is listed under: its file's stem in words (``pole_figures`` -> ``pole figures``).

    Parameters
    ----------
    stem : str
        File name without its suffix.
    table : bool
        True for a table: `` (table)`` is added, so that a figure and its table are two entries.

    Returns
    -------
    str
        The stem with underscores as spaces.
    """
    return stem.replace("_", " ") + (" (table)" if table else "")


def sample_entry_labels(sample: str, stem: str, status_file: str | Path, table: bool = False) -> dict[str, str]:
    """Labels of an entry of a sample in the report: what it shows, the sample, and the sample's status.

    Parameters
    ----------
    sample : str
        The sample's name.
    stem : str
        The entry's file name without its suffix.
    status_file : str or Path
        The sample's status file (``status.read_status``).
    table : bool
        True for a table (``entry_title``).

    Returns
    -------
    dict of str to str
        ``content``, ``sample`` and ``status`` (``ok`` or ``failed: <the error>``).
    """
    status = read_status(status_file)
    return {"content": entry_title(stem, table), "sample": sample,
            "status": "ok" if status.ok else f"failed: {status.status}"}


#: keys of the settings that name folders: left out of the settings digest, which says what was computed
FOLDER_KEYS = ("samples_dir", "results_dir")


def settings_digest(settings: dict) -> str:
    """A short digest of settings, the same for the same settings wherever the folders are.

    Parameters
    ----------
    settings : dict
        Settings as used (``provenance.json``) or the workflow's config; ``FOLDER_KEYS`` are left out.

    Returns
    -------
    str
        The first 12 hexadecimal digits of the SHA-256 of the settings as sorted JSON.
    """
    kept = {k: v for k, v in settings.items() if k not in FOLDER_KEYS}
    return hashlib.sha256(json.dumps(kept, sort_keys=True, default=str).encode()).hexdigest()[:12]


def suite_overview(status_files: list[str | Path], config: dict, version: str) -> tuple[pd.DataFrame, dict]:
    """Describe the suite for the report: one row per sample, and the suite's version and settings digest.

    Parameters
    ----------
    status_files : list of str or Path
        The samples' status files, in the order of the suite.
    config : dict
        The workflow's config (the defaults under every sidecar).
    version : str
        The fabric2seis version that ran the workflow.

    Returns
    -------
    table : pandas.DataFrame
        Columns number (as in the suite comparison figure, failed samples last), sample, status
        (``ok`` or ``failed``), error, settings_digest (of the settings the sample ran with; empty
        for a failed sample), points, grains, main_phase.
    about : dict
        ``fabric2seis`` (version), ``settings_digest`` (of the config), ``samples``, ``ok``,
        ``failed`` (counts) and ``failed_samples`` (names).
    """
    import pandas as pd

    rows = []
    for status in read_statuses(status_files):
        row: dict[str, Any] = {"sample": status.sample, "status": "ok" if status.ok else "failed",
                               "error": "" if status.ok else status.status, "settings_digest": "",
                               "points": None, "grains": None, "main_phase": ""}
        if status.ok and status.folder is not None and (status.folder / "summary.json").is_file():
            summary = json.loads((status.folder / "summary.json").read_text())
            provenance = status.folder / "provenance.json"
            if provenance.is_file():
                row["settings_digest"] = settings_digest(json.loads(provenance.read_text())["settings"])
            row.update(points=summary.get("n_points"), grains=summary.get("n_grains"),
                       main_phase=(summary.get("uncertainty") or {}).get("main_phase", ""))
        rows.append(row)
    table = pd.DataFrame(rows, columns=["sample", "status", "error", "settings_digest", "points", "grains",
                                        "main_phase"])
    table[["points", "grains"]] = table[["points", "grains"]].astype("Int64")
    order = table["status"].ne("ok").to_numpy().argsort(kind="stable")
    table = table.iloc[order].reset_index(drop=True)
    table.insert(0, "number", [str(k + 1) if s == "ok" else "" for k, s in enumerate(table["status"])])
    failed = table.loc[table["status"] != "ok", "sample"].tolist()
    about = {"fabric2seis": version, "settings_digest": settings_digest(config), "samples": len(table),
             "ok": len(table) - len(failed), "failed": len(failed), "failed_samples": failed}
    return table, about


def write_suite_overview(status_files: list[str | Path], config: dict, version: str, table_file: str | Path,
                         about_file: str | Path) -> None:
    """Write ``suite_overview`` as a CSV table and a JSON file (the labels of the report's Suite entries).

    Parameters
    ----------
    status_files : list of str or Path
        The samples' status files.
    config : dict
        The workflow's config.
    version : str
        The fabric2seis version.
    table_file, about_file : str or Path
        Where the table and the suite's facts go.
    """
    table, about = suite_overview(status_files, config, version)
    table.to_csv(table_file, index=False)
    Path(about_file).write_text(json.dumps(about, indent=1, sort_keys=True) + "\n")


def suite_labels(stem: str, about_file: str | Path) -> dict[str, str]:
    """Labels of an entry of the Suite category: what it shows, the fabric2seis version and the settings digest.

    Parameters
    ----------
    stem : str
        The entry's file name without its suffix.
    about_file : str or Path
        The suite's facts (``write_suite_overview``).

    Returns
    -------
    dict of str to str
        ``content``, ``fabric2seis`` and ``settings digest``.
    """
    about = json.loads(Path(about_file).read_text())
    return {"content": entry_title(stem, table=True), "fabric2seis": str(about["fabric2seis"]),
            "settings digest": str(about["settings_digest"])}


def folder_name(name: str) -> str:
    """A station's name as a folder name: every character but letters, digits, - and _ replaced by _.

    Parameters
    ----------
    name : str
        The station's name.

    Returns
    -------
    str
        The folder name (also the file-name rule of ``waves.field.StationFit.file_stem``).
    """
    return "".join(ch if ch.isalnum() or ch in "-_" else "_" for ch in name)


def gather_field_report_files(field_dir: str | Path, out_dir: str | Path) -> list[Path]:
    """Sort the field comparison's figures and tables into folders by station for the workflow report.

    ``all/``: the map-view figure of the fast directions and ``fits.csv`` (one row per sample and
    station); ``stations/<station>/``: ``fits.csv`` and ``predictions.csv`` of that station, and per
    sample ``<sample>/splitting.png`` (measured and predicted splitting) and ``<sample>/misfit.png``
    (the misfit surface). ``field_fit.json`` itself is reported from the field folder.

    Parameters
    ----------
    field_dir : str or Path
        The field comparison's results folder (``field_fit.json``, ``predictions.csv``, figures).
    out_dir : str or Path
        Folder to copy into (created if missing).

    Returns
    -------
    list of Path
        The files written.
    """
    import pandas as pd

    field_dir, out = Path(field_dir), Path(out_dir)
    fits = json.loads((field_dir / "field_fit.json").read_text())["fits"]
    (out / "all").mkdir(parents=True, exist_ok=True)
    written = []
    if (field_dir / "fast_directions.png").is_file():
        written.append(Path(shutil.copyfile(field_dir / "fast_directions.png", out / "all" / "fast_directions.png")))
    table = fit_table(fits)
    table.to_csv(out / "all" / "fits.csv", index=False)
    written.append(out / "all" / "fits.csv")
    predictions = pd.read_csv(field_dir / "predictions.csv") if (field_dir / "predictions.csv").is_file() else None
    for station in sorted(table["station"].unique()):
        folder = out / "stations" / folder_name(str(station))
        folder.mkdir(parents=True, exist_ok=True)
        table[table["station"] == station].to_csv(folder / "fits.csv", index=False)
        written.append(folder / "fits.csv")
        if predictions is not None:
            predictions[predictions["station"].astype(str) == str(station)].to_csv(folder / "predictions.csv",
                                                                                  index=False)
            written.append(folder / "predictions.csv")
        for sample in fits:
            stem = folder_name(f"{sample}_{station}")
            for kind in ("splitting", "misfit"):
                source = field_dir / f"{kind}_{stem}.png"
                if source.is_file():
                    (folder / sample).mkdir(exist_ok=True)
                    written.append(Path(shutil.copyfile(source, folder / sample / f"{kind}.png")))
    return written


def fit_table(fits: dict) -> pd.DataFrame:
    """One row per sample and station of the fits of ``field_fit.json``: what a reader checks first.

    Parameters
    ----------
    fits : dict
        ``fits`` of ``field_fit.json`` (models by sample and station).

    Returns
    -------
    pandas.DataFrame
        Columns station, sample, thickness_km with its 68 % interval, lineation_azimuth_deg with
        its 68 % interval, foliation and its verdict, sense_verdict, reduced_chi_square, poor_fit
        and the reasons.
    """
    import pandas as pd

    rows = []
    for sample, stations in fits.items():
        for station, m in stations.items():
            thick = m.get("thickness_interval_km") or [None, None]
            az = m.get("lineation_azimuth_interval_deg") or [None, None]
            rows.append({"station": station, "sample": sample, "thickness_km": m["thickness_km"],
                         "thickness_68_low_km": thick[0], "thickness_68_high_km": thick[1],
                         "lineation_azimuth_deg": m["lineation_azimuth_deg"], "lineation_azimuth_68_from_deg": az[0],
                         "lineation_azimuth_68_to_deg": az[1], "foliation": m["foliation"],
                         "foliation_verdict": m.get("foliation_verdict"), "sense_verdict": m.get("sense_verdict"),
                         "reduced_chi_square": m.get("reduced_chi_square"), "edge_of_range": m.get("edge_of_range"),
                         "poor_fit": m.get("poor_fit"), "poor_fit_reasons": "; ".join(m.get("poor_fit_reasons", []))})
    columns = ["station", "sample", "thickness_km", "thickness_68_low_km", "thickness_68_high_km",
               "lineation_azimuth_deg", "lineation_azimuth_68_from_deg", "lineation_azimuth_68_to_deg", "foliation",
               "foliation_verdict", "sense_verdict", "reduced_chi_square", "edge_of_range", "poor_fit",
               "poor_fit_reasons"]
    return pd.DataFrame(rows, columns=columns).sort_values(["station", "sample"], kind="stable").reset_index(drop=True)


def field_entry_labels(wildcards) -> dict[str, str]:
    """Labels of an entry of the field comparison: what it shows and, for a figure of one fit, the sample.

    Parameters
    ----------
    wildcards : mapping
        The entry's wildcards from the report patterns of rule ``field_report`` (``figure`` or
        ``table``, and ``station`` and ``sample`` where they apply).

    Returns
    -------
    dict of str to str
        ``content`` and ``sample`` (``all`` for a table of every sample).
    """
    table = not wildcards.get("figure")
    stem = wildcards.get("table") if table else wildcards.get("figure")
    return {"content": entry_title(stem or "", table), "sample": wildcards.get("sample") or "all"}


def gather_stack_report_files(stack_dir: str | Path, out_dir: str | Path) -> list[Path]:
    """Copy a stack's figure, its table and, with measurements, its predictions into ``out_dir``.

    Parameters
    ----------
    stack_dir : str or Path
        A folder written by ``fabric2seis field --stack``.
    out_dir : str or Path
        Folder to copy into (created if missing).

    Returns
    -------
    list of Path
        The files written.
    """
    stack_dir, out = Path(stack_dir), Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    names = ("stack_splitting.png", "stack_splitting.csv", "stack_predictions.csv")
    return [Path(shutil.copyfile(stack_dir / n, out / n)) for n in names if (stack_dir / n).is_file()]


def discover_stacks(results: str | Path) -> list[str]:
    """Folders of the results root written by ``fabric2seis field --stack`` (they hold ``stack.json``).

    Parameters
    ----------
    results : str or Path
        The suite's results folder.

    Returns
    -------
    list of str
        Their names, sorted.
    """
    root = Path(results)
    if not root.is_dir():
        return []
    return sorted(p.name for p in root.iterdir() if p.is_dir() and (p / "stack.json").is_file())


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
    import pandas as pd

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
