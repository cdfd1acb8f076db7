"""Shear-wave splitting of one anisotropic layer: the one formula, and a rock placed in the ground.

The kernel, ``ray_splitting``, is the only place the splitting of a ray is written out: for
unit propagation vectors n it solves the Christoffel equation (``waves.plane_waves``), takes the
fast shear wave's polarisation and measures its angle in a plane given by two axes (by default
north and east: the polarisation projected onto the horizontal plane, as a station records it),
0-180 degrees, and gives the delay path (1/Vs2 - 1/Vs1) with the phase velocities of the ray
direction. Ray bending and the phase/group difference are neglected (common practice).
``one_layer`` (a layer in the ground), ``waves.field`` (the field fit), ``waves.layers`` (stacks)
and ``waves.seismic.splitting_along`` (a ray in the structural frame) all call it.

Geographic frame: north, east, down (right-handed); azimuths clockwise from north in degrees.
The foliation is placed by strike and dip (right-hand rule: dip direction = strike + 90), the
lineation by its pitch in the foliation plane measured from the strike direction towards the dip
direction, or by trend and plunge (then it must lie in the plane within 2 degrees). The structural
frame becomes X = lineation, Z = foliation normal pointing up (for a vertical foliation: the
horizontal normal towards strike + 90, the dip direction of the right-hand rule), Y = Z x X.

One layer: a ray of incidence i (from vertical) arriving from back-azimuth b travels up towards
the station; its path through a layer of thickness L is L / cos(i). The prediction assumes a
fabric coherent over the whole layer, no melt or aligned cracks, and a plane-wave, ray-theory
view; real splitting depends on frequency and on structure the sample does not see.

Public functions check their arguments early and raise ``ValueError`` naming the argument
(incidence outside 0-90 degrees, a thickness that is not positive, arrays that do not match, a
rotation that is not orthogonal); bad values in a user's files stay ``InputError`` (``placement``
reads settings and raises ``InputError`` naming the key).
"""

from __future__ import annotations

import numpy as np

from fabric2seis import elastic, waves
from fabric2seis.cautions import LAYER_MODEL
from fabric2seis.errors import InputError

IN_PLANE_TOLERANCE_DEG = 2.0
PLACEMENT_KEYS = {"foliation_strike_deg", "foliation_dip_deg", "lineation_pitch_deg", "lineation_trend_deg",
                  "lineation_plunge_deg"}
SKS_INCIDENCE_DEG = 10.0


def _horizontal(azimuth_deg: float) -> np.ndarray:
    a = np.radians(azimuth_deg)
    return np.array([np.cos(a), np.sin(a), 0.0])


def placement(field: dict, source=None) -> np.ndarray:
    """Rotation R (3, 3) whose columns are X, Y, Z of the structural frame in north-east-down."""
    if field is None or "foliation_strike_deg" not in field or "foliation_dip_deg" not in field:
        raise InputError("field needs foliation_strike_deg and foliation_dip_deg", source, "key field")
    for key in sorted(PLACEMENT_KEYS & set(field)):
        if not _finite_number(field[key]):
            raise InputError(f"{key} = {field[key]!r:.40} is not a finite number of degrees", source,
                             f"key field.{key}")
    strike, dip = float(field["foliation_strike_deg"]), float(field["foliation_dip_deg"])
    if not 0.0 <= dip <= 90.0:
        raise InputError(f"foliation dip {dip} is outside 0-90 degrees", source, "key field.foliation_dip_deg")
    s = _horizontal(strike)
    dd = np.radians(strike + 90.0)
    d = np.array([np.cos(dd) * np.cos(np.radians(dip)), np.sin(dd) * np.cos(np.radians(dip)),
                  np.sin(np.radians(dip))])            # down-dip direction in the plane
    z = np.cross(d, s)                                 # normal: up (negative down) unless vertical
    z /= np.linalg.norm(z)
    if "lineation_pitch_deg" in field:
        if "lineation_trend_deg" in field or "lineation_plunge_deg" in field:
            raise InputError("give the lineation by pitch or by trend and plunge, not both", source, "key field")
        p = np.radians(float(field["lineation_pitch_deg"]))
        x = np.cos(p) * s + np.sin(p) * d
    elif "lineation_trend_deg" in field and "lineation_plunge_deg" in field:
        t, pl = np.radians(float(field["lineation_trend_deg"])), np.radians(float(field["lineation_plunge_deg"]))
        x = np.array([np.cos(pl) * np.cos(t), np.cos(pl) * np.sin(t), np.sin(pl)])
        off = np.degrees(np.arcsin(min(1.0, abs(float(x @ z)))))
        if off > IN_PLANE_TOLERANCE_DEG:
            raise InputError(f"the lineation (trend {field['lineation_trend_deg']}, plunge "
                             f"{field['lineation_plunge_deg']}) lies {off:.1f} degrees out of the foliation plane "
                             f"(strike {strike}, dip {dip}); it must lie in it within {IN_PLANE_TOLERANCE_DEG} degrees",
                             source, "key field.lineation_trend_deg")
        x = x - (x @ z) * z
    else:
        raise InputError("field needs lineation_pitch_deg, or lineation_trend_deg and lineation_plunge_deg",
                         source, "key field")
    x /= np.linalg.norm(x)
    return np.column_stack([x, np.cross(z, x), z])


