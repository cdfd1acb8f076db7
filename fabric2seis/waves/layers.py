"""Apparent shear-wave splitting of several anisotropic layers, analytic and from synthetic waveforms.

Frame and signs
---------------
Horizontal components are (north, east); azimuths are clockwise from north in degrees. A core
phase such as SKS leaves the core-mantle boundary polarised radially, so its initial polarisation
azimuth is the back-azimuth ``p``. Radial = (cos p, sin p), transverse = (-sin p, cos p). The
Fourier convention is numpy's, U(w) = sum u(t) exp(-i w t), so a delay by tau multiplies the
spectrum by exp(-i w tau).

One layer (fast azimuth phi, delay dt) acts on the horizontal spectrum as the 2x2 operator

    G(phi, dt) = exp(+i theta) f f^T + exp(-i theta) s s^T,       theta = w dt / 2,
               = cos(theta) I + i sin(theta) [[cos 2phi, sin 2phi], [sin 2phi, -cos 2phi]]

with f = (cos phi, sin phi) the fast and s = (-sin phi, cos phi) the slow direction: rotate to the
fast/slow frame, advance the fast wave by dt/2 and delay the slow wave by dt/2, rotate back. The
operator of a stack of layers, listed bottom to top, is the product G = G_n ... G_2 G_1 (the bottom
layer acts first). This is the formulation of Silver & Savage (1994, Geophys. J. Int. 119,
949-963).

Apparent splitting at a dominant period
---------------------------------------
With a_i = phi_i - p and theta_i = w dt_i / 2 (w = 2 pi / period), the response of two layers to a
unit radial input is radial = a_p + i a_pp, transverse = -c_p + i c_pp, with

    a_p  = cos th1 cos th2 - sin th1 sin th2 cos 2(a2 - a1)
    a_pp = cos th2 sin th1 cos 2a1 + cos th1 sin th2 cos 2a2
    c_p  = sin th1 sin th2 sin 2(a2 - a1)
    c_pp = cos th2 sin th1 sin 2a1 + cos th1 sin th2 sin 2a2

and the one layer (a', theta') that removes the transverse component exactly at that period is

    tan 2a'    = (c_p^2 + c_pp^2) / (a_pp c_pp - a_p c_p)
    tan theta' = c_pp / (a_p sin 2a' + c_p cos 2a') = c_p / (a_pp sin 2a' - c_pp cos 2a')

(Silver & Savage 1994, their two-layer expressions; written here as derived from the operator
above, notation from memory). The two forms of tan theta' are combined as
(c_p^2 + c_pp^2) / (c_pp d1 + c_p d2), d1 and d2 their denominators, because each alone is 0/0
where the other is not (c_pp = 0, e.g. two layers of equal delay symmetric about p). Apparent fast
azimuth phi' = p + a' (0-180), apparent delay dt' = 2 theta' / w, taken with theta' in [0, pi/2)
(the delay is ambiguous by whole periods).
For n layers the same coefficients are read from the product operator (``apparent_splitting``),
which solves the same condition by another route: with w = radial / transverse,
cot 2a' = Re w and tan theta' = -1 / (Im w sin 2a'). Both give a 90-degree period in p (Silver &
Savage 1994).

Nulls: where the transverse response vanishes, the wave leaves the stack unsplit and the apparent
parameters are undefined (NaN here). For a single layer that happens when p is parallel or
perpendicular to phi; for two layers that are neither parallel nor perpendicular c_p never
vanishes, so the transverse response only passes through minima, where the apparent fast
direction comes close to p or p + 90. ``predicted_nulls`` reports the back-azimuths where the
transverse energy at the dominant period has a minimum below ``NULL_TRANSVERSE_FRACTION`` of the
total (a choice of this project: a transverse amplitude below 10 % of the radial).

Synthetic waveforms and their measurement
-----------------------------------------
``synthetic_records`` makes a band-limited SKS-like pulse, radially polarised: a cosine of the
dominant period under a Gaussian window whose standard deviation is ``PULSE_WIDTH_PERIODS``
periods, so that its spectrum is a Gaussian about the dominant frequency with a standard deviation
of about 11 % of it (a broader pulse, e.g. a Gaussian derivative, mixes periods whose apparent
splitting differs, and its measurement departs from the dominant-period prediction by more than
0.1 s near the back-azimuths where the apparent delay changes fast). It then applies every layer's operator
at every frequency of its FFT (exact phase shifts). ``measure_splitting`` measures it back by
the transverse-energy method of Silver & Chan (1991, J. Geophys. Res. 96, 16429-16454): the trial
(phi, dt) whose inverse operator leaves the least energy on the transverse component, searched on
a grid. With R, T the radial and transverse spectra, X = T conj(R), alpha = phi - p, C = cos 2alpha,
S = sin 2alpha, the corrected transverse energy is, by Parseval,

    E = sum_w [ |T|^2 ((1 + cos w dt) + C^2 (1 - cos w dt)) / 2 + |R|^2 S^2 (1 - cos w dt) / 2
                - S sin(w dt) Im X - C S (1 - cos w dt) Re X ]

so the whole grid needs only the sums over frequency of |T|^2, |R|^2, Re X, Im X weighted by
cos(w dt) and sin(w dt), one matrix product, then a broadcast over the trial azimuths.

The one-layer splitting of a sample layer comes from ``splitting.one_layer`` (the one kernel,
``splitting.ray_splitting``). Public functions check their arguments early and raise
``ValueError`` naming the argument (a period that is not positive, layer arrays of mismatched
shapes, records of different lengths).
"""

