"""Chromaticity diagrams (CIE 1931 xy, CIE 1976 u′v′) and target colour-matching functions."""

from __future__ import annotations

import numpy as np

from workbench.colorimetry.cie import cmfs_on, cmfs_table, observer_key, observer_label
from workbench.colorimetry.coordinates import XYZ_to_uv_prime, XYZ_to_xy, xy_to_uv_prime
from workbench.colorimetry.gamut import gamut_vertices
from workbench.colorimetry.primaries import Primaries
from workbench.model.spectra import Spectra
from workbench.plots._canvas import new_figure

__all__ = ["plot_chromaticity_diagram", "plot_target_cmfs", "spectral_locus", "draw_spectral_locus", "AXIS_LABELS"]

AXIS_LABELS = {
    "xy": ("x (CIE 1931 chromaticity)", "y (CIE 1931 chromaticity)"),
    "uv": ("u′ (CIE 1976 UCS)", "v′ (CIE 1976 UCS)"),
}


def spectral_locus(diagram: str, observer: str) -> tuple[np.ndarray, np.ndarray]:
    """The spectral locus 380-700 nm: wavelengths (n,) nm and chromaticities (n, 2) in `diagram` ('xy' or 'uv')."""
    wl, cm = cmfs_table(observer)
    keep = (wl >= 380) & (wl <= 700)
    XYZ = np.asarray(cm)[keep]
    pts = XYZ_to_xy(XYZ) if diagram == "xy" else XYZ_to_uv_prime(XYZ)
    return wl[keep], pts


LOCUS_LABELS_NM = (460, 480, 500, 520, 540, 560, 580, 600, 620)


def draw_spectral_locus(ax, diagram: str = "uv", observer="2", *, label_wavelengths=LOCUS_LABELS_NM,
                        lw: float = 1.1) -> np.ndarray:
    """Draw the closed spectral locus (380-700 nm and the purple line) with wavelength labels on ``ax``.

    Returns the closed locus (n + 1, 2) in ``diagram`` ('xy' or 'uv') chromaticities.
    """
    key = observer_key(observer)
    wl, locus = spectral_locus(diagram, key)
    closed = np.vstack([locus, locus[:1]])
    ax.plot(closed[:, 0], closed[:, 1], color="0.2", lw=lw,
            label=f"spectral locus 380-700 nm ({observer_label(key)})")
    for w in label_wavelengths:
        i = int(np.argmin(np.abs(wl - w)))
        ax.annotate(f"{w:g}", locus[i], fontsize=7, color="0.3", xytext=(3, 3), textcoords="offset points")
    return closed


def plot_chromaticity_diagram(primaries, *, diagram: str = "xy", observer="2", ax=None,
                              label_wavelengths=LOCUS_LABELS_NM):
    """Spectral locus, purple line, the gamut triangles and their whites.

    Parameters
    ----------
    primaries : Primaries or sequence of Primaries
    diagram : {'xy', 'uv'}
    observer : {'2', '10'}
        Observer of the spectral locus (the triangles are as given).
    ax : matplotlib Axes, optional

    Returns
    -------
    matplotlib Axes
    """
    d = "uv" if str(diagram).lower().replace("′", "").replace("'", "") == "uv" else "xy"
    key = observer_key(observer)
    sets = [primaries] if isinstance(primaries, Primaries) else list(primaries)
    if ax is None:
        ax = new_figure(6, 6, layout="constrained").subplots()
    draw_spectral_locus(ax, d, key, label_wavelengths=label_wavelengths, lw=1.2)
    for p in sets:
        v = gamut_vertices(p, d)
        tri = np.vstack([v, v[:1]])
        line, = ax.plot(tri[:, 0], tri[:, 1], lw=1.5, label=f"{p.name} (white {p.white_name})")
        wpt = p.white_xy if d == "xy" else xy_to_uv_prime(p.white_xy)
        ax.plot(*wpt, marker="o", ms=4, color=line.get_color(), ls="none")
    ax.set_xlabel(AXIS_LABELS[d][0])
    ax.set_ylabel(AXIS_LABELS[d][1])
    ax.set_aspect("equal")
    ax.set_xlim(0, 0.8 if d == "xy" else 0.65)
    ax.set_ylim(0, 0.9 if d == "xy" else 0.65)
    ax.legend(fontsize=7, loc="upper right")
    ax.set_title(f"Gamut triangles, {'CIE 1931 xy' if d == 'xy' else 'CIE 1976 u′v′'} diagram", y=1.0)
    return ax


def plot_target_cmfs(targets: Spectra, *, observer="2", ax=None, title: str | None = None):
    """Target colour-matching functions r̄ḡb̄ (solid) with the CIE x̄ȳz̄ (dashed).

    Parameters
    ----------
    targets : Spectra
        From :func:`workbench.colorimetry.targets.target_cmfs` (3 curves).
    observer : {'2', '10'}
        Observer the targets were made with (for the CIE curves drawn).
    ax : matplotlib Axes, optional

    Returns
    -------
    matplotlib Axes
    """
    if ax is None:
        ax = new_figure(7, 4, layout="constrained").subplots()
    key = observer_key(observer)
    wl = targets.wavelengths
    for v, n, c in zip(targets.flat(), targets.names, ("tab:red", "tab:green", "tab:blue")):
        ax.plot(wl, v, color=c, lw=1.6, label=n.replace("_bar", "̄"))
    cm = cmfs_on(wl, key).values
    for k, (n, c) in enumerate(zip(("x̄", "ȳ", "z̄"), ("tab:red", "tab:green", "tab:blue"))):
        ax.plot(wl, cm[:, k], color=c, lw=0.9, ls="--", alpha=0.7, label=f"{n} ({observer_label(key)})")
    ax.axhline(0, color="0.5", lw=0.6)
    ax.set_xlabel("wavelength λ (nm)")
    ax.set_ylabel("relative sensitivity (inverse RP 177 matrix · x̄ȳz̄)")
    ax.set_title(title or "Target colour-matching functions and CIE functions", y=1.0)
    ax.legend(fontsize=7, ncol=2)
    return ax
