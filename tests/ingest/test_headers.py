"""The phases of .ang and .ctf headers read without orix equal what orix's readers make of them.

Reference: orix's readers (``orix.io.plugins.ang.file_reader``, ``orix.io.plugins.ctf.file_reader``)
through :func:`fabric2seis.ingest.io.orix_parts.header_phases`, which hands them the header and
one data row per phase id, and, where that differs from reading the whole file, orix reading a
whole small file. Header layouts: EDAX TSL .ang (``# Phase``, ``# MaterialName``, ``# Formula``,
``# Symmetry`` with TSL's codes, ``# LatticeConstants``), Oxford .ctf (``Phases`` and one line
per phase: lattice; name; Laue group number; space group) and the files orix writes (common
practice, the vendors' export layouts as orix reads them).
"""

import subprocess
import sys
import tempfile
import warnings
from pathlib import Path

import numpy as np
import pytest
from orix import io as orix_io
from orix.crystal_map import CrystalMap, PhaseList
from orix.io.plugins import ang as orix_ang
from orix.io.plugins import ctf as orix_ctf
from orix.quaternion import Rotation

from fabric2seis.errors import InputError
from fabric2seis.ingest.io.headers import ang_columns, ang_phases, ctf_phases
from fabric2seis.ingest.io.orix_parts import map_phases
from fabric2seis.ingest.io.text import quiet

# ---------------------------------------------------------------- the reference: orix's own readers
# (the readers used these until the header was read without orix): orix reads a copy of the header
# with one data row per phase id that occurs, and its CrystalMap tells names, point groups, columns


def header_phases(file_reader, header: list[str], rows: np.ndarray, source: Path, suffix: str
                  ) -> tuple[dict[int, str], dict[int, str | None], list[str]]:
    """Read phase names and point groups by id, and the names of the extra columns, as orix reads them.

    ``file_reader`` is orix's reader of the format, ``header`` the header lines, ``rows`` one data
    row (as numbers) for each phase id that occurs in the file, so that orix matches the header's
    phases to the ids exactly as it would reading the whole file.

    Parameters
    ----------
    file_reader : callable
        orix's reader of the format (takes a file name, returns a CrystalMap).
    header : list of str
        The header lines, with their line ends.
    rows : numpy.ndarray, shape (P, C)
        One data row per phase id.
    source : Path
        The file, for error messages.
    suffix : str
        The format's suffix, e.g. ``".ang"``.

    Returns
    -------
    names : dict of int to str
        Phase name by id.
    point_groups : dict of int to str or None
        Point group by id, None where the header gives none.
    columns : list of str
        Names of the columns beyond the ones every file of the format has.

    Raises
    ------
    InputError
        If orix cannot read the header.
    """
    if len(rows) == 1:
        rows = np.repeat(rows, 2, axis=0)      # orix's text loading needs two rows to see a table
    rows = np.where(np.isfinite(rows), rows, 0.0)  # orix needs only the phase ids; the caller checks the rest
    with tempfile.TemporaryDirectory(prefix="fabric2seis-") as tmp:
        head = Path(tmp) / f"header{suffix}"
        body = "".join("\t".join(repr(float(v)) for v in row) + "\n" for row in rows)
        head.write_text("".join(header) + body)
        try:
            xmap = quiet(file_reader, str(head))
        except Exception as exc:  # orix raises several types for a header it cannot read
            raise InputError(f"the header cannot be read ({type(exc).__name__}: {str(exc)[:120]})", source) from None
    names, groups = map_phases(xmap)
    return names, groups, list(xmap.prop)


def one_row_per_phase(phase_id: np.ndarray) -> np.ndarray:
    """Find the first row of every distinct phase id (-1 included).

    Parameters
    ----------
    phase_id : numpy.ndarray of int, shape (N,)
        Phase of each point.

    Returns
    -------
    numpy.ndarray of int, shape (P,)
        Row indices, in increasing order of phase id.
    """
    return np.unique(phase_id, return_index=True)[1]




pytestmark = pytest.mark.filterwarnings("ignore::UserWarning")    # orix warns about column counts, space groups

DEMO = Path(__file__).resolve().parents[2] / "demo_samples"
UNREADABLE = "unreadable"


def outcome(call):
    """What a reader gives: its result, or UNREADABLE where it raises InputError."""
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")        # orix warns about column counts and space groups
            return call()
    except InputError as exc:
        assert "the header cannot be read" in str(exc) and "h." in str(exc), exc
        return UNREADABLE


def ang_rows(ids, n_columns):
    rows = np.zeros((max(len(ids), 1), n_columns))
    rows[:, 7] = ids or [-1]                       # a map with no ids: one point not indexed
    rows[:, 6] = 0.5                               # ci: indexed
    rows[:, 3] = np.arange(len(rows))
    return rows


def ctf_rows(ids):
    rows = np.zeros((max(len(ids), 1), 11))
    rows[:, 0] = ids or [0]                        # a map with no ids: one point not indexed
    rows[:, 1] = np.arange(len(rows))
    return rows


def compare_ang(header: str, n_columns: int, ids: list[int]):
    lines = header.splitlines(keepends=True)
    ours = outcome(lambda: ang_phases(lines, n_columns, ids, Path("h.ang")))
    reference = outcome(lambda: header_phases(orix_ang.file_reader, lines, ang_rows(ids, n_columns), Path("h.ang"),
                                              ".ang"))
    assert ours == reference
    return ours


