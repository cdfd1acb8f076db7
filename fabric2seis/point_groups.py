"""The 38 crystallographic point groups as a run needs them, without importing orix.

A run needs of a crystal's point group its proper rotations (the symmetry of orientations: what
misorientations, the ODF, J, M and pole figures are computed with), its Laue class (which
directions and pole labels make sense) and its name. Importing orix for these costs seconds
(it brings dask, matplotlib and its compiled functions), so they are tabulated here: the group
names, the crystal Cartesian frame (e1 || a, e3 || c*) and the elements in the order orix lists
them, normalised as orix normalises them, so that every result is the same to the last bit.
tests/test_point_groups.py checks all 38 groups, and the monoclinic groups with b unique, against
orix: the same quaternions in the same order, the same Laue class. Figures, which use orix's
plotting, get orix's own group from :meth:`PointGroup.to_orix`.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field

import numpy as np

_H = 0.5 ** 0.5          # cos 45 degrees
_R = 0.75 ** 0.5         # cos 30 degrees

#: the proper rotation groups, quaternions (w, x, y, z) in orix's order; 32 is 321
_PROPER: dict[str, list[tuple[float, float, float, float]]] = {
    "1": [(1, 0, 0, 0)],
    "211": [(1, 0, 0, 0), (0, 1, 0, 0)],
    "121": [(1, 0, 0, 0), (0, 0, 1, 0)],
    "112": [(1, 0, 0, 0), (0, 0, 0, 1)],
    "222": [(1, 0, 0, 0), (0, 0, 0, 1), (0, 1, 0, 0), (0, 0, 1, 0)],
    "4": [(1, 0, 0, 0), (_H, 0, 0, _H), (0, 0, 0, 1), (-_H, 0, 0, _H)],
    "422": [(1, 0, 0, 0), (_H, 0, 0, _H), (0, 0, 0, 1), (-_H, 0, 0, _H), (0, 1, 0, 0), (0, _H, _H, 0),
            (0, 0, 1, 0), (0, -_H, _H, 0)],
    "3": [(1, 0, 0, 0), (.5, 0, 0, _R), (-.5, 0, 0, _R)],
    "321": [(1, 0, 0, 0), (.5, 0, 0, _R), (-.5, 0, 0, _R), (0, 1, 0, 0), (0, .5, _R, 0), (0, -.5, _R, 0)],
    "312": [(1, 0, 0, 0), (.5, 0, 0, _R), (-.5, 0, 0, _R), (0, 0, 1, 0), (0, -_R, .5, 0), (0, -_R, -.5, 0)],
    "6": [(1, 0, 0, 0), (.5, 0, 0, _R), (-.5, 0, 0, _R), (0, 0, 0, 1), (-_R, 0, 0, .5), (-_R, 0, 0, -.5)],
    "622": [(1, 0, 0, 0), (.5, 0, 0, _R), (-.5, 0, 0, _R), (0, 0, 0, 1), (-_R, 0, 0, .5), (-_R, 0, 0, -.5),
            (0, 1, 0, 0), (0, .5, _R, 0), (0, -.5, _R, 0), (0, 0, 1, 0), (0, -_R, .5, 0), (0, -_R, -.5, 0)],
    "23": [(1, 0, 0, 0), (0, 0, 0, 1), (.5, .5, .5, .5), (-.5, -.5, .5, .5), (-.5, .5, -.5, .5),
           (-.5, .5, .5, -.5), (-.5, .5, .5, .5), (-.5, -.5, .5, -.5), (-.5, -.5, -.5, .5),
           (-.5, .5, -.5, -.5), (0, -1, 0, 0), (0, 0, -1, 0)],
    "432": [(1, 0, 0, 0), (_H, 0, 0, _H), (0, 0, 0, 1), (-_H, 0, 0, _H), (.5, .5, .5, .5), (0, 0, _H, _H),
            (-.5, -.5, .5, .5), (-_H, -_H, 0, 0), (0, 1, 0, 0), (0, _H, _H, 0), (0, 0, 1, 0), (0, -_H, _H, 0),
            (-.5, .5, .5, -.5), (0, 0, _H, -_H), (.5, -.5, .5, -.5), (_H, -_H, 0, 0), (0, _H, 0, _H),
            (-.5, .5, .5, .5), (-_H, 0, _H, 0), (-.5, -.5, .5, -.5), (0, _H, 0, -_H), (.5, .5, .5, -.5),
            (_H, 0, _H, 0), (.5, -.5, .5, .5)],
}
_PROPER["32"] = _PROPER["321"]

#: point group -> (its largest proper subgroup, its Laue class, the proper rotations of that Laue
#: class), as orix names them; the last is the symmetry of a centrosymmetric tensor such as the stiffness
_GROUPS: dict[str, tuple[str, str, str]] = {
    "1": ("1", "-1", "1"), "-1": ("1", "-1", "1"),
    "211": ("211", "2/m", "211"), "121": ("121", "2/m", "121"), "112": ("112", "2/m", "112"),
    "m11": ("1", "2/m", "211"), "1m1": ("1", "2/m", "121"), "11m": ("1", "2/m", "112"),
    "2/m": ("112", "2/m", "112"),
    "222": ("222", "mmm", "222"), "mm2": ("112", "mmm", "222"), "mmm": ("222", "mmm", "222"),
    "4": ("4", "4/m", "4"), "-4": ("112", "4/m", "4"), "4/m": ("4", "4/m", "4"),
    "422": ("422", "4/mmm", "422"), "4mm": ("4", "4/mmm", "422"), "-42m": ("222", "4/mmm", "422"),
    "4/mmm": ("422", "4/mmm", "422"),
    "3": ("3", "-3", "3"), "-3": ("3", "-3", "3"),
    "321": ("32", "-3m", "32"), "312": ("312", "-3m", "312"), "32": ("32", "-3m", "32"),
    "3m": ("3", "-3m", "32"), "-3m": ("32", "-3m", "32"),
    "6": ("6", "6/m", "6"), "-6": ("3", "6/m", "6"), "6/m": ("6", "6/m", "6"),
    "622": ("622", "6/mmm", "622"), "6mm": ("6", "6/mmm", "622"), "-6m2": ("312", "6/mmm", "622"),
    "6/mmm": ("622", "6/mmm", "622"),
    "23": ("23", "m-3", "23"), "m-3": ("23", "m-3", "23"),
    "432": ("432", "m-3m", "432"), "-43m": ("23", "m-3m", "432"), "m-3m": ("432", "m-3m", "432"),
}

#: orix's 38 point-group names (the monoclinic and orthorhombic groups with an axis named are
#: orix's "211", "121", "112", "m11" ...)
POINT_GROUP_NAMES = tuple(_GROUPS)


def _normalised(rows: list[tuple[float, float, float, float]]) -> np.ndarray:
    """Unit quaternions, divided by their norm as orix divides them (hence 0.5000000000000001)."""
    q = np.array(rows, dtype=float)
    out = q / np.sqrt(np.sum(q ** 2, axis=-1))[:, None]
    out.flags.writeable = False
    return out


@dataclass(frozen=True, eq=False)
class PointGroup:
    """A crystal point group: name, Laue class and proper rotations in orix's crystal frame.

    Attributes
    ----------
    name : str
        orix's name of the group (``"mmm"``, ``"2/m"``, ``"-3m"`` ...).
    laue_name : str
        Name of its Laue class (the group plus the inversion).
    proper : numpy.ndarray, shape (K, 4)
        Quaternions (w, x, y, z) of the rotations of its largest proper subgroup, read-only.
    laue_proper : numpy.ndarray, shape (L, 4)
        Quaternions of the proper rotations of its Laue class (the symmetry of a
        centrosymmetric tensor such as the stiffness), read-only.
    unique_axis : str or None
        ``"b"`` for 2/m set with b unique (the 2-fold along y), else None.
    """

    name: str
    laue_name: str
    proper: np.ndarray = field(repr=False)
    laue_proper: np.ndarray = field(repr=False)
    unique_axis: str | None = None

    def to_orix(self):
        """Return orix's Symmetry of this group (imports orix: for figures and checks).

        Returns
        -------
        orix.quaternion.Symmetry
            The same group as orix defines it.
        """
        from orix.quaternion import symmetry as orix_symmetry

        if self.unique_axis == "b":
            group = orix_symmetry.Symmetry.from_generators(orix_symmetry.C2y, orix_symmetry.Ci)
            group.name = "2/m"
            return group
        return _orix_groups()[self.name]


@functools.cache
def _orix_groups() -> dict:
    """orix's 38 point groups by name, from the public names of ``orix.quaternion.symmetry``."""
    from orix.quaternion import symmetry as s

    return {group.name: group for group in (
            s.C1, s.Ci, s.C2x, s.C2y, s.C2z, s.Csx, s.Csy, s.Csz, s.C2h, s.D2, s.C2v, s.D2h,
            s.C4, s.S4, s.C4h, s.D4, s.C4v, s.D2d, s.D4h, s.C3, s.S6, s.D3x, s.D3y, s.D3, s.C3v, s.D3d,
            s.C6, s.C3h, s.C6h, s.D6, s.C6v, s.D3h, s.D6h, s.T, s.Th, s.O, s.Td, s.Oh)}


@functools.cache
def point_group(name: str, unique_axis: str | None = None) -> PointGroup:
    """Return a point group by orix's name; ``2/m`` honours ``unique_axis``.

    orix's own ``2/m`` puts the 2-fold along z (c unique). Most rock-forming monoclinic minerals
    are described with b unique, where the 2-fold lies along b, which is orix's y axis.

    Parameters
    ----------
    name : str
        One of ``POINT_GROUP_NAMES``.
    unique_axis : {"b", "c"}, optional
        Unique axis of a monoclinic group.

    Returns
    -------
    PointGroup
        The group in orix's crystal frame.

    Raises
    ------
    KeyError
        If the name is not a point group.
    """
    proper, laue, laue_proper = _GROUPS[name]
    if name == "2/m" and unique_axis == "b":
        proper = laue_proper = "121"
    return PointGroup(name, laue, _normalised(_PROPER[proper]), _normalised(_PROPER[laue_proper]),
                      "b" if name == "2/m" and unique_axis == "b" else None)
