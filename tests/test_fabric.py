"""Fabric indices against their published definitions and independent computations."""

import numpy as np
import pytest
from scipy.integrate import quad

from fabric2seis import fabric
from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.orientations import multiply, proper_symmetry_quaternions
from fabric2seis.synth import crystal_direction, fabric_orientations, ideal_orientation, random_quaternions

OLIVINE = find_mineral("olivine")
K_SYM = len(proper_symmetry_quaternions(OLIVINE.symmetry))


def kernel_square_integral(halfwidth_deg):
    """Integral of K^2 over SO(3) by quadrature over the rotation angle, Haar density (2/pi) sin^2(w/2)."""
    k = fabric.Kernel(halfwidth_deg)
    return quad(lambda w: k.value(w) ** 2 * (2 / np.pi) * np.sin(w / 2) ** 2, 0, np.pi, limit=400)[0]


def test_kernel_is_normalised_and_has_its_halfwidth():
    # de la Vallee Poussin kernel (Schaeben 1997): integral 1 over SO(3), K(h) = K(0)/2
    k = fabric.Kernel(10.0)
    assert quad(lambda w: k.value(w) * (2 / np.pi) * np.sin(w / 2) ** 2, 0, np.pi, limit=400)[0] == pytest.approx(1, rel=1e-9)
    assert k.value(np.radians(10)) / k.value(0) == pytest.approx(0.5, rel=1e-12)
    # its pole-figure image integrates to 1 over the sphere (uniform = 1)
    assert quad(lambda t: k.pole_value(t) / 2, -1, 1)[0] == pytest.approx(1, rel=1e-9)


def test_odf_estimate_integrates_to_one():
    # f has mean 1 over SO(3) (m.u.d.): Monte Carlo over uniform rotations
    rng = np.random.default_rng(3)
    grains = fabric_orientations(OLIVINE, "olivine-A", 50, 20.0, seed=2)
    at = random_quaternions(200000, rng)
    f = fabric.odf_values(at, grains, np.ones(50), OLIVINE.symmetry)
    assert f.mean() == pytest.approx(1.0, abs=4 * f.std() / np.sqrt(len(f)))


def test_odf_by_neighbour_search_equals_the_sum_over_all_grains():
    # f(g) = sum_i w_i (1/|S|) sum_t K(angle(g, t g_i)) (Schaeben 1997) summed here over every grain
    # and operation, no support cut-off, against the neighbour-search estimate.
    rng = np.random.default_rng(9)
    grains = fabric_orientations(OLIVINE, "olivine-A", 400, 20.0, seed=4)
    w = rng.uniform(0.5, 2.0, 400)
    at = np.vstack([random_quaternions(300, rng), grains[:50]])
    kernel = fabric.Kernel(10.0)
    full = np.zeros(len(at))
    for t in proper_symmetry_quaternions(OLIVINE.symmetry):
        c = np.abs(at @ multiply(t[None], grains).T)
        full += kernel.value(2 * np.arccos(np.clip(c, 0, 1))) @ (w / w.sum())
    full /= K_SYM
    assert np.allclose(fabric.odf_values(at, grains, w, OLIVINE.symmetry, 10.0), full, rtol=1e-9, atol=1e-8)
    assert full.max() > 5      # the check includes points on the fabric's maximum


def test_single_orientation_gives_the_j_of_the_kernel_and_m_near_one():
    # All grains identical: f is the kernel averaged over the |S| equivalents, so J is the integral
    # of K^2 divided by |S| (the equivalents of an orthorhombic crystal are 180 degrees apart and do
    # not overlap). The integral is computed here by direct quadrature, independently of the
    # character expansion the package uses.
    q = np.tile(ideal_orientation(OLIVINE, "[100]", "[010]"), (400, 1))
    j = fabric.j_index(q, np.ones(400), OLIVINE.symmetry, 10.0)
    assert j == pytest.approx(kernel_square_integral(10.0) / K_SYM, rel=1e-6)
    assert fabric.m_index(q, OLIVINE.symmetry) > 0.97   # Skemer et al. (2005): M -> 1 for a single crystal


