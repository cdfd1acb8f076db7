"""``run_sample``: the one function the CLI and the workflow scripts call for a sample.

Stages run one way: read -> map phases and clean -> structural frame -> grains -> (fabric,
elastic, waves, splitting as they land). Outputs are written into a temporary folder beside the
destination and renamed into place only when everything succeeded, so a failed run leaves no
partial output behind.
"""

from __future__ import annotations

import hashlib
import json
import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from fabric2seis import __version__
from fabric2seis.ingest import frames, grains as grains_mod, phases as phases_mod
from fabric2seis.errors import InputError
from fabric2seis.ingest.io import read_ebsd
from fabric2seis.folders import check_destination, folder_written_whole
from fabric2seis.ingest.phases import PointSet
from fabric2seis.settings import settings_for


@dataclass
class Sample:
    """A sample after ingestion: clean points of named minerals in the structural frame."""

    name: str
    settings: dict
    settings_file: str | None
    points: PointSet
    grains: grains_mod.Grains | None
    fractions: dict[str, float]
    measured_fractions: dict[str, float]
    grid: str | None
    n_small_grain_points: int


def sample_name(path: str | Path) -> str:
    """The sample's name: the file name without its format suffix (and ``.gz``)."""
    name = Path(path).name
    if name.endswith(".gz"):
        name = name[:-3]
    return Path(name).stem


def checked_sample_name(path: str | Path) -> str:
    """:func:`sample_name`, refused (InputError) when it cannot name a results folder of its own."""
    name = sample_name(path)
    if name in ("", ".", "..") or name.strip(".") == "":
        raise InputError(f"the file name gives the sample name '{name}', which cannot name a results "
                         "folder; rename the file", path)
    return name


def ingest(path: str | Path, settings: dict, settings_file: str | None = None, progress=None) -> Sample:
    """Read, map phases, clean, rotate into the structural frame and reconstruct grains."""
    say = progress or (lambda _msg: None)
    path = Path(path)
    say(f"reading {path.name}")
    data = read_ebsd(path, angle_units=settings["table"]["angle_units"])
    phase_minerals = phases_mod.map_phases(data, settings.get("phases"))
    clean = settings.get("clean") or {}
    points = phases_mod.select_points(data, phase_minerals, clean.get("quality_min"), clean.get("quality_field"))
    f = frames.structural_matrix(settings["frame"], settings_file)
    points.quat = frames.to_structural(points.quat, f)
    grains = None
    small = 0
    if data.is_map:
        say(f"reconstructing grains of {len(points.quat):,} points")
        found = grains_mod.reconstruct(points.x, points.y, data.grid, data.step, points.quat,
                                       points.mineral_index, points.minerals,
                                       settings["grains"]["threshold_deg"], data.pixel_area)
        grains, keep = grains_mod.keep_large(found, settings["grains"]["min_pixels"])
        small = int((~keep).sum())
        if grains.n_grains == 0:
            raise InputError(f"no grain has grains.min_pixels = {settings['grains']['min_pixels']} pixels "
                             "or more", path, "key grains.min_pixels")
        if not keep.all():
            for field in ("quat", "mineral_index", "x", "y", "weights"):
                setattr(points, field, getattr(points, field)[keep])
    measured = phases_mod.modal_fractions(points.mineral_index, points.weights, points.minerals)
    fractions = phases_mod.modal_fractions(points.mineral_index, points.weights, points.minerals,
                                           settings.get("modal_fractions"), settings_file)
    return Sample(name=checked_sample_name(path), settings=settings, settings_file=settings_file, points=points,
                  grains=grains, fractions=fractions, measured_fractions=measured, grid=data.grid,
                  n_small_grain_points=small)


