"""fabric2seis from Python: read a sample, analyse it, and draw its figures in a notebook.

The same stages ``fabric2seis sample`` runs (``pipeline.ingest``, ``pipeline.analyse_sample``),
without writing a results folder; the figures are the ones of a results folder, returned as
matplotlib Figures instead of written as files::

    import fabric2seis
    result = fabric2seis.analyse("demo_samples/VM04_grain_list.csv")
    result.seismic["avs_max_pct"]           # maximum S-wave anisotropy, percent
    result.tensors_gpa["hill"]              # (6, 6) Voigt stiffness, GPa, structural frame
    fig = fabric2seis.velocity_hemisphere(result, "avs")

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

__all__ = ["Analysis", "read_sample", "analyse", "velocity_figure", "velocity_hemisphere", "pole_figures",
           "pole_figure", "inverse_pole_figures", "fabric_convergence_figure", "map_overview_figure",
           "splitting_figure"]


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
