"""Decomposition of an elastic tensor by symmetry class (Browaeys & Chevrot 2004), and the
best-fitting transversely isotropic tensor with its Thomsen (1986) parameters.

Each symmetry class is a linear subspace of tensors; in Kelvin form rotations act orthogonally,
so the orthogonal projection onto the tensors invariant under a group is the group average of the
rotated tensor. The tensor is split successively, C = iso + hex + tet + ort + mon + tri, each
part the projection of what the previous parts left, in the symmetry frame: its 3-axis is the
axis whose transversely isotropic projection is largest (a search over directions, refined), its
1-axis the direction about it that makes the orthorhombic part largest. The parts are orthogonal,
so their shares of the squared norm add up to 100 percent; the shares are reported in percent.
Browaeys & Chevrot quote shares of the norm itself (|part| / |C|, from memory); the square root of
a share here gives theirs, and ``decomposition_summary`` says so beside the numbers.
"""

from __future__ import annotations

import numpy as np

from fabric2seis import elastic, waves
from fabric2seis.nelder_mead import minimise


def _rotation_about(axis: np.ndarray, angle: np.ndarray) -> np.ndarray:
    axis = axis / np.linalg.norm(axis)
    k = np.array([[0, -axis[2], axis[1]], [axis[2], 0, -axis[0]], [-axis[1], axis[0], 0]])
    a = np.asarray(angle)[..., None, None]
    return np.eye(3) + np.sin(a) * k + (1 - np.cos(a)) * (k @ k)


def _group_average(c: np.ndarray, rotations: np.ndarray) -> np.ndarray:
    return elastic.rotate_voigt(c, rotations).mean(axis=0)


def isotropic_projection(c: np.ndarray) -> np.ndarray:
    """Project a stiffness onto the isotropic tensors (its Voigt bulk and shear moduli).

    Parameters
    ----------
    c : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa.

    Returns
    -------
    numpy.ndarray, shape (6, 6)
        Isotropic Voigt stiffness, GPa.

    References
    ----------
    Browaeys, J. T. & Chevrot, S. (2004). Decomposition of the elastic tensor and geophysical applications.
    Geophys. J. Int. 159, 667-678.
    """
    return elastic.isotropic_stiffness(*elastic.voigt_moduli(c))


def hexagonal_projection(c: np.ndarray, axis: np.ndarray) -> np.ndarray:
    """Project a stiffness onto the tensors transversely isotropic about ``axis``.

    The projection is the average over rotations about ``axis`` (12 angles are exact: elastic
    tensors hold angular harmonics up to 4 theta).

    Parameters
    ----------
    c : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa.
    axis : array_like, shape (3,)
        Symmetry axis (normalised here).

    Returns
    -------
    numpy.ndarray, shape (6, 6)
        Transversely isotropic Voigt stiffness, GPa.

    References
    ----------
    Browaeys, J. T. & Chevrot, S. (2004). Decomposition of the elastic tensor and geophysical applications.
    Geophys. J. Int. 159, 667-678.
    """
    return _group_average(c, _rotation_about(np.asarray(axis, float), np.arange(12) * np.pi / 6))


def _frame_group(frame: np.ndarray, kind: str) -> np.ndarray:
    """Rotations (sample coordinates) of a symmetry group defined in ``frame`` (rows: axes 1, 2, 3)."""
    e1, e2, e3 = frame
    two = lambda a: _rotation_about(a, np.array([0.0, np.pi]))  # noqa: E731
    if kind == "tetragonal":
        return np.concatenate([_rotation_about(e3, np.arange(4) * np.pi / 2),
                               _rotation_about(e3, np.arange(4) * np.pi / 2) @ two(e1)[1]])
    if kind == "orthorhombic":
        return np.stack([np.eye(3), two(e1)[1], two(e2)[1], two(e3)[1]])
    if kind == "monoclinic":
        return two(e3)
    raise ValueError(kind)


def _grid_norms(c: np.ndarray, axes: np.ndarray) -> np.ndarray:
    """Kelvin norm of the transversely isotropic projection of ``c`` about each of ``axes`` (M, 3).

    The same numbers, to the bit, as ``hexagonal_projection`` axis by axis: each axis's rotations
    are built by the same code, and the rotations of all axes are applied in one call (the 6x6
    products and the 12-term means do not depend on how many are stacked).
    """
    angles = np.arange(12) * np.pi / 6
    rotations = np.stack([_rotation_about(np.asarray(axis, float), angles) for axis in axes])   # (M, 12, 3, 3)
    projections = elastic.rotate_voigt(c, rotations).mean(axis=1)                               # (M, 6, 6)
    return np.array([np.linalg.norm(elastic.voigt_to_kelvin(h)) for h in projections])


