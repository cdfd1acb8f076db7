"""The other birefringence: a predicted crossed-polar view of the thin section from EBSD orientations.

``indicatrix`` solves the central section of each crystal's optical indicatrix for light normal to
the section (indices, vibration directions, birefringence, retardation, extinction); ``colour``
turns retardation and vibration direction into the interference colour between crossed polars
(CIE 1931, D65, sRGB, through colour-science, imported only when colours are computed);
``thickness`` estimates the section's thickness from one measurement; ``section`` runs it all for
a sample (``fabric2seis optics``). The optical constants live in the mineral library
(``Mineral.optics``).
"""

from fabric2seis.optics.colour import (
    ORDER_NM,
    PLATE_NM,
    InterferenceTable,
    interference_srgb,
    order_of,
    spectral_weights,
    xyz_to_srgb,
)
from fabric2seis.optics.indicatrix import SectionOptics, polariser_directions, section_optics, view_vector
from fabric2seis.optics.thickness import (
    thickness_from_grain,
    thickness_from_highest_colour,
    thickness_from_order,
    thickness_from_retardation,
)

__all__ = ["ORDER_NM", "PLATE_NM", "InterferenceTable", "interference_srgb", "order_of", "spectral_weights",
           "xyz_to_srgb", "SectionOptics", "polariser_directions", "section_optics", "view_vector",
           "thickness_from_grain", "thickness_from_highest_colour", "thickness_from_order",
           "thickness_from_retardation"]
