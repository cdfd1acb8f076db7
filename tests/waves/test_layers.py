"""Several layers: apparent splitting (analytic and from synthetic waveforms), nulls, `field --stack`."""

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from fabric2seis.cli import main
from fabric2seis.waves import layers

BAZ = np.arange(0.0, 360.0, 5.0)
TWO_LAYER_MODELS = [  # (fast1, delay1, fast2, delay2), bottom layer first; invented for the tests
    (30.0, 1.0, 80.0, 1.0), (0.0, 1.5, 45.0, 0.7), (120.0, 0.6, 20.0, 1.2), (60.0, 1.0, 100.0, 0.5),
    (10.0, 1.2, 140.0, 0.8)]


def constant(values, n=len(BAZ)):  # noqa: B008 -- BAZ is a module constant; its length is fixed at import
    """Layer parameters (L,) repeated for every back-azimuth: (L, n)."""
    return np.asarray(values, float)[:, None] * np.ones((1, n))


def axial(a, b):
    return np.abs((np.asarray(a) - np.asarray(b) + 90.0) % 180.0 - 90.0)


def measured(fast, delay, baz=BAZ, period_s=layers.DEFAULT_PERIOD_S):
    north, east = layers.synthetic_records(fast, delay, baz, period_s)
    return layers.measure_splitting(north, east, baz, max_delay_s=period_s / 2)


def test_one_layer_operator_is_rotation_phase_shift_and_back():
    # Silver & Savage 1994: rotate to the fast/slow frame, advance fast by dt/2, delay slow by dt/2,
    # rotate back (numpy's Fourier sign: a delay tau is exp(-i w tau)). Built here with explicit matrices.
    phi, dt, w = 37.0, 1.3, 2 * np.pi / 8.0
    r = np.radians(phi)
    rot = np.array([[np.cos(r), np.sin(r)], [-np.sin(r), np.cos(r)]])      # (N, E) -> (fast, slow)
    shift = np.diag([np.exp(1j * w * dt / 2), np.exp(-1j * w * dt / 2)])
    expected = rot.T @ shift @ rot
    assert np.allclose(layers.splitting_operators(phi, dt, w), expected, atol=1e-14)
    g = layers.stack_operator(constant([phi, 100.0], 1), constant([dt, 0.4], 1), w)[0]
    assert np.allclose(g.conj().T @ g, np.eye(2), atol=1e-13)            # unitary: energy is kept


def test_single_layer_is_recovered_exactly_away_from_its_nulls():
    # Silver & Savage 1994: one layer's apparent splitting is its own at every polarisation that is
    # neither parallel nor perpendicular to its fast direction (there the wave is not split).
    for phi, dt in [(30.0, 1.2), (151.0, 0.4), (88.0, 2.0)]:
        app = layers.apparent_splitting(constant([phi]), constant([dt]), BAZ)
        away = axial(BAZ, phi) % 90 > 1.0
        away &= 90 - axial(BAZ, phi) % 90 > 1.0
        assert np.all(axial(app["fast_azimuth_deg"][away], phi) < 1e-8)
        assert np.allclose(app["delay_s"][away], dt, atol=1e-9)
        assert np.all(np.isnan(app["delay_s"][~away & (axial(BAZ, phi) % 90 == 0)]))
        m = measured(constant([phi]), constant([dt]))
        # the grid steps are 1 degree and 0.05 s, so within half a step (common practice)
        assert np.all(axial(m["fast_azimuth_deg"][away], phi) <= 0.5 + 1e-9)
        assert np.all(np.abs(m["delay_s"][away] - dt) <= 0.025 + 1e-9)


@pytest.mark.parametrize("model", TWO_LAYER_MODELS)
def test_closed_form_two_layer_expressions_match_the_operator_product(model):
    # Silver & Savage 1994, two-layer expressions for tan 2a' and tan theta' (from memory), against
    # the numerical product of the two 2x2 operators read by another route (module docstring).
    f1, d1, f2, d2 = model
    fine = np.arange(0.0, 360.0, 0.7)
    closed = layers.two_layer_closed_form(f1, d1, f2, d2, fine)
    product = layers.apparent_splitting(constant([f1, f2], len(fine)), constant([d1, d2], len(fine)), fine)
    ok = closed["transverse_fraction"] > 1e-6
    assert np.all(axial(closed["fast_azimuth_deg"][ok], product["fast_azimuth_deg"][ok]) < 1e-6)
    assert np.allclose(closed["delay_s"][ok], product["delay_s"][ok], atol=1e-8)
    assert np.allclose(closed["transverse_fraction"], product["transverse_fraction"], atol=1e-12)


