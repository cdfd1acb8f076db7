"""The public functions of fabric2seis.waves: early, specific errors for bad arguments; one splitting
formula shared by every caller; figures that draw what the stages computed."""

import numpy as np
import pandas as pd
import pytest
from test_seismic import ti_tensor

from fabric2seis import elastic
from fabric2seis.waves import field, layers, seismic, splitting, stack

RHO_KG_M3 = 3300.0
# Invented transversely isotropic layer, its axis horizontal along north (structural Z -> north).
C_STRUCTURAL = ti_tensor(200.0, 150.0, 50.0, 70.0, 60.0)
AXIS_NORTH = np.array([[0.0, 0.0, 1.0], [0.0, 1.0, 0.0], [-1.0, 0.0, 0.0]])   # columns X, Y, Z in NED
C_GEO = elastic.rotate_voigt(C_STRUCTURAL, AXIS_NORTH)


# --- splitting -----------------------------------------------------------------------------------

@pytest.mark.parametrize("incidence", [-5.0, 90.0, 95.0])
def test_one_layer_refuses_incidence_outside_0_to_90(incidence):
    with pytest.raises(ValueError, match="incidence_deg must lie in"):
        splitting.one_layer(C_GEO, RHO_KG_M3, 100.0, 30.0, incidence)


def test_ray_direction_refuses_incidence_beyond_90():
    with pytest.raises(ValueError, match="incidence_deg"):
        splitting.ray_direction([0.0, 10.0], [10.0, 120.0])


@pytest.mark.parametrize("thickness", [0.0, -10.0, float("nan")])
def test_one_layer_refuses_a_thickness_that_is_not_positive(thickness):
    with pytest.raises(ValueError, match="thickness_km must be"):
        splitting.one_layer(C_GEO, RHO_KG_M3, thickness)


def test_rays_of_mismatched_lengths_are_refused():
    with pytest.raises(ValueError, match=r"back_azimuth_deg \(shape \(3,\)\) and incidence_deg \(shape \(2,\)\)"):
        splitting.one_layer(C_GEO, RHO_KG_M3, 100.0, [0.0, 90.0, 180.0], [5.0, 10.0])
    with pytest.raises(ValueError, match="same length"):
        field.predict_many([C_GEO], RHO_KG_M3, [0.0, 90.0, 180.0], [5.0, 10.0])


def test_non_orthogonal_rotation_is_refused():
    sheared = np.eye(3)
    sheared[0, 1] = 0.2
    with pytest.raises(ValueError, match="not orthogonal"):
        splitting.to_geographic(C_STRUCTURAL, sheared)
    with pytest.raises(ValueError, match=r"\(3, 3\) matrix"):
        splitting.to_geographic(C_STRUCTURAL, np.eye(2))
    with pytest.raises(ValueError, match=r"\(6, 6\) Voigt matrix"):
        splitting.to_geographic(np.eye(3), np.eye(3))


def test_ray_splitting_refuses_bad_rays_and_paths():
    with pytest.raises(ValueError, match=r"\(N, 3\)"):
        splitting.ray_splitting(C_GEO, RHO_KG_M3, np.ones((4, 2)))
    with pytest.raises(ValueError, match="zero vector"):
        splitting.ray_splitting(C_GEO, RHO_KG_M3, np.zeros((1, 3)))
    with pytest.raises(ValueError, match="one per ray"):
        splitting.ray_splitting(C_GEO, RHO_KG_M3, np.eye(3), path_km=[1.0, 2.0])
    with pytest.raises(ValueError, match="path_km must be positive"):
        splitting.ray_splitting(C_GEO, RHO_KG_M3, np.eye(3), path_km=-1.0)


def test_thickness_for_delay_refuses_a_negative_delay():
    with pytest.raises(ValueError, match="delay_s must not be negative"):
        splitting.thickness_for_delay(C_GEO, RHO_KG_M3, -0.5)


def test_field_summary_refuses_a_zero_step():
    with pytest.raises(ValueError, match="step_deg must be positive"):
        splitting.field_summary(C_STRUCTURAL, RHO_KG_M3, {"foliation_strike_deg": 0, "foliation_dip_deg": 0,
                                                          "lineation_pitch_deg": 0}, step_deg=0.0)


def test_axial_difference_wraps_to_plus_minus_90():
    # Fast azimuths are axes (CONVENTIONS.md, common practice): 170 and 10 degrees are 20 apart.
    assert splitting.axial_difference(170.0, 10.0) == pytest.approx(-20.0)
    assert splitting.axial_difference(10.0, 170.0) == pytest.approx(20.0)
    assert splitting.axial_difference(0.0, 180.0) == pytest.approx(0.0)


