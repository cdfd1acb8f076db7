"""Shear-wave splitting predicted for a rock placed in the ground.

Geographic frame: north, east, down (right-handed); azimuths clockwise from north in degrees.
The foliation is placed by strike and dip (right-hand rule: dip direction = strike + 90), the
lineation by its pitch in the foliation plane measured from the strike direction towards the dip
direction, or by trend and plunge (then it must lie in the plane within 2 degrees). The structural
frame becomes X = lineation, Z = foliation normal pointing up (for a vertical foliation: the
horizontal normal towards strike + 90, the dip direction of the right-hand rule), Y = Z x X.

One layer: a ray of incidence i (from vertical) arriving from back-azimuth b travels up towards
the station; the fast polarisation is the fast shear wave's polarisation projected onto the
horizontal plane (as a station records it), and the delay is L / cos(i) (1/Vs2 - 1/Vs1) with the
phase velocities of the ray direction. Ray bending and the phase/group difference are neglected
(common practice). The prediction assumes a fabric coherent over the whole layer, no melt or
aligned cracks, and a plane-wave, ray-theory view; real splitting depends on frequency and on
structure the sample does not see.
"""

from __future__ import annotations

import numpy as np

from fabric2seis import elastic, waves
from fabric2seis.errors import InputError

IN_PLANE_TOLERANCE_DEG = 2.0
SKS_INCIDENCE_DEG = 10.0


def _horizontal(azimuth_deg: float) -> np.ndarray:
    a = np.radians(azimuth_deg)
    return np.array([np.cos(a), np.sin(a), 0.0])


def placement(field: dict, source=None) -> np.ndarray:
    """Rotation R (3, 3) whose columns are X, Y, Z of the structural frame in north-east-down."""
    if field is None or "foliation_strike_deg" not in field or "foliation_dip_deg" not in field:
        raise InputError("field needs foliation_strike_deg and foliation_dip_deg", source, "key field")
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
        off = np.degrees(np.arcsin(min(1.0, abs(x @ z))))
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


def to_geographic(c_structural: np.ndarray, rotation: np.ndarray) -> np.ndarray:
    """Stiffness in north-east-down coordinates."""
    return elastic.rotate_voigt(c_structural, rotation)


def ray_direction(back_azimuth_deg, incidence_deg) -> np.ndarray:
    """Unit propagation vectors (north, east, down) of up-going rays arriving from ``back_azimuth``."""
    b = np.radians(np.asarray(back_azimuth_deg, dtype=float) + 180.0)
    i = np.radians(np.asarray(incidence_deg, dtype=float))
    b, i = np.broadcast_arrays(b, i)
    return np.stack([np.sin(i) * np.cos(b), np.sin(i) * np.sin(b), -np.cos(i)], axis=-1)


def one_layer(c_geographic: np.ndarray, density_kg_m3: float, thickness_km: float,
              back_azimuth_deg=0.0, incidence_deg=0.0) -> dict[str, np.ndarray]:
    """Fast azimuth (degrees from north, 0-180) and delay (s) of each ray through one layer."""
    n = np.atleast_2d(ray_direction(back_azimuth_deg, incidence_deg))
    w = waves.plane_waves(c_geographic, density_kg_m3, n)
    p = w.polarisations[:, 1]
    fast = np.degrees(np.arctan2(p[:, 1], p[:, 0])) % 180.0
    path = thickness_km / np.abs(n[:, 2])
    delay = path * (1.0 / w.vs2_km_s - 1.0 / w.vs1_km_s)
    return {"fast_azimuth_deg": fast, "delay_s": delay, "avs_pct": w.avs_pct}


def thickness_for_delay(c_geographic: np.ndarray, density_kg_m3: float, delay_s: float,
                        back_azimuth_deg: float = 0.0, incidence_deg: float = 0.0) -> float:
    """Layer thickness (km) that produces ``delay_s`` (the delay is linear in thickness)."""
    per_km = one_layer(c_geographic, density_kg_m3, 1.0, back_azimuth_deg, incidence_deg)["delay_s"][0]
    return float(delay_s / per_km)


def field_summary(c_structural: np.ndarray, density_kg_m3: float, field: dict, source=None,
                  step_deg: float = 5.0, incidence_deg: float = SKS_INCIDENCE_DEG) -> tuple[dict, dict]:
    """``splitting.field`` of summary.json (vertical incidence) and a back-azimuth sweep."""
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
        "cautions": "coherent fabric over the whole layer, no melt or aligned cracks, plane waves and ray "
                    "theory (no ray bending, phase velocities); real splitting depends on frequency and on "
                    "structure the sample does not see",
    }
    return summary, {"back_azimuth_deg": baz, **sweep}
