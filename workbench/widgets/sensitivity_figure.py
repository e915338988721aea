"""The design panel's live figure: the three channel responses against the target functions, residual below."""

from __future__ import annotations

import math

import numpy as np

from workbench.plots.vector import CHANNEL_COLOURS, Figure, stack

__all__ = ["SensitivityFigure"]

_CHANNEL_COLOURS = tuple(CHANNEL_COLOURS[c] for c in ("R", "G", "B"))
_NEUTRAL = "#262626"  # the legend's samples: the line style, not a channel


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

    Drawn as SVG by the package's own plotter (:mod:`workbench.plots.vector`,
    a few milliseconds a picture, no matplotlib), so the panel shows its
    first figure without importing matplotlib (about half a second) and a
    slider move redraws the whole picture in less time than matplotlib
    needed to redraw six lines over a cached background.

    Parameters
    ----------
    wavelengths : (n,) array_like, nm
    width, height : float
        Figure size in px.

    Notes
    -----
    The responses are :attr:`workbench.analysis.measures_report.Measures.curves`: the
    camera's R, G, B after white balance and matrix under the curve
    illuminant, on the scale of the targets (Σ target·E = 1 for the
    white), so response − target is the colour error per wavelength. All
    curves are drawn × one factor that makes the largest target value 1.
    The residual panel's limits are symmetric and change only when the
    residual outgrows them or shrinks below a quarter, so small slider
    moves keep the scale.
    """

    def __init__(self, wavelengths, *, width: float = 640.0, height: float = 470.0):
        self.wavelengths = np.asarray(wavelengths, dtype=float)
        self.width, self.height = float(width), float(height)
        self.scale = 1.0
        self._targets = np.zeros((3, self.wavelengths.size))
        self._title = ""
        self._target_label = "target"
        self._ref = None
        self._ref_label = None
        self._res_lim = None
        self.svg = ""
        self.draws = 0

    # -- static parts ----------------------------------------------------------
    def set_context(self, title: str, target_label: str) -> None:
        """The title (design, matrix, illuminant) and the targets' legend label."""
        self._title = title
        self._target_label = target_label

    def set_targets(self, targets) -> None:
        """The target functions (3, n), dashed."""
        t = np.asarray(targets, dtype=float)
        # one scale for every curve: the largest target value becomes 1
        self.scale = 1.0 / (float(np.max(np.abs(t))) or 1.0)
        self._targets = t * self.scale
        self._res_lim = None

    def set_reference(self, curves, label: str | None) -> None:
        """Reference responses (3, n), dotted (``None`` hides them), e.g. the design before the fit."""
        if curves is None or label is None:
            self._ref, self._ref_label = None, None
        else:
            self._ref = np.asarray(curves, dtype=float) * self.scale
            self._ref_label = label

    # -- the live part -----------------------------------------------------------
    def _residual_limit(self, res: np.ndarray) -> float:
        rmax = float(np.max(np.abs(res))) if res.size else 0.0
        if self._ref is not None:
            rmax = max(rmax, float(np.max(np.abs(self._ref - self._targets))))
        lim = self._res_lim
        if lim is None or rmax > lim or rmax < lim / 4:
            self._res_lim = _nice_ceil(1.1 * rmax)
        return self._res_lim

    def update(self, curves) -> str:
        """Draw new responses (3, n) and return the figure as SVG text."""
        c = np.asarray(curves, dtype=float) * self.scale
        res = c - self._targets
        wl = self.wavelengths
        fig = Figure(self.width, self.height, name="wb-design", alt="channel responses and targets")
        lines = fig.title(self._title, size=11.5, y=6.0)
        top_px = 14 + 15 * lines
        upper, lower = stack(84, top_px, self.width - 100, self.height - top_px - 46, ratios=(3.0, 1.25), gap=12)
        xlim = (float(wl[0]), float(wl[-1])) if wl.size else (0.0, 1.0)
        ax = fig.add_axes(upper, xlim=xlim)
        lim = self._residual_limit(res)
        ax_res = fig.add_axes(lower, share_x=ax, ylim=(-lim, lim), yticks=4)
        ax.tick_labels_x = False
        for a in (ax, ax_res):
            a.hline(0.0, colour="#999999", width=0.7)
        for i, col in enumerate(_CHANNEL_COLOURS):
            ax.line(wl, self._targets[i], colour=col, width=1.3, dash="dashed")
            if self._ref is not None:
                ax.line(wl, self._ref[i], colour=col, width=1.1, dash="dotted", opacity=0.9)
                ax_res.line(wl, self._ref[i] - self._targets[i], colour=col, width=1.0, dash="dotted",
                            opacity=0.9)
            ax.line(wl, c[i], colour=col, width=2.2)
            ax_res.line(wl, res[i], colour=col, width=1.6)
        nan = [math.nan]
        ax.line(nan, nan, colour=_NEUTRAL, width=2.2, label="camera R, G, B (white balance + matrix)")
        ax.line(nan, nan, colour=_NEUTRAL, width=1.3, dash="dashed", label=self._target_label)
        if self._ref is not None:
            ax.line(nan, nan, colour=_NEUTRAL, width=1.1, dash="dotted", label=self._ref_label)
        ax.legend("best", size=10)
        ax.set(ylabel="relative response\n(largest target value = 1)")
        ax_res.set(ylabel="camera − target\n(same scale)", xlabel="wavelength λ (nm)")
        self.svg = fig.svg()
        self.draws += 1
        return self.svg
