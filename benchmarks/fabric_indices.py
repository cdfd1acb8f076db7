"""Benchmark: the J-index and the M-index misorientations of olivine aggregates.

What it measures
----------------
Part 1, J-index. ``fabric2seis.fabric.j_index`` (kernel halfwidth 10 degrees, weights 1) is
timed on N olivine grains for each N in ``--sizes`` (10,000, 30,000 and 100,000 by default),
for two sets of orientations:

* random: ``fabric2seis.synth.random_quaternions(N, numpy.random.default_rng(seed))``;
* textured: ``fabric2seis.synth.fabric_orientations(olivine, "olivine-A", N, 20.0, seed)``,
  an ideal A-type fabric with 20 degrees of scatter.

From the times the script reports the measured scaling exponent
``log(t_last / t_first) / log(N_last / N_first)`` over the sizes actually run (target: at most
1.2, i.e. close to linear in N). At ``--brute-size`` grains (10,000 by default) both sets are
also summed by brute force: the same definition of J, every pair of grains and every proper
symmetry operation, no cut-off, vectorised in blocks of 1,000 grains. ``j_index`` itself sums
the ODF's SO(3) Fourier series (Wigner matrices of degree up to L, L = 32 at 10 degrees; see
``fabric2seis.harmonics``), so its cost grows linearly with N; the older pair sum
(``method="pairs"``) is timed at the brute-force size for comparison. The script reports its
time, the ratio brute-force time / j_index time (target: at least 20x) and the relative
difference of the two J values, which must be below 1e-3.

Part 2, M-index misorientations. For ``--m-grains`` random olivine grains (100,000) and
``--m-pairs`` random pairs of distinct grains (1,000,000), the smallest misorientation angle of
each pair is computed by ``fabric2seis.orientations.misorientation_angles`` and by orix
(``Misorientation(ob * ~oa, (pg, pg)).reduce().angle`` with ``pg`` the proper point group);
the orix time includes building the two ``Orientation`` objects, the product, the
``Misorientation`` and the reduction. The largest difference must be below 1e-6 degrees; the
speed ratio orix time / fabric2seis time has a target of at least 5x. Finally the whole
``fabric2seis.fabric.m_index`` call is timed twice: the first call, with empty caches, also
computes the misorientation histogram of a random fabric for the point group (2,000,000
pairs), which fabric2seis then caches (in memory and on disk), so the second call shows the
cost of the index itself. For the first call the in-memory cache is cleared and the disk cache
(``$XDG_CACHE_HOME/fabric2seis``) is pointed at a new temporary folder, so the user's own cache
neither shortens the measurement nor is written to.

Timing: ``time.perf_counter``; a call taking under 30 s is run twice and the shorter time
counts, a longer call is run once. Before each size the time is predicted from the previous
size assuming growth as N^1.5 (a margin over the linear cost), and a size whose single call
would take longer than ``--max-call-minutes`` (20) is skipped and reported as skipped. Timings
depend on what else the machine is doing; the load average is printed alongside them.

How to run
----------
From the repository root::

    python benchmarks/fabric_indices.py
    python benchmarks/fabric_indices.py --sizes 10000,30000,100000 --brute-size 10000 \\
        --m-grains 100000 --m-pairs 1000000 --seed 1

With the defaults it takes about five minutes on 2 cores (most of it in the brute-force sums and
the pair sums at 10,000 grains) and needs about 2 GB of memory. The exit status is 1 when j_index and
the brute-force sum disagree by 1e-3 relative or more, or the misorientation angles of
fabric2seis and orix differ by 1e-6 degrees or more; otherwise 0. Missed speed targets are
reported but do not change the exit status.
"""

from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parents[1]))   # measure this checkout, not an installed copy

import argparse
import math
import os
import platform
import sys
import tempfile
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import orix
import scipy
from orix.quaternion import Misorientation, Orientation
from rows import COLLECTED, record, write_rows

import fabric2seis
from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.fabric import j_index, m_index, random_misorientation_histogram, self_convolution
from fabric2seis.orientations import misorientation_angles, multiply, proper_symmetry_quaternions
from fabric2seis.synth import fabric_orientations, random_quaternions

