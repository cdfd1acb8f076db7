"""Faults: a run killed at any moment, a suite killed and run again, a full or read-only location.

A results folder is either absent or complete (every file an uninterrupted run writes), never
partial; a killed suite completes when it is run again; a location that cannot take the results
gives one clear line and exit status 2, with nothing left behind.
"""

import errno
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pandas as pd
import pytest

from fabric2seis.cli import main
from fabric2seis.folders import MARKER
from fabric2seis.ingest.io.write import write_ang
from fabric2seis.synth import voronoi_map

ROOT = Path(__file__).resolve().parents[1]
ENV = {**os.environ, "PYTHONPATH": os.pathsep.join(p for p in (str(ROOT), os.environ.get("PYTHONPATH")) if p)}

#: moments of a run, as fractions of an uninterrupted run's time, at which the tests kill it
KILL_FRACTIONS = (0.3, 0.6, 0.8, 0.9, 0.95, 0.99)


def files_under(folder: Path) -> set[str]:
    return {str(p.relative_to(folder)) for p in folder.rglob("*") if p.is_file()}


@pytest.fixture(scope="module")
def larger_run(tmp_path_factory):
    """A 60,000-point two-phase map, the file list and the time of one uninterrupted run."""
    folder = tmp_path_factory.mktemp("larger")
    m = voronoi_map(400, 150, 100, step=1.0, n_phases=2, seed=5)
    f = folder / "big.ang"
    write_ang(f, m.x, m.y, m.quat, m.phase, ["olivine", "enstatite"], ["mmm", "mmm"])
    (folder / "big.yaml").write_text("bootstrap: {n: 30}\n")
    reference = folder / "reference"
    command = [sys.executable, "-m", "fabric2seis", "sample", str(f), "--out", str(reference)]
    subprocess.run(command, env=ENV, capture_output=True, timeout=600)   # warm the cache of random floors
    start = time.perf_counter()
    run = subprocess.run(command, env=ENV, capture_output=True, text=True, timeout=600)
    assert run.returncode == 0, run.stderr
    return f, files_under(reference), time.perf_counter() - start


