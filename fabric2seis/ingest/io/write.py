"""Writers of the text formats fabric2seis reads: .ctf (Oxford channel text layout), .ang and CSV.

Used for synthetic data and the demo suite. The .ang writer is orix's own.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
from orix.crystal_map import CrystalMap, PhaseList
from orix.quaternion import Rotation

from fabric2seis.ingest.io.text import quiet


def _euler_deg(quat: np.ndarray) -> np.ndarray:
    return np.degrees(Rotation(quat).to_euler()) % 360.0


def write_ctf(path: str | Path, x, y, quat, phase, phase_names: list[str], lattices: list[tuple],
              laue_numbers: list[int], step: float) -> None:
    """Write a .ctf in the published channel-text column layout (Phase X Y Bands Error Euler1-3 MAD BC BS).

    ``phase`` is 1-based (0 = not indexed); ``lattices`` are (a, b, c, alpha, beta, gamma) per phase;
    ``laue_numbers`` the channel-text Laue group codes (e.g. 3 for mmm, 11 for m-3m).

    Parameters
    ----------
    path : str or Path
        File to write (replaced if present).
    x, y : array_like, shape (N,)
        Map coordinates on a square grid, in the map's length unit (micrometres by convention).
    quat : array_like, shape (N, 4)
        Orientations as orix quaternions; written as Bunge angles in degrees.
    phase : array_like of int, shape (N,)
        Phase number of each point.
    phase_names : list of str
        Name of each phase, in phase-number order.
    lattices : list of tuple
        Lattice parameters per phase: a, b, c (angstrom), alpha, beta, gamma (degrees).
    laue_numbers : list of int
        Laue group code per phase.
    step : float
        Map step, in the unit of ``x``.
    """
    nx = len(np.unique(np.round(x, 6)))
    ny = len(np.unique(np.round(y, 6)))
    lines = ["Channel Text File", "Prj\tsynthetic", "Author\tfabric2seis", "JobMode\tGrid",
             f"XCells\t{nx}", f"YCells\t{ny}", f"XStep\t{step:.4f}", f"YStep\t{step:.4f}",
             "AcqE1\t0", "AcqE2\t0", "AcqE3\t0",
             "Euler angles refer to Sample Coordinate system (CS0)!\tMag\t100\tCoverage\t100\tDevice\t0"
             "\tKV\t20\tTiltAngle\t70\tTiltAxis\t0", f"Phases\t{len(phase_names)}"]
    for name, (a, b, c, al, be, ga), laue in zip(phase_names, lattices, laue_numbers):
        lines.append(f"{a:.3f};{b:.3f};{c:.3f}\t{al:.3f};{be:.3f};{ga:.3f}\t{name}\t{laue}\t0")
    lines.append("Phase\tX\tY\tBands\tError\tEuler1\tEuler2\tEuler3\tMAD\tBC\tBS")
    e = _euler_deg(quat)
    indexed = np.asarray(phase) > 0
    body = pd.DataFrame({"Phase": phase, "X": np.round(x, 4), "Y": np.round(y, 4),
                         "Bands": np.where(indexed, 8, 0), "Error": np.where(indexed, 0, 3),
                         "E1": np.round(e[:, 0], 4), "E2": np.round(e[:, 1], 4), "E3": np.round(e[:, 2], 4),
                         "MAD": 0.5, "BC": 150, "BS": 150})
    text = "\n".join(lines) + "\n" + body.to_csv(sep="\t", header=False, index=False, lineterminator="\n")
    Path(path).write_text(text)


def write_ang(path: str | Path, x, y, quat, phase, phase_names: list[str], point_groups: list[str]) -> None:
    """Write a .ang through orix's writer (phase 1-based; 0 = not indexed).

    Parameters
    ----------
    path : str or Path
        File to write (replaced if present).
    x, y : array_like, shape (N,)
        Map coordinates, in the map's length unit.
    quat : array_like, shape (N, 4)
        Orientations as orix quaternions.
    phase : array_like of int, shape (N,)
        Phase number of each point.
    phase_names, point_groups : list of str
        Name and point group of each phase, in phase-number order.
    """
    phase = np.asarray(phase)
    xmap = CrystalMap(rotations=Rotation(quat), phase_id=np.where(phase > 0, phase, -1), x=x, y=y,
                      phase_list=PhaseList(names=phase_names, point_groups=point_groups,
                                           ids=list(range(1, len(phase_names) + 1))),
                      prop={"ci": np.where(phase > 0, 1.0, -1.0), "iq": np.full(len(phase), 100.0)})
    quiet(_save, path, xmap)


def _save(path, xmap):
    from orix import io as orix_io

    orix_io.save(str(path), xmap, overwrite=True)


def write_table(path: str | Path, quat, phase_names, x=None, y=None, weight=None, quality=None) -> None:
    """Write the CSV table of CONTRACT.md (Bunge angles in degrees).

    Parameters
    ----------
    path : str or Path
        File to write (replaced if present).
    quat : array_like, shape (N, 4)
        Orientations as orix quaternions.
    phase_names : array_like of str, shape (N,)
        Phase name of each row.
    x, y : array_like, shape (N,), optional
        Map coordinates (for a pixel map; omit both for a grain list).
    weight, quality : array_like, shape (N,), optional
        Weight (area or volume) and quality of each row.
    """
    e = _euler_deg(quat)
    columns = {"phase": phase_names, "phi1": e[:, 0].round(5), "Phi": e[:, 1].round(5), "phi2": e[:, 2].round(5)}
    for name, values in (("x", x), ("y", y), ("weight", weight), ("quality", quality)):
        if values is not None:
            columns[name] = values
    pd.DataFrame(columns).to_csv(path, index=False)
