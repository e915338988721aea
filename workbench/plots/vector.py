"""A small vector plotter: figures written as standalone SVG text, without matplotlib.

The fit report's figures are drawn with it (:mod:`workbench.plots.fit_vector`):
importing matplotlib alone costs more than the report's whole time budget,
and a report only needs lines, markers, bars, arrows, texts and legends
at fixed places. Everything here is plain Python and numpy.

A :class:`Figure` has a size in pixels, texts of its own and axes at
boxes given in pixels (:meth:`Figure.add_axes`, :func:`stack`). An
:class:`Axes` collects series in data coordinates and turns them into
pixels when the figure is written (:meth:`Figure.svg`), so its limits can
come from the data (widened to 'nice' ticks) or be set, and panels can
share an axis (``share_x``).

What the output promises (tests/test_vector_figures.py checks it):

* well-formed standalone SVG 1.1 (``xmlns`` set, one ``<svg>`` root),
  every text XML-escaped, characters XML cannot hold replaced by U+FFFD;
* deterministic: the same calls give the same bytes (no dates, no random
  ids; clip ids are numbered in order);
* compact: coordinates rounded to 0.1 px, repeated points dropped, one
  ``<path>`` per series (markers and bars of one colour included);
* no NaN or infinity in the file: non-finite points break a line, and are
  skipped as markers, bars or arrows; pixels are clamped far outside the
  picture (and clipped to the axes).

Text widths (for legends and label placement) are estimated from the
advance widths of DejaVu Sans, the first font the figures ask for.
"""

from __future__ import annotations

import base64
import math
import re
from collections.abc import Sequence

import numpy as np

__all__ = [
    "Figure",
    "Axes",
    "stack",
    "nice_step",
    "nice_ticks",
    "nice_limits",
    "tick_labels",
    "text_width",
    "wrap_text",
    "xml_escape",
    "colour_map",
    "MARKERS",
    "PALETTE",
    "CHANNEL_COLOURS",
    "FONT_FAMILY",
]

#: The fonts a figure asks for, first choice first.
FONT_FAMILY = "DejaVu Sans, Verdana, Helvetica, Arial, sans-serif"
#: Series colours in order (our own set: distinct in hue and lightness, readable on white).
PALETTE = ("#2f6fb0", "#e07b20", "#2e9a4b", "#c23b3b", "#7b57b5", "#8c5a3c", "#d15c9e", "#6b6b6b",
           "#a6a21c", "#1fa5b8")
#: The colours of the camera's R, G, B channels.
CHANNEL_COLOURS = {"R": "#c8302c", "G": "#2b8c3e", "B": "#2a5db0"}
_TEXT = "#222222"
_AXIS = "#444444"
_GRID = "#e3e3e3"
_DASHES = {"solid": None, "dashed": "6 3.5", "dotted": "1.5 2.5", "dashdot": "7 3 1.5 3"}
#: Pixel coordinates are clamped to ±this (far outside any picture; the axes clip them).
_FAR = 1e5

# --------------------------------------------------------------------------
# Text
# --------------------------------------------------------------------------

_INVALID_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff\ud800-\udfff]")


def xml_escape(text) -> str:
    """``text`` as XML character data or attribute value.

    ``& < > " '`` are escaped; characters XML 1.0 forbids (C0 controls but
    tab and newlines, surrogates, U+FFFE, U+FFFF) become U+FFFD.
    """
    s = _INVALID_XML.sub("\ufffd", str(text))
    return (s.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace('"', "&quot;")
            .replace("'", "&#39;"))


# DejaVu Sans advance widths in thousandths of an em (from memory, rounded; the font's own table
# has units of 1/2048 em). Characters not listed count as 0.62 em, wide enough for Greek and symbols.
_WIDTHS = {}
for _chars, _w in (("il.,:;'|!ı", 0.29), ("jI", 0.30), (" ", 0.32), ("ft()[]{}/\\", 0.40), ("r", 0.41),
                   ("-‐", 0.36), ("s\"", 0.52), ("cz", 0.55), ("vxyk", 0.59), ("ae", 0.61),
                   ("bdghnopqu0123456789$#_", 0.635), ("FLJTZ", 0.60), ("PSEYK", 0.65), ("BRAXV", 0.69),
                   ("CD", 0.73), ("GNUHOQ", 0.77), ("w", 0.82), ("M", 0.86), ("mW%", 0.97),
                   ("=+×−<>~", 0.84), ("…", 1.0), ("′", 0.25), ("·", 0.32)):
    for _c in _chars:
        _WIDTHS[_c] = _w
# combining marks (the bar of r̄) take no width
_ZERO_WIDTH = {"\u0304", "\u0305", "\u0302", "\u0303", "\u200b"}


def wrap_text(text, size: float, width: float) -> list[str]:
    """``text`` in lines at most ``width`` px wide at ``size`` px (broken at '\\n', then between words)."""
    out = []
    for line in str(text).split("\n"):
        words = line.split(" ")
        current = words[0]
        for w in words[1:]:
            if text_width(current + " " + w, size) <= width:
                current += " " + w
            else:
                out.append(current)
                current = w
        out.append(current)
    return out


def text_width(text: str, size: float) -> float:
    """Estimated width in px of ``text`` set in DejaVu Sans at ``size`` px (the longest line of several)."""
    return max(size * sum(0.0 if c in _ZERO_WIDTH else _WIDTHS.get(c, 0.62) for c in line)
               for line in str(text).split("\n"))


# --------------------------------------------------------------------------
# Numbers
# --------------------------------------------------------------------------


def _n(v: float) -> str:
    """One coordinate rounded to 0.1 px, shortest form ('12', '12.5', '-0.3')."""
    s = f"{v:.1f}"
    if s.endswith(".0"):
        s = s[:-2]
    return "0" if s == "-0" else s


