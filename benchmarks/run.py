"""Run every benchmark and gather their figures into one table (markdown and JSON).

What it does
------------
Each benchmark script in ``BENCHMARKS`` runs in its own process, one after the other, with this
checkout first on ``PYTHONPATH`` and Python's bytecode cache on (``rows.child_environment``), in
the repository root. It is given ``--json PATH`` and writes there its figures as rows
(``rows.py``: figure, value and unit, the baseline measured beside it, their ratio, the target);
its printed output goes to a text file beside it. Nothing is parsed from printed text. This
script then decides pass or fail for every row with a target and writes

* ``benchmarks/results/<quick|full>/table.md`` and ``table.json``: the table of this mode, with
  the machine (CPU model, cores, memory, versions, date) and the load average before and after
  each benchmark (timings taken under load are slower than the machine can do);
* in full mode also ``benchmarks/RESULTS.md`` (the latest full table, kept in git) and
  ``benchmarks/RESULTS.json``.

A full run with ``--only`` runs the benchmarks named and keeps the last full results of the
others (each benchmark's date and load are in the table), so that a long benchmark need not be
run again to refresh another.

How to run
----------
From the repository root::

    python benchmarks/run.py --quick          # reduced sizes, under two minutes on 2 cores: the
                                              # whole run and start-up always, the others while
                                              # they fit (their last quick time, else a guess)
    python benchmarks/run.py                  # full sizes: about an hour on 2 cores
    python benchmarks/run.py --only whole_run,startup
    python benchmarks/run.py --list           # the benchmarks and the arguments of each mode

Exit status 0 when every benchmark ran to its end (missed targets do not change it), 1 when one
failed (its row says so).
"""

from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parent))       # rows.py beside this script

import argparse
import datetime
import json
import os
import platform
import subprocess
import sys
import time
from importlib import metadata
from pathlib import Path

from rows import child_environment, passed

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
#: (name, arguments of the full run, arguments of --quick or None: full runs only), in the order
#: they run; --quick runs them in this order while they fit into QUICK_BUDGET_S
BENCHMARKS = [
    ("whole_run", [], ["--quick"]),
    ("startup", [], ["--quick"]),
    ("splitting_layers", [], ["--loop-baz", "1", "--loop-azimuths", "2", "--measurements", "20"]),
    ("seismic_stage", [], ["--grains", "5000", "--resamples", "20"]),
    ("rotation_and_averaging", [], ["--n", "20000", "--pymatgen-subset", "100", "--repeats", "1"]),
    ("optics", [], ["--pixels", "50000"]),
    ("field_figures", [], ["--samples", "VM04_grain_list.csv", "--rounds", "1"]),
    ("fabric_indices", [], ["--sizes", "1000,3000", "--brute-size", "1000", "--m-grains", "10000",
                            "--m-pairs", "50000"]),
    ("ingestion", [], ["--sizes", "10000,30000"]),
    ("workflow_suite", [], None),
]
#: the wall time --quick must keep to (s); a benchmark starts only if its expected time ends
#: QUICK_MARGIN_S before it, as the expectation is the last run's time on a machine whose load varies
QUICK_BUDGET_S = 120.0
QUICK_MARGIN_S = 10.0
#: run in every --quick run: the whole run and the start-up (the issue's figures); the others only
#: while they fit into the budget
QUICK_ALWAYS = {"whole_run", "startup"}
#: expected wall time of each --quick benchmark (s) until a quick table tells the measured one
QUICK_GUESS_S = {"whole_run": 50.0, "startup": 55.0, "splitting_layers": 8.0, "seismic_stage": 18.0,
                 "rotation_and_averaging": 6.0, "optics": 12.0, "fabric_indices": 8.0, "ingestion": 30.0,
                 "field_figures": 30.0}
DEFAULT_QUICK_GUESS_S = 15.0
#: a 1-minute load average above this, before or after a benchmark, marks it as measured under
#: load (the benchmark's own process accounts for about 1)
LOADED_ABOVE = 1.5
VERSIONS = ("fabric2seis", "numpy", "scipy", "orix", "matplotlib", "snakemake")


# --- the machine ----------------------------------------------------------------------------------


def first_line_with(path: str, key: str) -> str | None:
    try:
        for line in Path(path).read_text().splitlines():
            if line.startswith(key):
                return line.split(":", 1)[1].strip()
    except OSError:
        return None
    return None


