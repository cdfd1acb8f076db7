"""The suite's spreadsheet tables and the stiffness as plain text (fabric2seis.tables).

One small synthetic map is run through `fabric2seis sample` (with a bootstrap and a placement in the
ground, so that intervals and field numbers exist); a second entry stands for a sample that failed.
Every number of the tables is checked against summary.json or stiffness.json read here with json.
"""

import copy
import csv
import json
import math

import numpy as np
import pandas as pd
import pytest

from fabric2seis import tables
from fabric2seis.cli import main
from fabric2seis.ingest.io.write import write_ang
from fabric2seis.synth import voronoi_map
from fabric2seis.tables import suite_long, suite_table, summaries_from_status, write_suite_tables

FAILED = {"sample": "broken map", "status": "broken map.ang: line 7: expected 10 numbers, found 4"}


@pytest.fixture(scope="module")
def result(tmp_path_factory):
    folder = tmp_path_factory.mktemp("tables")
    m = voronoi_map(60, 40, 30, step=1.0, n_phases=2, seed=5)
    f = folder / "marble ridge.ang"
    write_ang(f, m.x, m.y, m.quat, m.phase, ["olivine", "enstatite"], ["mmm", "mmm"])
    (folder / "marble ridge.yaml").write_text(
        "grains: {min_pixels: 1}\nbootstrap: {n: 30, seed: 2}\n"
        "field: {foliation_strike_deg: 30, foliation_dip_deg: 0, lineation_pitch_deg: 10, layer_thickness_km: 50}\n")
    out = folder / "res"
    assert main(["sample", str(f), "--out", str(out)]) == 0
    return out


@pytest.fixture()
def summary(result):
    return json.loads((result / "summary.json").read_text())


def without_field_and_bootstrap(summary):
    """The same sample as if run without `field` and with `bootstrap: {n: 0}`."""
    other = copy.deepcopy(summary)
    other["sample"] = "no field"
    other["splitting"]["field"] = None
    other["uncertainty"] = {}
    return other


def rows_of(table, sample):
    return table[table["sample"] == sample].reset_index(drop=True)


# --- the short table ------------------------------------------------------------------------

def test_short_table_columns_are_the_same_whatever_the_samples(summary):
    made = [suite_table([summary, FAILED]), suite_table([FAILED]), suite_table([FAILED, summary]),
            suite_table([without_field_and_bootstrap(summary)]), suite_table([])]
    for t in made[1:]:
        assert list(t.columns) == list(made[0].columns)
        assert str(t["n_grains"].dtype) == "Int64"        # a failed sample's empty cell keeps it integer
    headers = list(made[0].columns)
    assert headers[:3] == ["sample", "status", "n_grains"]
    # units in the headers: every column but the names, texts, counts and dimensionless indices has one
    for unit in ("(kg m^-3)", "(km/s)", "(%)", "(s/100 km)", "(deg from X)", "(s)", "(deg from N)"):
        assert any(h.endswith(unit) for h in headers), unit
    assert 14 <= len(headers) <= 20


def test_short_table_values_are_the_summary_numbers(summary):
    t = suite_table([FAILED, summary])
    ok, failed = t.iloc[1], t.iloc[0]
    main_phase = summary["uncertainty"]["main_phase"]
    phase = summary["phases"][main_phase]
    assert ok["sample"] == summary["sample"] and ok["status"] == "ok" and ok["main phase"] == main_phase
    assert ok["n_grains"] == summary["n_grains"]
    assert ok["density (kg m^-3)"] == summary["density_kg_m3"]
    assert ok["main phase fraction (0-1)"] == phase["fraction"]
    assert [ok["J main phase"], ok["J 95% low"], ok["J 95% high"]] == [phase["J"], *summary["uncertainty"]["J"]]
    assert [ok["M main phase"], ok["M 95% low"], ok["M 95% high"]] == [phase["M"], *summary["uncertainty"]["M"]]
    assert ok["tensor average"] == summary["seismic"]["average"] == "hill"
    assert ok["Vp max (km/s)"] == summary["seismic"]["vp_max_km_s"]
    assert ok["AVp (%)"] == summary["seismic"]["avp_pct"]
    assert ok["max AVs (%)"] == summary["seismic"]["avs_max_pct"]
    assert ok["delay along Z (s/100 km)"] == summary["splitting"]["along_z"]["delay_s_per_100km"]
    assert (ok["fast polarisation along Z (deg from X)"]
            == summary["splitting"]["along_z"]["fast_polarisation_from_x_deg"])
    assert ok["field delay (s)"] == summary["splitting"]["field"]["delay_s"]
    assert ok["field fast azimuth (deg from N)"] == summary["splitting"]["field"]["fast_azimuth_deg"]
    assert failed["status"] == FAILED["status"]
    assert failed[2:].isna().all()                      # nothing but its name and error
    plain = suite_table([without_field_and_bootstrap(summary)]).iloc[0]
    assert math.isnan(plain["field delay (s)"]) and math.isnan(plain["J 95% low"])
    assert plain["main phase"] == main_phase            # the largest fraction without a bootstrap


