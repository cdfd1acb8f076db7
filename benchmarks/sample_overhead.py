"""Benchmark of the per-sample overhead of the suite: start-up against the computing of a demo sample.

What one small sample costs in the workflow besides its computing, in parts:
  * compute, warm: `pipeline.run_sample` on the demo grain list (VM04, the smallest demo sample) in
    a process that has already run it once (imports done, caches filled), median of the repeats;
  * compute, cold: the same call as the first of a process (run.log's time: it includes the orix,
    scipy and matplotlib imports the work makes on first use);
  * command, cold: `fabric2seis sample` in a fresh process (wall time: interpreter, imports, work);
  * a Snakemake job: a `script:` job that does nothing, per job (wall time of a workflow of N such
    jobs minus one of one job, over N - 1, on one core); the suite runs two jobs per sample (`sample`
    and `sample_report`, which imports pandas);
  * the suite: N copies of VM04 on one core, wall time over N minus the warm compute.
The overhead is set against the warm compute (the issue's target: at most 20 %).

Run from the project folder:  python benchmarks/sample_overhead.py [--copies 6] [--repeats 3]
"""

from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parents[1]))   # measure this checkout, not an installed copy

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_samples" / "VM04_grain_list.csv"
ENV = {**os.environ, "PYTHONPATH": str(ROOT), "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1"}

IN_ONE_PROCESS = """
import sys, time, tempfile
from pathlib import Path
from fabric2seis.pipeline import run_sample
out = Path(tempfile.mkdtemp())
for k in range({repeats}):
    start = time.perf_counter()
    run_sample(sys.argv[1], out_dir=out / str(k), results_root=None)
    print(time.perf_counter() - start)
"""

EMPTY_WORKFLOW = """
rule all:
    input: expand("done/{{k}}.txt", k=range({n}))

rule job:
    output: "done/{{k}}.txt"
    script: "empty.py"
"""


def wall(command: list[str], cwd: Path) -> float:
    start = time.perf_counter()
    subprocess.run(command, cwd=cwd, env=ENV, check=True, capture_output=True)
    return time.perf_counter() - start


def in_one_process(repeats: int) -> list[float]:
    run = subprocess.run([sys.executable, "-c", IN_ONE_PROCESS.format(repeats=repeats), str(DEMO)], cwd=ROOT,
                         env=ENV, check=True, capture_output=True, text=True)
    return [float(line) for line in run.stdout.split()]


def snakemake_job_seconds(folder: Path, n: int) -> float:
    folder.mkdir()
    (folder / "empty.py").write_text("from pathlib import Path\nPath(snakemake.output[0]).write_text('')\n")
    times = {}
    for jobs in (1, n):
        (folder / "Snakefile").write_text(EMPTY_WORKFLOW.format(n=jobs))
        shutil.rmtree(folder / "done", ignore_errors=True)
        times[jobs] = wall([sys.executable, "-m", "snakemake", "--cores", "1", "-q"], folder)
    return (times[n] - times[1]) / (n - 1)


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--copies", type=int, default=6)
    parser.add_argument("--repeats", type=int, default=3)
    args = parser.parse_args()
    load_before = os.getloadavg()
    folder = Path(tempfile.mkdtemp(prefix="fabric2seis-overhead-"))
    runs = [in_one_process(args.repeats) for _ in range(args.repeats)]
    cold = statistics.median(r[0] for r in runs)
    warm = statistics.median(t for r in runs for t in r[1:])
    command = statistics.median(
        wall([sys.executable, "-m", "fabric2seis", "sample", str(DEMO), "--out", str(folder / f"cmd{k}")], ROOT)
        for k in range(args.repeats))
    job = snakemake_job_seconds(folder / "empty", args.copies)
    samples = folder / "samples"
    samples.mkdir()
    for k in range(args.copies):
        shutil.copy(DEMO, samples / f"copy_{k:02d}.csv")
        shutil.copy(DEMO.with_suffix(".yaml"), samples / f"copy_{k:02d}.yaml")
    suite = wall([sys.executable, "-m", "fabric2seis", "suite", "--samples", str(samples), "--results",
                  str(folder / "results"), "--cores", "1", "-q"], ROOT) / args.copies
    load_after = os.getloadavg()
    print(f"demo sample {DEMO.name}; {os.cpu_count()} cores; load average {load_before[0]:.2f} before, "
          f"{load_after[0]:.2f} after")
    print(f"  compute, warm (median)             {warm:6.2f} s   (20 % of it: {0.2 * warm:.2f} s)")
    print(f"  compute, cold (first in a process) {cold:6.2f} s   first-use imports: {cold - warm:.2f} s")
    print(f"  fabric2seis sample, fresh process  {command:6.2f} s   overhead {command - warm:.2f} s "
          f"({100 * (command - warm) / warm:.0f} %)")
    print(f"  one empty Snakemake script job     {job:6.2f} s   (two jobs per sample)")
    print(f"  suite of {args.copies} copies, per sample     {suite:6.2f} s   overhead {suite - warm:.2f} s "
          f"({100 * (suite - warm) / warm:.0f} %)")
    shutil.rmtree(folder, ignore_errors=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
