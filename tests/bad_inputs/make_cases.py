"""Build the files of the bad-input corpus (``cases.yaml``) in a case's folder.

A case lists its ``files``: each is copied from ``files/`` beside this module when it is there,
else made by the function of that name in ``MAKERS`` (binary files, files in other encodings, and
vendor maps made from a good map by one edit, so that the edit is written down here once).
``results`` (a folder name) asks for a real results folder of ``fabric2seis sample`` under that
name, which the field and stack cases read.
"""

from __future__ import annotations

import gzip
import shutil
from pathlib import Path

import numpy as np
import yaml

HERE = Path(__file__).parent
FILES = HERE / "files"
CASES_FILE = HERE / "cases.yaml"


def load_cases() -> list[dict]:
    """The corpus table, each case a mapping (``cases.yaml``)."""
    return yaml.safe_load(CASES_FILE.read_text(encoding="utf-8"))


def _good_map():
    from fabric2seis.synth import voronoi_map

    return voronoi_map(2, 6, 5, step=1.0, n_phases=1, seed=3)        # 30 points, 2 grains


def _hex_map():
    from fabric2seis.synth import voronoi_map

    return voronoi_map(2, 6, 5, step=1.0, grid="hex", n_phases=1, seed=3)


def good_ang(path: Path, m=None) -> Path:
    """A good .ang of 30 olivine points (orix's writer)."""
    from fabric2seis.ingest.io.write import write_ang

    m = m or _good_map()
    write_ang(path, m.x, m.y, m.quat, m.phase, ["olivine"], ["mmm"])
    return path


def good_ctf(path: Path) -> Path:
    """A good .ctf of 30 olivine points (Laue class mmm is channel-text code 3)."""
    from fabric2seis.ingest.io.write import write_ctf

    m = _good_map()
    write_ctf(path, m.x, m.y, m.quat, m.phase, ["olivine"], [(4.756, 10.207, 5.980, 90, 90, 90)], [3], 1.0)
    return path


def _edit_rows(path: Path, edit, data_start) -> None:
    """Apply ``edit(rows) -> rows`` to the data lines (lists of fields) of a text map."""
    lines = path.read_text().splitlines()
    first = data_start(lines)
    rows = [line.split() for line in lines[first:]]
    sep = "\t" if "\t" in lines[first] else " "
    lines[first:] = [sep.join(r) for r in edit(rows)]
    path.write_text("\n".join(lines) + "\n")


def _ang_data(lines):
    return next(k for k, line in enumerate(lines) if not line.startswith("#"))


def _ctf_data(lines):
    return next(k for k, line in enumerate(lines) if line.startswith("Phase\tX\tY")) + 1


def _ang_header(path: Path, key: str, value: str) -> None:
    lines = [f"# {key}: {value}" if line.startswith(f"# {key}:") else line for line in path.read_text().splitlines()]
    path.write_text("\n".join(lines) + "\n")


def _ctf_header(path: Path, key: str, value: str) -> None:
    lines = [f"{key}\t{value}" if line.split("\t")[0] == key else line for line in path.read_text().splitlines()]
    path.write_text("\n".join(lines) + "\n")


def _set(row: int, column: int, text: str):
    def edit(rows):
        rows[row][column] = text
        return rows
    return edit


# --- .ang -------------------------------------------------------------------------------------

def ang_truncated_row(folder: Path) -> None:
    """The last row lost its last four values (a cut-off export)."""
    _edit_rows(good_ang(folder / "cut.ang"), lambda rows: rows[:-1] + [rows[-1][:-4]], _ang_data)


def ang_text_value(folder: Path) -> None:
    """Row 7's Phi is a word."""
    _edit_rows(good_ang(folder / "word.ang"), _set(6, 1, "Phi?"), _ang_data)


def ang_nan_angle(folder: Path) -> None:
    """Row 9's phi1 is NaN."""
    _edit_rows(good_ang(folder / "nan.ang"), _set(8, 0, "NaN"), _ang_data)


