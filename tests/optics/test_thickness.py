"""Section thickness from one measurement recovers a known thickness."""

import numpy as np
import pytest

from fabric2seis.optics import (
    ORDER_NM,
    polariser_directions,
    section_optics,
    thickness_from_grain,
    thickness_from_highest_colour,
    thickness_from_order,
    thickness_from_retardation,
)
from fabric2seis.orientations import from_matrices


def quartz_grain_with_c_at(phi_deg):
    """g with the c axis at phi from the map normal (+z), in the xz plane: v_crystal = g v_sample."""
    phi = np.radians(phi_deg)
    c_sample = np.array([np.sin(phi), 0.0, np.cos(phi)])
    a_sample = np.array([0.0, 1.0, 0.0])
    g = np.vstack([a_sample, np.cross(c_sample, a_sample), c_sample])   # rows: crystal e1, e2, e3 in sample axes
    return from_matrices(g[None])[0]


@pytest.mark.parametrize("phi_deg", [20.0, 55.0, 90.0])
def test_thickness_from_one_grain_recovers_the_thickness(library, phi_deg):
    # retardation of a quartz grain by the classical formula n_e'(phi) - n_o (Nesse 2013), 27 um thick
    o = library["quartz"].optics
    n_o, n_e = o.principal_n[0], o.principal_n[2]
    phi = np.radians(phi_deg)
    n_e_prime = (np.cos(phi) ** 2 / n_o ** 2 + np.sin(phi) ** 2 / n_e ** 2) ** -0.5
    measured = (n_e_prime - n_o) * 27.0 * 1000.0
    assert thickness_from_grain(measured, o, quartz_grain_with_c_at(phi_deg)) == pytest.approx(27.0, rel=1e-9)


def test_thickness_from_the_order_brackets_the_thickness(library):
    # an olivine grain in a 30 um section with 800 nm retardation shows second-order colours
    t, birefringence = 30.0, 800.0 / 30_000.0
    low, high = thickness_from_order(2, birefringence)
    assert low <= t <= high
    assert (low, high) == pytest.approx((ORDER_NM / birefringence / 1000, 2 * ORDER_NM / birefringence / 1000))


def test_thickness_from_the_highest_colour_of_a_phase(library):
    # the highest colour comes from the grain of largest birefringence in the section
    o = library["olivine"].optics
    q = np.random.default_rng(3).normal(size=(3000, 4))
    q /= np.linalg.norm(q, axis=1, keepdims=True)
    p, a = polariser_directions("map_normal")
    section = section_optics(o.impermeability, q, p, a, 35.0)
    highest = section.retardation_nm.max()
    assert thickness_from_highest_colour(highest, section.birefringence) == pytest.approx(35.0, rel=1e-9)
    # with the mineral's n_gamma - n_alpha instead: a lower bound
    assert thickness_from_highest_colour(highest, o.max_birefringence) <= 35.0


def test_bad_measurements_are_refused(library):
    with pytest.raises(ValueError, match="retardation"):
        thickness_from_retardation(0.0, 0.01)
    with pytest.raises(ValueError, match="order"):
        thickness_from_order(0, 0.01)
    with pytest.raises(ValueError, match="birefringence"):          # viewed down the optic axis
        thickness_from_grain(200.0, library["quartz"].optics, quartz_grain_with_c_at(0.0))