def compare_ctf(header: str, ids: list[int]):
    lines = header.splitlines(keepends=True)
    ours = outcome(lambda: ctf_phases(lines, ids, Path("h.ctf")))
    reference = outcome(lambda: header_phases(orix_ctf.file_reader, lines, ctf_rows(ids), Path("h.ctf"), ".ctf")[:2])
    assert ours == reference
    return ours


# ------------------------------------------------------------------ .ang headers, EDAX TSL layout

TOP = ("# TEM_PIXperUM          1.000000\n# x-star                0.412995\n# y-star                0.742839\n"
       "# z-star                0.694366\n# WorkingDistance       15.000000\n#\n")
BOTTOM = ("#\n# GRID: SqrGrid\n# XSTEP: 1.000000\n# YSTEP: 1.000000\n# NCOLS_ODD: 10\n# NCOLS_EVEN: 10\n"
          "# NROWS: 10\n#\n# OPERATOR: \t\n#\n# SAMPLEID: \t\n#\n# SCANID: \t\n#\n")
OLIVINE = "4.756 10.207 5.980  90.000  90.000  90.000"


def phase(pid=1, name="Forsterite", formula="Mg2SiO4", symmetry="22", lattice=OLIVINE):
    """One phase block of an EDAX TSL .ang header (a field given as None is left out)."""
    lines = [f"# Phase {pid}" if pid is not None else None,
             f"# MaterialName  \t{name}" if name is not None else None,
             f"# Formula     \t{formula}" if formula is not None else None,
             "# Info \t\t",
             f"# Symmetry              {symmetry}" if symmetry is not None else None,
             f"# LatticeConstants      {lattice}" if lattice is not None else None,
             "# NumberFamilies        4", "# hklFamilies   \t 0  2  0 1 0.000000 1", "# Categories0 0 0 0 0 "]
    return "".join(line + "\n" for line in lines if line is not None)


def edax(*phases, top=TOP, bottom=BOTTOM):
    return top + "".join(phases) + bottom


EN = dict(name="Enstatite", formula="MgSiO3", lattice="18.23 8.82 5.18 90 90 90")
DI = dict(name="Diopside", formula="CaMgSi2O6", symmetry="2", lattice="9.75 8.90 5.25 90 105.9 90")

