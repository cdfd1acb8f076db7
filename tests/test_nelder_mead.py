"""fabric2seis.nelder_mead against SciPy's own Nelder-Mead (scipy.optimize.minimize, the reference
library): the same minimum, value and counts to the bit, on textbook functions and on the
objectives of the symmetry decomposition; and the decomposition's axis search against the same
search written with SciPy, axis by axis, as it was before the port."""

import numpy as np
import pytest
from scipy.optimize import minimize

from fabric2seis import elastic, waves
from fabric2seis.elastic import decomposition
from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.nelder_mead import minimise


def rosenbrock(x):
    # Rosenbrock (1960), Comput. J. 3, 175: minimum 0 at (1, 1); the classic start is (-1.2, 1)
    return float(np.sum(100.0 * (x[1:] - x[:-1] ** 2) ** 2 + (1 - x[:-1]) ** 2))


def assert_same_as_scipy(func, x0, **options):
    ours = minimise(func, x0, **options)
    theirs = minimize(func, x0, method="Nelder-Mead", options=options)
    assert np.array_equal(ours.x, theirs.x), (ours.x, theirs.x)
    assert ours.fun == theirs.fun
    assert (ours.nit, ours.nfev, ours.success) == (theirs.nit, theirs.nfev, theirs.success)
    return ours


@pytest.mark.parametrize("options", [{}, {"xatol": 1e-7, "fatol": 1e-12}, {"xatol": 1e-8}])
def test_rosenbrock_from_the_classic_start_equals_scipy(options):
    found = assert_same_as_scipy(rosenbrock, np.array([-1.2, 1.0]), **options)
    assert np.allclose(found.x, [1.0, 1.0], atol=1e-2)            # Rosenbrock (1960): the minimum at (1, 1)


def test_the_zero_coordinate_step_a_one_dimensional_search_and_three_variables_equal_scipy():
    assert_same_as_scipy(lambda x: (x[0] - 0.3) ** 2 + 2.0, np.array([0.0]), xatol=1e-8)   # zero start: step 0.00025
    assert_same_as_scipy(lambda x: np.cos(3 * x[0]) + 0.1 * x[0] ** 2, [1.0], xatol=1e-8)   # a list, as given
    quadratic = np.array([[3.0, 0.5, 0.0], [0.5, 2.0, 0.3], [0.0, 0.3, 1.0]])
    assert_same_as_scipy(lambda x: float((x - 1) @ quadratic @ (x - 1)), np.array([0.0, 5.0, -2.0]))
    # an objective returning a one-element array (SciPy takes its item)
    assert_same_as_scipy(lambda x: np.array([rosenbrock(x)]), np.array([2.0, 2.0]))


def test_stopping_on_the_evaluation_and_iteration_limits_equals_scipy():
    # tolerances of zero are never met on a surface with noise: the run ends on SciPy's default
    # limits (200 per variable), mid-iteration when the evaluations run out
    noisy = lambda x: rosenbrock(x) + 1e-3 * np.sin(1e4 * x[0])      # noqa: E731
    found = assert_same_as_scipy(noisy, np.array([-1.2, 1.0]), xatol=0.0, fatol=0.0)
    assert not found.success
    found = assert_same_as_scipy(lambda x: float(np.sum(np.abs(x))), np.array([1.0, 1.0, 1.0]), xatol=0.0, fatol=0.0)
    assert not found.success


def scipy_hexagonal_axis(c):
    """The axis search of elastic.decomposition as written with SciPy before the port: the grid axis by
    axis (hexagonal_projection), then scipy.optimize.minimize."""
    aniso = elastic.voigt_to_kelvin(c - decomposition.isotropic_projection(c))

    def norm_of(v):
        projection = decomposition.hexagonal_projection(elastic.kelvin_to_voigt(aniso), v)
        return np.linalg.norm(elastic.voigt_to_kelvin(projection))

    dirs, _, _ = waves.hemisphere_grid(6.0)
    best = dirs[int(np.argmax([norm_of(d) for d in dirs]))]

    def vec(a):
        return np.array([np.sin(a[1]) * np.cos(a[0]), np.sin(a[1]) * np.sin(a[0]), -np.cos(a[1])])

    start = np.array([np.arctan2(best[1], best[0]), np.arccos(np.clip(-best[2], -1, 1))])
    res = minimize(lambda a: -norm_of(vec(a)), start, method="Nelder-Mead", options={"xatol": 1e-7, "fatol": 1e-12})
    return waves.to_lower_hemisphere(vec(res.x))


def test_the_decomposition_axis_equals_the_search_written_with_scipy():
    rng = np.random.default_rng(11)
    tensors = [find_mineral(name).stiffness_gpa for name in ("olivine", "enstatite", "quartz")]
    for _ in range(3):
        a = rng.normal(size=(6, 6))
        tensors.append(elastic.kelvin_to_voigt(30.0 * (a @ a.T + 6.0 * np.eye(6))))
    for c in tensors:
        assert np.array_equal(decomposition.best_hexagonal_axis(c), scipy_hexagonal_axis(c))
