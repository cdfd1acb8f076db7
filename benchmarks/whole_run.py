"""Benchmark: the whole ``fabric2seis sample`` command on large three-phase maps, against orix's read.

What it measures
----------------
For each map size n (pixels) the script makes a synthetic three-phase map like a peridotite's:
olivine, enstatite and diopside grains in about 70/20/10 % of the grains, Voronoi grains of about
``PIXELS_PER_GRAIN`` (40) pixels on a square grid of step 1 um, a weak A-type olivine fabric
(45 degrees of scatter about the ideal orientation) and random enstatite and diopside, 0.5
degrees of scatter from pixel to pixel (``fabric2seis.synth.voronoi_map`` and
``fabric_orientations``). It writes the map as ``.ang`` with the project's writer
(``fabric2seis.ingest.io.write.write_ang``) and a sidecar ``<stem>.yaml`` placing the sample in
the ground (the demo's placement), and then measures, each in a fresh process:

1. orix's own read of the file, ``orix.io.load(path)``: the time of the call (the import of
   orix and a first read of a 1,000-pixel map, which imports orix's readers, are timed apart)
   and the peak memory of the process;
2. the whole command, ``fabric2seis sample MAP --out DIR`` with the default settings (run in the
   repository root, so that ``config/config.yaml`` is the defaults file), as the user runs it:
   wall time from starting the process to its end (imports, reading, grains, fabric, seismic,
   bootstrap, every table and figure written), and the peak resident memory of the process;
3. the ratio whole run / orix read (targets: at most 5 at 10^5 pixels, at most 3 at 10^6);
4. where the time goes: the run's own ``run.log`` logs each step with its seconds since the
   start; the differences between consecutive steps give each step's time, grouped into reading,
   grains, fabric, seismic, bootstrap, random aggregates, the figures and the rest; the wall time
   not covered by run.log is the process's start-up (imports) and exit. With two threads a second
   process draws figures alongside the bootstrap (its run.log lines start ``figures:``): its time
   from its first line to its last is shown on a row of its own, overlapping the others;
5. threads (``--threads``, default 1 and 2, at 10^5 pixels only: ``THREAD_SIZES``; not in
   ``--quick``): the same command with ``--threads 1`` and ``--threads 2``, alternating, ``--runs``
   times each; the median wall time of each, their ratio (the speed-up of two threads), and the
   fabric and bootstrap steps of run.log, the parts the threads share. The load average is taken
   before and after each run: other work on the machine takes the second core from the threads;
6. peak memory targets: under 2 GB at 10^6 pixels and within 8 GB at 10^7; and from the slope of
   the peak between the two largest maps measured, the largest map whose run stays within 16 GB.

How it measures
---------------
Times are wall-clock (``time.perf_counter`` in this process around the child's whole life for
the command; inside the child around the call for orix). Below ``SINGLE_RUN_FROM_PIXELS`` the
figure is the median of ``--runs`` runs (3), each in a fresh process; from 10^7 pixels on one run.
A run longer than ``--timeout-minutes`` (25) is stopped, and a run whose resident memory passes
``--memory-cap-gb`` (12 GB; the machine is shared) is stopped too: the table then shows the time
or memory at which it was stopped, as a missed target. Peaks are ``ru_maxrss`` of the finished
child as ``os.wait4`` reports it (Linux: kB; MB here are 2**20 bytes), or, if larger, the memory of
the command and the second process it forks to draw figures (their proportional set sizes summed,
polled every 0.2 s: ``tree_memory_mb``); Linux carries a parent's
peak over into its children, so this parent imports neither numpy nor orix and makes the maps in
child processes too (its own peak, the floor under every measured peak, is printed). The file has
just been written, so both readers find it in the operating system's file cache. Generating and
writing the maps is not timed (shown for information). Children run with Python's bytecode cache
on (``rows.child_environment``), as an installed package has it.

How to run
----------
From the repository root::

    python benchmarks/whole_run.py                 # 10^5, 10^6 (median of 3) and 10^7 (one run)
    python benchmarks/whole_run.py --quick         # 10^4 and 10^5, one run each (about a minute)
    python benchmarks/whole_run.py --sizes 100000,1000000 --runs 3 --json rows.json --keep

The full run takes about 7 minutes on 2 cores and writes up to about 1.5 GB of temporary files
(deleted at the end unless ``--keep``). Exit status 0 when every measurement ran (a run stopped at
the time or memory cap counts as measured), 1 when one failed.
"""