ANG_CASES = {
    # EDAX .ang header layout, common practice; orix's readers as reference
    "one phase": (edax(phase()), 10, [1]),
    "one phase, 14 columns": (edax(phase()), 14, [1]),
    "one phase, data id 0": (edax(phase()), 10, [0]),
    "one phase, data ids 0 and 1": (edax(phase()), 10, [0, 1]),
    "one phase, not indexed only": (edax(phase()), 10, [-1]),
    "one phase, no data ids": (edax(phase()), 10, []),
    "no formula line": (edax(phase(formula=None)), 10, [1]),
    "empty formula": (edax(phase(formula="")), 10, [1]),
    "formula of several words": (edax(phase(formula="Mg2 Si O4")), 10, [1]),
    "name of several words": (edax(phase(name="Olivine Fo90", formula=None)), 10, [1]),
    "no symmetry line": (edax(phase(symmetry=None)), 10, [1]),
    "symmetry after one space": (edax(phase(formula=None).replace("Symmetry              ", "Symmetry ")),
                                 10, [1]),
    "symmetry -3m after one space": (edax(phase(formula=None, symmetry="-3m").replace("Symmetry              ",
                                                                                        "Symmetry ")), 10, [1]),
    "symmetry after a tab": (edax(phase(formula=None).replace("Symmetry              ", "Symmetry\t")),
                             10, [1]),
    "no lattice line": (edax(phase(lattice=None)), 10, [1]),
    "two phases": (edax(phase(), phase(2, **EN)), 10, [1, 2]),
    "two phases, data has the first": (edax(phase(), phase(2, **EN)), 10, [1]),
    "two phases, data has the second": (edax(phase(), phase(2, **EN)), 10, [2]),
    "two phases, data ids 0 and 1": (edax(phase(), phase(2, **EN)), 10, [0, 1]),
    "two phases, data ids 0, 1, 2": (edax(phase(), phase(2, **EN)), 10, [0, 1, 2]),
    "two phases, data id not in the header": (edax(phase(), phase(2, **EN)), 10, [1, 2, 5]),
    "two phases, data id 5 only": (edax(phase(), phase(2, **EN)), 10, [5]),
    "two phases, not indexed too": (edax(phase(), phase(2, **EN)), 10, [-1, 1, 2]),
    "two phases in reverse order": (edax(phase(2, **EN), phase()), 10, [1, 2]),
    "three phases": (edax(phase(), phase(2, **EN), phase(3, **DI)), 10, [1, 2, 3]),
    "three phases, data has two": (edax(phase(), phase(2, **EN), phase(3, **DI)), 10, [1, 3]),
    "three phases, data has one": (edax(phase(), phase(2, **EN), phase(3, **DI)), 10, [2]),
    "three phases, ids from 0": (edax(phase(0), phase(1, **EN), phase(2, **DI)), 10, [0, 1, 2]),
    "formula on one phase of two": (edax(phase(), phase(2, **{**EN, "formula": None})), 10, [1, 2]),
    "no formulas": (edax(phase(formula=None), phase(2, **{**EN, "formula": None})), 10, [1, 2]),
    "same formula, other symmetry": (edax(phase(formula="X"), phase(2, **{**EN, "formula": "X", "symmetry": "2"})),
                                     10, [1, 2]),
    "same formula, same symmetry": (edax(phase(formula="X"), phase(2, **{**EN, "formula": "X"})), 10, [1, 2]),
    "same formula, a symmetry missing": (edax(phase(formula="X"), phase(2, **{**EN, "formula": "X",
                                                                              "symmetry": None})), 10, [1, 2]),
    "three phases, two formulas alike": (edax(phase(formula="X"), phase(2, **EN), phase(3, **{**DI, "formula": "X"})),
                                         10, [1, 2, 3]),
    "no phase lines": (edax(phase(None), phase(None, **EN)), 10, [0, 1]),
    "no phase lines, data ids 1, 2": (edax(phase(None), phase(None, **EN)), 10, [1, 2]),
    "second phase line missing": (edax(phase(3), phase(None, **EN)), 10, [3, 4]),
    "first phase line missing": (edax(phase(None), phase(2, **EN)), 10, [2, 3]),
    "phase lines missing, no formulas": (edax(phase(None, formula=None), phase(None, **{**EN, "formula": None})),
                                         10, [0, 1]),
    "the same phase id twice": (edax(phase(formula=None), phase(1, **{**EN, "formula": None})), 10, [1]),
    "the same phase id twice, formulas": (edax(phase(), phase(1, **EN)), 10, [1]),
    "a symmetry missing of two": (edax(phase(symmetry=None), phase(2, **EN)), 10, [1, 2]),
    "more symmetry lines than phases": (edax(phase(formula=None), "# Symmetry    43\n"), 10, [1, 2]),
    "symmetry but no phase": (edax("# Symmetry    43\n"), 10, [0]),
    "phase line but no name": (edax(phase(name=None, formula=None)), 10, [1]),
    "no phases at all": (edax(), 10, [1]),
    "phase id not a number": (edax(phase(pid="1 Forsterite")), 10, [1]),
    "phase id after two spaces": (edax(phase(pid=" 7")), 10, [7]),
    "unknown symmetry": (edax(phase(symmetry="7")), 10, [1]),
    "lattice: unit cube": (edax(phase(lattice="1 1 1 90 90 90")), 10, [1]),
    "lattice: hexagonal": (edax(phase(lattice="4.913 4.913 5.405 90 90 120")), 10, [1]),
    "lattice: triclinic": (edax(phase(lattice="8.16 12.87 14.11 93.5 116.2 90.6")), 10, [1]),
    "lattice: zeros": (edax(phase(lattice="0 0 0 0 0 0")), 10, [1]),
    "lattice: five values": (edax(phase(lattice="1 1 1 90 90")), 10, [1]),
    "lattice: seven values": (edax(phase(lattice="1 1 1 90 90 90 2")), 10, [1]),
    "lattice: seventh zero": (edax(phase(lattice="1 1 1 90 90 90 0")), 10, [1]),
    "lattice: eight values": (edax(phase(lattice="1 1 1 90 90 90 1 1")), 10, [1]),
    "lattice: not numbers": (edax(phase(lattice="a b c 90 90 90")), 10, [1]),
    "lattice: negative length": (edax(phase(lattice="-1 1 1 90 90 90")), 10, [1]),
    "lattice: two negative lengths": (edax(phase(lattice="-1 -1 1 90 90 90")), 10, [1]),
    "lattice: tiny cell": (edax(phase(lattice="0.001 0.001 0.001 90 90 90")), 10, [1]),
    "lattice: angles that close no cell": (edax(phase(lattice="1 1 1 120 120 120")), 10, [1]),
    "lattice: obtuse cell": (edax(phase(lattice="1 1 1 100 100 100")), 10, [1]),
    "lattice: nan": (edax(phase(lattice="nan 1 1 90 90 90")), 10, [1]),
    "lattice: inf": (edax(phase(lattice="inf 1 1 90 90 90")), 10, [1]),
    "lattice: angle inf": (edax(phase(lattice="1 1 1 inf 90 90")), 10, [1]),
    "lattice: angle 0": (edax(phase(lattice="1 1 1 90 0 90")), 10, [1]),
    "lattice: angle 270": (edax(phase(lattice="1 1 1 90 90 270")), 10, [1]),
    "lattice: angle -60": (edax(phase(lattice="1 1 1 90 90 -60")), 10, [1]),
    "lattice of a second phase bad": (edax(phase(), phase(2, **{**EN, "lattice": "0 0 0 90 90 90"})), 10, [1]),
    "Windows line ends": (edax(phase(), phase(2, **EN)).replace("\n", "\r\n"), 10, [1, 2]),
    "over 1000 header lines": (edax(phase(), phase(2, **EN)) + "# filler\n" * 1000 + phase(3, **DI), 10, [1, 2, 3]),
    "phases after line 1000": (edax(phase(formula=None), top=TOP + "# filler\n" * 1000) + phase(2, **EN), 10, [1]),
    "a line without #": (edax(phase()) + "not a comment\n", 10, [1]),
    # vendor footprints and column counts (orix's readers as reference)
    "tsl, 8 columns": (edax(phase()), 8, [1]),
    "tsl, 9 columns": (edax(phase()), 9, [1]),
    "tsl, 11 columns": (edax(phase()), 11, [1]),
    "tsl, 16 columns": (edax(phase()), 16, [1]),
    "emsoft, 8 columns": (edax(phase(), top=TOP + "# EMsoft v. 5_0; BANDS=pattern index\n"), 8, [1]),
    "emsoft, 10 columns": (edax(phase(), top=TOP + "# EMsoft v. 5_0\n"), 10, [1]),
    "astar, 9 columns": (edax(phase(), top=TOP + "# File created from ACOM RES results\n"), 9, [1]),
    "astar, 10 columns": (edax(phase(), top=TOP + "# ACOM\n"), 10, [1]),
    "astar and emsoft footprints": (edax(phase(), top=TOP + "# ACOM\n# EMsoft\n"), 9, [1]),
    "orix column names": (edax(phase(), bottom=BOTTOM + "# Column names: phi1, Phi, phi2, x, y, image_quality, "
                               "confidence_index, phase_id, detector_signal, pattern_fit\n"), 10, [1]),
    "orix column names, extras": (edax(phase(), bottom=BOTTOM + "# Column names: phi1, Phi, phi2, x, y, iq, ci, "
                                       "phase_id, ds, fit, band contrast, mad\n"), 12, [1]),
    "orix column names, more data columns": (edax(phase(), bottom=BOTTOM + "# Column names: phi1, Phi, phi2, x, y, "
                                                  "iq, ci, phase_id, ds, fit, bc\n"), 14, [1]),
    "orix column names, too few data columns": (edax(phase(), bottom=BOTTOM + "# Column names: phi1, Phi, phi2, x, "
                                                     "y, iq, ci, phase_id, ds, fit, bc\n"), 10, [1]),
    "orix column names, an extra named x": (edax(phase(), bottom=BOTTOM + "# Column names: phi1, Phi, phi2, x, y, "
                                                 "iq, ci, phase_id, ds, fit, x, ci\n"), 12, [1]),
    "orix column names, an extra named prop": (edax(phase(), bottom=BOTTOM + "# Column names: phi1, Phi, phi2, x, "
                                                    "y, iq, ci, phase_id, ds, fit, prop\n"), 11, [1]),
    "orix column names, trailing comma": (edax(phase(), bottom=BOTTOM + "# Column names: phi1, Phi, phi2, x, y, "
                                               "iq, ci, phase_id, ds, fit, bc,\n"), 12, [1]),
    "orix and emsoft footprints": (edax(phase(), top=TOP + "# EMsoft\n", bottom=BOTTOM + "# Column names: phi1, Phi, "
                                        "phi2, x, y, iq, ci, phase_id, ds, fit\n"), 10, [1]),
}


