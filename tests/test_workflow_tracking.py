"""The suite tracks its results folders, gives the same bytes every run, and refuses a second run at once.

One small suite of three copies of one small map, named with a space, unicode and shell characters.
"""

import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest

from fabric2seis.ingest.io.write import write_ang
from fabric2seis.synth import voronoi_map

ROOT = Path(__file__).resolve().parents[1]
# the workflow's scripts import this checkout of fabric2seis (as in test_workflow.py)
os.environ["PYTHONPATH"] = os.pathsep.join(p for p in (str(ROOT), os.environ.get("PYTHONPATH")) if p)
ODD_NAMES = ("a b", "ünï", "x;rm -rf y$(z)")      # a shell would split, expand or run these


def _suite(samples, results, cores, blas_threads, *extra, wait=True):
    command = [sys.executable, "-m", "fabric2seis", "suite", "--samples", str(samples), "--results", str(results),
               "--cores", str(cores), "-q", *extra]
    env = {**os.environ, "OPENBLAS_NUM_THREADS": str(blas_threads), "OMP_NUM_THREADS": str(blas_threads)}
    if not wait:
        return subprocess.Popen(command, cwd=ROOT, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                                text=True)
    return subprocess.run(command, cwd=ROOT, env=env, capture_output=True, text=True, timeout=900)


def _dry_run(samples, results):
    run = subprocess.run([sys.executable, "-m", "snakemake", "-n", "--cores", "1", "--config",
                          f"samples_dir={samples}", f"results_dir={results}"], cwd=ROOT, capture_output=True,
                         text=True, timeout=300)
    return run.stdout + run.stderr


def _planned_samples(dry_run_text):
    """The samples of every job of rule ``sample`` in a Snakemake dry run, and the members of every batch job
    (``sample_batch_<n>``, small samples several to a job: their status files are its outputs)."""
    jobs, rule = [], None
    for line in dry_run_text.splitlines():
        if m := re.match(r"\s*(?:local)?rule (\w+):", line):
            rule = m.group(1)
        elif (m := re.match(r"\s*wildcards: sample=(.*)$", line)) and rule == "sample":
            jobs.append(m.group(1).strip())
        elif (m := re.match(r"\s*output: (.*)$", line)) and rule and rule.startswith("sample_batch_"):
            jobs += [Path(path).stem for path in m.group(1).split(", ")]
    return sorted(jobs)


@pytest.fixture(scope="module")
def odd_suite(tmp_path_factory):
    folder = tmp_path_factory.mktemp("odd names")
    samples = folder / "samples"
    samples.mkdir()
    m = voronoi_map(40, 36, 24, step=1.0, seed=3)
    write_ang(samples / "map.ang", m.x, m.y, m.quat, m.phase, ["olivine"], ["mmm"])
    for name in ODD_NAMES:
        shutil.copyfile(samples / "map.ang", samples / f"{name}.ang")
        (samples / f"{name}.yaml").write_text("bootstrap: {n: 20}\ngrains: {min_pixels: 3}\n", encoding="utf-8")
    (samples / "map.ang").unlink()
    results = folder / "results"
    run = _suite(samples, results, 2, 2)
    return samples, results, run


def test_odd_sample_names_run_in_the_suite(odd_suite):
    samples, results, run = odd_suite
    assert run.returncode == 0, run.stderr[-2000:]
    status = pd.read_csv(results / "suite_summary.csv").set_index("sample")["status"]
    assert sorted(status.index) == sorted(ODD_NAMES) and set(status) == {"ok"}
    for name in ODD_NAMES:
        assert (results / name / "summary.json").is_file() and (results / name / "pole_figures.png").is_file()


