"""The tolerance analysis's figures as vector SVG (:mod:`workbench.plots.vector`), without matplotlib.

The same content as the matplotlib figures of
:mod:`workbench.plots.tolerance` (which ``workbench tolerance --plots``
keeps writing as PNG files): the same series, titles, axis labels with
unit and method, and legends, drawn at fixed places in pixels. The
notebook and the tolerance panel show these, so neither imports
matplotlib. Each function returns a :class:`workbench.plots.vector.Figure`;
``.svg()`` writes it, a notebook shows it.

:func:`histogram_bins` is the binning both kinds of figure share.
"""

from __future__ import annotations

import math

import numpy as np

from workbench.plots.vector import CHANNEL_COLOURS, PALETTE, Figure, nice_limits, stack, text_width

__all__ = ["histograms_figure", "ranking_figure", "field_shift_figure", "histogram_bins", "RANKING_TOP"]

#: The most parameters the ranking figure shows (the largest variance shares); the JSON/CSV keep all.
RANKING_TOP = 25
_DE = "ΔE00 (CIEDE2000 units)"
_CHANNELS = ("R", "G", "B")


def histogram_bins(x, n_max: int = 40):
    """Bins of a histogram of ``x``: √n bins (10 to ``n_max``), or one narrow bin when every value is the same.

    Returns an int (number of equal bins over the finite range) or the bin
    edges (array), as :func:`numpy.histogram` takes them.
    """
    x = np.asarray(x, dtype=float)
    x = x[np.isfinite(x)]
    if x.size == 0:
        return 10
    lo, hi = float(x.min()), float(x.max())
    if hi - lo <= 1e-12 * max(1.0, abs(hi)):
        return np.array([lo - 0.5e-3 * max(1.0, abs(lo)), hi + 0.5e-3 * max(1.0, abs(hi))])
    return int(min(n_max, max(10, round(math.sqrt(x.size)))))


def _steps(x):
    """The step outline (xs, ys) of the histogram of the finite values of ``x``; empty arrays when none."""
    x = np.asarray(x, dtype=float).ravel()
    x = x[np.isfinite(x)]
    if x.size == 0:
        return np.array([]), np.array([])
    counts, edges = np.histogram(x, bins=histogram_bins(x))
    return np.repeat(edges, 2), np.concatenate([[0.0], np.repeat(counts.astype(float), 2), [0.0]])


def _histogram_axes(fig, box, series, lines=()):
    """Axes at ``box`` with step histograms ``series`` [(values, colour, label)] and vertical ``lines``
    [(x, colour, dash, label)]; the count axis from 0 with room above the tallest bin for the legend."""
    steps = [(_steps(v), c, lab) for v, c, lab in series]
    peak = max((float(ys.max()) for (_, ys), _, _ in steps if ys.size), default=1.0)
    ax = fig.add_axes(box, ylim=nice_limits(0.0, max(peak, 1.0) * 1.5), margin=(0.04, 0.0), nice=(False, True))
    for (xs, ys), c, lab in steps:
        if xs.size:
            ax.line(xs, ys, colour=c, width=1.5, label=lab)
    for x, c, dash, lab in lines:
        ax.vline(x, colour=c, dash=dash, width=1.2 if dash == "dotted" else 1.0, label=lab)
    return ax


def _constant_note(fig, ax, values) -> None:
    """Say so when every column of ``values`` (trials, m) is the same in every trial."""
    v = np.asarray(values, dtype=float).reshape(len(values), -1)
    if v.size and np.all(np.ptp(v, axis=0) <= 1e-12 * max(1.0, float(np.abs(v).max()))):
        left, top, w, h = ax.box
        fig.text(left + w / 2, top + 0.4 * h, "the same in every unit\n(one matrix for all)", size=10,
                 anchor="middle", va="middle")


