"""Benchmark of the seismic stage.

1. Velocities on the 1-degree lower-hemisphere grid (about 20,800 directions) for olivine, by the
   vectorised closed-form Christoffel solution (``fabric2seis.waves.plane_waves``) against a plain
   per-direction loop that builds each Christoffel matrix with ``numpy.einsum`` and solves it with
   ``numpy.linalg.eigh``. Results must agree to 1e-10 (relative); target: at least 50x faster.
2. The seismic stage on 100,000 olivine grains (aggregate tensor by the four averages, velocity
   grid, symmetry decomposition, splitting along Z), without and with 200 bootstrap resamples of
   the grains (``fabric2seis.uncertainty.seismic_bootstrap``). Target: with bootstrap at most 3x.

Each pair of timings is taken in alternation (four rounds, the best of each counts), so that both
sides of a ratio see the same machine: on a shared machine the clock and load change over seconds.

Run from the project folder:  python benchmarks/seismic_stage.py [--grains 100000 --resamples 200]
"""

from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parents[1]))   # measure this checkout, not an installed copy

import argparse
import os

import numpy as np
from rows import COLLECTED, record, write_rows
from timing import best_of, interleaved

from fabric2seis import elastic, uncertainty, waves
from fabric2seis.elastic.decomposition import decomposition_summary
from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.synth import fabric_orientations
from fabric2seis.waves import seismic


def velocities_part(olivine) -> bool:
    c, rho = olivine.stiffness_gpa, olivine.density_kg_m3
    dirs, _, _ = waves.hemisphere_grid(1.0)
    t = elastic.voigt_to_tensor(c)

    def loop():
        out = np.empty((len(dirs), 3))
        for k, d in enumerate(dirs):
            lam = np.linalg.eigh(np.einsum("ijkl,j,l->ik", t, d, d))[0]
            out[k] = np.sqrt(1e3 * lam / rho)
        return out
    (fast_s, loop_s), (w, ref) = interleaved([lambda: waves.plane_waves(c, rho, dirs), loop], 4, [5, 1])
    diff = max(np.abs(ref[:, 2] - w.vp_km_s).max(), np.abs(ref[:, 1] - w.vs1_km_s).max(),
               np.abs(ref[:, 0] - w.vs2_km_s).max()) / ref.max()
    ratio = loop_s / fast_s
    print(f"Velocities on the 1-degree hemisphere grid ({len(dirs):,} directions, olivine single crystal)")
    print(f"  vectorised closed form        {fast_s * 1e3:8.2f} ms")
    print(f"  per-direction einsum + eigh   {loop_s * 1e3:8.2f} ms")
    print(f"  ratio                         {ratio:8.1f}x   (target >= 50x: {'met' if ratio >= 50 else 'NOT met'})")
    record("velocities on the 1-degree grid (20,800 directions), vectorised", fast_s * 1e3, "ms",
           baseline=loop_s * 1e3, baseline_unit="ms", baseline_label="per-direction einsum + eigh",
           ratio=ratio, ratio_label="loop / vectorised", target=("ratio", ">=", 50),
           note=f"best of 4 rounds; results agree to {diff:.1e}")
    verdict = "ok" if diff <= 1e-10 else "FAILED"
    print(f"  largest difference            {diff:.2e} relative (must be <= 1e-10: {verdict})")
    return diff <= 1e-10


def stage_part(olivine, n_grains: int, n_resamples: int) -> None:
    q = fabric_orientations(olivine, "olivine-A", n_grains, 25.0, seed=1)
    w = np.random.default_rng(2).lognormal(0, 0.5, n_grains)
    sets, fractions = [(olivine, q, w)], {"olivine": 1.0}

    def stage():
        agg = seismic.aggregate(sets, fractions, "hill")
        grid = seismic.velocity_grid(agg.stiffness, agg.density_kg_m3, 1.0)
        s = seismic.seismic_summary(grid, "hill")
        s["decomposition"] = decomposition_summary(agg.stiffness, agg.density_kg_m3)
        s["along_z"] = seismic.splitting_along(agg.stiffness, agg.density_kg_m3)
        return agg

    def with_bootstrap():
        a = stage()
        counts = uncertainty.resample_counts(n_grains, n_resamples, np.random.default_rng(1))
        return uncertainty.seismic_bootstrap(sets, fractions, "hill", a.density_kg_m3, {"olivine": counts})
    (plain_s, boot_s), (agg, values) = interleaved([stage, with_bootstrap], 4)
    ratio = boot_s / plain_s

    import tempfile
    from pathlib import Path

    from fabric2seis.figures.velocities import velocity_figure

    folder = Path(tempfile.mkdtemp(prefix="fabric2seis-bench-"))

    def with_outputs(bootstrap: bool):
        def run():
            a = with_bootstrap() if bootstrap else stage()
            a = stage() if bootstrap else a
            seismic.velocity_grid(a.stiffness, a.density_kg_m3, 1.0).table().to_csv(folder / "v.csv", index=False)
            velocity_figure(folder / "velocities", "benchmark", a.stiffness, a.density_kg_m3, "hill", n_grains)
        return run
    out_plain, _ = best_of(with_outputs(False), 1)
    out_boot, _ = best_of(with_outputs(True), 1)
    print(f"\nSeismic stage on {n_grains:,} olivine grains (A-type fabric, log-normal areas)")
    print(f"  without bootstrap             {plain_s:8.2f} s")
    print(f"  with {n_resamples} resamples            {boot_s:8.2f} s")
    print(f"  ratio                         {ratio:8.2f}x   (target <= 3x: {'met' if ratio <= 3 else 'NOT met'})")
    print(f"  95 % interval of AVp          {np.percentile(values['avp_pct'], [2.5, 97.5]).round(3)} %")
    print("  the stage as the pipeline runs it, with its outputs (velocities.csv, velocity figure):")
    print(f"  without bootstrap             {out_plain:8.2f} s")
    print(f"  with {n_resamples} resamples            {out_boot:8.2f} s")
    record(f"seismic stage, {n_grains:,} grains, with {n_resamples} bootstrap resamples", boot_s, "s",
           baseline=plain_s, baseline_unit="s", baseline_label="the same stage without bootstrap",
           ratio=ratio, ratio_label="with / without", target=("ratio", "<=", 3), note="best of 4 rounds")
    record(f"seismic stage with outputs, {n_grains:,} grains, with {n_resamples} resamples", out_boot, "s",
           baseline=out_plain, baseline_unit="s", baseline_label="the same without bootstrap",
           ratio=out_boot / out_plain, ratio_label="with / without", target=("ratio", "<=", 3),
           note="velocities.csv and the velocity figure written; one run each")
    print(f"  ratio                         {out_boot / out_plain:8.2f}x   (target <= 3x: "
          f"{'met' if out_boot / out_plain <= 3 else 'NOT met'})")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--grains", type=int, default=100_000)
    parser.add_argument("--resamples", type=int, default=200)
    parser.add_argument("--json", default=None, metavar="PATH",
                        help="also write the figures as JSON rows (benchmarks/run.py)")
    args = parser.parse_args()
    print(f"machine: {os.cpu_count()} logical CPUs, numpy {np.__version__}\n")
    olivine = find_mineral("olivine")
    ok = velocities_part(olivine)
    stage_part(olivine, args.grains, args.resamples)
    write_rows(args.json, "seismic_stage", COLLECTED)
    return 0 if ok else 1


if __name__ == "__main__":
    raise SystemExit(main())
