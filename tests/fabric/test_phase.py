"""The fabric of a phase, its convergence and the random floors (fabric2seis.fabric.phase)."""

import numpy as np
import pytest

from fabric2seis import fabric
from fabric2seis.elastic.minerals import crystal_direction, find_mineral
from fabric2seis.orientations import multiply, proper_symmetry_quaternions
from fabric2seis.synth import fabric_orientations, random_quaternions

OLIVINE = find_mineral("olivine")


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


def test_convergence_reports_nested_subsets():
    q = fabric_orientations(OLIVINE, "olivine-A", 1200, 15.0, seed=2)
    c = fabric.convergence(OLIVINE, q, np.ones(1200))
    assert [r["n"] for r in c["rows"]] == [5, 7, 10, 15, 20, 30, 50, 70, 100, 200, 500, 1000, 1200]
    # levelled off: less than 5 % over the last step of the 100-200-500 series (common practice)
    j = {r["n"]: r["J"] for r in c["rows"]}
    assert c["j_levelled"] == (abs(j[1200] - j[1000]) < 0.05 * j[1200])
    # the rows are nested prefixes of one shuffle: a subset's J does not depend on the sizes asked
    order = np.random.default_rng(0).permutation(1200)
    assert j[200] == pytest.approx(fabric.j_index(q[order[:200]], np.ones(200), OLIVINE.symmetry), rel=1e-12)


def test_the_last_row_of_the_convergence_is_the_phase_s_reported_m():
    # with more grains than pairs drawn for M (2,000 grains: 1,999,000 pairs > M_INDEX_PAIRS), the pairs
    # depend on the grains' order; the row of all grains must show the M the sample reports
    # (Skemer et al. 2005 define one M per sample), not another draw of it
    q = fabric_orientations(OLIVINE, "olivine-A", 2000, 20.0, seed=4)
    assert 2000 * 1999 // 2 > fabric.M_INDEX_PAIRS
    last = fabric.convergence(OLIVINE, q, np.ones(2000))["rows"][-1]
    reported = fabric.phase_fabric(OLIVINE, q, np.ones(2000), "grain")
    assert last["n"] == 2000 and last["M"] == reported.m
    assert last["M"] != fabric.m_index(q[np.random.default_rng(0).permutation(2000)], OLIVINE.symmetry)


def test_the_row_of_all_grains_is_the_phase_s_own_indices_with_or_without_them_given():
    # the run computes the subsets apart from the indices (two threads) and takes the row of all grains
    # from the indices (convergence_of_subsets + with_all_grains); computed here, it must be the same
    # J (to rounding: the harmonic sums of the same grains in another order), the same M and density
    q = fabric_orientations(OLIVINE, "olivine-A", 1500, 20.0, seed=5)
    w = np.random.default_rng(1).uniform(0.5, 2.0, 1500)
    indices = fabric.phase_fabric(OLIVINE, q, w, "grain_area")
    computed = fabric.convergence(OLIVINE, q, w)
    given = fabric.convergence(OLIVINE, q, w, whole=indices)
    assert given["rows"][:-1] == computed["rows"][:-1]
    last, here = given["rows"][-1], computed["rows"][-1]
    assert (last["J"], last["M"]) == (indices.j, indices.m)
    assert last["max_mud"] == indices.poles[given["pole"]]["max_mud"] == here["max_mud"]
    assert here["J"] == pytest.approx(last["J"], rel=1e-12) and here["M"] == last["M"]
    assert given["j_levelled"] == computed["j_levelled"]
    with pytest.raises(ValueError, match="same 1499 grains"):
        fabric.convergence(OLIVINE, q[:1499], w[:1499], whole=indices)


def test_convergence_has_six_sizes_from_21_grains_and_no_judgement_below_100():
    # enough points to show a trend (at least six); J is judged only on a step of 100 grains or more
    q = fabric_orientations(OLIVINE, "olivine-A", 60, 15.0, seed=2)
    c = fabric.convergence(OLIVINE, q[:21], np.ones(21))
    assert len(c["rows"]) == 6 and c["rows"][-1]["n"] == 21
    assert fabric.convergence(OLIVINE, q, np.ones(60))["j_levelled"] is False


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
    fabric.clear_memory()
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
    fabric.clear_memory()
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


# --- early errors (checked before any work) ----------------------------------------------------

Q = random_quaternions(6, np.random.default_rng(4))
PHASE_CALLS = [
    lambda q, w, h=10.0: fabric.phase_fabric(OLIVINE, q, w, "grain", h),
    lambda q, w, h=10.0: fabric.convergence(OLIVINE, q, w, h),
]


@pytest.mark.parametrize("call", PHASE_CALLS)
def test_phase_functions_refuse_a_halfwidth_that_is_not_positive(call):
    with pytest.raises(ValueError, match="halfwidth_deg must be positive"):
        call(Q, np.ones(6), 0.0)
    with pytest.raises(ValueError, match="halfwidth_deg must be positive"):
        fabric.random_floor(OLIVINE, 6, -10.0)


@pytest.mark.parametrize("call", PHASE_CALLS)
def test_phase_functions_refuse_quaternions_that_are_not_an_n_by_4_array(call):
    with pytest.raises(ValueError, match=r"quat must be .* shape \(N, 4\)"):
        call(Q[:, :3], np.ones(6))


@pytest.mark.parametrize("call", PHASE_CALLS)
@pytest.mark.parametrize("weights, message", [
    (np.ones(5), r"one value per orientation: expected shape \(6,\)"),
    (np.r_[np.ones(5), -1.0], "must not be negative"),
    (np.zeros(6), "positive sum"),
])
def test_phase_functions_refuse_weights_of_another_length_negative_or_summing_to_zero(call, weights, message):
    with pytest.raises(ValueError, match=message):
        call(Q, weights)


def test_random_floor_refuses_fewer_than_two_grains_and_mismatched_weights():
    with pytest.raises(ValueError, match="n >= 2"):
        fabric.random_floor(OLIVINE, 1)
    with pytest.raises(ValueError, match=r"one value per grain: expected shape \(6,\)"):
        fabric.random_floor(OLIVINE, 6, weights=np.ones(5))
    with pytest.raises(ValueError, match="positive sum"):
        fabric.random_floor(OLIVINE, 6, weights=np.zeros(6))


def test_the_run_s_convergence_ends_with_the_indices_it_reports():
    # through the run's own fabric stage (pipeline.fabric_stage, as `fabric2seis sample` runs it) on a
    # demo map: the convergence figure's last point is the J and M of summary.json, to the bit
    from pathlib import Path

    from fabric2seis import pipeline

    path = Path(__file__).resolve().parents[2] / "demo_samples" / "VM01_dunite.ang"
    settings, source = pipeline.settings_for(path, None, None, None)
    result = pipeline.fabric_stage(pipeline.ingest(path, settings, source))
    for phase in result.phases.values():
        last = phase.convergence["rows"][-1]
        assert last["n"] == phase.indices.n
        assert (last["J"], last["M"]) == (phase.indices.j, phase.indices.m)
        assert last["max_mud"] == phase.indices.poles[phase.convergence["pole"]]["max_mud"]