def histograms_figure(result, *, case: str | None = None) -> Figure:
    """Histograms of the trials: ν, mean and max ΔE00, white-balance gains and noise gain.

    As :func:`workbench.plots.tolerance.plot_histograms`: six panels (Vora
    value; mean ΔE00 per illuminant with the spec limit; max ΔE00 per
    illuminant; gain R/G and B/G per illuminant, ratios to the green gain;
    noise gain, matrix row 2-norms, per display channel under the first
    illuminant); the nominal design dotted, the spec limits dashed black.
    """
    case = case or result.primary
    a = result.per_case[case]
    nom = result.nominal[case]
    ills = result.illuminants
    spec = result.spec
    fig = Figure(1250, 760, name=f"tolerance-histograms-{case}", alt=f"histograms of the trials, matrix {case}")
    y = result.yield_fraction(case)
    lines = fig.title(
        f"{result.design.name}: {result.trials} trials (seed {result.seed}), matrix {case}; "
        f"yield {100 * y:.1f} % against mean ΔE00 ≤ {spec.max_mean_delta_E00:g} under every illuminant "
        f"and ν ≥ {spec.min_vora:g}" + (" — interrupted" if result.interrupted else ""), size=14)
    rows = stack(0, 62, 1250, 620, ratios=(1.0, 1.0), gap=95)
    boxes = [box for _, top, _, h in rows
             for box in stack(78, top, 1140, h, ratios=(1.0, 1.0, 1.0), gap=95, horizontal=True)]
    colours = [PALETTE[j % len(PALETTE)] for j in range(len(ills))]
    axes = []
    # ν
    ax = _histogram_axes(fig, boxes[0], [(result.vora_value, "#111111", "trials")],
                         [(float(result.nominal["vora_value"][0]), "#111111", "dotted", "nominal"),
                          (spec.min_vora, "#111111", "dashed", f"spec ν ≥ {spec.min_vora:g}")])
    axes.append(ax.set(xlabel="Vora value ν (1, 0-1)", title="Vora value"))
    # mean, max ΔE00
    for box, key, title in ((boxes[1], "delta_E00_mean", "mean ΔE00 over the samples"),
                            (boxes[2], "delta_E00_max", "max ΔE00 over the samples")):
        marks = [(float(nom[key][0, j]), colours[j], "dotted", None) for j in range(len(ills))]
        if key == "delta_E00_mean":
            marks.append((spec.max_mean_delta_E00, "#111111", "dashed", f"spec ≤ {spec.max_mean_delta_E00:g}"))
        ax = _histogram_axes(fig, box, [(a[key][:, j], colours[j], ill) for j, ill in enumerate(ills)], marks)
        axes.append(ax.set(xlabel=_DE, title=f"{title} (dotted: nominal)"))
    # gains
    for box, i, name in ((boxes[3], 0, "R/G"), (boxes[4], 2, "B/G")):
        with np.errstate(divide="ignore", invalid="ignore"):
            g = a["gains"][:, :, i] / a["gains"][:, :, 1]
            g0 = nom["gains"][0, :, i] / nom["gains"][0, :, 1]
        ax = _histogram_axes(fig, box, [(g[:, j], colours[j], ill) for j, ill in enumerate(ills)],
                             [(float(g0[j]), colours[j], "dotted", None) for j in range(len(ills))])
        axes.append(ax.set(xlabel=f"white-balance gain {name} (1, ratio to the green gain)",
                           title=f"white-balance gain {name} (dotted: nominal)"))
    # noise gain
    chans = [CHANNEL_COLOURS[ch] for ch in _CHANNELS]
    ax = _histogram_axes(fig, boxes[5], [(a["noise_gain"][:, 0, i], chans[i], f"display {ch}")
                                         for i, ch in enumerate(_CHANNELS)],
                         [(float(nom["noise_gain"][0, 0, i]), chans[i], "dotted", None) for i in range(3)])
    _constant_note(fig, ax, a["noise_gain"][:, 0, :])
    axes.append(ax.set(xlabel="noise gain (1, row 2-norm of the matrix)", title=f"noise gain under {ills[0]}"))
    for ax in axes:
        ax.set(ylabel="trials", grid="xy")
        ax.legend("best", size=9.5)
    fig.grow(18 * (lines - 1))
    return fig


def _hbars(ax, y, x0, x1, *, height: float, colour: str, opacity: float = 1.0, label: str | None = None) -> None:
    """Horizontal bars from ``x0`` to ``x1`` at rows ``y`` (bars not finite left out); one legend entry."""
    first = True
    for yy, a, b in zip(np.asarray(y, dtype=float), np.broadcast_to(x0, np.shape(y)), np.asarray(x1, dtype=float)):
        if not (math.isfinite(a) and math.isfinite(b)) or a == b:
            continue
        ax.polygon([a, b, b, a], [yy - height / 2, yy - height / 2, yy + height / 2, yy + height / 2],
                   fill=colour, opacity=opacity, label=label if first else None)
        first = False
    if first and label:  # no bar drawn: the legend still names the series
        ax.polygon([np.nan], [np.nan], fill=colour, opacity=opacity, label=label)


