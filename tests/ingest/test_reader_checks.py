"""A broken map never passes: every row, the header's counts, the grid (through `fabric2seis sample`).

Facts used: Bunge's angles span phi1, phi2 in [0, 360) and Phi in [0, 180] degrees (Bunge 1982,
Texture Analysis in Materials Science, ch. 2; common practice); .ang files store them in radians,
.ctf files in degrees, and their headers give the grid (``# GRID: SqrGrid | HexGrid``, ``# XSTEP``,
``# NCOLS_ODD``, ``# NCOLS_EVEN``, ``# NROWS``; ``XCells``, ``YCells``, ``XStep``) (common practice,
the vendors' export layouts as orix reads them). Each case: exit status 2, one line naming the
file and the place, no traceback, nothing written, the input untouched.
"""

import hashlib

import numpy as np
import pytest

from fabric2seis.cli import main
from fabric2seis.ingest.io.write import write_ang, write_ctf, write_table
from fabric2seis.synth import voronoi_map


@pytest.fixture(scope="module")
def wide_map():
    return voronoi_map(30, 60, 40, step=1.0, n_phases=2, seed=4)      # 2,400 points


def refuse(tmp_path, capsys, f, *expected):
    digest = hashlib.sha256(f.read_bytes()).hexdigest()
    out = tmp_path / "out"
    code = main(["sample", str(f), "--out", str(out)])
    err = capsys.readouterr().err
    assert code == 2, err
    assert err.count("\n") == 1 and "Traceback" not in err, err
    assert f.name in err, err
    for e in expected:
        assert e in err, err
    assert not out.exists() and not [p for p in tmp_path.iterdir() if p.name.startswith(".out.")]
    assert hashlib.sha256(f.read_bytes()).hexdigest() == digest
    return err


def ang_file(tmp_path, m, name="m.ang"):
    f = tmp_path / name
    write_ang(f, m.x, m.y, m.quat, m.phase, ["olivine", "enstatite"], ["mmm", "mmm"])
    return f


def edit_data_row(f, row, column, text):
    """Replace one value of the 0-based data row ``row``; returns that row's 1-based line number."""
    lines = f.read_text().splitlines()
    first = next(k for k, line in enumerate(lines) if not line.startswith("#"))
    parts = lines[first + row].split()
    parts[column] = text
    lines[first + row] = " ".join(parts)
    f.write_text("\n".join(lines) + "\n")
    return first + row + 1


def edit_header(f, key, value):
    lines = [f"# {key}: {value}" if line.startswith(f"# {key}:") else line for line in f.read_text().splitlines()]
    f.write_text("\n".join(lines) + "\n")


def test_angle_beyond_a_full_turn_after_row_2000_is_found(tmp_path, capsys, wide_map):
    f = ang_file(tmp_path, wide_map)
    line = edit_data_row(f, 2300, 0, "7.5")            # radians: beyond 2 pi
    refuse(tmp_path, capsys, f, f"line {line}", "beyond a full turn")


def test_phi_beyond_half_a_turn_is_refused(tmp_path, capsys, wide_map):
    f = ang_file(tmp_path, wide_map)
    line = edit_data_row(f, 2350, 1, "3.5")            # radians: beyond pi
    refuse(tmp_path, capsys, f, f"line {line}", "Phi = 3.5")
    g = tmp_path / "g.csv"
    g.write_text("phase,phi1,Phi,phi2\n" + "olivine,10,20,30\n" * 30 + "olivine,10,200,30\n")
    refuse(tmp_path, capsys, g, "line 32", "Phi = 200")


@pytest.mark.parametrize("rows", [1, 5, 19])
def test_radians_declared_as_degrees_are_refused_in_short_tables(tmp_path, capsys, rows):
    g = tmp_path / "short.csv"
    rng = np.random.default_rng(rows)
    body = "".join(f"olivine,{a:.4f},{b:.4f},{c:.4f}\n" for a, b, c in
                   zip(rng.uniform(0, 6.28, rows), rng.uniform(0, 3.14, rows), rng.uniform(0, 6.28, rows)))
    g.write_text("phase,phi1,Phi,phi2\n" + body)
    refuse(tmp_path, capsys, g, "look like radians", f"in {rows} rows")