def test_random_fabric_of_20000_grains():
    """J, pfJ, M and eigenvalues of a random fabric (Bunge 1982; Skemer et al. 2005; Woodcock 1977).

    Finite-sample bias of J: with f the kernel estimate of N independent uniform grains,
    E[J] = 1 + (J_1 - 1)/N, where J_1 = J of one grain (the self-pair terms); the pair terms are a
    U-statistic of zero mean with standard deviation about sqrt(2 var(Phi_S)) / N. We allow five
    standard deviations around the expected value.
    """
    n = 20000
    q = random_quaternions(n, np.random.default_rng(11))
    j = fabric.j_index(q, np.ones(n), OLIVINE.symmetry, 10.0)
    j1 = kernel_square_integral(10.0) / K_SYM
    grid, phi, _, _ = fabric._self_convolution_table(10.0)
    haar = (2 / np.pi) * np.sin(grid / 2) ** 2
    var_phi_s = np.trapezoid(phi ** 2 * haar, grid) / K_SYM - 1.0     # Phi averaged over S, non-overlapping
    sigma = np.sqrt(2 * var_phi_s) / n
    expected = 1 + (j1 - 1) / n
    assert expected - 1 == pytest.approx(0.00687, abs=2e-4)            # the bias itself: 0.7 % at 20,000
    assert abs(j - expected) < 5 * sigma
    for label in ("[100]", "[010]", "[001]"):
        v = fabric.pole_vectors(q, crystal_direction(OLIVINE, label), OLIVINE.symmetry)
        pfj, _, _ = fabric.pf_j(v, np.ones(n))
        assert pfj == pytest.approx(1.0, abs=0.02)
        e = fabric.eigen_analysis(fabric.orientation_tensor(v, np.ones(n)))
        assert np.allclose(e["eigenvalues"], 1 / 3, atol=0.01)
    assert fabric.m_index(q, OLIVINE.symmetry) < 0.02


def test_j_agrees_with_brute_force_all_pairs_on_5000_grains():
    # The same definition summed over every pair and symmetry operation, no support cut-off.
    n = 5000
    q = fabric_orientations(OLIVINE, "olivine-A", n, 25.0, seed=5)
    w = np.random.default_rng(6).uniform(0.5, 1.5, n)
    fast = fabric.j_index(q, w, OLIVINE.symmetry, 10.0)
    wn = w / w.sum()
    total = 0.0
    for t in proper_symmetry_quaternions(OLIVINE.symmetry):
        moved = multiply(t[None], q)
        for start in range(0, n, 1000):
            c = np.clip(np.abs(q[start:start + 1000] @ moved.T), 0, 1)
            total += wn[start:start + 1000] @ fabric.self_convolution(10.0, 2 * np.arccos(c)) @ wn
    brute = total / K_SYM
    assert fast == pytest.approx(brute, rel=1e-4)      # the issue asks 1e-3; the series holds 1e-5


@pytest.mark.parametrize("name", ["olivine", "quartz", "calcite", "pyrope", "diopside", "albite", "ice"])
def test_j_by_harmonics_and_by_pairs_agree_for_every_point_group(name):
    # Two independent sums of the same integral (Bunge 1982): the Parseval series over Wigner
    # matrices with the symmetry projector, and the pair sum over the kernel's self-convolution.
    # Point groups mmm, 32, -3m, m-3m, 2/m (2-fold along b: the frame is turned), -1 and 6/mmm.
    mineral = find_mineral(name)
    rng = np.random.default_rng(21)
    n = 1500
    clustered = multiply(random_quaternions(1, rng), random_quaternions(n, rng) * [1, 0.12, 0.12, 0.12])
    clustered /= np.linalg.norm(clustered, axis=1, keepdims=True)
    for q in (random_quaternions(n, rng), clustered):
        w = rng.uniform(0.5, 2.0, n)
        by_pairs = fabric.j_index(q, w, mineral.symmetry, 10.0, method="pairs")
        by_series = fabric.j_index(q, w, mineral.symmetry, 10.0, method="harmonics")
        assert by_series == pytest.approx(by_pairs, rel=2e-5)     # pairs leave 1e-5 of Phi's mass out