def ranking_figure(result, *, case: str | None = None, response: str = "worst_mean_delta_E00",
                   top: int | None = RANKING_TOP) -> Figure:
    """Which tolerance drives the error: variance contribution and one-at-a-time change per parameter.

    As :func:`workbench.plots.tolerance.plot_ranking`: left, each
    parameter's share of the variance of the response (correlation ratio
    η², bias-corrected, and SRC², in percent) with the noise floor; right,
    the change of the response with the parameter alone at nominal − width
    and + width. Largest contribution on top; ``top`` parameters at most
    (the title says how many more were omitted; ``None``: all).
    """
    rk = result.ranking(case, response)
    rows = rk["parameters"]
    omitted = 0
    if top is not None and len(rows) > top:
        omitted = len(rows) - top
        rows = rows[:top]
    n = max(1, len(rows))
    unit = "(1)" if response == "vora_value" else "(ΔE00 units)"
    what = {"worst_mean_delta_E00": "worst-illuminant mean ΔE00", "vora_value": "Vora value ν"}.get(
        response, response.replace("delta_E00_mean:", "mean ΔE00 under "))
    more = (f"\ntop {len(rows)} of {len(rows) + omitted} parameters by variance share; {omitted} more omitted "
            "(the JSON and CSV list all)") if omitted else ""
    panel_h = 46.0 * n + 40
    fig = Figure(1250, panel_h + 176 + 18 * more.count("\n"), name="tolerance-ranking", alt=f"what drives the {what}")
    lines = fig.title(f"What drives the {what} — {result.design.name}, matrix {rk['case']}, "
                      f"{result.trials} trials{more}", size=14)
    top_px = 66 + 18 * (lines - 1)
    labels = [f"{r['name']}\n" + (f"normal, σ = {r['width']:g}" if r["distribution"] == "normal"
                                  else f"uniform, ± {r['width']:g}") + (f" {r['unit']}" if r["unit"] else "")
              for r in rows]
    label_w = max((text_width(s, 10) for lab in labels for s in lab.split("\n")), default=60.0)
    left_x = 20 + label_w + 10
    width = 1250 - left_x - 30 - 40
    lbox, rbox = stack(left_x, top_px, width, panel_h, ratios=(1.0, 1.1), gap=40, horizontal=True)
    y = np.arange(len(rows), dtype=float)[::-1]
    ylim = (-0.6, n - 0.4)
    eta = np.array([r["variance_contribution"] for r in rows], dtype=float) * 100
    src2 = np.array([r["src2"] for r in rows], dtype=float) * 100
    lo = np.array([r["oat_minus"] for r in rows], dtype=float)
    hi = np.array([r["oat_plus"] for r in rows], dtype=float)
    peak = float(np.nanmax(np.r_[eta, src2, 0.0])) if np.any(np.isfinite(np.r_[eta, src2, 0.0])) else 0.0
    xlim_left = nice_limits(0.0, max(5.0, peak * 1.1))
    left = fig.add_axes(lbox, xlim=xlim_left, ylim=ylim)
    right = fig.add_axes(rbox, ylim=ylim, margin=(0.05, 0.0))
    h = 0.38
    _hbars(left, y + h / 2, 0.0, np.nan_to_num(eta), height=h, colour=PALETTE[0],
           label="correlation ratio η² (bias-corrected)")
    _hbars(left, y - h / 2, 0.0, np.nan_to_num(src2), height=h, colour=PALETTE[1], label="SRC²")
    floor = rk.get("noise_floor")
    if floor is not None and math.isfinite(floor):
        left.vline(100 * floor, colour=CHANNEL_COLOURS["R"], width=1.0, dash="dashed",
                   label=f"noise floor {100 * floor:.1f} % (95 %, largest of {len(rk['parameters'])} without effect)")
    for yy, lab in zip(y.tolist(), labels):
        left.annotate(lab, xlim_left[0], yy, dx=-7, size=10, anchor="end", va="middle", halo=False)
    if not rows:
        left.annotate("no toleranced parameter", sum(xlim_left) / 2, 0.0, anchor="middle", va="middle")
    r2 = rk["r_squared"]
    left.set(xlabel="share of the variance of the response (%)", grid="x",
             title=(f"variance contribution (linear fit R² = {r2:.2f})" if r2 is not None and math.isfinite(r2)
                    else "variance contribution"))
    _hbars(right, y, 0.0, np.nan_to_num(lo), height=0.6, colour=PALETTE[9], label="at nominal − width")
    _hbars(right, y, 0.0, np.nan_to_num(hi), height=0.6, colour=PALETTE[4], opacity=0.75, label="at nominal + width")
    right.vline(0.0, colour="#111111", width=0.8)
    right.set(xlabel=f"change of the {what} from the nominal {unit}", grid="x",
              title="one at a time: each parameter alone at ∓1 tolerance width")
    for ax in (left, right):
        ax.tick_labels_y = False
        ax.legend("lower right", size=9.5)
    return fig


