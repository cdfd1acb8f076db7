"""The commands that write files: the computing stages run, then their results are written whole.

``run_field`` (``fabric2seis field``) and ``run_stack`` (``fabric2seis field --stack``) check the
user's input and the destination before any work (bad input is ``InputError``), call the science
modules (``waves.field.fit_field``, ``waves.stack.sweep_stack``), which compute and return
dataclasses, and write their numbers and figures into a folder written whole or not at all
(``folders.folder_written_whole``). The figures only draw what the stages computed. The CLI and
the workflow script call these functions and nothing else.
"""

from __future__ import annotations

import json
from functools import partial
from pathlib import Path

from fabric2seis.errors import InputError
from fabric2seis.folders import check_destination, folder_written_whole
from fabric2seis.progress import BarMaker, stage_bar
from fabric2seis.second_process import shared_among_processes
from fabric2seis.threads import blas_on_one_thread, thread_count, threads_given


@blas_on_one_thread()
def run_field(result_dirs: list[str | Path], measurements: str | Path, out_dir: str | Path | None = None,
              fixed: set[str] | None = None, results_root: str | Path | None = "results",
              threads: int | None = None, bars: BarMaker | None = None) -> tuple[Path, list[str]]:
    """``fabric2seis field``: fit every sample to every station; outputs written whole or not at all.

    The destination is checked before any work (``folders.check_destination``): never the results
    root, a folder holding an input, or a folder fabric2seis did not write. The figures, two per
    sample and station and most of the command's time, are drawn by as many processes as it may
    use threads (``second_process.shared_among_processes``).

    Parameters
    ----------
    result_dirs : list of path
        Results folders of ``fabric2seis sample``.
    measurements : path
        The measurements table (``waves.field.read_measurements``).
    out_dir : path, optional
        Destination (default ``results/field``).
    fixed : set of str, optional
        Parameters held at each sample's own field settings: ``thickness``, ``azimuth``, ``foliation``.
    results_root : path, optional
        The suite's results root, never replaced.
    threads : int, optional
        Threads (here: processes drawing figures) it may use; by default ``threads.thread_count()``.
    bars : callable, optional
        Draws a progress bar of the figures (``progress.terminal_bars``: on a terminal only).

    Returns
    -------
    out : Path
        The folder written: ``field_fit.json``, ``predictions.csv``, and per sample and station
        ``splitting_<sample>_<station>`` and ``misfit_<sample>_<station>`` figures, plus
        ``fast_directions``.
    cautions : list of str
        The assumptions of the prediction, then one line per poor fit.
    """
    from fabric2seis.figures.field import data_and_predictions, fast_direction_rose, misfit_surface
    from fabric2seis.waves import field

    fixed = set(fixed or ())
    unknown = fixed - field.FIXABLE
    if unknown:
        raise InputError(f"--fix takes thickness, azimuth or foliation, not {', '.join(sorted(unknown))}")
    out = Path(out_dir) if out_dir else Path("results") / "field"
    inputs = [*result_dirs, measurements]
    check_destination(out, "field", inputs, results_root)
    data = field.read_measurements(measurements)
    samples = [field.read_result(d) for d in result_dirs]
    for s in samples:
        if fixed and not s.field:
            raise InputError("--fix needs the sample's own field settings, which it has none of", s.name, "key field")
    fit = field.fit_field(samples, data, fixed, str(measurements))
    with threads_given(threads), folder_written_whole(out, "field", inputs, results_root) as tmp:
        predictions = fit.predictions
        predictions.to_csv(tmp / "predictions.csv", index=False)
        (tmp / "field_fit.json").write_text(json.dumps(fit.record(), indent=2) + "\n")
        # the longest first (misfit surfaces, then data and predictions; about 1.2 and 0.6 s each)
        figures = [partial(misfit_surface, tmp / f"misfit_{one.file_stem}", one) for one in fit.stations]
        figures += [partial(data_and_predictions, tmp / f"splitting_{one.file_stem}", one) for one in fit.stations]
        figures.append(partial(fast_direction_rose, tmp / "fast_directions", predictions))
        with stage_bar(bars, f"drawing {len(figures)} figures") as done:
            shared_among_processes(figures, thread_count(), done)
    return out, fit.cautions


