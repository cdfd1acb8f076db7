"""Pole figures of a phase: pole vectors, pole densities, pfJ, and the orientation-tensor indices.

A crystal direction h and its symmetry equivalents give, for every grain, m axially distinct unit
vectors in the structural frame (``pole_vectors``). Their density on the sphere, normalised to 1
for uniform poles (m.u.d.), is smoothed by the pole-figure image of the de la Vallee Poussin
kernel (``fabric.kernel.Kernel.pole_value``, Schaeben 1997); pfJ is the mean of its square over the
sphere, 1 for uniform poles, the pole-figure analogue of the J-index (Bunge 1982). The second
moment of the poles (the orientation tensor) gives eigenvalues whose ratios describe the shape and
strength of the distribution (Woodcock 1977; Vollmer 1990), and for olivine the BA-index
(Mainprice et al. 2014). ``default_poles`` names the principal poles of each crystal system: pfJ
and the eigenanalysis of ``summary.json`` use them, whatever the figures show, so that these numbers
stay comparable between samples and settings. The pole figures draw ``figure_poles``: the poles the
trade draws for each mineral (``FIGURE_POLES``), or those of the settings key ``figures.poles``,
written as directions [uvw] or plane normals (hkl), four indices [uvtw] and (hkil) for hexagonal
and trigonal minerals, optionally after a short name (``"r (10-11)"``).

References
----------
Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
Schaeben, H. (1997). Physica Status Solidi (b) 200, 367-376.
Woodcock, N. H. (1977). Specification of fabric shapes using an eigenvalue method. Geological
Society of America Bulletin 88, 1231-1236.
Vollmer, F. W. (1990). An application of eigenvalue methods to structural domain analysis.
Geological Society of America Bulletin 102, 786-791.
Mainprice, D., Bachmann, F., Hielscher, R. & Schaeben, H. (2014). Geological Society, London,
Special Publications 409 (bibliographic details of all these from memory).
"""

from __future__ import annotations

import functools
import re
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from fabric2seis.elastic.minerals import lattice_vector
from fabric2seis.errors import InputError
from fabric2seis.fabric.checks import check_halfwidth, check_poles, check_quaternions, check_weights
from fabric2seis.fabric.kernel import Kernel, interpolate_on_uniform_grid, pole_self_convolution_table
from fabric2seis.orientations import proper_symmetry_quaternions, to_matrices


def default_poles(mineral) -> list[str]:
    """Principal poles of a crystal system: directions [uvw] and plane normals (hkl).

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        Its Laue class chooses the poles.

    Returns
    -------
    list of str
        Three labels such as ``"[100]"`` or ``"(001)"`` (``minerals.crystal_direction`` reads them).
    """
    laue = mineral.symmetry.laue_name
    if laue == "mmm":
        return ["[100]", "[010]", "[001]"]
    if laue == "2/m":
        return ["[100]", "[010]", "(001)"]
    if laue in ("-3m", "-3", "6/m", "6/mmm"):
        return ["[001]", "[100]", "(100)"]
    if laue in ("m-3m", "m-3"):
        return ["[100]", "[110]", "[111]"]
    if laue in ("4/m", "4/mmm"):
        return ["[001]", "[100]", "[110]"]
    return ["[100]", "(010)", "(001)"]


#: the poles the trade draws for each mineral (common practice of published fabric studies: olivine
#: and orthopyroxene on their axes, clinopyroxenes [001] with the (010) and (100) poles, amphibole
#: likewise, plagioclase (010), (001) and [100], micas and chlorite their basal plane (001) and
#: [100], quartz the c-axis, a-axes and the poles of the positive and negative rhombs r {10-11} and
#: z {01-11}, calcite c, a and the cleavage rhomb r {10-14} of the structural cell, ice c and a).
#: Minerals not listed here are drawn on ``default_poles``.
FIGURE_POLES: dict[str, tuple[str, ...]] = {
    "olivine": ("[100]", "[010]", "[001]"),
    "enstatite": ("[100]", "[010]", "[001]"),
    "diopside": ("[001]", "(010)", "(100)"),
    "jadeite": ("[001]", "(010)", "(100)"),
    "hornblende": ("[001]", "(100)", "(010)"),
    "albite": ("(010)", "(001)", "[100]"),
    "andesine": ("(010)", "(001)", "[100]"),
    "muscovite": ("(001)", "[100]"),
    "biotite": ("(001)", "[100]"),
    "chlorite": ("(001)", "[100]"),
    "lizardite": ("c [0001]", "a [2-1-10]"),
    "orthoclase": ("(010)", "(001)", "[100]"),
    "omphacite": ("[001]", "(010)", "(100)"),
    "quartz": ("c [0001]", "a [2-1-10]", "r (10-11)", "z (01-11)"),
    "calcite": ("c [0001]", "a [2-1-10]", "r (10-14)"),
    "ice": ("c [0001]", "a [2-1-10]"),
}

