"""Invariants of the physics as property tests (hypothesis): what no frame, order or label may change,
and the bounds every result keeps.

Random aggregates of every library mineral -- ideal fabrics of random strength (``synth``), random
orientations, random weights and fractions -- drawn from seeds that hypothesis chooses:

* turning the orientations and the sample frame together changes no scalar: the aggregate tensor
  turns by the same rotation, and its bulk and shear moduli, its velocities along turned
  directions (hence their extremes and AVs), J, M, pfJ and the orientation-tensor eigenvalues stay;
* the order of the grains changes nothing, nor does it change what one bootstrap resample gives
  (a resample is a count per grain: permuted with the grains, it gives the same values; the same
  seed with the grains in another order draws other resamples, so intervals then differ by
  sampling noise and are not meant to agree; and above ``fabric.M_INDEX_PAIRS`` pairs M draws its
  pairs by index, so there it depends on the order too);
* replacing orientations by symmetry-equivalent ones (the mineral's point group,
  ``Mineral.symmetry``) changes no tensor, J, M, pole density or eigenvalue;
* Voigt >= Hill >= Reuss in strain energy for every strain; the geometric mean lies between them in
  the mean strain energy over all strain directions and in the determinant, though not for every
  single strain (a two-grain counterexample is shown);
* J >= 1, 0 <= M <= 1, pfJ >= 1, orientation-tensor eigenvalues in [0, 1] summing to 1,
  Vp >= Vs1 >= Vs2 > 0 and AVs >= 0 everywhere.

Runs are deterministic (``derandomize=True``, no example database). ``INVARIANTS`` names the
properties checked (counted by the README's testing section).
"""

from __future__ import annotations

import numpy as np
import scipy.linalg
from conftest import random_rotation_matrices
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fabric2seis import elastic, fabric, uncertainty, waves
from fabric2seis.elastic.minerals import crystal_direction, load_library
from fabric2seis.orientations import conjugate, from_matrices, multiply, proper_symmetry_quaternions
from fabric2seis.synth import IDEAL_FABRICS, fabric_orientations
from fabric2seis.waves import seismic

LIBRARY = load_library()
MINERALS = sorted(LIBRARY)
HALFWIDTH_DEG = 10.0


def invariant(max_examples: int):
    """hypothesis settings of every property here: deterministic, no example database, no deadline."""
    return settings(max_examples=max_examples, derandomize=True, database=None, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow])


@st.composite
def fabrics(draw, max_grains: int = 120, min_grains: int = 2):
    """(mineral, orix quaternions (N, 4), weights (N,)): an ideal fabric of random strength, or random."""
    mineral = LIBRARY[draw(st.sampled_from(MINERALS))]
    n = draw(st.integers(min_grains, max_grains))
    kind = draw(st.sampled_from(["random", *IDEAL_FABRICS]))
    scatter_deg = draw(st.floats(1.0, 90.0))
    seed = draw(st.integers(0, 2**32 - 1))
    quat = fabric_orientations(mineral, kind, n, scatter_deg, seed)
    weights = np.random.default_rng(seed).uniform(0.1, 3.0, n) if draw(st.booleans()) else np.ones(n)
    return mineral, quat, weights


def aggregate_of(mineral, quat, weights) -> seismic.Aggregate:
    """The aggregate of one phase at the conditions its constants were measured at."""
    return seismic.aggregate([(mineral, quat, weights)], {mineral.name: 1.0}, "hill",
                             pressure_gpa=mineral.reference_pressure_gpa,
                             temperature_c=mineral.reference_temperature_c)


