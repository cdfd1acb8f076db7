"""A sample's outputs: ``summary.json`` assembled from the stages' results, and the results folder.

``sample_summary`` is the one place that decides what ``summary.json`` holds (CONTRACT.md keys and
the project's own); ``write_results`` writes every file and figure of a results folder into a
temporary folder that ``folders.folder_written_whole`` swaps into place whole. Nothing here
computes physics: the figures draw what the stages computed.
"""

from __future__ import annotations

import hashlib
import json
import sys
import time
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any, Callable, Iterator

import numpy as np

from fabric2seis import __version__
from fabric2seis.folders import folder_written_whole
from fabric2seis.pieces import SUMS_FILE, sums_record
from fabric2seis.stages import FabricResult, Intervals, Sample, SeismicResult, plain

if TYPE_CHECKING:
    from fabric2seis.pipeline import RunLog
    from fabric2seis.second_process import SecondProcess
    from fabric2seis.waves.seismic import Aggregate


def ingestion_summary(sample: Sample) -> dict:
    """Summarise counts, phases and what was dropped: the part of ``summary.json`` known after ingestion.

    Parameters
    ----------
    sample : Sample
        The ingested sample.

    Returns
    -------
    dict
        Sample name, point and grain counts, input kind, grid, per-phase fractions and counts,
        points dropped and where the fractions came from.
    """
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
        "dropped_phases": sample.dropped_phases,
        "mineral_library": mineral_library_record(sample),
    }


def sample_summary(sample: Sample, fabric: FabricResult, seismic: SeismicResult, intervals: Intervals) -> dict:
    """Assemble the contents of ``summary.json``: every stage's numbers, their intervals and the cautions.

    Parameters
    ----------
    sample : Sample
        The ingested sample.
    fabric : FabricResult
        The fabric stage.
    seismic : SeismicResult
        The seismic stage.
    intervals : Intervals
        The bootstrap intervals (may be empty).

    Returns
    -------
    dict
        The summary, ready for JSON.
    """
    from fabric2seis.cautions import sample_cautions
    from fabric2seis.elastic.conditions import assumptions
    from fabric2seis.fabric import indistinguishable_from_random

    report = ingestion_summary(sample)
    for name, phase in fabric.phases.items():
        report["phases"][name].update(phase.indices.as_summary())
        report["phases"][name]["j_levelled"] = phase.convergence["j_levelled"]
        report["phases"][name]["random_floor"] = phase.random_floor
        report["phases"][name]["indistinguishable_from_random"] = indistinguishable_from_random(
            phase.indices.j, phase.indices.m, phase.random_floor)
    agg = seismic.aggregate
    conditions = sample.settings["conditions"]
    report["density_kg_m3"] = round(agg.density_kg_m3, 3)
    report["conditions"] = dict(conditions)
    report["conditions"]["assumptions"] = [note for m in sample.points.minerals for note in assumptions(
        m, conditions["pressure_gpa"], conditions["temperature_c"])]
    report["seismic"] = seismic.summary
    report["splitting"] = {"along_z": seismic.along_z, "field": seismic.field}
    report["uncertainty"] = dict(intervals.values)
    outside: list[str] = []
    if intervals:
        outside = _estimates_outside(report)
    report["cautions"] = sample_cautions(sample.points.minerals, report["conditions"]["assumptions"], outside)
    report["cautions"] += sample.phase_notes
    return report