def _pairs(px: np.ndarray, py: np.ndarray) -> list[str]:
    """'x,y' texts of finite points rounded to 0.1 px, consecutive repeats dropped."""
    xs = np.round(np.clip(px, -_FAR, _FAR), 1)
    ys = np.round(np.clip(py, -_FAR, _FAR), 1)
    keep = np.ones(xs.size, dtype=bool)
    keep[1:] = (xs[1:] != xs[:-1]) | (ys[1:] != ys[:-1])
    return [f"{_n(x)},{_n(y)}" for x, y in zip(xs[keep].tolist(), ys[keep].tolist())]


def nice_step(span: float, count: float = 6) -> float:
    """The 1, 2, 2.5 or 5 × 10ᵏ step giving about ``count`` intervals over ``span`` (common practice)."""
    if not (math.isfinite(span) and span > 0):
        return 1.0
    raw = span / max(count, 1)
    k = math.floor(math.log10(raw))
    for m in (1.0, 2.0, 2.5, 5.0, 10.0):
        if m * 10.0 ** k >= raw * (1 - 1e-9):
            return m * 10.0 ** k
    return 10.0 ** (k + 1)


def nice_ticks(lo: float, hi: float, count: float = 6, step: float | None = None) -> np.ndarray:
    """Multiples of a nice step (or ``step``) inside ``[lo, hi]`` (ends included within 1e-9 of the span)."""
    if not (math.isfinite(lo) and math.isfinite(hi)) or hi <= lo:
        return np.array([lo]) if math.isfinite(lo) else np.array([])
    step = step or nice_step(hi - lo, count)
    eps = 1e-9 * (hi - lo)
    first = math.ceil((lo - eps) / step)
    last = math.floor((hi + eps) / step)
    ticks = np.arange(first, last + 1) * step
    return np.where(np.abs(ticks) < 1e-12 * step, 0.0, ticks)


def nice_limits(lo: float, hi: float, count: float = 6) -> tuple[float, float]:
    """``[lo, hi]`` widened to the nearest multiples of a nice step of about ``count``/2 ticks' spacing
    (a flat range made one unit wide)."""
    if not (math.isfinite(lo) and math.isfinite(hi)):
        return 0.0, 1.0
    if hi <= lo:
        half = 0.5 if lo == 0 else abs(lo) * 0.05
        lo, hi = lo - half, hi + half
    step = nice_step(hi - lo, 2 * count)  # half a tick step at most: ticks cover the range, little is wasted
    return (float(f"{math.floor(lo / step + 1e-9) * step:.12g}"),
            float(f"{math.ceil(hi / step - 1e-9) * step:.12g}"))


def tick_labels(ticks: Sequence[float]) -> list[str]:
    """Tick texts with the decimals their step needs, a true minus sign, no '-0'."""
    t = np.asarray(ticks, dtype=float)
    if t.size == 0:
        return []
    step = float(np.min(np.diff(t))) if t.size > 1 else (abs(float(t[0])) or 1.0)
    big = float(np.max(np.abs(t)))
    if big >= 1e6 or (0 < step < 1e-4):
        out = [f"{v:.3g}" for v in t]
    else:
        dec = 0
        while dec < 8 and np.any(np.abs(np.round(t, dec) - t) > 1e-9 * max(step, 1e-300)):
            dec += 1
        out = [f"{v:.{dec}f}" for v in t]
    return ["0" if re.fullmatch(r"-0\.?0*", s) else s.replace("-", "−") for s in out]


# --------------------------------------------------------------------------
# Colour
# --------------------------------------------------------------------------

# viridis at 0, 0.1, …, 1 (from memory; the matplotlib colour map by van der Walt and Smith, CC0)
_VIRIDIS = ("#440154", "#482475", "#414487", "#355f8d", "#2a788e", "#21918c", "#22a884", "#44bf70",
            "#7ad151", "#bddf26", "#fde725")


def _rgb(hexcolour: str) -> tuple[int, int, int]:
    h = hexcolour.lstrip("#")
    return int(h[0:2], 16), int(h[2:4], 16), int(h[4:6], 16)


def colour_map(values, lo: float, hi: float) -> list[str]:
    """Hex colours of ``values`` on a perceptually ordered dark-blue → yellow scale over ``[lo, hi]`` (NaN grey)."""
    v = np.asarray(values, dtype=float)
    span = hi - lo if hi > lo else 1.0
    anchors = np.array([_rgb(c) for c in _VIRIDIS], dtype=float)
    pos = np.linspace(0.0, 1.0, len(_VIRIDIS))
    t = np.clip((np.nan_to_num(v, nan=lo) - lo) / span, 0.0, 1.0)
    rgb = np.stack([np.interp(t, pos, anchors[:, c]) for c in range(3)], axis=-1)
    out = ["#%02x%02x%02x" % tuple(int(round(c)) for c in row) for row in np.atleast_2d(rgb)]
    return [("#999999" if not math.isfinite(x) else c) for x, c in zip(v.ravel().tolist(), out)]


# --------------------------------------------------------------------------
# SVG pieces
# --------------------------------------------------------------------------


def _style(*, stroke=None, width=None, fill="none", dash=None, opacity=None, cap=None, join=None) -> str:
    parts = [f'fill="{fill}"']
    if stroke:
        parts.append(f'stroke="{stroke}"')
        if width is not None:
            parts.append(f'stroke-width="{round(float(width), 2):g}"')
        if dash:
            parts.append(f'stroke-dasharray="{_DASHES.get(dash, dash)}"')
        if cap:
            parts.append(f'stroke-linecap="{cap}"')
        if join:
            parts.append(f'stroke-linejoin="{join}"')
    if opacity is not None and opacity < 1:
        parts.append(f'opacity="{opacity:g}"')
    return " ".join(parts)


def _path(d: str, **style) -> str:
    """A <path> with data ``d`` and the :func:`_style` of ``style``."""
    return f'<path d="{d}" {_style(**style)}/>'


