"""fabric2seis from Python: read a sample, analyse it, and draw its figures in a notebook.

The same stages ``fabric2seis sample`` runs (``pipeline.ingest``, ``pipeline.analyse_sample``),
without writing a results folder; the figures are the ones of a results folder, returned as
matplotlib Figures instead of written as files::

    import fabric2seis
    result = fabric2seis.analyse("demo_samples/VM04_grain_list.csv")
    result.seismic["avs_max_pct"]           # maximum S-wave anisotropy, percent
    result.tensors_gpa["hill"]              # (6, 6) Voigt stiffness, GPa, structural frame
    fig = fabric2seis.velocity_hemisphere(result, "avs")

The figures of the other commands too: the field comparison (:func:`fit_field`, then
:func:`field_splitting_figure`, :func:`misfit_figure`, :func:`fast_directions_figure`), a stack of
layers (:func:`stack_figure`), a suite of samples (:func:`suite_figure`) and the thin section
(:func:`thin_section`, then :func:`crossed_polars_figure`, :func:`retardation_figure`,
:func:`interference_chart_figure`).

Settings are those of the command: a ``settings`` argument that is None takes the file's sidecar
(same stem, ``.yaml``) or the defaults; a path names a settings file; a dict is merged over the
sidecar or defaults and checked against the same schema.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from fabric2seis.pipeline import Progress, analyse_sample, checked_sample_name, ingest
from fabric2seis.stages import FabricResult, Intervals, Sample, SeismicResult
from fabric2seis.threads import blas_on_one_thread

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

    from fabric2seis.optics.section import SectionResult
    from fabric2seis.waves.field import FieldFit, SampleTensor, StationFit
    from fabric2seis.waves.stack import StackSweep

__all__ = ["Analysis", "read_sample", "analyse", "velocity_figure", "velocity_hemisphere", "pole_figures",
           "pole_figure", "inverse_pole_figures", "fabric_convergence_figure", "map_overview_figure",
           "splitting_figure", "fit_field", "field_splitting_figure", "misfit_figure", "fast_directions_figure",
           "stack_figure", "suite_figure", "thin_section", "crossed_polars_figure", "retardation_figure",
           "interference_chart_figure"]


def _settings(path: Path, settings: str | Path | dict | None) -> tuple[dict, str | None]:
    """The settings of ``path`` as the command would use them, a dict merged over them."""
    from fabric2seis import budget
    from fabric2seis.settings import merge, settings_for, validate

    if isinstance(settings, dict):
        base, source = settings_for(path)
        used = validate(merge(base, settings), "the settings given")
    else:
        used, source = settings_for(path, settings)
    budget.check_settings(used, source or "the default settings")
    return used, source


@blas_on_one_thread()
def read_sample(path: str | Path, settings: str | Path | dict | None = None) -> Sample:
    """Read an EBSD export as ``fabric2seis sample`` does: phases, cleaning, structural frame, grains.

    Parameters
    ----------
    path : str or Path
        The EBSD file (``.ang``, ``.ctf``, ``.h5``, ``.csv``, optionally ``.gz``).
    settings : str, Path, dict or None
        None: the file's sidecar settings or the defaults; a path: a settings file; a dict:
        settings merged over the sidecar or defaults (for example ``{"bootstrap": {"n": 50}}``).

    Returns
    -------
    fabric2seis.stages.Sample
        Clean points in the structural frame, grains of a map, modal fractions.

    Raises
    ------
    fabric2seis.errors.InputError
        If the file or the settings are refused (the message names the file and place).
    """
    path = Path(path)
    checked_sample_name(path)
    used, source = _settings(path, settings)
    return ingest(path, used, source)


@dataclass
class Analysis:
    """A sample analysed: the stages' results and the contents of its ``summary.json``.

    Attributes
    ----------
    sample : fabric2seis.stages.Sample
        The ingested sample.
    fabric_result : fabric2seis.stages.FabricResult
        The fabric stage (indices, convergence, random floor, orientations per mineral).
    seismic_result : fabric2seis.stages.SeismicResult
        The seismic stage (tensors, velocity grid, splitting).
    bootstrap : fabric2seis.stages.Intervals
        The bootstrap stage.
    summary : dict
        What ``summary.json`` holds (numpy numbers not yet turned into plain ones).
    """

    sample: Sample
    fabric_result: FabricResult
    seismic_result: SeismicResult
    bootstrap: Intervals
    summary: dict

    @property
    def name(self) -> str:
        """The sample's name (its file name without the format suffix)."""
        return self.sample.name

    @property
    def tensors_gpa(self) -> dict[str, Any]:
        """The four averages, ``voigt``, ``reuss``, ``hill``, ``geometric``: Voigt stiffness (6, 6), GPa,
        structural frame (numpy arrays, unrounded; ``stiffness.json`` rounds them to 6 decimals)."""
        return dict(self.seismic_result.aggregate.tensors)

    @property
    def average(self) -> str:
        """The average that feeds the seismic outputs (settings key ``averaging``)."""
        return self.seismic_result.aggregate.average

    @property
    def density_kg_m3(self) -> float:
        """Density of the rock, kg/m^3."""
        return float(self.seismic_result.aggregate.density_kg_m3)

    @property
    def fabric_indices(self) -> dict[str, dict]:
        """Per mineral: ``J`` and ``M`` (dimensionless), ``pfJ`` per pole, ``n`` (orientations counted)."""
        return {name: {"J": p.get("J"), "M": p.get("M"), "pfJ": p.get("pfJ"), "n": p.get("n")}
                for name, p in self.summary["phases"].items() if "J" in p}

    @property
    def seismic(self) -> dict:
        """The seismic summary: ``vp_max_km_s``, ``avp_pct``, ``avs_max_pct`` (percent), directions ..."""
        return self.summary["seismic"]

    @property
    def splitting(self) -> dict:
        """``along_z`` (fast polarisation from X, degrees; delay, s per 100 km) and ``field`` (or None)."""
        return self.summary["splitting"]

    @property
    def intervals(self) -> dict:
        """95 % bootstrap intervals ``[low, high]`` by key (``avp_pct``, ``olivine.J`` ...) and their notes;
        empty when ``bootstrap.n`` is 0."""
        return self.summary["uncertainty"]

    @property
    def cautions(self) -> list[str]:
        """What to keep in mind when reading the numbers (recalled constants, estimates outside intervals ...)."""
        return list(self.summary["cautions"])


