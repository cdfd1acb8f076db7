"""Synthetic orientation sets and maps with known answers (tests, demo suite, teaching).

``voronoi_map`` lays Voronoi cells on a square or hexagonal grid, each cell one grain with a known
orientation plus a little scatter per pixel. The truth (cell of every pixel, cell orientations)
is returned with the map so tests can compare reconstruction against it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from fabric2seis.elastic.minerals import crystal_direction
from fabric2seis.orientations import multiply


@dataclass
class SyntheticMap:
    x: np.ndarray
    y: np.ndarray
    quat: np.ndarray          # per pixel, orix quaternions
    cell: np.ndarray          # true grain of each pixel
    cell_quat: np.ndarray     # true orientation of each grain
    phase: np.ndarray         # phase number per pixel (1-based)
    step: float
    grid: str


def random_quaternions(n: int, rng: np.random.Generator) -> np.ndarray:
    """Uniformly distributed orientations (normalised Gaussian 4-vectors, common practice)."""
    q = rng.normal(size=(n, 4))
    q /= np.linalg.norm(q, axis=1, keepdims=True)
    return q * np.where(q[:, :1] < 0, -1.0, 1.0)


def scatter(q: np.ndarray, sigma_deg: float, rng: np.random.Generator) -> np.ndarray:
    """Each orientation turned by a small random rotation (rotation vector ~ N(0, sigma) per axis)."""
    if sigma_deg == 0:
        return q.copy()
    vec = rng.normal(scale=np.radians(sigma_deg), size=(len(q), 3))
    angle = np.linalg.norm(vec, axis=1)
    axis = vec / np.maximum(angle, 1e-300)[:, None]
    turn = np.column_stack([np.cos(angle / 2), axis * np.sin(angle / 2)[:, None]])
    return multiply(q, turn)


def grid_points(nx: int, ny: int, step: float, grid: str = "square") -> tuple[np.ndarray, np.ndarray]:
    """Pixel centres of a square grid, or of a hexagonal grid (odd rows shifted half a step)."""
    if grid == "hex":
        dy = step * np.sqrt(3.0) / 2.0
        rows = np.arange(ny)
        x = (np.arange(nx)[None, :] * step + (rows[:, None] % 2) * step / 2.0).ravel()
        y = np.repeat(rows * dy, nx)
        return x, y
    xx, yy = np.meshgrid(np.arange(nx) * step, np.arange(ny) * step)
    return xx.ravel(), yy.ravel()


def voronoi_map(n_grains: int, nx: int, ny: int, step: float = 1.0, grid: str = "square",
                cell_quat: np.ndarray | None = None, noise_deg: float = 0.5, n_phases: int = 1,
                seed: int = 0, seeds_xy: np.ndarray | None = None,
                cell_phase: np.ndarray | None = None) -> SyntheticMap:
    """A map of ``n_grains`` Voronoi cells, each of one orientation with per-pixel scatter.

    ``cell_phase`` (1-based, per cell) chooses each cell's phase; by default cells take phases
    1..n_phases in turn.
    """
    rng = np.random.default_rng(seed)
    x, y = grid_points(nx, ny, step, grid)
    if seeds_xy is None:
        seeds_xy = np.column_stack([rng.uniform(x.min(), x.max(), n_grains),
                                    rng.uniform(y.min(), y.max(), n_grains)])
    from scipy.spatial import cKDTree  # here: the command line imports this module for its fabric names

    cell = cKDTree(seeds_xy).query(np.column_stack([x, y]))[1]
    if cell_quat is None:
        cell_quat = random_quaternions(n_grains, rng)
    quat = scatter(cell_quat[cell], noise_deg, rng)
    phase = (cell % n_phases) + 1 if cell_phase is None else np.asarray(cell_phase)[cell]
    return SyntheticMap(x=x, y=y, quat=quat, cell=cell, cell_quat=cell_quat, phase=phase, step=step, grid=grid)


#: Ideal fabrics: which crystal directions lie along structural X (lineation) and Z (foliation
#: normal). Olivine fabric types as usually named in the literature (e.g. Karato et al. 2008);
#: quartz and calcite end-members for crustal shear zones. Names are the trade's.
IDEAL_FABRICS = {
    "olivine-A": ("[100]", "[010]"),   # (010)[100] slip
    "olivine-B": ("[001]", "[010]"),   # (010)[001]
    "olivine-C": ("[001]", "[100]"),   # (100)[001]
    "olivine-D": ("[100]", "[001]"),   # (0kl)[100], here with [001] normal to the foliation
    "olivine-E": ("[100]", "[001]"),   # (001)[100]
    "quartz-prism-a": ("[100]", "[120]"),   # prism <a>: a along X, c along Y (in the foliation)
    "quartz-basal-a": ("[100]", "[001]"),   # basal <a>: c normal to the foliation
    "calcite-c-normal": ("[100]", "[001]"),
    "ice-c-normal": ("[100]", "[001]"),
}


def ideal_orientation(mineral, along_x: str, along_z: str) -> np.ndarray:
    """Quaternion of the orientation putting crystal direction ``along_x`` on X and ``along_z`` on Z.

    The second direction is made exactly normal to the first (Gram-Schmidt) when the lattice makes
    them oblique. The columns of g are the structural axes X, Y, Z expressed in the crystal frame,
    so that ``g @ e_x`` is ``along_x`` (v_crystal = g v_structural).
    """
    from fabric2seis.orientations import from_matrices

    u = crystal_direction(mineral, along_x)
    w = crystal_direction(mineral, along_z)
    w = w - (w @ u) * u
    w /= np.linalg.norm(w)
    v = np.cross(w, u)
    g = np.column_stack([u, v, w])  # g @ e_x = u, g @ e_z = w
    return from_matrices(g[None])[0]


def fabric_orientations(mineral, fabric: str | None, n: int, scatter_deg: float, seed: int) -> np.ndarray:
    """``n`` orientations of a named ideal fabric with Gaussian scatter, or random (``fabric=None``)."""
    rng = np.random.default_rng(seed)
    if fabric is None or fabric == "random":
        return random_quaternions(n, rng)
    if fabric not in IDEAL_FABRICS:
        from fabric2seis.errors import InputError, nearest
        raise InputError(f"unknown fabric '{fabric}'{nearest(fabric, IDEAL_FABRICS)}; known: "
                         f"random, {', '.join(IDEAL_FABRICS)}")
    q0 = ideal_orientation(mineral, *IDEAL_FABRICS[fabric])
    return scatter(np.tile(q0, (n, 1)), scatter_deg, rng)
