"""Benchmark: start-up of a sample job, and the workflow's overhead per sample.

What it measures
----------------
1. Imports in a fresh process: the wall time of ``python -c "import ..."`` from starting the
   process to its end, for ``fabric2seis.pipeline``, for what the workflow's sample job
   (``fabric2seis/workflow/scripts/run_sample.py``) and batch job (``run_sample_batch.py``) import
   before their work, for the report job of a sample (``sample_report.py``), and for everything a
   sample job has imported by the end of its work (the modules in ``sys.modules`` after a grain
   list of 200 grains ran in a child process: fabric2seis's, and those of orix, numpy, scipy,
   pandas, matplotlib, numba, dask and their kind). Target: under 1.5 s for each of the first
   three and for the last. Beside them, measured in alternation with them: ``python -c pass`` (the
   interpreter alone, the baseline of the ratio) and, for information, ``import fabric2seis.cli``
   (the command's first import). Median of 5 processes each (2 with ``--quick``, and no warm-up
   process). Children run with Python's bytecode cache on, as an installed package has it
   (``rows.child_environment``); the import of ``fabric2seis.pipeline`` is also timed without it
   (``PYTHONDONTWRITEBYTECODE=1``), for information.
2. The workflow's overhead per sample. Snakemake runs (``workflow_suite.run``, one core) three
   suites: the demo sample ``demo_samples/VM03_lherzolite.ang`` (the three-phase map, 1.8 MB: never
   a small sample) alone; the same with N tiny samples added (grain lists of 200 olivine grains with
   50 bootstrap resamples, ``workflow_suite.write_samples``; N = 8), one job per sample
   (``small_samples.per_job: 1``); and the same N tiny samples in one batch job
   (``small_samples.per_job: N``; the default, 8, for N = 8). For each suite the wall time minus the
   work the samples' run.log files account for (``workflow_suite.work_seconds``) is the workflow's
   overhead; the difference from the first suite, divided by N, is the overhead per sample (process
   start-up, the imports before the work, Snakemake's bookkeeping, the per-sample report job), and
   what remains of the first is the fixed overhead of a suite. It is compared with the demo sample's
   computing time, the last time of its run.log (without its process's start-up; the mean of the
   suites). Target: overhead per sample at most 20 % of it. A sample's run.log counts the imports
   its work makes on first use (orix, scipy, pandas, matplotlib: seconds) as work; so also the whole
   wall time added per tiny sample in each arrangement, against a tiny sample's warm computing time
   (the median run.log of the batch's members after its first), and their difference, the overhead
   with the first-use imports, against the demo sample's computing time (the same target). A warm-up
   run of the first suite comes first. Also from the job files of the suites with tiny samples: each
   sample's jobs as Snakemake's own benchmark files time them (sample or batch job, sample report
   job) minus their run.log work, the mean over the samples (Snakemake's scheduling between jobs is
   not in it). ``--quick`` runs only one suite, the demo sample and 3 tiny samples in one batch,
   takes the overhead from its job files, and does not time the import without bytecode cache.

How it measures
---------------
Wall-clock times (``time.perf_counter``) around whole child processes, which run with this
checkout first on ``PYTHONPATH`` (so that Snakemake's scripts import it too), in the repository
root. The file cache is warm (every import set is run once before the timed runs).

How to run
----------
From the repository root::

    python benchmarks/startup.py [--samples 8] [--repeats 5]
    python benchmarks/startup.py --quick      # 2 processes per import, one suite, batched

About five minutes with the defaults, about one with ``--quick`` (2 cores, idle).
"""

from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parents[1]))   # measure this checkout, not an installed copy
_sys.path.insert(0, str(_Path(__file__).resolve().parent))       # rows.py, workflow_suite.py beside this script

import argparse
import json
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
    ("imports of the workflow's batch job (run_sample_batch.py)",
     "import fabric2seis.pipeline, fabric2seis.workflow.batches, fabric2seis.workflow.suite", True),
    ("imports of the report job of a sample (sample_report.py)", "import fabric2seis.workflow.report_files", False),
    ("import fabric2seis.cli (the command's first import)", "import fabric2seis.cli", False),
]
#: the figure of everything a sample job imports by the end of its work (its code is made at run time)
EVERYTHING = "every import of a sample job, by the end of its work (a grain list of 200 grains)"
#: packages whose modules the last import set imports (fabric2seis's own and the libraries it uses)
PACKAGES = ("fabric2seis", "orix", "numpy", "scipy", "pandas", "matplotlib", "numba", "llvmlite", "dask", "diffpy",
            "h5py", "yaml", "jsonschema", "PIL", "contourpy", "kiwisolver", "fontTools", "toolz", "cloudpickle")