# --- one formula ---------------------------------------------------------------------------------

def test_splitting_along_and_one_layer_agree_for_the_same_ray():
    # A vertical ray through a layer whose structural frame is north-east-down (X north, Y east):
    # the angle from X towards Y is the fast azimuth from north, and the path equals the
    # thickness. For this TI medium with its axis horizontal (Thomsen 1986, exact at 90 degrees
    # from the axis) the fast shear wave is polarised across the axis, along east (90 degrees).
    along = seismic.splitting_along(C_GEO, RHO_KG_M3, direction=(0.0, 0.0, 1.0), reference=(1.0, 0.0, 0.0))
    one = splitting.one_layer(C_GEO, RHO_KG_M3, 100.0)
    assert along["fast_polarisation_from_x_deg"] == pytest.approx(one["fast_azimuth_deg"][0], abs=1e-4)
    assert along["fast_polarisation_from_x_deg"] == pytest.approx(90.0, abs=1e-6)
    assert along["delay_s_per_100km"] == pytest.approx(one["delay_s"][0], abs=1e-6)
    vsv, vsh = np.sqrt(1e3 * 50.0 / RHO_KG_M3), np.sqrt(1e3 * 70.0 / RHO_KG_M3)
    assert one["delay_s"][0] == pytest.approx(100.0 * (1 / vsv - 1 / vsh), rel=1e-9)


def test_splitting_along_refuses_a_reference_along_the_ray_and_a_zero_direction():
    with pytest.raises(ValueError, match="parallel to direction"):
        seismic.splitting_along(C_GEO, RHO_KG_M3, direction=(0.0, 0.0, 1.0), reference=(0.0, 0.0, -2.0))
    with pytest.raises(ValueError, match="non-zero vector"):
        seismic.splitting_along(C_GEO, RHO_KG_M3, direction=(0.0, 0.0, 0.0))
    with pytest.raises(ValueError, match="thickness_km must be positive"):
        seismic.splitting_along(C_GEO, RHO_KG_M3, thickness_km=0.0)


def test_inclined_path_is_thickness_over_cosine_of_incidence():
    # CONVENTIONS.md (common practice): the path through a layer of thickness L at incidence i is
    # L / cos(i); one_layer and the kernel with that path give the same delay.
    inc = 30.0
    one = splitting.one_layer(C_GEO, RHO_KG_M3, 100.0, 45.0, inc)
    ray = splitting.ray_direction(45.0, inc)[None]
    kernel = splitting.ray_splitting(C_GEO, RHO_KG_M3, ray, 100.0 / np.cos(np.radians(inc)))
    assert one["delay_s"][0] == pytest.approx(kernel["delay_s"][0], rel=1e-12)
    assert one["fast_azimuth_deg"][0] == pytest.approx(kernel["fast_azimuth_deg"][0], abs=1e-9)


# --- field ---------------------------------------------------------------------------------------

def _station(n=6):
    return pd.DataFrame({"station": "X", "baz_deg": np.linspace(0, 300, n), "incidence_deg": 10.0,
                         "fast_azimuth_deg": 90.0, "delay_s": 1.0, "fast_azimuth_err_deg": 10.0,
                         "delay_err_s": 0.2, "null": False})


def test_fit_station_refuses_bad_arguments():
    sample = field.SampleTensor("s", C_STRUCTURAL, RHO_KG_M3, None)
    with pytest.raises(ValueError, match="fixed takes"):
        field.fit_station(sample, _station(), {"depth"})
    with pytest.raises(ValueError, match="own field settings"):
        field.fit_station(sample, _station(), {"thickness"})
    with pytest.raises(ValueError, match="no measurements"):
        field.fit_station(sample, _station().iloc[:0], set())
    with pytest.raises(ValueError, match="lacks the column"):
        field.fit_station(sample, _station().drop(columns=["null"]), set())
    with pytest.raises(ValueError, match="azimuth_step_deg must be positive"):
        field.fit_station(sample, _station(), set(), azimuth_step_deg=0.0)
    with pytest.raises(ValueError, match="thicknesses_km"):
        field.fit_station(sample, _station(), set(), thicknesses_km=[10.0, -5.0])
    with pytest.raises(ValueError, match="attitude must be one of"):
        field.attitude_field("dipping", 10.0)