@pytest.mark.parametrize("model", TWO_LAYER_MODELS)
def test_analytic_and_synthetic_waveform_measurement_agree_away_from_nulls(model):
    # Silver & Savage 1994: the dominant-period expressions predict what the transverse-
    # energy method (Silver & Chan 1991) measures, within 5 degrees and 0.1 s, away from nulls
    # (here: transverse energy at least 5 % of the total at the dominant period).
    f1, d1, f2, d2 = model
    fast, delay = constant([f1, f2]), constant([d1, d2])
    app = layers.apparent_splitting(fast, delay, BAZ)
    m = measured(fast, delay)
    away = app["transverse_fraction"] >= 0.05
    assert away.sum() >= 20
    assert np.all(axial(m["fast_azimuth_deg"][away], app["fast_azimuth_deg"][away]) < 5.0)
    assert np.all(np.abs(m["delay_s"][away] - app["delay_s"][away]) < 0.1)


def test_parallel_layers_add_their_delays():
    # Silver & Savage 1994: layers with the same fast direction act as one with the summed delay.
    fast, delay = constant([40.0, 40.0]), constant([0.6, 0.9])
    app = layers.apparent_splitting(fast, delay, BAZ)
    away = (axial(BAZ, 40.0) % 90 > 1) & (90 - axial(BAZ, 40.0) % 90 > 1)
    assert np.allclose(app["delay_s"][away], 1.5, atol=1e-9)
    assert np.all(axial(app["fast_azimuth_deg"][away], 40.0) < 1e-8)
    m = measured(fast, delay)
    assert np.all(np.abs(m["delay_s"][away] - 1.5) <= 0.025 + 1e-9)


def test_perpendicular_layers_give_the_difference_with_the_stronger_fast_direction():
    # Silver & Savage 1994: perpendicular layers of unequal delay act as one layer with the
    # difference of the delays and the fast direction of the layer with the larger delay.
    for (f1, d1, f2, d2) in [(30.0, 1.4, 120.0, 0.5), (170.0, 0.3, 80.0, 1.1)]:
        strong, diff = (f1, d1 - d2) if d1 > d2 else (f2, d2 - d1)
        app = layers.apparent_splitting(constant([f1, f2]), constant([d1, d2]), BAZ)
        away = (axial(BAZ, f1) % 90 > 1) & (90 - axial(BAZ, f1) % 90 > 1)
        assert np.allclose(app["delay_s"][away], diff, atol=1e-9)
        assert np.all(axial(app["fast_azimuth_deg"][away], strong) < 1e-8)


@pytest.mark.parametrize("model", TWO_LAYER_MODELS)
def test_two_layer_apparent_splitting_repeats_every_90_degrees_of_back_azimuth(model):
    # Silver & Savage 1994: the apparent parameters of two layers have a 90-degree period in the
    # initial polarisation (and, for these models, no shorter one: they change over 90 degrees).
    f1, d1, f2, d2 = model
    p = np.arange(0.0, 90.0, 3.0)
    a = layers.apparent_splitting(constant([f1, f2], len(p)), constant([d1, d2], len(p)), p)
    for shift in (90.0, 180.0, 270.0):
        b = layers.apparent_splitting(constant([f1, f2], len(p)), constant([d1, d2], len(p)), p + shift)
        assert np.all(axial(a["fast_azimuth_deg"], b["fast_azimuth_deg"]) < 1e-7)
        assert np.allclose(a["delay_s"], b["delay_s"], atol=1e-9)
    assert np.ptp(a["delay_s"]) > 0.1
    m = measured(constant([f1, f2], 2 * len(p)), constant([d1, d2], 2 * len(p)), np.r_[p, p + 90.0])
    assert np.all(axial(m["fast_azimuth_deg"][:len(p)], m["fast_azimuth_deg"][len(p):]) <= 1.0 + 1e-9)
    assert np.allclose(m["delay_s"][:len(p)], m["delay_s"][len(p):], atol=0.05 + 1e-9)