def _finite_number(value) -> bool:
    """Whether ``value`` is an int or float that is finite as a float (not a bool, not a huge integer)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return False
    try:
        return bool(np.isfinite(float(value)))
    except OverflowError:
        return False


ORTHOGONAL_TOLERANCE = 1e-6


def _finite_array(value, name: str) -> np.ndarray:
    try:
        array = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be numbers, got {value!r}") from None
    if not np.all(np.isfinite(array)):
        raise ValueError(f"{name} must be finite numbers, got {value!r}")
    return array


def check_positive(value, name: str) -> float:
    """``value`` as a float if it is a finite number above zero; ValueError naming ``name`` otherwise."""
    if isinstance(value, bool) or np.ndim(value) != 0:
        raise ValueError(f"{name} must be a single positive number, got {value!r}")
    number = float(_finite_array(value, name))
    if not number > 0:
        raise ValueError(f"{name} must be positive, got {value!r}")
    return number


def check_incidence(incidence_deg, upper_deg: float = 90.0, upper_included: bool = True) -> np.ndarray:
    """Incidence angles (degrees from vertical) as an array; ValueError outside 0-``upper_deg``."""
    inc = _finite_array(incidence_deg, "incidence_deg")
    high = inc > upper_deg if upper_included else inc >= upper_deg
    if np.any(inc < 0.0) or np.any(high):
        bad = inc[(inc < 0.0) | high].ravel()[0]
        closing = "]" if upper_included else ")"
        raise ValueError(f"incidence_deg must lie in [0, {upper_deg:g}{closing} degrees from vertical, got {bad:g}")
    return inc


def check_rotation(rotation) -> np.ndarray:
    """``rotation`` as a (3, 3) array if it is orthogonal (R^T R = I within ``ORTHOGONAL_TOLERANCE``)."""
    r = _finite_array(rotation, "rotation")
    if r.shape != (3, 3):
        raise ValueError(f"rotation must be a (3, 3) matrix, got shape {r.shape}")
    off = float(np.abs(r.T @ r - np.eye(3)).max())
    if off > ORTHOGONAL_TOLERANCE:
        raise ValueError(f"rotation is not orthogonal: R^T R differs from the identity by {off:.2g} "
                         f"(tolerance {ORTHOGONAL_TOLERANCE:g})")
    return r


def check_stiffness_shape(c, name: str = "stiffness") -> np.ndarray:
    """A (6, 6) Voigt matrix of finite numbers; ValueError otherwise."""
    c = _finite_array(c, name)
    if c.shape != (6, 6):
        raise ValueError(f"{name} must be a (6, 6) Voigt matrix in GPa, got shape {c.shape}")
    return c


def broadcast_rays(back_azimuth_deg, incidence_deg) -> tuple[np.ndarray, np.ndarray]:
    """Back-azimuths and incidences broadcast together; ValueError naming both shapes if they do not."""
    baz = _finite_array(back_azimuth_deg, "back_azimuth_deg")
    inc = check_incidence(incidence_deg)
    try:
        baz_b, inc_b = np.broadcast_arrays(baz, inc)
    except ValueError:
        raise ValueError(f"back_azimuth_deg (shape {baz.shape}) and incidence_deg (shape {inc.shape}) "
                         "must have the same length, or one of them be a single value") from None
    return baz_b, inc_b


def axial_difference(a_deg, b_deg) -> np.ndarray:
    """Difference a - b of axial angles (an axis and its opposite are the same), wrapped to [-90, 90).

    Parameters
    ----------
    a_deg, b_deg : array_like
        Angles in degrees (fast azimuths, lineation axes); broadcast together.

    Returns
    -------
    numpy.ndarray
        a - b in degrees, in [-90, 90), shape of the broadcast inputs.
    """
    return (np.asarray(a_deg) - np.asarray(b_deg) + 90.0) % 180.0 - 90.0


def to_geographic(c_structural: np.ndarray, rotation: np.ndarray) -> np.ndarray:
    """Stiffness in north-east-down coordinates.

    Parameters
    ----------
    c_structural : numpy.ndarray
        Voigt stiffness (6, 6) in GPa, structural frame.
    rotation : numpy.ndarray
        Orthogonal (3, 3) matrix whose columns are X, Y, Z in north-east-down (``placement``).

    Returns
    -------
    numpy.ndarray
        Voigt stiffness (6, 6) in GPa, north-east-down.

    Raises
    ------
    ValueError
        A stiffness that is not (6, 6), or a rotation that is not an orthogonal (3, 3) matrix.
    """
    check_stiffness_shape(c_structural, "c_structural")
    return elastic.rotate_voigt(c_structural, check_rotation(rotation))


def ray_direction(back_azimuth_deg, incidence_deg) -> np.ndarray:
    """Unit propagation vectors (north, east, down) of up-going rays arriving from ``back_azimuth``.

    Parameters
    ----------
    back_azimuth_deg : array_like
        Back-azimuths, degrees clockwise from north (the direction from the station to the source).
    incidence_deg : array_like
        Incidence angles from vertical, degrees, in [0, 90]; broadcast with ``back_azimuth_deg``.

    Returns
    -------
    numpy.ndarray
        Unit vectors, shape broadcast(back_azimuth_deg, incidence_deg) + (3,); the down component
        is -cos(incidence) (the ray travels up).

    Raises
    ------
    ValueError
        Incidence outside 0-90 degrees, values that are not finite, or shapes that do not broadcast.
    """
    baz, inc = broadcast_rays(back_azimuth_deg, incidence_deg)
    b = np.radians(baz + 180.0)
    i = np.radians(inc)
    return np.stack([np.sin(i) * np.cos(b), np.sin(i) * np.sin(b), -np.cos(i)], axis=-1)


def ray_splitting(c_voigt: np.ndarray, density_kg_m3: float, rays: np.ndarray, path_km=1.0,
                  axes: tuple[np.ndarray, np.ndarray] | None = None) -> dict[str, np.ndarray]:
    """Fast polarisation angle, delay and shear-wave anisotropy of shear waves along rays.

    The one formula of splitting in fabric2seis (module docstring). The angle is that of the fast
    shear wave's polarisation p in the plane spanned by ``axes`` = (e1, e2), measured from e1
    towards e2, ``atan2(p . e2, p . e1)`` in 0-180 degrees; by default e1 = north, e2 = east (the
    polarisation projected onto the horizontal plane: a fast azimuth). The delay is
    ``path_km (1/Vs2 - 1/Vs1)`` with the phase velocities of the ray direction.

    Parameters
    ----------
    c_voigt : numpy.ndarray
        Voigt stiffness (6, 6) in GPa, in the frame of ``rays`` and ``axes``.
    density_kg_m3 : float
        Density, kg m^-3.
    rays : numpy.ndarray
        Propagation vectors (N, 3) (normalised here; the sign does not matter).
    path_km : float or numpy.ndarray
        Length of each ray's path through the layer, km, scalar or (N,); positive.
    axes : tuple of numpy.ndarray, optional
        Two orthogonal unit vectors (3,) each, the plane and origin of the angle.

    Returns
    -------
    dict
        ``fast_azimuth_deg`` (N,), degrees in [0, 180); ``delay_s`` (N,), seconds;
        ``avs_pct`` (N,), percent.

    Raises
    ------
    ValueError
        ``rays`` not of shape (N, 3) or holding a zero vector, ``path_km`` not positive or of
        another length, a stiffness that is not (6, 6).

    References
    ----------
    Silver, P. G. (1996). Seismic anisotropy beneath the continents: probing the depths of
    geology. Annu. Rev. Earth Planet. Sci. 24, 385-432 (splitting of a layer, common practice).
    """
    check_stiffness_shape(c_voigt, "c_voigt")
    n = _finite_array(rays, "rays")
    if n.ndim != 2 or n.shape[1] != 3:
        raise ValueError(f"rays must be an (N, 3) array of propagation vectors, got shape {n.shape}")
    if np.any(np.linalg.norm(n, axis=1) == 0):
        raise ValueError("rays must not hold a zero vector")
    path = _finite_array(path_km, "path_km")
    if path.ndim > 1 or (path.ndim == 1 and len(path) != len(n)):
        raise ValueError(f"path_km must be a single value or one per ray ({len(n)}), got shape {path.shape}")
    if np.any(path <= 0):
        raise ValueError(f"path_km must be positive, got {path.min():g}")
    w = waves.plane_waves(c_voigt, density_kg_m3, n)
    p = w.polarisations[:, 1]
    if axes is None:
        along_first, along_second = p[:, 0], p[:, 1]
    else:
        along_first, along_second = p @ np.asarray(axes[0], float), p @ np.asarray(axes[1], float)
    fast = np.degrees(np.arctan2(along_second, along_first)) % 180.0
    delay = path * (1.0 / w.vs2_km_s - 1.0 / w.vs1_km_s)
    return {"fast_azimuth_deg": fast, "delay_s": delay, "avs_pct": w.avs_pct}


def one_layer(c_geographic: np.ndarray, density_kg_m3: float, thickness_km: float,
              back_azimuth_deg=0.0, incidence_deg=0.0) -> dict[str, np.ndarray]:
    """Fast azimuth and delay of each ray crossing one layer.

    Parameters
    ----------
    c_geographic : numpy.ndarray
        Voigt stiffness (6, 6) in GPa, north-east-down (``to_geographic``).
    density_kg_m3 : float
        Density, kg m^-3.
    thickness_km : float
        Layer thickness, km, positive; the path of a ray is thickness / cos(incidence).
    back_azimuth_deg : array_like
        Back-azimuths, degrees from north (default 0).
    incidence_deg : array_like
        Incidence from vertical, degrees in [0, 90) (default 0, vertical); broadcast with
        ``back_azimuth_deg``.

    Returns
    -------
    dict
        ``fast_azimuth_deg`` (M,), degrees from north in [0, 180); ``delay_s`` (M,), seconds;
        ``avs_pct`` (M,), percent; M the number of rays (at least 1).

    Raises
    ------
    ValueError
        A thickness that is not positive, incidence outside [0, 90), shapes that do not broadcast.
    """
    thickness_km = check_positive(thickness_km, "thickness_km")
    check_incidence(incidence_deg, 90.0, upper_included=False)
    n = np.atleast_2d(ray_direction(back_azimuth_deg, incidence_deg))
    return ray_splitting(c_geographic, density_kg_m3, n, thickness_km / np.abs(n[:, 2]))


def thickness_for_delay(c_geographic: np.ndarray, density_kg_m3: float, delay_s: float,
                        back_azimuth_deg: float = 0.0, incidence_deg: float = 0.0) -> float:
    """Layer thickness that produces ``delay_s`` for one ray (the delay is linear in thickness).

    Parameters
    ----------
    c_geographic : numpy.ndarray
        Voigt stiffness (6, 6) in GPa, north-east-down.
    density_kg_m3 : float
        Density, kg m^-3.
    delay_s : float
        The delay, seconds, zero or positive.
    back_azimuth_deg, incidence_deg : float
        The ray (degrees; incidence in [0, 90)).

    Returns
    -------
    float
        Thickness in km.
    """
    delay_s = float(_finite_array(delay_s, "delay_s"))
    if delay_s < 0:
        raise ValueError(f"delay_s must not be negative, got {delay_s:g}")
    if np.ndim(back_azimuth_deg) or np.ndim(incidence_deg):
        raise ValueError("thickness_for_delay takes one ray: a single back_azimuth_deg and incidence_deg")
    per_km = one_layer(c_geographic, density_kg_m3, 1.0, back_azimuth_deg, incidence_deg)["delay_s"][0]
    return float(delay_s / per_km)


def field_summary(c_structural: np.ndarray, density_kg_m3: float, field: dict, source=None,
                  step_deg: float = 5.0, incidence_deg: float = SKS_INCIDENCE_DEG) -> tuple[dict, dict]:
    """The ``splitting.field`` block of summary.json (vertical incidence) and a back-azimuth sweep.

    Parameters
    ----------
    c_structural : numpy.ndarray
        Voigt stiffness (6, 6) in GPa, structural frame.
    density_kg_m3 : float
        Density, kg m^-3.
    field : dict
        The sample's ``field`` settings: placement (``placement``) and ``layer_thickness_km``
        (default 100).
    source : path, optional
        The settings file, named in an ``InputError`` about the placement.
    step_deg : float
        Spacing of the back-azimuth sweep, degrees, positive (default 5).
    incidence_deg : float
        Incidence of the sweep's rays, degrees in [0, 90) (default 10, SKS).

    Returns
    -------
    summary : dict
        Fast azimuth (deg) and delay (s) at vertical incidence, the placement and the cautions.
    sweep : dict
        ``back_azimuth_deg`` (B,) with B = 360 / step_deg, and ``fast_azimuth_deg``, ``delay_s``,
        ``avs_pct`` (B,) of ``one_layer`` at ``incidence_deg``.
    """
    step_deg = check_positive(step_deg, "step_deg")
    check_incidence(incidence_deg, 90.0, upper_included=False)
    rotation = placement(field, source)
    c_geo = to_geographic(c_structural, rotation)
    thickness = float(field.get("layer_thickness_km", 100.0))
    vertical = one_layer(c_geo, density_kg_m3, thickness)
    baz = np.arange(0.0, 360.0, step_deg)
    sweep = one_layer(c_geo, density_kg_m3, thickness, baz, incidence_deg)
    lineation = rotation[:, 0]
    summary = {
        "fast_azimuth_deg": round(float(vertical["fast_azimuth_deg"][0]), 3),
        "delay_s": round(float(vertical["delay_s"][0]), 5),
        "layer_thickness_km": thickness,
        "incidence_deg": 0.0,
        # a vertical lineation has no trend of its own: that of the foliation's dip direction
        "lineation_trend_deg": round(float(np.degrees(np.arctan2(lineation[1], lineation[0])) % 360.0
                                           if np.hypot(lineation[0], lineation[1]) > 1e-9
                                           else (float(field["foliation_strike_deg"]) + 90.0) % 360.0), 3),
        "lineation_plunge_deg": round(float(np.degrees(np.arcsin(np.clip(lineation[2], -1, 1)))), 3),
        "sweep_incidence_deg": incidence_deg,
        "cautions": LAYER_MODEL,
    }
    return summary, {"back_azimuth_deg": baz, **sweep}
