"""Interactive panels for the notebooks: the camera-design panel and the primaries panel.

The panels only wire ipywidgets controls to the package's public functions
(:mod:`workbench.analysis.evaluator`, :mod:`workbench.analysis.fit`, :mod:`workbench.model.design`, :mod:`workbench.colorimetry.primaries`,
:mod:`workbench.plots`); every number comes from there with its unit and
method. Figures are drawn by matplotlib's Agg renderer into PNG images held
by ``ipywidgets.Output`` widgets, so a picture is part of the widget state:
tests read it without a browser, and a browser shows it as an ``<img>``.

Shared helpers, also used by the other panels (light sources, tolerances):

- :class:`ErrorLine`: the one place a panel shows a user error — the same
  ``error: …`` text the command line prints (``str`` of the
  :class:`~workbench.errors.WorkbenchError`), never a traceback;
- :func:`uploaded_files` / :func:`read_uploaded_spectra`: the files of a
  ``FileUpload`` widget, read by the CSV rules of ``workbench.fileio.spectra_csv``;
- :func:`figure_png`, :func:`show_png`, :func:`html_table`, :func:`guard`.

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

import base64
import datetime as _dt
import html
import io
import math
import re
import threading
import time
from pathlib import Path

import numpy as np
import ipywidgets as W

from workbench import demo_dir
from workbench.model.design import CHANNELS, ELEMENT_TYPES, Design
from workbench.fileio.design_toml import load_design, save_design
from workbench.errors import WorkbenchError
from workbench.analysis.evaluator import DesignEvaluator, Measures, fitted_matrix
from workbench.analysis.fit import FitResult, fit_design

__all__ = [
    "ErrorLine",
    "guard",
    "uploaded_files",
    "read_uploaded_spectra",
    "design_from_upload",
    "figure_png",
    "show_png",
    "output_png",
    "html_table",
    "compact",
    "SensitivityFigure",
    "DesignPanel",
    "design_panel",
    "PrimariesPanel",
    "primaries_panel",
]

_CHANNEL_COLOURS = ("tab:red", "tab:green", "tab:blue")

#: Evaluation budget of the primaries panel's emitter-set fit (1 nm grid; a second or two).
EMITTER_FIT_EVALUATIONS = 300


# --------------------------------------------------------------------------
# Shared helpers
# --------------------------------------------------------------------------


def error_text(exc: BaseException) -> str:
    """The text a panel shows for an exception: the CLI's ``error: …`` line(s).

    A :class:`WorkbenchError` is the user's mistake and reads exactly as the
    command line prints it. Anything else is a fault of the workbench; it is
    named in one line (type and message) with a request to report it.
    """
    if isinstance(exc, WorkbenchError):
        return f"error: {exc}"
    return (f"error: unexpected {type(exc).__name__}: {exc} "
            "(a fault of the workbench, not of your input: please report it)")


class ErrorLine(W.HTML):
    """A line for user errors and short confirmations; empty when all is well.

    ``show(exc)`` writes :func:`error_text` (red, monospace, line breaks
    kept for the multi-line design-file report); ``ok(text)`` a confirmation;
    ``clear()`` empties it. ``text`` holds the plain text shown.
    """

    def __init__(self, **kw):
        super().__init__(**kw)
        self.text = ""
        self.is_error = False
        self.add_class("wb-error")

    def show(self, exc: BaseException) -> None:
        self._set(error_text(exc), error=True)

    def ok(self, text: str) -> None:
        self._set(text, error=False)

    def clear(self) -> None:
        self.text = ""
        self.is_error = False
        self.value = ""

    def _set(self, text: str, *, error: bool) -> None:
        self.text = text
        self.is_error = error
        colour = "#b00020" if error else "#1b5e20"
        self.value = (f'<pre style="margin:2px 0;color:{colour};white-space:pre-wrap;line-height:1.35;'
                      f'font-size:12px">{html.escape(text)}</pre>')


class guard:
    """Context manager for widget handlers: errors go to an :class:`ErrorLine`, never a traceback.

    ``with guard(line): ...`` clears the line first (``clear=True``) and
    shows any exception raised inside; ``failed`` tells afterwards whether
    one was. ``KeyboardInterrupt`` passes through.
    """

    def __init__(self, line: ErrorLine, *, clear: bool = True):
        self.line = line
        self.clear = clear
        self.failed = False

    def __enter__(self):
        if self.clear:
            self.line.clear()
        return self

    def __exit__(self, typ, exc, tb):
        if exc is None or not isinstance(exc, Exception):
            return False
        self.failed = True
        self.line.show(exc)
        return True


def uploaded_files(upload: W.FileUpload) -> list[tuple[str, bytes]]:
    """``(name, content bytes)`` of each file in a ``FileUpload`` widget (ipywidgets 8)."""
    out = []
    for f in upload.value or ():
        out.append((str(f["name"]), bytes(f["content"])))
    return out


def upload_entry(name: str, content: bytes) -> dict:
    """A ``FileUpload`` value entry as the browser sends it (for code and tests that fill one)."""
    return {"name": name, "type": "", "size": len(content), "content": memoryview(content),
            "last_modified": _dt.datetime.now(_dt.timezone.utc)}


def read_uploaded_spectra(upload: W.FileUpload, *, kind: str | None = None):
    """The spectra of the (first) uploaded CSV file, by the rules of ``read_spectra_csv``.

    Returns ``None`` when nothing is uploaded. Messages name the uploaded
    file as the CLI names a file given by path.
    """
    from workbench.fileio.spectra_csv import parse_spectra_text

    files = uploaded_files(upload)
    if not files:
        return None
    name, content = files[0]
    return parse_spectra_text(content, source=name, kind=kind)


def design_from_upload(name: str, content: bytes, base_dir) -> Design:
    """A design file's bytes (an upload) read and validated as :func:`load_design` reads a file.

    Relative file names in it resolve against ``base_dir``; messages name
    the file ``name``, as the command line names a path.
    """
    from workbench.fileio.design_toml import design_from_bytes

    return design_from_bytes(content, source=name, base_dir=base_dir)


def figure_png(fig, *, dpi=None) -> bytes:
    """PNG bytes of a matplotlib figure (Agg renderer; the figure is left as it is)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    if not isinstance(fig.canvas, FigureCanvasAgg):
        FigureCanvasAgg(fig)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi or fig.dpi)
    return buf.getvalue()


