"""Benchmark: rotating an olivine stiffness into N orientations and taking the Voigt average.

What it measures
----------------
The Voigt average of an aggregate is the weighted mean, over its orientations, of the crystal
stiffness rotated into the sample frame. This script times that job for N random olivine
orientations (1,000,000 by default), each with a random positive weight, done four ways:

1. the project's averaging kernel, ``fabric2seis.elastic.weighted_rotated_mean`` (given the
   Kelvin form of the stiffness; the result is converted back with ``kelvin_to_voigt``);
2. the project's per-grain rotation, ``fabric2seis.elastic.crystal_to_sample`` (returns the
   N sample-frame 6x6 Voigt stiffnesses), followed by a weighted mean;
3. the baseline: a vectorised ``numpy.einsum`` over full 3x3x3x3 tensors,
   ``T'_nijkl = R_nia R_njb R_nkc R_nld T_abcd`` with ``R_n = g_n^T``, done in chunks to bound
   memory, converted to Voigt form and averaged;
4. a per-grain Python loop over pymatgen's ``ElasticTensor.rotate``; it is slow, so it is timed
   on a subset of the orientations (2,000 by default) and the time is scaled linearly to N.

Every method gets the same orientations and weights. The averaged 6x6 stiffnesses must agree
to 1e-9 relative (largest absolute difference divided by the largest absolute entry): the
project's two results against the einsum on all N orientations, and pymatgen against the
project on the subset. The script then reports throughput (orientations per second), the
speed ratios (baseline time / project time) and whether the targets are met: at least 3x
faster than the einsum and at least 50x faster than the pymatgen loop.

Orientations are Bunge matrices ``g`` (``v_crystal = g @ v_sample``) made from seeded random
unit quaternions (normal 4-vectors, normalised) with ``orix.quaternion.Rotation.to_matrix``.
Fast methods are timed as the best of ``--repeats`` runs (2 by default) with
``time.perf_counter``; the pymatgen loop is run once. Timings depend on what else the machine
is doing, so the load average is printed alongside them.

How to run
----------
From the repository root::

    python benchmarks/rotation_and_averaging.py
    python benchmarks/rotation_and_averaging.py --n 1000000 --pymatgen-subset 2000 --seed 1

The default run takes under a minute on 2 cores and peaks at about 1.5 GB of memory. The exit
status is 0 when all results agree, 1 when any pair disagrees beyond the tolerance; missed
speed targets are reported but do not change the exit status.
"""

from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parents[1]))   # measure this checkout, not an installed copy

import argparse
import os
import platform
import sys
import time
from collections.abc import Callable

import numpy as np
from orix.quaternion import Rotation
from pymatgen.analysis.elasticity import ElasticTensor
from rows import COLLECTED, record, write_rows

from fabric2seis.elastic import (
    crystal_to_sample,
    kelvin_to_voigt,
    tensor_to_voigt,
    voigt_to_kelvin,
    voigt_to_tensor,
    weighted_rotated_mean,
)
from fabric2seis.elastic.minerals import find_mineral

#: largest accepted relative difference between two averaged stiffnesses
AGREEMENT_TOLERANCE = 1e-9
#: the project's method should be at least this many times faster than the einsum baseline
TARGET_SPEEDUP_OVER_EINSUM = 3.0
#: ... and at least this many times faster than the per-grain pymatgen loop
TARGET_SPEEDUP_OVER_PYMATGEN = 50.0


# --- inputs -----------------------------------------------------------------------------------


def random_orientation_matrices(count: int, rng: np.random.Generator) -> np.ndarray:
    """Bunge orientation matrices (count, 3, 3) of uniformly random orientations.

    Normal random 4-vectors, normalised, are uniformly distributed unit quaternions.
    """
    quaternions = rng.normal(size=(count, 4))
    quaternions /= np.linalg.norm(quaternions, axis=1, keepdims=True)
    return np.asarray(Rotation(quaternions).to_matrix(), dtype=float)


def random_positive_weights(count: int, rng: np.random.Generator) -> np.ndarray:
    """Weights drawn uniformly from [0.5, 1.5), so that the weighting is exercised."""
    return rng.uniform(0.5, 1.5, size=count)


# --- the methods being compared (each returns the weighted mean 6x6 Voigt stiffness, GPa) -----


