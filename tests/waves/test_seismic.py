"""Seismic properties of aggregates against closed forms, Thomsen (1986) and brute-force searches."""

import json

import numpy as np
import pytest
from scipy.optimize import brentq

from fabric2seis import elastic, waves
from fabric2seis.elastic import conditions, decomposition
from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.synth import fabric_orientations, random_quaternions
from fabric2seis.waves import seismic

OLIVINE = find_mineral("olivine")


def ti_tensor(c11, c33, c44, c66, c13):
    """Transversely isotropic stiffness with its axis along 3 (Voigt, GPa)."""
    c = np.zeros((6, 6))
    c[0, 0] = c[1, 1] = c11
    c[2, 2] = c33
    c[0, 1] = c[1, 0] = c11 - 2 * c66
    c[0, 2] = c[2, 0] = c[1, 2] = c[2, 1] = c13
    c[3, 3] = c[4, 4] = c44
    c[5, 5] = c66
    return c


def thomsen_exact(c11, c33, c44, c66, c13, rho, theta):
    """Exact phase velocities of a TI medium at angle theta from its axis (Thomsen 1986, eqs. 10-13)."""
    vp0, vs0 = np.sqrt(1e3 * c33 / rho), np.sqrt(1e3 * c44 / rho)
    eps = (c11 - c33) / (2 * c33)
    gam = (c66 - c44) / (2 * c44)
    dstar = (2 * (c13 + c44) ** 2 - (c33 - c44) * (c11 + c33 - 2 * c44)) / (2 * c33 ** 2)
    r = 1 - vs0 ** 2 / vp0 ** 2
    s2, c2 = np.sin(theta) ** 2, np.cos(theta) ** 2
    big_d = 0.5 * r * (np.sqrt(1 + 4 * dstar * s2 * c2 / r ** 2 + 4 * (r + eps) * eps * s2 ** 2 / r ** 2) - 1)
    vp = vp0 * np.sqrt(1 + eps * s2 + big_d)
    vsv = vs0 * np.sqrt(1 + (vp0 / vs0) ** 2 * eps * s2 - (vp0 / vs0) ** 2 * big_d)
    vsh = vs0 * np.sqrt(1 + 2 * gam * s2)
    return vp, vsv, vsh


def test_random_aggregate_is_isotropic_with_hill_velocities():
    # Isotropic elasticity (common practice): Vp = sqrt((K + 4G/3)/rho), Vs = sqrt(G/rho) with the
    # Hill moduli. Bound on the anisotropy left by 20,000 random grains: the anisotropic part of
    # the mean falls as 1/sqrt(N) (test_elastic), about 0.3 % of the moduli here, so AVp and AVs
    # must stay below 1 %.
    q = random_quaternions(20000, np.random.default_rng(1))
    agg = seismic.aggregate([(OLIVINE, q, np.ones(20000))], {"olivine": 1.0}, "hill")
    grid = seismic.velocity_grid(agg.stiffness, agg.density_kg_m3, 3.0)
    s = seismic.seismic_summary(grid, "hill")
    assert s["avp_pct"] < 1.0 and s["avs_max_pct"] < 1.0
    k, g = elastic.hill_moduli(OLIVINE.stiffness_gpa)
    vp = np.sqrt(1e3 * (k + 4 * g / 3) / OLIVINE.density_kg_m3)
    vs = np.sqrt(1e3 * g / OLIVINE.density_kg_m3)
    assert np.allclose(grid.vp_km_s, vp, rtol=0.005) and np.allclose(grid.vs1_km_s, vs, rtol=0.005)


def test_transversely_isotropic_tensor_matches_thomsen_exact_velocities_and_decomposition():
    constants = (200.0, 150.0, 50.0, 70.0, 60.0)
    rho = 3000.0
    c = ti_tensor(*constants)
    from scipy.spatial.transform import Rotation
    rot = Rotation.from_euler("xyz", [30, 50, 10], degrees=True).as_matrix()
    cr = elastic.rotate_voigt(c, rot)
    axis = rot @ [0, 0, 1]
    dirs, _, _ = waves.hemisphere_grid(3.0)
    w = waves.plane_waves(cr, rho, dirs)
    theta = np.arccos(np.clip(np.abs(dirs @ axis), 0, 1))
    vp, vsv, vsh = thomsen_exact(*constants, rho, theta)
    assert np.allclose(w.vp_km_s, vp, rtol=1e-10)
    assert np.allclose(w.vs1_km_s, np.maximum(vsv, vsh), rtol=1e-10)
    assert np.allclose(w.vs2_km_s, np.minimum(vsv, vsh), rtol=1e-10)
    d = decomposition.decompose(cr)
    assert d["percent"]["isotropic"] + d["percent"]["hexagonal"] == pytest.approx(100.0, abs=1e-6)
    assert abs(abs(d["hexagonal_axis"] @ axis) - 1) < 1e-8
    t = decomposition.thomsen_parameters(d["parts"]["isotropic"] + d["parts"]["hexagonal"], d["hexagonal_axis"], rho)
    assert t["epsilon"] == pytest.approx((200 - 150) / 300) and t["gamma"] == pytest.approx(0.2)
    assert t["delta"] == pytest.approx(((60 + 50) ** 2 - 100 ** 2) / (2 * 150 * 100))