#: kernel halfwidth of the J-index (degrees)
HALFWIDTH_DEG = 10.0
#: the textured set: ideal fabric and its scatter (degrees)
TEXTURED_FABRIC = "olivine-A"
TEXTURED_SCATTER_DEG = 20.0
#: grains per block of the brute-force sum
BRUTE_BLOCK = 1000
#: calls shorter than this (s) are run twice and the shorter time counts
BEST_OF_TWO_BELOW_SECONDS = 30.0

#: j_index time should grow at most as N^1.2
TARGET_SCALING_EXPONENT = 1.2
#: j_index should be at least this many times faster than the brute-force sum
TARGET_SPEEDUP_OVER_BRUTE = 20.0
#: fabric2seis misorientations should be at least this many times faster than orix
TARGET_SPEEDUP_OVER_ORIX = 5.0
#: largest accepted relative difference between j_index and the brute-force J
J_TOLERANCE = 1e-3
#: largest accepted difference between fabric2seis and orix misorientation angles (degrees)
ANGLE_TOLERANCE_DEG = 1e-6


# --- measuring --------------------------------------------------------------------------------


@dataclass
class Timing:
    seconds: float      # the time that counts: the shorter of two runs, or the only run
    runs: int
    result: object

    @property
    def runs_text(self) -> str:
        return "best of 2" if self.runs == 2 else "1 run"


def timed(call: Callable[[], object]) -> Timing:
    """Run ``call``; run it a second time if it took under 30 s and keep the shorter time."""
    start = time.perf_counter()
    result = call()
    seconds = time.perf_counter() - start
    if seconds >= BEST_OF_TWO_BELOW_SECONDS:
        return Timing(seconds, 1, result)
    start = time.perf_counter()
    result = call()
    return Timing(min(seconds, time.perf_counter() - start), 2, result)


def machine_description() -> list[str]:
    lines = [
        f"machine:   {platform.machine()}, os.cpu_count() = {os.cpu_count()}, "
        f"{platform.system()} {platform.release()}",
        f"software:  Python {platform.python_version()}, numpy {np.__version__}, "
        f"scipy {scipy.__version__}, orix {orix.__version__}, "
        f"fabric2seis {getattr(fabric2seis, '__version__', '(version unknown)')}",
    ]
    thread_variables = [f"{name}={os.environ[name]}" for name in
                        ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")
                        if name in os.environ]
    lines.append("threads:   " + (", ".join(thread_variables) if thread_variables
                                  else "no thread-count variables set (BLAS default)"))
    if hasattr(os, "getloadavg"):
        one, five, _ = os.getloadavg()
        lines.append(f"load:      {one:.2f} runnable processes (1-minute average), "
                     f"{five:.2f} (5-minute average), before the benchmark")
    return lines


def verdict(met: bool) -> str:
    return "met" if met else "NOT met"


def say(text: str = "") -> None:
    print(text, flush=True)


# --- Part 1: J-index ----------------------------------------------------------------------------


def brute_force_j(q: np.ndarray, w: np.ndarray, symmetry, halfwidth_deg: float) -> float:
    """J summed over every pair of grains and every proper symmetry operation, no cut-off."""
    sym = proper_symmetry_quaternions(symmetry)
    n = len(q)
    wn = w / w.sum()
    total = 0.0
    for t in sym:
        moved = multiply(t[None], q)
        for s in range(0, n, BRUTE_BLOCK):
            c = np.clip(np.abs(q[s:s + BRUTE_BLOCK] @ moved.T), 0.0, 1.0)
            total += wn[s:s + BRUTE_BLOCK] @ self_convolution(halfwidth_deg, 2.0 * np.arccos(c)) @ wn
    return float(total / len(sym))


def orientation_set(kind: str, olivine, n: int, seed: int) -> np.ndarray:
    if kind == "random":
        return random_quaternions(n, np.random.default_rng(seed))
    return fabric_orientations(olivine, TEXTURED_FABRIC, n, TEXTURED_SCATTER_DEG, seed)