def orientation_sets(sample: Sample, weighting: str) -> list[tuple[object, np.ndarray, np.ndarray]]:
    """(mineral, quaternions, weights) per mineral, in the structural frame.

    ``area``: every pixel with its area (maps), or every row with its weight (grain lists);
    ``grain``: one vote per grain (the grain's mean orientation, weight 1). CONVENTIONS.md: tensors
    and velocities use ``area`` by default, fabric indices ``grain``.
    ``grain_area`` (for the bootstrap): one orientation per grain, weighted by the grain's area.
    """
    if weighting not in ("area", "grain", "grain_area"):
        raise ValueError(f"weighting must be 'area', 'grain' or 'grain_area', not {weighting!r}")
    p, g = sample.points, sample.grains
    out = []
    for k, m in enumerate(p.minerals):
        if weighting == "grain_area" and g is not None:
            sel = g.mineral_index == k
            out.append((m, g.quat[sel], g.area[sel]))
        elif weighting == "grain_area":
            sel = p.mineral_index == k
            out.append((m, p.quat[sel], p.weights[sel]))
        elif weighting == "grain" and g is not None:
            sel = g.mineral_index == k
            out.append((m, g.quat[sel], np.ones(int(sel.sum()))))
        elif weighting == "grain":
            sel = p.mineral_index == k
            out.append((m, p.quat[sel], np.ones(int(sel.sum()))))
        else:
            sel = p.mineral_index == k
            out.append((m, p.quat[sel], p.weights[sel]))
    return out


def summary(sample: Sample) -> dict:
    """The contents of ``summary.json`` (what is known at this stage)."""
    p = sample.points
    per_phase = {}
    for k, m in enumerate(p.minerals):
        n_points = int((p.mineral_index == k).sum())
        n = int((sample.grains.mineral_index == k).sum()) if sample.grains is not None else n_points
        per_phase[m.name] = {"fraction": round(sample.fractions[m.name], 6),
                             "measured_fraction": round(sample.measured_fractions[m.name], 6),
                             "n": n, "n_points": n_points}
    return {
        "sample": sample.name,
        "n_points": int(len(p.quat)),
        "n_grains": int(sample.grains.n_grains) if sample.grains is not None else int(len(p.quat)),
        "input_kind": "map" if sample.grains is not None else "grain list",
        "grid": sample.grid,
        "phases": per_phase,
        "dropped": {"unindexed_points": p.n_unindexed, "low_quality_points": p.n_low_quality,
                    "small_grain_points": sample.n_small_grain_points, "points_read": p.n_read},
        "fraction_source": "settings" if sample.settings.get("modal_fractions") else "measured area",
    }


def fabric_stage(sample: Sample, progress=None) -> dict:
    """Fabric indices per mineral (one point per grain unless settings say otherwise)."""
    from fabric2seis import fabric

    say = progress or (lambda _msg: None)
    weighting = sample.settings.get("weighting") or "grain"
    halfwidth = float(sample.settings["odf"]["halfwidth_deg"])
    out = {}
    for mineral, quat, weights in orientation_sets(sample, weighting):
        if len(quat) < 2:
            continue
        say(f"fabric of {mineral.name} ({len(quat):,} {'grains' if weighting == 'grain' else 'points'})")
        out[mineral.name] = {
            "result": fabric.phase_fabric(mineral, quat, weights, weighting, halfwidth),
            "convergence": fabric.convergence(mineral, quat, weights, halfwidth),
            "orientations": (mineral, quat, weights),
            # J, M and pfJ of random sets of as many grains (same weights, kernel, point group)
            "random_floor": fabric.random_floor(mineral, len(quat), halfwidth, weights),
        }
    return out


def fabric_figures(folder: Path, sample: Sample, fabrics: dict) -> None:
    from fabric2seis.fabric import default_poles
    from fabric2seis.figures.poles import convergence_figure, inverse_pole_figures, pole_figures

    if not fabrics:
        return
    halfwidth = float(sample.settings["odf"]["halfwidth_deg"])
    weighting = next(iter(fabrics.values()))["result"].weighting
    phases = [(m, q, w, default_poles(m)) for m, q, w in (f["orientations"] for f in fabrics.values())]
    pole_figures(folder / "pole_figures", sample.name, phases, halfwidth, weighting)
    inverse_pole_figures(folder / "inverse_pole_figures", sample.name, phases, halfwidth, weighting)
    convergence_figure(folder / "fabric_convergence", sample.name,
                       {name: f["convergence"] for name, f in fabrics.items()})


