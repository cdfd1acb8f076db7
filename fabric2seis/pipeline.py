"""``run_sample``: the one function the CLI and the workflow scripts call for a sample.

Stages run one way, each taking the previous stage's dataclass (``stages``) and returning its own:
``ingest`` (read, map phases, clean, structural frame, grains) -> ``fabric_stage`` ->
``seismic_stage`` (aggregate tensor, velocities, splitting) -> ``uncertainty_stage`` (bootstrap).
``sample_output`` assembles ``summary.json`` and writes the results folder, into a temporary
folder swapped into place only when everything succeeded (``folders``).
"""

from __future__ import annotations

import time
from collections.abc import Callable
from pathlib import Path

import numpy as np

from fabric2seis import __version__, budget
from fabric2seis.errors import InputError
from fabric2seis.folders import check_destination
from fabric2seis.ingest import frames
from fabric2seis.ingest import grains as grains_mod
from fabric2seis.ingest import phases as phases_mod
from fabric2seis.ingest.io import read_ebsd
from fabric2seis.orientations import PhaseOrientations
from fabric2seis.progress import BarMaker, share, stage_bar
from fabric2seis.settings import settings_for
from fabric2seis.stages import FabricResult, Intervals, PhaseFabricResult, Sample, SeismicResult
from fabric2seis.threads import blas_on_one_thread, shared_results, thread_count, threads_given

Progress = Callable[[str], None]


def _quiet(_message: str) -> None:
    pass


def sample_name(path: str | Path) -> str:
    """Name a sample after its file: the file name without its format suffix (and ``.gz``).

    Parameters
    ----------
    path : str or Path
        The EBSD file.

    Returns
    -------
    str
        The sample's name.
    """
    name = Path(path).name
    if name.endswith(".gz"):
        name = name[:-3]
    return Path(name).stem


def checked_sample_name(path: str | Path) -> str:
    """Return :func:`sample_name`, refused when it cannot name a results folder of its own.

    Parameters
    ----------
    path : str or Path
        The EBSD file.

    Returns
    -------
    str
        The sample's name.

    Raises
    ------
    InputError
        If the name is empty or made only of dots.
    """
    name = sample_name(path)
    if name in ("", ".", "..") or name.strip(".") == "":
        raise InputError(f"the file name gives the sample name '{name}', which cannot name a results "
                         "folder; rename the file", path)
    return name


def ingest(path: str | Path, settings: dict, settings_file: str | None = None,
           progress: Progress | None = None, fabric: bool = True) -> Sample:
    """Read, map phases, clean, rotate into the structural frame and reconstruct grains.

    Parameters
    ----------
    path : str or Path
        The EBSD file.
    settings : dict
        The sample's validated settings.
    settings_file : str, optional
        Where the settings came from, for error messages.
    progress : callable, optional
        Called with a message at each step.
    fabric : bool
        The sample is for a fabric (True): at least one mineral must have two grains. The optics
        of a section need no fabric; a single crystal is a section too.

    Returns
    -------
    Sample
        Clean points (orientations (N, 4) in the structural frame), grains of a map, and the
        modal fractions.

    Raises
    ------
    InputError
        If the file or settings are refused at any step, no grain is large enough, or no mineral
        has two grains (a single grain has no fabric and nothing to resample).
    """
    say = progress or _quiet
    path = Path(path)
    say(f"reading {path.name}")
    data = read_ebsd(path, angle_units=settings["table"]["angle_units"])
    library, user_minerals = sample_library(settings, say)
    drops, notes = phases_mod.phases_to_drop(data, settings.get("drop_phases"), settings.get("phases"), library,
                                             settings_file)
    leave_out = [pid for d in drops for pid in d.phase_ids]
    phase_minerals = phases_mod.map_phases(data, settings.get("phases"), library, settings_file, skip=leave_out)
    clean = settings.get("clean") or {}
    points = phases_mod.select_points(data, phase_minerals, clean.get("quality_min"), clean.get("quality_field"),
                                      leave_out, clean.get("quality_max"))
    dropped_phases = _dropped_phase_record(drops, points, settings.get("modal_fractions"), library)
    for name, record in dropped_phases.items():
        say(f"phase {name} left out (drop_phases): {record['n_points']:,} points of file phase(s) "
            f"{', '.join(record['file_phases'])}, former fraction {record['former_fraction']:.4f}")
    f = frames.structural_matrix(settings["frame"], settings_file)
    points.quat = frames.to_structural(points.quat, f)
    grains = None
    small = 0
    if data.is_map and data.grid is not None and data.step is not None:
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
            if points.dropped is not None and points.x is not None and points.y is not None:
                points.dropped = points.dropped.plus(points.x[~keep], points.y[~keep],
                                                     phases_mod.SMALL_GRAIN)
            for field in ("quat", "mineral_index", "x", "y", "weights"):
                setattr(points, field, getattr(points, field)[keep])
    if fabric:
        _check_two_grains(grains.mineral_index if grains is not None else points.mineral_index, points.minerals, path,
                          f"key grains.threshold_deg = {settings['grains']['threshold_deg']:g}"
                          if grains is not None else "data rows")
    measured = phases_mod.modal_fractions(points.mineral_index, points.weights, points.minerals)
    fractions = phases_mod.modal_fractions(points.mineral_index, points.weights, points.minerals,
                                           _kept_fractions(settings.get("modal_fractions"), dropped_phases, library),
                                           settings_file, library)
    return Sample(name=checked_sample_name(path), settings=settings, settings_file=settings_file, points=points,
                  grains=grains, fractions=fractions, measured_fractions=measured, grid=data.grid,
                  n_small_grain_points=small, step=data.step, dropped_phases=dropped_phases,
                  phase_notes=notes, user_minerals=user_minerals)


