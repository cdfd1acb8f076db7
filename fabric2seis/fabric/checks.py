"""Early, specific checks of the arguments of the public fabric functions.

Each check raises ``ValueError`` with a message that names the argument and what was wrong, before
any work is done, and returns nothing: the functions then convert their arguments as before, so a
check never changes a result.
"""

from __future__ import annotations

import numpy as np

#: the kernel's halfwidth must lie strictly between 0 and this (degrees): at 180 degrees
#: cos(h/2) = 0 and the kernel's exponent is undefined
MAX_HALFWIDTH_DEG = 180.0


def check_halfwidth(halfwidth_deg: float) -> None:
    """Raise ValueError unless the kernel halfwidth is a finite number of degrees in (0, 180)."""
    try:
        h = float(halfwidth_deg)
    except (TypeError, ValueError):
        raise ValueError(f"halfwidth_deg must be a number of degrees, got {halfwidth_deg!r}") from None
    if not (np.isfinite(h) and 0.0 < h < MAX_HALFWIDTH_DEG):
        raise ValueError(f"halfwidth_deg must be positive and below {MAX_HALFWIDTH_DEG:g} degrees, "
                         f"got {halfwidth_deg!r}")


def check_quaternions(quat, name: str = "quat", at_least: int = 1) -> None:
    """Raise ValueError unless ``quat`` is an array (N, 4) of finite numbers with N >= ``at_least``."""
    shape = np.shape(quat)
    if len(shape) != 2 or shape[1] != 4:
        raise ValueError(f"{name} must be an array of unit quaternions of shape (N, 4), got shape {shape}")
    if shape[0] < at_least:
        raise ValueError(f"{name} must hold at least {at_least} orientation{'s' if at_least > 1 else ''}, "
                         f"got {shape[0]}")
    if not np.all(np.isfinite(quat)):
        raise ValueError(f"{name} holds values that are not finite numbers")


def check_weights(weights, n: int, per: str = "orientation") -> None:
    """Raise ValueError unless ``weights`` has one finite, non-negative value per item and a positive sum."""
    shape = np.shape(weights)
    if len(shape) != 1 or shape[0] != n:
        raise ValueError(f"weights must hold one value per {per}: expected shape ({n},), got {shape}")
    w = np.asarray(weights, dtype=float)
    if not np.all(np.isfinite(w)):
        raise ValueError("weights must be finite numbers")
    if np.any(w < 0):
        raise ValueError(f"weights must not be negative (smallest {w.min():g})")
    if not w.sum() > 0:
        raise ValueError("weights must have a positive sum")


def check_poles(poles) -> None:
    """Raise ValueError unless ``poles`` is an array (N, m, 3) of vectors with N, m >= 1."""
    shape = np.shape(poles)
    if len(shape) != 3 or shape[2] != 3 or shape[0] < 1 or shape[1] < 1:
        raise ValueError(f"poles must be an array of shape (N, m, 3): m equivalent unit vectors for each of "
                         f"N orientations, got shape {shape}")
