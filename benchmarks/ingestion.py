"""Benchmark: ingesting EBSD maps of 100,000 to 1,000,000 pixels, against reading them with orix.

What it measures
----------------
For each map size n (pixels) the script makes a synthetic two-phase map (olivine and enstatite,
alternating Voronoi grains of about 400 pixels each on a square grid of step 1, 0.5 degrees of
orientation scatter per pixel) with ``fabric2seis.synth.voronoi_map``, writes it as a ``.ang``
file with the project's writer (``fabric2seis.ingest.io.write.write_ang``), and then measures:

1. the time to read the file with orix alone, ``orix.io.load(path)``;
2. the time of the whole ingestion, ``fabric2seis.pipeline.ingest(path, settings)`` with the
   default settings (``fabric2seis.settings.defaults()``, run from the repository root so that
   ``config/config.yaml`` is the one used): read through orix, map phases, clean, rotate into
   the structural frame, reconstruct grains and drop small ones;
3. the ratio ingestion time / orix read time (target: at most 2.0);
4. the peak memory of the process doing the ingestion (``ru_maxrss`` of
   ``resource.getrusage``; target: below 3 GB = 3072 MB at 1,000,000 pixels);
5. the scaling exponent of the ingestion time from the smallest to the largest size,
   ``log(t2 / t1) / log(n2 / n1)``, against the exponent n log n would have over the same range,
   ``log((n2 log n2) / (n1 log n1)) / log(n2 / n1)`` (target: not above it).

For the largest size it also times the stages of ``ingest`` one by one (the same calls, in the
same order, as ``fabric2seis.pipeline.ingest``).

How it measures
---------------
Generating and writing the maps is not timed (their times are shown for information). Every
measurement runs in a fresh child process (this script started again with the hidden option
``--child``), so that the memory peaks of different sizes and of orix and fabric2seis do not
mix. In each child the measured call is first made once on a small warm-up map of 10,000 pixels,
after the imports, so that one-off costs (imports, imports done on first use, loading the
mineral library, compiled code being built) are not charged to the large maps; import and warm-up
times are printed separately. Times
are wall-clock times from ``time.perf_counter``: the best of 5 runs below 1,000,000 pixels and of 2 from
1,000,000 pixels up. Both timings read the same file, which the operating system
has just written and so holds in its file cache. Orix's printed messages are swallowed with
``contextlib.redirect_stdout``.

The peak memory is the largest resident set size of the child process over its whole life:
Python, numpy, orix and fabric2seis as imported, the warm-up, and the first timed run at the
size in question. The resident size after the warm-up, before the timed run, is printed as well.
MB are 2**20 bytes. Linux hands a process's ``ru_maxrss`` on to the processes it starts, so the
maps are made in child processes too and the parent imports neither numpy nor orix; the peak
as ``/proc/self/status`` (VmHWM) tells it, which starts afresh in every program, is printed
beside it as a check.

How to run
----------
From the repository root::

    python benchmarks/ingestion.py
    python benchmarks/ingestion.py --sizes 100000,300000,1000000 --seed 1 --keep --workdir /tmp
    python benchmarks/ingestion.py --profile      # also cProfile the ingestion of the largest map

The default run takes a few minutes on 2 cores and writes about 160 MB of temporary files, which
are deleted at the end unless ``--keep`` is given. The exit status is 0 when every measurement ran,
1 when one failed; missed targets are reported but do not change the exit status.
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
import platform
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from rows import COLLECTED, record, write_rows

#: the repository root: children run here so that settings.defaults() finds config/config.yaml
REPOSITORY_ROOT = Path(__file__).resolve().parent.parent
#: ingestion time / orix read time should be at most this
TARGET_TIME_RATIO = 2.0
#: peak memory of the ingestion should be below this (MB = 2**20 bytes) ...
TARGET_PEAK_MB = 3 * 1024
#: ... at this many pixels; smaller maps are held to the same limit, larger ones to none
TARGET_PEAK_PIXELS = 1_000_000
#: pixels per grain of the synthetic maps
PIXELS_PER_GRAIN = 400
#: pixels of the warm-up map every child reads first
WARM_UP_PIXELS = 10_000
#: from this size on each measurement is the best of two runs, below it the best of five
SINGLE_RUN_FROM_PIXELS = 1_000_000
#: the phases of the synthetic maps: names as written in the file, and their point groups
PHASE_NAMES = ["olivine", "enstatite"]
POINT_GROUPS = ["mmm", "mmm"]
#: a child prints its result as one line starting with this
RESULT_MARK = "INGESTION-BENCHMARK-RESULT "


# --- the synthetic maps ---------------------------------------------------------------------------


def grid_shape(pixels: int) -> tuple[int, int]:
    """Columns and rows of the square map closest to ``pixels`` pixels."""
    side = max(2, round(math.sqrt(pixels)))
    return side, side


def write_synthetic_map(path: Path, pixels: int, seed: int) -> dict:
    """Write a two-phase Voronoi map of about ``pixels`` pixels as .ang; return what was made."""
    from fabric2seis.ingest.io.write import write_ang
    from fabric2seis.synth import voronoi_map

    columns, rows = grid_shape(pixels)
    grains = max(2, round(columns * rows / PIXELS_PER_GRAIN))
    start = time.perf_counter()
    synthetic = voronoi_map(grains, columns, rows, step=1.0, grid="square", noise_deg=0.5,
                            n_phases=len(PHASE_NAMES), seed=seed)
    generated = time.perf_counter()
    write_ang(path, synthetic.x, synthetic.y, synthetic.quat, synthetic.phase, PHASE_NAMES,
              POINT_GROUPS)
    written = time.perf_counter()
    return {"pixels": columns * rows, "columns": columns, "rows": rows, "grains": grains,
            "generate_seconds": generated - start, "write_seconds": written - generated,
            "file_mb": path.stat().st_size / 2**20, "path": str(path)}


# --- what the children measure ------------------------------------------------------------------


def resident_peak_mb() -> float:
    """Largest resident set size of this process so far, in MB (2**20 bytes)."""
    import resource

    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    # Linux reports kilobytes, macOS bytes
    return peak / 2**20 if sys.platform == "darwin" else peak / 2**10


def resident_now_mb() -> float | None:
    """Current resident set size in MB where /proc tells it (Linux), else None."""
    try:
        fields = Path("/proc/self/statm").read_text().split()
    except OSError:
        return None
    return int(fields[1]) * os.sysconf("SC_PAGE_SIZE") / 2**20


def resident_high_water_mb() -> float | None:
    """Peak resident size of this program's memory since it started (VmHWM, Linux), else None.

    Unlike ``ru_maxrss``, which Linux carries over from the parent through fork and exec, VmHWM
    starts afresh with the program: it serves as a cross-check.
    """
    try:
        for line in Path("/proc/self/status").read_text().splitlines():
            if line.startswith("VmHWM:"):
                return int(line.split()[1]) / 2**10
    except (OSError, ValueError, IndexError):
        return None
    return None


def read_with_orix(path: str) -> int:
    """Read a file with orix alone; return the number of points read."""
    from orix import io as orix_io

    with contextlib.redirect_stdout(io.StringIO()):
        crystal_map = orix_io.load(path)
    return int(crystal_map.size)


def ingest_with_fabric2seis(path: str, settings: dict) -> dict:
    """Run the whole ingestion; return counts to check it did the job."""
    from fabric2seis.pipeline import ingest

    with contextlib.redirect_stdout(io.StringIO()):
        sample = ingest(path, settings)
    return {"points_kept": int(len(sample.points.quat)),
            "grains_kept": int(sample.grains.n_grains) if sample.grains is not None else 0,
            "small_grain_points": int(sample.n_small_grain_points)}


def default_settings() -> tuple[dict, str]:
    """The default settings and the file they came from (the project's, run from its root)."""
    from fabric2seis import settings as settings_mod

    source = (settings_mod.PROJECT_DEFAULTS if settings_mod.PROJECT_DEFAULTS.is_file()
              else settings_mod.PACKAGED_DEFAULTS)
    return settings_mod.defaults(), str(source)


def timed_stages(path: str, settings: dict) -> list[tuple[str, float]]:
    """The calls of ``fabric2seis.pipeline.ingest``, in its order, each timed (s)."""
    from fabric2seis.ingest import frames
    from fabric2seis.ingest import grains as grains_mod
    from fabric2seis.ingest import phases as phases_mod
    from fabric2seis.ingest.io import read_ebsd

    stages = []
    clock = time.perf_counter()

    def lap(label: str) -> None:
        nonlocal clock
        now = time.perf_counter()
        stages.append((label, now - clock))
        clock = now

    with contextlib.redirect_stdout(io.StringIO()):
        data = read_ebsd(path, angle_units=settings["table"]["angle_units"])
        lap("io.read_ebsd (orix read + checks + record)")
        phase_minerals = phases_mod.map_phases(data, settings.get("phases"))
        clean = settings.get("clean") or {}
        points = phases_mod.select_points(data, phase_minerals, clean.get("quality_min"),
                                          clean.get("quality_field"))
        lap("phases.map_phases + phases.select_points")
        f = frames.structural_matrix(settings["frame"], None)
        points.quat = frames.to_structural(points.quat, f)
        lap("frames.structural_matrix + frames.to_structural")
        found = grains_mod.reconstruct(points.x, points.y, data.grid, data.step, points.quat,
                                       points.mineral_index, points.minerals,
                                       settings["grains"]["threshold_deg"], data.pixel_area)
        lap("grains.reconstruct")
        grains, keep = grains_mod.keep_large(found, settings["grains"]["min_pixels"])
        for field in ("quat", "mineral_index", "x", "y", "weights"):
            setattr(points, field, getattr(points, field)[keep])
        lap("grains.keep_large + dropping small-grain points")
        phases_mod.modal_fractions(points.mineral_index, points.weights, points.minerals)
        phases_mod.modal_fractions(points.mineral_index, points.weights, points.minerals,
                                   settings.get("modal_fractions"), None)
        lap("phases.modal_fractions (measured and final)")
    return stages


def profile_ingestion(path: str, settings: dict, entries: int = 15) -> str:
    """cProfile of one ingestion: the ``entries`` largest entries by cumulative time."""
    import cProfile
    import pstats

    profiler = cProfile.Profile()
    profiler.enable()
    ingest_with_fabric2seis(path, settings)
    profiler.disable()
    text = io.StringIO()
    pstats.Stats(profiler, stream=text).sort_stats("cumulative").print_stats(entries)
    return text.getvalue()


def run_child(task: str, path: str, warm_up_path: str, repeats: int) -> dict:
    """What one child process measures; returned to the parent as JSON."""
    if task in ("ingest", "stages", "profile"):
        settings, settings_file = default_settings()
    else:
        settings, settings_file = {}, None

    def measured_call():
        if task == "orix":
            return {"points_read": read_with_orix(path)}
        return ingest_with_fabric2seis(path, settings)

    # imports, then the one-off costs of the first call, go to a small map first
    start = time.perf_counter()
    if task == "orix":
        from orix.io import load  # noqa: F401  (orix loads lazily: the name must be fetched)
    else:
        from fabric2seis.pipeline import ingest  # noqa: F401
    import_seconds = time.perf_counter() - start
    start = time.perf_counter()
    if task == "orix":
        read_with_orix(warm_up_path)
    else:
        ingest_with_fabric2seis(warm_up_path, settings)
    result = {"task": task, "settings_file": settings_file, "import_seconds": import_seconds,
              "warm_up_seconds": time.perf_counter() - start,
              "resident_after_warm_up_mb": resident_now_mb(),
              "peak_after_warm_up_mb": resident_peak_mb()}

    if task == "stages":
        result["stages"] = timed_stages(path, settings)
    elif task == "profile":
        result["profile"] = profile_ingestion(path, settings)
    else:
        seconds = []
        for run in range(repeats):
            start = time.perf_counter()
            counts = measured_call()
            seconds.append(time.perf_counter() - start)
            if run == 0:
                result["peak_mb"] = resident_peak_mb()
                result["high_water_mb"] = resident_high_water_mb()
                result.update(counts)
        result["seconds"] = seconds
    return result


def child_main(args: argparse.Namespace) -> int:
    if args.child == "generate":
        result = write_synthetic_map(Path(args.file), args.pixels, args.seed)
    else:
        result = run_child(args.child, args.file, args.warm_up_file, args.repeats)
    print(RESULT_MARK + json.dumps(result), flush=True)
    return 0


# --- the parent: starting children, printing ------------------------------------------------------


def measure_in_child(task: str, path: str, warm_up_path: str = "", repeats: int = 1,
                     extra: list[str] | None = None) -> dict:
    """Run one measurement in a fresh Python process; raise RuntimeError if it fails."""
    command = [sys.executable, str(Path(__file__).resolve()), "--child", task, "--file", path,
               "--warm-up-file", warm_up_path, "--repeats", str(repeats)] + (extra or [])
    finished = subprocess.run(command, cwd=REPOSITORY_ROOT, capture_output=True, text=True)
    lines = [line for line in finished.stdout.splitlines() if line.startswith(RESULT_MARK)]
    if finished.returncode != 0 or not lines:
        raise RuntimeError(f"the '{task}' measurement of {Path(path).name} failed (exit status "
                           f"{finished.returncode}):\n{finished.stderr.strip()[-4000:]}")
    result = json.loads(lines[-1][len(RESULT_MARK):])
    notes = [line for line in finished.stderr.splitlines() if line.strip()]
    if notes:
        result["stderr"] = notes
    return result


def report_child_stderr(label: str, result: dict) -> None:
    """Show what a child wrote to stderr (warnings), briefly."""
    lines = result.get("stderr") or []
    if lines:
        print(f"  note: the {label} child wrote to stderr ({len(lines)} line(s)); first lines:")
        for line in lines[:6]:
            print(f"    {line[:160]}")


def machine_description() -> list[str]:
    """Machine, versions and load. Versions come from the package metadata: the parent process
    imports no numpy, orix or fabric2seis, so that it stays small (see ``generate_in_child``)."""
    from importlib import metadata

    def version(name: str) -> str:
        try:
            return metadata.version(name)
        except metadata.PackageNotFoundError:
            return "not installed"

    lines = [f"machine:   {platform.machine()}, {os.cpu_count()} logical CPUs, "
             f"{platform.system()} {platform.release()}",
             f"software:  Python {platform.python_version()}, "
             + ", ".join(f"{name} {version(name)}" for name in
                         ("fabric2seis", "orix", "numpy", "scipy"))]
    if hasattr(os, "getloadavg"):
        one, five, _ = os.getloadavg()
        lines.append(f"load:      {one:.2f} runnable processes (1-minute average), {five:.2f} "
                     "(5-minute average), before the benchmark")
    return lines


def generate_in_child(path: Path, pixels: int, seed: int) -> dict:
    """Write one synthetic map from a child process.

    Linux carries a process's peak resident size (``ru_maxrss``) over into the children it
    starts, through fork and exec; making the maps in the parent would set a floor under every
    peak measured afterwards. So the parent stays small and the maps are made elsewhere too.
    """
    return measure_in_child("generate", str(path),
                            extra=["--pixels", str(pixels), "--seed", str(seed)])


def n_log_n_exponent(n1: int, n2: int) -> float:
    """The exponent a time growing as n log n shows between n1 and n2."""
    return math.log((n2 * math.log(n2)) / (n1 * math.log(n1))) / math.log(n2 / n1)


def verdict(met: bool) -> str:
    return "met" if met else "NOT met"


def parse_arguments(argv: list[str] | None) -> argparse.Namespace:
    parser = argparse.ArgumentParser(
        description="Time the ingestion of synthetic two-phase .ang maps by fabric2seis "
                    "against reading them with orix alone; report memory peaks and scaling.")
    parser.add_argument("--sizes", default="100000,300000,1000000",
                        help="comma-separated map sizes in pixels (default 100000,300000,1000000)")
    parser.add_argument("--seed", type=int, default=1,
                        help="seed of the synthetic maps (default 1)")
    parser.add_argument("--keep", action="store_true",
                        help="keep the generated .ang files (default: delete them at the end)")
    parser.add_argument("--workdir", default=None,
                        help="folder in which the temporary folder of the maps is made "
                             "(default: the system's temporary folder)")
    parser.add_argument("--profile", action="store_true",
                        help="also profile the ingestion of the largest map with cProfile "
                             "(15 largest entries by cumulative time)")
    # the hidden child mode: one measurement in a fresh process
    parser.add_argument("--child", choices=["generate", "orix", "ingest", "stages", "profile"],
                        help=argparse.SUPPRESS)
    parser.add_argument("--pixels", type=int, help=argparse.SUPPRESS)
    parser.add_argument("--file", help=argparse.SUPPRESS)
    parser.add_argument("--warm-up-file", help=argparse.SUPPRESS)
    parser.add_argument("--repeats", type=int, default=1, help=argparse.SUPPRESS)
    parser.add_argument("--json", default=None, metavar="PATH",
                        help="also write the figures as JSON rows to PATH (for benchmarks/run.py)")
    args = parser.parse_args(argv)
    if args.child is None:
        try:
            args.size_list = sorted({int(s.replace("_", "")) for s in args.sizes.split(",") if s.strip()})
        except ValueError:
            parser.error(f"--sizes must be whole numbers separated by commas, not '{args.sizes}'")
        if not args.size_list or min(args.size_list) < 100:
            parser.error("--sizes needs at least one size, each of at least 100 pixels")
    return args


def main(argv: list[str] | None = None) -> int:
    args = parse_arguments(argv)
    if args.child is not None:
        return child_main(args)

    print("Ingestion of EBSD maps: fabric2seis.pipeline.ingest against orix.io.load")
    print("=" * 72)
    for line in machine_description():
        print(line)
    print(f"maps:      square grid, step 1 um, olivine + enstatite (alternating Voronoi grains of "
          f"~{PIXELS_PER_GRAIN} pixels), 0.5 deg scatter, seed {args.seed}, written as .ang")
    print(f"timing:    time.perf_counter in a fresh process per measurement, after a warm-up on a "
          f"{WARM_UP_PIXELS:,}-pixel map;")
    print(f"           best of 5 runs below {SINGLE_RUN_FROM_PIXELS:,} pixels, best of 2 from "
          f"{SINGLE_RUN_FROM_PIXELS:,} pixels on")
    print("memory:    peak resident set size (ru_maxrss) of the measuring process, MB = 2^20 bytes")
    print()

    workdir = Path(tempfile.mkdtemp(prefix="fabric2seis-ingestion-", dir=args.workdir))
    failed = False
    try:
        print(f"Writing the maps into {workdir} (not timed)")
        warm_up = generate_in_child(workdir / "warm_up.ang", WARM_UP_PIXELS, args.seed + 1000)
        maps = []
        for pixels in args.size_list:
            made = generate_in_child(workdir / f"map_{pixels}_pixels.ang", pixels, args.seed)
            maps.append(made)
            print(f"  {made['columns']:,} x {made['rows']:,} = {made['pixels']:>9,} pixels, "
                  f"{made['grains']:>6,} grains: generated in {made['generate_seconds']:6.2f} s, "
                  f"written in {made['write_seconds']:6.2f} s, file {made['file_mb']:7.1f} MB")
        print()

        rows = []
        for made in maps:
            repeats = 2 if made["pixels"] >= SINGLE_RUN_FROM_PIXELS else 5
            print(f"Measuring {made['pixels']:,} pixels ({repeats} run(s) each) ...", flush=True)
            try:
                orix_result = measure_in_child("orix", made["path"], warm_up["path"], repeats)
                ingest_result = measure_in_child("ingest", made["path"], warm_up["path"], repeats)
            except RuntimeError as exc:
                print(f"  FAILED: {exc}")
                failed = True
                continue
            report_child_stderr("orix read", orix_result)
            report_child_stderr("ingestion", ingest_result)
            if orix_result["points_read"] != made["pixels"]:
                print(f"  note: orix read {orix_result['points_read']:,} points, "
                      f"{made['pixels']:,} were written")
            rows.append({"made": made, "orix": orix_result, "ingest": ingest_result,
                         "orix_seconds": min(orix_result["seconds"]),
                         "ingest_seconds": min(ingest_result["seconds"])})
            print(f"  orix read {min(orix_result['seconds']):.3f} s, ingestion "
                  f"{min(ingest_result['seconds']):.3f} s, ingestion peak "
                  f"{ingest_result['peak_mb']:.0f} MB", flush=True)
        print()
        if not rows:
            print("No measurement succeeded.")
            return 1

        settings_file = rows[0]["ingest"]["settings_file"]
        print(f"Results (settings: {settings_file}; ratio = ingestion time / orix read time)")
        header = (f"  {'map (pixels)':>14} {'grains kept':>12} {'file (MB)':>10} "
                  f"{'orix read (s)':>14} {'ingestion (s)':>14} {'ratio':>7}  "
                  f"{'ratio <= ' + format(TARGET_TIME_RATIO, '.1f'):>12}")
        print(header)
        print("  " + "-" * (len(header) - 2))
        for row in rows:
            ratio = row["ingest_seconds"] / row["orix_seconds"]
            row["ratio"] = ratio
            print(f"  {row['made']['pixels']:>14,} {row['ingest']['grains_kept']:>12,} "
                  f"{row['made']['file_mb']:>10.1f} {row['orix_seconds']:>14.3f} "
                  f"{row['ingest_seconds']:>14.3f} {ratio:>7.2f}  {verdict(ratio <= TARGET_TIME_RATIO):>12}")
        print()

        print(f"Memory (peak resident set size of the measuring process, MB; target: ingestion "
              f"peak < {TARGET_PEAK_MB:,} MB at {TARGET_PEAK_PIXELS:,} pixels)")
        header = (f"  {'map (pixels)':>14} {'orix read peak (MB)':>20} {'ingestion peak (MB)':>20} "
                  f"{'VmHWM check (MB)':>17} {'after warm-up (MB)':>19} {'MB per 1e6 px':>14}  "
                  f"{'target':>8}")
        print(header)
        print("  " + "-" * (len(header) - 2))
        for row in rows:
            pixels = row["made"]["pixels"]
            peak = row["ingest"]["peak_mb"]
            baseline = row["ingest"]["resident_after_warm_up_mb"]
            per_million = (peak - (baseline or 0.0)) / pixels * 1e6
            applies = pixels <= TARGET_PEAK_PIXELS * 1.05  # a map "of about" 1e6 pixels counts
            row["memory_met"] = peak < TARGET_PEAK_MB if applies else None
            target_text = verdict(peak < TARGET_PEAK_MB) if applies else "none"
            baseline_text = f"{baseline:.0f}" if baseline is not None else "n/a"
            high_water = row["ingest"].get("high_water_mb")
            high_water_text = f"{high_water:.0f}" if high_water is not None else "n/a"
            print(f"  {pixels:>14,} {row['orix']['peak_mb']:>20.0f} {peak:>20.0f} "
                  f"{high_water_text:>17} {baseline_text:>19} {per_million:>14.0f}  {target_text:>8}")
        print("  (peaks: ru_maxrss; VmHWM check: the same peak as /proc/self/status tells it; after "
              "warm-up: resident size of")
        print("   the ingestion process after imports and the warm-up map, before the timed run; "
              "MB per 1e6 px: (ingestion peak")
        print("   - after warm-up) per million pixels)")
        print()

        first_orix, first_ingest = rows[0]["orix"], rows[0]["ingest"]
        print("One-off costs in a fresh process (first size's children; not counted above)")
        print(f"  importing orix.io.load {first_orix['import_seconds']:.3f} s, then the first read, of the "
              f"{warm_up['pixels']:,}-pixel warm-up map: {first_orix['warm_up_seconds']:.3f} s")
        print(f"  importing fabric2seis.pipeline.ingest {first_ingest['import_seconds']:.3f} s, then the first "
              f"ingestion, of the warm-up map: {first_ingest['warm_up_seconds']:.3f} s")
        print()

        if len(rows) >= 2:
            first, last = rows[0], rows[-1]
            n1, n2 = first["made"]["pixels"], last["made"]["pixels"]
            t1, t2 = first["ingest_seconds"], last["ingest_seconds"]
            measured = math.log(t2 / t1) / math.log(n2 / n1)
            limit = n_log_n_exponent(n1, n2)
            orix_exponent = math.log(last["orix_seconds"] / first["orix_seconds"]) / math.log(n2 / n1)
            print(f"Scaling of the ingestion time from {n1:,} to {n2:,} pixels")
            print(f"  measured exponent log(t2/t1)/log(n2/n1):          {measured:6.3f}  "
                  f"({t1:.3f} s -> {t2:.3f} s)")
            print(f"  exponent of n log n over this range:              {limit:6.3f}")
            print(f"  (for comparison, orix read alone:                 {orix_exponent:6.3f})")
            print(f"  target: measured exponent <= n log n exponent:    "
                  f"{verdict(measured <= limit)}")
            for a, b in zip(rows, rows[1:]):
                na, nb = a["made"]["pixels"], b["made"]["pixels"]
                step_exponent = math.log(b["ingest_seconds"] / a["ingest_seconds"]) / math.log(nb / na)
                print(f"  between {na:>9,} and {nb:>9,} pixels: exponent {step_exponent:6.3f} "
                      f"(n log n: {n_log_n_exponent(na, nb):.3f})")
            print()
        else:
            measured = limit = None
            print("Scaling: only one size measured, no exponent.")
            print()

        largest = rows[-1]
        try:
            stages_result = measure_in_child("stages", largest["made"]["path"], warm_up["path"], 1)
        except RuntimeError as exc:
            print(f"Stage breakdown FAILED: {exc}")
            failed = True
        else:
            stages = stages_result["stages"]
            total = sum(seconds for _, seconds in stages)
            print(f"Stages of the ingestion, {largest['made']['pixels']:,} pixels (one run, fresh "
                  f"process, after warm-up)")
            for label, seconds in stages:
                print(f"  {label:<52} {seconds:8.3f} s  {100 * seconds / total:5.1f} %")
            print(f"  {'sum of the stages':<52} {total:8.3f} s")
            print(f"  {'for comparison: orix.io.load alone (above)':<52} "
                  f"{largest['orix_seconds']:8.3f} s")
            read_seconds = stages[0][1]
            print(f"  {'io.read_ebsd beyond orix.io.load':<52} "
                  f"{read_seconds - largest['orix_seconds']:8.3f} s")
            print()

        if args.profile:
            try:
                profile_result = measure_in_child("profile", largest["made"]["path"],
                                                  warm_up["path"], 1)
            except RuntimeError as exc:
                print(f"Profile FAILED: {exc}")
                failed = True
            else:
                print(f"cProfile of the ingestion, {largest['made']['pixels']:,} pixels "
                      "(15 largest entries by cumulative time; profiling slows the run)")
                print(profile_result["profile"].rstrip())
                print()

        for row in rows:
            pixels = row["made"]["pixels"]
            record(f"ingestion (pipeline.ingest), {pixels:,} px", row["ingest_seconds"], "s",
                   baseline=row["orix_seconds"], baseline_unit="s", baseline_label="orix.io.load",
                   ratio=row["ratio"], ratio_label="ingestion / orix read",
                   target=("ratio", "<=", TARGET_TIME_RATIO),
                   note=f"best of {len(row['ingest']['seconds'])}, after a warm-up")
            if row["memory_met"] is not None:
                record(f"ingestion peak memory, {pixels:,} px", row["ingest"]["peak_mb"], "MB",
                       baseline=row["orix"]["peak_mb"], baseline_unit="MB", baseline_label="orix.io.load process",
                       ratio=row["ingest"]["peak_mb"] / row["orix"]["peak_mb"], ratio_label="ingestion / orix",
                       target=("value", "<", TARGET_PEAK_MB) if pixels >= TARGET_PEAK_PIXELS * 0.95 else None)
        if measured is not None:
            record(f"ingestion time scaling exponent, {n1:,} to {n2:,} px", measured, "",
                   target=("value", "<=", limit), note=f"n log n gives {limit:.3f} over this range")
        write_rows(args.json, "ingestion", COLLECTED)
        print("Targets")
        for row in rows:
            print(f"  ingestion / orix read at {row['made']['pixels']:>9,} pixels: "
                  f"{row['ratio']:5.2f} (target <= {TARGET_TIME_RATIO:.1f}): "
                  f"{verdict(row['ratio'] <= TARGET_TIME_RATIO)}")
        for row in rows:
            if row["memory_met"] is not None:
                print(f"  ingestion peak memory at {row['made']['pixels']:>9,} pixels: "
                      f"{row['ingest']['peak_mb']:5.0f} MB (target < {TARGET_PEAK_MB:,} MB): "
                      f"{verdict(row['memory_met'])}")
        if not any(row["made"]["pixels"] >= TARGET_PEAK_PIXELS * 0.95 for row in rows):
            print(f"  (no map of ~{TARGET_PEAK_PIXELS:,} pixels measured: the memory target proper "
                  "was not tested)")
        if measured is not None:
            print(f"  scaling exponent of the ingestion time: {measured:.3f} (target <= n log n "
                  f"exponent {limit:.3f}): {verdict(measured <= limit)}")
    finally:
        if args.keep:
            print(f"\nThe maps are kept in {workdir}")
        else:
            shutil.rmtree(workdir, ignore_errors=True)
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
