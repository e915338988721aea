"""Where each channel's signal comes from: the channel × light spectra with the near infrared shaded."""

from __future__ import annotations

import numpy as np

from workbench.plots._canvas import new_figure

__all__ = ["plot_infrared"]

_COLOURS = {"R": "tab:red", "G": "tab:green", "B": "tab:blue"}


def plot_infrared(wavelengths, sensitivities, illuminants: dict, *, cutoff_nm: float = 700.0, shares=None):
    """One panel per illuminant: S_c(λ)·E(λ) of each channel, each scaled to its peak, the part above the cut-off shaded.

    Parameters
    ----------
    wavelengths : (n,) array_like, nm
    sensitivities : (3, n) array_like
    illuminants : dict of str to (n,) array_like
        Relative SPDs by name.
    cutoff_nm : float, nm
    shares : (J, 3) array_like, optional
        The infrared share of each channel (0-1) for the legend.

    Returns
    -------
    matplotlib Figure (Agg canvas, no pyplot)
    """
    wl = np.asarray(wavelengths, dtype=float)
    S = np.asarray(sensitivities, dtype=float)
    names = list(illuminants)
    fig = new_figure(7, 2.4 * len(names) + 0.6, layout="constrained")
    axes = np.atleast_1d(fig.subplots(len(names), 1, sharex=True, squeeze=False)[:, 0])
    above = wl >= cutoff_nm   # shading only: the share counts λ > cut-off
    for j, (ax, name) in enumerate(zip(axes, names)):
        E = np.asarray(illuminants[name], dtype=float)
        for k, ch in enumerate("RGB"):
            y = S[k] * E
            peak = y.max()
            y = y / peak if peak > 0 else y
            label = ch if shares is None else f"{ch}: {100 * float(np.asarray(shares)[j, k]):.2f} % above {cutoff_nm:g} nm"
            ax.plot(wl, y, color=_COLOURS[ch], lw=1.6, label=label)
            ax.fill_between(wl, 0, y, where=above, color=_COLOURS[ch], alpha=0.25, step=None)
        ax.axvline(cutoff_nm, color="0.3", ls=":", lw=1)
        ax.set_ylim(0, 1.05)
        ax.set_ylabel("S·E (peak = 1)")
        ax.set_title(f"under {name}: each channel's signal per nm, the near infrared shaded", fontsize="small")
        ax.legend(fontsize="x-small", loc="upper right")
    axes[-1].set_xlabel("wavelength λ (nm)")
    return fig