def _text_svg(x: float, y: float, text, *, size: float = 12, anchor: str = "start", va: str = "baseline",
              colour: str = _TEXT, weight: str | None = None, rotate: float = 0.0, halo: bool = False,
              italic: bool = False) -> str:
    """A <text> at (x, y) px; lines split at '\\n'.

    ``va``: the first line's baseline at y ('baseline'), the block's middle
    ('middle'), its top ('top') or the last line's bottom ('bottom').
    """
    lines = str(text).split("\n")
    n = len(lines)
    lead = 1.2 * size
    shift = {"baseline": 0.0, "top": 0.78 * size, "middle": 0.35 * size - (n - 1) * lead / 2,
             "bottom": -(n - 1) * lead - 0.22 * size}[va]
    attrs = [f'x="{_n(x)}"', f'y="{_n(y + shift)}"', f'font-size="{size:g}"']
    if anchor != "start":
        attrs.append(f'text-anchor="{anchor}"')
    if colour != _TEXT:
        attrs.append(f'fill="{colour}"')
    if weight:
        attrs.append(f'font-weight="{weight}"')
    if italic:
        attrs.append('font-style="italic"')
    if rotate:
        attrs.append(f'transform="rotate({rotate:g} {_n(x)} {_n(y)})"')
    if halo:
        attrs.append('stroke="#ffffff" stroke-width="3" stroke-opacity="0.85" paint-order="stroke"')
    if n == 1:
        body = xml_escape(lines[0])
    else:
        body = "".join(f'<tspan x="{_n(x)}" dy="{0 if i == 0 else _n(lead)}">{xml_escape(s)}</tspan>'
                       for i, s in enumerate(lines))
    return f"<text {' '.join(attrs)}>{body}</text>"


def _marker_path(shape: str, x: float, y: float, r: float) -> str:
    """One marker's sub-path centred at (x, y) px with radius ``r`` px."""
    if shape == "circle":
        return f"M{_n(x - r)},{_n(y)}a{_n(r)},{_n(r)} 0 1 0 {_n(2 * r)},0a{_n(r)},{_n(r)} 0 1 0 {_n(-2 * r)},0z"
    if shape == "square":
        s = r * 0.88
        return f"M{_n(x - s)},{_n(y - s)}h{_n(2 * s)}v{_n(2 * s)}h{_n(-2 * s)}z"
    if shape == "diamond":
        return f"M{_n(x)},{_n(y - r * 1.2)}L{_n(x + r)},{_n(y)} {_n(x)},{_n(y + r * 1.2)} {_n(x - r)},{_n(y)}z"
    if shape in ("triangle", "triangle-down"):
        s = -1 if shape == "triangle" else 1
        return (f"M{_n(x)},{_n(y + s * r * 1.15)}L{_n(x + r * 1.1)},{_n(y - s * r * 0.65)} "
                f"{_n(x - r * 1.1)},{_n(y - s * r * 0.65)}z")
    if shape == "star":
        pts = []
        for k in range(10):
            a = math.pi / 2 + k * math.pi / 5
            rr = r * (1.25 if k % 2 == 0 else 0.5)
            pts.append(f"{_n(x + rr * math.cos(a))},{_n(y - rr * math.sin(a))}")
        return "M" + pts[0] + "L" + " ".join(pts[1:]) + "z"
    raise ValueError(f"marker shape must be circle, square, diamond, triangle, triangle-down or star (got {shape!r})")


MARKERS = ("circle", "square", "triangle", "diamond", "triangle-down", "star")


def _arrow_path(x0, y0, x1, y1, head: float) -> tuple[str, str]:
    """(shaft, head) sub-paths of an arrow from (x0, y0) to (x1, y1) px; the head ``head`` px long."""
    dx, dy = x1 - x0, y1 - y0
    length = math.hypot(dx, dy)
    if length < 1e-6:
        return "", ""
    ux, uy = dx / length, dy / length
    h = min(head, 0.6 * length) if length > 2 else head * 0.5
    bx, by = x1 - ux * h, y1 - uy * h
    w = 0.45 * h
    shaft = f"M{_n(x0)},{_n(y0)}L{_n(bx)},{_n(by)}"
    tip = (f"M{_n(x1)},{_n(y1)}L{_n(bx - uy * w)},{_n(by + ux * w)} {_n(bx + uy * w)},{_n(by - ux * w)}z")
    return shaft, tip


# --------------------------------------------------------------------------
# Axes
# --------------------------------------------------------------------------