def test_transverse_energy_grid_equals_a_direct_correction_of_the_records():
    # Silver & Chan 1991: correct the records by the inverse of a trial layer (rotate to its fast
    # and slow directions, advance the slow one by dt, rotate back) and sum the transverse energy;
    # done here trial by trial in the time domain with explicit FFT shifts.
    baz = np.array([20.0, 135.0])
    north, east = layers.synthetic_records(constant([15.0, 70.0], 2), constant([0.9, 0.6], 2), baz)
    fast_grid, delay_grid = np.array([0.0, 33.0, 101.0]), np.array([0.0, 0.45, 1.7])
    grid = layers.transverse_energy_grid(north, east, baz, fast_grid, delay_grid)
    w = 2 * np.pi * np.fft.rfftfreq(north.shape[1], layers.SAMPLING_S)
    for b in range(2):
        for i, phi in enumerate(fast_grid):
            for j, dt in enumerate(delay_grid):
                r = np.radians(phi)
                fast = north[b] * np.cos(r) + east[b] * np.sin(r)
                slow = -north[b] * np.sin(r) + east[b] * np.cos(r)
                slow = np.fft.irfft(np.fft.rfft(slow) * np.exp(1j * w * dt), north.shape[1])
                n_c, e_c = fast * np.cos(r) - slow * np.sin(r), fast * np.sin(r) + slow * np.cos(r)
                p = np.radians(baz[b])
                transverse = -n_c * np.sin(p) + e_c * np.cos(p)
                assert grid[b, i, j] == pytest.approx(np.sum(transverse ** 2), rel=1e-9, abs=1e-12)


def test_nulls_of_one_layer_are_at_its_fast_and_slow_directions():
    # Silver & Chan 1991 / common practice: a single layer gives nulls where the back-azimuth is
    # parallel or perpendicular to the fast direction.
    nulls = layers.predicted_nulls([33.0], [1.0])
    assert [n["back_azimuth_deg"] for n in nulls] == pytest.approx([33.0, 123.0, 213.0, 303.0], abs=0.051)


def test_predicted_nulls_of_two_layers_leave_little_transverse_energy_on_waveforms():
    # Silver & Savage 1994: two layers that are neither parallel nor perpendicular split every
    # polarisation a little; where the dominant-period transverse energy is least, a waveform keeps
    # its polarisation (checked here on the synthetic records) and the apparent fast direction is
    # close to the polarisation or its normal.
    nulls = layers.predicted_nulls([60.0, 100.0], [1.0, 0.5])
    assert len(nulls) == 4
    baz = np.array([n["back_azimuth_deg"] for n in nulls])
    assert np.allclose(np.diff(baz), 90.0, atol=0.11)
    away = (baz + 45.0) % 360
    north, east = layers.synthetic_records(constant([60.0, 100.0], 8), constant([1.0, 0.5], 8), np.r_[baz, away])
    m = layers.measure_splitting(north, east, np.r_[baz, away])
    assert np.all(m["transverse_fraction_before"][:4] < layers.NULL_TRANSVERSE_FRACTION)
    assert np.all(m["transverse_fraction_before"][4:] > 10 * layers.NULL_TRANSVERSE_FRACTION)
    assert all(n["fast_to_polarisation_deg"] < 5.0 for n in nulls)
    # two strong layers 45 degrees apart: c_p = sin th1 sin th2 never vanishes, so no nulls
    assert layers.predicted_nulls([0.0, 45.0], [1.5, 1.5]) == []


# --- fabric2seis field --stack ----------------------------------------------------------------

@pytest.fixture(scope="module")
def result_folder(tmp_path_factory):
    from fabric2seis.elastic.minerals import find_mineral
    from fabric2seis.ingest.io.write import write_table
    from fabric2seis.synth import fabric_orientations

    folder = tmp_path_factory.mktemp("stack")
    q = fabric_orientations(find_mineral("olivine"), "olivine-A", 200, 15.0, seed=2)
    write_table(folder / "s.csv", q, ["olivine"] * 200)
    (folder / "s.yaml").write_text("bootstrap: {n: 0}\nfield: {foliation_strike_deg: 0, foliation_dip_deg: 0, "
                                   "lineation_pitch_deg: 30, layer_thickness_km: 100}\n")
    assert main(["sample", str(folder / "s.csv"), "--out", str(folder / "res")]) == 0
    return folder


def write_stack(folder, text):
    path = folder / "stack.yaml"
    path.write_text(text)
    return path


