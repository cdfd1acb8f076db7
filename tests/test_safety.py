"""Settings never run code: YAML read safely, no shell, paths of the workflow's config kept in the project.

The Python tags of PyYAML's full loader construct and call objects (`!!python/object/apply`),
which ``yaml.safe_load`` refuses (PyYAML documentation, "Loading YAML"); a command given to a
shell as one string is split and expanded by the shell (Python documentation of subprocess,
"Security considerations").
"""

import ast
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from fabric2seis.ingest.io.write import write_table
from fabric2seis.synth import fabric_orientations

ROOT = Path(__file__).resolve().parents[1]
os.environ["PYTHONPATH"] = os.pathsep.join(p for p in (str(ROOT), os.environ.get("PYTHONPATH")) if p)
TAG = 'extra: !!python/object/apply:os.system ["touch PWNED"]\n'
TEMPLATE = '__use_yte__: true\nodf:\n  halfwidth_deg: ?__import__("os").system("touch PWNED") or 10\n'


def _grain_list(folder: Path, name: str = "g") -> Path:
    from fabric2seis.elastic.minerals import find_mineral

    path = folder / f"{name}.csv"
    write_table(path, fabric_orientations(find_mineral("olivine"), "olivine-A", 60, 20.0, seed=2), ["olivine"] * 60)
    return path


def _project(tmp_path: Path, config_text: str) -> Path:
    """A copy of the project folder whose config/config.yaml holds ``config_text``.

    Its Snakefile includes the packaged workflow (fabric2seis/workflow/Snakefile), as the root one does.
    """
    project = tmp_path / "project"
    (project / "config").mkdir(parents=True)
    shutil.copyfile(ROOT / "Snakefile", project / "Snakefile")
    (project / "fabric2seis").symlink_to(ROOT / "fabric2seis")
    (project / "config" / "config.yaml").write_text(config_text)
    (project / "samples").mkdir()
    return project


def _config(**replace: str) -> str:
    text = (ROOT / "config" / "config.yaml").read_text()
    for key, value in replace.items():
        lines = [line for line in text.splitlines(keepends=True) if not line.startswith(f"{key}:")]
        text = "".join(lines) + f"{key}: {value}\n"
    return text


def _one_line_refusal(run: subprocess.CompletedProcess, *fragments: str) -> str:
    assert run.returncode == 2, (run.stdout + run.stderr)[-2000:]
    line = run.stderr.strip()
    assert "\n" not in line and "Traceback" not in line, line
    for fragment in fragments:
        assert fragment in line, line
    return line


def test_a_python_tag_in_a_sidecar_is_refused_and_runs_nothing(tmp_path):
    data = _grain_list(tmp_path)
    (tmp_path / "g.yaml").write_text("bootstrap: {n: 10}\n" + TAG)
    run = subprocess.run([sys.executable, "-m", "fabric2seis", "sample", str(data), "--out", str(tmp_path / "out")],
                         cwd=tmp_path, capture_output=True, text=True, timeout=300)
    _one_line_refusal(run, "g.yaml, line 2, column 8", "python/object/apply")
    assert not (tmp_path / "PWNED").exists() and not (ROOT / "PWNED").exists() and not (tmp_path / "out").exists()


@pytest.mark.parametrize("text, fragments", [
    (_config() + TAG, ("config/config.yaml, line", "python/object/apply")),
    (TEMPLATE, ("config/config.yaml, key __use_yte__", "unknown settings key")),
], ids=["python tag", "template"])
def test_a_workflow_config_that_would_run_code_is_refused(tmp_path, text, fragments):
    project = _project(tmp_path, text)
    plain = subprocess.run([sys.executable, "-m", "snakemake", "-n", "--cores", "1"], cwd=project,
                           capture_output=True, text=True, timeout=300)
    line = _one_line_refusal(plain, *fragments)
    assert line.startswith("fabric2seis workflow: error:")
    suite = subprocess.run([sys.executable, "-m", "fabric2seis", "suite", "--samples", "samples", "-n"], cwd=project,
                           capture_output=True, text=True, timeout=300)
    assert _one_line_refusal(suite, *fragments).startswith("fabric2seis suite: error:")
    assert not (project / "PWNED").exists() and not (ROOT / "PWNED").exists()


