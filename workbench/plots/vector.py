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

The plotter is in three modules, all its public names importable from
here: this one (:class:`Figure`, :func:`stack`),
:mod:`workbench.plots.vector_axes` (:class:`Axes`) and
:mod:`workbench.plots.vector_style` (text, numbers, ticks, colours and the
SVG pieces: paths, styles, markers, arrows).
"""

from __future__ import annotations

import base64
import re

import numpy as np

from workbench.plots.vector_axes import Axes
from workbench.plots.vector_style import (CHANNEL_COLOURS, FONT_FAMILY, MARKERS, PALETTE, TEXT_COLOUR, colour_map,
                                          nice_limits, nice_step, nice_ticks, px_text, text_svg, text_width,
                                          tick_labels, wrap_text, xml_escape)

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
             weight: str | None = None, colour: str = TEXT_COLOUR, rotate: float = 0.0) -> "Figure":
        """A text at (x, y) px of the figure."""
        self.texts.append(text_svg(x, y, text, size=size, anchor=anchor, va=va, weight=weight, colour=colour,
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
        w, h = px_text(self.width), px_text(self.height)
        defs, body = [], []
        for k, ax in enumerate(self.axes):
            cid = f"{self.name}-c{k}"
            left, top, aw, ah = ax.box
            defs.append(f'<clipPath id="{cid}"><rect x="{px_text(left)}" y="{px_text(top)}" width="{px_text(aw)}" '
                        f'height="{px_text(ah)}"/></clipPath>')
            body.extend(ax._svg(cid))
        head = (f'<svg xmlns="http://www.w3.org/2000/svg" version="1.1" width="{w}" height="{h}" '
                f'viewBox="0 0 {w} {h}" font-family="{xml_escape(FONT_FAMILY)}" fill="{TEXT_COLOUR}">')
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