def mean_by_weighted_rotated_mean(stiffness: np.ndarray, g: np.ndarray,
                                  weights: np.ndarray) -> np.ndarray:
    """Project: the chunked averaging kernel, in Kelvin form."""
    return kelvin_to_voigt(weighted_rotated_mean(voigt_to_kelvin(stiffness), g, weights))


def mean_by_crystal_to_sample(stiffness: np.ndarray, g: np.ndarray,
                              weights: np.ndarray) -> np.ndarray:
    """Project: rotate every grain (all N at once), then take the weighted mean."""
    per_grain = crystal_to_sample(stiffness, g)
    return np.tensordot(weights, per_grain, axes=1) / weights.sum()


def mean_by_einsum(stiffness: np.ndarray, g: np.ndarray, weights: np.ndarray,
                   chunk: int) -> np.ndarray:
    """Baseline: contract full 3x3x3x3 tensors with numpy.einsum, ``chunk`` grains at a time."""
    rotations = np.swapaxes(g, -1, -2)
    tensor = voigt_to_tensor(stiffness)
    weighted_sum = np.zeros((6, 6))
    for start in range(0, len(g), chunk):
        r = rotations[start:start + chunk]
        rotated = np.einsum("nia,njb,nkc,nld,abcd->nijkl", r, r, r, r, tensor, optimize=True)
        weighted_sum += np.tensordot(weights[start:start + chunk], tensor_to_voigt(rotated),
                                     axes=1)
    return weighted_sum / weights.sum()


def mean_by_pymatgen_loop(stiffness: np.ndarray, g: np.ndarray,
                          weights: np.ndarray) -> np.ndarray:
    """Baseline: one ``ElasticTensor.rotate`` call per grain in a Python loop.

    The ElasticTensor is built once, outside the loop, and the rotated full tensors are summed
    and converted to Voigt form once at the end; both choices make the loop faster, so the
    speed ratio against it is, if anything, understated.
    """
    elastic_tensor = ElasticTensor.from_voigt(stiffness)
    rotations = np.swapaxes(g, -1, -2)
    weighted_sum = np.zeros((3, 3, 3, 3))
    for rotation, weight in zip(rotations, weights):
        weighted_sum += weight * np.asarray(elastic_tensor.rotate(rotation))
    return tensor_to_voigt(weighted_sum / weights.sum())


# --- measuring --------------------------------------------------------------------------------


def best_time(method: Callable[[], np.ndarray], repeats: int) -> tuple[float, np.ndarray]:
    """Run ``method`` ``repeats`` times; return the shortest wall time (s) and the last result."""
    shortest = float("inf")
    result = np.empty(0)
    for _ in range(repeats):
        start = time.perf_counter()
        result = method()
        shortest = min(shortest, time.perf_counter() - start)
    return shortest, result


def relative_difference(result: np.ndarray, reference: np.ndarray) -> float:
    """Largest absolute difference divided by the largest absolute entry of ``reference``."""
    return float(np.max(np.abs(result - reference)) / np.max(np.abs(reference)))


def machine_description() -> list[str]:
    """Lines describing the machine, numpy, its thread pools and the current load."""
    lines = [
        f"machine:   {platform.machine()}, {os.cpu_count()} logical CPUs, "
        f"{platform.system()} {platform.release()}",
        f"software:  Python {platform.python_version()}, numpy {np.__version__}",
    ]
    thread_variables = [f"{name}={os.environ[name]}" for name in
                        ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")
                        if name in os.environ]
    if thread_variables:
        lines.append(f"threads:   {', '.join(thread_variables)} (environment)")
    try:
        from threadpoolctl import threadpool_info
    except ImportError:
        lines.append("threads:   threadpoolctl not installed, thread pools not inspected")
    else:
        for pool in threadpool_info():
            lines.append(f"threads:   {pool.get('internal_api', '?')} "
                         f"{pool.get('version', '')} ({pool.get('user_api', '?')}): "
                         f"{pool.get('num_threads', '?')} threads")
    if hasattr(os, "getloadavg"):
        one, five, _ = os.getloadavg()
        lines.append(f"load:      {one:.2f} runnable processes (1-minute average), "
                     f"{five:.2f} (5-minute average), before the benchmark")
    return lines