SET_DESCRIPTIONS = {
    "random": "random (uniform) orientations",
    "textured": f"textured, {TEXTURED_FABRIC} fabric with {TEXTURED_SCATTER_DEG:.0f} degrees scatter",
}


def part_one(args, olivine) -> tuple[list[str], bool]:
    """Time j_index over the sizes and against brute force; return target lines and agreement."""
    symmetry = olivine.orix_symmetry
    n_ops = len(proper_symmetry_quaternions(symmetry))
    limit_seconds = args.max_call_minutes * 60.0
    j_index(random_quaternions(10, np.random.default_rng(0)), np.ones(10), symmetry,
            HALFWIDTH_DEG)   # builds the cached kernel tables, so no size pays for them

    say("Part 1: J-index (fabric2seis.fabric.j_index, halfwidth "
        f"{HALFWIDTH_DEG:.0f} degrees, weights 1, {n_ops} proper symmetry operations)")
    say("=" * 78)
    measured: dict[str, dict[int, Timing]] = {}
    targets: list[str] = []
    for kind in ("random", "textured"):
        say(f"{kind}: {SET_DESCRIPTIONS[kind]}")
        say(f"  {'grains':>9}  {'time (s)':>10}  {'timing':<10}  {'J':>10}  "
            f"{'us per grain':>17}  {'exponent vs previous':>20}")
        measured[kind] = {}
        previous: tuple[int, float] | None = None
        for n in args.sizes:
            if previous is not None:
                predicted = previous[1] * (n / previous[0]) ** 1.5
                if predicted > limit_seconds:
                    say(f"  {n:>9,}  SKIPPED: one call predicted to take about "
                        f"{predicted / 60:.0f} min (growth as N^1.5 from {previous[0]:,} grains), "
                        f"over the {args.max_call_minutes:g} min limit")
                    continue
            q = orientation_set(kind, olivine, n, args.seed)
            w = np.ones(n)
            timing = timed(lambda q=q, w=w: j_index(q, w, symmetry, HALFWIDTH_DEG))
            measured[kind][n] = timing
            exponent = "" if previous is None else \
                f"{math.log(timing.seconds / previous[1]) / math.log(n / previous[0]):.2f}"
            say(f"  {n:>9,}  {timing.seconds:>10.2f}  {timing.runs_text:<10}  {timing.result:>10.5f}  "
                f"{timing.seconds / n * 1e6:>17.2f}  {exponent:>20}")
            previous = (n, timing.seconds)
        sizes_run = sorted(measured[kind])
        if len(sizes_run) >= 2:
            first, last = sizes_run[0], sizes_run[-1]
            exponent = (math.log(measured[kind][last].seconds / measured[kind][first].seconds)
                        / math.log(last / first))
            say(f"  scaling exponent log(t_last/t_first)/log(N_last/N_first), {first:,} to "
                f"{last:,} grains: {exponent:.2f}")
            record(f"j_index scaling exponent, {kind}, {first:,} to {last:,} grains", exponent, "",
                   target=("value", "<=", TARGET_SCALING_EXPONENT),
                   note=f"{measured[kind][first].seconds:.2f} s -> {measured[kind][last].seconds:.2f} s")
            targets.append(f"  {'j_index scaling exponent, ' + kind:<52} {exponent:8.2f}  "
                           f"(target <= {TARGET_SCALING_EXPONENT}): {verdict(exponent <= TARGET_SCALING_EXPONENT)}")
        else:
            say("  scaling exponent: needs at least two sizes")
            targets.append(f"  {'j_index scaling exponent, ' + kind:<52}   not measured "
                           "(fewer than two sizes run)")
        say()

    n = args.brute_size
    say(f"Brute force at {n:,} grains: every pair x every symmetry operation, no cut-off, "
        f"blocks of {BRUTE_BLOCK:,} grains")
    say(f"  {'set':<9}  {'j_index (s)':>11}  {'brute (s)':>10}  {'brute/j_index':>13}  "
        f"{'J, j_index':>11}  {'J, brute':>11}  {'relative diff':>13}  agreement  {'pairs (s)':>9}")
    all_agree = True
    for kind in ("random", "textured"):
        q = orientation_set(kind, olivine, n, args.seed)
        w = np.ones(n)
        fast = measured[kind].get(n) or timed(lambda q=q, w=w: j_index(q, w, symmetry, HALFWIDTH_DEG))
        brute = timed(lambda q=q, w=w: brute_force_j(q, w, symmetry, HALFWIDTH_DEG))
        ratio = brute.seconds / fast.seconds
        difference = abs(fast.result - brute.result) / abs(brute.result)
        agrees = difference < J_TOLERANCE
        all_agree &= agrees
        say(f"  {kind:<9}  {fast.seconds:>11.2f}  {brute.seconds:>10.2f}  {ratio:>12.1f}x  "
            f"{fast.result:>11.6f}  {brute.result:>11.6f}  {difference:>13.2e}  "
            f"{'agree' if agrees else 'DISAGREE'} (tolerance {J_TOLERANCE:.0e})")
        pairs = timed(lambda q=q, w=w: j_index(q, w, symmetry, HALFWIDTH_DEG, method="pairs"))
        say(f"  {'':<9}  ({fast.runs_text}, {brute.runs_text}); the pair sum of earlier versions: "
            f"{pairs.seconds:.2f} s, J {pairs.result:.6f}")
        record(f"j_index, {kind}, {n:,} grains", fast.seconds, "s", baseline=brute.seconds, baseline_unit="s",
               baseline_label="brute-force pair sum", ratio=ratio, ratio_label="brute / j_index",
               target=("ratio", ">=", TARGET_SPEEDUP_OVER_BRUTE),
               note=f"{fast.runs_text}; J agrees to {difference:.1e} relative")
        targets.append(f"  {f'j_index vs brute force, {kind}, {n:,} grains':<52} {ratio:7.1f}x  "
                       f"(target >= {TARGET_SPEEDUP_OVER_BRUTE:.0f}x): "
                       f"{verdict(ratio >= TARGET_SPEEDUP_OVER_BRUTE)}")
    say()
    return targets, all_agree


