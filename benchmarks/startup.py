"""Benchmark: start-up of a sample job, and the workflow's overhead per sample.

What it measures
----------------
1. Imports in a fresh process: the wall time of ``python -c "import ..."`` from starting the
   process to its end, for ``fabric2seis.pipeline`` and for what the workflow's sample job
   (``fabric2seis/workflow/scripts/run_sample.py``) imports: ``fabric2seis.pipeline``,
   ``fabric2seis.workflow.status`` and ``fabric2seis.workflow.suite``. Target: under 1.5 s each.
   Beside them, measured in alternation with them: ``python -c pass`` (the interpreter alone, the
   baseline of the ratio) and, for information, ``import fabric2seis.cli`` (the command's first
   import). Median of 5 processes each (2 with ``--quick``, and no warm-up process). Children run with Python's bytecode
   cache on, as an installed package has it (``rows.child_environment``); the import of
   ``fabric2seis.pipeline`` is also timed without it (``PYTHONDONTWRITEBYTECODE=1``), for
   information.
2. The workflow's overhead per sample. Snakemake runs (``workflow_suite.run``, one core) two
   suites: the demo sample ``demo_samples/VM03_lherzolite.ang`` (the three-phase map) alone, and
   the same with N tiny samples added (grain lists of 200 olivine grains with 50 bootstrap
   resamples, ``workflow_suite.write_samples``; N = 8). For each suite the
   wall time minus the work the samples' run.log files account for
   (``workflow_suite.work_seconds``) is the workflow's overhead; the difference of the two,
   divided by N, is the overhead per sample (process start-up, imports, Snakemake's bookkeeping,
   the per-sample report job), and what remains of the first is the fixed overhead of a suite.
   It is compared with the demo sample's computing time, the last time of its run.log (without
   its process's start-up; the mean of the two suites). Target: overhead per sample at most 20 %
   of it. A warm-up run of the first suite comes first. Also from the second suite alone: each
   sample's jobs as Snakemake's own benchmark files time them (the sample job and the sample
   report job) minus its run.log work, the mean over the samples (Snakemake's scheduling between
   jobs is not in it). ``--quick`` runs only one suite, the demo sample alone, and takes the
   overhead from its job files; nor does it time the import without bytecode cache.

How it measures
---------------
Wall-clock times (``time.perf_counter``) around whole child processes, which run with this
checkout first on ``PYTHONPATH`` (so that Snakemake's scripts import it too), in the repository
root. The file cache is warm (every import set is run once before the timed runs).

How to run
----------
From the repository root::

    python benchmarks/startup.py [--samples 8] [--repeats 5]
    python benchmarks/startup.py --quick      # 2 processes per import, one suite of the demo sample

About three minutes with the defaults, about one with ``--quick`` (2 cores).
"""

from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parents[1]))   # measure this checkout, not an installed copy
_sys.path.insert(0, str(_Path(__file__).resolve().parent))       # rows.py, workflow_suite.py beside this script

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from rows import add_options, child_environment, row, write_rows

ROOT = Path(__file__).resolve().parents[1]
_ENVIRONMENT = child_environment()         # this checkout first, bytecode cache on (see rows.py)
os.environ.clear()
os.environ.update(_ENVIRONMENT)
#: import sets: (name, code, has the 1.5 s target)
IMPORT_SETS = [
    ("import fabric2seis.pipeline", "import fabric2seis.pipeline", True),
    ("imports of the workflow's sample job (run_sample.py)",
     "import fabric2seis.pipeline, fabric2seis.workflow.status, fabric2seis.workflow.suite", True),
    ("import fabric2seis.cli (the command's first import)", "import fabric2seis.cli", False),
]
TARGET_IMPORT_S = 1.5
TARGET_OVERHEAD_SHARE = 0.20
DEMO_SAMPLE = ROOT / "demo_samples" / "VM03_lherzolite.ang"
COMMAND = [sys.executable, "-c", "import sys; from fabric2seis.cli import main; sys.exit(main())"]