TARGET_IMPORT_S = 1.5
TARGET_OVERHEAD_SHARE = 0.20
DEMO_SAMPLE = ROOT / "demo_samples" / "VM03_lherzolite.ang"
COMMAND = [sys.executable, "-c", "import sys; from fabric2seis.cli import main; sys.exit(main())"]


def process_seconds(code: str, environment: dict | None = None) -> float:
    start = time.perf_counter()
    subprocess.run([sys.executable, "-c", code], cwd=ROOT, check=True, env=environment)
    return time.perf_counter() - start


def everything_code() -> str:
    """Code importing every module of ``PACKAGES`` that a sample job holds by the end of its work."""
    from workflow_suite import write_samples

    folder = Path(tempfile.mkdtemp(prefix="fabric2seis-imports-"))
    try:
        write_samples(folder, 1)
        listing = ("import json, sys\nfrom fabric2seis.pipeline import run_sample\n"
                   f"run_sample({str(folder / 'bench_00.csv')!r}, out_dir={str(folder / 'out')!r})\n"
                   "print(json.dumps(sorted(m for m in sys.modules if m.split('.')[0] in "
                   f"{PACKAGES!r})))")
        names = json.loads(subprocess.run([sys.executable, "-c", listing], cwd=ROOT, check=True, capture_output=True,
                                          text=True).stdout)
    finally:
        shutil.rmtree(folder, ignore_errors=True)
    return ("import importlib\nfor name in " + repr(names) + ":\n    try:\n        importlib.import_module(name)\n"
            "    except Exception:\n        pass\n")


def import_rows(repeats: int, uncached: bool, warm_up: bool = True) -> list[dict]:
    import_sets = [*IMPORT_SETS, (EVERYTHING, everything_code(), True)]
    codes = ["pass"] + [code for _, code, _ in import_sets]
    for code in codes if warm_up else []:   # warm the file cache
        process_seconds(code)
    times: dict[str, list[float]] = {code: [] for code in codes}
    for _ in range(repeats):                # in alternation: every set sees the same machine
        for code in codes:
            times[code].append(process_seconds(code))
    bare = statistics.median(times["pass"])
    print(f"Imports in a fresh process (median of {repeats}; the interpreter alone: {bare:.3f} s)")
    out = []
    for name, code, has_target in import_sets:
        median = statistics.median(times[code])
        print(f"  {name[:72]:<72} {median:6.3f} s  (runs: {', '.join(f'{t:.2f}' for t in times[code])})")
        out.append(row(name, median, "s", baseline=bare, baseline_unit="s",
                       baseline_label="python -c pass", ratio=median / bare,
                       ratio_label="import / interpreter start",
                       target=("value", "<", TARGET_IMPORT_S) if has_target else None,
                       note=f"median of {repeats} fresh processes, wall time incl. interpreter start"))
    if not uncached:
        return out
    seconds = statistics.median(process_seconds(IMPORT_SETS[0][1], child_environment(bytecode_cache=False))
                                for _ in range(repeats))
    print(f"  {IMPORT_SETS[0][0] + ', no bytecode cache':<72} {seconds:6.3f} s")
    out.append(row(f"{IMPORT_SETS[0][0]}, without bytecode cache", seconds, "s", baseline=bare,
                   baseline_unit="s", baseline_label="python -c pass", ratio=seconds / bare,
                   ratio_label="import / interpreter start",
                   note=f"PYTHONDONTWRITEBYTECODE=1 (as this machine's shell sets it): every module "
                        f"compiled in every process; median of {repeats}"))
    return out


def run_log_seconds(log: Path) -> float:
    """The last time of a run.log: the sample's work from the start of run_sample (s)."""
    return float(log.read_text().strip().splitlines()[-1].split()[0])


def suite_run(samples: Path, results: Path, config: tuple[str, ...] = ()) -> tuple[float, float, float]:
    """Wall time of the workflow on one core (s), the samples' summed run.log work (s), and the
    demo sample's own run.log time (s)."""
    from workflow_suite import run, work_seconds

    wall = run(samples, results, 1, config)
    return wall, work_seconds(results), run_log_seconds(results / DEMO_SAMPLE.stem / "run.log")


