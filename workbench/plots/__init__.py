"""Figures, one module per subject. This package's ``__init__`` imports no matplotlib; its modules do.

Every plot function takes ``ax=None`` (or ``fig=None``), returns the axes or
figure, never calls ``show()``, and labels each axis with its quantity, unit
and method. Figures are :class:`matplotlib.figure.Figure` on the Agg canvas,
never pyplot (:mod:`workbench.plots._canvas`); a notebook shows one with
``display(fig)``.
"""

import importlib

#: The plot modules; each is imported (with matplotlib) on first use as ``workbench.plots.NAME``.
MODULES = ("chain", "chromaticity", "coating", "fit", "images", "light", "near_infrared", "spectra", "tolerance")


def __getattr__(name: str):
    """``workbench.plots.NAME`` imports that plot module on first use (PEP 562).

    So a command can name ``plots.light`` at the top of its module and load
    matplotlib only when it really draws.
    """
    if name in MODULES:
        return importlib.import_module(f"{__name__}.{name}")
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
