"""`fabric2seis sample` (ingestion stage): outputs, settings, and bad input (CONTRACT.md).

Every bad input must give exit status 2, one line on stderr naming the file (and line where it
applies), no traceback, and no output folder, not even a partial one.
"""

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from fabric2seis.cli import main
from fabric2seis.ingest.io.write import write_ang, write_table
from fabric2seis.synth import voronoi_map


@pytest.fixture(scope="module")
def small_map():
    return voronoi_map(10, 30, 20, step=1.0, n_phases=2, seed=3)


def write_good_ang(path, m):
    write_ang(path, m.x, m.y, m.quat, m.phase, ["olivine", "enstatite"], ["mmm", "mmm"])
    return path


def refuse(tmp_path, capsys, f, *expected, named=None):
    out = tmp_path / "out"
    code = main(["sample", str(f), "--out", str(out)])
    err = capsys.readouterr().err
    assert code == 2, err
    assert err.count("\n") == 1 and "Traceback" not in err
    assert (named or f.name) in err
    for e in expected:
        assert e in err, err
    assert not out.exists() and not list(tmp_path.glob(".out.partial-*"))
    return err


def test_map_gives_summary_grains_and_provenance(tmp_path, small_map, capsys):
    f = write_good_ang(tmp_path / "peridotite A.ang", small_map)  # a space in the name
    assert main(["sample", str(f), "--out", str(tmp_path / "res")]) == 0
    s = json.loads((tmp_path / "res" / "summary.json").read_text())
    assert s["sample"] == "peridotite A" and s["n_points"] == 600
    assert set(s["phases"]) == {"olivine", "enstatite"}
    assert sum(p["fraction"] for p in s["phases"].values()) == pytest.approx(1.0)
    assert (tmp_path / "res" / "grains.csv").read_text().count("\n") == s["n_grains"] + 1
    for mineral in ("olivine", "enstatite"):
        phase = s["phases"][mineral]
        assert {"J", "M", "pfJ", "eigen"} <= set(phase) and phase["J"] >= 1.0  # CONTRACT.md keys
        assert set(phase["pfJ"]) == {"[100]", "[010]", "[001]"} and phase["fabric_weighting"] == "grain"
    for figure in ("map_overview", "pole_figures", "inverse_pole_figures", "fabric_convergence"):
        assert (tmp_path / "res" / f"{figure}.png").stat().st_size > 1000
        assert (tmp_path / "res" / f"{figure}.pdf").exists()
    prov = json.loads((tmp_path / "res" / "provenance.json").read_text())
    assert len(prov["input_sha256"]) == 64 and prov["settings"]["grains"]["threshold_deg"] == 10.0


def test_sidecar_settings_are_used_and_fractions_overridden(tmp_path, small_map):
    f = write_good_ang(tmp_path / "s.ang", small_map)
    (tmp_path / "s.yaml").write_text("modal_fractions: {olivine: 0.7, enstatite: 0.3}\ngrains: {min_pixels: 1}\n")
    assert main(["sample", str(f), "--out", str(tmp_path / "r")]) == 0
    s = json.loads((tmp_path / "r" / "summary.json").read_text())
    assert s["phases"]["olivine"]["fraction"] == 0.7 and s["fraction_source"] == "settings"


def test_grain_list_weights_and_unindexed_rows(tmp_path, small_map):
    m = small_map
    names = np.where(m.phase[:40] == 1, "olivine", "enstatite").astype(object)
    names[:3] = "not indexed"
    write_table(tmp_path / "g.csv", m.quat[:40], names, weight=np.full(40, 2.0))
    assert main(["sample", str(tmp_path / "g.csv"), "--out", str(tmp_path / "r")]) == 0
    s = json.loads((tmp_path / "r" / "summary.json").read_text())
    assert s["n_points"] == 37 and s["dropped"]["unindexed_points"] == 3
    assert not (tmp_path / "r" / "grains.csv").exists()
    assert not (tmp_path / "r" / "map_overview.png").exists()      # a grain list has no map