def test_wigner_matrices_form_a_representation():
    # D(ab) = D(a) D(b) and D unitary (common practice, e.g. Varshalovich et al. 1988); d(beta)
    # against the closed forms d^1_00 = cos b, d^1_10 = -sin b / sqrt(2), d^1_11 = (1 + cos b)/2
    # (Condon-Shortley convention, Varshalovich et al. 1988, table 4.3; from memory).
    from fabric2seis import harmonics
    a, b = random_quaternions(2, np.random.default_rng(8))
    for l in (1, 4, 9):
        da, db = harmonics.wigner_matrix(l, a), harmonics.wigner_matrix(l, b)
        assert np.allclose(harmonics.wigner_matrix(l, multiply(a, b)), da @ db, atol=1e-12)
        assert np.allclose(da @ da.conj().T, np.eye(2 * l + 1), atol=1e-12)
    beta = 0.7
    d = harmonics.wigner_matrix(1, np.array([np.cos(beta / 2), 0, np.sin(beta / 2), 0])).real
    assert d[1, 1] == pytest.approx(np.cos(beta)) and d[2, 1] == pytest.approx(-np.sin(beta) / np.sqrt(2))
    assert d[2, 2] == pytest.approx((1 + np.cos(beta)) / 2)


def test_mackenzie_limits_of_random_misorientation_distributions():
    # Mackenzie (1958): cubic (m-3m) random misorientations end at 62.8 degrees with the mode near
    # 45 degrees; orthorhombic (mmm) ones reach 120 degrees (common practice, e.g. Morawiec 2004).
    cubic = fabric.random_distribution(find_mineral("pyrope").symmetry)
    centres = np.arange(len(cubic)) + 0.5
    assert centres[np.flatnonzero(cubic)[-1]] == pytest.approx(62.5, abs=0.6)
    assert 42 <= centres[np.argmax(cubic)] <= 47
    ortho = fabric.random_distribution(OLIVINE.symmetry)
    assert centres[np.flatnonzero(ortho)[-1]] == pytest.approx(119.5, abs=1.0)
    assert cubic.sum() == pytest.approx(1) and ortho.sum() == pytest.approx(1)


def _about_z(n, rng):
    """Rotations of the structural frame about Z by uniform angles (for fibre fabrics)."""
    angle = rng.uniform(0, 2 * np.pi, n)
    return np.column_stack([np.cos(angle / 2), np.zeros(n), np.zeros(n), np.sin(angle / 2)])


def _about_x(n, rng):
    angle = rng.uniform(0, 2 * np.pi, n)
    return np.column_stack([np.cos(angle / 2), np.sin(angle / 2), np.zeros(n), np.zeros(n)])


def eigen_of(q, label):
    v = fabric.pole_vectors(q, crystal_direction(OLIVINE, label), OLIVINE.symmetry)
    return fabric.eigen_analysis(fabric.orientation_tensor(v, np.ones(len(q))))


def test_point_girdle_and_random_fall_in_their_diagram_fields():
    # Woodcock (1977): clusters have K > 1, girdles K < 1. Vollmer (1990): P, G, R sum to 1 and
    # the largest names the field (point, girdle, random).
    rng = np.random.default_rng(7)
    base = ideal_orientation(OLIVINE, "[100]", "[010]")
    point = fabric_orientations(OLIVINE, "olivine-A", 3000, 8.0, seed=1)
    girdle = multiply(np.tile(base, (3000, 1)), _about_z(3000, rng))   # [100] spread in the XY plane
    rand = random_quaternions(3000, rng)
    p, g, r = eigen_of(point, "[100]"), eigen_of(girdle, "[100]"), eigen_of(rand, "[100]")
    assert p["woodcock_K"] > 1 and g["woodcock_K"] < 1
    for e in (p, g, r):
        assert e["vollmer_P"] + e["vollmer_G"] + e["vollmer_R"] == pytest.approx(1)
    assert max("PGR", key=lambda k: p[f"vollmer_{k}"]) == "P"
    assert max("PGR", key=lambda k: g[f"vollmer_{k}"]) == "G"
    assert max("PGR", key=lambda k: r[f"vollmer_{k}"]) == "R"
    assert r["woodcock_C"] < 0.2 < p["woodcock_C"]  # strength: random weakest


