"""The mineral library: single-crystal elastic constants with their sources.

Each mineral is one YAML file in ``data/`` (see DEVELOPERS.md, "Adding a mineral"). On load
every entry is converted from the Cartesian setting in which its constants were published into
the crystal Cartesian frame orix uses for the phase (e1 || a, e3 || c*; computed here without
importing orix: ``fabric2seis.point_groups`` and :func:`lattice_base`), and checked: symmetric,
positive definite, and invariant under every operation of its point group (which is the zero
pattern and the equalities of its symmetry class, in whatever setting it was published). The
optional ``optics`` key (refractive indices and the indicatrix) is read and checked by ``optical``.
A user's own mineral files (``--minerals DIR``, settings key ``minerals_dir``) are read and checked
by the same code and add to or replace packaged entries (:func:`load_library`, :func:`user_entries`).
"""

from __future__ import annotations

import functools
from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import yaml

from fabric2seis.elastic import check_stiffness, rotate_voigt
from fabric2seis.elastic.minerals.optical import OpticalConstants, read_optics
from fabric2seis.errors import InputError, nearest
from fabric2seis.orientations import from_axis_angle, to_matrices
from fabric2seis.point_groups import POINT_GROUP_NAMES, PointGroup, point_group

if TYPE_CHECKING:       # orix is imported only for figures: importing it takes seconds (dask, matplotlib, numba)
    from orix.crystal_map import Phase
    from orix.quaternion import Symmetry

DATA_DIR = Path(__file__).with_name("data")

_REQUIRED = ("name", "point_group", "density_kg_m3", "lattice", "published_axes", "cij_gpa",
             "source", "from_memory")
_OPTIONAL = ("aliases", "unique_axis", "pressure_derivatives", "temperature_derivatives", "notes",
             "equation_of_state", "twins", "reference_conditions", "aggregate_check", "optics")
