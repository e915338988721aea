"""Figures of a tolerance analysis: histograms of the trials, the ranking of tolerances, the shift across the field.

Every function builds its own :class:`matplotlib.figure.Figure` (no pyplot
state, any backend), returns it and never shows it. Axes carry quantity,
unit and method; titles name the matrix case. Inputs are
:class:`workbench.analysis.tolerance.ToleranceResult` and
:class:`workbench.analysis.tolerance.FieldShift` values. ``workbench
tolerance --plots`` writes these as PNG files; the notebook and the
tolerance panel show the same figures drawn as SVG by
:mod:`workbench.plots.tolerance_vector` (no matplotlib import).
"""

from __future__ import annotations

import math

import numpy as np

from workbench.plots._canvas import new_figure, place_axes
from workbench.plots.tolerance_vector import RANKING_TOP, histogram_bins

__all__ = ["plot_histograms", "plot_ranking", "plot_field_shift", "RANKING_TOP"]

_CHANNELS = ("R", "G", "B")
_CH_COLOURS = ("tab:red", "tab:green", "tab:blue")
_DE = "ΔE00 (CIEDE2000 units)"


def _figure(width: float, height: float, fig=None):
    return new_figure(width, height, fig, layout="constrained")


def _hist(ax, x, **kw):
    x = np.asarray(x, dtype=float)
    ax.hist(x, bins=histogram_bins(x), histtype="step", lw=1.5, **kw)


def _constant_note(ax, values):
    """Say so when every column of ``values`` (trials, m) is the same in every trial."""
    v = np.asarray(values, dtype=float).reshape(len(values), -1)
    if v.size and np.all(np.ptp(v, axis=0) <= 1e-12 * max(1.0, float(np.abs(v).max()))):
        ax.text(0.5, 0.6, "the same in every unit\n(one matrix for all)", transform=ax.transAxes, va="center",
                ha="center", fontsize="x-small", bbox={"facecolor": "white", "edgecolor": "0.7"})


def plot_histograms(result, *, case: str | None = None, fig=None):
    """Histograms of the trials: ν, mean and max ΔE00, white-balance gains and noise gain.

    Parameters
    ----------
    result : ToleranceResult
    case : {'fixed', 'recalibrated'}, optional
        Matrix case (default: the result's first).
    fig : matplotlib.figure.Figure, optional
        Drawn into (after clearing) instead of a new figure.

    Returns
    -------
    matplotlib.figure.Figure
        Six panels: Vora value; mean ΔE00 per illuminant with the spec
        limit; max ΔE00 per illuminant; gain R/G and B/G per illuminant
        (ratios to the green gain); noise gain (matrix row 2-norms) per
        display channel under the first illuminant. The nominal design is
        a dotted line; the spec limits dashed black lines.
    """
    case = case or result.primary
    a = result.per_case[case]
    nom = result.nominal[case]
    ills = result.illuminants
    spec = result.spec
    fig = new_figure(12.5, 7.2, fig)  # fixed margins (inches): the same texts every time, no layout engine
    place_axes(fig, left=0.7, right=0.15, top=0.55, bottom=0.55, hspace=0.8, wspace=0.75, rows=2, cols=3)
    axes = fig.subplots(2, 3)
    # ν
    ax = axes[0, 0]
    _hist(ax, result.vora_value, color="k", label="trials")
    ax.axvline(float(result.nominal["vora_value"][0]), color="k", ls=":", lw=1.2, label="nominal")
    ax.axvline(spec.min_vora, color="k", ls="--", lw=1.0, label=f"spec ν ≥ {spec.min_vora:g}")
    ax.set_xlabel("Vora value ν (1, 0-1)")
    ax.set_title("Vora value", fontsize="small", y=1.0)
    ax.legend(fontsize="x-small")
    # mean, max ΔE00
    for ax, key, title in ((axes[0, 1], "delta_E00_mean", "mean ΔE00 over the samples"),
                           (axes[0, 2], "delta_E00_max", "max ΔE00 over the samples")):
        for j, ill in enumerate(ills):
            _hist(ax, a[key][:, j], color=f"C{j}", label=ill)
            ax.axvline(float(nom[key][0, j]), color=f"C{j}", ls=":", lw=1.2)
        if key == "delta_E00_mean":
            ax.axvline(spec.max_mean_delta_E00, color="k", ls="--", lw=1.0,
                       label=f"spec ≤ {spec.max_mean_delta_E00:g}")
        ax.set_xlabel(_DE)
        ax.set_title(f"{title} (dotted: nominal)", fontsize="small", y=1.0)
        ax.legend(fontsize="x-small")
    # gains
    for ax, i, name in ((axes[1, 0], 0, "R/G"), (axes[1, 1], 2, "B/G")):
        for j, ill in enumerate(ills):
            g = a["gains"][:, j, i] / a["gains"][:, j, 1]
            _hist(ax, g, color=f"C{j}", label=ill)
            ax.axvline(float(nom["gains"][0, j, i] / nom["gains"][0, j, 1]), color=f"C{j}", ls=":", lw=1.2)
        ax.set_xlabel(f"white-balance gain {name} (1, ratio to the green gain)")
        ax.set_title(f"white-balance gain {name} (dotted: nominal)", fontsize="small", y=1.0)
        ax.legend(fontsize="x-small")
    # noise gain
    ax = axes[1, 2]
    for i, (ch, col) in enumerate(zip(_CHANNELS, _CH_COLOURS)):
        _hist(ax, a["noise_gain"][:, 0, i], color=col, label=f"display {ch}")
        ax.axvline(float(nom["noise_gain"][0, 0, i]), color=col, ls=":", lw=1.2)
    _constant_note(ax, a["noise_gain"][:, 0, :])
    ax.set_xlabel("noise gain (1, row 2-norm of the matrix)")
    ax.set_title(f"noise gain under {ills[0]}", fontsize="small", y=1.0)
    ax.legend(fontsize="x-small")
    for ax in axes.ravel():
        ax.set_ylabel("trials")
        ax.grid(alpha=0.3)
        ax.set_ylim(0, ax.get_ylim()[1] * 1.4)  # room above the tallest bin, so the legend covers no data
    y = result.yield_fraction(case)
    fig.suptitle(
        f"{result.design.name}: {result.trials} trials (seed {result.seed}), matrix {case}; "
        f"yield {100 * y:.1f} % against mean ΔE00 ≤ {spec.max_mean_delta_E00:g} under every illuminant "
        f"and ν ≥ {spec.min_vora:g}" + (" — interrupted" if result.interrupted else ""),
        fontsize="medium")
    return fig


