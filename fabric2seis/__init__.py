"""fabric2seis: from crystal orientations (EBSD) to seismic anisotropy and shear-wave splitting.

The package is a set of plain functions, one module per stage of the job (DEVELOPERS.md shows
the data flow). From Python, the public surface is that of :mod:`fabric2seis.api`, reachable from
here::

    import fabric2seis
    result = fabric2seis.analyse("sample.ang")          # or read_sample(...) first
    result.seismic["avs_max_pct"], result.tensors_gpa["hill"], result.intervals
    fig = fabric2seis.velocity_hemisphere(result, "vp")

Importing the package is light: the API and its dependencies (numpy, orix, scipy, pandas,
matplotlib) load on first use of one of its names (PEP 562 module ``__getattr__``).
"""

from typing import Any

__version__ = "0.1.0"

#: the names of fabric2seis.api offered here, loaded on first use
_API_NAMES = ("Analysis", "read_sample", "analyse", "velocity_figure", "velocity_hemisphere", "pole_figures",
              "pole_figure", "inverse_pole_figures", "fabric_convergence_figure", "map_overview_figure",
              "splitting_figure", "fit_field", "field_splitting_figure", "misfit_figure", "fast_directions_figure",
              "stack_figure", "suite_figure", "thin_section", "crossed_polars_figure", "retardation_figure",
              "interference_chart_figure")

__all__ = ["__version__", *_API_NAMES]


def __getattr__(name: str) -> Any:
    if name in _API_NAMES:
        from fabric2seis import api

        return getattr(api, name)
    raise AttributeError(f"module 'fabric2seis' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted({*globals(), *_API_NAMES})