#: a recalled entry whose Hill moduli differ from published aggregate moduli by more than this is disputed
DISPUTED_ABOVE = 0.08
_TWIN_KEYS = ("name", "axis", "angle_deg", "source")
_AXIS_NAMES = ("a", "b", "c", "a*", "b*", "c*")
#: absolute tolerance (GPa) for the symmetry check: published constants are rounded to 0.1 GPa
SYMMETRY_TOLERANCE_GPA = 0.06
@dataclass(frozen=True)
class Mineral:
    """One entry of the mineral library.

    ``stiffness_gpa`` and the derivatives are in orix's crystal Cartesian frame of the phase;
    ``cij_published_gpa`` keeps the constants as published, in the setting ``published_axes``.
    ``from_memory`` lists the fields recalled without the source at hand (empty when all were
    read in the source).

    Attributes
    ----------
    name, aliases
        Lower-case name and other names it is found by.
    point_group, unique_axis
        Point group as written in the file, and ``"b"`` or ``"c"`` for monoclinic groups.
    density_kg_m3
        Density at the reference conditions, kg m^-3.
    lattice
        Lattice parameters a, b, c (angstrom) and alpha, beta, gamma (degrees).
    published_axes
        Crystal directions of two published Cartesian axes, e.g. ``{x: a, z: c}``.
    cij_published_gpa
        Voigt stiffness (6, 6) as published, GPa.
    setting_rotation
        Rotation (3, 3) with ``v_orix = R @ v_published``.
    stiffness_gpa
        Voigt stiffness (6, 6) in orix's crystal frame, GPa.
    source, from_memory
        Citation of the constants, and the fields recalled without it at hand.
    dcij_dp, d2cij_dp2, pressure_source
        Pressure derivatives (6, 6) (dimensionless; second derivatives in 1/GPa) and their source,
        or None.
    dcij_dt_gpa_per_k, temperature_source
        Temperature derivatives (6, 6) in GPa/K and their source, or None.
    derivatives_from_memory
        Which derivative blocks were recalled without the source at hand.
    aggregate_derivatives
        Derivative blocks given only as the aggregate's dK and dG (``pressure_derivatives``:
        ``dk_dp``, ``dg_dp``; ``temperature_derivatives``: ``dk_dt_gpa_per_k``,
        ``dg_dt_gpa_per_k``), applied to every direction alike (:func:`isotropic_derivative`).
    eos
        Equation of state: ``k0_gpa``, ``k0_prime``, ``thermal_expansion_per_k`` (1/K), ``source``.
    notes, file
        Free notes and the file the entry was read from.
    twins
        Twin laws: name, axis (a, b, c, a*, b*, c*), angle_deg (degrees), source.
    reference_temperature_c, reference_pressure_gpa
        Conditions the constants were measured at, degrees Celsius and GPa.
    aggregate_check
        Published aggregate moduli ``k_gpa``, ``g_gpa`` (GPa) and their ``source``, or None.
    optics
        Principal refractive indices and the indicatrix in the crystal frame (``optical``), or None.
    """

    name: str
    aliases: tuple[str, ...]
    point_group: str
    unique_axis: str | None
    density_kg_m3: float
    lattice: dict
    published_axes: dict
    cij_published_gpa: np.ndarray
    setting_rotation: np.ndarray
    stiffness_gpa: np.ndarray
    source: str
    from_memory: tuple[str, ...]
    dcij_dp: np.ndarray | None = None
    pressure_source: str | None = None
    dcij_dt_gpa_per_k: np.ndarray | None = None
    temperature_source: str | None = None
    derivatives_from_memory: tuple[str, ...] = ()
    aggregate_derivatives: dict = field(default_factory=dict, compare=False)
    d2cij_dp2: np.ndarray | None = None
    eos: dict | None = None
    notes: str = ""
    file: str = ""
    twins: tuple[dict, ...] = ()
    reference_temperature_c: float = 25.0
    reference_pressure_gpa: float = 0.0
    aggregate_check: dict | None = None
    optics: OpticalConstants | None = None
    _cache: dict = field(default_factory=dict, repr=False, compare=False)

    @property
    def symmetry(self) -> PointGroup:
        """Point group in orix's crystal frame (2-fold along b for b-unique monoclinic), without orix."""
        return point_group(self.point_group, self.unique_axis)

    @property
    def orix_symmetry(self) -> Symmetry:
        """The same point group as orix's Symmetry (imports orix: figures use it)."""
        return self.symmetry.to_orix()

    @property
    def constants_recalled(self) -> bool:
        """True when the single-crystal constants were recalled without the source at hand."""
        return "cij_gpa" in self.from_memory

    def aggregate_comparison(self) -> dict | None:
        """Compare the Hill moduli of the constants with published aggregate moduli (key ``aggregate_check``).

        Returns None without such a key, else ``{k_hill_gpa, g_hill_gpa, k_published_gpa,
        g_published_gpa, largest_difference (relative), disputed, source}``; disputed when the
        larger relative difference exceeds ``DISPUTED_ABOVE`` (8 %, this project's threshold: the
        published values are fitted model parameters with a spread of about 5-8 %).

        Returns
        -------
        dict or None
            Moduli in GPa, the relative difference (dimensionless), the verdict and the source.

        References
        ----------
        Hill, R. (1952). Proc. Phys. Soc. A 65, 349-354.
        """
        if self.aggregate_check is None:
            return None
        from fabric2seis.elastic import hill_moduli

        k, g = hill_moduli(self.stiffness_gpa)
        k_ref, g_ref = self.aggregate_check["k_gpa"], self.aggregate_check["g_gpa"]
        largest = max(abs(k - k_ref) / k_ref, abs(g - g_ref) / g_ref)
        return {"k_hill_gpa": round(float(k), 2), "g_hill_gpa": round(float(g), 2), "k_published_gpa": k_ref,
                "g_published_gpa": g_ref, "largest_difference": round(float(largest), 4),
                "disputed": bool(largest > DISPUTED_ABOVE), "source": self.aggregate_check["source"]}

    def twin_rotations(self) -> list[np.ndarray]:
        """Return the crystal-frame rotations taking a crystal to each of its twin variants.

        A twin law (library key ``twins``) whose variants EBSD cannot tell apart, such as the
        Dauphine twin of quartz, makes every measured orientation stand for the crystal and its
        variants in equal parts.

        Returns
        -------
        list of numpy.ndarray, each shape (3, 3)
            One rotation per twin law, in orix's crystal frame; empty without twins.
        """
        out = []
        for twin in self.twins:
            axis = crystal_directions(self.lattice)[twin["axis"]]
            out.append(to_matrices(from_axis_angle(axis, np.radians(twin["angle_deg"])))[0])
        return out

    @property
    def phase(self) -> Phase:
        """An orix Phase with this mineral's point group and lattice (imports orix)."""
        from diffpy.structure import Lattice, Structure
        from orix.crystal_map import Phase

        lat = self.lattice
        structure = Structure(lattice=Lattice(lat["a"], lat["b"], lat["c"],
                                              lat["alpha"], lat["beta"], lat["gamma"]))
        return Phase(name=self.name, point_group=self.orix_symmetry, structure=structure)