def scalars(mineral, quat, weights, directions):
    """Everything that must not depend on the frame, order or labels, computed by the library."""
    agg = aggregate_of(mineral, quat, weights)
    out = {"K_G_hill": np.array(elastic.hill_moduli(agg.stiffness)),
           "K_G_voigt": np.array(elastic.voigt_moduli(agg.tensors["voigt"])),
           "K_G_reuss": np.array(elastic.reuss_moduli(agg.tensors["reuss"])),
           "J": fabric.j_index(quat, weights, mineral.symmetry, HALFWIDTH_DEG),
           "M": fabric.m_index(quat, mineral.symmetry)}
    w = waves.plane_waves(agg.stiffness, agg.density_kg_m3, directions)
    out.update(vp=w.vp_km_s, vs1=w.vs1_km_s, vs2=w.vs2_km_s, avs=w.avs_pct)
    for label in fabric.default_poles(mineral):
        poles = fabric.pole_vectors(quat, crystal_direction(mineral, label), mineral.symmetry)
        out[f"pfJ {label}"] = fabric.pf_j_pairs(poles, weights, HALFWIDTH_DEG)
        out[f"eigenvalues {label}"] = fabric.eigen_analysis(fabric.orientation_tensor(poles, weights))["eigenvalues"]
    return agg, out


def assert_same(a: dict, b: dict, rtol: float) -> None:
    for key in a:
        assert np.allclose(a[key], b[key], rtol=rtol, atol=rtol * np.max(np.abs(a[key]))), (key, a[key], b[key])


def full_tensor_rotation(c, r):
    """The transformation law of a fourth-rank tensor, c'_ijkl = r_ia r_jb r_kc r_ld c_abcd (Nye 1957,
    Physical Properties of Crystals), by direct contraction, independently of the package."""
    t = elastic.voigt_to_tensor(c)
    return elastic.tensor_to_voigt(np.einsum("ia,jb,kc,ld,abcd->ijkl", r, r, r, r, t))


# --- the frame -------------------------------------------------------------------------------------------


@invariant(60)
@given(fabric_set=fabrics(), rotation_seed=st.integers(0, 2**32 - 1))
def test_turning_orientations_and_frame_together_changes_no_scalar(fabric_set, rotation_seed):
    # A scalar of a tensor or of a set of orientations does not depend on the frame it is written
    # in (common practice; Nye 1957). Turning the sample frame by R makes every orientation
    # g -> g R^T (v_crystal = g v_sample, CONVENTIONS.md); the aggregate turns by R, by the
    # transformation law, and the Christoffel equation along R n gives the velocities along n.
    mineral, quat, weights = fabric_set
    r = random_rotation_matrices(1, rotation_seed)[0]
    turned = multiply(quat, conjugate(from_matrices(r[None])[0]))
    directions = waves.hemisphere_grid(5.0)[0]
    agg, before = scalars(mineral, quat, weights, directions)
    agg_turned, after = scalars(mineral, turned, weights, directions @ r.T)
    for name in elastic.AVERAGES:
        expected = full_tensor_rotation(agg.tensors[name], r)
        assert np.allclose(agg_turned.tensors[name], expected, rtol=1e-9, atol=1e-9 * np.abs(expected).max()), name
    assert_same(before, after, rtol=1e-8)
    # hence the extremes over every direction, wherever they lie
    assert np.isclose(before["vp"].max(), after["vp"].max(), rtol=1e-12)
    assert np.isclose(before["avs"].max(), after["avs"].max(), rtol=1e-9, atol=1e-9)


# --- the order of the grains ------------------------------------------------------------------------------


@invariant(40)
@given(fabric_set=fabrics(max_grains=60, min_grains=uncertainty.MIN_GRAINS_FOR_FABRIC),
       order_seed=st.integers(0, 2**32 - 1))