from __future__ import annotations

import numpy as np

from fabric2seis.waves import splitting

NULL_TRANSVERSE_FRACTION = 0.01
DEFAULT_PERIOD_S = 8.0
SAMPLING_S = 0.1
TRACE_SAMPLES = 2048
PULSE_WIDTH_PERIODS = 1.5
FAST_STEP_DEG = 1.0
DELAY_STEP_S = 0.05
MAX_DELAY_S = 4.0


def _positive(value, name: str) -> float:
    return splitting.check_positive(value, name)


def _layer_arrays(fast_azimuth_deg, delay_s) -> tuple[np.ndarray, np.ndarray]:
    """Fast azimuths and delays as float arrays of one shape, the layer first; delays not negative."""
    fast, delay = np.asarray(fast_azimuth_deg, float), np.asarray(delay_s, float)
    if fast.shape != delay.shape:
        raise ValueError(f"fast_azimuth_deg (shape {fast.shape}) and delay_s (shape {delay.shape}) must have "
                         "the same shape: one value per layer (and per ray)")
    if fast.ndim == 0 or len(fast) == 0:
        raise ValueError("give at least one layer: fast_azimuth_deg and delay_s with the layer on the first axis")
    if not (np.all(np.isfinite(fast)) and np.all(np.isfinite(delay))):
        raise ValueError("fast_azimuth_deg and delay_s must be finite numbers")
    if np.any(delay < 0):
        raise ValueError(f"delay_s must not be negative, got {delay.min():g}")
    return fast, delay


def _broadcastable(name_a: str, a, name_b: str, b) -> None:
    try:
        np.broadcast_shapes(np.shape(a), np.shape(b))
    except ValueError:
        raise ValueError(f"{name_a} (shape {np.shape(a)}) and {name_b} (shape {np.shape(b)}) do not match: "
                         "give one value per ray, or a single value") from None


def splitting_operators(fast_azimuth_deg, delay_s, angular_frequency) -> np.ndarray:
    """The splitting operator G(phi, dt) of one layer at angular frequency w (module docstring).

    Parameters
    ----------
    fast_azimuth_deg : array_like
        Fast azimuths, degrees from north.
    delay_s : array_like
        Delays, seconds, not negative.
    angular_frequency : array_like
        Angular frequencies w, rad/s.

    Returns
    -------
    numpy.ndarray
        Complex operators, shape broadcast(phi, dt, w) + (2, 2), acting on (north, east) spectra.

    References
    ----------
    Silver, P. G. & Savage, M. K. (1994). Geophys. J. Int. 119, 949-963.
    """
    try:
        np.broadcast_shapes(np.shape(fast_azimuth_deg), np.shape(delay_s), np.shape(angular_frequency))
    except ValueError:
        raise ValueError(f"fast_azimuth_deg {np.shape(fast_azimuth_deg)}, delay_s {np.shape(delay_s)} and "
                         f"angular_frequency {np.shape(angular_frequency)} must broadcast together") from None
    phi = np.radians(np.asarray(fast_azimuth_deg, dtype=float))
    theta = np.asarray(angular_frequency, dtype=float) * np.asarray(delay_s, dtype=float) / 2.0
    phi, theta = np.broadcast_arrays(phi, theta)
    c, s = np.cos(theta), 1j * np.sin(theta)
    c2, s2 = np.cos(2 * phi), np.sin(2 * phi)
    return np.stack([np.stack([c + s * c2, s * s2], -1), np.stack([s * s2, c - s * c2], -1)], -2)