def job_seconds(tsv: Path) -> float:
    """The wall time of one job from its Snakemake benchmark file (column ``s``)."""
    header, values = tsv.read_text().splitlines()[:2]
    return float(dict(zip(header.split("\t"), values.split("\t")))["s"])


def overhead_from_jobs(results: Path) -> float:
    """Mean over the tiny samples of (their sample or batch job + sample report job) minus their run.log work (s).

    A batch job is shared among its members: its seconds minus their summed run.log work, divided by them.
    """
    names = [log.parent.name for log in results.glob("bench_*/run.log")]
    report = sum(job_seconds(results / "benchmarks" / "sample_report" / f"{name}.tsv") for name in names)
    jobs = sum(job_seconds(results / "benchmarks" / "sample" / f"{name}.tsv") for name in names
               if (results / "benchmarks" / "sample" / f"{name}.tsv").is_file())
    jobs += sum(job_seconds(tsv) for tsv in (results / "benchmarks" / "sample_batch").glob("*.tsv"))
    work = sum(run_log_seconds(results / name / "run.log") for name in names)
    return (jobs + report - work) / len(names)


def warm_seconds(results: Path) -> float:
    """A tiny sample's warm computing time: the median run.log of the batch's members after its first (s)."""
    logs = sorted(results.glob("bench_*/run.log"))[1:]
    return statistics.median(run_log_seconds(log) for log in logs)