from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parents[1]))   # measure this checkout, not an installed copy
_sys.path.insert(0, str(_Path(__file__).resolve().parent))       # rows.py beside this script

import argparse
import contextlib
import io
import json
import math
import os
import re
import shutil
import signal
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from rows import add_options, child_environment, row, write_rows

REPOSITORY_ROOT = Path(__file__).resolve().parent.parent
#: pixels per grain of the synthetic maps ("grains of tens of pixels")
PIXELS_PER_GRAIN = 40
#: the phases: name in the file, point group, share of the grains, ideal fabric (None: random)
PHASES = [("olivine", "mmm", 0.7, "olivine-A"), ("enstatite", "mmm", 0.2, None),
          ("diopside", "2/m", 0.1, None)]
#: scatter about the ideal olivine orientation (degrees): a weak fabric
FABRIC_SCATTER_DEG = 45.0
#: the sidecar of every map: the demo's placement in the ground (demo_samples/VM03_lherzolite.yaml)
SIDECAR = ("# synthetic benchmark map (invented)\nfield:\n  foliation_strike_deg: 30.0\n"
           "  foliation_dip_deg: 5.0\n  lineation_pitch_deg: 15.0\n  layer_thickness_km: 60.0\n")
FULL_SIZES = [100_000, 1_000_000, 10_000_000]
QUICK_SIZES = [10_000, 100_000]
#: from this size on one run of each measurement, below it the median of --runs
SINGLE_RUN_FROM_PIXELS = 5_000_000
#: targets: (pixels, largest ratio whole run / orix read)
TARGET_RATIOS = {100_000: 5.0, 1_000_000: 3.0}
#: map sizes at which the command is also timed on each of --threads (1 and 2 by default)
THREAD_SIZES = [100_000]
#: targets: (pixels, peak memory must stay below this, MB)
TARGET_PEAK_MB = {1_000_000: 2048.0, 10_000_000: 8192.0}
#: the machine size for which the largest map is stated (MB)
STATED_MACHINE_MB = 16 * 1024.0
#: pixels of the small map orix reads first in each of its processes
WARM_UP_PIXELS = 1_000
RESULT_MARK = "WHOLE-RUN-BENCHMARK-RESULT "
#: how the command is started: the package's own entry point, in this checkout (PYTHONPATH)
COMMAND = [sys.executable, "-c", "import sys; from fabric2seis.cli import main; sys.exit(main())"]


# --- the children: making a map, reading it with orix ---------------------------------------------


def write_synthetic_map(path: Path, pixels: int, seed: int) -> dict:
    """Write a three-phase Voronoi map of about ``pixels`` pixels as .ang, and its sidecar."""
    import numpy as np

    from fabric2seis.elastic.minerals import find_mineral
    from fabric2seis.ingest.io.write import write_ang
    from fabric2seis.synth import fabric_orientations, voronoi_map

    side = max(2, round(math.sqrt(pixels)))
    grains = max(len(PHASES), round(side * side / PIXELS_PER_GRAIN))
    start = time.perf_counter()
    rng = np.random.default_rng(seed)
    shares = np.array([share for _, _, share, _ in PHASES])
    cell_phase = rng.choice(len(PHASES), size=grains, p=shares / shares.sum()) + 1
    cell_quat = np.empty((grains, 4))
    for k, (name, _, _, fabric) in enumerate(PHASES, start=1):
        chosen = cell_phase == k
        cell_quat[chosen] = fabric_orientations(find_mineral(name), fabric, int(chosen.sum()),
                                                FABRIC_SCATTER_DEG, seed + k)
    synthetic = voronoi_map(grains, side, side, step=1.0, grid="square", cell_quat=cell_quat,
                            noise_deg=0.5, seed=seed, cell_phase=cell_phase)
    generated = time.perf_counter()
    write_ang(path, synthetic.x, synthetic.y, synthetic.quat, synthetic.phase,
              [name for name, _, _, _ in PHASES], [group for _, group, _, _ in PHASES])
    path.with_suffix(".yaml").write_text(SIDECAR)
    written = time.perf_counter()
    return {"pixels": side * side, "side": side, "grains": grains,
            "generate_s": generated - start, "write_s": written - generated,
            "file_mb": path.stat().st_size / 2**20, "path": str(path)}