def test_quality_threshold_drops_points(tmp_path, small_map):
    m = small_map
    quality = np.where(np.arange(len(m.x)) % 10 == 0, 0.05, 0.9)
    write_table(tmp_path / "q.csv", m.quat, np.where(m.phase == 1, "olivine", "enstatite"), x=m.x, y=m.y,
                quality=quality)
    (tmp_path / "q.yaml").write_text("clean: {quality_min: 0.1}\ngrains: {min_pixels: 1}\n")
    assert main(["sample", str(tmp_path / "q.csv"), "--out", str(tmp_path / "r")]) == 0
    s = json.loads((tmp_path / "r" / "summary.json").read_text())
    assert s["dropped"]["low_quality_points"] == 60


def test_angular_misfit_is_cleaned_from_above_and_a_minimum_on_it_is_refused(tmp_path):
    # MAD (mean angular deviation, .ctf) is a misfit: lower is better, so a point is dropped when its MAD
    # is above the threshold (common practice); a minimum on it would keep the worst points
    lines = (Path(__file__).resolve().parents[1] / "demo_samples" / "VM02_harzburgite.ctf").read_text().splitlines()
    start = next(k for k, line in enumerate(lines) if line.startswith("Phase\tX\tY")) + 1
    header = [("YCells\t30" if line.startswith("YCells") else line) for line in lines[:start]]
    rows = [line.split("\t") for line in lines[start:start + 150 * 30]]
    bad = 0
    for k, row in enumerate(rows):
        if k % 7 == 0:
            row[8] = "2.5"                      # column MAD
            bad += row[0] != "0"                # indexed points only count as dropped for quality
    f = tmp_path / "m.ctf"
    f.write_text("\n".join(header + ["\t".join(r) for r in rows]) + "\n")
    (tmp_path / "m.yaml").write_text("clean: {quality_field: mad, quality_max: 1.0}\nbootstrap: {n: 10}\n")
    assert main(["sample", str(f), "--out", str(tmp_path / "r")]) == 0
    s = json.loads((tmp_path / "r" / "summary.json").read_text())
    assert s["dropped"]["low_quality_points"] == bad > 0
    (tmp_path / "m.yaml").write_text("clean: {quality_field: mad, quality_min: 1.0}\n")
    run = subprocess.run([sys.executable, "-m", "fabric2seis", "sample", str(f), "--out", str(tmp_path / "r2")],
                         capture_output=True, text=True)
    assert run.returncode == 2 and "Traceback" not in run.stderr
    assert "key clean.quality_min" in run.stderr and "quality_max" in run.stderr and "m.ctf" in run.stderr
    assert not (tmp_path / "r2").exists()


def test_structural_frame_rotates_orientations(tmp_path):
    # lineation along sample +y: a crystal a axis along sample y must end up along structural X
    # (Bunge (90, 0, 0) puts a along sample +y, CONVENTIONS.md).
    f = tmp_path / "one.csv"
    f.write_text("phase,phi1,Phi,phi2\n" + "olivine,90,0,0\n" * 3)
    (tmp_path / "one.yaml").write_text("frame: {lineation: '+y', foliation_normal: '+z'}\n")
    from orix.quaternion import Rotation
    from orix.vector import Vector3d

    from fabric2seis.pipeline import ingest
    from fabric2seis.settings import settings_for
    settings, src = settings_for(f)
    sample = ingest(f, settings, src)
    a_axis = (~Rotation(sample.points.quat[:1])) * Vector3d.xvector()
    assert np.allclose(np.abs(a_axis.data[0]), [1, 0, 0], atol=1e-9)


# --- bad input, each a test -----------------------------------------------------------------


def test_empty_file(tmp_path, capsys):
    f = tmp_path / "e.ang"; f.write_text("")
    refuse(tmp_path, capsys, f, "empty")


def test_header_only(tmp_path, capsys, small_map):
    f = write_good_ang(tmp_path / "h.ang", small_map)
    f.write_text("".join(l for l in f.read_text().splitlines(True) if l.startswith("#")))
    refuse(tmp_path, capsys, f, "no data rows")


def test_truncated_last_row(tmp_path, capsys, small_map):
    f = write_good_ang(tmp_path / "t.ang", small_map)
    text = f.read_text().rstrip("\n")
    f.write_text(text[: text.rfind(" ", 0, len(text) - 30)] + "\n")
    n_lines = len(f.read_text().splitlines())
    refuse(tmp_path, capsys, f, f"line {n_lines}", "expected 10")


def test_non_numeric_field(tmp_path, capsys):
    f = tmp_path / "n.csv"
    f.write_text("phase,phi1,Phi,phi2\nolivine,10,20,30\nolivine,1O,20,30\n")
    refuse(tmp_path, capsys, f, "line 3, column phi1", "'1O' is not a number")


