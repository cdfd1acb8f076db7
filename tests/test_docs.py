"""The user documentation against the program: the settings reference and the output keys.

``docs/settings_reference.md`` must equal what ``tools/write_settings_reference.py`` writes from
the settings schema and the defaults; after changing either, rewrite it with

    python tools/write_settings_reference.py
    (or FABRIC2SEIS_WRITE_DOCS=1 python -m pytest tests/test_docs.py)

``docs/user_guide.md`` lists every key of the JSON files and every column of the CSV files the
commands write, between ``<!-- keys of FILE -->`` (or ``<!-- columns of FILE -->``) and
``<!-- end of ... -->`` markers; the tests run the commands on a small map and fail on a key or
column the guide does not describe, and on a described one the program no longer writes.
"""

import importlib.util
import json
import os
import re
import sys
from pathlib import Path

import pandas as pd
import pytest
import yaml

from fabric2seis.cli import main
from fabric2seis.ingest.io.write import write_ang
from fabric2seis.synth import voronoi_map

ROOT = Path(__file__).resolve().parents[1]
GUIDE = ROOT / "docs" / "user_guide.md"
REWRITE = ("docs/settings_reference.md is out of date: python tools/write_settings_reference.py "
           "(or FABRIC2SEIS_WRITE_DOCS=1 python -m pytest tests/test_docs.py)")