def stack_operator(fast_azimuth_deg, delay_s, angular_frequency) -> np.ndarray:
    """Product G_n ... G_1 of a stack; the first axis of ``fast_azimuth_deg``/``delay_s`` is the layer
    (bottom first), the others broadcast with ``angular_frequency``; complex, shape broadcast + (2, 2)."""
    fast, delay = _layer_arrays(fast_azimuth_deg, delay_s)
    total = None
    for phi, dt in zip(fast, delay):
        g = splitting_operators(phi, dt, angular_frequency)
        total = g if total is None else g @ total
    if total is None:                       # not reached: _layer_arrays asks for one layer at least
        raise ValueError("give at least one layer")
    return total


def _radial_transverse(operator: np.ndarray, polarisation_deg) -> tuple[np.ndarray, np.ndarray]:
    """Radial and transverse response of ``operator`` to a unit input polarised along p."""
    p = np.radians(np.asarray(polarisation_deg, dtype=float))
    r = np.stack([np.cos(p), np.sin(p)], -1)
    t = np.stack([-np.sin(p), np.cos(p)], -1)
    out = np.einsum("...ij,...j->...i", operator, r)
    return np.einsum("...i,...i->...", r, out), np.einsum("...i,...i->...", t, out)


def _fold(polarisation_deg, two_alpha, theta, angular_frequency, transverse_fraction,
          undefined_below: float = 0.0) -> dict:
    """Apparent (phi', dt') from 2a' and theta', with theta' brought into [0, pi/2).

    Where the transverse fraction is below ``undefined_below`` (and always at an exact null) the
    apparent splitting is undefined: NaN, not the large or erratic delay the ratio gives there.
    """
    alpha = np.degrees(two_alpha) / 2.0 + np.where(theta < 0, 90.0, 0.0)
    null = transverse_fraction < max(1e-12, undefined_below)
    fast = np.where(null, np.nan, (np.asarray(polarisation_deg) + alpha) % 180.0)
    delay = np.where(null, np.nan, 2.0 * np.abs(theta) / angular_frequency)
    return {"fast_azimuth_deg": fast, "delay_s": delay, "transverse_fraction": transverse_fraction}


