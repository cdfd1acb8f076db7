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
    """Turn a signed sample-axis name such as ``"+x"`` or ``"-z"`` into a unit vector.

    Parameters
    ----------
    name : str
        Sign (``+`` or ``-``) followed by ``x``, ``y`` or ``z``.

    Returns
    -------
    numpy.ndarray, shape (3,)
        The unit vector in sample coordinates.

    Raises
    ------
    KeyError
        If the axis letter is not x, y or z.
    """
    v = np.zeros(3)
    v[_AXES[name[1]]] = 1.0 if name[0] == "+" else -1.0
    return v


def structural_matrix(frame: dict, source=None) -> np.ndarray:
    """Build the matrix F whose rows are X, Y, Z of the structural frame in sample coordinates.

    Parameters
    ----------
    frame : dict
        The settings block ``frame``: ``rotation`` (3x3, rows X, Y, Z), or ``lineation`` and
        ``foliation_normal`` as signed sample axes (default ``+x`` and ``+z``).
    source : str or Path, optional
        The settings file, for error messages.

    Returns
    -------
    numpy.ndarray, shape (3, 3)
        Proper rotation F with ``v_structural = F v_sample``.

    Raises
    ------
    InputError
        If ``rotation`` is not a proper rotation, or the lineation and foliation normal are the
        same sample axis.
    """
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
    """Re-express orientations (orix quaternions) in the structural frame: g -> g F^T.

    Parameters
    ----------
    quat : numpy.ndarray, shape (N, 4)
        Orientations in the sample frame.
    f : numpy.ndarray, shape (3, 3)
        Structural matrix (:func:`structural_matrix`).

    Returns
    -------
    numpy.ndarray, shape (N, 4)
        Orientations in the structural frame.
    """
    return quat @ right_matrix(from_matrices(f.T[None])[0]).T