def show_png(output: W.Output, png: bytes, *, alt: str = "figure", width: int | None = None) -> None:
    """Put one PNG image into an Output widget, replacing what it held.

    Sets the widget's ``outputs`` directly (no ``with output:`` context), so
    it works from a background thread and the image is in the widget state.
    """
    meta = {"image/png": {"width": width}} if width else {}
    output.outputs = ({
        "output_type": "display_data",
        "data": {"image/png": base64.b64encode(png).decode("ascii"), "text/plain": f"<{alt}>"},
        "metadata": meta,
    },)


def output_png(output: W.Output) -> bytes | None:
    """The PNG bytes an Output widget shows (its first image), or ``None``."""
    for o in output.outputs:
        data = o.get("data", {})
        if "image/png" in data:
            return base64.b64decode(data["image/png"])
    return None


def html_table(rows, columns, *, headers=None, cls: str = "", caption: str = "") -> str:
    """A small HTML table; cells are escaped text (already formatted)."""
    heads = headers or columns
    th = "".join(f'<th style="text-align:left;padding:1px 6px">{html.escape(str(h))}</th>' for h in heads)
    body = "".join(
        "<tr>" + "".join(f'<td style="padding:1px 6px">{html.escape(str(r.get(c, "")))}</td>'
                         for c in columns) + "</tr>" for r in rows)
    cap = (f'<div style="font-weight:bold;font-size:12px;margin-top:4px">{html.escape(caption)}</div>'
           if caption else "")
    return (f'{cap}<table class="{cls}" style="border-collapse:collapse;font-size:12px;line-height:1.3;'
            f'margin:2px 0 6px 0"><thead><tr>{th}</tr></thead><tbody>{body}</tbody></table>')


def compact(content: str) -> str:
    """Wrap HTML for an ``ipywidgets.HTML`` value in ordinary line spacing.

    The widget's own line height is that of one control row (about 28 px),
    which spreads paragraphs and table rows far apart.
    """
    return f'<div style="line-height:1.35">{content}</div>'


def _fmt(v, digits=4) -> str:
    v = float(v)
    if not math.isfinite(v):
        return "nan"
    text = f"{v:.{digits}f}"
    return text[1:] if text.startswith("-") and float(text) == 0 else text


def _nice_step(lo: float, hi: float, parts: int = 2000) -> float:
    raw = (hi - lo) / parts
    if raw <= 0:
        return 0.01
    e = 10 ** math.floor(math.log10(raw))
    for m in (1, 2, 5, 10):
        if m * e >= raw * (1 - 1e-9):
            return m * e
    return 10 * e  # pragma: no cover


def _nice_ceil(v: float) -> float:
    if v <= 0 or not math.isfinite(v):
        return 1.0
    e = 10 ** math.floor(math.log10(v))
    for m in (1, 1.5, 2, 3, 5, 7.5, 10):
        if m * e >= v:
            return m * e
    return 10 * e  # pragma: no cover


