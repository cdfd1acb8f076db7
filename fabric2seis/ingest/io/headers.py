"""The phases of .ang and .ctf headers, read as orix reads them, without importing orix.

orix (0.15) reads a header's phases in its readers ``orix.io.plugins.ang.file_reader`` and
``orix.io.plugins.ctf.file_reader``, builds a ``PhaseList`` from them and matches it to the phase
ids of the data when it makes the ``CrystalMap``. Importing orix takes seconds (dask, matplotlib,
numba), so this module repeats those rules with the standard library and numpy alone:

* .ang: ids from ``# Phase``, names from ``# MaterialName``, point groups from ``# Symmetry``
  (EDAX TSL codes such as 22 or 43 through orix's aliases), phases renamed after their
  ``# Formula`` when every phase has one (orix's ``autogen_names``), ids counted on from the
  highest where ``# Phase`` lines are missing, and the names of the columns from the vendor's
  footprint in the header (EMsoft, ACOM, orix's ``Column names:``) and the column count;
* .ctf: the phase lines after ``Phases`` (lattice; name; Laue group number; space group), ids 1
  to n, 0 not indexed;
* both: the header's phases matched to the ids of the data as ``CrystalMap`` does it (phases the
  data lacks dropped from the highest id down, then the rest given to the data's ids in order;
  ids the data has and the header lacks get a phase with no name and no point group), and
  headers orix cannot read (an unknown symmetry, a lattice it cannot make a cell of ...)
  refused.

:func:`ang_columns` names the columns of an .ang file as orix does, so that a caller can find
the confidence index orix marks points not indexed by before it gives :func:`ang_phases` the
phase ids.

tests/ingest/test_headers.py checks the results against orix's readers (its ``header_phases``
hands orix the header with one data row per phase) over many header variants. Where they
differ, on purpose: a .ctf space group beyond 230 (orix, through diffpy, knows some numbers of
other settings) and an .ang extra column named ``phase_id`` (orix then takes the phase ids from
it) are refused here; an ACOM .ctf is read as orix reads the whole file, where orix fails on the
few rows ``header_phases`` gives it.
"""

from __future__ import annotations

import io
import math
import re

import numpy as np

from fabric2seis.errors import InputError
from fabric2seis.point_groups import POINT_GROUP_NAMES

#: orix's patterns of the .ang phase lines (orix.io.plugins.ang._get_phases_from_header)
_ANG_PATTERNS = {
    "ids": "# Phase([ \t]+)([0-9 ]+)",
    "names": "# MaterialName([ \t]+)([A-z0-9 ]+)",
    "formulas": "# Formula([ \t]+)([A-z0-9 ]+)",
    "point_groups": "# Symmetry([ \t]+)([A-z0-9 ]+)",
    "lattice_constants": r"# LatticeConstants([ \t+])(.*)",
}

#: point group names by EDAX TSL's codes for them (orix.quaternion.symmetry._EDAX_POINT_GROUP_ALIASES)
_EDAX_ALIASES = {"20": "121", "2": "2/m", "22": "222", "42": "422", "32": "321", "62": "622", "43": "432",
                 "m3m": "m-3m"}

#: the point groups orix knows by name (orix.quaternion.symmetry._groups)
_POINT_GROUPS = frozenset(POINT_GROUP_NAMES)

#: .ctf Laue group numbers as orix names them ("m3" for 10 is no point group orix knows: it refuses it)
_LAUE_GROUPS = {1: "-1", 2: "2/m", 3: "mmm", 4: "4/m", 5: "4/mmm", 6: "-3", 7: "-3m", 8: "6/m", 9: "6/mmm",
                10: "m3", 11: "m-3m"}

_ANG_CORE = ["euler1", "euler2", "euler3", "x", "y"]
#: .ang column names by vendor, one list per column count orix knows (orix.io.plugins.ang._get_vendor_columns)
_ANG_COLUMNS = {
    "tsl": [_ANG_CORE + ["iq", "ci", "phase_id", "detector_signal", "fit", "unknown1", "unknown2", "unknown3",
                         "unknown4"],
            _ANG_CORE + ["iq", "ci", "phase_id", "detector_signal", "fit"]],
    "emsoft": [_ANG_CORE + ["iq", "dp", "phase_id"]],
    "astar": [_ANG_CORE + ["ind", "rel", "phase_id", "relx100"]],
    "orix": [_ANG_CORE + ["iq", "ci", "phase_id", "detector_signal", "fit"]],
    "unknown": [_ANG_CORE + ["unknown1", "unknown2", "phase_id"]],
}
#: text that marks a vendor's .ang header, in orix's order (the last vendor found wins)
_ANG_FOOTPRINTS = {"emsoft": "EMsoft", "astar": "ACOM", "orix": "Column names: phi1, Phi, phi2"}
#: names orix gives the core columns of a CrystalMap (an extra column of these names overrides one)
_CRYSTAL_MAP_KEYS = {"euler1", "euler2", "euler3", "x", "y", "phase_id"}

