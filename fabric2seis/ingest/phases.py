"""Phase mapping (names in the file -> library minerals), phases left out (``drop_phases``) and cleaning of points."""

from __future__ import annotations

from collections.abc import Collection
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from fabric2seis.elastic.minerals import POINT_GROUP_NAMES, Mineral, find_mineral, load_library
from fabric2seis.errors import InputError, nearest
from fabric2seis.ingest.io.record import EBSDData
from fabric2seis.point_groups import point_group

#: quality measure used by ``clean.quality_min`` / ``quality_max`` when ``clean.quality_field`` is not set
DEFAULT_QUALITY = ("ci", "bc", "quality")
#: measures where higher is better (confidence index, band contrast, image quality, band slope) and
#: where lower is better (angular misfits: mean angular deviation of .ctf, fit of .ang; common practice)
HIGHER_IS_BETTER = ("ci", "bc", "iq", "bs")
LOWER_IS_BETTER = ("mad", "fit")

#: why a map point was left out, indexed by ``DroppedPoints.reason``
DROPPED_REASONS = ("not indexed", "below the quality threshold", "in a grain below grains.min_pixels")
NOT_INDEXED, LOW_QUALITY, SMALL_GRAIN = range(3)


@dataclass
class DroppedPoints:
    """Where the map points left out of a sample lie, and why (drawn by the map overview figure).

    Attributes
    ----------
    x, y
        Map coordinates (M,) in the file's length unit.
    reason
        Why each point was left out (M,): an index into ``DROPPED_REASONS``.
    """

    x: np.ndarray
    y: np.ndarray
    reason: np.ndarray

    def plus(self, x: np.ndarray, y: np.ndarray, reason: int) -> DroppedPoints:
        """Return these points and more points left out for one reason.

        Parameters
        ----------
        x, y : numpy.ndarray, shape (K,)
            Map coordinates of the further points.
        reason : int
            Why they were left out, an index into ``DROPPED_REASONS``.

        Returns
        -------
        DroppedPoints
            The M + K points.
        """
        return DroppedPoints(np.concatenate([self.x, x]), np.concatenate([self.y, y]),
                             np.concatenate([self.reason, np.full(len(x), reason, dtype=np.int8)]))


@dataclass
class PointSet:
    """Indexed, cleaned points of named minerals (still in the sample frame).

    ``mineral_index`` points into ``minerals``; the counts say what was dropped and why.

    Attributes
    ----------
    source
        The file read.
    quat
        Orientations (N, 4), orix quaternions, sample frame.
    mineral_index
        Mineral of every point (N,), an index into ``minerals``.
    minerals
        The library minerals present.
    x, y
        Map coordinates (N,) in the file's length unit, or None for grain lists.
    weights
        Weight of every point (N,): the file's weights, else the pixel area, else 1.
    n_read, n_unindexed, n_low_quality
        Points read, dropped as unindexed, and dropped below the quality threshold.
    dropped
        Where the points left out of a map lie and why; None for grain lists.
    left_out
        Points of phases dropped by the settings, after cleaning: phase id -> (number of points,
        their weight in the unit of ``weights``).
    """

    source: str
    quat: np.ndarray
    mineral_index: np.ndarray
    minerals: list[Mineral]
    x: np.ndarray | None
    y: np.ndarray | None
    weights: np.ndarray
    n_read: int
    n_unindexed: int
    n_low_quality: int
    dropped: DroppedPoints | None = None
    left_out: dict[int, tuple[int, float]] = field(default_factory=dict)