@blas_on_one_thread()        # the same numbers as `fabric2seis sample` (threads.py)
def analyse(sample_or_path: Sample | str | Path, settings: str | Path | dict | None = None,
            progress: Progress | None = None) -> Analysis:
    """Analyse a sample as ``fabric2seis sample`` does, without writing files.

    Parameters
    ----------
    sample_or_path : Sample, str or Path
        A sample from :func:`read_sample`, or an EBSD file to read first.
    settings : str, Path, dict or None
        For a file: as :func:`read_sample` takes them. For a sample, must be None: its settings
        were fixed when it was read.
    progress : callable, optional
        Called with a message at each step (``print`` shows them).

    Returns
    -------
    Analysis
        Tensors (GPa), density (kg/m^3), fabric indices, seismic summary, splitting and
        bootstrap intervals, with the stages' results behind them.

    Raises
    ------
    fabric2seis.errors.InputError
        If the file or the settings are refused.
    ValueError
        If settings are given with a sample already read.
    """
    if isinstance(sample_or_path, Sample):
        if settings is not None:
            raise ValueError("a sample keeps the settings it was read with: pass settings to read_sample")
        sample = sample_or_path
    else:
        path = Path(sample_or_path)
        checked_sample_name(path)
        used, source = _settings(path, settings)
        sample = ingest(path, used, source, progress)
    fabric, seismic, intervals, summary = analyse_sample(sample, progress)
    return Analysis(sample, fabric, seismic, intervals, summary)


def velocity_figure(result: Analysis, panels=None) -> Figure:
    """The velocity sheet of ``velocities.png``: hemispheres and a table of their extremes.

    Parameters
    ----------
    result : Analysis
        The analysed sample.
    panels : sequence of str, optional
        Names from ``figures.velocities.PANELS``; by default the settings' (``figures.velocities.panels``).

    Returns
    -------
    matplotlib.figure.Figure
        The sheet.
    """
    from fabric2seis.figures.velocities import velocity_sheet
    from fabric2seis.sample_output import velocity_panels

    agg = result.seismic_result.aggregate
    return velocity_sheet(agg.stiffness, agg.density_kg_m3, sample_name=result.name, average=agg.average,
                          n_grains=int(result.summary["n_grains"]),
                          panels=velocity_panels(result.sample.settings) if panels is None else panels,
                          grid=result.seismic_result.grid)


