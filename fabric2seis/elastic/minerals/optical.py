"""Optical constants of a library mineral: principal refractive indices and the indicatrix in the crystal frame.

The ``optics`` key of a mineral file gives the principal refractive indices (``n`` for a cubic
mineral; ``n_o`` and ``n_e`` for a uniaxial one, whose optic axis is c; ``n_alpha``, ``n_beta``,
``n_gamma`` for a biaxial one), the optic sign, and for biaxial minerals the crystal directions of
the indicatrix axes X (vibration of n_alpha), Y (n_beta) and Z (n_gamma):

- ``axes: {x: b, y: c, z: a}``: each a lattice direction (``a``, ``b``, ``c``, ``a*``, ``b*``,
  ``c*``, ``"[u v w]"`` with real indices allowed) or a plane normal (``"(h k l)"``);
- for b-unique monoclinic minerals, one axis along b and the angle of another from c in the
  (010) plane: ``axes: {y: b, z_to_c_deg: 38}``, positive from +c towards +a (into the obtuse
  angle beta).

On load the directions are checked to be perpendicular (within ``PERPENDICULAR_TOLERANCE_DEG``,
published directions being rounded), the indices to be ordered and plausible, the optic sign to
agree with the sign the indices imply (2V_z below 90 degrees is positive), and the indicatrix to be
invariant under every operation of the mineral's point group (which catches axes that do not fit
the symmetry, e.g. an orthorhombic X off a, b and c, or a biaxial indicatrix for a hexagonal
mineral). Dispersion is not recorded: the indices are those of sodium light (589 nm) and are used
at every wavelength.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from fabric2seis.errors import InputError, nearest

_BLOCK_KEYS = ("n", "n_o", "n_e", "n_alpha", "n_beta", "n_gamma", "optic_sign", "axes", "source", "recalled", "notes")
_NAMED = ("a", "b", "c", "a*", "b*", "c*")
#: largest departure from 90 degrees between two indicatrix axes as given (rounded handbook directions)
PERPENDICULAR_TOLERANCE_DEG = 2.0


@dataclass(frozen=True)
class OpticalConstants:
    """The optical indicatrix of a mineral in orix's crystal Cartesian frame (e1 || a, e3 || c*).

    Attributes
    ----------
    kind
        ``"isotropic"``, ``"uniaxial"`` or ``"biaxial"``.
    principal_n
        Refractive indices (3,) along the rows of ``axes``: n_alpha, n_beta, n_gamma for biaxial
        minerals; n_o, n_o, n_e for uniaxial ones (the third row is c); n, n, n for isotropic ones.
    axes
        Orthonormal rows (3, 3): the indicatrix axes in the crystal frame.
    optic_sign
        ``"+"``, ``"-"`` or None (isotropic).
    source, recalled, notes
        Where the values come from, whether they were recalled without the source at hand, and notes.
    """

    kind: str
    principal_n: np.ndarray
    axes: np.ndarray
    optic_sign: str | None
    source: str
    recalled: bool
    notes: str = ""

    @property
    def n_alpha(self) -> float:
        """Smallest principal refractive index (dimensionless)."""
        return float(self.principal_n.min())

    @property
    def n_gamma(self) -> float:
        """Largest principal refractive index (dimensionless)."""
        return float(self.principal_n.max())

    @property
    def n_beta(self) -> float:
        """Intermediate principal refractive index (dimensionless)."""
        return float(np.median(self.principal_n))

    @property
    def max_birefringence(self) -> float:
        """n_gamma - n_alpha: the largest birefringence of any section (dimensionless)."""
        return self.n_gamma - self.n_alpha

    @property
    def impermeability(self) -> np.ndarray:
        """Relative dielectric impermeability B = epsilon^-1 (3, 3) in the crystal frame (dimensionless).

        Its principal values are 1 / n^2 along the indicatrix axes; the indicatrix is the ellipsoid
        x^T B x = 1, whose radius along a vibration direction is the refractive index of that vibration.
        """
        return self.axes.T @ np.diag(self.principal_n ** -2.0) @ self.axes

    def two_v_z_deg(self) -> float | None:
        """The optic angle 2V measured across Z (degrees); below 90 the mineral is optically positive.

        Returns
        -------
        float or None
            0 for uniaxial positive, 180 for uniaxial negative, None for isotropic minerals.

        References
        ----------
        Nesse, W. D. (2013). Introduction to Optical Mineralogy, 4th ed. Oxford University Press
        (cos^2 V_z = n_alpha^2 (n_gamma^2 - n_beta^2) / (n_beta^2 (n_gamma^2 - n_alpha^2))).
        """
        if self.kind == "isotropic":
            return None
        return two_v_z_deg(self.n_alpha, self.n_beta, self.n_gamma)


def two_v_z_deg(n_alpha: float, n_beta: float, n_gamma: float) -> float:
    """Compute 2V_z, the optic angle across Z, from the three principal refractive indices.

    Parameters
    ----------
    n_alpha, n_beta, n_gamma : float
        Principal refractive indices, n_alpha <= n_beta <= n_gamma, n_alpha < n_gamma.

    Returns
    -------
    float
        2V_z in degrees, 0 to 180; the mineral is optically positive below 90.

    Raises
    ------
    ValueError
        If the indices are not ordered or all equal.

    References
    ----------
    Nesse, W. D. (2013). Introduction to Optical Mineralogy, 4th ed. Oxford University Press.
    """
    if not n_alpha <= n_beta <= n_gamma or n_alpha == n_gamma:
        raise ValueError("need n_alpha <= n_beta <= n_gamma with n_alpha < n_gamma")
    a, b, g = n_alpha ** 2, n_beta ** 2, n_gamma ** 2
    cos2 = a * (g - b) / (b * (g - a))
    return float(2.0 * np.degrees(np.arccos(np.sqrt(np.clip(cos2, 0.0, 1.0)))))


def _index(block: dict, key: str, src: str) -> float:
    value = block.get(key)
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not 1.0 < value < 3.5:
        raise InputError("a refractive index must be a number between 1 and 3.5", src, f"optics.{key}")
    return float(value)


def _direction(label, lattice_base: np.ndarray, src: str, where: str) -> np.ndarray:
    """Unit vector of a lattice direction (a, b*, "[u v w]") or plane normal ("(h k l)") in the crystal frame."""
    a, b, c = lattice_base
    reciprocal = np.linalg.inv(lattice_base).T          # rows a*, b*, c* (up to a factor 2 pi)
    text = str(label).strip()
    if text in _NAMED:
        vec = {"a": a, "b": b, "c": c, "a*": reciprocal[0], "b*": reciprocal[1], "c*": reciprocal[2]}[text]
    elif len(text) > 2 and text[0] + text[-1] in ("[]", "()"):
        inside = text[1:-1].replace(",", " ")
        words = inside.split() if " " in inside.strip() else re.findall(r"-?\d", inside)  # "[1-10]": one digit each
        try:
            numbers = np.array(words, dtype=float)
        except ValueError:
            numbers = np.empty(0)
        if numbers.shape != (3,) or not np.any(numbers):
            raise InputError(f"'{text}' must hold three indices, not all zero", src, where)
        vec = numbers @ (lattice_base if text[0] == "[" else reciprocal)
    else:
        raise InputError(f"'{text}' is not a crystal direction: use a, b, c, a*, b*, c*, \"[u v w]\" or "
                         "\"(h k l)\"", src, where)
    return vec / np.linalg.norm(vec)


def _axes(block, lattice_base: np.ndarray, unique_axis: str | None, src: str) -> np.ndarray:
    """The rows X, Y, Z of a biaxial indicatrix in the crystal frame, orthonormalised."""
    if not isinstance(block, dict):
        raise InputError("axes must map x, y, z to crystal directions (or, for b-unique monoclinic "
                         "minerals, one of them to b and another's angle from c, e.g. z_to_c_deg)", src, "optics.axes")
    angles = [k for k in block if str(k).endswith("_to_c_deg")]
    if angles:
        if unique_axis != "b":
            raise InputError("an angle from c in (010) applies to b-unique monoclinic minerals only",
                             src, f"optics.axes.{angles[0]}")
        named = [k for k in block if k in ("x", "y", "z")]
        if len(angles) != 1 or len(named) != 1 or len(block) != 2 or angles[0][0] not in "xyz":
            raise InputError("give one axis along b and the angle from c of one other axis, e.g. "
                             "{y: b, z_to_c_deg: 38}", src, "optics.axes")
        along_b, turned = named[0], angles[0][0]
        if turned == along_b:
            raise InputError("the axis along b cannot also lie in (010)", src, f"optics.axes.{angles[0]}")
        b_dir = lattice_base[1] / np.linalg.norm(lattice_base[1])
        if abs(_direction(block[along_b], lattice_base, src, f"optics.axes.{along_b}") @ b_dir) < 1.0 - 1e-9:
            raise InputError("with an angle from c, the other axis must be b", src, f"optics.axes.{along_b}")
        angle = block[angles[0]]
        if isinstance(angle, bool) or not isinstance(angle, (int, float)) or not -180 <= angle <= 180:
            raise InputError("must be an angle in degrees, -180 to 180", src, f"optics.axes.{angles[0]}")
        a_dir, c_dir = (v / np.linalg.norm(v) for v in lattice_base[[0, 2]])
        towards_a = a_dir - (a_dir @ c_dir) * c_dir
        towards_a /= np.linalg.norm(towards_a)
        t = np.radians(float(angle))
        rows = {along_b: b_dir, turned: np.cos(t) * c_dir + np.sin(t) * towards_a}
        third = ({"x", "y", "z"} - set(rows)).pop()
        rows[third] = np.cross(rows[along_b], rows[turned])
    else:
        if set(block) != {"x", "y", "z"}:
            raise InputError("axes must give the crystal directions of x, y and z (X: n_alpha, Y: n_beta, "
                             "Z: n_gamma)", src, "optics.axes")
        rows = {k: _direction(block[k], lattice_base, src, f"optics.axes.{k}") for k in ("x", "y", "z")}
    m = np.vstack([rows["x"], rows["y"], rows["z"]])
    worst = np.degrees(np.arcsin(np.abs(np.clip([m[0] @ m[1], m[0] @ m[2], m[1] @ m[2]], -1, 1)))).max()
    if worst > PERPENDICULAR_TOLERANCE_DEG:
        raise InputError(f"the indicatrix axes X, Y, Z must be perpendicular; two of them are {90 - worst:.1f} "
                         f"degrees apart (at most {PERPENDICULAR_TOLERANCE_DEG:g} degrees off 90 allowed)",
                         src, "optics.axes")
    u, _, vt = np.linalg.svd(m)      # the nearest orthonormal rows (rounded handbook directions)
    return u @ vt


def read_optics(block, lattice_base: np.ndarray, unique_axis: str | None, symmetry_matrices: np.ndarray,
                src: str) -> OpticalConstants | None:
    """Read and check the ``optics`` key of a mineral file.

    Parameters
    ----------
    block : dict or None
        The ``optics`` mapping of the file; None when the file has none.
    lattice_base : numpy.ndarray, shape (3, 3)
        Rows a, b, c of the direct lattice in orix's crystal Cartesian frame (angstrom).
    unique_axis : {"b", "c"} or None
        Unique axis of a monoclinic mineral.
    symmetry_matrices : numpy.ndarray, shape (K, 3, 3)
        The proper rotations of the point group in the crystal frame.
    src : str
        The mineral file, for error messages.

    Returns
    -------
    OpticalConstants or None
        The indicatrix, or None without an ``optics`` key.

    Raises
    ------
    InputError
        Naming the key: unknown keys, not exactly one of the three sets of indices, indices out of
        order or implausible, a missing source, an optic sign other than the indices imply, axes not
        perpendicular, or an indicatrix that the point group does not leave unchanged.
    """
    if block is None:
        return None
    if not isinstance(block, dict):
        raise InputError("optics must be a mapping of refractive indices, optic sign, axes and source", src, "optics")
    for key in block:
        if key not in _BLOCK_KEYS:
            raise InputError(f"unknown key '{key}'{nearest(str(key), _BLOCK_KEYS)}", src, f"optics.{key}")
    if not block.get("source"):
        raise InputError("the optical constants need a source", src, "optics.source")
    if not isinstance(block.get("recalled"), bool):
        raise InputError("say true when the values were recalled without the source at hand, else false",
                         src, "optics.recalled")
    sets = {"isotropic": ("n",), "uniaxial": ("n_o", "n_e"), "biaxial": ("n_alpha", "n_beta", "n_gamma")}
    given = [kind for kind, keys in sets.items() if any(k in block for k in keys)]
    if len(given) != 1:
        raise InputError("give exactly one of: n (cubic); n_o and n_e (uniaxial); n_alpha, n_beta and n_gamma "
                         "(biaxial)", src, "optics")
    kind = given[0]
    for key in sets[kind]:
        if key not in block:
            raise InputError(f"{kind} optics need {', '.join(sets[kind])}", src, f"optics.{key}")
    sign = block.get("optic_sign")
    if kind == "isotropic":
        if sign is not None or "axes" in block:
            raise InputError("an isotropic mineral has no optic sign and no indicatrix axes", src, "optics")
        n = _index(block, "n", src)
        principal, axes, implied = np.full(3, n), np.eye(3), None
    elif kind == "uniaxial":
        if "axes" in block:
            raise InputError("the optic axis of a uniaxial mineral is c; give no axes", src, "optics.axes")
        n_o, n_e = _index(block, "n_o", src), _index(block, "n_e", src)
        if n_o == n_e:
            raise InputError("n_o equals n_e: give n alone for an isotropic mineral", src, "optics.n_e")
        c_dir = lattice_base[2] / np.linalg.norm(lattice_base[2])
        a_dir = lattice_base[0] / np.linalg.norm(lattice_base[0])
        a_perp = a_dir - (a_dir @ c_dir) * c_dir
        a_perp /= np.linalg.norm(a_perp)
        principal, axes = np.array([n_o, n_o, n_e]), np.vstack([a_perp, np.cross(c_dir, a_perp), c_dir])
        implied = "+" if n_e > n_o else "-"
    else:
        n_a, n_b, n_g = (_index(block, k, src) for k in ("n_alpha", "n_beta", "n_gamma"))
        if not n_a < n_b < n_g:
            raise InputError(f"need n_alpha < n_beta < n_gamma, got {n_a}, {n_b}, {n_g}", src, "optics.n_beta")
        if "axes" not in block:
            raise InputError("a biaxial mineral needs the crystal directions of its indicatrix axes", src,
                             "optics.axes")
        principal, axes = np.array([n_a, n_b, n_g]), _axes(block["axes"], lattice_base, unique_axis, src)
        implied = "+" if two_v_z_deg(n_a, n_b, n_g) < 90.0 else "-"
    if kind != "isotropic" and sign != implied:
        raise InputError(f"optic_sign must be \"{implied}\": the indices imply an optically "
                         f"{'positive' if implied == '+' else 'negative'} mineral", src, "optics.optic_sign")
    b = axes.T @ np.diag(principal ** -2.0) @ axes
    change = np.abs(np.einsum("kij,jl,kml->kim", symmetry_matrices, b, symmetry_matrices) - b).max()
    if change > 1e-6:
        raise InputError("the indicatrix does not fit the point group: an operation of the group changes it "
                         "(check the axes, and uniaxial or biaxial for the crystal system)", src, "optics.axes")
    return OpticalConstants(kind=kind, principal_n=principal, axes=axes, optic_sign=None if kind == "isotropic"
                            else implied, source=str(block["source"]), recalled=bool(block["recalled"]),
                            notes=" ".join(str(block.get("notes", "")).split()))