def lattice_base(lattice: dict) -> np.ndarray:
    """Rows a, b, c of the direct lattice in orix's crystal Cartesian frame (e1 || a, e3 || c*).

    a along e1, b in the e1-e2 plane, c completing the cell (International Tables for
    Crystallography, Vol. B, ch. 1.1; the setting orix and diffpy.structure use, checked against
    them in tests/elastic/test_minerals.py).

    Parameters
    ----------
    lattice : dict
        Lattice parameters ``a``, ``b``, ``c`` (angstrom) and ``alpha``, ``beta``, ``gamma`` (degrees).

    Returns
    -------
    numpy.ndarray, shape (3, 3)
        The lattice vectors as rows, in angstrom.
    """
    a, b, c = (float(lattice[k]) for k in ("a", "b", "c"))
    cos_a, cos_b, cos_g = (_cos_deg(float(lattice[k])) for k in ("alpha", "beta", "gamma"))
    sin_g = _cos_deg(90.0 - float(lattice["gamma"]))
    cx = c * cos_b
    cy = c * (cos_a - cos_b * cos_g) / sin_g
    return np.array([[a, 0.0, 0.0], [b * cos_g, b * sin_g, 0.0], [cx, cy, np.sqrt(c * c - cx * cx - cy * cy)]])


#: cosines of angles (degrees) that are exact, so that right angles give exact zeros (as diffpy.structure does)
_EXACT_COS = {0.0: 1.0, 60.0: 0.5, 90.0: 0.0, 120.0: -0.5, 180.0: -1.0, 240.0: -0.5, 270.0: 0.0, 300.0: 0.5}


def _cos_deg(angle: float) -> float:
    return _EXACT_COS.get(angle % 360.0, float(np.cos(np.radians(angle))))


def lattice_vector(lattice: dict, indices, plane: bool) -> np.ndarray:
    """Unit vector of a lattice direction [uvw] or of the normal of a plane (hkl), in orix's crystal frame.

    Four indices are hexagonal axes: a direction [UVTW] is [2U + V, 2V + U, W] on a, b, c and a
    plane (hkil) is (hkl) (International Tables for Crystallography, Vol. A; the conversions orix's
    ``Miller`` makes, checked against it in tests/fabric/test_poles.py).

    Parameters
    ----------
    lattice : dict
        Lattice parameters ``a``, ``b``, ``c`` (angstrom) and ``alpha``, ``beta``, ``gamma`` (degrees).
    indices : sequence of int
        Three or four Miller indices.
    plane : bool
        Plane normal (hkl) rather than direction [uvw].

    Returns
    -------
    numpy.ndarray, shape (3,)
        Unit vector, dimensionless.
    """
    idx = [float(i) for i in indices]
    if len(idx) == 4:
        idx = [idx[0], idx[1], idx[3]] if plane else [2 * idx[0] + idx[1], 2 * idx[1] + idx[0], idx[3]]
    base = lattice_base(lattice)
    vector = np.linalg.inv(base) @ np.array(idx) if plane else np.array(idx) @ base
    return vector / np.linalg.norm(vector)