def test_decomposition_parts_are_orthogonal_and_sum_to_the_tensor():
    c = elastic.rotate_voigt(find_mineral("albite").stiffness_gpa, np.eye(3))
    d = decomposition.decompose(c)
    assert np.allclose(sum(d["parts"].values()), c, atol=1e-9)
    assert sum(d["percent"].values()) == pytest.approx(100.0, abs=1e-6)
    k = {n: elastic.voigt_to_kelvin(p) for n, p in d["parts"].items()}
    names = list(k)
    for i in range(len(names)):
        for j in range(i + 1, len(names)):
            assert abs(np.sum(k[names[i]] * k[names[j]])) < 1e-6 * np.sum(elastic.voigt_to_kelvin(c) ** 2)


def test_a_type_olivine_fast_p_along_lineation_and_fast_s_parallel_to_x_along_z():
    # Common practice: for A-type olivine the Vp maximum lies near the lineation and a shear wave
    # travelling normal to the foliation is polarised fast parallel to the flow direction.
    q = fabric_orientations(OLIVINE, "olivine-A", 2000, 15.0, seed=3)
    agg = seismic.aggregate([(OLIVINE, q, np.ones(2000))], {"olivine": 1.0}, "hill")
    s = seismic.seismic_summary(seismic.velocity_grid(agg.stiffness, agg.density_kg_m3), "hill")
    assert np.degrees(np.arccos(abs(s["vp_max_direction"][0]))) < 10
    z = seismic.splitting_along(agg.stiffness, agg.density_kg_m3)
    assert min(z["fast_polarisation_from_x_deg"], 180 - z["fast_polarisation_from_x_deg"]) < 10
    assert z["delay_s_per_100km"] > 0


def test_single_crystal_olivine_anisotropy_against_dense_brute_force():
    # An independent dense search: 400 x 200 directions in (azimuth, colatitude), Christoffel
    # solved direction by direction with numpy.linalg.eigh. For orientation (from the Abramson et
    # al. 1997 constants, common practice): 9.77 km/s along [100], 7.65 km/s along [010], about 24 % AVp.
    c, rho = OLIVINE.stiffness_gpa, OLIVINE.density_kg_m3
    s = seismic.seismic_summary(seismic.velocity_grid(c, rho, 1.0), "single crystal")
    az, col = np.meshgrid(np.linspace(0, np.pi, 400), np.linspace(0, np.pi / 2, 200))
    n = np.stack([np.sin(col) * np.cos(az), np.sin(col) * np.sin(az), np.cos(col)], -1).reshape(-1, 3)
    t = elastic.voigt_to_tensor(c)
    vp, avs = [], []
    for d in n:
        lam = np.linalg.eigvalsh(np.einsum("ijkl,j,l->ik", t, d, d))
        v = np.sqrt(1e3 * lam / rho)
        vp.append(v[2]); avs.append(200 * (v[1] - v[0]) / (v[1] + v[0]))
    vp = np.array(vp)
    avp = 200 * (vp.max() - vp.min()) / (vp.max() + vp.min())
    assert s["avp_pct"] == pytest.approx(avp, rel=0.005)
    assert s["avs_max_pct"] == pytest.approx(max(avs), rel=0.005)
    assert avp == pytest.approx(24.4, abs=0.6)


def test_olivine_moduli_follow_the_published_pressure_fits():
    # Abramson et al. (1997): K = 129.4 + 4.29 P, G = 78 + 1.71 P - 0.027 P^2 (GPa), within 1 %.
    for p in (0.0, 2.0, 5.0, 7.5, 10.0):
        c, _ = conditions.at_conditions(OLIVINE, p, 25.0) if p else (OLIVINE.stiffness_gpa, 0)
        k, g = elastic.hill_moduli(c)
        assert k == pytest.approx(129.4 + 4.29 * p, rel=0.01)
        assert g == pytest.approx(78 + 1.71 * p - 0.027 * p ** 2, rel=0.01)


def test_density_at_3_gpa_follows_birch_murnaghan_solved_independently():
    # Third-order Birch-Murnaghan in volume form, P(V) = 3K/2 [(V0/V)^(7/3) - (V0/V)^(5/3)]
    # [1 + 3/4 (K' - 4)((V0/V)^(2/3) - 1)], solved here for V/V0 with K_T = 126.3 GPa, K' = 4.28
    # (Abramson et al. 1997).
    k, kp, p = 126.3, 4.28, 3.0

    def pressure(v):
        f = 1 / v
        return 1.5 * k * (f ** (7 / 3) - f ** (5 / 3)) * (1 + 0.75 * (kp - 4) * (f ** (2 / 3) - 1))
    v = brentq(lambda v: pressure(v) - p, 0.7, 1.0)
    _, rho = conditions.at_conditions(OLIVINE, p, 25.0)
    assert rho == pytest.approx(3355.0 / v, rel=1e-9)


