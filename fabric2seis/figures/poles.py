"""Pole figures (one row per phase, one panel per principal pole), inverse pole figures and the
convergence of fabric indices with the number of grains."""

from __future__ import annotations

import numpy as np

from fabric2seis import fabric
from fabric2seis.elastic.minerals import crystal_direction
from fabric2seis.figures.projection import disk_grid, frame_axes, plt, save


def pole_figures(stem, sample_name: str, phases: list[tuple], halfwidth_deg: float, weighting: str) -> list[str]:
    """Draw contoured pole densities in m.u.d., one row per phase and one panel per pole.

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    sample_name : str
        Name shown in the title.
    phases : list of tuple
        Per phase: (mineral, quaternions (N, 4), weights (N,), pole labels).
    halfwidth_deg : float
        Halfwidth of the density kernel, degrees.
    weighting : str
        How orientations were weighted, shown in the title.

    Returns
    -------
    list of str
        The files written.
    """
    n_cols = max(len(p[3]) for p in phases)
    fig, axes = plt.subplots(len(phases), n_cols, figsize=(2.6 * n_cols + 0.8, 2.7 * len(phases)),
                             squeeze=False)
    a, b, dirs, inside = disk_grid()
    for row, (mineral, quat, weights, labels) in enumerate(phases):
        densities = []
        for label in labels:
            vectors = fabric.pole_vectors(quat, crystal_direction(mineral, label), mineral.symmetry)
            d = np.full(a.shape, np.nan)
            d[inside] = fabric.pole_density(dirs[inside], vectors, weights, halfwidth_deg)
            densities.append(d)
        top = max(np.nanmax(d) for d in densities)
        from matplotlib.ticker import MaxNLocator
        levels = MaxNLocator(nbins=12).tick_values(0.0, max(top, 1.0))
        for col in range(n_cols):
            ax = axes[row, col]
            if col >= len(labels):
                ax.axis("off")
                continue
            d = densities[col]
            filled = ax.contourf(a, b, d, levels=levels, cmap="viridis")
            filled.set_rasterized(True)  # keeps the PDF small and quick to write
            ax.contour(a, b, d, levels=[1.0], colors="white", linewidths=0.5)
            k = np.nanargmax(d)
            ax.plot(a.flat[k], b.flat[k], marker="s", ms=4, mfc="none", mec="red", mew=1.0)
            frame_axes(ax)
            ax.set_title(f"{mineral.name} {labels[col]}\nmax {np.nanmax(d):.2f} m.u.d.", fontsize=8)
        cbar = fig.colorbar(filled, ax=list(axes[row, :len(labels)]), shrink=0.8, pad=0.02)
        cbar.set_label("pole density (m.u.d.)", fontsize=8)
        cbar.ax.tick_params(labelsize=7)
        axes[row, 0].text(-1.5, 0, f"n = {len(quat)}", rotation=90, va="center", fontsize=8)
    fig.suptitle(f"{sample_name}: pole figures, lower hemisphere, equal area, structural frame\n"
                 f"weighting: {weighting}, kernel halfwidth {halfwidth_deg:g} deg; white line 1 m.u.d.; "
                 f"red square: maximum", fontsize=9)
    return save(fig, stem)


def inverse_pole_figures(stem, sample_name: str, phases: list[tuple], halfwidth_deg: float,
                         weighting: str, sample_directions=(("X", (1, 0, 0)), ("Z", (0, 0, 1)))) -> list[str]:
    """Density of structural directions in crystal coordinates, one panel per phase and direction.

    The crystal frame is shown with a (e1) to the right and c* (e3) at the top, the same equal-area
    projection as the pole figures; all symmetry equivalents are plotted.

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    sample_name : str
        Name shown in the title.
    phases : list of tuple
        Per phase: (mineral, quaternions (N, 4), weights (N,), pole labels).
    halfwidth_deg : float
        Halfwidth of the density kernel, degrees.
    weighting : str
        How orientations were weighted, shown in the title.
    sample_directions : sequence of (str, tuple)
        Label and structural-frame vector (3,) of each direction drawn.

    Returns
    -------
    list of str
        The files written.
    """
    fig, axes = plt.subplots(len(phases), len(sample_directions),
                             figsize=(2.7 * len(sample_directions) + 0.6, 2.7 * len(phases)), squeeze=False)
    a, b, dirs, inside = disk_grid(121)
    from fabric2seis.orientations import proper_symmetry_quaternions, to_matrices
    for row, (mineral, quat, weights, _) in enumerate(phases):
        g = to_matrices(quat)
        ops = to_matrices(proper_symmetry_quaternions(mineral.symmetry))
        for col, (name, v) in enumerate(sample_directions):
            crystal = g @ np.asarray(v, dtype=float)                 # (N, 3) in crystal frame
            vectors = np.einsum("kij,nj->nki", ops, crystal)         # all equivalents
            d = np.full(a.shape, np.nan)
            d[inside] = fabric.pole_density(dirs[inside], vectors, weights, halfwidth_deg)
            ax = axes[row, col]
            filled = ax.contourf(a, b, d, levels=12, cmap="cividis")
            filled.set_rasterized(True)
            frame_axes(ax, labels=("a", "c*", "b"))
            ax.set_title(f"{mineral.name}: {name} in crystal axes\nmax {np.nanmax(d):.2f} m.u.d.", fontsize=8)
            cbar = fig.colorbar(filled, ax=ax, shrink=0.7, pad=0.02)
            cbar.set_label("m.u.d.", fontsize=7)
            cbar.ax.tick_params(labelsize=6)
    fig.suptitle(f"{sample_name}: inverse pole figures (equal area), weighting {weighting}", fontsize=9)
    return save(fig, stem)


def convergence_figure(stem, sample_name: str, results: dict) -> list[str]:
    """Draw J, M and maximum pole density against the number of grains, per phase.

    Parameters
    ----------
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.
    sample_name : str
        Name shown in the title.
    results : dict
        Convergence of the fabric indices by mineral name (``PhaseFabricResult.convergence``).

    Returns
    -------
    list of str
        The files written.
    """
    fig, axes = plt.subplots(1, 3, figsize=(10, 3.0))
    for mineral, conv in results.items():
        n = [r["n"] for r in conv["rows"]]
        for ax, key, label in zip(axes, ("J", "M", "max_mud"),
                                  ("J-index", "M-index", "max pole density (m.u.d.)")):
            ax.plot(n, [r[key] for r in conv["rows"]], marker="o", ms=3, label=f"{mineral} ({conv['pole']})"
                    if key == "max_mud" else mineral)
            ax.set_xscale("log")
            ax.set_xlabel("number of grains")
            ax.set_ylabel(label)
    axes[0].legend(fontsize=7)
    axes[2].legend(fontsize=7)
    fig.suptitle(f"{sample_name}: fabric indices on nested random subsets of the grains", fontsize=9)
    fig.tight_layout()
    return save(fig, stem)
