"""The fabric of one phase: its indices, their convergence with the number of grains, and the
floor that random sets of as many grains reach.

``phase_fabric`` gathers the J-index (``fabric.texture_index``), the M-index (``fabric.misorientation_index``) and, per
principal pole, pfJ, the maximum pole density and the orientation-tensor eigenanalysis
(``fabric.poles``), with the BA-index for olivine. ``convergence`` recomputes J, M and the maximum
pole density on nested subsets of the grains, the row of all grains being the phase's own indices
(``with_all_grains``: the run computes the subsets and the indices on two threads, the whole once).
``random_floor`` simulates random orientation sets
of the sample's size and weights: a finite random set does not give J = 1, pfJ = 1 and M = 0, and
``indistinguishable_from_random`` compares a sample's J and M with the 95 % range of such sets.

References
----------
Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
Mainprice, D. & Silver, P. G. (1993). Physics of the Earth and Planetary Interiors 78, 257-280.
Skemer, P., Katayama, I., Jiang, Z. & Karato, S. (2005). Tectonophysics 411, 157-167.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass
from typing import Any

import numpy as np

from fabric2seis.elastic.minerals import crystal_direction
from fabric2seis.fabric.cache import cached_result
from fabric2seis.fabric.checks import check_halfwidth, check_quaternions, check_weights
from fabric2seis.fabric.misorientation_index import (
    M_INDEX_BIN_DEG,
    M_INDEX_PAIRS,
    m_index,
    m_index_bin_variance,
    random_unit_quaternions,
)
from fabric2seis.fabric.poles import (
    ba_index,
    default_poles,
    eigen_analysis,
    orientation_tensor,
    pf_j,
    pf_j_pairs,
    pole_vectors,
)
from fabric2seis.fabric.texture_index import harmonics_suffice, j_index, j_index_dense, j_index_nested
from fabric2seis.orientations import proper_symmetry_quaternions

#: random orientation sets simulated for the floor of J, M and pfJ (their 2.5 and 97.5 percentiles
#: give the 95 % range)
RANDOM_FLOOR_SETS = 100
RANDOM_FLOOR_SEED = 20110611
#: larger sets are simulated at this size and scaled (see ``random_floor``)
RANDOM_FLOOR_MAX_GRAINS = 200
#: subset sizes of ``convergence`` (below the number of grains; all grains come last): at least six
#: points for phases of 21 grains or more, so that the figure shows a trend
CONVERGENCE_SIZES = (5, 7, 10, 15, 20, 30, 50, 70, 100, 200, 500, 1000, 2000, 5000, 10000, 20000, 50000)
#: the sizes whose last step below all grains judges whether J has levelled off
LEVELLING_SIZES = (100, 200, 500, 1000, 2000, 5000, 10000, 20000, 50000)


@dataclass
class PhaseFabric:
    """Fabric of one phase: indices, and per pole the eigenanalysis and maximum density.

    ``j`` and ``m`` are dimensionless; ``halfwidth_deg`` is the kernel's (degrees); ``poles`` maps a
    label to ``{"pfJ", "max_mud" (m.u.d.), "max_direction" (unit vector (3,)), "eigen"
    (``poles.eigen_analysis``)}``; ``ba`` is the BA-index (olivine only, else None).
    """

    mineral: str
    n: int
    weighting: str
    halfwidth_deg: float
    j: float
    m: float
    poles: dict          # label -> {"pfJ", "max_mud", "max_direction", "eigen": eigen_analysis(...)}
    ba: float | None

    def as_summary(self) -> dict:
        """The numbers for ``summary.json``, rounded, eigenvectors and directions on the lower hemisphere."""
        def vec(v):
            v = np.where(v[2] > 0, -v, v)  # lower hemisphere, CONVENTIONS.md
            return [round(float(x), 6) for x in v]
        return {
            "J": round(self.j, 6), "M": round(self.m, 6),
            "pfJ": {k: round(p["pfJ"], 6) for k, p in self.poles.items()},
            "eigen": {k: [round(float(x), 6) for x in p["eigen"]["eigenvalues"]] for k, p in self.poles.items()},
            "eigenvectors": {k: [vec(v) for v in p["eigen"]["eigenvectors"]] for k, p in self.poles.items()},
            "woodcock": {k: {"K": _finite(p["eigen"]["woodcock_K"]), "C": round(p["eigen"]["woodcock_C"], 6)}
                         for k, p in self.poles.items()},
            "vollmer": {k: {x: round(p["eigen"][f"vollmer_{x}"], 6) for x in "PGR"} for k, p in self.poles.items()},
            "max_pole_density_mud": {k: round(p["max_mud"], 4) for k, p in self.poles.items()},
            "max_pole_direction": {k: vec(p["max_direction"]) for k, p in self.poles.items()},
            "BA": None if self.ba is None else round(self.ba, 6),
            "fabric_weighting": self.weighting, "odf_halfwidth_deg": self.halfwidth_deg,
        }


def _finite(x: float):
    return round(x, 6) if np.isfinite(x) else None


def _check_phase(quat, weights, halfwidth_deg) -> None:
    check_quaternions(quat, at_least=2)
    check_weights(weights, len(quat))
    check_halfwidth(halfwidth_deg)


def phase_fabric(mineral, quat: np.ndarray, weights: np.ndarray, weighting: str, halfwidth_deg: float = 10.0,
                 poles: list[str] | None = None, seed: int = 0) -> PhaseFabric:
    """J, M, pfJ, eigenanalysis and, for olivine, the BA-index of one phase.

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        The phase's mineral (point group and lattice).
    quat : numpy.ndarray
        Unit quaternions (N, 4), N >= 2, in the structural frame (orix's convention).
    weights : numpy.ndarray
        Weights (N,) of the orientations (J, pfJ, eigenanalysis), non-negative with a positive sum.
        M counts every orientation once.
    weighting : str
        How the orientations were chosen and weighted (recorded only: ``grain``, ``area`` ...).
    halfwidth_deg : float
        Kernel halfwidth of the ODF and pole densities (degrees).
    poles : list of str, optional
        Pole labels (``"[100]"``, ``"(001)"``); by default ``poles.default_poles(mineral)``.
    seed : int
        Seed of the pairs drawn for M.

    Returns
    -------
    PhaseFabric
        The indices; ``as_summary()`` gives them as written to ``summary.json``.

    References
    ----------
    Bunge, H.-J. (1982); Mainprice, D. & Silver, P. G. (1993) (J as the ODF's mean square);
    Skemer, P. et al. (2005) (M); Woodcock, N. H. (1977), Vollmer, F. W. (1990) (eigenanalysis);
    Mainprice, D. et al. (2014) (BA). See the modules ``fabric.texture_index``,
    ``misorientation_index`` and ``poles``.
    """
    _check_phase(quat, weights, halfwidth_deg)
    labels = poles or default_poles(mineral)
    result: dict[str, dict[str, Any]] = {}
    for label in labels:
        vectors = pole_vectors(quat, crystal_direction(mineral, label), mineral.symmetry)
        pfj, top, where = pf_j(vectors, weights, halfwidth_deg)
        result[label] = {"pfJ": pfj, "max_mud": top, "max_direction": where,
                         "eigen": eigen_analysis(orientation_tensor(vectors, weights))}
    ba = None
    if mineral.name == "olivine":
        e100 = result.get("[100]", {}).get("eigen") or eigen_analysis(orientation_tensor(
            pole_vectors(quat, crystal_direction(mineral, "[100]"), mineral.symmetry), weights))
        e010 = result.get("[010]", {}).get("eigen") or eigen_analysis(orientation_tensor(
            pole_vectors(quat, crystal_direction(mineral, "[010]"), mineral.symmetry), weights))
        ba = ba_index(e100, e010)
    return PhaseFabric(mineral=mineral.name, n=len(quat), weighting=weighting, halfwidth_deg=halfwidth_deg,
                       j=j_index(quat, weights, mineral.symmetry, halfwidth_deg),
                       m=m_index(quat, mineral.symmetry, seed=seed), poles=result, ba=ba)


def convergence(mineral, quat: np.ndarray, weights: np.ndarray, halfwidth_deg: float = 10.0,
                seed: int = 0, pole: str | None = None, whole: PhaseFabric | None = None) -> dict:
    """J, M and the maximum pole density on nested random subsets of the grains.

    Subsets of 5, 7, 10, 15, 20, 30, 50, 70, 100, 200, 500, 1000, 2000, 5000 ... grains and all of
    them, each containing the previous. J has levelled off when the last step of 100, 200, 500 ...
    grains (``LEVELLING_SIZES``) to all of them changed it by less than 5 percent (common practice
    for judging whether a sample has enough grains).

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        The phase's mineral.
    quat : numpy.ndarray
        Unit quaternions (N, 4) (M needs N >= 2: it is NaN for a subset of one grain).
    weights : numpy.ndarray
        Weights (N,), non-negative with a positive sum (each subset is normalised on its own).
    halfwidth_deg : float
        Kernel halfwidth (degrees).
    seed : int
        Seed of the order in which grains join the subsets, and of the pairs drawn for M.
    pole : str, optional
        Pole of the maximum density; by default the first of ``poles.default_poles(mineral)``.
    whole : PhaseFabric, optional
        The phase's own indices (``phase_fabric`` of the same grains, weights, halfwidth and seed,
        with the pole among its poles): the row of all grains takes its J, M and maximum density
        instead of computing them again (:func:`convergence_of_subsets`, :func:`with_all_grains`).

    Returns
    -------
    dict
        ``pole`` (str); ``rows``, one ``{"n", "J", "M", "max_mud" (m.u.d.)}`` per subset;
        ``j_levelled`` (bool).
    """
    part = convergence_of_subsets(mineral, quat, weights, halfwidth_deg, seed, pole)
    if whole is None:
        vectors = pole_vectors(quat, crystal_direction(mineral, part["pole"]), mineral.symmetry)
        whole_j = j_index(quat, weights, mineral.symmetry, halfwidth_deg)
        whole_m = m_index(quat, mineral.symmetry, seed=seed) if len(quat) > 1 else float("nan")
        whole_max = pf_j(vectors, weights, halfwidth_deg)[1]
    else:
        if whole.n != len(quat) or whole.halfwidth_deg != halfwidth_deg or part["pole"] not in whole.poles:
            raise ValueError(f"whole must be the phase_fabric of the same {len(quat)} grains, halfwidth "
                             f"{halfwidth_deg:g} and pole {part['pole']}")
        whole_j, whole_m, whole_max = whole.j, whole.m, whole.poles[part["pole"]]["max_mud"]
    return with_all_grains(part, len(quat), whole_j, whole_m, whole_max)


def convergence_of_subsets(mineral, quat: np.ndarray, weights: np.ndarray, halfwidth_deg: float = 10.0,
                           seed: int = 0, pole: str | None = None) -> dict:
    """The rows of :func:`convergence` for the subsets smaller than all the grains.

    The row of all grains is that of the phase's own indices (``phase_fabric``: the same J, the
    same pairs for M, the same density), added by :func:`with_all_grains`; computing the two apart
    lets them run on two threads (``pipeline.fabric_stage``) without doing the whole twice.

    Parameters
    ----------
    mineral, quat, weights, halfwidth_deg, seed, pole
        As for :func:`convergence`.

    Returns
    -------
    dict
        ``pole`` (str) and ``rows``, one ``{"n", "J", "M", "max_mud" (m.u.d.)}`` per subset.
    """
    check_quaternions(quat)
    check_weights(weights, len(quat))
    check_halfwidth(halfwidth_deg)
    n = len(quat)
    order = np.random.default_rng(seed).permutation(n)
    sizes = [s for s in CONVERGENCE_SIZES if s < n]
    pole = pole or default_poles(mineral)[0]
    direction = crystal_direction(mineral, pole)
    if not sizes:
        j_values = []
    elif harmonics_suffice(halfwidth_deg):       # the subsets' Fourier sums, added up grain by grain
        j_values = j_index_nested(quat[order], weights[order], mineral.symmetry, sizes, halfwidth_deg)
    else:
        j_values = [j_index(quat[order[:size]], weights[order[:size]], mineral.symmetry, halfwidth_deg)
                    for size in sizes]
    rows = []
    for size, j in zip(sizes, j_values):
        sel = order[:size]
        vectors = pole_vectors(quat[sel], direction, mineral.symmetry)
        rows.append({"n": int(size), "J": j,
                     "M": m_index(quat[sel], mineral.symmetry, seed=seed) if size > 1 else float("nan"),
                     "max_mud": pf_j(vectors, weights[sel], halfwidth_deg)[1]})
    return {"pole": pole, "rows": rows}


def with_all_grains(part: dict, n: int, j: float, m: float, max_mud: float) -> dict:
    """:func:`convergence` from the subsets' rows and the indices of all ``n`` grains.

    Parameters
    ----------
    part : dict
        ``convergence_of_subsets``'s result.
    n : int
        Number of grains.
    j, m, max_mud : float
        J, M and the maximum density (m.u.d.) of the pole, of all the grains.

    Returns
    -------
    dict
        As :func:`convergence`.
    """
    rows = [*part["rows"], {"n": int(n), "J": j, "M": m if n > 1 else float("nan"), "max_mud": max_mud}]
    steps = [r for r in rows[:-1] if r["n"] in LEVELLING_SIZES]
    levelled = bool(steps) and abs(rows[-1]["J"] - steps[-1]["J"]) < 0.05 * rows[-1]["J"]
    return {"pole": part["pole"], "rows": rows, "j_levelled": bool(levelled)}


def random_floor(mineral, n: int, halfwidth_deg: float = 10.0, weights: np.ndarray | None = None,
                 poles: list[str] | None = None, n_sets: int = RANDOM_FLOOR_SETS,
                 max_grains: int = RANDOM_FLOOR_MAX_GRAINS) -> dict:
    """J, M and pfJ of random orientation sets of ``n`` grains: mean (the floor) and 95 % range.

    A random set does not give J = 1, pfJ = 1 and M = 0: the self-pair term of each grain adds
    (J_1 - 1) sum w_i^2 to J on average (J_1 the J of one grain, sum w_i = 1), and a histogram of a
    finite number of pairs departs from the random one. ``n_sets`` sets (fixed seed) are drawn:
    of ``n`` grains with the sample's ``weights`` when n <= ``max_grains``; otherwise of
    ``max_grains`` equal grains, scaled to n. J - 1 and pfJ - 1 of a random set are pair sums of a
    kernel of zero mean plus the self-pair term, so they scale as sum w_i^2 (1 / N for equal
    weights); M scales as the square root of the bin variance (``misorientation_index.m_index_bin_variance``).
    J and pfJ are summed over all pairs (``j_index_dense``, ``pf_j_pairs``), M as ``m_index``. The
    result is cached in memory and in ``$XDG_CACHE_HOME/fabric2seis`` (``fabric.cache``).

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        The phase's mineral (point group and lattice).
    n : int
        Number of grains, at least 2.
    halfwidth_deg : float
        Kernel halfwidth (degrees).
    weights : numpy.ndarray, optional
        The sample's weights (n,), non-negative with a positive sum; equal weights by default.
    poles : list of str, optional
        Pole labels of pfJ; by default ``poles.default_poles(mineral)``.
    n_sets : int
        Random sets simulated.
    max_grains : int
        Largest set simulated; larger ones are scaled.

    Returns
    -------
    dict
        ``J``, ``M`` (means, dimensionless) and ``J_95``, ``M_95`` ([2.5, 97.5] percentiles);
        ``pfJ`` and ``pfJ_95``, the same per pole label; ``random_sets``, ``simulated_grains``.

    References
    ----------
    Bunge, H.-J. (1982). Texture Analysis in Materials Science (J = 1 for a uniform ODF).
    Skemer, P., Katayama, I., Jiang, Z. & Karato, S. (2005). Tectonophysics 411, 157-167.
    """
    if int(n) < 2:
        raise ValueError(f"random_floor needs n >= 2 grains, got {n}")
    n = int(n)
    check_halfwidth(halfwidth_deg)
    w = np.ones(n) if weights is None else np.asarray(weights, dtype=float)
    check_weights(w, n, per="grain")
    labels = list(poles or default_poles(mineral))
    directions = np.array([crystal_direction(mineral, label) for label in labels])
    sym = np.ascontiguousarray(proper_symmetry_quaternions(mineral.symmetry))
    equal = bool(np.allclose(w, w[0]))
    n_sim = min(n, int(max_grains))
    w_sim = np.ones(n_sim) if (equal or n > n_sim) else w
    key = hashlib.sha256(sym.round(10).tobytes() + directions.round(10).tobytes()
                         + (b"" if equal or n > n_sim else (w / w.sum()).round(12).tobytes())
                         + f"floor-2-{n}-{n_sim}-{float(halfwidth_deg)}-{n_sets}-{RANDOM_FLOOR_SEED}-"
                           f"{M_INDEX_PAIRS}-{M_INDEX_BIN_DEG}-{labels}".encode()).hexdigest()[:24]

    def simulate() -> dict:
        rng = np.random.default_rng(RANDOM_FLOOR_SEED)
        j = np.empty(n_sets)
        m = np.empty(n_sets)
        pfj = np.empty((len(labels), n_sets))
        for k in range(n_sets):
            q = random_unit_quaternions(n_sim, rng)
            j[k] = j_index_dense(q, w_sim, mineral.symmetry, halfwidth_deg)
            m[k] = m_index(q, mineral.symmetry, seed=k)
            for p, h in enumerate(directions):
                pfj[p, k] = pf_j_pairs(pole_vectors(q, h, mineral.symmetry), w_sim, halfwidth_deg)
        if n > n_sim:
            self_weight = float((w ** 2).sum() / w.sum() ** 2)          # 1 / N_eff
            j = 1.0 + (j - 1.0) * self_weight * n_sim
            pfj = 1.0 + (pfj - 1.0) * self_weight * n_sim
            m = m * np.sqrt(m_index_bin_variance(n) / m_index_bin_variance(n_sim))

        def spread(values):
            return [round(float(x), 6) for x in np.percentile(values, [2.5, 97.5])]

        return {"J": round(float(j.mean()), 6), "J_95": spread(j),
                "M": round(float(m.mean()), 6), "M_95": spread(m),
                "pfJ": {label: round(float(v.mean()), 6) for label, v in zip(labels, pfj)},
                "pfJ_95": {label: spread(v) for label, v in zip(labels, pfj)},
                "random_sets": int(n_sets), "simulated_grains": int(n_sim)}

    return cached_result(f"random_floor_{key}.json", simulate)


def indistinguishable_from_random(j: float, m: float, floor: dict) -> bool:
    """True when neither J nor M lies above the upper end of the random sets' 95 % range.

    Parameters
    ----------
    j, m : float
        The sample's J-index and M-index.
    floor : dict
        ``random_floor`` of the same mineral, number of grains, weights and kernel.

    Returns
    -------
    bool
    """
    return bool(j <= floor["J_95"][1] and m <= floor["M_95"][1])