def sample_library(settings: dict, progress: Progress | None = None) -> tuple[dict, list[dict]]:
    """The mineral library of a sample: the packaged one, with the user's folder ``minerals_dir`` if set.

    Parameters
    ----------
    settings : dict
        The sample's settings (``minerals_dir``: checked by ``settings.settings_for``).
    progress : callable, optional
        Told of every user entry read, and of the packaged entry it replaces.

    Returns
    -------
    library : dict of str to Mineral
        The minerals by name.
    user_minerals : list of dict
        The user's entries: ``name``, ``file``, ``replaces`` (``minerals.user_entries``).

    Raises
    ------
    InputError
        If a user's mineral file is refused (naming the file and key).
    """
    from fabric2seis.elastic.minerals import load_library, user_entries

    folder = settings.get("minerals_dir")
    library = load_library([folder] if folder else [])
    users = user_entries(library)
    for entry in users:
        (progress or _quiet)(f"mineral {entry['name']} from {entry['file']}" + (
            f", replacing the packaged entry {entry['replaces']}" if entry["replaces"] else " (a mineral of "
            "your own)"))
    return library, users


def _dropped_phase_record(drops: list, points, given: dict | None, library: dict) -> dict:
    """Per phase left out: the names in the file, its points, and its former fraction.

    The former fraction is the one the settings' ``modal_fractions`` gave it, else its share of the
    weight (area) of the cleaned points, dropped phases included.
    """
    total = float(points.weights.sum()) + sum(w for _, w in points.left_out.values())
    stated = _fractions_by_mineral(given, library)
    out = {}
    for d in drops:
        n = sum(points.left_out[pid][0] for pid in d.phase_ids)
        weight = sum(points.left_out[pid][1] for pid in d.phase_ids)
        fraction = stated.get(d.name, weight / total if total > 0 else 0.0)
        out[d.name] = {"file_phases": d.file_phases, "n_points": int(n), "former_fraction": round(float(fraction), 6),
                       "fraction_source": "settings" if d.name in stated else "measured area"}
    return out


def _fractions_by_mineral(given: dict | None, library: dict) -> dict[str, float]:
    """``modal_fractions`` keyed by library name where a key is a library mineral, else by the key."""
    from fabric2seis.elastic.minerals import find_mineral

    out = {}
    for key, value in (given or {}).items():
        try:
            out[find_mineral(key, library).name] = float(value)
        except InputError:
            out[str(key)] = float(value)
    return out