class Axes:
    """A plotting area at a pixel box; series are kept in data coordinates until the figure is written.

    Parameters
    ----------
    box : (left, top, width, height), px
    xlim, ylim : (lo, hi), optional
        Fixed limits; else the data's range widened by ``margin`` (a
        fraction of the range) and, with ``nice``, to the next ticks.
    share_x : Axes, optional
        Use that axes' x limits and ticks (a panel below another).
    equal : bool
        One data unit the same number of pixels on both axes (the box's
        larger side shrinks, centred).
    """

    def __init__(self, box, *, xlim=None, ylim=None, margin=(0.0, 0.05), nice=(True, True),
                 share_x: "Axes | None" = None, equal: bool = False, xticks: int = 7, yticks: int = 6):
        self.box = tuple(float(v) for v in box)
        self._xlim, self._ylim = xlim, ylim
        self.margin = margin
        self.nice = nice
        self.share_x = share_x
        self.equal = equal
        self.tick_count = (xticks, yticks)
        self.items: list[tuple] = []
        self.legend_entries: list[tuple] = []
        self.legend_spec: dict | None = None
        self.texts: list[tuple] = []
        self.xlabel = self.ylabel = self.title = ""
        self.title_loc = "left"
        self.grid_axes = "xy"
        self.custom_xticks: tuple | None = None
        self.tick_labels_x = True
        self.tick_labels_y = True  # False: no y ticks nor their labels (rows named by annotations instead)
        self.colorbar_spec: dict | None = None
        self.limits: tuple | None = None  # ((x0, x1), (y0, y1)) once resolved

    # ---- series ------------------------------------------------------------

    def _entry(self, label, kind, style):
        if label:
            self.legend_entries.append((str(label), kind, style))

    def line(self, x, y, *, colour: str = PALETTE[0], width: float = 1.5, dash: str | None = None,
             opacity: float = 1.0, label: str | None = None) -> "Axes":
        """A polyline through (x, y); non-finite points break it.

        ``dash``: 'dashed', 'dotted', 'dashdot' or an SVG dash array ('4 2').
        """
        x, y = np.broadcast_arrays(np.asarray(x, dtype=float).ravel(), np.asarray(y, dtype=float).ravel())
        self.items.append(("line", x, y, {"colour": colour, "width": width, "dash": dash, "opacity": opacity}))
        self._entry(label, "line", {"colour": colour, "width": width, "dash": dash, "opacity": opacity})
        return self

    def markers(self, x, y, *, shape: str = "circle", size: float = 7.0, fill: str | None = PALETTE[0],
                edge: str | None = None, edge_width: float = 1.2, opacity: float = 1.0,
                label: str | None = None) -> "Axes":
        """Markers (circle, square, triangle, triangle-down, diamond, star) ``size`` px across at (x, y)."""
        _marker_path(shape, 0, 0, 1)  # checks the shape
        x, y = np.broadcast_arrays(np.asarray(x, dtype=float).ravel(), np.asarray(y, dtype=float).ravel())
        st = {"shape": shape, "size": size, "fill": fill, "edge": edge, "edge_width": edge_width, "opacity": opacity}
        self.items.append(("markers", x, y, st))
        self._entry(label, "marker", st)
        return self

    def bars(self, x, heights, *, width: float = 0.8, colours, base: float = 0.0) -> "Axes":
        """Bars ``width`` data units wide from ``base`` to ``heights``; ``colours`` one or one per bar."""
        x = np.asarray(x, dtype=float).ravel()
        h = np.asarray(heights, dtype=float).ravel()
        cols = [colours] * x.size if isinstance(colours, str) else list(colours)
        self.items.append(("bars", x, h, {"width": width, "colours": cols, "base": base}))
        return self

    def fill_between(self, x, y0, y1, *, colour: str = PALETTE[0], opacity: float = 0.2,
                     label: str | None = None) -> "Axes":
        """The region between y0 and y1 over x, filled (non-finite points left out)."""
        x, y0, y1 = np.broadcast_arrays(np.asarray(x, dtype=float).ravel(), np.asarray(y0, dtype=float).ravel(),
                                        np.asarray(y1, dtype=float).ravel())
        ok = np.isfinite(x) & np.isfinite(y0) & np.isfinite(y1)
        xs = np.concatenate([x[ok], x[ok][::-1]])
        ys = np.concatenate([y1[ok], y0[ok][::-1]])
        return self.polygon(xs, ys, fill=colour, opacity=opacity, label=label)

    def polygon(self, x, y, *, fill: str | None = None, edge: str | None = None, width: float = 1.0,
                opacity: float = 1.0, dash: str | None = None, label: str | None = None) -> "Axes":
        """A closed polygon through (x, y), filled and/or outlined."""
        x, y = np.broadcast_arrays(np.asarray(x, dtype=float).ravel(), np.asarray(y, dtype=float).ravel())
        st = {"fill": fill, "edge": edge, "width": width, "opacity": opacity, "dash": dash}
        self.items.append(("polygon", x, y, st))
        self._entry(label, "patch", st)
        return self

    def hline(self, y: float, *, colour: str = _AXIS, width: float = 1.0, dash: str | None = None,
              opacity: float = 1.0, label: str | None = None) -> "Axes":
        """A horizontal line across the axes at ``y`` (its value counts for the limits)."""
        self.items.append(("hline", None, np.array([float(y)]),
                           {"colour": colour, "width": width, "dash": dash, "opacity": opacity}))
        self._entry(label, "line", {"colour": colour, "width": width, "dash": dash, "opacity": opacity})
        return self

    def vline(self, x: float, *, colour: str = _AXIS, width: float = 1.0, dash: str | None = None,
              opacity: float = 1.0, label: str | None = None) -> "Axes":
        """A vertical line across the axes at ``x``."""
        self.items.append(("vline", np.array([float(x)]), None,
                           {"colour": colour, "width": width, "dash": dash, "opacity": opacity}))
        self._entry(label, "line", {"colour": colour, "width": width, "dash": dash, "opacity": opacity})
        return self

    def arrows(self, x, y, dx, dy, *, colours, width: float = 1.2, head: float = 7.0, shrink: float = 0.0,
               label: str | None = None, legend_colour: str | None = None) -> "Axes":
        """Arrows from (x, y) by (dx, dy) in data units, both ends pulled in by ``shrink`` px (to clear markers);
        ``colours`` one or one per arrow (one path per colour)."""
        x, y, dx, dy = (np.asarray(v, dtype=float).ravel() for v in (x, y, dx, dy))
        cols = [colours] * x.size if isinstance(colours, str) else list(colours)
        self.items.append(("arrows", np.concatenate([x, x + dx]), np.concatenate([y, y + dy]),
                           {"colours": cols, "width": width, "head": head, "n": x.size, "shrink": shrink}))
        self._entry(label, "arrow", {"colour": legend_colour or (cols[0] if cols else PALETTE[0])})
        return self

    def annotate(self, text, x: float, y: float, *, dx: float = 0.0, dy: float = 0.0, size: float = 10.0,
                 anchor: str = "start", va: str = "baseline", colour: str = _TEXT, halo: bool = True) -> "Axes":
        """``text`` at data point (x, y) moved by (dx, dy) px (dy up); skipped when the point is not finite."""
        self.texts.append((float(x), float(y), str(text), dx, dy, size, anchor, va, colour, halo))
        return self

    # ---- decoration --------------------------------------------------------

    def set(self, *, xlabel: str | None = None, ylabel: str | None = None, title: str | None = None,
            title_loc: str | None = None, grid: str | None = None) -> "Axes":
        """Axis labels (quantity and unit), the title (``title_loc`` 'left' or 'center'), grid 'xy', 'x', 'y' or ''."""
        if xlabel is not None:
            self.xlabel = xlabel
        if ylabel is not None:
            self.ylabel = ylabel
        if title is not None:
            self.title = title
        if title_loc is not None:
            self.title_loc = title_loc
        if grid is not None:
            self.grid_axes = grid
        return self

    def xticks(self, positions, labels) -> "Axes":
        """Fixed x ticks at ``positions`` with ``labels`` (instead of numbers)."""
        self.custom_xticks = (np.asarray(positions, dtype=float), [str(s) for s in labels])
        return self

    def legend(self, loc: str = "best", *, ncol: int = 1, size: float = 10.5, title: str | None = None) -> "Axes":
        """A legend of every labelled series: 'best' (the inside corner covering the fewest data points),
        'upper right', 'upper left', 'lower right', 'lower left', 'right' (outside, right of the axes) or
        'below' (outside, under the tick labels)."""
        if loc not in _LEGEND_LOCS:
            raise ValueError(f"legend loc must be one of {', '.join(_LEGEND_LOCS)} (got {loc!r})")
        self.legend_spec = {"loc": loc, "ncol": max(1, int(ncol)), "size": size, "title": title}
        return self

    def colorbar(self, lo: float, hi: float, *, label: str, width: float = 14.0, gap: float = 14.0) -> "Axes":
        """A colour bar of :func:`colour_map` over ``[lo, hi]`` right of the axes, ticks and ``label`` beside it."""
        self.colorbar_spec = {"lo": float(lo), "hi": float(hi), "label": label, "width": width, "gap": gap}
        return self

    # ---- limits and transforms ----------------------------------------------

    def _extent(self, which: int) -> tuple[float, float]:
        vals = []
        for kind, x, y, st in self.items:
            v = x if which == 0 else y
            if v is None:
                continue
            if kind == "bars":
                v = (np.concatenate([x - st["width"] / 2, x + st["width"] / 2]) if which == 0
                     else np.concatenate([y, [st["base"]]]))
            vals.append(v[np.isfinite(v)])
        allv = np.concatenate(vals) if vals else np.array([])
        if allv.size == 0:
            return math.nan, math.nan
        return float(allv.min()), float(allv.max())

    def _resolve(self) -> None:
        lims = []
        for which, fixed in ((0, self._xlim), (1, self._ylim)):
            if which == 0 and self.share_x is not None:
                if self.share_x.limits is None:
                    self.share_x._resolve()
                lims.append(self.share_x.limits[0])
                continue
            if fixed is not None:
                lims.append((float(fixed[0]), float(fixed[1])))
                continue
            lo, hi = self._extent(which)
            if not (math.isfinite(lo) and math.isfinite(hi)):
                lo, hi = 0.0, 1.0
            pad = self.margin[which] * (hi - lo)
            lo, hi = lo - pad, hi + pad
            if self.nice[which]:
                lo, hi = nice_limits(lo, hi, self.tick_count[which])
            elif hi <= lo:
                lo, hi = nice_limits(lo, hi)
            lims.append((lo, hi))
        (x0, x1), (y0, y1) = lims
        if self.equal:
            left, top, w, h = self.box
            per = min(w / (x1 - x0), h / (y1 - y0))
            nw, nh = per * (x1 - x0), per * (y1 - y0)
            self.box = (left + (w - nw) / 2, top + (h - nh) / 2, nw, nh)
        self.limits = ((x0, x1), (y0, y1))

    def px(self, x) -> np.ndarray:
        """Data x → pixel x (after the limits are resolved)."""
        (x0, x1), _ = self.limits
        left, _, w, _ = self.box
        return left + (np.asarray(x, dtype=float) - x0) / (x1 - x0) * w

    def py(self, y) -> np.ndarray:
        """Data y → pixel y (downwards, as SVG)."""
        _, (y0, y1) = self.limits
        _, top, _, h = self.box
        return top + h - (np.asarray(y, dtype=float) - y0) / (y1 - y0) * h

    def ticks(self, which: int) -> tuple[np.ndarray, list[str]]:
        """Tick positions and labels of x (0) or y (1)."""
        if which == 0 and self.share_x is not None:
            return self.share_x.ticks(0)
        if which == 0 and self.custom_xticks is not None:
            return self.custom_xticks
        lo, hi = self.limits[which]
        length = self.box[2] if which == 0 else self.box[3]
        count = min(self.tick_count[which], max(2.0, length / (70.0 if which == 0 else 40.0)))
        t = nice_ticks(lo, hi, count)
        while t.size < 2 and count < 50:  # at least two ticks, so the scale can be read
            count *= 1.5
            t = nice_ticks(lo, hi, count)
        labels = tick_labels(t)
        while which == 0 and t.size > 2:  # x labels wider than their spacing: fewer ticks, never under two
            spacing = length * (t[1] - t[0]) / (hi - lo)
            if max(text_width(s, 11) for s in labels) + 10 <= spacing:
                break
            count *= 0.8
            fewer = nice_ticks(lo, hi, count)
            if fewer.size < 2:
                break
            if fewer.size < t.size:
                t, labels = fewer, tick_labels(fewer)
        if which == 0 and t.size > 1:  # still too close: label every k-th tick only
            spacing = length * (t[1] - t[0]) / (hi - lo)
            k = math.ceil((max(text_width(s, 11) for s in labels) + 10) / max(spacing, 1e-9))
            if k > 1:
                labels = [s if i % k == 0 else "" for i, s in enumerate(labels)]
        return t, labels

    # ---- drawing ---------------------------------------------------------------

    def _svg(self, clip_id: str) -> list[str]:
        left, top, w, h = self.box
        right, bottom = left + w, top + h
        out = [f'<rect x="{_n(left)}" y="{_n(top)}" width="{_n(w)}" height="{_n(h)}" fill="#ffffff"/>']
        xt, xl = self.ticks(0)
        yt, yl = self.ticks(1)
        if not self.tick_labels_y:
            yt, yl = yt[:0], []
        grid = []
        if "x" in self.grid_axes and self.custom_xticks is None:
            grid += [f"M{_n(p)},{_n(top)}V{_n(bottom)}" for p in self.px(xt).tolist()]
        if "y" in self.grid_axes:
            grid += [f"M{_n(left)},{_n(p)}H{_n(right)}" for p in self.py(yt).tolist()]
        if grid:
            out.append(f'<path d="{"".join(grid)}" {_style(stroke=_GRID, width=0.8)}/>')
        out.append(f'<g clip-path="url(#{clip_id})">')
        for item in self.items:
            out.extend(self._item_svg(*item))
        out.append("</g>")
        # frame, ticks, tick labels
        out.append(f'<path d="M{_n(left)},{_n(top)}H{_n(right)}V{_n(bottom)}H{_n(left)}z" '
                   f'{_style(stroke=_AXIS, width=0.9)}/>')
        tk = [f"M{_n(p)},{_n(bottom)}v4" for p in self.px(xt).tolist()]
        tk += [f"M{_n(left)},{_n(p)}h-4" for p in self.py(yt).tolist()]
        if tk:
            out.append(f'<path d="{"".join(tk)}" {_style(stroke=_AXIS, width=0.9)}/>')
        if self.tick_labels_x:
            for p, s in zip(self.px(xt).tolist(), xl):
                if s:
                    out.append(_text_svg(p, bottom + 7, s, size=11, anchor="middle", va="top", colour=_AXIS))
        for p, s in zip(self.py(yt).tolist(), yl):
            out.append(_text_svg(left - 7, p, s, size=11, anchor="end", va="middle", colour=_AXIS))
        if self.xlabel:
            nlines = max((s.count("\n") + 1 for s in xl), default=1) if self.tick_labels_x else 0
            out.append(_text_svg(left + w / 2, bottom + 12 + 13.5 * nlines, self.xlabel, size=12.5,
                                 anchor="middle", va="top"))
        if self.ylabel:
            width = max((text_width(s, 11) for s in yl), default=0.0)
            x = left - 14 - width
            nl = self.ylabel.count("\n")
            out.append(_text_svg(x - nl * 15, top + h / 2, self.ylabel, size=12.5, anchor="middle",
                                 va="bottom", rotate=-90))
        if self.title:
            if self.title_loc == "center":
                out.append(_text_svg(left + w / 2, top - 8, self.title, size=12.5, anchor="middle", va="bottom",
                                     weight="600"))
            else:
                out.append(_text_svg(left, top - 8, self.title, size=12.5, va="bottom", weight="600"))
        for x, y, s, dx, dy, size, anchor, va, colour, halo in self.texts:
            if math.isfinite(x) and math.isfinite(y):
                out.append(_text_svg(float(self.px(x)) + dx, float(self.py(y)) - dy, s, size=size, anchor=anchor,
                                     va=va, colour=colour, halo=halo))
        if self.colorbar_spec:
            out.extend(self._colorbar_svg(clip_id))
        if self.legend_spec and self.legend_entries:
            out.extend(self._legend_svg())
        return out

    def _item_svg(self, kind, x, y, st) -> list[str]:
        left, top, w, h = self.box
        if kind == "line":
            px, py = self.px(x), self.py(y)
            ok = np.isfinite(px) & np.isfinite(py)
            d = []
            for run in np.split(np.arange(px.size), np.flatnonzero(np.diff(ok.astype(int)) != 0) + 1):
                if run.size and ok[run[0]]:
                    pts = _pairs(px[run], py[run])
                    d.append("M" + pts[0] + ("L" + " ".join(pts[1:]) if len(pts) > 1 else ""))
            if not d:
                return []
            return [_path("".join(d), stroke=st["colour"], width=st["width"], dash=st["dash"], opacity=st["opacity"],
                          join="round", cap=None if st["dash"] else "round")]
        if kind in ("hline", "vline"):
            if kind == "hline":
                p = float(self.py(y[0]))
                d = f"M{_n(left)},{_n(p)}H{_n(left + w)}"
            else:
                p = float(self.px(x[0]))
                d = f"M{_n(p)},{_n(top)}V{_n(top + h)}"
            if not math.isfinite(p):
                return []
            return [_path(d, stroke=st["colour"], width=st["width"], dash=st["dash"], opacity=st["opacity"])]
        if kind == "markers":
            px, py = self.px(x), self.py(y)
            ok = np.isfinite(px) & np.isfinite(py)
            r = st["size"] / 2
            d = "".join(_marker_path(st["shape"], a, b, r) for a, b in zip(
                np.clip(px[ok], -_FAR, _FAR).tolist(), np.clip(py[ok], -_FAR, _FAR).tolist()))
            if not d:
                return []
            return [_path(d, fill=st["fill"] or "none", stroke=st["edge"], width=st["edge_width"],
                          opacity=st["opacity"])]
        if kind == "bars":
            x0, x1 = self.px(x - st["width"] / 2), self.px(x + st["width"] / 2)
            yb, yt = self.py(np.full_like(y, st["base"])), self.py(y)
            by_colour: dict[str, list[str]] = {}
            for i in range(x.size):
                vals = (x0[i], x1[i], yb[i], yt[i])
                if not all(math.isfinite(v) for v in vals):
                    continue
                lo, hi = sorted((float(np.clip(yb[i], -_FAR, _FAR)), float(np.clip(yt[i], -_FAR, _FAR))))
                by_colour.setdefault(st["colours"][i], []).append(
                    f"M{_n(x0[i])},{_n(lo)}H{_n(x1[i])}V{_n(hi)}H{_n(x0[i])}z")
            return [f'<path d="{"".join(d)}" fill="{c}"/>' for c, d in by_colour.items()]
        if kind == "polygon":
            px, py = self.px(x), self.py(y)
            ok = np.isfinite(px) & np.isfinite(py)
            pts = _pairs(px[ok], py[ok])
            if len(pts) < 2:
                return []
            d = "M" + pts[0] + "L" + " ".join(pts[1:]) + "z"
            return [_path(d, fill=st["fill"] or "none", stroke=st["edge"], width=st["width"], opacity=st["opacity"],
                          dash=st["dash"], join="round")]
        if kind == "arrows":
            n = st["n"]
            px, py = self.px(x), self.py(y)
            shafts: dict[str, list[str]] = {}
            heads: dict[str, list[str]] = {}
            for i in range(n):
                pts = (px[i], py[i], px[n + i], py[n + i])
                if not all(math.isfinite(v) for v in pts):
                    continue
                x0, y0, x1, y1 = (float(np.clip(v, -_FAR, _FAR)) for v in pts)
                length = math.hypot(x1 - x0, y1 - y0)
                if st["shrink"] and length > 2 * st["shrink"] + 4:
                    ux, uy = (x1 - x0) / length * st["shrink"], (y1 - y0) / length * st["shrink"]
                    x0, y0, x1, y1 = x0 + ux, y0 + uy, x1 - ux, y1 - uy
                s, t = _arrow_path(x0, y0, x1, y1, st["head"])
                if s:
                    shafts.setdefault(st["colours"][i], []).append(s)
                    heads.setdefault(st["colours"][i], []).append(t)
            out = []
            for c in shafts:
                out.append(f'<path d="{"".join(shafts[c])}" {_style(stroke=c, width=st["width"], cap="round")}/>')
                out.append(f'<path d="{"".join(heads[c])}" fill="{c}"/>')
            return out
        raise AssertionError(kind)

    def _colorbar_svg(self, clip_id: str) -> list[str]:
        cb = self.colorbar_spec
        left, top, w, h = self.box
        x = left + w + cb["gap"]
        gid = clip_id + "g"
        stops = "".join(f'<stop offset="{k / (len(_VIRIDIS) - 1):.2f}" stop-color="{c}"/>'
                        for k, c in enumerate(_VIRIDIS))
        out = [f'<defs><linearGradient id="{gid}" x1="0" y1="1" x2="0" y2="0">{stops}</linearGradient></defs>',
               f'<rect x="{_n(x)}" y="{_n(top)}" width="{_n(cb["width"])}" height="{_n(h)}" '
               f'{_style(fill=f"url(#{gid})", stroke=_AXIS, width=0.6)}/>']
        lo, hi = cb["lo"], cb["hi"]
        if not (math.isfinite(lo) and math.isfinite(hi)) or hi <= lo:
            lo, hi = (lo, lo + 1.0) if math.isfinite(lo) else (0.0, 1.0)
        t = nice_ticks(lo, hi, max(2.0, h / 45))
        labels = tick_labels(t)
        tick_d = []
        widest = 0.0
        for v, s in zip(t.tolist(), labels):
            p = top + h - (v - lo) / (hi - lo) * h
            tick_d.append(f"M{_n(x + cb['width'])},{_n(p)}h3")
            out.append(_text_svg(x + cb["width"] + 6, p, s, size=11, va="middle", colour=_AXIS))
            widest = max(widest, text_width(s, 11))
        if tick_d:
            out.append(f'<path d="{"".join(tick_d)}" {_style(stroke=_AXIS, width=0.8)}/>')
        lx = x + cb["width"] + 12 + widest + 4
        out.append(_text_svg(lx, top + h / 2, cb["label"], size=12, anchor="middle", va="top", rotate=-90))
        return out

    def _legend_svg(self) -> list[str]:
        spec = self.legend_spec
        size = spec["size"]
        ncol = min(spec["ncol"], len(self.legend_entries))
        rows = math.ceil(len(self.legend_entries) / ncol)
        sample, pad, row_h = 26.0, 7.0, size * 1.5
        col_w = []
        for c in range(ncol):
            texts = [e[0] for e in self.legend_entries[c * rows:(c + 1) * rows]]
            col_w.append(sample + 6 + max(text_width(t, size) for t in texts) if texts else 0.0)
        title_h = row_h if spec["title"] else 0.0
        bw = sum(col_w) + 12 * (ncol - 1) + 2 * pad
        if spec["title"]:
            bw = max(bw, text_width(spec["title"], size) + 2 * pad)
        bh = rows * row_h + title_h + 2 * pad - (row_h - size * 1.2)
        left, top, w, h = self.box
        loc = spec["loc"]
        if loc == "best":
            loc = self._best_corner(bw, bh)
        if loc == "right":
            extra = (self.colorbar_spec["gap"] + 60) if self.colorbar_spec else 0.0
            bx, by, frame = left + w + 12 + extra, top, False
        elif loc == "below":
            nl = max((s.count("\n") + 1 for s in self.ticks(0)[1]), default=1)
            bx, by, frame = left + (w - bw) / 2, top + h + 14 + 13.5 * nl + (18 if self.xlabel else 0), False
        else:
            bx = left + w - bw - 6 if "right" in loc else left + 6
            by = top + 6 if "upper" in loc else top + h - bh - 6
            frame = True
        out = ["<g>"]
        if frame:
            out.append(f'<rect x="{_n(bx)}" y="{_n(by)}" width="{_n(bw)}" height="{_n(bh)}" rx="3" fill="#ffffff" '
                       f'fill-opacity="0.9" stroke="#cccccc" stroke-width="0.8"/>')
        y = by + pad
        if spec["title"]:
            out.append(_text_svg(bx + pad, y + row_h / 2, spec["title"], size=size, va="middle", weight="600"))
            y += row_h
        cx = bx + pad
        for c in range(ncol):
            for r, (text, kind, st) in enumerate(self.legend_entries[c * rows:(c + 1) * rows]):
                cy = y + r * row_h + size * 0.6
                out.append(self._legend_sample(kind, st, cx, cy, sample))
                out.append(_text_svg(cx + sample + 6, cy, text, size=size, va="middle"))
            cx += col_w[c] + 12
        out.append("</g>")
        return out

    @staticmethod
    def _legend_sample(kind, st, x, y, length) -> str:
        if kind == "line":
            return (f'<path d="M{_n(x)},{_n(y)}h{_n(length)}" '
                    f'{_style(stroke=st["colour"], width=st["width"], dash=st["dash"], opacity=st["opacity"])}/>')
        if kind == "marker":
            return _path(_marker_path(st["shape"], x + length / 2, y, st["size"] / 2), fill=st["fill"] or "none",
                         stroke=st["edge"], width=st["edge_width"], opacity=st["opacity"])
        if kind == "arrow":
            s, t = _arrow_path(x + 2, y, x + length - 1, y, 7.0)
            return (f'<path d="{s}" {_style(stroke=st["colour"], width=1.4)}/>'
                    f'<path d="{t}" fill="{st["colour"]}"/>')
        style = _style(fill=st["fill"] or "none", stroke=st["edge"], width=st["width"], opacity=st["opacity"])
        return f'<rect x="{_n(x + 4)}" y="{_n(y - 5)}" width="{_n(length - 8)}" height="10" {style}/>'

    def _best_corner(self, bw: float, bh: float) -> str:
        """The inside corner whose legend box covers the fewest drawn points (and bar tops)."""
        xs, ys = [], []
        for kind, x, y, st in self.items:
            if kind in ("hline", "vline"):
                continue
            if kind == "bars":
                xs.append(self.px(x))
                ys.append(self.py(y))
                continue
            px, py = self.px(x), self.py(y)
            if kind in ("line", "polygon") and px.size > 1:  # points along each segment too
                t = np.linspace(0, 1, 6)[:, None]
                px = (px[:-1] * (1 - t) + px[1:] * t).ravel()
                py = (py[:-1] * (1 - t) + py[1:] * t).ravel()
            xs.append(px)
            ys.append(py)
        for x, y, *_ in self.texts:
            xs.append(self.px(np.array([x])))
            ys.append(self.py(np.array([y])))
        px = np.concatenate(xs) if xs else np.array([])
        py = np.concatenate(ys) if ys else np.array([])
        left, top, w, h = self.box
        best, score = "upper right", math.inf
        for loc in ("upper right", "upper left", "lower right", "lower left"):
            bx = left + w - bw - 6 if "right" in loc else left + 6
            by = top + 6 if "upper" in loc else top + h - bh - 6
            inside = (px >= bx - 4) & (px <= bx + bw + 4) & (py >= by - 4) & (py <= by + bh + 4)
            n = int(np.count_nonzero(inside))
            if n < score:
                best, score = loc, n
        return best


