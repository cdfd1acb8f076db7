"""The same bits on one BLAS thread or two (fabric2seis.threads).

OpenBLAS shares a product among its threads in ways that depend on their number, so sums round
differently (measured here: the seismic bootstrap of 3,000 grains differs by up to 2e-7 relative
between OPENBLAS_NUM_THREADS=1 and 2 without the limit; the harmonic sums of the J-index by about
1e-16). Floating-point addition is not associative (common practice), so only a fixed order of
the partial sums gives the same bits. OMP_NUM_THREADS also sets the workers of the J-index's
blocks (threads.worker_count).

A run is given its threads (``fabric2seis sample --threads N``, ``run_sample(threads=N)``, the
workflow's job threads): the results files are the same bytes on one thread or two, no run starts
more threads than given (thread pools inside the workers of a pool counted with it), and BLAS stays
on one thread. Snakemake hands a job its ``threads`` and sets OMP_NUM_THREADS to them (Snakemake's
documentation on threads, and its shell.py; common practice for threaded programs).
"""

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
PROBE = """
import hashlib, numpy as np
from orix.quaternion.symmetry import D2h
from fabric2seis import fabric, uncertainty
from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.threads import blas_on_one_thread

rng = np.random.default_rng(1)
q, w = fabric.random_unit_quaternions(3000, rng), rng.random(3000)
counts = uncertainty.resample_counts(3000, 200, np.random.default_rng(5))
digest = hashlib.sha256()
with blas_on_one_thread():
    values = uncertainty.seismic_bootstrap([(find_mineral("olivine"), q, w)], {"olivine": 1.0}, "hill", 3300.0,
                                           {"olivine": counts})
    j = fabric.j_index_harmonics(q, w, D2h)
    forms, diagonal = fabric.j_quadratic_forms(q, counts.T[:, :20] * w[:, None], D2h)   # on 1 or 2 workers
for key in sorted(values):
    digest.update(values[key].tobytes())
digest.update(np.float64(j).tobytes() + forms.tobytes() + diagonal.tobytes())
print(digest.hexdigest())
"""


def _digest(threads: int) -> str:
    env = {**os.environ, "OPENBLAS_NUM_THREADS": str(threads), "OMP_NUM_THREADS": str(threads),
           "MKL_NUM_THREADS": str(threads), "PYTHONPATH": str(ROOT)}
    run = subprocess.run([sys.executable, "-c", PROBE], capture_output=True, text=True, timeout=600, env=env,
                         cwd=ROOT)
    assert run.returncode == 0, run.stderr[-2000:]
    return run.stdout.strip()


def test_bootstrap_and_harmonics_give_the_same_bits_on_one_or_two_blas_threads():
    assert _digest(1) == _digest(2)


def test_the_limit_is_lifted_after_the_block():
    from threadpoolctl import threadpool_info

    from fabric2seis.threads import blas_on_one_thread

    before = [lib["num_threads"] for lib in threadpool_info() if lib["user_api"] == "blas"]
    with blas_on_one_thread():
        assert all(lib["num_threads"] == 1 for lib in threadpool_info() if lib["user_api"] == "blas")
    assert [lib["num_threads"] for lib in threadpool_info() if lib["user_api"] == "blas"] == before


# --- the threads of a run: `fabric2seis sample --threads N`, pipeline.run_sample(threads=N) ---------

#: a small three-phase map: enough olivine grains (about 390) for two blocks of M-index pairs on
#: two threads (uncertainty.PAIRS_IN_MEMORY), every mineral above uncertainty.MIN_GRAINS_FOR_FABRIC
MAP_PHASES = [("olivine", "mmm", 0.7, "olivine-A"), ("enstatite", "mmm", 0.2, None), ("diopside", "2/m", 0.1, None)]
SIDECAR = ("bootstrap: {n: 60, seed: 4}\n"
           "field: {foliation_strike_deg: 30.0, foliation_dip_deg: 5.0, lineation_pitch_deg: 15.0, "
           "layer_thickness_km: 60.0}\n")


def _small_map(folder: Path) -> Path:
    """A .ang map of 130 x 130 pixels, 560 Voronoi grains of three minerals, with its sidecar."""
    import numpy as np

    from fabric2seis.elastic.minerals import find_mineral
    from fabric2seis.ingest.io.write import write_ang
    from fabric2seis.synth import fabric_orientations, voronoi_map

    rng = np.random.default_rng(7)
    grains = 560
    shares = np.array([share for _, _, share, _ in MAP_PHASES])
    cell_phase = rng.choice(len(MAP_PHASES), size=grains, p=shares / shares.sum()) + 1
    cell_quat = np.empty((grains, 4))
    for k, (name, _, _, fabric) in enumerate(MAP_PHASES, start=1):
        chosen = cell_phase == k
        cell_quat[chosen] = fabric_orientations(find_mineral(name), fabric, int(chosen.sum()), 40.0, 10 + k)
    made = voronoi_map(grains, 130, 130, step=1.0, grid="square", cell_quat=cell_quat, noise_deg=0.5, seed=7,
                       cell_phase=cell_phase)
    path = folder / "three_phase.ang"
    write_ang(path, made.x, made.y, made.quat, made.phase, [name for name, _, _, _ in MAP_PHASES],
              [group for _, group, _, _ in MAP_PHASES])
    path.with_suffix(".yaml").write_text(SIDECAR)
    return path


