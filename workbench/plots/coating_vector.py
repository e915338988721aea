"""Figures of a thin-film stack as vector SVG (:mod:`workbench.plots.vector`), without matplotlib.

The coating panel's live figure (:func:`stack_angles_figure`: R or T at
each angle, s, p and their mean, the 50 % crossings of the main band's
edges) and the layer ranking of notebook 06 (:func:`layer_shares_figure`)
have the same content as :func:`workbench.plots.coating.plot_stack_angles`
and :func:`workbench.plots.coating.plot_layer_shares` (which ``workbench
coating --figures`` and ``workbench recipe`` keep using for their PNG
files): the same series, titles, axis labels with unit and method, and
legends. Each function returns a :class:`workbench.plots.vector.Figure`;
``.svg()`` writes it, and a notebook shows it as it is. Importing this
module costs no matplotlib, so the panel draws its first figure without
waiting for it.
"""

from __future__ import annotations

import math

import numpy as np

from workbench.errors import WorkbenchError
from workbench.plots.vector import PALETTE, Figure, nice_limits, nice_step

__all__ = ["stack_angles_figure", "layer_shares_figure", "WL_LABEL", "METHOD"]

WL_LABEL = "wavelength λ (nm)"
METHOD = "characteristic-matrix method"
_NEUTRAL = "#262626"  # legend samples of a line style, not of an angle
_HALF = "#999999"


def _axes_box(fig: Figure, title: str, *, left: float = 70.0, right: float = 16.0, bottom: float = 50.0):
    lines = fig.title(title, size=12.0, y=6.0)
    top = 14 + 15.5 * lines
    return (left, top, fig.width - left - right, fig.height - top - bottom)


def stack_angles_figure(response, *, quantity: str = "T", title: str = "", edges=None, width: float = 700.0,
                        height: float = 420.0) -> Figure:
    """R or T against wavelength at every angle: their mean thick, s dashed and p dotted thin, one colour per angle.

    Parameters
    ----------
    response : StackResponse
        One stack (no batch axes; :func:`workbench.optics.thinfilm.stack_response`).
    quantity : {'R', 'T'}
    title : str
        Put before the figure's own title (e.g. the stack's name).
    edges : list of (float, dict), optional
        Per angle (degrees), :func:`workbench.analysis.transition.band_sides`
        of ``'mean'`` (as :attr:`workbench.widgets.coating.CoatingPanel.edges`):
        the crossings of R = 50 % that bound the main reflection band are
        marked on the 50 % line in the angle's colour, filled where the
        transition is monotone and hollow where it is not (docs/methods.md §15).
    width, height : float
        Size in px of the figure without its legend (below the axes, the
        figure grows by its height).

    Returns
    -------
    workbench.plots.vector.Figure
    """
    if quantity not in ("R", "T"):
        raise WorkbenchError(f"quantity must be 'R' or 'T' (got {quantity!r})")
    wl = np.asarray(response.wavelengths_nm, dtype=float)
    Q = response.R if quantity == "R" else response.T
    mean = response.R_mean if quantity == "R" else response.T_mean
    name = "reflectance R" if quantity == "R" else "transmittance T"
    fig = Figure(width, height, name=f"wb-coating-{quantity}", alt=f"{name} at each angle")
    head = f"{title + ': ' if title else ''}{name} at each angle ({METHOD}; s dashed, p dotted)"
    xlim = (float(wl[0]), float(wl[-1])) if wl.size else (0.0, 1.0)
    angles = np.asarray(response.angles_deg, dtype=float).tolist()
    by_angle = {float(a): by for a, by in (edges or [])}
    marks = [t for a in angles for t in by_angle.get(a, {}).get("mean", {}).values()
             if any(math.isfinite(v) for v in t.crossings_nm)]
    rows = math.ceil((len(angles) + 2 + bool(marks)) / 2)  # the legend below the axes, two columns
    fig.height += 16 + 14.25 * rows
    ax = fig.add_axes(_axes_box(fig, head, bottom=66 + 14.25 * rows), xlim=xlim, ylim=(-0.02, 1.02))
    ax.hline(0.5, colour=_HALF, width=0.7)
    for ia, a in enumerate(angles):
        c = PALETTE[ia % len(PALETTE)]
        ax.line(wl, Q[0, ia], colour=c, width=0.9, dash="dashed")
        ax.line(wl, Q[1, ia], colour=c, width=0.9, dash="dotted")
        ax.line(wl, mean[ia], colour=c, width=2.0, label=f"{a:g}°, mean of s and p")
        sides = by_angle.get(a, {}).get("mean", {})
        for t in sides.values():
            x = [v for v in t.crossings_nm if math.isfinite(v)]
            if not x:
                continue
            ax.markers(x, np.full(len(x), 0.5), fill=c if t.monotone else "#ffffff", edge=c, edge_width=1.4,
                       size=7.5)
    nan = [math.nan]
    ax.line(nan, nan, colour=_NEUTRAL, width=0.9, dash="dashed", label="s polarisation")
    ax.line(nan, nan, colour=_NEUTRAL, width=0.9, dash="dotted", label="p polarisation")
    if marks:
        rough = any(not t.monotone for t in marks)
        ax.markers(nan, nan, fill=_NEUTRAL, edge=_NEUTRAL, size=7.5,
                   label="band edge: R = 50 % crossing of the mean" + (" (hollow: not monotone)" if rough else ""))
    ax.set(xlabel=WL_LABEL, ylabel=f"{name} (fraction 0-1)")
    ax.legend("below", ncol=2, size=9.5)
    return fig