def crystal_directions(lattice: dict) -> dict[str, np.ndarray]:
    """Compute unit vectors of a, b, c, a*, b*, c* in orix's crystal Cartesian frame (e1 || a, e3 || c*).

    Parameters
    ----------
    lattice : dict
        Lattice parameters ``a``, ``b``, ``c`` (angstrom) and ``alpha``, ``beta``, ``gamma`` (degrees).

    Returns
    -------
    dict of str to numpy.ndarray, each shape (3,)
        Unit vectors by name.
    """
    a, b, c = lattice_base(lattice)  # rows: direct lattice vectors in the Cartesian frame orix uses
    recip = {"a*": np.cross(b, c), "b*": np.cross(c, a), "c*": np.cross(a, b)}
    out = {"a": a, "b": b, "c": c, **recip}
    return {k: v / np.linalg.norm(v) for k, v in out.items()}


def crystal_direction(mineral: Mineral, label: str) -> np.ndarray:
    """Return the unit vector, in orix's crystal frame, of a direction or of a plane normal.

    Parameters
    ----------
    mineral : Mineral
        Gives the lattice.
    label : str
        Miller indices: ``"[uvw]"`` for a lattice direction, ``"(hkl)"`` for the normal of a plane.
        Single digits may be written together (``"[100]"``); otherwise separate them with spaces or
        commas (``"[1 -1 0]"``, ``"(1,0,10)"``).

    Returns
    -------
    numpy.ndarray
        Unit vector (3,) in the crystal Cartesian frame (e1 || a, e3 || c*), dimensionless.
    """
    text = label.strip()
    numbers = [int(c) for c in text[1:-1].replace(",", " ").split()] if " " in text or "," in text \
        else [int(c) for c in text[1:-1]]
    return lattice_vector(mineral.lattice, numbers, plane=text.startswith("("))


def setting_rotation(lattice: dict, published_axes: dict, source: str = "") -> np.ndarray:
    """Rotation R with ``v_orix = R @ v_published`` for a published Cartesian setting.

    ``published_axes`` names the crystal directions of two published axes, e.g. ``{x: a, z: c}``
    or ``{x: a*, z: c}``; the third completes a right-handed set.

    Parameters
    ----------
    lattice : dict
        Lattice parameters ``a``, ``b``, ``c`` (angstrom) and ``alpha``, ``beta``, ``gamma`` (degrees).
    published_axes : dict
        Two of ``x``, ``y``, ``z`` mapped to a, b, c, a*, b* or c*.
    source : str
        The mineral file, for error messages.

    Returns
    -------
    numpy.ndarray, shape (3, 3)
        Rotation whose columns are the published x, y, z axes in orix's frame.

    Raises
    ------
    InputError
        If not exactly two of x, y, z are named, a direction is unknown, or the two are not
        perpendicular in this lattice.
    """
    keys = sorted(published_axes)
    if len(keys) != 2 or not set(keys) <= {"x", "y", "z"}:
        raise InputError("published_axes must name exactly two of x, y, z", source, "published_axes")
    dirs = crystal_directions(lattice)
    vec = {}
    for k in keys:
        name = str(published_axes[k])
        if name not in dirs:
            raise InputError(f"unknown crystal direction '{name}'; use one of {', '.join(_AXIS_NAMES)}",
                             source, f"published_axes.{k}")
        vec[k] = dirs[name]
    u, v = vec[keys[0]], vec[keys[1]]
    if abs(u @ v) > 1e-6:
        raise InputError(f"published axes {published_axes} are not perpendicular in this lattice",
                         source, "published_axes")
    if keys == ["x", "y"]:
        x, y = u, v
        z = np.cross(x, y)
    elif keys == ["x", "z"]:
        x, z = u, v
        y = np.cross(z, x)
    else:  # y, z
        y, z = u, v
        x = np.cross(y, z)
    return np.column_stack([x, y, z])


