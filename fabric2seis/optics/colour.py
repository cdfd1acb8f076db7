"""Interference colours between crossed polars, with or without a first-order accessory plate.

The polariser vibrates east-west (E), the analyser north-south (N) (common practice). A section of
retardation R whose fast vibration lies at theta from E (anticlockwise) passes the fraction

    I(lambda) = sin^2(2 theta) sin^2(pi R / lambda)

of the light leaving the polariser. The accessory plate (retardation ``PLATE_NM`` = 530 nm, a
first-order red or "full-wave" plate) is inserted above the section with its slow vibration
direction NE-SW, at 45 degrees from E towards N (the usual mounting; common practice). Jones
calculus of section and plate between the polarisers (delta = 2 pi R / lambda, Delta = 2 pi
R_plate / lambda) gives

    I = (1 - cos Delta) / 2 + sin^2(2 theta) cos Delta (1 - cos delta) / 2 - sin(2 theta) sin Delta sin delta / 2,

which is sin^2(pi (R + R_plate) / lambda) when the section's slow direction is parallel to the
plate's (theta = -45 degrees) and sin^2(pi (R - R_plate) / lambda) when it is crossed (theta = 45).

Colour: the CIE 1931 tristimulus values of the transmitted light, sum over wavelength of
I(lambda) S(lambda) (x, y, z)(lambda), with S the CIE D65 daylight illuminant, normalised so that
the light leaving the polariser (I = 1) has Y = 1, and then sRGB (IEC 61966-2-1) with its
transfer function, through the colour-science library (its tables of the colour-matching
functions and of D65; nothing hand-typed). The wavelength sum is one matrix product: every
pixel's colour is a sum of at most three tables of colour against retardation, weighted by
functions of theta, so a map of 10^6 pixels needs no per-pixel spectrum.
"""

from __future__ import annotations

import functools

import numpy as np

#: retardation of the first-order accessory plate, nm (a "530 nm" or first-order red plate)
PLATE_NM = 530.0
#: retardation at which each order ends (the first-order red), nm; common practice
ORDER_NM = 550.0
#: wavelength range (nm) and step (nm) of the spectral sums: the visible range of the CIE tables
WAVELENGTHS_NM = (380.0, 780.0, 1.0)
#: spacing (nm) of the retardation tables; colours are linear between their rows
TABLE_STEP_NM = 1.0


@functools.lru_cache(maxsize=2)
def spectral_weights(step_nm: float = WAVELENGTHS_NM[2]) -> tuple[np.ndarray, np.ndarray]:
    """Wavelengths and the weights of the spectral sum: D65 times the CIE 1931 2-degree functions.

    Parameters
    ----------
    step_nm : float
        Wavelength step, nm.

    Returns
    -------
    wavelengths_nm : numpy.ndarray, shape (L,)
        380 to 780 nm.
    weights : numpy.ndarray, shape (L, 3)
        S(lambda) (x, y, z)(lambda) dlambda, scaled so that the y column sums to 1 (dimensionless).

    References
    ----------
    CIE 015:2018, Colorimetry, 4th ed. (CIE 1931 standard colorimetric observer, illuminant D65),
    as tabulated by the colour-science package.
    """
    import colour

    shape = colour.SpectralShape(WAVELENGTHS_NM[0], WAVELENGTHS_NM[1], step_nm)
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(shape)
    d65 = colour.SDS_ILLUMINANTS["D65"].copy().align(shape)
    weights = np.asarray(cmfs.values, dtype=float) * np.asarray(d65.values, dtype=float)[:, None]
    return np.asarray(cmfs.wavelengths, dtype=float), weights / weights[:, 1].sum()


