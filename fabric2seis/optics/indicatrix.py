"""The optical indicatrix seen along a view direction: indices, vibration directions, retardation.

A plane light wave whose normal is the unit vector k travels as two waves vibrating at right angles
(vibration of the displacement D). Their refractive indices n' are the semi-axes of the central
section of the indicatrix normal to k, the ellipse ``x^T B x = 1`` for x in the plane normal to k,
where ``B = epsilon^-1`` is the relative dielectric impermeability. With an orthonormal basis
(p, a) of that plane, the section is the symmetric 2x2 matrix ``M = [[p B p, p B a], [a B p, a B a]]``:
its eigenvalues are ``1 / n'^2`` and its eigenvectors the vibration directions. This is the shape
of the Christoffel equation of seismic waves (a symmetric matrix per propagation direction whose
eigenvectors are the polarisations), reduced to the two transverse waves.

Here p is the polariser's vibration direction and a the analyser's; orientations are Bunge's
passive matrices g (``v_crystal = g v_frame``), so the crystal-frame components of p and a are
``g p`` and ``g a``. Angles in the section are measured from p towards a: anticlockwise as seen
in the predicted image, where p points east (right) and a north (up).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from fabric2seis.orientations import to_matrices

#: sample axes by name, for the ``optics.view`` setting
_SAMPLE_AXES = {"x": 0, "y": 1, "z": 2}


@dataclass
class SectionOptics:
    """The two waves of every orientation for light normal to one section.

    Attributes
    ----------
    n_fast, n_slow
        Refractive indices (N,) of the fast and slow waves, dimensionless.
    fast_vibration_deg
        Vibration direction of the fast wave (N,), degrees from the polariser towards the analyser,
        0 to 180 (anticlockwise as seen in the predicted image).
    thickness_um
        Section thickness, micrometres.
    """

    n_fast: np.ndarray
    n_slow: np.ndarray
    fast_vibration_deg: np.ndarray
    thickness_um: float

    @property
    def birefringence(self) -> np.ndarray:
        """n_slow - n_fast (N,), dimensionless, zero down an optic axis."""
        return self.n_slow - self.n_fast

    @property
    def retardation_nm(self) -> np.ndarray:
        """Path difference of the two waves after the section (N,), nanometres: birefringence x thickness."""
        return self.birefringence * (self.thickness_um * 1000.0)

    @property
    def extinction_deg(self) -> np.ndarray:
        """Angle (N,) from the nearer polariser direction to a vibration direction, 0 to 45 degrees.

        The grain is dark (in extinction) when the stage turns it by this angle one way or the other.
        """
        e = np.mod(self.fast_vibration_deg, 90.0)
        return np.minimum(e, 90.0 - e)


def view_vector(view) -> np.ndarray:
    """Turn the ``optics.view`` setting into a unit vector in sample coordinates.

    Parameters
    ----------
    view : str or sequence of float
        ``"map_normal"`` (sample +z), a signed sample axis (``"+x"``, ``"-z"``...), or three numbers.

    Returns
    -------
    numpy.ndarray, shape (3,)
        The direction the observer looks along, into the section (light travels the other way).

    Raises
    ------
    ValueError
        If the name is unknown or the vector is zero or not three finite numbers.
    """
    if isinstance(view, str):
        if view == "map_normal":
            return np.array([0.0, 0.0, 1.0])
        if len(view) == 2 and view[0] in "+-" and view[1] in _SAMPLE_AXES:
            v = np.zeros(3)
            v[_SAMPLE_AXES[view[1]]] = 1.0 if view[0] == "+" else -1.0
            return v
        raise ValueError(f"view must be 'map_normal', a signed sample axis such as '+z', or three numbers, "
                         f"not {view!r}")
    v = np.asarray(view, dtype=float)
    if v.shape != (3,) or not np.all(np.isfinite(v)) or not np.linalg.norm(v) > 0:
        raise ValueError("a view vector must be three finite numbers, not all zero")
    return v / np.linalg.norm(v)


def polariser_directions(view) -> tuple[np.ndarray, np.ndarray]:
    """The polariser (east, right) and analyser (north, up) directions of the section normal to a view.

    The polariser is sample x projected onto the section (sample y when the view is along x); the
    analyser completes a frame in which the observer, looking along the view, sees the polariser
    to the right and the analyser up: ``analyser = polariser x view``. For the default view along
    +z (a map drawn with x to the right and y down), the polariser is +x and the analyser -y.

    Parameters
    ----------
    view : str or sequence of float
        As for :func:`view_vector`.

    Returns
    -------
    polariser, analyser : numpy.ndarray, each shape (3,)
        Unit vectors in sample coordinates, normal to the view and to each other.

    Raises
    ------
    ValueError
        If ``view`` is not valid (:func:`view_vector`).
    """
    d = view_vector(view)
    east = np.array([1.0, 0.0, 0.0])
    if abs(d @ east) > 0.999:
        east = np.array([0.0, 1.0, 0.0])
    east = east - (east @ d) * d
    east /= np.linalg.norm(east)
    return east, np.cross(east, d)


def section_optics(impermeability: np.ndarray, quat: np.ndarray, polariser: np.ndarray, analyser: np.ndarray,
                   thickness_um: float) -> SectionOptics:
    """Solve the central section of the indicatrix for every orientation (vectorised, no loops).

    Parameters
    ----------
    impermeability : numpy.ndarray, shape (3, 3)
        The mineral's B = epsilon^-1 in its crystal frame (``OpticalConstants.impermeability``).
    quat : numpy.ndarray, shape (N, 4)
        Orientations (orix quaternions) in the frame of ``polariser`` and ``analyser``.
    polariser, analyser : numpy.ndarray, shape (3,)
        Orthonormal vibration directions of the polariser and analyser in that frame; the light
        travels along their cross product's line.
    thickness_um : float
        Section thickness, micrometres.

    Returns
    -------
    SectionOptics
        Indices, fast vibration direction, and (as properties) birefringence, retardation and
        extinction angle.

    Raises
    ------
    ValueError
        If the thickness is not positive, the directions are not orthonormal, or B is not a
        symmetric positive-definite 3x3 matrix.

    References
    ----------
    Born, M. & Wolf, E. (1999). Principles of Optics, 7th ed., section 15.3 (the ellipsoid of wave
    normals). Nye, J. F. (1985). Physical Properties of Crystals, chapter 13.
    """
    b = np.asarray(impermeability, dtype=float)
    if b.shape != (3, 3) or not np.allclose(b, b.T) or np.linalg.eigvalsh(b).min() <= 0:
        raise ValueError("the impermeability must be a symmetric positive-definite 3x3 matrix")
    if not (np.isfinite(thickness_um) and thickness_um > 0):
        raise ValueError(f"the thickness must be positive, not {thickness_um}")
    p, a = np.asarray(polariser, dtype=float), np.asarray(analyser, dtype=float)
    if not np.allclose([p @ p, a @ a, p @ a], [1.0, 1.0, 0.0], atol=1e-9):
        raise ValueError("polariser and analyser must be orthonormal")
    g = to_matrices(quat)
    u, w = g @ p, g @ a                                    # (N, 3): p and a in each crystal's frame
    bu, bw = u @ b, w @ b                                  # B symmetric: rows are (B u)^T
    m11, m12, m22 = np.einsum("ij,ij->i", bu, u), np.einsum("ij,ij->i", bu, w), np.einsum("ij,ij->i", bw, w)
    mean, half = (m11 + m22) / 2.0, np.hypot((m11 - m22) / 2.0, m12)
    # the larger eigenvalue 1/n^2 is the fast wave; its eigenvector lies at atan2(2 m12, m11 - m22) / 2
    fast = np.degrees(0.5 * np.arctan2(2.0 * m12, m11 - m22)) % 180.0
    return SectionOptics(n_fast=(mean + half) ** -0.5, n_slow=(mean - half) ** -0.5, fast_vibration_deg=fast,
                         thickness_um=float(thickness_um))