def check_symmetry_pattern(c: np.ndarray, sym: PointGroup, source: str = "",
                           where: str = "cij_gpa", tol: float = SYMMETRY_TOLERANCE_GPA) -> None:
    """Check that a stiffness is invariant under every operation of a point group.

    Parameters
    ----------
    c : numpy.ndarray, shape (6, 6)
        Voigt stiffness (GPa) or derivative matrix in orix's crystal frame.
    sym : fabric2seis.point_groups.PointGroup
        Point group; the proper rotations of its Laue class suffice, elastic tensors being
        centrosymmetric.
    source, where : str
        File and key, for error messages.
    tol : float
        Largest change of an entry allowed, in the unit of ``c`` (GPa for a stiffness).

    Raises
    ------
    InputError
        Unless ``c`` (orix crystal frame) is invariant under every operation of ``sym``.
    """
    ops = to_matrices(sym.laue_proper)  # elastic tensors are centrosymmetric
    rotated = rotate_voigt(c, ops)
    diff = np.abs(rotated - c).max(axis=0)
    if diff.max() > tol:
        i, j = np.unravel_index(np.argmax(diff), diff.shape)
        raise InputError(
            f"the constants break point group {sym.name} symmetry: c{i + 1}{j + 1} changes by "
            f"{diff[i, j]:.3g} GPa under one of its operations (check zeros and equalities such "
            f"as c66 = (c11 - c12)/2, and the published setting)", source, where)


def _matrix(entry: dict, key: str, source: str) -> np.ndarray:
    try:
        m = np.array(entry[key], dtype=float)
    except (TypeError, ValueError) as exc:
        raise InputError(f"must be a 6x6 table of numbers ({exc})", source, key) from None
    if m.shape != (6, 6):
        raise InputError(f"must be a 6x6 table, got shape {m.shape}", source, key)
    return m


