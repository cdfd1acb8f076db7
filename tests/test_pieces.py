"""A map processed in pieces and combined (``fabric2seis combine``) gives the whole map's results.

One synthetic three-phase Voronoi map (olivine with a weak A-type fabric, random enstatite and
diopside; 30,000 pixels, about 750 grains) is written as .ang with the project's writer, cut by
rows into three pieces, each written as its own .ang; ``fabric2seis sample`` runs on the whole map
and on every piece, ``fabric2seis combine`` on the pieces' folders, all through the command.
"""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

NX, NY = 150, 200                   # 30,000 pixels of 1 um
CUTS = (0, 70, 165, NY)             # three pieces by rows, of unequal heights
PHASES = [("olivine", "mmm", 0.7, "olivine-A"), ("enstatite", "mmm", 0.2, None), ("diopside", "2/m", 0.1, None)]
# grains.min_pixels 1: no point of a grain cut by a piece edge is dropped as a small grain
SIDECAR = ("grains: {min_pixels: 1}\nbootstrap: {n: 0}\n"
           "field: {foliation_strike_deg: 30.0, foliation_dip_deg: 5.0, lineation_pitch_deg: 15.0, "
           "layer_thickness_km: 60.0}\n"
           # fewer panels: a run's time is mostly its figures, which the pieces do not combine
           "figures: {poles: {olivine: ['[100]'], enstatite: ['[001]'], diopside: ['[001]']}, "
           "velocities: {panels: [vp]}}\n")
AVERAGES = ("voigt", "reuss", "hill", "geometric")


def command(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "fabric2seis", *args], capture_output=True, text=True)


def write_map(path: Path, x, y, quat, phase) -> None:
    from fabric2seis.ingest.io.write import write_ang

    write_ang(path, x, y, quat, phase, [p[0] for p in PHASES], [p[1] for p in PHASES])
    path.with_suffix(".yaml").write_text(SIDECAR)


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """The whole map and its pieces, each processed by ``fabric2seis sample``, and the pieces combined."""
    from fabric2seis.elastic.minerals import find_mineral
    from fabric2seis.synth import fabric_orientations, voronoi_map

    tmp = tmp_path_factory.mktemp("pieces")
    rng = np.random.default_rng(7)
    grains = NX * NY // 40
    shares = np.array([p[2] for p in PHASES])
    cell_phase = rng.choice(len(PHASES), size=grains, p=shares / shares.sum()) + 1
    cell_quat = np.empty((grains, 4))
    for k, (name, _, _, fabric) in enumerate(PHASES, start=1):
        chosen = cell_phase == k
        cell_quat[chosen] = fabric_orientations(find_mineral(name), fabric, int(chosen.sum()), 45.0, 7 + k)
    m = voronoi_map(grains, NX, NY, step=1.0, grid="square", cell_quat=cell_quat, noise_deg=0.5, seed=7,
                    cell_phase=cell_phase)
    write_map(tmp / "whole.ang", m.x, m.y, m.quat, m.phase)
    folders = []
    for k, (lo, hi) in enumerate(zip(CUTS[:-1], CUTS[1:]), start=1):
        rows = (m.y >= lo) & (m.y < hi)
        # each piece with its own origin, as tiles of a montage have (orix's writer needs it too)
        write_map(tmp / f"piece{k}.ang", m.x[rows], m.y[rows] - lo, m.quat[rows], m.phase[rows])
        folders.append(tmp / f"piece{k}")
    stems = ["whole", *(f.name for f in folders)]
    for pair in (stems[:2], stems[2:]):             # two at a time: most of a run is its figures
        started = [subprocess.Popen([sys.executable, "-m", "fabric2seis", "sample", str(tmp / f"{stem}.ang"),
                                     "--out", str(tmp / stem)], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                                    text=True) for stem in pair]
        for process in started:
            _, err = process.communicate()
            assert process.returncode == 0, err
    run = command("combine", *map(str, folders), "--out", str(tmp / "combined"))
    assert run.returncode == 0, run.stderr
    return tmp, folders, run


def load(folder: Path, name: str) -> dict:
    return json.loads((folder / name).read_text())


def relative(a, b) -> float:
    a, b = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
    return float(np.linalg.norm(a - b) / np.linalg.norm(b))