def _kept_fractions(given: dict | None, dropped: dict, library: dict) -> dict | None:
    """The settings' ``modal_fractions`` without the phases left out, renormalised to sum to 1."""
    if not given or not dropped:
        return given
    from fabric2seis.elastic.minerals import find_mineral

    kept = {}
    for key, value in given.items():
        try:
            name = find_mineral(key, library).name
        except InputError:
            name = str(key)
        if name not in dropped:
            kept[key] = float(value)
    total = sum(kept.values())
    return {k: v / total for k, v in kept.items()} if total > 0 else kept


def _check_two_grains(mineral_index: np.ndarray, minerals: list, path: Path, where: str) -> None:
    """Refuse a sample in which no mineral has two grains: it has no fabric and nothing to resample."""
    counts = np.bincount(mineral_index, minlength=len(minerals))
    if counts.max(initial=0) < 2:
        held = ", ".join(f"{m.name} {int(c)}" for m, c in zip(minerals, counts))
        raise InputError(f"the sample holds a single grain of each mineral ({held}); fabric indices and their "
                         "intervals need two grains or more of a mineral ('fabric2seis minerals NAME' shows a "
                         "single crystal)", path, where)


def orientation_sets(sample: Sample, weighting: str) -> list[PhaseOrientations]:
    """The orientations and weights of every mineral, in the structural frame.

    ``area``: every pixel with its area (maps), or every row with its weight (grain lists);
    ``grain``: one vote per grain (the grain's mean orientation, weight 1). CONVENTIONS.md: tensors
    and velocities use ``area`` by default, fabric indices ``grain``.
    ``grain_area`` (for the bootstrap): one orientation per grain, weighted by the grain's area.

    Parameters
    ----------
    sample : Sample
        The ingested sample.
    weighting : {"area", "grain", "grain_area"}
        How orientations are counted.

    Returns
    -------
    list of PhaseOrientations
        Per mineral: quaternions (N, 4) and weights (N,).

    Raises
    ------
    ValueError
        If ``weighting`` is not one of the three.
    """
    if weighting not in ("area", "grain", "grain_area"):
        raise ValueError(f"weighting must be 'area', 'grain' or 'grain_area', not {weighting!r}")
    p, g = sample.points, sample.grains
    out = []
    for k, m in enumerate(p.minerals):
        if g is not None and weighting != "area":
            sel = g.mineral_index == k
            quat, weights = g.quat[sel], (g.area[sel] if weighting == "grain_area" else np.ones(int(sel.sum())))
        else:
            sel = p.mineral_index == k
            quat, weights = p.quat[sel], (np.ones(int(sel.sum())) if weighting == "grain" else p.weights[sel])
        out.append(PhaseOrientations(m, quat, weights))
    return out


def fabric_stage(sample: Sample, progress: Progress | None = None, bars: BarMaker | None = None) -> FabricResult:
    """Compute the fabric indices per mineral (one point per grain unless settings say otherwise).

    Minerals with fewer than two orientations are left out.

    Parameters
    ----------
    sample : Sample
        The ingested sample.
    progress : callable, optional
        Called with a message at each step.
    bars : callable, optional
        Draws a progress bar per mineral (``progress.terminal_bars``): indices, convergence and
        random floor, a third each.

    Returns
    -------
    FabricResult
        Indices, convergence and random floor of each mineral.
    """
    from fabric2seis import fabric

    say = progress or _quiet
    weighting = sample.settings.get("weighting") or "grain"
    halfwidth = float(sample.settings["odf"]["halfwidth_deg"])
    sets = [phase for phase in orientation_sets(sample, weighting) if len(phase.quat) >= 2]

    def part(task: tuple[PhaseOrientations, str]):
        (mineral, quat, weights), what = task
        if what == "indices":
            return fabric.phase_fabric(mineral, quat, weights, weighting, halfwidth)
        if what == "convergence":          # the row of all grains comes from the indices, below
            return fabric.convergence_of_subsets(mineral, quat, weights, halfwidth)
        # J, M and pfJ of random sets of as many grains (same weights, kernel, point group)
        return fabric.random_floor(mineral, len(quat), halfwidth, weights)

    # three independent parts per mineral, each with its own fixed seeds, shared among the run's
    # threads (threads.py); the results come back in order, so the bars and run.log are a plain loop's
    parts = shared_results(part, [(phase, what) for phase in sets for what in PHASE_FABRIC_PARTS])
    phases = {}
    for phase in sets:
        mineral, quat, _ = phase
        what = f"fabric of {mineral.name} ({len(quat):,} {'grains' if weighting == 'grain' else 'points'})"
        say(what)
        with stage_bar(bars, what) as done:
            indices = next(parts)
            done(1 / 3)
            subsets = next(parts)
            converging = fabric.with_all_grains(subsets, len(quat), indices.j, indices.m,
                                                indices.poles[subsets["pole"]]["max_mud"])
            done(2 / 3)
            floor = next(parts)
        phases[mineral.name] = PhaseFabricResult(indices=indices, convergence=converging, random_floor=floor,
                                                 orientations=phase)
    return FabricResult(phases=phases, weighting=weighting, halfwidth_deg=halfwidth)