def twin_setting(settings: dict) -> str:
    """``average`` or ``as_indexed``: the settings key ``twins`` (``dauphine``, its older name, if set)."""
    return settings.get("dauphine") or settings.get("twins") or "average"


def seismic_stage(sample: Sample, progress=None) -> dict:
    """Aggregate tensor, velocity grid and the seismic part of the summary."""
    from fabric2seis.waves import seismic

    say = progress or (lambda _msg: None)
    st = sample.settings
    weighting = st.get("weighting") or "area"
    sets = orientation_sets(sample, weighting)
    say(f"elastic tensor ({weighting} weighting, {st['averaging']} average)")
    cond = st["conditions"]
    agg = seismic.aggregate(sets, sample.fractions, st["averaging"], cond["pressure_gpa"], cond["temperature_c"],
                            bool(cond.get("allow_ambient_constants", False)), twin_setting(st) == "average")
    say("velocities on the hemisphere grid")
    grid = seismic.velocity_grid(agg.stiffness, agg.density_kg_m3, float(st.get("velocity_grid_step_deg", 1.0)))
    summary = seismic.seismic_summary(grid, agg.average)
    summary["weighting"] = weighting
    summary["along_axes"] = seismic.along_axes(agg.stiffness, agg.density_kg_m3)
    summary["twins"] = {"setting": twin_setting(st), "averaged": agg.twins or {},
                        "library": {m.name: [t["name"] for t in m.twins] for m, _, _ in sets if m.twins}}
    from fabric2seis.elastic.decomposition import decomposition_summary
    summary["decomposition"] = decomposition_summary(agg.stiffness, agg.density_kg_m3)
    along_z = seismic.splitting_along(agg.stiffness, agg.density_kg_m3)
    field, sweep = None, None
    if st.get("field"):
        from fabric2seis.waves.splitting import field_summary

        say("splitting of the layer in the ground")
        field, sweep = field_summary(agg.stiffness, agg.density_kg_m3, st["field"], sample.settings_file)
    return {"aggregate": agg, "grid": grid, "seismic": summary, "sweep": sweep,
            "splitting": {"along_z": {k: along_z[k] for k in ("fast_polarisation_from_x_deg", "delay_s_per_100km")},
                          "field": field}}


def uncertainty_stage(sample: Sample, seis: dict, progress=None) -> dict:
    """95 % bootstrap intervals (``bootstrap.n`` resamples of the grains, fixed seed)."""
    from fabric2seis import uncertainty

    n, seed = int(sample.settings["bootstrap"]["n"]), int(sample.settings["bootstrap"]["seed"])
    if n == 0:
        return {}
    say = progress or (lambda _msg: None)
    say(f"bootstrap: {n} resamples of the grains")
    rng = np.random.default_rng(seed)
    sets = [s for s in orientation_sets(sample, "grain_area") if len(s[1]) > 1]
    counts = {m.name: uncertainty.resample_counts(len(q), n, rng) for m, q, _ in sets}
    agg = seis["aggregate"]
    # maxima over directions are biased up by noise: basic bootstrap intervals (uncertainty.py)
    out, _ = uncertainty.seismic_intervals(sets, sample.fractions, agg.average, agg.density_kg_m3, counts,
                                           agg.crystal_matrices)
    out["interval_method"] = {k: uncertainty.SEISMIC_INTERVAL_METHOD.get(k, "percentile") for k in list(out)}
    say("random aggregates of as many grains (the floor of AVs and AVp)")
    out["random_aggregate"] = uncertainty.random_aggregate_floor(sets, sample.fractions, agg.average,
                                                                 agg.density_kg_m3, agg.crystal_matrices)
    main = max(sets, key=lambda s: sample.fractions[s[0].name])[0].name
    halfwidth = float(sample.settings["odf"]["halfwidth_deg"])
    for m, q, w in sets:
        if len(q) < uncertainty.MIN_GRAINS_FOR_FABRIC:
            out[f"{m.name}.note"] = f"only {len(q)} grains: no fabric intervals"
            continue
        f = uncertainty.fabric_bootstrap(m, q, np.ones(len(q)), counts[m.name], halfwidth, rng)
        for key, v in f.items():
            if v is None:
                out[f"{m.name}.{key}"] = None
                out[f"{m.name}.note"] = (f"{len(q)} grains: the J-index interval is not computed above "
                                         f"{uncertainty.MAX_J_GRAINS:,} grains")
            else:
                out[f"{m.name}.{key}"] = uncertainty.interval(v)
                if m.name == main:
                    out[key] = out[f"{m.name}.{key}"]
    out["interval_method"].update({k: "percentile" for k in out if k.endswith((".J", ".M")) or k in ("J", "M")})
    out["resamples"] = n
    out["seed"] = seed
    out["main_phase"] = main
    return out