def ang_phi_beyond_half_turn(folder: Path) -> None:
    """Row 12's Phi is 3.5 rad, beyond pi."""
    _edit_rows(good_ang(folder / "phi.ang"), _set(11, 1, "3.50000"), _ang_data)


def ang_degrees(folder: Path) -> None:
    """The angles written in degrees, though .ang stores radians."""
    def edit(rows):
        for r in rows:
            r[:3] = [f"{np.degrees(float(v)):.4f}" for v in r[:3]]
        return rows
    _edit_rows(good_ang(folder / "deg.ang"), edit, _ang_data)


def ang_seven_columns(folder: Path) -> None:
    """Every row has seven values: the phase column and after are missing."""
    _edit_rows(good_ang(folder / "seven.ang"), lambda rows: [r[:7] for r in rows], _ang_data)


def ang_nrows_mismatch(folder: Path) -> None:
    """The header announces 6 rows of 6 points; the file has 5 rows."""
    _ang_header(good_ang(folder / "rows.ang"), "NROWS", "6")


def ang_hex_header_over_square(folder: Path) -> None:
    """A HexGrid header over points on a square grid."""
    _ang_header(good_ang(folder / "hexhead.ang"), "GRID", "HexGrid")


def ang_square_header_over_hex(folder: Path) -> None:
    """A SqrGrid header over points on a hexagonal grid (odd rows shifted half a step, rows sqrt(3)/2 apart)."""
    hexagonal = _hex_map()

    def edit(rows):              # orix writes square grids only: the hexagonal coordinates go in by hand
        for r, x, y in zip(rows, hexagonal.x, hexagonal.y):
            r[3], r[4] = f"{x:.5f}", f"{y:.5f}"
        return rows
    _edit_rows(good_ang(folder / "sqrhead.ang"), edit, _ang_data)


def ang_xstep_mismatch(folder: Path) -> None:
    """The header's XSTEP is 0.5 but the points lie 1.0 apart."""
    _ang_header(good_ang(folder / "step.ang"), "XSTEP", "0.500000")


def ang_point_off_grid(folder: Path) -> None:
    """Row 14's x lies halfway between two nodes."""
    _edit_rows(good_ang(folder / "off.ang"), _set(13, 3, "1.50000"), _ang_data)


def ang_jittered(folder: Path) -> None:
    """Every coordinate jittered by up to 45 % of the step (a resampled or hand-edited map)."""
    rng = np.random.default_rng(5)

    def edit(rows):
        for r in rows:
            r[3] = f"{float(r[3]) + rng.uniform(-0.45, 0.45):.5f}"
            r[4] = f"{float(r[4]) + rng.uniform(-0.45, 0.45):.5f}"
        return rows
    _edit_rows(good_ang(folder / "jitter.ang"), edit, _ang_data)


def ang_all_unindexed(folder: Path) -> None:
    """Every point has confidence index -1 (not indexed)."""
    def edit(rows):
        for r in rows:
            r[6] = "-1.00000"
        return rows
    _edit_rows(good_ang(folder / "unindexed.ang"), edit, _ang_data)


def ang_point_group_mismatch(folder: Path) -> None:
    """The header says the olivine phase is cubic (m-3m)."""
    from fabric2seis.ingest.io.write import write_ang

    m = _good_map()
    write_ang(folder / "cubic.ang", m.x, m.y, m.quat, m.phase, ["olivine"], ["m-3m"])


def ang_single_grain(folder: Path) -> None:
    """A map of one grain: every point has nearly the same orientation."""
    from fabric2seis.synth import voronoi_map

    good_ang(folder / "onegrain.ang", voronoi_map(1, 6, 5, step=1.0, n_phases=1, seed=3))


