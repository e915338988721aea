"""Figures, one module per subject. This package's ``__init__`` imports no matplotlib; its modules do,
except ``vector`` and the ``*_vector`` modules drawn on it.

Every plot function takes ``ax=None`` (or ``fig=None``), returns the axes or
figure, never calls ``show()``, and labels each axis with its quantity, unit
and method. Figures are :class:`matplotlib.figure.Figure` on the Agg canvas,
never pyplot (:mod:`workbench.plots._canvas`); a notebook shows one with
``display(fig)``. The fit report's figures are drawn without matplotlib by
:mod:`workbench.plots.vector` (a small SVG plotter) in
:mod:`workbench.plots.fit_vector`.
"""

import importlib

#: The plot modules; each is imported on first use as ``workbench.plots.NAME``.
MODULES = ("chain", "chromaticity", "coating", "coating_vector", "fit", "fit_vector", "images", "light",
           "near_infrared", "spectra", "tolerance", "tolerance_vector", "vector")


def __getattr__(name: str):
    """``workbench.plots.NAME`` imports that plot module on first use (PEP 562).

    So a command can name ``plots.light`` at the top of its module and load
    matplotlib only when it really draws.
    """
    if name in MODULES:
        return importlib.import_module(f"{__name__}.{name}")
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