_CTF_VENDORS = {
    "emsoft": re.compile(r"EMsoft v\. ([A-Za-z0-9]+(_[A-Za-z0-9]+)+); BANDS=pattern index, MAD=CI, BC=OSM, BS=IQ"),
    "astar": re.compile(r"Author[\t\s]File created from ACOM RES results"),
    "mtex": re.compile("(?<=)Created from mtex"),
}

_MAX_HEADER_LINES = 1000      # orix reads no further


class _Unreadable(Exception):
    """A header orix cannot read; the message says why."""


Phases = tuple[dict[int, str], dict[int, str | None]]


def ang_phases(header: list[str], n_columns: int, phase_ids: list[int], source
               ) -> tuple[dict[int, str], dict[int, str | None], list[str]]:
    """Read the phases of an .ang header, and the names of its extra columns, as orix reads them.

    Parameters
    ----------
    header : list of str
        The header lines (those starting with ``#``), with their line ends.
    n_columns : int
        Number of columns of the data rows.
    phase_ids : list of int
        The distinct phase ids of the data that orix counts as indexed: column 8's values, less
        those of points whose confidence index is -1 where the layout has one (``"ci"`` among
        :func:`ang_columns`: EDAX TSL and orix layouts), as orix marks those points not indexed
        before it matches ids to the header. -1 is ignored.
    source : str or Path
        The file, for error messages.

    Returns
    -------
    names : dict of int to str
        Phase name by id (``"phase <id>"`` where the phase has none).
    point_groups : dict of int to str or None
        orix's point group name by id, None where the header gives none.
    columns : list of str
        orix's names of the columns beyond phi1, Phi, phi2, x, y and the phase id, in order
        (``list(xmap.prop)``).

    Raises
    ------
    InputError
        Where orix cannot read the header, with the reason.
    """
    columns = ang_columns(header, n_columns, source)
    try:
        names, groups = _match_data(_ang_header_phases(_ang_lines(header)), phase_ids)
    except _Unreadable as exc:
        raise InputError(f"the header cannot be read ({exc})", source) from None
    return names, groups, list(dict.fromkeys(c for c in columns if c not in _CRYSTAL_MAP_KEYS))


def ang_columns(header: list[str], n_columns: int, source) -> list[str]:
    """Name every column of an .ang file as orix does, from the vendor's footprint and the column count.

    Parameters
    ----------
    header : list of str
        The header lines (those starting with ``#``), with their line ends.
    n_columns : int
        Number of columns of the data rows.
    source : str or Path
        The file, for error messages.

    Returns
    -------
    list of str
        orix's name of each column, ``euler1, euler2, euler3, x, y, ..., phase_id, ...`` (at most
        ``n_columns``; orix ignores the columns of an orix file its ``Column names:`` line does not
        name). Where a name repeats, orix takes the later column.

    Raises
    ------
    InputError
        Where orix cannot read the header, with the reason.
    """
    try:
        columns = _ang_columns(_ang_lines(header), n_columns)
        if "prop" in columns:
            raise _Unreadable("a column is named 'prop'")
        if "phase_id" in columns[columns.index("phase_id") + 1:]:
            raise _Unreadable("two columns are named 'phase_id'")
    except _Unreadable as exc:
        raise InputError(f"the header cannot be read ({exc})", source) from None
    return list(columns)


