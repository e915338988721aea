"""The design panel's live figure: the three channel responses against the target functions, residual below."""

from __future__ import annotations

import io
import math

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from PIL import Image  # matplotlib's own PNG writer

__all__ = ["SensitivityFigure"]

_CHANNEL_COLOURS = ("tab:red", "tab:green", "tab:blue")


def _nice_ceil(v: float) -> float:
    if v <= 0 or not math.isfinite(v):
        return 1.0
    e = 10 ** math.floor(math.log10(v))
    for m in (1, 1.5, 2, 3, 5, 7.5, 10):
        if m * e >= v:
            return m * e
    return 10 * e  # pragma: no cover



# --------------------------------------------------------------------------
# The design panel's live figure
# --------------------------------------------------------------------------


class SensitivityFigure:
    """The design panel's figure: camera responses against the targets, with the residual below.

    One matplotlib figure is made once; an update only moves the data of the
    six changing lines (three responses, three residuals) and redraws them
    over a cached background (Agg blitting). The axes, labels, targets and
    the reference curves are redrawn only when they change or when a curve
    leaves the current limits.

    Parameters
    ----------
    wavelengths : (n,) array_like, nm
    width, height : float
        Figure size in inches; ``dpi`` the pixels per inch.

    Notes
    -----
    The responses are :attr:`workbench.analysis.measures_report.Measures.curves`: the
    camera's R, G, B after white balance and matrix under the curve
    illuminant, on the scale of the targets (Σ target·E = 1 for the
    white), so response − target is the colour error per wavelength. All
    curves are drawn × one factor that makes the largest target value 1.
    """

    def __init__(self, wavelengths, *, width: float = 7.4, height: float = 5.2, dpi: int = 84):
        self.wavelengths = np.asarray(wavelengths, dtype=float)
        self.fig = Figure(figsize=(width, height), dpi=dpi)
        self.canvas = FigureCanvasAgg(self.fig)
        gs = self.fig.add_gridspec(2, 1, height_ratios=(3, 1.25), left=0.12, right=0.985,
                                   top=0.815, bottom=0.095, hspace=0.1)
        self.ax = self.fig.add_subplot(gs[0])
        self.ax_res = self.fig.add_subplot(gs[1], sharex=self.ax)
        wl = self.wavelengths
        z = np.zeros_like(wl)
        self._cam = [self.ax.plot(wl, z, color=c, lw=2.0, animated=True)[0] for c in _CHANNEL_COLOURS]
        self._tgt = [self.ax.plot(wl, z, color=c, lw=1.2, ls="--")[0] for c in _CHANNEL_COLOURS]
        self._ref = [self.ax.plot(wl, z, color=c, lw=1.0, ls=":", alpha=0.9)[0] for c in _CHANNEL_COLOURS]
        self._res = [self.ax_res.plot(wl, z, color=c, lw=1.5, animated=True)[0] for c in _CHANNEL_COLOURS]
        self._ref_res = [self.ax_res.plot(wl, z, color=c, lw=0.9, ls=":")[0] for c in _CHANNEL_COLOURS]
        for a in (self.ax, self.ax_res):
            a.axhline(0, color="0.6", lw=0.6)
            a.grid(alpha=0.25)
        self.ax.set_xlim(wl[0], wl[-1])
        self.ax.tick_params(labelbottom=False, labelsize=9)
        self.ax_res.tick_params(labelsize=9)
        self.ax.set_ylabel("relative response\n(largest target value = 1)", fontsize=9.5)
        self.ax_res.set_ylabel("camera − target\n(same scale)", fontsize=9.5)
        self.ax_res.set_xlabel("wavelength λ (nm)", fontsize=9.5)
        self._proxies = [Line2D([], [], color="0.15", lw=2.0), Line2D([], [], color="0.15", lw=1.2, ls="--"),
                         Line2D([], [], color="0.15", lw=1.0, ls=":")]
        self._legend = None
        self._title = self.fig.suptitle("", fontsize=9.5, x=0.02, ha="left", y=0.99, va="top")
        self.scale = 1.0
        self._target_label = "target"
        self._ref_label = None
        self._bg = None
        self._stale = True
        self._res_lim = None
        self.full_draws = 0

    # -- static parts ----------------------------------------------------------
    def set_context(self, title: str, target_label: str) -> None:
        """The title (design, matrix, illuminant) and the targets' legend label."""
        self._title.set_text(title)
        self._target_label = target_label
        self._stale = True

    def set_targets(self, targets) -> None:
        """The target functions (3, n), dashed."""
        t = np.asarray(targets, dtype=float)
        # one scale for every curve: the largest target value becomes 1
        self.scale = 1.0 / (float(np.max(np.abs(t))) or 1.0)
        t = t * self.scale
        for i in range(3):
            self._tgt[i].set_ydata(t[i])
        self._targets = t
        self._stale = True

    def set_reference(self, curves, label: str | None) -> None:
        """Reference responses (3, n), dotted (``None`` hides them), e.g. the design before the fit."""
        if curves is None or label is None:
            for ln in self._ref + self._ref_res:
                ln.set_visible(False)
            self._ref_label = None
        else:
            c = np.asarray(curves, dtype=float) * self.scale
            for i in range(3):
                self._ref[i].set_ydata(c[i])
                self._ref[i].set_visible(True)
                self._ref_res[i].set_ydata(c[i] - self._targets[i])
                self._ref_res[i].set_visible(True)
            self._ref_label = label
        self._stale = True

    def _limits(self, curves, res) -> bool:
        """Set the y limits when the data leave them (or shrink far inside); True when changed."""
        changed = False
        data = [self._targets, curves] + ([np.array([ln.get_ydata() for ln in self._ref])]
                                          if self._ref_label else [])
        lo = min(float(np.min(d)) for d in data)
        hi = max(float(np.max(d)) for d in data)
        span = hi - lo or 1.0
        cur = self.ax.get_ylim()
        need = (lo - 0.06 * span, hi + 0.06 * span)
        if self._stale or need[0] < cur[0] or need[1] > cur[1] or (need[1] - need[0]) < 0.6 * (cur[1] - cur[0]):
            self.ax.set_ylim(need)
            changed = True
        rmax = float(np.max(np.abs(res)))
        if self._ref_label:
            rmax = max(rmax, float(np.max(np.abs([ln.get_ydata() for ln in self._ref_res]))))
        lim = self._res_lim
        if self._stale or lim is None or rmax > lim or rmax < lim / 4:
            self._res_lim = _nice_ceil(1.1 * rmax)
            self.ax_res.set_ylim(-self._res_lim, self._res_lim)
            changed = True
        return changed

    def _full_draw(self) -> None:
        if self._legend is not None:
            self._legend.remove()
        labels = ["camera R, G, B (white balance + matrix)", self._target_label]
        handles = self._proxies[:2]
        if self._ref_label:
            labels.append(self._ref_label)
            handles = self._proxies
        self._legend = self.fig.legend(handles, labels, fontsize=8, loc="lower left", ncol=3,
                                       bbox_to_anchor=(0.12, 0.822), frameon=False, borderaxespad=0,
                                       handlelength=2.4, columnspacing=1.2)
        self.canvas.draw()
        self._bg = self.canvas.copy_from_bbox(self.fig.bbox)
        self._stale = False
        self.full_draws += 1

    # -- the live part -----------------------------------------------------------
    def update(self, curves) -> bytes:
        """Draw new responses (3, n) and return the PNG bytes of the figure."""
        c = np.asarray(curves, dtype=float) * self.scale
        res = c - self._targets
        for i in range(3):
            self._cam[i].set_ydata(c[i])
            self._res[i].set_ydata(res[i])
        if self._limits(c, res) or self._stale or self._bg is None:
            self._full_draw()
        else:
            self.canvas.restore_region(self._bg)
        for ln in self._cam:
            self.ax.draw_artist(ln)
        for ln in self._res:
            self.ax_res.draw_artist(ln)
        return self.png()

    def png(self) -> bytes:
        """PNG bytes of what the canvas holds now (fast zlib level)."""
        w, h = self.canvas.get_width_height()
        img = Image.frombuffer("RGBA", (w, h), self.canvas.buffer_rgba(), "raw", "RGBA", 0, 1)
        buf = io.BytesIO()
        img.convert("RGB").save(buf, format="PNG", compress_level=1)
        return buf.getvalue()