#: the parts of a mineral's fabric, in the order ``fabric_stage`` computes and reports them
PHASE_FABRIC_PARTS = ("indices", "convergence", "random floor")


def twin_setting(settings: dict) -> str:
    """Read the settings key ``twins`` (``dauphine``, its older name, if set).

    Parameters
    ----------
    settings : dict
        The sample's settings.

    Returns
    -------
    str
        ``"average"`` (the default) or ``"as_indexed"``.
    """
    return settings.get("dauphine") or settings.get("twins") or "average"


def seismic_stage(sample: Sample, progress: Progress | None = None) -> SeismicResult:
    """Compute the aggregate tensor, velocity grid, the seismic part of the summary, and splitting.

    Parameters
    ----------
    sample : Sample
        The ingested sample.
    progress : callable, optional
        Called with a message at each step.

    Returns
    -------
    SeismicResult
        Tensors (GPa), velocities (km/s), summary, splitting along Z and, with ``field``
        settings, in the ground.

    Raises
    ------
    InputError
        If a mineral cannot be brought to the conditions, or the ``field`` settings are refused.
    """
    from fabric2seis.waves import seismic

    say = progress or _quiet
    st = sample.settings
    weighting = st.get("weighting") or "area"
    sets = orientation_sets(sample, weighting)
    say(f"elastic tensor ({weighting} weighting, {st['averaging']} average)")
    cond = st["conditions"]
    agg = seismic.aggregate(sets, sample.fractions, st["averaging"], cond["pressure_gpa"], cond["temperature_c"],
                            bool(cond.get("allow_ambient_constants", False)), twin_setting(st) == "average")
    twins = {"setting": twin_setting(st), "averaged": agg.twins or {},
             "library": {m.name: [t["name"] for t in m.twins] for m, _, _ in sets if m.twins}}
    return seismic_of_aggregate(agg, st, weighting, twins, sample.settings_file, say)


def seismic_of_aggregate(agg, settings: dict, weighting: str, twins: dict, settings_file: str | None = None,
                         progress: Progress | None = None) -> SeismicResult:
    """Everything the seismic stage derives from an aggregate tensor: velocities, summary, splitting.

    Shared by a sample's seismic stage and the combination of a map's pieces (``pieces``).

    Parameters
    ----------
    agg : fabric2seis.waves.seismic.Aggregate
        The aggregate: its chosen average (GPa, structural frame) and density (kg m^-3).
    settings : dict
        The settings: ``velocity_grid_step_deg`` and ``field``.
    weighting : str
        How orientations were weighted (``area`` or ``grain``), for the summary.
    twins : dict
        The ``twins`` block of the seismic summary.
    settings_file : str, optional
        Where the settings came from, for error messages.
    progress : callable, optional
        Called with a message at each step.

    Returns
    -------
    SeismicResult
        Tensors (GPa), velocities (km/s), summary, splitting along Z and, with ``field``
        settings, in the ground.

    Raises
    ------
    InputError
        If the ``field`` settings are refused.
    """
    from fabric2seis.elastic.decomposition import decomposition_summary
    from fabric2seis.waves import seismic

    say = progress or _quiet
    say("velocities on the hemisphere grid")
    grid = seismic.velocity_grid(agg.stiffness, agg.density_kg_m3, float(settings.get("velocity_grid_step_deg", 1.0)))
    summary = seismic.seismic_summary(grid, agg.average)
    summary["weighting"] = weighting
    summary["along_axes"] = seismic.along_axes(agg.stiffness, agg.density_kg_m3)
    summary["twins"] = twins
    summary["decomposition"] = decomposition_summary(agg.stiffness, agg.density_kg_m3)
    along_z = seismic.splitting_along(agg.stiffness, agg.density_kg_m3)
    field, sweep = None, None
    if settings.get("field"):
        from fabric2seis.waves.splitting import field_summary

        say("splitting of the layer in the ground")
        field, sweep = field_summary(agg.stiffness, agg.density_kg_m3, settings["field"], settings_file)
    return SeismicResult(aggregate=agg, grid=grid, summary=summary, weighting=weighting, field=field, sweep=sweep,
                         along_z={k: along_z[k] for k in ("fast_polarisation_from_x_deg", "delay_s_per_100km")})


