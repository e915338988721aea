"""Figures of a light on camera: the SPD, the special indices, per-sample ΔE00, u′v′ shifts, two fixtures.

Every function builds its own :class:`matplotlib.figure.Figure` (no pyplot
state), returns it and never shows it. Axes carry quantity, unit and
method; every figure carries the caution of :data:`workbench.analysis.light.CAUTION`
along its bottom edge.

The inputs are the results of :mod:`workbench.analysis.light`:
:class:`~workbench.analysis.light.LightIndices`,
:class:`~workbench.analysis.light.CameraFidelity` and
:class:`~workbench.analysis.light.LightComparison`.
"""

from __future__ import annotations

import textwrap
from collections.abc import Sequence

import numpy as np
from matplotlib.lines import Line2D
from matplotlib.patches import Rectangle

from workbench.analysis.light import CAUTION, CameraFidelity, LightComparison, LightIndices, reference_illuminant
from workbench.colorimetry.cie import cmfs_on, illuminant_on
from workbench.colorimetry.primaries import primaries_named
from workbench.colorimetry.samples import tcs_cie_13_3
from workbench.errors import WorkbenchError
from workbench.plots._canvas import new_figure
from workbench.plots.chromaticity import AXIS_LABELS, draw_spectral_locus
from workbench.plots.fit import ARROW_MARKER, arrow_scale, bar_collection, draw_shift_arrows  # one rule for every u′v′ shift plot

__all__ = [
    "plot_light_spd",
    "plot_special_indices",
    "plot_camera_delta_e",
    "plot_camera_shifts",
    "plot_comparison",
]

_DE_LABEL = "ΔE00 (CIEDE2000)"
_WL_LABEL = "wavelength λ (nm)"
_SET_COLOURS = {"cie-13.3": "tab:orange", "cie-224": "tab:blue"}
_SET_LABEL = {"cie-13.3": "CIE 13.3 TCS01-14", "cie-224": "CIE 224:2017 CES01-99"}


def _figure(width: float, height: float, fig=None):
    """A constrained-layout figure with room for the caution line at the bottom."""
    fig = new_figure(width, height, fig, layout="constrained")
    engine = fig.get_layout_engine()
    if engine is not None and hasattr(engine, "set"):
        engine.set(rect=(0, 0.045, 1, 0.955))
    # wrapped here by characters (21 per inch: this text in DejaVu Sans 6.5 pt takes 0.047 in a
    # character), not by matplotlib's wrap=True, which measures the line again for every word it
    # drops: two thirds of the time of drawing the figure
    chars = max(40, int(fig.get_size_inches()[0] * 21))
    fig.text(0.5, 0.008, textwrap.fill(f"Caution: {CAUTION}", chars), ha="center", va="bottom", fontsize=6.5,
             color="0.35")
    return fig


def _equal_luminance(wl: np.ndarray, v: np.ndarray) -> np.ndarray:
    """``v`` scaled so its luminance equals that of an equal-energy light of value 1."""
    y = cmfs_on(wl).values[:, 1]
    return v * (y.sum() / (v @ y))


# --------------------------------------------------------------------------
# SPD
# --------------------------------------------------------------------------


def plot_light_spd(lights, *, reference: bool = True, fig=None):
    """The SPD of one light (with its CIE 13.3 reference) or of several lights at equal luminance.

    Parameters
    ----------
    lights : LightIndices or sequence of LightIndices
        From :func:`workbench.analysis.light.light_indices` (each holds its SPD on
        the working grid, its CCT and Duv).
    reference : bool
        With one light, also draw the reference illuminant at its CCT
        (Planckian below 5000 K, CIE daylight at and above), at the same
        luminance.
    fig : matplotlib.figure.Figure, optional

    Returns
    -------
    matplotlib.figure.Figure
        One light with absolute units is drawn in those units; otherwise
        every curve is scaled to the luminance of an equal-energy light of
        value 1 (so curves of different lights can be compared).
    """
    items = [lights] if isinstance(lights, LightIndices) else list(lights)
    fig = _figure(8.0, 4.6, fig)
    ax = fig.subplots()
    one = len(items) == 1
    for k, ind in enumerate(items):
        wl = ind.spd.wavelengths
        v = ind.spd.flat()[0]
        absolute = one and ind.illuminance is not None
        shown = v if absolute else _equal_luminance(wl, v)
        ax.plot(wl, shown, lw=1.6, color=f"C{k}",
                label=f"{ind.name}: CCT {ind.CCT:.0f} K, Duv {ind.Duv:+.4f}")
        if one and reference:
            lab, r = reference_illuminant(ind.CCT, wl)
            r = r * (v @ cmfs_on(wl).values[:, 1]) / (r @ cmfs_on(wl).values[:, 1]) if absolute \
                else _equal_luminance(wl, r)
            ax.plot(wl, r, lw=1.2, ls="--", color="0.35", label=f"reference: {lab} (CIE 13.3 rule), same luminance")
    if one and items[0].illuminance is not None:
        ind = items[0]
        ax.set_ylabel(f"spectral {'irradiance' if ind.illuminance_unit == 'lx' else 'radiance'} "
                      f"({ind.spd.units})")
        extra = f"; {ind.illuminance_quantity} {ind.illuminance:.4g} {ind.illuminance_unit}"
    else:
        ax.set_ylabel("relative spectral power\n(equal luminance: equal-energy light = 1)")
        extra = ""
    ax.set_xlabel(_WL_LABEL)
    ax.set_xlim(min(i.spd.wavelengths[0] for i in items), max(i.spd.wavelengths[-1] for i in items))
    ax.set_ylim(bottom=min(0.0, ax.get_ylim()[0]))
    ax.grid(alpha=0.3)
    ax.legend(fontsize="small", loc="best")
    title = (f"Spectral power distribution of {items[0].name}{extra}" if one
             else "Spectral power distributions at equal luminance (CIE 1931 2° ȳ)")
    ax.set_title(title, fontsize="medium", y=1.0)
    return fig