def _estimates_outside(report: dict) -> list[str]:
    """Keys whose estimate lies outside its interval; also flags anisotropy that random
    aggregates of as many grains reach (``uncertainty.random_aggregate``)."""
    from fabric2seis.uncertainty import estimates_outside

    uncertainty = report["uncertainty"]
    estimates = {k: report["seismic"].get(k) for k in ("avp_pct", "avs_max_pct", "vp_max_km_s")}
    estimates["delay_s_per_100km"] = report["splitting"]["along_z"]["delay_s_per_100km"]
    for name, phase in report["phases"].items():
        estimates.update({f"{name}.J": phase.get("J"), f"{name}.M": phase.get("M")})
    floor = uncertainty["random_aggregate"]
    floor["anisotropy_indistinguishable_from_random"] = bool(
        report["seismic"]["avs_max_pct"] <= floor["avs_max_pct_95"][1]
        and report["seismic"]["avp_pct"] <= floor["avp_pct_95"][1])
    outside = estimates_outside(uncertainty, estimates)
    if outside:
        uncertainty["estimate_outside_interval"] = ", ".join(outside)
    return outside


def mineral_library_record(sample: Sample) -> dict:
    """Where the sample's minerals came from: the user's folder, its entries, and each mineral used.

    Parameters
    ----------
    sample : Sample
        The ingested sample.

    Returns
    -------
    dict
        ``folder`` (``minerals_dir``, or None), ``user_entries`` (every entry of the folder with the
        packaged file it ``replaces``, or None) and ``used``: per mineral of the sample, its
        ``origin`` (``packaged`` or ``user``), ``file`` and ``source``.
    """
    from fabric2seis.elastic.minerals import mineral_origin

    return {"folder": sample.settings.get("minerals_dir"), "user_entries": sample.user_minerals,
            "used": {m.name: {"origin": mineral_origin(m), "file": m.file, "source": m.source}
                     for m in sample.points.minerals}}


def provenance(path: Path, sample: Sample) -> dict:
    """Record the input checksum, settings as used, mineral sources and versions.

    Parameters
    ----------
    path : Path
        The EBSD file.
    sample : Sample
        The ingested sample.

    Returns
    -------
    dict
        The contents of ``provenance.json``.
    """
    from importlib.metadata import version

    import pandas
    import scipy

    digest = hashlib.sha256(path.read_bytes()).hexdigest()
    return {
        "input": str(path), "input_sha256": digest,
        "settings_file": sample.settings_file, "settings": sample.settings,
        "mineral_library": mineral_library_record(sample),
        "minerals": {m.name: {"source": m.source, "from_memory": list(m.from_memory), "file": m.file}
                     for m in sample.points.minerals},
        "versions": {"fabric2seis": __version__, "orix": version("orix"), "numpy": np.__version__,
                     "scipy": scipy.__version__, "pandas": pandas.__version__,
                     "python": sys.version.split()[0]},
    }


def write_json(path: Path, data: Any) -> None:
    """Write ``data`` as indented JSON, numpy numbers and arrays as plain ones.

    Parameters
    ----------
    path : Path
        File to write.
    data : object
        Anything ``json`` serialises, with numpy scalars and arrays allowed.
    """
    path.write_text(json.dumps(data, indent=2, sort_keys=False, default=plain) + "\n")


def fabric_figure_options(fabric: FabricResult, sample: Sample | None = None) -> tuple[list[tuple], dict, str]:
    """What the pole figures and inverse pole figures of a sample draw, from its fabric stage and settings.

    Parameters
    ----------
    fabric : FabricResult
        The fabric stage.
    sample : Sample, optional
        The ingested sample: its settings (``figures.poles``, ``figures.pole_hemisphere``,
        ``figures.pole_levels``) and its counts of grains and points per mineral. Without it, the
        defaults and the number of orientations.

    Returns
    -------
    phases : list of tuple
        Per mineral: (mineral, quaternions (N, 4), weights (N,), pole labels).
    options : dict
        Keyword arguments both figures take: ``halfwidth_deg``, ``weighting``, ``levels``,
        ``noun`` and, for a map, ``grain_counts`` and ``point_counts``.
    hemisphere : str
        Half of the sphere the pole figures show (``"lower"`` or ``"upper"``).
    """
    from fabric2seis.fabric.poles import figure_poles

    chosen = ((sample.settings if sample is not None else {}).get("figures") or {})
    phases = [(p.orientations.mineral, p.orientations.quat, p.orientations.weights,
               figure_poles(p.orientations.mineral, chosen.get("poles"))) for p in fabric.phases.values()]
    options: dict = {"halfwidth_deg": fabric.halfwidth_deg, "weighting": fabric.weighting,
                     "levels": chosen.get("pole_levels"), "noun": "grains"}
    if sample is not None and sample.grains is not None:
        names = [m.name for m in sample.points.minerals]
        points = np.bincount(sample.points.mineral_index, minlength=len(names))
        grains = np.bincount(sample.grains.mineral_index, minlength=len(names))
        options.update(noun="points" if fabric.weighting == "area" else "grains",
                       grain_counts=dict(zip(names, grains.tolist())), point_counts=dict(zip(names, points.tolist())))
    return phases, options, chosen.get("pole_hemisphere", "lower")


