"""Figures of a thin-film stack: R and T against wavelength per angle, 50 % points against angle.

Every function builds its own :class:`matplotlib.figure.Figure` (no pyplot
state), returns it and never shows it. Axes carry quantity, unit and method.
The input is a :class:`workbench.optics.thinfilm.StackResponse`.
"""

from __future__ import annotations

import numpy as np

from workbench.analysis.transition import edge_transition
from workbench.optics.thinfilm import StackResponse
from workbench.plots._canvas import new_figure, place_axes, png_bytes

__all__ = ["plot_stack_spectra", "plot_half_points_vs_angle", "plot_stack_angles", "plot_layer_shares", "plot_face", "png_bytes"]

_WL_LABEL = "wavelength λ (nm)"
_METHOD = "characteristic-matrix method"
_POL_STYLE = {"s": ("tab:blue", "-"), "p": ("tab:red", "-"), "mean": ("0.2", "--")}


def _figure(width: float, height: float):
    fig = new_figure(width, height)
    place_axes(fig, left=0.75, right=0.15, top=0.35, bottom=0.55)
    return fig


def plot_stack_spectra(response: StackResponse, angle_index: int = 0, *, title: str = ""):
    """R and T (s, p and their mean) against wavelength at one angle.

    Parameters
    ----------
    response : StackResponse
        One stack (no batch axes).
    angle_index : int
        Which of ``response.angles_deg``.
    title : str
        Shown above the axes (e.g. the stack's file name).

    Returns
    -------
    matplotlib.figure.Figure
    """
    wl = response.wavelengths_nm
    a = float(response.angles_deg[angle_index])
    fig = _figure(7.0, 4.2)
    ax = fig.add_subplot()
    for ip, pol in enumerate(("s", "p")):
        colour, _ = _POL_STYLE[pol]
        ax.plot(wl, response.R[ip, angle_index], color=colour, lw=1.4, label=f"R {pol}")
        ax.plot(wl, response.T[ip, angle_index], color=colour, lw=1.0, ls=":", label=f"T {pol}")
    ax.plot(wl, response.T_mean[angle_index], color="0.2", lw=1.0, ls="--", label="T mean of s, p")
    ax.axhline(0.5, color="0.6", lw=0.6)
    ax.set_xlim(wl[0], wl[-1])
    ax.set_ylim(-0.02, 1.02)
    ax.set_xlabel(_WL_LABEL)
    ax.set_ylabel("reflectance R, transmittance T (fraction 0-1)")
    ax.set_title(f"{title + ': ' if title else ''}R and T at {a:g}° in the incidence medium ({_METHOD})",
                 fontsize=9)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7, ncol=3, loc="best")
    return fig


def plot_half_points_vs_angle(response: StackResponse, *, title: str = ""):
    """The edges of the reflection band (its 50 % points) against angle for s, p and their mean.

    The band is the main reflection band of each curve and its edges the
    crossings of 50 % that bound it, found by the rule of
    :func:`workbench.analysis.transition.edge_transition` on each side; an
    edge whose transition is not monotone (a ripple back through 50 %, or a
    rise of more than 1 %) is drawn with a hollow marker, and an edge that
    runs off the wavelength grid is left out.

    Returns
    -------
    matplotlib.figure.Figure
    """
    wl = response.wavelengths_nm
    angles = response.angles_deg
    fig = _figure(6.4, 4.2)
    ax = fig.add_subplot()
    curves = {"s": response.R[0], "p": response.R[1], "mean": response.R_mean}
    any_edge = any_rough = False
    for pol, R in curves.items():
        colour, ls = _POL_STYLE[pol]
        for k, (side, reflects) in enumerate((("short-wave", "long"), ("long-wave", "short"))):
            found = [edge_transition(wl, R[ia], reflects=reflects) for ia in range(angles.size)]
            y = np.array([t.band_edge_nm for t in found])
            smooth = np.array([t.monotone for t in found])
            if np.any(np.isfinite(y)):
                any_edge = True
                any_rough |= bool(np.any(~smooth & np.isfinite(y)))
                marker = "o" if k == 0 else "s"
                ax.plot(angles, y, color=colour, ls=ls, label=f"{pol}, {side} edge")
                ax.plot(angles[smooth], y[smooth], color=colour, ls="none", marker=marker, ms=4)
                ax.plot(angles[~smooth], y[~smooth], color=colour, ls="none", marker=marker, ms=5, mfc="none")
    ax.set_xlabel("angle of incidence in the incidence medium (°)")
    ax.set_ylabel("50 % point of R, " + _WL_LABEL)
    ax.set_title(f"{title + ': ' if title else ''}reflection-band edges against angle ({_METHOD})"
                 + ("\nhollow: transition not monotone, the band's own crossing shown (docs/methods.md §15)"
                    if any_rough else ""), fontsize=9)
    ax.grid(alpha=0.3)
    if any_edge:
        ax.legend(fontsize=7, ncol=2)
    else:
        ax.text(0.5, 0.5, "R does not cross 50 % on this grid", transform=ax.transAxes, ha="center")
    return fig


