"""Vectorised quaternion arithmetic for orientations, in orix's convention.

Quaternions are (w, x, y, z) as in orix; ``multiply(a, b)`` corresponds to the matrix product
``A @ B`` of their rotation matrices, and an orientation's symmetry-equivalents are ``s * q``
for the proper rotations s of the crystal's point group (crystal symmetry acts on the crystal
side of g, ``v_crystal = g v_sample``). These are checked against orix in tests/test_orientations.py.
"""

from __future__ import annotations

import numpy as np
from orix.quaternion import Rotation


def multiply(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Hamilton product of quaternion arrays (broadcasting over leading axes)."""
    a0, a1, a2, a3 = np.moveaxis(np.asarray(a, dtype=float), -1, 0)
    b0, b1, b2, b3 = np.moveaxis(np.asarray(b, dtype=float), -1, 0)
    return np.stack([a0 * b0 - a1 * b1 - a2 * b2 - a3 * b3,
                     a0 * b1 + a1 * b0 + a2 * b3 - a3 * b2,
                     a0 * b2 - a1 * b3 + a2 * b0 + a3 * b1,
                     a0 * b3 + a1 * b2 - a2 * b1 + a3 * b0], axis=-1)


def conjugate(q: np.ndarray) -> np.ndarray:
    q = np.asarray(q, dtype=float)
    return q * np.array([1.0, -1.0, -1.0, -1.0])


def proper_symmetry_quaternions(symmetry) -> np.ndarray:
    """Quaternions (K, 4) of the proper rotations of an orix point-group Symmetry."""
    return np.asarray(symmetry.proper_subgroup.data, dtype=float).reshape(-1, 4)


def misorientation_angles(qa: np.ndarray, qb: np.ndarray, sym: np.ndarray) -> np.ndarray:
    """Smallest misorientation angle (radians) between orientations ``qa`` and ``qb`` (N, 4).

    Both crystals share the proper symmetry ``sym`` (K, 4). The angle of ``s_1 dq s_2`` depends
    only on ``s_2 s_1 dq`` up to conjugation, so the minimum over both crystals' operations is
    the minimum over one: the largest |w| of ``s * dq`` over s, with ``dq = qb * conj(qa)``.
    """
    dq = multiply(qb, conjugate(qa))
    # w of s * dq is s0 dq0 - s_vec . dq_vec: one (N, 4) @ (4, K) product
    w = np.abs(dq @ (sym * np.array([1.0, -1.0, -1.0, -1.0])).T).max(axis=1)
    return 2.0 * np.arccos(np.clip(w, 0.0, 1.0))


def nearest_equivalent(q: np.ndarray, reference: np.ndarray, sym: np.ndarray) -> np.ndarray:
    """The symmetry-equivalent of each ``q`` (N, 4) closest to ``reference`` (N, 4), sign-aligned.

    Used to bring the pixels of a grain to one variant before averaging.
    """
    candidates = multiply(sym[None, :, :], q[:, None, :])  # (N, K, 4): s * q
    dots = np.einsum("nkc,nc->nk", candidates, reference)
    best = np.argmax(np.abs(dots), axis=1)
    chosen = candidates[np.arange(len(q)), best]
    sign = np.sign(dots[np.arange(len(q)), best])
    sign[sign == 0] = 1.0
    return chosen * sign[:, None]


def to_matrices(q: np.ndarray) -> np.ndarray:
    """Bunge matrices g (N, 3, 3) of orix quaternions."""
    return Rotation(np.asarray(q, dtype=float)).to_matrix().reshape(-1, 3, 3)


def from_matrices(g: np.ndarray) -> np.ndarray:
    return np.asarray(Rotation.from_matrix(np.asarray(g, dtype=float)).data, dtype=float).reshape(-1, 4)
