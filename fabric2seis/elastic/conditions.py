"""Single-crystal constants and density at pressure and temperature.

Method (common practice for aggregate seismic properties):

* C_ij(P, T) = C_ij0 + (dC_ij/dP) dP + (1/2)(d2C_ij/dP2) dP^2 + (dC_ij/dT) dT, with the
  library's derivatives (first order, plus second-order pressure terms where the source gives them)
  and dP, dT measured from the conditions at which the constants were measured (each entry's
  ``reference_conditions``: 25 C and 0 GPa unless it says otherwise, e.g. ice at -16 C);
* within ``NEGLIGIBLE_DT_C`` and ``NEGLIGIBLE_DP_GPA`` of those conditions a mineral needs no
  derivatives (the change is below the uncertainty of the constants, this project's choice: 10 K
  at a typical 0.02 GPa/K moves C11 by about 0.2 %, 0.1 GPa at dC/dP of 5-10 by 0.3-0.7 %);
* density: thermal expansion at zero pressure, rho(T) = rho0 exp(-alpha dT), then the
  third-order Birch-Murnaghan equation of state at the temperature's density,
  P = 3 K0 / 2 (x^7 - x^5) (1 + 3/4 (K0' - 4)(x^2 - 1)), x = (rho / rho(T))^(1/3).

Limits: derivatives are taken as constant, so cross terms (d2C/dPdT) and the temperature
dependence of K0 are ignored; the constants of the source stand for all compositions of the
mineral; melt, cracks and anelasticity are not modelled. Beyond about 10 GPa or 1000 C the
extrapolation grows uncertain. A mineral without the derivatives needed is refused unless the
settings accept ambient values for it (``conditions.allow_ambient_constants``).
"""

from __future__ import annotations

import numpy as np

from fabric2seis.elastic import check_stiffness, reuss_moduli
from fabric2seis.errors import InputError

AMBIENT_C = 25.0
NEGLIGIBLE_DT_C = 10.0
NEGLIGIBLE_DP_GPA = 0.1


def offsets(mineral, pressure_gpa: float, temperature_c: float) -> tuple[float, float]:
    """Offsets of the sample's conditions from those the mineral's constants were measured at.

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        Library entry with its reference conditions.
    pressure_gpa : float
        Pressure, GPa.
    temperature_c : float
        Temperature, degrees Celsius.

    Returns
    -------
    tuple of float
        dP in GPa and dT in K.
    """
    return (pressure_gpa - mineral.reference_pressure_gpa, temperature_c - mineral.reference_temperature_c)


def at_reference(mineral, pressure_gpa: float, temperature_c: float) -> bool:
    """Tell whether the conditions are those the constants were measured at (no correction at all).

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        Library entry with its reference conditions.
    pressure_gpa : float
        Pressure, GPa.
    temperature_c : float
        Temperature, degrees Celsius.

    Returns
    -------
    bool
        True when both offsets vanish (to rounding).
    """
    dp, dt = offsets(mineral, pressure_gpa, temperature_c)
    return abs(dp) < 1e-12 and abs(dt) < 1e-9


def birch_murnaghan_pressure(x: float, k0_gpa: float, k0_prime: float) -> float:
    """Third-order Birch-Murnaghan pressure at a given compression.

    Parameters
    ----------
    x : float
        Compression (rho / rho0)^(1/3), dimensionless.
    k0_gpa : float
        Bulk modulus at zero pressure, GPa.
    k0_prime : float
        Its pressure derivative, dimensionless.

    Returns
    -------
    float
        Pressure, GPa.

    References
    ----------
    Birch, F. (1947). Finite elastic strain of cubic crystals. Phys. Rev. 71, 809-824.
    """
    return 1.5 * k0_gpa * (x ** 7 - x ** 5) * (1.0 + 0.75 * (k0_prime - 4.0) * (x ** 2 - 1.0))