def test_nan_euler_angles(tmp_path, capsys, small_map):
    f = write_good_ang(tmp_path / "nan.ang", small_map)
    lines = f.read_text().splitlines(True)
    k = next(i for i, l in enumerate(lines) if not l.startswith("#")) + 5
    parts = lines[k].split(); parts[1] = "nan"; lines[k] = " ".join(parts) + "\n"
    f.write_text("".join(lines))
    refuse(tmp_path, capsys, f, f"line {k + 1}", "not a number")


def test_radians_declared_as_degrees_are_refused(tmp_path, capsys, small_map):
    m = small_map
    from orix.quaternion import Rotation
    e = Rotation(m.quat[:50]).to_euler()
    f = tmp_path / "r.csv"
    f.write_text("phase,phi1,Phi,phi2\n" + "".join(f"olivine,{a},{b},{c}\n" for a, b, c in e))
    refuse(tmp_path, capsys, f, "look like radians", "table.angle_units")


def test_all_points_unindexed(tmp_path, capsys):
    f = tmp_path / "u.csv"
    f.write_text("phase,phi1,Phi,phi2,x,y\n" + "".join(f"0,10,20,30,{i},0\n" for i in range(5)))
    refuse(tmp_path, capsys, f, "all 5 points are unindexed")


def test_unknown_phase_name(tmp_path, capsys):
    f = tmp_path / "p.csv"
    f.write_text("phase,phi1,Phi,phi2\nunobtainium,10,20,30\n")
    refuse(tmp_path, capsys, f, "'unobtainium' is not a library mineral", "phases")


def test_point_group_mismatch(tmp_path, capsys, small_map):
    m = small_map
    f = tmp_path / "pg.ang"
    write_ang(f, m.x, m.y, m.quat, m.phase, ["olivine", "enstatite"], ["m-3m", "mmm"])
    refuse(tmp_path, capsys, f, "point group", "Laue class")


def test_map_of_one_pixel(tmp_path, capsys):
    f = tmp_path / "one.csv"
    f.write_text("phase,phi1,Phi,phi2,x,y\nolivine,10,20,30,0,0\n")
    refuse(tmp_path, capsys, f, "at least two points")


def test_duplicate_coordinates(tmp_path, capsys):
    f = tmp_path / "d.csv"
    f.write_text("phase,phi1,Phi,phi2,x,y\nolivine,10,20,30,0,0\nolivine,10,20,30,1,0\nolivine,15,20,30,1,0\n")
    refuse(tmp_path, capsys, f, "duplicate map coordinates")


def test_binary_garbage_with_text_extension(tmp_path, capsys):
    f = tmp_path / "g.ctf"
    f.write_bytes(np.random.default_rng(0).integers(0, 256, 5000, dtype=np.uint8).tobytes())
    refuse(tmp_path, capsys, f, "not a text file")


def test_misspelt_settings_key(tmp_path, capsys, small_map):
    f = write_good_ang(tmp_path / "k.ang", small_map)
    (tmp_path / "k.yaml").write_text("grains: {treshold_deg: 5}\n")
    refuse(tmp_path, capsys, f, "did you mean 'threshold_deg'", "key grains.treshold_deg", named="k.yaml")


def test_fractions_not_summing_to_one(tmp_path, capsys, small_map):
    f = write_good_ang(tmp_path / "f.ang", small_map)
    (tmp_path / "f.yaml").write_text("modal_fractions: {olivine: 0.7, enstatite: 0.2}\n")
    refuse(tmp_path, capsys, f, "sum to 1", named="f.yaml")


def test_real_process_prints_no_traceback(tmp_path):
    f = tmp_path / "e.csv"; f.write_text("")
    out = subprocess.run([sys.executable, "-m", "fabric2seis", "sample", str(f), "--out", str(tmp_path / "o")],
                         capture_output=True, text=True)
    assert out.returncode == 2 and "Traceback" not in out.stderr and out.stderr.count("\n") == 1


