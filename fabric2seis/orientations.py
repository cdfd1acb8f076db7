"""Vectorised quaternion arithmetic for orientations, in orix's convention.

Quaternions are (w, x, y, z) as in orix; ``multiply(a, b)`` corresponds to the matrix product
``A @ B`` of their rotation matrices, and an orientation's symmetry-equivalents are ``s * q``
for the proper rotations s of the crystal's point group (crystal symmetry acts on the crystal
side of g, ``v_crystal = g v_sample``). These are checked against orix in tests/test_orientations.py.
"""

from __future__ import annotations

from typing import Any, NamedTuple

import numpy as np


class PhaseOrientations(NamedTuple):
    """One phase's orientations and their weights: the record every stage passes around.

    Attributes
    ----------
    mineral
        The library entry (``elastic.minerals.Mineral``).
    quat
        Orientations as orix quaternions, shape (N, 4), in the structural frame.
    weights
        Non-negative weight of each orientation (area, or 1 per grain), shape (N,).

    A named tuple, so ``for mineral, quat, weights in sets`` reads it as well.
    """

    mineral: Any
    quat: np.ndarray
    weights: np.ndarray


def multiply(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Hamilton product of quaternion arrays (broadcasting over leading axes).

    Parameters
    ----------
    a, b : array_like, shape (..., 4)
        Quaternions (w, x, y, z); leading axes broadcast against each other.

    Returns
    -------
    numpy.ndarray, shape (..., 4)
        ``a * b``, whose rotation matrix is ``A @ B``.
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    a0, a1, a2, a3 = a[..., 0], a[..., 1], a[..., 2], a[..., 3]
    b0, b1, b2, b3 = b[..., 0], b[..., 1], b[..., 2], b[..., 3]
    out = np.empty(np.broadcast_shapes(a.shape, b.shape))
    out[..., 0] = a0 * b0 - a1 * b1 - a2 * b2 - a3 * b3
    out[..., 1] = a0 * b1 + a1 * b0 + a2 * b3 - a3 * b2
    out[..., 2] = a0 * b2 - a1 * b3 + a2 * b0 + a3 * b1
    out[..., 3] = a0 * b3 + a1 * b2 - a2 * b1 + a3 * b0
    return out


def left_matrix(s: np.ndarray) -> np.ndarray:
    """Build the 4x4 matrices L with ``s * q == L @ q`` (left multiplication by s).

    Parameters
    ----------
    s : array_like, shape (..., 4)
        Quaternions (w, x, y, z).

    Returns
    -------
    numpy.ndarray, shape (..., 4, 4)
        One matrix per quaternion.
    """
    s = np.asarray(s, dtype=float)
    a, b, c, d = s[..., 0], s[..., 1], s[..., 2], s[..., 3]
    return np.stack([np.stack([a, -b, -c, -d], -1), np.stack([b, a, -d, c], -1),
                     np.stack([c, d, a, -b], -1), np.stack([d, -c, b, a], -1)], -2)


def right_matrix(p: np.ndarray) -> np.ndarray:
    """Build the 4x4 matrices R with ``q * p == R @ q`` (right multiplication by p).

    Parameters
    ----------
    p : array_like, shape (..., 4)
        Quaternions (w, x, y, z).

    Returns
    -------
    numpy.ndarray, shape (..., 4, 4)
        One matrix per quaternion.
    """
    p = np.asarray(p, dtype=float)
    a, b, c, d = p[..., 0], p[..., 1], p[..., 2], p[..., 3]
    return np.stack([np.stack([a, -b, -c, -d], -1), np.stack([b, a, d, -c], -1),
                     np.stack([c, -d, a, b], -1), np.stack([d, c, -b, a], -1)], -2)


def conjugate(q: np.ndarray) -> np.ndarray:
    """Conjugate quaternions (the inverse rotation for unit quaternions).

    Parameters
    ----------
    q : array_like, shape (..., 4)
        Quaternions (w, x, y, z).

    Returns
    -------
    numpy.ndarray, shape (..., 4)
        (w, -x, -y, -z).
    """
    q = np.asarray(q, dtype=float)
    return q * np.array([1.0, -1.0, -1.0, -1.0])


def proper_symmetry_quaternions(symmetry) -> np.ndarray:
    """Return the quaternions of the proper rotations of a point group (cached for orix's).

    Parameters
    ----------
    symmetry : fabric2seis.point_groups.PointGroup or orix.quaternion.Symmetry
        Point group of the crystal.

    Returns
    -------
    numpy.ndarray, shape (K, 4)
        The K rotations of its proper subgroup, (w, x, y, z).
    """
    proper = getattr(symmetry, "proper", None)        # a PointGroup (orix's Symmetry has no .proper)
    if isinstance(proper, np.ndarray):
        return proper
    key = (symmetry.name, np.asarray(symmetry.data).round(12).tobytes())
    if key not in _PROPER_CACHE:
        _PROPER_CACHE[key] = np.asarray(symmetry.proper_subgroup.data, dtype=float).reshape(-1, 4)
    return _PROPER_CACHE[key]


_PROPER_CACHE: dict = {}


def _equivalents(q: np.ndarray, sym: np.ndarray) -> np.ndarray:
    """All symmetry-equivalents ``s_k * q`` (N, K, 4), as one matrix product."""
    stacked = np.swapaxes(left_matrix(sym), 1, 2).transpose(1, 0, 2).reshape(4, -1)  # (4, 4K)
    return (q @ stacked).reshape(len(q), len(sym), 4)


_CHUNK = 1 << 18


def misorientation_angles(qa: np.ndarray, qb: np.ndarray, sym: np.ndarray) -> np.ndarray:
    """Compute the smallest misorientation angle between pairs of orientations under crystal symmetry.

    Both crystals share the proper symmetry ``sym`` (K, 4). The angle of ``s_1 dq s_2`` depends
    only on ``s_2 s_1 dq`` up to conjugation, so the minimum over both crystals' operations is
    the minimum over one: the largest |w| of ``s * dq`` over s, with ``dq = qb * conj(qa)``; and
    ``w(s * dq) = s_w dq_w - s_v . dq_v``, one matrix product of dq with the operations' conjugates.

    Parameters
    ----------
    qa, qb : array_like, shape (N, 4)
        Unit quaternions of the two orientations of each pair.
    sym : numpy.ndarray, shape (K, 4)
        Proper symmetry rotations (:func:`proper_symmetry_quaternions`).

    Returns
    -------
    numpy.ndarray, shape (N,)
        Misorientation angles, radians, in [0, pi].
    """
    from fabric2seis.angle_kernel import smallest_angles  # numba: compiled on first use, cached on disk

    qa = np.ascontiguousarray(qa, dtype=float)
    qb = np.ascontiguousarray(qb, dtype=float)
    if qa.shape != qb.shape or qa.ndim != 2 or qa.shape[1] != 4:
        raise ValueError(f"qa and qb must be arrays (N, 4) of the same shape, got {qa.shape} and {qb.shape}")
    # w(s * dq) = s_w dq_w - s_v . dq_v: a dot product with each operation's conjugate
    conj_ops = np.ascontiguousarray((np.asarray(sym, dtype=float) * np.array([1.0, -1.0, -1.0, -1.0])).T)  # (4, K)
    out = np.empty(len(qa))
    smallest_angles(qa, qb, conj_ops, out)
    return out


def within_angle(qa: np.ndarray, qb: np.ndarray, sym: np.ndarray, angle_rad: float) -> np.ndarray:
    """Tell whether the misorientation of each pair is below ``angle_rad`` (no arc cosine needed).

    Most neighbouring pixels of a map store the same symmetry variant, so the plain angle is
    tried first and the symmetry operations only for the pairs it does not settle.

    Parameters
    ----------
    qa, qb : numpy.ndarray, shape (N, 4)
        Unit quaternions of the two orientations of each pair.
    sym : numpy.ndarray, shape (K, 4)
        Proper symmetry rotations.
    angle_rad : float
        Threshold angle, radians.

    Returns
    -------
    numpy.ndarray of bool, shape (N,)
        True where the smallest misorientation is below ``angle_rad``.
    """
    limit = np.cos(angle_rad / 2.0)
    out = np.abs(np.einsum("nc,nc->n", qa, qb)) > limit
    rest = np.flatnonzero(~out)
    for start in range(0, len(rest), _CHUNK):
        idx = rest[start:start + _CHUNK]
        w = np.abs(np.einsum("nkc,nc->nk", _equivalents(qb[idx], sym), qa[idx])).max(axis=1)
        out[idx] = w > limit
    return out


def smallest_operation_angle(sym: np.ndarray) -> float:
    """Return the smallest rotation angle of the non-identity operations (pi for the trivial group).

    Parameters
    ----------
    sym : numpy.ndarray, shape (K, 4)
        Proper symmetry rotations.

    Returns
    -------
    float
        Angle, radians.
    """
    w = np.abs(sym[:, 0])
    w = w[w < 1.0 - 1e-9]
    return float(2.0 * np.arccos(w.max())) if len(w) else np.pi


def nearest_equivalent(q: np.ndarray, reference: np.ndarray, sym: np.ndarray) -> np.ndarray:
    """Find the symmetry-equivalent of each ``q`` closest to its ``reference``, sign-aligned.

    Used to bring the pixels of a grain to one variant before averaging. An orientation within
    half the smallest operation angle of its reference is its own nearest variant (every other
    variant is at least that far), so only the others are searched.

    Parameters
    ----------
    q : array_like, shape (N, 4)
        Unit quaternions to move.
    reference : array_like, shape (N, 4)
        Unit quaternion each is brought close to.
    sym : numpy.ndarray, shape (K, 4)
        Proper symmetry rotations.

    Returns
    -------
    numpy.ndarray, shape (N, 4)
        Equivalent orientations with a non-negative dot product with ``reference``.
    """
    q = np.asarray(q, dtype=float)
    reference = np.asarray(reference, dtype=float)
    dot = np.einsum("nc,nc->n", q, reference)
    out = q * np.where(dot < 0, -1.0, 1.0)[:, None]
    rest = np.flatnonzero(np.abs(dot) <= np.cos(smallest_operation_angle(sym) / 4.0))
    for start in range(0, len(rest), _CHUNK):
        idx = rest[start:start + _CHUNK]
        candidates = _equivalents(q[idx], sym)
        dots = np.einsum("nkc,nc->nk", candidates, reference[idx])
        best = np.argmax(np.abs(dots), axis=1)
        rows = np.arange(len(best))
        sign = np.where(dots[rows, best] < 0, -1.0, 1.0)
        out[idx] = candidates[rows, best] * sign[:, None]
    return out


def to_matrices(q: np.ndarray) -> np.ndarray:
    """Convert orix quaternions to Bunge orientation matrices g, ``v_crystal = g @ v_sample``.

    This is what orix's ``Rotation.to_matrix`` gives, written out: three times faster; checked
    against orix in tests/test_orientations.py.

    Parameters
    ----------
    q : array_like, shape (N, 4) or (4,)
        Quaternions (w, x, y, z); normalised here.

    Returns
    -------
    numpy.ndarray, shape (N, 3, 3)
        Orientation matrices.

    References
    ----------
    Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
    """
    q = np.atleast_2d(np.asarray(q, dtype=float))
    w, x, y, z = (q / np.sqrt(np.einsum("ij,ij->i", q, q))[:, None]).T
    out = np.empty((len(q), 3, 3))
    out[:, 0, 0], out[:, 0, 1], out[:, 0, 2] = 1 - 2 * (y * y + z * z), 2 * (x * y - w * z), 2 * (x * z + w * y)
    out[:, 1, 0], out[:, 1, 1], out[:, 1, 2] = 2 * (x * y + w * z), 1 - 2 * (x * x + z * z), 2 * (y * z - w * x)
    out[:, 2, 0], out[:, 2, 1], out[:, 2, 2] = 2 * (x * z - w * y), 2 * (y * z + w * x), 1 - 2 * (x * x + y * y)
    return out


def _unit(q: np.ndarray) -> np.ndarray:
    """Divide quaternions by their norms, as orix does (so that the bits agree with orix's)."""
    return q / np.sqrt(np.sum(q ** 2, axis=-1))[..., None]


def from_matrices(g: np.ndarray) -> np.ndarray:
    """Convert orientation matrices to orix quaternions; the inverse of :func:`to_matrices`.

    Rowenhorst et al. (2015), Eq. A.11, as orix computes it (the same bits, checked in
    tests/test_orientations.py).

    Parameters
    ----------
    g : array_like, shape (N, 3, 3) or (3, 3)
        Rotation matrices in Bunge's convention.

    Returns
    -------
    numpy.ndarray, shape (N, 4)
        Unit quaternions (w, x, y, z).

    References
    ----------
    Rowenhorst, D. et al. (2015). Consistent representations of and conversions between 3D
    rotations. Modelling Simul. Mater. Sci. Eng. 23, 083501.
    """
    g = np.asarray(g, dtype=float).reshape(-1, 3, 3)
    d0, d1, d2 = g[:, 0, 0], g[:, 1, 1], g[:, 2, 2]
    almost = np.stack([1 + d0 + d1 + d2, 1 + d0 - d1 - d2, 1 - d0 + d1 - d2, 1 - d0 - d1 + d2], axis=1)
    size = np.where(almost < 1e-9, 0.0, 0.5 * np.sqrt(np.maximum(almost, 0.0)))
    size[:, 1] *= np.where(g[:, 2, 1] < g[:, 1, 2], -1.0, 1.0)
    size[:, 2] *= np.where(g[:, 0, 2] < g[:, 2, 0], -1.0, 1.0)
    size[:, 3] *= np.where(g[:, 1, 0] < g[:, 0, 1], -1.0, 1.0)
    return _unit(_unit(size))


def from_bunge_euler(euler: np.ndarray) -> np.ndarray:
    """Convert Bunge Euler angles (phi1, Phi, phi2; radians) to orix quaternions with w >= 0.

    Rowenhorst et al. (2015), Eqs. A.5-A.6, as orix's ``Rotation.from_euler`` computes it (the
    same bits, checked in tests/test_orientations.py).

    Parameters
    ----------
    euler : array_like, shape (N, 3)
        Bunge angles (passive Z-X-Z), rad.

    Returns
    -------
    numpy.ndarray, shape (N, 4)
        Unit quaternions (w, x, y, z).

    References
    ----------
    Bunge, H.-J. (1982). Texture Analysis in Materials Science. Butterworths, London.
    Rowenhorst, D. et al. (2015). Modelling Simul. Mater. Sci. Eng. 23, 083501.
    """
    e = np.asarray(euler, dtype=float).reshape(-1, 3).T            # rows phi1, Phi, phi2
    sigma, delta = 0.5 * (e[0] + e[2]), 0.5 * (e[0] - e[2])
    half = e[1] / 2
    c, s = np.cos(half), np.sin(half)
    q = np.empty((4, e.shape[1]))                                  # one row per component: no temporaries
    np.multiply(c, np.cos(sigma), out=q[0])
    np.multiply(-s, np.cos(delta), out=q[1])
    np.multiply(-s, np.sin(delta), out=q[2])
    np.multiply(-c, np.sin(sigma), out=q[3])
    q[:, q[0] < 0] *= -1.0                                         # w >= 0
    norm = q[0] * q[0]
    for k in (1, 2, 3):                                            # summed in numpy's order along a row of 4
        norm += q[k] * q[k]
    q /= np.sqrt(norm)
    return np.ascontiguousarray(q.T)


def to_bunge_euler(q: np.ndarray) -> np.ndarray:
    """Convert orix quaternions to Bunge Euler angles (phi1, Phi, phi2), rad, each in [0, 2 pi).

    Rowenhorst et al. (2015), Eq. A.14, as orix's ``to_euler`` computes it (checked in
    tests/test_orientations.py).

    Parameters
    ----------
    q : array_like, shape (N, 4)
        Quaternions (w, x, y, z); normalised here.

    Returns
    -------
    numpy.ndarray, shape (N, 3)
        Bunge angles, rad.

    References
    ----------
    Rowenhorst, D. et al. (2015). Modelling Simul. Mater. Sci. Eng. 23, 083501.
    """
    w, x, y, z = _unit(np.asarray(q, dtype=float).reshape(-1, 4)).T
    q_ad, q_bc = w * w + z * z, x * x + y * y
    chi = np.sqrt(q_ad * q_bc)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.stack([np.arctan2((x * z - w * y) / chi, (-w * x - y * z) / chi),
                        np.arctan2(2 * chi, q_ad - q_bc),
                        np.arctan2((w * y + x * z) / chi, (y * z - w * x) / chi)], axis=1)
    out[np.abs(out) < 1e-9] = 0.0
    flat = chi < 1e-9                   # Phi = 0 or pi: only phi1 + phi2 (or phi1 - phi2) is defined
    if flat.any():
        top = q_bc[flat] < 1e-9
        wf, xf, yf, zf = w[flat], x[flat], y[flat], z[flat]
        out[flat, 0] = np.where(top, np.arctan2(-2 * wf * zf, wf * wf - zf * zf),
                                np.arctan2(-2 * xf * yf, xf * xf - yf * yf))
        out[flat, 1] = np.where(top, 0.0, np.pi)
        out[flat, 2] = 0.0
    return np.mod(out, 2 * np.pi)


def from_axis_angle(axis: np.ndarray, angle: float) -> np.ndarray:
    """Quaternion (1, 4) of a rotation by ``angle`` (rad) about ``axis``, as orix's ``from_axes_angles``.

    Parameters
    ----------
    axis : array_like, shape (3,)
        Rotation axis (normalised here).
    angle : float
        Rotation angle, rad.

    Returns
    -------
    numpy.ndarray, shape (1, 4)
        Unit quaternion (w, x, y, z).
    """
    a = np.asarray(axis, dtype=float)
    a = a / np.linalg.norm(a)
    return _unit(np.concatenate([[np.cos(angle / 2)], np.sin(angle / 2) * a])[None])