def read_with_orix(path: str, warm_up_path: str) -> dict:
    """Time orix's read of one file in this (fresh) process.

    The import, and a first read of a small warm-up map (orix imports its readers on first use),
    are timed apart: they are the same for every size.
    """
    start = time.perf_counter()
    from orix import io as orix_io
    with contextlib.redirect_stdout(io.StringIO()):
        orix_io.load(warm_up_path)
    warmed = time.perf_counter()
    with contextlib.redirect_stdout(io.StringIO()):
        crystal_map = orix_io.load(path)
    return {"import_s": warmed - start, "read_s": time.perf_counter() - warmed,
            "points": int(crystal_map.size)}


def child_main(args: argparse.Namespace) -> int:
    if args.child == "generate":
        if args.warm_up_file:                 # the small map orix reads first, made in the same process
            write_synthetic_map(Path(args.warm_up_file), WARM_UP_PIXELS, 0)
        result = write_synthetic_map(Path(args.file), args.pixels, args.seed)
    else:
        result = read_with_orix(args.file, args.warm_up_file)
    print(RESULT_MARK + json.dumps(result), flush=True)
    return 0


# --- the parent: starting children and watching them ----------------------------------------------


def own_peak_mb() -> float:
    import resource

    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 2**10


def resident_mb(pid: int) -> float:
    """Resident memory of one process now (MB), 0 when it is gone."""
    try:
        return int(Path(f"/proc/{pid}/statm").read_text().split()[1]) * os.sysconf("SC_PAGE_SIZE") / 2**20
    except (OSError, ValueError, IndexError):
        return 0.0


def tree_memory_mb(pid: int) -> float:
    """Memory of a process and its children now (MB): their proportional set sizes (PSS) summed.

    PSS shares each page among the processes that map it, so a forked child's pages still shared
    with its parent count once (Linux, /proc/PID/smaps_rollup); 0 for a process that is gone.
    """
    total, seen, todo = 0.0, set(), [pid]
    while todo:
        here = todo.pop()
        if here in seen:
            continue
        seen.add(here)
        try:
            rollup = Path(f"/proc/{here}/smaps_rollup").read_text()
            total += next(int(line.split()[1]) for line in rollup.splitlines() if line.startswith("Pss:")) / 2**10
            for task in Path(f"/proc/{here}/task").iterdir():
                todo += [int(child) for child in (task / "children").read_text().split()]
        except (OSError, ValueError, StopIteration):
            continue
    return total