def test_csv_text_keeps_integers_and_every_digit(summary, tmp_path):
    table_file, long_file = write_suite_tables([summary, FAILED], tmp_path)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["suite_long.csv", "suite_table.csv"]
    with table_file.open(newline="") as f:
        rows = list(csv.DictReader(f))
    assert rows[0]["n_grains"] == str(summary["n_grains"])          # "61", not "61.0"
    assert rows[1]["n_grains"] == "" and rows[1]["J main phase"] == "" and rows[1]["status"] == FAILED["status"]
    assert float(rows[0]["J main phase"]) == summary["phases"][summary["uncertainty"]["main_phase"]]["J"]
    assert float(rows[0]["density (kg m^-3)"]) == summary["density_kg_m3"]
    with long_file.open(newline="") as f:
        reader = csv.DictReader(f)
        assert reader.fieldnames == ["sample", "phase", "quantity", "value", "low", "high", "unit"]
        long_rows = list(reader)
    grains = next(r for r in long_rows if r["quantity"] == "grains" and r["phase"] == "")
    assert grains["value"] == str(summary["n_grains"]) and grains["low"] == ""
    vp = next(r for r in long_rows if r["quantity"] == "Vp max")
    assert float(vp["value"]) == summary["seismic"]["vp_max_km_s"]
    assert [float(vp["low"]), float(vp["high"])] == summary["uncertainty"]["vp_max_km_s"]
    assert {r["sample"] for r in long_rows} == {summary["sample"]}   # a failed sample has no numbers


# --- the long table -------------------------------------------------------------------------

# left out of the long table: directions (vectors), settings and flags of the run, the bootstrap's seed
SKIPPED = ("direction", "eigenvectors", "symmetry_frame", "hexagonal_axis", "sweep_incidence_deg", "seed",
           "scaled_by", "allow_ambient_constants", "j_levelled")
SKIPPED_PATHS = (("uncertainty", "random_aggregate", "simulated_grains"),)


def numbers_in(data, path=()):
    """Every number of a nested summary (booleans as 1 and 0), with its path; directions and settings left out."""
    if isinstance(data, dict):
        for key, value in data.items():
            if not any(s in str(key) for s in SKIPPED) and (*path, key) not in SKIPPED_PATHS:
                yield from numbers_in(value, (*path, key))
    elif isinstance(data, list):
        for k, value in enumerate(data):
            yield from numbers_in(value, (*path, k))
    elif isinstance(data, (bool, int, float)) and data is not None:
        yield path, float(data)


def test_long_table_holds_every_number_of_the_summary(summary):
    long = suite_long([summary])
    assert list(long.columns) == ["sample", "phase", "quantity", "value", "low", "high", "unit"]
    held = set(long["value"]) | set(long["low"].dropna()) | set(long["high"].dropna())
    numbers = list(numbers_in(summary))
    assert len(numbers) > 100
    assert [path for path, value in numbers if value not in held] == []
    assert long["unit"].ne("").all() and long["quantity"].ne("").all()
    assert set(long.loc[long["phase"] != "", "phase"]) == set(summary["phases"])