def format_stiffness(c: np.ndarray) -> list[str]:
    """Rows of a 6x6 stiffness, in GPa."""
    return ["    " + " ".join(f"{value:9.3f}" for value in row) for row in c]


def agreement_line(label: str, difference: float) -> tuple[str, bool]:
    """A printable verdict on a relative difference, and whether it is within tolerance."""
    agrees = difference <= AGREEMENT_TOLERANCE
    verdict = "agree" if agrees else "DISAGREE"
    return (f"  {label:<46} {difference:.2e} (relative, tolerance "
            f"{AGREEMENT_TOLERANCE:.0e}): {verdict}"), agrees


def target_line(label: str, ratio: float, target: float) -> str:
    """A printable verdict on a speed ratio against its target."""
    verdict = "met" if ratio >= target else "NOT met"
    return f"  {label:<50} {ratio:8.1f}x (target >= {target:.0f}x): {verdict}"


# --- main -------------------------------------------------------------------------------------


def parse_arguments(argv: list[str] | None) -> argparse.Namespace:
    parser = argparse.ArgumentParser(
        description="Time rotation and Voigt averaging of random olivine orientations: "
                    "fabric2seis against a numpy einsum and a pymatgen loop.")
    parser.add_argument("--n", type=int, default=1_000_000,
                        help="number of orientations (default 1,000,000)")
    parser.add_argument("--pymatgen-subset", type=int, default=2000,
                        help="orientations the pymatgen loop is timed on, then scaled to N "
                             "(default 2000)")
    parser.add_argument("--seed", type=int, default=1,
                        help="seed of the random orientations and weights (default 1)")
    parser.add_argument("--einsum-chunk", type=int, default=100_000,
                        help="orientations per einsum call, to bound memory (default 100,000)")
    parser.add_argument("--repeats", type=int, default=2,
                        help="runs of each fast method; the best time counts (default 2)")
    parser.add_argument("--json", default=None, metavar="PATH",
                        help="also write the figures as JSON rows (benchmarks/run.py)")
    args = parser.parse_args(argv)
    if args.n < 1:
        parser.error("--n must be at least 1")
    if args.pymatgen_subset < 1:
        parser.error("--pymatgen-subset must be at least 1")
    if args.einsum_chunk < 1 or args.repeats < 1:
        parser.error("--einsum-chunk and --repeats must be at least 1")
    return args


