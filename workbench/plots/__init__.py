"""Figures, one module per subject. Nothing below this package imports matplotlib.

Every plot function takes ``ax=None`` (or ``fig=None``), returns the axes or
figure, never calls ``show()``, and labels each axis with its quantity, unit
and method.
"""