@pytest.mark.parametrize("header, n_columns, ids", ANG_CASES.values(), ids=ANG_CASES.keys())
def test_ang_header_variants_read_as_orix_reads_them(header, n_columns, ids):
    # EDAX .ang header layout, common practice; orix's readers as reference
    compare_ang(header, n_columns, ids)


TSL_CODES = ["1", "2", "20", "22", "3", "32", "4", "42", "6", "62", "23", "43", "m3m", "-1", "112", "121", "2/m",
             "mmm", "4/mmm", "-3", "-3m", "6/m", "6/mmm", "m-3", "m-3m", "432", "622", "321", "0", "7", "21", "m3",
             "mm", "xyz"]


@pytest.mark.parametrize("code", TSL_CODES)
def test_ang_symmetry_codes_give_orix_point_groups(code):
    # EDAX .ang header layout (TSL symmetry codes: 22 orthorhombic, 43 cubic ...), common practice;
    # orix's readers (its _EDAX_POINT_GROUP_ALIASES) as reference
    compare_ang(edax(phase(formula=None, symmetry=code)), 10, [1])
    compare_ang(edax(phase(symmetry=code), phase(2, **{**EN, "formula": "Mg2SiO4", "symmetry": "43"})), 10, [1, 2])


def test_ang_tsl_codes_map_to_the_expected_point_groups():
    # EDAX .ang header layout, common practice: TSL writes 22 for mmm's proper group 222, 43 for 432
    names, groups, columns = ang_phases(edax(phase(), phase(2, **{**EN, "symmetry": "43"})).splitlines(True), 10,
                                        [1, 2], "h.ang")
    assert names == {1: "Mg2SiO4", 2: "MgSiO3"}                # orix renames phases after their formulas
    assert groups == {1: "222", 2: "432"}
    assert columns == ["iq", "ci", "detector_signal", "fit"]


def random_ang_header(rng):
    """An EDAX-style header of random phase blocks (fields left out, repeated or unknown at random)."""
    pick = lambda options: options[rng.integers(len(options))]
    blocks = [phase(pid=pick([1, 2, 3, 0, None, 5]), name=pick(["Forsterite", "Enstatite", "Olivine Fo90", "X", None]),
                    formula=pick(["Mg2SiO4", "MgSiO3", "X", "", None]), lattice=pick([OLIVINE, None, "0 0 0 90 90 90"]),
                    symmetry=pick(["22", "43", "2", "20", "62", "-3m", "m3m", "1", "6/mmm", None, "7"]))
              for _ in range(rng.integers(0, 4))]
    stray = pick(["", "# Symmetry    22\n", "# MaterialName  Q\n", "# Phase 4\n", "# Formula  Y\n"])
    top = TOP + pick(["", "# EMsoft\n", "# ACOM\n"])
    bottom = BOTTOM + pick(["", "# Column names: phi1, Phi, phi2, x, y, iq, ci, phase_id, ds, fit, bc, mad\n"])
    ids = sorted({int(i) for i in rng.choice([-1, 0, 1, 2, 3, 4, 5], rng.integers(0, 4))})
    return edax(*blocks, stray, top=top, bottom=bottom), int(pick([8, 9, 10, 12, 14, 15])), ids