def test_field_fit_carries_the_curves_and_its_figures_solve_nothing(tmp_path, monkeypatch):
    sample = field.SampleTensor("s", C_STRUCTURAL, RHO_KG_M3, None)
    fit = field.fit_field([sample], _station(8), set(), "m.csv")
    one = fit.stations[0]
    assert len(one.curve_back_azimuth_deg) == 180 and one.curve_fast_azimuth_deg.shape == (180,)
    assert one.file_stem == "s_X" and list(fit.fits) == ["s"] and len(fit.predictions) == 8
    assert fit.record()["measurements"] == "m.csv"
    from fabric2seis.figures import field as figures

    def no_physics(*args, **kwargs):
        raise AssertionError("a figure solved the physics again")
    monkeypatch.setattr(splitting, "ray_splitting", no_physics)
    monkeypatch.setattr(splitting, "one_layer", no_physics)
    figures.data_and_predictions(tmp_path / "a", one)
    figures.misfit_surface(tmp_path / "b", one)
    assert (tmp_path / "a.png").is_file() and (tmp_path / "b.png").is_file()


# --- layers and stacks ---------------------------------------------------------------------------

def test_layers_refuse_mismatched_or_bad_arguments():
    with pytest.raises(ValueError, match="period_s must be positive"):
        layers.apparent_splitting([30.0], [1.0], 0.0, period_s=0.0)
    with pytest.raises(ValueError, match="same shape"):
        layers.apparent_splitting([30.0, 60.0], [1.0], 0.0)
    with pytest.raises(ValueError, match="do not match"):
        layers.apparent_splitting(np.zeros((2, 3)), np.ones((2, 3)), np.zeros(4))
    with pytest.raises(ValueError, match="must not be negative"):
        layers.apparent_splitting([30.0], [-1.0], 0.0)
    with pytest.raises(ValueError, match=r"\(L, 4\)"):
        layers.synthetic_records(np.zeros((2, 3)), np.ones((2, 3)), np.zeros(4))
    with pytest.raises(ValueError, match="same shape"):
        layers.measure_splitting(np.zeros((2, 64)), np.zeros((2, 32)), [0.0, 0.0])
    with pytest.raises(ValueError, match="one value per record"):
        layers.measure_splitting(np.zeros((2, 64)), np.zeros((2, 64)), [0.0, 10.0, 20.0])
    with pytest.raises(ValueError, match="step_deg must be positive"):
        layers.predicted_nulls([30.0], [1.0], step_deg=0.0)
    with pytest.raises(ValueError, match="non-empty list"):
        layers.layer_splitting([], [0.0], 10.0)
    with pytest.raises(ValueError, match="layer 0 needs"):
        layers.layer_splitting([{"fast_azimuth_deg": 30.0}], [0.0], 10.0)
    with pytest.raises(ValueError, match="incidence_deg"):
        layers.layer_splitting([{"fast_azimuth_deg": 30.0, "delay_s": 1.0}], [0.0], 95.0)
    with pytest.raises(ValueError, match="must broadcast"):
        layers.splitting_operators(np.zeros(3), np.zeros(2), 1.0)


def test_stack_sweep_carries_the_fine_curve_and_its_figure_solves_nothing(tmp_path, monkeypatch):
    # One layer: apparent splitting is the layer's own away from its nulls (Silver & Savage 1994);
    # its transverse energy fraction is sin^2(2 (phi - baz)) sin^2(pi dt / T) (Silver & Chan 1991),
    # and the curve is undefined where that is below the null threshold.
    plan = {"file": "s.yaml", "period_s": 10.0, "incidence_deg": 10.0, "back_azimuth_step_deg": 30.0,
            "layers": [{"kind": "splitting", "name": "one", "fast_azimuth_deg": 30.0, "delay_s": 1.0}]}
    sweep = stack.sweep_stack(plan)
    assert len(sweep.fine_back_azimuth_deg) == 720 and len(sweep.table) == 12
    defined = ~np.isnan(sweep.fine_delay_s)
    fraction = np.sin(np.radians(2 * (30.0 - sweep.fine_back_azimuth_deg))) ** 2 * np.sin(np.pi / 10.0) ** 2
    assert np.array_equal(defined, fraction >= layers.NULL_TRANSVERSE_FRACTION)
    assert np.allclose(sweep.fine_delay_s[defined], 1.0, atol=1e-6)
    assert sweep.record()["stack_file"] == "s.yaml" and "misfit" not in sweep.record()
    from fabric2seis.figures.stack import stack_figure

    def no_physics(*args, **kwargs):
        raise AssertionError("the figure solved the physics again")
    monkeypatch.setattr(layers, "apparent_splitting", no_physics)
    monkeypatch.setattr(layers, "layer_splitting", no_physics)
    stack_figure(tmp_path / "st", sweep)
    assert (tmp_path / "st.png").is_file()


def test_sweep_stack_refuses_an_unchecked_stack():
    with pytest.raises(ValueError, match="checked stack"):
        stack.sweep_stack({"layers": []})