def test_ba_index_of_fibres_and_point_fabric():
    # Mainprice et al. (2014): BA near 0 for a [010]-fibre (axial-[010]), near 1 for a [100]-fibre
    # (axial-[100]), near 0.5 for an orthorhombic point fabric.
    rng = np.random.default_rng(8)
    base = np.tile(ideal_orientation(OLIVINE, "[100]", "[010]"), (3000, 1))   # a on X, b on Z
    b_fibre = multiply(base, _about_z(3000, rng))      # b fixed on Z, a anywhere in XY
    a_fibre = multiply(base, _about_x(3000, rng))      # a fixed on X, b anywhere in YZ

    def ba(q):
        return fabric.ba_index(eigen_of(q, "[100]"), eigen_of(q, "[010]"))

    assert ba(b_fibre) < 0.1
    assert ba(a_fibre) > 0.9
    assert ba(fabric_orientations(OLIVINE, "olivine-A", 3000, 5.0, seed=9)) == pytest.approx(0.5, abs=0.05)


def test_relabelling_by_symmetry_changes_no_index():
    q = fabric_orientations(OLIVINE, "olivine-B", 800, 20.0, seed=4)
    sym = proper_symmetry_quaternions(OLIVINE.symmetry)
    pick = np.random.default_rng(1).integers(0, len(sym), len(q))
    relabelled = multiply(sym[pick], q)
    w = np.ones(len(q))
    a = fabric.phase_fabric(OLIVINE, q, w, "grain").as_summary()
    b = fabric.phase_fabric(OLIVINE, relabelled, w, "grain").as_summary()
    for key in ("J", "M", "BA"):
        assert a[key] == pytest.approx(b[key], rel=1e-6)
    for label in a["pfJ"]:
        assert a["pfJ"][label] == pytest.approx(b["pfJ"][label], rel=1e-6)
        assert a["eigen"][label] == pytest.approx(b["eigen"][label], abs=1e-6)


def test_a_type_fabric_has_its_maxima_on_the_structural_axes():
    # A-type olivine (Karato et al. 2008): [100] maximum on X (lineation), [010] on Z.
    q = fabric_orientations(OLIVINE, "olivine-A", 1000, 12.0, seed=3)
    s = fabric.phase_fabric(OLIVINE, q, np.ones(1000), "grain").as_summary()
    assert abs(s["max_pole_direction"]["[100]"][0]) > 0.99
    assert abs(s["max_pole_direction"]["[010]"][2]) > 0.99


def test_pole_density_is_one_for_uniform_poles():
    cells, area = fabric.hemisphere_cells(1.0)
    assert area.sum() == pytest.approx(2 * np.pi, rel=1e-12)
    q = random_quaternions(5000, np.random.default_rng(2))
    v = fabric.pole_vectors(q, crystal_direction(OLIVINE, "[100]"), OLIVINE.symmetry)
    d = fabric.pole_density(cells, v, np.ones(5000))
    assert np.sum(d * area) / np.sum(area) == pytest.approx(1.0, abs=1e-3)


def test_convergence_reports_nested_subsets():
    q = fabric_orientations(OLIVINE, "olivine-A", 1200, 15.0, seed=2)
    c = fabric.convergence(OLIVINE, q, np.ones(1200))
    assert [r["n"] for r in c["rows"]] == [100, 200, 500, 1000, 1200]
    assert isinstance(c["j_levelled"], bool)


def test_pole_figure_j_on_the_grid_equals_the_pair_sum_of_the_kernel():
    # pfJ is the mean square of the pole density; summed exactly over pairs of poles with the
    # kernel's self-convolution on the sphere (Legendre series, Funk-Hecke theorem, common practice)
    # it must match the binned, gridded estimate of pf_j to the grid's accuracy.
    rng = np.random.default_rng(12)
    for name in ("olivine", "pyrope"):
        mineral = find_mineral(name)
        for q in (random_quaternions(300, rng), fabric_orientations(OLIVINE, "olivine-A", 300, 15.0, seed=3)):
            w = rng.uniform(0.5, 2.0, 300)
            for label in fabric.default_poles(mineral):
                v = fabric.pole_vectors(q, crystal_direction(mineral, label), mineral.symmetry)
                assert fabric.pf_j(v, w)[0] == pytest.approx(fabric.pf_j_pairs(v, w), rel=4e-3)