def test_long_table_values_are_the_summary_numbers(summary):
    long = suite_long([summary]).set_index(["phase", "quantity"])
    u = summary["uncertainty"]
    seismic, along_z, field = summary["seismic"], summary["splitting"]["along_z"], summary["splitting"]["field"]
    expected = {("", "grains"): (summary["n_grains"], None), ("", "density"): (summary["density_kg_m3"], None),
                ("", "Vp max"): (seismic["vp_max_km_s"], u["vp_max_km_s"]),
                ("", "AVp"): (seismic["avp_pct"], u["avp_pct"]),
                ("", "AVs max"): (seismic["avs_max_pct"], u["avs_max_pct"]),
                ("", "Vs2 min"): (seismic["vs2_min_km_s"], None),
                ("", "AVs along Z"): (seismic["along_axes"]["Z"]["avs_pct"], None),
                ("", "delay along Z"): (along_z["delay_s_per_100km"], u["delay_s_per_100km"]),
                ("", "fast polarisation along Z"): (along_z["fast_polarisation_from_x_deg"], None),
                ("", "field delay"): (field["delay_s"], None),
                ("", "field fast azimuth"): (field["fast_azimuth_deg"], None),
                ("", "AVs max of random aggregates"): (u["random_aggregate"]["avs_max_pct"],
                                                       u["random_aggregate"]["avs_max_pct_95"])}
    for name, phase in summary["phases"].items():
        expected[(name, "fraction")] = (phase["fraction"], None)
        expected[(name, "J-index")] = (phase["J"], u[f"{name}.J"])
        expected[(name, "M-index")] = (phase["M"], u[f"{name}.M"])
        expected[(name, "J-index random floor")] = (phase["random_floor"]["J"], phase["random_floor"]["J_95"])
        for pole, value in phase["pfJ"].items():
            expected[(name, f"pfJ {pole}")] = (value, None)
            expected[(name, f"eigenvalue 3 {pole}")] = (phase["eigen"][pole][2], None)
            expected[(name, f"pfJ {pole} random floor")] = (phase["random_floor"]["pfJ"][pole],
                                                            phase["random_floor"]["pfJ_95"][pole])
    for key, (value, interval) in expected.items():
        row = long.loc[key]
        assert row["value"] == value, key
        if interval is None:
            assert math.isnan(row["low"]) and math.isnan(row["high"]), key
        else:
            assert [row["low"], row["high"]] == interval, key
    units = long["unit"].to_dict()
    assert units[("", "Vp max")] == "km/s" and units[("", "delay along Z")] == "s/100 km"
    assert units[("", "density")] == "kg m^-3" and units[("", "field fast azimuth")] == "deg from N"


def test_intervals_hold_their_value_unless_the_summary_says_otherwise(summary):
    """A 95 % interval holds its value, except a bootstrap interval the summary names as excluding it.

    Basic bootstrap intervals (Efron & Tibshirani 1993, 13.4) reflect the resamples about the
    estimate: when the resamples lie wholly on one side (a biased maximum), the interval excludes
    the estimate; summary.json lists those keys in uncertainty.estimate_outside_interval.
    """
    long = suite_long([summary])
    key_of = {("", "Vp max"): "vp_max_km_s", ("", "AVp"): "avp_pct", ("", "AVs max"): "avs_max_pct",
              ("", "delay along Z"): "delay_s_per_100km"}
    key_of.update({(name, q): f"{name}.{q[0]}" for name in summary["phases"] for q in ("J-index", "M-index")})
    outside = set(filter(None, summary["uncertainty"].get("estimate_outside_interval", "").split(", ")))
    found_outside = set()
    with_interval = long.dropna(subset=["low", "high"])
    assert len(with_interval) >= 10
    for _, row in with_interval.iterrows():
        assert row["low"] <= row["high"]
        if not row["low"] <= row["value"] <= row["high"]:
            found_outside.add(key_of.get((row["phase"], row["quantity"]), row["quantity"]))
    assert found_outside == outside          # the random floors' ranges always hold their mean here


def test_long_rows_keep_their_order_and_a_failed_sample_adds_none(summary):
    other = without_field_and_bootstrap(summary)
    one = suite_long([summary, FAILED, other])
    two = suite_long([other, summary])
    pd.testing.assert_frame_equal(rows_of(one, summary["sample"]), rows_of(two, summary["sample"]))
    pd.testing.assert_frame_equal(rows_of(one, "no field"), rows_of(two, "no field"))
    assert FAILED["sample"] not in set(one["sample"])
    assert list(suite_long([FAILED]).columns) == list(one.columns) and suite_long([FAILED]).empty
    no_field = rows_of(one, "no field")
    assert not no_field["quantity"].str.startswith("field").any()
    # without a bootstrap only the random floors (of the fabric stage) keep a range
    assert no_field.dropna(subset=["low"])["quantity"].str.endswith("random floor").all()
    # the rows a sample lacks are left out, the others keep the full summary's order
    full = list(zip(*(rows_of(one, summary["sample"])[c] for c in ("phase", "quantity"))))
    fewer = list(zip(no_field["phase"], no_field["quantity"]))
    assert len(set(full)) == len(full) and fewer == [key for key in full if key in set(fewer)]


def test_entries_without_a_sample_name_are_refused():
    with pytest.raises(ValueError, match="'sample' name"):
        suite_table([{"status": "ok"}])
    with pytest.raises(ValueError, match="'sample' name"):
        suite_long(["summary.json"])


