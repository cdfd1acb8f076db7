"""Benchmark of the batch workflow: a suite of small samples on one and on two cores.

It writes N small synthetic grain lists (200 olivine grains each, 50 bootstrap resamples) into a
temporary folder, runs the Snakemake workflow on it with ``--cores 1`` and then, from scratch,
with ``--cores 2`` (after a one-sample warm-up run), and reports the wall times, their ratio
(target at most 0.65), and the workflow's own overhead per sample: wall time with one core minus the summed time of the
per-sample work (from each sample's run.log), divided by the number of samples.

Run from the project folder:  python benchmarks/workflow_suite.py [--samples 24]
"""

from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parents[1]))   # measure this checkout, not an installed copy

import argparse
import re
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from rows import row, write_rows

from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.ingest.io.write import write_table
from fabric2seis.synth import fabric_orientations

ROOT = Path(__file__).resolve().parents[1]


def run(samples: Path, results: Path, cores: int, config: tuple[str, ...] = ()) -> float:
    """Wall time (s) of the workflow from scratch; ``config``: more KEY=VALUE items for ``--config``."""
    if results.exists():
        shutil.rmtree(results)
    start = time.perf_counter()
    subprocess.run([sys.executable, "-m", "snakemake", "--cores", str(cores), "--config",
                    f"samples_dir={samples}", f"results_dir={results}", *config, "-q"], cwd=ROOT, check=True,
                   capture_output=True)
    return time.perf_counter() - start


def work_seconds(results: Path) -> float:
    total = 0.0
    for log in results.glob("*/run.log"):
        last = log.read_text().strip().splitlines()[-1]
        total += float(re.match(r"\s*([\d.]+) s", last).group(1))
    return total


def write_samples(samples: Path, count: int) -> None:
    """``count`` grain lists of 200 olivine grains, each with a sidecar asking for 50 resamples."""
    olivine = find_mineral("olivine")
    for k in range(count):
        fabric = ("olivine-A", "olivine-B", "olivine-C", "random")[k % 4]
        write_table(samples / f"bench_{k:02d}.csv", fabric_orientations(olivine, fabric, 200, 20.0, seed=k),
                    ["olivine"] * 200)
        (samples / f"bench_{k:02d}.yaml").write_text("bootstrap: {n: 50}\n")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--samples", type=int, default=24)
    parser.add_argument("--json", default=None, metavar="PATH",
                        help="also write the figures as JSON rows (benchmarks/run.py)")
    args = parser.parse_args()
    folder = Path(tempfile.mkdtemp(prefix="fabric2seis-suite-"))
    samples = folder / "samples"
    samples.mkdir()
    write_samples(samples, args.samples)
    # warm-up on one sample, so that neither timed run pays for first-use caches
    warm = folder / "warm"
    warm.mkdir()
    shutil.copy(samples / "bench_00.csv", warm)
    shutil.copy(samples / "bench_00.yaml", warm)
    run(warm, folder / "results_warm", 1)
    one = run(samples, folder / "results1", 1)
    work = work_seconds(folder / "results1")
    two = run(samples, folder / "results2", 2)
    ratio = two / one
    print(f"{args.samples} samples of 200 grains (50 bootstrap resamples each)")
    print(f"  --cores 1            {one:8.1f} s")
    print(f"  --cores 2            {two:8.1f} s")
    print(f"  ratio                {ratio:8.2f}   (target <= 0.65: {'met' if ratio <= 0.65 else 'NOT met'})")
    print(f"  per-sample work      {work / args.samples:8.2f} s (from run.log)")
    print(f"  workflow overhead    {(one - work) / args.samples:8.2f} s per sample (process start-up, imports, "
          "Snakemake bookkeeping)")
    shutil.rmtree(folder, ignore_errors=True)
    write_rows(args.json, "workflow_suite", [
        row(f"workflow, {args.samples} small samples, --cores 2", two, "s", baseline=one, baseline_unit="s",
            baseline_label="--cores 1", ratio=ratio, ratio_label="2 cores / 1 core", target=("ratio", "<=", 0.65)),
        row(f"workflow overhead per sample, {args.samples} small samples on 1 core", (one - work) / args.samples, "s",
            baseline=work / args.samples, baseline_unit="s", baseline_label="per-sample work (run.log)",
            ratio=(one - work) / work, ratio_label="overhead / work",
            note="suite fixed costs included, spread over the samples")])
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