def test_the_order_of_the_grains_changes_nothing(fabric_set, order_seed):
    # Weighted means and pair sums are sums over grains, which do not depend on their order
    # (common practice). M takes every pair of grains here (N (N - 1) / 2 below M_INDEX_PAIRS). As
    # many grains as the pipeline bootstraps at least (MIN_GRAINS_FOR_FABRIC).
    mineral, quat, weights = fabric_set
    order = np.random.default_rng(order_seed).permutation(len(quat))
    directions = waves.hemisphere_grid(5.0)[0]
    agg, before = scalars(mineral, quat, weights, directions)
    agg_shuffled, after = scalars(mineral, quat[order], weights[order], directions)
    for name in elastic.AVERAGES:
        assert np.allclose(agg.tensors[name], agg_shuffled.tensors[name], rtol=1e-12, atol=1e-10), name
    assert_same(before, after, rtol=1e-9)
    cells = fabric.hemisphere_cells(5.0)[0]
    for label in fabric.default_poles(mineral):
        h = crystal_direction(mineral, label)
        a = fabric.pole_density(cells, fabric.pole_vectors(quat, h, mineral.symmetry), weights, HALFWIDTH_DEG)
        b = fabric.pole_density(cells, fabric.pole_vectors(quat[order], h, mineral.symmetry), weights[order],
                                HALFWIDTH_DEG)
        assert np.allclose(a, b, rtol=1e-10, atol=1e-12), label
    # one bootstrap resample is a draw count per grain (Efron & Tibshirani 1993): the same counts,
    # permuted with the grains, give the same resampled values
    counts = uncertainty.resample_counts(len(quat), 12, np.random.default_rng(order_seed))
    grains = [(mineral, quat, weights)]
    shuffled = [(mineral, quat[order], weights[order])]
    fractions = {mineral.name: 1.0}
    a_seismic = uncertainty.seismic_bootstrap(grains, fractions, "hill", agg.density_kg_m3, {mineral.name: counts})
    b_seismic = uncertainty.seismic_bootstrap(shuffled, fractions, "hill", agg.density_kg_m3,
                                              {mineral.name: counts[:, order]})
    for key in a_seismic:      # single-precision sums in the bootstrap (uncertainty._resampled_means)
        assert np.allclose(a_seismic[key], b_seismic[key], rtol=1e-5, atol=1e-6), key
    a_fabric = uncertainty.fabric_bootstrap(mineral, quat, weights, counts, HALFWIDTH_DEG, np.random.default_rng(0))
    b_fabric = uncertainty.fabric_bootstrap(mineral, quat[order], weights[order], counts[:, order], HALFWIDTH_DEG,
                                            np.random.default_rng(0))
    for key in a_fabric:
        assert np.allclose(a_fabric[key], b_fabric[key], rtol=1e-9, atol=1e-12, equal_nan=True), key


# --- symmetry-equivalent orientations ---------------------------------------------------------------------


@invariant(80)
@given(fabric_set=fabrics(), pick_seed=st.integers(0, 2**32 - 1))
def test_symmetry_equivalent_orientations_change_nothing(fabric_set, pick_seed):
    # Neumann's principle: a crystal's properties are invariant under its point group (Nye 1957);
    # an orientation and s * g for a proper rotation s of the group describe the same crystal
    # (crystal symmetry acts on the crystal side, v_crystal = g v_sample; orix's convention).
    mineral, quat, weights = fabric_set
    ops = proper_symmetry_quaternions(mineral.symmetry)
    relabelled = multiply(ops[np.random.default_rng(pick_seed).integers(0, len(ops), len(quat))], quat)
    directions = waves.hemisphere_grid(5.0)[0]
    agg, before = scalars(mineral, quat, weights, directions)
    agg_relabelled, after = scalars(mineral, relabelled, weights, directions)
    for name in elastic.AVERAGES:
        a, b = agg.tensors[name], agg_relabelled.tensors[name]
        assert np.allclose(a, b, rtol=1e-10, atol=1e-10 * np.abs(a).max()), name
    assert_same(before, after, rtol=1e-9)
    cells = fabric.hemisphere_cells(5.0)[0]
    for label in fabric.default_poles(mineral):
        h = crystal_direction(mineral, label)
        a = fabric.pole_density(cells, fabric.pole_vectors(quat, h, mineral.symmetry), weights, HALFWIDTH_DEG)
        b = fabric.pole_density(cells, fabric.pole_vectors(relabelled, h, mineral.symmetry), weights, HALFWIDTH_DEG)
        assert np.allclose(a, b, rtol=1e-10, atol=1e-12), label


# --- the averages in strain energy -------------------------------------------------------------------------


