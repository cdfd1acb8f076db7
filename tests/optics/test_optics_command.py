"""`fabric2seis optics`: the files it writes, grain lists, and bad input (exit 2, nothing written)."""

import json

import numpy as np
import pandas as pd
import pytest

from fabric2seis.cli import main
from fabric2seis.folders import written_kind
from fabric2seis.ingest.io.write import write_ang, write_table
from fabric2seis.synth import voronoi_map

FIGURES = ("crossed_polars", "crossed_polars_plate", "retardation_map", "interference_chart")


@pytest.fixture(scope="module")
def small_map():
    return voronoi_map(10, 30, 20, step=1.0, n_phases=2, seed=3)


def write_map(path, m):
    write_ang(path, m.x, m.y, m.quat, m.phase, ["olivine", "enstatite"], ["mmm", "mmm"])
    return path


def test_map_gives_images_retardation_chart_and_statistics(tmp_path, small_map, capsys):
    f = write_map(tmp_path / "section A.ang", small_map)
    (tmp_path / "section A.yaml").write_text("optics: {thickness_um: 25, stage_deg: [0, 45]}\n")
    assert main(["optics", str(f), "--out", str(tmp_path / "o")]) == 0, capsys.readouterr().err
    out = tmp_path / "o"
    for figure in FIGURES:
        assert (out / f"{figure}.png").stat().st_size > 1000 and (out / f"{figure}.pdf").exists()
    assert written_kind(out) == "optics"
    table = pd.read_csv(out / "birefringence.csv")
    assert set(table["phase"]) == {"olivine", "enstatite"}
    assert {"retardation_max_nm", "thickness_um", "extinction_median_deg"} <= set(table.columns)  # units in names
    # each phase within its bounds (0 to n_gamma - n_alpha), retardation = birefringence x 25 um
    assert (table["birefringence_max"] <= table["birefringence_possible_max"] + 1e-6).all()
    assert np.allclose(table["retardation_max_nm"], table["birefringence_max"] * 25_000, atol=0.05)
    summary = json.loads((out / "optics_summary.json").read_text())
    assert summary["thickness_um"] == 25 and summary["stage_deg"] == [0, 45] and summary["images"] is True
    assert summary["polariser_sample"] == [1, 0, 0] and summary["analyser_sample"] == [0, -1, 0]
    assert summary["n_points"] == 600 and "birefringence.csv" in summary["files"]
    assert "crossed-polar images" in (out / "run.log").read_text()


def test_quartz_with_c_along_the_map_normal_shows_no_retardation(tmp_path):
    # c along the light is the optic axis: quartz is dark at every stage turn (common practice)
    m = voronoi_map(6, 20, 15, step=2.0, seed=1, noise_deg=0.0, cell_quat=np.tile([1.0, 0, 0, 0], (6, 1)))
    write_table(tmp_path / "q.csv", m.quat, ["quartz"] * len(m.x), x=m.x, y=m.y)
    (tmp_path / "q.yaml").write_text("optics: {plate: none}\n")
    assert main(["optics", str(tmp_path / "q.csv"), "--out", str(tmp_path / "o")]) == 0
    table = pd.read_csv(tmp_path / "o" / "birefringence.csv")
    assert table.loc[0, "retardation_max_nm"] == pytest.approx(0.0, abs=1e-6)
    assert not (tmp_path / "o" / "crossed_polars_plate.png").exists()


def test_grain_list_gives_statistics_and_chart_but_no_image(tmp_path, small_map):
    write_table(tmp_path / "g.csv", small_map.quat[:50], ["olivine"] * 50)
    assert main(["optics", str(tmp_path / "g.csv"), "--out", str(tmp_path / "o")]) == 0
    out = tmp_path / "o"
    assert (out / "interference_chart.png").exists() and (out / "birefringence.csv").exists()
    assert not list(out.glob("crossed_polars*")) and not (out / "retardation_map.png").exists()
    assert "no image can be drawn" in (out / "run.log").read_text()
    assert json.loads((out / "optics_summary.json").read_text())["images"] is False


def test_default_folder_is_results_optics_sample(tmp_path, small_map, monkeypatch):
    write_map(tmp_path / "s.ang", small_map)
    monkeypatch.chdir(tmp_path)
    assert main(["optics", "s.ang"]) == 0
    assert written_kind(tmp_path / "results" / "optics" / "s") == "optics"


