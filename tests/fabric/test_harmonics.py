"""Wigner matrices of orientations (fabric2seis.fabric.harmonics)."""

import numpy as np
import pytest

from fabric2seis.fabric import harmonics
from fabric2seis.orientations import multiply
from fabric2seis.synth import random_quaternions


def test_wigner_matrices_form_a_representation():
    # D(ab) = D(a) D(b) and D unitary (common practice, e.g. Varshalovich et al. 1988); d(beta)
    # against the closed forms d^1_00 = cos b, d^1_10 = -sin b / sqrt(2), d^1_11 = (1 + cos b)/2
    # (Condon-Shortley convention, Varshalovich et al. 1988, table 4.3; from memory).
    a, b = random_quaternions(2, np.random.default_rng(8))
    for l in (1, 4, 9):
        da, db = harmonics.wigner_matrix(l, a), harmonics.wigner_matrix(l, b)
        assert np.allclose(harmonics.wigner_matrix(l, multiply(a, b)), da @ db, atol=1e-12)
        assert np.allclose(da @ da.conj().T, np.eye(2 * l + 1), atol=1e-12)
    beta = 0.7
    d = harmonics.wigner_matrix(1, np.array([np.cos(beta / 2), 0, np.sin(beta / 2), 0])).real
    assert d[1, 1] == pytest.approx(np.cos(beta)) and d[2, 1] == pytest.approx(-np.sin(beta) / np.sqrt(2))
    assert d[2, 2] == pytest.approx((1 + np.cos(beta)) / 2)