def layer_shares_figure(ranking: list, floor: float, *, trials: int, title: str = "", level: float = 0.9,
                        width: float = 760.0, height: float = 430.0) -> Figure:
    """Each layer's share of the reflectance variance: from the trials with its interval, and from the derivatives.

    Parameters
    ----------
    ranking : list of dict
        :attr:`workbench.analysis.layer_tolerance.LayerTolerance.ranking`
        (with ``trial_share`` and ``trial_interval``).
    floor : float, fraction 0-1
        The noise floor of the trial shares.
    trials : int
    title : str
    level : float
        The level of the intervals (for the legend).
    width, height : float
        Figure size in px.

    Returns
    -------
    workbench.plots.vector.Figure
    """
    rows = sorted(ranking, key=lambda r: r["layer"])
    layer = np.array([r["layer"] for r in rows], dtype=float)
    share = 100 * np.array([r["trial_share"] for r in rows], dtype=float)
    lo, hi = (100 * np.array([r["trial_interval"][k] for r in rows], dtype=float) for k in (0, 1))
    above = np.array([bool(r["above_floor"]) for r in rows])
    first_order = 100 * np.array([r["share"] for r in rows], dtype=float) * share.sum() / 100
    fig = Figure(width, height, name="wb-layer-shares", alt="each layer's share of the variance of R")
    head = (f"{title + ': ' if title else ''}which layers' thickness errors matter "
            "(linear share of R's variance over the wavelengths)")
    top_y = max(float(np.nanmax(hi)) if hi.size else 0.0, 100 * floor, float(np.nanmax(first_order, initial=0.0)))
    y_hi = nice_limits(0.0, 1.3 * top_y)[1] if math.isfinite(top_y) and top_y > 0 else 1.0  # room for the legend
    ax = fig.add_axes(_axes_box(fig, head), xlim=(0.3, (layer.max() if layer.size else 1.0) + 0.7), ylim=(0.0, y_hi))
    ax.set(grid="y")
    n = int(layer.max()) if layer.size else 1
    step = 1 if n <= 24 else max(1, int(round(nice_step(n, 12))))
    ticks = sorted({1, *range(step, n + 1, step)})  # whole layers only
    ax.xticks(ticks, [str(k) for k in ticks])
    blue, grey = PALETTE[0], "#b3b3b3"
    ax.bars(layer, share, width=0.7, colours=[blue if a else grey for a in above])
    nan = math.nan
    whisker = np.column_stack([layer, layer, np.full(layer.size, nan)]).ravel()
    span = np.column_stack([lo, hi, np.full(layer.size, nan)]).ravel()
    ax.line(whisker, span, colour="#404040", width=1.0)
    dash_x = np.column_stack([layer - 0.3, layer + 0.3, np.full(layer.size, nan)]).ravel()
    dash_y = np.column_stack([first_order, first_order, np.full(layer.size, nan)]).ravel()
    ax.line(dash_x, dash_y, colour="#000000", width=2.2)
    ax.hline(100 * floor, colour="#c23b3b", width=1.2, dash="dashed")
    ax.polygon([nan], [nan], fill=blue, label=f"share from {trials} trials (blue: above the noise floor)")
    ax.line([nan], [nan], colour="#404040", width=1.0, label=f"bootstrap {100 * level:g} % interval")
    ax.line([nan], [nan], colour="#000000", width=2.2,
            label="first order from the derivatives (scaled to the trials' total)")
    ax.line([nan], [nan], colour="#c23b3b", width=1.2, dash="dashed",
            label=f"noise floor {100 * floor:.2f} % (largest share with the trials shuffled, {100 * level:g} %)")
    ax.set(xlabel="layer (1 = incidence side)", ylabel="share of the variance of R (%)")
    ax.legend("upper right", size=9.5)
    return fig
