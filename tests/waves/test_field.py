"""`fabric2seis field`: fitting a layer to synthetic station measurements; bad measurement files."""

import json

import numpy as np
import pandas as pd
import pytest

from fabric2seis import elastic
from fabric2seis.cli import main
from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.errors import InputError
from fabric2seis.synth import fabric_orientations
from fabric2seis.waves import field, seismic, splitting

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
    c = splitting.to_geographic(sample.stiffness, splitting.placement(field.attitude_field(attitude, azimuth)))
    fast, per_km = field.predict_many([c], sample.density_kg_m3, baz, inc)
    return pd.DataFrame({"station": "SYN1", "baz_deg": baz, "incidence_deg": inc,
                         "fast_azimuth_deg": (fast[0] + rng.normal(0, 4, n)) % 180,
                         "delay_s": np.abs(per_km[0] * thickness + rng.normal(0, 0.08, n)),
                         "fast_azimuth_err_deg": 6.0, "delay_err_s": 0.1, "null": False})


def test_known_model_is_fitted_back(sample):
    # A known layer is found again: thickness within 10 percent, lineation azimuth within 10 degrees
    # (as an axis; this project's tolerance for measurement errors of 10 degrees and 0.2 s).
    data = synthetic_station(sample, azimuth=70.0, thickness=120.0)
    model, grid = field.fit_station(sample, data, set())
    assert model["thickness_km"] == pytest.approx(120.0, rel=0.10)
    assert abs(splitting.axial_difference(model["lineation_azimuth_deg"], 70.0)) < 10
    assert grid["misfit"].shape == (2, 180, 50)
    # the refined best lies below every coarse grid point, and the intervals are not stuck
    # on the coarse grid (the old fit gave zero-width intervals on grid values)
    assert model["chi_square"] <= grid["chi_square"].min() + 1e-9
    low, high = model["thickness_interval_km"]
    assert low < model["thickness_km"] < high and high - low >= field.THICKNESS_RESOLUTION_KM
    start, end = model["lineation_azimuth_interval_deg"]
    assert (end - start) % 180 >= field.FINE_AZIMUTH_STEP_DEG


def test_turning_the_rays_equals_turning_the_tensor(sample):
    # The Christoffel equation is invariant under a rotation of tensor and ray together (common
    # practice): predict_turned must agree with the turned tensors one by one.
    baz, inc = np.linspace(0, 350, 36), np.linspace(2, 30, 36)
    trends = np.array([0.0, 17.5, 123.0, 301.2])
    base = splitting.to_geographic(sample.stiffness, splitting.placement(field.attitude_field("vertical", 0.0)))
    fast, per_km = field.predict_turned(base, sample.density_kg_m3, trends, baz, inc)
    for k, trend in enumerate(trends):
        c = splitting.to_geographic(sample.stiffness, splitting.placement(field.attitude_field("vertical", trend)))
        one = splitting.one_layer(c, sample.density_kg_m3, 1.0, baz, inc)
        assert np.abs(splitting.axial_difference(fast[k], one["fast_azimuth_deg"])).max() < 1e-6
        assert np.allclose(per_km[k], one["delay_s"], rtol=1e-9)


def test_chi_square_is_the_plain_sum_of_squared_normalised_residuals(sample):
    # Hand computation, measurement by measurement, at the sample's own placement (everything fixed):
    # chi-square = sum of (residual / error)^2, each measurement counted once (common practice).
    own = {"foliation_strike_deg": 40.0, "foliation_dip_deg": 0.0, "lineation_pitch_deg": 0.0,
           "layer_thickness_km": 90.0}
    placed = field.SampleTensor("own", sample.stiffness, sample.density_kg_m3, own)
    data = pd.DataFrame({"station": "H", "baz_deg": [20.0, 135.0, 250.0, 300.0],
                         "incidence_deg": [8.0, 12.0, 10.0, 9.0],
                         "fast_azimuth_deg": [35.0, 52.0, 170.0, 0.0], "delay_s": [1.1, 0.8, 1.5, 0.0],
                         "fast_azimuth_err_deg": [5.0, 8.0, 10.0, 6.0], "delay_err_s": [0.1, 0.2, 0.15, 0.2],
                         "null": [False, False, False, True]})
    model, _ = field.fit_station(placed, data, {"thickness", "azimuth", "foliation"})
    c = splitting.to_geographic(sample.stiffness, splitting.placement(own))
    hand = 0.0
    for _, row in data.iterrows():
        pred = splitting.one_layer(c, sample.density_kg_m3, 90.0, row.baz_deg, row.incidence_deg)
        fast, delay = float(pred["fast_azimuth_deg"][0]), float(pred["delay_s"][0])
        if row.null:
            to_baz = abs((fast - row.baz_deg + 90) % 180 - 90)
            to_normal = abs((fast - row.baz_deg - 90 + 90) % 180 - 90)
            hand += (min(to_baz, to_normal) / row.fast_azimuth_err_deg) ** 2
        else:
            hand += (((row.fast_azimuth_deg - fast + 90) % 180 - 90) / row.fast_azimuth_err_deg) ** 2
            hand += ((row.delay_s - delay) / row.delay_err_s) ** 2
    assert model["chi_square"] == pytest.approx(hand, rel=1e-9)
    assert model["misfit"] == pytest.approx(hand / 4, rel=1e-9)
    assert model["degrees_of_freedom"] == 7                      # 3 x 2 terms + 1 null term, nothing fitted
    assert model["reduced_chi_square"] == pytest.approx(hand / 7, rel=1e-9)
    assert model["thickness_interval_km"] is None and model["lineation_azimuth_interval_deg"] is None


