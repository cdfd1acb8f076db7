"""A suite of samples: discovery in a folder and the one-row-per-sample summary table."""

from __future__ import annotations

import json
from pathlib import Path
from typing import TYPE_CHECKING

from fabric2seis.errors import InputError
from fabric2seis.ingest.io import is_supported
from fabric2seis.pipeline import checked_sample_name, sample_name
from fabric2seis.workflow.status import read_statuses

if TYPE_CHECKING:       # pandas is imported by the functions that build tables (the sample jobs need none)
    import pandas as pd

# folders and files the workflow itself keeps in the results folder: no sample may take their names
WORKFLOW_NAMES = ("status", "logs", "benchmarks", "report_parts", "field", "stack", "suite_summary",
                  "suite_table", "suite_long", "suite_comparison", "report", "optics", "optics_status")


#: an input file of at least this many bytes gets LARGE_SAMPLE_THREADS threads in the workflow (a
#: text map of about 10^5 pixels, some 2,500 grains: its fabric and bootstrap share the threads)
LARGE_SAMPLE_BYTES = 8 * 2**20
#: threads of a large sample's job; Snakemake gives a job at most --cores threads
LARGE_SAMPLE_THREADS = 2
#: at most this many processes draw the figures of the workflow's field job (``rules/common.smk``)
FIELD_THREADS = 4


def sample_threads(path: str | Path, samples: int = 1, cores: int | None = None) -> int:
    """Threads the workflow's ``sample`` job of a file asks for: more for a large map on idle cores, else 1.

    Threads share only a run's fabric and bootstrap (threads.py), a part of a large map's run, while
    jobs side by side share everything: so a suite's cores go first to jobs, one per sample, and a
    large map (``LARGE_SAMPLE_BYTES`` or more) gets the cores its suite leaves idle,
    ``cores // samples``, at most ``LARGE_SAMPLE_THREADS`` (one map of 10^5 pixels on 2 cores: 2).
    A small sample gets 1: its fabric and bootstrap take a few seconds of a job spent mostly on
    starting and drawing. Snakemake gives a job at most ``--cores`` and ``--set-threads sample=N``
    replaces the number.

    Parameters
    ----------
    path : str or Path
        The sample's input file.
    samples : int
        Samples of the suite.
    cores : int, optional
        The suite's ``--cores``; None (a cluster run: each job has its own cores) counts as enough.

    Returns
    -------
    int
        Threads of the job, at least 1 (1 also when the file cannot be read: the job then reports it).
    """
    try:
        size = Path(path).stat().st_size
    except OSError:
        return 1
    if size < LARGE_SAMPLE_BYTES:
        return 1
    idle = LARGE_SAMPLE_THREADS if cores is None else int(cores) // max(1, int(samples))
    return max(1, min(LARGE_SAMPLE_THREADS, idle))


def check_workflow_sample_name(name: str, path: str | Path) -> str:
    """Refuse a sample name that cannot be a folder of its own in the results folder.

    Parameters
    ----------
    name : str
        The sample's name.
    path : str or Path
        Its EBSD file.

    Returns
    -------
    str
        ``name``.

    Raises
    ------
    InputError
        If the file name cannot name a folder, or ``name`` is one of ``WORKFLOW_NAMES``.
    """
    checked_sample_name(path)
    if name.lower() in WORKFLOW_NAMES:
        raise InputError(f"the sample name '{name}' is the name of one of the workflow's own folders or "
                         f"files ({', '.join(WORKFLOW_NAMES)}); rename the file", path)
    return name


def is_measurements_file(path: Path) -> bool:
    """Tell whether a file is a CSV whose header names the columns of field measurements (station, baz_deg ...).

    Parameters
    ----------
    path : Path
        The file.

    Returns
    -------
    bool
        True if its first line has ``station`` and ``baz_deg`` columns.
    """
    if path.suffix.lower() != ".csv":
        return False
    try:
        with path.open("r", errors="replace") as f:
            header = {c.strip() for c in f.readline().split(",")}
    except OSError:
        return False
    return {"station", "baz_deg"} <= header


def discover_measurements(folder: str | Path) -> list[Path]:
    """List the field-measurement CSV files in ``folder`` (not recursive).

    Parameters
    ----------
    folder : str or Path
        Folder to look in; a missing folder holds none.

    Returns
    -------
    list of Path
        The files, sorted.
    """
    folder = Path(folder)
    return sorted(p for p in folder.iterdir() if p.is_file() and is_measurements_file(p)) if folder.is_dir() else []


def discover_samples(folder: str | Path) -> dict[str, Path]:
    """Every supported EBSD export in ``folder`` (not recursive), by sample name.

    CSV files of field measurements (a header with ``station`` and ``baz_deg``) are not samples.

    Parameters
    ----------
    folder : str or Path
        Folder to look in; a missing folder holds none.

    Returns
    -------
    dict of str to Path
        EBSD file by sample name.

    Raises
    ------
    ValueError
        If two files give the same sample name.
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
    """Flatten the scalar entries of a nested mapping, keys joined with dots.

    Two-element lists under ``uncertainty`` (95 % intervals) and under keys ending in ``_95`` (the
    95 % ranges of random sets) become ``.low`` and ``.high``; other lists are left out.

    Parameters
    ----------
    data : dict
        Nested mapping.
    prefix : str
        Put before every key.

    Returns
    -------
    dict
        Flat mapping.
    """
    out = {}
    for key, value in data.items():
        name = f"{prefix}{key}"
        if isinstance(value, dict):
            out.update(flatten(value, name + "."))
        elif isinstance(value, list) and len(value) == 2 and (
                prefix.startswith("uncertainty") or str(key).endswith("_95") or prefix.endswith("_95.")):
            out[f"{name}.low"], out[f"{name}.high"] = value      # a 95 % interval
        elif not isinstance(value, list):
            out[name] = value
    return out


def suite_table(summary_files: list[str | Path]) -> pd.DataFrame:
    """Build the suite table, one row per sample: the scalar keys of each summary.json and a status column.

    Parameters
    ----------
    summary_files : list of str or Path
        The samples' ``summary.json`` files.

    Returns
    -------
    pandas.DataFrame
        One row per file.
    """
    import pandas as pd

    rows = []
    for f in summary_files:
        summary = json.loads(Path(f).read_text())
        rows.append({"sample": summary["sample"], "status": summary.get("status", "ok"), **flatten(summary)})
    return pd.DataFrame(rows)


def suite_table_from_status(status_files: list[str | Path]) -> pd.DataFrame:
    """Build the suite table from the workflow's per-sample status files (failed samples keep a row).

    Parameters
    ----------
    status_files : list of str or Path
        The workflow's status files (``status.read_status``).

    Returns
    -------
    pandas.DataFrame
        One row per sample, its status and, when it succeeded, its summary's scalar keys.
    """
    import pandas as pd

    rows = []
    for status in read_statuses(status_files):
        if status.ok and not Path(str(status.summary)).is_file():
            rows.append({"sample": status.sample, "status": f"results missing: no {status.summary}"})
        elif status.ok:
            summary = json.loads(Path(str(status.summary)).read_text())
            rows.append({"sample": summary["sample"], "status": "ok", **flatten(summary)})
        else:
            rows.append({"sample": status.sample, "status": status.status})
    return pd.DataFrame(rows)