def map_phases(data: EBSDData, phases: dict[str, str] | None = None,
               library: dict[str, Mineral] | None = None, settings_file=None,
               skip: Collection[int] = ()) -> dict[int, Mineral]:
    """Library mineral of every phase id that has points.

    By the settings mapping ``phases`` (file name -> library name) first, else by the library's
    names and aliases, case-insensitively. A point group in the file whose Laue class differs
    from the library entry's is an error (EBSD sees the Laue class, Friedel's law).

    Parameters
    ----------
    data : EBSDData
        The file's record.
    phases : dict of str to str, optional
        Settings mapping from phase names in the file to library names.
    library : dict of str to Mineral, optional
        The mineral library; the bundled one if not given.
    settings_file : str or Path, optional
        Where ``phases`` came from, for error messages (the data file if not given).
    skip : collection of int
        Phase ids left out (dropped by the settings): they need no library mineral.

    Returns
    -------
    dict of int to Mineral
        Library mineral by phase id.

    Raises
    ------
    InputError
        If a phase is not a library mineral (or is mapped to one that is not), or its point group
        in the file has another Laue class than the library entry.
    """
    library = load_library() if library is None else library
    by_file_name = {k.lower(): v for k, v in (phases or {}).items()}
    present = sorted(set(np.unique(data.phase_id)) - {-1} - set(skip))
    found = [data.phase_names.get(p, f"phase {p}") for p in present]
    out = {}
    for pid in present:
        name = data.phase_names.get(pid, f"phase {pid}")
        target = by_file_name.get(name.lower(), name)
        try:
            mineral = find_mineral(target, library)
        except InputError:
            hint = nearest(target, library)
            if name.lower() in by_file_name:
                raise InputError(f"settings map phase '{name}' to '{target}', which is not in the library{hint}; "
                                 f"the library has: {', '.join(sorted(library))}", settings_file or data.source,
                                 f"key phases.{name}") from None
            raise InputError(f"phase '{name}' is not a library mineral{hint}; the file has phases "
                             f"{', '.join(repr(f) for f in found)}; map them with the settings key "
                             f"'phases' to library names: {', '.join(sorted(library))}", data.source) from None
        file_group = data.phase_point_groups.get(pid)
        if file_group:
            file_laue = point_group(file_group).laue_name if file_group in POINT_GROUP_NAMES else None
            if file_laue is not None and file_laue != mineral.symmetry.laue_name:
                raise InputError(f"phase '{name}' has point group {file_group} (Laue class {file_laue}) in "
                                 f"the file, but library mineral '{mineral.name}' is {mineral.point_group} "
                                 f"(Laue class {mineral.symmetry.laue_name})", data.source)
        out[pid] = mineral
    return out