_POLE_TEXT = re.compile(r"^(?:(?P<name>[A-Za-z][A-Za-z0-9*']{0,7})\s+)?(?P<open>[\[(<{])\s*(?P<body>[-0-9 ,]*?)"
                        r"\s*(?P<close>[\])>}])$")
_CLOSING = {"[": "]", "<": ">", "(": ")", "{": "}"}
_HEXAGONAL_LAUE = ("-3", "-3m", "6/m", "6/mmm")


@dataclass(frozen=True)
class Pole:
    """A crystal direction [uvw] or plane normal (hkl), as written in a pole label.

    Attributes
    ----------
    text
        The label, spaces tidied (``"r (10-11)"``, ``"[100]"``).
    name
        The short name before the brackets (``"r"``), or ``""``.
    indices
        Three Miller indices, or four for hexagonal axes ([uvtw], (hkil)).
    plane
        True for the normal of a plane (``(hkl)`` or ``{hkl}``), False for a direction.
    brackets
        The opening and closing bracket as written.
    """

    text: str
    name: str
    indices: tuple[int, ...]
    plane: bool
    brackets: tuple[str, str]

    def math_text(self) -> str:
        """The label for matplotlib, negative indices written with a bar (``(10$\\bar{1}$1)``)."""
        sep = "" if all(abs(i) < 10 for i in self.indices) else " "
        body = sep.join(str(i) if i >= 0 else "$" + (r"\bar{%d}" if i > -10 else r"\overline{%d}") % -i + "$"
                        for i in self.indices).replace("$$", "")
        mark = f"{self.brackets[0]}{body}{self.brackets[1]}"
        return f"{self.name} {mark}" if self.name else mark


def parse_pole(text: str) -> Pole:
    """Read a pole label: ``[uvw]``, ``(hkl)``, ``<uvw>``, ``{hkl}``, or four indices, optionally named.

    Single-digit indices may be written together, a minus before a digit for its bar
    (``"[2-1-10]"``, ``"(10-11)"``); otherwise separate them with spaces or commas
    (``"(1 0 -1 12)"``). A short name may come first (``"r (10-11)"``).

    Parameters
    ----------
    text : str
        The label.

    Returns
    -------
    Pole
        The label read.

    Raises
    ------
    ValueError
        If the label is not of this form, its brackets do not match, or it has not three or four
        indices.
    """
    found = _POLE_TEXT.match(" ".join(str(text).split()))
    wanted = ("a direction [uvw] or a plane normal (hkl), four indices [uvtw] or (hkil) for hexagonal "
              "and trigonal minerals, optionally after a short name such as 'r (10-11)'")
    if found is None or _CLOSING[found["open"]] != found["close"]:
        raise ValueError(f"'{text}' is not a pole label: write {wanted}")
    body = found["body"].strip()
    tokens = body.replace(",", " ").split() if (" " in body or "," in body) else re.findall(r"-?\d", body)
    if "".join(tokens).replace(" ", "") != body.replace(",", "").replace(" ", "") or len(tokens) not in (3, 4) \
            or not all(re.fullmatch(r"-?\d+", t) for t in tokens):
        raise ValueError(f"'{text}' is not a pole label: write {wanted}")
    indices = tuple(int(t) for t in tokens)
    tidy = (found["name"] + " " if found["name"] else "") + found["open"] + body + found["close"]
    return Pole(tidy, found["name"] or "", indices, found["open"] in "({", (found["open"], found["close"]))


