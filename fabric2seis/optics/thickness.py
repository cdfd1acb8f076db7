"""Section thickness from one optical measurement: retardation = birefringence x thickness.

Three measurements a microscopist makes: the retardation of one grain (with a compensator, or read
off its colour), the interference order of one grain, and the highest colour seen in a phase. The
grain's birefringence comes from its EBSD orientation (:func:`indicatrix.section_optics`); for the
highest colour of a phase, the largest birefringence among its grains in the section (or, with no
orientations, the mineral's n_gamma - n_alpha, which gives a lower bound of the thickness).
"""

from __future__ import annotations

import numpy as np

from fabric2seis.optics.colour import ORDER_NM


def thickness_from_retardation(retardation_nm: float, birefringence: float) -> float:
    """Thickness of a section in which a grain of known birefringence shows a given retardation.

    Parameters
    ----------
    retardation_nm : float
        Measured retardation, nm (positive).
    birefringence : float
        The grain's birefringence in the section (dimensionless, positive).

    Returns
    -------
    float
        Thickness, micrometres.

    Raises
    ------
    ValueError
        If either value is not a positive finite number.
    """
    for name, value in (("retardation_nm", retardation_nm), ("birefringence", birefringence)):
        if not (np.isfinite(value) and value > 0):
            raise ValueError(f"{name} must be a positive number, not {value}")
    return float(retardation_nm) / float(birefringence) / 1000.0


def thickness_from_order(order: int, birefringence: float) -> tuple[float, float]:
    """Range of thickness in which a grain of known birefringence shows colours of a given order.

    Order n spans retardations (n - 1) ``ORDER_NM`` to n ``ORDER_NM`` (550 nm per order, ending at
    the first-order red; common practice).

    Parameters
    ----------
    order : int
        Interference order seen, 1 or more.
    birefringence : float
        The grain's birefringence in the section (dimensionless, positive).

    Returns
    -------
    tuple of float
        Least and greatest thickness, micrometres.

    Raises
    ------
    ValueError
        If the order is not a whole number of at least 1, or the birefringence not positive.
    """
    if int(order) != order or order < 1:
        raise ValueError(f"the order must be a whole number of at least 1, not {order}")
    high = thickness_from_retardation(order * ORDER_NM, birefringence)
    return high * (order - 1) / order, high


def thickness_from_highest_colour(retardation_nm: float, birefringences: np.ndarray | float) -> float:
    """Thickness of a section whose phase shows at most a given retardation (its highest colour).

    The grain showing the highest colour is the one of largest birefringence in the section.

    Parameters
    ----------
    retardation_nm : float
        Retardation of the highest colour seen in the phase, nm.
    birefringences : array_like or float
        Birefringences of the phase's grains (or pixels) in the section, or the mineral's
        n_gamma - n_alpha (then the result is the least thickness consistent with the colour).

    Returns
    -------
    float
        Thickness, micrometres.

    Raises
    ------
    ValueError
        If the retardation is not positive or no birefringence is positive.
    """
    largest = float(np.max(birefringences)) if np.size(birefringences) else 0.0
    return thickness_from_retardation(retardation_nm, largest)


def thickness_from_grain(retardation_nm: float, optics, quat: np.ndarray, view="map_normal") -> float:
    """Thickness of a section in which one grain of known orientation shows a measured retardation.

    Parameters
    ----------
    retardation_nm : float
        Measured retardation of the grain, nm.
    optics : OpticalConstants
        The grain's mineral's optical constants (``Mineral.optics``).
    quat : numpy.ndarray, shape (4,)
        The grain's orientation (orix quaternion) in sample coordinates.
    view : str or sequence of float
        The section normal (``optics.view`` setting), map normal by default.

    Returns
    -------
    float
        Thickness, micrometres.

    Raises
    ------
    ValueError
        If the grain shows no birefringence along the view (viewed down an optic axis) or the
        retardation is not positive.
    """
    from fabric2seis.optics.indicatrix import polariser_directions, section_optics

    polariser, analyser = polariser_directions(view)
    grain = section_optics(optics.impermeability, np.atleast_2d(quat), polariser, analyser, 1.0)
    birefringence = float(grain.birefringence[0])
    if birefringence < 1e-3 * optics.max_birefringence:
        raise ValueError(f"the grain shows almost no birefringence along the view ({birefringence:.2g}: close to an "
                         "optic axis); choose a grain in brighter colours")
    return thickness_from_retardation(retardation_nm, birefringence)