@pytest.mark.parametrize("seed", range(8))
def test_ang_random_header_variants(seed):
    # EDAX .ang header layout, common practice; orix's readers as reference (seeded random
    # combinations of the fields above, 20 headers a seed)
    rng = np.random.default_rng(seed)
    for _ in range(20):
        compare_ang(*random_ang_header(rng))


# ------------------------------------------------------------------ .ang files written by orix

ORIX_PHASE_SETS = {
    "olivine, enstatite, diopside": [("olivine", "mmm"), ("enstatite", "mmm"), ("diopside", "2/m")],
    "quartz, calcite": [("quartz", "-3m"), ("calcite", "-3m")],
    "garnet, biotite, zircon": [("garnet", "m-3m"), ("biotite", "2/m"), ("zircon", "4/mmm")],
    "apatite": [("apatite", "6/mmm")],
    "plagioclase, k feldspar": [("plagioclase", "-1"), ("k feldspar", "2/m")],
    "magnetite, ilmenite, x": [("magnetite", "m-3"), ("ilmenite", "-3"), ("x", "6/m")],
    "no point group": [("glass", None)],
    "same names' last words": [("low quartz", "-3m"), ("high quartz", "6/mmm")],
}


def orix_ang_file(tmp_path, phases, extra_prop=None, seed=0):
    """A small map with every phase and some points not indexed, written by orix."""
    n_x, n_y = 6, 5
    rng = np.random.default_rng(seed)
    phase_id = np.arange(n_x * n_y) % len(phases)
    phase_id[rng.choice(n_x * n_y, 4, replace=False)] = -1
    y, x = np.mgrid[0:n_y, 0:n_x]
    prop = {"ci": np.where(phase_id < 0, -1.0, 0.5), "iq": np.ones(n_x * n_y), "mad": rng.random(n_x * n_y),
            "bc": rng.random(n_x * n_y)}
    xmap = CrystalMap(rotations=Rotation.random(n_x * n_y), phase_id=phase_id, x=x.ravel() * 1.0, y=y.ravel() * 1.0,
                      phase_list=PhaseList(names=[n for n, _ in phases], point_groups=[g for _, g in phases],
                                           ids=list(range(len(phases)))), prop=prop)
    path = tmp_path / "h.ang"
    orix_io.save(path, xmap, extra_prop=extra_prop)
    return path


def indexed_ids(header, values, source="h.ang"):
    """The phase ids orix counts as indexed: those of points whose ci (where the layout has one) is not -1."""
    columns = ang_columns(header, values.shape[1], source)
    indexed = np.ones(len(values), bool)
    if "ci" in columns:                            # orix takes the last column of a name
        indexed = values[:, len(columns) - 1 - columns[::-1].index("ci")] != -1
    return sorted({int(i) for i in values[indexed, 7]})


def ang_file_parts(path):
    """Header lines, data rows and the ids orix counts as indexed, as the reader sees them."""
    text = path.read_text().splitlines(keepends=True)
    header = [line for line in text if line.startswith("#")]
    values = np.loadtxt(path, ndmin=2)
    return header, values, indexed_ids(header, values, path)


@pytest.mark.parametrize("extra_prop", [None, ["mad"], ["mad", "bc"]])
@pytest.mark.parametrize("phases", ORIX_PHASE_SETS.values(), ids=ORIX_PHASE_SETS.keys())
def test_ang_files_written_by_orix(tmp_path, phases, extra_prop):
    # orix's writer and readers as reference: the reader's path (header, one row per raw phase id)
    # and orix reading the whole file
    path = orix_ang_file(tmp_path, phases, extra_prop)
    header, values, ids = ang_file_parts(path)
    ours = outcome(lambda: ang_phases(header, values.shape[1], ids, path))
    reference = outcome(lambda: header_phases(orix_ang.file_reader, header,
                                              values[one_row_per_phase(values[:, 7].astype(int))], path, ".ang"))
    assert ours == reference
    whole = outcome(lambda: orix_ang.file_reader(str(path)))
    assert ours[0] == {i: p.name or f"phase {i}" for i, p in whole.phases if i >= 0}
    assert ours[1] == {i: p.point_group.name if p.point_group else None for i, p in whole.phases if i >= 0}
    assert ours[2] == list(whole.prop)


WHOLE_FILES = {   # header, column count, the column holding -1 at the points of phase 0
    "tsl, 10 columns": (edax(phase(), phase(2, **EN)), 10, 6),
    "tsl, 14 columns": (edax(phase(), phase(2, **EN)), 14, 6),
    "tsl, 12 columns (unknown layout)": (edax(phase(), phase(2, **EN)), 12, 6),
    "emsoft, 8 columns": (edax(phase(), phase(2, **EN), top=TOP + "# EMsoft\n"), 8, 6),
    "astar, 9 columns": (edax(phase(), phase(2, **EN), top=TOP + "# ACOM\n"), 9, 6),
    "orix, an extra named ci": (edax(phase(), phase(2, **EN), bottom=BOTTOM + "# Column names: phi1, Phi, phi2, x, "
                                     "y, iq, ci, phase_id, ds, fit, ci\n"), 11, 10),
}