@st.composite
def aggregates(draw):
    """The four averages of 1-3 phases of random minerals, 1-30 random orientations each, random
    weights and fractions (Voigt 6x6, GPa)."""
    phases = []
    for _ in range(draw(st.integers(1, 3))):
        mineral = LIBRARY[draw(st.sampled_from(MINERALS))]
        n = draw(st.integers(1, 30))
        seed = draw(st.integers(0, 2**32 - 1))
        weights = np.random.default_rng(seed).uniform(0.05, 1.0, n)
        phases.append(elastic.PhaseTensors(mineral.stiffness_gpa, random_rotation_matrices(n, seed), weights,
                                           draw(st.floats(0.05, 1.0))))
    return elastic.average_tensors(phases)


def kelvin(averages: dict) -> dict:
    return {name: elastic.voigt_to_kelvin(c) for name, c in averages.items()}


def smallest_ratio(a: np.ndarray, b: np.ndarray) -> float:
    """min over strains e of e.(a - b).e / e.b.e: negative if a stores less energy than b for some strain."""
    return float(scipy.linalg.eigh(a - b, b, eigvals_only=True).min())


@invariant(400)
@given(averages=aggregates(), strain=st.lists(st.floats(-1.0, 1.0), min_size=6, max_size=6))
def test_voigt_hill_reuss_in_strain_energy_for_every_strain(averages, strain):
    # Hill (1952): the Voigt average stores at least the strain energy of the Reuss average for
    # every strain (the arithmetic mean of positive-definite matrices is at least their harmonic
    # mean in the Loewner order; e.g. Bhatia 2007, Positive Definite Matrices, from memory); Hill
    # lies between as their mean. Checked for the drawn strain and, through the generalised
    # eigenvalues, for every strain at once.
    k = kelvin(averages)
    e = np.array(strain)
    energy = {name: e @ m @ e for name, m in k.items()}
    slack = 1e-9 * energy["voigt"] + 1e-12
    assert energy["voigt"] + slack >= energy["hill"] >= energy["reuss"] - slack
    assert smallest_ratio(k["voigt"], k["reuss"]) >= -1e-9
    assert smallest_ratio(k["hill"], k["reuss"]) >= -1e-9 and smallest_ratio(k["voigt"], k["hill"]) >= -1e-9


@invariant(400)
@given(averages=aggregates())
def test_geometric_mean_between_voigt_and_reuss_in_mean_energy_and_determinant(averages):
    # The geometric mean is exp(mean log C_i) in Kelvin form (Matthies & Humbert 1993), and its
    # inverse is exp(mean log S_i). X -> trace exp(X) is convex (Peierls; e.g. Carlen 2010, Trace
    # inequalities and quantum entropy, from memory), so trace C_G <= mean trace C_i = trace C_V and
    # trace C_G^-1 <= trace of the mean compliance; the trace / 6 is the strain energy averaged over
    # all unit strains (common practice). log det is linear on the geometric mean and concave on
    # positive-definite matrices (Ky Fan 1950, from memory): det C_V >= det C_G >= det C_R.
    k = kelvin(averages)
    mean_compliance = np.linalg.inv(k["reuss"])
    assert np.trace(k["geometric"]) <= np.trace(k["voigt"]) * (1 + 1e-10)
    assert np.trace(np.linalg.inv(k["geometric"])) <= np.trace(mean_compliance) * (1 + 1e-10)
    log_det = {name: np.linalg.slogdet(m)[1] for name, m in k.items()}
    assert log_det["voigt"] + 1e-9 >= log_det["geometric"] >= log_det["reuss"] - 1e-9