def test_stack_command_writes_table_record_and_figure(result_folder, capsys):
    stack = write_stack(result_folder, "period_s: 10\nlayers:\n  - result: res\n    thickness_km: 70\n"
                                       "  - {fast_azimuth_deg: 100, delay_s: 0.6, name: upper}\n")
    out = result_folder / "out"
    assert main(["field", "--stack", str(stack), "--out", str(out)]) == 0
    printed = capsys.readouterr().out
    assert "caution" in printed and "no melt or aligned cracks" in printed      # the model's assumptions
    table = pd.read_csv(out / "stack_splitting.csv")
    record = json.loads((out / "stack.json").read_text())
    assert {p.name for p in out.iterdir()} == {"stack_splitting.csv", "stack.json", "stack_splitting.png",
                                               "stack_splitting.pdf", ".fabric2seis-results"}
    assert len(table) == 72 and record["settings"]["period_s"] == 10.0
    assert [layer["kind"] for layer in record["layers_bottom_to_top"]] == ["sample", "splitting"]
    assert record["layers_bottom_to_top"][0]["thickness_km"] == 70.0
    # The analytic columns from the per-row layer columns by the closed form (Silver & Savage 1994)
    closed = layers.two_layer_closed_form(table["layer1_fast_azimuth_deg"], table["layer1_delay_s"],
                                          table["layer2_fast_azimuth_deg"], table["layer2_delay_s"],
                                          table["back_azimuth_deg"], 10.0)
    defined = table["analytic_defined"].to_numpy(bool)
    assert np.array_equal(defined, closed["transverse_fraction"] >= layers.NULL_TRANSVERSE_FRACTION)
    assert np.all(axial(closed["fast_azimuth_deg"][defined], table["analytic_fast_azimuth_deg"][defined]) < 0.05)
    assert np.allclose(closed["delay_s"][defined], table["analytic_delay_s"][defined], atol=2e-3)
    assert table["analytic_delay_s"][~defined].isna().all()
    # An inclined ray through the sample layer: its splitting changes with back-azimuth
    assert np.ptp(table["layer1_delay_s"]) > 0.01 and np.ptp(table["layer2_delay_s"]) == 0
    away = table["analytic_transverse_fraction"] >= 0.05
    assert np.all(axial(table["waveform_fast_azimuth_deg"][away], table["analytic_fast_azimuth_deg"][away]) < 5)
    assert np.all(np.abs(table["waveform_delay_s"] - table["analytic_delay_s"])[away] < 0.1)
    for null in record["nulls"]:
        assert null["transverse_fraction"] < layers.NULL_TRANSVERSE_FRACTION


def test_stack_command_draws_and_compares_measurements(result_folder):
    stack = write_stack(result_folder, "layers:\n  - {fast_azimuth_deg: 20, delay_s: 0.8}\n"
                                       "  - {fast_azimuth_deg: 75, delay_s: 0.5}\n")
    pd.DataFrame({"station": ["A", "A", "B"], "baz_deg": [10.0, 80.0, 200.0], "fast_azimuth_deg": [30.0, 40.0, 50.0],
                  "delay_s": [1.0, 1.1, 0.9]}).to_csv(result_folder / "m.csv", index=False)
    out = result_folder / "out_m"
    assert main(["field", "--stack", str(stack), "--measurements", str(result_folder / "m.csv"),
                 "--out", str(out)]) == 0
    predictions = pd.read_csv(out / "stack_predictions.csv")
    record = json.loads((out / "stack.json").read_text())
    assert set(record["misfit"]) == {"A", "B"}
    expected = layers.two_layer_closed_form(20.0, 0.8, 75.0, 0.5, predictions["baz_deg"])
    assert np.allclose(predictions["predicted_delay_s"], expected["delay_s"], atol=1e-3)


def test_field_without_stack_still_needs_measurements(result_folder, capsys):
    assert main(["field", str(result_folder / "res")]) == 2
    assert "--measurements" in capsys.readouterr().err


def test_stack_takes_no_result_folders_on_the_command_line(result_folder, capsys):
    stack = write_stack(result_folder, "layers:\n  - {fast_azimuth_deg: 20, delay_s: 0.8}\n")
    assert main(["field", str(result_folder / "res"), "--stack", str(stack)]) == 2
    assert "give no RESULT_DIR" in capsys.readouterr().err