def plot_ranking(result, *, case: str | None = None, response: str = "worst_mean_delta_E00", fig=None,
                 top: int | None = RANKING_TOP):
    """Which tolerance drives the error: variance contribution and one-at-a-time change per parameter.

    Parameters
    ----------
    result : ToleranceResult
    case : str, optional
        Matrix case (default: the result's first).
    response : str
        As :meth:`ToleranceResult.ranking` (default the worst-illuminant
        mean ΔE00).
    fig : matplotlib.figure.Figure, optional
    top : int or None
        Show only this many parameters, the largest variance shares
        (default :data:`RANKING_TOP`); the title says how many more were
        omitted. ``None``: all.

    Returns
    -------
    matplotlib.figure.Figure
        Left: each parameter's share of the variance of the response, the
        first-order correlation ratio η² and the squared standardized
        regression coefficient SRC², in percent; right: the change of the
        response with the parameter alone at nominal − width and + width
        (a tornado chart). Largest contribution on top.
    """
    rk = result.ranking(case, response)
    rows = rk["parameters"]                       # largest variance contribution first
    omitted = 0
    if top is not None and len(rows) > top:
        omitted = len(rows) - top
        rows = rows[:top]
    n = max(1, len(rows))
    fig = _figure(12.0, 1.6 + 0.45 * n, fig)
    left, right = fig.subplots(1, 2, sharey=True)
    y = np.arange(len(rows))[::-1]
    labels = [f"{r['name']}\n" + (f"normal, σ = {r['width']:g}" if r["distribution"] == "normal"
                                  else f"uniform, ± {r['width']:g}") + (f" {r['unit']}" if r["unit"] else "")
              for r in rows]
    eta = np.array([r["variance_contribution"] for r in rows], dtype=float) * 100
    src2 = np.array([r["src2"] for r in rows], dtype=float) * 100
    lo = np.array([r["oat_minus"] for r in rows], dtype=float)
    hi = np.array([r["oat_plus"] for r in rows], dtype=float)
    h = 0.38
    left.barh(y + h / 2, np.nan_to_num(eta), height=h, color="tab:blue", label="correlation ratio η² (bias-corrected)")
    left.barh(y - h / 2, np.nan_to_num(src2), height=h, color="tab:orange", label="SRC²")
    left.set_yticks(y, labels, fontsize="x-small")
    left.set_xlabel("share of the variance of the response (%)")
    r2 = rk["r_squared"]
    left.set_title(f"variance contribution (linear fit R² = {r2:.2f})" if r2 is not None and math.isfinite(r2)
                   else "variance contribution", fontsize="small", y=1.0)
    floor = rk.get("noise_floor")
    if floor is not None and math.isfinite(floor):
        left.axvline(100 * floor, color="tab:red", lw=1.0, ls="--",
                     label=f"noise floor {100 * floor:.1f} % (95 %, largest of {len(rk['parameters'])} without effect)")
    left.set_xlim(0, max(5.0, float(np.nanmax(np.r_[eta, src2, 0])) * 1.1))
    left.legend(fontsize="x-small", loc="lower right")
    right.barh(y, np.nan_to_num(lo), height=0.6, color="tab:cyan", label="at nominal − width")
    right.barh(y, np.nan_to_num(hi), height=0.6, color="tab:purple", alpha=0.75, label="at nominal + width")
    right.axvline(0.0, color="k", lw=0.8)
    unit = "(1)" if response == "vora_value" else "(ΔE00 units)"
    what = {"worst_mean_delta_E00": "worst-illuminant mean ΔE00", "vora_value": "Vora value ν"}.get(
        response, response.replace("delta_E00_mean:", "mean ΔE00 under "))
    right.set_xlabel(f"change of the {what} from the nominal {unit}")
    right.set_title("one at a time: each parameter alone at ∓1 tolerance width", fontsize="small", y=1.0)
    right.legend(fontsize="x-small", loc="lower right")
    for ax in (left, right):
        ax.grid(axis="x", alpha=0.3)
    if not rows:
        left.text(0.5, 0.5, "no toleranced parameter", ha="center", va="center", transform=left.transAxes)
    more = (f"\ntop {len(rows)} of {len(rows) + omitted} parameters by variance share; {omitted} more omitted "
            "(the JSON and CSV list all)") if omitted else ""
    fig.suptitle(f"What drives the {what} — {result.design.name}, matrix {rk['case']}, "
                 f"{result.trials} trials{more}", fontsize="medium")
    return fig


