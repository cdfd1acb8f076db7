"""Nelder-Mead minimisation without scipy.optimize: the same steps as SciPy's, so the same result to the bit.

The symmetry decomposition of every sample (``elastic.decomposition``) refines two angles by the
Nelder-Mead simplex method. ``scipy.optimize`` takes most of a second to import (it loads
``scipy.linalg``, ``scipy.sparse`` and its linear-programming solvers), more than the refinement
itself, in every process that runs a sample. :func:`minimise` is a transcription of SciPy's own
implementation (``scipy.optimize._optimize._minimize_neldermead``, SciPy 1.17, BSD-3-Clause licence)
for the case the decomposition uses: no bounds, no initial simplex, the standard (not adaptive)
coefficients, and SciPy's default limits (200 iterations and 200 evaluations per variable). Every
arithmetic operation, comparison and sort is SciPy's, in SciPy's order, so the minimum, its value
and the counts equal those of ``scipy.optimize.minimize(func, x0, method="Nelder-Mead",
options={"xatol": ..., "fatol": ...})`` exactly (tests/test_nelder_mead.py compares them).

References
----------
Nelder, J. A. & Mead, R. (1965). A simplex method for function minimization. Comput. J. 7, 308-313.
Virtanen, P. et al. (2020). SciPy 1.0: fundamental algorithms for scientific computing in Python.
Nat. Methods 17, 261-272.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

#: reflection, expansion, contraction and shrink coefficients (Nelder & Mead's standard values)
RHO, CHI, PSI, SIGMA = 1, 2, 0.5, 0.5
#: relative step of the first simplex along a non-zero coordinate, and the step along a zero one
NONZERO_STEP, ZERO_STEP = 0.05, 0.00025
#: iterations and evaluations allowed per variable (SciPy's defaults)
LIMIT_PER_VARIABLE = 200


@dataclass(frozen=True)
class SimplexMinimum:
    """Result of :func:`minimise`: the best point, its value, the iterations and evaluations made,
    and whether it stopped on the tolerances (False: on the iteration or evaluation limit)."""

    x: np.ndarray
    fun: float
    nit: int
    nfev: int
    success: bool


class _TooManyCalls(Exception):
    """The evaluation limit was reached (SciPy's _MaxFuncCallError)."""


def minimise(func: Callable[[np.ndarray], float], x0, xatol: float = 1e-4, fatol: float = 1e-4) -> SimplexMinimum:
    """Minimise ``func`` from ``x0`` by the Nelder-Mead simplex method (SciPy's steps, to the bit).

    Stops when every vertex lies within ``xatol`` of the best in every coordinate and every value
    within ``fatol`` of the best, or after 200 iterations or evaluations per variable.

    Parameters
    ----------
    func : callable
        Objective, called with a copy of a point (numpy.ndarray, shape (N,)); returns a number.
    x0 : array_like, shape (N,)
        Starting point.
    xatol, fatol : float
        Absolute tolerances on the points and on the values.

    Returns
    -------
    SimplexMinimum
        The best point, its value, iterations, evaluations and whether the tolerances were met.
    """
    x0 = np.atleast_1d(np.asarray(x0)).flatten()
    if x0.dtype.kind in np.typecodes["AllInteger"]:
        x0 = np.asarray(x0, dtype=float)
    dtype = x0.dtype if np.issubdtype(x0.dtype, np.inexact) else np.float64
    x0 = np.asarray(x0, dtype=dtype)
    n = len(x0)
    sim = np.empty((n + 1, n), dtype=x0.dtype)
    sim[0] = x0
    for k in range(n):
        y = np.array(x0, copy=True)
        y[k] = (1 + NONZERO_STEP) * y[k] if y[k] != 0 else ZERO_STEP
        sim[k + 1] = y
    max_iterations = max_calls = n * LIMIT_PER_VARIABLE
    calls = [0]

    def value(x: np.ndarray) -> float:
        if calls[0] >= max_calls:
            raise _TooManyCalls
        calls[0] += 1
        fx: Any = func(np.copy(x))
        if not np.isscalar(fx):
            fx = np.asarray(fx).item()     # a one-element array, as SciPy takes it
        return float(fx)

    fsim = np.full((n + 1,), np.inf, dtype=float)
    try:
        for k in range(n + 1):
            fsim[k] = value(sim[k])
    except _TooManyCalls:
        pass
    finally:
        order = np.argsort(fsim)
        sim, fsim = np.take(sim, order, 0), np.take(fsim, order, 0)
    order = np.argsort(fsim)
    fsim, sim = np.take(fsim, order, 0), np.take(sim, order, 0)
    iterations = 1
    while calls[0] < max_calls and iterations < max_iterations:
        try:
            if (np.max(np.ravel(np.abs(sim[1:] - sim[0]))) <= xatol
                    and np.max(np.abs(fsim[0] - fsim[1:])) <= fatol):
                break
            _step(sim, fsim, value, n)
            iterations += 1
        except _TooManyCalls:
            pass
        order = np.argsort(fsim)
        sim, fsim = np.take(sim, order, 0), np.take(fsim, order, 0)
    success = not (calls[0] >= max_calls or iterations >= max_iterations)
    return SimplexMinimum(x=sim[0], fun=float(np.min(fsim)), nit=iterations, nfev=calls[0], success=success)


def _step(sim: np.ndarray, fsim: np.ndarray, value: Callable[[np.ndarray], float], n: int) -> None:
    """One iteration: reflect the worst vertex through the centroid of the others, then expand,
    contract or shrink (in place; ``sim`` and ``fsim`` sorted best first on entry)."""
    xbar = np.add.reduce(sim[:-1], 0) / n
    xr = (1 + RHO) * xbar - RHO * sim[-1]
    fxr = value(xr)
    if fxr < fsim[0]:
        xe = (1 + RHO * CHI) * xbar - RHO * CHI * sim[-1]
        fxe = value(xe)
        sim[-1], fsim[-1] = (xe, fxe) if fxe < fxr else (xr, fxr)
        return
    if fxr < fsim[-2]:
        sim[-1], fsim[-1] = xr, fxr
        return
    if fxr < fsim[-1]:                                      # contraction outside
        xc = (1 + PSI * RHO) * xbar - PSI * RHO * sim[-1]
        fxc = value(xc)
        if fxc <= fxr:
            sim[-1], fsim[-1] = xc, fxc
            return
    else:                                                   # contraction inside
        xcc = (1 - PSI) * xbar + PSI * sim[-1]
        fxcc = value(xcc)
        if fxcc < fsim[-1]:
            sim[-1], fsim[-1] = xcc, fxcc
            return
    for j in range(1, n + 1):                               # shrink towards the best vertex
        sim[j] = sim[0] + SIGMA * (sim[j] - sim[0])
        fsim[j] = value(sim[j])