def _decimals(step: float) -> int:
    return max(0, -int(math.floor(math.log10(step) + 1e-9)))


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
    The responses are :attr:`workbench.analysis.evaluator.Measures.curves`: the
    camera's R, G, B after white balance and matrix under the curve
    illuminant, on the scale of the targets (Σ target·E = 1 for the
    white), so response − target is the colour error per wavelength. All
    curves are drawn × one factor that makes the largest target value 1.
    """

    def __init__(self, wavelengths, *, width: float = 7.4, height: float = 5.2, dpi: int = 84):
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure
        from matplotlib.lines import Line2D

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
        from PIL import Image  # matplotlib's own PNG writer

        w, h = self.canvas.get_width_height()
        img = Image.frombuffer("RGBA", (w, h), self.canvas.buffer_rgba(), "raw", "RGBA", 0, 1)
        buf = io.BytesIO()
        img.convert("RGB").save(buf, format="PNG", compress_level=1)
        return buf.getvalue()


# --------------------------------------------------------------------------
# The measures table
# --------------------------------------------------------------------------


def measures_html(m: Measures, *, sample_count: int | None = None) -> str:
    """Every headline measure of one design state with its unit and method, as HTML."""
    k = sample_count if sample_count is not None else m.per_sample.shape[1]
    meth = m.methods
    head = [
        {"measure": "Vora value ν", "value": _fmt(m.vora_value), "unit": "0-1 (1: spans x̄ȳz̄)",
         "method": meth["vora_value"]},
        {"measure": "Neugebauer q (R / G / B)", "value": " / ".join(_fmt(v) for v in m.neugebauer_q),
         "unit": "0-1 per channel", "method": meth["neugebauer_q"]},
        {"measure": "Luther residual", "value": _fmt(m.luther_residual),
         "unit": "relative (0 = Luther)", "method": meth["luther_residual"]},
        {"measure": "weighted mean ΔE00", "value": _fmt(m.weighted_mean_delta_E00, 3),
         "unit": "ΔE00 (CIEDE2000)", "method": "mean over samples × illuminants with the design's "
         "[fit.weights]"},
        {"measure": m.smi["method"].split(" =")[0], "value": _fmt(m.smi["smi"], 1),
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
    de_rows = [{"illuminant": ill, **{s: _fmt(d[s], 3) for s in ("mean", "median", "p95", "max")}}
               for ill, d in m.delta_E00.items()]
    t2 = html_table(de_rows, ["illuminant", "mean", "median", "p95", "max"],
                    headers=["illuminant", "mean ΔE00", "median", "p95", "max"], cls="wb-measures-de",
                    caption=f"ΔE00 (CIEDE2000, CIE 142-2001) over {k} samples, matrix {m.matrix_method}, "
                            f"{m.matrix_scope}")
    n_rows = []
    for ill, d in m.noise.items():
        n_rows.append({
            "illuminant": ill,
            "gain": " / ".join(_fmt(v, 3) for v in np.asarray(d["row_norms"])),
            "cond": _fmt(d["condition"], 3),
            "sigma": " / ".join(_fmt(v, 5) for v in np.asarray(d["sigma_out"])),
            "snr": " / ".join(_fmt(v, 1) for v in np.asarray(d["snr_db"])),
        })
    t3 = html_table(n_rows, ["illuminant", "gain", "cond", "sigma", "snr"],
                    headers=["illuminant", "noise gain R/G/B (matrix row norms, ×)", "condition number",
                             "σ_out R/G/B (display RGB, white = 1)", "SNR R/G/B (dB)"],
                    cls="wb-measures-noise", caption="noise of the matrix")
    notes = (f'<div style="color:#555;font-size:11px">ΔE00: {html.escape(meth["delta_E00"])}. '
             f'Noise: {html.escape(meth["noise"])}. Target {html.escape(meth["target"])}, observer '
             f'{html.escape(meth["observer"])}, recording illuminant '
             f'{html.escape(meth["recording_illuminant"])}, viewing illuminant '
             f'{html.escape(meth["viewing_illuminant"])}.</div>')
    return f'<div class="wb-measures-body" style="line-height:1.3">{t1}{t2}{t3}{notes}</div>'


# --------------------------------------------------------------------------
# The design panel
# --------------------------------------------------------------------------


def _unit_of(element_type: str, key: str) -> str:
    spec = ELEMENT_TYPES.get(element_type, ({}, {}))[0].get(key)
    return spec.unit if spec is not None else ""


def _slider_specs(design: Design) -> list[dict]:
    """The parameters that get a slider: every one with min and max, plus angles of incidence and f-number.

    Angles and the f-number without bounds in the design get a range
    around their value (±10°, within 0-80°; f/2 ÷ 2 to × 4) and are not
    moved by the fit; the tooltip says so.
    """
    specs = []
    for e in design.chain:
        for key, p in e.params:
            full = f"{e.name}.{key}"
            unit = _unit_of(e.type, key)
            if p.min is not None and p.max is not None:
                lo, hi, note = float(p.min), float(p.max), "bounds from the design"
            elif key.endswith("_aoi_deg"):
                lo, hi = max(0.0, p.value - 10.0), min(80.0, p.value + 10.0)
                note = "no bounds in the design: ±10° shown, not fitted"
            elif key == "f_number":
                lo, hi = max(0.5, p.value / 2), p.value * 4
                note = "no bounds in the design: f/2 ÷ 2 to × 4 shown, not fitted"
            else:
                continue
            specs.append({"key": full, "element": e.name, "type": e.type, "param": key, "unit": unit,
                          "value": float(p.value), "min": lo, "max": hi, "free": bool(p.free), "note": note})
    return specs


class DesignPanel(W.VBox):
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
    the best point so far. Saving writes the design with the current values
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
        # -- fit row
        self.fit_button = W.Button(description="Fit", button_style="primary", icon="play",
                                   tooltip="fit the free parameters from the current values (design's [fit])",
                                   layout=W.Layout(width="90px"))
        self.fit_button.add_class("wb-fit")
        self.stop_button = W.Button(description="Stop", icon="stop", disabled=True,
                                    tooltip="end the fit; the best point so far is kept",
                                    layout=W.Layout(width="90px"))
        self.stop_button.add_class("wb-stop")
        self.progress = W.IntProgress(value=0, min=0, max=1, description="evaluations",
                                      layout=W.Layout(width="320px"), style={"description_width": "80px"})
        self.progress.add_class("wb-progress")
        self.fit_status = W.HTML()
        self.fit_status.add_class("wb-fit-status")
        self.fit_report = W.HTML()
        self.fit_report.add_class("wb-fit-report")
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
            png = self.figure.update(m.curves)
            show_png(self.plot, png, alt="channel responses and targets")
            self.table.value = measures_html(m)

    def _redraw_reference(self, draw: bool = True) -> None:
        if self.figure is None:
            return
        with self._lock:
            ref = self.reference if self.overlay.value else None
            self.figure.set_reference(None if ref is None else ref.curves, self.reference_label)
            if draw and self.measures is not None:
                show_png(self.plot, self.figure.update(self.measures.curves),
                         alt="channel responses and targets")

    def png(self) -> bytes | None:
        """The PNG bytes the figure shows now."""
        return output_png(self.plot)

    def snapshot(self):
        """The picture the panel shows now, as an image for a notebook cell or a report."""
        from IPython.display import Image

        return Image(data=self.png(), format="png")

    # -- the fit ---------------------------------------------------------------
    @property
    def fitting(self) -> bool:
        """True while a fit runs."""
        return self._thread is not None and self._thread.is_alive()

    def fit(self, *, wait: bool = False) -> None:
        """Start the fit from the current slider values in a background thread.

        ``wait=True`` returns only when it has ended (for scripts and tests).
        """
        if self.fitting or self.design is None:
            return
        with guard(self.error) as g:
            start = self.design.with_values(self.values())
            if not start.free_parameters():
                raise WorkbenchError(f"{self.design.source or self.design.name}: no free parameters to fit "
                                     "(set free = true with min and max on at least one)")
        if g.failed:
            return
        self._stop = threading.Event()
        self.progress.max = max(1, start.fit.max_evaluations)
        self.progress.value = 0
        self.progress.bar_style = "info"
        self._last_progress = 0.0
        self.fit_status.value = '<span style="font-size:12px">fitting…</span>'
        self._set_running(True)
        self._thread = threading.Thread(target=self._run_fit, args=(start,), daemon=True,
                                        name="workbench-design-fit")
        self._thread.start()
        if wait:
            self.wait()

    def stop(self) -> None:
        """Ask a running fit to end; it keeps the best point so far."""
        self._stop.set()

    def wait(self, timeout: float | None = None) -> bool:
        """Wait for a running fit to end; True when it has."""
        t = self._thread
        if t is not None:
            t.join(timeout)
            return not t.is_alive()
        return True

    def _progress(self, n: int) -> None:
        now = time.perf_counter()
        if now - self._last_progress > 0.05:
            self._last_progress = now
            self.progress.value = min(n, self.progress.max)

    def _set_running(self, running: bool) -> None:
        self.fit_button.disabled = running
        self.stop_button.disabled = not running
        self.load_button.disabled = running
        self.upload.disabled = running
        self.reset_button.disabled = running
        for s in self.sliders.values():
            s.disabled = running

    def _run_fit(self, start: Design) -> None:
        try:
            with guard(self.error) as g:
                res = fit_design(start, progress=False, stop=self._stop, evaluator=self.evaluator,
                                 callback=self._progress)
            if g.failed:
                self.fit_status.value = ('<span style="font-size:12px;color:#b00020">fit failed '
                                         '(see the error line)</span>')
                self.progress.bar_style = "danger"
                return
            self.result = res
            self.reference, self.reference_label = res.before, "before fit"
            if res.converged:
                self.progress.max = max(1, res.evaluations)
            self.progress.value = min(res.evaluations, self.progress.max)
            self.progress.bar_style = "success" if res.converged else "warning"
            with guard(self.error, clear=False):
                self._quiet = True
                try:
                    for k, v in res.design.parameters().items():
                        if k in self.sliders:
                            self.sliders[k].value = float(v.value)
                finally:
                    self._quiet = False
                self._redraw_reference(draw=False)
                self.update()
            b, a = res.before, res.after
            self.fit_status.value = (
                f'<span style="font-size:12px;line-height:1.35" class="wb-fit-done">'
                f'<b>{html.escape(res.status)}</b>: '
                f"{html.escape(res.message)}; {res.evaluations} evaluations in {res.seconds:.2f} s; "
                f"objective {html.escape(res.objective)}; Vora value ν {b.vora_value:.4f} → "
                f"{a.vora_value:.4f}; weighted mean ΔE00 {b.weighted_mean_delta_E00:.3f} → "
                f"{a.weighted_mean_delta_E00:.3f}</span>")
            self.fit_report.value = compact(res._repr_html_())
        finally:
            self._set_running(False)

    # -- saving and export --------------------------------------------------------
    def current_design(self) -> Design:
        """The loaded design with the current values and the matrix of the current state."""
        from dataclasses import replace

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
        from workbench.model.spectra import Spectra
        from workbench.fileio.spectra_csv import write_spectra_csv

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


# --------------------------------------------------------------------------
# The primaries panel
# --------------------------------------------------------------------------


def _start_emitters(shape: str):
    """Three emitters to start the emitter-set fit.

    One band each near the usual display peaks (620, 530, 455 nm; common
    practice), and a weak blue side band on the red emitter (1 % at
    450 nm) so that a red below the spectral locus, as BT.709's, can be
    reached. Widths 2-150 nm FWHM, amplitudes 0-100 (relative).
    """
    from workbench.colorimetry.emitters import Band, Emitter

    def band(peak, width, amplitude, peaks):
        return Band(shape, peak, width, amplitude, peak_bounds=peaks, width_bounds=(2.0, 150.0),
                    amplitude_bounds=(0.0, 100.0))

    return (
        Emitter("red", (band(620.0, 25.0, 1.0, (580.0, 700.0)), band(450.0, 20.0, 0.01, (400.0, 500.0)))),
        Emitter("green", (band(530.0, 35.0, 1.0, (490.0, 580.0)),)),
        Emitter("blue", (band(455.0, 25.0, 1.0, (400.0, 490.0)),)),
    )


class PrimariesPanel(W.VBox):
    """The primaries panel: a set of display primaries, its gamut, targets, emitters and bars.

    Choose a named set, type the chromaticities of R, G, B and a white, or
    load three emitter spectra (path or upload). The panel shows the
    chromaticity diagram with the gamut triangles (and those of the sets
    chosen for comparison), the RP 177 matrices, luminance coefficients,
    gamut area and coverage, the target colour-matching functions, an
    emitter-set fit to the set and the colour-bar table.

    Attributes
    ----------
    primaries : Primaries or None
    drive : DriveLevels or None (emitter spectra only)
    emitter_fit : EmitterFit or None
    error : ErrorLine
    """

    def __init__(self, *, name: str = "ITU-R BT.709", **kw):
        from workbench.colorimetry.primaries import PRIMARIES

        super().__init__(**kw)
        self.add_class("wb-primaries-panel")
        self.primaries = None
        self.drive = None
        self.emitters = None
        self.emitter_fit = None
        self.error = ErrorLine()
        self.mode = W.ToggleButtons(options=["named set", "chromaticities", "emitter spectra"],
                                    value="named set", style={"button_width": "130px"})
        self.mode.add_class("wb-mode")
        self.named = W.Dropdown(options=list(PRIMARIES), value=name, description="set",
                                layout=W.Layout(width="320px"))
        self.named.add_class("wb-named")
        xy0 = PRIMARIES[name].xy
        self.xy = {}
        boxes = []
        for i, ch in enumerate("RGB"):
            for j, c in enumerate("xy"):
                t = W.BoundedFloatText(value=float(xy0[i, j]), min=0.0, max=1.0, step=0.001,
                                       description=f"{c} {ch}", layout=W.Layout(width="150px"),
                                       style={"description_width": "40px"})
                t.add_class(f"wb-xy-{c}{ch}")
                self.xy[f"{c}{ch}"] = t
                boxes.append(t)
        self.white = W.Text(value="D65", description="white", layout=W.Layout(width="220px"),
                            tooltip="CIE illuminant name (D65, C, D50, …), DCI, or x,y",
                            style={"description_width": "40px"})
        self.white.add_class("wb-white")
        self.apply_xy = W.Button(description="Use these", layout=W.Layout(width="100px"))
        self.apply_xy.add_class("wb-apply-xy")
        self.emitter_path = W.Text(value=str(demo_dir() / "emitters_phosphor.csv"), description="emitters CSV",
                                   layout=W.Layout(width="520px"), style={"description_width": "90px"})
        self.emitter_path.add_class("wb-emitter-path")
        self.emitter_load = W.Button(description="Load", layout=W.Layout(width="70px"))
        self.emitter_load.add_class("wb-emitter-load")
        self.emitter_upload = W.FileUpload(accept=".csv,.txt", multiple=False, description="Upload .csv",
                                           layout=W.Layout(width="150px"))
        self.emitter_upload.add_class("wb-emitter-upload")
        self.luminance = W.BoundedFloatText(value=100.0, min=1e-6, max=1e9, description="white Y",
                                            tooltip="luminance the drive levels must reach: cd/m² for "
                                                    "absolute spectra, Σ S ȳ Δλ for relative ones",
                                            layout=W.Layout(width="180px"), style={"description_width": "60px"})
        self.observer = W.Dropdown(options=[("CIE 1931 2°", "2"), ("CIE 1964 10°", "10")], value="2",
                                   description="observer", layout=W.Layout(width="230px"))
        self.diagram = W.ToggleButtons(options=[("CIE 1931 xy", "xy"), ("CIE 1976 u′v′", "uv")], value="xy",
                                       style={"button_width": "110px"})
        self.diagram.add_class("wb-diagram")
        self.compare = W.SelectMultiple(options=list(PRIMARIES), value=["ITU-R BT.2020"],
                                        description="compare", rows=6, layout=W.Layout(width="300px"))
        self.compare.add_class("wb-compare")
        self.source_box = W.VBox()
        self.chroma_plot = W.Output(layout=W.Layout(flex="0 0 auto", width="570px"))
        self.chroma_plot.add_class("wb-chromaticity-plot")
        self.target_plot = W.Output()
        self.target_plot.add_class("wb-targets-plot")
        self.info = W.HTML()
        self.info.add_class("wb-primaries-info")
        # emitter-set fit
        self.band_shape = W.Dropdown(options=["gaussian-wavenumber", "gaussian"], value="gaussian-wavenumber",
                                     description="band shape", layout=W.Layout(width="300px"),
                                     style={"description_width": "80px"})
        self.fit_button = W.Button(description="Fit emitter set", button_style="primary",
                                   tooltip="move three one-band emitters until their primaries and "
                                           "white hit this set", layout=W.Layout(width="130px"))
        self.fit_button.add_class("wb-emitter-fit")
        self.fit_report = W.HTML()
        self.fit_report.add_class("wb-emitter-fit-report")
        self.fit_plot = W.Output()
        self.fit_plot.add_class("wb-emitter-fit-plot")
        # bars
        self.bar_amplitude = W.FloatSlider(value=100.0, min=1.0, max=100.0, step=1.0, description="bars %",
                                           readout_format=".0f", layout=W.Layout(width="360px"))
        self.bar_amplitude.add_class("wb-bar-amplitude")
        self.bar_luma = W.Dropdown(options=["this set (RP 177)", "BT.601", "BT.709", "BT.2020"],
                                   value="this set (RP 177)", description="luma", layout=W.Layout(width="260px"))
        self.bar_luma.add_class("wb-bar-luma")
        self.bars = W.HTML()
        self.bars.add_class("wb-bars")

        self.mode.observe(lambda _: self._mode_changed(), names="value")
        self.named.observe(lambda _: self.use_named(), names="value")
        self.apply_xy.on_click(lambda _: self.use_xy())
        self.emitter_load.on_click(lambda _: self.use_emitters(self.emitter_path.value))
        self.emitter_upload.observe(self._on_upload, names="value")
        for w in (self.observer, self.diagram, self.compare):
            w.observe(lambda _: self.refresh(), names="value")
        self.fit_button.on_click(lambda _: self.fit_emitters())
        self.bar_amplitude.observe(lambda _: self._bars(), names="value")
        self.bar_luma.observe(lambda _: self._bars(), names="value")

        self.children = [
            self.mode, self.source_box, self.error,
            W.HBox([self.observer, self.diagram]),
            W.HBox([self.chroma_plot, W.VBox([self.compare, self.info],
                                             layout=W.Layout(flex="1 1 0%", min_width="0", margin="0 0 0 8px"))],
                   layout=W.Layout(width="100%")),
            self.target_plot,
            W.HTML("<div style='line-height:1.3'><b>Emitter-set fit</b> "
                   "<span style='font-size:11px;color:#555'>three emitters (start 620 / 530 / 455 nm, a weak "
                   "450 nm side band on red; 1 nm grid) moved until each primary and the equal-drive white "
                   "hit this set (bounded least squares, Δu′v′ tolerance 1e-4)</span></div>"),
            W.HBox([self.band_shape, self.fit_button]),
            self.fit_report, self.fit_plot,
            W.HTML("<b>Signal levels and colour bars</b>"),
            W.HBox([self.bar_amplitude, self.bar_luma]),
            self.bars,
        ]
        self._mode_changed()

    # -- choosing the set ----------------------------------------------------------
    def _mode_changed(self) -> None:
        m = self.mode.value
        if m == "named set":
            self.source_box.children = [self.named]
            self.use_named()
        elif m == "chromaticities":
            g = list(self.xy.values())
            self.source_box.children = [W.HBox(g[0:2]), W.HBox(g[2:4]), W.HBox(g[4:6]),
                                        W.HBox([self.white, self.apply_xy])]
            self.use_xy()
        else:
            self.source_box.children = [W.HBox([self.emitter_path, self.emitter_load, self.emitter_upload]),
                                        W.HBox([self.white, self.luminance])]
            self.use_emitters(self.emitter_path.value)

    def use_named(self) -> bool:
        """Use the named set chosen in the dropdown."""
        from workbench.colorimetry.primaries import primaries_named

        with guard(self.error) as g:
            self._set(primaries_named(self.named.value), None, None)
        return not g.failed

    def use_xy(self) -> bool:
        """Use the typed chromaticities and white."""
        from workbench.colorimetry.primaries import primaries_from_xy

        with guard(self.error) as g:
            xy = np.array([[self.xy[f"x{c}"].value, self.xy[f"y{c}"].value] for c in "RGB"])
            p = primaries_from_xy(xy, self.white.value.strip() or "D65", name="typed chromaticities",
                                  observer=self.observer.value)
            self._set(p, None, None)
        return not g.failed

    def use_emitters(self, path=None, *, spectra=None) -> bool:
        """Use three emitter spectra (R, G, B) from a CSV path or given spectra."""
        from workbench.fileio.spectra_csv import read_spectra_csv

        with guard(self.error) as g:
            s = spectra if spectra is not None else read_spectra_csv(Path(str(path).strip()), kind="emission")
            self._emitter_set(s)
        return not g.failed

    def _on_upload(self, change) -> None:
        if not uploaded_files(self.emitter_upload):
            return
        with guard(self.error):
            s = read_uploaded_spectra(self.emitter_upload, kind="emission")
            self._emitter_set(s)

    def _emitter_set(self, s) -> None:
        from workbench.colorimetry.primaries import drive_levels_for_white, primaries_from_emitters

        white = self.white.value.strip() or "D65"
        p = primaries_from_emitters(s, self.observer.value, white=white, name=str(s.source or "emitters"))
        d = drive_levels_for_white(s, white, float(self.luminance.value), observer=self.observer.value)
        self._set(p, d, s)

    def _set(self, p, drive, emitters) -> None:
        self.primaries, self.drive, self.emitters = p, drive, emitters
        self.emitter_fit = None
        self.fit_report.value = ""
        self.fit_plot.outputs = ()
        self.refresh()

    # -- the outputs -------------------------------------------------------------
    def refresh(self) -> None:
        """Redraw the diagram, the targets, the tables and the bars for the current set."""
        if self.primaries is None:
            return
        with guard(self.error, clear=False):
            self._draw()
            self._info()
            self._bars()

    def _draw(self) -> None:
        from matplotlib.figure import Figure

        from workbench.plots.chromaticity import plot_chromaticity_diagram, plot_target_cmfs
        from workbench.colorimetry.primaries import PRIMARIES
        from workbench.model.spectra import grid
        from workbench.colorimetry.targets import target_cmfs

        p = self.primaries
        sets = [p] + [PRIMARIES[n] for n in self.compare.value if n != p.name]
        fig = Figure(figsize=(6.2, 6.2), dpi=90, layout="constrained")
        ax = plot_chromaticity_diagram(sets, diagram=self.diagram.value, observer=self.observer.value,
                                       ax=fig.add_subplot())
        if self.diagram.value == "uv":
            ax.legend(fontsize=7, loc="lower right")  # the upper right holds the triangles in u′v′
        show_png(self.chroma_plot, figure_png(fig), alt="chromaticity diagram")
        fig = Figure(figsize=(8.4, 5.0), dpi=84, layout="constrained")
        t = target_cmfs(p, grid(380, 780, 5), self.observer.value)
        ax = plot_target_cmfs(t, observer=self.observer.value, ax=fig.add_subplot(),
                              title=f"Target colour-matching functions of {p.name} (white {p.white_name})")
        ax.yaxis.label.set_fontsize(9)  # the long label fits the axes' height
        show_png(self.target_plot, figure_png(fig), alt="target functions")

    def _info(self) -> None:
        from workbench.colorimetry.gamut import coverage_of_named_sets, gamut_area

        p = self.primaries
        M = p.matrix_RGB_to_XYZ
        Minv = p.matrix_XYZ_to_RGB
        K = p.luminance_coefficients

        def mat(A, rows, cols):
            return html_table([{"": r, **{c: _fmt(A[i, j], 6) for j, c in enumerate(cols)}}
                               for i, r in enumerate(rows)], [""] + list(cols))

        cov = coverage_of_named_sets(p)
        cov_rows = [{"set": n, "xy": f"{100 * c['xy']:.1f}", "uv": f"{100 * c['uv']:.1f}"} for n, c in cov.items()]
        xy_rows = [{"": ch, "x": _fmt(p.xy[i, 0]), "y": _fmt(p.xy[i, 1])} for i, ch in enumerate("RGB")]
        xy_rows.append({"": f"white {p.white_name}", "x": _fmt(p.white_xy[0]), "y": _fmt(p.white_xy[1])})
        parts = [
            f'<div style="font-size:12px"><b>{html.escape(p.name)}</b> — {html.escape(p.source)}</div>',
            html_table(xy_rows, ["", "x", "y"], caption="chromaticities (CIE 1931 x, y)", cls="wb-xy-table"),
            '<div style="font-size:12px;margin-top:4px">RGB → XYZ (SMPTE RP 177, white RGB 1,1,1 → '
            'Y = 1)</div>',
            mat(M, ["X", "Y", "Z"], ["R", "G", "B"]),
            '<div style="font-size:12px;margin-top:4px">XYZ → RGB (inverse)</div>',
            mat(Minv, ["R", "G", "B"], ["X", "Y", "Z"]),
            f'<div style="font-size:12px;margin-top:4px">luminance coefficients K_R {K[0]:.4f}, K_G {K[1]:.4f}, '
            f'K_B {K[2]:.4f} (Y row of the matrix); gamut area {gamut_area(p, "xy"):.5f} in xy, '
            f'{gamut_area(p, "uv"):.5f} in u′v′ (chromaticity units²)</div>',
            html_table(cov_rows, ["set", "xy", "uv"],
                       headers=["named set", "% covered in xy", "% covered in u′v′"],
                       caption=f"how much of each named set's triangle {p.name} covers", cls="wb-coverage"),
        ]
        if self.drive is not None:
            d = self.drive
            parts.append(
                f'<div style="font-size:12px;margin-top:4px" class="wb-drive">drive levels for white '
                f'{html.escape(self.white.value)} at Y = {d.luminance:g} ({html.escape(d.units)}): '
                f'R {d.drive[0]:.4f}, G {d.drive[1]:.4f}, B {d.drive[2]:.4f} of the measured drive — '
                f'{html.escape(d.message)}</div>')
        notes = list(self.emitters.notes) if self.emitters is not None else []
        for n in notes + list(p.notes):
            parts.append(f'<div style="font-size:11px;color:#555">note: {html.escape(n)}</div>')
        self.info.value = compact("".join(parts))

    def _bars(self) -> None:
        from workbench.colorimetry.signals import BAR_COLUMNS, colour_bars, luma_coefficients_of

        with guard(self.error, clear=False):
            system = self.primaries if self.bar_luma.value.startswith("this set") else self.bar_luma.value
            label, K = luma_coefficients_of(system)
            rows = colour_bars(self.bar_amplitude.value / 100.0, K)
            out = [{c: (r[c] if isinstance(r[c], (str, int)) else _fmt(r[c])) for c in BAR_COLUMNS} for r in rows]
            head = (f"colour bars at {self.bar_amplitude.value:g} % amplitude; luma {label}: K_R {K[0]:.4f}, "
                    f"K_G {K[1]:.4f}, K_B {K[2]:.4f}")
            self.bars.value = compact(
                html_table(out, BAR_COLUMNS, caption=head, cls="wb-bars-table")
                + '<div style="font-size:11px;color:#555">R′G′B′, Y′, B′−Y′, R′−Y′, U, V (PAL factors '
                  '0.493, '
                  '0.877), Cb, Cr (0.5/(1−K)) in signal units 0-1; Y8…Cr10 narrow-range code values '
                  '(Y 16-235, C 16-240 at 8 bits; ITU-R BT.601/709 quantisation).</div>')

    # -- the emitter-set fit --------------------------------------------------------
    def fit_emitters(self) -> bool:
        """Fit three one-band emitters so their primaries and white hit the current set."""
        from matplotlib.figure import Figure

        from workbench.colorimetry.emitters import fit_emitter_set
        from workbench.plots.spectra import plot_spectra
        from workbench.model.spectra import grid

        with guard(self.error) as g:
            if self.primaries is None:
                raise WorkbenchError("choose a set of primaries first")
            res = fit_emitter_set(_start_emitters(self.band_shape.value), self.primaries, grid(380, 780, 1),
                                  observer=self.observer.value, max_nfev=EMITTER_FIT_EVALUATIONS)
            self.emitter_fit = res
            bands = "; ".join(
                f"{e.name} band {j + 1}: peak {c.peak_nm:.1f} nm, FWHM {c.width_nm:.1f} nm, "
                f"amplitude {c.amplitude:.4g}" for e in res.emitters for j, c in enumerate(e.components))
            self.fit_report.value = compact(res._repr_html_() + (
                f'<div style="font-size:12px">{html.escape(bands)} (relative radiance; '
                f'{res.nfev} evaluations)</div>'))
            fig = Figure(figsize=(8.4, 3.4), dpi=84, layout="constrained")
            ax = plot_spectra(res.spectra, ax=fig.add_subplot(), colours=[(0.8, 0.1, 0.1), (0.1, 0.6, 0.1),
                                                                            (0.1, 0.2, 0.85)])
            ax.set_title(f"Fitted emitter set for {self.primaries.name} ({self.band_shape.value} bands)")
            show_png(self.fit_plot, figure_png(fig), alt="fitted emitter spectra")
        return not g.failed


def primaries_panel(name: str = "ITU-R BT.709") -> PrimariesPanel:
    """The primaries panel opened on a named set; see :class:`PrimariesPanel`."""
    return PrimariesPanel(name=name)
