"""Fabric strength and shape: kernel ODF, J-index, pfJ and pole densities, M-index, eigenanalysis.

One module per concept:

``kernel``
    the de la Vallee Poussin kernel, its character coefficients and self-convolutions, and the
    kernel ODF estimate (``odf_values``);
``texture_index``
    the J-index (Bunge's texture index): its Parseval series (through ``harmonics``, the Wigner
    matrices and SO(3) Fourier sums of the grains), pair sums, the pair matrix and its quadratic forms;
``poles``
    pole vectors and densities, pfJ, orientation-tensor eigenanalysis, the BA-index, default poles;
``misorientation_index``
    the M-index (the misorientation index of Skemer et al. 2005) and the random misorientation
    histograms;
``phase``
    the fabric of one phase (``phase_fabric``), its convergence, and the random floors;
``cache``
    the in-memory and on-disk cache of the simulated random distributions;
``checks``
    the argument checks of the public functions (``ValueError`` early, with a clear message).

The names below are the public interface (``from fabric2seis import fabric; fabric.j_index(...)``).
"""

from fabric2seis.fabric.cache import cache_folder, cached_result, clear_memory
from fabric2seis.fabric.kernel import (
    J_SERIES_TOLERANCE,
    ODF_SUPPORT,
    Kernel,
    kernel_coefficients,
    odf_values,
    phi_by_cos_half,
    pole_self_convolution_table,
    self_convolution,
    self_convolution_by_cos_half,
    self_convolution_table,
)
from fabric2seis.fabric.misorientation_index import (
    M_INDEX_BIN_DEG,
    M_INDEX_PAIRS,
    RANDOM_DISTRIBUTION_PAIRS,
    RANDOM_DISTRIBUTION_SEED,
    m_index,
    m_index_bin_variance,
    misorientation_histogram,
    random_distribution,
    random_misorientation_histogram,
    random_unit_quaternions,
    uncorrelated_misorientations,
)
from fabric2seis.fabric.phase import (
    RANDOM_FLOOR_MAX_GRAINS,
    RANDOM_FLOOR_SEED,
    RANDOM_FLOOR_SETS,
    PhaseFabric,
    convergence,
    convergence_of_subsets,
    indistinguishable_from_random,
    phase_fabric,
    random_floor,
    with_all_grains,
)
from fabric2seis.fabric.poles import (
    ba_index,
    default_poles,
    eigen_analysis,
    hemisphere_cells,
    orientation_tensor,
    pf_j,
    pf_j_pairs,
    pole_density,
    pole_vectors,
)
from fabric2seis.fabric.texture_index import (
    HARMONIC_DEGREE_LIMIT,
    j_index,
    j_index_dense,
    j_index_harmonics,
    j_index_nested,
    j_index_pairs,
    j_pair_matrix,
    j_quadratic_forms,
)

# orientation arithmetic that callers have reached through this package; it lives in
# fabric2seis.orientations, where new code should import it from
from fabric2seis.orientations import misorientation_angles, proper_symmetry_quaternions, to_matrices

__all__ = [
    "HARMONIC_DEGREE_LIMIT", "J_SERIES_TOLERANCE", "M_INDEX_BIN_DEG", "M_INDEX_PAIRS", "ODF_SUPPORT",
    "RANDOM_DISTRIBUTION_PAIRS", "RANDOM_DISTRIBUTION_SEED", "RANDOM_FLOOR_MAX_GRAINS", "RANDOM_FLOOR_SEED",
    "RANDOM_FLOOR_SETS", "Kernel", "PhaseFabric",
    "ba_index", "cache_folder", "cached_result", "clear_memory", "convergence", "convergence_of_subsets",
    "default_poles",
    "eigen_analysis", "hemisphere_cells", "indistinguishable_from_random", "j_index", "j_index_dense",
    "j_index_harmonics", "j_index_nested", "j_index_pairs", "j_pair_matrix", "j_quadratic_forms", "kernel_coefficients",
    "m_index", "m_index_bin_variance", "misorientation_angles", "misorientation_histogram", "odf_values",
    "orientation_tensor", "pf_j", "pf_j_pairs", "phase_fabric", "pole_density",
    "pole_self_convolution_table", "pole_vectors", "proper_symmetry_quaternions", "random_distribution",
    "random_floor", "random_misorientation_histogram", "random_unit_quaternions", "self_convolution",
    "phi_by_cos_half", "self_convolution_by_cos_half", "self_convolution_table", "to_matrices",
    "uncorrelated_misorientations", "with_all_grains",
]
