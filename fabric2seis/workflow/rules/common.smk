# Discovery of samples and the per-sample settings digest (reruns a sample when its settings change).
import hashlib
import json
import os
from pathlib import Path

import yaml
from snakemake.exceptions import WorkflowError

from fabric2seis.settings import sidecar_of
from fabric2seis import __version__
from fabric2seis.workflow.report_files import (discover_stacks, entry_title, field_entry_labels, sample_entry_labels,
                                               suite_labels)
from fabric2seis.workflow.batches import RECOMPUTE_VARIABLE, sample_batches
from fabric2seis.workflow.status import results_state
from fabric2seis.workflow.suite import FIELD_THREADS, discover_measurements, discover_samples, sample_threads

SAMPLES_DIR = config.get("samples_dir", "demo_samples")
RESULTS = config.get("results_dir", "results")
SAMPLES = discover_samples(SAMPLES_DIR)
MEASUREMENTS = discover_measurements(SAMPLES_DIR)
STACKS = discover_stacks(RESULTS)     # folders of `fabric2seis field --stack` in the results, for the report
# small samples computed several to a job (config small_samples; the batch rules of sample.smk,
# workflow.batches): shared out by the samples and the config alone, never by --cores
BATCHES = sample_batches(SAMPLES, int((config.get("small_samples") or {}).get("per_job", 8)),
                         float((config.get("small_samples") or {}).get("max_size_kb", 256.0)))


onstart:
    # the numba caches of orix and fabric2seis filled once, by one process, before jobs run side by side
    # (fabric2seis.warm_up: processes filling them at once can leave them damaged)
    from fabric2seis.warm_up import warm_compiled_caches
    warm_compiled_caches()
    # a forced run (--forceall, --forcerun, --force) computes every member of a batch again, not only those
    # whose inputs changed (workflow.batches): an environment variable of the jobs, set once the plan is
    # known, and not a parameter, which would be a rerun trigger of the next plan
    if workflow.dag_settings.forceall or workflow.dag_settings.forcetargets or workflow.dag_settings.forcerun:
        os.environ[RECOMPUTE_VARIABLE] = "1"


def sample_input(wildcards):
    return str(SAMPLES[wildcards.sample])


def sample_job_threads(wildcards, input):
    """Threads of a sample's job: a large map gets the cores the suite leaves idle (suite.sample_threads)."""
    try:
        cores = workflow.cores
    except WorkflowError:           # no --cores (a cluster run): each job has cores of its own
        cores = None
    return sample_threads(input[0], len(SAMPLES), cores)


def field_job_threads(wildcards, input):
    """Threads of the field job: it comes after every sample, when the suite's cores are free, and
    draws its figures (two per sample and station) in as many processes (at most FIELD_THREADS)."""
    try:
        cores = workflow.cores
    except WorkflowError:           # no --cores (a cluster run): the job asks for FIELD_THREADS
        cores = FIELD_THREADS
    return max(1, min(cores, FIELD_THREADS))


def settings_digest(wildcards):
    """Digest of the sidecar text and the defaults: Snakemake reruns a sample when it changes."""
    return sample_settings_digest(wildcards.sample)


def sample_settings_digest(sample):
    """Digest of the sidecar text of a sample and the defaults (settings_digest).

    The config's optics block is left out: it changes only the optics of the samples; and so is
    small_samples, which changes only how the samples are shared among jobs.
    """
    sidecar = sidecar_of(SAMPLES[sample])
    text = sidecar.read_bytes() if sidecar.is_file() else b""   # bytes: a sidecar in any encoding
    sample_config = {k: v for k, v in config.items() if k not in ("optics", "small_samples")}
    return hashlib.sha256(text + json.dumps(sample_config, sort_keys=True).encode()
                          + mineral_files_bytes(config.get("minerals_dir"), sidecar)).hexdigest()[:16]


def mineral_files_bytes(folder, sidecar):
    """Names and contents of the user's mineral entries (config's and sidecar's minerals_dir): an edit reruns."""
    folders = [folder] if folder else []
    try:                                    # a sidecar's own folder; a bad sidecar fails in its sample job
        named = (yaml.safe_load(sidecar.read_text(encoding="utf-8")) or {}).get("minerals_dir") if sidecar.is_file() \
            else None
        folders += [named] if isinstance(named, str) else []
    except Exception:
        pass
    found = b""
    for name in folders:
        for path in sorted(Path(name).glob("*.y*ml")) if Path(name).is_dir() else []:
            found += path.name.encode() + b"\0" + path.read_bytes()
    return found


def optics_digest(wildcards):
    """Digest of the sidecar text and the whole config: the optics of a sample rerun when it changes."""
    sidecar = sidecar_of(SAMPLES[wildcards.sample])
    text = sidecar.read_bytes() if sidecar.is_file() else b""
    return hashlib.sha256(text + json.dumps(config, sort_keys=True).encode()).hexdigest()[:16]


def results_check(wildcards):
    """The sample's results against its status file: a new value reruns the sample (status.results_state)."""
    return results_state(f"{RESULTS}/status/{wildcards.sample}.json", f"{RESULTS}/{wildcards.sample}")


def optics_results_check(wildcards):
    """The sample's optics results against their manifest: a new value reruns them (status.results_state)."""
    return results_state(f"{RESULTS}/optics_status/{wildcards.sample}.json", f"{RESULTS}/optics/{wildcards.sample}",
                         "optics")


def report_labels(wildcards):
    """Labels of a file in a sample's report folder: the sample, and its figure's or table's name."""
    return {"sample": wildcards.sample, "content": wildcards.get("figure") or wildcards.get("table")}


def sample_report_labels(wildcards, input):
    """Labels of an entry of a sample in the report: what it shows, the sample, its status (report_files)."""
    table = not wildcards.get("figure")
    return sample_entry_labels(wildcards.sample, wildcards.get("table") if table else wildcards.get("figure"),
                               input.status, table)


def overview_labels(wildcards, output):
    """Labels of the suite overview in the report: the fabric2seis version and the settings digest of the run."""
    return suite_labels("suite_overview", output.about)


def field_subcategory(wildcards):
    """The station of an entry of the field comparison, or "all stations"."""
    return f"station {wildcards.station}" if wildcards.get("station") else "all stations"


def field_labels(wildcards):
    """Labels of an entry of the field comparison: what it shows and the sample (report_files)."""
    return field_entry_labels(wildcards)


def content_labels(wildcards):
    """Labels of an entry named by its file alone: what it shows."""
    table = not wildcards.get("figure")
    return {"content": entry_title(wildcards.get("table") if table else wildcards.get("figure"), table)}
