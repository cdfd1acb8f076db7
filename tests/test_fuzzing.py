"""Fuzzing every reader of user input with hypothesis: a result, or one clear line naming the file.

Each reader a user's file goes through -- EBSD exports (``read_ebsd``: .ang, .ctf, CSV tables,
HDF5, and .gz copies of the text formats), settings sidecars (``settings.settings_for``), field
measurements (``waves.field.read_measurements``), stack files (``waves.stack.read_stack``) and the
results folders they point to (``waves.field.read_result``) -- is fed random bytes, and
valid-looking files made by the project's own writers with odd layouts (CRLF line ends, blank
lines, tabs for spaces, trailing blanks, rows in another order) and at most one fault drawn from
edge values: NaN, inf, huge, tiny and negative numbers, angles out of range, words, a missing or
an extra value, a missing or extra column, a truncated last row, a duplicated row, a broken
header line.

The only outcomes allowed (CONTRACT.md: bad input gives one line naming the file and, where it
applies, the line, column or key):

* a result that keeps the reader's own promises (finite unit quaternions, phase ids the record
  names, finite coordinates with a grid and a positive step, finite non-negative weights;
  settings that validate again, with finite numbers and a usable frame; ...), and,
  for a layout change alone, the same numbers as the file before the change;
* ``InputError`` whose one-line message names the file, and, for a fault in one row of a table,
  that row's line (and for settings and stack files, the key).

Any other exception fails the test. Runs are deterministic (``derandomize=True``, no example
database), so CI and local runs draw the same examples. ``FUZZ_TARGETS`` lists the targets and
``FUZZ_EXAMPLES`` the examples each draws.
"""

from __future__ import annotations

import functools
import gzip
import json
import math
import re
import tempfile
from pathlib import Path

import h5py
import numpy as np
import yaml
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from fabric2seis import settings as settings_mod
from fabric2seis.errors import InputError
from fabric2seis.ingest.frames import structural_matrix
from fabric2seis.ingest.io import read_ebsd
from fabric2seis.ingest.io.record import EBSDData
from fabric2seis.ingest.io.write import write_ang, write_ctf, write_table
from fabric2seis.synth import voronoi_map
from fabric2seis.waves.field import read_measurements, read_result
from fabric2seis.waves.stack import read_stack

#: the fuzz targets of this module and the examples each test draws (counted by the README's
#: testing section)
FUZZ_EXAMPLES = {
    "EBSD export, random bytes (.ang, .ctf, .csv, .h5, .hdf5, .gz)": 300,
    ".ang rows and header": 400,
    ".ctf rows and header": 400,
    "CSV table rows (maps and grain lists)": 400,
    "HDF5 datasets": 150,
    "settings sidecar": 300,
    "field measurements, random bytes": 150,
    "field measurements rows": 400,
    "stack file": 300,
    "results folder read by field and stack": 300,
}
FUZZ_TARGETS = list(FUZZ_EXAMPLES)
EXAMPLES = list(FUZZ_EXAMPLES.values())


