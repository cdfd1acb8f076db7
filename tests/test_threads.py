"""The same bits on one BLAS thread or two (fabric2seis.threads).

OpenBLAS shares a product among its threads in ways that depend on their number, so sums round
differently (measured here: the seismic bootstrap of 3,000 grains differs by up to 2e-7 relative
between OPENBLAS_NUM_THREADS=1 and 2 without the limit; the harmonic sums of the J-index by about
1e-16). Floating-point addition is not associative (common practice), so only a fixed order of
the partial sums gives the same bits. OMP_NUM_THREADS also sets the workers of the J-index's
blocks (threads.worker_count).
"""

import os
import subprocess
import sys
from pathlib import Path

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
