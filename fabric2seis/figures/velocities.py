"""Velocity figures: Vp, AVs with fast shear-wave polarisations, Vs1, Vs2, dVs and Vp/Vs1 on
equal-area plots in the structural frame (Y at the centre, X right, Z up)."""

from __future__ import annotations

import numpy as np

from fabric2seis import waves
from fabric2seis.figures.projection import disk_grid, frame_axes, plt, project, save


def velocity_figure(stem, sample_name: str, c: np.ndarray, density_kg_m3: float, average: str,
                    n_grains: int) -> list[str]:
    """Draw Vp, AVs with fast shear-wave polarisations, Vs1, Vs2, dVs and Vp/Vs1 over the lower hemisphere.

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    sample_name : str
        Name shown in the title.
    c : numpy.ndarray, shape (6, 6)
        Voigt stiffness, GPa, structural frame.
    density_kg_m3 : float
        Density, kg/m^3.
    average : str
        Name of the average ``c`` is, shown in the title.
    n_grains : int
        Number of grains, shown in the title.

    Returns
    -------
    list of str
        The files written.
    """
    a, b, dirs, inside = disk_grid(151)
    w = waves.plane_waves(c, density_kg_m3, dirs[inside])
    fields = {
        "Vp (km/s)": w.vp_km_s, "AVs (%)": w.avs_pct, "dVs = Vs1 - Vs2 (km/s)": w.vs1_km_s - w.vs2_km_s,
        "Vs1 (km/s)": w.vs1_km_s, "Vs2 (km/s)": w.vs2_km_s, "Vp/Vs1": w.vp_km_s / w.vs1_km_s,
    }
    fig, axes = plt.subplots(2, 3, figsize=(10.5, 7.2))
    for ax, (label, values) in zip(axes.flat, fields.items()):
        grid = np.full(a.shape, np.nan)
        grid[inside] = values
        filled = ax.contourf(a, b, grid, levels=14, cmap="magma" if "AVs" in label or "dVs" in label else "viridis")
        filled.set_rasterized(True)
        k_max, k_min = np.nanargmax(grid), np.nanargmin(grid)
        ax.plot(a.flat[k_max], b.flat[k_max], marker="s", ms=5, mfc="none", mec="white", mew=1.2)
        ax.plot(a.flat[k_min], b.flat[k_min], marker="o", ms=5, mfc="none", mec="black", mew=1.2)
        if label.startswith("AVs"):
            _polarisation_ticks(ax, c, density_kg_m3)
        frame_axes(ax)
        ax.set_title(f"{label}\nmax {np.nanmax(grid):.3g} (square), min {np.nanmin(grid):.3g} (circle)", fontsize=8)
        cbar = fig.colorbar(filled, ax=ax, shrink=0.75, pad=0.02)
        cbar.set_label(label, fontsize=7)
        cbar.ax.tick_params(labelsize=6)
    fig.suptitle(f"{sample_name}: seismic velocities, {average} average, {n_grains} grains, density "
                 f"{density_kg_m3:.0f} kg/m^3\nequal area, structural frame; ticks: fast shear-wave "
                 "polarisation", fontsize=9)
    return save(fig, stem)


def _polarisation_ticks(ax, c, density_kg_m3, step_deg=12.0):
    """Short segments along the fast (S1) polarisation, projected like the directions."""
    dirs, _, _ = waves.hemisphere_grid(step_deg)
    # the figure shows y >= 0 around Y: turn the grid (z <= 0 about -Z) into one about +Y
    dirs = np.column_stack([dirs[:, 0], -dirs[:, 2], dirs[:, 1]])
    w = waves.plane_waves(c, density_kg_m3, dirs)
    p = w.polarisations[:, 1]
    length = 0.06
    start, end = project(dirs - length * p), project(dirs + length * p)
    centre = project(dirs)
    half = (end - start) / 2.0
    half /= np.maximum(np.linalg.norm(half, axis=1, keepdims=True), 1e-12)
    half *= 0.045
    for (x, y), (dx, dy) in zip(centre, half):
        ax.plot([x - dx, x + dx], [y - dy, y + dy], color="white", lw=0.8)
