"""Figures, one module per subject. This package's ``__init__`` imports no matplotlib; its modules do.

Every plot function takes ``ax=None`` (or ``fig=None``), returns the axes or
figure, never calls ``show()``, and labels each axis with its quantity, unit
and method. Figures are :class:`matplotlib.figure.Figure` on the Agg canvas,
never pyplot (:mod:`workbench.plots._canvas`); a notebook shows one with
``display(fig)``.
"""
