"""Images of a render: 8-bit sRGB pictures and the ΔE00 map with its colour bar.

Saving goes through a temporary file in the target's folder and
``os.replace``, so a reader never sees half a picture.
"""

from __future__ import annotations

import textwrap

import matplotlib
import numpy as np
from PIL import Image, PngImagePlugin

from workbench.fileio.atomic import write_atomically
from workbench.plots._canvas import new_figure

__all__ = ["plot_delta_e_map", "save_rgb8_png", "save_figure"]


def save_rgb8_png(rgb8, path, *, description: str = "") -> None:
    """Write an (h, w, 3) uint8 sRGB image as an RGB PNG, atomically.

    ``description`` goes into the PNG's ``Description`` text chunk (how the
    pixels were encoded).
    """
    a = np.asarray(rgb8)
    if a.ndim != 3 or a.shape[-1] != 3 or a.dtype != np.uint8:
        raise ValueError(f"expected an (h, w, 3) uint8 image (got {a.shape} {a.dtype})")
    info = PngImagePlugin.PngInfo()
    if description:
        info.add_text("Description", description)
    img = Image.fromarray(np.ascontiguousarray(a))  # (h, w, 3) uint8 is RGB
    write_atomically(path, lambda fh: img.save(fh, format="PNG", pnginfo=info))


def save_figure(fig, path, *, dpi: int = 150) -> None:
    """Save a matplotlib figure as PNG, atomically."""
    write_atomically(path, lambda fh: fig.savefig(fh, format="png", dpi=dpi))


def plot_delta_e_map(delta_e, *, ax=None, vmax: float | None = None, title: str = ""):
    """ΔE00 per pixel as an image with a colour bar in ΔE00 units.

    Parameters
    ----------
    delta_e : (h, w) array_like
        CIEDE2000 per pixel (NaN shown grey).
    vmax : float, optional
        Top of the colour scale; default the 99th percentile of the finite
        values rounded up to 0.5 (at least 1). Larger values show in the
        top colour; the bar's label says so.
    ax : matplotlib Axes, optional

    Returns
    -------
    Axes
    """
    d = np.asarray(delta_e, dtype=float)
    finite = d[np.isfinite(d)]
    dmax = float(finite.max()) if finite.size else 0.0
    if vmax is None:
        p99 = float(np.percentile(finite, 99)) if finite.size else 1.0
        vmax = max(1.0, np.ceil(p99 * 2) / 2)
    if ax is None:
        h, w = d.shape
        width = float(np.clip(1.8 + 4.6 * w / max(h, 1), 4.0, 11.0))
        ax = new_figure(width, 5.0, layout="constrained").subplots()
    cmap = matplotlib.colormaps["magma"].with_extremes(bad="0.6")
    im = ax.imshow(np.ma.masked_invalid(d), cmap=cmap, vmin=0.0, vmax=vmax, interpolation="nearest")
    extend = "max" if dmax > vmax else "neither"
    cb = ax.figure.colorbar(im, ax=ax, extend=extend)
    label = "ΔE00 (CIEDE2000, camera vs truth)"
    if extend == "max":
        label += f"; > {vmax:g} in the top colour (max {dmax:.2f})"
    cb.set_label(label)
    ax.set_xlabel("x (pixel)")
    ax.set_ylabel("y (pixel)")
    if title:
        ax.set_title(textwrap.fill(title, 80), fontsize="small", y=1.0)
    return ax
