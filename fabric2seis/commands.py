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
from pathlib import Path

from fabric2seis.errors import InputError
from fabric2seis.folders import check_destination, folder_written_whole
from fabric2seis.threads import blas_on_one_thread


@blas_on_one_thread()
def run_field(result_dirs: list[str | Path], measurements: str | Path, out_dir: str | Path | None = None,
              fixed: set[str] | None = None, results_root: str | Path | None = "results") -> tuple[Path, list[str]]:
    """``fabric2seis field``: fit every sample to every station; outputs written whole or not at all.

    The destination is checked before any work (``folders.check_destination``): never the results
    root, a folder holding an input, or a folder fabric2seis did not write.

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
    with folder_written_whole(out, "field", inputs, results_root) as tmp:
        for one in fit.stations:
            data_and_predictions(tmp / f"splitting_{one.file_stem}", one)
            misfit_surface(tmp / f"misfit_{one.file_stem}", one)
        predictions = fit.predictions
        predictions.to_csv(tmp / "predictions.csv", index=False)
        fast_direction_rose(tmp / "fast_directions", predictions)
        (tmp / "field_fit.json").write_text(json.dumps(fit.record(), indent=2) + "\n")
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