def field_shift_figure(field) -> Figure:
    """The colour shift across the image at the nominal design.

    As :func:`workbench.plots.tolerance.plot_field_shift`: left, the mean
    (solid, circles) and maximum (dashed, squares) ΔE00 of the samples
    against themselves at the centre, per illuminant, against the angle
    offset of the field position; right, the shift of the white (solid)
    and the grey (dashed). The position names at their offsets along the
    top of each panel.
    """
    off = np.array([p.aoi_offset_deg for p in field.positions], dtype=float)
    order = np.argsort(off, kind="stable")
    x = off[order]
    names: dict[float, list[str]] = {}
    for k in order:
        names.setdefault(float(off[k]), []).append(field.positions[k].name)
    fig = Figure(1250, 510, name="tolerance-field-shift", alt="colour shift across the image")
    lines = fig.title(f"Colour shift across the image ({field.splitter}): white balance and matrix set at "
                      "the centre", size=14)

    def top_of(values) -> float:
        v = np.asarray(values, dtype=float)
        v = v[np.isfinite(v)]
        return float(v.max()) if v.size else 1.0

    lbox, rbox = stack(80, 62, 1140, 330, ratios=(1.0, 1.0), gap=95, horizontal=True)
    ylims = (nice_limits(0.0, max(top_of(field.sample_shift_max) * 1.1, 0.1)),
             nice_limits(0.0, max(top_of(np.r_[field.white_shift.ravel(), field.grey_shift.ravel()]) * 1.1, 0.1)))
    left = fig.add_axes(lbox, ylim=ylims[0], margin=(0.05, 0.0), nice=(False, True))
    right = fig.add_axes(rbox, ylim=ylims[1], margin=(0.05, 0.0), nice=(False, True), share_x=left)
    for j, ill in enumerate(field.illuminants):
        c = PALETTE[j % len(PALETTE)]
        for ax, a, b, la, lb in ((left, field.sample_shift_mean, field.sample_shift_max, "mean", "max"),
                                 (right, field.white_shift, field.grey_shift, "white", f"grey {field.grey:g}")):
            ax.line(x, a[order, j], colour=c, width=1.6, label=f"{ill}: {la}")
            ax.markers(x, a[order, j], shape="circle", size=7, fill=c)
            ax.line(x, b[order, j], colour=c, width=1.4, dash="dashed", label=f"{ill}: {lb}")
            ax.markers(x, b[order, j], shape="square", size=5.5, fill=c)
    for ax, (_, y_top) in zip((left, right), ylims):
        for pos, v in names.items():
            ax.vline(pos, colour="#999999", width=0.8, dash="dotted")
            ax.annotate(" / ".join(v), pos, y_top, dy=-5, size=10, anchor="middle", va="top")
        ax.set(xlabel="angle offset of the chief ray on both splitter faces (degrees, in glass)",
               ylabel=f"shift against the centre, {_DE}", grid="xy")
        ax.legend("below", ncol=2, size=9.5)
    left.set(title="samples: each against itself at the centre")
    right.set(title="perfect diffuser (white) and grey")
    fig.grow(18 * (lines - 1))
    return fig
