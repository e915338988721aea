"""Plots of spectra: the curves of a set, labelled with their kind and units."""

from __future__ import annotations

import numpy as np

from workbench.model.spectra import Spectra
from workbench.plots._canvas import new_figure

_YLABEL = {
    "reflectance": "reflectance (0-1)",
    "transmittance": "transmittance (0-1)",
    "emission": "spectral power",
    "sensitivity": "relative sensitivity",
}


def plot_spectra(spectra: Spectra, *, ax=None, colours=None, limit: int = 20):
    """Draw up to ``limit`` spectra of a set against wavelength; returns the axes.

    ``colours`` may give one RGB triple (0-1) per spectrum, e.g. each
    sample's own display colour. Without ``ax`` a new figure (Agg canvas,
    no pyplot) is made; show it with ``display(ax.figure)``.
    """
    if ax is None:
        ax = new_figure(7, 4, layout="constrained").subplots()
    flat = spectra.flat()[:limit]
    for i, (name, row) in enumerate(zip(spectra.names, flat)):
        c = None if colours is None else np.clip(colours[i], 0, 1)
        ax.plot(spectra.wavelengths, row, label=name, color=c, lw=1.5)
    label = _YLABEL[spectra.kind]
    if spectra.kind == "emission":
        label += f" ({spectra.units})"
    ax.set_xlabel("wavelength (nm)")
    ax.set_ylabel(label)
    ax.set_xlim(spectra.wavelengths[0], spectra.wavelengths[-1])
    ax.grid(alpha=0.3)
    if len(flat) <= 14:
        ax.legend(fontsize="small", ncol=2)
    return ax