def test_missing_derivatives_are_refused_unless_allowed():
    from fabric2seis.errors import InputError
    with pytest.raises(InputError, match="'pyrope' has no pressure derivatives"):
        conditions.at_conditions(find_mineral("pyrope"), 2.0, 25.0)
    c, rho = conditions.at_conditions(find_mineral("pyrope"), 2.0, 25.0, allow_ambient=True)
    assert np.allclose(c, find_mineral("pyrope").stiffness_gpa) and rho > find_mineral("pyrope").density_kg_m3


def test_same_inputs_give_byte_identical_summary_and_stiffness(tmp_path):
    from fabric2seis.ingest.io.write import write_table
    from fabric2seis.pipeline import run_sample
    q = fabric_orientations(OLIVINE, "olivine-A", 300, 20.0, seed=1)
    f = tmp_path / "s.csv"
    write_table(f, q, ["olivine"] * 300)
    a, b = run_sample(f, out_dir=tmp_path / "a"), run_sample(f, out_dir=tmp_path / "b")
    for name in ("summary.json", "stiffness.json"):
        assert (a / name).read_bytes() == (b / name).read_bytes()
    s = json.loads((a / "summary.json").read_text())
    assert {"vp_max_km_s", "avp_pct", "avs_max_pct", "vs1_max_km_s", "vs2_min_km_s"} <= set(s["seismic"])
    st = json.loads((a / "stiffness.json").read_text())
    assert {"voigt", "reuss", "hill", "geometric", "density_kg_m3"} <= set(st)


def test_assumptions_under_non_ambient_conditions_are_stated():
    # "Results are never silently wrong": fallbacks are listed (fabric2seis.elastic.conditions.assumptions)
    notes = conditions.assumptions(find_mineral("pyrope"), 2.0, 800.0)
    assert any("no pressure derivatives" in n for n in notes)
    assert any("no equation of state" in n for n in notes)
    assert any("no temperature derivatives" in n for n in notes)
    assert conditions.assumptions(OLIVINE, 0.0, 25.0) == []
    assert any("from memory" in n for n in conditions.assumptions(OLIVINE, 0.0, 900.0))


def test_dauphine_average_also_applies_at_pressure():
    # CONVENTIONS.md: the Dauphine twins of quartz (a 180 degree turn about c) are averaged, which
    # removes c14 from the stiffness the Voigt average uses, whatever the conditions the constants
    # were brought to first (McSkimin et al. 1965 for c and dc/dP).
    quartz = find_mineral("quartz")
    q = random_quaternions(50, np.random.default_rng(1))
    agg = seismic.aggregate([(quartz, q, np.ones(50))], {"quartz": 1.0}, "hill", pressure_gpa=1.0)
    c = elastic.kelvin_to_voigt(agg.crystal_matrices["quartz"]["stiffness"])
    assert abs(c[0, 3]) < 1e-12 and c[0, 0] == pytest.approx(86.80 + 3.28, rel=1e-9)
    assert agg.twins == {"quartz": ["Dauphine"]}
    raw = seismic.aggregate([(quartz, q, np.ones(50))], {"quartz": 1.0}, "hill", pressure_gpa=1.0,
                            twin_average=False)
    assert raw.crystal_tensors["quartz"][0, 3] == pytest.approx(-18.04 + 1.93) and raw.twins == {}


def test_corrections_start_from_each_minerals_reference_conditions():
    # Gammon et al. (1983) measured ice Ih at -16 C (REFERENCE_VALUES.md): at -16 C its constants
    # stand as published, within 10 K of it they need no derivatives (this project's threshold,
    # conditions.NEGLIGIBLE_DT_C), and at 25 C, with no temperature derivatives in the library,
    # the sample is refused rather than given -16 C constants silently.
    from fabric2seis.errors import InputError

    ice = find_mineral("ice")
    assert ice.reference_temperature_c == -16.0
    c, rho = seismic.mineral_at_conditions(ice, 0.0, -16.0)
    assert c[0, 0] == pytest.approx(13.929) and conditions.assumptions(ice, 0.0, -16.0) == []
    c, _ = seismic.mineral_at_conditions(ice, 0.0, -10.0)
    assert c[0, 0] == pytest.approx(13.929)
    assert any("within 10 K" in n and "-16 C" in n for n in conditions.assumptions(ice, 0.0, -10.0))
    with pytest.raises(InputError, match="measured at -16 C"):
        seismic.mineral_at_conditions(ice, 0.0, 25.0)
    # olivine's temperature derivatives act on the offset from 25 C (its reference), as before
    c35, _ = seismic.mineral_at_conditions(OLIVINE, 0.0, 35.0)
    assert c35[0, 0] == pytest.approx(OLIVINE.stiffness_gpa[0, 0] + 10.0 * OLIVINE.dcij_dt_gpa_per_k[0, 0])
