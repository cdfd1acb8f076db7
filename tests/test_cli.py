"""The command-line shell: exit status, one-line errors, no traceback (CONTRACT.md)."""

import subprocess
import sys


def run(*args):
    return subprocess.run([sys.executable, "-m", "fabric2seis", *args], capture_output=True, text=True)


def test_minerals_lists_every_entry_with_density_and_source():
    out = run("minerals")
    assert out.returncode == 0, out.stderr
    for name in ("olivine", "quartz", "ice", "muscovite"):
        assert name in out.stdout
    assert "kg/m³" in out.stdout and "Abramson" in out.stdout


def test_minerals_shows_one_entry_in_full():
    out = run("minerals", "Fo90")
    assert out.returncode == 0, out.stderr
    assert "olivine" in out.stdout and "320.50" in out.stdout and "dCij/dP" in out.stdout


def test_unknown_mineral_is_one_line_exit_2_no_traceback():
    out = run("minerals", "olivne")
    assert out.returncode == 2
    assert out.stderr.count("\n") == 1 and "Traceback" not in out.stderr
    assert "did you mean 'olivine'" in out.stderr


def test_usage_error_exits_2():
    out = run("no-such-command")
    assert out.returncode == 2 and "Traceback" not in out.stderr


def test_the_readmes_python_example_runs():
    # The README shows the library used from Python; it must run as printed, and a random aggregate
    # of olivine is nearly isotropic (common practice: a few percent of anisotropy from 5,000 grains).
    import re
    from pathlib import Path

    readme = (Path(__file__).resolve().parents[1] / "README.md").read_text()
    code = re.search(r"## Using the library from Python\n\n```python\n(.*?)```", readme, re.S).group(1)
    scope: dict = {}
    exec(code.replace("print(", "found = ("), scope)
    vp_max, avs_max = scope["found"]
    assert 8.0 < vp_max < 8.6 and 0.0 < avs_max < 5.0


def _fake_suite(tmp_path, monkeypatch, outcomes):
    """A project folder whose Snakemake run is replaced by writing the given status files."""
    from fabric2seis import cli
    from fabric2seis.workflow.status import SampleStatus, write_status

    monkeypatch.chdir(tmp_path)
    (tmp_path / "config").mkdir(exist_ok=True)
    (tmp_path / "config" / "config.yaml").write_text("{}\n")
    (tmp_path / "s").mkdir(exist_ok=True)
    for name in outcomes:
        (tmp_path / "s" / f"{name}.csv").write_text("")
    commands = []

    def snakemake(command, lock=None, quiet=False):
        commands.append(command)
        for name, status in outcomes.items():
            if status is not None:
                write_status(tmp_path / "r" / "status" / f"{name}.json", SampleStatus(name, status))
        return 0, False

    monkeypatch.setattr(cli, "_snakemake", snakemake)
    return commands


def test_suite_ends_with_one_line_naming_each_failed_sample_and_strict_exits_3(tmp_path, monkeypatch, capsys):
    # issue 14: a failed sample is never silent; --strict makes it a non-zero exit (documented codes)
    from fabric2seis.cli import EXIT_FAILED_SAMPLES, main

    outcomes = {"a": "ok", "b": "b.csv, line 3: not a number", "c": None}
    commands = _fake_suite(tmp_path, monkeypatch, outcomes)
    assert main(["suite", "--samples", "s", "--results", "r", "--", "--keep-going"]) == 0
    err = capsys.readouterr().err.strip().splitlines()
    assert err[-1] == ("fabric2seis suite: 3 samples, 1 ok, 2 failed; b: b.csv, line 3: not a number; "
                       "c: not run (see Snakemake's messages above)")
    assert "--keep-going" in commands[0] and "--" not in commands[0]     # '--' is not passed on
    assert main(["suite", "--samples", "s", "--results", "r", "--strict"]) == EXIT_FAILED_SAMPLES == 3
    _fake_suite(tmp_path, monkeypatch, {"a": "ok", "b": "ok", "c": "ok"})
    assert main(["suite", "--samples", "s", "--results", "r", "--strict"]) == 0
    assert capsys.readouterr().err.strip().endswith("3 samples, 3 ok, 0 failed")


def test_suite_help_says_where_snakemakes_arguments_go_and_the_exit_codes():
    out = run("suite", "--help")
    assert out.returncode == 0 and "'--'" in out.stdout and "--strict" in out.stdout
    assert "3 with --strict" in " ".join(out.stdout.split())


def test_suite_runs_the_packaged_workflow_in_the_current_folder(tmp_path, monkeypatch, capsys):
    # issue 14: `fabric2seis suite` needs no Snakefile in the folder; --config FILE goes to Snakemake as a
    # config file (merged with any --configfile, since Snakemake keeps only the last one: its --help)
    from fabric2seis.cli import main
    from fabric2seis.workflow import SNAKEFILE

    commands = _fake_suite(tmp_path, monkeypatch, {"a": "ok"})
    (tmp_path / "mine.yaml").write_text("odf: {halfwidth_deg: 15}\n")
    (tmp_path / "more.yaml").write_text("bootstrap: {n: 10}\n")
    assert main(["suite", "--samples", "s", "--results", "r", "--config", "mine.yaml", "averaging=voigt",
                 "--", "--configfile", "more.yaml", "-n"]) == 0
    command = commands[-1]
    assert command[command.index("--snakefile") + 1] == str(SNAKEFILE) and SNAKEFILE.is_file()
    assert command.count("--configfile") == 1 and command.count("--config") == 1
    files = command[command.index("--configfile") + 1:command.index("--config")]
    assert files == ["mine.yaml", "more.yaml"]
    assert command[command.index("--config") + 1:command.index("--config") + 4] == [
        "samples_dir=s", "results_dir=r", "averaging=voigt"]


def test_suite_checks_a_config_file_before_snakemake_and_names_a_missing_one(tmp_path, monkeypatch, capsys):
    from fabric2seis.cli import main

    commands = _fake_suite(tmp_path, monkeypatch, {"a": "ok"})
    (tmp_path / "bad.yaml").write_text("odf: {halfwidht_deg: 15}\n")     # a misspelt key
    assert main(["suite", "--samples", "s", "--results", "r", "--config", "bad.yaml"]) == 2
    assert main(["suite", "--samples", "s", "--results", "r", "--config", "missing.yaml"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 2 and commands == []
    assert err[0].startswith("fabric2seis suite: error: bad.yaml") and "halfwidth_deg" in err[0]
    assert err[1].startswith("fabric2seis suite: error: missing.yaml, option --config: no such config file")


def test_suite_without_samples_where_there_are_no_demo_samples_says_to_give_them(tmp_path):
    # issue 14: from a folder without demo_samples/, one line naming --samples, exit 2, nothing written
    run = subprocess.run([sys.executable, "-m", "fabric2seis", "suite"], cwd=tmp_path, capture_output=True, text=True)
    assert run.returncode == 2 and run.stderr.count("\n") == 1 and "Traceback" not in run.stderr
    assert "demo_samples" in run.stderr and "--samples DIR" in run.stderr
    (tmp_path / "empty").mkdir()
    run = subprocess.run([sys.executable, "-m", "fabric2seis", "suite", "--samples", "empty"], cwd=tmp_path,
                         capture_output=True, text=True)
    assert run.returncode == 2 and run.stderr.count("\n") == 1 and "no EBSD exports" in run.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["empty"]