def uncertainty_stage(sample: Sample, seis: SeismicResult, progress: Progress | None = None,
                      bars: BarMaker | None = None) -> Intervals:
    """Compute 95 % bootstrap intervals (``bootstrap.n`` resamples of the grains, fixed seed).

    Parameters
    ----------
    sample : Sample
        The ingested sample.
    seis : SeismicResult
        The seismic stage (its aggregate).
    progress : callable, optional
        Called with a message at each step.
    bars : callable, optional
        Draws a progress bar of the bootstrap (``progress.terminal_bars``): the seismic
        resamples, the random aggregates, then each mineral's fabric resamples (by blocks of
        grains and of grain pairs), equal parts.

    Returns
    -------
    Intervals
        Intervals of the seismic statistics and of J and M per mineral, the random-aggregate
        floor, and the settings used; empty when ``bootstrap.n`` is 0.

    References
    ----------
    Efron, B. & Tibshirani, R. J. (1993). An Introduction to the Bootstrap. Chapman & Hall, New York.
    """
    n, seed = int(sample.settings["bootstrap"]["n"]), int(sample.settings["bootstrap"]["seed"])
    if n == 0:
        return Intervals()
    say = progress or _quiet
    what = f"bootstrap: {n} resamples of the grains"
    say(what)
    with stage_bar(bars, what) as done:
        out = _bootstrap(sample, seis, n, seed, say, done)
    return Intervals(out)


def _bootstrap(sample: Sample, seis: SeismicResult, n: int, seed: int, say: Progress,
               done: Callable[[float], None]) -> dict:
    """The intervals of :func:`uncertainty_stage`, telling ``done`` the share finished."""
    from fabric2seis import uncertainty

    rng = np.random.default_rng(seed)
    sets = [s for s in orientation_sets(sample, "grain_area") if len(s.quat) > 1]
    parts = 2 + sum(len(q) >= uncertainty.MIN_GRAINS_FOR_FABRIC for _, q, _ in sets)
    counts = {m.name: uncertainty.resample_counts(len(q), n, rng) for m, q, _ in sets}
    agg = seis.aggregate
    # maxima over directions are biased up by noise: basic bootstrap intervals (uncertainty.py)
    out, _ = uncertainty.seismic_intervals(sets, sample.fractions, agg.average, agg.density_kg_m3, counts,
                                           agg.crystal_matrices)
    out["interval_method"] = {k: uncertainty.SEISMIC_INTERVAL_METHOD.get(k, "percentile") for k in list(out)}
    done(1 / parts)
    say("random aggregates of as many grains (the floor of AVs and AVp)")
    out["random_aggregate"] = uncertainty.random_aggregate_floor(sets, sample.fractions, agg.average,
                                                                 agg.density_kg_m3, agg.crystal_matrices)
    done(2 / parts)
    part = 2
    main = max(sets, key=lambda s: sample.fractions[s.mineral.name]).mineral.name
    from_subsets: list[str] = []              # J intervals of j_by_subsets (more than MAX_J_GRAINS grains)
    halfwidth = float(sample.settings["odf"]["halfwidth_deg"])
    for m, q, _w in sets:
        if len(q) < uncertainty.MIN_GRAINS_FOR_FABRIC:
            out[f"{m.name}.note"] = f"only {len(q)} grains: no fabric intervals"
            continue
        say(f"bootstrap of the fabric of {m.name} ({len(q):,} grains)")
        f = uncertainty.fabric_bootstrap(m, q, np.ones(len(q)), counts[m.name], halfwidth, rng,
                                         share(done, part / parts, (part + 1) / parts))
        part += 1
        for key, v in f.items():
            out[f"{m.name}.{key}"] = uncertainty.interval(v)
            if m.name == main:
                out[key] = out[f"{m.name}.{key}"]
        if len(q) > uncertainty.MAX_J_GRAINS:
            sizes = " and ".join(f"{size:,}" for size in uncertainty.j_subset_sizes())
            out[f"{m.name}.note"] = (f"{len(q):,} grains: the J-index interval is carried from the bootstraps of "
                                     f"random subsets of {sizes} grains to all of them (uncertainty.j_by_subsets)")
            from_subsets += [f"{m.name}.J"] + (["J"] if m.name == main else [])
    out["interval_method"].update({k: "percentile" for k in out if k.endswith((".J", ".M")) or k in ("J", "M")})
    out["interval_method"].update({k: "percentile_of_subsets" for k in from_subsets})
    out["resamples"] = n
    out["seed"] = seed
    out["main_phase"] = main
    return out