def test_azimuth_reported_as_an_axis_with_both_senses(sample):
    # Generated with the lineation trending 250: reported as the axis 70 (0-180), both senses given.
    data = synthetic_station(sample, azimuth=250.0, thickness=120.0, n=40, seed=3)
    model, _ = field.fit_station(sample, data, set())
    assert 0.0 <= model["lineation_azimuth_deg"] < 180.0
    assert abs(model["lineation_azimuth_deg"] - 70.0) < 5.0
    start, end = model["lineation_azimuth_interval_deg"]
    assert 0.0 <= start < 180.0 and 0.0 <= end < 180.0
    assert (model["lineation_azimuth_deg"] - start) % 180 <= (end - start) % 180    # the best axis inside
    first, second = model["lineation_senses"]
    assert abs((first["trend_deg"] - second["trend_deg"]) % 360 - 180) < 10       # two minima half a turn apart
    assert model["sense_chi_square_difference"] == pytest.approx(second["chi_square"] - first["chi_square"], abs=1e-3)
    assert model["sense_chi_square_difference"] >= 0


def test_vertical_rays_cannot_tell_the_senses_apart(sample):
    # Turning any tensor half a turn about a vertical ray leaves its splitting unchanged (the fast
    # polarisation is an axis; common practice): with vertical rays only, the senses tie exactly.
    data = synthetic_station(sample, azimuth=30.0, thickness=100.0).assign(incidence_deg=0.0)
    model, _ = field.fit_station(sample, data, set())
    assert model["sense_chi_square_difference"] < 1e-6
    assert model["sense_verdict"] == "undecided"


def test_an_oblique_fabric_decides_the_sense(sample):
    # A fabric tilted about Y has no two-fold axis along the vertical, so rays inclined 15-30 degrees
    # split differently for the two senses: with 60 precise measurements the true sense wins.
    t = np.radians(35.0)
    tilt = np.array([[np.cos(t), 0.0, np.sin(t)], [0.0, 1.0, 0.0], [-np.sin(t), 0.0, np.cos(t)]])
    oblique = field.SampleTensor("oblique", elastic.rotate_voigt(sample.stiffness, tilt), sample.density_kg_m3, None)
    data = synthetic_station(oblique, azimuth=200.0, thickness=100.0, n=60, seed=5)
    data["incidence_deg"] = np.random.default_rng(6).uniform(15, 30, len(data))
    c = splitting.to_geographic(oblique.stiffness, splitting.placement(field.attitude_field("horizontal", 200.0)))
    pred = splitting.one_layer(c, oblique.density_kg_m3, 100.0, data["baz_deg"], data["incidence_deg"])
    noise = np.random.default_rng(7)
    data["fast_azimuth_deg"] = (pred["fast_azimuth_deg"] + noise.normal(0, 4, len(data))) % 180
    data["delay_s"] = pred["delay_s"] + noise.normal(0, 0.08, len(data))
    model, _ = field.fit_station(oblique, data, set())
    assert model["sense_verdict"] == "decided"
    assert model["sense_chi_square_difference"] >= field.UNDECIDED_BELOW_DELTA_CHI_SQUARE
    assert abs((model["lineation_trend_deg"] - 200.0 + 180) % 360 - 180) < 10


def test_foliation_undecided_when_both_attitudes_split_alike():
    # A transversely isotropic medium with its axis along the lineation X (ice Ih, hexagonal:
    # Gammon et al. 1983 constants in the library) is unchanged by turns about X, which carry the
    # horizontal foliation into the vertical one: both attitudes predict the same splitting.
    ice = find_mineral("ice")
    c_along_x = elastic.rotate_voigt(ice.stiffness_gpa, np.array([[0.0, 0.0, 1.0], [0.0, 1.0, 0.0], [-1.0, 0.0, 0.0]]))
    layer = field.SampleTensor("ice", c_along_x, ice.density_kg_m3, None)
    data = synthetic_station(layer, azimuth=40.0, thickness=60.0)
    model, _ = field.fit_station(layer, data, set())
    assert model["foliation_chi_square_difference"] < 1e-6
    assert model["foliation_verdict"] == "undecided"


def test_foliation_decided_by_many_precise_measurements(sample):
    data = synthetic_station(sample, azimuth=120.0, thickness=150.0, n=80, seed=4)
    model, _ = field.fit_station(sample, data, set())
    assert model["foliation"] == "horizontal" and model["foliation_verdict"] == "decided"
    assert model["foliation_chi_square_difference"] >= field.UNDECIDED_BELOW_DELTA_CHI_SQUARE


