"""The SVG plotter's pieces below the axes (:mod:`workbench.plots.vector`): text, numbers, colour, SVG elements.

Texts XML-escaped and their widths estimated (DejaVu Sans advance widths),
coordinates written to 0.1 px, nice ticks and their labels, the series
palette and a dark-blue → yellow colour map, and the ``<path>`` / ``<text>``
pieces (styles, markers, arrows) that :class:`workbench.plots.vector_axes.Axes`
and :class:`workbench.plots.vector.Figure` are written with. Plain Python
and numpy, no matplotlib.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence

import numpy as np

__all__ = [
    "FONT_FAMILY",
    "PALETTE",
    "CHANNEL_COLOURS",
    "TEXT_COLOUR",
    "AXIS_COLOUR",
    "GRID_COLOUR",
    "FAR_PX",
    "xml_escape",
    "wrap_text",
    "text_width",
    "px_text",
    "point_texts",
    "nice_step",
    "nice_ticks",
    "nice_limits",
    "tick_labels",
    "VIRIDIS",
    "colour_map",
    "style_attrs",
    "path_svg",
    "text_svg",
    "marker_path",
    "MARKERS",
    "arrow_path",
]

#: The fonts a figure asks for, first choice first.
FONT_FAMILY = "DejaVu Sans, Verdana, Helvetica, Arial, sans-serif"
#: Series colours in order (our own set: distinct in hue and lightness, readable on white).
PALETTE = ("#2f6fb0", "#e07b20", "#2e9a4b", "#c23b3b", "#7b57b5", "#8c5a3c", "#d15c9e", "#6b6b6b",
           "#a6a21c", "#1fa5b8")
#: The colours of the camera's R, G, B channels.
CHANNEL_COLOURS = {"R": "#c8302c", "G": "#2b8c3e", "B": "#2a5db0"}
TEXT_COLOUR = "#222222"
AXIS_COLOUR = "#444444"
GRID_COLOUR = "#e3e3e3"
_DASHES = {"solid": None, "dashed": "6 3.5", "dotted": "1.5 2.5", "dashdot": "7 3 1.5 3"}
#: Pixel coordinates are clamped to ±this (far outside any picture; the axes clip them).
FAR_PX = 1e5

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


def px_text(v: float) -> str:
    """One coordinate rounded to 0.1 px, shortest form ('12', '12.5', '-0.3')."""
    s = f"{v:.1f}"
    if s.endswith(".0"):
        s = s[:-2]
    return "0" if s == "-0" else s


def point_texts(px: np.ndarray, py: np.ndarray) -> list[str]:
    """'x,y' texts of finite points rounded to 0.1 px, consecutive repeats dropped."""
    xs = np.round(np.clip(px, -FAR_PX, FAR_PX), 1)
    ys = np.round(np.clip(py, -FAR_PX, FAR_PX), 1)
    keep = np.ones(xs.size, dtype=bool)
    keep[1:] = (xs[1:] != xs[:-1]) | (ys[1:] != ys[:-1])
    return [f"{px_text(x)},{px_text(y)}" for x, y in zip(xs[keep].tolist(), ys[keep].tolist())]


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
VIRIDIS = ("#440154", "#482475", "#414487", "#355f8d", "#2a788e", "#21918c", "#22a884", "#44bf70",
            "#7ad151", "#bddf26", "#fde725")


def _rgb(hexcolour: str) -> tuple[int, int, int]:
    h = hexcolour.lstrip("#")
    return int(h[0:2], 16), int(h[2:4], 16), int(h[4:6], 16)


def colour_map(values, lo: float, hi: float) -> list[str]:
    """Hex colours of ``values`` on a perceptually ordered dark-blue → yellow scale over ``[lo, hi]`` (NaN grey)."""
    v = np.asarray(values, dtype=float)
    span = hi - lo if hi > lo else 1.0
    anchors = np.array([_rgb(c) for c in VIRIDIS], dtype=float)
    pos = np.linspace(0.0, 1.0, len(VIRIDIS))
    t = np.clip((np.nan_to_num(v, nan=lo) - lo) / span, 0.0, 1.0)
    rgb = np.stack([np.interp(t, pos, anchors[:, c]) for c in range(3)], axis=-1)
    out = ["#%02x%02x%02x" % tuple(int(round(c)) for c in row) for row in np.atleast_2d(rgb)]
    return [("#999999" if not math.isfinite(x) else c) for x, c in zip(v.ravel().tolist(), out)]


# --------------------------------------------------------------------------
# SVG pieces
# --------------------------------------------------------------------------


def style_attrs(*, stroke=None, width=None, fill="none", dash=None, opacity=None, cap=None, join=None) -> str:
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


def path_svg(d: str, **style) -> str:
    """A <path> with data ``d`` and the :func:`style_attrs` of ``style``."""
    return f'<path d="{d}" {style_attrs(**style)}/>'


def text_svg(x: float, y: float, text, *, size: float = 12, anchor: str = "start", va: str = "baseline",
              colour: str = TEXT_COLOUR, weight: str | None = None, rotate: float = 0.0, halo: bool = False,
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
    attrs = [f'x="{px_text(x)}"', f'y="{px_text(y + shift)}"', f'font-size="{size:g}"']
    if anchor != "start":
        attrs.append(f'text-anchor="{anchor}"')
    if colour != TEXT_COLOUR:
        attrs.append(f'fill="{colour}"')
    if weight:
        attrs.append(f'font-weight="{weight}"')
    if italic:
        attrs.append('font-style="italic"')
    if rotate:
        attrs.append(f'transform="rotate({rotate:g} {px_text(x)} {px_text(y)})"')
    if halo:
        attrs.append('stroke="#ffffff" stroke-width="3" stroke-opacity="0.85" paint-order="stroke"')
    if n == 1:
        body = xml_escape(lines[0])
    else:
        body = "".join(f'<tspan x="{px_text(x)}" dy="{0 if i == 0 else px_text(lead)}">{xml_escape(s)}</tspan>'
                       for i, s in enumerate(lines))
    return f"<text {' '.join(attrs)}>{body}</text>"


def marker_path(shape: str, x: float, y: float, r: float) -> str:
    """One marker's sub-path centred at (x, y) px with radius ``r`` px."""
    if shape == "circle":
        return f"M{px_text(x - r)},{px_text(y)}a{px_text(r)},{px_text(r)} 0 1 0 {px_text(2 * r)},0a{px_text(r)},{px_text(r)} 0 1 0 {px_text(-2 * r)},0z"
    if shape == "square":
        s = r * 0.88
        return f"M{px_text(x - s)},{px_text(y - s)}h{px_text(2 * s)}v{px_text(2 * s)}h{px_text(-2 * s)}z"
    if shape == "diamond":
        return f"M{px_text(x)},{px_text(y - r * 1.2)}L{px_text(x + r)},{px_text(y)} {px_text(x)},{px_text(y + r * 1.2)} {px_text(x - r)},{px_text(y)}z"
    if shape in ("triangle", "triangle-down"):
        s = -1 if shape == "triangle" else 1
        return (f"M{px_text(x)},{px_text(y + s * r * 1.15)}L{px_text(x + r * 1.1)},{px_text(y - s * r * 0.65)} "
                f"{px_text(x - r * 1.1)},{px_text(y - s * r * 0.65)}z")
    if shape == "star":
        pts = []
        for k in range(10):
            a = math.pi / 2 + k * math.pi / 5
            rr = r * (1.25 if k % 2 == 0 else 0.5)
            pts.append(f"{px_text(x + rr * math.cos(a))},{px_text(y - rr * math.sin(a))}")
        return "M" + pts[0] + "L" + " ".join(pts[1:]) + "z"
    raise ValueError(f"marker shape must be circle, square, diamond, triangle, triangle-down or star (got {shape!r})")


MARKERS = ("circle", "square", "triangle", "diamond", "triangle-down", "star")


def arrow_path(x0, y0, x1, y1, head: float) -> tuple[str, str]:
    """(shaft, head) sub-paths of an arrow from (x0, y0) to (x1, y1) px; the head ``head`` px long."""
    dx, dy = x1 - x0, y1 - y0
    length = math.hypot(dx, dy)
    if length < 1e-6:
        return "", ""
    ux, uy = dx / length, dy / length
    h = min(head, 0.6 * length) if length > 2 else head * 0.5
    bx, by = x1 - ux * h, y1 - uy * h
    w = 0.45 * h
    shaft = f"M{px_text(x0)},{px_text(y0)}L{px_text(bx)},{px_text(by)}"
    tip = (f"M{px_text(x1)},{px_text(y1)}L{px_text(bx - uy * w)},{px_text(by + ux * w)} {px_text(bx + uy * w)},{px_text(by - ux * w)}z")
    return shaft, tip