def pole_direction(mineral, label: str | Pole) -> np.ndarray:
    """Unit vector of a pole label in orix's crystal frame (e1 || a, e3 || c*).

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        Gives the lattice and the Laue class.
    label : str or Pole
        A pole label (``parse_pole``).

    Returns
    -------
    numpy.ndarray
        Unit vector (3,), dimensionless.

    Raises
    ------
    ValueError
        If the label cannot be read, has four indices for a mineral that is neither hexagonal nor
        trigonal, has a third index that is not minus the sum of the first two, or is all zeros.
    """
    pole = label if isinstance(label, Pole) else parse_pole(label)
    idx = pole.indices
    if not any(idx):
        raise ValueError(f"'{pole.text}' has only zero indices")
    if len(idx) == 4:
        if mineral.symmetry.laue_name not in _HEXAGONAL_LAUE:
            raise ValueError(f"'{pole.text}' has four indices, which only hexagonal and trigonal minerals take; "
                             f"{mineral.name} is {mineral.symmetry.laue_name}: write three")
        if idx[2] != -(idx[0] + idx[1]):
            raise ValueError(f"'{pole.text}': the third of four indices must be minus the sum of the first two "
                             f"({-(idx[0] + idx[1])})")
    return lattice_vector(mineral.lattice, idx, plane=pole.plane)


def _entry_for(mineral, chosen: Mapping[str, list[str]] | None) -> list[str] | None:
    """The labels the settings give for a mineral (by its name or an alias), or None."""
    for key, labels in (chosen or {}).items():
        name = " ".join(str(key).lower().replace("_", " ").split())
        if name == mineral.name or name in mineral.aliases:
            return list(labels)
    return None


def figure_poles(mineral, chosen: Mapping[str, list[str]] | None = None) -> list[str]:
    """The poles the figures draw for a mineral.

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        The mineral.
    chosen : mapping of str to list of str, optional
        The settings key ``figures.poles``: mineral name or alias -> pole labels.

    Returns
    -------
    list of str
        The settings' labels for this mineral, else ``FIGURE_POLES``, else ``default_poles``.
    """
    return _entry_for(mineral, chosen) or list(FIGURE_POLES.get(mineral.name, ())) or default_poles(mineral)


def check_pole_setting(chosen: Mapping[str, list[str]] | None, source: str | Path | None = None,
                       library: dict | None = None) -> None:
    """Refuse a settings key ``figures.poles`` with an unknown mineral or an unreadable pole.

    Parameters
    ----------
    chosen : mapping of str to list of str, or None
        Mineral name or alias -> pole labels.
    source : str or Path, optional
        The settings file, for the message.
    library : dict of str to Mineral, optional
        Where the minerals are looked up (with a user's own minerals); the packaged library if
        not given.

    Raises
    ------
    InputError
        Naming the file and the key (``figures.poles.quartz.2``): a mineral the library does not
        have, two keys for one mineral, or a label ``pole_direction`` refuses.
    """
    from fabric2seis.elastic.minerals import find_mineral

    seen: dict[str, str] = {}
    for key, labels in (chosen or {}).items():
        where = f"key figures.poles.{key}"
        try:
            mineral = find_mineral(str(key), library)
        except InputError as exc:
            raise InputError(exc.message, source, where) from None
        if mineral.name in seen:
            raise InputError(f"'{key}' and '{seen[mineral.name]}' both name {mineral.name}; keep one", source, where)
        seen[mineral.name] = str(key)
        for k, label in enumerate(labels):
            try:
                pole_direction(mineral, label)
            except ValueError as exc:
                raise InputError(str(exc), source, f"{where}.{k}") from None


