"""Benchmark of the splitting searches: the synthetic-waveform measurement and the field fit.

1. Synthetic waveforms for 72 back-azimuths (every 5 degrees) through a two-layer model, measured
   by transverse-energy minimisation (Silver & Chan 1991) on a grid of 180 fast azimuths x 81
   delays (``fabric2seis.waves.layers.synthetic_records`` and ``measure_splitting``: all trials at once,
   from frequency sums). Against a plain Python double loop over the trial fast azimuths and delays
   that corrects each record's spectrum by the inverse of the trial layer and sums the transverse
   energy (spectra computed once per record), timed on a few back-azimuths and scaled to 72. Both
   must find the same grid point and the same energies (to 1e-9 relative).
2. The field fit of one station with 100 measurements over 180 lineation azimuths x 2 foliation
   attitudes x 50 thicknesses (``fabric2seis.waves.field.fit_station``), for an A-type olivine aggregate
   of 2,000 synthetic grains. Against a plain double loop over azimuth x thickness that calls the
   one-layer prediction (``splitting.one_layer``) for every grid point and measures the misfit,
   timed on a subset of the grid and scaled. The misfits must agree to 1e-9 (relative).

Target for both: the vectorised search at least 20x faster than the loop.

Run from the project folder:  python benchmarks/splitting_layers.py [--loop-baz 3 --loop-azimuths 12]
"""

from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parents[1]))   # measure this checkout, not an installed copy

import argparse
import os
import time

import numpy as np
import pandas as pd
from rows import COLLECTED, record, write_rows
from timing import best_of

from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.synth import fabric_orientations
from fabric2seis.waves import field, layers, seismic, splitting


def looped_energy_grid(north, east, baz_deg, fast_grid, delay_grid) -> np.ndarray:
    """Transverse energy for every trial, one trial at a time (plain double loop)."""
    n = north.shape[-1]
    w = 2 * np.pi * np.fft.rfftfreq(n, layers.SAMPLING_S)
    weight = np.full(len(w), 2.0 / n)
    weight[0] = weight[-1] = 1.0 / n
    p = np.radians(baz_deg)
    spec_n, spec_e = np.fft.rfft(north), np.fft.rfft(east)
    out = np.empty((len(fast_grid), len(delay_grid)))
    for i, phi in enumerate(fast_grid):
        r = np.radians(phi)
        fast = spec_n * np.cos(r) + spec_e * np.sin(r)
        slow = -spec_n * np.sin(r) + spec_e * np.cos(r)
        for j, dt in enumerate(delay_grid):
            shifted = slow * np.exp(1j * w * dt)                   # advance the slow wave by dt
            n_c = fast * np.cos(r) - shifted * np.sin(r)
            e_c = fast * np.sin(r) + shifted * np.cos(r)
            transverse = -n_c * np.sin(p) + e_c * np.cos(p)
            out[i, j] = np.sum(weight * np.abs(transverse) ** 2)
    return out


def waveform_part(n_loop_baz: int) -> bool:
    baz = np.arange(0.0, 360.0, 5.0)
    model = np.array([60.0, 100.0]), np.array([1.0, 0.5])
    fast, delay = model[0][:, None] * np.ones((1, 72)), model[1][:, None] * np.ones((1, 72))

    def vectorised():
        north, east = layers.synthetic_records(fast, delay, baz)
        return north, east, layers.measure_splitting(north, east, baz)
    total_s, (north, east, m) = best_of(vectorised, 5)
    synth_s, _ = best_of(lambda: layers.synthetic_records(fast, delay, baz), 5)
    fast_grid, delay_grid = layers.measurement_grid()
    grid_s, grid = best_of(lambda: layers.transverse_energy_grid(north, east, baz, fast_grid, delay_grid), 5)
    picks = np.linspace(0, 71, n_loop_baz).astype(int)
    start = time.perf_counter()
    looped = [looped_energy_grid(north[k], east[k], baz[k], fast_grid, delay_grid) for k in picks]
    loop_s = (time.perf_counter() - start) * 72 / len(picks)
    diff = max(np.abs(lp - grid[k]).max() / grid[k].max() for lp, k in zip(looped, picks))
    same = all(np.argmin(lp) == np.argmin(grid[k]) for lp, k in zip(looped, picks))
    app = layers.apparent_splitting(fast, delay, baz)
    away = app["transverse_fraction"] >= 0.05
    err_f = np.abs((m["fast_azimuth_deg"] - app["fast_azimuth_deg"] + 90) % 180 - 90)[away].max()
    err_d = np.abs(m["delay_s"] - app["delay_s"])[away].max()
    ratio = loop_s / grid_s
    print(f"Synthetic waveforms, 72 back-azimuths, two layers (060/1.0 s below 100/0.5 s), "
          f"{north.shape[1]} samples at {layers.SAMPLING_S} s")
    print(f"  grid {len(fast_grid)} fast azimuths x {len(delay_grid)} delays = {grid[0].size:,} trials per record")
    print(f"  synthesis of the 72 records         {synth_s * 1e3:8.1f} ms")
    print(f"  energy grid, all trials at once     {grid_s * 1e3:8.1f} ms")
    print(f"  synthesis + measurement, total      {total_s * 1e3:8.1f} ms")
    print(f"  plain double loop over the trials   {loop_s:8.2f} s   (timed on {len(picks)} records, scaled to 72)")
    print(f"  ratio (loop / energy grid)          {ratio:8.0f}x   "
          f"(target >= 20x: {'met' if ratio >= 20 else 'NOT met'})")
    print(f"  largest energy difference           {diff:.1e} relative, same best trial: {'yes' if same else 'NO'}")
    record("splitting measurement, 72 records x 14,580 trials, energy grid", grid_s * 1e3, "ms",
           baseline=loop_s * 1e3, baseline_unit="ms", baseline_label="plain double loop (scaled)",
           ratio=ratio, ratio_label="loop / vectorised", target=("ratio", ">=", 20),
           note=f"loop timed on {len(picks)} records, scaled to 72; best of 5")
    print(f"  against the analytic prediction     {err_f:.1f} deg, {err_d:.3f} s at most "
          f"({away.sum()} back-azimuths away from nulls)")
    return diff <= 1e-9 and same