def test_a_config_file_given_to_the_suite_is_checked_before_snakemake_reads_it(tmp_path):
    project = _project(tmp_path, _config())
    (project / "mine.yaml").write_text(TEMPLATE)
    run = subprocess.run([sys.executable, "-m", "fabric2seis", "suite", "--samples", "samples", "-n",
                          "--configfile", "mine.yaml"], cwd=project, capture_output=True, text=True, timeout=300)
    _one_line_refusal(run, "mine.yaml, key __use_yte__")
    assert not (project / "PWNED").exists()


@pytest.mark.parametrize("key, value", [("results_dir", "../elsewhere"), ("samples_dir", "/")])
def test_config_file_paths_stay_in_the_project_unless_allowed(tmp_path, key, value):
    project = _project(tmp_path, _config(**{key: value}))
    dry = [sys.executable, "-m", "snakemake", "-n", "--cores", "1"]
    run = subprocess.run(dry, cwd=project, capture_output=True, text=True, timeout=300)
    _one_line_refusal(run, f"config/config.yaml, key {key}: {key} '{value}' lies outside the project folder",
                      "allow_outside_paths")
    (project / "config" / "config.yaml").write_text(_config(**{key: value, "allow_outside_paths": "true"}))
    assert subprocess.run(dry, cwd=project, capture_output=True, timeout=300).returncode == 0
    # the same folder typed on the command line is the user's explicit choice
    (project / "config" / "config.yaml").write_text(_config(**{key: value}))
    given = subprocess.run(dry + ["--config", f"{key}={value}"], cwd=project, capture_output=True, timeout=300)
    assert given.returncode == 0, given.stderr[-2000:]
    assert not (tmp_path / "elsewhere").exists()


def _calls_that_reach_a_shell(tree: ast.AST) -> list[str]:
    found = []
    for node in ast.walk(tree):
        if not isinstance(node, ast.Call):
            continue
        name = ast.unparse(node.func)
        if any(k.arg == "shell" and not (isinstance(k.value, ast.Constant) and k.value.value is False)
               for k in node.keywords):
            found.append(f"{name}(shell=...)")
        if name in ("os.system", "os.popen", "subprocess.getoutput", "subprocess.getstatusoutput") or \
                name.startswith(("os.exec", "os.spawn")) or name == "shell":
            found.append(name)
        if name.startswith("subprocess.") and node.args and isinstance(node.args[0], (ast.Constant, ast.JoinedStr,
                                                                                      ast.BinOp)):
            found.append(f"{name} with a command string")
    return found


def test_no_setting_reaches_a_shell():
    sources = [*ROOT.glob("fabric2seis/**/*.py"), *ROOT.glob("tools/*.py")]     # the workflow's scripts too
    assert len(sources) > 40 and len(list(ROOT.glob("fabric2seis/workflow/scripts/*.py"))) > 5
    problems = {str(p.relative_to(ROOT)): c for p in sources
                if (c := _calls_that_reach_a_shell(ast.parse(p.read_text())))}
    assert problems == {}
    workflow = ROOT / "fabric2seis" / "workflow"
    for rules in [ROOT / "Snakefile", workflow / "Snakefile", *workflow.glob("rules/*.smk")]:   # scripts, not shells
        words = rules.read_text().split()
        assert "shell:" not in words and "run:" not in words, rules
    # the check finds what it looks for
    assert len(_calls_that_reach_a_shell(ast.parse(
        "import os, subprocess\nos.system(cmd)\nsubprocess.run(f'snakemake {x}')\nsubprocess.run(a, shell=True)"))) == 3