def load_mineral_file(path: str | Path) -> Mineral:
    """Read, convert and check one mineral file.

    Parameters
    ----------
    path : str or Path
        A YAML mineral file (see DEVELOPERS.md, "Adding a mineral").

    Returns
    -------
    Mineral
        The entry, its constants in orix's crystal frame.

    Raises
    ------
    InputError
        Naming file and key, if the file cannot be read, has unknown or missing keys, an unknown
        point group, an implausible density, or constants that are not a valid stiffness or
        break the symmetry of the point group, or optical constants that fail their checks
        (``optical.read_optics``).
    """
    from fabric2seis.settings import FAST_SAFE_LOADER

    path = Path(path)
    src = str(path)
    try:
        entry = yaml.load(path.read_text(), Loader=FAST_SAFE_LOADER)
    except (OSError, yaml.YAMLError) as exc:
        raise InputError(f"cannot read mineral file ({exc.__class__.__name__}: {exc})", src) from None
    if not isinstance(entry, dict):
        raise InputError("a mineral file must be a YAML mapping", src)
    for key in entry:
        if key not in _REQUIRED + _OPTIONAL:
            raise InputError(f"unknown key '{key}'{nearest(key, _REQUIRED + _OPTIONAL)}", src, key)
    for key in _REQUIRED:
        if key not in entry:
            raise InputError("missing required key", src, key)
    pg = str(entry["point_group"])
    unique = entry.get("unique_axis")
    try:
        sym = point_group(pg, unique)
    except KeyError:
        raise InputError(f"unknown point group '{pg}'{nearest(pg, POINT_GROUP_NAMES)}", src, "point_group") from None
    density = float(entry["density_kg_m3"])
    if not 100 < density < 30000:
        raise InputError(f"density {density} kg m^-3 is not plausible", src, "density_kg_m3")
    published = _matrix(entry, "cij_gpa", src)
    published = check_stiffness(published, src, "cij_gpa")
    rot = setting_rotation(entry["lattice"], entry["published_axes"], src)
    stiffness = rotate_voigt(published, rot)
    check_symmetry_pattern(stiffness, sym, src)

    def derivative(block_key: str, matrix_key: str, aggregate_keys: tuple[str, str]):
        block = entry.get(block_key)
        if block is None:
            return None, None, False
        if not isinstance(block, dict) or "source" not in block or (matrix_key in block) == ("aggregate" in block):
            raise InputError(f"needs 'source' and either '{matrix_key}' or 'aggregate' "
                             f"({aggregate_keys[0]}, {aggregate_keys[1]})", src, block_key)
        if "aggregate" in block:
            isotropic[block_key] = _aggregate_derivative(block["aggregate"], aggregate_keys, src, block_key)
            return isotropic[block_key][0], str(block["source"]), bool(block.get("from_memory", True))
        m = _matrix(block, matrix_key, src)
        if not np.allclose(m, m.T):
            raise InputError("derivatives must be symmetric", src, f"{block_key}.{matrix_key}")
        m_orix = rotate_voigt(m, rot)
        scale = max(np.abs(m).max(), 1e-12)
        check_symmetry_pattern(m_orix, sym, src, f"{block_key}.{matrix_key}", tol=1e-3 * scale)
        return m_orix, str(block["source"]), bool(block.get("from_memory", True))

    isotropic: dict[str, tuple[np.ndarray, dict]] = {}
    dp, dp_src, dp_mem = derivative("pressure_derivatives", "dcij_dp", ("dk_dp", "dg_dp"))
    d2p = None
    if dp is not None and "d2cij_dp2" in entry["pressure_derivatives"]:
        m2 = _matrix(entry["pressure_derivatives"], "d2cij_dp2", src)
        d2p = rotate_voigt(m2, rot)
    eos = entry.get("equation_of_state")
    if eos is not None:
        allowed = {"k0_gpa", "k0_prime", "thermal_expansion_per_k", "source", "from_memory"}
        if not isinstance(eos, dict) or set(eos) - allowed or "source" not in eos:
            raise InputError(f"equation_of_state takes {', '.join(sorted(allowed))} and needs a source",
                             src, "equation_of_state")
    dt, dt_src, dt_mem = derivative("temperature_derivatives", "dcij_dt_gpa_per_k",
                                    ("dk_dt_gpa_per_k", "dg_dt_gpa_per_k"))
    deriv_mem = tuple(k for k, m in (("pressure_derivatives", dp_mem),
                                       ("temperature_derivatives", dt_mem)) if m)
    twins = _twins(entry.get("twins"), src)
    reference = _reference_conditions(entry.get("reference_conditions"), src)
    check = _aggregate_check(entry.get("aggregate_check"), src)
    optics = read_optics(entry.get("optics"), lattice_base(entry["lattice"]), unique,
                         to_matrices(sym.laue_proper), src)
    memory = entry["from_memory"] or []
    if not isinstance(memory, list):
        raise InputError("from_memory must be a list of the fields recalled ([] when checked)",
                         src, "from_memory")
    return Mineral(
        name=str(entry["name"]).lower(),
        aliases=tuple(str(a).lower() for a in entry.get("aliases") or ()),
        point_group=pg, unique_axis=unique, density_kg_m3=density,
        lattice=dict(entry["lattice"]), published_axes=dict(entry["published_axes"]),
        cij_published_gpa=published, setting_rotation=rot, stiffness_gpa=stiffness,
        source=str(entry["source"]), from_memory=tuple(memory),
        dcij_dp=dp, pressure_source=dp_src, dcij_dt_gpa_per_k=dt, temperature_source=dt_src,
        derivatives_from_memory=deriv_mem, d2cij_dp2=d2p, eos=eos,
        aggregate_derivatives={k: v[1] for k, v in isotropic.items()},
        notes=str(entry.get("notes", "")).strip(), file=src, twins=twins,
        reference_temperature_c=reference[0], reference_pressure_gpa=reference[1], aggregate_check=check,
        optics=optics)