def fuzz(max_examples: int):
    """hypothesis settings of every test here: deterministic, no example database, no deadline."""
    return settings(max_examples=max_examples, derandomize=True, database=None, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


# --- the outcomes -------------------------------------------------------------------------------------


def outcome(call, path, line: int | None = None, key: str | None = None):
    """Run a reader; return its result, or the InputError after checking its message.

    The message must be one line naming ``path``; ``line`` (1-based) must be named as
    ``line <n>`` when given, and ``key`` as ``key <key>...`` when given.
    """
    try:
        result = call()
    except InputError as exc:
        event("refused")
        text = str(exc)
        assert "\n" not in text and "Traceback" not in text, text
        assert str(path) in text, f"the message does not name {path}: {text}"
        if line is not None:
            assert re.search(rf"\bline {line}\b", text), f"the message does not name line {line}: {text}"
        if key is not None:
            assert exc.where is not None and exc.where.startswith(f"key {key}"), f"not naming key {key}: {text}"
        return exc
    event("read")
    return result


def assert_valid_record(d: EBSDData, path: Path) -> None:
    """The promises of an EBSDData record (ingest/io/record.py) that every later stage relies on."""
    n = d.n_points
    assert n >= 1 and d.source == str(path)
    assert d.quat.shape == (n, 4) and np.all(np.isfinite(d.quat))
    assert np.allclose(np.linalg.norm(d.quat, axis=1), 1.0, atol=1e-6)
    assert d.phase_id.shape == (n,) and d.phase_id.dtype.kind == "i"
    assert set(np.unique(d.phase_id).tolist()) <= set(d.phase_names) | {-1}, (np.unique(d.phase_id), d.phase_names)
    assert set(d.phase_point_groups) == set(d.phase_names)
    if d.is_map:
        assert n >= 2 and d.x is not None and d.y is not None
        assert d.x.shape == d.y.shape == (n,) and np.all(np.isfinite(d.x)) and np.all(np.isfinite(d.y))
        assert d.grid in ("square", "hex") and d.step is not None and math.isfinite(d.step) and d.step > 0
    else:
        assert d.y is None and d.grid is None and d.step is None
    if d.weights is not None:
        assert d.weights.shape == (n,) and np.all(np.isfinite(d.weights)) and np.all(d.weights >= 0)
    for values in d.quality.values():
        assert values.shape == (n,)


def reordered(d: EBSDData, order) -> EBSDData:
    """The record with its points in another order."""
    import dataclasses

    def pick(v):
        return None if v is None else v[list(order)]
    return dataclasses.replace(d, quat=d.quat[list(order)], phase_id=d.phase_id[list(order)], x=pick(d.x),
                               y=pick(d.y), weights=pick(d.weights),
                               quality={k: v[list(order)] for k, v in d.quality.items()})


def same_record(a: EBSDData, b: EBSDData) -> bool:
    """Equal numbers (the layout of a file must not change what is read)."""
    def eq(u, v):
        return (u is None and v is None) or (u is not None and v is not None and np.array_equal(u, v, equal_nan=True))
    return (np.allclose(a.quat, b.quat, rtol=0, atol=1e-12) and eq(a.phase_id, b.phase_id) and eq(a.x, b.x)
            and eq(a.y, b.y) and a.grid == b.grid and a.step == b.step and eq(a.weights, b.weights)
            and a.phase_names == b.phase_names and set(a.quality) == set(b.quality)
            and all(eq(a.quality[k], b.quality[k]) for k in a.quality))


# --- tokens and values ----------------------------------------------------------------------------------

#: edge values a cell of a numeric column is replaced by
EDGE_TOKENS = ["nan", "NaN", "inf", "-inf", "Infinity", "1e308", "-1e308", "1e400", "1e-320", "-1", "-400", "0",
               "720", "7", "3.5", "1e6", "abc", "", "1,5", "--1", "0x1A", "\u0661\u0662", "\u00bd", "None", "1e", ".",
               "+", "1.5.2", "\u221e"]


def c_number(token: str) -> float | None:
    """The value of a token as a C-locale number parser reads it (ASCII only), else None."""
    if not re.fullmatch(r"\s*[+-]?(\d+\.?\d*([eE][+-]?\d+)?|\.\d+([eE][+-]?\d+)?|nan|inf|infinity)\s*", token,
                        flags=re.IGNORECASE):
        return None
    return float(token)


def unusable(token: str) -> bool:
    """True for a token that is not a finite number."""
    value = c_number(token)
    return value is None or not math.isfinite(value)


def angle_out_of_range(value: float, column: int, units: str) -> bool:
    """Bunge's angles: phi1, phi2 within a full turn (negative down to -360 accepted), Phi in 0-180
    degrees (Bunge 1982, Texture Analysis in Materials Science; common practice)."""
    full, half = (2 * math.pi, math.pi) if units == "radians" else (360.0, 180.0)
    slack = 0.1 * (1.0 if units == "degrees" else math.pi / 180)
    if column == 1:
        return value < -slack or value > half + slack
    return abs(value) > full + slack


# --- valid-looking text files ---------------------------------------------------------------------------

class Table:
    """A text file as header lines and rows of fields, rendered with a separator and a layout."""

    def __init__(self, header: list[str], rows: list[list[str]], sep: str):
        self.header, self.rows, self.sep = header, rows, sep
        self.blank_before: set[int] = set()
        self.trailing = ""
        self.newline = "\n"

    def line_of(self, row: int) -> int:
        """1-based line number of data row ``row`` once rendered."""
        return len(self.header) + row + 1 + sum(1 for b in self.blank_before if b <= row)

    def render(self) -> bytes:
        lines = list(self.header)
        for k, row in enumerate(self.rows):
            if k in self.blank_before:
                lines.append("")
            lines.append(self.sep.join(row) + self.trailing)
        return (self.newline.join(lines) + self.newline).encode("utf-8")


@functools.lru_cache(maxsize=64)
def _written(fmt: str, nx: int, ny: int, step: float, two_phases: bool, seed: int, grain_list: bool) -> str:
    """A small map (or grain list) written by the project's writers, as text."""
    m = voronoi_map(3, nx, ny, step=step, n_phases=2 if two_phases else 1, seed=seed)
    with tempfile.TemporaryDirectory(prefix="fabric2seis-fuzz-") as tmp:
        f = Path(tmp) / f"base{fmt}"
        if fmt == ".ang":
            write_ang(f, m.x, m.y, m.quat, m.phase, ["olivine", "enstatite"][: 1 + two_phases],
                      ["mmm", "mmm"][: 1 + two_phases])
        elif fmt == ".ctf":
            write_ctf(f, m.x, m.y, m.quat, m.phase, ["Forsterite", "Enstatite"][: 1 + two_phases],
                      [(4.76, 10.21, 5.99, 90, 90, 90), (18.23, 8.82, 5.18, 90, 90, 90)][: 1 + two_phases],
                      [3, 3][: 1 + two_phases], step)
        else:
            names = np.where(m.phase == 1, "olivine", "enstatite")
            if grain_list:
                write_table(f, m.quat, names, weight=np.linspace(1.0, 3.0, len(names)),
                            quality=np.full(len(names), 0.9))
            else:
                write_table(f, m.quat, names, x=m.x, y=m.y)
        return f.read_text()


def base_table(fmt: str, nx: int, ny: int, step: float, two_phases: bool, seed: int, grain_list: bool) -> Table:
    text = _written(fmt, nx, ny, step, two_phases, seed, grain_list)
    lines = text.splitlines()
    if fmt == ".ang":
        first = next(k for k, line in enumerate(lines) if not line.startswith("#"))
        return Table(lines[:first], [line.split() for line in lines[first:]], " ")
    if fmt == ".ctf":
        first = next(k for k, line in enumerate(lines) if line.startswith("Phase\tX\tY")) + 1
        return Table(lines[:first], [line.split("\t") for line in lines[first:]], "\t")
    return Table(lines[:1], [line.split(",") for line in lines[1:]], ",")


ANGLE_COLUMNS = {".ang": (0, 1, 2), ".ctf": (5, 6, 7), ".csv": (1, 2, 3)}
ANGLE_UNITS = {".ang": "radians", ".ctf": "degrees", ".csv": "degrees"}


def checked_columns(fmt: str, header: list[str]) -> set[int]:
    """Columns whose values the record promises to be finite: angles, coordinates, phase, weight.

    .ang: phi1 Phi phi2 x y iq ci phase ... (column 8 the phase id); .ctf: Phase X Y Bands Error
    Euler1-3 MAD BC BS (common practice, the vendors' layouts as orix reads them); CSV: by name.
    """
    if fmt == ".ang":
        return {0, 1, 2, 3, 4, 7}
    if fmt == ".ctf":
        return {0, 1, 2, 5, 6, 7}
    names = header[0].split(",")
    return {k for k, name in enumerate(names) if name in ("phi1", "Phi", "phi2", "x", "y", "weight")}


@st.composite
def text_exports(draw, fmt: str):
    """A valid-looking export of ``fmt``: layout changes and at most one fault.

    Returns (bytes, name, fault line or None, must_refuse, layout_only, original bytes).
    ``fault line`` is the line an error must name; ``must_refuse`` says the fault makes the file
    unusable (a value that is not a finite number, an angle out of range).
    """
    grain_list = fmt == ".csv" and draw(st.booleans())
    table = base_table(fmt, draw(st.integers(2, 5)), draw(st.integers(2 if fmt == ".ang" else 1, 4)),  # orix: 2 rows
                       draw(st.sampled_from([0.5, 1.0, 2.5, 1e-3, 1e3])), draw(st.booleans()),
                       draw(st.integers(0, 3)), grain_list)
    original = table.render()
    n = len(table.rows)
    # layout: nothing a reader should mind
    order = list(range(n))
    if draw(st.booleans()):
        order = draw(st.permutations(range(n)))
        table.rows = [table.rows[k] for k in order]
    table.blank_before = set(draw(st.lists(st.integers(1, n - 1), max_size=2))) if n > 1 else set()
    table.newline = draw(st.sampled_from(["\n", "\n", "\r\n"]))
    table.trailing = draw(st.sampled_from(["", "", " ", "\t"])) if fmt != ".csv" else ""
    if fmt == ".ang" and draw(st.booleans()):
        table.sep = draw(st.sampled_from(["\t", "   "]))
    fault = draw(st.sampled_from(["none", "none", "cell", "cell", "cell", "drop value", "extra value",
                                  "truncate last row", "duplicate row", "drop column", "extra column",
                                  "header line", "header value", "no rows"]))
    line, must_refuse = None, False
    columns = len(table.rows[0])
    if fault == "cell":
        row, column = draw(st.integers(0, n - 1)), draw(st.integers(0, columns - 1))
        token = draw(st.sampled_from(EDGE_TOKENS))
        table.rows[row] = [*table.rows[row][:column], token, *table.rows[row][column + 1:]]
        numeric = not (fmt == ".csv" and column == 0)              # the CSV phase column holds names
        checked = column in checked_columns(fmt, table.header)
        value = c_number(token)
        if numeric and value is None:
            line, must_refuse = table.line_of(row), True
        elif numeric and not math.isfinite(value):
            line, must_refuse = table.line_of(row), checked       # elsewhere: refused at its line, or read
        elif checked and column in ANGLE_COLUMNS[fmt] and angle_out_of_range(
                value, ANGLE_COLUMNS[fmt].index(column), ANGLE_UNITS[fmt]):
            line, must_refuse = table.line_of(row), True
    elif fault == "drop value":
        row = draw(st.integers(0, n - 1))
        table.rows[row] = table.rows[row][:-1]
        line, must_refuse = table.line_of(row), True
    elif fault == "extra value":
        row = draw(st.integers(0, n - 1))
        table.rows[row] = [*table.rows[row], draw(st.sampled_from(["1", "0.5", "x"]))]
        line, must_refuse = table.line_of(row), True
    elif fault == "truncate last row":
        text = table.sep.join(table.rows[-1])
        table.rows[-1] = text[: draw(st.integers(0, max(0, len(text) - 1)))].split(table.sep)
    elif fault == "duplicate row":
        row = draw(st.integers(0, n - 1))
        table.rows.insert(row + 1, list(table.rows[row]))
        table.blank_before = {b + (b > row) for b in table.blank_before}
    elif fault == "drop column":
        column = draw(st.integers(0, columns - 1))
        table.rows = [r[:column] + r[column + 1:] for r in table.rows]
        if fmt == ".csv":
            table.header = [",".join(h for k, h in enumerate(table.header[0].split(",")) if k != column)]
    elif fault == "extra column":
        token = draw(st.sampled_from(["1", "nan", "x"]))
        table.rows = [[*r, token] for r in table.rows]
        if fmt == ".csv":
            table.header = [table.header[0] + ",extra"]
    elif fault == "header line" and len(table.header) > 1:
        del table.header[draw(st.integers(0, len(table.header) - 1))]
    elif fault == "header value":
        k = draw(st.integers(0, len(table.header) - 1))
        token = draw(st.sampled_from(EDGE_TOKENS))
        table.header[k] = re.sub(r"-?\d+(\.\d+)?", lambda _: token, table.header[k], count=1)
    elif fault == "no rows":
        table.rows, table.blank_before = [], set()
    data = table.render()
    event(f"fault: {fault}")
    layout_only = fault == "none"
    compressed = draw(st.booleans()) and draw(st.booleans())
    name = f"export{fmt}" + (".gz" if compressed else "")
    if compressed:
        data, original = gzip.compress(data, mtime=0), gzip.compress(original, mtime=0)
    return data, name, line, must_refuse, layout_only, original, order


def check_text_export(example) -> None:
    data, name, line, must_refuse, layout_only, original, order = example
    with tempfile.TemporaryDirectory(prefix="fabric2seis-fuzz-") as tmp:
        f = Path(tmp) / name
        f.write_bytes(data)
        result = outcome(lambda: read_ebsd(f), f, line)
        if isinstance(result, InputError):
            assert not layout_only, f"a layout change alone was refused: {result}"
            return
        assert not must_refuse, "a file with a value that is not a finite number or an angle out of range was read"
        assert_valid_record(result, f)
        if layout_only:
            g = Path(tmp) / ("original" + name[len("export"):])
            g.write_bytes(original)
            assert same_record(result, reordered(read_ebsd(g), order)), \
                "a layout change (line ends, blank lines, order of rows) changed the data"


# --- EBSD exports -----------------------------------------------------------------------------------------


@fuzz(EXAMPLES[0])
@given(data=st.one_of(st.binary(max_size=3000), st.text(max_size=1500).map(lambda t: t.encode("utf-8"))),
       suffix=st.sampled_from([".ang", ".ctf", ".csv", ".h5", ".hdf5", ".ang.gz", ".ctf.gz", ".csv.gz"]),
       wrap=st.booleans())
def test_random_bytes_are_read_or_refused_naming_the_file(data, suffix, wrap):
    if suffix.endswith(".gz") and wrap:
        data = gzip.compress(data, mtime=0)            # past the decompression, into the reader
    with tempfile.TemporaryDirectory(prefix="fabric2seis-fuzz-") as tmp:
        f = Path(tmp) / f"random{suffix}"
        f.write_bytes(data)
        result = outcome(lambda: read_ebsd(f), f)
        if not isinstance(result, InputError):
            assert_valid_record(result, f)


@fuzz(EXAMPLES[1])
@given(text_exports(".ang"))
def test_ang_rows_and_header(example):
    check_text_export(example)


@fuzz(EXAMPLES[2])
@given(text_exports(".ctf"))
def test_ctf_rows_and_header(example):
    check_text_export(example)


@fuzz(EXAMPLES[3])
@given(text_exports(".csv"))
def test_csv_table_rows(example):
    check_text_export(example)


@functools.lru_cache(maxsize=8)
def _orix_hdf5(seed: int) -> bytes:
    from orix import io as orix_io
    from orix.crystal_map import CrystalMap, PhaseList
    from orix.quaternion import Rotation

    m = voronoi_map(3, 4, 3, step=0.5, n_phases=2, seed=seed)
    xmap = CrystalMap(rotations=Rotation(m.quat), phase_id=m.phase, x=m.x, y=m.y,
                      phase_list=PhaseList(names=["olivine", "enstatite"], point_groups=["mmm", "mmm"], ids=[1, 2]),
                      prop={"ci": np.ones(len(m.x))})
    with tempfile.TemporaryDirectory(prefix="fabric2seis-fuzz-") as tmp:
        f = Path(tmp) / "m.h5"
        orix_io.save(str(f), xmap)
        return f.read_bytes()


HDF5_FLOATS = [math.nan, math.inf, -math.inf, 1e308, -1e308, 1e-320, -1.0, 0.0, 400.0, 7.0]
HDF5_DATASETS = ["phi1", "Phi", "phi2", "x", "y", "phase_id", "ci", "id", "is_in_data"]


@fuzz(EXAMPLES[4])
@given(seed=st.integers(0, 2), dataset=st.sampled_from(HDF5_DATASETS),
       change=st.sampled_from(["value", "value", "drop", "shorten", "header"]),
       index=st.integers(0, 11), value=st.sampled_from(HDF5_FLOATS),
       flips=st.lists(st.tuples(st.integers(0, 20000), st.integers(0, 255)), max_size=3))
def test_hdf5_datasets(seed, dataset, change, index, value, flips):
    with tempfile.TemporaryDirectory(prefix="fabric2seis-fuzz-") as tmp:
        f = Path(tmp) / "map.h5"
        f.write_bytes(_orix_hdf5(seed))
        with h5py.File(f, "r+") as h5:
            group = h5["crystal_map/data"]
            if change == "value":
                d = group[dataset]
                array = d[()]
                array[index] = value if array.dtype.kind == "f" else int(np.clip(value, -2**62, 2**62)) \
                    if math.isfinite(value) else -5
                d[...] = array
            elif change == "drop":
                del group[dataset]
            elif change == "shorten":
                array = group[dataset][()]
                del group[dataset]
                group.create_dataset(dataset, data=array[: index % len(array)])
            else:
                header = h5["crystal_map/header"]
                key = ["nx", "ny", "x_step", "y_step"][index % 4]
                array = header[key][()]
                array[0] = -3 if array.dtype.kind == "i" else value
                header[key][...] = array
        raw = bytearray(f.read_bytes())
        for position, byte in flips:                     # random damage to the file itself
            raw[position % len(raw)] = byte
        f.write_bytes(bytes(raw))
        result = outcome(lambda: read_ebsd(f), f)
        if not isinstance(result, InputError):
            assert_valid_record(result, f)


# --- settings --------------------------------------------------------------------------------------------

SCALARS = st.one_of(st.none(), st.booleans(), st.integers(-10**30, 10**30), st.sampled_from([10**400, -10**400]),
                    st.floats(allow_nan=True, allow_infinity=True), st.text(max_size=12),
                    st.sampled_from(["+x", "-z", "hill", "grain", "radians", "average", "15", "1e3", ".nan"]))
ANY_VALUE = st.recursive(SCALARS, lambda inner: st.one_of(st.lists(inner, max_size=4),
                                                          st.dictionaries(st.text(max_size=8), inner, max_size=3)),
                         max_leaves=12)


def well_formed(node: dict, depth: int = 0):
    """Values the schema node describes (the schema may still refuse a few: sums, equal axes)."""
    if "enum" in node:
        return st.sampled_from(node["enum"])
    if "anyOf" in node:
        return st.one_of(*[well_formed(option, depth + 1) for option in node["anyOf"]])
    kind = node.get("type")
    kinds = set(kind) if isinstance(kind, list) else {kind}
    choices = []
    if "null" in kinds:
        choices.append(st.none())
    if "boolean" in kinds:
        choices.append(st.booleans())
    if "string" in kinds:
        choices.append(st.text(max_size=12))
    if "integer" in kinds:
        choices.append(st.integers(int(node.get("minimum", 0)), int(node.get("maximum", 1000))))
    elif "number" in kinds:
        low = node.get("minimum", node.get("exclusiveMinimum", -1e3))
        choices.append(st.floats(min_value=float(low), max_value=float(node.get("maximum", 1e3)),
                                 exclude_min="exclusiveMinimum" in node))
    if "array" in kinds:
        choices.append(st.lists(well_formed(node.get("items", {}), depth + 1), min_size=node.get("minItems", 0),
                                max_size=node.get("maxItems", 3)))
    if "object" in kinds and depth < 4:
        props = node.get("properties") or {}
        extra = node.get("additionalProperties")
        choices.append(st.fixed_dictionaries({}, optional={k: well_formed(v, depth + 1) for k, v in props.items()})
                       if props else st.dictionaries(st.text(min_size=1, max_size=10),
                                                     well_formed(extra if isinstance(extra, dict) else {}, depth + 1),
                                                     max_size=2))
    return st.one_of(*choices) if choices else SCALARS


#: what a spoilt settings value is replaced by
SPOILT = st.one_of(st.sampled_from([math.nan, math.inf, -math.inf, 10**400, -10**400, -1, 0, 1e308]),
                   st.sampled_from(["", "\u00e9\u00e9", None, True, [], {}, [[1, 2], [3]], "1e3", ".nan"]), ANY_VALUE)


def paths_in(value, prefix=()):
    """Every key path into nested mappings and lists."""
    if isinstance(value, dict):
        for k, v in value.items():
            yield (*prefix, k)
            yield from paths_in(v, (*prefix, k))
    elif isinstance(value, list):
        for k, v in enumerate(value):
            yield (*prefix, k)
            yield from paths_in(v, (*prefix, k))


@st.composite
def sidecars(draw):
    """A well-formed settings mapping with at most one value spoilt (NaN, inf, huge, wrong type,
    anything), or an unknown, unicode or non-string key, or a deeply nested value."""
    props = settings_mod.schema()["properties"]
    doc = draw(st.fixed_dictionaries({}, optional={k: well_formed(v) for k, v in props.items()}))
    spoil = draw(st.sampled_from(["value", "value", "value", "none", "key", "nesting"]))
    paths = list(paths_in(doc))
    if spoil == "value" and paths:
        path = draw(st.sampled_from(paths))
        node = doc
        for k in path[:-1]:
            node = node[k]
        node[path[-1]] = draw(SPOILT)
    elif spoil == "key":
        doc[draw(st.one_of(st.text(min_size=1, max_size=10), st.integers(), st.booleans(), st.none()))] = \
            draw(ANY_VALUE)
    elif spoil == "nesting":
        nested: object = draw(SCALARS)
        for _ in range(draw(st.integers(20, 120))):
            nested = {"grains": nested} if draw(st.booleans()) else [nested]
        doc[draw(st.sampled_from(sorted(props)))] = nested
    event(f"spoilt: {spoil}")
    return doc


def finite_float(x) -> bool:
    """Whether a number is finite as a float (an integer beyond the float range is not)."""
    try:
        return math.isfinite(x)
    except OverflowError:
        return False


def numbers_in(value):
    if isinstance(value, dict):
        for v in value.values():
            yield from numbers_in(v)
    elif isinstance(value, list):
        for v in value:
            yield from numbers_in(v)
    elif isinstance(value, (int, float)) and not isinstance(value, bool):
        yield value


@fuzz(EXAMPLES[5])
@given(doc=sidecars(), encoding=st.sampled_from(["utf-8", "utf-8", "utf-8", "utf-8-sig", "utf-16"]))
def test_settings_sidecar(doc, encoding):
    with tempfile.TemporaryDirectory(prefix="fabric2seis-fuzz-") as tmp:
        sample = Path(tmp) / "sample.ang"
        sidecar = Path(tmp) / "sample.yaml"
        sidecar.write_bytes(yaml.safe_dump(doc, allow_unicode=True).encode(encoding))
        result = outcome(lambda: settings_mod.settings_for(sample), sidecar)
        if isinstance(result, InputError):
            assert result.where is not None and (result.where.startswith("key ") or result.where.startswith("line")), \
                f"a refused sidecar names no key: {result}"
            return
        chosen, source = result
        assert source == str(sidecar)
        assert all(finite_float(x) for x in numbers_in(chosen)), "settings with a NaN, infinite or huge number passed"
        assert settings_mod.validate(chosen, sidecar) is chosen
        frame = outcome(lambda: structural_matrix(chosen["frame"], sidecar), sidecar, key="frame")
        if not isinstance(frame, InputError):
            assert np.allclose(frame @ frame.T, np.eye(3), atol=1e-9) and np.linalg.det(frame) > 0


# --- field measurements --------------------------------------------------------------------------------

MEASUREMENT_COLUMNS = ["station", "baz_deg", "fast_azimuth_deg", "delay_s", "fast_azimuth_err_deg", "delay_err_s",
                       "null", "incidence_deg"]
#: the valid range of each numeric column (CONTRACT.md, CONVENTIONS.md: azimuths 0-360 degrees from
#: north, delays in seconds, not negative; errors positive; incidence below 60 degrees for SKS-like rays)
MEASUREMENT_RANGES = {"baz_deg": (0.0, 360.0), "fast_azimuth_deg": (0.0, 360.0), "delay_s": (0.0, math.inf),
                      "fast_azimuth_err_deg": (0.0, math.inf), "delay_err_s": (0.0, math.inf),
                      "incidence_deg": (0.0, 60.0)}
OPTIONAL_MEASUREMENT_COLUMNS = {"fast_azimuth_err_deg", "delay_err_s", "null", "incidence_deg"}


@st.composite
def measurement_tables(draw):
    """A measurements table with some optional columns, a layout change and at most one fault."""
    columns = [c for c in MEASUREMENT_COLUMNS if c not in OPTIONAL_MEASUREMENT_COLUMNS or draw(st.booleans())]
    n = draw(st.integers(1, 6))
    good = {"station": lambda: draw(st.sampled_from(["KAR1", "st 2", "\u00e9t\u00e9", "7"])),
            "baz_deg": lambda: f"{draw(st.floats(0, 360)):.3f}",
            "fast_azimuth_deg": lambda: f"{draw(st.floats(0, 180)):.2f}",
            "delay_s": lambda: f"{draw(st.floats(0, 3)):.3f}", "fast_azimuth_err_deg": lambda: "8",
            "delay_err_s": lambda: "0.15", "null": lambda: draw(st.sampled_from(["true", "false", "False", "1"])),
            "incidence_deg": lambda: f"{draw(st.floats(0, 30)):.1f}"}
    table = Table([",".join(columns)], [[good[c]() for c in columns] for _ in range(n)], ",")
    table.blank_before = set(draw(st.lists(st.integers(1, n - 1), max_size=2))) if n > 1 else set()
    table.newline = draw(st.sampled_from(["\n", "\r\n"]))
    fault = draw(st.sampled_from(["none", "cell", "cell", "cell", "drop value", "extra value", "drop column",
                                  "no rows"]))
    line, must_refuse = None, False
    if fault == "cell":
        row, column = draw(st.integers(0, n - 1)), draw(st.integers(0, len(columns) - 1))
        token = draw(st.sampled_from(EDGE_TOKENS))
        table.rows[row][column] = token
        name = columns[column]
        if name in MEASUREMENT_RANGES:
            value = c_number(token)
            low, high = MEASUREMENT_RANGES[name]
            null_row = "null" in columns and table.rows[row][columns.index("null")].lower() in ("true", "1", "yes")
            # an empty (or nan) cell is a value not given: the default of an optional column, no delay for a null
            not_given = token.lower() in ("", "nan") and (name in OPTIONAL_MEASUREMENT_COLUMNS
                                                          or (name == "delay_s" and null_row))
            if not not_given and (value is None or not math.isfinite(value) or not low <= value <= high
                                  or (value == 0 and "err" in name) or (name == "incidence_deg" and value == 60)):
                line, must_refuse = table.line_of(row), True
    elif fault == "drop value":
        row = draw(st.integers(0, n - 1))
        table.rows[row] = table.rows[row][:-1]
        if columns[-1] not in OPTIONAL_MEASUREMENT_COLUMNS:
            line, must_refuse = table.line_of(row), True
    elif fault == "extra value":
        row = draw(st.integers(0, n - 1))
        table.rows[row] = [*table.rows[row], "1"]
        line, must_refuse = table.line_of(row), True
    elif fault == "drop column":
        column = draw(st.integers(0, len(columns) - 1))
        must_refuse = columns[column] not in OPTIONAL_MEASUREMENT_COLUMNS
        table.rows = [r[:column] + r[column + 1:] for r in table.rows]
        table.header = [",".join(c for k, c in enumerate(columns) if k != column)]
    elif fault == "no rows":
        table.rows, table.blank_before, must_refuse = [], set(), True
    return table.render(), line, must_refuse


def assert_valid_measurements(table) -> None:
    """What the field fit relies on: every number finite and in its range, the defaults filled in."""
    assert len(table) >= 1
    for name, (low, high) in MEASUREMENT_RANGES.items():
        values = table[name].to_numpy(float)
        assert np.all(np.isfinite(values)) and np.all(values >= low) and np.all(values <= high), (name, values)
    assert np.all(table["fast_azimuth_err_deg"] > 0) and np.all(table["delay_err_s"] > 0)
    assert table["null"].dtype == bool and table["station"].map(type).eq(str).all()


@fuzz(EXAMPLES[6])
@given(data=st.one_of(st.binary(max_size=2000), st.text(max_size=800).map(lambda t: t.encode("utf-8"))))
def test_field_measurements_random_bytes(data):
    with tempfile.TemporaryDirectory(prefix="fabric2seis-fuzz-") as tmp:
        f = Path(tmp) / "measurements.csv"
        f.write_bytes(data)
        result = outcome(lambda: read_measurements(f), f)
        if not isinstance(result, InputError):
            assert_valid_measurements(result)


@fuzz(EXAMPLES[7])
@given(measurement_tables())
def test_field_measurements_rows(example):
    data, line, must_refuse = example
    with tempfile.TemporaryDirectory(prefix="fabric2seis-fuzz-") as tmp:
        f = Path(tmp) / "measurements.csv"
        f.write_bytes(data)
        result = outcome(lambda: read_measurements(f), f, line)
        if not isinstance(result, InputError):
            assert not must_refuse, "a measurement that is not a finite number in its range was read"
            assert_valid_measurements(result)


# --- stack files and results folders ----------------------------------------------------------------------

ISOTROPIC_OLIVINE_LIKE = (np.diag([250.0, 230.0, 240.0, 70.0, 75.0, 80.0]) + np.array(
    [[0, 70, 70, 0, 0, 0], [70, 0, 75, 0, 0, 0], [70, 75, 0, 0, 0, 0]] + [[0] * 6] * 3)).tolist()
#: one well-formed results folder (the three files field and stack read) and values to spoil it with
GOOD_RESULT = {"stiffness.json": {"hill": ISOTROPIC_OLIVINE_LIKE, "density_kg_m3": 3300.0},
               "summary.json": {"sample": "VX01", "uncertainty": {"delay_s_per_100km": [0.9, 1.2]}},
               "provenance.json": {"settings": {"field": {"foliation_strike_deg": 20.0, "foliation_dip_deg": 10.0,
                                                          "lineation_pitch_deg": 5.0, "layer_thickness_km": 80.0}}}}
SPOILERS = st.one_of(ANY_VALUE, st.sampled_from([math.nan, math.inf, -1.0, 0.0, [[1.0] * 6] * 6, [[math.nan] * 6] * 6,
                                                 [[1.0, 2.0], [3.0]], "hill", None, {}]))


@st.composite
def results_folders(draw):
    """The three files of a results folder, one value spoilt, a file missing, or one file not JSON."""
    files = json.loads(json.dumps(GOOD_RESULT))
    how = draw(st.sampled_from(["as written", "value", "value", "value", "missing file", "not json"]))
    name = draw(st.sampled_from(sorted(files)))
    if how == "value":
        paths = {"stiffness.json": [["hill"], ["density_kg_m3"], ["used_for_velocities"]],
                 "summary.json": [["sample"], ["uncertainty"], ["uncertainty", "delay_s_per_100km"]],
                 "provenance.json": [["settings"], ["settings", "field"],
                                     ["settings", "field", "layer_thickness_km"],
                                     ["settings", "field", "foliation_dip_deg"]]}[name]
        path = draw(st.sampled_from(paths))
        node = files[name]
        for key in path[:-1]:
            node = node[key]
        node[path[-1]] = draw(SPOILERS)
    texts = {k: json.dumps(v) for k, v in files.items()}      # NaN and infinity as JSON readers write them
    if how == "missing file":
        del texts[name]
    elif how == "not json":
        texts[name] = draw(st.text(max_size=40))
    return texts, how == "as written"


def write_folder(folder: Path, texts: dict) -> None:
    folder.mkdir()
    for name, text in texts.items():
        (folder / name).write_text(text)


@fuzz(EXAMPLES[9])
@given(results_folders())
def test_results_folder_read_by_field_and_stack(example):
    texts, intact = example
    with tempfile.TemporaryDirectory(prefix="fabric2seis-fuzz-") as tmp:
        folder = Path(tmp) / "VX01"
        write_folder(folder, texts)
        result = outcome(lambda: read_result(folder), folder)
        if isinstance(result, InputError):
            assert not intact, f"a well-formed results folder was refused: {result}"
            return
        assert np.asarray(result.stiffness).shape == (6, 6) and np.all(np.isfinite(result.stiffness))
        assert np.linalg.eigvalsh(np.asarray(result.stiffness)).min() > 0
        assert math.isfinite(result.density_kg_m3) and result.density_kg_m3 > 0
        assert result.field is None or isinstance(result.field, dict)
        if result.delay_interval_s_per_100km is not None:
            assert all(math.isfinite(v) for v in result.delay_interval_s_per_100km)


GOOD_PLACEMENT = st.fixed_dictionaries(
    {"foliation_strike_deg": st.floats(0, 360), "foliation_dip_deg": st.floats(0, 90),
     "lineation_pitch_deg": st.floats(0, 180)})


@st.composite
def stack_files(draw):
    """A well-formed stack file (layers given by their splitting, or results folders, intact or
    spoilt) with at most one value spoilt, a key unknown, or the layers missing."""
    doc = draw(st.fixed_dictionaries({}, optional={"period_s": st.floats(0.5, 50), "incidence_deg": st.floats(0, 59),
                                                   "back_azimuth_step_deg": st.floats(1, 90)}))
    layers, folders = [], {}
    for k in range(draw(st.integers(1, 3))):
        if draw(st.booleans()):
            layer = draw(st.fixed_dictionaries({"fast_azimuth_deg": st.floats(0, 360), "delay_s": st.floats(0, 3)},
                                               optional={"name": st.text(max_size=8)}))
        else:
            folders[f"r{k}"] = draw(results_folders())[0] if draw(st.integers(0, 3)) == 0 else {
                f: json.dumps(v) for f, v in GOOD_RESULT.items()}
            layer = {"result": f"r{k}", **draw(st.fixed_dictionaries({}, optional={
                "thickness_km": st.floats(1, 300), "field": GOOD_PLACEMENT, "name": st.text(max_size=8)}))}
        layers.append(layer)
    doc["layers"] = layers
    spoil = draw(st.integers(0, 9))
    paths = list(paths_in(doc))
    if spoil < 5:
        path = draw(st.sampled_from(paths))
        node = doc
        for key in path[:-1]:
            node = node[key]
        node[path[-1]] = draw(SPOILT)
    elif spoil == 5:
        node = draw(st.sampled_from([doc, *[layer for layer in layers if isinstance(layer, dict)]]))
        node[draw(st.one_of(st.text(min_size=1, max_size=8), st.integers()))] = draw(ANY_VALUE)
    elif spoil == 6:
        del doc["layers"]
    return doc, folders


def stack_numbers(stack: dict):
    for key in ("period_s", "incidence_deg", "back_azimuth_step_deg"):
        yield stack[key]
    for layer in stack["layers"]:
        for key in ("thickness_km", "delay_s", "fast_azimuth_deg", "vertical_delay_s", "vertical_fast_azimuth_deg"):
            if key in layer:
                yield layer[key]


@fuzz(EXAMPLES[8])
@given(stack_files())
def test_stack_file(example):
    doc, folders = example
    with tempfile.TemporaryDirectory(prefix="fabric2seis-fuzz-") as tmp:
        for name, texts in folders.items():
            write_folder(Path(tmp) / name, texts)
        f = Path(tmp) / "stack.yaml"
        f.write_text(yaml.safe_dump(doc, allow_unicode=True))
        result = outcome(lambda: read_stack(f), f)
        if isinstance(result, InputError):
            assert result.where is not None and result.where.startswith("key "), f"no key named: {result}"
            return
        assert result["layers"] and all(finite_float(x) for x in stack_numbers(result))