def velocity_hemisphere(result: Analysis, panel: str = "vp", ax: Axes | None = None) -> Figure:
    """One hemisphere of the velocity sheet (``"vp"``, ``"avs"``, ``"delay"``, ``"vs1"`` ...).

    Parameters
    ----------
    result : Analysis
        The analysed sample.
    panel : str
        A name from ``figures.velocities.PANELS``.
    ax : matplotlib.axes.Axes, optional
        Where to draw; a new figure if not given.

    Returns
    -------
    matplotlib.figure.Figure
        The figure holding the panel.
    """
    from fabric2seis.figures.velocities import velocity_hemisphere as draw

    agg = result.seismic_result.aggregate
    return draw(agg.stiffness, agg.density_kg_m3, panel, grid=result.seismic_result.grid, ax=ax,
                heading=f"{result.name}: {result.summary['n_grains']} grains, {agg.average} average, "
                        f"density {agg.density_kg_m3:.0f} kg/m³")


def pole_figures(result: Analysis) -> Figure:
    """The pole figures of ``pole_figures.png``: a band per mineral, a panel per pole, side tables.

    Parameters
    ----------
    result : Analysis
        The analysed sample.

    Returns
    -------
    matplotlib.figure.Figure
        The figure.
    """
    from fabric2seis.figures.poles import pole_figure_sheet
    from fabric2seis.sample_output import fabric_figure_options

    phases, options, hemisphere = fabric_figure_options(result.fabric_result, result.sample)
    return pole_figure_sheet(result.name, phases, hemisphere=hemisphere, **options)


def pole_figure(result: Analysis, mineral: str, pole: str, ax: Axes | None = None) -> Figure:
    """One pole figure panel: the density of one pole of one mineral, in m.u.d.

    Parameters
    ----------
    result : Analysis
        The analysed sample.
    mineral : str
        A mineral of the sample (a key of ``result.fabric_indices``).
    pole : str
        A pole label, ``"[100]"`` (direction) or ``"(001)"`` (plane normal).
    ax : matplotlib.axes.Axes, optional
        Where to draw; a new figure if not given.

    Returns
    -------
    matplotlib.figure.Figure
        The figure holding the panel.

    Raises
    ------
    ValueError
        If the sample has no fabric of ``mineral``.
    """
    from fabric2seis.figures.poles import pole_figure_panel
    from fabric2seis.sample_output import fabric_figure_options

    phases = result.fabric_result.phases
    if mineral not in phases:
        raise ValueError(f"sample {result.name} has no fabric of {mineral!r}; it has {', '.join(phases) or 'none'}")
    _, options, hemisphere = fabric_figure_options(result.fabric_result, result.sample)
    o = phases[mineral].orientations
    return pole_figure_panel(o.mineral, o.quat, o.weights, pole, options["halfwidth_deg"], hemisphere=hemisphere,
                             levels=options["levels"], ax=ax,
                             heading=f"{result.name}: {options['weighting']} weighting, kernel halfwidth "
                                     f"{options['halfwidth_deg']:g}°")


def inverse_pole_figures(result: Analysis) -> Figure:
    """The inverse pole figures of ``inverse_pole_figures.png`` (X, Y, Z in crystal axes).

    Parameters
    ----------
    result : Analysis
        The analysed sample.

    Returns
    -------
    matplotlib.figure.Figure
        The figure.
    """
    from fabric2seis.figures.poles import inverse_pole_figure_sheet
    from fabric2seis.sample_output import fabric_figure_options

    phases, options, _ = fabric_figure_options(result.fabric_result, result.sample)
    return inverse_pole_figure_sheet(result.name, phases, **options)


def fabric_convergence_figure(result: Analysis) -> Figure:
    """The figure of ``fabric_convergence.png``: J, M and the largest pole density on nested subsets.

    Parameters
    ----------
    result : Analysis
        The analysed sample.

    Returns
    -------
    matplotlib.figure.Figure
        The figure.
    """
    from fabric2seis.figures.poles import convergence_sheet

    return convergence_sheet(result.name, {n: p.convergence for n, p in result.fabric_result.phases.items()})


def map_overview_figure(result: Analysis | Sample, **options) -> Figure:
    """The map overview of ``map_overview.png`` (maps only).

    Parameters
    ----------
    result : Analysis or Sample
        The analysed or only read sample.
    **options
        ``mineral``, ``direction``, ``max_cells`` (``figures.map_overview.map_overview``).

    Returns
    -------
    matplotlib.figure.Figure
        The figure.

    Raises
    ------
    ValueError
        If the sample is a grain list (it has no map).
    """
    from fabric2seis.figures.map_overview import map_overview

    return map_overview(result.sample if isinstance(result, Analysis) else result, **options)


