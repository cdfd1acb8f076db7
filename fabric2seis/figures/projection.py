"""Equal-area (Lambert) projection of axial directions with Y at the centre, X right, Z up.

A viewer who sees X to the right and Z at the top looks along +Y; the hemisphere away from the
viewer, y >= 0, is projected (the 'lower' hemisphere of this view). Directions are axial, so a
vector with y < 0 is replaced by its opposite. The primitive circle has radius 1.
"""

from __future__ import annotations

import matplotlib
import numpy as np

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402


def project(v: np.ndarray) -> np.ndarray:
    """Project axial unit vectors to screen coordinates (equal area, Y at the centre).

    Parameters
    ----------
    v : array_like, shape (N, 3)
        Unit vectors in the structural frame; their sign is ignored.

    Returns
    -------
    numpy.ndarray, shape (N, 2)
        Screen coordinates within the unit disk.

    References
    ----------
    Lambert azimuthal equal-area projection (common practice).
    """
    v = np.asarray(v, dtype=float)
    v = np.where(v[..., 1:2] < 0, -v, v)
    scale = np.sqrt(1.0 / (1.0 + v[..., 1]))          # sqrt(2/(1+y)) / sqrt(2)
    return np.stack([v[..., 0] * scale, v[..., 2] * scale], axis=-1)


def disk_grid(n: int = 161) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Build a square grid of screen points, their directions (y >= 0) and a mask of the unit disk.

    Parameters
    ----------
    n : int
        Points along each side of the grid.

    Returns
    -------
    a, b : numpy.ndarray, shape (n, n)
        Screen coordinates of the grid.
    dirs : numpy.ndarray, shape (n, n, 3)
        Unit direction of each grid point (points outside the disk map to the rim).
    inside : numpy.ndarray of bool, shape (n, n)
        Which points lie in the unit disk.
    """
    s = np.linspace(-1.0, 1.0, n)
    a, b = np.meshgrid(s, s)
    rho2 = a ** 2 + b ** 2
    inside = rho2 <= 1.0
    r2 = np.minimum(rho2, 1.0) * 2.0                   # back to Lambert radius squared
    y = 1.0 - r2 / 2.0
    f = np.sqrt(np.maximum(1.0 - r2 / 4.0, 0.0)) * np.sqrt(2.0)
    dirs = np.stack([a * f, y, b * f], axis=-1)
    dirs /= np.linalg.norm(dirs, axis=-1, keepdims=True)
    return a, b, dirs, inside


def frame_axes(ax, labels=("X", "Z", "Y")) -> None:
    """Draw the primitive circle, the foliation trace and axis labels (X right, Z top, Y centre).

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        Panel to draw on.
    labels : tuple of str
        Labels of the right, top and centre directions.
    """
    t = np.linspace(0, 2 * np.pi, 361)
    ax.plot(np.cos(t), np.sin(t), color="black", lw=0.8)
    ax.plot([-1, 1], [0, 0], color="0.4", lw=0.5, ls="--")
    ax.text(1.06, 0, labels[0], ha="left", va="center", fontsize=8)
    ax.text(0, 1.06, labels[1], ha="center", va="bottom", fontsize=8)
    ax.plot([0], [0], marker="+", color="0.3", ms=5, mew=0.8)
    ax.text(0.04, 0.04, labels[2], fontsize=7, color="0.3")
    ax.set_xlim(-1.18, 1.18)
    ax.set_ylim(-1.18, 1.18)
    ax.set_aspect("equal")
    ax.axis("off")


def save(fig, stem) -> list[str]:
    """Write ``stem``.png and ``stem``.pdf and close the figure.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The figure.
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.

    Returns
    -------
    list of str
        The files written.
    """
    out = []
    for ext in ("png", "pdf"):
        path = f"{stem}.{ext}"
        fig.savefig(path, dpi=150, bbox_inches="tight")
        out.append(path)
    plt.close(fig)
    return out