def test_the_geometric_mean_can_store_less_energy_than_reuss_for_one_strain():
    # Not every strain: the log-Euclidean mean exp(mean log C_i) is not bounded by the arithmetic
    # and harmonic means in the Loewner order (Arsigny et al. 2007, SIAM J. Matrix Anal. Appl. 29,
    # 328-347, from memory). Shown here with two antigorite grains, the geometric mean computed
    # independently with scipy's matrix logarithm and exponential, grain by grain.
    c = LIBRARY["antigorite"].stiffness_gpa
    worst = min(range(300), key=lambda seed: smallest_ratio(*[kelvin(elastic.average_tensors(
        [elastic.PhaseTensors(c, random_rotation_matrices(2, seed), np.ones(2))]))[k] for k in ("geometric", "reuss")]))
    g = random_rotation_matrices(2, worst)
    grains = [elastic.voigt_to_kelvin(elastic.crystal_to_sample(c, g[i:i + 1])[0]) for i in range(2)]
    geometric = scipy.linalg.expm((scipy.linalg.logm(grains[0]).real + scipy.linalg.logm(grains[1]).real) / 2)
    reuss = np.linalg.inv((np.linalg.inv(grains[0]) + np.linalg.inv(grains[1])) / 2)
    averages = kelvin(elastic.average_tensors([elastic.PhaseTensors(c, g, np.ones(2))]))
    assert np.allclose(averages["geometric"], geometric, rtol=1e-8, atol=1e-8)
    assert np.allclose(averages["reuss"], reuss, rtol=1e-10, atol=1e-10)
    assert smallest_ratio(geometric, reuss) < -1e-3          # some strain stores 0.1 % less energy than Reuss


# --- bounds of every result ---------------------------------------------------------------------------------


@invariant(120)
@given(fabric_set=fabrics(max_grains=200))
def test_fabric_indices_and_velocities_keep_their_bounds(fabric_set):
    # J = integral of f^2 with integral f = 1, so J >= 1 by Cauchy-Schwarz (Bunge 1982); pfJ likewise
    # for a pole density of mean 1; M is half the L1 distance between two probability histograms,
    # so 0 <= M <= 1 (Skemer et al. 2005); an orientation tensor of unit vectors is positive
    # semi-definite with trace 1 (Woodcock 1977). Vp, Vs1, Vs2 are the square roots of the
    # Christoffel matrix's eigenvalues over the density, largest first (CONVENTIONS.md): a positive
    # definite stiffness makes them real and positive, and AVs >= 0 follows.
    mineral, quat, weights = fabric_set
    assert fabric.j_index(quat, weights, mineral.symmetry, HALFWIDTH_DEG) >= 1.0 - 1e-9
    assert 0.0 <= fabric.m_index(quat, mineral.symmetry) <= 1.0
    for label in fabric.default_poles(mineral):
        poles = fabric.pole_vectors(quat, crystal_direction(mineral, label), mineral.symmetry)
        assert fabric.pf_j_pairs(poles, weights, HALFWIDTH_DEG) >= 1.0 - 1e-6
        values = fabric.eigen_analysis(fabric.orientation_tensor(poles, weights))["eigenvalues"]
        assert np.all(values >= -1e-12) and np.all(values <= 1 + 1e-12) and np.isclose(np.sum(values), 1.0)
    agg = aggregate_of(mineral, quat, weights)
    directions = waves.hemisphere_grid(5.0)[0]
    for name, c in agg.tensors.items():
        w = waves.plane_waves(c, agg.density_kg_m3, directions)
        assert np.all(w.vp_km_s >= w.vs1_km_s) and np.all(w.vs1_km_s >= w.vs2_km_s) and np.all(w.vs2_km_s > 0), name
        assert np.all(w.avs_pct >= 0), name


#: the properties this module checks (the README's testing section counts them)
INVARIANTS = [
    "turning orientations and frame together: tensors turn by the transformation law; K, G, velocities, J, M, "
    "pfJ, eigenvalues unchanged",
    "grain order: tensors, J, M, pfJ, pole densities, eigenvalues unchanged; a bootstrap resample permuted with "
    "the grains gives the same values",
    "symmetry-equivalent orientations: tensors, J, M, pfJ, pole densities, eigenvalues unchanged",
    "Voigt >= Hill >= Reuss in strain energy for every strain",
    "geometric mean between Voigt and Reuss in mean strain energy and determinant (not for every strain)",
    "J >= 1, pfJ >= 1, 0 <= M <= 1, orientation-tensor eigenvalues in [0, 1] summing to 1",
    "Vp >= Vs1 >= Vs2 > 0 and AVs >= 0 in every direction, for all four averages",
]
