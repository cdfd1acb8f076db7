"""A map processed in pieces: the weighted sums each sample writes, and their combination.

Every average of ``stiffness.json`` is built from per-mineral weighted sums over the points
(``elastic.phase_sums``): the sum of the weights and the sums of the rotated Kelvin stiffness
(Voigt), compliance (Reuss) and matrix logarithm (geometric mean); Hill follows from Voigt and
Reuss, the density from the fractions. Sums are linear in the weights, so the sums of the pieces
of a map add up to the sums of the whole map, and the averages computed from them are the whole
map's (to rounding, about 1e-15 relative). A sample writes its sums into ``weighted_sums.json``
(:func:`sums_record`); ``fabric2seis combine`` reads those of several pieces (:func:`read_sums`),
checks that they were processed alike and adds them (:func:`combine_records`), and computes the
averages (:func:`aggregate_of_record`); the velocities and splitting follow as for a sample
(``pipeline.seismic_of_aggregate``).

What is not a sum over points is not combined: fabric indices (J and pfJ are integrals of the
squared ODF, M compares pairs of grains), eigenvalues, pole figures, bootstrap intervals, and the
grain count (a grain cut by a piece edge counts once in each piece).
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from fabric2seis.errors import InputError

if TYPE_CHECKING:
    from fabric2seis.stages import Sample, SeismicResult
    from fabric2seis.waves.seismic import Aggregate

#: the file of a results folder that holds its weighted sums
SUMS_FILE = "weighted_sums.json"
#: the layout of that file; a file of another layout is refused
SUMS_VERSION = 1
#: settings keys that change none of the combined numbers: pieces may differ in them
FREE_KEYS = ("bootstrap", "figures", "odf", "samples_dir", "results_dir", "allow_outside_paths", "optics")
#: settings of the suite's folders and jobs, not of the sample: left out of the file, so that the
#: suite and ``fabric2seis sample`` write the same bytes wherever the folders are
WORKFLOW_KEYS = ("samples_dir", "results_dir", "small_samples")
#: the three sums of a mineral, by their key in the file
SUM_KEYS = {"stiffness": "stiffness_sum", "compliance": "compliance_sum", "log": "log_stiffness_sum"}
#: what a combination does not give, and why (summary.json of the combination, key not_combined)
NOT_COMBINED = {
    "n_grains": "a grain cut by a piece edge counts once in each piece",
    "J, pfJ, eigen, BA": "not sums over points: integrals of the squared ODF and orientation tensors "
                         "normalised per grain; see each piece's summary.json, or run the whole map",
    "M": "compares pairs of grains, pairs across piece edges are missing",
    "uncertainty": "bootstrap intervals resample the grains of one sample; they are not added",
}


def weight_unit(sample: Sample, weighting: str) -> str:
    """Say what one unit of weight is: area of a map, the weight column, or one grain.

    Parameters
    ----------
    sample : Sample
        The ingested sample.
    weighting : str
        ``area`` or ``grain``.

    Returns
    -------
    str
        A few words naming the unit.
    """
    if weighting == "grain":
        return "grains (1 each)" if sample.grains is not None else "rows of the grain list (1 each)"
    if sample.grains is not None:
        return "map area, the square of the file's length unit (usually um^2)"
    return "the weight column of the grain list (1 per row without it)"


def sums_record(sample: Sample, seismic: SeismicResult, summary: dict, input_sha256: str) -> dict:
    """The contents of ``weighted_sums.json``: what the averages of a sample are built from.

    Parameters
    ----------
    sample : Sample
        The ingested sample.
    seismic : SeismicResult
        The seismic stage (its aggregate's sums, fractions and densities).
    summary : dict
        The sample's summary (its conditions and cautions).
    input_sha256 : str
        Checksum of the input file (refuses the same piece twice).

    Returns
    -------
    dict
        Ready for JSON; floats at full precision.
    """
    from fabric2seis.cautions import sample_cautions

    agg = seismic.aggregate
    assert agg.sums is not None and agg.fractions is not None and agg.densities is not None
    assert agg.crystal_tensors is not None
    p = sample.points
    area = np.bincount(p.mineral_index, weights=p.weights, minlength=len(p.minerals))
    counts = np.bincount(p.mineral_index, minlength=len(p.minerals))
    phases = {}
    for k, m in enumerate(p.minerals):
        s = agg.sums[m.name]
        phases[m.name] = {"n_points": int(counts[k]), "weight": float(s.weight), "fraction_weight": float(area[k]),
                          "fraction": float(agg.fractions[m.name]), "density_kg_m3": float(agg.densities[m.name]),
                          "crystal_stiffness_gpa": np.asarray(agg.crystal_tensors[m.name]).tolist(),
                          **{key: getattr(s, name).tolist() for name, key in SUM_KEYS.items()}}
    st = sample.settings
    return {
        "version": SUMS_VERSION,
        "sample": sample.name,
        "pieces": [{"sample": sample.name, "input_sha256": input_sha256, "n_points": int(len(p.quat))}],
        "input_kind": "map" if sample.grains is not None else "grain list",
        "weighting": seismic.weighting,
        "weight_unit": weight_unit(sample, seismic.weighting),
        "fraction_source": "settings" if st.get("modal_fractions") else "measured area",
        "n_points": int(len(p.quat)),
        "small_grain_points": int(sample.n_small_grain_points),
        "units": {"weight": "weight_unit", "fraction_weight": "weight_unit (area or weight column, as the "
                  "measured fractions use)", "stiffness_sum": "GPa x weight", "compliance_sum": "1/GPa x weight",
                  "log_stiffness_sum": "matrix logarithm of the stiffness in GPa x weight",
                  "crystal_stiffness_gpa": "GPa, Voigt, crystal frame, at the conditions",
                  "density_kg_m3": "kg m^-3 at the conditions",
                  "notation": "sums are Kelvin (Mandel) 6x6 matrices, order 11 22 33 23 13 12, sqrt(2) on "
                              "shear terms, structural frame"},
        "conditions": summary["conditions"],
        "twins": seismic.summary["twins"],
        "cautions": sample_cautions(p.minerals, summary["conditions"]["assumptions"], []),
        "settings": {k: v for k, v in st.items() if k not in WORKFLOW_KEYS},
        "phases": phases,
    }


def _matrix(value, path: Path, key: str) -> np.ndarray:
    try:
        a = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        a = np.zeros(0)
    if a.shape != (6, 6) or not np.all(np.isfinite(a)):
        raise InputError("must be a 6x6 list of finite numbers", path, f"key {key}")
    return a


def read_sums(folder: str | Path) -> dict:
    """Read and check the weighted sums of a results folder.

    Parameters
    ----------
    folder : str or Path
        A results folder of ``fabric2seis sample`` or ``fabric2seis combine``.

    Returns
    -------
    dict
        The record (:func:`sums_record`), its matrices as numpy arrays.

    Raises
    ------
    InputError
        If the folder or its ``weighted_sums.json`` is missing, unreadable, of another layout, or
        holds a matrix that is not 6x6 finite numbers or a weight that is negative.
    """
    folder = Path(folder)
    if not folder.is_dir():
        raise InputError("no such results folder", folder)
    path = folder / SUMS_FILE
    if not path.is_file():
        raise InputError(f"no {SUMS_FILE} here: not a results folder of 'fabric2seis sample' (or one written "
                         "before sums were kept; process the piece again)", folder)
    try:
        data = json.loads(path.read_text())
    except (OSError, UnicodeDecodeError, ValueError) as exc:
        raise InputError(f"cannot be read as JSON ({exc.__class__.__name__})", path) from None
    if not isinstance(data, dict) or data.get("version") != SUMS_VERSION:
        raise InputError(f"not weighted sums of layout {SUMS_VERSION} (process the piece again with this "
                         "version of fabric2seis)", path, "key version")
    missing = [k for k in ("sample", "pieces", "input_kind", "weighting", "fraction_source", "n_points",
                           "settings", "phases", "conditions", "twins") if k not in data]
    if missing:
        raise InputError(f"lacks the key {missing[0]}", path)
    if not isinstance(data["phases"], dict) or not data["phases"]:
        raise InputError("must name at least one mineral", path, "key phases")
    for name, one in data["phases"].items():
        for key in ("crystal_stiffness_gpa", *SUM_KEYS.values()):
            one[key] = _matrix(one.get(key), path, f"phases.{name}.{key}")
        for key in ("weight", "fraction_weight", "fraction", "density_kg_m3", "n_points"):
            v = one.get(key)
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not np.isfinite(v) or v < 0:
                raise InputError("must be a non-negative number", path, f"key phases.{name}.{key}")
    data["file"] = str(path)
    return data


def _first_difference(a, b, prefix: str = "") -> str | None:
    """The dotted key of the first place where two settings differ, or None."""
    if isinstance(a, dict) and isinstance(b, dict):
        for key in list(a) + [k for k in b if k not in a]:
            if key in FREE_KEYS and not prefix:
                continue
            found = _first_difference(a.get(key), b.get(key), f"{prefix}{key}.")
            if found is not None:
                return found
        return None
    return None if a == b else prefix.rstrip(".")


def combine_records(records: list[dict], name: str) -> dict:
    """Add the weighted sums of the pieces of a map, after checking they were processed alike.

    Parameters
    ----------
    records : list of dict
        The pieces' records (:func:`read_sums`), at least one.
    name : str
        Name of the combined map.

    Returns
    -------
    dict
        A record of the same layout for the whole: sums, weights, points added; fractions from
        the added areas (or the settings' fractions); the pieces listed.

    Raises
    ------
    InputError
        If two pieces are the same input, their settings differ in a key that changes the
        averages, their minerals' constants or densities differ, they are of different kinds, or
        they are maps weighted by grain (a grain cut by a piece edge would count in each piece).
    """
    if not records:
        raise InputError("give at least one results folder to combine")
    first = records[0]
    seen: dict[str, str] = {}
    for rec in records:
        for piece in rec["pieces"]:
            sha = str(piece.get("input_sha256"))
            if sha in seen:
                raise InputError(f"holds the same input as {seen[sha]} (sample {piece.get('sample')}): each piece "
                                 "must enter once", rec["file"])
            seen[sha] = rec["file"]
        key = _first_difference(first["settings"], rec["settings"])
        if key is not None:
            raise InputError(f"was processed with other settings than {first['file']} (pieces are combined only "
                             "when processed with the same settings)", rec["file"], f"key settings.{key}")
        for what in ("input_kind", "weighting", "fraction_source"):
            if rec[what] != first[what]:
                raise InputError(f"{what} is '{rec[what]}' here but '{first[what]}' in {first['file']}",
                                 rec["file"], f"key {what}")
    if first["weighting"] == "grain" and first["input_kind"] == "map":
        raise InputError("maps weighted by grain (settings weighting: grain) are not combined: a grain cut by a "
                         "piece edge would count once in each piece; process the pieces with weighting: area "
                         "(or null), which is exact", first["file"], "key settings.weighting")
    phases: dict[str, dict] = {}
    for rec in records:
        for mineral, one in rec["phases"].items():
            if mineral not in phases:
                phases[mineral] = {k: (v.copy() if isinstance(v, np.ndarray) else v) for k, v in one.items()}
                phases[mineral]["from"] = rec["file"]
                continue
            have = phases[mineral]
            if not (np.allclose(have["crystal_stiffness_gpa"], one["crystal_stiffness_gpa"], rtol=1e-12, atol=0)
                    and abs(have["density_kg_m3"] - one["density_kg_m3"]) <= 1e-9 * have["density_kg_m3"]):
                raise InputError(f"{mineral} has other constants or density here than in {have['from']} (another "
                                 "mineral file or version of fabric2seis?)", rec["file"],
                                 f"key phases.{mineral}.crystal_stiffness_gpa")
            if first["fraction_source"] == "settings" and one["fraction"] != have["fraction"]:
                raise InputError(f"the fraction of {mineral} differs from {have['from']}", rec["file"],
                                 f"key phases.{mineral}.fraction")
            for key in ("weight", "fraction_weight", "n_points", *SUM_KEYS.values()):
                have[key] = have[key] + one[key]
    if first["fraction_source"] != "settings":
        total = sum(one["fraction_weight"] for one in phases.values())
        if not total > 0:
            raise InputError("the pieces hold no weight", first["file"], "key phases")
        for one in phases.values():
            one["fraction"] = one["fraction_weight"] / total
    for one in phases.values():
        one.pop("from")
    cautions: list[str] = []
    for rec in records:
        cautions += [c for c in rec.get("cautions", []) if c not in cautions]
    out = {k: v for k, v in first.items() if k != "file"}
    out.update(sample=name, pieces=[p for rec in records for p in rec["pieces"]],
               n_points=int(sum(rec["n_points"] for rec in records)),
               small_grain_points=int(sum(rec.get("small_grain_points", 0) for rec in records)),
               cautions=cautions, phases=phases)
    return out


def aggregate_of_record(record: dict) -> Aggregate:
    """The four averages and the density from a record's sums and fractions.

    Parameters
    ----------
    record : dict
        A sample's or a combination's record (:func:`read_sums`, :func:`combine_records`).

    Returns
    -------
    fabric2seis.waves.seismic.Aggregate
        The averages (6, 6) in GPa, structural frame, the density (kg m^-3) and the average chosen
        by the settings (``averaging``).

    Raises
    ------
    InputError
        If an average is not a valid stiffness.
    """
    from fabric2seis import elastic
    from fabric2seis.waves.seismic import Aggregate

    names = list(record["phases"])
    one = [record["phases"][n] for n in names]
    sums = [elastic.WeightedSums(float(p["weight"]), *(np.asarray(p[k]) for k in SUM_KEYS.values())) for p in one]
    fractions = [float(p["fraction"]) for p in one]
    tensors = elastic.averages_from_sums(sums, fractions)
    for average, t in tensors.items():
        elastic.check_stiffness(t, where=f"{average} average")
    total = sum(fractions)
    rho = sum(f * float(p["density_kg_m3"]) for f, p in zip(fractions, one)) / total
    return Aggregate(tensors=tensors, density_kg_m3=float(rho), average=record["settings"]["averaging"],
                     crystal_tensors={n: np.asarray(p["crystal_stiffness_gpa"]) for n, p in zip(names, one)},
                     sums=dict(zip(names, sums)), fractions={n: f / total for n, f in zip(names, fractions)},
                     densities={n: float(p["density_kg_m3"]) for n, p in zip(names, one)})


def combined_summary(record: dict, seismic: SeismicResult, folders: list[str]) -> dict:
    """The contents of ``summary.json`` of a combination: counts, fractions, density, seismic block, cautions.

    Parameters
    ----------
    record : dict
        The combined record (:func:`combine_records`).
    seismic : SeismicResult
        The seismic numbers of the combined aggregate (``pipeline.seismic_of_aggregate``).
    folders : list of str
        The results folders combined, as given.

    Returns
    -------
    dict
        Ready for JSON.
    """
    agg = seismic.aggregate
    total = sum(p["fraction_weight"] for p in record["phases"].values())
    phases = {name: {"fraction": round(float(p["fraction"]), 6),
                     "measured_fraction": round(float(p["fraction_weight"]) / total, 6) if total > 0 else None,
                     "n_points": int(p["n_points"])} for name, p in record["phases"].items()}
    cautions = ["combined from the weighted sums of " + f"{len(record['pieces'])} pieces: the tensors, density, "
                "velocities and splitting are those of the whole map when the pieces do not overlap and cover it; "
                "fabric indices, grain counts and bootstrap intervals are not combined (key not_combined)"]
    if record.get("small_grain_points"):
        cautions.append(f"{record['small_grain_points']:,} points of grains smaller than grains.min_pixels were left "
                        "out of the pieces; a grain cut by a piece edge may fall below it in a piece and not in the "
                        "whole map, so those points may differ from the whole map's (grains.min_pixels: 1 keeps "
                        "every point and makes the combination exact)")
    cautions += record.get("cautions", [])
    return {
        "sample": record["sample"],
        "combined_from": [{"folder": str(f)} for f in folders],
        "pieces": record["pieces"],
        "n_points": int(record["n_points"]),
        "input_kind": record["input_kind"],
        "phases": phases,
        "fraction_source": record["fraction_source"],
        "density_kg_m3": round(agg.density_kg_m3, 3),
        "conditions": record["conditions"],
        "seismic": seismic.summary,
        "splitting": {"along_z": seismic.along_z, "field": seismic.field},
        "not_combined": NOT_COMBINED,
        "cautions": cautions,
    }