@pytest.mark.parametrize("text,expected", [
    ("period_s: 8\n", "key layers: missing key 'layers'"),
    ("layers: {fast_azimuth_deg: 10, delay_s: 1}\n", "key layers: layers must be a non-empty list"),
    ("layers:\n  - {fast_azimuth_deg: 10, delay_s: -1}\n", "key layers[0].delay_s: delay_s = -1 is out of range"),
    ("layers:\n  - {fast_azimuth_deg: 10, delay_s: 1}\n  - {fast_azimuth_deg: 400, delay_s: 1}\n",
     "key layers[1].fast_azimuth_deg: fast_azimuth_deg = 400 is out of range; it must be 0-360"),
    ("layers:\n  - {fast_azimuth_deg: 10}\n", "key layers[0].delay_s: missing key 'delay_s'"),
    ("layers:\n  - {fast_azimuth_deg: 10, delay_s: 1, dealy_s: 2}\n",
     "unknown key 'dealy_s' (did you mean 'delay_s'?)"),
    ("perod_s: 8\nlayers: []\n", "key perod_s: unknown key 'perod_s' (did you mean 'period_s'?)"),
    ("layers:\n  - {result: no_such_folder, thickness_km: 50}\n", "key layers[0].result: no results folder"),
    ("layers:\n  - {result: res, thickness_km: -5}\n", "key layers[0].thickness_km: thickness_km = -5 is out of range"),
    ("layers:\n  - result: res\n    field: {foliation_strike_deg: 0, foliation_dip_deg: 95, lineation_pitch_deg: 0}\n",
     "key layers[0].field.foliation_dip_deg: foliation dip 95.0 is outside 0-90"),
    ("layers:\n  - {fast_azimuth_deg: ten, delay_s: 1}\n", "fast_azimuth_deg = 'ten' is not a number"),
    ("- {fast_azimuth_deg: 10, delay_s: 1}\n", "the stack file must be a YAML mapping"),
    ("layers: [\n", "not valid YAML"),
])
def test_bad_stack_files_are_one_line_errors_with_exit_2_and_no_output(result_folder, capsys, text, expected):
    stack = write_stack(result_folder, text)
    out = result_folder / "out_bad"
    assert main(["field", "--stack", str(stack), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and str(stack) in err and expected in err
    assert not out.exists() and not list(result_folder.glob(".out_bad.partial-*"))


def test_bad_stack_file_from_the_shell_has_no_traceback(result_folder):
    stack = write_stack(result_folder, "layers: 3\n")
    env = {**os.environ, "PYTHONPATH": str(Path(__file__).resolve().parents[2])}
    out = subprocess.run([sys.executable, "-m", "fabric2seis", "field", "--stack", str(stack)],
                         capture_output=True, text=True, cwd=result_folder, env=env)
    assert out.returncode == 2 and out.stderr.count("\n") == 1 and "Traceback" not in out.stderr
    assert not (result_folder / "results").exists()


def test_apparent_splitting_below_the_null_threshold_is_reported_undefined(result_folder):
    # One layer (fast 30 degrees, 1 s) seen at a 10 s period: the transverse energy fraction is
    # sin^2(2 (phi - baz)) sin^2(pi dt / T) (Silver & Chan 1991), below 1 % within about 5 degrees of
    # the fast and slow directions. A station records a null there, so the stack table and its
    # predictions give no fast azimuth or delay (empty), never a number.
    stack = write_stack(result_folder, "period_s: 10\nlayers:\n  - {fast_azimuth_deg: 30, delay_s: 1.0}\n")
    pd.DataFrame({"station": ["A", "A"], "baz_deg": [30.0, 75.0], "fast_azimuth_deg": [30.0, 30.0],
                  "delay_s": [1.0, 1.0]}).to_csv(result_folder / "m1.csv", index=False)
    out = result_folder / "out_null"
    assert main(["field", "--stack", str(stack), "--measurements", str(result_folder / "m1.csv"),
                 "--out", str(out)]) == 0
    table = pd.read_csv(out / "stack_splitting.csv").set_index("back_azimuth_deg")
    fraction = np.sin(np.radians(2 * (30.0 - table.index))) ** 2 * np.sin(np.pi * 1.0 / 10.0) ** 2
    below = fraction < layers.NULL_TRANSVERSE_FRACTION
    assert below.sum() >= 8 and np.array_equal(~below, table["analytic_defined"].to_numpy(bool))
    for column in ("analytic_delay_s", "analytic_fast_azimuth_deg", "waveform_delay_s"):
        assert table[column][below].isna().all(), column
    assert np.allclose(table["analytic_delay_s"][~below], 1.0, atol=1e-6)
    predictions = pd.read_csv(out / "stack_predictions.csv")
    assert predictions["predicted_null"].tolist() == [True, False]
    assert np.isnan(predictions["predicted_delay_s"][0]) or predictions["predicted_delay_s"][0] == 0
