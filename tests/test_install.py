"""The package installed from its wheel runs the workflow from any folder (issue 14).

The wheel is built from a copy of the package's sources (pip wheel, with build isolation: the
build backend comes from the package index, as for `pip install .`), installed without its
dependencies into a fresh virtual environment that sees the system's packages for them
(`python -m venv --system-site-packages`, Python documentation of venv), and run from an empty
folder outside the checkout with no PYTHONPATH, so that only the wheel's files can serve: its
Snakefile, rules, scripts, captions, defaults and schema.
"""

import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest

ROOT = Path(__file__).resolve().parents[1]


def _run(command, cwd, env, timeout=600):
    run = subprocess.run([str(c) for c in command], cwd=cwd, env=env, capture_output=True, text=True,
                         timeout=timeout)
    assert run.returncode == 0, f"{command}\n{run.stdout[-2000:]}\n{run.stderr[-3000:]}"
    return run


@pytest.mark.long
def test_the_installed_wheel_initialises_a_project_and_runs_the_suite_from_an_empty_folder(tmp_path):
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "VIRTUAL_ENV", "PYTHONHOME")}
    source = tmp_path / "source"                 # the checkout's package files only: nothing is built in it
    source.mkdir()
    for name in ("pyproject.toml", "README.md", "LICENSE"):
        shutil.copyfile(ROOT / name, source / name)
    shutil.copytree(ROOT / "fabric2seis", source / "fabric2seis", ignore=shutil.ignore_patterns("__pycache__"))
    _run([sys.executable, "-m", "pip", "wheel", "--no-deps", "-q", "-w", tmp_path / "wheels", source], tmp_path, env)
    wheel, = (tmp_path / "wheels").glob("fabric2seis-*.whl")

    venv = tmp_path / "venv"
    _run([sys.executable, "-m", "venv", "--system-site-packages", venv], tmp_path, env)
    python, tool = venv / "bin" / "python", venv / "bin" / "fabric2seis"
    _run([python, "-m", "pip", "install", "--no-deps", "--no-index", "--force-reinstall", "-q", wheel], tmp_path, env)
    env["PATH"] = f"{venv / 'bin'}{os.pathsep}{env.get('PATH', '')}"     # as an activated environment

    work = tmp_path / "work"                     # an empty folder: no Snakefile, no config, no demo samples
    work.mkdir()
    where = _run([python, "-c", "import fabric2seis; print(fabric2seis.__file__)"], work, env).stdout.strip()
    assert Path(where).is_relative_to(venv) and not Path(where).is_relative_to(ROOT), where

    _run([tool, "init", "project"], work, env)
    assert (work / "project" / "config" / "config.yaml").is_file()
    samples = work / "project" / "samples"
    for name, fabric in (("a", "olivine-A"), ("b", "olivine-B")):
        _run([tool, "synth", samples / f"{name}.csv", "--fabric", fabric, "--n", "120", "--seed", "3"], work, env)
        (samples / f"{name}.yaml").write_text("bootstrap: {n: 10}\n")

    # from the empty folder: the packaged defaults under the project's config, given with --config
    run = _run([tool, "suite", "--samples", "project/samples", "--config", "project/config/config.yaml",
                "--cores", "1"], work, env, timeout=1200)
    snakefile = next(line.split(":", 1)[1].strip() for line in run.stderr.splitlines()
                     if line.strip().startswith("Snakefile:"))
    assert Path(snakefile).is_relative_to(venv), snakefile
    assert run.stderr.strip().splitlines()[-1] == "fabric2seis suite: 2 samples, 2 ok, 0 failed"
    table = pd.read_csv(work / "results" / "suite_summary.csv")
    assert dict(zip(table["sample"], table["status"])) == {"a": "ok", "b": "ok"}
    for name in ("a", "b"):
        summary = json.loads((work / "results" / name / "summary.json").read_text())
        assert summary["sample"] == name and summary["n_grains"] == 120
    assert (work / "results" / "report_parts" / "suite" / "suite_overview.csv").is_file()   # captions and scripts
