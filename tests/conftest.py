"""Shared test helpers. Random data always comes from a seeded generator."""

import numpy as np
import pytest
from orix.quaternion import Rotation


def random_rotation_matrices(n: int, seed: int) -> np.ndarray:
    """n uniformly distributed rotation matrices (normalised Gaussian quaternions, common practice)."""
    q = np.random.default_rng(seed).normal(size=(n, 4))
    q /= np.linalg.norm(q, axis=1, keepdims=True)
    return Rotation(q).to_matrix()


@pytest.fixture(scope="session")
def library():
    from fabric2seis.elastic.minerals import load_library

    return load_library()
