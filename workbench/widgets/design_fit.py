"""The fit controls of the camera-design panel: objective and mode menus, Fit and Stop, progress, the fit report.

:class:`FitControls` is mixed into :class:`workbench.widgets.design.DesignPanel`:
it builds the fit row's widgets and runs :mod:`workbench.analysis.fit_modes`
in a background thread. It uses the panel's design, sliders, evaluator,
error line and redraw methods. Moved out of ``design.py`` unchanged.
"""

from __future__ import annotations

import base64
import html
import threading
import time
from dataclasses import replace

import ipywidgets as W

from workbench.errors import WorkbenchError
from workbench.model.design import Design
from workbench.widgets.common import compact, guard

__all__ = ["FitControls"]


def _fitting():
    """:mod:`workbench.analysis.fit_modes` (every fit entry point), imported when a fit is first asked for.

    Late on purpose: it imports scipy.optimize and scipy.stats (about a
    second on a busy 2-core machine), which the panel's first figure does
    not need.
    """
    from workbench.analysis import fit_modes  # late: scipy.optimize and scipy.stats (see above)

    return fit_modes


class FitControls:
    """The panel's fit row and the fit it runs (a mixin of :class:`workbench.widgets.design.DesignPanel`)."""

    def _build_fit_controls(self) -> None:
        """The fit row's widgets (built in the panel's ``__init__``, between the reset and the save rows)."""
        self.fit_button = W.Button(description="Fit", button_style="primary", icon="play",
                                   tooltip="fit the free parameters from the current values (design's [fit])",
                                   layout=W.Layout(width="90px"))
        self.fit_button.add_class("wb-fit")
        self.stop_button = W.Button(description="Stop", icon="stop", disabled=True,
                                    tooltip="end the fit; the best point so far is kept",
                                    layout=W.Layout(width="90px"))
        self.stop_button.add_class("wb-stop")
        self.objective = W.Dropdown(
            options=[("the design's [fit]", "design"), ("ΔE00, average over the lights", "mean"),
                     ("ΔE00, worst light", "worst"), ("Vora value ν", "vora")],
            value="design", description="objective", layout=W.Layout(width="330px"),
            style={"description_width": "70px"})
        self.objective.add_class("wb-objective")
        self.mode = W.ToggleButtons(
            options=[("fit", "fit"), ("accuracy–noise front", "front"), ("robust to tolerances", "robust")],
            value="fit", tooltips=["one fit", "N fits from accurate to quiet, plotted", "fit the design that "
                                   "survives its [tolerance], yield of nominal and robust"],
            style={"button_width": "150px"})
        self.mode.add_class("wb-fit-mode")
        self.front_points = W.BoundedIntText(value=5, min=2, max=50, description="points",
                                             layout=W.Layout(width="130px"), style={"description_width": "45px"})
        self.front_points.add_class("wb-front-points")
        self.robust_draws = W.BoundedIntText(value=16, min=2, max=1000, description="draws",
                                             layout=W.Layout(width="130px"), style={"description_width": "45px"})
        self.robust_draws.add_class("wb-robust-draws")
        self.progress = W.IntProgress(value=0, min=0, max=1, description="evaluations",
                                      layout=W.Layout(width="320px"), style={"description_width": "80px"})
        self.progress.add_class("wb-progress")
        self.fit_status = W.HTML()
        self.fit_status.add_class("wb-fit-status")
        self.fit_report = W.HTML()
        self.fit_report.add_class("wb-fit-report")

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
            start = self._with_objective(self.design.with_values(self.values()))
            if not start.free_parameters():
                raise WorkbenchError(f"{self.design.source or self.design.name}: no free parameters to fit "
                                     "(set free = true with min and max on at least one)")
            fitting = _fitting()
            fitting.check_fit_options(start)
            if self.mode.value == "front":
                fitting.check_front(start)
            elif self.mode.value == "robust":
                fitting.check_robust(start, draws=int(self.robust_draws.value))
        if g.failed:
            return
        self._stop = threading.Event()
        budget = max(1, start.fit.max_evaluations)
        self._offset, self._last_n = 0, 0
        self.progress.max = budget * {"fit": 1, "front": int(self.front_points.value),
                                      "robust": 1 + 40}[self.mode.value]
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

    def _with_objective(self, d: Design) -> Design:
        """``d`` with the objective chosen in the panel (the design's own by default)."""
        choice = self.objective.value
        if choice == "design":
            return d
        if choice == "vora":
            return replace(d, fit=replace(d.fit, objective="vora", across_illuminants="weighted-mean",
                                          illuminant_weights=()))
        return replace(d, fit=replace(d.fit, objective="mean-delta-e00",
                                      across_illuminants="worst" if choice == "worst" else "weighted-mean"))

    def _progress(self, n: int) -> None:
        # a front or a robust fit runs several fits, each counting from 0: keep a running total
        if n < self._last_n:
            self._offset += self._last_n
        self._last_n = n
        now = time.perf_counter()
        if now - self._last_progress > 0.05:
            self._last_progress = now
            self.progress.value = min(self._offset + n, self.progress.max)

    def _set_running(self, running: bool) -> None:
        self.fit_button.disabled = running
        self.stop_button.disabled = not running
        self.load_button.disabled = running
        self.upload.disabled = running
        self.reset_button.disabled = running
        for s in self.sliders.values():
            s.disabled = running
        for w in (self.objective, self.mode, self.front_points, self.robust_draws):
            w.disabled = running

    def _run_fit(self, start: Design) -> None:
        try:
            with guard(self.error) as g:
                fitting = _fitting()
                res = fitting.fit_design(start, progress=False, stop=self._stop, evaluator=self.evaluator,
                                         callback=self._progress)
                if self.mode.value == "front" and not self._stop.is_set():
                    front = fitting.fit_front(start, int(self.front_points.value), evaluator=self.evaluator,
                                      progress=False, stop=self._stop, callback=self._progress, accuracy_fit=res)
                    res = replace(res, front=front)
                elif self.mode.value == "robust" and not self._stop.is_set():
                    res = fitting.fit_robust(start, draws=int(self.robust_draws.value), evaluator=self.evaluator,
                                     progress=False, stop=self._stop, callback=self._progress, nominal=res)
            if g.failed:
                self.fit_status.value = ('<span style="font-size:12px;color:#b00020">fit failed '
                                         '(see the error line)</span>')
                self.progress.bar_style = "danger"
                return
            self.result = res
            self.reference, self.reference_label = res.before, "before fit"
            total = max(self._offset + self._last_n, res.evaluations)   # every fit of a front counted
            if res.converged:
                self.progress.max = max(1, total)
            self.progress.value = min(total, self.progress.max)
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
                f'<b>{html.escape(res.status_name)}</b>: '
                f"{html.escape(res.status_message)}; {res.evaluations} of {res.budget} evaluations "
                f"in {res.seconds:.2f} s; "
                f"objective {html.escape(res.objective)}; Vora value ν {b.vora_value:.4f} → "
                f"{a.vora_value:.4f}; weighted mean ΔE00 {b.weighted_mean_delta_E00:.3f} → "
                f"{a.weighted_mean_delta_E00:.3f}</span>")
            self.fit_report.value = compact(res._repr_html_() + self._extra_html(res))
        finally:
            self._set_running(False)

    @staticmethod
    def _extra_html(res: FitResult) -> str:
        """The robust table and the front's figure (an inline SVG image) of a front or robust fit."""
        # Late, as _fitting(): the report module imports analysis.fit (scipy.optimize, scipy.stats).
        from workbench.report.fit_report import plot_front, robust_section_html

        out = robust_section_html(res)
        if res.front:
            data = base64.b64encode(plot_front(res.front).svg_bytes()).decode("ascii")  # a vector figure
            rows = "".join(
                f"<tr><td>{p['t']:.2g}</td><td>{p['mean_delta_E00']:.3f}</td>"
                f"<td>{p['worst_illuminant_mean_delta_E00']:.3f}</td><td>{p['noise_gain_rms']:.3f}</td>"
                f"<td>{p['vora_value']:.4f}</td></tr>" for p in res.front)
            out += ('<div class="wb-front"><img alt="accuracy against noise" style="max-width:640px" '
                    f'src="data:image/svg+xml;base64,{data}">'
                    "<table><tr><th>t</th><th>mean ΔE00</th><th>worst light mean ΔE00</th>"
                    f"<th>noise gain (RMS row norm)</th><th>ν</th></tr>{rows}</table></div>")
        return out
