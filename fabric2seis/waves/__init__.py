"""Waves and splitting: Christoffel solutions (``christoffel``), the rock's velocities
(``seismic``), one layer in the ground (``splitting``), several layers (``layers``), the field
fit (``field``) and stacks of layers (``stack``).

``fabric2seis.waves`` re-exports ``christoffel``, the functions most callers want.
"""

from fabric2seis.waves.christoffel import *  # noqa: F401,F403
