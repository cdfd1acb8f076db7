"""Your own minerals (``--minerals DIR``, settings key ``minerals_dir``) and phases left out (``drop_phases``),
through the command ``fabric2seis sample`` on small synthetic grain lists.

Facts used: a mineral file is checked as the library's own (a stiffness must be positive definite,
Nye 1957); the density of an aggregate is the volume-weighted mean of its minerals' densities, and
volume fractions of the phases kept sum to 1 (common practice).
"""

import json
import shutil
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from fabric2seis.elastic.minerals import DATA_DIR, find_mineral, load_library
from fabric2seis.errors import InputError
from fabric2seis.ingest.io.write import write_table
from fabric2seis.synth import fabric_orientations

TESTITE = """\
    # an invented orthorhombic mineral, for the tests only
    name: testite
    aliases: [tst]
    point_group: mmm
    density_kg_m3: 3000.0
    lattice: {a: 5, b: 6, c: 7, alpha: 90, beta: 90, gamma: 90}
    published_axes: {x: a, z: c}
    source: invented for a test
    from_memory: []
    cij_gpa:
      - [200, 70, 70, 0, 0, 0]
      - [70, 200, 70, 0, 0, 0]
      - [70, 70, 200, 0, 0, 0]
      - [0, 0, 0, C44, 0, 0]
      - [0, 0, 0, 0, 60, 0]
      - [0, 0, 0, 0, 0, 60]
"""


def run(*args, cwd):
    return subprocess.run([sys.executable, "-m", "fabric2seis", *map(str, args)], capture_output=True, text=True,
                          cwd=cwd, timeout=600)


def one_line_refusal(out, *fragments):
    assert out.returncode == 2, (out.stdout + out.stderr)[-2000:]
    line = out.stderr.strip()
    assert "\n" not in line and "Traceback" not in line, line
    for fragment in fragments:
        assert fragment in line, line
    return line