def best_hexagonal_axis(c: np.ndarray) -> np.ndarray:
    """Find the axis whose transversely isotropic projection of the anisotropic part has the largest norm.

    A search over a 6-degree hemisphere grid, refined by Nelder-Mead in azimuth and plunge.

    Parameters
    ----------
    c : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa.

    Returns
    -------
    numpy.ndarray, shape (3,)
        Unit axis with z <= 0.

    References
    ----------
    Browaeys, J. T. & Chevrot, S. (2004). Decomposition of the elastic tensor and geophysical applications.
    Geophys. J. Int. 159, 667-678.
    """
    aniso = elastic.voigt_to_kelvin(c - isotropic_projection(c))

    def norm_of(v):
        h = elastic.voigt_to_kelvin(hexagonal_projection(elastic.kelvin_to_voigt(aniso), v))
        return np.linalg.norm(h)

    dirs, _, _ = waves.hemisphere_grid(6.0)
    best = dirs[int(np.argmax(_grid_norms(elastic.kelvin_to_voigt(aniso), dirs)))]
    # refine in angles
    def angles(v):
        return np.arctan2(v[1], v[0]), np.arccos(np.clip(-v[2], -1, 1))

    def vec(a):
        return np.array([np.sin(a[1]) * np.cos(a[0]), np.sin(a[1]) * np.sin(a[0]), -np.cos(a[1])])
    res = minimise(lambda a: -norm_of(vec(a)), np.array(angles(best)), xatol=1e-7, fatol=1e-12)
    return waves.to_lower_hemisphere(vec(res.x))


def decompose(c: np.ndarray) -> dict:
    """Decompose a stiffness successively by symmetry class.

    Parameters
    ----------
    c : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa.

    Returns
    -------
    dict
        ``"parts"``: the isotropic, hexagonal, tetragonal, orthorhombic, monoclinic and triclinic
        parts, each a Voigt stiffness (6, 6) in GPa, summing to ``c``; ``"percent"``: each part's
        share of the squared Kelvin norm, percent; ``"hexagonal_axis"``: unit vector (3,);
        ``"frame"``: the symmetry frame (3, 3), rows axes 1, 2, 3.

    References
    ----------
    Browaeys, J. T. & Chevrot, S. (2004). Decomposition of the elastic tensor and geophysical applications.
    Geophys. J. Int. 159, 667-678.
    """
    c = np.asarray(c, dtype=float)
    total = np.linalg.norm(elastic.voigt_to_kelvin(c)) ** 2
    iso = isotropic_projection(c)
    rest = c - iso
    axis = best_hexagonal_axis(c)
    hexa = hexagonal_projection(rest, axis)
    rest = rest - hexa
    # the 1-axis: the direction about the hexagonal axis that makes the orthorhombic part largest
    start = np.cross(axis, [1.0, 0, 0] if abs(axis[0]) < 0.9 else [0, 1.0, 0])
    start /= np.linalg.norm(start)

    def frame_at(angle):
        e1 = _rotation_about(axis, angle) @ start
        return np.vstack([e1, np.cross(axis, e1), axis])

    def ortho_norm(angle):
        f = frame_at(angle)
        r = rest - _group_average(rest, _frame_group(f, "tetragonal"))
        return np.linalg.norm(elastic.voigt_to_kelvin(_group_average(r, _frame_group(f, "orthorhombic"))))

    angles = np.radians(np.arange(0.0, 90.0, 1.0))
    best = angles[int(np.argmax([ortho_norm(a) for a in angles]))]
    best = minimise(lambda a: -ortho_norm(a[0]), [best], xatol=1e-8).x[0]
    frame = frame_at(best)
    tet = _group_average(rest, _frame_group(frame, "tetragonal"))
    rest = rest - tet
    ort = _group_average(rest, _frame_group(frame, "orthorhombic"))
    rest = rest - ort
    mon = _group_average(rest, _frame_group(frame, "monoclinic"))
    tri = rest - mon
    parts = {"isotropic": iso, "hexagonal": hexa, "tetragonal": tet, "orthorhombic": ort,
             "monoclinic": mon, "triclinic": tri}
    pct = {k: 100.0 * np.linalg.norm(elastic.voigt_to_kelvin(v)) ** 2 / total for k, v in parts.items()}
    return {"parts": parts, "percent": pct, "hexagonal_axis": axis, "frame": frame}


