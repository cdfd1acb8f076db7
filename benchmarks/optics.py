"""Benchmark of the predicted crossed-polar view (fabric2seis.optics).

1. A map of 10^6 olivine pixels (random orientations): the indicatrix sections of every pixel
   (``section_optics``), and the sRGB of every pixel between crossed polars and with the plate by
   the retardation tables (``InterferenceTable``), against a per-pixel spectral sum (the spectrum
   sin^2(2 theta) sin^2(pi R / lambda) of each pixel times the colour-matching weights) on a subset
   of pixels. Colours must agree to 2e-3 in sRGB.
2. ``fabric2seis optics`` on the largest demo map, in this process (after imports) and as the
   command (a new Python process, imports included).

Run from the project folder:  python benchmarks/optics.py [--pixels 1000000]
"""

from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parents[1]))   # measure this checkout, not an installed copy

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from rows import COLLECTED, record, write_rows
from timing import best_of

from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.optics import InterferenceTable, polariser_directions, section_optics, spectral_weights, xyz_to_srgb


def map_part(n: int) -> bool:
    rng = np.random.default_rng(1)
    q = rng.normal(size=(n, 4))
    q /= np.linalg.norm(q, axis=1, keepdims=True)
    o = find_mineral("olivine").optics
    p, a = polariser_directions("map_normal")
    t_section, s = best_of(lambda: section_optics(o.impermeability, q, p, a, 30.0), 3)
    r, fast = s.retardation_nm, s.fast_vibration_deg + 22.5
    table = InterferenceTable(float(r.max()))
    t_plain, rgb = best_of(lambda: xyz_to_srgb(table.xyz(r, fast)), 3)
    t_plate, _ = best_of(lambda: xyz_to_srgb(table.xyz(r, fast, plate=True)), 3)
    lam, w = spectral_weights()
    subset = np.arange(0, n, max(n // 2000, 1))

    def per_pixel():
        out = np.empty((len(subset), 3))
        for k, i in enumerate(subset):
            spectrum = np.sin(np.radians(2 * fast[i])) ** 2 * np.sin(np.pi * r[i] / lam) ** 2
            out[k] = spectrum @ w
        return xyz_to_srgb(out)
    t_loop, ref = best_of(per_pixel, 1)
    diff = float(np.abs(ref - rgb[subset]).max())
    print(f"A map of {n:,} olivine pixels, 30 um, random orientations")
    print(f"  indicatrix sections              {t_section:8.3f} s")
    print(f"  sRGB between crossed polars      {t_plain:8.3f} s")
    print(f"  sRGB with the 530 nm plate       {t_plate:8.3f} s")
    print(f"  per-pixel spectral sum           {t_loop / len(subset) * n:8.3f} s for the whole map "
          f"(estimated from {len(subset):,} pixels)")
    record(f"crossed-polar colours of {n:,} pixels (sections + sRGB)", t_section + t_plain, "s",
           baseline=t_section + t_loop / len(subset) * n, baseline_unit="s",
           baseline_label="sections + per-pixel spectral sum (estimated)",
           ratio=(t_section + t_loop / len(subset) * n) / (t_section + t_plain), ratio_label="baseline / tables",
           note=f"best of 3; spectral sum timed on {len(subset):,} pixels; colours agree to {diff:.1e}")
    verdict = "ok" if diff <= 2e-3 else "FAILED"
    print(f"  largest sRGB difference          {diff:.1e} (must be <= 2e-3: {verdict})")
    return diff <= 2e-3


def command_part() -> None:
    from fabric2seis.optics.section import run_optics

    demo = Path("demo_samples")
    largest = max((f for f in demo.iterdir() if f.suffix in (".ang", ".ctf")), key=lambda f: f.stat().st_size)
    with tempfile.TemporaryDirectory() as tmp:
        start = time.perf_counter()
        run_optics(largest, out_dir=Path(tmp) / "in_process", results_root=None)
        inside = time.perf_counter() - start
        start = time.perf_counter()
        subprocess.run([sys.executable, "-m", "fabric2seis", "optics", str(largest), "--out",
                        str(Path(tmp) / "command")], check=True, capture_output=True)
        command = time.perf_counter() - start
    print(f"fabric2seis optics on the largest demo map ({largest.name}, default settings: 3 stage turns, "
          "with and without the plate)")
    print(f"  in this process (after imports)  {inside:8.2f} s")
    print(f"  the command (imports included)   {command:8.2f} s")
    record(f"fabric2seis optics command, {largest.name}", command, "s", baseline=inside, baseline_unit="s",
           baseline_label="run_optics in the measuring process (after imports)", ratio=command / inside,
           ratio_label="command / in process", note="one run each")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--pixels", type=int, default=1_000_000)
    parser.add_argument("--json", default=None, metavar="PATH",
                        help="also write the figures as JSON rows (benchmarks/run.py)")
    args = parser.parse_args()
    print(f"machine: {os.cpu_count()} cores, load {os.getloadavg()[0]:.2f}")
    ok = map_part(args.pixels)
    command_part()
    write_rows(args.json, "optics", COLLECTED)
    return 0 if ok else 1


if __name__ == "__main__":
    raise SystemExit(main())
