"""The workflow's optics switch: per-sample optics, a failing sample as a status row, and the report."""

import json
import os
import re
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest

from fabric2seis.ingest.io.write import write_ang, write_table
from fabric2seis.synth import voronoi_map

ROOT = Path(__file__).resolve().parents[2]
# Snakemake runs each rule's script in a new Python process: make it import this checkout
os.environ["PYTHONPATH"] = os.pathsep.join(p for p in (str(ROOT), os.environ.get("PYTHONPATH")) if p)


@pytest.fixture(scope="module")
def suite(tmp_path_factory):
    folder = tmp_path_factory.mktemp("optics_suite")
    samples = folder / "samples"
    samples.mkdir()
    m = voronoi_map(10, 30, 20, step=1.0, n_phases=2, seed=3)
    write_ang(samples / "map one.ang", m.x, m.y, m.quat, m.phase, ["olivine", "enstatite"], ["mmm", "mmm"])
    write_table(samples / "grains.csv", m.quat[:60], ["olivine"] * 60)
    write_ang(samples / "sideways.ang", m.x, m.y, m.quat, m.phase, ["olivine", "enstatite"], ["mmm", "mmm"])
    for name in ("map one", "grains", "sideways"):
        (samples / f"{name}.yaml").write_text("bootstrap: {n: 10}\n")
    (samples / "sideways.yaml").write_text("bootstrap: {n: 10}\noptics: {view: [0, 0, 0]}\n")  # optics fails
    results = folder / "results"
    run = subprocess.run([sys.executable, "-m", "fabric2seis", "suite", "--samples", str(samples), "--results",
                          str(results), "--cores", "2", "-q", "--config", "optics={enabled: true}"],
                         cwd=ROOT, capture_output=True, text=True)
    return samples, results, run


def test_optics_of_every_sample_with_a_failure_as_its_status(suite):
    samples, results, run = suite
    assert run.returncode == 0, run.stderr[-2000:]
    status = {p.stem: json.loads(p.read_text())["status"] for p in (results / "optics_status").glob("*.json")}
    assert status["map one"] == "ok" and status["grains"] == "ok"
    assert "sideways.yaml" in status["sideways"] and "optics.view" in status["sideways"]
    assert (results / "optics" / "map one" / "crossed_polars.png").stat().st_size > 1000
    assert not (results / "optics" / "grains" / "crossed_polars.png").exists()
    assert not (results / "optics" / "sideways").exists()
    table = pd.read_csv(results / "suite_summary.csv")                 # the samples themselves are fine
    assert set(table["status"]) == {"ok"}


def test_optics_figures_are_in_the_report_with_captions(suite):
    samples, results, _ = suite
    report = results / "report.html"
    run = subprocess.run([sys.executable, "-m", "snakemake", "--report", str(report), "--config",
                          f"samples_dir={samples}", f"results_dir={results}", "optics={enabled: true}"],
                         cwd=ROOT, capture_output=True, text=True, timeout=600)
    assert run.returncode == 0, run.stderr[-2000:]
    html = report.read_text()
    entries = {}
    for key, body in re.findall(r'"([^"]*report_parts/optics/[^"]+)": (\{"name".*?"data_uri": "[^"]*"\})', html):
        entries[tuple(Path(key).parts[-2:])] = json.loads(body)
    for figure in ("crossed_polars", "crossed_polars_plate", "retardation_map", "interference_chart"):
        entry = entries[("map one", f"{figure}.png")]
        assert entry["mime_type"] == "image/png" and "of sample map one" in entry["caption"]
    assert "analyser north-south" in entries[("map one", "crossed_polars.png")]["caption"]
    assert {name for s, name in entries if s == "sideways"} == {"optics_status.csv"}
    assert ("grains", "interference_chart.png") in entries and ("grains", "retardation_map.png") not in entries


def test_switching_optics_off_leaves_the_samples_alone(suite):
    # the optics block is not part of a sample's settings digest: the samples do not rerun
    samples, results, _ = suite
    dry = subprocess.run([sys.executable, "-m", "snakemake", "-n", "--cores", "1", "--config",
                          f"samples_dir={samples}", f"results_dir={results}"], cwd=ROOT, capture_output=True,
                         text=True)
    assert "Nothing to be done" in dry.stdout + dry.stderr, dry.stdout[-2000:]