def apparent_splitting(fast_azimuth_deg, delay_s, polarisation_deg, period_s: float = DEFAULT_PERIOD_S,
                       undefined_below: float = 0.0) -> dict:
    """Apparent fast azimuth (deg, 0-180), delay (s) and transverse energy fraction of a stack.

    ``fast_azimuth_deg`` and ``delay_s`` have the layer on their first axis (bottom first); the
    other axes broadcast with ``polarisation_deg`` (for SKS, the back-azimuth). Where the
    transverse energy fraction at the dominant period is below ``undefined_below`` a station
    would record a null: outputs pass ``NULL_TRANSVERSE_FRACTION`` so that the apparent fast
    azimuth and delay are NaN (undefined) there; the default 0 keeps every value the ratio
    defines (for checks against the closed form).

    Parameters
    ----------
    fast_azimuth_deg, delay_s : array_like
        Layers' fast azimuths (degrees) and delays (s), shape (L, ...), bottom layer first.
    polarisation_deg : array_like
        Initial polarisation azimuths, degrees, broadcast with the trailing axes.
    period_s : float
        Dominant period, s, positive.
    undefined_below : float
        Transverse energy fraction below which the result is NaN, in [0, 1).

    Returns
    -------
    dict
        ``fast_azimuth_deg`` (degrees, 0-180), ``delay_s`` (s) and ``transverse_fraction`` (no
        unit), each of shape broadcast(fast_azimuth_deg[0], polarisation_deg).

    References
    ----------
    Silver, P. G. & Savage, M. K. (1994). Geophys. J. Int. 119, 949-963.
    """
    period_s = _positive(period_s, "period_s")
    if not 0.0 <= float(undefined_below) < 1.0:
        raise ValueError(f"undefined_below must lie in [0, 1), got {undefined_below!r}")
    fast, _ = _layer_arrays(fast_azimuth_deg, delay_s)
    _broadcastable("fast_azimuth_deg without its layer axis", fast[0], "polarisation_deg", polarisation_deg)
    w = 2.0 * np.pi / period_s
    radial, transverse = _radial_transverse(stack_operator(fast_azimuth_deg, delay_s, w), polarisation_deg)
    fraction = np.abs(transverse) ** 2 / (np.abs(radial) ** 2 + np.abs(transverse) ** 2)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = radial / transverse
        two_alpha = np.arctan2(1.0, ratio.real)                        # cot 2a' = Re(radial / transverse)
        theta = np.arctan(-1.0 / (ratio.imag * np.sin(two_alpha)))
    return _fold(polarisation_deg, two_alpha, theta, w, fraction, undefined_below)


def two_layer_closed_form(fast1_deg, delay1_s, fast2_deg, delay2_s, polarisation_deg,
                          period_s: float = DEFAULT_PERIOD_S) -> dict:
    """Silver & Savage's (1994) explicit two-layer expressions (module docstring); layer 1 at the bottom.

    Angles in degrees, delays in s, ``period_s`` positive; all arguments broadcast together.
    Returns ``fast_azimuth_deg``, ``delay_s`` and ``transverse_fraction`` of the broadcast shape.
    """
    period_s = _positive(period_s, "period_s")
    try:
        np.broadcast_shapes(*(np.shape(v) for v in (fast1_deg, delay1_s, fast2_deg, delay2_s, polarisation_deg)))
    except ValueError:
        raise ValueError("the two layers' fast azimuths and delays and polarisation_deg must have matching "
                         "lengths, or be single values") from None
    w = 2.0 * np.pi / period_s
    p = np.asarray(polarisation_deg, dtype=float)
    a1, a2 = np.radians(np.asarray(fast1_deg) - p), np.radians(np.asarray(fast2_deg) - p)
    t1, t2 = w * np.asarray(delay1_s) / 2.0, w * np.asarray(delay2_s) / 2.0
    a_p = np.cos(t1) * np.cos(t2) - np.sin(t1) * np.sin(t2) * np.cos(2 * (a2 - a1))
    a_pp = np.cos(t2) * np.sin(t1) * np.cos(2 * a1) + np.cos(t1) * np.sin(t2) * np.cos(2 * a2)
    c_p = np.sin(t1) * np.sin(t2) * np.sin(2 * (a2 - a1))
    c_pp = np.cos(t2) * np.sin(t1) * np.sin(2 * a1) + np.cos(t1) * np.sin(t2) * np.sin(2 * a2)
    two_alpha = np.arctan2(c_p ** 2 + c_pp ** 2, a_pp * c_pp - a_p * c_p)
    d1 = a_p * np.sin(two_alpha) + c_p * np.cos(two_alpha)      # tan theta' = c_pp / d1
    d2 = a_pp * np.sin(two_alpha) - c_pp * np.cos(two_alpha)    # tan theta' = c_p / d2
    with np.errstate(divide="ignore", invalid="ignore"):
        theta = np.arctan((c_p ** 2 + c_pp ** 2) / (c_pp * d1 + c_p * d2))
    return _fold(p, two_alpha, theta, w, c_p ** 2 + c_pp ** 2)


