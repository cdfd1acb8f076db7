"""Benchmark of ``fabric2seis field``: its figures drawn by one process and by two.

The field command fits every sample to every station and draws two figures per sample and station
(misfit surface, data and predictions) and one more; the drawing is nearly all of its time. With
``--threads 2`` two processes share the figures (``second_process.shared_among_processes``). Here
the demo samples named (default: all six) are run through ``fabric2seis sample`` once, then the
field command on their results with the demo measurements (two stations), alternately with
``--threads 1`` and ``--threads 2``; the figures' files must be the same bytes.

Run from the project folder:  python benchmarks/field_figures.py [--samples VM04_grain_list.csv,...]
"""

from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parent))       # rows.py beside this script

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from rows import COLLECTED, REPOSITORY_ROOT, child_environment, record, write_rows

DEMO = REPOSITORY_ROOT / "demo_samples"
MEASUREMENTS = DEMO / "field_measurements.csv"
SAMPLE_SUFFIXES = (".ang", ".ctf", ".csv", ".h5")


def command_seconds(command: list[str]) -> float:
    start = time.perf_counter()
    subprocess.run(command, check=True, capture_output=True, cwd=REPOSITORY_ROOT, env=child_environment())
    return time.perf_counter() - start


def same_files(a: Path, b: Path) -> bool:
    names = sorted(p.name for p in a.iterdir())
    return names == sorted(p.name for p in b.iterdir()) and all(
        (a / n).read_bytes() == (b / n).read_bytes() for n in names)


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", default="", help="demo files, comma-separated (default: every demo sample)")
    parser.add_argument("--rounds", type=int, default=2, help="alternating runs of each (best kept)")
    parser.add_argument("--json", default=None, metavar="PATH",
                        help="also write the figures as JSON rows (benchmarks/run.py)")
    args = parser.parse_args()
    names = [n for n in args.samples.split(",") if n] or sorted(
        p.name for p in DEMO.iterdir() if p.suffix in SAMPLE_SUFFIXES and p.name != MEASUREMENTS.name)
    print(f"machine: {os.cpu_count()} cores, load {os.getloadavg()[0]:.2f}")
    with tempfile.TemporaryDirectory(prefix="fabric2seis-field-bench-") as tmp:
        results = []
        for name in names:
            out = Path(tmp) / Path(name).stem
            subprocess.run([sys.executable, "-m", "fabric2seis", "sample", str(DEMO / name), "--out", str(out)],
                           check=True, capture_output=True, cwd=REPOSITORY_ROOT, env=child_environment())
            results.append(str(out))
        best = {1: float("inf"), 2: float("inf")}
        for k in range(args.rounds):
            for threads in (1, 2):
                field = [sys.executable, "-m", "fabric2seis", "field", *results, "--measurements", str(MEASUREMENTS),
                         "--out", str(Path(tmp) / f"field_{threads}_{k}"), "--threads", str(threads)]
                best[threads] = min(best[threads], command_seconds(field))
        figures = len(list((Path(tmp) / "field_1_0").glob("*.png")))
        same = same_files(Path(tmp) / "field_1_0", Path(tmp) / "field_2_0")
    print(f"fabric2seis field on {len(names)} samples x 2 stations: {figures} figures (PNG and PDF)")
    print(f"  one process   {best[1]:7.2f} s")
    print(f"  two processes {best[2]:7.2f} s   speed-up {best[1] / best[2]:.2f}; same files: {same}")
    record(f"fabric2seis field command, {len(names)} demo samples x 2 stations ({figures} figures), --threads 2",
           best[2], "s", baseline=best[1], baseline_unit="s", baseline_label="the same with --threads 1",
           ratio=best[1] / best[2], ratio_label="speed-up (1 thread / 2)",
           note=f"best of {args.rounds}, alternating; imports, reading and the fit included; "
                f"the files {'the same bytes' if same else 'DIFFER'}")
    write_rows(args.json, "field_figures", COLLECTED)
    return 0 if same else 1


if __name__ == "__main__":
    raise SystemExit(main())