def isotropic_derivative(dk: float, dg: float) -> np.ndarray:
    """Voigt matrix (6, 6) that changes an isotropic part only: bulk by ``dk``, shear by ``dg``.

    The stiffness of an isotropic body is C_ij = (K - 2G/3) + 2G on the diagonal of the first three
    rows and G for 44, 55, 66 (common practice); its derivative is the same expression in the
    derivatives. Adding it to a crystal's constants moves the Voigt bulk and shear moduli by exactly
    ``dk`` and ``dg`` and keeps the crystal's anisotropy in absolute terms.
    """
    m = np.zeros((6, 6))
    m[:3, :3] = dk - 2.0 * dg / 3.0
    m[[0, 1, 2], [0, 1, 2]] = dk + 4.0 * dg / 3.0
    m[[3, 4, 5], [3, 4, 5]] = dg
    return m


def _aggregate_derivative(block, keys: tuple[str, str], src: str, where: str) -> tuple[np.ndarray, dict]:
    """An ``aggregate`` derivative block (published dK, dG of the aggregate) as an isotropic Voigt matrix."""
    if not isinstance(block, dict) or set(block) != set(keys):
        raise InputError(f"aggregate takes exactly {keys[0]} and {keys[1]}", src, f"{where}.aggregate")
    try:
        dk, dg = (float(block[k]) for k in keys)
    except (TypeError, ValueError):
        raise InputError("aggregate derivatives must be numbers", src, f"{where}.aggregate") from None
    if not (np.isfinite(dk) and np.isfinite(dg)):
        raise InputError("aggregate derivatives must be finite", src, f"{where}.aggregate")
    return isotropic_derivative(dk, dg), {keys[0]: dk, keys[1]: dg}


def _reference_conditions(block, src: str) -> tuple[float, float]:
    """(temperature C, pressure GPa) at which the constants were measured; 25 C and 0 GPa if unset."""
    if block is None:
        return 25.0, 0.0
    if not isinstance(block, dict) or set(block) - {"temperature_c", "pressure_gpa"}:
        raise InputError("reference_conditions takes temperature_c and pressure_gpa", src, "reference_conditions")
    values = []
    for key, default in (("temperature_c", 25.0), ("pressure_gpa", 0.0)):
        value = block.get(key, default)
        if not isinstance(value, (int, float)) or not np.isfinite(value):
            raise InputError("must be a number", src, f"reference_conditions.{key}")
        values.append(float(value))
    return values[0], values[1]


def _aggregate_check(block, src: str) -> dict | None:
    """Published aggregate moduli to check the constants against: {k_gpa, g_gpa, source}."""
    if block is None:
        return None
    if not isinstance(block, dict) or set(block) != {"k_gpa", "g_gpa", "source"}:
        raise InputError("aggregate_check needs exactly k_gpa, g_gpa and source", src, "aggregate_check")
    for key in ("k_gpa", "g_gpa"):
        if not isinstance(block[key], (int, float)) or not block[key] > 0:
            raise InputError("must be a positive number (GPa)", src, f"aggregate_check.{key}")
    return {"k_gpa": float(block["k_gpa"]), "g_gpa": float(block["g_gpa"]), "source": str(block["source"])}


def _twins(block, src: str) -> tuple[dict, ...]:
    """The ``twins`` list of a mineral file: each {name, axis (a, b, c, a*, b*, c*), angle_deg, source}."""
    if block is None:
        return ()
    if not isinstance(block, list):
        raise InputError("twins must be a list of {name, axis, angle_deg, source}", src, "twins")
    out = []
    for k, twin in enumerate(block):
        where = f"twins[{k}]"
        if not isinstance(twin, dict) or set(twin) != set(_TWIN_KEYS):
            raise InputError(f"a twin law needs exactly the keys {', '.join(_TWIN_KEYS)}", src, where)
        if twin["axis"] not in _AXIS_NAMES:
            raise InputError(f"axis must be one of {', '.join(_AXIS_NAMES)}", src, f"{where}.axis")
        angle = twin["angle_deg"]
        if not isinstance(angle, (int, float)) or not 0 < angle < 360:
            raise InputError("angle_deg must be a number between 0 and 360", src, f"{where}.angle_deg")
        out.append({"name": str(twin["name"]), "axis": twin["axis"], "angle_deg": float(angle),
                    "source": str(twin["source"])})
    return tuple(out)