def predicted_nulls(fast_azimuth_deg, delay_s, period_s: float = DEFAULT_PERIOD_S, step_deg: float = 0.1,
                    threshold: float = NULL_TRANSVERSE_FRACTION) -> list[dict]:
    """Back-azimuths (SKS: polarisation = back-azimuth) where the stack leaves (almost) no transverse energy.

    For constant layers give ``fast_azimuth_deg``/``delay_s`` of shape (L,); for layers that depend
    on the back-azimuth (inclined rays through sample layers) give a callable ``baz -> (fast, delay)``
    of shapes (L, B) as ``fast_azimuth_deg`` and leave ``delay_s`` None.

    Returns a list of dicts: ``back_azimuth_deg``, ``transverse_fraction`` (no unit) and
    ``fast_to_polarisation_deg`` (degrees, None where undefined). ``period_s`` and ``step_deg``
    must be positive, ``threshold`` in (0, 1].
    """
    _positive(period_s, "period_s")
    step_deg = _positive(step_deg, "step_deg")
    if not 0.0 < float(threshold) <= 1.0:
        raise ValueError(f"threshold must lie in (0, 1], got {threshold!r}")
    if not callable(fast_azimuth_deg):
        _layer_arrays(fast_azimuth_deg, delay_s)
    baz = np.arange(0.0, 360.0, step_deg)
    if callable(fast_azimuth_deg):
        fast, delay = fast_azimuth_deg(baz)
    else:
        fast = np.asarray(fast_azimuth_deg, float)[:, None] + 0 * baz
        delay = np.asarray(delay_s, float)[:, None] + 0 * baz
    app = apparent_splitting(fast, delay, baz, period_s)
    f = app["transverse_fraction"]
    low = (f < np.roll(f, 1)) & (f <= np.roll(f, -1)) & (f < threshold)
    out = []
    for k in np.flatnonzero(low):
        a = app["fast_azimuth_deg"][k]
        angle = None if np.isnan(a) else float(abs(((a - baz[k]) + 45.0) % 90.0 - 45.0))
        out.append({"back_azimuth_deg": round(float(baz[k]), 3), "transverse_fraction": float(f[k]),
                    "fast_to_polarisation_deg": None if angle is None else round(angle, 3)})
    return out


def layer_splitting(layers: list, back_azimuth_deg, incidence_deg) -> tuple[np.ndarray, np.ndarray]:
    """One-layer fast azimuth and delay of every layer for every ray: arrays (L, B).

    A layer is a dict with either ``fast_azimuth_deg`` and ``delay_s`` (taken as they are, for every
    ray), or ``stiffness_geographic`` (6x6, GPa, north-east-down), ``density_kg_m3`` and
    ``thickness_km`` (computed with ``splitting.one_layer`` per back-azimuth and incidence).
    ``incidence_deg`` (degrees, in [0, 90)) is a single value or one per back-azimuth. Returns
    fast azimuths (degrees) and delays (s), each (L, B).
    """
    if not layers:
        raise ValueError("layers must be a non-empty list of layers, bottom first")
    for k, layer in enumerate(layers):
        if not ("stiffness_geographic" in layer and {"density_kg_m3", "thickness_km"} <= set(layer)
                or {"fast_azimuth_deg", "delay_s"} <= set(layer)):
            raise ValueError(f"layer {k} needs fast_azimuth_deg and delay_s, or stiffness_geographic, "
                             "density_kg_m3 and thickness_km")
    baz = np.atleast_1d(np.asarray(back_azimuth_deg, dtype=float))
    _broadcastable("back_azimuth_deg", baz, "incidence_deg", incidence_deg)
    splitting.check_incidence(incidence_deg, 90.0, upper_included=False)
    inc = np.broadcast_to(np.asarray(incidence_deg, dtype=float), baz.shape)
    fast, delay = np.empty((len(layers), baz.size)), np.empty((len(layers), baz.size))
    for k, layer in enumerate(layers):
        if "stiffness_geographic" in layer:
            one = splitting.one_layer(layer["stiffness_geographic"], layer["density_kg_m3"],
                                      layer["thickness_km"], baz, inc)
            fast[k], delay[k] = one["fast_azimuth_deg"], one["delay_s"]
        else:
            fast[k], delay[k] = layer["fast_azimuth_deg"], layer["delay_s"]
    return fast, delay


# --- synthetic waveforms and their measurement --------------------------------------------------