def velocity_panels(settings: dict) -> tuple[str, ...]:
    """The panels of the velocity sheet the settings ask for (``figures.velocities.panels``).

    Parameters
    ----------
    settings : dict
        The sample's settings.

    Returns
    -------
    tuple of str
        Names from ``figures.velocities.PANELS``.
    """
    from fabric2seis.figures.velocities import DEFAULT_PANELS

    return tuple((settings.get("figures") or {}).get("velocities", {}).get("panels", DEFAULT_PANELS))


def stiffness_record(agg: Aggregate) -> dict:
    """The contents of ``stiffness.json``: the four averages (GPa, rounded to 1e-6) and the density.

    Parameters
    ----------
    agg : fabric2seis.waves.seismic.Aggregate
        The aggregate of a sample or of a combination of pieces.

    Returns
    -------
    dict
        Ready for JSON.
    """
    return {**{k: np.round(v, 6).tolist() for k, v in agg.tensors.items()},
            "density_kg_m3": round(agg.density_kg_m3, 3), "units": "GPa, Voigt order 11 22 33 23 13 12",
            "frame": "structural (X lineation, Z foliation normal)", "used_for_velocities": agg.average}


def write_results(out: Path, path: Path, sample: Sample, fabric: FabricResult, seismic: SeismicResult,
                  summary: dict, log: RunLog, inputs: list, results_root: str | Path | None,
                  figures: SampleFigures | None = None) -> Path:
    """Write every file of a sample's results folder, whole or not at all: the tables, then the figures.

    Parameters
    ----------
    out : Path
        The results folder.
    path : Path
        The EBSD file (for its checksum).
    sample, fabric, seismic
        The stages' results.
    summary : dict
        The contents of ``summary.json`` (:func:`sample_summary`).
    log : RunLog
        The run's log, written as ``run.log``.
    inputs : list
        Files the run read (the destination may not hold them).
    results_root : str or Path or None
        The suite's results folder, never replaced.
    figures : SampleFigures, optional
        The figures, perhaps already being drawn in a second process; drawn here, after the
        tables, when not given.

    Returns
    -------
    Path
        ``out``.

    Raises
    ------
    InputError
        If the destination is refused (:func:`folders.folder_written_whole`).
    """
    from fabric2seis.ingest.grains import grains_table
    from fabric2seis.tables import write_tensor_texts

    agg = seismic.aggregate
    with folder_written_whole(out, "sample", inputs, results_root) as tmp:
        log.say("writing tables")
        write_json(tmp / "summary.json", summary)
        log.wrote(tmp)              # run.log: each file written, with the seconds it took
        stiffness = stiffness_record(agg)
        write_json(tmp / "stiffness.json", stiffness)
        write_tensor_texts(stiffness, tmp, sample.name)     # the same numbers as plain 6x6 text
        log.wrote(tmp)
        record = provenance(path, sample)
        write_json(tmp / SUMS_FILE, sums_record(sample, seismic, summary, record["input_sha256"]))
        log.wrote(tmp)
        seismic.grid.write_csv(tmp / "velocities.csv")
        log.wrote(tmp)
        if seismic.sweep is not None and seismic.field is not None:
            write_sweep_table(tmp, seismic)
            log.wrote(tmp)
        write_json(tmp / "provenance.json", record)
        log.wrote(tmp)
        if sample.grains is not None:
            grains_table(sample.grains, sample.points.minerals).to_csv(tmp / "grains.csv", index=False)
            log.wrote(tmp)
        (figures or SampleFigures(sample, log)).write_into(tmp, fabric, seismic)
        log.say(f"done, results in {out}")
        (tmp / "run.log").write_text("\n".join(log.lines) + "\n")
    return out