def default_out_dir(path: str | Path) -> Path:
    """Return the default results folder of a sample: ``results/<sample name>``.

    Parameters
    ----------
    path : str or Path
        The EBSD file.

    Returns
    -------
    Path
        The folder (relative to the current folder).

    Raises
    ------
    InputError
        If the file name cannot name a folder (:func:`checked_sample_name`).
    """
    return Path("results") / checked_sample_name(path)


class RunLog:
    """Every step with its time since the start, for run.log and the caller's progress.

    Parameters
    ----------
    progress : callable, optional
        Also called with each message.

    Attributes
    ----------
    started
        ``time.perf_counter()`` at creation, seconds.
    lines
        The logged lines, each with its time since the start in seconds.
    last
        ``time.perf_counter()`` of the last line, seconds.
    written
        Names of the files already logged by :meth:`wrote`.
    """

    def __init__(self, progress: Progress | None = None) -> None:
        self.started = time.perf_counter()
        self.lines: list[str] = []
        self.progress = progress
        self.last = self.started
        self.written: set[str] = set()

    def say(self, message: str) -> None:
        """Log a step and pass it on to ``progress``.

        Parameters
        ----------
        message : str
            What is being done.
        """
        self.last = time.perf_counter()
        self.lines.append(f"{self.last - self.started:8.2f} s  {message}")
        if self.progress is not None:
            self.progress(message)

    def wrote(self, folder: Path) -> None:
        """Log the files that appeared in ``folder`` since the last call, with the seconds since the last step.

        Parameters
        ----------
        folder : Path
            The folder being written.
        """
        seconds = time.perf_counter() - self.last
        new = sorted(p.name for p in folder.iterdir() if p.is_file() and p.name not in self.written)
        if new:
            self.written.update(new)
            self.say(f"wrote {', '.join(new)} in {seconds:.2f} s")


def analyse_sample(sample: Sample, progress: Progress | None = None, bars: BarMaker | None = None,
                   before_bootstrap: Callable[[FabricResult, SeismicResult], None] | None = None
                   ) -> tuple[FabricResult, SeismicResult, Intervals, dict]:
    """Run the stages after ingestion: fabric, seismic, bootstrap, and assemble ``summary.json``'s contents.

    Parameters
    ----------
    sample : Sample
        The ingested sample (:func:`ingest`).
    progress : callable, optional
        Called with a message at each step.
    bars : callable, optional
        Draws progress bars of the long stages (``progress.terminal_bars``).
    before_bootstrap : callable, optional
        Called with the fabric and seismic results before the bootstrap starts (``fabric2seis
        sample`` starts drawing its figures there: ``sample_output.SampleFigures``).

    Returns
    -------
    tuple
        The fabric, seismic and bootstrap stages' results and the summary (a dict, ready for JSON).

    Raises
    ------
    InputError
        If the bootstrap would need more memory than allowed, or a stage refuses the settings.
    """
    from fabric2seis.sample_output import sample_summary

    source = sample.settings_file or "the default settings"
    budget.check_bootstrap(sample.settings, [len(s.quat) for s in orientation_sets(sample, "grain_area")], source)
    fabric = fabric_stage(sample, progress, bars)
    seismic = seismic_stage(sample, progress)
    if before_bootstrap is not None:
        before_bootstrap(fabric, seismic)
    intervals = uncertainty_stage(sample, seismic, progress, bars)
    return fabric, seismic, intervals, sample_summary(sample, fabric, seismic, intervals)