def select_points(data: EBSDData, phase_minerals: dict[int, Mineral], quality_min: float | None = None,
                  quality_field: str | None = None, leave_out: Collection[int] = (),
                  quality_max: float | None = None) -> PointSet:
    """Drop unindexed points and points below the quality threshold; attach minerals and weights.

    Points of the phases ``leave_out`` (settings key ``drop_phases``, :func:`phases_to_drop`) are
    left out after the cleaning; their number and weight are kept in ``PointSet.left_out``.

    Parameters
    ----------
    data : EBSDData
        The file's record.
    phase_minerals : dict of int to Mineral
        Library mineral by phase id (:func:`map_phases`).
    quality_min : float, optional
        Smallest quality value kept, in the unit of the quality measure (for a measure where higher
        is better, ``HIGHER_IS_BETTER``, or the CSV's ``quality``).
    quality_max : float, optional
        Largest value kept (for an angular misfit, ``LOWER_IS_BETTER``, or the CSV's ``quality``).
    quality_field : str, optional
        Quality measure to use; the first of ``DEFAULT_QUALITY`` the file has if not given.
    leave_out : collection of int
        Phase ids whose points are left out.

    Returns
    -------
    PointSet
        The points kept, with their minerals and weights, and the counts dropped.

    Raises
    ------
    InputError
        If every point is unindexed, the quality measure is missing, or no point passes the threshold.
    """
    indexed = data.phase_id >= 0
    n_unindexed = int((~indexed).sum())
    if not indexed.any():
        raise InputError(f"all {data.n_points} points are unindexed: nothing to work with", data.source)
    keep = indexed.copy()
    n_low = 0
    thresholds = {"quality_min": quality_min, "quality_max": quality_max}
    if any(v is not None for v in thresholds.values()):
        field = quality_field or next((q for q in DEFAULT_QUALITY if q in data.quality), None)
        if field is None or field not in data.quality:
            have = ", ".join(data.quality) or "none"
            raise InputError(f"a quality threshold is set but the file has no quality measure "
                             f"'{quality_field or ' / '.join(DEFAULT_QUALITY)}' (it has: {have})",
                             data.source, "key clean.quality_field")
        wrong = ("quality_min", LOWER_IS_BETTER, "lower", "quality_max"), ("quality_max", HIGHER_IS_BETTER, "higher",
                                                                             "quality_min")
        for key, measures, better, instead in wrong:
            if thresholds[key] is not None and field in measures:
                raise InputError(f"on '{field}' {better} is better, so clean.{key} would keep the worst points; "
                                 f"use clean.{instead}", data.source, f"key clean.{key}")
        good = np.ones(data.n_points, dtype=bool)
        if quality_min is not None:
            good &= data.quality[field] >= quality_min
        if quality_max is not None:
            good &= data.quality[field] <= quality_max
        n_low = int((keep & ~good).sum())
        keep &= good
        if not keep.any():
            key = "quality_min" if quality_min is not None else "quality_max"
            raise InputError(f"no point passes the quality threshold on '{field}'", data.source, f"key clean.{key}")
    left_out = {}
    for pid in leave_out:
        sel = keep & (data.phase_id == pid)
        w = data.weights[sel] if data.weights is not None else None
        area = data.pixel_area if data.is_map else 1.0
        left_out[int(pid)] = (int(sel.sum()), float(w.sum()) if w is not None else float(sel.sum()) * area)
        keep &= data.phase_id != pid
    minerals: list = []
    index_of: dict[str, int] = {}
    for m in phase_minerals.values():
        if m.name not in index_of:
            index_of[m.name] = len(minerals)
            minerals.append(m)
    lookup = np.full(max(phase_minerals) + 2, -1)
    for pid, m in phase_minerals.items():
        lookup[pid] = index_of[m.name]
    everything = bool(keep.all())

    def kept(a):  # no copy when every point is kept (the common case for clean maps)
        return a if (a is None or everything) else a[keep]

    mineral_index = lookup[kept(data.phase_id)]
    weights = kept(data.weights)
    if weights is None:
        weights = np.full(len(mineral_index), data.pixel_area if data.is_map else 1.0)
    dropped = None
    if data.x is not None and data.y is not None:
        out = ~keep & ~np.isin(data.phase_id, list(left_out))    # a dropped phase is no reason to show
        reason = np.where(indexed[out], LOW_QUALITY, NOT_INDEXED).astype(np.int8)
        dropped = DroppedPoints(data.x[out], data.y[out], reason)
    return PointSet(
        source=data.source, quat=kept(data.quat), mineral_index=mineral_index, minerals=minerals,
        x=kept(data.x), y=kept(data.y), weights=weights, n_read=data.n_points,
        n_unindexed=n_unindexed, n_low_quality=n_low, dropped=dropped, left_out=left_out)


def modal_fractions(mineral_index: np.ndarray, weights: np.ndarray, minerals: list[Mineral],
                    override: dict[str, float] | None = None, source=None,
                    library: dict[str, Mineral] | None = None) -> dict[str, float]:
    """Return the measured area (or weight) fraction of each mineral, or the settings' fractions.

    Parameters
    ----------
    mineral_index : numpy.ndarray of int, shape (N,)
        Mineral of every point or grain, an index into ``minerals``.
    weights : numpy.ndarray, shape (N,)
        Weight (area) of every point or grain.
    minerals : list of Mineral
        The sample's minerals.
    override : dict of str to float, optional
        Fractions from the settings, by mineral name or alias; must name exactly the sample's
        minerals and sum to 1 (within 1e-3).
    source : str or Path, optional
        The settings file, for error messages.
    library : dict of str to Mineral, optional
        Where the names of ``override`` are looked up; the packaged library if not given.

    Returns
    -------
    dict of str to float
        Fraction of each mineral by name, summing to 1.

    Raises
    ------
    InputError
        If ``override`` names a mineral not in the library, does not name exactly the sample's
        minerals, or does not sum to 1.
    """
    measured = np.bincount(mineral_index, weights=weights, minlength=len(minerals))
    measured = measured / measured.sum()
    if not override:
        return {m.name: float(f) for m, f in zip(minerals, measured)}
    given = {}
    for key, value in override.items():
        try:
            given[find_mineral(key, library).name] = float(value)
        except InputError:
            raise InputError(f"modal fraction given for '{key}', which is not a library mineral",
                             source, "key modal_fractions") from None
    names = {m.name for m in minerals}
    extra = set(given) - names
    lacking = names - set(given)
    if extra or lacking:
        raise InputError(f"modal_fractions must name exactly the minerals of the sample "
                         f"({', '.join(sorted(names))})", source, "key modal_fractions")
    if abs(sum(given.values()) - 1.0) > 1e-3:
        raise InputError(f"modal fractions sum to {sum(given.values()):.4f}, not 1 (within 1e-3)",
                         source, "key modal_fractions")
    return {m.name: given[m.name] for m in minerals}