class InterferenceTable:
    """Tables of CIE XYZ against retardation, for crossed polars with and without the accessory plate.

    Parameters
    ----------
    max_retardation_nm : float
        Largest retardation to be looked up, nm.
    step_nm : float
        Spacing of the table rows, nm.

    Attributes
    ----------
    retardation_nm
        The rows (R,), nm.
    crossed
        XYZ (R, 3) of sin^2(pi R / lambda): the colour at theta = 45 degrees without the plate.
    plate_alone
        XYZ (3,) of (1 - cos Delta) / 2: the plate's own colour (first-order red).
    plate_cos, plate_sin
        XYZ (R, 3) of cos Delta (1 - cos delta) and of sin Delta sin delta.
    """

    def __init__(self, max_retardation_nm: float, step_nm: float = TABLE_STEP_NM) -> None:
        if not (np.isfinite(max_retardation_nm) and max_retardation_nm >= 0 and step_nm > 0):
            raise ValueError("the largest retardation must be finite and not negative, the step positive")
        lam, w = spectral_weights()
        self.step_nm = float(step_nm)
        self.retardation_nm = np.arange(int(np.ceil(max_retardation_nm / step_nm)) + 2) * step_nm
        delta = 2.0 * np.pi * self.retardation_nm[:, None] / lam[None, :]
        plate = 2.0 * np.pi * PLATE_NM / lam
        self.crossed = ((1.0 - np.cos(delta)) / 2.0) @ w
        self.plate_alone = ((1.0 - np.cos(plate)) / 2.0) @ w
        self.plate_cos = (np.cos(plate) * (1.0 - np.cos(delta))) @ w
        self.plate_sin = (np.sin(plate) * np.sin(delta)) @ w

    def _lookup(self, table: np.ndarray, retardation_nm: np.ndarray | float) -> np.ndarray:
        x = np.asarray(retardation_nm, dtype=float) / self.step_nm
        if x.size and (x.min() < 0 or x.max() > len(self.retardation_nm) - 1):
            raise ValueError("a retardation lies outside the table; build it with a larger maximum")
        i = np.minimum(x.astype(np.int64), len(self.retardation_nm) - 2)
        f = (x - i)[..., None]
        return table[i] * (1.0 - f) + table[i + 1] * f

    def xyz(self, retardation_nm: np.ndarray | float, fast_vibration_deg: np.ndarray | float,
            plate: bool = False) -> np.ndarray:
        """CIE XYZ of the light passing the analyser (..., 3), Y = 1 for the light leaving the polariser.

        Parameters
        ----------
        retardation_nm : array_like
            Retardation of each pixel, nm.
        fast_vibration_deg : array_like
            Fast vibration direction, degrees anticlockwise from the polariser (E), stage turn included.
        plate : bool
            With the first-order plate (slow direction NE-SW).

        Returns
        -------
        numpy.ndarray
            Tristimulus values, shape of the inputs plus (3,).
        """
        two_theta = np.radians(2.0 * np.asarray(fast_vibration_deg, dtype=float))[..., None]
        s2 = np.sin(two_theta) ** 2
        if not plate:
            return s2 * self._lookup(self.crossed, retardation_nm)
        return (self.plate_alone + s2 / 2.0 * self._lookup(self.plate_cos, retardation_nm)
                - np.sin(two_theta) / 2.0 * self._lookup(self.plate_sin, retardation_nm))


def xyz_to_srgb(xyz: np.ndarray) -> np.ndarray:
    """Encode CIE XYZ (Y = 1 white, D65) as sRGB in 0-1, colours outside the sRGB gamut clipped.

    Parameters
    ----------
    xyz : array_like, shape (..., 3)
        Tristimulus values.

    Returns
    -------
    numpy.ndarray, shape (..., 3)
        sRGB values with the sRGB transfer function applied, clipped to 0-1.

    References
    ----------
    IEC 61966-2-1:1999, as implemented by ``colour.XYZ_to_sRGB``.
    """
    import colour

    return np.clip(colour.XYZ_to_sRGB(np.asarray(xyz, dtype=float)), 0.0, 1.0)


def interference_srgb(retardation_nm: np.ndarray, fast_vibration_deg: np.ndarray | float = 45.0,
                      plate: bool = False, table: InterferenceTable | None = None) -> np.ndarray:
    """sRGB of the light between crossed polars (0-1), one colour per retardation.

    Parameters
    ----------
    retardation_nm : array_like
        Retardations, nm (not negative).
    fast_vibration_deg : array_like or float
        Fast vibration direction, degrees anticlockwise from the polariser; 45 (brightest) by default.
    plate : bool
        With the first-order plate, slow direction NE-SW.
    table : InterferenceTable, optional
        A table reaching the largest retardation; built here if not given.

    Returns
    -------
    numpy.ndarray
        sRGB (..., 3).
    """
    r = np.asarray(retardation_nm, dtype=float)
    if table is None:
        table = InterferenceTable(float(r.max()) if r.size else 0.0)
    return xyz_to_srgb(table.xyz(r, np.broadcast_to(fast_vibration_deg, r.shape), plate))


def order_of(retardation_nm: np.ndarray | float) -> np.ndarray:
    """The interference order of a retardation: 1 up to ``ORDER_NM``, 2 up to twice that, and so on.

    Parameters
    ----------
    retardation_nm : array_like
        Retardations, nm.

    Returns
    -------
    numpy.ndarray of int
        Orders (1 for zero retardation).
    """
    r = np.asarray(retardation_nm, dtype=float)
    return np.maximum(np.ceil(r / ORDER_NM), 1).astype(int)
