"""The camera-design notebook panel: sliders, the live figure and measures, the fit, saving.

The panels only wire ipywidgets controls to the package's public functions
(:mod:`workbench.analysis.evaluator`, :mod:`workbench.analysis.fit`, :mod:`workbench.model.design`, :mod:`workbench.colorimetry.primaries`,
:mod:`workbench.plots`); every number comes from there with its unit and
method. The live figure is SVG drawn by the package's own plotter
(:mod:`workbench.plots.vector`, no matplotlib: the panel's first figure
does not wait for matplotlib's import), held by an ``ipywidgets.Output``
widget, so a picture is part of the widget state: tests read it without a
browser, and a browser shows it as an ``<img>``.

Shared helpers, also used by the other panels (light sources, tolerances):

- :class:`ErrorLine`: the one place a panel shows a user error — the same
  ``error: …`` text the command line prints (``str`` of the
  :class:`~workbench.errors.WorkbenchError`), never a traceback;
- :func:`uploaded_files` / :func:`read_uploaded_spectra`: the files of a
  ``FileUpload`` widget, read by the CSV rules of ``workbench.fileio.spectra_csv``;
- :func:`figure_png`, :func:`show_png`, :func:`show_svg`, :func:`html_table`, :func:`guard`.

Panels:

- :class:`DesignPanel` (:func:`design_panel`): sliders for the design's
  parameters, the live figure of the three channel responses against the
  target functions with the residual below, the live measures, a Fit button
  (background thread, progress bar, Stop), the before/after overlay, saving
  the design and exporting the curves;
- :class:`PrimariesPanel` (:func:`primaries_panel`): a named set, typed
  chromaticities or emitter spectra; the chromaticity diagram with gamut
  triangles; the target functions; the emitter-set fit; the colour-bar table.
"""

from __future__ import annotations

import html
import math
import re
import threading
import time
from dataclasses import replace
from pathlib import Path

import ipywidgets as W
import numpy as np
from IPython.display import SVG

from workbench import demo_dir
from workbench.model.design import CHANNELS, Design
from workbench.optics.kinds import element_param_spec
from workbench.fileio.design_toml import load_design, save_design
from workbench.errors import WorkbenchError
from workbench.analysis.evaluator import DesignEvaluator, fitted_matrix
from workbench.analysis.measures_report import Measures
from workbench.fileio.spectra_csv import write_spectra_csv
from workbench.model.spectra import Spectra
from workbench.widgets.common import (
    ErrorLine,
    design_from_upload,
    fmt_number,
    guard,
    html_table,
    output_svg,
    show_svg,
    uploaded_files,
)
from workbench.widgets.design_fit import FitControls
from workbench.widgets.sensitivity_figure import SensitivityFigure

__all__ = ["measures_html", "DesignPanel", "design_panel"]


def _nice_step(lo: float, hi: float, parts: int = 2000) -> float:
    raw = (hi - lo) / parts
    if raw <= 0:
        return 0.01
    e = 10 ** math.floor(math.log10(raw))
    for m in (1, 2, 5, 10):
        if m * e >= raw * (1 - 1e-9):
            return m * e
    return 10 * e  # pragma: no cover


def _decimals(step: float) -> int:
    return max(0, -int(math.floor(math.log10(step) + 1e-9)))


# --------------------------------------------------------------------------
# The measures table
# --------------------------------------------------------------------------