def load_figure_libraries() -> None:
    """Import the figure modules and the parts of orix and matplotlib they use, in this process.

    A process that runs several samples one after the other (a batch job) calls this once: each
    sample's second process, forked from it, then starts with them loaded instead of importing
    them again (orix takes seconds). A single sample's process does not: it never needs orix.
    """
    import orix.plot  # noqa: F401  (orix's plotting and colour keys, with its quaternions and vectors)

    import fabric2seis.figures.map_overview  # noqa: F401
    import fabric2seis.figures.poles  # noqa: F401
    import fabric2seis.figures.splitting  # noqa: F401
    import fabric2seis.figures.velocities  # noqa: F401


@dataclass(frozen=True)
class FigureTask:
    """One figure of a sample's results folder: its file stem, ``draw(folder)`` writing its files,
    and whether drawing it needs orix (its plotting and colour keys: seconds to import)."""

    name: str
    draw: Callable[[Path], object]
    needs_orix: bool = False


def figure_tasks(sample: Sample, fabric: FabricResult, seismic: SeismicResult) -> list[FigureTask]:
    """Every figure of a sample's results folder.

    The longest first (measured at 10^5 and 10^6 pixels: pole figures, inverse pole figures, map
    overview, velocity sheet, convergence, splitting), so that two processes taking them in this
    order (:class:`SampleFigures`) finish close together. The figure modules are imported when a
    figure is drawn, not here: with a second process, its imports (matplotlib, orix) then overlap
    this process's bootstrap.

    Parameters
    ----------
    sample, fabric, seismic
        The stages' results (the bootstrap is not needed).

    Returns
    -------
    list of FigureTask
        Each figure's file stem, the function that draws it into a folder, and whether it needs orix.
    """
    name, agg = sample.name, seismic.aggregate
    tasks: list[FigureTask] = []
    if fabric.phases:
        phases, options, hemisphere = fabric_figure_options(fabric, sample)

        def pole_figures(folder: Path) -> None:
            from fabric2seis.figures.poles import pole_figures
            pole_figures(folder / "pole_figures", name, phases, hemisphere=hemisphere, **options)

        def inverse_pole_figures(folder: Path) -> None:
            from fabric2seis.figures.poles import inverse_pole_figures
            inverse_pole_figures(folder / "inverse_pole_figures", name, phases, **options)

        # pole figures: densities and the primitive circle, no orix (tests/test_startup.py draws them)
        tasks += [FigureTask("pole_figures", pole_figures),
                  FigureTask("inverse_pole_figures", inverse_pole_figures, True)]

    def overview(folder: Path) -> None:
        from fabric2seis.figures.map_overview import map_overview_figure
        map_overview_figure(folder / "map_overview", sample)        # maps only

    tasks.append(FigureTask("map_overview", overview, True))
    n_grains = int(sample.grains.n_grains) if sample.grains is not None else int(len(sample.points.quat))

    def velocities(folder: Path) -> None:
        from fabric2seis.figures.velocities import velocity_figure
        velocity_figure(folder / "velocities", name, agg.stiffness, agg.density_kg_m3, agg.average, n_grains,
                        panels=velocity_panels(sample.settings), grid=seismic.grid)

    tasks.append(FigureTask("velocities", velocities))
    if fabric.phases:
        def convergence(folder: Path) -> None:
            from fabric2seis.figures.poles import convergence_figure
            convergence_figure(folder / "fabric_convergence", name,
                               {m: p.convergence for m, p in fabric.phases.items()})

        tasks.append(FigureTask("fabric_convergence", convergence))
    sweep, field = seismic.sweep, seismic.field
    if sweep is not None and field is not None:
        def splitting(folder: Path) -> None:
            from fabric2seis.figures.splitting import splitting_figure
            splitting_figure(folder / "splitting_vs_backazimuth", name, sweep, field)

        tasks.append(FigureTask("splitting_vs_backazimuth", splitting))
    return tasks