@pytest.mark.parametrize("header, n_columns, marked", WHOLE_FILES.values(), ids=WHOLE_FILES.keys())
def test_ang_whole_files_with_points_not_indexed(tmp_path, header, n_columns, marked):
    # orix's readers as reference, reading the whole file: points with ci -1 (EDAX TSL and orix
    # layouts) are not indexed, so phase 0 here, all of whose points have ci -1, is no phase
    # there; ang_columns finds the column orix takes ci from (the last one named ci)
    rows = ang_rows([0, 0, 1, 2, 2, 1], n_columns)
    rows[:2, marked] = -1
    path = tmp_path / "h.ang"
    path.write_text(header + "".join(" ".join(map(str, row)) + "\n" for row in rows))
    lines = header.splitlines(True)
    whole = orix_ang.file_reader(str(path))
    ours = ang_phases(lines, n_columns, indexed_ids(lines, rows), path)
    assert ours[0] == {i: p.name or f"phase {i}" for i, p in whole.phases if i >= 0}
    assert ours[1] == {i: p.point_group.name if p.point_group else None for i, p in whole.phases if i >= 0}
    assert ours[2] == list(whole.prop)


@pytest.mark.parametrize("name", ["VM01_dunite.ang", "VM03_lherzolite.ang", "VM06_weak_dunite.ang"])
def test_ang_demo_files(name):
    # the demo files (written by orix's layout); orix's readers as reference
    path = DEMO / name
    header, values, ids = ang_file_parts(path)
    ours = ang_phases(header, values.shape[1], ids, path)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        reference = header_phases(orix_ang.file_reader, header, values[one_row_per_phase(values[:, 7].astype(int))],
                                  path, ".ang")
    assert ours == reference
    assert all(group is not None for group in ours[1].values())


# ------------------------------------------------------------------ .ctf headers, Oxford layout

CTF_TOP = ("Channel Text File\nPrj\tC:\\maps\\h.cpr\nAuthor\t[Unknown]\nJobMode\tGrid\nXCells\t10\nYCells\t10\n"
           "XStep\t1.0\nYStep\t1.0\nAcqE1\t0\nAcqE2\t0\nAcqE3\t0\n"
           "Euler angles refer to Sample Coordinate system (CS0)!\tMag\t100\tCoverage\t100\tDevice\t0\tKV\t20\t"
           "TiltAngle\t70\tTiltAxis\t0\n")
COLUMNS = "Phase\tX\tY\tBands\tError\tEuler1\tEuler2\tEuler3\tMAD\tBC\tBS\n"
FO = "4.756;10.207;5.980\t90.000;90.000;90.000\tForsterite\t3\t62\t\t\t\tCreated from CIF"
EN_CTF = "18.23;8.82;5.18\t90;90;90\tEnstatite\t3\t61"
QZ = "4.913;4.913;5.405\t90.000;90.000;120.000\tQuartz\t7\t154"


def ctf(*phase_lines, top=CTF_TOP, count=None, columns=COLUMNS):
    count = len(phase_lines) if count is None else count
    return top + f"Phases\t{count}\n" + "".join(line + "\n" for line in phase_lines) + columns


CTF_CASES = {
    # Oxford .ctf header layout, common practice; orix's readers as reference
    "one phase": (ctf(FO), [1]),
    "one phase, not indexed too": (ctf(FO), [0, 1]),
    "one phase, not indexed only": (ctf(FO), [0]),
    "one phase, no data ids": (ctf(FO), []),
    "one phase, data id 2": (ctf(FO), [2]),
    "two phases": (ctf(FO, EN_CTF), [0, 1, 2]),
    "two phases, data has the second": (ctf(FO, EN_CTF), [0, 2]),
    "two phases, data has the first": (ctf(FO, EN_CTF), [1]),
    "two phases, data id not in the header": (ctf(FO, EN_CTF), [1, 2, 4]),
    "three phases": (ctf(FO, EN_CTF, QZ), [0, 1, 2, 3]),
    "three phases, data has two": (ctf(FO, EN_CTF, QZ), [1, 3]),
    "three phases, data has one": (ctf(FO, EN_CTF, QZ), [0, 2]),
    "three phases, -1 in the data": (ctf(FO, EN_CTF, QZ), [-1, 1, 2, 3]),
    "no phases": (ctf(), [0, 1]),
    "comma decimals": (ctf("4,756;10,207;5,980\t90,000;90,000;90,000\tForsterite\t3\t62"), [1]),
    "name of several words": (ctf("4.756;10.207;5.980\t90;90;90\tOlivine Fo90\t3\t0"), [1]),
    "empty name": (ctf("4.756;10.207;5.980\t90;90;90\t\t3\t0"), [1]),
    "space group 0": (ctf("4.756;10.207;5.980\t90;90;90\tOlivine\t3\t0"), [1]),
    "space group of another Laue group": (ctf("4.756;10.207;5.980\t90;90;90\tOlivine\t3\t225"), [1]),
    "space group 231": (ctf("4.756;10.207;5.980\t90;90;90\tOlivine\t3\t231"), [1]),
    "space group -1": (ctf("4.756;10.207;5.980\t90;90;90\tOlivine\t3\t-1"), [1]),
    "Laue group 0": (ctf("4.756;10.207;5.980\t90;90;90\tOlivine\t0\t0"), [1]),
    "Laue group 12": (ctf("4.756;10.207;5.980\t90;90;90\tOlivine\t12\t0"), [1]),
    "Laue group not a number": (ctf("4.756;10.207;5.980\t90;90;90\tOlivine\tmmm\t0"), [1]),
    "four fields": (ctf("4.756;10.207;5.980\t90;90;90\tOlivine\t3"), [1]),
    "lattice: zeros": (ctf("0;0;0\t90;90;90\tOlivine\t3\t0"), [1]),
    "lattice: five values": (ctf("1;1;1\t90;90\tOlivine\t3\t0"), [1]),
    "lattice: not numbers": (ctf("a;b;c\t90;90;90\tOlivine\t3\t0"), [1]),
    "more phases announced than given": (ctf(FO, count=2), [1]),
    "fewer phases announced than given": (ctf(FO, EN_CTF, count=1), [1, 2]),
    "no Phases line": (CTF_TOP + FO + "\n" + COLUMNS, [1]),
    "phase count not a number": (ctf(FO, count="one"), [1]),
    "column line with spaces": (ctf(FO, columns=COLUMNS.replace("\t", " ")), [1]),
    "column line only": (COLUMNS, [1]),
    "Windows line ends": (ctf(FO, EN_CTF).replace("\n", "\r\n"), [1, 2]),
    "EMsoft": (ctf(FO, top=CTF_TOP + "Author\tEMsoft v. 5_0_1; BANDS=pattern index, MAD=CI, BC=OSM, BS=IQ\n"), [1]),
    "MTEX": (ctf(FO, top=CTF_TOP + "Prj\tCreated from mtex\n"), [1]),
}


