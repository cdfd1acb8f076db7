"""The typed results each stage of a sample hands to the next (read -> fabric -> seismic -> intervals).

Every stage function in ``pipeline`` takes the previous stage's dataclass and returns its own;
``sample_output`` turns them into ``summary.json`` and the files of a results folder.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from fabric2seis.orientations import PhaseOrientations

if TYPE_CHECKING:
    from fabric2seis.ingest.grains import Grains
    from fabric2seis.ingest.phases import PointSet
    from fabric2seis.waves.seismic import Aggregate, VelocityGrid

__all__ = ["Sample", "PhaseOrientations", "PhaseFabricResult", "FabricResult", "SeismicResult", "Intervals"]


@dataclass
class Sample:
    """A sample after ingestion: clean points of named minerals in the structural frame.

    Attributes
    ----------
    name, settings, settings_file
        The sample's name (its file name's stem), its settings as used, and the file they came
        from (None: defaults only).
    points
        Every kept point (pixels of a map, rows of a grain list): orientations (N, 4), minerals,
        weights, coordinates.
    grains
        The reconstructed grains of a map; None for a grain list.
    fractions, measured_fractions
        Volume fraction of each mineral used for the tensors, and as measured (area or weight).
    grid
        ``"square"``, ``"hex"`` or None (grain list).
    n_small_grain_points
        Points dropped with grains smaller than ``grains.min_pixels``.
    step
        Map step (spacing of neighbouring points along x) in the file's length unit; None for a
        grain list.
    dropped_phases
        Phases left out by the settings (``drop_phases``), by name: ``file_phases``, ``n_points``,
        ``former_fraction`` and its ``fraction_source``.
    phase_notes
        Cautions about the phases (a mineral of ``drop_phases`` the sample does not hold).
    user_minerals
        The user's own mineral entries (``minerals_dir``): ``name``, ``file``, ``replaces``.
    """

    name: str
    settings: dict
    settings_file: str | None
    points: PointSet
    grains: Grains | None
    fractions: dict[str, float]
    measured_fractions: dict[str, float]
    grid: str | None
    n_small_grain_points: int
    step: float | None = None
    dropped_phases: dict = field(default_factory=dict)
    phase_notes: list = field(default_factory=list)
    user_minerals: list = field(default_factory=list)


@dataclass
class PhaseFabricResult:
    """The fabric of one phase: its indices, convergence, random floor and the orientations used.

    Attributes
    ----------
    indices
        ``fabric.PhaseFabric``: J, M, pfJ and the eigenanalysis of each pole.
    convergence
        How the indices settle as orientations are added.
    random_floor
        The indices of random orientations of as many grains.
    orientations
        The orientations (N, 4) and weights (N,) the indices were computed from.
    """

    indices: Any                      # fabric.PhaseFabric: J, M, pfJ, eigenanalysis per pole
    convergence: dict
    random_floor: dict
    orientations: PhaseOrientations


@dataclass
class FabricResult:
    """The fabric stage: per mineral with at least two orientations, in the settings' weighting.

    Attributes
    ----------
    phases
        Fabric of each mineral, by name.
    weighting
        How orientations were weighted (by the settings, e.g. per grain or per area).
    halfwidth_deg
        Halfwidth of the ODF kernel, degrees.
    """

    phases: dict[str, PhaseFabricResult]
    weighting: str
    halfwidth_deg: float


@dataclass
class SeismicResult:
    """The seismic stage: aggregate tensors, velocity grid, summary and splitting.

    Attributes
    ----------
    aggregate
        The four averages (6, 6) in GPa and the density in kg m^-3.
    grid
        Velocities (km/s) over the lower hemisphere.
    summary
        The seismic part of ``summary.json``.
    along_z
        Splitting of a shear wave along Z (:func:`waves.seismic.splitting_along`).
    field
        With ``field`` settings, the splitting in the ground; else None.
    sweep
        With ``field`` settings, its back-azimuth sweep; else None.
    weighting
        How orientations were weighted.
    """

    aggregate: Aggregate
    grid: VelocityGrid
    summary: dict
    along_z: dict
    field: dict | None
    sweep: dict | None
    weighting: str


@dataclass
class Intervals:
    """95 % bootstrap intervals and what comes with them (empty when ``bootstrap.n`` is 0).

    ``values`` holds, by key (``avp_pct``, ``olivine.J`` ...), ``[low, high]`` and the notes and
    settings that ``summary.json`` shows under ``uncertainty``.
    """

    values: dict = field(default_factory=dict)

    def __bool__(self) -> bool:
        return bool(self.values)


def plain(value: Any) -> Any:
    """Turn numpy scalars and arrays into plain Python numbers and lists (a ``default`` for ``json.dumps``).

    Parameters
    ----------
    value : object
        The value json cannot serialise itself.

    Returns
    -------
    object
        A Python number or (nested) list.

    Raises
    ------
    TypeError
        For anything that is not a numpy scalar or array.
    """
    if isinstance(value, np.generic):
        return value.item()
    if isinstance(value, np.ndarray):
        return value.tolist()
    raise TypeError(type(value))