def watched_run(command: list[str], cwd: Path, timeout_s: float, cap_mb: float, stdout=None) -> dict:
    """Run a command; its wall time (s), peak memory (MB), CPU time, exit status.

    The peak is the larger of the process's own ``ru_maxrss`` and the largest memory of the
    process with its children seen while polling every 0.2 s (:func:`tree_memory_mb`: with two
    threads ``fabric2seis sample`` forks a second process that draws the figures, whose own peak
    ``ru_maxrss`` of the parent does not include). Stops it (SIGKILL) when it runs longer than
    ``timeout_s`` or its resident memory passes ``cap_mb``; ``stopped`` then says why.
    """
    environment = child_environment()
    start = time.perf_counter()
    process = subprocess.Popen(command, cwd=cwd, env=environment, stdout=stdout or subprocess.DEVNULL,
                               stderr=subprocess.PIPE if stdout is None else subprocess.STDOUT)
    stopped, largest_seen, tree_seen = None, 0.0, 0.0
    while True:
        pid, status, usage = os.wait4(process.pid, os.WNOHANG)
        if pid:
            break
        largest_seen = max(largest_seen, resident_mb(process.pid))
        tree_seen = max(tree_seen, tree_memory_mb(process.pid))
        elapsed = time.perf_counter() - start
        if stopped is None and (elapsed > timeout_s or largest_seen > cap_mb):
            stopped = (f"stopped after {elapsed / 60:.1f} min" if elapsed > timeout_s else
                       f"stopped at {largest_seen:.0f} MB resident (cap {cap_mb:.0f} MB) after {elapsed:.0f} s")
            process.send_signal(signal.SIGKILL)
        time.sleep(0.2)
    wall = time.perf_counter() - start
    process.returncode = os.waitstatus_to_exitcode(status)
    error = process.stderr.read().decode(errors="replace") if process.stderr is not None else ""
    return {"wall_s": wall, "peak_mb": max(usage.ru_maxrss / 2**10, tree_seen), "largest_seen_mb": largest_seen,
            "own_peak_mb": usage.ru_maxrss / 2**10, "tree_seen_mb": tree_seen,
            "cpu_s": usage.ru_utime + usage.ru_stime, "status": process.returncode,
            "stopped": stopped, "stderr": error[-2000:]}


def in_child(task: str, path: Path, extra: list[str] | None = None) -> dict:
    """This script in a fresh process for one task; its result and its peak memory."""
    out = path.parent / f"{path.stem}.{task}.out"
    with open(out, "w") as handle:
        watched = watched_run([sys.executable, str(Path(__file__).resolve()), "--child", task,
                               "--file", str(path)] + (extra or []), REPOSITORY_ROOT, 3600.0,
                              1e9, stdout=handle)
    text = out.read_text()
    lines = [line for line in text.splitlines() if line.startswith(RESULT_MARK)]
    if watched["status"] != 0 or not lines:
        raise RuntimeError(f"{task} child failed (exit {watched['status']}): {text[-1500:]}")
    return {**json.loads(lines[-1][len(RESULT_MARK):]), "peak_mb": watched["peak_mb"]}


# --- run.log: where the time went ---------------------------------------------------------------

#: run.log steps, grouped: (label, the message starts with one of these)
STEP_GROUPS = [
    ("read the map", ("reading",)),
    ("grains", ("reconstructing grains",)),
    ("fabric (all phases)", ("fabric of",)),
    ("seismic (tensor, velocities, splitting)", ("elastic tensor", "velocities on", "splitting of")),
    ("bootstrap", ("bootstrap",)),
    ("random aggregates", ("random aggregates",)),
    ("pole figures", ("wrote pole_figures",)),
    ("inverse pole figures", ("wrote inverse_pole_figures",)),
    ("other files and figures", ("wrote",)),
]
LOG_LINE = re.compile(r"^\s*([\d.]+) s  (.*)$")
#: run.log marks the lines of the second process that draws figures alongside the bootstrap
#: (``sample_output.SampleFigures``) with this; the figures this process drew are in the groups above
SECOND_PROCESS = "figures: "
SECOND_PROCESS_LABEL = "figures drawn by the second process (alongside the steps above, not added)"


def run_log_steps(path: Path) -> list[tuple[float, str]]:
    """The (seconds since the start, message) lines of a run.log."""
    steps = []
    for line in path.read_text().splitlines():
        found = LOG_LINE.match(line)
        if found:
            steps.append((float(found.group(1)), found.group(2)))
    return steps


def time_by_group(steps: list[tuple[float, str]], wall_s: float) -> dict[str, float]:
    """Seconds per group of steps; the wall time run.log does not cover is start-up and exit.

    A step's time runs from its line to the next; a "wrote FILES" line is logged after the files
    were written, so the time before it is the writing's.
    """
    groups: dict[str, float] = {label: 0.0 for label, _ in STEP_GROUPS}
    groups["other steps"] = 0.0
    alongside = [(t, m[len(SECOND_PROCESS):]) for t, m in steps if m.startswith(SECOND_PROCESS)]
    steps = [(t, m) for t, m in steps if not m.startswith(SECOND_PROCESS)]
    for (t0, first), (t1, second) in zip(steps, steps[1:]):
        message = second if second.startswith("wrote ") else first
        label = next((name for name, starts in STEP_GROUPS if message.startswith(starts)), "other steps")
        groups[label] += t1 - t0
    logged = steps[-1][0] if steps else 0.0
    groups["start-up, imports and exit (outside run.log)"] = max(wall_s - logged, 0.0)
    if alongside:       # its own clock: these overlap the steps above and are not part of the sum
        groups[SECOND_PROCESS_LABEL] = alongside[-1][0] - alongside[0][0]
    return groups