def load_library(extra_dirs: Iterable[str | Path] = ()) -> dict[str, Mineral]:
    """Load all minerals of the packaged library plus every ``*.yaml`` in ``extra_dirs``, by name.

    A user's entry is read and checked exactly as a packaged one (:func:`load_mineral_file`). One of
    the same name as a packaged entry replaces it (:func:`user_entries` says which); two user files
    of one name are refused. Results are cached while the files stay unchanged.

    Parameters
    ----------
    extra_dirs : iterable of str or Path
        Folders with more mineral files (a user's own minerals).

    Returns
    -------
    dict of str to Mineral
        The minerals by name: the packaged ones in file order, then the user's new ones.

    Raises
    ------
    InputError
        If a folder is not a folder, a mineral file is invalid (:func:`load_mineral_file`), or two
        user files give the same name.
    """
    files = []
    for d in extra_dirs:
        if not Path(d).is_dir():
            raise InputError("no such folder of mineral files", d)
        files += sorted(Path(d).glob("*.yaml"))
    stamps = tuple((str(f), f.stat().st_mtime_ns, f.stat().st_size) for f in files)
    return dict(_load_library_cached(stamps))


@functools.lru_cache(maxsize=1)
def _packaged() -> tuple[tuple[str, Mineral], ...]:
    return tuple((m.name, m) for m in map(load_mineral_file, sorted(DATA_DIR.glob("*.yaml"))))


@functools.lru_cache(maxsize=8)
def _load_library_cached(user_files: tuple[tuple[str, int, int], ...]) -> tuple[tuple[str, Mineral], ...]:
    minerals = dict(_packaged())
    from_user: dict[str, str] = {}
    for f, _, _ in user_files:
        m = load_mineral_file(f)
        if m.name in from_user:
            raise InputError(f"a second entry named '{m.name}' (the first is {from_user[m.name]}); keep one",
                             f, "name")
        from_user[m.name] = f
        minerals[m.name] = m  # a user's file of the same name replaces the packaged entry
    return tuple(minerals.items())


def user_entries(library: dict[str, Mineral]) -> list[dict]:
    """List the entries of a library read from outside the packaged folder, and what each replaced.

    Parameters
    ----------
    library : dict of str to Mineral
        A library from :func:`load_library`.

    Returns
    -------
    list of dict
        Per user entry: ``name``, ``file`` (the user's file) and ``replaces`` (the packaged file it
        replaced, or None for a new mineral).
    """
    packaged = dict(_packaged())
    return [{"name": m.name, "file": m.file,
             "replaces": packaged[m.name].file if m.name in packaged else None}
            for m in library.values() if m is not packaged.get(m.name)]


def mineral_origin(mineral: Mineral) -> str:
    """Say where an entry came from: ``"packaged"`` (the library's own folder) or ``"user"``.

    Parameters
    ----------
    mineral : Mineral
        A library entry.

    Returns
    -------
    str
        ``"packaged"`` or ``"user"``.
    """
    return "packaged" if Path(mineral.file).parent == DATA_DIR else "user"


def find_mineral(name: str, library: dict[str, Mineral] | None = None) -> Mineral:
    """Look a mineral up by name or alias, case-insensitively.

    Parameters
    ----------
    name : str
        Name or alias; underscores count as spaces.
    library : dict of str to Mineral, optional
        Where to look; the bundled library if not given.

    Returns
    -------
    Mineral
        The entry found.

    Raises
    ------
    InputError
        If no mineral has that name, suggesting the nearest.
    """
    library = load_library() if library is None else library
    key = " ".join(str(name).lower().replace("_", " ").split())
    if key in library:           # a name before any alias: a user's entry may bear another's alias
        return library[key]
    for m in library.values():
        if key in m.aliases:
            return m
    names = list(library) + [a for m in library.values() for a in m.aliases]
    raise InputError(f"unknown mineral '{name}'{nearest(name, names)}; the library has: "
                     f"{', '.join(sorted(library))}")