@pytest.mark.parametrize("header, ids", CTF_CASES.values(), ids=CTF_CASES.keys())
def test_ctf_header_variants_read_as_orix_reads_them(header, ids):
    # Oxford .ctf header layout, common practice; orix's readers as reference
    compare_ctf(header, ids)


SPACE_GROUPS = {1: 2, 2: 15, 3: 62, 4: 87, 5: 139, 6: 148, 7: 154, 8: 176, 9: 194, 10: 205, 11: 225}


@pytest.mark.parametrize("laue", range(1, 12))
@pytest.mark.parametrize("with_space_group", [False, True])
def test_ctf_laue_groups_give_orix_point_groups(laue, with_space_group):
    # Oxford .ctf header layout (Laue group numbers 1-11), common practice; orix's readers as
    # reference (orix has no point group "m3" for Laue group 10: it refuses the header)
    sg = SPACE_GROUPS[laue] if with_space_group else 0
    line = f"5;6;7\t90;90;90\tPhase {laue}\t{laue}\t{sg}"
    result = compare_ctf(ctf(line), [0, 1])
    assert (result == UNREADABLE) == (laue == 10)
    result = compare_ctf(ctf(FO, line, QZ), [1, 2, 3])
    assert (result == UNREADABLE) == (laue == 10)


def random_ctf_header(rng):
    """An Oxford-style header of random phase lines (Laue groups, space groups, lattices, fields)."""
    pick = lambda options: options[rng.integers(len(options))]
    lines = []
    for _ in range(rng.integers(0, 4)):
        fields = [pick(["4.756;10.207;5.980\t90;90;90", "4,9;4,9;5,4\t90;90;120", "0;0;0\t90;90;90"]),
                  pick(["Forsterite", "", "Olivine Fo90"]), pick(["1", "2", "3", "7", "9", "10", "11", "0"]),
                  pick(["0", "62", "225", "154", "231"])]
        lines.append("\t".join(fields) + pick(["", "\t\t\t\tCreated from CIF"]))
    header = ctf(*lines, count=pick([None] * 9 + [2]))
    return header, sorted({int(i) for i in rng.choice([-1, 0, 1, 2, 3, 4], rng.integers(0, 4))})


@pytest.mark.parametrize("seed", range(8))
def test_ctf_random_header_variants(seed):
    # Oxford .ctf header layout, common practice; orix's readers as reference (seeded random
    # combinations of the fields above, 20 headers a seed)
    rng = np.random.default_rng(seed)
    for _ in range(20):
        compare_ctf(*random_ctf_header(rng))


@pytest.mark.parametrize("name", ["VM02_harzburgite.ctf", "VM05_quartz_mylonite.ctf"])
def test_ctf_demo_files(name):
    # the demo files (Oxford layout); orix's readers as reference
    path = DEMO / name
    text = path.read_text().splitlines(keepends=True)
    header = text[:next(k for k, line in enumerate(text) if line.startswith("Phase\tX\tY")) + 1]
    values = np.loadtxt(path, skiprows=len(header), ndmin=2)
    ids = sorted({int(i) for i in values[:, 0]})
    ours = ctf_phases(header, ids, path)
    assert ours == header_phases(orix_ctf.file_reader, header, values[one_row_per_phase(values[:, 0].astype(int))],
                                 path, ".ctf")[:2]
    assert ours[0] and all(group is not None for group in ours[1].values())


# ------------------------------------------------------------------ errors

@pytest.mark.parametrize("header, ids, reason", [
    (edax(phase(symmetry="7")), [1], "symmetry '7'"),
    (edax(), [1], "no phase"),
    (edax(phase(lattice="0 0 0 0 0 0")), [1], "unit cell"),
])
def test_ang_header_orix_cannot_read_gives_input_error(header, ids, reason):
    # orix's readers as reference: it refuses these headers, and so do we, with the reason
    with pytest.raises(InputError, match="the header cannot be read"):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            header_phases(orix_ang.file_reader, header.splitlines(True), ang_rows(ids, 10), Path("h.ang"), ".ang")
    with pytest.raises(InputError, match="the header cannot be read") as err:
        ang_phases(header.splitlines(True), 10, ids, Path("h.ang"))
    assert reason in str(err.value) and "h.ang" in str(err.value)