def pole_vectors(quat: np.ndarray, crystal_direction: np.ndarray, symmetry) -> np.ndarray:
    """Unit pole vectors in the structural frame of all axially distinct equivalents of a direction.

    Parameters
    ----------
    quat : numpy.ndarray
        Unit quaternions (N, 4) of the grains (orix's convention, v_crystal = g v_structural).
    crystal_direction : numpy.ndarray
        The direction (3,) in the crystal Cartesian frame (``minerals.crystal_direction``); any length.
    symmetry : orix.quaternion.Symmetry
        Point group of the crystal.

    Returns
    -------
    numpy.ndarray
        Unit vectors (N, m, 3), m the number of axially distinct equivalents of the direction.
    """
    check_quaternions(quat)
    if np.shape(crystal_direction) != (3,) or not np.linalg.norm(crystal_direction) > 0:
        raise ValueError(f"crystal_direction must be a non-zero vector of shape (3,), got {crystal_direction!r}")
    ops = to_matrices(proper_symmetry_quaternions(symmetry))
    h = crystal_direction / np.linalg.norm(crystal_direction)
    variants = ops @ h                                    # (K, 3) in the crystal frame
    distinct: list[np.ndarray] = []
    for v in variants:
        if not any(abs(abs(v @ u) - 1.0) < 1e-6 for u in distinct):
            distinct.append(v)
    g = to_matrices(quat)                                 # v_crystal = g v_structural
    return np.einsum("nji,mj->nmi", g, np.array(distinct))          # g^T h for each equivalent