def measures_html(m: Measures, *, sample_count: int | None = None) -> str:
    """Every headline measure of one design state with its unit and method, as HTML."""
    k = sample_count if sample_count is not None else m.per_sample.shape[1]
    meth = m.methods
    head = [
        {"measure": "Vora value ν", "value": fmt_number(m.vora_value), "unit": "0-1 (1: spans x̄ȳz̄)",
         "method": meth["vora_value"]},
        {"measure": "Neugebauer q (R / G / B)", "value": " / ".join(fmt_number(v) for v in m.neugebauer_q),
         "unit": "0-1 per channel", "method": meth["neugebauer_q"]},
        {"measure": "Luther residual", "value": fmt_number(m.luther_residual),
         "unit": "relative (0 = Luther)", "method": meth["luther_residual"]},
        {"measure": "weighted mean ΔE00", "value": fmt_number(m.weighted_mean_delta_E00, 3),
         "unit": "ΔE00 (CIEDE2000)", "method": "mean over samples × illuminants with the design's "
         "[fit.weights]"},
        {"measure": m.smi["method"].split(" =")[0], "value": fmt_number(m.smi["smi"], 1),
         "unit": "index (100 = no error)", "method": meth["smi"]},
    ]
    rows_html = "".join(
        f'<tr><td style="padding:1px 6px">{html.escape(r["measure"])}</td>'
        f'<td style="padding:1px 6px;text-align:right" class="wb-m-{i}">{html.escape(r["value"])}</td>'
        f'<td style="padding:1px 6px">{html.escape(r["unit"])}</td>'
        f'<td style="padding:1px 6px;color:#555;font-size:11px">{html.escape(r["method"])}</td></tr>'
        for i, r in enumerate(head))
    t1 = ('<table class="wb-measures-head" style="border-collapse:collapse;font-size:12px;margin-bottom:6px">'
          '<thead><tr><th style="text-align:left">measure</th><th>value</th>'
          '<th style="text-align:left">unit</th><th style="text-align:left">method</th></tr></thead>'
          f"<tbody>{rows_html}</tbody></table>")
    de_rows = [{"illuminant": ill, **{s: fmt_number(d[s], 3) for s in ("mean", "median", "p95", "max")}}
               for ill, d in m.delta_E00.items()]
    t2 = html_table(de_rows, ["illuminant", "mean", "median", "p95", "max"],
                    headers=["illuminant", "mean ΔE00", "median", "p95", "max"], cls="wb-measures-de",
                    caption=f"ΔE00 (CIEDE2000, CIE 142-2001) over {k} samples, matrix {m.matrix_method}, "
                            f"{m.matrix_scope}")
    n_rows = []
    for ill, d in m.noise.items():
        n_rows.append({
            "illuminant": ill,
            "gain": " / ".join(fmt_number(v, 3) for v in np.asarray(d["row_norms"])),
            "cond": fmt_number(d["condition"], 3),
            "sigma": " / ".join(fmt_number(v, 5) for v in np.asarray(d["sigma_out"])),
            "snr": " / ".join(fmt_number(v, 1) for v in np.asarray(d["snr_db"])),
        })
    t3 = html_table(n_rows, ["illuminant", "gain", "cond", "sigma", "snr"],
                    headers=["illuminant", "noise gain R/G/B (matrix row norms, ×)", "condition number",
                             "σ_out R/G/B (display RGB, white = 1)", "SNR R/G/B (dB)"],
                    cls="wb-measures-noise", caption="noise of the matrix")
    t4 = ""
    if m.infrared is not None:
        ir_rows = [{"cutoff": r["cutoff_nm"], "illuminant": r["illuminant"],
                    "share": " / ".join(fmt_number(r[f"{ch}_ir_%"], 2) for ch in CHANNELS),
                    "with": fmt_number(r["mean_dE00"], 3), "without": fmt_number(r["without_ir"], 3)}
                   for r in m.infrared.rows()]
        t4 = html_table(ir_rows, ["cutoff", "illuminant", "share", "with", "without"],
                        headers=["cut-off (nm)", "illuminant", "signal above it R/G/B (%)",
                                 "mean ΔE00", "mean ΔE00 without it"],
                        cls="wb-measures-ir", caption="near infrared: " + meth["near_infrared"])
    notes = (f'<div style="color:#555;font-size:11px">ΔE00: {html.escape(meth["delta_E00"])}. '
             f'Noise: {html.escape(meth["noise"])}. Target {html.escape(meth["target"])}, observer '
             f'{html.escape(meth["observer"])}, recording illuminant '
             f'{html.escape(meth["recording_illuminant"])}, viewing illuminant '
             f'{html.escape(meth["viewing_illuminant"])}.</div>')
    return f'<div class="wb-measures-body" style="line-height:1.3">{t1}{t2}{t3}{t4}{notes}</div>'


