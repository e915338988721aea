"""Figures of a camera fit: sensitivities against targets, per-sample ΔE00, u′v′ shifts, noise against accuracy.

Every function builds its own :class:`matplotlib.figure.Figure` on the
Agg canvas (no pyplot state, see :mod:`workbench.plots._canvas`), returns
it and never shows it. Axes carry quantity, unit and method; titles name
the matrix rule and the illuminant. The axes sit at fixed margins in
inches, not under a layout engine, and titles at a fixed height (``y=1``;
no tick labels sit above an axes here), so no drawing pass is spent
measuring texts.

The inputs are :class:`workbench.analysis.measures_report.Measures` values (one design
state each) and, for :func:`plot_noise_vs_accuracy`, plain mappings
(see :func:`workbench.report.fit_report.noise_accuracy_points`).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np
from matplotlib.collections import PolyCollection
from matplotlib.lines import Line2D
from matplotlib.patches import Rectangle

from workbench.colorimetry.cie import observer_key
from workbench.errors import WorkbenchError
from workbench.plots._canvas import new_figure, place_axes
from workbench.plots.chromaticity import AXIS_LABELS, draw_spectral_locus
# the rules shared with the report's vector figures live there (no matplotlib)
from workbench.plots.fit_vector import (ARROW_SCALES, NOISE_KEY, NOISE_LABEL, arrow_scale, label_levels, set_runs,
                                        uv_shifts)

__all__ = [
    "plot_sensitivities_vs_targets",
    "plot_delta_e_bars",
    "plot_chromaticity_shifts",
    "plot_noise_vs_accuracy",
    "ARROW_SCALES",
    "arrow_scale",
    "bar_collection",
    "draw_shift_arrows",
]

_CHANNELS = ("R", "G", "B")
_COLOURS = ("tab:red", "tab:green", "tab:blue")
_WL_LABEL = "wavelength λ (nm)"
_DE_LABEL = "ΔE00 (CIEDE2000)"

#: A right arrow as a marker polygon, for legends (a mathtext arrow costs half a second on first use).
ARROW_MARKER = [(-1.0, -0.12), (0.3, -0.12), (0.3, -0.42), (1.0, 0.0), (0.3, 0.42), (0.3, 0.12), (-1.0, 0.12)]


def _matrix_text(measures) -> str:
    return measures.methods.get("matrix", f"{measures.matrix_method}, {measures.matrix_scope}")


# --------------------------------------------------------------------------
# Sensitivities against targets
# --------------------------------------------------------------------------


def plot_sensitivities_vs_targets(measures, before=None, *, fig=None):
    """Camera curves after white balance and matrix against the target colour-matching functions.

    Parameters
    ----------
    measures : Measures
        The design state to show (``curves`` and ``targets``, both (3, n),
        under ``curve_illuminant``).
    before : Measures, optional
        A second state (the start of a fit) drawn thin and pale.
    fig : matplotlib.figure.Figure, optional
        Drawn into (after clearing) instead of a new figure.

    Returns
    -------
    matplotlib.figure.Figure
        Top: camera R, G, B (solid) and targets (dashed). Bottom: the
        residual curves − targets per channel, with its rms in the legend.

    Notes
    -----
    ``curves`` = M·diag(gains)·S and ``targets`` = N⁻¹·A·x̄ȳz̄ / Y_white
    share one scale (a Luther camera draws on its targets). Both are
    divided by the largest absolute target value so the plot reads
    "largest target peak = 1"; the residual panel uses the same factor.
    """
    wl = np.asarray(measures.wavelengths, dtype=float)
    T = np.asarray(measures.targets, dtype=float)
    C = np.asarray(measures.curves, dtype=float)
    scale = float(np.max(np.abs(T)))
    if not math.isfinite(scale) or scale <= 0:
        scale = 1.0
    fig = new_figure(9.0, 7.0, fig)
    place_axes(fig, left=1.0, right=0.12, top=0.55, bottom=0.5, hspace=0.45, rows=2)
    top, bottom = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": [2.2, 1.0]})
    B = None if before is None else np.asarray(before.curves, dtype=float)
    for i, (ch, col) in enumerate(zip(_CHANNELS, _COLOURS)):
        top.plot(wl, T[i] / scale, ls="--", lw=1.4, color=col, label=f"{ch} target")
        top.plot(wl, C[i] / scale, ls="-", lw=2.0, color=col, label=f"{ch} camera")
        if B is not None:
            top.plot(wl, B[i] / scale, ls="-", lw=0.9, color=col, alpha=0.4, label=f"{ch} camera, start")
        r = (C[i] - T[i]) / scale
        bottom.plot(wl, r, lw=1.6, color=col, label=f"{ch}: rms {np.sqrt(np.mean(r * r)):.3f}")
        if B is not None:
            rb = (B[i] - T[i]) / scale
            bottom.plot(wl, rb, lw=0.9, color=col, alpha=0.4,
                        label=f"{ch} start: rms {np.sqrt(np.mean(rb * rb)):.3f}")
    for ax in (top, bottom):
        ax.axhline(0.0, color="0.5", lw=0.6)
        ax.grid(alpha=0.3)
    top.set_ylabel("relative response\n(display RGB; largest target peak = 1)")
    bottom.set_ylabel("camera − target\n(same scale)")
    bottom.set_xlabel(_WL_LABEL)
    bottom.set_xlim(wl[0], wl[-1])
    top.legend(fontsize="x-small", ncol=3 if B is not None else 2, loc="upper right")
    bottom.legend(fontsize="x-small", ncol=3 if B is not None else 3, loc="lower right")
    target = measures.methods.get("target", "the display primaries")
    top.set_title(
        f"Camera after white balance and the {_matrix_text(measures)} matrix under "
        f"{measures.curve_illuminant}\nagainst the target colour-matching functions of {target}",
        fontsize="medium", y=1.0)
    bottom.set_title("residual per wavelength", fontsize="small", y=1.0)
    return fig


# --------------------------------------------------------------------------
# Per-sample ΔE00
# --------------------------------------------------------------------------


def bar_collection(ax, x, heights, colours, width: float = 0.8) -> PolyCollection:
    """Bars of ``heights`` at ``x`` as one collection (one artist, not one patch per bar)."""
    h = np.nan_to_num(np.asarray(heights, dtype=float), nan=0.0)
    x0, x1 = x - width / 2, x + width / 2
    z = np.zeros_like(h)
    verts = np.stack([np.column_stack([x0, z]), np.column_stack([x0, h]),
                      np.column_stack([x1, h]), np.column_stack([x1, z])], axis=1)
    bars = PolyCollection(verts, facecolors=colours, edgecolors="none", label="_bars")
    bars.sticky_edges.y.append(0.0)  # as ax.bar: the axis starts at 0, no margin below the bars
    ax.add_collection(bars, autolim=True)
    ax.autoscale_view()
    return bars


def plot_delta_e_bars(measures, *, label_worst: int = 3, fig=None):
    """Per-sample ΔE00 as bars, one row of axes per illuminant, samples in the design's set order.

    Parameters
    ----------
    measures : Measures
        ``per_sample`` (J, K) ΔE00, ``sample_names`` and ``sample_sets`` (K,),
        ``illuminants`` (J,), ``delta_E00`` statistics.
    label_worst : int
        Name the ``label_worst`` largest samples of each illuminant.
    fig : matplotlib.figure.Figure, optional
        Drawn into (after clearing) instead of a new figure.

    Returns
    -------
    matplotlib.figure.Figure
        Bars coloured by sample set, set boundaries as vertical lines, the
        mean (solid) and 95th percentile (dashed) of each illuminant as
        horizontal lines. Samples keep one position in every row, so one
        sample can be followed across illuminants.
    """
    d = np.atleast_2d(np.asarray(measures.per_sample, dtype=float))
    J, K = d.shape
    names = tuple(measures.sample_names)
    runs = set_runs(tuple(measures.sample_sets))
    fig = new_figure(10.0, 1.0 + 2.3 * J, fig)
    place_axes(fig, left=0.75, right=0.3, top=0.55, bottom=0.85, hspace=0.45, rows=J)
    axes = np.atleast_1d(fig.subplots(J, 1, sharex=True, sharey=True, squeeze=False)[:, 0])
    x = np.arange(K)
    colour_of = np.empty(K, dtype=object)
    for r, (_, a, b) in enumerate(runs):
        colour_of[a:b] = f"C{r % 10}"
    top = float(np.nanmax(d)) if np.isfinite(d).any() else 1.0
    for j, ax in enumerate(axes):
        ill = measures.illuminants[j]
        bar_collection(ax, x, d[j], list(colour_of))
        st = measures.delta_E00[ill]
        ax.axhline(st["mean"], color="k", lw=1.1, label=f"mean {st['mean']:.2f}")
        ax.axhline(st["p95"], color="k", lw=1.0, ls="--", label=f"95th percentile {st['p95']:.2f}")
        for _, a, _b in runs[1:]:
            ax.axvline(a - 0.5, color="0.4", lw=0.8, ls=":")
        worst = np.argsort(-np.nan_to_num(d[j], nan=-1))[:max(0, label_worst)]
        for k, level in zip(sorted(worst), label_levels(sorted(worst), 5)):
            ax.annotate(names[k], (k, d[j, k]), xytext=(0, 2 + 9 * level), textcoords="offset points",
                        ha="center", va="bottom", fontsize=6.5)
        ax.set_ylabel(_DE_LABEL)
        ax.set_ylim(0, top * 1.35 if top > 0 else 1.0)
        ax.set_title(f"{ill}: mean {st['mean']:.2f}, median {st['median']:.2f}, "
                     f"p95 {st['p95']:.2f}, max {st['max']:.2f}", fontsize="small", loc="left", y=1.0)
        ax.legend(fontsize="x-small", loc="upper right")
        ax.grid(axis="y", alpha=0.3)
    axes[-1].set_xlim(-0.8, K - 0.2)
    axes[-1].set_xticks([(a + b - 1) / 2 for _, a, b in runs])
    axes[-1].set_xticklabels([f"{n}\n({b - a} samples)" for n, a, b in runs], fontsize="small")
    axes[-1].set_xlabel("sample, in the design's set order (sets separated by dotted lines)")
    fig.suptitle(f"Per-sample ΔE00 after white balance and the {_matrix_text(measures)} matrix, "
                 "each illuminant", fontsize="medium")
    return fig


# --------------------------------------------------------------------------
# u′v′ shifts
# --------------------------------------------------------------------------


def draw_shift_arrows(fig, ax, start, delta, de, names, *, k, corner, side, label_worst=3,
                      what="start → end", shrink=0.9) -> str:
    """Arrows from ``start`` (K, 2) u′v′ by ``delta`` ×``k``, coloured by ``de`` (ΔE00), on a square view.

    Draws the start points, the arrows with a ΔE00 colour bar, names the
    ``label_worst`` largest without overlapping, sets the view
    ``corner``..``corner + side`` and the u′v′ axis labels. Returns the
    legend text (``what``, with the lengthening said when k > 1).
    """
    what = what + ("" if k == 1 else f", arrows lengthened ×{k}")
    ax.plot(start[:, 0], start[:, 1], "o", ms=3, mfc="white", mec="0.2", mew=0.7, ls="none")
    q = ax.quiver(start[:, 0], start[:, 1], delta[:, 0], delta[:, 1], de, angles="xy", scale_units="xy",
                  scale=1.0 / k, cmap="viridis", width=0.003, headwidth=3.5, headlength=4.5)
    cb = fig.colorbar(q, ax=ax, shrink=shrink)
    cb.set_label(_DE_LABEL)
    worst = sorted(np.argsort(-de)[:max(0, label_worst)], key=lambda i: start[i, 1])
    placed: list = []
    for i in worst:
        near = sum(1 for p in placed if np.linalg.norm(p - start[i]) < 0.06 * side)
        placed.append(start[i])
        ax.annotate(names[i], start[i], xytext=(5, -10 + 10 * near), textcoords="offset points",
                    fontsize=7, color="0.1",
                    bbox={"boxstyle": "round,pad=0.1", "fc": "white", "ec": "none", "alpha": 0.75})
    ax.set_xlim(corner[0], corner[0] + side)
    ax.set_ylim(corner[1], corner[1] + side)
    ax.set_aspect("equal", adjustable="box")
    ax.set_xlabel(AXIS_LABELS["uv"][0])
    ax.set_ylabel(AXIS_LABELS["uv"][1])
    return what


def plot_chromaticity_shifts(measures, illuminant: str | None = None, *, observer="2",
                             label_worst: int = 3, fig=None):
    """CIE 1976 u′v′: an arrow from each sample's true colour to the camera's, under one illuminant.

    Parameters
    ----------
    measures : Measures
        ``true_uv`` and ``camera_uv`` (J, K, 2), ``per_sample`` (J, K).
    illuminant : str, optional
        One of ``measures.illuminants``; default ``measures.curve_illuminant``.
    observer : {'2', '10'}
        Observer of the spectral locus drawn (the design's).
    label_worst : int
        Name the samples with the largest ΔE00.
    fig : matplotlib.figure.Figure, optional
        Drawn into (after clearing) instead of a new figure.

    Returns
    -------
    matplotlib.figure.Figure
        Left: the whole diagram with the spectral locus, the samples and
        the zoomed region (a square around the true colours and the arrow
        tips). Right: the zoomed region with the arrows,
        coloured by the sample's ΔE00; when arrows would be too short to
        see they are lengthened by a factor k from :data:`ARROW_SCALES`,
        said in the legend and title.

    Notes
    -----
    Both colours are those the display should show: the truth adapted to
    the display white (linear Bradford) and the camera after white
    balance and matrix, each converted from CIELAB (display white) to XYZ
    and u′ = 4X/(X + 15Y + 3Z), v′ = 9Y/(X + 15Y + 3Z) (CIE 15:2004 § 8.1).
    """
    ill, t, c, de, names, k, corner, side = uv_shifts(measures, illuminant)
    dv = c - t

    fig = new_figure(12.0, 5.8, fig)
    place_axes(fig, left=0.75, right=0.2, top=0.55, bottom=1.15, wspace=0.9, cols=2)
    full, zoom = fig.subplots(1, 2, gridspec_kw={"width_ratios": [1.0, 1.2]})
    observer = observer_key(observer)
    closed = draw_spectral_locus(full, "uv", observer)
    full.plot(t[:, 0], t[:, 1], "o", ms=2.5, color="0.15", ls="none", label=f"{len(t)} samples (true colour)")
    full.add_patch(Rectangle(corner, side, side, fill=False, ec="tab:orange", lw=1.2,
                             label="region shown at right"))
    full.set_xlim(0, 0.65)
    full.set_ylim(0, 0.65)
    full.set_aspect("equal")
    full.set_xlabel(AXIS_LABELS["uv"][0])
    full.set_ylabel(AXIS_LABELS["uv"][1])
    full.legend(fontsize="x-small", loc="upper center", bbox_to_anchor=(0.5, -0.13), ncol=2)
    full.set_title("CIE 1976 u′v′ diagram", fontsize="small", y=1.0)
    full.grid(alpha=0.3)

    zoom.plot(closed[:, 0], closed[:, 1], color="0.2", lw=1.1)
    what = draw_shift_arrows(fig, zoom, t, dv, de, names, k=k, corner=corner, side=side,
                             label_worst=label_worst, what="true → camera")
    handles = [
        Line2D([], [], marker="o", ms=4, mfc="white", mec="0.2", ls="none",
               label="true colour (adapted to the display white)"),
        Line2D([], [], marker=ARROW_MARKER, ms=14, color="tab:green", ls="none", label=what),
    ]
    zoom.legend(handles=handles, fontsize="x-small", loc="upper center", bbox_to_anchor=(0.5, -0.13), ncol=2)
    zoom.grid(alpha=0.3)
    zoom.set_title(f"{what}; colour = ΔE00", fontsize="small", y=1.0)
    fig.suptitle(f"Colour shifts under {ill}: white balance and the {_matrix_text(measures)} matrix",
                 fontsize="medium")
    return fig


# --------------------------------------------------------------------------
# Noise against accuracy
# --------------------------------------------------------------------------

def plot_noise_vs_accuracy(points: Sequence[Mapping], *, noise: str = "row-norm", fig=None):
    """Scatter of noise against mean ΔE00 for labelled design states.

    Parameters
    ----------
    points : sequence of mappings
        Each with ``label`` (str), ``mean_delta_E00`` (mean ΔE00 over
        samples × illuminants), ``noise_gain`` (largest row norm of the
        matrix) and/or ``sigma_out`` (mean output noise of the grey patch,
        display RGB, white = 1); optional ``method`` (points with the same
        method share a marker and are joined by an arrow in list order) and
        ``state`` (``'start'`` drawn pale, anything else solid).
    noise : {'row-norm', 'sigma-out'}
        Which noise figure goes on the x axis.
    fig : matplotlib.figure.Figure, optional
        Drawn into (after clearing) instead of a new figure.

    Returns
    -------
    matplotlib.figure.Figure
    """
    if noise not in NOISE_KEY:
        raise WorkbenchError(f"noise must be one of {', '.join(NOISE_KEY)} (got {noise!r})")
    key = NOISE_KEY[noise]
    fig = new_figure(7.5, 5.2, fig)
    place_axes(fig, left=0.75, right=0.2, top=0.4, bottom=0.55)
    ax = fig.subplots()
    markers = ("o", "s", "^", "D", "v", "P", "X")
    methods: dict = {}
    for p in points:
        methods.setdefault(p.get("method", p["label"]), []).append(p)
    for m, (method, group) in enumerate(methods.items()):
        xs = np.array([float(p[key]) for p in group])
        ys = np.array([float(p["mean_delta_E00"]) for p in group])
        col = f"C{m % 10}"
        for p, x, y in zip(group, xs, ys):
            start = p.get("state") == "start"
            ax.plot(x, y, markers[m % len(markers)], ms=8, color=col, mfc="white" if start else col,
                    mew=1.5, ls="none", label=str(p["label"]))
        for a in range(len(group) - 1):
            ax.annotate("", (xs[a + 1], ys[a + 1]), (xs[a], ys[a]),
                        arrowprops={"arrowstyle": "->", "color": col, "lw": 1.0, "alpha": 0.7})
    ax.set_xlabel(NOISE_LABEL[noise])
    ax.set_ylabel("mean ΔE00 (CIEDE2000) over samples × illuminants")
    ax.grid(alpha=0.3)
    ax.margins(0.15)
    ax.legend(fontsize="small", loc="best")
    ax.set_title("Noise against accuracy (open: start, filled: fitted)", fontsize="medium", y=1.0)
    return fig