# --- Part 2: M-index misorientations ------------------------------------------------------------


def orix_misorientation_angles(qa: np.ndarray, qb: np.ndarray, proper_group,
                               stages: dict) -> np.ndarray:
    """Smallest misorientation angles (radians) with orix; stage times are stored in ``stages``."""
    start = time.perf_counter()
    oa = Orientation(qa, proper_group)
    ob = Orientation(qb, proper_group)
    built = time.perf_counter()
    misorientation = Misorientation(ob * ~oa, (proper_group, proper_group))
    multiplied = time.perf_counter()
    angles = np.asarray(misorientation.reduce().angle, dtype=float)
    stages.update(orientations=built - start, misorientation=multiplied - built,
                  reduce=time.perf_counter() - multiplied)
    return angles


def part_two(args, olivine) -> tuple[list[str], bool]:
    symmetry = olivine.orix_symmetry
    sym = proper_symmetry_quaternions(symmetry)
    proper_group = symmetry.proper_subgroup
    rng = np.random.default_rng(args.seed)
    q = random_quaternions(args.m_grains, rng)
    i = rng.integers(0, args.m_grains, args.m_pairs)
    j = (i + rng.integers(1, args.m_grains, args.m_pairs)) % args.m_grains   # j != i
    qa, qb = q[i], q[j]

    say(f"Part 2: M-index misorientations ({args.m_grains:,} random grains, "
        f"{args.m_pairs:,} random pairs of distinct grains, point group {symmetry.name}, "
        f"proper subgroup {proper_group.name})")
    say("=" * 78)
    ours = timed(lambda: misorientation_angles(qa, qb, sym))
    stages: dict = {}
    theirs = timed(lambda: orix_misorientation_angles(qa, qb, proper_group, stages))
    ratio = theirs.seconds / ours.seconds
    largest_deg = float(np.max(np.abs(np.degrees(ours.result - theirs.result))))
    agrees = largest_deg < ANGLE_TOLERANCE_DEG
    say(f"  {'method':<62}  {'time (s)':>9}  {'pairs/s':>13}  timing")
    say(f"  {'fabric2seis.orientations.misorientation_angles':<62}  {ours.seconds:>9.3f}  "
        f"{args.m_pairs / ours.seconds:>13,.0f}  {ours.runs_text}")
    say(f"  {'orix: Orientation x2, Misorientation(ob * ~oa), reduce().angle':<62}  "
        f"{theirs.seconds:>9.3f}  {args.m_pairs / theirs.seconds:>13,.0f}  {theirs.runs_text}")
    say(f"    orix stages, last run: Orientation objects {stages['orientations']:.3f} s, "
        f"product + Misorientation {stages['misorientation']:.3f} s, "
        f"reduce + angle {stages['reduce']:.3f} s")
    say(f"  speed ratio orix / fabric2seis: {ratio:.1f}x")
    say(f"  largest |difference| of the angles: {largest_deg:.2e} degrees "
        f"(tolerance {ANGLE_TOLERANCE_DEG:.0e}): {'agree' if agrees else 'DISAGREE'}")
    say(f"  mean misorientation angle: {np.degrees(ours.result).mean():.3f} degrees, "
        f"largest {np.degrees(ours.result).max():.3f} degrees")
    say()

    say(f"Whole fabric2seis.fabric.m_index(q, symmetry, n_pairs={args.m_pairs:,}) on the "
        f"{args.m_grains:,} grains")
    # m_index compares with the misorientation histogram of a random fabric of the point group,
    # computed once and cached in memory (and, in current versions, on disk under
    # $XDG_CACHE_HOME/fabric2seis). For a truly cold first call the memory cache is emptied and
    # the disk cache pointed at a new, empty temporary folder; the user's cache is not touched.
    saved_cache_home = os.environ.get("XDG_CACHE_HOME")
    with tempfile.TemporaryDirectory(prefix="fabric_indices_cache_") as cache_home:
        os.environ["XDG_CACHE_HOME"] = cache_home
        try:
            random_misorientation_histogram.cache_clear()
            start = time.perf_counter()
            first_value = m_index(q, symmetry, n_pairs=args.m_pairs)
            first_seconds = time.perf_counter() - start
            on_disk = sorted(p.name for p in Path(cache_home).rglob("*") if p.is_file())
            second = timed(lambda: m_index(q, symmetry, n_pairs=args.m_pairs))
        finally:
            if saved_cache_home is None:
                os.environ.pop("XDG_CACHE_HOME", None)
            else:
                os.environ["XDG_CACHE_HOME"] = saved_cache_home
    first_label = "first call, empty caches (computes the random-fabric histogram)"
    second_label = "second call (random-fabric histogram from the cache)"
    say(f"  {first_label:<66} {first_seconds:8.3f} s  (1 run)")
    say(f"  {second_label:<66} {second.seconds:8.3f} s  ({second.runs_text})")
    say("  the first call cached the histogram in memory"
        + (" and in the temporary disk-cache folder" if on_disk else " (no disk cache written)"))
    say(f"  so the random-fabric histogram costs about {first_seconds - second.seconds:.3f} s "
        f"once per point group")
    say(f"  M-index = {first_value:.5f} (second call {second.result:.5f}); for random grains "
        "only sampling noise, so close to 0")
    say()
    record(f"misorientation angles, {args.m_pairs:,} pairs", ours.seconds, "s", baseline=theirs.seconds,
           baseline_unit="s", baseline_label="orix Misorientation.reduce().angle", ratio=ratio,
           ratio_label="orix / fabric2seis", target=("ratio", ">=", TARGET_SPEEDUP_OVER_ORIX),
           note=f"{ours.runs_text}; angles agree to {largest_deg:.1e} deg")
    record(f"m_index, {args.m_grains:,} grains, first call (empty caches)", first_seconds, "s",
           baseline=second.seconds, baseline_unit="s", baseline_label="second call (cached histogram)",
           ratio=first_seconds / second.seconds, ratio_label="first / second",
           note="one run; second " + second.runs_text)
    target = (f"  {'misorientation angles, orix / fabric2seis':<52} {ratio:7.1f}x  "
              f"(target >= {TARGET_SPEEDUP_OVER_ORIX:.0f}x): {verdict(ratio >= TARGET_SPEEDUP_OVER_ORIX)}")
    return [target], agrees


