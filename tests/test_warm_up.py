"""The compiled functions are warmed once per installation before the workflow's jobs (fabric2seis.warm_up).

numba's on-disk cache is not safe for several processes filling it at once (measured: three fresh
processes importing orix at once damaged orix's cache in 5 of 6 trials, and every later import of
orix crashed); the workflow's ``onstart`` therefore runs one tiny map through the pipeline first.
Checked here: the warm-up runs the whole pipeline in a separate process and succeeds, is done once
(a marker per installation), and the workflow calls it before its jobs. The race itself is not
reproduced here: it would damage the test environment's own orix installation.
"""

from pathlib import Path

from fabric2seis import warm_up

ROOT = Path(__file__).resolve().parents[1]


def test_the_warm_up_runs_once_per_installation(tmp_path, monkeypatch):
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "cache"))
    told: list[str] = []
    assert warm_up.warm_compiled_caches(told.append) is True          # ran the tiny map, exit status 0
    assert warm_up.marker_file().is_file() and str(tmp_path) in str(warm_up.marker_file())
    assert len(told) == 1 and "once for this installation" in told[0]
    assert warm_up.warm_compiled_caches(told.append) is False         # the marker: not again
    assert len(told) == 1


def test_a_failed_warm_up_is_told_and_the_jobs_run_anyway(tmp_path, monkeypatch):
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "cache"))
    monkeypatch.setattr(warm_up.sys, "executable", str(tmp_path / "no_such_python"))

    def failing_run(command, **kwargs):
        import subprocess

        return subprocess.CompletedProcess(command, 3, "", "Traceback ...\nRuntimeError: broken\n")

    monkeypatch.setattr(warm_up.subprocess, "run", failing_run)
    told: list[str] = []
    assert warm_up.warm_compiled_caches(told.append) is False
    assert "failed (exit status 3)" in told[-1] and "RuntimeError: broken" in told[-1]
    assert not warm_up.marker_file().exists()                         # tried again next time


def test_the_workflow_warms_up_before_its_jobs():
    common = (ROOT / "fabric2seis" / "workflow" / "rules" / "common.smk").read_text()
    onstart = common.split("onstart:", 1)[1].split("\n\n", 1)[0]
    assert "warm_compiled_caches()" in onstart


def test_every_module_of_cached_compiled_functions_keys_the_warm_up():
    # numba recompiles a module's cached functions when its source changes (numba documentation,
    # "cache=True"): a module of such functions missing from COMPILED_MODULES would be compiled by
    # the suite's jobs side by side after a change, the race the warm-up exists to avoid
    package = Path(warm_up.__file__).resolve().parent
    compiled = sorted(str(path.relative_to(package)) for path in package.rglob("*.py")
                      if "cache=True" in path.read_text() and path.name != "warm_up.py")
    assert compiled == sorted(warm_up.COMPILED_MODULES)
