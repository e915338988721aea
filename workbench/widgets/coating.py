"""A notebook panel to edit a thin-film stack and see R and T at several angles and polarisations live.

The panel wires ipywidgets controls to :func:`workbench.optics.stacks.parse_layer_formula`,
:func:`workbench.optics.thinfilm.stack_response` and the figure of
:mod:`workbench.plots.coating_vector`. The stack is a layer formula over material
symbols (``(0.5L H 0.5L)^10`` with ``H=TiO2, L=SiO2``, QWOTs at the
reference wavelength); a slider scales every thickness (a systematic
thickness error, or a quick shift of the whole design). The figure is SVG
drawn by the package's own plotter (:mod:`workbench.plots.vector`, no
matplotlib: the panel's first figure does not wait for matplotlib's
import) in an ``ipywidgets.Output`` widget; a bad entry shows as one line,
``error: …``, never a traceback.

>>> from workbench.widgets.coating import CoatingPanel   # doctest: +SKIP
>>> CoatingPanel()                                       # doctest: +SKIP
"""

from __future__ import annotations

from pathlib import Path

import ipywidgets as W
import numpy as np
from IPython.display import SVG

from workbench.analysis.evaluator import DesignEvaluator
from workbench.analysis.transition import band_sides
from workbench.errors import WorkbenchError
from workbench.fileio.design_toml import load_design
from workbench.optics.materials import material_named
from workbench.optics.stacks import cone_response, parse_layer_formula, physical_thicknesses, resolve_materials
from workbench.optics.thinfilm import stack_response
from workbench.plots.coating_vector import stack_angles_figure
from workbench.widgets.common import ErrorLine, guard, html_table, output_svg, show_svg

__all__ = ["CoatingPanel", "coating_panel", "parse_material_symbols"]


def parse_material_symbols(text: str) -> dict:
    """``'H=TiO2, L=SiO2'`` → ``{'H': 'TiO2', 'L': 'SiO2'}``."""
    out = {}
    for part in text.replace(";", ",").split(","):
        if not part.strip():
            continue
        sym, sep, name = part.partition("=")
        if not sep or not sym.strip() or not name.strip():
            raise WorkbenchError(f"materials must be SYMBOL=MATERIAL pairs such as H=TiO2, L=SiO2 (got {part.strip()!r})")
        out[sym.strip()] = name.strip()
    if not out:
        raise WorkbenchError("materials must be SYMBOL=MATERIAL pairs such as H=TiO2, L=SiO2 (got nothing)")
    return out


def _angles(text: str) -> list[float]:
    out = []
    for cell in text.replace(" ", "").split(","):
        try:
            a = float(cell)
        except ValueError:
            raise WorkbenchError(f"angles must be comma-separated degrees such as 0,30,45 (got {cell!r})") from None
        if not (0 <= a < 90):
            raise WorkbenchError(f"angles must be 0 ≤ angle < 90 degrees (got {cell})")
        out.append(a)
    return out