def provenance(path: Path, sample: Sample) -> dict:
    import orix, numpy, scipy, pandas  # noqa: E401
    digest = hashlib.sha256(path.read_bytes()).hexdigest()
    return {
        "input": str(path), "input_sha256": digest,
        "settings_file": sample.settings_file, "settings": sample.settings,
        "minerals": {m.name: {"source": m.source, "from_memory": list(m.from_memory)}
                     for m in sample.points.minerals},
        "versions": {"fabric2seis": __version__, "orix": orix.__version__, "numpy": numpy.__version__,
                     "scipy": scipy.__version__, "pandas": pandas.__version__,
                     "python": sys.version.split()[0]},
    }


def default_out_dir(path: str | Path) -> Path:
    return Path("results") / checked_sample_name(path)


def run_sample(path: str | Path, settings_path: str | Path | None = None, out_dir: str | Path | None = None,
               progress=None, defaults: dict | None = None, results_root: str | Path | None = "results") -> Path:
    """Process one EBSD export into ``out_dir``; returns the folder written.

    ``defaults``: settings under the sample's sidecar instead of config/config.yaml (the workflow
    passes its config, so that ``snakemake --config key=value`` reaches every sample).
    ``results_root``: the suite's results folder, never replaced (outputs.check_destination).
    The destination is checked before any work, and replaced only when the run succeeded.
    """
    import time

    path = Path(path)
    started = time.perf_counter()
    log_lines: list[str] = []
    report_progress = progress

    def say(message: str) -> None:  # every step goes to run.log, and to the caller's progress
        log_lines.append(f"{time.perf_counter() - started:8.2f} s  {message}")
        if report_progress is not None:
            report_progress(message)

    checked_sample_name(path)
    settings, settings_file = settings_for(path, settings_path, defaults)
    say(f"fabric2seis {__version__}: {path} with settings {settings_file or 'defaults'}")
    out = Path(out_dir) if out_dir is not None else default_out_dir(path)
    inputs = [path, *([settings_file] if settings_file else [])]
    check_destination(out, "sample", inputs, results_root)
    progress = say
    sample = ingest(path, settings, settings_file, progress)
    fabrics = fabric_stage(sample, progress)
    seis = seismic_stage(sample, progress)
    report = summary(sample)
    for name, f in fabrics.items():
        report["phases"][name].update(f["result"].as_summary())
        report["phases"][name]["j_levelled"] = f["convergence"]["j_levelled"]
        from fabric2seis.fabric import indistinguishable_from_random
        report["phases"][name]["random_floor"] = f["random_floor"]
        report["phases"][name]["indistinguishable_from_random"] = indistinguishable_from_random(
            f["result"].j, f["result"].m, f["random_floor"])
    agg = seis["aggregate"]
    report["density_kg_m3"] = round(agg.density_kg_m3, 3)
    report["conditions"] = dict(settings["conditions"])
    from fabric2seis.elastic.conditions import assumptions
    report["conditions"]["assumptions"] = [note for m in sample.points.minerals for note in assumptions(
        m, settings["conditions"]["pressure_gpa"], settings["conditions"]["temperature_c"])]
    report["seismic"] = seis["seismic"]
    report["splitting"] = seis["splitting"]
    report["uncertainty"] = uncertainty_stage(sample, seis, progress)
    if report["uncertainty"]:
        from fabric2seis.uncertainty import estimates_outside
        estimates = {k: report["seismic"].get(k) for k in ("avp_pct", "avs_max_pct", "vp_max_km_s")}
        estimates["delay_s_per_100km"] = report["splitting"]["along_z"]["delay_s_per_100km"]
        for name, phase in report["phases"].items():
            estimates.update({f"{name}.J": phase.get("J"), f"{name}.M": phase.get("M")})
        floor = report["uncertainty"]["random_aggregate"]
        floor["anisotropy_indistinguishable_from_random"] = bool(
            report["seismic"]["avs_max_pct"] <= floor["avs_max_pct_95"][1]
            and report["seismic"]["avp_pct"] <= floor["avp_pct_95"][1])
        outside = estimates_outside(report["uncertainty"], estimates)
        if outside:
            report["uncertainty"]["estimate_outside_interval"] = ", ".join(outside)
    from fabric2seis.cautions import sample_cautions
    outside_keys = (report["uncertainty"] or {}).get("estimate_outside_interval", "")
    report["cautions"] = sample_cautions(sample.points.minerals, report["conditions"]["assumptions"],
                                         [k.strip() for k in outside_keys.split(",") if k.strip()])
    for note in report["cautions"]:
        say(f"caution: {note}")
    with folder_written_whole(out, "sample", inputs, results_root) as tmp:
        _write_json(tmp / "summary.json", report)
        say("writing tables and figures")
        fabric_figures(tmp, sample, fabrics)
        _write_json(tmp / "stiffness.json", {
            **{k: np.round(v, 6).tolist() for k, v in agg.tensors.items()},
            "density_kg_m3": round(agg.density_kg_m3, 3), "units": "GPa, Voigt order 11 22 33 23 13 12",
            "frame": "structural (X lineation, Z foliation normal)", "used_for_velocities": agg.average})
        seis["grid"].table().to_csv(tmp / "velocities.csv", index=False)
        if seis["sweep"] is not None:
            import pandas as pd
            from fabric2seis.figures.splitting import splitting_figure

            sw = seis["sweep"]
            pd.DataFrame({"back_azimuth_deg": sw["back_azimuth_deg"], "fast_azimuth_deg": sw["fast_azimuth_deg"].round(3),
                          "delay_s": sw["delay_s"].round(5), "incidence_deg": seis["splitting"]["field"]["sweep_incidence_deg"]}
                         ).to_csv(tmp / "splitting_vs_backazimuth.csv", index=False)
            splitting_figure(tmp / "splitting_vs_backazimuth", sample.name, sw, seis["splitting"]["field"])
        from fabric2seis.figures.velocities import velocity_figure
        velocity_figure(tmp / "velocities", sample.name, agg.stiffness, agg.density_kg_m3, agg.average,
                        int(report["n_grains"]))
        _write_json(tmp / "provenance.json", provenance(path, sample))
        if sample.grains is not None:
            grains_mod.grains_table(sample.grains, sample.points.minerals).to_csv(tmp / "grains.csv", index=False)
        say(f"done, results in {out}")
        (tmp / "run.log").write_text("\n".join(log_lines) + "\n")
    return out


def _write_json(path: Path, data: dict) -> None:
    path.write_text(json.dumps(data, indent=2, sort_keys=False, default=_plain) + "\n")


def _plain(value):
    if isinstance(value, np.generic):
        return value.item()
    if isinstance(value, np.ndarray):
        return value.tolist()
    raise TypeError(type(value))
