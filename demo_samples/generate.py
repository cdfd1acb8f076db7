"""Generate the demo suite: six invented samples from the invented Vallmora massif.

The Vallmora massif is a scenario made up for fabric2seis: a mantle peridotite body with a
crustal shear zone on its margin. Nothing here is a real sample, locality or data set. Run from
the project root to regenerate everything with the same fixed seeds:

    python demo_samples/generate.py

Each sample gets a sidecar <stem>.yaml with its settings (frame, placement in the ground).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import yaml

from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.ingest.io.write import write_ang, write_ctf, write_table
from fabric2seis.synth import fabric_orientations, voronoi_map

HERE = Path(__file__).parent
CTF_LAUE = {"mmm": 3, "2/m": 2, "32": 5, "-3m": 7, "6/mmm": 9, "m-3m": 11}


def cells(phases: list[tuple[str, float, str | None, float]], n_cells: int, seed: int):
    """Per-cell phase (1-based) and orientation for (mineral, fraction, fabric, scatter) entries."""
    rng = np.random.default_rng(seed)
    fractions = np.array([p[1] for p in phases])
    cell_phase = rng.choice(len(phases), size=n_cells, p=fractions / fractions.sum()) + 1
    quat = np.empty((n_cells, 4))
    for k, (name, _, fabric, scatter) in enumerate(phases, start=1):
        sel = cell_phase == k
        quat[sel] = fabric_orientations(find_mineral(name), fabric, int(sel.sum()), scatter, seed + k)
    return cell_phase, quat


def make_map(phases, nx, ny, n_cells, seed):
    cell_phase, quat = cells(phases, n_cells, seed)
    return voronoi_map(n_cells, nx, ny, step=2.0, cell_quat=quat, noise_deg=0.7, seed=seed,
                       cell_phase=cell_phase)


def sidecar(stem: str, text_comment: str, settings: dict) -> None:
    (HERE / f"{stem}.yaml").write_text(f"# {text_comment}\n" + yaml.safe_dump(settings, sort_keys=False))


def main() -> None:
    field_flat = {"foliation_strike_deg": 30.0, "foliation_dip_deg": 5.0, "lineation_pitch_deg": 15.0,
                  "layer_thickness_km": 60.0}

    # 1. dunite with a strong A-type olivine fabric, EDAX-style .ang
    m = make_map([("olivine", 1.0, "olivine-A", 12.0)], 150, 120, 300, seed=101)
    write_ang(HERE / "VM01_dunite.ang", m.x, m.y, m.quat, m.phase, ["Forsterite"], ["mmm"])
    sidecar("VM01_dunite", "Vallmora massif (invented): coarse dunite, strong fabric",
            {"phases": {"Forsterite": "olivine"}, "field": field_flat})

    # 2. harzburgite with a B-type olivine fabric and enstatite, Oxford-style .ctf
    m = make_map([("olivine", 0.75, "olivine-B", 15.0), ("enstatite", 0.25, None, 0.0)], 150, 120, 300, seed=202)
    ol, en = find_mineral("olivine"), find_mineral("enstatite")
    lat = [tuple(x.lattice[k] for k in ("a", "b", "c", "alpha", "beta", "gamma")) for x in (ol, en)]
    write_ctf(HERE / "VM02_harzburgite.ctf", m.x, m.y, m.quat, m.phase, ["Olivine", "Enstatite"], lat,
              [3, 3], 2.0)
    sidecar("VM02_harzburgite", "Vallmora massif (invented): hydrated harzburgite, B-type olivine",
            {"field": {**field_flat, "foliation_dip_deg": 80.0, "foliation_strike_deg": 120.0}})

    # 3. lherzolite: olivine A-type; enstatite and diopside randomly oriented (no fabric of their own)
    m = make_map([("olivine", 0.6, "olivine-A", 18.0), ("enstatite", 0.25, None, 0.0),
                  ("diopside", 0.15, None, 0.0)], 150, 120, 300, seed=303)
    write_ang(HERE / "VM03_lherzolite.ang", m.x, m.y, m.quat, m.phase, ["olivine", "enstatite", "diopside"],
              ["mmm", "mmm", "2/m"])
    sidecar("VM03_lherzolite", "Vallmora massif (invented): spinel lherzolite, three phases",
            {"field": field_flat})

    # 4. grain list from a thin section counted grain by grain, with areas as weights
    quat = fabric_orientations(ol, "olivine-E", 400, 20.0, seed=404)
    weights = np.random.default_rng(405).lognormal(0.0, 0.6, 400).round(3)
    write_table(HERE / "VM04_grain_list.csv", quat, ["olivine"] * 400, weight=weights)
    sidecar("VM04_grain_list", "Vallmora massif (invented): olivine grain list with areas (um^2)",
            {"field": field_flat})

    # 5. crustal quartz mylonite from the marginal shear zone, prism <a> fabric
    m = make_map([("quartz", 1.0, "quartz-prism-a", 15.0)], 150, 120, 300, seed=505)
    q = find_mineral("quartz")
    write_ctf(HERE / "VM05_quartz_mylonite.ctf", m.x, m.y, m.quat, m.phase, ["Quartz"],
              [tuple(q.lattice[k] for k in ("a", "b", "c", "alpha", "beta", "gamma"))], [CTF_LAUE["-3m"]], 2.0)
    sidecar("VM05_quartz_mylonite", "Vallmora shear zone (invented): quartz mylonite",
            {"field": {"foliation_strike_deg": 75.0, "foliation_dip_deg": 60.0, "lineation_pitch_deg": 80.0,
                       "layer_thickness_km": 15.0}})

    # 6. a weak fabric: olivine with wide scatter, from the core of the massif
    m = make_map([("olivine", 1.0, "olivine-A", 60.0)], 150, 120, 300, seed=606)
    write_ang(HERE / "VM06_weak_dunite.ang", m.x, m.y, m.quat, m.phase, ["olivine"], ["mmm"])
    sidecar("VM06_weak_dunite", "Vallmora massif (invented): dunite with a weak fabric",
            {"field": field_flat})


def measurements() -> None:
    """Invented SKS measurements at stations VLM-N and VLM-S, from a known layer and noise.

    Made from the dunite's own fabric (the aggregate of VM01 as sampled here) with the lineation
    azimuth and thickness below, so that `fabric2seis field` has a model to find again.
    """
    import pandas as pd

    from fabric2seis.ingest.io import read_ebsd
    from fabric2seis.waves import field, seismic, splitting

    rng = np.random.default_rng(707)
    d = read_ebsd(HERE / "VM01_dunite.ang")
    ol = find_mineral("olivine")
    agg = seismic.aggregate([(ol, d.quat, np.ones(len(d.quat)))], {"olivine": 1.0})
    rows = []
    for station, azimuth, thickness in (("VLM-N", 35.0, 90.0), ("VLM-S", 60.0, 140.0)):
        baz = np.sort(rng.uniform(0, 360, 18)).round(1)
        inc = rng.uniform(6, 13, 18).round(1)
        c = splitting.to_geographic(agg.stiffness, splitting.placement(field._attitude_field("horizontal", azimuth)))
        fast, per_km = field.predict_many([c], agg.density_kg_m3, baz, inc)
        for k in range(len(baz)):
            rows.append({"station": station, "baz_deg": baz[k], "incidence_deg": inc[k],
                         "fast_azimuth_deg": round(float((fast[0, k] + rng.normal(0, 6)) % 180), 1),
                         "delay_s": round(abs(float(per_km[0, k] * thickness + rng.normal(0, 0.12))), 2),
                         "fast_azimuth_err_deg": 8.0, "delay_err_s": 0.15, "null": False})
    pd.DataFrame(rows).to_csv(HERE / "field_measurements.csv", index=False)


if __name__ == "__main__":
    main()
    measurements()
