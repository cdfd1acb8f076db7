"""The predicted crossed-polar view of a sample's thin section: settings, per-point optics, outputs.

``run_optics`` is what ``fabric2seis optics`` and the workflow call. It reads the sample the way
``fabric2seis sample`` does (``pipeline.ingest``: same phases, cleaning and small-grain removal),
solves the indicatrix of every point for light normal to the section (``indicatrix``), and
writes the results folder whole or not at all (``folders.folder_written_whole``, kind
``optics``): crossed-polar images at the chosen stage turns, with and without the accessory
plate, a retardation map, an interference-colour chart with each phase's range, and the
birefringence statistics of each phase (``birefringence.csv``, ``optics_summary.json``).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from fabric2seis.elastic.minerals import Mineral
from fabric2seis.errors import InputError
from fabric2seis.optics.colour import ORDER_NM, PLATE_NM, WAVELENGTHS_NM, order_of
from fabric2seis.optics.indicatrix import SectionOptics, polariser_directions, section_optics, view_vector
from fabric2seis.stages import Sample
from fabric2seis.threads import blas_on_one_thread

#: the statistics of ``birefringence.csv``, in its column order; units in the names (birefringence,
#: refractive indices: dimensionless)
STATISTICS_COLUMNS = (
    "phase", "n_points", "thickness_um", "birefringence_min", "birefringence_p05", "birefringence_median",
    "birefringence_mean", "birefringence_p95", "birefringence_max", "birefringence_possible_max",
    "retardation_median_nm", "retardation_p95_nm", "retardation_max_nm", "retardation_possible_max_nm",
    "highest_order", "extinction_median_deg", "n_alpha", "n_beta", "n_gamma", "optic_sign", "constants_recalled")
#: the views along which the map itself is the section
_MAP_VIEWS = ("map_normal", "+z", "-z")


@dataclass(frozen=True)
class OpticsSettings:
    """The sample's ``optics`` settings.

    Attributes
    ----------
    thickness_um
        Section thickness, micrometres.
    view
        ``"map_normal"``, a signed sample axis, or three numbers (sample coordinates): the direction
        the observer looks along.
    stage_deg
        Stage turns of the images, degrees anticlockwise.
    plate
        ``"none"``, ``"first_order"`` or ``"both"``: images without, with, or without and with the plate.
    measured
        Microscope observations to estimate the thickness from (:func:`thickness_estimates`).
    """

    thickness_um: float
    view: str | tuple[float, ...]
    stage_deg: tuple[float, ...]
    plate: str
    measured: tuple[dict, ...] = ()

    @property
    def plates(self) -> tuple[bool, ...]:
        """Which images to draw: False without the plate, True with it."""
        return {"none": (False,), "first_order": (True,), "both": (False, True)}[self.plate]

    @property
    def view_text(self) -> str:
        """The view in words, for figures and the summary."""
        if self.view == "map_normal":
            return "map normal (+z)"
        if isinstance(self.view, str):
            return f"sample {self.view}"
        return "sample [" + ", ".join(f"{v:g}" for v in self.view) + "]"


def optics_settings(settings: dict, source: str | None = None) -> OpticsSettings:
    """Read the ``optics`` block of validated sample settings.

    Parameters
    ----------
    settings : dict
        The sample's settings (schema-checked).
    source : str, optional
        The settings file, for error messages.

    Returns
    -------
    OpticsSettings
        Thickness, view, stage turns and plate.

    Raises
    ------
    InputError
        If the view is a zero vector (key ``optics.view``).
    """
    block = settings.get("optics") or {}
    view = block.get("view", "map_normal")
    if not isinstance(view, str):
        view = tuple(float(v) for v in view)
    try:
        view_vector(view)
    except ValueError as exc:
        raise InputError(str(exc), source, "key optics.view") from None
    return OpticsSettings(thickness_um=float(block.get("thickness_um", 30.0)), view=view,
                          stage_deg=tuple(float(a) for a in block.get("stage_deg", (0.0, 22.5, 45.0))),
                          plate=str(block.get("plate", "both")),
                          measured=tuple(dict(item) for item in block.get("measured") or ()))


#: an estimate further than this from the ``thickness_um`` setting is a caution (relative)
THICKNESS_DISAGREEMENT = 0.15


def thickness_estimates(result: SectionResult, source: str | None = None) -> list[dict]:
    """The section's thickness from each of the ``optics.measured`` observations.

    ``{phase, highest_retardation_nm}``: the highest colour of a phase is shown by its point of
    largest birefringence in this section (:func:`thickness.thickness_from_highest_colour`).
    ``{x, y, retardation_nm}`` or ``{x, y, order}``: one grain at a map position (file's units), the
    point nearest to it, which must lie within one step; its birefringence from its orientation.

    Parameters
    ----------
    result : SectionResult
        The section's optics (birefringence does not depend on the thickness assumed).
    source : str, optional
        The settings file, for error messages.

    Returns
    -------
    list of dict
        One entry per observation: the observation, the birefringence used, the point used, and
        ``thickness_um`` (or ``thickness_range_um`` for an order), micrometres.

    Raises
    ------
    InputError
        If an observation names a phase the sample lacks or without optical constants, a position
        on a grain list or off the map, or a point viewed down an optic axis (key
        ``optics.measured[k]``).
    """
    from fabric2seis.optics import thickness

    out = []
    names = [m.name for m in result.minerals]
    biref = result.optics.birefringence
    for k, item in enumerate(result.settings.measured):
        key = f"key optics.measured[{k}]"
        entry: dict = {"measurement": dict(item)}
        if "phase" in item:
            phase = item["phase"]
            if phase not in names or result.minerals[names.index(phase)].optics is None:
                raise InputError(f"the sample has no phase '{phase}' with optical constants "
                                 f"(it has: {', '.join(n for n, m in zip(names, result.minerals) if m.optics)})",
                                 source, key)
            d = biref[result.mineral_index == names.index(phase)]
            try:
                entry["thickness_um"] = thickness.thickness_from_highest_colour(item["highest_retardation_nm"], d)
            except ValueError as exc:
                raise InputError(str(exc), source, key) from None
            entry.update(phase=phase, birefringence=float(np.max(d)),
                         basis="the phase's largest birefringence in this section")
        else:
            if not result.is_map:
                raise InputError("a grain list has no map positions: give {phase, highest_retardation_nm} instead",
                                 source, key)
            assert result.x is not None and result.y is not None and result.step is not None
            distance = np.hypot(result.x - item["x"], result.y - item["y"])
            j = int(np.argmin(distance))
            if distance[j] > result.step:
                raise InputError(f"no point within one step ({result.step:g}) of x {item['x']:g}, y {item['y']:g}",
                                 source, key)
            mineral = result.minerals[int(result.mineral_index[j])]
            d_point = float(biref[j])
            if mineral.optics is None or not np.isfinite(d_point):
                raise InputError(f"the point at x {result.x[j]:g}, y {result.y[j]:g} is {mineral.name}, which has no "
                                 "optical constants", source, key)
            if d_point < 1e-3 * mineral.optics.max_birefringence:
                raise InputError(f"the {mineral.name} point at x {result.x[j]:g}, y {result.y[j]:g} is viewed almost "
                                 f"down an optic axis (birefringence {d_point:.2g}); choose a brighter grain",
                                 source, key)
            entry.update(phase=mineral.name, point={"x": float(result.x[j]), "y": float(result.y[j])},
                         birefringence=d_point, basis="the orientation of the point nearest the position")
            if "order" in item:
                low, high = thickness.thickness_from_order(item["order"], d_point)
                entry["thickness_range_um"] = [round(low, 3), round(high, 3)]
            else:
                entry["thickness_um"] = thickness.thickness_from_retardation(item["retardation_nm"], d_point)
        if "thickness_um" in entry:
            entry["thickness_um"] = round(entry["thickness_um"], 3)
        entry["birefringence"] = round(entry["birefringence"], 6)
        out.append(entry)
    return out


def thickness_cautions(estimates: list[dict], thickness_um: float) -> list[str]:
    """Cautions for estimates that disagree with the thickness the images assume."""
    notes = []
    for k, e in enumerate(estimates):
        low, high = e.get("thickness_range_um") or (e["thickness_um"], e["thickness_um"])
        if low > thickness_um * (1 + THICKNESS_DISAGREEMENT) or high < thickness_um * (1 - THICKNESS_DISAGREEMENT):
            told = f"{e['thickness_um']:g} um" if "thickness_um" in e else f"{low:g} to {high:g} um"
            notes.append(f"optics.measured[{k}] gives a section {told} thick, but the images assume "
                         f"thickness_um {thickness_um:g} um: set thickness_um to the estimate if you trust it")
    return notes


@dataclass
class SectionResult:
    """Every point's optics in one section of a sample.

    Attributes
    ----------
    name
        The sample's name.
    settings
        The optics settings used.
    polariser, analyser, view
        Unit vectors in sample coordinates: polariser (east, image right), analyser (north, image
        up) and the direction the observer looks along.
    minerals, mineral_index
        The sample's minerals and each point's index into them.
    optics
        Indices, birefringence, retardation and vibration directions of every point (NaN for
        minerals without optical constants).
    x, y, grid, step
        Map coordinates, grid type and step of a map (file's length unit); None for a grain list.
    """

    name: str
    settings: OpticsSettings
    polariser: np.ndarray
    analyser: np.ndarray
    view: np.ndarray
    minerals: list[Mineral]
    mineral_index: np.ndarray
    optics: SectionOptics
    x: np.ndarray | None
    y: np.ndarray | None
    grid: str | None
    step: float | None

    @property
    def is_map(self) -> bool:
        """True when the points have map coordinates (an image can be drawn)."""
        return self.x is not None and self.y is not None and self.grid is not None and self.step is not None

    @property
    def without_constants(self) -> list[str]:
        """Minerals of the sample that have no optical constants in the library."""
        return [m.name for m in self.minerals if m.optics is None]


def section_stage(sample: Sample, opt: OpticsSettings) -> SectionResult:
    """Solve the indicatrix of every point of a sample for light normal to the section.

    Orientations are in the structural frame (``pipeline.ingest``); the polariser and analyser,
    fixed in sample coordinates by the view, are carried into that frame with the sample's
    ``frame`` settings.

    Parameters
    ----------
    sample : Sample
        The ingested sample.
    opt : OpticsSettings
        Thickness, view, stage turns and plate.

    Returns
    -------
    SectionResult
        The optics of every point.
    """
    from fabric2seis.ingest import frames

    polariser, analyser = polariser_directions(opt.view)
    f = frames.structural_matrix(sample.settings["frame"], sample.settings_file)
    p = sample.points
    n = len(p.quat)
    n_fast, n_slow, fast_deg = np.full(n, np.nan), np.full(n, np.nan), np.full(n, np.nan)
    for k, mineral in enumerate(p.minerals):
        sel = p.mineral_index == k
        if mineral.optics is None or not sel.any():
            continue
        part = section_optics(mineral.optics.impermeability, p.quat[sel], f @ polariser, f @ analyser,
                              opt.thickness_um)
        n_fast[sel], n_slow[sel], fast_deg[sel] = part.n_fast, part.n_slow, part.fast_vibration_deg
    return SectionResult(name=sample.name, settings=opt, polariser=polariser, analyser=analyser,
                         view=view_vector(opt.view), minerals=list(p.minerals), mineral_index=p.mineral_index,
                         optics=SectionOptics(n_fast, n_slow, fast_deg, opt.thickness_um),
                         x=p.x, y=p.y, grid=sample.grid, step=sample.step)


def phase_statistics(result: SectionResult) -> list[dict]:
    """Birefringence and retardation of each phase with optical constants, over its points.

    Each point counts once (a pixel of a map, a row of a grain list), unweighted.

    Parameters
    ----------
    result : SectionResult
        The section's optics.

    Returns
    -------
    list of dict
        One row per phase, keys ``STATISTICS_COLUMNS``; birefringence and indices dimensionless,
        retardation in nm, thickness in micrometres, extinction angle in degrees.
    """
    rows = []
    t = result.settings.thickness_um
    for k, m in enumerate(result.minerals):
        sel = result.mineral_index == k
        if m.optics is None or not sel.any():
            continue
        d = result.optics.birefringence[sel]
        r = result.optics.retardation_nm[sel]
        q05, q50, q95 = np.percentile(d, [5, 50, 95])
        o = m.optics
        rows.append({
            "phase": m.name, "n_points": int(sel.sum()), "thickness_um": t,
            "birefringence_min": round(float(d.min()), 6), "birefringence_p05": round(float(q05), 6),
            "birefringence_median": round(float(q50), 6), "birefringence_mean": round(float(d.mean()), 6),
            "birefringence_p95": round(float(q95), 6), "birefringence_max": round(float(d.max()), 6),
            "birefringence_possible_max": round(o.max_birefringence, 6),
            "retardation_median_nm": round(float(np.median(r)), 2),
            "retardation_p95_nm": round(float(np.percentile(r, 95)), 2),
            "retardation_max_nm": round(float(r.max()), 2),
            "retardation_possible_max_nm": round(o.max_birefringence * t * 1000.0, 2),
            "highest_order": int(order_of(r.max())),
            "extinction_median_deg": round(float(np.median(result.optics.extinction_deg[sel])), 2),
            "n_alpha": o.n_alpha, "n_beta": o.n_beta, "n_gamma": o.n_gamma, "optic_sign": o.optic_sign or "",
            "constants_recalled": o.recalled})
    return rows


def optics_summary(result: SectionResult, statistics: list[dict], files: list[str],
                   estimates: list[dict] | None = None) -> dict:
    """The contents of ``optics_summary.json``: settings, conventions, per-phase statistics, cautions.

    Parameters
    ----------
    result : SectionResult
        The section's optics.
    statistics : list of dict
        :func:`phase_statistics`.
    files : list of str
        The files of the results folder.
    estimates : list of dict, optional
        :func:`thickness_estimates`.

    Returns
    -------
    dict
        Ready for JSON.
    """
    import colour

    opt = result.settings
    cautions = []
    recalled = [m.name for m in result.minerals if m.optics is not None and m.optics.recalled]
    if recalled:
        cautions.append(f"optical constants recalled without the handbook at hand: {', '.join(recalled)} "
                        "('fabric2seis minerals NAME' gives the source)")
    if result.without_constants:
        cautions.append(f"no optical constants in the library for {', '.join(result.without_constants)}: "
                        "drawn as no data, no statistics")
    if not result.is_map:
        cautions.append("a grain list has no map coordinates: no image can be drawn; statistics and chart only")
    elif isinstance(opt.view, str) and opt.view in _MAP_VIEWS:
        pass
    else:
        cautions.append("the view is not the map normal: the images place each point's colour on the map "
                        "grid, but the section they show is normal to the view, not the map")
    return {
        "sample": result.name,
        "n_points": int(len(result.mineral_index)),
        "input_kind": "map" if result.is_map else "grain list",
        "thickness_um": opt.thickness_um,
        "view": {"setting": opt.view, "vector_sample": np.round(result.view, 6).tolist(),
                 "meaning": "the direction the observer looks along, into the section; the light travels the "
                            "other way; indices do not depend on the sign"},
        "polariser_sample": np.round(result.polariser, 6).tolist(),
        "analyser_sample": np.round(result.analyser, 6).tolist(),
        "image_orientation": "polariser E-W (image right = east), analyser N-S (image up = north); for the map "
                             "normal the map's x axis points east (right) and its y axis south (down)",
        "stage_deg": list(opt.stage_deg),
        "stage_sense": "the stage turns the section anticlockwise as seen in the image",
        "plate": {"setting": opt.plate, "retardation_nm": PLATE_NM,
                  "slow_direction": "NE-SW: 45 degrees anticlockwise from the polariser (common practice)"},
        "colour": {"observer": "CIE 1931 2 degree", "illuminant": "D65",
                   "wavelengths_nm": {"first": WAVELENGTHS_NM[0], "last": WAVELENGTHS_NM[1], "step": WAVELENGTHS_NM[2]},
                   "encoding": "sRGB (IEC 61966-2-1), out-of-gamut colours clipped; Y = 1 for the light leaving "
                               "the polariser", "library": f"colour-science {colour.__version__}",
                   "order_nm": ORDER_NM, "dispersion": "none: sodium-light indices at every wavelength"},
        "fast_direction": "the vibration direction of the faster wave (smaller refractive index), the optical "
                          "counterpart of the fast shear-wave polarisation",
        "phases": {row["phase"]: {k: v for k, v in row.items() if k != "phase"} for row in statistics},
        "units": {"birefringence": "dimensionless", "refractive indices": "dimensionless", "retardation": "nm",
                  "thickness": "micrometres", "angles": "degrees"},
        "statistics_over": "points: pixels of a map, rows of a grain list, each counted once",
        "images": result.is_map,
        "thickness_estimates": estimates or [],
        "files": sorted(files),
        "cautions": cautions + thickness_cautions(estimates or [], opt.thickness_um),
    }


def default_optics_dir(path: str | Path) -> Path:
    """Return the default results folder of a sample's optics: ``results/optics/<sample name>``.

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
        If the file name cannot name a folder.
    """
    from fabric2seis.pipeline import checked_sample_name

    return Path("results") / "optics" / checked_sample_name(path)


@blas_on_one_thread()        # the same numbers whatever the machine's threads (threads.py)
def run_optics(path: str | Path, settings_path: str | Path | None = None, out_dir: str | Path | None = None,
               progress: Callable[[str], None] | None = None, defaults: dict | None = None,
               results_root: str | Path | None = "results") -> Path:
    """Predict the crossed-polar view of a sample's thin section into ``out_dir``; returns the folder written.

    Parameters
    ----------
    path : str or Path
        The EBSD file.
    settings_path : str or Path, optional
        Settings file to use instead of the sidecar.
    out_dir : str or Path, optional
        Results folder; ``results/optics/<sample name>`` if not given.
    progress : callable, optional
        Called with a message at each step.
    defaults : dict, optional
        Settings under the sample's sidecar (the workflow's config).
    results_root : str or Path or None
        The suite's results folder, never replaced.

    Returns
    -------
    Path
        The results folder written.

    Raises
    ------
    InputError
        If the input, settings or destination are refused; nothing is written then.
    """
    from fabric2seis import __version__
    from fabric2seis.folders import check_destination, folder_written_whole
    from fabric2seis.pipeline import RunLog, checked_sample_name, ingest
    from fabric2seis.settings import settings_for

    path, log = Path(path), RunLog(progress)
    checked_sample_name(path)
    settings, settings_file = settings_for(path, settings_path, defaults)
    opt = optics_settings(settings, settings_file)
    log.say(f"fabric2seis {__version__} optics: {path} with settings {settings_file or 'defaults'}")
    out = Path(out_dir) if out_dir is not None else default_optics_dir(path)
    inputs: list[str | Path] = [path, *([settings_file] if settings_file else [])]
    check_destination(out, "optics", inputs, results_root)
    sample = ingest(path, settings, settings_file, log.say, fabric=False)
    log.say(f"indicatrix sections of {len(sample.points.quat):,} points, {opt.thickness_um:g} um, "
            f"view {opt.view_text}")
    result = section_stage(sample, opt)
    statistics = phase_statistics(result)
    estimates = thickness_estimates(result, settings_file)
    for e in estimates:
        told = (f"{e['thickness_um']:g} um" if "thickness_um" in e else
                f"{e['thickness_range_um'][0]:g} to {e['thickness_range_um'][1]:g} um")
        log.say(f"thickness from {e['measurement']}: {told} ({e['phase']}, birefringence {e['birefringence']:g})")
    with folder_written_whole(out, "optics", inputs, results_root) as tmp:
        files = write_optics_files(tmp, result, statistics, log)
        summary = optics_summary(result, statistics, files + ["optics_summary.json", "run.log"], estimates)
        for note in summary["cautions"]:
            log.say(f"caution: {note}")
        _write_json(tmp / "optics_summary.json", summary)
        log.say(f"done, results in {out}")
        (tmp / "run.log").write_text("\n".join(log.lines) + "\n")
    return out


def _write_json(path: Path, data: dict) -> None:
    import json

    from fabric2seis.stages import plain

    path.write_text(json.dumps(data, indent=2, default=plain) + "\n")


def write_optics_files(folder: Path, result: SectionResult, statistics: list[dict], log) -> list[str]:
    """Write the statistics table and the figures of a section into ``folder``.

    Parameters
    ----------
    folder : Path
        The (temporary) results folder.
    result : SectionResult
        The section's optics.
    statistics : list of dict
        :func:`phase_statistics`.
    log : pipeline.RunLog
        The run's log.

    Returns
    -------
    list of str
        The names of the files written.
    """
    import pandas as pd

    from fabric2seis.figures import optics as figures

    pd.DataFrame(statistics, columns=list(STATISTICS_COLUMNS)).to_csv(folder / "birefringence.csv", index=False)
    written: list[str | Path] = [folder / "birefringence.csv"]
    log.say("interference-colour chart")
    written += figures.interference_chart(folder / "interference_chart", result, statistics)
    if not result.is_map:
        log.say("a grain list has no map coordinates: no image can be drawn, statistics and chart only")
        return sorted(Path(f).name for f in written)
    log.say("retardation map")
    written += figures.retardation_map(folder / "retardation_map", result)
    for plate in result.settings.plates:
        log.say(f"crossed-polar images {'with' if plate else 'without'} the {PLATE_NM:g} nm plate at "
                f"{', '.join(f'{a:g}' for a in result.settings.stage_deg)} degrees")
        stem = "crossed_polars_plate" if plate else "crossed_polars"
        written += figures.crossed_polar_images(folder / stem, result, plate)
    return sorted(Path(f).name for f in written)