@dataclass
class DroppedPhase:
    """A phase the settings leave out (``drop_phases``): what it was and how much of the sample it made.

    Attributes
    ----------
    name
        The library mineral's name, or the name in the file when it is no library mineral.
    file_phases
        The names in the file of the phases left out under this name.
    phase_ids
        Their phase ids in the file.
    """

    name: str
    file_phases: list[str]
    phase_ids: list[int]


def phases_to_drop(data: EBSDData, names: list[str] | None, phases: dict[str, str] | None = None,
                   library: dict[str, Mineral] | None = None, settings_file=None
                   ) -> tuple[list[DroppedPhase], list[str]]:
    """Find the phases of a file the settings key ``drop_phases`` names.

    A name matches a phase of the file by its name in the file (case-insensitively), or by the
    library mineral the phase stands for (through ``phases`` or its own name). A library mineral
    that this file does not hold is a caution, not an error (one settings file may serve many
    samples); a name that is neither a phase of the file nor a library mineral is an error.

    Parameters
    ----------
    data : EBSDData
        The file's record.
    names : list of str or None
        The settings key ``drop_phases``.
    phases : dict of str to str, optional
        Settings mapping from phase names in the file to library names.
    library : dict of str to Mineral, optional
        The mineral library; the packaged one if not given.
    settings_file : str or Path, optional
        Where the settings came from, for error messages.

    Returns
    -------
    dropped : list of DroppedPhase
        The phases left out, one per name that matched.
    notes : list of str
        Cautions: library minerals named that the file does not hold.

    Raises
    ------
    InputError
        Naming the key (``drop_phases.0``): a name that is neither a phase of the file nor a library
        mineral, or names that would leave out every phase of the file.
    """
    if not names:
        return [], []
    library = load_library() if library is None else library
    by_file_name = {k.lower(): v for k, v in (phases or {}).items()}
    present = sorted(set(np.unique(data.phase_id)) - {-1})
    file_names = {pid: data.phase_names.get(pid, f"phase {pid}") for pid in present}

    def mineral_of(text: str) -> Mineral | None:
        try:
            return find_mineral(text, library)
        except InputError:
            return None

    stands_for = {pid: mineral_of(by_file_name.get(n.lower(), n)) for pid, n in file_names.items()}
    dropped: list = []
    notes: list[str] = []
    taken: set[int] = set()
    for k, name in enumerate(names):
        wanted = " ".join(str(name).lower().split())
        mineral = mineral_of(name)
        ids = [pid for pid, n in file_names.items() if " ".join(n.lower().split()) == wanted
               or (mineral is not None and getattr(stands_for[pid], "name", None) == mineral.name)]
        if ids and set(ids) <= taken:       # named twice (in other words): left out once
            continue
        ids = [pid for pid in ids if pid not in taken]
        if not ids:
            if mineral is None:
                found = ", ".join(repr(n) for n in file_names.values())
                raise InputError(f"'{name}' is neither a phase of {Path(str(data.source)).name} ({found}) nor a "
                                 f"library mineral{nearest(str(name), list(file_names.values()) + list(library))}",
                                 settings_file, f"key drop_phases.{k}")
            notes.append(f"drop_phases names {mineral.name}, which this sample does not hold; nothing left out "
                         "for it")
            continue
        taken.update(ids)
        label = mineral.name if mineral is not None else file_names[ids[0]]
        dropped.append(DroppedPhase(label, [file_names[i] for i in ids], ids))
    if taken and taken == set(present):
        raise InputError(f"drop_phases leaves out every phase of the file ({', '.join(file_names.values())}); "
                         "nothing would be left to work with", settings_file, "key drop_phases")
    return dropped, notes
