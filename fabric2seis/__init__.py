"""fabric2seis: from crystal orientations (EBSD) to seismic anisotropy and shear-wave splitting.

The package is a set of plain functions, one module per stage of the job:

    minerals  single-crystal elastic constants with their sources
    elastic   tensor algebra, rotation by orientations, the four averages
    waves     Christoffel solutions and direction grids

See DEVELOPERS.md for the data flow and where each later stage goes.
"""

__version__ = "0.1.0"
