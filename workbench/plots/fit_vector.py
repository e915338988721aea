"""The fit report's figures as vector SVG (:mod:`workbench.plots.vector`), without matplotlib.

The same content as the matplotlib figures of :mod:`workbench.plots.fit`
and :mod:`workbench.plots.chain` (which notebooks and ``evaluate
--figures`` keep using): the same series, titles, axis labels with unit
and method, and legends, drawn at fixed places in pixels. Each function
returns a :class:`workbench.plots.vector.Figure`; ``.svg()`` writes it,
``.data_uri()`` embeds it.

The helpers both kinds of figure share (the arrow lengthening of the u′v′
shifts, the runs of sample sets, the stacking of labels, the noise axis
texts) live here, so that importing them costs no matplotlib.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np

from workbench.colorimetry.cie import cmfs_table, observer_key, observer_label
from workbench.colorimetry.coordinates import XYZ_to_uv_prime
from workbench.errors import WorkbenchError
from workbench.plots.vector import (CHANNEL_COLOURS, MARKERS, PALETTE, Figure, colour_map, nice_limits, stack,
                                    text_width)

__all__ = [
    "sensitivities_figure",
    "delta_e_bars_figure",
    "chromaticity_figure",
    "noise_accuracy_figure",
    "chain_figure",
    "front_figure",
    "ARROW_SCALES",
    "arrow_scale",
    "set_runs",
    "label_levels",
    "uv_region",
    "uv_shifts",
    "NOISE_LABEL",
    "NOISE_KEY",
    "WL_LABEL",
    "DE_LABEL",
    "UV_LABELS",
]

#: Factors the u′v′ arrows may be lengthened by (the first that makes them visible).
ARROW_SCALES = (1, 2, 5, 10, 20, 50, 100, 200, 500, 1000)
WL_LABEL = "wavelength λ (nm)"
DE_LABEL = "ΔE00 (CIEDE2000)"
UV_LABELS = ("u′ (CIE 1976 UCS)", "v′ (CIE 1976 UCS)")
NOISE_LABEL = {
    "row-norm": "noise gain: largest row norm ‖mᵢ‖ of the matrix (identity = 1)",
    "sigma-out": "output noise σ_out of the grey patch, display RGB (white = 1)",
}
NOISE_KEY = {"row-norm": "noise_gain", "sigma-out": "sigma_out"}
_CHANNELS = ("R", "G", "B")
_LOCUS_LABELS_NM = (460, 480, 500, 520, 540, 560, 580, 600, 620)


# --------------------------------------------------------------------------
# Shared helpers
# --------------------------------------------------------------------------


def arrow_scale(lengths: np.ndarray, extent: float) -> int:
    """The first of ARROW_SCALES making the median arrow at least 3 % of the view."""
    med = float(np.median(lengths)) if np.size(lengths) else 0.0
    if med <= 0 or extent <= 0:
        return 1
    for k in ARROW_SCALES:
        if med * k >= 0.03 * extent:
            return k
    return ARROW_SCALES[-1]


def set_runs(sets: Sequence[str]) -> list[tuple[str, int, int]]:
    """(name, first index, end index) of each run of equal set names, in order."""
    runs = []
    start = 0
    for k in range(1, len(sets) + 1):
        if k == len(sets) or sets[k] != sets[start]:
            runs.append((sets[start], start, k))
            start = k
    return runs


def label_levels(positions, near: float) -> list[int]:
    """Stacking level of each label (positions sorted) so labels closer than ``near`` do not collide."""
    levels: list[int] = []
    for i, x in enumerate(positions):
        taken = {levels[m] for m in range(i) if abs(positions[m] - x) < near}
        level = 0
        while level in taken:
            level += 1
        levels.append(level)
    return levels


def uv_region(points: np.ndarray) -> tuple[np.ndarray, float]:
    """A square around u′v′ ``points`` (n, 2) with a margin: (lower-left corner, side)."""
    if not len(points):
        return np.array([0.15, 0.4]), 0.1
    lo, hi = points.min(axis=0), points.max(axis=0)
    side = max(float(np.max(hi - lo)), 0.01) * 1.08
    return (lo + hi) / 2 - side / 2, side


def _num(value, fmt: str) -> str:
    """``value`` formatted by ``fmt``; '—' for a missing or non-finite number (never 'nan' in a picture)."""
    try:
        x = float(value)
    except (TypeError, ValueError):
        return "—"
    return format(x, fmt) if math.isfinite(x) else "—"


def _matrix_text(measures) -> str:
    return measures.methods.get("matrix", f"{measures.matrix_method}, {measures.matrix_scope}")


def _spectral_locus_uv(observer: str) -> tuple[np.ndarray, np.ndarray]:
    """Wavelengths (n,) nm and u′v′ (n, 2) of the spectral locus 380-700 nm (CIE 15:2004 § 8.1)."""
    wl, cm = cmfs_table(observer)
    keep = (wl >= 380) & (wl <= 700)
    return wl[keep], XYZ_to_uv_prime(np.asarray(cm)[keep])


# --------------------------------------------------------------------------
# Sensitivities against targets
# --------------------------------------------------------------------------


def sensitivities_figure(measures, before=None) -> Figure:
    """Camera R, G, B after white balance and matrix (solid) against the targets (dashed), with the residual.

    As :func:`workbench.plots.fit.plot_sensitivities_vs_targets`: both
    divided by the largest absolute target value; ``before`` (the start of
    a fit) pale; the residual panel below shares the wavelength axis and
    gives each channel's rms in its legend.
    """
    wl = np.asarray(measures.wavelengths, dtype=float)
    T = np.asarray(measures.targets, dtype=float)
    C = np.asarray(measures.curves, dtype=float)
    scale = float(np.max(np.abs(T))) if T.size else 1.0
    if not math.isfinite(scale) or scale <= 0:
        scale = 1.0
    B = None if before is None else np.asarray(before.curves, dtype=float)
    fig = Figure(920, 660, name="sensitivities", alt="sensitivities against targets with residual panel")
    target = measures.methods.get("target", "the display primaries")
    title_lines = fig.title(f"Camera after white balance and the {_matrix_text(measures)} matrix under "
                            f"{measures.curve_illuminant}\nagainst the target colour-matching functions of {target}")
    top_box, bottom_box = stack(96, 84, 620, 660 - 84 - 62, ratios=(2.2, 1.0), gap=44)
    xlim = (float(wl[0]), float(wl[-1])) if wl.size else (0.0, 1.0)
    top = fig.add_axes(top_box, xlim=xlim)
    bottom = fig.add_axes(bottom_box, share_x=top, yticks=4)
    top.tick_labels_x = False
    for ax in (top, bottom):
        ax.hline(0.0, colour="#888888", width=0.7)
    for i, ch in enumerate(_CHANNELS):
        col = CHANNEL_COLOURS[ch]
        top.line(wl, T[i] / scale, colour=col, width=1.5, dash="dashed", label=f"{ch} target")
        top.line(wl, C[i] / scale, colour=col, width=2.2, label=f"{ch} camera")
        if B is not None:
            top.line(wl, B[i] / scale, colour=col, width=1.0, opacity=0.45, label=f"{ch} camera, start")
        r = (C[i] - T[i]) / scale
        bottom.line(wl, r, colour=col, width=1.7, label=f"{ch}: rms {_num(np.sqrt(np.mean(r * r)), '.3f')}")
        if B is not None:
            rb = (B[i] - T[i]) / scale
            bottom.line(wl, rb, colour=col, width=1.0, opacity=0.45,
                        label=f"{ch} start: rms {_num(np.sqrt(np.mean(rb * rb)), '.3f')}")
    top.set(ylabel="relative response\n(display RGB; largest target peak = 1)")
    bottom.set(ylabel="camera − target\n(same scale)", xlabel=WL_LABEL, title="residual per wavelength")
    top.legend("right")
    bottom.legend("right")
    fig.grow(18 * (title_lines - 2))  # a long name wrapped: the panels move down
    return fig


# --------------------------------------------------------------------------
# Per-sample ΔE00
# --------------------------------------------------------------------------


def delta_e_bars_figure(measures, *, label_worst: int = 3) -> Figure:
    """Per-sample ΔE00 as bars, one panel per illuminant, samples in the design's set order.

    As :func:`workbench.plots.fit.plot_delta_e_bars`: bars coloured by
    sample set, set boundaries dotted, the mean (solid) and 95th
    percentile (dashed) of each illuminant, the ``label_worst`` largest
    named; one sample keeps its position in every panel.
    """
    d = np.atleast_2d(np.asarray(measures.per_sample, dtype=float))
    J, K = d.shape
    names = tuple(measures.sample_names)
    runs = set_runs(tuple(measures.sample_sets))
    colour_of = [PALETTE[0]] * K
    for r, (_, a, b) in enumerate(runs):
        colour_of[a:b] = [PALETTE[r % len(PALETTE)]] * (b - a)
    finite = d[np.isfinite(d)]
    peak = float(finite.max()) if finite.size else 1.0
    ylim = nice_limits(0.0, peak * 1.35 if peak > 0 else 1.0, 5)
    panel_h, gap = 190.0, 58.0
    height = 58 + J * panel_h + (J - 1) * gap + 84
    fig = Figure(920, height, name="delta-e-bars", alt="per-sample ΔE00 bars per illuminant")
    title_lines = fig.title(f"Per-sample ΔE00 after white balance and the {_matrix_text(measures)} matrix, "
                            "each illuminant")
    boxes = stack(72, 76, 660, J * panel_h + (J - 1) * gap, ratios=(1.0,) * J, gap=gap)
    x = np.arange(K, dtype=float)
    first = None
    for j, box in enumerate(boxes):
        ill = measures.illuminants[j]
        st = measures.delta_E00[ill]
        ax = fig.add_axes(box, xlim=(-0.8, K - 0.2), ylim=ylim, share_x=first, yticks=5)
        first = first or ax
        ax.bars(x, np.where(np.isfinite(d[j]), d[j], np.nan), colours=colour_of)
        for _, a, _b in runs[1:]:
            ax.vline(a - 0.5, colour="#666666", width=0.9, dash="dotted")
        ax.hline(st["mean"], colour="#111111", width=1.2, label=f"mean {_num(st['mean'], '.2f')}")
        ax.hline(st["p95"], colour="#111111", width=1.1, dash="dashed",
                 label=f"95th percentile {_num(st['p95'], '.2f')}")
        worst = np.argsort(-np.nan_to_num(d[j], nan=-1))[:max(0, label_worst)]
        # names closer than their width (in bars) stack upwards
        near = (max((text_width(names[k], 9.5) for k in worst), default=0.0) + 6) / (box[2] / max(K, 1))
        for k, level in zip(sorted(worst), label_levels(sorted(worst), near)):
            ax.annotate(names[k], k, d[j, k], dy=3 + 12 * level, size=9.5, anchor="middle")
        ax.set(ylabel=DE_LABEL, grid="y",
               title=(f"{ill}: mean {_num(st['mean'], '.2f')}, median {_num(st['median'], '.2f')}, "
                      f"p95 {_num(st['p95'], '.2f')}, max {_num(st['max'], '.2f')}"))
        ax.tick_labels_x = j == J - 1
        ax.legend("right")
    first.xticks([(a + b - 1) / 2 for _, a, b in runs], [f"{n}\n({b - a} samples)" for n, a, b in runs])
    fig.axes[-1].set(xlabel="sample, in the design's set order (sets separated by dotted lines)")
    fig.grow(18 * (title_lines - 1))
    return fig


# --------------------------------------------------------------------------
# u′v′ shifts
# --------------------------------------------------------------------------


def uv_shifts(measures, illuminant: str | None = None):
    """The u′v′ shifts both chromaticity figures draw: finite samples, arrow factor and zoom square.

    Returns
    -------
    tuple
        ``(illuminant, true_uv (m, 2), camera_uv (m, 2), delta_E00 (m,),
        sample names, arrow factor k, zoom corner (2,), zoom side)``: the
        samples with finite u′v′ under ``illuminant`` (default the curve
        illuminant), k from :func:`arrow_scale`, the square around the true
        colours and the lengthened arrow tips.
    """
    ill = illuminant or measures.curve_illuminant
    if ill not in measures.illuminants:
        raise WorkbenchError(f"illuminant must be one of {', '.join(measures.illuminants)} (got {ill!r})")
    j = measures.illuminants.index(ill)
    t = np.asarray(measures.true_uv, dtype=float)[j]
    c = np.asarray(measures.camera_uv, dtype=float)[j]
    de = np.asarray(measures.per_sample, dtype=float)[j]
    ok = np.all(np.isfinite(t), axis=1) & np.all(np.isfinite(c), axis=1)
    t, c, de = t[ok], c[ok], de[ok]
    names = [n for n, keep in zip(measures.sample_names, ok) if keep]
    dv = c - t
    _, side = uv_region(np.vstack([t, c]) if len(t) else t)
    k = arrow_scale(np.linalg.norm(dv, axis=1), side)
    corner, side = uv_region(np.vstack([t, t + k * dv]) if len(t) else t)
    return ill, t, c, de, names, k, corner, side


def chromaticity_figure(measures, illuminant: str | None = None, *, observer="2", label_worst: int = 3) -> Figure:
    """CIE 1976 u′v′: the diagram with the samples, and a zoom with an arrow from each true colour to the camera's.

    As :func:`workbench.plots.fit.plot_chromaticity_shifts`: arrows
    coloured by ΔE00 (colour bar), lengthened by a factor from
    :data:`ARROW_SCALES` when too short to see, said in the legend and the
    zoom's title.
    """
    ill, t, c, de, names, k, corner, side = uv_shifts(measures, illuminant)
    dv = c - t
    what = "true → camera" + ("" if k == 1 else f", arrows lengthened ×{k}")

    key = observer_key(observer)
    wl, locus = _spectral_locus_uv(key)
    closed = np.vstack([locus, locus[:1]])
    fig = Figure(1040, 600, name="chromaticity", alt="u′v′ diagram with arrows from true to camera colour")
    title_lines = fig.title(f"Colour shifts under {ill}: white balance and the {_matrix_text(measures)} matrix")
    full = fig.add_axes((78, 72, 390, 390), xlim=(0, 0.65), ylim=(0, 0.65), equal=True)
    full.line(closed[:, 0], closed[:, 1], colour="#333333", width=1.2,
              label=f"spectral locus 380-700 nm ({observer_label(key)})")
    for w in _LOCUS_LABELS_NM:
        i = int(np.argmin(np.abs(wl - w)))
        full.annotate(f"{w:g}", locus[i, 0], locus[i, 1], dx=4, dy=3, size=9, colour="#555555")
    full.markers(t[:, 0], t[:, 1], size=3.5, fill="#262626", label=f"{len(t)} samples (true colour)")
    full.polygon([corner[0], corner[0] + side, corner[0] + side, corner[0]],
                 [corner[1], corner[1], corner[1] + side, corner[1] + side], edge="#e07b20", width=1.4,
                 label="region shown at right")
    full.set(xlabel=UV_LABELS[0], ylabel=UV_LABELS[1], title="CIE 1976 u′v′ diagram")
    full.legend("below")

    hi = float(np.max(de)) if de.size and np.isfinite(de).any() else 1.0
    de_hi = nice_limits(0.0, hi if hi > 0 else 1.0, 5)[1]
    zoom = fig.add_axes((572, 72, 390, 390), xlim=(corner[0], corner[0] + side),
                        ylim=(corner[1], corner[1] + side), equal=True, xticks=5, yticks=5)
    zoom.line(closed[:, 0], closed[:, 1], colour="#333333", width=1.2)
    zoom.markers(t[:, 0], t[:, 1], size=5, fill="#ffffff", edge="#333333", edge_width=0.9,
                 label="true colour (adapted to the display white)")
    zoom.arrows(t[:, 0], t[:, 1], k * dv[:, 0], k * dv[:, 1], colours=colour_map(de, 0.0, de_hi), width=1.2,
                head=6.5, label=what, legend_colour=colour_map([0.5], 0.0, 1.0)[0])
    worst = sorted(np.argsort(-np.nan_to_num(de, nan=-1))[:max(0, label_worst)], key=lambda i: t[i, 1])
    placed: list = []
    for i in worst:
        near = sum(1 for p in placed if np.linalg.norm(p - t[i]) < 0.06 * side)
        placed.append(t[i])
        zoom.annotate(names[i], t[i, 0], t[i, 1], dx=6, dy=-12 + 12 * near, size=9.5)
    zoom.colorbar(0.0, de_hi, label=DE_LABEL)
    zoom.set(xlabel=UV_LABELS[0], ylabel=UV_LABELS[1], title=f"{what}; colour = ΔE00")
    zoom.legend("below")
    fig.grow(18 * (title_lines - 1))
    return fig


# --------------------------------------------------------------------------
# Noise against accuracy
# --------------------------------------------------------------------------


def noise_accuracy_figure(points: Sequence[Mapping], *, noise: str = "row-norm") -> Figure:
    """Noise against mean ΔE00 of labelled design states (start open, fitted filled; one marker per matrix rule).

    As :func:`workbench.plots.fit.plot_noise_vs_accuracy`; points of one
    ``method`` are joined by an arrow in list order.
    """
    if noise not in NOISE_KEY:
        raise WorkbenchError(f"noise must be one of {', '.join(NOISE_KEY)} (got {noise!r})")
    key = NOISE_KEY[noise]
    fig = Figure(780, 540, name="noise-accuracy", alt="noise gain against mean ΔE00 for three matrix rules")
    fig.title("Noise against accuracy (open: start, filled: fitted)")
    ax = fig.add_axes((84, 48, 670, 540 - 48 - 62), margin=(0.15, 0.15))
    methods: dict = {}
    for p in points:
        methods.setdefault(p.get("method", p["label"]), []).append(p)
    for m, (_, group) in enumerate(methods.items()):
        col = PALETTE[m % len(PALETTE)]
        xs = np.array([float(p[key]) for p in group])
        ys = np.array([float(p["mean_delta_E00"]) for p in group])
        if len(group) > 1:
            ax.arrows(xs[:-1], ys[:-1], np.diff(xs), np.diff(ys), colours=col, width=1.1, head=8, shrink=6)
        for p, x, y in zip(group, xs, ys):
            start = p.get("state") == "start"
            ax.markers([x], [y], shape=MARKERS[m % 3], size=10, fill="#ffffff" if start else col, edge=col,
                       edge_width=1.6, label=str(p["label"]))
    ax.set(xlabel=NOISE_LABEL[noise], ylabel="mean ΔE00 (CIEDE2000) over samples × illuminants")
    ax.legend("best")
    return fig


# --------------------------------------------------------------------------
# The chain
# --------------------------------------------------------------------------


def chain_figure(wavelengths, curves) -> Figure:
    """Every element's curve (dashed, on the channels it sits on) and the running product per channel (solid).

    As :func:`workbench.plots.chain.plot_chain`: one panel per channel R,
    G, B sharing the wavelength axis, 0-1 transmittance or quantum
    efficiency.
    """
    wl = np.asarray(wavelengths, dtype=float)
    labels = [f"{c.name} ({c.type})" for c in curves] + ["cumulative R"]
    legend_w = max(text_width(s, 10.5) for s in labels) + 50
    width = max(760.0, 90 + 560 + legend_w + 16)
    entries = max((sum(1 for c in curves if ch in c.paths) + 1 for ch in _CHANNELS), default=1)
    panel_h = max(200.0, 15.75 * entries + 20)  # each panel as tall as its legend at least
    height = 66 + 3 * panel_h + 2 * 48 + 62
    fig = Figure(width, height, name="chain", alt="element curves and their product along each channel's path")
    fig.title("The fitted chain element by element")
    boxes = stack(90, 66, width - 90 - legend_w - 16, 3 * panel_h + 2 * 48, ratios=(1, 1, 1), gap=48)
    xlim = (float(wl[0]), float(wl[-1])) if wl.size else (0.0, 1.0)
    axes = []
    total = np.ones((3, wl.size))
    for k, (ch, box) in enumerate(zip(_CHANNELS, boxes)):
        ax = fig.add_axes(box, xlim=xlim if k == 0 else None, share_x=axes[0] if axes else None, ylim=(0, 1.05),
                          yticks=5)
        ax.tick_labels_x = k == 2
        axes.append(ax)
    for j, c in enumerate(curves):
        v = np.asarray(c.values, dtype=float)
        total = total * v
        for k, ch in enumerate(_CHANNELS):
            if ch in c.paths:
                axes[k].line(wl, v[k], colour=PALETTE[j % len(PALETTE)], width=1.2, dash="dashed",
                             label=f"{c.name} ({c.type})")
    for k, ch in enumerate(_CHANNELS):
        axes[k].line(wl, total[k], colour=CHANNEL_COLOURS[ch], width=2.4, label=f"cumulative {ch}")
        axes[k].set(ylabel=f"{ch}: transmittance / QE (0-1)",
                    title=f"channel {ch}: element curves and product along the path")
        axes[k].legend("right")
    axes[-1].set(xlabel=WL_LABEL)
    return fig


# --------------------------------------------------------------------------
# The accuracy-noise front
# --------------------------------------------------------------------------


def front_figure(front, *, chosen: int = 0) -> Figure:
    """The accuracy-noise front: mean ΔE00 against noise gain (RMS row norm), each point's t, the chosen starred."""
    x = np.array([float(p["noise_gain_rms"]) for p in front])
    y = np.array([float(p["mean_delta_E00"]) for p in front])
    fig = Figure(780, 520, name="front",
                 alt="the accuracy-noise front: mean ΔE00 against noise gain, the written fit starred")
    fig.title("Accuracy against noise")
    ax = fig.add_axes((84, 48, 670, 520 - 48 - 62), margin=(0.08, 0.1))
    ax.line(x, y, colour=PALETTE[0], width=1.6)
    ax.markers(x, y, size=8, fill=PALETTE[0], edge="#ffffff", edge_width=0.8, label="non-dominated fits")
    for p, xi, yi in zip(front, x, y):
        ax.annotate(f"t = {_num(p['t'], '.2g')}", xi, yi, dx=7, dy=5, size=10)
    if 0 <= chosen < len(front):
        ax.markers([x[chosen]], [y[chosen]], shape="star", size=15, fill=PALETTE[3], edge="#ffffff",
                   edge_width=0.6, label="the written fit")
    ax.set(xlabel="noise gain: RMS row norm of the matrix (1 = no gain)",
           ylabel="mean ΔE00 (CIEDE2000), samples × illuminants")
    ax.legend("best")
    return fig
