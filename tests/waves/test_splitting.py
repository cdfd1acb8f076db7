"""Splitting predicted for a layer in the ground (placement, one layer)."""

import numpy as np
import pytest
from test_seismic import ti_tensor

from fabric2seis import elastic
from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.errors import InputError
from fabric2seis.synth import fabric_orientations
from fabric2seis.waves import seismic, splitting

OLIVINE = find_mineral("olivine")


def test_placement_of_a_dipping_foliation_and_pitched_lineation():
    # Right-hand rule (common practice): strike 90 (east), dip 30 to the south; pitch 90 is down-dip.
    r = splitting.placement({"foliation_strike_deg": 90, "foliation_dip_deg": 30, "lineation_pitch_deg": 90})
    x, z = r[:, 0], r[:, 2]
    assert np.allclose(x, [-np.cos(np.radians(30)), 0, np.sin(np.radians(30))], atol=1e-12)  # plunging south
    assert z[2] < 0 and abs(z @ x) < 1e-12                          # normal points up, orthogonal
    assert np.allclose(r.T @ r, np.eye(3)) and np.linalg.det(r) == pytest.approx(1)


def test_horizontal_axis_ti_layer_matches_thomsen_exact_values():
    # TI medium, symmetry axis horizontal along azimuth 30; a vertical ray is normal to the axis, so
    # (Thomsen 1986, exact, theta = 90 deg) Vsv = sqrt(C44/rho) polarised along the axis and
    # Vsh = sqrt(C66/rho) polarised across it. With C66 > C44 the fast azimuth is 30 + 90.
    c11, c33, c44, c66, c13, rho, thickness = 200.0, 150.0, 50.0, 70.0, 60.0, 3000.0, 100.0
    c = ti_tensor(c11, c33, c44, c66, c13)                         # axis along structural Z
    az = np.radians(30.0)
    axis = np.array([np.cos(az), np.sin(az), 0.0])
    e2 = np.array([0.0, 0.0, 1.0])
    e1 = np.cross(e2, axis)
    c_geo = elastic.rotate_voigt(c, np.column_stack([e1, e2, axis]))  # structural Z -> horizontal axis
    out = splitting.one_layer(c_geo, rho, thickness)
    vsv, vsh = np.sqrt(1e3 * c44 / rho), np.sqrt(1e3 * c66 / rho)
    assert out["fast_azimuth_deg"][0] == pytest.approx(120.0, abs=1e-6)
    assert out["delay_s"][0] == pytest.approx(thickness * (1 / vsv - 1 / vsh), rel=1e-6)


def test_a_type_layer_with_lineation_trending_045():
    # Common practice: vertical SKS through A-type olivine with a horizontal foliation is fast along
    # the lineation; the delay grows linearly with the layer thickness.
    q = fabric_orientations(OLIVINE, "olivine-A", 2000, 15.0, seed=3)
    agg = seismic.aggregate([(OLIVINE, q, np.ones(2000))], {"olivine": 1.0})
    field = {"foliation_strike_deg": 0, "foliation_dip_deg": 0, "lineation_trend_deg": 45,
             "lineation_plunge_deg": 0, "layer_thickness_km": 100}
    s, sweep = splitting.field_summary(agg.stiffness, agg.density_kg_m3, field)
    assert s["fast_azimuth_deg"] == pytest.approx(45, abs=5)
    c_geo = splitting.to_geographic(agg.stiffness, splitting.placement(field))
    d100 = splitting.one_layer(c_geo, agg.density_kg_m3, 100.0)["delay_s"][0]
    d250 = splitting.one_layer(c_geo, agg.density_kg_m3, 250.0)["delay_s"][0]
    assert d250 == pytest.approx(2.5 * d100, rel=1e-12)
    assert splitting.thickness_for_delay(c_geo, agg.density_kg_m3, d100) == pytest.approx(100.0)
    assert len(sweep["back_azimuth_deg"]) == 72


def test_vertical_foliation_is_fast_along_its_strike_and_slow_to_split_along_a_vertical_lineation():
    # Common practice (e.g. Mainprice & Silver 1993, Silver 1996, from memory): a vertical foliation
    # with a horizontal lineation gives vertical SKS fast along the lineation (= the strike); the
    # same foliation with a vertical lineation sends the ray along olivine [100], where A-type
    # splitting is smallest, and its fast direction lies in the foliation (along the strike).
    q = fabric_orientations(OLIVINE, "olivine-A", 2000, 15.0, seed=4)
    agg = seismic.aggregate([(OLIVINE, q, np.ones(2000))], {"olivine": 1.0})
    flat = {"foliation_strike_deg": 30, "foliation_dip_deg": 90, "lineation_pitch_deg": 0, "layer_thickness_km": 100}
    steep = dict(flat, lineation_pitch_deg=90)
    s_flat, _ = splitting.field_summary(agg.stiffness, agg.density_kg_m3, flat)
    s_steep, _ = splitting.field_summary(agg.stiffness, agg.density_kg_m3, steep)
    assert s_flat["fast_azimuth_deg"] == pytest.approx(30, abs=5)
    assert s_steep["fast_azimuth_deg"] == pytest.approx(30, abs=10)
    assert s_steep["delay_s"] < 0.5 * s_flat["delay_s"]
    r = splitting.placement(steep)
    assert abs(r[2, 0]) == pytest.approx(1.0)                    # X (lineation) vertical
    assert s_steep["lineation_trend_deg"] == pytest.approx(120.0)  # reported as the dip direction


def test_lineation_out_of_the_foliation_plane_is_refused():
    with pytest.raises(InputError, match="out of the foliation plane"):
        splitting.placement({"foliation_strike_deg": 0, "foliation_dip_deg": 0,
                             "lineation_trend_deg": 45, "lineation_plunge_deg": 20}, "s.yaml")


def test_dip_outside_0_90_is_refused_by_the_settings_schema():
    from fabric2seis.settings import validate
    with pytest.raises(InputError, match="key field.foliation_dip_deg"):
        validate({"field": {"foliation_strike_deg": 10, "foliation_dip_deg": 95}}, "s.yaml")


def test_vertical_foliation_normal_points_to_strike_plus_90():
    # Right-hand rule (common practice): dip direction = strike + 90. A vertical foliation striking
    # north has its structural Z (normal) horizontal towards the east, strike + 90 (north-east-down).
    r = splitting.placement({"foliation_strike_deg": 0.0, "foliation_dip_deg": 90.0, "lineation_pitch_deg": 0.0})
    assert np.allclose(r[:, 2], [0.0, 1.0, 0.0], atol=1e-12) and np.allclose(r[:, 0], [1.0, 0.0, 0.0], atol=1e-12)
    r = splitting.placement({"foliation_strike_deg": 30.0, "foliation_dip_deg": 90.0, "lineation_pitch_deg": 0.0})
    assert np.allclose(r[:, 2], [np.cos(np.radians(120)), np.sin(np.radians(120)), 0.0], atol=1e-12)
