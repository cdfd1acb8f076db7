"""The commands never delete or change a user's files.

Each case runs a command as a careless user might and checks three things: the exit status, the
one-line message, and that every file outside the results folder it was allowed to write is
byte-identical before and after (sha256 of every file under the project folder).
"""

import hashlib
from pathlib import Path

import pytest

from fabric2seis.cli import main
from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.folders import MARKER
from fabric2seis.ingest.io.write import write_table
from fabric2seis.synth import fabric_orientations

ROOT = Path(__file__).resolve().parents[1]
FAST = "bootstrap: {n: 0}\n"


def snapshot(folder: Path, leave_out: Path | None = None) -> dict[str, str]:
    """sha256 of every file under ``folder`` (not following links), by relative path."""
    out = {}
    for path in sorted(folder.rglob("*")):
        if leave_out is not None and (path == leave_out or leave_out in path.parents):
            continue
        if path.is_file() and not path.is_symlink():
            out[str(path.relative_to(folder))] = hashlib.sha256(path.read_bytes()).hexdigest()
    return out


@pytest.fixture()
def project(tmp_path, monkeypatch):
    """A user's project folder: a sample with its sidecar, notes, measurements and old results."""
    monkeypatch.chdir(tmp_path)
    data = tmp_path / "data"
    data.mkdir()
    ol = find_mineral("olivine")
    write_table(data / "s1.csv", fabric_orientations(ol, "olivine-A", 60, 20.0, seed=1), ["olivine"] * 60)
    (data / "s1.yaml").write_text(FAST)
    (tmp_path / "notes.txt").write_text("field notes, not to be lost\n")
    (tmp_path / "measurements.csv").write_text(
        "station,baz_deg,fast_azimuth_deg,delay_s\nST1,30,40,1.0\nST1,120,45,1.1\n")
    assert main(["sample", "data/s1.csv", "--out", "results/s1"]) == 0
    (tmp_path / "results" / "suite_summary.csv").write_text("sample,status\ns1,ok\n")
    return tmp_path


def refused(argv, capsys, *fragments):
    code = main(argv)
    err = capsys.readouterr().err
    assert code == 2, err
    assert err.count("\n") == 1 and "Traceback" not in err, err
    for fragment in fragments:
        assert fragment in err, err
    return err


@pytest.mark.parametrize("out, fragment", [
    (".", "current folder"),
    ("..", "current folder"),
    ("data", "holds the input"),
    ("results", "results root"),
    ("elsewhere/new", None),             # allowed: a new folder of its own
])
def test_sample_output_that_would_destroy_files_is_refused(project, capsys, out, fragment):
    before = snapshot(project)
    if fragment is None:
        assert main(["sample", "data/s1.csv", "--out", "elsewhere/new"]) == 0
        assert snapshot(project, project / "elsewhere") == before
        return
    refused(["sample", "data/s1.csv", "--out", out], capsys, fragment, "--out")
    assert snapshot(project) == before


def test_output_above_the_input_and_a_users_own_folder_are_refused(project, capsys):
    before = snapshot(project)
    refused(["sample", str(project / "data" / "s1.csv"), "--out", str(project)], capsys, "current folder")
    (project / "mine").mkdir()
    (project / "mine" / "thesis.tex").write_text("chapter 1\n")
    before = snapshot(project)
    refused(["sample", "data/s1.csv", "--out", "mine"], capsys, "not written by fabric2seis")
    assert snapshot(project) == before


def test_settings_file_folder_is_protected_too(project, capsys):
    (project / "conf").mkdir()
    (project / "conf" / "s.yaml").write_text(FAST)
    before = snapshot(project)
    refused(["sample", "data/s1.csv", "--settings", "conf/s.yaml", "--out", "conf"], capsys, "holds the input")
    assert snapshot(project) == before


@pytest.mark.parametrize("name", ["...csv", "..csv"])
def test_sample_names_dot_and_dotdot_are_refused(project, capsys, name):
    (project / "data" / name).write_bytes((project / "data" / "s1.csv").read_bytes())
    before = snapshot(project)
    refused(["sample", f"data/{name}"], capsys, "cannot name a results folder", name)
    assert snapshot(project) == before


def test_field_output_on_the_results_root_or_a_sample_is_refused(project, capsys):
    before = snapshot(project)
    refused(["field", "results/s1", "--measurements", "measurements.csv", "--out", "results"], capsys,
            "results root")
    refused(["field", "results/s1", "--measurements", "measurements.csv", "--out", "results/s1"], capsys,
            "holds the input")
    refused(["field", "results/s1", "--measurements", "measurements.csv", "--out", "."], capsys, "current folder")
    assert snapshot(project) == before


def test_stack_output_on_the_results_root_is_refused(project, capsys):
    (project / "stack.yaml").write_text("period_s: 8\nlayers:\n  - {fast_azimuth_deg: 30, delay_s: 1.0}\n")
    before = snapshot(project)
    refused(["field", "--stack", "stack.yaml", "--out", "results"], capsys, "results root")
    refused(["field", "--stack", "stack.yaml", "--out", "results/s1"], capsys, "sample results")
    assert snapshot(project) == before


def test_rerun_replaces_own_results_and_nothing_else(project, capsys):
    (project / "results" / "s1" / "leftover.txt").write_text("from the earlier run")
    before = snapshot(project, project / "results" / "s1")
    assert main(["sample", "data/s1.csv", "--out", "results/s1"]) == 0
    assert not (project / "results" / "s1" / "leftover.txt").exists()
    assert (project / "results" / "s1" / MARKER).is_file()
    assert snapshot(project, project / "results" / "s1") == before
    assert sorted(p.name for p in (project / "results").iterdir()) == ["s1", "suite_summary.csv"]