def kill_at(command: list[str], seconds: float) -> None:
    proc = subprocess.Popen(command, env=ENV, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    time.sleep(seconds)
    proc.send_signal(signal.SIGKILL)
    proc.wait()


def test_first_run_killed_at_any_moment_leaves_no_folder_or_a_complete_one(larger_run, tmp_path):
    f, expected, whole_run = larger_run
    out = tmp_path / "res"
    command = [sys.executable, "-m", "fabric2seis", "sample", str(f), "--out", str(out)]
    seen = []
    for fraction in KILL_FRACTIONS:
        kill_at(command, fraction * whole_run)
        if out.exists():
            assert files_under(out) == expected, sorted(expected ^ files_under(out))
            assert json.loads((out / "summary.json").read_text())["sample"] == "big"
            seen.append("complete")
            os.replace(out, tmp_path / f"kept-{fraction}")      # next kill is again a first run
        else:
            seen.append("absent")
    assert "absent" in seen        # some kills came before the end (else the moments test nothing)
    again = subprocess.run(command, env=ENV, capture_output=True, text=True, timeout=600)
    assert again.returncode == 0, again.stderr
    assert files_under(out) == expected
    assert sorted(p.name for p in tmp_path.iterdir() if not p.name.startswith("kept-")) == ["res"]   # no temporaries


def test_rerun_killed_at_any_moment_leaves_old_or_new_results_never_partial(larger_run, tmp_path):
    f, expected, whole_run = larger_run
    out = tmp_path / "res"
    command = [sys.executable, "-m", "fabric2seis", "sample", str(f), "--out", str(out)]
    assert subprocess.run(command, env=ENV, capture_output=True, timeout=600).returncode == 0
    (out / "summary.json").write_text(json.dumps({"version": "old"}))     # tell old from new
    seen = set()
    for fraction in KILL_FRACTIONS:
        kill_at(command, fraction * whole_run)
        assert files_under(out) == expected, sorted(expected ^ files_under(out))
        seen.add("old" if "version" in json.loads((out / "summary.json").read_text()) else "new")
        if seen == {"new"}:
            (out / "summary.json").write_text(json.dumps({"version": "old"}))
    again = subprocess.run(command, env=ENV, capture_output=True, text=True, timeout=600)
    assert again.returncode == 0, again.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["res"]   # no temporaries left


# --- a suite killed and run again --------------------------------------------------------------

def test_a_killed_suite_completes_when_run_again(tmp_path):
    # The whole process group is killed (as Ctrl-C twice, or a cluster's time limit, would) while
    # samples are under way: Snakemake's lock and its incomplete-job marks stay behind. The next
    # `fabric2seis suite` on the folder says so in one line, releases them and completes, and the
    # results are those of a run never killed (the same bytes as `fabric2seis sample`).
    samples = tmp_path / "samples"
    samples.mkdir()
    for k in range(4):
        m = voronoi_map(80, 60, 30, step=1.0, n_phases=1, seed=10 + k)
        write_ang(samples / f"s{k}.ang", m.x, m.y, m.quat, m.phase, ["olivine"], ["mmm"])
        (samples / f"s{k}.yaml").write_text("bootstrap: {n: 10}\n")
    results = tmp_path / "results"
    command = [sys.executable, "-m", "fabric2seis", "suite", "--samples", str(samples), "--results", str(results),
               "--cores", "1", "-q"]
    proc = subprocess.Popen(command, cwd=ROOT, env=ENV, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                            start_new_session=True)
    done = []
    for _ in range(6000):                  # until one sample is done and the next is under way
        done = sorted(p.name for p in (results / "status").glob("*.json")) if (results / "status").is_dir() else []
        if done or proc.poll() is not None:
            break
        time.sleep(0.05)
    time.sleep(1.0)
    assert proc.poll() is None and 1 <= len(done) < 4, "the suite ended before it could be killed"
    os.killpg(proc.pid, signal.SIGKILL)
    proc.wait()
    assert not (results / "suite_summary.csv").exists()
    again = subprocess.run(command, cwd=ROOT, env=ENV, capture_output=True, text=True, timeout=900)
    assert again.returncode == 0, again.stderr[-3000:]
    assert "stopped before it finished" in again.stderr      # the killed run's lock was there, and went
    status = pd.read_csv(results / "suite_summary.csv").set_index("sample")["status"].to_dict()
    assert status == {f"s{k}": "ok" for k in range(4)}, status
    for k in (0, 3):
        out = tmp_path / f"alone{k}"
        assert subprocess.run([sys.executable, "-m", "fabric2seis", "sample", str(samples / f"s{k}.ang"), "--out",
                               str(out)], env=ENV, capture_output=True, timeout=600).returncode == 0
        for f in ("summary.json", "velocities.csv"):
            assert (out / f).read_bytes() == (results / f"s{k}" / f).read_bytes(), f"s{k}/{f}"
    dry = subprocess.run([sys.executable, "-m", "snakemake", "-n", "--cores", "1", "--config",
                          f"samples_dir={samples}", f"results_dir={results}"], cwd=ROOT, env=ENV,
                         capture_output=True, text=True, timeout=300)
    assert "Nothing to be done" in dry.stdout + dry.stderr, (dry.stdout + dry.stderr)[-3000:]


# --- a location that cannot take the results ---------------------------------------------------

@pytest.fixture()
def small_sample(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    m = voronoi_map(60, 40, 20, step=1.0, n_phases=1, seed=3)
    write_ang(tmp_path / "s.ang", m.x, m.y, m.quat, m.phase, ["olivine"], ["mmm"])
    (tmp_path / "s.yaml").write_text("bootstrap: {n: 0}\n")
    return tmp_path


def failing_writes(monkeypatch, code: int, after: int) -> None:
    """Make every file opened for writing inside a temporary results folder fail with ``code``
    after ``after`` such files (a disk that fills up part way, or a location that refuses)."""
    import builtins
    import io

    real_open, count = io.open, [0]

    def open_(file, mode="r", *args, **kwargs):
        if any(c in mode for c in "wax") and ".partial-" in str(file):
            count[0] += 1
            if count[0] > after:
                raise OSError(code, os.strerror(code), str(file))
        return real_open(file, mode, *args, **kwargs)

    monkeypatch.setattr(builtins, "open", open_)
    monkeypatch.setattr(io, "open", open_)


#: errors of a location that cannot take the results, and what the message must say
LOCATION_FAULTS = [
    (errno.ENOSPC, "no space left"),                 # the disk fills up part way through the folder
    (errno.EACCES, "permission denied"),
    (errno.EROFS, "read-only file system"),
]
#: how many files are written before the location fails
WRITES_BEFORE_FAULT = [0, 3]


@pytest.mark.parametrize("code, words", LOCATION_FAULTS)
@pytest.mark.parametrize("after", WRITES_BEFORE_FAULT)
def test_full_or_forbidden_location_gives_one_line_and_writes_nothing(small_sample, monkeypatch, capsys,
                                                                      code, words, after):
    failing_writes(monkeypatch, code, after)
    assert main(["sample", "s.ang", "--out", "res/s"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "Traceback" not in err, err
    assert "res/s" in err and "--out" in err and words in err, err
    assert not (small_sample / "res" / "s").exists()
    assert [p.name for p in (small_sample / "res").iterdir()] == []     # no temporary folder left


def test_a_real_full_file_system_gives_the_same_line(small_sample, capsys):
    # A 256 kB tmpfs: too small for the results. Needs the right to mount (root, as on the CI machine).
    target = small_sample / "tiny"
    target.mkdir()
    mounted = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=256k", "tmpfs", str(target)],
                             capture_output=True)
    if mounted.returncode != 0:
        pytest.skip("cannot mount a small file system here; test_full_or_forbidden_location covers it")
    try:
        assert main(["sample", "s.ang", "--out", "tiny/s"]) == 2
        err = capsys.readouterr().err
        assert err.count("\n") == 1 and "no space left" in err, err
        assert list(target.iterdir()) == []
    finally:
        subprocess.run(["umount", str(target)], check=True)


def test_marker_is_the_last_file_of_a_folder(small_sample):
    # Why a killed run cannot leave a folder that looks whole: the marker is written after every
    # other file, and the folder is renamed into place only after the marker.
    assert main(["sample", "s.ang", "--out", "res/s"]) == 0
    out = small_sample / "res" / "s"
    marker_time = (out / MARKER).stat().st_mtime_ns
    assert all(p.stat().st_mtime_ns <= marker_time for p in out.rglob("*") if p.is_file())


#: every fault this module makes and survives (the README's testing section counts them)
FAULTS = {
    "`fabric2seis sample` killed during a first run": len(KILL_FRACTIONS),
    "`fabric2seis sample` killed during a rerun": len(KILL_FRACTIONS),
    "a suite killed and run again": 1,
    "a results location full, forbidden or read-only, at once or part way": len(LOCATION_FAULTS)
    * len(WRITES_BEFORE_FAULT),
    "a real full file system": 1,
}