def ctf_phases(header: list[str], phase_ids: list[int], source) -> Phases:
    """Read the phases of a .ctf header as orix reads them.

    Parameters
    ----------
    header : list of str
        The header lines up to and including the ``Phase X Y ...`` column line, with their
        line ends.
    phase_ids : list of int
        The distinct values of the data's Phase column (0 and -1, not indexed, are ignored).
    source : str or Path
        The file, for error messages.

    Returns
    -------
    names : dict of int to str
        Phase name by id (``"phase <id>"`` where the phase has none).
    point_groups : dict of int to str or None
        orix's point group name by id (from the Laue group number), None for ids the header
        lacks.

    Raises
    ------
    InputError
        Where orix cannot read the header, with the reason.
    """
    try:
        raw = _lines(header)
        stop = next((k for k, line in enumerate(raw) if line.startswith("Phase\tX\tY")), None)
        if stop is None or any(line.split("#")[0].strip() for line in raw[stop + 1:]):
            raise _Unreadable("the last line is not the 'Phase<tab>X<tab>Y ...' column line")
        if stop > _MAX_HEADER_LINES:
            raise _Unreadable(f"more than {_MAX_HEADER_LINES} header lines")
        lines = [line.rstrip() for line in raw[:min(stop, _MAX_HEADER_LINES)]]
        phases = _ctf_header_phases(lines)
        _check_astar(lines)
        return _match_data(phases, [-1 if i == 0 else i for i in phase_ids])
    except _Unreadable as exc:
        raise InputError(f"the header cannot be read ({exc})", source) from None


def _lines(header: list[str]) -> list[str]:
    """The header's lines as orix reads them from a file: universal line ends, ends kept."""
    return list(io.StringIO("".join(header), newline=None))


def _ang_lines(header: list[str]) -> list[str]:
    """The .ang header lines orix reads: the first ones starting with '#', at most 1000, right-stripped."""
    raw = _lines(header)
    stop = next((k for k, line in enumerate(raw) if not line.startswith("#")), len(raw))
    if any(line.split("#")[0].strip() for line in raw[stop:]):      # orix would read them as data
        raise _Unreadable("a header line does not start with '#'")
    return [line.rstrip() for line in raw[:min(stop, _MAX_HEADER_LINES)]]


def _ang_columns(lines: list[str], n_columns: int) -> list[str]:
    """Name every column as orix does, from the vendor's footprint and the column count."""
    vendor, footprint_line = "tsl", ""
    for name, footprint in _ANG_FOOTPRINTS.items():
        for line in lines:
            if footprint in line:
                vendor, footprint_line = name, line
                break
    tables = _ANG_COLUMNS[vendor]
    if vendor == "orix":     # orix's own files name their extra columns
        extra = footprint_line.split(":")[1].split(",")[len(tables[0]):]
        columns = tables[0] + [e.lstrip(" ").replace(" ", "_") for e in extra]
    elif n_columns in [len(t) for t in tables]:
        columns = next(t for t in tables if len(t) == n_columns)
    else:                    # orix warns and names the columns unknown1, unknown2, phase_id, unknown3 ...
        columns = _ANG_COLUMNS["unknown"][0] + [f"unknown{i + 3}" for i in range(n_columns - 8)]
    if len(columns) > n_columns:
        raise _Unreadable(f"the header names {len(columns)} columns, the data has {n_columns}")
    return columns


def _ang_header_phases(lines: list[str]) -> dict[int, tuple[str, str | None]]:
    """The phases of an .ang header by id (name, point group), as orix's PhaseList holds them."""
    found: dict[str, list] = {key: [] for key in _ANG_PATTERNS}
    for line in lines:
        for key, pattern in _ANG_PATTERNS.items():
            if re.search(pattern, line):
                words = [w for w in re.split("[ \t]", line.lstrip("# ").rstrip(" ")) if w]
                if key == "names":
                    found[key].append(" ".join(words[1:]))
                elif key == "lattice_constants":
                    found[key].append(_numbers(words[1:], "# LatticeConstants"))
                else:
                    found[key].append(words[-1])
    names = found["names"]
    try:
        ids = [int(i) for i in found["ids"]]
    except ValueError:
        raise _Unreadable("a '# Phase' line has no whole number") from None
    if not ids:
        ids = list(range(len(names)))
    elif len(names) > len(ids):
        ids += list(range(max(ids) + 1, max(ids) + 1 + len(names) - len(ids)))
    for lattice in found["lattice_constants"][:len(names)]:
        _check_lattice(lattice)
    phases = _phase_list(ids, names, [_point_group(s) for s in found["point_groups"]])
    _autogen_names(phases, found["formulas"], ids)
    return phases


def _phase_list(ids: list[int], names: list[str], groups: list[str | None]
                ) -> dict[int, tuple[str, str | None]]:
    """Pair ids, names and point groups by position as orix's PhaseList does (a later id wins)."""
    phases: dict[int, tuple[str, str | None]] = {}
    for i in range(max(len(ids), len(names), len(groups))):
        if i < len(ids):
            pid = ids[i]
        elif ids:                # more symmetries than phases: ids counted on from the highest
            pid = max(ids) + 1 + i - len(ids)
        else:
            raise _Unreadable("'# Symmetry' lines but no phase")
        phases[pid] = (names[i] if i < len(names) else "", groups[i] if i < len(groups) else None)
    return dict(sorted(phases.items()))


