"""Enstatite and diopside away from 25 C and 0 GPa: the library's derivatives against published rates.

Sources: Stixrude & Lithgow-Bertelloni (2011), Geophys. J. Int. 184, 1180, Table A1 (aggregate K'
and G' of orthoenstatite 7.03, 1.55 and of diopside 5.24, 1.37; shared REFERENCE_VALUES.md);
Isaak, Ohno & Lee (2006), Phys. Chem. Minerals 32, 691, abstract: the aggregate of their
chrome-diopside changes by dKs/dT = -0.0123 and dG/dT = -0.00998 GPa/K. Aggregates are computed
here by pymatgen (a general-purpose reference library), not by fabric2seis.
"""

import json

import numpy as np
import pytest
from pymatgen.analysis.elasticity import ElasticTensor
from scipy.optimize import brentq

from fabric2seis.cli import main
from fabric2seis.elastic import conditions
from fabric2seis.elastic.minerals import find_mineral, isotropic_derivative
from fabric2seis.ingest.io.write import write_table
from fabric2seis.synth import random_quaternions

PUBLISHED_PRIMES = {"enstatite": (7.03, 1.55), "diopside": (5.24, 1.37)}


def vrh(c):
    t = ElasticTensor.from_voigt(c)
    return t.k_vrh, t.g_vrh


@pytest.mark.parametrize("name", sorted(PUBLISHED_PRIMES))
def test_aggregate_pressure_rates_are_those_published(name):
    # Over 0-4 GPa the Hill moduli of the corrected constants rise at the published K' and G'
    # (the Voigt part exactly, the Reuss part nearly: within 2 % and 5 %).
    m = find_mineral(name)
    k0, g0 = vrh(m.stiffness_gpa)
    c, _ = conditions.at_conditions(m, 4.0, 25.0)
    k, g = vrh(c)
    kp, gp = PUBLISHED_PRIMES[name]
    assert (k - k0) / 4.0 == pytest.approx(kp, rel=0.02)
    assert (g - g0) / 4.0 == pytest.approx(gp, rel=0.05)


def test_isotropic_derivative_keeps_an_isotropic_body_isotropic():
    # An isotropic stiffness (common practice: C11 = K + 4G/3, C12 = K - 2G/3, C44 = G) plus the
    # derivative matrix is the isotropic stiffness of K + dK, G + dG: Voigt and Reuss agree (pymatgen).
    k, g, dk, dg = 100.0, 60.0, 5.0, 2.0
    c = isotropic_derivative(k, g)
    t = ElasticTensor.from_voigt(c + isotropic_derivative(dk, dg))
    assert t.k_voigt == pytest.approx(k + dk) and t.k_reuss == pytest.approx(k + dk)
    assert t.g_voigt == pytest.approx(g + dg) and t.g_reuss == pytest.approx(g + dg)


def test_diopside_temperature_rates_match_the_published_aggregate_rates():
    # Isaak et al. (2006) give the aggregate rates of the same dCij/dT: within 3 %.
    m = find_mineral("diopside")
    k0, g0 = vrh(m.stiffness_gpa)
    c, rho = conditions.at_conditions(m, 0.0, 525.0)
    k, g = vrh(c)
    assert (k - k0) / 500.0 == pytest.approx(-0.0123, rel=0.03)
    assert (g - g0) / 500.0 == pytest.approx(-0.00998, rel=0.03)
    assert rho < m.density_kg_m3
    assert any("thermal expansion recalled" in n for n in conditions.assumptions(m, 0.0, 525.0))


def bm_density(rho0, k0, kp, p):
    # Third-order Birch-Murnaghan in volume form (Birch 1947), solved here for V/V0.
    def pressure(v):
        f = 1 / v
        return 1.5 * k0 * (f ** (7 / 3) - f ** (5 / 3)) * (1 + 0.75 * (kp - 4) * (f ** (2 / 3) - 1))
    return rho0 / brentq(lambda v: pressure(v) - p, 0.6, 1.0)


def test_pyroxenite_at_pressure_through_the_command(tmp_path, capsys):
    # A random enstatite-diopside rock at 2 GPa: the command runs without allowing ambient
    # constants, says how the pyroxenes were brought to pressure, and its density is the volume
    # average of Birch-Murnaghan densities with the published K0, K' (SLB 2011, Table A1).
    n = 400
    q = random_quaternions(n, np.random.default_rng(7))
    names = ["enstatite"] * (n // 2) + ["diopside"] * (n // 2)
    f = tmp_path / "px.csv"
    write_table(f, q, names)
    (tmp_path / "px.yaml").write_text("conditions: {pressure_gpa: 2.0}\nmodal_fractions: {enstatite: 0.6, "
                                      "diopside: 0.4}\nbootstrap: {n: 10}\n")
    assert main(["sample", str(f), "--out", str(tmp_path / "out")]) == 0, capsys.readouterr().err
    s = json.loads((tmp_path / "out" / "summary.json").read_text())
    notes = " ".join(s["conditions"]["assumptions"])
    assert "enstatite: pressure derivatives of the aggregate only" in notes
    assert "diopside: pressure derivatives of the aggregate only" in notes
    assert any("aggregate only" in c for c in s["cautions"])
    expected = (0.6 * bm_density(3305.0, 107.1, 7.03, 2.0) + 0.4 * bm_density(3327.0, 112.2, 5.24, 2.0))
    assert s["density_kg_m3"] == pytest.approx(expected, rel=1e-6)


def test_enstatite_at_temperature_is_still_refused_in_one_line(tmp_path, capsys):
    # No temperature derivatives for enstatite in the library: a hot sample is refused, not
    # silently given 25 C constants.
    q = random_quaternions(50, np.random.default_rng(2))
    f = tmp_path / "en.csv"
    write_table(f, q, ["enstatite"] * 50)
    (tmp_path / "en.yaml").write_text("conditions: {temperature_c: 900}\n")
    assert main(["sample", str(f), "--out", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "'enstatite' has no temperature derivatives" in err
    assert "conditions.temperature_c" in err and not (tmp_path / "out").exists()


def test_minerals_listing_says_which_minerals_can_be_taken_to_depth(capsys):
    # The listing's 'to P, T' column follows the library: olivine has single-crystal dCij/dP and
    # dCij/dT (Abramson et al. 1997; Isaak 1992), enstatite the aggregate's pressure rates only,
    # pyrope none (REFERENCE_VALUES.md: no temperature derivatives of its single-crystal constants).
    assert main(["minerals"]) == 0
    rows = {line.split()[0]: line for line in capsys.readouterr().out.splitlines() if line.strip()}
    assert "  P T  " in rows["olivine"] and "  P~  " in rows["enstatite"] and "  P~ T  " in rows["diopside"]
    assert "  -  " in rows["pyrope"]