# --- main -------------------------------------------------------------------------------------


def parse_sizes(text: str) -> list[int]:
    try:
        sizes = sorted({int(part) for part in text.split(",") if part.strip()})
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected comma-separated whole numbers, got '{text}'") from None
    if not sizes or sizes[0] < 2:
        raise argparse.ArgumentTypeError("every size must be at least 2 grains")
    return sizes


def parse_arguments(argv: list[str] | None) -> argparse.Namespace:
    parser = argparse.ArgumentParser(
        description="Time the J-index (against a brute-force sum) and the M-index "
                    "misorientations (against orix) of olivine aggregates.")
    parser.add_argument("--sizes", type=parse_sizes, default=parse_sizes("10000,30000,100000"),
                        help="grain counts for the J-index timings, comma-separated "
                             "(default 10000,30000,100000)")
    parser.add_argument("--brute-size", type=int, default=10_000,
                        help="grains for the brute-force J comparison (default 10,000)")
    parser.add_argument("--m-grains", type=int, default=100_000,
                        help="grains for the M-index misorientations (default 100,000)")
    parser.add_argument("--m-pairs", type=int, default=1_000_000,
                        help="random pairs of grains for the M-index (default 1,000,000)")
    parser.add_argument("--seed", type=int, default=1, help="seed of all random inputs (default 1)")
    parser.add_argument("--max-call-minutes", type=float, default=20.0,
                        help="skip a J-index size whose single call is predicted to take longer "
                             "(default 20)")
    parser.add_argument("--json", default=None, metavar="PATH",
                        help="also write the figures as JSON rows (benchmarks/run.py)")
    args = parser.parse_args(argv)
    if args.brute_size < 2 or args.m_grains < 2 or args.m_pairs < 1:
        parser.error("--brute-size and --m-grains must be at least 2, --m-pairs at least 1")
    return args