def write_minerals(folder: Path, c44: str = "60", olivine_density: float = 3400.0) -> Path:
    """A folder with testite (new) and an olivine of another density (replacing the packaged entry)."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "testite.yaml").write_text(textwrap.dedent(TESTITE).replace("C44", c44))
    olivine = (DATA_DIR / "olivine.yaml").read_text().replace("density_kg_m3: 3355.0",
                                                              f"density_kg_m3: {olivine_density}")
    assert f"density_kg_m3: {olivine_density}" in olivine
    (folder / "my_olivine.yaml").write_text(olivine)
    return folder


def write_mix(path: Path, counts=(("olivine", 200), ("Testite", 60), ("Spinel_X", 40))) -> Path:
    """A grain list: olivine with a fabric, and grains of other phases (random orientations)."""
    frames = []
    for k, (phase, n) in enumerate(counts):
        single = path.with_name(f"part{k}.csv")
        fabric = "olivine-A" if phase == "olivine" else "random"
        write_table(single, fabric_orientations(find_mineral("olivine"), fabric, n, 20.0, seed=3 + k), [phase] * n)
        frames.append(pd.read_csv(single))
        single.unlink()
    pd.concat(frames).to_csv(path, index=False)
    return path


@pytest.fixture(scope="module")
def project(tmp_path_factory):
    folder = tmp_path_factory.mktemp("project")
    write_minerals(folder / "mine")
    write_mix(folder / "mix.csv")
    return folder


@pytest.fixture(scope="module")
def finished(project):
    (project / "mix.yaml").write_text("drop_phases: [Spinel_X]\nbootstrap: {n: 0}\n")
    out = run("sample", "mix.csv", "--minerals", "mine", "--out", "out", cwd=project)
    assert out.returncode == 0, out.stderr[-3000:]
    read = {name: json.loads((project / "out" / name).read_text()) for name in ("summary.json", "provenance.json")}
    return read["summary.json"], read["provenance.json"], (project / "out" / "run.log").read_text()


def test_own_minerals_add_and_replace_and_say_so(finished, project):
    summary, provenance, log = finished
    used = summary["mineral_library"]["used"]
    assert used["testite"]["origin"] == "user" and used["testite"]["file"] == "mine/testite.yaml"
    assert used["olivine"]["origin"] == "user" and used["olivine"]["file"] == "mine/my_olivine.yaml"
    entries = {e["name"]: e for e in summary["mineral_library"]["user_entries"]}
    assert entries["olivine"]["replaces"] == str(DATA_DIR / "olivine.yaml") and entries["testite"]["replaces"] is None
    assert summary["mineral_library"]["folder"] == "mine"
    assert provenance["mineral_library"] == summary["mineral_library"]
    assert provenance["settings"]["minerals_dir"] == "mine"
    assert provenance["minerals"]["olivine"]["file"] == "mine/my_olivine.yaml"
    assert f"mineral olivine from mine/my_olivine.yaml, replacing the packaged entry {DATA_DIR / 'olivine.yaml'}" in log
    assert "mineral testite from mine/testite.yaml (a mineral of your own)" in log


def test_dropped_phase_is_left_out_and_fractions_renormalised(finished):
    summary, _, log = finished
    # 200 olivine, 60 testite, 40 Spinel_X grains of weight 1: Spinel_X made 40 / 300 of the sample
    assert summary["dropped_phases"] == {"Spinel_X": {"file_phases": ["Spinel_X"], "n_points": 40,
                                                       "former_fraction": round(40 / 300, 6),
                                                       "fraction_source": "measured area"}}
    phases = summary["phases"]
    assert set(phases) == {"olivine", "testite"} and summary["n_points"] == 260
    assert phases["olivine"]["fraction"] == pytest.approx(200 / 260, abs=1e-6)
    assert phases["testite"]["fraction"] == pytest.approx(60 / 260, abs=1e-6)
    assert sum(p["fraction"] for p in phases.values()) == pytest.approx(1.0, abs=1e-6)
    # the density is the volume-weighted mean of the user's olivine (3400) and testite (3000)
    assert summary["density_kg_m3"] == pytest.approx((200 * 3400.0 + 60 * 3000.0) / 260, abs=0.01)
    assert "phase Spinel_X left out (drop_phases): 40 points of file phase(s) Spinel_X, former fraction 0.1333" in log


def test_minerals_command_lists_your_own(project):
    out = run("minerals", "--minerals", "mine", cwd=project)
    assert out.returncode == 0, out.stderr
    assert any(line.startswith("testite ") for line in out.stdout.splitlines())
    assert "your own: testite from mine/testite.yaml" in out.stdout
    assert f"your own: olivine from mine/my_olivine.yaml, replacing the packaged {DATA_DIR / 'olivine.yaml'}" \
        in out.stdout
    shown = run("minerals", "tst", "--minerals", "mine", cwd=project)
    assert shown.returncode == 0 and "testite" in shown.stdout and "file            mine/testite.yaml" in shown.stdout
    assert "testite" not in run("minerals", cwd=project).stdout          # only with the folder


@pytest.mark.parametrize("change, fragments", [
    (lambda f: f.write_text(f.read_text().replace("[0, 0, 0, 60, 0, 0]", "[0, 0, 0, -5, 0, 0]")),
     ("bad/testite.yaml, cij_gpa:", "not positive definite")),
    (lambda f: f.write_text(f.read_text().replace("source: invented for a test\n", "")),
     ("bad/testite.yaml, source: missing required key",)),
    (lambda f: f.write_text(f.read_text().replace("point_group: mmm", "point_group: 4/mmm")
                            .replace("[70, 200, 70, 0, 0, 0]", "[70, 210, 70, 0, 0, 0]")),   # c22 != c11
     ("bad/testite.yaml, cij_gpa:", "break point group 4/mmm symmetry")),
    (lambda f: f.write_text(f.read_text().replace("density_kg_m3: 3000.0", "density_kg_m3: 3.0")),
     ("bad/testite.yaml, density_kg_m3:", "not plausible")),
    (lambda f: (f.parent / "again.yaml").write_text(f.read_text()),
     ("bad/testite.yaml, name: a second entry named 'testite'", "bad/again.yaml")),
], ids=["not positive definite", "no source", "wrong symmetry", "density", "two of one name"])
def test_a_bad_own_mineral_is_one_line_naming_file_and_key(project, change, fragments):
    bad = write_minerals(project / "bad")
    change(bad / "testite.yaml")
    try:
        out = run("sample", "mix.csv", "--minerals", "bad", "--out", "refused", cwd=project)
        one_line_refusal(out, *fragments)
        assert not (project / "refused").exists()
        listed = run("minerals", "--minerals", "bad", cwd=project)
        one_line_refusal(listed, *fragments)
    finally:
        shutil.rmtree(bad)


def test_a_missing_minerals_folder_is_refused(project):
    one_line_refusal(run("sample", "mix.csv", "--minerals", "nowhere", cwd=project),
                     "nowhere, option --minerals: no such folder of mineral files")


def test_a_missing_minerals_folder_in_a_settings_file_with_poles_is_refused_naming_the_file(project):
    # figures.poles names minerals, so the settings are checked against the library before the
    # run: a minerals_dir that is not a folder is the settings file's error, at its key (found by
    # tests/test_fuzzing.py with hypothesis 6.170)
    settings = project / "poles.yaml"
    settings.write_text('minerals_dir: "0"\nfigures: {poles: {olivine: ["[100]"]}}\n')
    one_line_refusal(run("sample", "mix.csv", "--settings", settings, cwd=project),
                     "poles.yaml, key minerals_dir: no such folder of mineral files: 0")


def test_minerals_dir_in_a_sidecar_keeps_to_the_project_unless_allowed(project, tmp_path):
    # the path rule of the workflow's config (tests/test_safety.py): a path written in a settings file
    # stays in the project folder (here the folder the command runs in) unless allow_outside_paths is true
    outside = write_minerals(tmp_path / "elsewhere")
    settings = project / "outside.yaml"
    settings.write_text(f"minerals_dir: {outside}\ndrop_phases: [olivine, testite, Spinel_X]\n")
    one_line_refusal(run("sample", "mix.csv", "--settings", settings, cwd=project),
                     "outside.yaml, key minerals_dir:", "lies outside the project folder")
    settings.write_text("minerals_dir: ../elsewhere\ndrop_phases: [olivine]\n")
    one_line_refusal(run("sample", "mix.csv", "--settings", settings, cwd=project), "key minerals_dir")
    # allowed: the folder is read, and the run goes on to the next check (here: every phase dropped)
    settings.write_text(f"minerals_dir: {outside}\nallow_outside_paths: true\ndrop_phases: [olivine, testite, "
                        "Spinel_X]\n")
    one_line_refusal(run("sample", "mix.csv", "--settings", settings, cwd=project),
                     "outside.yaml, key drop_phases:", "leaves out every phase")
    # typed on the command line, a folder may lie anywhere
    settings.write_text("drop_phases: [olivine, testite, Spinel_X]\n")
    one_line_refusal(run("sample", "mix.csv", "--settings", settings, "--minerals", outside, cwd=project),
                     "leaves out every phase")


def test_dropping_a_name_that_is_neither_a_phase_nor_a_mineral_is_refused(project):
    settings = project / "typo.yaml"
    settings.write_text("drop_phases: [Spinel_X, Spinal_X]\n")
    one_line_refusal(run("sample", "mix.csv", "--settings", settings, "--minerals", "mine", cwd=project),
                     "typo.yaml, key drop_phases.1:", "'Spinal_X' is neither a phase of mix.csv",
                     "did you mean 'Spinel_X'")
    assert not (project / "results").exists()


# in-process: the ingestion alone (no figures), for the finer points of dropping


def ingested(project, text):
    from fabric2seis.pipeline import ingest
    from fabric2seis.settings import settings_for

    (project / "inproc.yaml").write_text(text)
    settings, source = settings_for(project / "mix.csv", project / "inproc.yaml", minerals_dir=project / "mine")
    return ingest(project / "mix.csv", settings, source)


def test_a_library_mineral_the_sample_lacks_is_a_caution_not_an_error(project):
    sample = ingested(project, "drop_phases: [Spinel_X, spinel]\n")
    assert list(sample.dropped_phases) == ["Spinel_X"]
    assert sample.phase_notes == ["drop_phases names spinel, which this sample does not hold; nothing left out for it"]


def test_dropping_by_library_name_finds_the_file_phase_it_stands_for(project):
    # 'tst' is an alias of the user's testite, whose file phase is 'Testite'
    sample = ingested(project, "drop_phases: [tst, Spinel_X]\n")
    assert sample.dropped_phases["testite"]["file_phases"] == ["Testite"]
    assert [m.name for m in sample.points.minerals] == ["olivine"] and sample.fractions == {"olivine": 1.0}


def test_given_fractions_of_a_dropped_phase_are_renormalised_over_the_phases_kept(project):
    sample = ingested(project, "drop_phases: [Spinel_X]\nmodal_fractions: {olivine: 0.6, testite: 0.2, "
                               "Spinel_X: 0.2}\n")
    assert sample.fractions == pytest.approx({"olivine": 0.75, "testite": 0.25})
    assert sample.dropped_phases["Spinel_X"]["former_fraction"] == pytest.approx(0.2)
    assert sample.dropped_phases["Spinel_X"]["fraction_source"] == "settings"


def test_a_user_entry_named_like_an_alias_is_found_by_its_name(tmp_path):
    # 'garnet' is an alias of the packaged pyrope: a user's mineral named garnet is found by that name,
    # and pyrope still by its own
    (tmp_path / "garnet.yaml").write_text(textwrap.dedent(TESTITE).replace("name: testite", "name: garnet")
                                          .replace("aliases: [tst]", "aliases: []").replace("C44", "60"))
    library = load_library([tmp_path])
    assert find_mineral("garnet", library).file == str(tmp_path / "garnet.yaml")
    assert find_mineral("pyrope", library).name == "pyrope"
    with pytest.raises(InputError, match="no such folder of mineral files"):
        load_library([tmp_path / "missing"])
    assert np.allclose(find_mineral("garnet", library).stiffness_gpa[5, 5], 60.0)
