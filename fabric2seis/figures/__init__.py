"""Figures: pole figures, inverse pole figures and convergence (velocity figures come with the
seismic stage). Every figure is written as PNG and PDF, lower-hemisphere equal-area in the
structural frame with Y at the centre, X to the right and Z at the top (CONVENTIONS.md)."""
