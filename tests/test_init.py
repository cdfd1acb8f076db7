"""`fabric2seis init FOLDER`: a starter project, never written over an existing file (issue 14)."""

import csv
from pathlib import Path

import pytest

from fabric2seis.cli import main
from fabric2seis.settings import PACKAGED_DEFAULTS, read_yaml, validate
from fabric2seis.workflow.suite import discover_measurements, discover_samples

#: the columns of the field measurements CSV (CONTRACT.md, "Inputs")
MEASUREMENT_COLUMNS = ["station", "baz_deg", "fast_azimuth_deg", "delay_s", "fast_azimuth_err_deg", "delay_err_s",
                       "null", "incidence_deg"]
FILES = ["README.txt", "config/config.yaml", "field_measurements_template.csv", "samples/example.yaml"]


def _files(folder: Path) -> list[str]:
    return sorted(str(p.relative_to(folder)) for p in folder.rglob("*") if p.is_file())


def test_init_writes_a_config_an_example_sidecar_a_template_and_a_readme(tmp_path, capsys):
    project = tmp_path / "my project"
    assert main(["init", str(project)]) == 0
    assert _files(project) == FILES
    assert "README.txt" in capsys.readouterr().out
    # the config is the packaged defaults, every key with its comment, reading the samples from samples/
    config = validate(read_yaml(project / "config" / "config.yaml"), "config.yaml")
    assert config == {**read_yaml(PACKAGED_DEFAULTS), "samples_dir": "samples"}
    text = (project / "config" / "config.yaml").read_text()
    assert all(line in text for line in PACKAGED_DEFAULTS.read_text().splitlines() if line.startswith("#"))
    # the example sidecar is valid settings, says what its numbers are in, and is not taken for a sample
    sidecar = validate(read_yaml(project / "samples" / "example.yaml"), "example.yaml")
    assert {"phases", "frame", "field"} <= set(sidecar)
    sidecar_text = (project / "samples" / "example.yaml").read_text()
    assert all(unit in sidecar_text for unit in ("degrees", "km", "GPa"))
    assert discover_samples(project / "samples") == {}
    # the template has the CONTRACT's columns, and units are said in the README; kept out of samples/
    with (project / "field_measurements_template.csv").open() as f:
        assert next(csv.reader(f)) == MEASUREMENT_COLUMNS
    readme = (project / "README.txt").read_text()
    assert "degrees clockwise from north" in readme and "seconds" in readme
    assert discover_measurements(project) == [project / "field_measurements_template.csv"]
    # the next two commands
    commands = [line.strip() for line in readme.splitlines() if line.strip().startswith("fabric2seis ")]
    assert len(commands) == 2 and all("suite --samples samples" in c for c in commands)


@pytest.mark.parametrize("existing", ["README.txt", "samples/example.yaml"])
def test_init_refuses_to_write_over_an_existing_file_and_writes_nothing(tmp_path, capsys, existing):
    project = tmp_path / "p"
    (project / existing).parent.mkdir(parents=True)
    (project / existing).write_text("mine\n")
    assert main(["init", str(project)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "Traceback" not in err
    assert err.startswith(f"fabric2seis init: error: {project / existing}: already exists")
    assert _files(project) == [existing] and (project / existing).read_text() == "mine\n"


def test_init_into_a_file_or_twice_is_refused(tmp_path, capsys):
    (tmp_path / "a_file").write_text("")
    assert main(["init", str(tmp_path / "a_file")]) == 2
    assert "not a folder" in capsys.readouterr().err
    assert main(["init", str(tmp_path / "q")]) == 0
    before = {name: (tmp_path / "q" / name).read_bytes() for name in FILES}
    assert main(["init", str(tmp_path / "q")]) == 2
    assert {name: (tmp_path / "q" / name).read_bytes() for name in FILES} == before