def orientation_tensor(poles: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """Weighted second-moment tensor of axial unit vectors.

    Parameters
    ----------
    poles : numpy.ndarray
        Unit vectors (N, m, 3) (``pole_vectors``).
    weights : numpy.ndarray
        Weights (N,) of the grains, non-negative with a positive sum.

    Returns
    -------
    numpy.ndarray
        Symmetric tensor (3, 3) of trace 1, dimensionless.

    References
    ----------
    Woodcock, N. H. (1977). Geological Society of America Bulletin 88, 1231-1236.
    """
    check_poles(poles)
    check_weights(weights, np.shape(poles)[0], per="pole set")
    w = np.asarray(weights, dtype=float) / np.sum(weights)
    return np.einsum("n,nmi,nmj->ij", w, poles, poles) / poles.shape[1]


def eigen_analysis(tensor: np.ndarray) -> dict:
    """Eigenvalues and eigenvectors of an orientation tensor, and the indices made from them.

    Parameters
    ----------
    tensor : numpy.ndarray
        Orientation tensor (3, 3) (``orientation_tensor``).

    Returns
    -------
    dict
        ``eigenvalues`` (3,) descending, sum 1; ``eigenvectors`` (3, 3), one unit vector per row,
        in the same order; ``woodcock_K`` = ln(l1/l2) / ln(l2/l3) (inf for l2 = l3) and
        ``woodcock_C`` = ln(l1/l3) (Woodcock 1977); ``vollmer_P`` = l1 - l2, ``vollmer_G`` =
        2 (l2 - l3), ``vollmer_R`` = 3 l3 (Vollmer 1990). All dimensionless.

    References
    ----------
    Woodcock, N. H. (1977). Geological Society of America Bulletin 88, 1231-1236.
    Vollmer, F. W. (1990). Geological Society of America Bulletin 102, 786-791.
    """
    if np.shape(tensor) != (3, 3):
        raise ValueError(f"tensor must have shape (3, 3), got {np.shape(tensor)}")
    values, vectors = np.linalg.eigh(tensor)
    values, vectors = values[::-1], vectors[:, ::-1]
    values = np.clip(values, 1e-12, None)
    values = values / values.sum()
    l1, l2, l3 = values
    return {
        "eigenvalues": values, "eigenvectors": vectors.T,
        "woodcock_K": float(np.log(l1 / l2) / np.log(l2 / l3)) if l2 > l3 * (1 + 1e-12) else float("inf"),
        "woodcock_C": float(np.log(l1 / l3)),
        "vollmer_P": float(l1 - l2), "vollmer_G": float(2.0 * (l2 - l3)), "vollmer_R": float(3.0 * l3),
    }


def ba_index(eigen_100: dict, eigen_010: dict) -> float:
    """BA-index of olivine from the Vollmer P and G of [100] and [010].

    BA = (2 - P010 / (G010 + P010) - G100 / (G100 + P100)) / 2: near 0 for a [010] fibre, near 1
    for a [100] fibre, near 0.5 for a point fabric.

    Parameters
    ----------
    eigen_100, eigen_010 : dict
        ``eigen_analysis`` of the [100] and of the [010] poles.

    Returns
    -------
    float
        BA, dimensionless, between 0 and 1.

    References
    ----------
    Mainprice, D., Bachmann, F., Hielscher, R. & Schaeben, H. (2014). Geological Society, London,
    Special Publications 409.
    """
    p010, g010 = eigen_010["vollmer_P"], eigen_010["vollmer_G"]
    p100, g100 = eigen_100["vollmer_P"], eigen_100["vollmer_G"]
    return 0.5 * (2.0 - p010 / (g010 + p010) - g100 / (g100 + p100))


def hemisphere_cells(step_deg: float = 2.0) -> tuple[np.ndarray, np.ndarray]:
    """Directions covering the lower hemisphere in cells of about equal area.

    Parameters
    ----------
    step_deg : float
        Width of the rings of plunge, and about the width of the cells along them (degrees).

    Returns
    -------
    directions : numpy.ndarray
        Unit vectors (M, 3) with z <= 0, the cell centres.
    areas : numpy.ndarray
        Solid angle (M,) of each cell, steradians, summing to 2 pi.
    """
    if not step_deg > 0:
        raise ValueError(f"step_deg must be positive, got {step_deg!r}")
    edges = np.radians(np.arange(0.0, 90.0 + 1e-9, step_deg))
    if edges[-1] < np.pi / 2 - 1e-9:
        edges = np.append(edges, np.pi / 2)
    dirs, areas = [], []
    for lo, hi in zip(edges[:-1], edges[1:]):
        ring = 2.0 * np.pi * (np.sin(hi) - np.sin(lo))      # plunge from lo to hi
        mid = (lo + hi) / 2.0
        count = max(1, int(round(2.0 * np.pi * np.cos(mid) / np.radians(step_deg))))
        az = (np.arange(count) + 0.5) * 2.0 * np.pi / count
        dirs.append(np.column_stack([np.cos(mid) * np.cos(az), np.cos(mid) * np.sin(az),
                                     -np.full(count, np.sin(mid))]))
        areas.append(np.full(count, ring / count))
    return np.vstack(dirs), np.concatenate(areas)


def pole_density(at: np.ndarray, poles: np.ndarray, weights: np.ndarray, halfwidth_deg: float = 10.0,
                 bin_step_deg: float = 1.0) -> np.ndarray:
    """Axial pole density at unit directions ``at``.

    Poles are binned on a grid of colatitude and azimuth of ``bin_step_deg`` (a tenth of the
    kernel halfwidth), so the cost does not grow with the number of grains. The kernel depends on
    the angle between two directions only, so between a ring of the grid and a ring of colatitudes
    it depends on the difference of azimuths alone: the density on the rings of a grid half as fine
    is a circular convolution in azimuth, done with the FFT (``_ring_kernel`` holds the kernel's
    transforms, computed once per halfwidth), and read at ``at`` by bilinear interpolation.
    Binning (shared among the four nearest nodes) and interpolation together are exact to about
    2e-3 of the peak for a 10 degree kernel
    (tests/fabric/test_poles.py measures it against the kernel summed over every pole).

    Parameters
    ----------
    at : numpy.ndarray
        Unit directions (M, 3) in the structural frame.
    poles : numpy.ndarray
        Unit vectors (N, m, 3) (``pole_vectors``).
    weights : numpy.ndarray
        Weights (N,) of the grains, non-negative with a positive sum.
    halfwidth_deg : float
        Halfwidth of the kernel whose pole-figure image smooths the density (degrees).
    bin_step_deg : float
        Step of the grid on which poles are binned (degrees); it must divide 90.

    Returns
    -------
    numpy.ndarray
        Density (M,) in multiples of a uniform distribution (m.u.d.).

    References
    ----------
    Schaeben, H. (1997). Physica Status Solidi (b) 200, 367-376.
    """
    check_poles(poles)
    check_weights(weights, np.shape(poles)[0], per="pole set")
    check_halfwidth(halfwidth_deg)
    if np.ndim(at) != 2 or np.shape(at)[1] != 3:
        raise ValueError(f"at must be an array of unit directions of shape (M, 3), got shape {np.shape(at)}")
    rings = int(round(90.0 / bin_step_deg))
    if not bin_step_deg > 0 or abs(rings * bin_step_deg - 90.0) > 1e-9:
        raise ValueError(f"bin_step_deg must divide 90 degrees, got {bin_step_deg!r}")
    targets, kernel_ft = _ring_kernel(float(halfwidth_deg), float(bin_step_deg))
    step = np.radians(bin_step_deg)
    n_az = 4 * rings
    w = np.repeat(np.asarray(weights, dtype=float) / np.sum(weights) / poles.shape[1], poles.shape[1])
    colat, az = _colatitude_azimuth(poles.reshape(-1, 3))       # folded onto the lower hemisphere
    # the axial kernel: half of each pole at u, half at -u (colatitude 180 - t, azimuth + 180)
    mass = (_deposit(colat, az, w / 2.0, rings, step)
            + _deposit(np.pi - colat, az + np.pi, w / 2.0, rings, step))
    # per frequency f, the kernel's real (target, source) matrix times the sources' transforms (their
    # real and imaginary parts as two columns): one batched matrix product, kernel_ft frequency first
    sources = np.ascontiguousarray(np.fft.rfft(mass, axis=1).T)                # (f, s) complex
    product = np.matmul(kernel_ft, sources.view(float).reshape(*sources.shape, 2))
    spectrum = (product[..., 0] + 1j * product[..., 1]).T                      # (t, f)
    # read at half the azimuth step: zero-padding the spectrum is the band-limited interpolation
    on_rings = 2.0 * np.fft.irfft(spectrum, n=2 * n_az, axis=1)
    n_az, step = 2 * n_az, step / 2.0
    t_colat, t_az = _colatitude_azimuth(np.asarray(at, dtype=float))
    x = t_colat / (np.radians(targets[1] - targets[0]))
    i0 = np.minimum(x.astype(int), len(targets) - 2)
    fx = x - i0
    y = t_az / step - 1.0                                      # the first azimuth read: half a bin
    j0 = np.floor(y).astype(int)
    fy = y - j0
    j0 %= n_az
    j1 = (j0 + 1) % n_az
    return ((1 - fx) * ((1 - fy) * on_rings[i0, j0] + fy * on_rings[i0, j1])
            + fx * ((1 - fy) * on_rings[i0 + 1, j0] + fy * on_rings[i0 + 1, j1]))


def _deposit(colat: np.ndarray, az: np.ndarray, w: np.ndarray, rings: int, step: float) -> np.ndarray:
    """Masses ``w`` shared bilinearly among the four nearest nodes of the sphere's grid (2 rings, 4 rings).

    Nodes sit at colatitudes (i + 1/2) step, i = 0 .. 2 rings - 1, and azimuths (b + 1/2) step; a
    share beyond the first or last ring goes to that ring on the opposite azimuth (the grid's pole).
    Sharing keeps each pole's mean position, so the error of binning is of second order in the step.
    """
    n_rings, n_az = 2 * rings, 4 * rings
    x = colat / step - 0.5
    y = np.mod(az, 2.0 * np.pi) / step - 0.5
    i0, j0 = np.floor(x).astype(int), np.floor(y).astype(int)
    fx, fy = x - i0, y - j0
    out = np.zeros(n_rings * n_az)
    for di, wx in ((0, 1.0 - fx), (1, fx)):
        i = i0 + di
        flip = (i < 0) | (i >= n_rings)
        i = np.where(i < 0, -1 - i, np.where(i >= n_rings, 2 * n_rings - 1 - i, i))
        for dj, wy in ((0, 1.0 - fy), (1, fy)):
            j = (j0 + dj + np.where(flip, n_az // 2, 0)) % n_az
            out += np.bincount(i * n_az + j, weights=w * wx * wy, minlength=n_rings * n_az)
    return out.reshape(n_rings, n_az)


def _colatitude_azimuth(v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Angle from -z (0 to pi/2 after folding v onto z <= 0) and azimuth (0 to 2 pi) of unit vectors."""
    v = np.where(v[:, 2:3] > 0, -v, v)
    colat = np.arccos(np.clip(-v[:, 2], -1.0, 1.0))
    return colat, np.mod(np.arctan2(v[:, 1], v[:, 0]), 2.0 * np.pi)


@functools.lru_cache(maxsize=2)   # about 47 MB each at the default 1 degree step
def _ring_kernel(halfwidth_deg: float, bin_step_deg: float) -> tuple[np.ndarray, np.ndarray]:
    """Colatitudes (degrees, 0 to 90, half a bin apart) of the target rings, and the kernel's FFT in azimuth.

    Entry [f, t, s] is frequency f of the FFT over the difference of azimuths of the pole-figure
    kernel between a direction at target colatitude t and one at the centre of source ring s (source
    rings cover 0 to 180 degrees); frequency first, for ``pole_density``'s product. The kernel is
    even in the difference of azimuths, so its transform is real: it is evaluated on one half (0 to
    180 degrees apart), mirrored, and the real part of the transform stored (the imaginary part is
    rounding, about 1e-16 of the largest value).
    """
    kernel = Kernel(halfwidth_deg)
    rings = int(round(90.0 / bin_step_deg))
    n_az = 4 * rings
    targets = np.linspace(0.0, 90.0, 2 * rings + 1)
    source = np.radians((np.arange(2 * rings) + 0.5) * bin_step_deg)
    half = np.cos(np.arange(n_az // 2 + 1) * 2.0 * np.pi / n_az)          # 0 to 180 degrees apart
    out = np.empty((n_az // 2 + 1, len(targets), len(source)))
    for k, t in enumerate(np.radians(targets)):
        cos = np.cos(t) * np.cos(source)[:, None] + np.sin(t) * np.sin(source)[:, None] * half[None, :]
        values = kernel.pole_value(np.clip(cos, -1.0, 1.0))
        out[:, k, :] = np.fft.rfft(np.concatenate([values, values[:, -2:0:-1]], axis=1), axis=1).real.T
    return targets, out


def pf_j(poles: np.ndarray, weights: np.ndarray, halfwidth_deg: float = 10.0,
         step_deg: float = 2.0) -> tuple[float, float, np.ndarray]:
    """pfJ (mean square pole density over the sphere), the maximum density and its direction.

    Parameters
    ----------
    poles : numpy.ndarray
        Unit vectors (N, m, 3) (``pole_vectors``).
    weights : numpy.ndarray
        Weights (N,) of the grains, non-negative with a positive sum.
    halfwidth_deg : float
        Kernel halfwidth (degrees).
    step_deg : float
        Step of the hemisphere grid on which the density is averaged (degrees).

    Returns
    -------
    pfj : float
        Mean of the squared density over the sphere, dimensionless (m.u.d.^2), 1 for uniform poles.
    max_mud : float
        Largest density on the grid (m.u.d.).
    max_direction : numpy.ndarray
        Unit vector (3,), z <= 0, where it lies.

    References
    ----------
    Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London (the mean
    square of a density, as for the J-index).
    """
    cells, area = hemisphere_cells(step_deg)
    density = pole_density(cells, poles, weights, halfwidth_deg)
    top = int(np.argmax(density))
    return float(np.sum(density ** 2 * area) / np.sum(area)), float(density[top]), cells[top]


def pf_j_pairs(poles: np.ndarray, weights: np.ndarray, halfwidth_deg: float = 10.0) -> float:
    """pfJ as the pair sum sum_ij w_i w_j (1/m^2) sum_kk' Psi(p_ik . p_jk') over the poles.

    The exact mean square of the pole density that ``pf_j`` takes on a grid of binned poles; the
    cost grows as (N m)^2, so it serves small sets (the random floors) and the tests. Psi is the
    axial pole kernel's self-convolution on the sphere (``kernel.pole_self_convolution_table``).

    Parameters
    ----------
    poles : numpy.ndarray
        Unit vectors (N, m, 3) (``pole_vectors``).
    weights : numpy.ndarray
        Weights (N,) of the grains, non-negative with a positive sum.
    halfwidth_deg : float
        Kernel halfwidth (degrees).

    Returns
    -------
    float
        pfJ, dimensionless.
    """
    check_poles(poles)
    check_weights(weights, np.shape(poles)[0], per="pole set")
    check_halfwidth(halfwidth_deg)
    angle, psi = pole_self_convolution_table(float(halfwidth_deg))
    m = poles.shape[1]
    w = np.repeat(np.asarray(weights, dtype=float) / np.sum(weights) / m, m)
    p = poles.reshape(-1, 3)
    gram = np.arccos(np.clip(np.abs(p @ p.T), 0.0, 1.0))
    return float(w @ interpolate_on_uniform_grid(gram, angle, psi) @ w)