def ang_gz_truncated(folder: Path) -> None:
    """A gzip file cut in the middle of its stream."""
    raw = gzip.compress(good_ang(folder / "cut.ang").read_bytes())
    (folder / "cut.ang").unlink()
    (folder / "cut.ang.gz").write_bytes(raw[: len(raw) // 2])


def ang_gz_not_gzip(folder: Path) -> None:
    """A plain .ang named .ang.gz."""
    good_ang(folder / "plain.ang").rename(folder / "plain.ang.gz")


# --- .ctf -------------------------------------------------------------------------------------

def ctf_no_column_line(folder: Path) -> None:
    """The 'Phase X Y ...' column line is missing."""
    f = good_ctf(folder / "nocols.ctf")
    f.write_text("".join(line for line in f.read_text().splitlines(True) if not line.startswith("Phase\tX")))


def ctf_xcells_mismatch(folder: Path) -> None:
    """XCells says 7 but rows hold 6 points."""
    _ctf_header(good_ctf(folder / "cells.ctf"), "XCells", "7")


def ctf_xstep_mismatch(folder: Path) -> None:
    """XStep says 2.5 but the points lie 1.0 apart."""
    _ctf_header(good_ctf(folder / "step.ctf"), "XStep", "2.5000")


def ctf_radians(folder: Path) -> None:
    """Angles written in radians, though .ctf stores degrees."""
    def edit(rows):
        for r in rows:
            r[5:8] = [f"{np.radians(float(v)):.5f}" for v in r[5:8]]
        return rows
    _edit_rows(good_ctf(folder / "rad.ctf"), edit, _ctf_data)


def ctf_all_phase_zero(folder: Path) -> None:
    """Every point is phase 0 (not indexed)."""
    def edit(rows):
        for r in rows:
            r[0] = "0"
        return rows
    _edit_rows(good_ctf(folder / "zero.ctf"), edit, _ctf_data)


def ctf_ten_columns(folder: Path) -> None:
    """Rows of ten values: the BS column is missing."""
    _edit_rows(good_ctf(folder / "ten.ctf"), lambda rows: [r[:10] for r in rows], _ctf_data)


def ctf_inf_angle(folder: Path) -> None:
    """Row 3's Euler2 is inf."""
    _edit_rows(good_ctf(folder / "inf.ctf"), _set(2, 6, "inf"), _ctf_data)


# --- HDF5 -------------------------------------------------------------------------------------

def h5_empty(folder: Path) -> None:
    """A zero-byte .h5."""
    (folder / "empty.h5").write_bytes(b"")


def h5_text(folder: Path) -> None:
    """A text file named .h5."""
    (folder / "text.h5").write_text("phase,phi1,Phi,phi2\nolivine,10,20,30\n")


def h5_no_ebsd(folder: Path) -> None:
    """A valid HDF5 file holding one unrelated data set."""
    import h5py

    with h5py.File(folder / "other.h5", "w") as f:
        f.create_dataset("temperature_c", data=np.arange(5.0))


def h5_one_point(folder: Path) -> None:
    """orix's HDF5 format holding a map of one point."""
    from orix import io as orix_io
    from orix.crystal_map import CrystalMap, PhaseList
    from orix.quaternion import Rotation

    xmap = CrystalMap(rotations=Rotation([[1.0, 0, 0, 0]]), phase_id=np.array([1]), x=np.array([0.0]),
                      y=np.array([0.0]), phase_list=PhaseList(names=["olivine"], point_groups=["mmm"], ids=[1]))
    orix_io.save(str(folder / "one.h5"), xmap)


# --- other bytes ------------------------------------------------------------------------------

def csv_binary(folder: Path) -> None:
    """Random bytes named .csv."""
    (folder / "noise.csv").write_bytes(np.random.default_rng(1).integers(0, 256, 4096, dtype=np.uint8).tobytes())


def csv_latin1(folder: Path) -> None:
    """A grain list saved in Latin-1 with an accented phase name (olivin\\xe9 -> 0xE9)."""
    text = (FILES / "grains.csv").read_text().replace("olivine,330.18", "olivin\u00e9,330.18")
    (folder / "latin.csv").write_bytes(text.encode("latin-1"))


def csv_gz_empty(folder: Path) -> None:
    """A gzip file whose content is empty."""
    (folder / "nothing.csv.gz").write_bytes(gzip.compress(b""))


def sidecar_latin1(folder: Path) -> None:
    """A sidecar saved in Latin-1: 0xB0 (the degree sign) in a comment on line 3."""
    shutil.copy(FILES / "grains.csv", folder / "latin.csv")
    text = "# settings of the Vallmora grain list\nodf:\n  halfwidth_deg: 12   # 12\u00b0\n"
    (folder / "latin.yaml").write_bytes(text.encode("latin-1"))


def sidecar_utf16_without_mark(folder: Path) -> None:
    """A sidecar in UTF-16 without its byte-order mark (no reader can tell its encoding)."""
    shutil.copy(FILES / "grains.csv", folder / "wide.csv")
    (folder / "wide.yaml").write_bytes("odf:\n  halfwidth_deg: 12\n".encode("utf-16-le"))


def measurements_latin1(folder: Path) -> None:
    """A measurements table saved in Latin-1: a station named with 0xF3 on line 3."""
    text = (FILES / "measurements.csv").read_text().replace("VM-N2", "Roc\u00f3", 1)
    (folder / "latin_measurements.csv").write_bytes(text.encode("latin-1"))


def stack_latin1(folder: Path) -> None:
    """A stack file saved in Latin-1: 0xE8 in a layer name on line 4."""
    text = "layers:\n  - fast_azimuth_deg: 40\n    delay_s: 0.8\n    name: crust (Vall\u00e8)\n"
    (folder / "latin_stack.yaml").write_bytes(text.encode("latin-1"))


MAKERS = {f.__name__: f for f in (
    ang_truncated_row, ang_text_value, ang_nan_angle, ang_phi_beyond_half_turn, ang_degrees, ang_seven_columns,
    ang_nrows_mismatch, ang_hex_header_over_square, ang_square_header_over_hex, ang_xstep_mismatch,
    ang_point_off_grid, ang_jittered, ang_all_unindexed, ang_point_group_mismatch, ang_single_grain,
    ang_gz_truncated, ang_gz_not_gzip,
    ctf_no_column_line, ctf_xcells_mismatch, ctf_xstep_mismatch, ctf_radians, ctf_all_phase_zero, ctf_ten_columns,
    ctf_inf_angle,
    h5_empty, h5_text, h5_no_ebsd, h5_one_point,
    csv_binary, csv_latin1, csv_gz_empty, sidecar_latin1, sidecar_utf16_without_mark, measurements_latin1,
    stack_latin1)}


def prepare(case: dict, folder: Path, results: Path | None = None) -> None:
    """Put a case's files into ``folder`` (and a copy of the shared results folder where it asks)."""
    for name in case.get("files", []):
        if (FILES / name).is_file():
            shutil.copy(FILES / name, folder / name)
        else:
            MAKERS[name](folder)
    if case.get("results"):
        if results is None:
            raise ValueError(f"case {case['name']} needs a results folder")
        shutil.copytree(results, folder / case["results"])


def make_results(folder: Path) -> Path:
    """A real results folder of ``fabric2seis sample`` (the good grain list, with a field placement)."""
    from fabric2seis.pipeline import run_sample

    folder.mkdir(parents=True, exist_ok=True)
    shutil.copy(FILES / "grains.csv", folder / "dunite.csv")
    (folder / "dunite.yaml").write_text("bootstrap: {n: 0}\nfield: {foliation_strike_deg: 30, foliation_dip_deg: 5, "
                                        "lineation_pitch_deg: 15, layer_thickness_km: 60}\n")
    return run_sample(folder / "dunite.csv", out_dir=folder / "dunite", results_root=None)