def process_seconds(code: str, environment: dict | None = None) -> float:
    start = time.perf_counter()
    subprocess.run([sys.executable, "-c", code], cwd=ROOT, check=True, env=environment)
    return time.perf_counter() - start


def import_rows(repeats: int, uncached: bool, warm_up: bool = True) -> list[dict]:
    codes = ["pass"] + [code for _, code, _ in IMPORT_SETS]
    for code in codes if warm_up else []:   # warm the file cache
        process_seconds(code)
    times: dict[str, list[float]] = {code: [] for code in codes}
    for _ in range(repeats):                # in alternation: every set sees the same machine
        for code in codes:
            times[code].append(process_seconds(code))
    bare = statistics.median(times["pass"])
    print(f"Imports in a fresh process (median of {repeats}; the interpreter alone: {bare:.3f} s)")
    out = []
    for name, code, has_target in IMPORT_SETS:
        median = statistics.median(times[code])
        print(f"  {name:<58} {median:6.3f} s  (runs: {', '.join(f'{t:.2f}' for t in times[code])})")
        out.append(row(name, median, "s", baseline=bare, baseline_unit="s",
                       baseline_label="python -c pass", ratio=median / bare,
                       ratio_label="import / interpreter start",
                       target=("value", "<", TARGET_IMPORT_S) if has_target else None,
                       note=f"median of {repeats} fresh processes, wall time incl. interpreter start"))
    if not uncached:
        return out
    seconds = statistics.median(process_seconds(IMPORT_SETS[0][1], child_environment(bytecode_cache=False))
                                for _ in range(repeats))
    print(f"  {IMPORT_SETS[0][0] + ', no bytecode cache':<58} {seconds:6.3f} s")
    out.append(row(f"{IMPORT_SETS[0][0]}, without bytecode cache", seconds, "s", baseline=bare,
                   baseline_unit="s", baseline_label="python -c pass", ratio=seconds / bare,
                   ratio_label="import / interpreter start",
                   note=f"PYTHONDONTWRITEBYTECODE=1 (as this machine's shell sets it): every module "
                        f"compiled in every process; median of {repeats}"))
    return out


def suite_run(samples: Path, results: Path) -> tuple[float, float, float]:
    """Wall time of the workflow on one core (s), the samples' summed run.log work (s), and the
    demo sample's own run.log time (s)."""
    from workflow_suite import run, work_seconds

    wall = run(samples, results, 1)
    demo_log = results / DEMO_SAMPLE.stem / "run.log"
    demo = float(demo_log.read_text().strip().splitlines()[-1].split()[0])
    return wall, work_seconds(results), demo


def job_seconds(tsv: Path) -> float:
    """The wall time of one job from its Snakemake benchmark file (column ``s``)."""
    header, values = tsv.read_text().splitlines()[:2]
    return float(dict(zip(header.split("\t"), values.split("\t")))["s"])


def overhead_from_jobs(results: Path) -> float:
    """Mean over the samples of (sample job + sample report job) minus the run.log work (s)."""
    overheads = []
    for log in results.glob("*/run.log"):
        name = log.parent.name
        work = float(log.read_text().strip().splitlines()[-1].split()[0])
        jobs = job_seconds(results / "benchmarks" / "sample" / f"{name}.tsv")
        report = results / "benchmarks" / "sample_report" / f"{name}.tsv"
        overheads.append(jobs + (job_seconds(report) if report.is_file() else 0.0) - work)
    return sum(overheads) / len(overheads)