def test_point_count_against_the_header(tmp_path, capsys, wide_map):
    f = ang_file(tmp_path, wide_map)
    edit_header(f, "NROWS", "41")
    refuse(tmp_path, capsys, f, "announces 2,460 points", "has 2,400")
    g = tmp_path / "m.ctf"
    lattice = [(4.76, 10.2, 5.98, 90, 90, 90)] * 2
    write_ctf(g, wide_map.x, wide_map.y, wide_map.quat, wide_map.phase, ["olivine", "enstatite"], lattice, [3, 3], 1.0)
    lines = g.read_text().splitlines()
    g.write_text("\n".join(lines[:-1]) + "\n")                          # a lost last row
    refuse(tmp_path, capsys, g, "XCells 60 x YCells 40", "has 2,399")


def test_grid_type_against_the_coordinates(tmp_path, capsys, wide_map):
    f = ang_file(tmp_path, wide_map)
    edit_header(f, "GRID", "HexGrid")
    refuse(tmp_path, capsys, f, "declares a hexagonal grid", "square grid")
    hexagonal = voronoi_map(6, 14, 12, step=1.0, grid="hex", seed=1)
    square = voronoi_map(6, 14, 12, step=1.0, seed=1)
    g = tmp_path / "h.ang"
    write_ang(g, square.x, square.y, hexagonal.quat, np.ones(len(square.x), int), ["olivine"], ["mmm"])
    for row, (x, y) in enumerate(zip(hexagonal.x, hexagonal.y)):   # hexagonal points under a square header
        edit_data_row(g, row, 3, f"{x:.5f}")
        edit_data_row(g, row, 4, f"{y:.5f}")
    refuse(tmp_path, capsys, g, "declares a square grid", "hexagonal grid")


def test_header_step_against_the_coordinates(tmp_path, capsys, wide_map):
    f = ang_file(tmp_path, wide_map)
    edit_header(f, "XSTEP", "2.000000")
    refuse(tmp_path, capsys, f, "declares a step of 2", "1 apart")


def test_points_off_the_grid(tmp_path, capsys, wide_map):
    m = wide_map
    g = tmp_path / "off.csv"
    x = m.x.copy()
    x[1234] += 0.4                                                         # most of half a step
    names = np.array(["olivine", "enstatite"])[m.phase - 1]
    write_table(g, m.quat, names, x=x, y=m.y)
    refuse(tmp_path, capsys, g, "off the grid", "line 1236")
    jitter = np.random.default_rng(2).uniform(-0.45, 0.45, size=(2, len(m.x)))
    write_table(g, m.quat, names, x=m.x + jitter[0], y=m.y + jitter[1])
    refuse(tmp_path, capsys, g, "not on a grid")


def test_unequal_steps_and_sparse_points(tmp_path, capsys, wide_map):
    m = wide_map
    names = np.array(["olivine", "enstatite"])[m.phase - 1]
    g = tmp_path / "rect.csv"
    write_table(g, m.quat, names, x=m.x, y=2.0 * m.y)
    refuse(tmp_path, capsys, g, "steps differ along x (1) and y (2)")
    keep = np.zeros(len(m.x), bool)
    keep[[0, 1, 2, 60, len(m.x) - 1]] = True
    x, y = m.x.copy(), m.y.copy()
    x[keep.nonzero()[0][-1]] = 5000.0                                      # one point far away
    write_table(g, m.quat[keep], names[keep], x=x[keep], y=y[keep])
    refuse(tmp_path, capsys, g, "fill only")


def test_good_files_still_pass(tmp_path, wide_map):
    from fabric2seis.ingest.io import read_ebsd

    f = ang_file(tmp_path, wide_map)
    d = read_ebsd(f)
    assert d.grid == "square" and d.step == 1.0 and d.n_points == 2400
    # orientations as orix reads the same file (orix's own .ang reader, a reference library)
    from orix import io as orix_io
    from orix.quaternion import Rotation
    ref = orix_io.load(str(f))
    assert np.allclose(Rotation(d.quat).angle_with(ref.rotations), 0.0, atol=1e-6)
    assert np.array_equal(d.phase_id, ref.phase_id)
    assert {d.phase_names[i] for i in np.unique(d.phase_id[d.phase_id >= 0])} == {"olivine", "enstatite"}