def sks_pulse(period_s: float = DEFAULT_PERIOD_S, sampling_s: float = SAMPLING_S,
              n_samples: int = TRACE_SAMPLES) -> np.ndarray:
    """A cosine of ``period_s`` under a Gaussian window, centred in the trace (module docstring)."""
    t = (np.arange(n_samples) - n_samples // 2) * sampling_s
    return np.cos(2.0 * np.pi * t / period_s) * np.exp(-0.5 * (t / (PULSE_WIDTH_PERIODS * period_s)) ** 2)


def synthetic_records(fast_azimuth_deg, delay_s, back_azimuth_deg, period_s: float = DEFAULT_PERIOD_S,
                      sampling_s: float = SAMPLING_S, n_samples: int = TRACE_SAMPLES) -> tuple[np.ndarray, np.ndarray]:
    """North and east records (B, n_samples) of a radially polarised pulse through the stack.

    ``fast_azimuth_deg``, ``delay_s``: (L, B), bottom layer first; every layer's operator is
    applied at every FFT frequency (exact phase shifts). ``period_s`` and ``sampling_s`` positive,
    ``n_samples`` at least 2.
    """
    baz = np.atleast_1d(np.asarray(back_azimuth_deg, dtype=float))
    _positive(period_s, "period_s")
    _positive(sampling_s, "sampling_s")
    if int(n_samples) != n_samples or n_samples < 2:
        raise ValueError(f"n_samples must be a whole number of at least 2, got {n_samples!r}")
    fast_checked, _ = _layer_arrays(fast_azimuth_deg, delay_s)
    if fast_checked.ndim != 2 or fast_checked.shape[1] != len(baz):
        raise ValueError(f"fast_azimuth_deg and delay_s must have shape (layers, back-azimuths) = (L, {len(baz)}), "
                         f"got {fast_checked.shape}")
    spectrum = np.fft.rfft(sks_pulse(period_s, sampling_s, n_samples))
    w = 2.0 * np.pi * np.fft.rfftfreq(n_samples, sampling_s)
    fast = np.asarray(fast_azimuth_deg, float)[:, :, None]                    # (L, B, 1)
    delay = np.asarray(delay_s, float)[:, :, None]
    g = stack_operator(fast, delay, w[None, :])                               # (B, K, 2, 2)
    p = np.radians(baz)[:, None, None]
    ne = g[..., 0] * np.cos(p) + g[..., 1] * np.sin(p)                        # (B, K, 2)
    ne = ne * spectrum[None, :, None]
    return np.fft.irfft(ne[..., 0], n_samples), np.fft.irfft(ne[..., 1], n_samples)


def transverse_energy_grid(north: np.ndarray, east: np.ndarray, polarisation_deg, fast_grid_deg: np.ndarray,
                           delay_grid_s: np.ndarray, sampling_s: float = SAMPLING_S) -> np.ndarray:
    """Transverse energy left after correcting every record (B, N) by every trial: array (B, F, D).

    The sum of the module docstring (Parseval over the real FFT), all trials at once.
    ``north`` and ``east`` have the same shape; one polarisation (degrees) per record.
    """
    north, east = _records(north, east, polarisation_deg)
    _positive(sampling_s, "sampling_s")
    n = north.shape[-1]
    p = np.radians(np.atleast_1d(np.asarray(polarisation_deg, dtype=float)))[:, None]
    radial = np.fft.rfft(north * np.cos(p) + east * np.sin(p))
    transverse = np.fft.rfft(-north * np.sin(p) + east * np.cos(p))
    weight = np.full(radial.shape[-1], 2.0)
    weight[0] = 1.0
    if n % 2 == 0:
        weight[-1] = 1.0
    weight /= n
    w = 2.0 * np.pi * np.fft.rfftfreq(n, sampling_s)
    wt = w[None, :] * np.asarray(delay_grid_s, float)[:, None]                 # (D, K)
    cos_m, sin_m = weight * np.cos(wt), weight * np.sin(wt)
    p_t, p_r = np.abs(transverse) ** 2, np.abs(radial) ** 2                    # (B, K)
    x = transverse * np.conj(radial)
    t0, tc = p_t @ weight, p_t @ cos_m.T                                       # (B,), (B, D)
    r0, rc = p_r @ weight, p_r @ cos_m.T
    x0, xc, ys = x.real @ weight, x.real @ cos_m.T, x.imag @ sin_m.T
    alpha = np.radians(np.asarray(fast_grid_deg, float))[None, :] - p          # (B, F)
    c, s = np.cos(2 * alpha)[:, :, None], np.sin(2 * alpha)[:, :, None]
    t0, r0, x0 = t0[:, None, None], r0[:, None, None], x0[:, None, None]
    tc, rc, xc, ys = tc[:, None, :], rc[:, None, :], xc[:, None, :], ys[:, None, :]
    return ((t0 + tc) / 2 + c ** 2 * (t0 - tc) / 2 + s ** 2 * (r0 - rc) / 2 - s * ys - c * s * (x0 - xc))


def _records(north, east, polarisation_deg) -> tuple[np.ndarray, np.ndarray]:
    north, east = np.atleast_2d(north), np.atleast_2d(east)
    if north.shape != east.shape or north.ndim != 2:
        raise ValueError(f"north (shape {north.shape}) and east (shape {east.shape}) must be records of the same "
                         "shape (B, N)")
    n_pol = np.atleast_1d(np.asarray(polarisation_deg, dtype=float)).size
    if n_pol not in (1, north.shape[0]):
        raise ValueError(f"polarisation_deg must give one value per record ({north.shape[0]}) or one for all, "
                         f"got {n_pol}")
    return north, east


def measurement_grid(max_delay_s: float = MAX_DELAY_S, fast_step_deg: float = FAST_STEP_DEG,
                     delay_step_s: float = DELAY_STEP_S) -> tuple[np.ndarray, np.ndarray]:
    """Trial fast azimuths (degrees, 0 to 180, exclusive) and delays (s, 0 to max_delay_s) of the grid
    search; all three arguments positive."""
    for value, name in ((max_delay_s, "max_delay_s"), (fast_step_deg, "fast_step_deg"),
                        (delay_step_s, "delay_step_s")):
        _positive(value, name)
    return (np.arange(0.0, 180.0, fast_step_deg),
            np.arange(0.0, max_delay_s + delay_step_s / 2, delay_step_s))


def measure_splitting(north, east, polarisation_deg, sampling_s: float = SAMPLING_S,
                      max_delay_s: float = MAX_DELAY_S, fast_step_deg: float = FAST_STEP_DEG,
                      delay_step_s: float = DELAY_STEP_S) -> dict:
    """Fast azimuth (deg) and delay (s) minimising the transverse energy (Silver & Chan 1991), per record.

    Also the transverse energy fraction before correction and after the best correction.

    Parameters
    ----------
    north, east : numpy.ndarray
        Records (B, N) or (N,), of the same shape, sampled every ``sampling_s`` seconds.
    polarisation_deg : array_like
        Initial polarisation of each record (SKS: its back-azimuth), degrees.
    sampling_s, max_delay_s, fast_step_deg, delay_step_s : float
        Sampling interval (s) and the trial grid (``measurement_grid``); all positive.

    Returns
    -------
    dict
        ``fast_azimuth_deg`` (B,), degrees; ``delay_s`` (B,), seconds;
        ``transverse_fraction_before`` and ``transverse_fraction_after`` (B,), no unit.

    References
    ----------
    Silver, P. G. & Chan, W. W. (1991). Shear wave splitting and subcontinental mantle deformation.
    J. Geophys. Res. 96, 16429-16454.
    """
    _records(north, east, polarisation_deg)
    fast_grid, delay_grid = measurement_grid(max_delay_s, fast_step_deg, delay_step_s)
    energy = transverse_energy_grid(north, east, polarisation_deg, fast_grid, delay_grid, sampling_s)
    flat = energy.reshape(energy.shape[0], -1)
    best = np.argmin(flat, axis=1)
    f, d = np.unravel_index(best, energy.shape[1:])
    total = (np.atleast_2d(north) ** 2 + np.atleast_2d(east) ** 2).sum(axis=-1)
    return {"fast_azimuth_deg": fast_grid[f], "delay_s": delay_grid[d],
            "transverse_fraction_before": energy[:, 0, 0] / total,
            "transverse_fraction_after": flat[np.arange(len(best)), best] / total}