def plot_stack_angles(response: StackResponse, *, quantity: str = "T", title: str = "", fig=None):
    """R or T against wavelength at every angle: s and p thin, their mean thick, one colour per angle.

    Parameters
    ----------
    response : StackResponse
        One stack (no batch axes).
    quantity : {'R', 'T'}
    title : str
    fig : Figure, optional
        Drawn into (cleared) instead of a new figure.

    Returns
    -------
    matplotlib.figure.Figure
    """
    fig = new_figure(7.0, 4.0, fig)
    place_axes(fig, left=0.75, right=0.15, top=0.35, bottom=0.55)
    ax = fig.add_subplot()
    wl = response.wavelengths_nm
    Q = response.R if quantity == "R" else response.T
    mean = response.R_mean if quantity == "R" else response.T_mean
    colours = ["tab:blue", "tab:green", "tab:orange", "tab:red", "tab:purple", "tab:brown", "tab:pink"]
    for ia, a in enumerate(response.angles_deg):
        c = colours[ia % len(colours)]
        ax.plot(wl, mean[ia], color=c, lw=1.6, label=f"{a:g}°, mean of s and p")
        ax.plot(wl, Q[0, ia], color=c, lw=0.7, ls="--", label=f"{a:g}°, s" if ia == 0 else None)
        ax.plot(wl, Q[1, ia], color=c, lw=0.7, ls=":", label=f"{a:g}°, p" if ia == 0 else None)
    ax.axhline(0.5, color="0.6", lw=0.6)
    ax.set_xlim(wl[0], wl[-1])
    ax.set_ylim(-0.02, 1.02)
    ax.set_xlabel(_WL_LABEL)
    name = "reflectance R" if quantity == "R" else "transmittance T"
    ax.set_ylabel(f"{name} (fraction 0-1)")
    ax.set_title(f"{title + ': ' if title else ''}{name} at each angle ({_METHOD}; s dashed, p dotted)",
                 fontsize=9)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7, ncol=2, loc="best")
    return fig


def plot_layer_shares(ranking: list, floor: float, *, trials: int, title: str = "", level: float = 0.9):
    """Each layer's share of the reflectance variance: from the derivatives, and from the trials with its noise.

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

    Returns
    -------
    matplotlib.figure.Figure
    """
    rows = sorted(ranking, key=lambda r: r["layer"])
    layer = np.array([r["layer"] for r in rows])
    share = 100 * np.array([r["trial_share"] for r in rows])
    lo, hi = (100 * np.array([r["trial_interval"][k] for r in rows]) for k in (0, 1))
    above = np.array([r["above_floor"] for r in rows])
    fig = _figure(7.5, 4.2)
    ax = fig.add_subplot()
    colours = np.where(above, "tab:blue", "0.7")
    ax.bar(layer, share, color=colours, width=0.7,
           label=f"share from {trials} trials (blue: above the noise floor)")
    ax.errorbar(layer, share, yerr=[np.maximum(share - lo, 0), np.maximum(hi - share, 0)], fmt="none",
                ecolor="0.25", lw=0.8, capsize=1.5, label=f"bootstrap {100 * level:g} % interval")
    # the derivative shares are of the random part only; scaled to the trial shares' sum of the random part
    ax.plot(layer, 100 * np.array([r["share"] for r in rows]) * share.sum() / 100, "k_", ms=8,
            label="first order from the derivatives (scaled to the trials' total)")
    ax.axhline(100 * floor, color="tab:red", lw=1.0, ls="--",
               label=f"noise floor {100 * floor:.2f} % (largest share with the trials shuffled, {100 * level:g} %)")
    ax.set_xlabel("layer (1 = incidence side)")
    ax.set_ylabel("share of the variance of R (%)")
    ax.set_title(f"{title + ': ' if title else ''}which layers' thickness errors matter "
                 f"(linear share of R's variance over the wavelengths)", fontsize=9)
    ax.set_xlim(0.3, layer.max() + 0.7)
    ax.grid(alpha=0.3, axis="y")
    ax.legend(fontsize=7, loc="upper right")
    return fig


