"""A .ang map with points that were not indexed, as orix writes it (4 pi in all three angles)."""

import numpy as np
from orix import io
from orix.crystal_map import CrystalMap, PhaseList
from orix.quaternion import Rotation

from fabric2seis.ingest.io import read_ebsd


def test_points_not_indexed_written_by_orix_are_read_as_not_indexed(tmp_path):
    # orix's .ang writer (the reference library) writes 4 pi in phi1, Phi, phi2 and confidence -1
    # for a point not indexed, as EDAX/TSL files do (common practice); those points must come in as
    # not indexed (phase -1), and the indexed ones with orix's own orientations.
    n_x, n_y = 12, 10
    y, x = np.mgrid[0:n_y, 0:n_x]
    phase_id = np.zeros(n_x * n_y, int)
    phase_id[[0, 5, 17, 60, 119]] = -1
    xmap = CrystalMap(rotations=Rotation.random(n_x * n_y), phase_id=phase_id, x=x.ravel() * 1.0,
                      y=y.ravel() * 1.0, phase_list=PhaseList(names=["olivine"], point_groups=["mmm"], ids=[0]),
                      prop={"ci": np.where(phase_id < 0, -1.0, 0.5), "iq": np.ones(n_x * n_y)})
    path = tmp_path / "m.ang"
    io.save(path, xmap)
    assert "12.56637" in path.read_text()           # the marker is there (else this tests nothing)
    data = read_ebsd(path)
    assert np.array_equal(data.phase_id < 0, phase_id < 0)
    indexed = data.phase_id >= 0
    reference = io.load(path).rotations.data
    dot = np.abs(np.sum(data.quat[indexed] * reference[indexed], axis=1))
    assert np.all(dot > 1 - 1e-8)
