"""Figures, each written as PNG and PDF; nothing here computes physics.

``map_overview`` (phases, orientations, grain boundaries and points left out of a map),
``poles`` (pole figures, inverse pole figures, convergence of the fabric indices), ``velocities``
(the seismic stage's velocities), ``splitting`` (one layer against back-azimuth), ``stack`` (a
stack of layers), ``field`` (field comparison) and ``suite`` (samples of a suite side by side);
``projection`` holds the shared projection. Directional figures are lower-hemisphere equal-area
in the structural frame with Y at the centre, X to the right and Z at the top (CONVENTIONS.md)."""