def test_odd_sample_names_run_with_the_sample_command_and_give_the_suites_bytes(odd_suite, tmp_path):
    # `fabric2seis sample` on two BLAS threads, the suite's jobs on one (Snakemake sets
    # OPENBLAS_NUM_THREADS to a rule's threads): the same bytes all the same (fabric2seis/threads.py)
    samples, results, _ = odd_suite
    for name in ODD_NAMES:
        out = tmp_path / name
        run = subprocess.run([sys.executable, "-m", "fabric2seis", "sample", str(samples / f"{name}.ang"), "--out",
                              str(out)], cwd=ROOT, capture_output=True, text=True, timeout=600,
                             env={**os.environ, "OPENBLAS_NUM_THREADS": "2", "OMP_NUM_THREADS": "2"})
        assert run.returncode == 0, run.stderr[-2000:]
        files = sorted(p.name for p in out.iterdir() if p.suffix in (".json", ".csv") and p.name != "provenance.json")
        assert "summary.json" in files and "velocities.csv" in files
        for f in files:     # provenance differs: the suite's settings hold its own folders
            assert (out / f).read_bytes() == (results / name / f).read_bytes(), f"{name}/{f}"


def test_a_second_suite_on_the_same_folder_refuses_and_the_first_gives_the_same_bytes(odd_suite, tmp_path):
    samples, results, _ = odd_suite
    other = tmp_path / "results"
    first = _suite(samples, other, 1, 1, wait=False)          # one core and one BLAS thread this time
    try:
        for _ in range(1200):
            if other.exists() or first.poll() is not None:
                break
            __import__("time").sleep(0.1)
        assert first.poll() is None, "the first run ended before the second could start"
        second = _suite(samples, other, 1, 1)
    finally:
        first_status = first.wait(timeout=900)
    assert second.returncode == 2, second.stderr[-2000:]
    line = second.stderr.strip()
    assert "\n" not in line and "Traceback" not in line, line
    assert line.startswith("fabric2seis suite: error:") and "another run of the workflow" in line
    assert str(other) in line and "--results" in line
    assert first_status == 0, first.stderr.read()[-2000:] if first.stderr else ""
    # nothing corrupted, and the same bytes as the first suite on two cores and two BLAS threads:
    # every JSON and CSV file (no file of a results folder holds a time; provenance.json and the status
    # files, which name the folders, left out)
    compare = subprocess.run([sys.executable, "tools/compare_results.py", str(results), str(other), "--exact"],
                             cwd=ROOT, capture_output=True, text=True, timeout=300)
    assert compare.returncode == 0 and compare.stdout.strip().endswith("same bytes"), compare.stdout[-3000:]


def test_deleted_or_half_deleted_results_are_rebuilt(odd_suite):
    # the last test of the module: it leaves one folder deleted
    samples, results, _ = odd_suite
    assert "Nothing to be done" in _dry_run(samples, results)        # a complete suite
    before = {name: (results / name / "summary.json").read_bytes() for name in ODD_NAMES}
    shutil.rmtree(results / "a b")
    (results / "ünï" / "pole_figures.png").unlink()
    (results / "x;rm -rf y$(z)" / "summary.json").unlink()
    text = _dry_run(samples, results)
    assert _planned_samples(text) == sorted(ODD_NAMES), text[-3000:]
    run = _suite(samples, results, 2, 2)
    assert run.returncode == 0, run.stderr[-2000:]
    for name in ODD_NAMES:
        assert (results / name / "summary.json").read_bytes() == before[name]
    assert (results / "ünï" / "pole_figures.png").is_file()
    assert "Nothing to be done" in _dry_run(samples, results)        # and complete again
    shutil.rmtree(results / "a b")                                   # the same loss a second time
    planned = _planned_samples(_dry_run(samples, results))
    # the demo's small maps share one batch job (config small_samples, the default): Snakemake plans the
    # job, which computes "a b" again and keeps the others (workflow/batches.py)
    assert "a b" in planned and set(planned) <= set(ODD_NAMES), planned
    others = {name: (results / name / "run.log").stat().st_mtime_ns for name in ODD_NAMES if name != "a b"}
    run = _suite(samples, results, 2, 2)
    assert run.returncode == 0, run.stderr[-2000:]
    assert (results / "a b" / "summary.json").read_bytes() == before["a b"]
    assert {name: (results / name / "run.log").stat().st_mtime_ns for name in others} == others   # not recomputed
