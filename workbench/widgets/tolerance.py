"""A small notebook panel for the tolerance analysis: trials, seed, matrix case, a Run button.

The panel only wires controls to :func:`workbench.analysis.tolerance.run_tolerance`
and the SVG figures of :mod:`workbench.plots.tolerance_vector` (no
matplotlib); the progress bar (tqdm), the summary and the figures appear
in one ``widgets.Output``. A bad input shows as one line, ``error: …``, under the
controls; interrupting the kernel keeps the finished trials.

>>> from workbench.widgets.tolerance import TolerancePanel   # doctest: +SKIP
>>> TolerancePanel("spectra-demo/tern3_design.toml")         # doctest: +SKIP
"""

from __future__ import annotations

import html
from pathlib import Path

import ipywidgets as widgets
from IPython.display import HTML, display

from workbench.analysis.evaluator import DesignEvaluator
from workbench.analysis.tolerance import MATRIX_CHOICES, run_tolerance
from workbench.errors import WorkbenchError
from workbench.fileio.design_toml import load_design
from workbench.model.design import Design
from workbench.plots.tolerance_vector import histograms_figure, ranking_figure

__all__ = ["TolerancePanel", "tolerance_panel"]


class TolerancePanel:
    """Controls and output of a tolerance analysis of one design.

    Parameters
    ----------
    design : Design or path-like
        The design (a ``.toml`` path is loaded; a bad file raises its
        one-line error here, before any widget is built).
    trials, seed : int
        Initial values of the controls.
    matrix : {'both', 'fixed', 'recalibrated'}

    Attributes
    ----------
    widget : ipywidgets.VBox
        What the notebook shows (the panel displays itself).
    result : ToleranceResult or None
        The last finished run.
    """

    def __init__(self, design, *, trials: int = 500, seed: int = 0, matrix: str = "both"):

        self.design = design if isinstance(design, Design) else load_design(Path(design))
        self._evaluator = DesignEvaluator(self.design)
        self.result = None
        self.trials = widgets.BoundedIntText(value=trials, min=1, max=1_000_000, step=100,
                                             description="trials", layout=widgets.Layout(width="190px"))
        self.seed = widgets.BoundedIntText(value=seed, min=0, max=2**31 - 1, description="seed",
                                           layout=widgets.Layout(width="170px"))
        self.matrix = widgets.Dropdown(options=list(MATRIX_CHOICES), value=matrix, description="matrix",
                                       layout=widgets.Layout(width="220px"))
        self.button = widgets.Button(description="Run", button_style="primary", icon="play")
        self.status = widgets.HTML(value="")
        self.output = widgets.Output()
        self.button.on_click(lambda _b: self.run())
        title = widgets.HTML(value=f"<b>Tolerance analysis</b> of {self.design.name}")
        self.widget = widgets.VBox([
            title,
            widgets.HBox([self.trials, self.seed, self.matrix, self.button]),
            self.status,
            self.output,
        ])

    def _ipython_display_(self):
        display(self.widget)

    def run(self):
        """Run with the controls' values; show progress, summary and figures in the output area."""

        self.status.value = ""
        self.button.disabled = True
        self.output.clear_output()
        try:
            with self.output:
                r = run_tolerance(self.design, trials=int(self.trials.value), seed=int(self.seed.value),
                                  matrix=self.matrix.value, progress=True, evaluator=self._evaluator)
                self.result = r
                display(HTML(r._repr_html_()))
                for case in r.cases:
                    display(histograms_figure(r, case=case))
                display(ranking_figure(r))
            note = f" (interrupted: {r.trials} of {r.trials_requested} trials)" if r.interrupted else ""
            self.status.value = f"{r.trials} trials in {r.seconds:.1f} s{note}"
        except WorkbenchError as err:
            self.status.value = f"<span style='color:#b00'>error: {_one_line(err)}</span>"
        except KeyboardInterrupt:
            self.status.value = "interrupted before the first chunk of trials finished"
        finally:
            self.button.disabled = False
        return self.result


def _one_line(err) -> str:
    return html.escape(str(err).splitlines()[0] if str(err) else type(err).__name__)


def tolerance_panel(design, **kw) -> TolerancePanel:
    """A :class:`TolerancePanel` for ``design`` (see there for the keywords)."""
    return TolerancePanel(design, **kw)