def splitting_figure(result: Analysis) -> Figure:
    """The figure of ``splitting_vs_backazimuth.png``: the placed layer's splitting against back-azimuth.

    Parameters
    ----------
    result : Analysis
        The analysed sample; its settings must place the fabric in the ground (``field``).

    Returns
    -------
    matplotlib.figure.Figure
        The figure.

    Raises
    ------
    ValueError
        If the settings have no ``field`` key.
    """
    from fabric2seis.figures.splitting import splitting_sheet

    seis = result.seismic_result
    if seis.sweep is None or seis.field is None:
        raise ValueError(f"sample {result.name} is not placed in the ground: its settings have no 'field' key")
    return splitting_sheet(result.name, seis.sweep, seis.field)


# --- the field comparison (`fabric2seis field`) -----------------------------------------------------

def _sample_tensor(result: Analysis | str | Path) -> SampleTensor:
    """What the field fit needs of a sample: read from a results folder, or taken from an analysis
    with the numbers rounded as ``stiffness.json`` and ``summary.json`` hold them, so that the fit
    is the command's."""
    import json

    import numpy as np

    from fabric2seis.stages import plain
    from fabric2seis.waves.field import SampleTensor, read_result

    if not isinstance(result, Analysis):
        return read_result(result)
    agg = result.seismic_result.aggregate
    interval = json.loads(json.dumps(result.summary, default=plain))["uncertainty"].get("delay_s_per_100km")
    return SampleTensor(result.name, np.round(agg.tensors[agg.average], 6), round(agg.density_kg_m3, 3),
                        result.sample.settings.get("field"), tuple(interval) if interval else None)


@blas_on_one_thread()        # the same numbers as `fabric2seis field` (threads.py)
def fit_field(results: list[Analysis | str | Path], measurements_csv: str | Path,
              fixed: set[str] | None = None) -> FieldFit:
    """Fit every sample to every station's splitting measurements, as ``fabric2seis field`` does,
    without writing files.

    Parameters
    ----------
    results : list of Analysis, str or Path
        Analysed samples (:func:`analyse`) or results folders of ``fabric2seis sample``.
    measurements_csv : str or Path
        The measurements table (station, back-azimuth, fast azimuth in degrees, delay in s ...).
    fixed : set of str, optional
        Parameters held at each sample's own ``field`` settings: ``"thickness"``, ``"azimuth"``,
        ``"foliation"`` (``--fix``).

    Returns
    -------
    fabric2seis.waves.field.FieldFit
        One fit per sample and station (``.stations``); ``.fits`` holds the models of
        ``field_fit.json`` (thickness in km, lineation azimuth in degrees, misfit), ``.predictions``
        the table of ``predictions.csv``.

    Raises
    ------
    fabric2seis.errors.InputError
        If a results folder or the measurements are refused (the message names the file and place).
    ValueError
        If ``fixed`` names an unknown parameter, or a sample to hold has no ``field`` settings.
    """
    from fabric2seis.waves import field

    if not results:
        raise ValueError("fit_field needs at least one analysed sample or results folder")
    data = field.read_measurements(measurements_csv)
    return field.fit_field([_sample_tensor(r) for r in results], data, set(fixed or ()), str(measurements_csv))


def _station_fit(fit: FieldFit | StationFit, station: str | None, sample: str | None) -> StationFit:
    """The one fit of ``fit`` at ``station`` of ``sample`` (either may be left out when it is the only one)."""
    from fabric2seis.waves.field import StationFit

    stations = [fit] if isinstance(fit, StationFit) else fit.stations
    found = [one for one in stations
             if (station is None or one.station == station) and (sample is None or one.sample == sample)]
    if len(found) != 1:
        which = ", ".join(f"{one.sample} at {one.station}" for one in stations)
        raise ValueError(f"{len(found) or 'no'} fits for station={station!r}, sample={sample!r}: "
                         f"name one of {which}")
    return found[0]