_LEGEND_LOCS = ("best", "upper right", "upper left", "lower right", "lower left", "right", "below")


# --------------------------------------------------------------------------
# Figure
# --------------------------------------------------------------------------


def stack(left: float, top: float, width: float, height: float, *, ratios=(1.0,), gap: float = 0.0,
          horizontal: bool = False) -> list[tuple[float, float, float, float]]:
    """Boxes (left, top, width, height) px dividing a box into panels by ``ratios``, ``gap`` px apart."""
    r = np.asarray(ratios, dtype=float)
    total = (width if horizontal else height) - gap * (r.size - 1)
    sizes = total * r / r.sum()
    boxes, pos = [], left if horizontal else top
    for s in sizes.tolist():
        boxes.append((pos, top, s, height) if horizontal else (left, pos, width, s))
        pos += s + gap
    return boxes


class Figure:
    """A picture of ``width`` × ``height`` px holding axes and texts; :meth:`svg` writes it.

    ``name`` prefixes the ids inside (clip paths, gradients), so figures
    inlined in one page do not share ids.
    """

    def __init__(self, width: float, height: float, *, name: str = "fig", alt: str = ""):
        self.width, self.height = float(width), float(height)
        self.name = re.sub(r"[^A-Za-z0-9_-]", "-", name) or "fig"
        self.alt = alt
        self.axes: list[Axes] = []
        self.texts: list[str] = []

    def add_axes(self, box, **kwargs) -> Axes:
        """A new :class:`Axes` at ``box`` (left, top, width, height) px; keywords as :class:`Axes`."""
        ax = Axes(box, **kwargs)
        self.axes.append(ax)
        return ax

    def text(self, x: float, y: float, text, *, size: float = 12.0, anchor: str = "start", va: str = "baseline",
             weight: str | None = None, colour: str = _TEXT, rotate: float = 0.0) -> "Figure":
        """A text at (x, y) px of the figure."""
        self.texts.append(_text_svg(x, y, text, size=size, anchor=anchor, va=va, weight=weight, colour=colour,
                                    rotate=rotate))
        return self

    def title(self, text, *, size: float = 14.5, y: float = 10.0) -> int:
        """The figure's title, centred at the top, wrapped to the figure's width; returns its number of lines.

        Lines break at '\\n' and, where a line is wider than the figure, between words.
        """
        lines = wrap_text(text, size * 1.04, self.width - 40)  # bold is a little wider
        self.text(self.width / 2, y, "\n".join(lines), size=size, anchor="middle", va="top", weight="600")
        return len(lines)

    def grow(self, dy: float) -> None:
        """Move every axes down by ``dy`` px and make the figure that much taller (room for a longer title)."""
        if dy:
            self.height += dy
            for ax in self.axes:
                left, top, w, h = ax.box
                ax.box = (left, top + dy, w, h)

    def svg(self) -> str:
        """The standalone SVG document (UTF-8 text, no XML declaration needed)."""
        for ax in self.axes:
            ax.limits = None
        for ax in self.axes:
            if ax.limits is None:
                ax._resolve()
        w, h = _n(self.width), _n(self.height)
        defs, body = [], []
        for k, ax in enumerate(self.axes):
            cid = f"{self.name}-c{k}"
            left, top, aw, ah = ax.box
            defs.append(f'<clipPath id="{cid}"><rect x="{_n(left)}" y="{_n(top)}" width="{_n(aw)}" '
                        f'height="{_n(ah)}"/></clipPath>')
            body.extend(ax._svg(cid))
        head = (f'<svg xmlns="http://www.w3.org/2000/svg" version="1.1" width="{w}" height="{h}" '
                f'viewBox="0 0 {w} {h}" font-family="{xml_escape(FONT_FAMILY)}" fill="{_TEXT}">')
        title = f"<title>{xml_escape(self.alt)}</title>" if self.alt else ""
        return "\n".join([head + title, f'<rect width="{w}" height="{h}" fill="#ffffff"/>',
                          "<defs>" + "".join(defs) + "</defs>", *body, *self.texts, "</svg>"]) + "\n"

    def svg_bytes(self) -> bytes:
        """:meth:`svg` as UTF-8 bytes."""
        return self.svg().encode("utf-8")

    def data_uri(self) -> str:
        """A ``data:image/svg+xml;base64,…`` URI of the picture, for an ``<img src>``."""
        return "data:image/svg+xml;base64," + base64.b64encode(self.svg_bytes()).decode("ascii")

    def _repr_svg_(self) -> str:  # notebooks show the picture
        return self.svg()
