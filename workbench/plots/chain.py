"""Plots of the optical chain: each element's curve and the cumulative curve per channel."""

from __future__ import annotations

import numpy as np

from workbench.plots._canvas import new_figure, place_axes

__all__ = ["plot_chain"]

_COLOURS = {"R": "tab:red", "G": "tab:green", "B": "tab:blue"}


def plot_chain(wavelengths, curves, *, ax=None):
    """Plot every element's curve and the running product along each channel's path.

    Parameters
    ----------
    wavelengths : (n,) array_like, nm
    curves : sequence of ElementCurve
        From :meth:`workbench.model.design.Design.element_curves` (one set of
        values: each ``values`` is (3, n)).
    ax : sequence of three matplotlib Axes, optional
        One per channel R, G, B; created in a new figure (Agg canvas, no
        pyplot) when None.

    Returns
    -------
    (3,) sequence of Axes
        Element curves dashed (only on the channels they sit on), the
        cumulative product solid.
    """
    if ax is None:
        fig = new_figure(7, 8)  # fixed margins (inches): the same texts every time, no layout engine
        place_axes(fig, left=0.7, right=0.15, top=0.3, bottom=0.5, hspace=0.45, rows=3)
        ax = fig.subplots(3, 1, sharex=True)
    wl = np.asarray(wavelengths, dtype=float)
    total = np.ones((3, wl.size))
    for j, c in enumerate(curves):
        v = np.asarray(c.values)
        total = total * v
        for k, ch in enumerate("RGB"):
            if ch in c.paths:
                ax[k].plot(wl, v[k], "--", lw=1, color=f"C{j % 10}", label=f"{c.name} ({c.type})")
    for k, ch in enumerate("RGB"):
        ax[k].plot(wl, total[k], "-", lw=2.2, color=_COLOURS[ch], label=f"cumulative {ch}")
        ax[k].set_ylabel(f"{ch}: transmittance / QE (0-1)")
        ax[k].set_ylim(0, 1.05)
        ax[k].legend(fontsize="x-small", loc="upper right")
        ax[k].set_title(f"channel {ch}: element curves and product along the path", fontsize="small", y=1.0)
    ax[-1].set_xlabel("wavelength λ (nm)")
    return ax
