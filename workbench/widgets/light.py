"""A notebook panel for a light on camera: upload or name an SPD, see its indices, its camera fidelity, two fixtures.

The panel only wires ipywidgets controls to :func:`workbench.analysis.light.light_report`
and the figures of :mod:`workbench.plots.light`; the figures are PNG
images in ``ipywidgets.Output`` widgets (so they are part of the widget
state). A bad file or path shows as one line, ``error: …`` — the text the
command line prints — never a traceback. Every view repeats the caution:
not a photobiological safety assessment (IEC 62471).

>>> from workbench.widgets.light import LightPanel   # doctest: +SKIP
>>> LightPanel()                                     # doctest: +SKIP
"""

from __future__ import annotations

import html
import os
from pathlib import Path

import ipywidgets as W

from workbench import demo_dir
from workbench.analysis.evaluator import load_camera
from workbench.analysis.light import CAUTION, LightReport, light_report, parse_light, read_light, report_rows
from workbench.errors import InputFileError, WorkbenchError
from workbench.plots import light as lp
from workbench.report.light import value_text
from workbench.widgets.common import ErrorLine, compact, figure_png, guard, html_table, show_png, uploaded_files

__all__ = ["LightPanel", "light_panel"]


class LightPanel(W.VBox):
    """Controls and views of a light on camera.

    Parameters
    ----------
    light : path-like, optional
        Light A (default the demo LED, ``spectra-demo/luminaire_led_export.csv``).
    camera : path-like or Camera or None, optional
        A design file or three-column sensitivity CSV (default the demo
        design ``spectra-demo/tern3_design.toml``); ``''`` for none.
    compare : path-like, optional
        Light B for the two-fixture comparison (default the demo halogen);
        ``''`` for none.
    ssi_reference : str
        ``'auto'``, a CIE illuminant name or an SPD file.
    evaluate : bool
        Evaluate once when built (default True).

    Notes
    -----
    Every table is filled at once; the figures of a tab are drawn when the
    tab is first shown (the Indices tab at once), as drawing all five takes
    about a second. :meth:`draw_all` draws them all now.

    Attributes
    ----------
    report : LightReport or None
        The last report shown.
    status : ErrorLine
        The one line for errors.
    """

    def __init__(self, light=None, *, camera=None, compare=None, ssi_reference: str = "auto",
                 evaluate: bool = True):
        demo = demo_dir()
        light = demo / "luminaire_led_export.csv" if light is None else light
        camera = demo / "tern3_design.toml" if camera is None else camera
        compare = demo / "luminaire_halogen_3200K.csv" if compare is None else compare
        wide = W.Layout(width="460px")
        self._camera_obj = None if isinstance(camera, (str, os.PathLike)) else camera
        self._camera_cache: dict = {}
        self.light_path = W.Text(value=str(light), description="light A", layout=wide)
        self.light_upload = W.FileUpload(accept=".csv,.txt,.tsv", multiple=False, description="Upload SPD")
        self.compare_path = W.Text(value=str(compare), description="light B", layout=wide,
                                   placeholder="optional: a second fixture to compare")
        self.compare_upload = W.FileUpload(accept=".csv,.txt,.tsv", multiple=False, description="Upload SPD")
        cam_text = "" if self._camera_obj is not None else str(camera)
        self.camera_path = W.Text(value=cam_text, description="camera", layout=wide,
                                  placeholder="design .toml or R,G,B sensitivity .csv (empty: none)")
        self.ssi_reference = W.Text(value=ssi_reference, description="SSI ref.", layout=W.Layout(width="260px"))
        self.button = W.Button(description="Evaluate", button_style="primary", icon="play")
        self.status = ErrorLine()
        self.caution = W.HTML(compact(f'<span style="color:#a00"><b>Caution:</b> {html.escape(CAUTION)}</span>'))
        self.indices = W.HTML()
        self.spd_plot = W.Output()
        self.special_plot = W.Output()
        self.camera_table = W.HTML()
        self.delta_e_plot = W.Output()
        self.shift_plot = W.Output()
        self.compare_table = W.HTML()
        self.compare_plot = W.Output()
        self.tabs = W.Tab(children=[
            W.VBox([self.indices, self.spd_plot, self.special_plot]),
            W.VBox([self.camera_table, self.delta_e_plot, self.shift_plot]),
            W.VBox([self.compare_table, self.compare_plot]),
        ])
        self.tabs.titles = ("Indices", "On camera", "Two fixtures")
        self.report: LightReport | None = None
        # a tab's figures are drawn when it is first shown (drawing all five costs about a second)
        self._undrawn: set[int] = set()
        self.tabs.observe(lambda _c: self._draw_tab(), names="selected_index")
        self.button.on_click(lambda _b: self.evaluate())
        self.light_upload.observe(lambda _c: self.evaluate(), names="value")
        self.compare_upload.observe(lambda _c: self.evaluate(), names="value")
        super().__init__([
            W.HTML("<b>Light on camera</b>: a measured SPD, its published indices, how a camera renders it, "
                   "and a second fixture compared"),
            self.caution,
            W.HBox([self.light_path, self.light_upload]),
            W.HBox([self.compare_path, self.compare_upload]),
            W.HBox([self.camera_path, self.ssi_reference, self.button]),
            self.status,
            self.tabs,
        ])
        if evaluate:
            self.evaluate()

    # -- inputs ---------------------------------------------------------------
    def _light(self, upload: W.FileUpload, path: W.Text):
        files = uploaded_files(upload)
        if files:
            name, content = files[0]
            return parse_light(content, source=name)
        text = path.value.strip()
        return read_light(Path(text)) if text else None

    def _camera(self):
        if self._camera_obj is not None and not self.camera_path.value.strip():
            return self._camera_obj
        text = self.camera_path.value.strip()
        if not text:
            return None
        p = Path(text)
        try:
            key = (str(p.resolve()), p.stat().st_mtime_ns)
        except OSError as err:
            raise InputFileError(f"cannot read: {err.strerror or err}", text) from None
        if key not in self._camera_cache:
            self._camera_cache = {key: load_camera(p)}
        return self._camera_cache[key]

    def _ssi(self):
        t = self.ssi_reference.value.strip() or "auto"
        if t.lower() != "auto" and (t.lower().endswith((".csv", ".txt", ".tsv")) or Path(t).exists()):
            return read_light(Path(t))
        return t

    # -- the views ----------------------------------------------------------------
    def evaluate(self) -> LightReport | None:
        """Read the inputs, compute the report and fill every view; an error shows in one line."""
        self.button.disabled = True
        try:
            with guard(self.status) as g:
                a = self._light(self.light_upload, self.light_path)
                if a is None:
                    raise WorkbenchError("light A: give an SPD file (path) or upload one")
                b = self._light(self.compare_upload, self.compare_path)
                cam = self._camera()
                r = light_report(a, camera=cam, compare=b, ssi_reference=self._ssi())
                self._show_indices(r)
                self._show_camera(r)
                self._show_comparison(r)
                self.report = r
                for out in (self.spd_plot, self.special_plot, self.delta_e_plot, self.shift_plot,
                            self.compare_plot):
                    out.outputs = ()
                self._undrawn = {0, 1 if r.camera else None, 2 if r.comparison else None} - {None}
                self._draw_tab()
            if not g.failed:
                self.status.ok(f"evaluated {r.indices.name}"
                               + (f" on {r.camera.camera}" if r.camera else "")
                               + (f", compared with {r.comparison.light_b}" if r.comparison else ""))
        finally:
            self.button.disabled = False
        return self.report

    def _draw_tab(self) -> None:
        """Draw the figures of the tab shown, if not drawn yet for the current report."""
        i = self.tabs.selected_index or 0
        if self.report is None or i not in self._undrawn:
            return
        self._undrawn.discard(i)
        r = self.report
        with guard(self.status, clear=False):
            if i == 0:
                show_png(self.spd_plot, figure_png(lp.plot_light_spd(r.indices), dpi=90), alt="SPD")
                show_png(self.special_plot, figure_png(lp.plot_special_indices(r.indices), dpi=90),
                         alt="special indices")
            elif i == 1:
                show_png(self.delta_e_plot, figure_png(lp.plot_camera_delta_e(r.camera), dpi=80),
                         alt="ΔE00 per sample")
                show_png(self.shift_plot, figure_png(lp.plot_camera_shifts(r.camera), dpi=80), alt="u′v′ shifts")
            else:
                show_png(self.compare_plot, figure_png(lp.plot_comparison(r.comparison), dpi=80),
                         alt="two fixtures")

    def draw_all(self) -> None:
        """Draw the figures of every tab now (otherwise each tab is drawn when first shown)."""
        selected = self.tabs.selected_index
        for i in sorted(self._undrawn):
            self.tabs.selected_index = i
        self.tabs.selected_index = selected

    def _show_indices(self, r: LightReport) -> None:
        rows = [{**row, "value": value_text(row["value"])} for row in report_rows(r) if r.camera is None
                or not str(row["quantity"]).startswith(("camera", "  over"))]
        warn = "".join(f'<p style="color:#a50;margin:2px 0">warning: {html.escape(w)}</p>'
                       for w in r.indices.warnings)
        ind = r.indices
        head = (f"<p style='margin:2px 0'>{html.escape(ind.name)}: {html.escape(ind.spd.describe_grid())}, "
                f"units {html.escape(ind.spd.units)}</p>")
        notes = "".join(f"<li>{html.escape(n)}</li>" for n in ind.notes)
        self.indices.value = compact(
            head + warn + html_table(rows, ["quantity", "value", "unit", "method"])
            + f"<details><summary>notes ({len(ind.notes)})</summary><ul style='font-size:11px'>{notes}</ul>"
              "</details>")

    def _show_camera(self, r: LightReport) -> None:
        if r.camera is None:
            self.camera_table.value = compact("<p>No camera given: name a design file or a sensitivity CSV "
                                              "in the camera box.</p>")
            return
        c = r.camera
        rows = [{"set": s, "index": f"{v['camera_fidelity_index']:.1f}", "ΔE_a": f"{v['delta_E_a']:.2f}",
                 "mean ΔE00": f"{v['mean']:.2f}", "max ΔE00": f"{v['max']:.2f}", "samples": v["count"]}
                for s, v in c.by_set.items()]
        st = c.stats
        rows.insert(0, {"set": "all", "index": f"{c.index:.1f}", "ΔE_a": f"{c.delta_E_a:.2f}",
                        "mean ΔE00": f"{st['mean']:.2f}", "max ΔE00": f"{st['max']:.2f}",
                        "samples": len(c.sample_names)})
        self.camera_table.value = compact(
            f"<p style='margin:2px 0'><b>Camera fidelity index {c.index:.1f}</b> — {html.escape(c.light)} vs "
            f"{html.escape(c.reference)} on {html.escape(c.camera)} (0-100; 100 = renders as the reference)</p>"
            + html_table(rows, ["set", "index", "ΔE_a", "mean ΔE00", "max ΔE00", "samples"])
            + f"<p style='font-size:11px;margin:2px 0'>{html.escape(c.method)}</p>")

    def _show_comparison(self, r: LightReport) -> None:
        if r.comparison is None:
            self.compare_table.value = compact("<p>No second light: give light B to compare two fixtures.</p>")
            return
        k = r.comparison
        rows = [{"mode": mode, "eye mean ΔE00": f"{m.eye_mean:.2f}",
                 "camera mean ΔE00": "n/a" if m.camera is None else f"{m.camera_mean:.2f}",
                 "verdict": m.verdict} for mode, m in k.modes.items()]
        defs = "".join(f"<li><b>{html.escape(mode)}</b>: {html.escape(m.definition)}</li>"
                       for mode, m in k.modes.items())
        self.compare_table.value = compact(
            f"<p style='margin:2px 0'>A = {html.escape(k.light_a)} ({k.CCT_a:.0f} K), B = {html.escape(k.light_b)} "
            f"({k.CCT_b:.0f} K): Δu′v′ {k.delta_u_prime_v_prime:.4f} (CIE 1976 UCS, 2°)</p>"
            + html_table(rows, ["mode", "eye mean ΔE00", "camera mean ΔE00", "verdict"])
            + f"<p style='font-size:11px;margin:2px 0'>match ≤ {k.match:g}, differ ≥ {k.differ:g} mean ΔE00 "
              f"(common practice)</p><ul style='font-size:11px'>{defs}</ul>")


def light_panel(light=None, **kw) -> LightPanel:
    """A :class:`LightPanel` (see there for the keywords)."""
    return LightPanel(light, **kw)