def test_dense_pair_sum_of_j_equals_the_harmonic_series():
    rng = np.random.default_rng(13)
    for name in ("olivine", "diopside", "pyrope"):
        mineral = find_mineral(name)
        q = fabric_orientations(OLIVINE, "olivine-B", 150, 30.0, seed=5)
        w = rng.uniform(0.5, 2.0, 150)
        assert fabric.j_index_dense(q, w, mineral.symmetry) == pytest.approx(
            fabric.j_index(q, w, mineral.symmetry, method="harmonics"), rel=2e-5)


def _fresh_random_indices(mineral, n, n_sets, seed):
    """J, M and pfJ of the first default pole of random sets drawn here, independently of random_floor."""
    rng = np.random.default_rng(seed)
    pole = fabric.default_poles(mineral)[0]
    out = []
    for k in range(n_sets):
        q = random_quaternions(n, rng)
        v = fabric.pole_vectors(q, crystal_direction(mineral, pole), mineral.symmetry)
        out.append((fabric.j_index(q, np.ones(n), mineral.symmetry), fabric.m_index(q, mineral.symmetry, seed=k),
                    fabric.pf_j(v, np.ones(n))[0]))
    return np.array(out).T, pole


@pytest.mark.parametrize("name, n", [("diopside", 33), ("olivine", 600)])
def test_random_floor_has_its_closed_form_mean_and_holds_95_percent_of_random_sets(name, n, tmp_path, monkeypatch):
    # E[J] of N random grains is 1 + (J_1 - 1)/N exactly (the self-pair terms; the pairs of distinct
    # random grains average 1: Bunge 1982's J of a uniform ODF). The 95 % range, from 100 simulated
    # sets, must hold about 95 % of random sets drawn here with another generator (40 sets, the
    # package's own J, M and gridded pfJ): the binomial spread of 40 draws at 0.95 is 0.035, and the
    # range's own percentiles from 100 sets move its coverage by about 0.02, so 0.8 is the floor.
    # 600 grains are above the simulated size (200): this checks the scaling to N as well.
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    mineral = find_mineral(name)
    floor = fabric.random_floor(mineral, n)
    j1 = fabric.j_index(np.tile(random_quaternions(1, np.random.default_rng(0)), (2, 1)), np.ones(2), mineral.symmetry)
    (j, m, pfj), pole = _fresh_random_indices(mineral, n, 40, seed=99)
    assert floor["J"] == pytest.approx(1 + (j1 - 1) / n, abs=4 * np.std(j) / np.sqrt(floor["random_sets"]))
    assert floor["J"] == pytest.approx(np.mean(j), abs=4 * np.std(j) / np.sqrt(40))
    assert floor["M"] == pytest.approx(np.mean(m), rel=0.15)
    assert floor["pfJ"][pole] == pytest.approx(np.mean(pfj), abs=4 * np.std(pfj) / np.sqrt(40) + 2e-3 * np.mean(pfj))
    for values, (lo, hi) in ((j, floor["J_95"]), (m, floor["M_95"]), (pfj, floor["pfJ_95"][pole])):
        assert 0.8 <= np.mean((values >= lo) & (values <= hi)) <= 1.0
    # cached on disk, and read back the same
    assert list(tmp_path.glob("fabric2seis/random_floor_*.json"))
    fabric._RANDOM_FLOORS.clear()
    assert fabric.random_floor(mineral, n) == floor


def test_weak_and_strong_fabrics_against_the_random_floor():
    # 33 random diopside grains lie on their floor (J about 9.4, not 1); 300 A-type olivine grains
    # with 25 degrees of scatter lie far above theirs.
    diopside = find_mineral("diopside")
    q = random_quaternions(33, np.random.default_rng(5))
    floor = fabric.random_floor(diopside, 33)
    j, m = fabric.j_index(q, np.ones(33), diopside.symmetry), fabric.m_index(q, diopside.symmetry)
    assert floor["J"] > 8 and fabric.indistinguishable_from_random(j, m, floor)
    q = fabric_orientations(OLIVINE, "olivine-A", 300, 25.0, seed=6)
    floor = fabric.random_floor(OLIVINE, 300)
    j, m = fabric.j_index(q, np.ones(300), OLIVINE.symmetry), fabric.m_index(q, OLIVINE.symmetry)
    assert not fabric.indistinguishable_from_random(j, m, floor)
