"""Compile orix's and fabric2seis's numba functions once per installation, before jobs run side by side.

orix (its quaternion and vector arithmetic) and fabric2seis (``COMPILED_MODULES``) compile
functions with numba on first use and keep them in numba's cache on disk. That cache is not safe
for processes filling it at the same time: measured on this project's machine with a fresh
installation, three processes importing orix at once left its cache damaged in 5 of 6 trials, and
every later import of orix then crashed with a segmentation fault (two at once: 0 of 3; the README's
quick start, two sample jobs at once, hit it). So the workflow (``onstart`` in
``workflow/rules/common.smk``, for ``fabric2seis suite`` and plain ``snakemake``) first runs a tiny
synthetic map through the whole pipeline in one process (``python -m fabric2seis.warm_up``):
reading, grains, fabric, bootstrap and every figure, so that every compiled function the jobs use
is in the cache before they start. It runs once per installation (a marker in
``fabric.cache.cache_folder()`` keyed by the versions and the place of orix, numba and fabric2seis,
and by the source of fabric2seis's compiled modules, which numba recompiles when they change),
under a file lock, so that two suites starting together do not both warm up; it takes about 10 to
20 s on a cold cache.

If orix's cache is already damaged (imports of orix crash), remove numba's cache files of orix
(``*.nbi`` and ``*.nbc`` in the ``__pycache__`` folders of the orix package) and run again.
"""

from __future__ import annotations

import hashlib
import os
import subprocess
import sys
import tempfile
from pathlib import Path

#: fabric2seis's modules of numba functions (cached on disk), relative to the package
COMPILED_MODULES = ("fabric/pair_kernel.py", "angle_kernel.py")


def marker_file() -> Path:
    """The marker of a warmed installation: named by the versions and places of orix, numba and fabric2seis,
    and the source of fabric2seis's compiled modules."""
    from importlib import metadata
    from importlib.util import find_spec

    from fabric2seis import __version__
    from fabric2seis.fabric.cache import cache_folder

    here = Path(__file__).resolve().parent
    parts = [__version__, str(here)]
    # numba recompiles a module's functions when its source changes: so does the warm-up
    parts += [hashlib.sha256((here / name).read_bytes()).hexdigest() for name in COMPILED_MODULES]
    for name in ("orix", "numba"):
        spec = find_spec(name)
        parts += [metadata.version(name), str(spec.origin if spec else "")]
    key = hashlib.sha256("\n".join(parts).encode()).hexdigest()[:16]
    return cache_folder() / f"compiled_caches_warmed-{key}"


def warm_compiled_caches(say=print) -> bool:
    """Warm the compiled caches once per installation, in a separate process, under a file lock.

    Parameters
    ----------
    say : callable
        Told one line when the warm-up runs (and one if it failed).

    Returns
    -------
    bool
        True when the warm-up ran now and succeeded; False when it was done before or failed
        (the jobs then run anyway; a failure is told, not raised).
    """
    marker = marker_file()
    if marker.exists():
        return False
    marker.parent.mkdir(parents=True, exist_ok=True)
    import fcntl

    with open(marker.parent / "compiled_caches.lock", "a") as lock:
        fcntl.flock(lock, fcntl.LOCK_EX)          # a second suite waits here, then finds the marker
        if marker.exists():
            return False
        say("fabric2seis: compiling orix's and fabric2seis's numba functions once for this installation "
            "(about 10 to 20 s)")
        done = subprocess.run([sys.executable, "-m", "fabric2seis.warm_up"], capture_output=True, text=True)
        if done.returncode != 0:
            say(f"fabric2seis: warning: the warm-up of the compiled functions failed (exit status "
                f"{done.returncode}); the jobs run anyway. {_last_line(done.stderr)}")
            return False
        marker.write_text("warmed\n")
    return True


def _last_line(text: str) -> str:
    lines = [line for line in text.strip().splitlines() if line.strip()]
    return lines[-1] if lines else ""


def run_tiny_map() -> None:
    """Run a tiny synthetic three-phase map with a placement in the ground through ``run_sample``."""
    import numpy as np

    from fabric2seis.elastic.minerals import find_mineral
    from fabric2seis.ingest.io.write import write_ang
    from fabric2seis.pipeline import run_sample
    from fabric2seis.synth import fabric_orientations, voronoi_map

    phases = [("olivine", "mmm"), ("enstatite", "mmm"), ("diopside", "2/m")]    # orthorhombic and monoclinic
    grains = 40
    cell_phase = 1 + (np.arange(grains) % 5 == 0) + (np.arange(grains) % 5 == 1) * 2
    cell_quat = np.empty((grains, 4))
    for k, (name, _) in enumerate(phases, start=1):
        chosen = cell_phase == k
        cell_quat[chosen] = fabric_orientations(find_mineral(name), "olivine-A" if k == 1 else None,
                                                int(chosen.sum()), 30.0, k)
    made = voronoi_map(grains, 40, 40, step=1.0, grid="square", cell_quat=cell_quat, noise_deg=0.5, seed=3,
                       cell_phase=cell_phase)
    with tempfile.TemporaryDirectory(prefix="fabric2seis-warm-up-") as folder:
        path = Path(folder) / "warm_up.ang"
        write_ang(path, made.x, made.y, made.quat, made.phase, [n for n, _ in phases], [g for _, g in phases])
        path.with_suffix(".yaml").write_text("field:\n  foliation_strike_deg: 30\n  foliation_dip_deg: 10\n"
                                             "  lineation_pitch_deg: 20\n  layer_thickness_km: 50\n")
        run_sample(path, out_dir=Path(folder) / "out", results_root=None, threads=1)


if __name__ == "__main__":
    os.environ.setdefault("MPLBACKEND", "Agg")
    run_tiny_map()
