"""Elastic tensors: notation, rotation and averages (``tensors``), the mineral library
(``minerals``), constants at pressure and temperature (``conditions``), symmetry decomposition.

``fabric2seis.elastic`` re-exports ``tensors``, the functions most callers want.
"""

from fabric2seis.elastic.tensors import *  # noqa: F401,F403