# --------------------------------------------------------------------------
# The design panel
# --------------------------------------------------------------------------


def _slider_specs(design: Design) -> list[dict]:
    """The parameters that get a slider: every one with min and max, plus those whose kind gives a range.

    A parameter without bounds in the design gets a slider when its kind's
    :class:`~workbench.optics.kinds.ParamSpec` has a ``slider`` rule (the
    splitter's angles of incidence: ±10° within 0-80°; its f-number: f/2 ÷ 2
    to × 4); it is not moved by the fit, and the tooltip says so.
    """
    specs = []
    for e in design.chain:
        for key, p in e.params:
            full = f"{e.name}.{key}"
            spec = element_param_spec(e, key)
            unit = spec.unit if spec is not None else ""
            if p.min is not None and p.max is not None:
                lo, hi, note = float(p.min), float(p.max), "bounds from the design"
            elif spec is not None and spec.slider is not None:
                lo, hi, note = spec.slider(p.value)
            else:
                continue
            specs.append({"key": full, "element": e.name, "type": e.type, "param": key, "unit": unit,
                          "value": float(p.value), "min": lo, "max": hi, "free": bool(p.free), "note": note})
    return specs


class DesignPanel(FitControls, W.VBox):
    """The camera-design panel: live controls on a design file, the fit, saving and export.

    Parameters
    ----------
    design : Design, path-like or None
        The design to open; default the demo design
        ``spectra-demo/tern3_design.toml``.

    Attributes
    ----------
    design : Design or None
        The design as loaded (sliders move values on top of it).
    sliders : dict of str to FloatSlider
        One per parameter, by ``'element.param'``.
    measures : Measures or None
        The measures of the current slider values.
    result : FitResult or None
        The last fit.
    error : ErrorLine
        The panel's error line (same text as the command line's).

    Notes
    -----
    Moving a slider evaluates the design (:meth:`DesignEvaluator.measures`)
    and redraws the figure; ``tests/benchmarks/bench_widgets.py`` times that
    path. The Fit button runs :func:`workbench.analysis.fit.fit_design` from the
    current slider values in a background thread; Stop ends it and keeps
    the best point so far. The objective menu overrides the design's
    (ΔE00 averaged over the lights, ΔE00 of the worst light, ν); the mode
    chooses one fit, the accuracy–noise front (``points`` fits, plotted;
    :func:`~workbench.analysis.fit.fit_front`) or the fit robust to the
    design's tolerances (``draws`` units; :func:`~workbench.analysis.fit.fit_robust`,
    nominal against robust with the yields), all with one progress bar. Saving writes the design with the current values
    and the matrix of the current state, atomically.
    """

    def __init__(self, design=None, **kw):
        super().__init__(**kw)
        self.add_class("wb-design-panel")
        self.design: Design | None = None
        self.evaluator: DesignEvaluator | None = None
        self.sliders: dict[str, W.FloatSlider] = {}
        self.measures: Measures | None = None
        self.result: FitResult | None = None
        self.reference: Measures | None = None
        self.reference_label = "as loaded"
        self.figure: SensitivityFigure | None = None
        self.last_update_seconds = math.nan
        self._quiet = False
        self._thread: threading.Thread | None = None
        self._stop = threading.Event()
        self._last_progress = 0.0
        self._offset, self._last_n = 0, 0
        # one evaluation + redraw at a time: the fit thread and the kernel's main thread (a value
        # the browser sends back) must not draw into the one figure together
        self._lock = threading.RLock()

        # -- file row
        if isinstance(design, Design):
            start = design.source or ""
        else:
            start = design if design is not None else demo_dir() / "tern3_design.toml"
        self.path = W.Text(value=str(start), description="design file", placeholder="path/to/design.toml",
                           layout=W.Layout(width="560px"), style={"description_width": "90px"})
        self.path.add_class("wb-path")
        self.load_button = W.Button(description="Load", tooltip="read the design file named on the left",
                                    layout=W.Layout(width="70px"))
        self.load_button.add_class("wb-load")
        self.upload = W.FileUpload(accept=".toml", multiple=False, description="Upload .toml",
                                   layout=W.Layout(width="150px"))
        self.upload.add_class("wb-upload")
        self.error = ErrorLine()
        self.info = W.HTML()
        self.info.add_class("wb-design-info")
        # -- controls and outputs
        self.slider_box = W.VBox(layout=W.Layout(width="410px"))
        self.slider_box.add_class("wb-sliders")
        self.plot = W.Output(layout=W.Layout(width="100%"))
        self.plot.add_class("wb-design-plot")
        self.table = W.HTML()
        self.table.add_class("wb-measures")
        self.overlay = W.Checkbox(value=True, description="overlay reference (dotted)", indent=False,
                                  layout=W.Layout(width="auto"))
        self.overlay.add_class("wb-overlay")
        self.reset_button = W.Button(description="Reset to loaded", layout=W.Layout(width="130px"),
                                     tooltip="put every slider back to the design's values")
        self.reset_button.add_class("wb-reset")
        # -- fit row (workbench.widgets.design_fit)
        self._build_fit_controls()
        # -- save / export row
        self.save_path = W.Text(description="save as", layout=W.Layout(width="430px"),
                                style={"description_width": "90px"})
        self.save_path.add_class("wb-save-path")
        self.save_button = W.Button(description="Save design", layout=W.Layout(width="110px"),
                                    tooltip="write the design with the current values (atomic)")
        self.save_button.add_class("wb-save")
        self.export_path = W.Text(description="curves CSV", layout=W.Layout(width="430px"),
                                  style={"description_width": "90px"})
        self.export_path.add_class("wb-export-path")
        self.export_button = W.Button(description="Export curves", layout=W.Layout(width="110px"),
                                      tooltip="write the R, G, B sensitivities, and the matrixed responses "
                                              "with the targets beside them")
        self.export_button.add_class("wb-export")
        self.status = ErrorLine()

        self.load_button.on_click(lambda _: self.load(self.path.value))
        self.upload.observe(self._on_upload, names="value")
        self.fit_button.on_click(lambda _: self.fit())
        self.stop_button.on_click(lambda _: self.stop())
        self.overlay.observe(lambda _: self._redraw_reference(), names="value")
        self.reset_button.on_click(lambda _: self.reset())
        self.save_button.on_click(lambda _: self.save())
        self.export_button.on_click(lambda _: self.export())

        help_text = W.HTML(
            '<div style="font-size:11px;color:#555;line-height:1.3">Sliders: the design\'s parameters with bounds '
            "(blue handle: free, moved by the fit) and the splitter's angles and f-number (grey handle: "
            "fixed in the fit). Type into a readout for an exact value. An uploaded design's file names "
            "are read relative to the folder of the design file named above.</div>")
        self.children = [
            W.HBox([self.path, self.load_button, self.upload]),
            self.error,
            self.info,
            W.HBox([W.VBox([help_text, self.slider_box, W.HBox([self.overlay, self.reset_button])],
                           layout=W.Layout(width="410px", flex="0 0 auto")),
                    W.VBox([self.plot], layout=W.Layout(flex="1 1 0%", min_width="0", margin="0 0 0 8px"))],
                   layout=W.Layout(width="100%")),
            self.table,
            W.HBox([self.objective, self.mode]),
            W.HBox([self.front_points, self.robust_draws]),
            W.HBox([self.fit_button, self.stop_button, self.progress]),
            self.fit_status,
            self.fit_report,
            W.HBox([self.save_path, self.save_button]),
            W.HBox([self.export_path, self.export_button]),
            self.status,
        ]
        if isinstance(design, Design):
            with guard(self.error):
                self._open(design)
        else:
            self.load(start)

    # -- loading ---------------------------------------------------------------
    def load(self, path) -> bool:
        """Read a design file by path; on a bad file the error line shows why and the panel keeps its design."""
        with guard(self.error) as g:
            d = load_design(Path(str(path).strip()))
            self._open(d)
        return not g.failed

    def _on_upload(self, change) -> None:
        files = uploaded_files(self.upload)
        if not files:
            return
        name, content = files[0]
        with guard(self.error):
            base = Path(self.path.value.strip() or ".").expanduser()
            base = base.parent if base.suffix else base
            self._open(design_from_upload(name, content, base), from_path=False)

    def _open(self, design: Design, *, from_path: bool = True) -> None:
        ev = DesignEvaluator(design)
        m = ev.measures()
        self.design, self.evaluator, self.result = design, ev, None
        if design.source and from_path:
            self.path.value = str(design.source)
        stem = re.sub(r"[^A-Za-z0-9_.-]+", "-", Path(design.source or design.name).stem).strip("-") or "design"
        self.save_path.value = f"{stem}-edited.toml"
        self.export_path.value = f"{stem}-sensitivities.csv"
        self.sliders = {}
        rows = []
        last = None
        for s in _slider_specs(design):
            if s["element"] != last:
                rows.append(W.HTML(f'<b style="font-size:12px;line-height:1.2">{html.escape(s["element"])}</b> '
                                   f'<span style="font-size:11px;color:#555">({html.escape(s["type"])})</span>'))
                last = s["element"]
            step = _nice_step(s["min"], s["max"])
            unit = f", {s['unit']}" if s["unit"] else ""
            sl = W.FloatSlider(
                value=s["value"], min=s["min"], max=s["max"], step=step, description=s["param"],
                readout_format=f".{_decimals(step)}f", continuous_update=True,
                tooltip=f"{s['key']}{unit}: {s['min']:g} to {s['max']:g} ({s['note']})",
                layout=W.Layout(width="400px"),
                style={"description_width": "150px", "handle_color": "#1976d2" if s["free"] else "#9e9e9e"},
            )
            sl.add_class("wb-slider")
            sl.add_class("wb-slider-" + re.sub(r"[^A-Za-z0-9_-]", "-", s["key"]))
            sl.observe(self._on_slider, names="value")
            self.sliders[s["key"]] = sl
            rows.append(sl)
        old = self.slider_box.children
        self.slider_box.children = rows
        for w in old:  # the previous design's controls leave the kernel too
            w.close()
        self.figure = SensitivityFigure(m.wavelengths)
        self.figure.set_targets(m.targets)
        tname = ev.primaries.name
        light = ev.illuminant_labels.get(m.curve_illuminant, m.curve_illuminant)
        self.figure.set_context(
            f"{design.name}\nR, G, B after white balance and the {m.matrix_method} matrix ({m.matrix_scope}), "
            f"under {light},\nagainst the target functions of {tname}",
            f"target r̄ḡb̄ ({tname})")
        self.reference, self.reference_label = m, "as loaded"
        self.info.value = (
            f'<div style="font-size:12px;line-height:1.35"><b>{html.escape(design.name)}</b> — '
            f'{html.escape(design.description)} <span style="color:#555">({len(self.sliders)} sliders, '
            f'{len(ev.free)} free parameters; objective {html.escape(design.fit.objective)}; '
            f'{len(ev.notes)} notes on how the data were read)</span></div>')
        self.fit_status.value = ""
        self.fit_report.value = ""
        self.progress.value = 0
        self.status.clear()
        self._redraw_reference(draw=False)
        self._show(m)

    # -- the live path ------------------------------------------------------------
    def values(self) -> dict[str, float]:
        """The current slider values by ``'element.param'``."""
        return {k: float(s.value) for k, s in self.sliders.items()}

    def set_values(self, values: dict[str, float]) -> None:
        """Move several sliders at once and update once."""
        self._quiet = True
        try:
            for k, v in values.items():
                if k in self.sliders:
                    self.sliders[k].value = float(v)
        finally:
            self._quiet = False
        self.update()

    def reset(self) -> None:
        """Every slider back to the design's value."""
        if self.design is not None:
            self.set_values({k: p.value for k, p in self.design.parameters().items()})

    def _on_slider(self, change) -> None:
        if not self._quiet:
            self.update()

    def update(self) -> None:
        """Evaluate the current values, refresh the measures and redraw the figure."""
        if self.evaluator is None:
            return
        with guard(self.error), self._lock:
            t0 = time.perf_counter()
            m = self.evaluator.measures(self.values())
            self._show(m)
            self.last_update_seconds = time.perf_counter() - t0

    def _show(self, m: Measures) -> None:
        with self._lock:
            self.measures = m
            show_svg(self.plot, self.figure.update(m.curves), alt="channel responses and targets")
            self.table.value = measures_html(m)

    def _redraw_reference(self, draw: bool = True) -> None:
        if self.figure is None:
            return
        with self._lock:
            ref = self.reference if self.overlay.value else None
            self.figure.set_reference(None if ref is None else ref.curves, self.reference_label)
            if draw and self.measures is not None:
                show_svg(self.plot, self.figure.update(self.measures.curves),
                         alt="channel responses and targets")

    def svg(self) -> str | None:
        """The SVG text of the figure shown now (``None`` before a design is open)."""
        return output_svg(self.plot)

    def snapshot(self):
        """The picture the panel shows now, as an image for a notebook cell or a report."""
        return SVG(data=self.svg())


    # -- saving and export --------------------------------------------------------
    def current_design(self) -> Design:
        """The loaded design with the current values and the matrix of the current state."""
        values = self.values()
        d = self.design.with_values(values)
        return replace(d, matrix=fitted_matrix(self.evaluator.measures(values)))

    def save(self, path=None) -> bool:
        """Write the design with the current values (atomically) to ``path`` or the save box."""
        with guard(self.error) as g:
            if self.design is None:
                raise WorkbenchError("no design loaded")
            target = Path(str(path if path is not None else self.save_path.value).strip())
            if not str(target) or target.suffix.lower() != ".toml":
                raise WorkbenchError(f"save as: expected a .toml file name (got {str(target)!r})")
            d = self.current_design()
            save_design(d, target)
            self.status.ok(f"saved {target} (current values; matrix {d.matrix.method}, {d.matrix.scope}, "
                           "of this state)")
        return not g.failed

    def export(self, path=None) -> bool:
        """Write the R, G, B sensitivities, and ``<stem>-matrixed.csv`` with responses and targets."""
        with guard(self.error) as g:
            if self.measures is None:
                raise WorkbenchError("no design loaded")
            target = Path(str(path if path is not None else self.export_path.value).strip())
            if not str(target) or target.suffix.lower() != ".csv":
                raise WorkbenchError(f"curves CSV: expected a .csv file name (got {str(target)!r})")
            m = self.evaluator.measures(self.values())
            raw = Spectra(m.wavelengths, m.sensitivities, CHANNELS, kind="sensitivity",
                          units=self.evaluator.model.units,
                          notes=(f"product along each path of the chain of {self.design.name!r}",))
            write_spectra_csv(raw, target)
            second = target.with_name(target.stem + "-matrixed.csv")
            vals = np.concatenate([m.curves, m.targets])
            names = ("R_camera", "G_camera", "B_camera", "r_bar_target", "g_bar_target", "b_bar_target")
            write_spectra_csv(Spectra(m.wavelengths, vals, names, kind="sensitivity", units="relative"), second)
            self.status.ok(f"wrote {target} (R, G, B sensitivities, {raw.units}) and {second} (responses "
                           f"after white balance and {m.matrix_method} matrix with the targets, under "
                           f"{m.curve_illuminant}, relative)")
        return not g.failed


def design_panel(design=None) -> DesignPanel:
    """The camera-design panel on a design file (default: the demo design); see :class:`DesignPanel`."""
    return DesignPanel(design)