def main(argv: list[str] | None = None) -> int:
    args = parse_arguments(argv)
    olivine = find_mineral("olivine")
    say("Fabric indices of olivine aggregates: J-index and M-index")
    say("=" * 58)
    for line in machine_description():
        say(line)
    say(f"inputs:    seed {args.seed}; J-index sizes {', '.join(f'{n:,}' for n in args.sizes)} "
        f"grains; brute force at {args.brute_size:,} grains; M-index {args.m_grains:,} grains, "
        f"{args.m_pairs:,} pairs")
    say(f"timing:    time.perf_counter; best of 2 runs for calls under "
        f"{BEST_OF_TWO_BELOW_SECONDS:.0f} s, 1 run otherwise")
    say()

    started = time.perf_counter()
    j_targets, j_agree = part_one(args, olivine)
    m_targets, m_agree = part_two(args, olivine)

    say("Targets")
    for line in j_targets + m_targets:
        say(line)
    say()
    say(f"Total wall time: {time.perf_counter() - started:.0f} s")
    write_rows(args.json, "fabric_indices", COLLECTED)
    failures = []
    if not j_agree:
        failures.append(f"j_index and the brute-force J differ by {J_TOLERANCE:.0e} relative or more")
    if not m_agree:
        failures.append(f"fabric2seis and orix misorientation angles differ by "
                        f"{ANGLE_TOLERANCE_DEG:.0e} degrees or more")
    if failures:
        say("FAILED: " + "; ".join(failures) + ".")
        return 1
    say(f"All results agree: J within {J_TOLERANCE:.0e} relative, misorientation angles within "
        f"{ANGLE_TOLERANCE_DEG:.0e} degrees.")
    return 0


if __name__ == "__main__":
    sys.exit(main())
