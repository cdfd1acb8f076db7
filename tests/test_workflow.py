"""The Snakemake workflow on a small temporary suite (CONTRACT.md, outputs of the suite)."""

import json
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest

from fabric2seis.io.write import write_table
from fabric2seis.minerals import find_mineral
from fabric2seis.synth import fabric_orientations

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def suite(tmp_path_factory):
    folder = tmp_path_factory.mktemp("suite")
    samples = folder / "samples"
    samples.mkdir()
    ol = find_mineral("olivine")
    for name, fabric in (("one sample", "olivine-A"), ("two", "olivine-B")):   # a space in a name
        write_table(samples / f"{name}.csv", fabric_orientations(ol, fabric, 120, 20.0, seed=3), ["olivine"] * 120)
        (samples / f"{name}.yaml").write_text("bootstrap: {n: 20}\n")
    (samples / "broken.ctf").write_bytes(b"\x00\x01\x02 not a ctf")
    results = folder / "results"
    run = subprocess.run([sys.executable, "-m", "fabric2seis", "suite", "--samples", str(samples),
                          "--results", str(results), "--cores", "2", "-q"], cwd=ROOT, capture_output=True, text=True)
    return samples, results, run


def test_suite_processes_good_samples_and_reports_the_bad_one(suite):
    samples, results, run = suite
    assert run.returncode == 0, run.stderr[-2000:]
    table = pd.read_csv(results / "suite_summary.csv")
    status = dict(zip(table["sample"], table["status"]))
    assert status["one sample"] == "ok" and status["two"] == "ok"
    assert "broken.ctf" in status["broken"] and "not a text file" in status["broken"]
    assert not (results / "broken").exists()
    assert (results / "suite_comparison.png").stat().st_size > 1000


def test_suite_outputs_agree_with_the_sample_command(suite, tmp_path):
    samples, results, _ = suite
    direct = tmp_path / "direct"
    subprocess.run([sys.executable, "-m", "fabric2seis", "sample", str(samples / "two.csv"), "--out", str(direct)],
                   cwd=ROOT, check=True, capture_output=True)
    a = json.loads((results / "two" / "summary.json").read_text())
    b = json.loads((direct / "summary.json").read_text())
    assert a == b


def test_rerun_has_nothing_to_do_and_a_new_file_runs_alone(suite):
    samples, results, _ = suite
    cmd = [sys.executable, "-m", "snakemake", "-n", "--cores", "1", "--config", f"samples_dir={samples}",
           f"results_dir={results}"]
    dry = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True)
    assert "Nothing to be done" in dry.stdout + dry.stderr
    ol = find_mineral("olivine")
    write_table(samples / "three.csv", fabric_orientations(ol, "olivine-C", 50, 20.0, seed=1), ["olivine"] * 50)
    dry = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True)
    text = dry.stdout + dry.stderr
    jobs = [line.strip() for line in text.splitlines() if line.strip().startswith("wildcards: sample=")]
    assert jobs == ["wildcards: sample=three"], text[-1500:]
    (samples / "three.csv").unlink()


def _small_suite(folder, n_samples=1):
    samples = folder / "samples"
    samples.mkdir()
    ol = find_mineral("olivine")
    for k in range(n_samples):
        write_table(samples / f"s{k}.csv", fabric_orientations(ol, "olivine-A", 100, 20.0, seed=k), ["olivine"] * 100)
        (samples / f"s{k}.yaml").write_text("bootstrap: {n: 20}\n")
    return samples, folder / "results"


def test_generic_cluster_executor_with_a_local_submit_script(tmp_path):
    # The path a cluster takes: job scripts handed to a submit command (config/profiles/local-cluster)
    samples, results = _small_suite(tmp_path)
    run = subprocess.run([sys.executable, "-m", "snakemake", "--profile", "config/profiles/local-cluster",
                          "--config", f"samples_dir={samples}", f"results_dir={results}", "-q"],
                         cwd=ROOT, capture_output=True, text=True, timeout=900)
    assert run.returncode == 0, run.stderr[-2000:]
    assert pd.read_csv(results / "suite_summary.csv")["status"].tolist() == ["ok"]


def test_killed_run_completes_on_rerun_without_half_written_outputs(tmp_path):
    import signal
    import time
    samples, results = _small_suite(tmp_path, n_samples=3)
    cmd = [sys.executable, "-m", "snakemake", "--cores", "1", "--config", f"samples_dir={samples}",
           f"results_dir={results}", "-q"]
    proc = subprocess.Popen(cmd, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, start_new_session=True)
    deadline = time.time() + 300
    while time.time() < deadline:
        if (results / "status").exists() and list((results / "status").glob("*.json")):
            break
        time.sleep(0.5)
    time.sleep(2.0)                                   # part way through the next sample
    import os
    os.killpg(proc.pid, signal.SIGKILL)
    proc.wait()
    # what a user does after a crash (Snakemake's own advice): release the lock, rerun incomplete jobs
    subprocess.run(cmd[:3] + ["--unlock"] + cmd[3:], cwd=ROOT, capture_output=True, timeout=300)
    rerun = subprocess.run(cmd[:3] + ["--rerun-incomplete"] + cmd[3:], cwd=ROOT, capture_output=True, text=True,
                           timeout=900)
    assert rerun.returncode == 0, rerun.stderr[-2000:]
    assert pd.read_csv(results / "suite_summary.csv")["status"].tolist() == ["ok"] * 3
    assert not list(results.glob(".*partial*"))       # no temporary folders left behind
    for k in range(3):
        assert json.loads((results / f"s{k}" / "summary.json").read_text())["sample"] == f"s{k}"


def test_editing_one_sidecar_reruns_only_that_sample(tmp_path):
    samples, results = _small_suite(tmp_path, n_samples=2)
    cmd = [sys.executable, "-m", "snakemake", "--cores", "2", "--config", f"samples_dir={samples}",
           f"results_dir={results}", "-q"]
    assert subprocess.run(cmd, cwd=ROOT, capture_output=True, timeout=900).returncode == 0
    (samples / "s1.yaml").write_text("bootstrap: {n: 20}\ngrains: {min_pixels: 3}\n")
    dry = subprocess.run(cmd[:3] + ["-n"] + cmd[3:-1], cwd=ROOT, capture_output=True, text=True, timeout=300)
    jobs = [line.strip() for line in (dry.stdout + dry.stderr).splitlines()
            if line.strip().startswith("wildcards: sample=")]
    assert jobs == ["wildcards: sample=s1"], (dry.stdout + dry.stderr)[-1500:]