def draw_sample_figures(folder: Path, sample: Sample, fabric: FabricResult, seismic: SeismicResult,
                        log: RunLog) -> None:
    """Draw every figure of a sample's results folder into ``folder``, logging each file written.

    Parameters
    ----------
    folder : Path
        Where the figures go.
    sample, fabric, seismic
        The stages' results (the bootstrap is not needed).
    log : RunLog
        Logs each figure with the seconds it took.
    """
    log.say("drawing figures")
    for task in figure_tasks(sample, fabric, seismic):
        task.draw(folder)
        log.wrote(folder)


class SampleFigures:
    """A sample's figures: drawn by a second process while the bootstrap runs and by this one after it.

    :meth:`start` (called once the seismic stage is done) forks when the run may use two threads
    (``second_process.can_fork``). Both processes then take figures from queues (:func:`figure_tasks`,
    longest first, one byte per figure in a pipe, so that each is taken once): the second process
    from the start, drawing into a scratch folder in the system's temporary space, first the
    figures that need orix (a queue of their own), then the others; this one once its own work is
    done (:meth:`write_into`), drawing straight into the results folder, only figures without orix,
    so that this process never imports it. :meth:`write_into` then waits for the second process
    and moves its figures in. When nothing was started, :meth:`write_into` draws every figure
    here. Either way the same
    code draws the same figures, the same bytes. The second process counts as one of the run's
    threads: until it is done this process may use one thread fewer (``threads.threads_given``).
    Use as a context manager: leaving it stops a second process still drawing and removes the
    scratch folder.

    Parameters
    ----------
    sample : Sample
        The ingested sample.
    log : RunLog
        The run's log; the second process's lines join it in time order, marked ``figures:``.
    """

    def __init__(self, sample: Sample, log: RunLog) -> None:
        import contextlib

        self.sample, self.log = sample, log
        self._job: SecondProcess[list[str]] | None = None
        self._queues: list[int] = []                     # read ends of the pipes of figure numbers (orix, other)
        self._tasks: list[FigureTask] = []               # figure_tasks, made once for both processes
        self._scratch: Path | None = None
        self._fewer_threads = contextlib.ExitStack()     # this process's share while the second one draws

    def start(self, fabric: FabricResult, seismic: SeismicResult) -> None:
        """Begin drawing in a second process if the run may use one (else do nothing yet).

        Parameters
        ----------
        fabric, seismic
            The stages' results.
        """
        import os
        import tempfile

        from fabric2seis.second_process import SecondProcess, can_fork
        from fabric2seis.threads import thread_count, threads_given

        if self._job is not None or not can_fork():
            return
        tasks = self._tasks = figure_tasks(self.sample, fabric, seismic)
        if len(tasks) > 255:
            return
        scratch = self._scratch = Path(tempfile.mkdtemp(prefix="fabric2seis-figures-"))
        for with_orix in (True, False):
            reader, writer = os.pipe()
            # a few bytes: never more than the pipe holds; closed, an empty queue then reads as the end
            os.write(writer, bytes(k for k, task in enumerate(tasks) if task.needs_orix == with_orix))
            os.close(writer)
            self._queues.append(reader)
        queues, log = list(self._queues), self.log

        def draw() -> list[str]:
            child = type(log)()
            child.started = log.started
            with threads_given(1):              # the second process is one of the run's threads
                for queue in queues:
                    for k in _taken(queue):
                        tasks[k].draw(scratch)
                        child.wrote(scratch)
            return child.lines

        threads = thread_count()
        self.log.say(f"drawing figures in a second process, alongside the bootstrap on "
                     f"{threads - 1} thread{'s' if threads > 2 else ''}")
        self._job = SecondProcess(draw, fork=True)
        self._fewer_threads.enter_context(threads_given(threads - 1))

    def write_into(self, folder: Path, fabric: FabricResult, seismic: SeismicResult) -> None:
        """Put every figure into ``folder``: draw those still in the queue, then move in the others.

        Parameters
        ----------
        folder : Path
            The results folder being written.
        fabric, seismic
            The stages' results.

        Raises
        ------
        Exception
            What drawing raised, in either process.
        """
        import shutil

        if self._job is None:
            draw_sample_figures(folder, self.sample, fabric, seismic, self.log)
            return
        assert self._scratch is not None and self._queues
        for k in _taken(self._queues[1]):                # the figures without orix
            self._tasks[k].draw(folder)
            self.log.wrote(folder)
        waited = time.perf_counter()
        lines = self._job.result()
        self._job = None
        self._fewer_threads.close()
        moved = sorted(p.name for p in self._scratch.iterdir())
        for name in moved:
            shutil.move(str(self._scratch / name), str(folder / name))
        self.log.written.update(moved)
        marked = [f"{line[:12]}figures: {line[12:]}" for line in lines]
        self.log.lines = sorted(self.log.lines + marked, key=lambda line: float(line.split()[0]))
        self.log.say(f"figures of the second process in place ({len(moved)} files; "
                     f"waited {time.perf_counter() - waited:.2f} s for them)")

    def close(self) -> None:
        """Stop a second process still drawing and remove its scratch folder."""
        import os
        import shutil

        if self._job is not None:
            self._job.stop()
            self._job = None
        self._fewer_threads.close()
        for queue in self._queues:
            os.close(queue)
        self._queues = []
        if self._scratch is not None:
            shutil.rmtree(self._scratch, ignore_errors=True)
            self._scratch = None

    def __enter__(self) -> SampleFigures:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def _taken(queue: int) -> Iterator[int]:
    """Figure numbers taken one at a time from the pipe ``queue`` until it is empty (a one-byte read is atomic)."""
    import os

    while True:
        taken = os.read(queue, 1)
        if not taken:
            return
        yield taken[0]


def write_sweep_table(folder: Path, seismic: SeismicResult) -> None:
    """The splitting of the placed layer against back-azimuth, as ``splitting_vs_backazimuth.csv``."""
    import pandas as pd

    sweep, field = seismic.sweep, seismic.field
    assert sweep is not None and field is not None
    pd.DataFrame({"back_azimuth_deg": sweep["back_azimuth_deg"], "fast_azimuth_deg": sweep["fast_azimuth_deg"].round(3),
                  "delay_s": sweep["delay_s"].round(5), "incidence_deg": field["sweep_incidence_deg"]}
                 ).to_csv(folder / "splitting_vs_backazimuth.csv", index=False)


def write_sweep(folder: Path, sample_name: str, seismic: SeismicResult, log: RunLog) -> None:
    """The splitting of the placed layer against back-azimuth: table and figure (``fabric2seis combine``)."""
    from fabric2seis.figures.splitting import splitting_figure

    assert seismic.sweep is not None and seismic.field is not None
    write_sweep_table(folder, seismic)
    log.wrote(folder)
    splitting_figure(folder / "splitting_vs_backazimuth", sample_name, seismic.sweep, seismic.field)
    log.wrote(folder)
