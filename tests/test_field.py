"""`fabric2seis field`: fitting a layer to synthetic station measurements; bad measurement files."""

import json

import numpy as np
import pandas as pd
import pytest

from fabric2seis import field, seismic, splitting
from fabric2seis.cli import main
from fabric2seis.errors import InputError
from fabric2seis.minerals import find_mineral
from fabric2seis.synth import fabric_orientations

OLIVINE = find_mineral("olivine")


@pytest.fixture(scope="module")
def sample():
    q = fabric_orientations(OLIVINE, "olivine-A", 1500, 15.0, seed=2)
    agg = seismic.aggregate([(OLIVINE, q, np.ones(1500))], {"olivine": 1.0})
    return field.SampleTensor("synthetic", agg.stiffness, agg.density_kg_m3,
                              {"foliation_strike_deg": 0, "foliation_dip_deg": 0, "lineation_pitch_deg": 0,
                               "layer_thickness_km": 80})


def synthetic_station(sample, azimuth, thickness, attitude="horizontal", n=40, seed=1):
    rng = np.random.default_rng(seed)
    baz = np.sort(rng.uniform(0, 360, n))
    inc = rng.uniform(5, 15, n)
    c = splitting.to_geographic(sample.stiffness, splitting.placement(field._attitude_field(attitude, azimuth)))
    fast, per_km = field.predict_many([c], sample.density_kg_m3, baz, inc)
    return pd.DataFrame({"station": "SYN1", "baz_deg": baz, "incidence_deg": inc,
                         "fast_azimuth_deg": (fast[0] + rng.normal(0, 4, n)) % 180,
                         "delay_s": np.abs(per_km[0] * thickness + rng.normal(0, 0.08, n)),
                         "fast_azimuth_err_deg": 6.0, "delay_err_s": 0.1, "null": False})


def test_known_model_is_fitted_back(sample):
    # Issue 6: thickness within 10 percent, lineation azimuth within 10 degrees (as an axis).
    data = synthetic_station(sample, azimuth=70.0, thickness=120.0)
    model, grid = field.fit_station(sample, data, set())
    assert model["thickness_km"] == pytest.approx(120.0, rel=0.10)
    assert abs(field._axial_difference(model["lineation_azimuth_deg"], 70.0)) < 10
    assert grid["misfit"].shape == (2, 180, 50)


def test_fixing_parameters_uses_the_samples_own_settings(sample):
    data = synthetic_station(sample, azimuth=0.0, thickness=80.0)
    model, grid = field.fit_station(sample, data, {"thickness", "foliation"})
    assert model["thickness_km"] == 80.0 and model["foliation"] == "horizontal"
    assert grid["misfit"].shape == (1, 180, 1)


def test_command_writes_predictions_and_fits(tmp_path, sample):
    from fabric2seis.io.write import write_table
    q = fabric_orientations(OLIVINE, "olivine-A", 200, 15.0, seed=2)
    write_table(tmp_path / "s.csv", q, ["olivine"] * 200)
    (tmp_path / "s.yaml").write_text("bootstrap: {n: 0}\nfield: {foliation_strike_deg: 0, foliation_dip_deg: 0, "
                                     "lineation_pitch_deg: 30, layer_thickness_km: 100}\n")
    assert main(["sample", str(tmp_path / "s.csv"), "--out", str(tmp_path / "res")]) == 0
    synthetic_station(sample, 30.0, 100.0, n=12).drop(columns=["null"]).to_csv(tmp_path / "m.csv", index=False)
    assert main(["field", str(tmp_path / "res"), "--measurements", str(tmp_path / "m.csv"),
                 "--out", str(tmp_path / "f")]) == 0
    fit = json.loads((tmp_path / "f" / "field_fit.json").read_text())["fits"]["s"]["SYN1"]
    assert {"thickness_km", "lineation_azimuth_deg", "foliation", "misfit"} <= set(fit)
    table = pd.read_csv(tmp_path / "f" / "predictions.csv")
    assert len(table) == 12 and {"predicted_delay_s", "delay_residual_s"} <= set(table.columns)


@pytest.mark.parametrize("change,expected", [
    (lambda t: t.assign(delay_s=-0.5), "delay_s = -0.5 must not be negative"),
    (lambda t: t.assign(baz_deg=400.0), "baz_deg = 400.0 must lie in 0-360"),
    (lambda t: t.assign(fast_azimuth_deg=-3.0), "fast_azimuth_deg = -3.0 must lie in 0-360"),
    (lambda t: t.drop(columns=["delay_s"]), "missing column(s) delay_s"),
])
def test_bad_measurements_are_refused_naming_row_or_column(tmp_path, sample, change, expected):
    data = change(synthetic_station(sample, 0.0, 80.0, n=5))
    f = tmp_path / "m.csv"
    data.to_csv(f, index=False)
    with pytest.raises(InputError) as info:
        field.read_measurements(f)
    assert expected in str(info.value) and "m.csv" in str(info.value)
    assert "line 2" in str(info.value) or "line 1" in str(info.value)