def density_at(rho0: float, pressure_gpa: float, temperature_c: float, k0_gpa: float, k0_prime: float,
               alpha_per_k: float, reference_c: float = AMBIENT_C) -> float:
    """Density by thermal expansion from ``reference_c`` then third-order Birch-Murnaghan compression.

    Parameters
    ----------
    rho0 : float
        Density at the reference conditions, kg m^-3.
    pressure_gpa : float
        Pressure counted from the reference pressure, GPa.
    temperature_c : float
        Temperature, degrees Celsius.
    k0_gpa : float
        Bulk modulus at zero pressure, GPa.
    k0_prime : float
        Its pressure derivative, dimensionless.
    alpha_per_k : float
        Volumetric thermal expansion coefficient, 1/K.
    reference_c : float
        Temperature at which ``rho0`` holds, degrees Celsius.

    Returns
    -------
    float
        Density, kg m^-3.

    Raises
    ------
    ValueError
        If the pressure needs a compression x outside [1, 1.5] (from ``scipy.optimize.brentq``).

    References
    ----------
    Birch, F. (1947). Finite elastic strain of cubic crystals. Phys. Rev. 71, 809-824.
    """
    rho_t = rho0 * np.exp(-alpha_per_k * (temperature_c - reference_c))
    if pressure_gpa == 0:
        return float(rho_t)
    from scipy.optimize import brentq  # here: scipy.optimize takes half a second to import

    x = brentq(lambda s: birch_murnaghan_pressure(s, k0_gpa, k0_prime) - pressure_gpa, 1.0, 1.5)
    return float(rho_t * x ** 3)


def assumptions(mineral, pressure_gpa: float, temperature_c: float) -> list[str]:
    """List what had to be assumed to bring ``mineral`` to the conditions (empty at its reference conditions).

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        Library entry.
    pressure_gpa : float
        Pressure, GPa.
    temperature_c : float
        Temperature, degrees Celsius.

    Returns
    -------
    list of str
        One sentence per assumption (missing derivatives, equation of state or thermal
        expansion; derivatives marked from memory).
    """
    notes = []
    dp, dt = offsets(mineral, pressure_gpa, temperature_c)
    where = (f"{mineral.name}: constants measured at {mineral.reference_temperature_c:g} C, "
             f"{mineral.reference_pressure_gpa:g} GPa")
    if dp != 0:
        if mineral.dcij_dp is None:
            notes.append(f"{where}; no pressure derivatives, constants as measured"
                         + (f" (within {NEGLIGIBLE_DP_GPA:g} GPa)" if abs(dp) <= NEGLIGIBLE_DP_GPA else ""))
        if not (mineral.eos or {}).get("k0_gpa"):
            notes.append(f"{mineral.name}: no equation of state in the library; density from K0 = Reuss bulk "
                         "modulus of the constants and K0' = 4")
        if mineral.d2cij_dp2 is None and mineral.dcij_dp is not None:
            notes.append(f"{mineral.name}: constants linear in pressure")
    if dt != 0:
        if mineral.dcij_dt_gpa_per_k is None:
            notes.append(f"{where}; no temperature derivatives, constants as measured"
                         + (f" (within {NEGLIGIBLE_DT_C:g} K)" if abs(dt) <= NEGLIGIBLE_DT_C else ""))
        if (mineral.eos or {}).get("thermal_expansion_per_k") is None:
            notes.append(f"{mineral.name}: no thermal expansion, density not corrected for temperature")
        elif "thermal_expansion_per_k" in ((mineral.eos or {}).get("from_memory") or ()):
            notes.append(f"{mineral.name}: thermal expansion recalled without the source at hand (from memory)")
    for block, used in (("pressure_derivatives", dp != 0 and mineral.dcij_dp is not None),
                        ("temperature_derivatives", dt != 0 and mineral.dcij_dt_gpa_per_k is not None)):
        given = mineral.aggregate_derivatives.get(block)
        if used and given:
            kind = block.split("_")[0]
            values = ", ".join(f"{k} = {v:g}" for k, v in given.items())
            notes.append(f"{mineral.name}: {kind} derivatives of the aggregate only ({values}), applied to "
                         "every direction alike: the change of the crystal's anisotropy is not modelled")
    recalled = mineral.derivatives_from_memory
    if ("pressure_derivatives" in recalled or "temperature_derivatives" in recalled) and (dp != 0 or dt != 0):
        notes.append(f"{mineral.name}: derivatives marked from memory ({', '.join(recalled)})")
    return notes