def _autogen_names(phases: dict[int, tuple[str, str | None]], formulas: list[str], ids: list[int]) -> None:
    """Rename the phases after their formulas as orix does when every phase has one (in place)."""
    if len(formulas) != len(phases):
        return
    if not phases:
        raise _Unreadable("no phase (no '# MaterialName' line)")
    if len(ids) != len(phases):                  # orix fails indexing its formulas
        raise _Unreadable("the '# Phase' lines do not match the phases' formulas")
    names = [formulas[k] for k in sorted(range(len(ids)), key=ids.__getitem__)]   # in the order of the ids
    if len(set(names)) < len(names):         # the same formula twice: add the point group
        if any(group is None for _, group in phases.values()):
            raise _Unreadable("phases with the same formula and one without a symmetry")
        names = [f"{n}-{group}" for n, (_, group) in zip(names, phases.values())]
    if len(set(names)) < len(names):         # still the same: add a letter
        names = [f"{n}-{chr(65 + i)}" for i, n in enumerate(names)]
    for pid, name in zip(list(phases), names):
        phases[pid] = (name, phases[pid][1])


def _ctf_header_phases(lines: list[str]) -> dict[int, tuple[str, str | None]]:
    """The phases of a .ctf header by id 1, 2 ... (name, point group), as orix reads them."""
    if not lines:
        raise _Unreadable("no 'Phases' line")
    start = next((k for k, line in enumerate(lines) if line.startswith("Phases")), len(lines) - 1)
    try:
        count = int(lines[start].split("\t")[1])
    except (IndexError, ValueError):
        raise _Unreadable("no phase count after 'Phases'") from None
    phases: dict[int, tuple[str, str | None]] = {}
    for i in range(count):
        if start + 1 + i >= len(lines):
            raise _Unreadable(f"'Phases' announces {count} phases, fewer follow")
        fields = lines[start + 1 + i].split("\t")
        where = f"phase line {i + 1}"
        lattice = _numbers([v.replace(",", ".") for v in ";".join(fields[:2]).split(";")], where)
        if len(fields) < 5:
            raise _Unreadable(f"{where} has {len(fields)} of the 5 fields lattice, angles, name, Laue group, "
                              "space group")
        try:
            laue, space_group = int(fields[3]), int(fields[4])
        except ValueError:
            raise _Unreadable(f"{where}: Laue group and space group must be whole numbers") from None
        if laue not in _LAUE_GROUPS:
            raise _Unreadable(f"{where}: Laue group {laue} is not one of 1 to 11")
        if not 0 <= space_group <= 230:
            raise _Unreadable(f"{where}: space group {space_group} is not one of 0 to 230")
        _check_lattice(lattice)
        phases[i + 1] = (fields[2], _point_group(_LAUE_GROUPS[laue]))
    return phases


def _check_astar(lines: list[str]) -> None:
    """ACOM (ASTAR) files: orix rebuilds the coordinates from XCells, YCells, which must be read."""
    vendors = [v for line in lines for v, pattern in _CTF_VENDORS.items() if pattern.search(line)]
    if vendors != ["astar"]:
        return
    cells = {}
    for line in lines:
        match = re.search(r"(?<=[XY]Cells[\t\s])(.*)", line)
        if match:
            try:
                number = int(match.group(0))
            except ValueError:
                raise _Unreadable("XCells or YCells is not a whole number") from None
            if line.startswith(("XCells", "YCells")):
                cells[line[0]] = number
    if len(cells) < 2:
        raise _Unreadable("an ACOM file without XCells and YCells")


def _match_data(phases: dict[int, tuple[str, str | None]], phase_ids: list[int]) -> Phases:
    """Give the header's phases to the data's ids as orix's CrystalMap does (-1: not indexed).

    Where the header has more phases than the data, those the data lacks are dropped from the
    highest id down until the counts agree; where it has fewer, ids the data has and the header
    lacks get a phase with no name and no point group. The phases left are then given to the
    data's ids in increasing order (so a header's ids 1, 2 become the data's 0, 1).
    """
    data = sorted({int(i) for i in phase_ids})
    if data and data[0] == -1:
        data = data[1:]
    phases = dict(phases)
    surplus = len(phases) - len(data)
    if surplus > 0:
        for pid in sorted(phases, reverse=True):
            if pid not in data:
                del phases[pid]
                surplus -= 1
            if surplus == 0:
                break
    elif surplus < 0:
        phases = {pid: phases.get(pid, ("", None)) for pid in data}
    kept = dict(zip(data, phases.values()))
    names = {pid: name or f"phase {pid}" for pid, (name, _) in kept.items() if pid >= 0}
    return names, {pid: group for pid, (_, group) in kept.items() if pid >= 0}