def field_splitting_figure(fit: FieldFit | StationFit, station: str | None = None,
                           sample: str | None = None) -> Figure:
    """The figure of ``splitting_<sample>_<station>.png``: measured and predicted splitting against back-azimuth.

    Parameters
    ----------
    fit : FieldFit or StationFit
        From :func:`fit_field`, or one of its ``.stations``.
    station, sample : str, optional
        Which fit of a ``FieldFit`` to draw; either may be left out when it leaves one fit.

    Returns
    -------
    matplotlib.figure.Figure
        The figure: fast azimuth (degrees) and delay (s) panels, and the legend row.

    Raises
    ------
    ValueError
        If ``station`` and ``sample`` do not name one fit.
    """
    from fabric2seis.figures.field import data_and_predictions_sheet

    return data_and_predictions_sheet(_station_fit(fit, station, sample))


def misfit_figure(fit: FieldFit | StationFit, station: str | None = None, sample: str | None = None) -> Figure:
    """The figure of ``misfit_<sample>_<station>.png``: chi-square over thickness and lineation trend.

    Parameters
    ----------
    fit : FieldFit or StationFit
        From :func:`fit_field`, or one of its ``.stations``.
    station, sample : str, optional
        Which fit of a ``FieldFit`` to draw; either may be left out when it leaves one fit.

    Returns
    -------
    matplotlib.figure.Figure
        The figure: the whole searched range and a close-up (one curve when a single parameter
        was searched), and the legend row.

    Raises
    ------
    ValueError
        If ``station`` and ``sample`` do not name one fit.
    """
    from fabric2seis.figures.field import misfit_sheet

    return misfit_sheet(_station_fit(fit, station, sample))


def fast_directions_figure(fit: FieldFit) -> Figure:
    """The figure of ``fast_directions.png``: measured and predicted fast azimuths in map view, a
    panel per station.

    Parameters
    ----------
    fit : FieldFit
        From :func:`fit_field`.

    Returns
    -------
    matplotlib.figure.Figure
        The figure.
    """
    from fabric2seis.figures.field import fast_direction_sheet

    return fast_direction_sheet(fit.predictions)


# --- a stack of layers (`fabric2seis field --stack`) --------------------------------------------------

@blas_on_one_thread()        # the same numbers as `fabric2seis field --stack` (threads.py)
def stack_figure(stack: StackSweep | str | Path, measurements_csv: str | Path | None = None) -> Figure:
    """The figure of ``stack_splitting.png``: apparent splitting of a stack of layers against back-azimuth.

    Parameters
    ----------
    stack : StackSweep, str or Path
        A stack file (YAML, layers bottom to top), swept here as ``fabric2seis field --stack``
        does, or a sweep already made (``fabric2seis.waves.stack.sweep_stack``).
    measurements_csv : str or Path, optional
        Measurements drawn over the predictions (with a stack file only).

    Returns
    -------
    matplotlib.figure.Figure
        The figure: apparent fast azimuth (degrees) and delay (s) panels, and the legend row.

    Raises
    ------
    fabric2seis.errors.InputError
        If the stack file, a results folder it names or the measurements are refused.
    ValueError
        If measurements are given with a sweep already made.
    """
    from fabric2seis.figures.stack import stack_sheet
    from fabric2seis.waves.field import read_measurements
    from fabric2seis.waves.stack import StackSweep, read_stack, sweep_stack

    if isinstance(stack, StackSweep):
        if measurements_csv is not None:
            raise ValueError("a sweep keeps the measurements it was made with: pass the stack file instead")
        return stack_sheet(stack)
    data = read_measurements(measurements_csv) if measurements_csv is not None else None
    return stack_sheet(sweep_stack(read_stack(stack), data, str(stack),
                                   None if measurements_csv is None else str(measurements_csv)))


# --- a suite of samples --------------------------------------------------------------------------------

def suite_figure(results: list[Analysis | str | Path]) -> Figure:
    """The suite comparison figure of the workflow (``suite_comparison.png``): fabric strength against
    AVs, delay per 100 km, and the fabric shape of each sample's main phase.

    Parameters
    ----------
    results : list of Analysis, str or Path
        Analysed samples (:func:`analyse`), results folders of ``fabric2seis sample``, or their
        ``summary.json`` files; numbered in this order.

    Returns
    -------
    matplotlib.figure.Figure
        The figure: three panels and the key.

    Raises
    ------
    fabric2seis.errors.InputError
        If a results folder has no readable ``summary.json``.
    """
    import json

    import pandas as pd

    from fabric2seis.errors import InputError
    from fabric2seis.figures.suite import suite_sheet
    from fabric2seis.stages import plain
    from fabric2seis.workflow.suite import flatten

    rows = []
    for r in results:
        if isinstance(r, Analysis):
            summary = json.loads(json.dumps(r.summary, default=plain))     # as summary.json holds it
        else:
            path = Path(r) / "summary.json" if Path(r).is_dir() else Path(r)
            try:
                summary = json.loads(path.read_text())
            except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
                raise InputError(f"not a fabric2seis summary ({exc.__class__.__name__})", path) from None
        rows.append({"sample": summary["sample"], "status": summary.get("status", "ok"), **flatten(summary)})
    return suite_sheet(pd.DataFrame(rows))


