"""Progress of `fabric2seis sample`: bars on a terminal only (a pseudo-terminal here), nothing extra on
stderr otherwise, reporting that leaves the numbers alone, and run.log naming every file written."""

import io
import os
import pty
import re
import select
import subprocess
import sys
from pathlib import Path

import numpy as np

from fabric2seis import uncertainty
from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.progress import TerminalBar, share, stage_bar, terminal_bars
from fabric2seis.synth import fabric_orientations

ROOT = Path(__file__).resolve().parents[1]
GRAIN_LIST = ROOT / "demo_samples" / "VM04_grain_list.csv"      # 400 grains, 200 resamples (its sidecar)
ENV = {**os.environ, "PYTHONPATH": str(ROOT)}
COMMAND = [sys.executable, "-m", "fabric2seis", "sample", str(GRAIN_LIST), "--out"]


def test_a_bar_redraws_one_line_and_ends_it():
    out = io.StringIO()
    bar = TerminalBar("work", out, width=10)
    for f in (0.0, 0.004, 0.5, 0.5, 1.0):
        bar.show(f)
    bar.close()
    text = out.getvalue()
    assert text.count("\r") == 3                 # 0 %, 50 %, 100 %: an unchanged percent is not redrawn
    assert text.endswith("\rwork [##########] 100 %\n")
    assert "\rwork [#####-----]  50 %" in text


def test_no_bar_off_a_terminal():
    assert terminal_bars(io.StringIO()) is None           # StringIO.isatty() is False
    with stage_bar(None, "quiet") as done:
        done(0.5)                                          # reports go nowhere
    parts = []
    share(parts.append, 0.5, 1.0)(0.5)
    assert parts == [0.75]


def test_reporting_the_fabric_bootstrap_leaves_its_numbers_alone():
    olivine = find_mineral("olivine")
    q = fabric_orientations(olivine, "olivine-A", 600, 20.0, seed=4)
    counts = uncertainty.resample_counts(len(q), 30, np.random.default_rng(1))
    told: list[float] = []
    plain = uncertainty.fabric_bootstrap(olivine, q, np.ones(len(q)), counts, 10.0, np.random.default_rng(2))
    reported = uncertainty.fabric_bootstrap(olivine, q, np.ones(len(q)), counts, 10.0, np.random.default_rng(2),
                                            told.append)
    assert np.array_equal(plain["J"], reported["J"]) and np.array_equal(plain["M"], reported["M"])
    assert len(told) >= 3 and told == sorted(told) and told[-1] == 1.0     # 600 grains: two blocks of J, then M


def _run_on_a_terminal(out: Path, command: list[str] | None = None) -> str:
    """The command (by default the sample command into ``out``) with stderr on a pseudo-terminal
    (stdout a pipe); what the terminal showed."""
    leader, follower = pty.openpty()
    process = subprocess.Popen(command or [*COMMAND, str(out)], stdout=subprocess.PIPE, stderr=follower, env=ENV,
                               cwd=ROOT)
    os.close(follower)
    shown = b""
    while True:               # read as it comes: a full terminal buffer would stop the command
        ready, _, _ = select.select([leader], [], [], 1.0)
        if ready:
            try:
                chunk = os.read(leader, 4096)
            except OSError:          # the command closed its end
                break
            if not chunk:
                break
            shown += chunk
        elif process.poll() is not None:
            break
    process.wait(timeout=600)
    os.close(leader)
    assert process.returncode == 0
    return shown.decode(errors="replace")


def test_bars_on_a_terminal(tmp_path):
    shown = _run_on_a_terminal(tmp_path / "tty")
    bars = re.findall(r"\r([^\r\n]+?) \[[#-]+\] +(\d+) %", shown)
    labels = {label for label, _ in bars}
    assert "bootstrap: 200 resamples of the grains" in labels
    assert "fabric of olivine (400 grains)" in labels
    for label in labels:
        assert [int(p) for lab, p in bars if lab == label][-1] == 100
    assert (tmp_path / "tty" / "summary.json").is_file()


def test_the_field_command_shows_its_figures_on_a_terminal_and_nothing_off_it(tmp_path):
    # `fabric2seis field` of the demo grain list (two stations: two figures each, and the rose)
    sample = tmp_path / "sample"
    assert subprocess.run([*COMMAND, str(sample)], capture_output=True, env=ENV, cwd=ROOT, timeout=600).returncode == 0
    field = [sys.executable, "-m", "fabric2seis", "field", str(sample), "--measurements",
             str(ROOT / "demo_samples" / "field_measurements.csv"), "--out"]
    shown = _run_on_a_terminal(tmp_path / "tty", [*field, str(tmp_path / "tty")])
    bars = re.findall(r"\r([^\r\n]+?) \[[#-]+\] +(\d+) %", shown)
    assert {label for label, _ in bars} == {"drawing 5 figures"} and bars[-1][1] == "100"
    done = subprocess.run([*field, str(tmp_path / "pipe")], capture_output=True, text=True, env=ENV, cwd=ROOT,
                          timeout=600)
    assert done.returncode == 0 and done.stderr == ""


def test_no_bar_without_a_terminal_and_run_log_names_every_file(tmp_path):
    out = tmp_path / "pipe"
    done = subprocess.run([*COMMAND, str(out)], capture_output=True, text=True, env=ENV, cwd=ROOT, timeout=600)
    assert done.returncode == 0
    assert done.stderr == ""                   # no bar and no step messages off a terminal
    assert done.stdout.strip() == f"wrote {out}"
    logged = set()
    for line in (out / "run.log").read_text().splitlines():
        # "figures: " marks the second process drawing figures alongside the bootstrap (2 threads)
        step = re.fullmatch(r" *\d+\.\d\d s  (?:figures: )?wrote (.+) in (\d+\.\d\d) s", line)
        if step:
            logged.update(step.group(1).split(", "))
    # every table and figure; not the log itself, nor the marker of a results folder (folders.py)
    written = {p.name for p in out.iterdir() if not p.name.startswith(".")} - {"run.log"}
    assert written and logged == written