def main(argv: list[str] | None = None) -> int:
    args = parse_arguments(argv)
    count = args.n
    subset = min(args.pymatgen_subset, count)  # the subset cannot be larger than the whole

    print("Rotation and Voigt averaging of olivine orientations")
    print("=" * 52)
    for line in machine_description():
        print(line)

    olivine = find_mineral("olivine")
    stiffness = np.asarray(olivine.stiffness_gpa, dtype=float)
    rng = np.random.default_rng(args.seed)
    start = time.perf_counter()
    g = random_orientation_matrices(count, rng)
    weights = random_positive_weights(count, rng)
    setup_seconds = time.perf_counter() - start
    print(f"input:     olivine stiffness (6x6, GPa) from fabric2seis.elastic.minerals, "
          f"source: {olivine.source}")
    print(f"           {count:,} random orientations (seed {args.seed}) with random weights "
          f"in [0.5, 1.5); generated in {setup_seconds:.2f} s (not counted below)")
    print(f"timing:    time.perf_counter, best of {args.repeats} run(s) for the vectorised "
          f"methods, 1 run for the pymatgen loop")
    print()

    # Each method is timed on the same g and weights.
    print(f"Timings ({count:,} orientations)")
    kernel_seconds, kernel_mean = best_time(
        lambda: mean_by_weighted_rotated_mean(stiffness, g, weights), args.repeats)
    per_grain_seconds, per_grain_mean = best_time(
        lambda: mean_by_crystal_to_sample(stiffness, g, weights), args.repeats)
    einsum_seconds, einsum_mean = best_time(
        lambda: mean_by_einsum(stiffness, g, weights, args.einsum_chunk), args.repeats)
    subset_g, subset_weights = g[:subset], weights[:subset]
    pymatgen_subset_seconds, pymatgen_mean = best_time(
        lambda: mean_by_pymatgen_loop(stiffness, subset_g, subset_weights), 1)
    pymatgen_seconds = pymatgen_subset_seconds * count / subset

    rows = [
        ("fabric2seis weighted_rotated_mean (Kelvin kernel)", kernel_seconds, ""),
        ("fabric2seis crystal_to_sample + weighted mean", per_grain_seconds, ""),
        (f"numpy einsum on 3x3x3x3 tensors, chunks of {args.einsum_chunk:,}",
         einsum_seconds, ""),
        ("pymatgen ElasticTensor.rotate, per-grain loop", pymatgen_seconds,
         f"  (timed on {subset:,} in {pymatgen_subset_seconds:.3f} s, "
         f"scaled to {count:,})"),
    ]
    for label, seconds, note in rows:
        print(f"  {label:<62} {seconds:9.3f} s  {count / seconds:13,.0f} orientations/s{note}")
    print()

    print("Speed ratios (baseline time / project time)")
    for project_label, project_seconds in (("weighted_rotated_mean", kernel_seconds),
                                           ("crystal_to_sample + mean", per_grain_seconds)):
        print(f"  {project_label:<26} vs einsum: {einsum_seconds / project_seconds:8.1f}x   "
              f"vs pymatgen loop: {pymatgen_seconds / project_seconds:8.1f}x")
    print()

    # Agreement: the project's subset result is a separate, untimed call.
    kernel_subset_mean = mean_by_weighted_rotated_mean(stiffness, subset_g, subset_weights)
    print("Agreement of the averaged 6x6 stiffnesses (max |difference| / max |entry|)")
    checks = [
        agreement_line(f"weighted_rotated_mean vs einsum ({count:,})",
                       relative_difference(kernel_mean, einsum_mean)),
        agreement_line(f"crystal_to_sample + mean vs einsum ({count:,})",
                       relative_difference(per_grain_mean, einsum_mean)),
        agreement_line(f"pymatgen vs weighted_rotated_mean ({subset:,})",
                       relative_difference(pymatgen_mean, kernel_subset_mean)),
    ]
    for line, _ in checks:
        print(line)
    all_agree = all(agrees for _, agrees in checks)
    print()

    print(f"Voigt average from weighted_rotated_mean, {count:,} orientations (GPa):")
    for line in format_stiffness(kernel_mean):
        print(line)
    print()

    for label, seconds in (("weighted_rotated_mean", kernel_seconds),
                           ("crystal_to_sample + mean", per_grain_seconds)):
        record(f"Voigt average of {count:,} orientations, {label}", seconds, "s", baseline=einsum_seconds,
               baseline_unit="s", baseline_label="numpy einsum on 3x3x3x3 tensors", ratio=einsum_seconds / seconds,
               ratio_label="einsum / project", target=("ratio", ">=", TARGET_SPEEDUP_OVER_EINSUM),
               note=f"best of {args.repeats}")
        record(f"Voigt average of {count:,} orientations, {label}, vs pymatgen", seconds, "s",
               baseline=pymatgen_seconds, baseline_unit="s", baseline_label="pymatgen rotate loop (scaled)",
               ratio=pymatgen_seconds / seconds, ratio_label="pymatgen / project",
               target=("ratio", ">=", TARGET_SPEEDUP_OVER_PYMATGEN),
               note=f"pymatgen timed on {subset:,} orientations, scaled")
    print("Targets")
    print(target_line("weighted_rotated_mean vs einsum", einsum_seconds / kernel_seconds,
                      TARGET_SPEEDUP_OVER_EINSUM))
    print(target_line("weighted_rotated_mean vs pymatgen loop (scaled)",
                      pymatgen_seconds / kernel_seconds, TARGET_SPEEDUP_OVER_PYMATGEN))
    print(target_line("crystal_to_sample + mean vs einsum", einsum_seconds / per_grain_seconds,
                      TARGET_SPEEDUP_OVER_EINSUM))
    print(target_line("crystal_to_sample + mean vs pymatgen loop (scaled)",
                      pymatgen_seconds / per_grain_seconds, TARGET_SPEEDUP_OVER_PYMATGEN))
    print()

    write_rows(args.json, "rotation_and_averaging", COLLECTED)
    if not all_agree:
        print(f"FAILED: the methods disagree by more than {AGREEMENT_TOLERANCE:.0e} relative.")
        return 1
    print(f"All results agree to {AGREEMENT_TOLERANCE:.0e} relative.")
    return 0


if __name__ == "__main__":
    sys.exit(main())