@blas_on_one_thread()
def run_stack(stack_file: str | Path, measurements: str | Path | None = None,
              out_dir: str | Path | None = None) -> tuple[Path, list[str]]:
    """``fabric2seis field --stack``: apparent splitting of several layers, written whole or not at all.

    Parameters
    ----------
    stack_file : path
        The stack file (``waves.stack.read_stack``).
    measurements : path, optional
        A measurements table drawn over the predictions and compared with them.
    out_dir : path, optional
        Destination (default ``results/stack``; not ``results/field``, where the one-layer fit lives).

    Returns
    -------
    out : Path
        The folder written: ``stack_splitting.csv``, ``stack.json``, the ``stack_splitting`` figure
        and, with measurements, ``stack_predictions.csv``.
    cautions : list of str
        What a user must be told about the predictions.
    """
    from fabric2seis.figures.stack import stack_figure
    from fabric2seis.waves.field import read_measurements
    from fabric2seis.waves.stack import read_stack, sweep_stack

    out = Path(out_dir) if out_dir else Path("results") / "stack"
    stack = read_stack(stack_file)
    inputs = [stack_file, *([measurements] if measurements else []),
              *(layer["result"] for layer in stack["layers"] if layer.get("kind") == "sample")]
    check_destination(out, "stack", inputs)
    data = read_measurements(measurements) if measurements else None
    sweep = sweep_stack(stack, data, str(stack_file), None if measurements is None else str(measurements))
    with folder_written_whole(out, "stack", inputs) as tmp:
        sweep.table.to_csv(tmp / "stack_splitting.csv", index=False)
        if sweep.predictions is not None:
            sweep.predictions.to_csv(tmp / "stack_predictions.csv", index=False)
        stack_figure(tmp / "stack_splitting", sweep)
        (tmp / "stack.json").write_text(json.dumps(sweep.record(), indent=2) + "\n")
    return out, sweep.cautions


@blas_on_one_thread()
def run_combine(result_dirs: list[str | Path], out_dir: str | Path | None = None, name: str | None = None,
                results_root: str | Path | None = "results") -> tuple[Path, list[str]]:
    """``fabric2seis combine``: the results of a map from those of its pieces, written whole or not at all.

    The pieces' weighted sums (``weighted_sums.json``) are checked and added (``pieces``); the
    averages, velocities and splitting of the whole follow from them as for a sample.

    Parameters
    ----------
    result_dirs : list of path
        Results folders of ``fabric2seis sample`` (or of an earlier combination), one per piece.
    out_dir : path, optional
        Destination (default ``results/combined``).
    name : str, optional
        Name of the combined map (default: the destination's name).
    results_root : path, optional
        The suite's results root, never replaced.

    Returns
    -------
    out : Path
        The folder written: ``summary.json``, ``stiffness.json``, ``stiffness_<average>.txt``,
        ``velocities.csv``, ``weighted_sums.json``, the velocity sheet (``velocities`` .png and .pdf)
        and, with ``field`` settings, the back-azimuth sweep (``splitting_vs_backazimuth``).
    cautions : list of str
        What is combined and what is not, and the pieces' own cautions.

    Raises
    ------
    InputError
        If a folder is given twice, a piece lacks its sums, or the pieces were not processed alike
        (``pieces.combine_records``).
    """
    from fabric2seis import pieces
    from fabric2seis.figures.velocities import velocity_figure
    from fabric2seis.pipeline import RunLog, seismic_of_aggregate
    from fabric2seis.sample_output import stiffness_record, velocity_panels, write_json, write_sweep
    from fabric2seis.tables import write_tensor_texts

    out = Path(out_dir) if out_dir else Path("results") / "combined"
    check_destination(out, "combined", result_dirs, results_root)
    seen: dict[Path, str | Path] = {}
    for folder in result_dirs:
        if Path(folder).resolve() in seen:
            raise InputError(f"given twice (also as {seen[Path(folder).resolve()]})", folder)
        seen[Path(folder).resolve()] = folder
    records = [pieces.read_sums(folder) for folder in result_dirs]
    combined = pieces.combine_records(records, name or out.name)
    agg = pieces.aggregate_of_record(combined)
    log = RunLog()
    log.say(f"combining {len(records)} results folders: {', '.join(str(f) for f in result_dirs)}")
    seismic = seismic_of_aggregate(agg, combined["settings"], combined["weighting"], combined["twins"],
                                   records[0]["file"], log.say)
    summary = pieces.combined_summary(combined, seismic, [str(f) for f in result_dirs])
    with folder_written_whole(out, "combined", result_dirs, results_root) as tmp:
        write_json(tmp / "summary.json", summary)
        stiffness = stiffness_record(agg)
        write_json(tmp / "stiffness.json", stiffness)
        write_tensor_texts(stiffness, tmp, combined["sample"])
        seismic.grid.write_csv(tmp / "velocities.csv")
        write_json(tmp / pieces.SUMS_FILE, combined)
        log.wrote(tmp)
        if seismic.sweep is not None and seismic.field is not None:
            write_sweep(tmp, combined["sample"], seismic, log)
        # the velocity sheet of the whole, without a grain count (grains cut by the pieces' edges)
        velocity_figure(tmp / "velocities", combined["sample"], agg.stiffness, agg.density_kg_m3, agg.average,
                        None, panels=velocity_panels(combined["settings"]), grid=seismic.grid)
        log.wrote(tmp)
        log.say(f"done, results in {out}")
        (tmp / "run.log").write_text("\n".join(log.lines) + "\n")
    return out, summary["cautions"]