def machine() -> dict:
    """CPU, cores, memory, system, versions and the checkout's commit."""
    memory = first_line_with("/proc/meminfo", "MemTotal")
    versions = {}
    for name in VERSIONS:
        try:
            versions[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            versions[name] = "not installed"
    commit = subprocess.run(["git", "rev-parse", "--short", "HEAD"], cwd=ROOT, capture_output=True,
                            text=True).stdout.strip()
    dirty = subprocess.run(["git", "status", "--porcelain", "--", "fabric2seis"], cwd=ROOT,
                           capture_output=True, text=True).stdout.strip()
    return {"cpu": first_line_with("/proc/cpuinfo", "model name") or platform.processor() or "unknown",
            "logical_cpus": os.cpu_count(),
            "memory_gb": round(int(memory.split()[0]) / 2**20, 1) if memory else None,
            "system": f"{platform.system()} {platform.release()}",
            "python": platform.python_version(), "versions": versions,
            "commit": commit + (" (fabric2seis/ changed since)" if dirty else ""),
            "date": datetime.datetime.now().astimezone().isoformat(timespec="seconds")}


# --- running the benchmarks ----------------------------------------------------------------------


def run_benchmark(name: str, arguments: list[str], folder: Path) -> dict:
    """Run one benchmark script; its rows and how the run went."""
    rows_file, text_file = folder / f"{name}.json", folder / f"{name}.txt"
    rows_file.unlink(missing_ok=True)
    command = [sys.executable, str(HERE / f"{name}.py"), *arguments, "--json", str(rows_file)]
    load_before = os.getloadavg()
    started = datetime.datetime.now().astimezone().isoformat(timespec="seconds")
    start = time.perf_counter()
    with open(text_file, "w") as out:
        status = subprocess.run(command, cwd=ROOT, env=child_environment(), stdout=out,
                                stderr=subprocess.STDOUT).returncode
    wall = time.perf_counter() - start
    rows = json.loads(rows_file.read_text())["rows"] if rows_file.is_file() else []
    return {"name": name, "arguments": arguments, "status": status, "wall_s": wall, "started": started,
            "load_before": list(load_before), "load_after": list(os.getloadavg()), "rows": rows,
            "output": _shown(text_file)}


def skipped(name: str, why: str) -> dict:
    """The entry of a benchmark not run in this mode."""
    return {"name": name, "arguments": [], "status": None, "wall_s": None, "started": "", "skipped": why,
            "load_before": list(os.getloadavg()), "load_after": list(os.getloadavg()), "rows": [], "output": ""}


def judged(result: dict) -> dict:
    for entry in result["rows"]:
        entry["passed"] = passed(entry)
    return result


# --- the table ------------------------------------------------------------------------------------


def number(value: float | None) -> str:
    if value is None:
        return "n/a"
    size = abs(value)
    if size >= 1000:
        return f"{value:,.0f}"
    if size >= 100:
        return f"{value:.0f}"
    if size >= 10:
        return f"{value:.1f}"
    if size >= 1:
        return f"{value:.2f}"
    return f"{value:.3g}"


def with_unit(value: float | None, unit: str | None) -> str:
    if value is None:
        return "not measured"
    return f"{number(value)} {unit}".strip()


def target_text(entry: dict) -> str:
    target = entry.get("target")
    if not target:
        return ""
    unit = entry["unit"] if target["on"] == "value" else ""
    subject = "ratio " if target["on"] == "ratio" else ""
    return f"{subject}{target['op']} {number(target['limit'])} {unit}".strip()


def verdict(entry: dict) -> str:
    return {True: "pass", False: "**FAIL**", None: ""}[entry.get("passed")]


def cell(text: str) -> str:
    return text.replace("|", "\\|")


def load_text(load: list[float]) -> str:
    return "/".join(f"{x:.1f}" for x in load)


def markdown(mode: str, machine_info: dict, results: list[dict], quick_wall_s: float | None) -> str:
    cores = machine_info["logical_cpus"]
    lines = [f"# fabric2seis benchmarks ({mode})", "",
             f"Written by `python benchmarks/run.py{' --quick' if mode == 'quick' else ''}` on "
             f"{machine_info['date']}; checkout {machine_info['commit']}. Each benchmark's own start and "
             "load are in \"The runs\" at the end (`--only` reruns some and keeps the others).", "",
             f"- machine: {machine_info['cpu']}, {cores} logical CPUs, {machine_info['memory_gb']} GB, "
             f"{machine_info['system']}",
             f"- software: Python {machine_info['python']}, "
             + ", ".join(f"{k} {v}" for k, v in machine_info["versions"].items())]
    if quick_wall_s is not None:
        lines.append(f"- wall time of this run: {quick_wall_s:.0f} s")
    loaded = [r for r in results if not r.get("skipped")
              and max(r["load_before"][0], r["load_after"][0]) > LOADED_ABOVE]
    if loaded:
        lines.append(f"- **measured under load**: the 1-minute load average was above {LOADED_ABOVE} (a "
                     f"benchmark itself accounts for about 1; workflow_suite's two-core run for 2) around "
                     f"{', '.join(r['name'] for r in loaded)}: other work on the {cores}-core machine may have "
                     "made those times longer than the machine can do; see the load column below")
    if mode == "quick":
        lines += ["", "Quick sizes are reduced: the targets are those of the full sizes, so a quick verdict is "
                      "only indicative (a speed-up over a quadratic baseline, for one, is smaller on small inputs)."]
    lines += ["", "Ratio: as named in each row (e.g. whole run / orix read); the baseline is measured in "
              "the same run, beside the figure. Pass or fail against the target is decided by run.py.", "",
              "| benchmark | figure | measured | baseline | ratio | target | result |",
              "|---|---|---|---|---|---|---|"]
    for result in results:
        if result.get("skipped"):
            lines.append(f"| {result['name']} | not run: {cell(result['skipped'])} | | | | | |")
            continue
        if result["status"] != 0 and not result["rows"]:
            lines.append(f"| {result['name']} | (the benchmark failed, exit status {result['status']}; "
                         f"see {result['output']}) | | | | | **FAIL** |")
        for entry in result["rows"]:
            if entry.get("detail"):
                continue
            baseline = ""
            if entry["baseline"] is not None:
                baseline = f"{with_unit(entry['baseline'], entry['baseline_unit'])} ({entry['baseline_label']})"
            ratio = f"{number(entry['ratio'])} ({entry['ratio_label']})" if entry["ratio"] is not None else ""
            figure = entry["figure"] + (f"; {entry['note']}" if entry["note"] else "")
            lines.append(f"| {result['name']} | {cell(figure)} | {with_unit(entry['value'], entry['unit'])} | "
                         f"{cell(baseline)} | {cell(ratio)} | {target_text(entry)} | {verdict(entry)} |")
    details = [(r["name"], e) for r in results for e in r["rows"] if e.get("detail")]
    if details:
        lines += ["", "## Where the time goes (from run.log of the median run)", "",
                  "| benchmark | step | time | share |", "|---|---|---|---|"]
        for name, entry in details:
            lines.append(f"| {name} | {cell(entry['figure'])} | {with_unit(entry['value'], entry['unit'])} | "
                         f"{cell(entry['note'])} |")
    lines += ["", "## The runs", "", "| benchmark | arguments | started | wall time | load before / after "
              "(1/5/15 min) | exit status | output |", "|---|---|---|---|---|---|---|"]
    for result in results:
        if result.get("skipped"):
            continue
        lines.append(f"| {result['name']} | `{' '.join(result['arguments']) or '(defaults)'}` | {result['started']} | "
                     f"{number(result['wall_s'])} s | {load_text(result['load_before'])} / "
                     f"{load_text(result['load_after'])} | {result['status']} | {result['output']} |")
    return "\n".join(lines) + "\n"


def previous_results(folder: Path) -> dict[str, dict]:
    """The benchmarks of the last table of a mode, by name (for --only in full mode).

    A benchmark missing from that table whose rows file is in the folder (the script run by hand
    with ``--json <folder>/<name>.json``) is taken from the file, dated by its modification time.
    """
    path = folder / "table.json"
    found = {r["name"]: r for r in json.loads(path.read_text()).get("benchmarks", [])} if path.is_file() else {}
    for name, full, _ in BENCHMARKS:
        rows_file = folder / f"{name}.json"
        if name in found or not rows_file.is_file():
            continue
        written = json.loads(rows_file.read_text())
        modified = datetime.datetime.fromtimestamp(rows_file.stat().st_mtime).astimezone()
        text_file = rows_file.with_suffix(".txt")
        found[name] = judged({"name": name, "arguments": full, "status": 0, "wall_s": None,
                              "started": f"(ended {modified.isoformat(timespec='seconds')}; run by hand)",
                              "load_before": written.get("load_at_start", [0.0, 0.0, 0.0]),
                              "load_after": written.get("load_at_end", [0.0, 0.0, 0.0]),
                              "rows": written["rows"],
                              "output": _shown(text_file) if text_file.is_file() else ""})
    return found


def parse_arguments(argv: list[str] | None) -> argparse.Namespace:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--quick", action="store_true", help="reduced sizes, under two minutes")
    parser.add_argument("--only", default=None, help="comma-separated benchmark names to run")
    parser.add_argument("--list", action="store_true", help="list the benchmarks and their arguments")
    parser.add_argument("--out", default=str(HERE / "results"),
                        help="folder of the tables (default benchmarks/results); <mode>/ inside it")
    parser.add_argument("--table-only", action="store_true",
                        help="run nothing: write the table again from the mode's table.json")
    parser.add_argument("--no-record", action="store_true",
                        help="in full mode, do not rewrite benchmarks/RESULTS.md and RESULTS.json")
    args = parser.parse_args(argv)
    names = [name for name, _, _ in BENCHMARKS]
    args.selected = names
    if args.only:
        args.selected = [s.strip() for s in args.only.split(",") if s.strip()]
        unknown = [s for s in args.selected if s not in names]
        if unknown:
            parser.error(f"unknown benchmark(s) {', '.join(unknown)}; known: {', '.join(names)}")
    return args


def main(argv: list[str] | None = None) -> int:
    args = parse_arguments(argv)
    mode = "quick" if args.quick else "full"
    if args.list:
        for name, full, quick in BENCHMARKS:
            quick_text = " ".join(quick) if quick is not None else "(full runs only)"
            print(f"{name:<24} full: {' '.join(full) or '(defaults)':<20} quick: {quick_text}")
        return 0
    folder = Path(args.out) / mode
    folder.mkdir(parents=True, exist_ok=True)
    if args.table_only:
        table = json.loads((folder / "table.json").read_text())
        write_tables(folder, table, mode, record=mode == "full" and not args.no_record)
        return 0
    start = time.perf_counter()
    machine_info = machine()
    results, failed = [], False
    last_quick = previous_results(folder) if args.quick else {}
    for name, full, quick in BENCHMARKS:
        if name not in args.selected:
            continue
        arguments = quick if args.quick else full
        if arguments is None:
            print(f"{name}: full runs only, skipped in --quick", flush=True)
            results.append(skipped(name, "full runs only"))
            continue
        if args.quick and name not in QUICK_ALWAYS:
            before = last_quick.get(name, {}).get("wall_s") or QUICK_GUESS_S.get(name, DEFAULT_QUICK_GUESS_S)
            elapsed = time.perf_counter() - start
            if elapsed + before > QUICK_BUDGET_S - QUICK_MARGIN_S:
                why = (f"would not fit into the {QUICK_BUDGET_S:.0f} s of --quick ({elapsed:.0f} s spent, "
                       f"it takes about {before:.0f} s)")
                print(f"{name}: skipped, {why}", flush=True)
                results.append(skipped(name, why))
                continue
        print(f"{name} {' '.join(arguments)} ...", end=" ", flush=True)
        result = judged(run_benchmark(name, arguments, folder))
        failed = failed or result["status"] != 0
        missed = sum(1 for e in result["rows"] if e.get("passed") is False)
        print(f"{result['wall_s']:.0f} s, {len(result['rows'])} figures, {missed} target(s) missed"
              + (f", FAILED (exit {result['status']}, see {result['output']})" if result["status"] else ""),
              flush=True)
        results.append(result)
    wall = time.perf_counter() - start
    if mode == "full" and args.only:
        earlier = previous_results(folder)
        ran = {r["name"] for r in results}
        order = [name for name, _, _ in BENCHMARKS]
        results = sorted(results + [r for n, r in earlier.items() if n not in ran],
                         key=lambda r: order.index(r["name"]) if r["name"] in order else len(order))
    table = {"mode": mode, "machine": machine_info, "wall_s": wall if not (mode == "full" and args.only) else None,
             "benchmarks": results}
    write_tables(folder, table, mode, record=mode == "full" and not args.no_record)
    print(f"({wall:.0f} s)")
    return 1 if failed else 0


def write_tables(folder: Path, table: dict, mode: str, record: bool) -> None:
    """table.md and table.json of the mode; with ``record`` also benchmarks/RESULTS.md and .json."""
    text = markdown(mode, table["machine"], table["benchmarks"], table["wall_s"])
    (folder / "table.json").write_text(json.dumps(table, indent=1) + "\n")
    (folder / "table.md").write_text(text)
    print(f"\n{text}")
    print(f"Wrote {folder / 'table.md'} and table.json")
    if record:
        (HERE / "RESULTS.md").write_text(text)
        (HERE / "RESULTS.json").write_text(json.dumps(table, indent=1) + "\n")
        print(f"Wrote {HERE / 'RESULTS.md'} and RESULTS.json")


def _shown(path: Path) -> str:
    """A file's name relative to the checkout when it is inside it (``--out`` may point elsewhere)."""
    return str(path.relative_to(ROOT)) if path.is_relative_to(ROOT) else str(path)


if __name__ == "__main__":
    sys.exit(main())
