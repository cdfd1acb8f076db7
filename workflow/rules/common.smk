# Discovery of samples and the per-sample settings digest (reruns a sample when its settings change).
import hashlib
import json
from pathlib import Path

from fabric2seis.settings import sidecar_of
from fabric2seis.workflow.suite import discover_measurements, discover_samples

SAMPLES_DIR = config.get("samples_dir", "demo_samples")
RESULTS = config.get("results_dir", "results")
SAMPLES = discover_samples(SAMPLES_DIR)
MEASUREMENTS = discover_measurements(SAMPLES_DIR)


def sample_input(wildcards):
    return str(SAMPLES[wildcards.sample])


def settings_digest(wildcards):
    """Digest of the sidecar text and the defaults: Snakemake reruns a sample when it changes."""
    sidecar = sidecar_of(SAMPLES[wildcards.sample])
    text = sidecar.read_bytes() if sidecar.is_file() else b""   # bytes: a sidecar in any encoding
    return hashlib.sha256(text + json.dumps(config, sort_keys=True).encode()).hexdigest()[:16]


def report_labels(wildcards):
    """Labels of a file in a sample's report folder: the sample, and its figure's or table's name."""
    return {"sample": wildcards.sample, "content": wildcards.get("figure") or wildcards.get("table")}