def overhead_rows(count: int, quick: bool) -> list[dict]:
    """Per-sample overhead from two suites: the demo sample alone, and with ``count`` tiny samples.

    With ``quick`` only the second suite runs, and the overhead comes from its job files.
    """
    from workflow_suite import write_samples

    folder = Path(tempfile.mkdtemp(prefix="fabric2seis-startup-"))
    try:
        alone, joined = folder / "alone", folder / "joined"
        for suite in (alone, joined):
            suite.mkdir()
            for suffix in (".ang", ".yaml"):
                shutil.copy(DEMO_SAMPLE.with_suffix(suffix), suite)
        write_samples(joined, count)
        if not quick:
            suite_run(alone, folder / "results_warm")
            wall_a, work_a, demo_a = suite_run(alone, folder / "results_alone")
        wall_b, work_b, demo_b = suite_run(joined, folder / "results_joined")
        from_jobs = overhead_from_jobs(folder / "results_joined")
    finally:
        shutil.rmtree(folder, ignore_errors=True)
    jobs_note = (f"from Snakemake's job benchmark files of a suite of the demo sample and {count} tiny "
                 "sample(s): (sample job + sample report job - run.log work), mean over the samples; "
                 "Snakemake's scheduling between jobs not included")
    if quick:
        print(f"Workflow on 1 core, demo sample and {count} tiny samples: {wall_b:.1f} s (run.log work "
              f"{work_b:.1f} s); overhead per sample from the job files {from_jobs:.2f} s; demo sample "
              f"computes in {demo_b:.2f} s (share {from_jobs / demo_b:.2f})")
        return [row("workflow overhead per sample (Snakemake, 1 core)", from_jobs, "s", baseline=demo_b,
                    baseline_unit="s", baseline_label=f"computing time of demo sample {DEMO_SAMPLE.stem} (run.log)",
                    ratio=from_jobs / demo_b, ratio_label="overhead / demo sample",
                    target=("ratio", "<=", TARGET_OVERHEAD_SHARE), note="quick: " + jobs_note)]
    per_sample = ((wall_b - work_b) - (wall_a - work_a)) / count
    fixed = (wall_a - work_a) - per_sample
    demo = (demo_a + demo_b) / 2
    print(f"Workflow on 1 core: demo sample alone {wall_a:.1f} s (run.log work {work_a:.1f} s); with "
          f"{count} tiny samples {wall_b:.1f} s (work {work_b:.1f} s)")
    print(f"  overhead per sample {per_sample:.2f} s, fixed overhead of a suite {fixed:.2f} s; demo sample "
          f"{DEMO_SAMPLE.name} computes in {demo:.2f} s (share {per_sample / demo:.2f}, target <= "
          f"{TARGET_OVERHEAD_SHARE:.2f})")
    how = (f"two suites on 1 core: ({wall_b:.1f} s - {work_b:.1f} s run.log work) with {count} grain lists "
           f"of 200 grains added, minus ({wall_a:.1f} s - {work_a:.1f} s) without, per added sample")
    return [row("workflow overhead per sample (Snakemake, 1 core)", per_sample, "s", baseline=demo,
                baseline_unit="s", baseline_label=f"computing time of demo sample {DEMO_SAMPLE.stem} (run.log)",
                ratio=per_sample / demo, ratio_label="overhead / demo sample",
                target=("ratio", "<=", TARGET_OVERHEAD_SHARE), note=how),
            row("workflow fixed overhead of a suite (Snakemake start, suite rules)", fixed, "s",
                note="wall time of the demo sample's suite beyond its run.log work and one sample's overhead"),
            row("workflow overhead per sample, from the job files", from_jobs, "s", note=jobs_note)]


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--samples", type=int, default=None,
                        help="tiny samples added to the suite (default 8; --quick 0)")
    parser.add_argument("--repeats", type=int, default=None, help="processes per import set (default 5; --quick 3)")
    add_options(parser, "2 processes per import set, no warm-up; one suite (the demo sample alone), "
                        "overhead from its job files")
    args = parser.parse_args(argv)
    repeats = args.repeats or (2 if args.quick else 5)
    count = args.samples if args.samples is not None else (0 if args.quick else 8)
    rows = (import_rows(repeats, uncached=not args.quick, warm_up=not args.quick)
            + overhead_rows(count, quick=args.quick))
    write_rows(args.json, "startup", rows)
    return 0


if __name__ == "__main__":
    sys.exit(main())