def overhead_rows(count: int, quick: bool) -> list[dict]:
    """Per-sample overhead from three suites: the demo sample alone, with ``count`` tiny samples one job
    each, and with them in one batch job.

    With ``quick`` only the batched suite runs, and the overhead comes from its job files.
    """
    from workflow_suite import write_samples

    batched = (f"small_samples={{per_job: {count}}}",)
    one_each = ("small_samples={per_job: 1}",)
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
            wall_b, work_b, demo_b = suite_run(joined, folder / "results_joined", one_each)
            from_jobs_b = overhead_from_jobs(folder / "results_joined")
        wall_c, work_c, demo_c = suite_run(joined, folder / "results_batched", batched)
        from_jobs_c = overhead_from_jobs(folder / "results_batched")
        warm = warm_seconds(folder / "results_batched")
    finally:
        shutil.rmtree(folder, ignore_errors=True)
    label = f"computing time of demo sample {DEMO_SAMPLE.stem} (run.log)"
    batch_name = f"batched, small_samples.per_job {count}" + (" (the default)" if count == 8 else "")
    jobs_note = ("from Snakemake's job benchmark files: (sample or batch job + sample report job - run.log "
                 "work), mean over the tiny samples; Snakemake's scheduling between jobs not included")
    if quick:
        print(f"Workflow on 1 core, demo sample and {count} tiny samples in one batch: {wall_c:.1f} s (run.log "
              f"work {work_c:.1f} s); overhead per tiny sample from the job files {from_jobs_c:.2f} s; demo "
              f"sample computes in {demo_c:.2f} s (share {from_jobs_c / demo_c:.2f})")
        return [row(f"workflow overhead per small sample, {batch_name} (Snakemake, 1 core)", from_jobs_c, "s",
                    baseline=demo_c, baseline_unit="s", baseline_label=label, ratio=from_jobs_c / demo_c,
                    ratio_label="overhead / demo sample", target=("ratio", "<=", TARGET_OVERHEAD_SHARE),
                    note="quick: " + jobs_note)]
    demo = (demo_a + demo_b + demo_c) / 3
    per_sample = ((wall_b - work_b) - (wall_a - work_a)) / count
    per_batched = ((wall_c - work_c) - (wall_a - work_a)) / count
    fixed = (wall_a - work_a) - per_sample
    added, added_batched = (wall_b - wall_a) / count, (wall_c - wall_a) / count
    print(f"Workflow on 1 core: demo sample alone {wall_a:.1f} s (run.log work {work_a:.1f} s); with {count} tiny "
          f"samples one job each {wall_b:.1f} s (work {work_b:.1f} s), in one batch {wall_c:.1f} s (work "
          f"{work_c:.1f} s)")
    print(f"  overhead per sample: one job each {per_sample:.2f} s, batched {per_batched:.2f} s; fixed overhead of "
          f"a suite {fixed:.2f} s; demo sample {DEMO_SAMPLE.name} computes in {demo:.2f} s (shares "
          f"{per_sample / demo:.2f} and {per_batched / demo:.2f}, target <= {TARGET_OVERHEAD_SHARE:.2f})")
    print(f"  wall time added per tiny sample: one job each {added:.2f} s, batched {added_batched:.2f} s; a tiny "
          f"sample computes warm in {warm:.2f} s")
    print(f"  beyond its warm computing: one job each {added - warm:.2f} s, batched {added_batched - warm:.2f} s "
          f"(shares {(added - warm) / demo:.2f} and {(added_batched - warm) / demo:.2f})")
    how = (f"({{wall:.1f}} s - {{work:.1f}} s run.log work) of the suite with {count} grain lists of 200 grains "
           f"added, minus ({wall_a:.1f} s - {work_a:.1f} s) of the demo sample alone, per added sample; 1 core")
    added_note = (f"(wall time with {count} grain lists - {wall_a:.1f} s without) / {count}: first-use imports "
                  "included; baseline the warm computing time of one (run.log)")
    strict_note = ("wall time added per small sample minus its warm computing time (the rows above): the stricter "
                   "reading, which counts the imports a sample's work makes on first use as overhead")
    return [row("workflow overhead per sample, one job per sample (small_samples.per_job 1; Snakemake, 1 core)",
                per_sample, "s",
                baseline=demo, baseline_unit="s", baseline_label=label, ratio=per_sample / demo,
                ratio_label="overhead / demo sample", target=("ratio", "<=", TARGET_OVERHEAD_SHARE),
                note=how.format(wall=wall_b, work=work_b)),
            row(f"workflow overhead per small sample, {batch_name} (Snakemake, 1 core)", per_batched, "s",
                baseline=demo, baseline_unit="s", baseline_label=label, ratio=per_batched / demo,
                ratio_label="overhead / demo sample", target=("ratio", "<=", TARGET_OVERHEAD_SHARE),
                note=how.format(wall=wall_c, work=work_c)),
            row("wall time added per small sample, one job per sample", added, "s", baseline=warm,
                baseline_unit="s", baseline_label="warm computing time of a small sample", ratio=added / warm,
                ratio_label="added / warm computing", note=added_note),
            row(f"wall time added per small sample, {batch_name}", added_batched, "s", baseline=warm,
                baseline_unit="s", baseline_label="warm computing time of a small sample",
                ratio=added_batched / warm, ratio_label="added / warm computing", note=added_note),
            row("overhead per small sample with its first-use imports, one job per sample", added - warm, "s",
                baseline=demo, baseline_unit="s", baseline_label=label, ratio=(added - warm) / demo,
                ratio_label="overhead / demo sample", target=("ratio", "<=", TARGET_OVERHEAD_SHARE),
                note=strict_note),
            row(f"overhead per small sample with its first-use imports, {batch_name}", added_batched - warm, "s",
                baseline=demo, baseline_unit="s", baseline_label=label, ratio=(added_batched - warm) / demo,
                ratio_label="overhead / demo sample", target=("ratio", "<=", TARGET_OVERHEAD_SHARE),
                note=strict_note),
            row("workflow fixed overhead of a suite (Snakemake start, suite rules)", fixed, "s",
                note="wall time of the demo sample's suite beyond its run.log work and one sample's overhead"),
            row("workflow overhead per sample, one job per sample, from the job files", from_jobs_b, "s",
                note=jobs_note),
            row(f"workflow overhead per small sample, {batch_name}, from the job files", from_jobs_c, "s",
                note=jobs_note)]


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--samples", type=int, default=None,
                        help="tiny samples added to the suite (default 8; --quick 3)")
    parser.add_argument("--repeats", type=int, default=None, help="processes per import set (default 5; --quick 2)")
    add_options(parser, "2 processes per import set, no warm-up; one suite (the demo sample and 3 tiny samples "
                        "in one batch), overhead from its job files")
    args = parser.parse_args(argv)
    repeats = args.repeats or (2 if args.quick else 5)
    count = args.samples if args.samples is not None else (3 if args.quick else 8)
    if count < 2:
        parser.error("--samples: at least 2 (a batch's warm members are the ones after its first)")
    rows = (import_rows(repeats, uncached=not args.quick, warm_up=not args.quick)
            + overhead_rows(count, quick=args.quick))
    write_rows(args.json, "startup", rows)
    return 0


if __name__ == "__main__":
    sys.exit(main())