# --------------------------------------------------------------------------
# Special indices
# --------------------------------------------------------------------------


def _tcs_display_colours() -> np.ndarray:
    """sRGB-like display colours (14, 3) of TCS01-14 under D65, for the bars (BT.709 primaries, 2.2 power)."""
    wl = np.arange(380.0, 781.0, 5.0)
    R = tcs_cie_13_3(wl).flat()
    _, E = illuminant_on(wl, "D65")
    cm = cmfs_on(wl).values
    XYZ = (R * E.values) @ cm / (E.values @ cm[:, 1])
    rgb = XYZ @ primaries_named("ITU-R BT.709").matrix_XYZ_to_RGB.T
    return np.clip(rgb, 0, 1) ** (1 / 2.2)


def plot_special_indices(indices: LightIndices, *, fig=None):
    """Bars of the CIE 13.3 special colour rendering indices R1-R14 with Ra, each bar in its sample's colour.

    Returns
    -------
    matplotlib.figure.Figure
    """
    fig = _figure(8.0, 4.2, fig)
    ax = fig.subplots()
    if indices.R is None:
        ax.text(0.5, 0.5, "CIE 13.3 indices not computed", ha="center", transform=ax.transAxes)
        return fig
    R = np.asarray(indices.R)
    x = np.arange(1, R.size + 1)
    ax.bar(x, R, color=_tcs_display_colours(), edgecolor="0.3", lw=0.6)
    for xi, r in zip(x, R):
        ax.annotate(f"{r:.0f}", (xi, r), xytext=(0, 2 if r >= 0 else -10), textcoords="offset points",
                    ha="center", fontsize=7)
    ax.axhline(indices.Ra, color="k", lw=1.1, label=f"Ra = {indices.Ra:.1f} (mean of R1-R8)")
    ax.axvline(8.5, color="0.5", ls=":", lw=0.9)
    ax.set_xticks(x)
    ax.set_xticklabels([f"R{i}" for i in x])
    ax.set_xlabel("test colour sample (TCS01-TCS14; R1-R8 make Ra, R9-R14 are the special saturated, "
                  "skin and leaf samples)", fontsize="small")
    ax.set_ylabel("special colour rendering index Ri\n(CIE 13.3-1995, max 100)")
    lo = min(0.0, float(R.min()) - 10)
    ax.set_ylim(lo, 112)
    ax.grid(axis="y", alpha=0.3)
    ax.legend(fontsize="small", loc="lower left")
    ax.set_title(f"{indices.name}: CIE 13.3-1995 special indices (workbench)", fontsize="medium", y=1.0)
    return fig


# --------------------------------------------------------------------------
# Camera fidelity
# --------------------------------------------------------------------------


def _runs(sets: Sequence[str]) -> list[tuple[str, int, int]]:
    out, start = [], 0
    for k in range(1, len(sets) + 1):
        if k == len(sets) or sets[k] != sets[start]:
            out.append((sets[start], start, k))
            start = k
    return out