# --- measuring one size -------------------------------------------------------------------------


def measure_size(made: dict, runs: int, workdir: Path, args: argparse.Namespace) -> dict:
    """orix reads and whole runs of one map, alternating so that both see the same machine."""
    path = Path(made["path"])
    orix_runs, command_runs = [], []
    for k in range(runs):
        orix_runs.append(in_child("orix", path, ["--warm-up-file", str(workdir / "warm_up.ang")]))
        out = workdir / f"results_{made['pixels']}_{k}"
        watched = watched_run(COMMAND + ["sample", str(path), "--out", str(out)], REPOSITORY_ROOT,
                              args.timeout_minutes * 60, args.memory_cap_gb * 1024)
        log = out / "run.log"
        watched["groups"] = time_by_group(run_log_steps(log), watched["wall_s"]) if log.is_file() else None
        command_runs.append(watched)
        state = watched["stopped"] or (f"exit status {watched['status']}" if watched["status"] else "ok")
        print(f"  run {k + 1}/{runs}: orix read {orix_runs[-1]['read_s']:.2f} s "
              f"(peak {orix_runs[-1]['peak_mb']:.0f} MB); whole run {watched['wall_s']:.1f} s, "
              f"peak {watched['peak_mb']:.0f} MB, CPU {watched['cpu_s']:.1f} s ({state})", flush=True)
        if watched["status"] and not watched["stopped"]:
            print("    its error output ends: " + watched["stderr"][-600:].replace("\n", "\n    "))
        shutil.rmtree(out, ignore_errors=True)
        if watched["stopped"] or watched["status"]:
            break
    finished = [r for r in command_runs if r["status"] == 0 and not r["stopped"]]
    median_run = sorted(finished, key=lambda r: r["wall_s"])[(len(finished) - 1) // 2] if finished else None
    return {"made": made, "orix": orix_runs, "command": command_runs, "finished": finished,
            "median_run": median_run, "by_threads": threads_runs(made, runs, workdir, args),
            "orix_read_s": statistics.median(r["read_s"] for r in orix_runs),
            "orix_import_s": statistics.median(r["import_s"] for r in orix_runs),
            "orix_peak_mb": max(r["peak_mb"] for r in orix_runs)}


def threads_runs(made: dict, runs: int, workdir: Path, args: argparse.Namespace) -> dict[int, list[dict]]:
    """The command with each of ``--threads``, alternating, ``runs`` times each (THREAD_SIZES only)."""
    path, pixels = Path(made["path"]), made["pixels"]
    if not args.thread_list or not any(abs(pixels / n - 1) < 0.05 for n in THREAD_SIZES):
        return {}
    out: dict[int, list[dict]] = {t: [] for t in args.thread_list}
    for k in range(runs):
        for threads in args.thread_list:
            folder = workdir / f"results_{pixels}_{k}_threads_{threads}"
            load = os.getloadavg()[0]
            watched = watched_run(COMMAND + ["sample", str(path), "--out", str(folder), "--threads", str(threads)],
                                  REPOSITORY_ROOT, args.timeout_minutes * 60, args.memory_cap_gb * 1024)
            log = folder / "run.log"
            watched["groups"] = time_by_group(run_log_steps(log), watched["wall_s"]) if log.is_file() else None
            watched["load"] = (load, os.getloadavg()[0])
            out[threads].append(watched)
            print(f"  --threads {threads}, run {k + 1}/{runs}: {watched['wall_s']:.1f} s, "
                  f"CPU {watched['cpu_s']:.1f} s, load {load:.2f} -> {watched['load'][1]:.2f}", flush=True)
            shutil.rmtree(folder, ignore_errors=True)
    return out


def threads_rows(result: dict) -> list[dict]:
    """Wall time of the command on each number of threads, the speed-up, and the steps the threads share."""
    out = []
    pixels = result["made"]["pixels"]
    medians = {}
    for threads, runs in result.get("by_threads", {}).items():
        finished = [r for r in runs if r["status"] == 0 and not r["stopped"]]
        if not finished:
            continue
        median = sorted(finished, key=lambda r: r["wall_s"])[(len(finished) - 1) // 2]
        medians[threads] = median
        loads = [x for r in finished for x in r["load"]]
        out.append(row(f"whole sample run on {threads} thread{'s' if threads > 1 else ''}, {size_text(pixels)}",
                       median["wall_s"], "s",
                       note=f"median of {len(finished)} (alternating with the other thread counts); "
                            f"load {min(loads):.2f} to {max(loads):.2f}; CPU {median['cpu_s']:.0f} s"))
    if 1 in medians:
        for threads, median in medians.items():
            if threads == 1:
                continue
            out.append(row(f"speed-up of {threads} threads over 1, {size_text(pixels)}", median["wall_s"], "s",
                           baseline=medians[1]["wall_s"], baseline_unit="s", baseline_label="the run on 1 thread",
                           ratio=medians[1]["wall_s"] / median["wall_s"], ratio_label="1 thread / threads",
                           note="the threads share the fabric and the bootstrap only"))
    for threads, median in medians.items():
        for label in ("fabric (all phases)", "bootstrap"):
            seconds = (median["groups"] or {}).get(label)
            if seconds:
                out.append(row(f"{size_text(pixels)} on {threads} thread{'s' if threads > 1 else ''}: {label}",
                               seconds, "s", note="from run.log of the median run", detail=True))
    return out


def size_text(pixels: int) -> str:
    exponent = math.log10(pixels)
    return f"10^{exponent:.0f} px" if abs(exponent - round(exponent)) < 0.01 else f"{pixels:,} px"


def rows_of(results: list[dict], runs: int) -> list[dict]:
    """The figures of the table, and the breakdown rows of the largest finished maps."""
    out = []
    for result in results:
        pixels = result["made"]["pixels"]
        near = next((n for n in TARGET_RATIOS if abs(pixels / n - 1) < 0.05), None)
        median = result["median_run"]
        count = len(result["finished"])
        how = (f"median of {count} runs" if count > 1 else "one run") + ", each in a fresh process"
        label = f"orix.io.load of the same file ({'median' if len(result['orix']) > 1 else 'one read'})"
        if median is None:
            last = result["command"][-1]
            why = last["stopped"] or f"failed, exit status {last['status']}"
            out.append(row(f"whole sample run, {size_text(pixels)}", None, "s",
                           baseline=result["orix_read_s"], baseline_unit="s", baseline_label=label,
                           ratio_label="whole run / orix read",
                           target=("ratio", "<=", TARGET_RATIOS[near]) if near else None,
                           note=f"{why} (at {last['wall_s']:.0f} s)"))
        else:
            out.append(row(f"whole sample run, {size_text(pixels)}", median["wall_s"], "s",
                           baseline=result["orix_read_s"], baseline_unit="s", baseline_label=label,
                           ratio=median["wall_s"] / result["orix_read_s"],
                           ratio_label="whole run / orix read",
                           target=("ratio", "<=", TARGET_RATIOS[near]) if near else None,
                           note=f"{how}; {result['made']['grains']:,} grains; CPU {median['cpu_s']:.0f} s"))
        memory_near = next((n for n in TARGET_PEAK_MB if abs(pixels / n - 1) < 0.05), None)
        peaks = [r["peak_mb"] for r in result["command"]]
        stopped = [r for r in result["command"] if r["stopped"]]
        peak = max(peaks)
        tree = max(r.get("tree_seen_mb", 0.0) for r in result["command"])
        own = max(r.get("own_peak_mb", r["peak_mb"]) for r in result["command"])
        note = (f"largest of the runs: the command's own ru_maxrss ({own:.0f} MB) or the command with "
                f"its second process (figures), PSS summed, polled every 0.2 s ({tree:.0f} MB)")
        target = ("value", "<", TARGET_PEAK_MB[memory_near]) if memory_near else None
        if stopped:
            note = f"{stopped[0]['stopped']}: the peak is at least this"
            peak = max(peak, stopped[0]["largest_seen_mb"])
            if target is not None and peak < target[2]:
                target, note = None, note + "; the run did not finish, so the target cannot be judged"
        out.append(row(f"peak memory of the whole run, {size_text(pixels)}", peak, "MB",
                       baseline=result["orix_peak_mb"], baseline_unit="MB",
                       baseline_label="orix.io.load process peak", ratio=peak / result["orix_peak_mb"],
                       ratio_label="whole run / orix read", target=target, note=note))
    for result in results:
        out.extend(threads_rows(result))
    measured = [(r["made"]["pixels"], max(x["peak_mb"] for x in r["finished"]))
                for r in results if r["finished"]]
    if len(measured) >= 2:
        (n1, m1), (n2, m2) = measured[-2], measured[-1]
        slope = (m2 - m1) / (n2 - n1)
        # an extrapolation: three significant figures are all it can claim
        largest = float(f"{n2 + (STATED_MACHINE_MB - m2) / slope:.3g}") if slope > 0 else None
        out.append(row("largest map the defaults handle in 16 GB (peak-memory slope)", largest, "px",
                       note=(f"linear through the peaks at {n1:,} px ({m1:.0f} MB) and {n2:,} px "
                             f"({m2:.0f} MB): {slope * 1e6:.0f} MB per 10^6 px; 16 GB = "
                             f"{STATED_MACHINE_MB:.0f} MB for the run alone")))
    for result in results:
        median = result["median_run"] or (result["command"][-1] if result["command"][-1]["groups"] else None)
        if median is None or not median["groups"] or result["made"]["pixels"] < 1_000_000 and len(results) > 2:
            continue
        wall = median["wall_s"]
        for label, seconds in median["groups"].items():
            if seconds > 0:
                out.append(row(f"{size_text(result['made']['pixels'])}: {label}", seconds, "s",
                               note=f"{100 * seconds / wall:.0f} % of the run's {wall:.0f} s",
                               detail=True))
    return out


def parse_arguments(argv: list[str] | None) -> argparse.Namespace:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--sizes", default=None,
                        help="comma-separated map sizes in pixels (default 100000,1000000,10000000; "
                             "--quick: 10000,100000)")
    parser.add_argument("--runs", type=int, default=None,
                        help=f"runs per size below {SINGLE_RUN_FROM_PIXELS:,} pixels, the median counts "
                             "(default 3; --quick: 1)")
    parser.add_argument("--seed", type=int, default=1, help="seed of the synthetic maps (default 1)")
    parser.add_argument("--timeout-minutes", type=float, default=25.0,
                        help="stop a run after this long and record it as stopped (default 25)")
    parser.add_argument("--memory-cap-gb", type=float, default=12.0,
                        help="stop a run whose resident memory passes this, GB (default 12)")
    parser.add_argument("--threads", default=None,
                        help="comma-separated thread counts the command is also timed with at "
                             f"{', '.join(f'{n:,}' for n in THREAD_SIZES)} pixels (default 1,2; --quick: none; "
                             "'' for none)")
    parser.add_argument("--keep", action="store_true", help="keep the generated maps")
    parser.add_argument("--workdir", default=None, help="where the temporary folder is made")
    add_options(parser, "10^4 and 10^5 pixels, one run each")
    parser.add_argument("--child", choices=["generate", "orix"], help=argparse.SUPPRESS)
    parser.add_argument("--file", help=argparse.SUPPRESS)
    parser.add_argument("--pixels", type=int, help=argparse.SUPPRESS)
    parser.add_argument("--warm-up-file", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.child is None:
        text = args.sizes or ",".join(str(n) for n in (QUICK_SIZES if args.quick else FULL_SIZES))
        try:
            args.size_list = sorted({int(s.replace("_", "")) for s in text.split(",") if s.strip()})
        except ValueError:
            parser.error(f"--sizes must be whole numbers separated by commas, not '{text}'")
        if not args.size_list or min(args.size_list) < 100:
            parser.error("--sizes needs at least one size, each of at least 100 pixels")
        args.runs = args.runs or (1 if args.quick else 3)
        text = args.threads if args.threads is not None else ("" if args.quick else "1,2")
        try:
            args.thread_list = sorted({int(t) for t in text.split(",") if t.strip()})
        except ValueError:
            parser.error(f"--threads must be whole numbers separated by commas, not '{text}'")
        if any(t < 1 for t in args.thread_list):
            parser.error("--threads: each count must be at least 1")
    return args


def main(argv: list[str] | None = None) -> int:
    args = parse_arguments(argv)
    if args.child is not None:
        return child_main(args)
    load = os.getloadavg()
    print("The whole `fabric2seis sample` run against orix's read of the same .ang file")
    print(f"maps:   olivine/enstatite/diopside ~70/20/10 % of the grains, ~{PIXELS_PER_GRAIN} px per grain, "
          f"weak A-type olivine fabric ({FABRIC_SCATTER_DEG:.0f} deg scatter), seed {args.seed}")
    print(f"runs:   median of {args.runs} below {SINGLE_RUN_FROM_PIXELS:,} px, one run above; stop after "
          f"{args.timeout_minutes:.0f} min or {args.memory_cap_gb:.0f} GB")
    print(f"load:   {load[0]:.2f} {load[1]:.2f} {load[2]:.2f} (1, 5, 15 min) at the start; "
          f"this parent's own peak {own_peak_mb():.0f} MB (floor under the measured peaks)")
    workdir = Path(tempfile.mkdtemp(prefix="fabric2seis-whole-run-", dir=args.workdir))
    results, failed = [], False
    try:
        warm_up = workdir / "warm_up.ang"
        for pixels in args.size_list:
            path = workdir / f"map_{pixels}.ang"
            first = [] if warm_up.is_file() else ["--warm-up-file", str(warm_up)]
            try:
                made = in_child("generate", path, ["--pixels", str(pixels), "--seed", str(args.seed)] + first)
            except RuntimeError as exc:
                print(f"{pixels:,} px: making the map FAILED: {exc}")
                failed = True
                continue
            print(f"{made['pixels']:,} px, {made['grains']:,} grains: generated in {made['generate_s']:.1f} s, "
                  f"written in {made['write_s']:.1f} s, {made['file_mb']:.0f} MB (peak {made['peak_mb']:.0f} MB)",
                  flush=True)
            runs = 1 if pixels >= SINGLE_RUN_FROM_PIXELS else args.runs
            try:
                result = measure_size(made, runs, workdir, args)
            except RuntimeError as exc:
                print(f"  FAILED: {exc}")
                failed = True
                continue
            failed = failed or any(r["status"] and not r["stopped"] for r in result["command"])
            results.append(result)
            if not args.keep:
                path.unlink(missing_ok=True)
        rows = rows_of(results, args.runs)
        print()
        for entry in rows:
            value = "not measured" if entry["value"] is None else f"{entry['value']:,.2f} {entry['unit']}"
            base = (f"; baseline {entry['baseline']:,.2f} {entry['baseline_unit']}"
                    if entry["baseline"] is not None else "")
            ratio = f"; ratio {entry['ratio']:.2f}" if entry["ratio"] is not None else ""
            print(f"  {entry['figure']:<62} {value}{base}{ratio}  ({entry['note']})")
        end_load = os.getloadavg()
        write_rows(args.json, "whole_run", rows, load_at_start=list(load), load_at_end=list(end_load))
    finally:
        if args.keep:
            print(f"The maps are kept in {workdir}")
        else:
            shutil.rmtree(workdir, ignore_errors=True)
    return 1 if failed or not results else 0


if __name__ == "__main__":
    sys.exit(main())