@pytest.fixture(scope="module")
def small_map(tmp_path_factory) -> Path:
    return _small_map(tmp_path_factory.mktemp("map"))


def test_one_or_two_threads_give_the_same_bytes_through_the_command(small_map, tmp_path):
    # the results files of a run on one thread and on two, byte for byte; the bootstrap runs, so the
    # shared fabric parts, J-index blocks and M-index pairs all run on two threads
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    env.pop("OMP_NUM_THREADS", None)
    for threads in (1, 2):
        run = subprocess.run([sys.executable, "-m", "fabric2seis", "sample", str(small_map), "--out",
                              str(tmp_path / f"on_{threads}"), "--threads", str(threads)],
                             capture_output=True, text=True, env=env, cwd=ROOT, timeout=900)
        assert run.returncode == 0, run.stderr[-2000:]
        log = (tmp_path / f"on_{threads}" / "run.log").read_text()
        assert f"on {threads} thread" in log.splitlines()[0]
    summary = json.loads((tmp_path / "on_2" / "summary.json").read_text())
    assert set(summary["phases"]) == {"olivine", "enstatite", "diopside"}
    assert all(f"{m}.M" in summary["uncertainty"] for m in summary["phases"])
    for name in ("summary.json", "stiffness.json", "velocities.csv"):
        assert (tmp_path / "on_1" / name).read_bytes() == (tmp_path / "on_2" / name).read_bytes(), name


def test_a_bad_thread_count_is_refused_in_one_line(small_map, tmp_path):
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    for text in ("0", "two"):
        run = subprocess.run([sys.executable, "-m", "fabric2seis", "sample", str(small_map), "--out",
                              str(tmp_path / "out"), "--threads", text],
                             capture_output=True, text=True, env=env, cwd=ROOT, timeout=300)
        assert run.returncode == 2
        assert len(run.stderr.strip().splitlines()) == 1 and "option --threads" in run.stderr
        assert not (tmp_path / "out").exists()
        run = subprocess.run([sys.executable, "-m", "fabric2seis", "field", str(tmp_path), "--measurements",
                              str(ROOT / "demo_samples" / "field_measurements.csv"), "--out", str(tmp_path / "fit"),
                              "--threads", text], capture_output=True, text=True, env=env, cwd=ROOT, timeout=300)
        assert run.returncode == 2
        assert len(run.stderr.strip().splitlines()) == 1 and "option --threads" in run.stderr
        assert not (tmp_path / "fit").exists()


def _pools_and_blas_of_a_run(small_map: Path, out: Path, threads: int, monkeypatch) -> tuple[list, list]:
    """Run run_sample in this process; the pools it started and the BLAS threads seen in its heavy stages.

    Each pool is (its workers, the workers of the pools it was started in, outermost first).
    """
    import concurrent.futures
    import threading

    from threadpoolctl import threadpool_info

    from fabric2seis import fabric, pipeline, uncertainty

    pools: list[tuple[int, list[int]]] = []
    workers_of_prefix: dict[str, list[int]] = {}       # a pool's thread name prefix -> its chain of workers
    original_init = concurrent.futures.ThreadPoolExecutor.__init__

    def recording_init(self, max_workers=None, *args, **kwargs):
        original_init(self, max_workers, *args, **kwargs)
        here = threading.current_thread().name
        outer = next((chain for prefix, chain in workers_of_prefix.items() if here.startswith(prefix + "_")), [])
        workers_of_prefix[self._thread_name_prefix] = [*outer, self._max_workers]
        pools.append((self._max_workers, outer))

    blas: list[int] = []

    def watched(function):
        def call(*args, **kwargs):
            blas.extend(lib["num_threads"] for lib in threadpool_info() if lib["user_api"] == "blas")
            return function(*args, **kwargs)
        return call

    monkeypatch.setattr(concurrent.futures.ThreadPoolExecutor, "__init__", recording_init)
    for module, name in ((fabric, "phase_fabric"), (fabric, "convergence"), (uncertainty, "fabric_bootstrap"),
                         (uncertainty, "seismic_intervals")):
        monkeypatch.setattr(module, name, watched(getattr(module, name)))
    pipeline.run_sample(small_map, out_dir=out, results_root=None, threads=threads)
    monkeypatch.undo()
    return pools, blas


@pytest.mark.parametrize("threads", [1, 2])
def test_no_run_uses_more_threads_than_given_and_blas_stays_on_one(small_map, tmp_path, monkeypatch, threads):
    # every thread pool of the run, with the pools it was started in: their workers multiplied never
    # exceed the threads given; and OpenBLAS runs on one thread in the fabric and bootstrap stages
    pools, blas = _pools_and_blas_of_a_run(small_map, tmp_path / "out", threads, monkeypatch)
    assert pools                                         # at least the J-index's blocks
    for workers, outer in pools:
        product = workers
        for w in outer:
            product *= w
        assert product <= threads, (workers, outer)
    if threads == 2:
        assert max(workers for workers, _ in pools) == 2      # the threads given reach the pools
    assert blas and set(blas) == {1}