@blas_on_one_thread()        # the same numbers as the workflow's one-thread jobs (threads.py)
def run_sample(path: str | Path, settings_path: str | Path | None = None, out_dir: str | Path | None = None,
               progress: Progress | None = None, defaults: dict | None = None,
               results_root: str | Path | None = "results", bars: BarMaker | None = None,
               minerals_dir: str | Path | None = None, threads: int | None = None) -> Path:
    """Process one EBSD export into ``out_dir``; returns the folder written.

    ``defaults``: settings under the sample's sidecar instead of config/config.yaml (the workflow
    passes its config, so that ``snakemake --config key=value`` reaches every sample).
    ``results_root``: the suite's results folder, never replaced (``folders.check_destination``).
    The destination is checked before any work, and replaced only when the run succeeded.

    Parameters
    ----------
    path : str or Path
        The EBSD file.
    settings_path : str or Path, optional
        Settings file to use instead of the sidecar.
    out_dir : str or Path, optional
        Results folder; ``results/<sample name>`` if not given.
    progress : callable, optional
        Called with a message at each step.
    defaults : dict, optional
        Settings under the sample's sidecar.
    results_root : str or Path or None
        The suite's results folder.
    bars : callable, optional
        Draws progress bars of the long stages (``progress.terminal_bars``: on a terminal only).
    minerals_dir : str or Path, optional
        A folder of the user's own mineral files (``--minerals DIR``), in place of the settings
        key ``minerals_dir``.
    threads : int, optional
        Threads the run may use, at least 1 (``--threads``, the workflow's ``threads``); by default
        ``threads.default_thread_count()``. The results do not depend on it (threads.py).

    Returns
    -------
    Path
        The results folder written.

    Raises
    ------
    InputError
        If the input, settings or destination are refused.
    ValueError
        If ``threads`` is not a whole number of at least 1.
    """
    with threads_given(threads):
        return _run_sample(path, settings_path, out_dir, progress, defaults, results_root, bars, minerals_dir)


def _run_sample(path: str | Path, settings_path: str | Path | None, out_dir: str | Path | None,
                progress: Progress | None, defaults: dict | None, results_root: str | Path | None,
                bars: BarMaker | None, minerals_dir: str | Path | None) -> Path:
    """The work of :func:`run_sample`, within its threads."""
    from fabric2seis.sample_output import SampleFigures, write_results

    path, log = Path(path), RunLog(progress)
    checked_sample_name(path)
    settings, settings_file = settings_for(path, settings_path, defaults, minerals_dir)
    budget.check_settings(settings, settings_file or "the default settings")
    log.say(f"fabric2seis {__version__}: {path} with settings {settings_file or 'defaults'}, "
            f"on {thread_count()} thread{'s' if thread_count() > 1 else ''}")
    out = Path(out_dir) if out_dir is not None else default_out_dir(path)
    inputs: list[str | Path] = [path, *([settings_file] if settings_file else [])]
    check_destination(out, "sample", inputs, results_root)
    sample = ingest(path, settings, settings_file, log.say)
    with SampleFigures(sample, log) as figures:     # drawn alongside the bootstrap when the run has 2 threads
        fabric, seismic, intervals, summary = analyse_sample(sample, log.say, bars, before_bootstrap=figures.start)
        for note in summary["cautions"]:
            log.say(f"caution: {note}")
        return write_results(out, path, sample, fabric, seismic, summary, log, inputs, results_root, figures)