def test_pieces_combine_to_the_whole_map(runs):
    # The averages are linear in the weights (Voigt 1928, Reuss 1929, Matthies & Humbert 1993: means of
    # the rotated stiffness, compliance and matrix logarithm), so per-piece weighted sums add up exactly.
    tmp, folders, run = runs
    whole, combined = load(tmp / "whole", "stiffness.json"), load(tmp / "combined", "stiffness.json")
    assert set(whole) == set(combined)
    for average in AVERAGES:
        assert relative(combined[average], whole[average]) <= 1e-9, average
    assert relative(combined["density_kg_m3"], whole["density_kg_m3"]) <= 1e-9
    # the sums themselves at full precision (stiffness.json is rounded to 1e-6 GPa)
    sums_whole, sums_comb = load(tmp / "whole", "weighted_sums.json"), load(tmp / "combined", "weighted_sums.json")
    assert set(sums_whole["phases"]) == set(sums_comb["phases"]) == {p[0] for p in PHASES}
    assert sums_comb["n_points"] == sums_whole["n_points"] == NX * NY
    for name, one in sums_whole["phases"].items():
        other = sums_comb["phases"][name]
        assert other["n_points"] == one["n_points"]
        for key in ("weight", "fraction_weight", "fraction", "stiffness_sum", "compliance_sum", "log_stiffness_sum"):
            assert relative(other[key], one[key]) <= 1e-9, (name, key)
    # a combination of one folder gives that folder's averages at full precision
    from fabric2seis.pieces import aggregate_of_record, read_sums

    full_whole = aggregate_of_record(read_sums(tmp / "whole")).tensors
    full_comb = aggregate_of_record(read_sums(tmp / "combined")).tensors
    worst = max(relative(full_comb[a], full_whole[a]) for a in AVERAGES)
    print(f"largest relative difference whole - combined, unrounded averages: {worst:.2e}")
    assert worst <= 1e-9


def test_combined_seismic_numbers_equal_the_whole_maps(runs):
    tmp, _, _ = runs
    whole, combined = load(tmp / "whole", "summary.json"), load(tmp / "combined", "summary.json")
    assert combined["n_points"] == whole["n_points"]
    assert combined["density_kg_m3"] == pytest.approx(whole["density_kg_m3"], abs=1e-3)
    for name, phase in whole["phases"].items():
        assert combined["phases"][name]["fraction"] == pytest.approx(phase["fraction"], abs=1e-6)
    # equal to the printed precision: one unit of the last digit (km/s to 1e-5, percent to 1e-4)
    for key in ("vp_max_km_s", "vp_min_km_s", "vs1_max_km_s", "vs2_min_km_s", "dvs_max_km_s"):
        assert combined["seismic"][key] == pytest.approx(whole["seismic"][key], abs=1.01e-5), key
    for key in ("avp_pct", "avs_max_pct", "avs_min_pct"):
        assert combined["seismic"][key] == pytest.approx(whole["seismic"][key], abs=1.01e-4), key
    for key in ("vp_max_direction", "avs_max_direction"):
        assert combined["seismic"][key] == pytest.approx(whole["seismic"][key], abs=1.01e-6), key
    along_w, along_c = whole["splitting"]["along_z"], combined["splitting"]["along_z"]
    assert along_c["delay_s_per_100km"] == pytest.approx(along_w["delay_s_per_100km"], abs=1.01e-6)
    assert along_c["fast_polarisation_from_x_deg"] == pytest.approx(along_w["fast_polarisation_from_x_deg"],
                                                                    abs=1.01e-4)
    field_w, field_c = whole["splitting"]["field"], combined["splitting"]["field"]
    assert field_c["delay_s"] == pytest.approx(field_w["delay_s"], abs=1e-5)
    assert field_c["fast_azimuth_deg"] == pytest.approx(field_w["fast_azimuth_deg"], abs=1e-3)
    grid_w = pd.read_csv(tmp / "whole" / "velocities.csv")
    grid_c = pd.read_csv(tmp / "combined" / "velocities.csv")
    assert list(grid_c.columns) == list(grid_w.columns) and len(grid_c) == len(grid_w)
    for column in ("vp_km_s", "vs1_km_s", "vs2_km_s"):
        assert np.abs(grid_c[column] - grid_w[column]).max() <= 1.01e-5
    # what is not combined is said, not given
    assert "J" not in combined["phases"]["olivine"] and "uncertainty" not in combined
    assert "M" in combined["not_combined"] and combined["cautions"]


def bunge_matrices(phi1, big_phi, phi2) -> np.ndarray:
    """Bunge's passive z-x-z matrices g (v_crystal = g v_sample), written out (Bunge 1982; from memory)."""
    c1, s1, c, s, c2, s2 = np.cos(phi1), np.sin(phi1), np.cos(big_phi), np.sin(big_phi), np.cos(phi2), np.sin(phi2)
    g = np.empty((len(phi1), 3, 3))
    g[:, 0, 0] = c1 * c2 - s1 * s2 * c
    g[:, 0, 1] = s1 * c2 + c1 * s2 * c
    g[:, 0, 2] = s2 * s
    g[:, 1, 0] = -c1 * s2 - s1 * c2 * c
    g[:, 1, 1] = -s1 * s2 + c1 * c2 * c
    g[:, 1, 2] = c2 * s
    g[:, 2, 0] = s1 * s
    g[:, 2, 1] = -c1 * s
    g[:, 2, 2] = c
    return g


def full_tensor(c: np.ndarray) -> np.ndarray:
    """The 3x3x3x3 stiffness of a 6x6 Voigt matrix (common practice: 11 22 33 23 13 12)."""
    pairs = [(0, 0), (1, 1), (2, 2), (1, 2), (0, 2), (0, 1)]
    t = np.zeros((3, 3, 3, 3))
    for a, (i, j) in enumerate(pairs):
        for b, (k, m) in enumerate(pairs):
            for p, q in ((i, j), (j, i)):
                for r, s in ((k, m), (m, k)):
                    t[p, q, r, s] = c[a, b]
    return t