def test_summaries_are_read_through_the_status_files(result, summary, tmp_path):
    from fabric2seis.workflow.status import SampleStatus, write_status

    files = [write_status(tmp_path / "a.json", SampleStatus(summary["sample"], "ok", str(result / "summary.json"))),
             write_status(tmp_path / "b.json", SampleStatus(FAILED["sample"], FAILED["status"])),
             write_status(tmp_path / "c.json", SampleStatus("gone", "ok", str(tmp_path / "gone" / "summary.json")))]
    entries = summaries_from_status(files)
    assert entries[0] == summary and entries[1] == FAILED
    assert entries[2]["sample"] == "gone" and entries[2]["status"].startswith("results missing")
    assert suite_table(entries)["status"].tolist() == ["ok", FAILED["status"], entries[2]["status"]]


# --- stiffness as text ----------------------------------------------------------------------

def test_tensor_texts_read_back_as_stiffness_json(result):
    stiffness = json.loads((result / "stiffness.json").read_text())
    for average in ("voigt", "reuss", "hill", "geometric"):
        path = result / f"stiffness_{average}.txt"
        c = np.loadtxt(path)
        assert c.shape == (6, 6)
        # six decimals printed: within half a unit of the last one
        assert np.abs(c - np.array(stiffness[average])).max() <= 0.5e-6 + 1e-9
        header = [line for line in path.read_text().splitlines() if line.startswith("#")]
        text = "\n".join(header)
        assert len(header) >= 5 and "marble ridge" in text and average in text
        # CONVENTIONS.md: structural frame, Voigt order 11 22 33 23 13 12, GPa, density in kg/m^3
        assert "X lineation" in text and "Z foliation normal" in text and "structural" in text
        assert "11 22 33 23 13 12" in text and "GPa" in text
        assert f"{stiffness['density_kg_m3']:.3f} kg m^-3" in text
        assert ("velocities" in text) == (average == stiffness["used_for_velocities"])


def test_tensor_text_refuses_what_is_not_a_6x6_stiffness(tmp_path):
    with pytest.raises(ValueError, match="6x6"):
        tables.tensor_text(np.eye(3), "s", "hill", 3300.0)
    with pytest.raises(ValueError, match="6x6"):
        tables.tensor_text(np.full((6, 6), np.nan), "s", "hill", 3300.0)
    with pytest.raises(ValueError, match="density_kg_m3"):
        tables.write_tensor_texts({a: np.eye(6).tolist() for a in tables.AVERAGES}, tmp_path, "s")
    assert list(tmp_path.iterdir()) == []


def test_velocities_csv_has_the_bytes_pandas_writes_for_the_grid(result, tmp_path):
    # velocities.csv is written by the csv module (tables.write_number_csv), about twice as fast as
    # pandas; pandas' own to_csv of the same table (the reference library) must give the same bytes:
    # the run's file, a grid of olivine's single crystal, and numbers at the edges of Python's float
    # text (negative zero, exponents below 1e-4 and from 1e16, missing and infinite values).
    # pandas writes a float as numpy prints it, and a library in the same process can switch numpy to
    # its 1.13 style of 12 digits (one in this test session does): the reference is written in numpy's
    # own style, and the project's writer must not follow such a switch
    from fabric2seis.elastic.minerals import find_mineral
    from fabric2seis.waves.seismic import velocity_grid

    written = (result / "velocities.csv").read_bytes()
    header, *rows = list(csv.reader(written.decode().splitlines()))
    frame = pd.DataFrame({name: [float(row[k]) for row in rows] for k, name in enumerate(header)})   # read exactly
    assert len(frame) > 20_000 and frame.notna().all().all()
    olivine = find_mineral("olivine")
    grid = velocity_grid(olivine.stiffness_gpa, olivine.density_kg_m3, step_deg=5.0)
    edges = {"a": np.array([-0.0, 1e-05, 0.00012, 1e16, 123456789.123, np.nan, np.inf, -np.inf, 0.1 + 0.2]),
             "b b": np.array([1.0, -2.5, 3e-300, 2.0 ** 60, np.nan, 7.0, 0.5, -1e-07, 42.0])}
    with np.printoptions(legacy=False):
        assert written == frame.to_csv(index=False).encode()
        grid.table().to_csv(tmp_path / "olivine_pandas.csv", index=False)
        pd.DataFrame(edges).to_csv(tmp_path / "edges_pandas.csv", index=False)
    with np.printoptions(legacy="1.13"):
        grid.write_csv(tmp_path / "olivine.csv")
        tables.write_number_csv(tmp_path / "edges.csv", edges)
    assert (tmp_path / "olivine.csv").read_bytes() == (tmp_path / "olivine_pandas.csv").read_bytes()
    assert (tmp_path / "edges.csv").read_bytes() == (tmp_path / "edges_pandas.csv").read_bytes()
    assert b"0.30000000000000004" in (tmp_path / "edges.csv").read_bytes()     # 17 digits where needed