def _refuse_unless(allowed: bool, mineral, missing: str, target: str, key: str) -> None:
    if not allowed:
        raise InputError(f"mineral '{mineral.name}' has no {missing} in the library, so its constants (measured "
                         f"at {mineral.reference_temperature_c:g} C, {mineral.reference_pressure_gpa:g} GPa) cannot "
                         f"be brought to {target}; set the conditions near those, or "
                         "conditions.allow_ambient_constants: true to use the constants as measured",
                         where=f"key conditions.{key}")


def at_conditions(mineral, pressure_gpa: float, temperature_c: float,
                  allow_ambient: bool = False) -> tuple[np.ndarray, float]:
    """Bring a mineral's stiffness (orix's crystal frame) and density to pressure and temperature.

    Corrections start from the mineral's reference conditions; a missing derivative is refused
    (unless ``allow_ambient``) only beyond ``NEGLIGIBLE_DP_GPA`` / ``NEGLIGIBLE_DT_C`` of them.

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        Library entry with its constants, derivatives and equation of state.
    pressure_gpa : float
        Pressure, GPa.
    temperature_c : float
        Temperature, degrees Celsius.
    allow_ambient : bool
        Use the constants as measured where derivatives or thermal expansion are missing.

    Returns
    -------
    stiffness : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa.
    density : float
        Density, kg m^-3.

    Raises
    ------
    InputError
        If a derivative or the thermal expansion the conditions need is missing and
        ``allow_ambient`` is false, or the corrected stiffness is not valid.
    """
    c = mineral.stiffness_gpa.copy()
    dp, dt = offsets(mineral, pressure_gpa, temperature_c)
    if dp != 0:
        if mineral.dcij_dp is None:
            _refuse_unless(allow_ambient or abs(dp) <= NEGLIGIBLE_DP_GPA, mineral, "pressure derivatives",
                           f"{pressure_gpa} GPa", "pressure_gpa")
        else:
            c = c + mineral.dcij_dp * dp
            if mineral.d2cij_dp2 is not None:
                c = c + 0.5 * mineral.d2cij_dp2 * dp ** 2
    if dt != 0:
        if mineral.dcij_dt_gpa_per_k is None:
            _refuse_unless(allow_ambient or abs(dt) <= NEGLIGIBLE_DT_C, mineral, "temperature derivatives",
                           f"{temperature_c} C", "temperature_c")
        else:
            c = c + mineral.dcij_dt_gpa_per_k * dt
    c = check_stiffness(c, f"mineral {mineral.name} at {pressure_gpa} GPa, {temperature_c} C")
    eos = mineral.eos or {}
    k0 = eos.get("k0_gpa") or reuss_moduli(mineral.stiffness_gpa)[0]
    k0_prime = eos.get("k0_prime", 4.0)
    alpha = eos.get("thermal_expansion_per_k")
    if alpha is None:
        if abs(dt) > NEGLIGIBLE_DT_C and not allow_ambient:
            raise InputError(f"mineral '{mineral.name}' has no thermal expansion in the library; set "
                             "conditions.allow_ambient_constants: true to ignore it",
                             where="key conditions.temperature_c")
        alpha = 0.0
    return c, density_at(mineral.density_kg_m3, dp, temperature_c, k0, k0_prime, alpha,
                         mineral.reference_temperature_c)