def test_combined_voigt_average_matches_a_plain_numpy_average(runs):
    # Independent of the package's averaging: the angles read from the whole map's text, Bunge's
    # matrices written out, every crystal tensor rotated by einsum, C'_ijkl = R_ip R_jq R_kr R_ls C_pqrs
    # with R = g^T, and the mean taken over every pixel: with measured area fractions and pixels of
    # equal area, the Voigt average (Voigt 1928) is the plain mean over all pixels; the density the
    # pixel-weighted mean.
    from fabric2seis.elastic.minerals import find_mineral

    tmp, _, _ = runs
    table = np.loadtxt(tmp / "whole.ang", comments="#")
    phase = table[:, 7].astype(int)
    g = bunge_matrices(table[:, 0], table[:, 1], table[:, 2])
    total = np.zeros((3, 3, 3, 3))
    density = 0.0
    for k, (name, *_rest) in enumerate(PHASES, start=1):
        mineral = find_mineral(name)
        r = np.swapaxes(g[phase == k], 1, 2)
        c = full_tensor(mineral.stiffness_gpa)
        total += np.einsum("nip,njq,nkr,nls,pqrs->ijkl", r, r, r, r, c, optimize=True)
        density += (phase == k).sum() * mineral.density_kg_m3
    mean = total / len(phase)
    pairs = [(0, 0), (1, 1), (2, 2), (1, 2), (0, 2), (0, 1)]
    voigt = np.array([[mean[i, j, k, m] for k, m in pairs] for i, j in pairs])
    combined = load(tmp / "combined", "stiffness.json")
    assert relative(combined["voigt"], voigt) <= 1e-8         # stiffness.json is rounded to 1e-6 GPa
    assert combined["density_kg_m3"] == pytest.approx(density / len(phase), abs=1e-3)


def test_combined_velocity_sheet_is_the_whole_maps_but_for_the_grain_count(runs):
    # the sheet is drawn from the stiffness, equal to the whole map's to 1e-9 (above); only the header's
    # grain count, which pieces cannot combine (grains cut at their edges), is left out
    from PIL import Image

    tmp, _, _ = runs
    whole = np.asarray(Image.open(tmp / "whole" / "velocities.png").convert("L"), dtype=float)
    combined = np.asarray(Image.open(tmp / "combined" / "velocities.png").convert("L"), dtype=float)
    assert (tmp / "combined" / "velocities.pdf").stat().st_size > 0
    assert "velocities.png" in (tmp / "combined" / "run.log").read_text()
    assert combined.shape == whole.shape
    rows = np.flatnonzero(np.abs(combined - whole).max(axis=1) > 0)
    assert rows.size > 0 and rows.max() < 0.12 * whole.shape[0], rows    # the header line, at the top


def test_combine_refuses_pieces_processed_differently(runs):
    tmp, folders, _ = runs
    other = tmp / "other_settings"
    settings = tmp / "voigt.yaml"
    settings.write_text(SIDECAR + "averaging: voigt\n")
    run = command("sample", str(tmp / "piece3.ang"), "--settings", str(settings), "--out", str(other))
    assert run.returncode == 0, run.stderr
    out = tmp / "refused"
    run = command("combine", *map(str, folders[:2]), str(other), "--out", str(out))
    assert run.returncode == 2 and "Traceback" not in run.stderr
    lines = run.stderr.strip().splitlines()
    assert len(lines) == 1 and "key settings.averaging" in lines[0] and "other_settings" in lines[0]
    assert not out.exists()
    # the same piece twice: refused
    run = command("combine", *map(str, folders), str(folders[0]), "--out", str(out))
    assert run.returncode == 2 and len(run.stderr.strip().splitlines()) == 1 and "twice" in run.stderr
    assert not out.exists()
    # a folder without weighted sums
    (tmp / "empty").mkdir()
    run = command("combine", str(tmp / "empty"), str(folders[0]), "--out", str(out))
    assert run.returncode == 2 and "weighted_sums.json" in run.stderr and not out.exists()


def test_combine_refuses_maps_weighted_by_grain(runs):
    # one vote per grain: a grain cut by a piece edge would count in each piece, so maps weighted by
    # grain are refused. The two pieces are the test's copies with the weighting edited in their sums.
    tmp, folders, _ = runs
    copies = []
    for folder in folders[:2]:
        copy = tmp / f"grain_{folder.name}"
        shutil.copytree(folder, copy)
        sums = load(copy, "weighted_sums.json")
        sums["weighting"] = sums["settings"]["weighting"] = "grain"
        (copy / "weighted_sums.json").write_text(json.dumps(sums))
        copies.append(copy)
    run = command("combine", *map(str, copies), "--out", str(tmp / "refused_grain"))
    assert run.returncode == 2 and "Traceback" not in run.stderr
    assert len(run.stderr.strip().splitlines()) == 1 and "key settings.weighting" in run.stderr
    assert not (tmp / "refused_grain").exists()