def _tool():
    spec = importlib.util.spec_from_file_location("write_settings_reference",
                                                  ROOT / "tools" / "write_settings_reference.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module
    spec.loader.exec_module(module)
    return module


tool = _tool()


# --- the settings reference -------------------------------------------------------------------

def test_settings_reference_is_that_of_the_schema():
    text = tool.reference_text()
    if os.environ.get("FABRIC2SEIS_WRITE_DOCS") == "1":
        tool.OUTPUT.write_text(text, encoding="utf-8")
    assert tool.OUTPUT.exists(), REWRITE
    assert tool.OUTPUT.read_text(encoding="utf-8") == text, REWRITE


def schema_keys(props: dict, prefix: str = "") -> list[str]:
    """Every key of the schema, nested ones dotted (walked here independently of the tool)."""
    out = []
    for name, node in props.items():
        out.append(prefix + name)
        if isinstance(node.get("properties"), dict):
            out += schema_keys(node["properties"], prefix + name + ".")
    return out


def test_every_settings_key_has_a_row_with_a_description():
    schema = yaml.safe_load(tool.SCHEMA.read_text(encoding="utf-8"))
    keys = schema_keys(schema["properties"])
    assert {"odf.halfwidth_deg", "field.foliation_strike_deg", "figures.velocities.panels",
            "optics.measured"} <= set(keys)       # nested keys of CONTRACT.md and of the figure and optics keys
    defaults = tool.DEFAULTS.read_text()
    rows = [key for key, *_ in tool.rows(schema, yaml.safe_load(defaults), {})]
    assert rows == keys
    missing = [row.split("`")[1] for row in tool.reference_text().splitlines() if tool.MISSING_DESCRIPTION in row]
    assert not missing, f"settings keys without a description in settings_schema.yaml: {', '.join(missing)}"


def test_reference_rows_say_type_range_and_default():
    rows = {key: (kind, default) for key, kind, default, _ in tool.rows(
        yaml.safe_load(tool.SCHEMA.read_text()), yaml.safe_load(tool.DEFAULTS.read_text()), {})}
    # the schema's ranges and the defaults of config/README.md, read independently of the tool
    assert rows["grains.threshold_deg"] == ("number 0 < x <= 62", "`10.0`")
    assert rows["averaging"] == ("one of `voigt`, `reuss`, `hill`, `geometric`", "`hill`")
    assert rows["odf.halfwidth_deg"][1] == "`10.0`"
    assert rows["field.foliation_dip_deg"] == ("number 0 <= x <= 90", "unset (`field` is null)")
    assert rows["frame.rotation"][1] == "unset"
    assert rows["figures.velocities.panels"][1] == "`[vp, avs, delay]`"


def test_default_comments_follow_nesting_and_continuation_lines():
    text = "# above a\na: 1\nb:\n  c: 2   # first\n         # second\n  d: 3\n"
    assert tool.default_comments(text) == {"a": "above a", "b.c": "first second"}


# --- the output keys of the user guide --------------------------------------------------------

def documented(kind: str, file: str) -> dict[str, str]:
    """Key patterns (or column names) of one block of the guide, with their meanings."""
    text = GUIDE.read_text(encoding="utf-8")
    begin = f"<!-- {kind} of {file}"
    assert text.count(begin) == 1, f"docs/user_guide.md lacks the block '{begin} -->'"
    block = text[text.index(begin):]
    block = block[:block.index("<!-- end of")]
    return {m.group(1): m.group(2) for m in re.finditer(r"^\| `([^`]+)` \| (.*) \|$", block, re.MULTILINE)}


def pattern_regex(pattern: str) -> re.Pattern:
    """``<name>`` stands for one key, a final ``.*`` for anything beneath."""
    tail = pattern.endswith(".*")
    body = re.escape(pattern[:-2] if tail else pattern)
    body = re.sub(r"<[a-z]+>", r"[^.]+", body)
    return re.compile(body + (r"(\..+)?" if tail else "") + r"\Z")


def leaf_paths(data, prefix: str = "") -> list[str]:
    """Dotted paths of every value that is not a non-empty mapping (lists are values)."""
    if isinstance(data, dict) and data:
        return [p for k, v in data.items() for p in leaf_paths(v, f"{prefix}{k}.")]
    return [prefix[:-1]]


def check_keys(file: str, paths: list[str]) -> None:
    patterns = documented("keys", file)
    regexes = {p: pattern_regex(p) for p in patterns}
    undocumented = sorted({p for p in paths if not any(r.match(p) for r in regexes.values())})
    assert not undocumented, f"{file}: keys the program writes that docs/user_guide.md does not describe: " \
        f"{', '.join(undocumented)}"
    # a row is seen when it names a written value or a mapping above one (splitting.field)
    below = {p: re.compile(r.pattern[:-2] + r"(\..+)?\Z") for p, r in regexes.items()}
    unseen = [p for p, r in below.items() if not patterns[p].startswith("Only when") and not any(map(r.match, paths))]
    assert not unseen, f"{file}: keys docs/user_guide.md describes that the program did not write: {', '.join(unseen)}"


def check_columns(file: str, columns: list[str]) -> None:
    described = list(documented("columns", file))
    assert columns == described, f"{file}: columns written {columns}, described in docs/user_guide.md {described}"


@pytest.fixture(scope="module")
def outputs(tmp_path_factory):
    """A small two-phase map (olivine, quartz: a twin law) placed in the ground, cleaned by
    quality, with a bootstrap; its sample, field and optics outputs."""
    tmp = tmp_path_factory.mktemp("docs")
    m = voronoi_map(30, 30, 20, step=2.0, n_phases=2, seed=5)
    write_ang(tmp / "mix.ang", m.x, m.y, m.quat, m.phase, ["olivine", "quartz"], ["mmm", "-3m"])
    (tmp / "mix.yaml").write_text(
        "field: {foliation_strike_deg: 120, foliation_dip_deg: 60, lineation_pitch_deg: 30, layer_thickness_km: 50}\n"
        "grains: {min_pixels: 3}\nclean: {quality_min: 0.1}\nbootstrap: {n: 20}\n")
    (tmp / "m.csv").write_text(
        "station,baz_deg,incidence_deg,fast_azimuth_deg,delay_s,fast_azimuth_err_deg,delay_err_s,null\n"
        "VX-A,10,8,40,1.2,8,0.15,False\nVX-A,100,9,45,1.0,8,0.15,False\nVX-A,200,10,130,0,10,0.2,True\n"
        "VX-B,30,8,70,0.8,8,0.15,False\nVX-B,150,9,75,0.9,8,0.15,False\nVX-B,250,10,72,1.1,8,0.15,False\n")
    assert main(["sample", str(tmp / "mix.ang"), "--out", str(tmp / "res")]) == 0
    assert main(["field", str(tmp / "res"), "--measurements", str(tmp / "m.csv"), "--out", str(tmp / "field")]) == 0
    assert main(["optics", str(tmp / "mix.ang"), "--out", str(tmp / "optics")]) == 0
    assert main(["combine", str(tmp / "res"), "--out", str(tmp / "combined")]) == 0
    return tmp


def test_every_summary_key_is_described(outputs):
    summary = json.loads((outputs / "res" / "summary.json").read_text())
    assert summary["seismic"]["twins"]["averaged"] and summary["splitting"]["field"]    # the keys seen below
    check_keys("summary.json", leaf_paths(summary))


def test_contract_keys_of_the_summary_are_described():
    # the keys CONTRACT.md fixes for summary.json
    patterns = documented("keys", "summary.json")
    for key in ["sample", "n_points", "n_grains", "phases.<mineral>.fraction", "phases.<mineral>.n",
                "phases.<mineral>.J", "phases.<mineral>.M", "phases.<mineral>.pfJ.<pole>",
                "phases.<mineral>.eigen.<pole>", "density_kg_m3", "seismic.average", "seismic.vp_max_km_s",
                "seismic.vp_min_km_s", "seismic.vp_max_direction", "seismic.vp_min_direction", "seismic.avp_pct",
                "seismic.avs_max_pct", "seismic.avs_max_direction", "seismic.vs1_max_km_s", "seismic.vs2_min_km_s",
                "splitting.along_z.fast_polarisation_from_x_deg", "splitting.along_z.delay_s_per_100km",
                "splitting.field.fast_azimuth_deg", "splitting.field.delay_s", "splitting.field.layer_thickness_km",
                "uncertainty.J", "uncertainty.M", "uncertainty.avp_pct", "uncertainty.avs_max_pct",
                "uncertainty.vp_max_km_s", "uncertainty.delay_s_per_100km"]:
        assert key in patterns, key


def test_suite_summary_columns_are_described_summary_keys(outputs):
    from fabric2seis.workflow.suite import suite_table

    patterns = [pattern_regex(p) for p in documented("keys", "summary.json")]
    columns = list(suite_table([outputs / "res" / "summary.json"]).columns)
    assert columns[:2] == ["sample", "status"]
    for column in columns[2:]:
        key = re.sub(r"\.(low|high)\Z", "", column)
        assert any(r.match(key) for r in patterns), f"suite_summary.csv column {column} is not described"


def test_other_json_keys_are_described(outputs):
    check_keys("stiffness.json", leaf_paths(json.loads((outputs / "res" / "stiffness.json").read_text())))
    check_keys("provenance.json", leaf_paths(json.loads((outputs / "res" / "provenance.json").read_text())))
    check_keys("field_fit.json", leaf_paths(json.loads((outputs / "field" / "field_fit.json").read_text())))
    check_keys("optics_summary.json", leaf_paths(json.loads((outputs / "optics" / "optics_summary.json").read_text())))
    check_keys("weighted_sums.json", leaf_paths(json.loads((outputs / "res" / "weighted_sums.json").read_text())))
    check_keys("weighted_sums.json", leaf_paths(json.loads((outputs / "combined" / "weighted_sums.json").read_text())))
    check_keys("combined summary.json", leaf_paths(json.loads((outputs / "combined" / "summary.json").read_text())))


def test_csv_columns_are_described(outputs):
    combined = list(pd.read_csv(outputs / "combined" / "velocities.csv", nrows=1).columns)
    assert combined == list(pd.read_csv(outputs / "res" / "velocities.csv", nrows=1).columns)
    for folder, file in [("res", "velocities.csv"), ("res", "splitting_vs_backazimuth.csv"), ("res", "grains.csv"),
                         ("field", "predictions.csv"), ("optics", "birefringence.csv")]:
        check_columns(file, list(pd.read_csv(outputs / folder / file, nrows=1).columns))


def test_key_patterns_match_as_meant():
    # placeholders stand for one key, ".*" for a subtree; nothing else is loose
    assert pattern_regex("phases.<mineral>.pfJ.<pole>").match("phases.olivine.pfJ.[100]")
    assert not pattern_regex("phases.<mineral>.J").match("phases.olivine.M")
    assert pattern_regex("versions.*").match("versions.orix") and not pattern_regex("versions.*").match("version")
    assert leaf_paths({"a": {"b": 1, "c": []}, "d": {}}) == ["a.b", "a.c", "d"]