def test_weighting_area_uses_pixels_and_grain_gives_one_vote(tmp_path, small_map):
    from fabric2seis.pipeline import ingest, orientation_sets
    from fabric2seis.settings import settings_for
    f = write_good_ang(tmp_path / "w.ang", small_map)
    settings, src = settings_for(f)
    sample = ingest(f, settings, src)
    area = orientation_sets(sample, "area")
    grain = orientation_sets(sample, "grain")
    assert sum(len(q) for _, q, _ in area) == sample.points.quat.shape[0]
    assert sum(len(q) for _, q, _ in grain) == sample.grains.n_grains
    assert all(np.all(w == 1) for _, _, w in grain)
    # areas add up: pixel weights of a mineral equal the areas of its grains (square unit pixels)
    for k, (_m, _, w) in enumerate(area):
        assert w.sum() == pytest.approx(sample.grains.area[sample.grains.mineral_index == k].sum())


def test_general_frame_rotation_and_refusal_of_non_rotations(tmp_path, capsys):
    f = tmp_path / "r.csv"
    f.write_text("phase,phi1,Phi,phi2\n" + "olivine,90,0,0\n" * 3)
    (tmp_path / "r.yaml").write_text("frame: {rotation: [[0, 1, 0], [-1, 0, 0], [0, 0, 1]]}\n")
    from orix.quaternion import Rotation
    from orix.vector import Vector3d

    from fabric2seis.pipeline import ingest
    from fabric2seis.settings import settings_for
    s, src = settings_for(f)
    a_axis = (~Rotation(ingest(f, s, src).points.quat[:1])) * Vector3d.xvector()
    assert np.allclose(a_axis.data[0], [1, 0, 0], atol=1e-9)  # sample +y is structural X
    (tmp_path / "r.yaml").write_text("frame: {rotation: [[1, 1, 0], [0, 1, 0], [0, 0, 1]]}\n")
    refuse(tmp_path, capsys, f, "proper rotation", named="r.yaml")


def test_hexagonal_ang_header_is_honoured(tmp_path):
    from fabric2seis.ingest.io import read_ebsd
    from fabric2seis.synth import voronoi_map as vm
    m = vm(6, 14, 12, step=1.0, grid="hex", seed=1)
    f = tmp_path / "hex.ang"
    # orix writes square grids only: write the points on a square layout, then put the hexagonal
    # coordinates into the x, y columns (4th and 5th) and declare the grid as .ang headers do
    sq = vm(6, 14, 12, step=1.0, seed=1)
    write_ang(f, sq.x, sq.y, m.quat, np.ones(len(m.x), int), ["olivine"], ["mmm"])
    lines = f.read_text().splitlines()
    body = [l for l in lines if not l.startswith("#")]
    head = [l for l in lines if l.startswith("#")]
    for k, (x, y) in enumerate(zip(m.x, m.y)):
        parts = body[k].split()
        parts[3], parts[4] = f"{x:.5f}", f"{y:.5f}"
        body[k] = " ".join(parts)
    f.write_text("\n".join(["# GRID: HexGrid"] + head + body) + "\n")
    d = read_ebsd(f)
    assert d.grid == "hex" and d.pixel_area == pytest.approx(np.sqrt(3) / 2)
    assert main(["sample", str(f), "--out", str(tmp_path / "o")]) == 0




def test_twin_setting_through_the_command(tmp_path):
    # Quartz crystals all at the identity orientation: the Dauphine twin (180 degrees about c,
    # common practice) averaged away removes c14 (-18.04 GPa, McSkimin et al. 1965) from the Voigt
    # tensor; `twins: as_indexed` keeps it. Calcite carries no twin law: its c14 stays either way.
    for mineral, c14 in (("quartz", -18.04), ("calcite", -20.0)):
        f = tmp_path / f"{mineral}.csv"
        f.write_text("phase,phi1,Phi,phi2\n" + f"{mineral},0,0,0\n" * 10)
        for setting, expected in (("average", 0.0 if mineral == "quartz" else c14), ("as_indexed", c14)):
            f.with_suffix(".yaml").write_text(f"bootstrap: {{n: 0}}\ntwins: {setting}\n")
            out = tmp_path / f"{mineral}_{setting}"
            assert main(["sample", str(f), "--out", str(out)]) == 0
            voigt = np.array(json.loads((out / "stiffness.json").read_text())["voigt"])
            assert voigt[0, 3] == pytest.approx(expected, abs=1e-6), (mineral, setting)
            twins = json.loads((out / "summary.json").read_text())["seismic"]["twins"]
            assert twins["averaged"] == ({"quartz": ["Dauphine"]} if mineral == "quartz" and setting == "average"
                                         else {})
