"""Readers: round trips through orix's .ang writer and a hand-written .ctf, CSV tables, .gz."""

import gzip
import shutil

import numpy as np
import pytest
from orix.quaternion import Rotation

from fabric2seis.ingest.io import read_ebsd
from fabric2seis.ingest.io.write import write_ang, write_ctf, write_table
from fabric2seis.synth import voronoi_map


def rotation_difference_rad(a, b):
    """Angle of a^-1 b without symmetry: the stored orientation itself must come back."""
    return (Rotation(a) * ~Rotation(b)).angle


@pytest.fixture(scope="module")
def two_phase_map():
    return voronoi_map(12, 20, 15, step=0.5, n_phases=2, seed=4)


def test_ang_written_by_orix_reads_back(tmp_path, two_phase_map):
    m = two_phase_map
    f = tmp_path / "s.ang"
    write_ang(f, m.x, m.y, m.quat, m.phase, ["olivine", "enstatite"], ["mmm", "mmm"])  # orix's writer
    d = read_ebsd(f)
    assert d.n_points == len(m.x) and d.grid == "square" and d.step == pytest.approx(0.5)
    assert rotation_difference_rad(d.quat, m.quat).max() < 1e-4
    assert [d.phase_names[p] for p in d.phase_id] == [["olivine", "enstatite"][p - 1] for p in m.phase]
    assert np.allclose(d.x, m.x) and np.allclose(d.y, m.y)


def test_hand_written_ctf_reads_back(tmp_path, two_phase_map):
    # Column layout of the channel text format (Phase X Y Bands Error Euler1 Euler2 Euler3 MAD BC BS,
    # angles in degrees), as published by the vendor and read by orix; written here by our own code.
    m = two_phase_map
    f = tmp_path / "s.ctf"
    write_ctf(f, m.x, m.y, m.quat, m.phase, ["Forsterite", "Enstatite"],
              [(4.76, 10.21, 5.99, 90, 90, 90), (18.23, 8.82, 5.18, 90, 90, 90)], [3, 3], 0.5)
    d = read_ebsd(f)
    assert rotation_difference_rad(d.quat, m.quat).max() < 1e-4
    assert d.phase_names == {1: "Forsterite", 2: "Enstatite"} and d.step == pytest.approx(0.5)
    assert "bc" in d.quality and "mad" in d.quality


def test_gzip_text_reads_like_plain(tmp_path, two_phase_map):
    m = two_phase_map
    f = tmp_path / "s.ang"
    write_ang(f, m.x, m.y, m.quat, m.phase, ["olivine", "enstatite"], ["mmm", "mmm"])
    with f.open("rb") as src, gzip.open(tmp_path / "t.ang.gz", "wb") as dst:
        shutil.copyfileobj(src, dst)
    a, b = read_ebsd(f), read_ebsd(tmp_path / "t.ang.gz")
    assert np.array_equal(a.quat, b.quat) and np.array_equal(a.phase_id, b.phase_id)


def test_csv_map_grain_list_and_radians(tmp_path, two_phase_map):
    m = two_phase_map
    names = np.where(m.phase == 1, "olivine", "enstatite")
    write_table(tmp_path / "map.csv", m.quat, names, x=m.x, y=m.y)
    d = read_ebsd(tmp_path / "map.csv")
    assert d.is_map and d.grid == "square" and rotation_difference_rad(d.quat, m.quat).max() < 1e-6
    write_table(tmp_path / "list.csv", m.quat[:30], names[:30], weight=np.arange(1, 31.0))
    g = read_ebsd(tmp_path / "list.csv")
    assert not g.is_map and np.array_equal(g.weights, np.arange(1, 31.0))
    e = np.radians(np.loadtxt(tmp_path / "list.csv", delimiter=",", skiprows=1, usecols=(1, 2, 3)))
    np.savetxt(tmp_path / "rad.csv", e, delimiter=",", header="phi1,Phi,phi2", comments="")
    text = (tmp_path / "rad.csv").read_text().splitlines()
    (tmp_path / "rad.csv").write_text("\n".join(["phase," + text[0]] + ["olivine," + t for t in text[1:]]))
    r = read_ebsd(tmp_path / "rad.csv", angle_units="radians")
    assert rotation_difference_rad(r.quat, m.quat[:30]).max() < 1e-6


def test_orix_hdf5_reads(tmp_path, two_phase_map):
    from orix import io as orix_io
    from orix.crystal_map import CrystalMap, PhaseList

    m = two_phase_map
    xmap = CrystalMap(Rotation(m.quat), phase_id=m.phase, x=m.x, y=m.y,
                      phase_list=PhaseList(names=["olivine", "enstatite"], point_groups=["mmm", "mmm"], ids=[1, 2]))
    orix_io.save(str(tmp_path / "s.h5"), xmap)
    d = read_ebsd(tmp_path / "s.h5")
    assert rotation_difference_rad(d.quat, m.quat).max() < 1e-9 and d.grid == "square"


def test_hexagonal_csv_map_is_recognised(tmp_path):
    m = voronoi_map(5, 12, 10, step=1.0, grid="hex", seed=2)
    write_table(tmp_path / "hex.csv", m.quat, ["olivine"] * len(m.x), x=m.x.round(6), y=m.y.round(6))
    d = read_ebsd(tmp_path / "hex.csv")
    assert d.grid == "hex" and d.step == pytest.approx(1.0)
    assert d.pixel_area == pytest.approx(np.sqrt(3) / 2)  # hexagonal cell of unit spacing