def test_poor_fits_are_flagged(sample):
    good, _ = field.fit_station(sample, synthetic_station(sample, 70.0, 120.0), set())
    assert not good["poor_fit"] and not good["edge_of_range"] and good["poor_fit_reasons"] == []
    # a layer thicker than the searched 10-300 km: the best thickness sits on the edge
    thick, _ = field.fit_station(sample, synthetic_station(sample, 70.0, 450.0), set())
    assert thick["edge_of_range"] and thick["poor_fit"] and thick["thickness_km"] == 300.0
    assert any("edge of the searched range" in r for r in thick["poor_fit_reasons"])
    # residuals three times the stated errors: reduced chi-square about 9
    noisy = synthetic_station(sample, 70.0, 120.0).assign(fast_azimuth_err_deg=6.0 / 3, delay_err_s=0.1 / 3)
    bad, _ = field.fit_station(sample, noisy, set())
    assert bad["reduced_chi_square"] > field.POOR_FIT_REDUCED_CHI_SQUARE and bad["poor_fit"]
    assert any("reduced chi-square" in r for r in bad["poor_fit_reasons"])


def test_poor_fit_note_is_drawn():
    from fabric2seis.figures.field import plt, poor_fit_note
    fig = plt.figure()
    poor_fit_note(fig, {"poor_fit": True, "poor_fit_reasons": ["reduced chi-square 3.10 above 2"]})
    assert any("POOR FIT" in t.get_text() and "3.10" in t.get_text() for t in fig.texts)
    plt.close(fig)


def test_sample_uncertainty_widens_the_thickness_interval_in_quadrature(sample):
    # Thickness scales as 1 / (delay per km), so the sample's relative 1-sigma (95 % bootstrap
    # half-width / 1.96 / centre, normal approximation: common practice) times the thickness adds
    # in quadrature to each side; the 95 % interval takes 1.96 of it.
    data = synthetic_station(sample, azimuth=70.0, thickness=120.0)
    alone, _ = field.fit_station(sample, data, set())
    uncertain = field.SampleTensor("u", sample.stiffness, sample.density_kg_m3, None, (1.8, 2.2))
    model, _ = field.fit_station(uncertain, data, set())
    best = model["thickness_km"]
    sigma = best * 0.4 / (2 * 1.96) / 2.0
    assert model["thickness_sample_sigma_km"] == pytest.approx(sigma, abs=1e-3)
    low, high = alone["thickness_interval_km"]
    assert model["thickness_interval_measurements_only_km"] == pytest.approx([low, high], abs=1e-3)
    assert model["thickness_interval_km"] == pytest.approx(
        [best - np.hypot(best - low, sigma), best + np.hypot(high - best, sigma)], abs=2e-3)
    low95, high95 = alone["thickness_interval_95_km"]
    assert model["thickness_interval_95_km"] == pytest.approx(
        [best - np.hypot(best - low95, 1.96 * sigma), best + np.hypot(high95 - best, 1.96 * sigma)], abs=2e-3)


def test_fixing_parameters_uses_the_samples_own_settings(sample):
    data = synthetic_station(sample, azimuth=0.0, thickness=80.0)
    model, grid = field.fit_station(sample, data, {"thickness", "foliation"})
    assert model["thickness_km"] == 80.0 and model["foliation"] == "horizontal"
    assert grid["misfit"].shape == (1, 180, 1)


def test_command_writes_predictions_and_fits(tmp_path, sample):
    from fabric2seis.ingest.io.write import write_table
    q = fabric_orientations(OLIVINE, "olivine-A", 200, 15.0, seed=2)
    write_table(tmp_path / "s.csv", q, ["olivine"] * 200)
    (tmp_path / "s.yaml").write_text("bootstrap: {n: 0}\nfield: {foliation_strike_deg: 0, foliation_dip_deg: 0, "
                                     "lineation_pitch_deg: 30, layer_thickness_km: 100}\n")
    assert main(["sample", str(tmp_path / "s.csv"), "--out", str(tmp_path / "res")]) == 0
    synthetic_station(sample, 30.0, 100.0, n=12).drop(columns=["null"]).to_csv(tmp_path / "m.csv", index=False)
    assert main(["field", str(tmp_path / "res"), "--measurements", str(tmp_path / "m.csv"),
                 "--out", str(tmp_path / "f")]) == 0
    written = json.loads((tmp_path / "f" / "field_fit.json").read_text())
    fit = written["fits"]["s"]["SYN1"]
    assert {"thickness_km", "lineation_azimuth_deg", "foliation", "misfit"} <= set(fit)
    assert {"chi_square", "reduced_chi_square", "thickness_interval_km", "lineation_azimuth_interval_deg",
            "foliation_verdict", "sense_verdict", "edge_of_range", "poor_fit"} <= set(fit)
    assert "sum" in written["chi_square_definition"] and written["thresholds"]["undecided_below_delta_chi_square"] == 4
    assert fit["thickness_sample_sigma_km"] is None              # bootstrap n: 0, no sample interval
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