def plot_camera_delta_e(fid: CameraFidelity, *, label_worst: int = 4, fig=None):
    """Per-sample ΔE00 between the camera's renderings under the test light and under the reference.

    Parameters
    ----------
    fid : CameraFidelity
    label_worst : int
        Name the samples with the largest ΔE00.
    fig : matplotlib.figure.Figure, optional

    Returns
    -------
    matplotlib.figure.Figure
        Bars coloured by sample set (sets separated by dotted lines), the
        mean (solid) and the quartic mean ΔE_a that the index scores
        (dashed).
    """
    d = np.asarray(fid.delta_E00, dtype=float)
    K = d.size
    fig = _figure(11.0, 4.6, fig)
    ax = fig.subplots()
    x = np.arange(K)
    cols = [_SET_COLOURS.get(s, "0.5") for s in fid.sample_sets]
    bar_collection(ax, x, d, cols)  # one collection, not 113 patches
    ax.axhline(float(d.mean()), color="k", lw=1.1, label=f"mean ΔE00 {d.mean():.2f}")
    ax.axhline(fid.delta_E_a, color="k", lw=1.0, ls="--",
               label=f"ΔE_a = (mean ΔE00⁴)^¼ = {fid.delta_E_a:.2f} (scored)")
    runs = _runs(fid.sample_sets)
    for _, a, _b in runs[1:]:
        ax.axvline(a - 0.5, color="0.4", lw=0.8, ls=":")
    worst = sorted(np.argsort(-d)[:max(0, label_worst)])
    for n, k in enumerate(worst):
        ax.annotate(fid.sample_names[k], (k, d[k]), xytext=(0, 3 + 9 * (n % 2)), textcoords="offset points",
                    ha="center", va="bottom", fontsize=7)
    top = float(d.max()) if K else 1.0
    ax.set_ylim(0, top * 1.3 if top > 0 else 1.0)
    ax.set_xlim(-0.8, K - 0.2)
    ax.set_xticks([(a + b - 1) / 2 for _, a, b in runs])
    ax.set_xticklabels([f"{_SET_LABEL.get(s, s)} ({b - a} samples)" for s, a, b in runs], fontsize="small")
    ax.set_xlabel("sample (sets separated by dotted lines)")
    ax.set_ylabel(f"{_DE_LABEL}, test light vs reference")
    ax.grid(axis="y", alpha=0.3)
    ax.legend(fontsize="small", loc="upper right")
    ax.set_title(f"Camera fidelity index {fid.index:.1f}: {fid.light} vs {fid.reference} on {fid.camera}\n"
                 "(white balance on the perfect diffuser, the camera's matrix; Tech 3355 scoring of ΔE00 "
                 "on open samples)", fontsize="medium", y=1.0)
    return fig


def plot_camera_shifts(fid: CameraFidelity, *, label_worst: int = 4, fig=None):
    """CIE 1976 u′v′: an arrow per sample from the camera's rendering under the reference to that under the test light.

    Returns
    -------
    matplotlib.figure.Figure
        Left: the whole diagram (spectral locus, samples, the zoomed
        square). Right: the zoomed square with the arrows coloured by ΔE00,
        lengthened ×k when too short to see (said in legend and title).
    """
    r = np.asarray(fid.uv_reference, dtype=float)
    t = np.asarray(fid.uv_test, dtype=float)
    de = np.asarray(fid.delta_E00, dtype=float)
    ok = np.all(np.isfinite(r), axis=1) & np.all(np.isfinite(t), axis=1)
    r, t, de = r[ok], t[ok], de[ok]
    names = [n for n, keep in zip(fid.sample_names, ok) if keep]
    dv = t - r

    def region(points):
        lo, hi = points.min(axis=0), points.max(axis=0)
        side = max(float(np.max(hi - lo)), 0.01) * 1.1
        return (lo + hi) / 2 - side / 2, side

    _, side = region(np.vstack([r, t]))
    k = arrow_scale(np.linalg.norm(dv, axis=1), side)
    corner, side = region(np.vstack([r, r + k * dv]))
    fig = _figure(12.0, 6.2, fig)
    full, zoom = fig.subplots(1, 2, gridspec_kw={"width_ratios": [1.0, 1.25]})
    draw_spectral_locus(full, "uv", "2")
    full.plot(r[:, 0], r[:, 1], "o", ms=2.5, color="0.15", ls="none",
              label=f"{len(r)} samples under the reference")
    full.add_patch(Rectangle(corner, side, side, fill=False, ec="tab:orange", lw=1.2, label="region shown at right"))
    full.set_xlim(0, 0.65)
    full.set_ylim(0, 0.65)
    full.set_aspect("equal")
    full.set_xlabel(AXIS_LABELS["uv"][0])
    full.set_ylabel(AXIS_LABELS["uv"][1])
    full.grid(alpha=0.3)
    full.legend(fontsize="x-small", loc="upper center", bbox_to_anchor=(0.5, -0.12), ncol=2)
    full.set_title("CIE 1976 u′v′ of the camera's renderings", fontsize="small", y=1.0)
    what = draw_shift_arrows(fig, zoom, r, dv, de, names, k=k, corner=corner, side=side,
                             label_worst=label_worst, what="reference → test light", shrink=0.85)
    zoom.grid(alpha=0.3)
    handles = [
        Line2D([], [], marker="o", ms=4, mfc="white", mec="0.2", ls="none", label="rendering under the reference"),
        Line2D([], [], marker=ARROW_MARKER, ms=14, color="tab:green", ls="none", label=what),
    ]
    zoom.legend(handles=handles, fontsize="x-small", loc="upper center", bbox_to_anchor=(0.5, -0.12), ncol=2)
    zoom.set_title(f"{what}; colour = ΔE00", fontsize="small", y=1.0)
    fig.suptitle(f"Colour shifts on camera: {fid.light} vs {fid.reference} ({fid.camera})", fontsize="medium")
    return fig