def plot_face(wavelengths_nm, R_by_polarisation: dict, transitions: dict, *, grid_nm, R_cone, R_target,
              angle_deg: float, title: str = ""):
    """A splitter face's recipe at its angle: chief-ray R for s, p and their mean, the cone average, the target.

    Parameters
    ----------
    wavelengths_nm : (n,) array_like, nm
        The fine grid of the chief-ray curves.
    R_by_polarisation : dict of str to (n,) array_like
        ``'s'``, ``'p'``, ``'mean'``: chief-ray reflectance, fraction 0-1.
    transitions : dict of str to EdgeTransition
        The same keys (:func:`workbench.analysis.transition.edge_transition`).
    grid_nm : (m,) array_like, nm
        The design's grid.
    R_cone, R_target : (m,) array_like, fraction 0-1
        The recipe averaged over its cone and s, p, and the idealised face it was refined to.
    angle_deg : float
    title : str

    Returns
    -------
    matplotlib.figure.Figure
    """
    wl = np.asarray(wavelengths_nm, dtype=float)
    fig = _figure(7.5, 4.4)
    ax = fig.add_subplot()
    mean = transitions["mean"]
    if np.all(np.isfinite(mean.transition_nm)):
        ax.axvspan(*mean.transition_nm, color="0.92", lw=0, label="transition, mean of s, p (R 90 % → 10 %)")
    if np.all(np.isfinite(mean.pass_band_nm)):
        ax.axvspan(*mean.pass_band_nm, color="#e8f4e8", lw=0,
                   label=f"pass band of the ripple figure (mean: {mean.pass_ripple_pct:.1f} % peak-to-peak)")
    for pol in ("s", "p", "mean"):
        colour, _ = _POL_STYLE[pol]
        t = transitions[pol]
        what = (f"{t.edge_nm:.1f} nm" if np.isfinite(t.edge_nm) else
                (f"{len(t.crossings_nm)} crossings" if t.crossings_nm else "no edge"))
        flag = "" if t.monotone else ", not monotone"
        ax.plot(wl, R_by_polarisation[pol], color=colour, lw=1.0 if pol != "mean" else 1.2,
                ls="--" if pol == "mean" else "-", label=f"chief ray, {pol}: 50 % at {what}{flag}")
        for c in t.crossings_nm:
            ax.plot([c], [0.5], marker="o" if t.monotone else "x", color=colour, ms=5)
    ax.plot(grid_nm, R_cone, color="k", lw=2.0, alpha=0.7, label="over the cone, s and p averaged (what the fit sees)")
    ax.plot(grid_nm, R_target, color="tab:orange", lw=1.2, ls=":", label="idealised face (the refinement's target)")
    ax.axhline(0.5, color="0.6", lw=0.6)
    ax.set_xlim(wl[0], wl[-1])
    ax.set_ylim(-0.02, 1.02)
    ax.set_xlabel(_WL_LABEL)
    ax.set_ylabel("reflectance R (fraction 0-1)")
    ax.set_title(f"{title + ': ' if title else ''}the recipe at {angle_deg:g}° ({_METHOD}; "
                 "edge rule: docs/methods.md §15)", fontsize=9)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=6.5, loc="best")
    return fig