def synthetic_measurements(sample, n: int, seed: int = 1) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    baz, inc = np.sort(rng.uniform(0, 360, n)), rng.uniform(5, 15, n)
    c = splitting.to_geographic(sample.stiffness, splitting.placement(field.attitude_field("horizontal", 70.0)))
    fast, per_km = field.predict_many([c], sample.density_kg_m3, baz, inc)
    return pd.DataFrame({"station": "BENCH", "baz_deg": baz, "incidence_deg": inc,
                         "fast_azimuth_deg": (fast[0] + rng.normal(0, 4, n)) % 180,
                         "delay_s": np.abs(per_km[0] * 120.0 + rng.normal(0, 0.08, n)),
                         "fast_azimuth_err_deg": 6.0, "delay_err_s": 0.1, "null": False})


def looped_misfit(sample, data, attitude: str, azimuths, thicknesses) -> np.ndarray:
    """The misfit of field.fit_station, one grid point at a time (plain double loop)."""
    baz, inc = data["baz_deg"].to_numpy(float), data["incidence_deg"].to_numpy(float)
    out = np.empty((len(azimuths), len(thicknesses)))
    for i, az in enumerate(azimuths):
        c = splitting.to_geographic(sample.stiffness, splitting.placement(field.attitude_field(attitude, az)))
        for j, thickness in enumerate(thicknesses):
            pred = splitting.one_layer(c, sample.density_kg_m3, thickness, baz, inc)
            r_fast = splitting.axial_difference(pred["fast_azimuth_deg"], data["fast_azimuth_deg"]) / \
                data["fast_azimuth_err_deg"]
            r_delay = (pred["delay_s"] - data["delay_s"]) / data["delay_err_s"]
            out[i, j] = np.mean(r_fast ** 2 + r_delay ** 2)
    return out


def field_part(n_loop_azimuths: int, n_measurements: int) -> bool:
    olivine = find_mineral("olivine")
    q = fabric_orientations(olivine, "olivine-A", 2000, 15.0, seed=2)
    agg = seismic.aggregate([(olivine, q, np.ones(2000))], {"olivine": 1.0})
    sample = field.SampleTensor("benchmark", agg.stiffness, agg.density_kg_m3, None)
    data = synthetic_measurements(sample, n_measurements)
    fit_s, (model, grid) = best_of(lambda: field.fit_station(sample, data, set()), 3)
    az_idx = np.linspace(0, 179, n_loop_azimuths).astype(int)
    th_idx = np.linspace(0, 49, 10).astype(int)
    start = time.perf_counter()
    looped = {a: looped_misfit(sample, data, a, grid["azimuths"][az_idx], grid["thicknesses"][th_idx])
              for a in grid["attitudes"]}
    loop_s = (time.perf_counter() - start) * (180 * 50) / (len(az_idx) * len(th_idx))
    diff = max(np.abs(looped[a] - grid["misfit"][k][np.ix_(az_idx, th_idx)]).max() /
               grid["misfit"][k][np.ix_(az_idx, th_idx)].max() for k, a in enumerate(grid["attitudes"]))
    ratio = loop_s / fit_s
    print(f"\nField fit, one station, {n_measurements} measurements, grid 180 azimuths x 2 attitudes x 50 thicknesses")
    print(f"  field.fit_station                   {fit_s * 1e3:8.1f} ms")
    print(f"  plain double loop, one_layer/point  {loop_s:8.2f} s   (timed on {len(az_idx)} x {len(th_idx)} "
          "points per attitude, scaled)")
    print(f"  ratio                               {ratio:8.0f}x   "
          f"(target >= 20x: {'met' if ratio >= 20 else 'NOT met'})")
    print(f"  largest misfit difference           {diff:.1e} relative")
    record(f"field fit of one station, {n_measurements} measurements", fit_s * 1e3, "ms",
           baseline=loop_s * 1e3, baseline_unit="ms", baseline_label="plain double loop (scaled)",
           ratio=ratio, ratio_label="loop / vectorised", target=("ratio", ">=", 20),
           note=f"loop timed on {len(az_idx)} x {len(th_idx)} points per attitude, scaled; best of 3")
    print(f"  best model                          {model['thickness_km']:.0f} km, lineation "
          f"{model['lineation_azimuth_deg']:.0f} deg, {model['foliation']} (made from 120 km, 070, horizontal)")
    return diff <= 1e-9


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--loop-baz", type=int, default=3, help="records timed in the plain loop (default 3)")
    parser.add_argument("--loop-azimuths", type=int, default=12, help="azimuths timed in the plain loop (default 12)")
    parser.add_argument("--measurements", type=int, default=100)
    parser.add_argument("--json", default=None, metavar="PATH",
                        help="also write the figures as JSON rows (benchmarks/run.py)")
    args = parser.parse_args()
    print(f"machine: {os.cpu_count()} logical CPUs, numpy {np.__version__}\n")
    ok = waveform_part(args.loop_baz)
    ok &= field_part(args.loop_azimuths, args.measurements)
    write_rows(args.json, "splitting_layers", COLLECTED)
    return 0 if ok else 1


if __name__ == "__main__":
    raise SystemExit(main())
