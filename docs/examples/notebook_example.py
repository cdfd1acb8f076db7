"""fabric2seis from Python: analyse one demo sample, print its headline numbers, save one figure.

Run from the project folder (the folder that holds demo_samples/):

    python docs/examples/notebook_example.py [FIGURE_FOLDER]

The figure goes into FIGURE_FOLDER, or a new temporary folder. In a notebook, run the same lines
one at a time; a figure returned by fabric2seis shows itself when it is the cell's last value.
"""

import sys
import tempfile
from pathlib import Path

import fabric2seis

SAMPLE = Path("demo_samples") / "VM04_grain_list.csv"      # 400 olivine grains (invented demo)

result = fabric2seis.analyse(SAMPLE)          # settings: the sidecar VM04_grain_list.yaml
s, split, ci = result.seismic, result.splitting, result.intervals

print(f"sample {result.name}: {result.summary['n_grains']} grains, density {result.density_kg_m3:.1f} kg/m3, "
      f"{result.average} average")
for mineral, idx in result.fabric_indices.items():
    print(f"{mineral}: J-index {idx['J']:.2f} (95 % interval {ci[mineral + '.J'][0]:.2f} to "
          f"{ci[mineral + '.J'][1]:.2f}), M-index {idx['M']:.3f}")
print(f"Vp max {s['vp_max_km_s']:.3f} km/s, Vp min {s['vp_min_km_s']:.3f} km/s")
print(f"AVp {s['avp_pct']:.2f} % (95 % interval {ci['avp_pct'][0]:.2f} to {ci['avp_pct'][1]:.2f} %)")
print(f"AVs max {s['avs_max_pct']:.2f} % (95 % interval {ci['avs_max_pct'][0]:.2f} to {ci['avs_max_pct'][1]:.2f} %)")
print(f"splitting along Z: delay {split['along_z']['delay_s_per_100km']:.3f} s per 100 km, fast polarisation "
      f"{split['along_z']['fast_polarisation_from_x_deg']:.1f} degrees from X")
hill = result.tensors_gpa["hill"]
print(f"Hill stiffness C11 {hill[0, 0]:.2f} GPa, C33 {hill[2, 2]:.2f} GPa, C44 {hill[3, 3]:.2f} GPa")

folder = Path(sys.argv[1]) if len(sys.argv) > 1 else Path(tempfile.mkdtemp(prefix="fabric2seis_example_"))
folder.mkdir(parents=True, exist_ok=True)
fig = fabric2seis.velocity_hemisphere(result, "avs")      # one panel; pass ax=... to draw into your own
fig.savefig(folder / "avs_hemisphere.png", dpi=120)
print(f"figure: {folder / 'avs_hemisphere.png'}")
