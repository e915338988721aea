"""How every figure of the package is made: a :class:`matplotlib.figure.Figure` on the Agg canvas.

No pyplot: a figure belongs to nobody's global state, draws the same under
any backend, and is freed when the last reference goes. Notebooks show one
with ``IPython.display.display(fig)`` (or as a cell's value).

Speed (measured on the fit report's figures when they were drawn here; the
report now draws them with :mod:`workbench.plots.vector`, no matplotlib):
a layout engine makes ``savefig`` draw every figure twice (once to measure,
once to paint) and measures every text's extent, which was half of a
report's drawing time. Figures that always hold the same texts therefore
place their axes with fixed margins given in inches (:func:`place_axes`),
which keeps them right whatever the figure's height. As SVG with its
texts kept as text (:func:`svg_bytes`) a figure is written in about half
the time of a PNG and is smaller: no glyph is rasterised and nothing is
compressed.
"""

from __future__ import annotations

import io

import matplotlib
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

__all__ = ["new_figure", "place_axes", "png_bytes", "svg_bytes"]


def new_figure(width: float, height: float, fig=None, *, layout: str | None = None) -> Figure:
    """``fig`` cleared when given, else a new Figure of ``width`` × ``height`` inches on an Agg canvas.

    ``layout`` (e.g. ``'constrained'``) only applies to a new figure; a
    given figure keeps its own.
    """
    if fig is not None:
        fig.clear()
        return fig
    fig = Figure(figsize=(width, height), layout=layout)
    FigureCanvasAgg(fig)
    return fig


def place_axes(fig: Figure, *, left: float, right: float, top: float, bottom: float,
               hspace: float = 0.0, wspace: float = 0.0, rows: int = 1, cols: int = 1) -> None:
    """Fixed margins in inches (``right`` and ``top`` from the figure's right and top edges).

    ``hspace`` and ``wspace`` are the gaps between rows and columns in
    inches. Nothing is done when the figure has a layout engine (a caller's
    own figure, e.g. constrained), which then places the axes itself.
    """
    if fig.get_layout_engine() is not None:
        return
    w, h = fig.get_size_inches()
    ax_h = max((h - top - bottom - hspace * (rows - 1)) / rows, 1e-3)
    ax_w = max((w - left - right - wspace * (cols - 1)) / cols, 1e-3)
    fig.subplots_adjust(left=left / w, right=1 - right / w, top=1 - top / h, bottom=bottom / h,
                        hspace=hspace / ax_h, wspace=wspace / ax_w)


def png_bytes(fig: Figure, *, dpi: float = 100) -> bytes:
    """The figure as PNG bytes at ``dpi`` (no software stamp, so equal figures give equal bytes)."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, metadata={"Software": None})
    return buf.getvalue()


def svg_bytes(fig: Figure) -> bytes:
    """The figure as SVG bytes: texts kept as text (drawn by the viewer's font), no date, stable ids.

    Equal figures give equal bytes (``svg.hashsalt`` fixed), so a report
    written twice is the same file.
    """
    buf = io.BytesIO()
    with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": "workbench"}):
        fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": None})
    return buf.getvalue()