# --------------------------------------------------------------------------
# Two fixtures
# --------------------------------------------------------------------------


def plot_comparison(cmp: LightComparison, *, mode: str = "side-by-side", label_worst: int = 4, fig=None):
    """Two lights: per-sample ΔE00 on camera against ΔE00 to the eye, with the match / differ thresholds.

    Parameters
    ----------
    cmp : LightComparison
    mode : {'side-by-side', 'each-adapted'}
        Which comparison (see :func:`workbench.analysis.light.compare_lights`).
    label_worst : int
        Name the samples farthest from the diagonal.
    fig : matplotlib.figure.Figure, optional

    Returns
    -------
    matplotlib.figure.Figure
        A scatter of the 113 samples (eye on x, camera on y) with the
        shaded regions "match to the eye, not on camera" (upper left) and
        the reverse (lower right); the means as a star. Without a camera,
        bars of the eye's ΔE00.
    """
    if mode not in cmp.modes:
        raise WorkbenchError(f"mode must be one of {', '.join(cmp.modes)} (got {mode!r})")
    m = cmp.modes[mode]
    fig = _figure(8.5, 6.4, fig)
    ax = fig.subplots()
    e = np.asarray(m.eye, dtype=float)
    cam = f" on {cmp.camera}" if cmp.camera else ""
    head = (f"A = {cmp.light_a}, B = {cmp.light_b}{cam}\n{mode}: Δu′v′ of the lights "
            f"{cmp.delta_u_prime_v_prime:.4f}; verdict: {m.verdict}")
    if m.camera is None:
        bar_collection(ax, np.arange(e.size), e, [_SET_COLOURS.get(s, "0.5") for s in cmp.sample_sets])
        ax.axhline(cmp.match, color="tab:green", ls="--", lw=1, label=f"match ≤ {cmp.match:g}")
        ax.axhline(cmp.differ, color="tab:red", ls="--", lw=1, label=f"differ ≥ {cmp.differ:g}")
        ax.set_xlabel("sample (CIE 13.3 TCS01-14, then CIE 224 CES01-99)")
        ax.set_ylabel(f"{_DE_LABEL} to the eye, A vs B")
        ax.legend(fontsize="small")
        ax.set_title(head, fontsize="medium", y=1.0)
        return fig
    c = np.asarray(m.camera, dtype=float)
    top = max(float(e.max()), float(c.max()), cmp.differ) * 1.1
    ax.fill_between([0, cmp.match], cmp.differ, top, color="tab:red", alpha=0.10,
                    label="match to the eye, not on camera")
    ax.fill_between([cmp.differ, top], 0, cmp.match, color="tab:purple", alpha=0.10,
                    label="match on camera, not to the eye")
    for s in dict.fromkeys(cmp.sample_sets):
        sel = np.array(cmp.sample_sets) == s
        ax.plot(e[sel], c[sel], "o", ms=4, color=_SET_COLOURS.get(s, "0.5"), alpha=0.8, ls="none",
                label=_SET_LABEL.get(s, s))
    ax.plot([0, top], [0, top], color="0.5", lw=0.8, ls=":", label="camera = eye")
    ax.plot(m.eye_mean, m.camera_mean, "*", ms=14, color="k", ls="none",
            label=f"means: eye {m.eye_mean:.2f}, camera {m.camera_mean:.2f}")
    for v in (cmp.match, cmp.differ):
        ax.axvline(v, color="0.6", lw=0.7, ls="--")
        ax.axhline(v, color="0.6", lw=0.7, ls="--")
    far = sorted(np.argsort(-np.abs(c - e))[:max(0, label_worst)])
    for n, k in enumerate(far):
        ax.annotate(cmp.sample_names[k], (e[k], c[k]), xytext=(4, 4 + 8 * (n % 2)), textcoords="offset points",
                    fontsize=7)
    ax.set_xlim(0, top)
    ax.set_ylim(0, top)
    ax.set_aspect("equal", adjustable="box")
    ax.set_xlabel(f"{_DE_LABEL} to the eye, A vs B")
    ax.set_ylabel(f"{_DE_LABEL} on camera, A vs B")
    ax.grid(alpha=0.3)
    ax.legend(fontsize="x-small", loc="upper left", bbox_to_anchor=(1.02, 1.0))
    ax.set_title(head, fontsize="medium", y=1.0)
    return fig