@pytest.mark.parametrize("header, reason", [
    (ctf("5;6;7\t90;90;90\tX\t10\t0"), "symmetry 'm3'"),
    (ctf(FO, count=3), "fewer follow"),
    (ctf(FO, columns=COLUMNS.replace("\t", " ")), "column line"),
])
def test_ctf_header_orix_cannot_read_gives_input_error(header, reason):
    # orix's readers as reference: it refuses these headers, and so do we, with the reason
    with pytest.raises(InputError, match="the header cannot be read"):
        header_phases(orix_ctf.file_reader, header.splitlines(True), ctf_rows([1]), Path("h.ctf"), ".ctf")
    with pytest.raises(InputError, match="the header cannot be read") as err:
        ctf_phases(header.splitlines(True), [1], Path("h.ctf"))
    assert reason in str(err.value) and "h.ctf" in str(err.value)


# ------------------------------------------------------------------ where ours and header_phases differ

def test_difference_ang_phase_id_whose_first_row_is_not_indexed(tmp_path):
    # orix's readers as reference. header_phases hands orix the first row of each raw phase id;
    # when that row has ci -1 orix drops the id (and gives the header's phases to the others by
    # position). Ours takes the ids orix counts as indexed over the whole file, as orix reading
    # the whole file does.
    header = edax(phase(), phase(2, **EN))
    rows = ang_rows([1, 2, 2], 10)
    rows[1, 6] = -1                               # the first point of phase 2 is not indexed
    path = tmp_path / "h.ang"
    path.write_text(header + "".join(" ".join(map(str, row)) + "\n" for row in rows))
    whole = orix_ang.file_reader(str(path))
    ids = indexed_ids(header.splitlines(True), rows, path)
    assert ids == [1, 2]
    ours = ang_phases(header.splitlines(True), 10, ids, path)
    assert ours[0] == {i: p.name for i, p in whole.phases if i >= 0} == {1: "Mg2SiO4", 2: "MgSiO3"}
    quirk = header_phases(orix_ang.file_reader, header.splitlines(True), rows[[0, 1]], path, ".ang")
    assert quirk[0] == {1: "Mg2SiO4"}


def test_difference_ang_extra_column_named_phase_id():
    # orix's readers as reference: orix takes phase ids from an extra column named phase_id
    # (so its phases depend on that column's values); ours refuses such a header
    header = edax(phase(), bottom=BOTTOM + "# Column names: phi1, Phi, phi2, x, y, iq, ci, phase_id, ds, fit, "
                  "phase id\n")
    assert outcome(lambda: ang_phases(header.splitlines(True), 11, [1], Path("h.ang"))) == UNREADABLE
    reference = header_phases(orix_ang.file_reader, header.splitlines(True), ang_rows([1], 11), Path("h.ang"), ".ang")
    assert reference != UNREADABLE


def test_difference_ctf_space_group_of_an_extended_setting():
    # orix's readers as reference: orix (through diffpy) knows space group numbers beyond 230
    # for other settings (e.g. 7015); ours accepts 0 to 230 only
    header = ctf("4.756;10.207;5.980\t90;90;90\tOlivine\t3\t7015")
    assert outcome(lambda: ctf_phases(header.splitlines(True), [1], Path("h.ctf"))) == UNREADABLE
    assert header_phases(orix_ctf.file_reader, header.splitlines(True), ctf_rows([1]), Path("h.ctf"), ".ctf")


def test_difference_ctf_acom_file(tmp_path):
    # orix's readers as reference: for ACOM (ASTAR) files orix rebuilds the coordinates from
    # XCells, YCells, which fails on the few rows header_phases hands it but not on a whole file;
    # ours reads the phases as orix reading the whole file does
    header = ctf(FO, top="Channel Text File\nAuthor\tFile created from ACOM RES results\nXCells\t3\nYCells\t2\n"
                            "XStep\t1\nYStep\t1\n")
    rows = "".join(f"1\t{x}\t{y}\t8\t0\t10\t20\t30\t0.5\t100\t100\n" for y in range(2) for x in range(3))
    path = tmp_path / "h.ctf"
    path.write_text(header + rows)
    whole = orix_ctf.file_reader(str(path))
    ours = ctf_phases(header.splitlines(True), [1], path)
    assert ours == ({1: "Forsterite"}, {1: "mmm"}) == ({1: whole.phases[1].name}, {1: whole.phases[1].point_group.name})
    assert outcome(lambda: header_phases(orix_ctf.file_reader, header.splitlines(True), ctf_rows([1]), Path("h.ctf"),
                                         ".ctf")) == UNREADABLE
    no_cells = header.replace("XCells\t3\n", "")
    assert outcome(lambda: ctf_phases(no_cells.splitlines(True), [1], Path("h.ctf"))) == UNREADABLE


# ------------------------------------------------------------------ the point of the module

def test_reading_headers_imports_no_orix():
    # the module exists to spare orix's import (dask, matplotlib, numba): it must not pull them in
    code = ("import sys; from fabric2seis.ingest.io.headers import ang_phases, ctf_phases; "
            "print(sorted(m for m in ('orix', 'matplotlib', 'dask', 'diffpy', 'numba') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True,
                         cwd=Path(__file__).resolve().parents[2]).stdout
    assert out.strip() == "[]"
