"""Memory estimates of the settings that cost memory, checked before the work that needs it.

A few settings decide how large the arrays of a run grow: the bootstrap's resample count
(``bootstrap.n``, against the grain count), the kernel's halfwidth (``odf.halfwidth_deg``: the
kernel's series grows as 1 / halfwidth^2 and its tables as the square of that), the direction grid
of the velocities (``velocity_grid_step_deg``) and, for ``fabric2seis field --stack``, the
back-azimuth step and the period. Each estimate below adds up the largest arrays the code holds
at once, in bytes (float64 = 8 bytes, float32 = 4); a run whose estimate exceeds
``memory_limit_bytes()`` is refused naming the key, the estimate and the limit, before the work
starts. ``tests/test_budget.py`` compares the estimates with measured peaks.
"""

from __future__ import annotations

import math
import os
from collections.abc import Iterable

from fabric2seis.errors import InputError

GIB = 2.0 ** 30
#: share of the machine's memory one run may plan to use (the suite runs two samples at once on two cores)
MEMORY_FRACTION = 0.5
#: assumed when the machine's memory cannot be read
FALLBACK_MEMORY_BYTES = 8 * GIB


def memory_limit_bytes() -> float:
    """The memory a run may plan to use: ``MEMORY_FRACTION`` of the machine's physical memory, bytes."""
    try:
        total = os.sysconf("SC_PHYS_PAGES") * os.sysconf("SC_PAGE_SIZE")
    except (AttributeError, ValueError, OSError):
        total = -1
    return MEMORY_FRACTION * (total if total > 0 else FALLBACK_MEMORY_BYTES)


def kernel_bytes(halfwidth_deg: float) -> float:
    """Peak bytes of the kernel's tables (``fabric.kernel.self_convolution_table``) at a halfwidth.

    The series has n_l = ceil(kappa) + 60 terms and is integrated on Q = max(600, 4 n_l) Gauss-Legendre
    nodes: the nodes come from the eigenvalues of a Q x Q companion matrix (the matrix and the
    solver's copy, 16 Q^2 bytes); then the characters (n_l, Q) with two temporaries, and the table on
    4001 angles with its temporaries while the characters are held.
    """
    h = math.radians(float(halfwidth_deg))
    kappa = math.log(0.5) / (2.0 * math.log(math.cos(h / 2.0)))
    n_l = math.ceil(kappa) + 60
    q = max(600, 4 * n_l)
    return max(16.0 * q * q, 24.0 * n_l * q, 8.0 * n_l * q + 24.0 * n_l * 4001)


def directions(step_deg: float) -> float:
    """Number of directions of ``waves.hemisphere_grid`` at a step, about 2 pi / step^2 (plus a ring)."""
    s = math.radians(float(step_deg))
    return 2.0 * math.pi / (s * s) + 2.0 * math.pi / s


def velocity_grid_bytes(step_deg: float) -> float:
    """Peak bytes of the velocity grid (``waves.seismic.velocity_grid``): per direction the Christoffel
    matrix, its eigenvalues and eigenvectors and the velocities, about 35 float64 values (280 bytes)."""
    return 280.0 * directions(step_deg)


def bootstrap_bytes(n_resamples: int, grains: Iterable[int]) -> float:
    """Peak bytes of the bootstrap (``uncertainty``) of B resamples over the grains of each mineral.

    Seismic part: the counts (B, N) float32 and their copy with the sample's own row, and the
    velocities of every resample in every direction of the 3-degree grid (B, D, 3) float64 with two
    temporaries (72 B D bytes). Fabric part, per mineral: the counts, the weighted counts (B, N)
    float64 and the two float64 arrays of the J-index (``resampled_j``), or the pair weights of the
    M-index, three float32 and one float64 array (B, P) for P = min(pairs, 100,000).
    """
    from fabric2seis.uncertainty import RESAMPLE_GRID_STEP_DEG

    b = float(n_resamples)
    n = [int(k) for k in grains if k > 1] or [2]
    total = float(sum(n))
    seismic = b * (8.0 * total + 72.0 * directions(RESAMPLE_GRID_STEP_DEG) + 1000.0)
    fabric = max(4.0 * b * total + 8.0 * b * k + max(16.0 * b * k, 20.0 * b * min(k * (k - 1) // 2, 100_000))
                 for k in n)
    return max(seismic, fabric)


def stack_bytes(back_azimuth_step_deg: float, period_s: float) -> float:
    """Peak bytes of a stack's sweep (``waves.stack``): per back-azimuth the synthetic records'
    spectra (1025 frequencies: the 2 x 2 complex operator and its products, seven complex values
    each) and the transverse energy of every trial of the measurement grid (180 fast azimuths x
    delays to period / 2 every 0.05 s) with one temporary."""
    from fabric2seis.waves import layers

    records = (layers.TRACE_SAMPLES // 2 + 1) * 16.0 * 7
    delays = period_s / 2.0 / layers.DELAY_STEP_S + 1
    trials = 180.0 / layers.FAST_STEP_DEG * delays * 8.0 * 2
    return 360.0 / back_azimuth_step_deg * (records + trials)


def check(estimate_bytes: float, key: str, source, what: str) -> None:
    """Refuse a setting whose estimated memory exceeds ``memory_limit_bytes()``.

    Parameters
    ----------
    estimate_bytes : float
        The estimate, bytes.
    key : str
        The settings key that sets it.
    source : str or path
        The settings file (or input) named in the message.
    what : str
        What needs the memory, for the message.

    Raises
    ------
    InputError
        Naming the key, the estimate and the limit in GiB.
    """
    limit = memory_limit_bytes()
    if estimate_bytes > limit:
        raise InputError(f"{what} would need about {estimate_bytes / GIB:,.1f} GiB of memory, more than the "
                         f"{limit / GIB:.1f} GiB a run may use ({MEMORY_FRACTION:.0%} of this machine's memory)",
                         source, f"key {key}")


def check_settings(settings: dict, source) -> None:
    """Check the settings that cost memory before any data is read (the bootstrap for two grains).

    Parameters
    ----------
    settings : dict
        Validated settings of a sample.
    source : str or path
        The settings file, named in the message.

    Raises
    ------
    InputError
        If an estimate exceeds the limit.
    """
    h = float(settings["odf"]["halfwidth_deg"])
    check(kernel_bytes(h), "odf.halfwidth_deg", source, f"the ODF kernel of halfwidth {h:g} degrees")
    step = float(settings.get("velocity_grid_step_deg", 1.0))
    check(velocity_grid_bytes(step), "velocity_grid_step_deg", source, f"a velocity grid every {step:g} degrees")
    check_bootstrap(settings, [2], source, at_least=True)


def check_bootstrap(settings: dict, grains: Iterable[int], source, at_least: bool = False) -> None:
    """Check the bootstrap's memory for the grain count of each mineral.

    Parameters
    ----------
    settings : dict
        Validated settings of a sample.
    grains : iterable of int
        Grains (orientations the bootstrap draws) of each mineral.
    source : str or path
        The settings file, named in the message.
    at_least : bool
        The grain counts are the fewest possible (before the data are read): say "at least".

    Raises
    ------
    InputError
        If the estimate exceeds the limit.
    """
    n = int(settings["bootstrap"]["n"])
    if n > 0:
        grains = list(grains)
        what = f"{n:,} bootstrap resamples" + (", whatever the grains," if at_least else f" of {sum(grains):,} grains")
        check(bootstrap_bytes(n, grains), "bootstrap.n", source, what)
