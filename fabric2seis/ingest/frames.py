"""Sample -> structural frame (X lineation, Z foliation normal, Y = Z x X).

Settings give the signed sample axis of the lineation and of the foliation normal, or a general
rotation (rows X, Y, Z in sample axes) for oblique sections. Orientations ``g``
(``v_crystal = g v_sample``) become ``g F^T`` with ``v_structural = F v_sample``.
"""

from __future__ import annotations

import numpy as np

from fabric2seis.errors import InputError
from fabric2seis.orientations import from_matrices, right_matrix

_AXES = {"x": 0, "y": 1, "z": 2}


def signed_axis(name: str) -> np.ndarray:
    v = np.zeros(3)
    v[_AXES[name[1]]] = 1.0 if name[0] == "+" else -1.0
    return v


def structural_matrix(frame: dict, source=None) -> np.ndarray:
    """F (3, 3) whose rows are X, Y, Z of the structural frame in sample coordinates."""
    if frame.get("rotation") is not None:
        f = np.array(frame["rotation"], dtype=float)
        if not np.allclose(f @ f.T, np.eye(3), atol=1e-4) or np.linalg.det(f) < 0:
            raise InputError("frame.rotation must be a proper rotation matrix (orthonormal rows X, Y, Z, "
                             "determinant +1)", source, "key frame.rotation")
        u, _, vt = np.linalg.svd(f)  # clean up rounding of a typed-in matrix
        return u @ vt
    x = signed_axis(frame.get("lineation", "+x"))
    z = signed_axis(frame.get("foliation_normal", "+z"))
    if abs(x @ z) > 0:
        raise InputError("lineation and foliation normal must be different sample axes", source, "key frame")
    return np.vstack([x, np.cross(z, x), z])


def to_structural(quat: np.ndarray, f: np.ndarray) -> np.ndarray:
    """Orientations (orix quaternions) re-expressed in the structural frame: g -> g F^T."""
    return quat @ right_matrix(from_matrices(f.T[None])[0]).T
