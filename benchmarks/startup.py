"""Benchmark of start-up: seconds to import what a sample job needs, each in fresh interpreters.

For each set of imports it starts `python -c "<imports>"` N times (interleaved, so that every set
sees the same machine) and reports the median and the range of the wall times, with the load
average before and after (the machine is shared). The sets: the sample command's modules
(`fabric2seis.cli`, `fabric2seis.pipeline`), the orix modules the first step of the work needs
(the mineral library's Phase and symmetry, the .ang reader, Rotation), both together, and
matplotlib's pyplot for comparison.

Run from the project folder:  python benchmarks/startup.py [--runs 5]
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

SETS = {
    "fabric2seis.cli + pipeline": "import fabric2seis.cli, fabric2seis.pipeline",
    "orix core (Rotation)": "from orix.quaternion import Rotation",
    "orix for the work (Phase, .ang)": "from orix.crystal_map import Phase; from orix.io.plugins import ang",
    "pipeline + orix for the work": ("import fabric2seis.cli, fabric2seis.pipeline; from orix.crystal_map import "
                                     "Phase; from orix.io.plugins import ang"),
    "matplotlib.pyplot": "import matplotlib.pyplot",
    "python alone": "pass",
}


def wall(code: str) -> float:
    start = time.perf_counter()
    subprocess.run([sys.executable, "-c", code], check=True, cwd=ROOT,
                   env={**os.environ, "PYTHONPATH": str(ROOT)})
    return time.perf_counter() - start


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--runs", type=int, default=5)
    args = parser.parse_args()
    load_before = os.getloadavg()
    times: dict[str, list[float]] = {name: [] for name in SETS}
    for _ in range(args.runs):
        for name, code in SETS.items():
            times[name].append(wall(code))
    load_after = os.getloadavg()
    print(f"{args.runs} fresh processes per set, {os.cpu_count()} cores; load average "
          f"{load_before[0]:.2f} before, {load_after[0]:.2f} after")
    for name, values in times.items():
        print(f"  {name:<34} median {statistics.median(values):5.2f} s   "
              f"({min(values):.2f} to {max(values):.2f})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