# --- the thin section (`fabric2seis optics`) -------------------------------------------------------------

@blas_on_one_thread()        # the same numbers as `fabric2seis optics` (threads.py)
def thin_section(sample_or_path: Sample | str | Path, settings: str | Path | dict | None = None) -> SectionResult:
    """The optics of every point of a sample's thin section, as ``fabric2seis optics`` computes them,
    without writing files.

    Parameters
    ----------
    sample_or_path : Sample, str or Path
        A sample from :func:`read_sample`, or an EBSD file to read first (a single crystal is a
        section too).
    settings : str, Path, dict or None
        For a file: as :func:`read_sample` takes them (the ``optics`` key: thickness in
        micrometres, view, stage turns, plate). For a sample, must be None.

    Returns
    -------
    fabric2seis.optics.section.SectionResult
        Refractive indices, birefringence, retardation (nm) and fast vibration direction (degrees)
        of every point (``.optics``), and the map coordinates of a map.

    Raises
    ------
    fabric2seis.errors.InputError
        If the file or the settings are refused.
    ValueError
        If settings are given with a sample already read.
    """
    from fabric2seis.optics.section import optics_settings, section_stage

    if isinstance(sample_or_path, Sample):
        if settings is not None:
            raise ValueError("a sample keeps the settings it was read with: pass settings to read_sample")
        sample = sample_or_path
    else:
        path = Path(sample_or_path)
        checked_sample_name(path)
        used, source = _settings(path, settings)
        sample = ingest(path, used, source, fabric=False)
    return section_stage(sample, optics_settings(sample.settings, sample.settings_file))


def _map_of(section: SectionResult, what: str) -> SectionResult:
    if not section.is_map:
        raise ValueError(f"sample {section.name} is not a map (a grain list): it has no {what}")
    return section


def crossed_polars_figure(section: SectionResult, plate: bool = False) -> Figure:
    """The figure of ``crossed_polars.png`` (or ``crossed_polars_plate.png``): the predicted view
    between crossed polars at each stage turn of the settings.

    Parameters
    ----------
    section : SectionResult
        From :func:`thin_section` (a map).
    plate : bool
        With the 530 nm accessory plate.

    Returns
    -------
    matplotlib.figure.Figure
        The figure: one panel per stage turn (``optics.stage_deg``, degrees).

    Raises
    ------
    ValueError
        If the sample is a grain list (it has no map).
    """
    from fabric2seis.figures.optics import crossed_polar_sheet

    return crossed_polar_sheet(_map_of(section, "image"), plate)


def retardation_figure(section: SectionResult, ax: Axes | None = None) -> Figure:
    """The retardation map of ``retardation_map.png`` (nm), with its colour bar.

    Parameters
    ----------
    section : SectionResult
        From :func:`thin_section` (a map).
    ax : matplotlib.axes.Axes, optional
        Where to draw; a new figure (with the note on the view at its foot) if not given.

    Returns
    -------
    matplotlib.figure.Figure
        The figure holding the map.

    Raises
    ------
    ValueError
        If the sample is a grain list (it has no map).
    """
    from fabric2seis.figures.optics import retardation_panel, retardation_sheet

    _map_of(section, "retardation map")
    if ax is None:
        return retardation_sheet(section)
    retardation_panel(section, ax)
    fig = ax.get_figure(root=True)
    assert fig is not None
    return fig


def interference_chart_figure(section: SectionResult) -> Figure:
    """The figure of ``interference_chart.png``: the interference colours of the section's thickness,
    each phase's range of retardation (nm) beneath.

    Parameters
    ----------
    section : SectionResult
        From :func:`thin_section` (a map or a grain list).

    Returns
    -------
    matplotlib.figure.Figure
        The figure: the colour strips and the phases' ranges.
    """
    from fabric2seis.figures.optics import interference_chart_sheet
    from fabric2seis.optics.section import phase_statistics

    return interference_chart_sheet(section, phase_statistics(section))
