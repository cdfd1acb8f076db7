"""Compare two results folders of the demo suite: same numbers apart from provenance and timing.

    python tools/compare_results.py RESULTS_BEFORE RESULTS_AFTER [--rtol 1e-9 | --exact]

Every JSON and CSV file present in either folder (``provenance.json``, ``run.log``, the marker
files, logs and benchmarks left out) must exist in both and hold the same values: strings,
integers and booleans equal, numbers equal within ``rtol`` (relative) or 1e-12 (absolute). PNG and
PDF files must exist in both (their bytes carry dates). Prints one line per difference and exits
with 1 if there is any, 0 otherwise.

``--exact``: every JSON and CSV file and the marker files must be the same bytes in both (two runs
of the same settings on the same inputs: no file of a results folder holds a time, which only
``run.log``, the logs and the benchmarks record; ``provenance.json``, which names the folders of the
run, and the status files, which hold paths, are left out).
"""

from __future__ import annotations

import argparse
import json
import math
import sys
from pathlib import Path

import pandas as pd

SKIPPED_NAMES = {"provenance.json", "run.log", ".fabric2seis-results"}
SKIPPED_FOLDERS = {"logs", "benchmarks", ".snakemake", "status"}   # status files hold paths


def _files(root: Path) -> set[str]:
    out = set()
    for path in root.rglob("*"):
        rel = path.relative_to(root)
        if path.is_file() and path.name not in SKIPPED_NAMES and not (set(rel.parts) & SKIPPED_FOLDERS):
            out.add(str(rel))
    return out


def _same(a, b, rtol: float, where: str, problems: list[str]) -> None:
    if isinstance(a, dict) and isinstance(b, dict):
        for key in sorted(set(a) | set(b)):
            if key not in a or key not in b:
                problems.append(f"{where}.{key}: only in {'after' if key in b else 'before'}")
            else:
                _same(a[key], b[key], rtol, f"{where}.{key}", problems)
    elif isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            problems.append(f"{where}: lengths {len(a)} and {len(b)}")
        for k, (x, y) in enumerate(zip(a, b)):
            _same(x, y, rtol, f"{where}[{k}]", problems)
    elif isinstance(a, float) or isinstance(b, float):
        if a is None or b is None or isinstance(a, (str, bool)) or isinstance(b, (str, bool)):
            problems.append(f"{where}: {a!r} and {b!r}")
        elif not (math.isclose(a, b, rel_tol=rtol, abs_tol=1e-12) or (math.isnan(a) and math.isnan(b))):
            problems.append(f"{where}: {a!r} and {b!r}")
    elif a != b:
        problems.append(f"{where}: {a!r} and {b!r}")


def compare(before: Path, after: Path, rtol: float = 1e-9) -> list[str]:
    problems: list[str] = []
    files_before, files_after = _files(before), _files(after)
    for name in sorted(files_before ^ files_after):
        problems.append(f"{name}: only in {'after' if name in files_after else 'before'}")
    for name in sorted(files_before & files_after):
        a, b = before / name, after / name
        if a.suffix == ".json":
            _same(json.loads(a.read_text()), json.loads(b.read_text()), rtol, name, problems)
        elif a.suffix == ".csv":
            ta, tb = pd.read_csv(a), pd.read_csv(b)
            _same(ta.to_dict(orient="list"), tb.to_dict(orient="list"), rtol, name, problems)
    return problems


def compare_exact(before: Path, after: Path) -> list[str]:
    """Name the JSON and CSV files (provenance, logs, benchmarks and status files left out) whose bytes differ."""
    def files(root: Path) -> set[str]:
        return {str(p.relative_to(root)) for p in root.rglob("*") if p.is_file()
                and (p.suffix in (".json", ".csv") or p.name == ".fabric2seis-results")
                and p.name != "provenance.json" and not set(p.relative_to(root).parts) & SKIPPED_FOLDERS}

    files_before, files_after = files(before), files(after)
    problems = [f"{name}: only in {'after' if name in files_after else 'before'}"
                for name in sorted(files_before ^ files_after)]
    problems += [f"{name}: different bytes" for name in sorted(files_before & files_after)
                 if (before / name).read_bytes() != (after / name).read_bytes()]
    return problems


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("before", type=Path)
    parser.add_argument("after", type=Path)
    parser.add_argument("--rtol", type=float, default=1e-9)
    parser.add_argument("--exact", action="store_true", help="the same bytes in every JSON and CSV file")
    args = parser.parse_args(argv)
    problems = compare_exact(args.before, args.after) if args.exact else compare(args.before, args.after, args.rtol)
    for line in problems[:200]:
        print(line)
    print(f"{len(problems)} difference(s)" if problems else "same bytes" if args.exact else "same numbers")
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main())
