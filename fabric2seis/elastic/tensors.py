"""Elastic tensor algebra, rotation by crystal orientations, and aggregate averages.

Conventions (see ``../shared/guide/CONVENTIONS.md``):

* Voigt notation, index order 11, 22, 33, 23, 13, 12; stiffness in GPa. The inverse of a
  6x6 Voigt stiffness is the Voigt compliance (factors 2 and 4 included).
* Kelvin (Mandel) form multiplies shear rows and columns by sqrt(2); in it a rotation is an
  orthogonal 6x6 matrix and the stiffness and compliance are plain matrix inverses.
* Orientations are Bunge's passive matrices ``g`` (``v_crystal = g @ v_sample``), as returned by
  ``orix.quaternion.Orientation.to_matrix()``. A crystal tensor expressed in the sample frame is
  therefore rotated by ``R = g.T``.

Everything is vectorised over N orientations. Rotation is done with 6x6 Kelvin rotation
matrices (Mehrabadi & Cowin 1990), laid out component-major so that averages are plain matrix
products; ``benchmarks/rotation_and_averaging.py`` measures the gain over contracting full
3x3x3x3 tensors.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from fabric2seis.errors import InputError

__all__ = [
    "VOIGT_PAIRS", "check_rotations", "CHUNK", "AVERAGES", "voigt_to_tensor", "tensor_to_voigt", "voigt_to_kelvin",
    "kelvin_to_voigt", "compliance", "check_stiffness", "kelvin_rotation", "rotate_voigt",
    "crystal_to_sample", "rotated_kelvin", "rotated_kelvin_upper", "logm_spd", "expm_sym",
    "PhaseTensors", "crystal_kelvin_matrices", "weighted_rotated_mean", "average_tensors",
    "WeightedSums", "phase_sums", "averages_from_sums",
    "voigt_moduli", "reuss_moduli", "hill_moduli", "isotropic_stiffness",
]

#: Voigt index -> pair of tensor indices, in the order 11, 22, 33, 23, 13, 12.
VOIGT_PAIRS = ((0, 0), (1, 1), (2, 2), (1, 2), (0, 2), (0, 1))
_I = np.array([p[0] for p in VOIGT_PAIRS])
_J = np.array([p[1] for p in VOIGT_PAIRS])
#: tensor index pair -> Voigt index
_VOIGT_OF = np.array([[0, 5, 4], [5, 1, 3], [4, 3, 2]])
_KELVIN_SCALE = np.array([1.0, 1.0, 1.0, np.sqrt(2.0), np.sqrt(2.0), np.sqrt(2.0)])
_KELVIN_OUTER = np.outer(_KELVIN_SCALE, _KELVIN_SCALE)
_SQRT2 = np.sqrt(2.0)
#: orientations handled at once by the averaging kernel: small enough to stay in cache
CHUNK = 4096

AVERAGES = ("voigt", "reuss", "hill", "geometric")


# --- notation ---------------------------------------------------------------------------------


def voigt_to_tensor(c: np.ndarray) -> np.ndarray:
    """Expand Voigt stiffness matrices into full fourth-rank tensors.

    Parameters
    ----------
    c : numpy.ndarray, shape (..., 6, 6)
        Voigt stiffness, index order 11, 22, 33, 23, 13, 12, GPa (any unit is carried through).

    Returns
    -------
    numpy.ndarray, shape (..., 3, 3, 3, 3)
        The same stiffness as ``C_ijkl``, in the unit of ``c``.
    """
    c = np.asarray(c, dtype=float)
    return c[..., _VOIGT_OF[:, :, None, None], _VOIGT_OF[None, None, :, :]]


def tensor_to_voigt(t: np.ndarray) -> np.ndarray:
    """Contract full fourth-rank stiffness tensors to Voigt matrices.

    Parameters
    ----------
    t : numpy.ndarray, shape (..., 3, 3, 3, 3)
        Stiffness ``C_ijkl`` with the usual minor and major symmetries, GPa.

    Returns
    -------
    numpy.ndarray, shape (..., 6, 6)
        Voigt stiffness, index order 11, 22, 33, 23, 13, 12, in the unit of ``t``.
    """
    t = np.asarray(t, dtype=float)
    return t[..., _I[:, None], _J[:, None], _I[None, :], _J[None, :]]


def voigt_to_kelvin(c: np.ndarray, kind: str = "stiffness") -> np.ndarray:
    """Convert a Voigt stiffness or compliance to Kelvin (Mandel) form.

    A Voigt compliance carries factors 2 and 4 on its shear terms; its Kelvin form divides
    them out again, so that the Kelvin compliance is the inverse of the Kelvin stiffness.

    Parameters
    ----------
    c : numpy.ndarray, shape (..., 6, 6)
        Voigt stiffness (GPa) or Voigt compliance (1/GPa).
    kind : {"stiffness", "compliance"}
        Which of the two ``c`` is.

    Returns
    -------
    numpy.ndarray, shape (..., 6, 6)
        Kelvin form, in the unit of ``c``.

    Raises
    ------
    ValueError
        If ``kind`` is neither ``"stiffness"`` nor ``"compliance"``.
    """
    c = np.asarray(c, dtype=float)
    if kind == "stiffness":
        return c * _KELVIN_OUTER
    if kind == "compliance":
        return c / _KELVIN_OUTER
    raise ValueError(f"kind must be 'stiffness' or 'compliance', not {kind!r}")


def kelvin_to_voigt(k: np.ndarray, kind: str = "stiffness") -> np.ndarray:
    """Convert a Kelvin (Mandel) matrix back to Voigt form; the inverse of :func:`voigt_to_kelvin`.

    Parameters
    ----------
    k : numpy.ndarray, shape (..., 6, 6)
        Kelvin stiffness (GPa) or Kelvin compliance (1/GPa).
    kind : {"stiffness", "compliance"}
        Which of the two ``k`` is.

    Returns
    -------
    numpy.ndarray, shape (..., 6, 6)
        Voigt stiffness or Voigt compliance (shear factors 2 and 4 restored), in the unit of ``k``.

    Raises
    ------
    ValueError
        If ``kind`` is neither ``"stiffness"`` nor ``"compliance"``.
    """
    k = np.asarray(k, dtype=float)
    if kind == "stiffness":
        return k / _KELVIN_OUTER
    if kind == "compliance":
        return k * _KELVIN_OUTER
    raise ValueError(f"kind must be 'stiffness' or 'compliance', not {kind!r}")


def compliance(c: np.ndarray) -> np.ndarray:
    """Voigt compliance of a Voigt stiffness: the plain 6x6 inverse.

    Parameters
    ----------
    c : numpy.ndarray, shape (..., 6, 6)
        Voigt stiffness, GPa.

    Returns
    -------
    numpy.ndarray, shape (..., 6, 6)
        Voigt compliance (shear factors 2 and 4 included), 1/GPa.

    Raises
    ------
    numpy.linalg.LinAlgError
        If ``c`` is singular.
    """
    return np.linalg.inv(np.asarray(c, dtype=float))


# --- checks -----------------------------------------------------------------------------------


def check_stiffness(c: np.ndarray, source: str | None = None, where: str | None = None,
                    rtol: float = 1e-8) -> np.ndarray:
    """Return ``c`` as a float 6x6 array after checking it is a valid stiffness.

    Parameters
    ----------
    c : array_like, shape (6, 6)
        Voigt stiffness, GPa.
    source, where : str, optional
        File and place (key, line) the stiffness came from, carried by the error message.
    rtol : float
        Largest asymmetry ``|c_ij - c_ji|`` allowed, relative to the largest entry of ``c``.

    Returns
    -------
    numpy.ndarray, shape (6, 6)
        ``c`` as floats, GPa.

    Raises
    ------
    InputError
        Unless ``c`` is 6x6, finite, symmetric (to ``rtol`` of its largest entry) and positive
        definite (strain energy positive for every strain).
    """
    c = np.asarray(c, dtype=float)
    if c.shape != (6, 6):
        raise InputError(f"a stiffness must be a 6x6 matrix, got shape {c.shape}", source, where)
    if not np.all(np.isfinite(c)):
        raise InputError("the stiffness has non-finite entries", source, where)
    scale = np.max(np.abs(c))
    bad = np.argwhere(np.abs(c - c.T) > rtol * max(scale, 1e-300))
    if len(bad):
        i, j = bad[0]
        raise InputError(
            f"the stiffness is not symmetric: c{i + 1}{j + 1} = {c[i, j]:g} but "
            f"c{j + 1}{i + 1} = {c[j, i]:g}", source, where)
    smallest = np.linalg.eigvalsh(voigt_to_kelvin(c)).min()
    if smallest <= 1e-9 * scale:
        raise InputError(
            f"the stiffness is not positive definite (smallest Kelvin eigenvalue "
            f"{smallest:.4g} GPa): some strain would store negative energy", source, where)
    return c


# --- rotation ---------------------------------------------------------------------------------


def kelvin_rotation(r: np.ndarray) -> np.ndarray:
    """Build the 6x6 Kelvin rotation matrices of 3x3 rotations.

    For a tensor rotated as ``T'_ijkl = r_ia r_jb r_kc r_ld T_abcd`` the Kelvin form rotates as
    ``K' = Q K Q^T`` with ``Q`` orthogonal (Mehrabadi & Cowin 1990):
    ``Q_ab = s_a s_b / 2 (r_ik r_jl + r_il r_jk)`` for Voigt pairs a = (i, j), b = (k, l) and
    ``s = 1`` on normal, ``sqrt(2)`` on shear indices.

    Parameters
    ----------
    r : numpy.ndarray, shape (..., 3, 3)
        Orthogonal matrices mapping old axes to new (not checked here).

    Returns
    -------
    numpy.ndarray, shape (..., 6, 6)
        Orthogonal Kelvin rotations ``Q``.

    References
    ----------
    Mehrabadi, M. M. & Cowin, S. C. (1990). Eigentensors of linear anisotropic elastic materials.
    Q. J. Mech. Appl. Math. 43, 15-41.
    """
    r = np.asarray(r, dtype=float)
    lead = r.shape[:-2]
    rc = np.moveaxis(r.reshape(-1, 3, 3), 0, -1)  # (3, 3, n)
    return np.moveaxis(_kelvin_rotation_by_component(rc), -1, 0).reshape(*lead, 6, 6)


def _kelvin_rotation_by_component(rc: np.ndarray) -> np.ndarray:
    """Kelvin rotations laid out component-major: rotations ``rc`` (3, 3, n) -> ``Q`` (6, 6, n).

    Each of the 36 entries is a product of two rows of contiguous numbers, which is several
    times faster than gathering from (n, 3, 3) arrays and lets the averages below run as plain
    matrix products.
    """
    out = np.empty((6, 6) + rc.shape[2:])
    for a, (i, j) in enumerate(VOIGT_PAIRS):
        for b, (k, l) in enumerate(VOIGT_PAIRS):
            o = out[a, b]
            if a < 3 and b < 3:
                np.multiply(rc[i, k], rc[i, k], out=o)
            elif a < 3:
                np.multiply(rc[i, k], rc[i, l], out=o)
                o *= _SQRT2
            elif b < 3:
                np.multiply(rc[i, k], rc[j, k], out=o)
                o *= _SQRT2
            else:
                np.multiply(rc[i, k], rc[j, l], out=o)
                o += rc[i, l] * rc[j, k]
    return out


def check_rotations(r: np.ndarray, what: str = "rotation matrices", tolerance: float = 1e-6,
                    proper: bool = True) -> np.ndarray:
    """Check that matrices are orthogonal (and, if ``proper``, of determinant +1).

    ``tolerance`` is the largest entry of ``r r^T - I`` allowed (rounding of matrices built from
    quaternions is ~1e-15). Improper operations (reflections, inversion) are fine for tensors of
    even rank, so :func:`rotate_voigt` accepts them.

    Parameters
    ----------
    r : array_like, shape (..., 3, 3)
        Matrices to check.
    what : str
        How the matrices are named in error messages.
    tolerance : float
        Largest absolute entry of ``r r^T - I`` accepted.
    proper : bool
        Whether reflections (determinant -1) are refused.

    Returns
    -------
    numpy.ndarray, shape (..., 3, 3)
        ``r`` as floats.

    Raises
    ------
    ValueError
        If ``r`` is not of shape (..., 3, 3), not orthogonal within ``tolerance``, or, with
        ``proper``, includes a reflection.
    """
    r = np.asarray(r, dtype=float)
    if r.ndim < 2 or r.shape[-2:] != (3, 3):
        raise ValueError(f"{what} must have shape (..., 3, 3), got {r.shape}")
    if r.size == 0:
        return r
    rows = r.reshape(-1, 3, 3)
    a, b, c = rows[:, 0, :], rows[:, 1, :], rows[:, 2, :]
    # the six distinct entries of r r^T - I, row by row (cheaper than a batched einsum on millions)
    gram = [np.abs((a * a).sum(1) - 1), np.abs((b * b).sum(1) - 1), np.abs((c * c).sum(1) - 1),
            np.abs((a * b).sum(1)), np.abs((a * c).sum(1)), np.abs((b * c).sum(1))]
    worst = max(float(e.max()) for e in gram)
    if not worst <= tolerance:
        raise ValueError(f"{what} are not orthogonal: r r^T differs from the identity by up to {worst:.2e}")
    determinant = (a[:, 0] * (b[:, 1] * c[:, 2] - b[:, 2] * c[:, 1]) - a[:, 1] * (b[:, 0] * c[:, 2] - b[:, 2] * c[:, 0])
                   + a[:, 2] * (b[:, 0] * c[:, 1] - b[:, 1] * c[:, 0]))
    if proper and np.any(determinant < 0):
        raise ValueError(f"{what} include reflections (determinant -1); proper rotations are needed")
    return r


def rotate_voigt(c: np.ndarray, r: np.ndarray) -> np.ndarray:
    """Rotate a Voigt stiffness by one or more rotations; ``r`` maps old axes to new.

    Parameters
    ----------
    c : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa.
    r : numpy.ndarray, shape (..., 3, 3)
        Orthogonal matrices; reflections are fine for a tensor of even rank.

    Returns
    -------
    numpy.ndarray, shape (..., 6, 6)
        Rotated Voigt stiffnesses, GPa.

    Raises
    ------
    ValueError
        If ``r`` are not orthogonal (:func:`check_rotations`).

    References
    ----------
    Mehrabadi, M. M. & Cowin, S. C. (1990). Q. J. Mech. Appl. Math. 43, 15-41 (Kelvin rotations).
    """
    q = kelvin_rotation(check_rotations(r, proper=False))
    return kelvin_to_voigt(q @ voigt_to_kelvin(c) @ np.swapaxes(q, -1, -2))


def crystal_to_sample(c_crystal: np.ndarray, g: np.ndarray, chunk: int = CHUNK) -> np.ndarray:
    """Express a crystal-frame Voigt stiffness in the sample frame for each of N orientations.

    Used where every grain's tensor is needed (the bootstrap); for averages use
    :func:`weighted_rotated_mean`, which never stores them.

    Parameters
    ----------
    c_crystal : numpy.ndarray, shape (6, 6)
        Voigt stiffness in the crystal Cartesian frame, GPa.
    g : numpy.ndarray, shape (N, 3, 3)
        Bunge orientation matrices, ``v_crystal = g @ v_sample``.
    chunk : int
        Orientations rotated at once (bounds memory).

    Returns
    -------
    numpy.ndarray, shape (N, 6, 6)
        Sample-frame Voigt stiffnesses, GPa.

    Raises
    ------
    ValueError
        If ``g`` is not of shape (N, 3, 3).
    """
    return kelvin_to_voigt(rotated_kelvin(voigt_to_kelvin(c_crystal), g, chunk))


def rotated_kelvin(x_kelvin: np.ndarray, g: np.ndarray, chunk: int = CHUNK) -> np.ndarray:
    """Rotate a crystal-frame Kelvin matrix into the sample frame for every orientation.

    Parameters
    ----------
    x_kelvin : numpy.ndarray, shape (6, 6)
        Kelvin stiffness (GPa), compliance (1/GPa) or its logarithm, in the crystal frame.
    g : numpy.ndarray, shape (N, 3, 3)
        Bunge orientation matrices, ``v_crystal = g @ v_sample``.
    chunk : int
        Orientations rotated at once (bounds memory).

    Returns
    -------
    numpy.ndarray, shape (N, 6, 6)
        ``Q_n X Q_n^T`` for each orientation, in the unit of ``x_kelvin``.

    Raises
    ------
    ValueError
        If ``g`` is not of shape (N, 3, 3).
    """
    g = np.asarray(g, dtype=float)
    if g.ndim != 3 or g.shape[1:] != (3, 3):
        raise ValueError(f"orientation matrices must have shape (N, 3, 3), got {g.shape}")
    x = np.asarray(x_kelvin, dtype=float)
    out = np.empty((len(g), 6, 6))
    for start in range(0, len(g), chunk):
        q = _kelvin_rotation_by_component(np.ascontiguousarray(g[start:start + chunk].transpose(2, 1, 0)))
        qn = np.ascontiguousarray(q.transpose(2, 0, 1))   # (n, 6, 6)
        out[start:start + chunk] = qn @ x @ np.swapaxes(qn, 1, 2)
    return out


def rotated_kelvin_upper(x_stack: np.ndarray, g: np.ndarray, weights: np.ndarray | None = None,
                         chunk: int = CHUNK) -> np.ndarray:
    """Return the 21 upper-triangle entries of several Kelvin matrices rotated by each orientation.

    Columns t*21 .. t*21+20 hold matrix t (``numpy.triu_indices(6)`` order), optionally times
    ``weights`` per orientation. The rotation of each orientation is built once for all T
    matrices (the bootstrap needs the stiffness and the compliance of every grain).

    Parameters
    ----------
    x_stack : numpy.ndarray, shape (T, 6, 6)
        Crystal-frame Kelvin matrices (stiffness in GPa, compliance in 1/GPa, ...).
    g : numpy.ndarray, shape (N, 3, 3)
        Bunge orientation matrices, ``v_crystal = g @ v_sample``.
    weights : numpy.ndarray, shape (N,), optional
        Factor applied to each orientation's row.
    chunk : int
        Orientations rotated at once (bounds memory).

    Returns
    -------
    numpy.ndarray, shape (N, 21 * T)
        Upper-triangle entries of every rotated matrix, in the units of ``x_stack``.
    """
    g = np.asarray(g, dtype=float)
    xs = np.asarray(x_stack, dtype=float)
    upper = np.triu_indices(6)
    out = np.empty((len(g), 21 * len(xs)))
    for start in range(0, len(g), chunk):
        q = _kelvin_rotation_by_component(np.ascontiguousarray(g[start:start + chunk].transpose(2, 1, 0)))
        qn = np.ascontiguousarray(q.transpose(2, 0, 1))
        for t, x in enumerate(xs):
            rotated = qn @ x @ np.swapaxes(qn, 1, 2)
            out[start:start + chunk, 21 * t:21 * (t + 1)] = rotated[:, upper[0], upper[1]]
    if weights is not None:
        out *= np.asarray(weights, dtype=float)[:, None]
    return out


# --- matrix functions of symmetric positive-definite matrices ------------------------------


def logm_spd(a: np.ndarray) -> np.ndarray:
    """Matrix logarithm of symmetric positive-definite matrices, by eigendecomposition.

    Parameters
    ----------
    a : numpy.ndarray, shape (..., n, n)
        Symmetric positive-definite matrices (e.g. Kelvin stiffnesses in GPa).

    Returns
    -------
    numpy.ndarray, shape (..., n, n)
        Symmetric matrix logarithms (of the numbers in the unit of ``a``).
    """
    w, v = np.linalg.eigh(a)
    return (v * np.log(w)[..., None, :]) @ np.swapaxes(v, -1, -2)


def expm_sym(a: np.ndarray) -> np.ndarray:
    """Matrix exponential of symmetric matrices, by eigendecomposition; the inverse of :func:`logm_spd`.

    Parameters
    ----------
    a : numpy.ndarray, shape (..., n, n)
        Symmetric matrices.

    Returns
    -------
    numpy.ndarray, shape (..., n, n)
        Symmetric positive-definite matrix exponentials.
    """
    w, v = np.linalg.eigh(a)
    return (v * np.exp(w)[..., None, :]) @ np.swapaxes(v, -1, -2)


# --- averaging --------------------------------------------------------------------------------


@dataclass(frozen=True)
class PhaseTensors:
    """One phase of an aggregate as the averages need it.

    Holds its crystal stiffness, the orientation matrices it occurs in, their weights, its volume
    fraction and its twin variants.

    (The stages carry a phase's orientations as ``orientations.PhaseOrientations``; this is the
    tensor-level view of the same phase.)

    Attributes
    ----------
    stiffness_gpa
        6x6 Voigt stiffness in the crystal Cartesian frame orix uses for the phase, GPa.
    g
        Bunge orientation matrices (N, 3, 3), ``v_crystal = g @ v_sample``.
    weights
        Non-negative weight of each orientation (area, volume, or 1 per grain), shape (N,).
    fraction
        Volume fraction of the phase in the rock.
    variants
        Crystal-frame rotations (3, 3) to twin variants standing in equal parts with the crystal.
    """

    stiffness_gpa: np.ndarray
    g: np.ndarray
    weights: np.ndarray
    fraction: float = 1.0
    variants: tuple = ()


def crystal_kelvin_matrices(stiffness_gpa: np.ndarray, variants=()) -> dict[str, np.ndarray]:
    """Return a crystal's Kelvin stiffness, compliance and matrix logarithm, each its mean over twin variants.

    ``variants`` are crystal-frame rotations (3, 3) to the twin variants that stand in equal parts
    with the crystal for every measured orientation (``Mineral.twin_rotations``). A mean over
    variants is a weighted sum over orientations, so it is taken in each average's own linear
    space: stiffness for Voigt, compliance for Reuss, the matrix logarithm for the geometric mean.
    Averaging the stiffness first and inverting it would give a wrong Reuss average.

    Parameters
    ----------
    stiffness_gpa : numpy.ndarray, shape (6, 6)
        Voigt stiffness in the crystal frame, GPa.
    variants : sequence of numpy.ndarray, each shape (3, 3)
        Crystal-frame rotations to the twin variants; empty for none.

    Returns
    -------
    dict of str to numpy.ndarray, each shape (6, 6)
        ``"stiffness"`` (Kelvin, GPa), ``"compliance"`` (Kelvin, 1/GPa) and ``"log"`` (matrix
        logarithm of the Kelvin stiffness in GPa).
    """
    tensors = [np.asarray(stiffness_gpa, dtype=float)] + [rotate_voigt(stiffness_gpa, r) for r in variants]
    kelvin = [voigt_to_kelvin(c) for c in tensors]
    return {"stiffness": np.mean(kelvin, axis=0),
            "compliance": np.mean([np.linalg.inv(k) for k in kelvin], axis=0),
            "log": np.mean([logm_spd(k) for k in kelvin], axis=0)}


def weighted_rotated_mean(x_kelvin: np.ndarray, g: np.ndarray, weights: np.ndarray,
                          chunk: int = CHUNK) -> np.ndarray:
    """Weighted mean over orientations of a crystal-frame Kelvin matrix rotated into the sample frame.

    Returns ``sum_n w_n Q_n X Q_n^T / sum_n w_n`` (6, 6), with ``Q_n`` the Kelvin rotation of
    ``g_n.T``. The sum is linear in ``X``, so the same kernel serves the Voigt (stiffness),
    Reuss (compliance) and geometric (matrix logarithm) averages. Orientations are handled in
    chunks laid out component-major, so that every step is a contiguous elementwise product or
    one matrix product, and memory stays bounded for millions of orientations.

    Parameters
    ----------
    x_kelvin : numpy.ndarray, shape (6, 6)
        Symmetric crystal-frame Kelvin matrix (stiffness in GPa, compliance in 1/GPa, or the
        logarithm of a stiffness).
    g : numpy.ndarray, shape (N, 3, 3)
        Bunge orientation matrices, ``v_crystal = g @ v_sample``.
    weights : numpy.ndarray, shape (N,)
        Non-negative weight of each orientation, with a positive sum.
    chunk : int
        Orientations handled at once.

    Returns
    -------
    numpy.ndarray, shape (6, 6)
        Symmetric weighted mean in the sample frame, in the unit of ``x_kelvin``.

    Raises
    ------
    ValueError
        If ``g`` is not (N, 3, 3) proper rotations, ``weights`` is not (N,) non-negative with a
        positive sum, or ``x_kelvin`` is not a symmetric 6x6 matrix.
    """
    x = np.asarray(x_kelvin, dtype=float)
    g, w = _orientations_and_weights(g, weights)
    if x.shape != (6, 6) or not np.allclose(x, x.T, rtol=1e-12, atol=1e-12 * np.abs(x).max()):
        raise ValueError(f"x_kelvin must be a symmetric 6x6 matrix, got shape {x.shape}")
    return _rotated_mean(x, g, w, chunk)


def _rotated_mean(x: np.ndarray, g: np.ndarray, w: np.ndarray, chunk: int = CHUNK) -> np.ndarray:
    """:func:`weighted_rotated_mean` on arguments already checked (the averages check a phase once)."""
    return _rotated_sum(x, g, w, chunk) / w.sum()


def _rotated_sum(x: np.ndarray, g: np.ndarray, w: np.ndarray, chunk: int = CHUNK) -> np.ndarray:
    """``sum_n w_n Q_n X Q_n^T`` (6, 6), symmetric, on arguments already checked."""
    acc = np.zeros((6, 6))
    for start in range(0, len(g), chunk):
        # rc[i, k, n] = R_n[i, k] with R_n = g_n^T, i.e. g_n[k, i]
        rc = np.ascontiguousarray(g[start:start + chunk].transpose(2, 1, 0))
        q = _kelvin_rotation_by_component(rc)  # (6, 6, n)
        a = x @ q  # a[i, k, n] = (Q_n X)[i, k], X being symmetric
        a *= w[start:start + chunk]
        acc += a.reshape(6, -1) @ q.reshape(6, -1).T  # sum over n and k of (w Q X)_ik Q_lk
    return (acc + acc.T) / 2.0


def _orientations_and_weights(g: np.ndarray, weights: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    g = np.asarray(g, dtype=float)
    w = np.asarray(weights, dtype=float)
    if g.ndim != 3 or g.shape[1:] != (3, 3):
        raise ValueError(f"orientation matrices must have shape (N, 3, 3), got {g.shape}")
    check_rotations(g, "orientation matrices")
    if w.shape != (len(g),):
        raise ValueError(f"{len(g)} orientations but weights of shape {w.shape}")
    if np.any(w < 0) or not w.sum() > 0:
        raise ValueError("weights must be non-negative with a positive sum")
    return g, w


def average_tensors(phases: Sequence[PhaseTensors]) -> dict[str, np.ndarray]:
    """Compute the four averages of an aggregate of one or more phases, as 6x6 Voigt stiffnesses in GPa.

    * ``voigt``: volume-weighted mean stiffness (Voigt 1928);
    * ``reuss``: inverse of the volume-weighted mean compliance (Reuss 1929);
    * ``hill``: arithmetic mean of the Voigt and Reuss tensors (Hill 1952);
    * ``geometric``: exponential of the weighted mean matrix logarithm of the Kelvin stiffness
      (Matthies & Humbert 1993); it is the inverse of the same mean taken over compliances.

    Orientations within a phase are weighted by ``weights``; phases by ``fraction``
    (renormalised to sum to 1). A phase's twin ``variants`` enter each average in its own space
    (:func:`crystal_kelvin_matrices`).

    Parameters
    ----------
    phases : sequence of PhaseTensors
        The phases of the aggregate, each with its crystal stiffness (GPa), orientations and
        weights.

    Returns
    -------
    dict of str to numpy.ndarray, each shape (6, 6)
        Sample-frame Voigt stiffness in GPa under the keys ``"voigt"``, ``"reuss"``, ``"hill"``
        and ``"geometric"`` (the names in :data:`AVERAGES`).

    Raises
    ------
    ValueError
        If ``phases`` is empty, the fractions are negative or sum to zero, or a phase's
        orientations or weights are invalid (:func:`weighted_rotated_mean`).

    References
    ----------
    Voigt, W. (1928). Lehrbuch der Kristallphysik. Teubner, Leipzig.
    Reuss, A. (1929). Berechnung der Fliessgrenze von Mischkristallen auf Grund der
    Plastizitaetsbedingung fuer Einkristalle. Z. Angew. Math. Mech. 9, 49-58.
    Hill, R. (1952). The elastic behaviour of a crystalline aggregate. Proc. Phys. Soc. A 65, 349-354.
    Matthies, S. & Humbert, M. (1993). The realization of the concept of a geometric mean for
    calculating physical constants of polycrystalline materials. Phys. Status Solidi B 177, K47-K50.
    """
    if not phases:
        raise ValueError("an aggregate needs at least one phase")
    fractions = [p.fraction for p in phases]
    return averages_from_sums([phase_sums(p) if p.fraction != 0 else WeightedSums.empty() for p in phases],
                              fractions)


@dataclass(frozen=True)
class WeightedSums:
    """The weighted sums over a phase's orientations from which its share of every average follows.

    Each sum is ``sum_n w_n Q_n X Q_n^T`` over the phase's orientations, with ``X`` the crystal's
    Kelvin stiffness, compliance or matrix logarithm (twin variants included) and ``Q_n`` the
    Kelvin rotation into the sample frame. They are linear in the weights: the sums of two sets of
    orientations are the sums of the union, so a map processed in pieces adds up exactly.

    Attributes
    ----------
    weight
        Sum of the weights (their unit: area, volume, or grains).
    stiffness
        Kelvin (6, 6), GPa times the weight unit.
    compliance
        Kelvin (6, 6), 1/GPa times the weight unit.
    log
        Kelvin (6, 6), matrix logarithm of the stiffness in GPa, times the weight unit.
    """

    weight: float
    stiffness: np.ndarray
    compliance: np.ndarray
    log: np.ndarray

    @classmethod
    def empty(cls) -> WeightedSums:
        """The sums of no orientation: weight 0 and zero matrices."""
        return cls(0.0, np.zeros((6, 6)), np.zeros((6, 6)), np.zeros((6, 6)))

    def __add__(self, other: WeightedSums) -> WeightedSums:
        return WeightedSums(self.weight + other.weight, self.stiffness + other.stiffness,
                            self.compliance + other.compliance, self.log + other.log)


def phase_sums(phase: PhaseTensors) -> WeightedSums:
    """Compute the weighted sums of one phase (its ``fraction`` plays no part).

    Parameters
    ----------
    phase : PhaseTensors
        Crystal stiffness (GPa), orientations, weights and twin variants of the phase.

    Returns
    -------
    WeightedSums
        The sum of the weights and the three weighted sums (Kelvin 6x6); all zero for a phase
        without orientations.

    Raises
    ------
    ValueError
        If the orientations are not (N, 3, 3) rotations, or the weights are negative or do not
        match them.
    """
    if len(np.asarray(phase.g)) == 0 and len(np.asarray(phase.weights)) == 0:
        return WeightedSums.empty()
    x = crystal_kelvin_matrices(phase.stiffness_gpa, phase.variants)
    g, w = _orientations_and_weights(phase.g, phase.weights)            # checked once for the three sums
    return WeightedSums(float(w.sum()), _rotated_sum(x["stiffness"], g, w), _rotated_sum(x["compliance"], g, w),
                        _rotated_sum(x["log"], g, w))


def averages_from_sums(sums: Sequence[WeightedSums], fractions: Sequence[float]) -> dict[str, np.ndarray]:
    """Compute the four averages from each phase's weighted sums and its volume fraction.

    A phase's mean is its sums divided by its weight; phases are weighted by ``fractions``
    (renormalised to sum to 1); see :func:`average_tensors` for the averages.

    Parameters
    ----------
    sums : sequence of WeightedSums
        One per phase (:func:`phase_sums`, or the sums of several pieces added).
    fractions : sequence of float
        Volume fraction of each phase, in the same order.

    Returns
    -------
    dict of str to numpy.ndarray, each shape (6, 6)
        Sample-frame Voigt stiffness in GPa under the names of :data:`AVERAGES`.

    Raises
    ------
    ValueError
        If the lengths differ, the fractions are negative or sum to zero, or a phase of positive
        fraction has no weight.
    """
    if len(sums) != len(fractions) or not sums:
        raise ValueError(f"{len(sums)} sets of sums but {len(fractions)} fractions")
    f_all = np.array(fractions, dtype=float)
    if np.any(f_all < 0) or not f_all.sum() > 0:
        raise ValueError(f"phase fractions must be non-negative with a positive sum: {f_all}")
    f_all = f_all / f_all.sum()
    stiff = np.zeros((6, 6))
    comp = np.zeros((6, 6))
    logs = np.zeros((6, 6))
    for f, s in zip(f_all, sums):
        if f == 0:
            continue
        if not s.weight > 0:
            raise ValueError("a phase of positive fraction has no orientations with weight")
        stiff += f * (s.stiffness / s.weight)
        comp += f * (s.compliance / s.weight)
        logs += f * (s.log / s.weight)
    voigt = kelvin_to_voigt(stiff)
    reuss = kelvin_to_voigt(np.linalg.inv(comp))
    reuss = (reuss + reuss.T) / 2.0
    geometric = kelvin_to_voigt(expm_sym(logs))
    return {"voigt": voigt, "reuss": reuss, "hill": (voigt + reuss) / 2.0, "geometric": geometric}


# --- isotropic moduli -------------------------------------------------------------------------


def voigt_moduli(c: np.ndarray) -> tuple[float, float]:
    """Voigt bound of the bulk and shear modulus of a stiffness.

    Parameters
    ----------
    c : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa.

    Returns
    -------
    tuple of float
        Bulk modulus and shear modulus, GPa.

    References
    ----------
    Voigt, W. (1928). Lehrbuch der Kristallphysik. Teubner, Leipzig.
    Hill, R. (1952). Proc. Phys. Soc. A 65, 349-354.
    """
    c = np.asarray(c, dtype=float)
    a = c[0, 0] + c[1, 1] + c[2, 2]
    b = c[1, 2] + c[0, 2] + c[0, 1]
    s = c[3, 3] + c[4, 4] + c[5, 5]
    return (a + 2 * b) / 9.0, (a - b + 3 * s) / 15.0


def reuss_moduli(c: np.ndarray) -> tuple[float, float]:
    """Reuss bound of the bulk and shear modulus of a stiffness.

    Parameters
    ----------
    c : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa.

    Returns
    -------
    tuple of float
        Bulk modulus and shear modulus, GPa.

    Raises
    ------
    numpy.linalg.LinAlgError
        If ``c`` is singular.

    References
    ----------
    Reuss, A. (1929). Z. Angew. Math. Mech. 9, 49-58.
    Hill, R. (1952). Proc. Phys. Soc. A 65, 349-354.
    """
    s = compliance(c)
    a = s[0, 0] + s[1, 1] + s[2, 2]
    b = s[1, 2] + s[0, 2] + s[0, 1]
    t = s[3, 3] + s[4, 4] + s[5, 5]
    return 1.0 / (a + 2 * b), 15.0 / (4 * a - 4 * b + 3 * t)


def hill_moduli(c: np.ndarray) -> tuple[float, float]:
    """Voigt-Reuss-Hill bulk and shear modulus: the means of the Voigt and Reuss bounds.

    Parameters
    ----------
    c : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa.

    Returns
    -------
    tuple of float
        Bulk modulus and shear modulus, GPa.

    References
    ----------
    Hill, R. (1952). Proc. Phys. Soc. A 65, 349-354.
    """
    kv, gv = voigt_moduli(c)
    kr, gr = reuss_moduli(c)
    return (kv + kr) / 2.0, (gv + gr) / 2.0


def isotropic_stiffness(bulk_gpa: float, shear_gpa: float) -> np.ndarray:
    """Build the Voigt stiffness of an isotropic solid with the given bulk and shear moduli.

    Parameters
    ----------
    bulk_gpa : float
        Bulk modulus, GPa.
    shear_gpa : float
        Shear modulus, GPa.

    Returns
    -------
    numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa.
    """
    lam = bulk_gpa - 2.0 * shear_gpa / 3.0
    c = np.zeros((6, 6))
    c[:3, :3] = lam
    c[[0, 1, 2], [0, 1, 2]] += 2.0 * shear_gpa
    c[[3, 4, 5], [3, 4, 5]] = shear_gpa
    return c