def thomsen_parameters(c_ti: np.ndarray, axis: np.ndarray, density_kg_m3: float) -> dict:
    """Compute Thomsen (1986) epsilon, gamma, delta and the axial velocities of a TI tensor with ``axis``.

    Parameters
    ----------
    c_ti : numpy.ndarray, shape (6, 6)
        Transversely isotropic Voigt stiffness, GPa.
    axis : array_like, shape (3,)
        Its symmetry axis (normalised here).
    density_kg_m3 : float
        Density, kg m^-3.

    Returns
    -------
    dict
        ``epsilon``, ``gamma``, ``delta`` (dimensionless), ``vp0_km_s`` and ``vs0_km_s`` (P and S
        velocities along the axis, km/s), and ``c_ti_axis_frame_gpa``: c11, c33, c44, c66, c13 in
        GPa in a frame with the axis along 3.

    References
    ----------
    Thomsen, L. (1986). Weak elastic anisotropy. Geophysics 51, 1954-1966.
    """
    axis = np.asarray(axis, float) / np.linalg.norm(axis)
    e1 = np.cross(axis, [1.0, 0, 0] if abs(axis[0]) < 0.9 else [0, 1.0, 0])
    e1 /= np.linalg.norm(e1)
    frame = np.vstack([e1, np.cross(axis, e1), axis])   # rows: new axes in old coordinates
    c = elastic.rotate_voigt(c_ti, frame)               # symmetry axis along 3
    c11, c33, c44, c66, c13 = c[0, 0], c[2, 2], c[3, 3], c[5, 5], c[0, 2]
    return {
        "epsilon": float((c11 - c33) / (2 * c33)),
        "gamma": float((c66 - c44) / (2 * c44)),
        "delta": float(((c13 + c44) ** 2 - (c33 - c44) ** 2) / (2 * c33 * (c33 - c44))),
        "vp0_km_s": float(np.sqrt(1e3 * c33 / density_kg_m3)),
        "vs0_km_s": float(np.sqrt(1e3 * c44 / density_kg_m3)),
        "c_ti_axis_frame_gpa": {"c11": float(c11), "c33": float(c33), "c44": float(c44), "c66": float(c66),
                                "c13": float(c13)},
    }


def decomposition_summary(c: np.ndarray, density_kg_m3: float) -> dict:
    """Summarise the decomposition of a stiffness and the Thomsen parameters of its TI part, rounded.

    Parameters
    ----------
    c : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa.
    density_kg_m3 : float
        Density, kg m^-3.

    Returns
    -------
    dict
        ``percent`` by symmetry class, ``hexagonal_axis`` (3,), ``symmetry_frame`` (3, 3),
        ``thomsen`` (:func:`thomsen_parameters` of the isotropic plus hexagonal parts) and a
        ``definition`` of the percentages.

    References
    ----------
    Browaeys, J. T. & Chevrot, S. (2004). Decomposition of the elastic tensor and geophysical applications.
    Geophys. J. Int. 159, 667-678.
    Thomsen, L. (1986). Weak elastic anisotropy. Geophysics 51, 1954-1966.
    """
    d = decompose(c)
    ti = d["parts"]["isotropic"] + d["parts"]["hexagonal"]
    return {
        "percent": {k: round(v, 4) for k, v in d["percent"].items()},
        "hexagonal_axis": [round(float(x), 6) for x in d["hexagonal_axis"]],
        "symmetry_frame": [[round(float(x), 6) for x in row] for row in d["frame"]],
        "thomsen": {k: (round(v, 6) if isinstance(v, float) else {kk: round(vv, 4) for kk, vv in v.items()})
                    for k, v in thomsen_parameters(ti, d["hexagonal_axis"], density_kg_m3).items()},
        "definition": ("percent: shares of the squared Euclidean norm of the tensor in Kelvin form, "
                       "|part|^2 / |C|^2; the parts are orthogonal, so the shares add to 100 %. Decomposition of "
                       "Browaeys & Chevrot (2004), Geophys. J. Int. 159, 667; they quote shares of the norm "
                       "itself, |part| / |C|, which do not add to 100 % (from memory): the square root of a share "
                       "here gives theirs"),
    }