class CoatingPanel(W.VBox):
    """Controls and views of one thin-film stack.

    Parameters
    ----------
    layers : str
        Layer formula (see :mod:`workbench.optics.stacks`).
    materials : str
        ``SYMBOL=MATERIAL`` pairs.
    reference_nm : float
        Reference wavelength of the QWOTs, nm.
    incident, substrate : str
        Materials or indices.
    angles : str
        Angles in the incidence medium, degrees, comma-separated.
    design : Design or path-like, optional
        A camera design: the stack then stands in for one of its elements
        (``element``; reflecting into ``reflects`` or transmitting), at the
        first angle, over the cone of ``f_number`` when given, and the
        camera's Vora value and mean ΔE00 are shown next to the design's own.
    element : str, optional
        The element the stack replaces (default: the design's
        ``dichroic-splitter`` or first element).
    reflects : {'none', 'R', 'G', 'B'}
    f_number : float or None

    Attributes
    ----------
    response : StackResponse or None
        The last computed response.
    edges : list of (float, dict)
        Per angle (degrees), the :func:`~workbench.analysis.transition.band_sides` of ``'s'``, ``'p'``
        and ``'mean'`` (the edge rule of docs/methods.md §15).
    status : ErrorLine
    """

    def __init__(self, layers: str = "(0.5L H 0.5L)^10", materials: str = "H=TiO2, L=SiO2",
                 reference_nm: float = 440.0, incident: str = "crown-517", substrate: str = "crown-517",
                 angles: str = "0, 30, 45", design=None, element: str | None = None, reflects: str = "none",
                 f_number: float | None = None):
        wide = W.Layout(width="460px")
        short = W.Layout(width="230px")
        self.layers = W.Text(value=layers, description="layers", layout=wide, continuous_update=False)
        self.materials = W.Text(value=materials, description="materials", layout=wide, continuous_update=False)
        self.reference = W.FloatText(value=reference_nm, description="λ ref (nm)", layout=short)
        self.incident = W.Text(value=incident, description="incident", layout=short, continuous_update=False)
        self.substrate = W.Text(value=substrate, description="substrate", layout=short, continuous_update=False)
        self.angles = W.Text(value=angles, description="angles (°)", layout=short, continuous_update=False)
        self.scale = W.FloatSlider(value=1.0, min=0.8, max=1.2, step=0.002, description="thickness ×",
                                   readout_format=".3f", continuous_update=True, layout=wide)
        self.quantity = W.ToggleButtons(options=["T", "R"], value="T", description="show")
        self.status = ErrorLine()
        self.figure = W.Output()
        self.recipe = W.HTML()
        self.response = None
        self.edges = []
        self.camera = W.HTML()
        self.measures = None
        self._evaluator = None
        self._design_measures = None
        self.element = W.Dropdown(description="replaces", options=[], layout=W.Layout(width="300px"))
        self.reflects = W.Dropdown(description="reflects", options=["none", "R", "G", "B"], value=reflects,
                                   layout=W.Layout(width="200px"))
        self.f_number = f_number
        if design is not None:

            if isinstance(design, (str, Path)):
                design = load_design(design)
            self._evaluator = DesignEvaluator(design)
            self._design_measures = self._evaluator.measures()
            names = [e.name for e in design.chain]
            default = next((e.name for e in design.chain if e.type == "dichroic-splitter"), names[0])
            self.element.options = names
            self.element.value = element or default
            self.element.observe(lambda _change: self.update(), names="value")
            self.reflects.observe(lambda _change: self.update(), names="value")
        for w in (self.layers, self.materials, self.reference, self.incident, self.substrate, self.angles,
                  self.scale, self.quantity):
            w.observe(lambda _change: self.update(), names="value")
        super().__init__([
            W.HTML("<b>Thin-film stack</b> — characteristic-matrix method; s, p and their mean at each angle "
                   "(angles in the incidence medium)"),
            self.layers, self.materials,
            W.HBox([self.reference, self.angles]), W.HBox([self.incident, self.substrate]),
            self.scale, self.quantity,
            *([W.HBox([self.element, self.reflects])] if design is not None else []),
            self.status, self.camera, self.figure, self.recipe,
        ])
        self.update()

    def stack(self):
        """``(symbols, materials, thicknesses_nm)`` of the current entries (thickness scale applied)."""
        mats = resolve_materials(parse_material_symbols(self.materials.value), what="materials")
        layers = parse_layer_formula(self.layers.value, mats, what="layers")
        ref = float(self.reference.value)
        if not ref > 0:
            raise WorkbenchError(f"λ ref must be > 0 nm (got {ref:g})")
        d = physical_thicknesses(layers, mats, ref) * float(self.scale.value)
        return [x.symbol for x in layers], mats, d

    def update(self) -> None:
        """Recompute and redraw from the current entries; errors go to the status line."""
        with guard(self.status):
            symbols, mats, d = self.stack()
            angles = _angles(self.angles.value)
            lo = max([m.range_nm[0] for m in mats.values() if m.range_nm] + [380.0])
            hi = min([m.range_nm[1] for m in mats.values() if m.range_nm] + [780.0])
            wl = np.arange(lo, hi + 1e-9, 1.0)
            inc = material_named(self.incident.value)
            sub = material_named(self.substrate.value)
            n_inc = inc.index(wl)
            if np.any(n_inc.imag != 0):
                raise WorkbenchError(f"incident must be lossless (k = 0) (got {self.incident.value!r})")
            by_sym = {s: m.index(wl) for s, m in mats.items()}
            N = np.stack([by_sym[s] for s in symbols])
            self.response = res = stack_response(N, d, wl, angles, incident=n_inc.real, substrate=sub.index(wl))
            self.edges = []
            rows = []
            for ia, a in enumerate(angles):
                by = {"s": band_sides(wl, res.R[0, ia]), "p": band_sides(wl, res.R[1, ia]),
                      "mean": band_sides(wl, res.R_mean[ia])}
                self.edges.append((a, by))
                cells = {"angle": f"{a:g}°"}
                for pol, sides in by.items():
                    cells[pol] = f"{sides['short_wave'].short_text()} / {sides['long_wave'].short_text()}"
                    ripple = [t.pass_ripple_pct for t in sides.values() if np.isfinite(t.pass_ripple_pct)]
                    cells[f"{pol} pass ripple"] = "–" if not ripple else f"{max(ripple):.1f} %"
                rows.append(cells)
            show_svg(self.figure, stack_angles_figure(res, quantity=self.quantity.value, edges=self.edges).svg(),
                     alt="R or T at each angle")
            rough = any(not t.monotone for _, by in self.edges for sides in by.values() for t in sides.values()
                        if not t.problem)
            edges = html_table(rows, ["angle", "s", "p", "mean", "s pass ripple", "p pass ripple", "mean pass ripple"],
                               caption="main reflection band's edges at R = 50 %, nm (short-wave / long-wave; – off "
                                       "the grid): the single 50 % crossing of each transition to a pass band "
                                       "(docs/methods.md §15); pass ripple: max − min of R in the pass band, the "
                                       "larger side"
                                       + ("; * non-monotone transition (R rises again by more than 1 % between "
                                          "90 % and 10 %), a–b: several crossings, no single edge" if rough else ""))
            ref = float(self.reference.value)
            n_ref = {s: m.index([ref])[0].real for s, m in mats.items()}
            layer_rows = [{"#": i + 1, "material": mats[s].name, "nm": f"{t:.2f}",
                           "QWOT": f"{t * n_ref[s] * 4 / ref:.3f}"} for i, (s, t) in enumerate(zip(symbols, d))]
            recipe = html_table(layer_rows, ["#", "material", "nm", "QWOT"],
                                caption=f"{len(symbols)} layers, {d.sum():.1f} nm; QWOT at {ref:g} nm")
            self.recipe.value = edges + recipe
            if self._evaluator is not None:
                self._camera_update(symbols, mats, d, inc, sub, angles[0])

    def svg(self) -> str | None:
        """The SVG text of the figure shown now."""
        return output_svg(self.figure)

    def snapshot(self):
        """The picture the panel shows now, as an image for a notebook cell or a report."""
        return SVG(data=self.svg())

    def _camera_update(self, symbols, mats, d, inc, sub, aoi) -> None:
        """The camera's measures with the stack in place of the chosen element."""
        from workbench.analysis.recipe import measures_with_curves  # late: scipy.optimize, only with a design

        ev = self._evaluator
        wl = ev.wavelengths
        by_sym = {s: m.index(wl) for s, m in mats.items()}
        N = np.stack([by_sym[s] for s in symbols])
        R, T, _, _ = cone_response(N, d, wl, aoi_deg=aoi, f_number=self.f_number, incident=inc.index(wl).real,
                                   substrate=sub.index(wl))
        m = measures_with_curves(ev, self.element.value, R, T, reflects=self.reflects.value)
        self.measures = m
        base = self._design_measures
        rows = [{"measure": "Vora value ν", "design": f"{base.vora_value:.4f}", "with this stack": f"{m.vora_value:.4f}"}]
        for ill in base.delta_E00:
            rows.append({"measure": f"mean ΔE00 {ill}", "design": f"{base.delta_E00[ill]['mean']:.3f}",
                         "with this stack": f"{m.delta_E00[ill]['mean']:.3f}"})
        cone = f", f/{self.f_number:g} cone" if self.f_number else ", chief ray"
        self.camera.value = html_table(
            rows, ["measure", "design", "with this stack"],
            caption=f"camera: the stack in place of {self.element.value!r} at {aoi:g}°{cone}, "
                    f"reflecting into {self.reflects.value} (matrix refitted as the design's [fit] says)")


def coating_panel(**kw) -> CoatingPanel:
    """Build a :class:`CoatingPanel` (for a notebook cell)."""
    return CoatingPanel(**kw)