@pytest.mark.parametrize("sidecar, key", [
    ("optics: {thickness_um: 0}\n", "key optics.thickness_um"),
    ("optics: {view: [0, 0, 0]}\n", "key optics.view"),
    ("optics: {plate: half_wave}\n", "key optics.plate"),
    ("optics: {thickness: 30}\n", "key optics.thickness"),
])
def test_bad_optics_settings_exit_2_naming_the_sidecar_and_key_and_write_nothing(tmp_path, small_map, capsys,
                                                                                 sidecar, key):
    f = write_map(tmp_path / "s.ang", small_map)
    (tmp_path / "s.yaml").write_text(sidecar)
    out = tmp_path / "o"
    assert main(["optics", str(f), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "Traceback" not in err
    assert "s.yaml" in err and key in err, err
    assert not out.exists() and not list(tmp_path.glob(".o.*"))


def test_a_folder_not_written_by_fabric2seis_is_not_replaced(tmp_path, small_map, capsys):
    f = write_map(tmp_path / "s.ang", small_map)
    mine = tmp_path / "o"
    mine.mkdir()
    (mine / "thesis.txt").write_text("mine")
    assert main(["optics", str(f), "--out", str(mine)]) == 2
    assert "not written by fabric2seis" in capsys.readouterr().err
    assert [p.name for p in mine.iterdir()] == ["thesis.txt"]


def test_the_structural_frame_settings_do_not_change_the_section(tmp_path, small_map):
    # the section is fixed in sample (map) axes; the frame only relabels the orientations, so the
    # birefringence of every phase must come out the same (an invariance, common practice)
    tables = []
    for k, frame in enumerate(("{}", "{frame: {lineation: '-z', foliation_normal: '+y'}}")):
        f = write_map(tmp_path / f"s{k}.ang", small_map)
        (tmp_path / f"s{k}.yaml").write_text(f"{frame}\n")
        assert main(["optics", str(f), "--out", str(tmp_path / f"o{k}")]) == 0
        tables.append(pd.read_csv(tmp_path / f"o{k}" / "birefringence.csv"))
    pd.testing.assert_frame_equal(tables[0], tables[1], atol=2e-6)


def _tilted_quartz(tmp_path, tilt_deg, name="q"):
    """A quartz map whose every grain has its c-axis tilted ``tilt_deg`` from the map normal.

    Grains turn about x by +tilt and -tilt in turn (either way c is tilt from z, whichever side the
    turn acts on); untilted grains turn about z by 30 degrees each, so that grains differ.
    """
    h = np.radians(tilt_deg) / 2
    if tilt_deg:
        cells = [[np.cos(h), (-1) ** k * np.sin(h), 0, 0] for k in range(4)]
    else:
        cells = [[np.cos(np.radians(15 * k)), 0, 0, np.sin(np.radians(15 * k))] for k in range(4)]
    m = voronoi_map(4, 20, 15, step=2.0, seed=2, noise_deg=0.0, cell_quat=np.array(cells))
    write_table(tmp_path / f"{name}.csv", m.quat, ["quartz"] * len(m.x), x=m.x, y=m.y)
    return tmp_path / f"{name}.csv"


def test_thickness_from_microscope_observations_through_the_command(tmp_path, library):
    # A uniaxial section at angle theta to the optic axis: 1/n^2 = cos^2/n_o^2 + sin^2/n_e^2 and
    # birefringence |n(theta) - n_o| (the indicatrix of a uniaxial crystal; common practice, e.g.
    # Nesse, Introduction to Optical Mineralogy, from memory). A section 25 um thick then shows
    # R = birefringence x 25,000 nm; the command must give 25 um back from R.
    n_o, _, n_e = library["quartz"].optics.principal_n
    theta = np.radians(60.0)
    biref = abs(1.0 / np.sqrt(np.cos(theta) ** 2 / n_o ** 2 + np.sin(theta) ** 2 / n_e ** 2) - n_o)
    r = float(biref * 25_000.0)
    f = _tilted_quartz(tmp_path, 60.0)
    (tmp_path / "q.yaml").write_text(
        f"optics:\n  measured:\n    - {{x: 10, y: 10, retardation_nm: {r!r}}}\n"
        f"    - {{phase: quartz, highest_retardation_nm: {r!r}}}\n    - {{x: 10, y: 10, order: 1}}\n")
    assert main(["optics", str(f), "--out", str(tmp_path / "o")]) == 0
    summary = json.loads((tmp_path / "o" / "optics_summary.json").read_text())
    grain, phase, order = summary["thickness_estimates"]
    assert grain["thickness_um"] == pytest.approx(25.0, abs=2e-3) and grain["phase"] == "quartz"
    assert grain["birefringence"] == pytest.approx(biref, abs=1e-6)
    assert phase["thickness_um"] == pytest.approx(25.0, abs=2e-3)
    # first order: retardation 0 to 550 nm (common practice), so 0 to 550 / birefringence nm
    assert order["thickness_range_um"] == pytest.approx([0.0, 550.0 / biref / 1000.0], abs=2e-3)
    # the images assume the default 30 um: the disagreement is said, in the summary and the log
    assert any("optics.measured[0]" in c and "30 um" in c for c in summary["cautions"]), summary["cautions"]
    assert "thickness from" in (tmp_path / "o" / "run.log").read_text()


@pytest.mark.parametrize("item, words", [
    ("{x: 500, y: 10, retardation_nm: 200}", "no point within one step"),
    ("{phase: olivine, highest_retardation_nm: 200}", "no phase 'olivine'"),
    ("{x: 10, y: 10}", "optics.measured"),
])
def test_bad_microscope_observation_exits_2_naming_the_key(tmp_path, capsys, item, words):
    f = _tilted_quartz(tmp_path, 60.0)
    (tmp_path / "q.yaml").write_text(f"optics:\n  measured:\n    - {item}\n")
    assert main(["optics", str(f), "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "q.yaml" in err and "optics.measured" in err and words in err, err
    assert not (tmp_path / "o").exists()


def test_a_grain_down_the_optic_axis_cannot_give_a_thickness(tmp_path, capsys):
    f = _tilted_quartz(tmp_path, 0.0)
    (tmp_path / "q.yaml").write_text("optics:\n  measured:\n    - {x: 10, y: 10, retardation_nm: 200}\n")
    assert main(["optics", str(f), "--out", str(tmp_path / "o")]) == 2
    assert "optic axis" in capsys.readouterr().err