def _point_group(symbol: str) -> str:
    """orix's point group of a symmetry symbol or EDAX TSL code ('22' is 222, '43' is 432 ...)."""
    name = _EDAX_ALIASES.get(symbol, symbol)
    if name not in _POINT_GROUPS:
        raise _Unreadable(f"symmetry {symbol!r} is no point group orix knows")
    return name


def _numbers(words: list[str], where: str) -> list[float]:
    try:
        return [float(w) for w in words]
    except ValueError:
        raise _Unreadable(f"{where}: lattice constants must be numbers") from None


def _cosd(angle: float) -> float:
    """Cosine of degrees, exact at the angles orix's lattice code (diffpy) treats exactly."""
    exact = {0.0: 1.0, 60.0: 0.5, 90.0: 0.0, 120.0: -0.5, 180.0: -1.0, 240.0: -0.5, 270.0: 0.0, 300.0: 0.5}
    value = exact.get(angle % 360.0)
    return value if value is not None else math.cos(math.radians(angle))


def _check_lattice(values: list[float]) -> None:
    """Refuse lattice constants orix cannot make a unit cell of, as its lattice code (diffpy) does.

    Six values a, b, c, alpha, beta, gamma (none: the unit cube; a seventh scales the cell); the
    cell must have a volume (not degenerate, not below 1e-8) and be right-handed once orix turns
    it to put a along x and c* along z. NaN passes, as in orix.
    """
    if not values:
        return
    if len(values) not in (6, 7):
        raise _Unreadable(f"{len(values)} lattice constants, not 6")
    bad = _Unreadable(f"no unit cell has the lattice constants {' '.join(map(str, values))}")
    a, b, c, alpha, beta, gamma = values[:6]
    try:                     # the steps of diffpy's Lattice.setLatPar that can fail, in plain floats as there
        ca, cb, cg = _cosd(alpha), _cosd(beta), _cosd(gamma)
        sa, sb, sg = _cosd(90.0 - alpha), _cosd(90.0 - beta), _cosd(90.0 - gamma)
        volume = math.sqrt(1.0 + 2.0 * ca * cb * cg - ca * ca - cb * cb - cg * cg)
        ar, _, _ = (sa / (a * volume), sb / (b * volume), sg / (c * volume))      # reciprocal lengths
        cosines = ((cb * cg - ca) / (sb * sg), (ca * cg - cb) / (sa * sg), (ca * cb - cg) / (sa * sb))
        sines = [math.sqrt(1.0 - v * v) for v in cosines]                      # of the reciprocal angles
        _ = [math.acos(v) for v in cosines]                                   # diffpy keeps the angles too
        cgr, sgr = cosines[2], sines[2]
        base = np.array([[1.0 / ar, -cgr / sgr / ar, cb * a], [0.0, b * sa, b * ca], [0.0, 0.0, c]])
        with np.errstate(all="ignore"):
            # diffpy's base rotation (a seventh value is taken as one), with np.dot as there for inf and nan
            base = np.dot(base, np.array(values[6]) if len(values) == 7 else np.identity(3))
            np.linalg.inv(base)
    except (ValueError, ZeroDivisionError, np.linalg.LinAlgError):
        raise bad from None
    with np.errstate(all="ignore"):
        # orix puts a along x and c* along z (orix.crystal_map._phase.new_structure_matrix_from_alignment)
        axes = [_unit(base[0]), np.zeros(3), _unit(np.cross(_unit(base[0]), _unit(base[1])))]
        for i, (j, k) in enumerate([(1, 2), (2, 0), (0, 1)]):
            if np.isclose(np.sqrt(np.sum(np.square(axes[i]))), 0):
                axes[i] = np.cross(axes[j], axes[k])
        turned = np.sum(np.array(axes)[None, :, :] * base[:, None, :], axis=-1).round(12)   # orix's Vector3d.dot
        det = np.linalg.det(turned)
    if abs(det) < 1e-8 or det < 0.0:     # diffpy's Lattice refuses a degenerate or left-handed base
        raise bad


def _unit(v: np.ndarray) -> np.ndarray:
    """orix's unit vector: zero for a zero (or overflowing) vector, NaN made 0."""
    with np.errstate(all="ignore"):
        return np.nan_to_num(v / np.sqrt(np.sum(np.square(v))))