def plot_field_shift(field, *, fig=None):
    """The colour shift across the image at the nominal design.

    Parameters
    ----------
    field : FieldShift
    fig : matplotlib.figure.Figure, optional

    Returns
    -------
    matplotlib.figure.Figure
        Left: the mean (solid) and maximum (dashed) ΔE00 of the samples
        against themselves at the centre, per illuminant, against the
        angle offset of the field position; right: the shift of the white
        (solid) and the grey (dashed). Points labelled with the position
        names.
    """
    off = np.array([p.aoi_offset_deg for p in field.positions])
    order = np.argsort(off, kind="stable")
    x = off[order]
    fig = _figure(12.0, 4.6, fig)
    left, right = fig.subplots(1, 2, sharex=True)
    for j, ill in enumerate(field.illuminants):
        c = f"C{j}"
        left.plot(x, field.sample_shift_mean[order, j], "-o", color=c, label=f"{ill}: mean")
        left.plot(x, field.sample_shift_max[order, j], "--s", color=c, ms=4, label=f"{ill}: max")
        right.plot(x, field.white_shift[order, j], "-o", color=c, label=f"{ill}: white")
        right.plot(x, field.grey_shift[order, j], "--s", color=c, ms=4, label=f"{ill}: grey {field.grey:g}")
    top = float(np.nanmax(field.sample_shift_max)) if field.sample_shift_max.size else 1.0
    left.set_ylim(bottom=0, top=max(top * 1.1, 0.1))
    right.set_ylim(bottom=0)
    # the position names on a top axis at their offsets (names at one offset joined)
    names: dict[float, list[str]] = {}
    for k in order:
        names.setdefault(float(off[k]), []).append(field.positions[k].name)
    for ax in (left, right):
        ax.set_xlabel("angle offset of the chief ray on both splitter faces (degrees, in glass)")
        ax.set_ylabel(f"shift against the centre, {_DE}")
        ax.grid(alpha=0.3)
        ax.legend(fontsize="x-small", ncol=2)
        sec = ax.secondary_xaxis("top")
        # horizontal names (they are short); the titles below leave ``y`` unset so that matplotlib
        # places them above this top axis and its labels instead of across them
        sec.set_xticks(list(names), [" / ".join(v) for v in names.values()], fontsize="x-small")
        sec.tick_params(length=2, pad=1)
    left.set_title("samples: each against itself at the centre", fontsize="small")
    right.set_title("perfect diffuser (white) and grey", fontsize="small")
    fig.suptitle(f"Colour shift across the image ({field.splitter}): white balance and matrix set at the centre",
                 fontsize="medium")
    return fig
