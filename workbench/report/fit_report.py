"""The report of a camera fit: one self-contained HTML file.

:func:`fit_report_html` turns a :class:`workbench.analysis.fit.FitResult` into a
single HTML page — inline CSS, every figure embedded as a base64 SVG drawn
by :mod:`workbench.plots.fit_vector` (no matplotlib: its import alone
would cost more than the whole report), no link to anything outside the
file — that shows, in order:

1. the fit's status (its code and reason from
   :data:`workbench.analysis.fit.FIT_STATUS_TABLE`, with the local solver's
   words; never hidden) and the parameters that ended at a
   bound;
2. the objective, the search and the method of every measure;
3. the headline measures at the start and after the fit (Vora value ν,
   Neugebauer q, Luther residual, ΔE00 mean / median / p95 / max per
   illuminant, the ISO 17321-1-style SMI, the noise of the matrix);
4. five figures: sensitivities against the targets with their residual,
   per-sample ΔE00 bars, u′v′ shifts, noise against accuracy for the
   three matrix rules before and after, the chain element by element
   (and the accuracy-noise front of ``--front``);
5. the fitted parameters with start, value, bounds and an at-bound flag,
   the fitted matrix and the notes of the evaluation.

Every text is escaped with :func:`html.escape`. :func:`write_fit_report`
saves the page atomically.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from workbench import __version__
from workbench.analysis.camera import MATRIX_METHODS
from workbench.analysis.evaluator import DesignEvaluator
from workbench.analysis.measures_report import noise_report
from workbench.analysis.fit_objective import WORST_P
from workbench.analysis.fit_result import BOUND_COSTS_METHOD, parameter_unit
from workbench.analysis.measures import vora_value
from workbench.errors import InputFileError
from workbench.fileio.atomic import write_text_atomically
from workbench.report.html import bound_costs_table, escape as _esc, number_text as _f
from workbench.plots.fit_vector import (chain_figure, chromaticity_figure, delta_e_bars_figure, front_figure,
                                        noise_accuracy_figure, sensitivities_figure)
from workbench.analysis.throughput import throughput

__all__ = [
    "noise_accuracy_points",
    "fit_report_figures",
    "fit_report_html",
    "write_fit_report",
    "OBJECTIVE_TEXT",
]

#: What each ``[fit] objective`` minimises, in words and formula.
OBJECTIVE_TEXT = {
    "vora": ("maximise the Vora value ν: residual r = (I − P_M)·Q_A/√3 with M = diag(l_rec)·S and "
             "A = diag(l_view)·x̄ȳz̄, so Σr² = 1 − ν"),
    "luther-residual": ("minimise the weighted distance of the target colour-matching functions from the "
                        "span of the camera's sensitivities after the best 3×3 matrix: "
                        "r = (I − P_M)·diag(l_view)·T / ‖diag(l_view)·T‖_F"),
    "mean-delta-e00": ("minimise the weighted RMS of ΔE00 over samples × illuminants after white balance "
                       "and the matrix: r_jk = √(w_k / (J·Σw))·ΔE00_jk"),
}

_MATRIX_LABEL = {
    "least-squares": "least squares",
    "white-preserving": "white-preserving",
    "delta-e00": "ΔE00-minimising",
}


# --------------------------------------------------------------------------
# Noise against accuracy
# --------------------------------------------------------------------------


def _point(ev, values, label: str, method: str, state: str) -> dict:
    """One noise-against-accuracy point, from the evaluator's bench directly.

    The same calls :meth:`DesignEvaluator.measures` makes for the matrix,
    the per-sample ΔE00, the noise and ν (so the same numbers), without the
    measures a point does not show: the near-infrared measures alone refit
    a ΔE00-minimising matrix at every cut-off, two thirds of the report's
    time before.

    The ΔE00-minimising point is that rule's own optimum (Σ w ΔE00² over
    the samples × lights, docs/methods.md §10; Newton steps, ~10-30 ms),
    also for a design whose fit moved a ΔE00 matrix with its filters: the
    fit's matrix minimises the fit's objective (the worst light's mean
    ΔE00 on the demo, or stopped by the budget), not this sum, so reusing
    it would show another number (on the demo with ``matrix =
    "delta-e00"``: entries up to 0.027 apart, mean ΔE00 1.000 against
    0.965).
    """
    S = ev.sensitivities(values)
    res = ev.bench.evaluate(S, method, ev.design.fit.matrix_scope)
    noise = [noise_report(res.matrices[j], res.raw_white[j], ev.design.noise) for j in range(len(res.illuminants))]
    row_norms = np.stack([np.asarray(d["row_norms"], dtype=float) for d in noise])
    sigma = np.stack([np.asarray(d["sigma_out"], dtype=float) for d in noise])
    return {
        "label": label,
        "method": method,
        "state": state,
        "noise_gain": float(np.max(row_norms)),
        "sigma_out": float(np.mean(sigma)),
        "mean_delta_E00": float(np.mean(res.delta_E00)),
        "by_illuminant": {ill: float(np.mean(res.delta_E00[j])) for j, ill in enumerate(res.illuminants)},
        "vora_value": float(vora_value(S.T, ev.cmfs, ev.rec, ev.view)),
    }


def noise_accuracy_points(result, evaluator=None, *, methods=MATRIX_METHODS) -> list[dict]:
    """Noise and accuracy of each matrix rule at the fit's start and at its result.

    Parameters
    ----------
    result : FitResult
    evaluator : DesignEvaluator, optional
        Of ``result.start_design`` (built when None).
    methods : sequence of str
        Matrix rules (default least squares, white-preserving, ΔE00-minimising),
        each fitted with the design's matrix scope.

    Returns
    -------
    list of dict
        Per method the start point then the fitted point, each with
        ``label``, ``method``, ``state`` ('start' / 'fitted'),
        ``noise_gain`` (largest row norm of the matrix over channels and
        illuminants; identity = 1), ``sigma_out`` (mean output noise of
        the grey patch over channels × illuminants, display RGB with white
        = 1, for the design's noise model), ``mean_delta_E00`` (unweighted
        mean over samples × illuminants) and ``vora_value``.
    """
    ev = evaluator or DesignEvaluator(result.start_design)
    fitted = {p["name"]: float(p["value"]) for p in result.parameters}
    points = []
    for method in methods:
        name = _MATRIX_LABEL.get(method, method)
        points.append(_point(ev, None, f"{name}, start", method, "start"))
        points.append(_point(ev, fitted, f"{name}, fitted", method, "fitted"))
    return points


# --------------------------------------------------------------------------
# Figures
# --------------------------------------------------------------------------


def fit_report_figures(result, evaluator=None, *, points=None) -> dict:
    """The report's figures as vector figures (:class:`workbench.plots.vector.Figure`), by name.

    Names: ``sensitivities``, ``delta_e_bars``, ``chromaticity``,
    ``noise_accuracy``, ``chain`` (each path's element curves and their
    product for the fitted design), and ``front`` when the fit ran one.
    ``points`` default to :func:`noise_accuracy_points`. The content is
    that of the matplotlib figures of :mod:`workbench.plots.fit` and
    :mod:`workbench.plots.chain`; nothing here imports matplotlib.
    """
    if points is None:
        points = noise_accuracy_points(result, evaluator)
    a = result.after
    figs = {
        "sensitivities": sensitivities_figure(a, before=result.before),
        "delta_e_bars": delta_e_bars_figure(a),
        "chromaticity": chromaticity_figure(a, observer=result.design.observer),
        "noise_accuracy": noise_accuracy_figure(points),
        "chain": chain_figure(a.wavelengths, result.design.element_curves()),
    }
    if getattr(result, "front", ()):
        figs["front"] = plot_front(result.front)
    return figs


def plot_front(front, *, chosen: int = 0):
    """The accuracy-noise front: mean ΔE00 against noise gain, the chosen point (the written fit) marked.

    Parameters
    ----------
    front : sequence of dict
        Points of :func:`workbench.analysis.fit.fit_front` (``noise_gain_rms``, ``mean_delta_E00``, ``t``).
    chosen : int
        Index of the point the fit wrote (the accuracy fit, t = 0).

    Returns
    -------
    workbench.plots.vector.Figure
        ``.svg()`` the picture, ``.data_uri()`` for an ``<img>``.
    """
    return front_figure(front, chosen=chosen)


def _data_uri(fig) -> str:
    """The figure as a base64 SVG data URI."""
    return fig.data_uri()


# --------------------------------------------------------------------------
# HTML
# --------------------------------------------------------------------------

_CSS = """
body { font-family: system-ui, -apple-system, "Segoe UI", sans-serif; margin: 1.5em auto; max-width: 72em;
       padding: 0 1em; color: #1a1a1a; line-height: 1.4; }
h1 { font-size: 1.5em; margin-bottom: 0.2em; } h2 { font-size: 1.15em; margin-top: 1.6em;
     border-bottom: 1px solid #ccc; padding-bottom: 0.15em; }
table { border-collapse: collapse; margin: 0.5em 0; font-size: 0.9em; }
th, td { border: 1px solid #d0d0d0; padding: 0.2em 0.55em; text-align: left; vertical-align: top; }
th { background: #f2f2f2; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.group td { background: #fafafa; font-weight: 600; }
.status { padding: 0.6em 0.9em; border-radius: 4px; margin: 0.8em 0; font-size: 1.05em; }
.status.ok { background: #e6f4e6; border: 1px solid #5a9e5a; }
.status.warn { background: #fdecea; border: 2px solid #c0392b; }
.flag { color: #a04000; font-weight: 600; }
.meta { color: #555; font-size: 0.9em; }
dl.methods dt { font-weight: 600; margin-top: 0.35em; } dl.methods dd { margin-left: 1.5em; }
figure { margin: 1.2em 0; } figure img { max-width: 100%; height: auto; border: 1px solid #e0e0e0; }
figcaption { font-size: 0.88em; color: #444; max-width: 60em; }
"""


def _triple(v, fmt: str) -> str:
    return " / ".join(_f(x, fmt) for x in np.asarray(v, dtype=float).ravel())


def _status_html(result) -> str:
    msg = str(result.status_message).rstrip(" .")
    at = [p["name"] for p in result.parameters if p.get("at_bound")]
    if result.converged:
        cls, head = "ok", "Converged"
    else:
        cls, head = "warn", f"NOT CONVERGED — {result.status_name.upper()} (status {int(result.status)})"
    tail = f" Local solver: {str(result.message).rstrip(' .')}." if result.message else ""
    budget = f" of a budget of {result.budget}" if getattr(result, "budget", 0) else ""
    out = (f'<div class="status {cls}" id="status"><b>{_esc(head)}</b>: {_esc(msg)}.{_esc(tail)} '
           f'({_esc(result.evaluations)} evaluations{_esc(budget)} in {_f(result.seconds, ".2f")} s)</div>')
    if at:
        out += (f'<p class="flag">{len(at)} parameter{"s" if len(at) != 1 else ""} ended at a bound: '
                f'{_esc(", ".join(at))} — the optimum may lie outside the allowed range.</p>')
    return out


def _measure_rows(b, a) -> list[tuple]:
    """(label, unit and method, start, fitted) rows; a row with None values is a group heading."""
    rows = [
        ("Vora value ν", "0-1, 1 = Luther condition (method: vora value, above)",
         _f(b.vora_value, ".4f"), _f(a.vora_value, ".4f")),
        ("Neugebauer q (R / G / B)", "0-1 per channel, 1 = inside the span of x̄ȳz̄",
         _triple(b.neugebauer_q, ".4f"), _triple(a.neugebauer_q, ".4f")),
        ("Luther residual", "relative (Frobenius norm), 0 = Luther condition",
         _f(b.luther_residual, ".4f"), _f(a.luther_residual, ".4f")),
        ("weighted mean ΔE00", "CIEDE2000 over samples × illuminants with the design's sample weights",
         _f(b.weighted_mean_delta_E00, ".3f"), _f(a.weighted_mean_delta_E00, ".3f")),
        ("colour-correction matrix", "rule and scope", f"{b.matrix_method}, {b.matrix_scope}",
         f"{a.matrix_method}, {a.matrix_scope}"),
    ]
    for ill in a.illuminants:
        rows.append((f"ΔE00 under {ill}", None, None, None))
        n = a.per_sample.shape[-1]
        for stat, name in (("mean", "mean"), ("median", "median"), ("p95", "95th percentile"),
                           ("max", "maximum")):
            rows.append((f"{name} ΔE00", f"CIEDE2000, unweighted over {n} samples",
                         _f(b.delta_E00.get(ill, {}).get(stat), ".3f"), _f(a.delta_E00[ill][stat], ".3f")))
    rows.append(("Sensitivity metamerism", None, None, None))
    rows.append(("ISO 17321-1-style SMI", "index, 100 = no metamerism; " + a.smi.get("method", ""),
                 _f(b.smi.get("smi"), ".1f"), _f(a.smi.get("smi"), ".1f")))
    rows.append(("mean ΔE*ab of the SMI", "CIE 1976 ΔE*ab over its samples",
                 _f(b.smi.get("mean_delta_E_ab"), ".3f"), _f(a.smi.get("mean_delta_E_ab"), ".3f")))
    for ill in a.illuminants:
        nb, na = b.noise.get(ill, {}), a.noise[ill]
        rows.append((f"Noise under {ill}", None, None, None))
        rows.append(("row norms ‖mᵢ‖ (R / G / B)", "noise gain for independent channel noise, identity = 1",
                     _triple(nb.get("row_norms", [np.nan] * 3), ".3f"), _triple(na["row_norms"], ".3f")))
        rows.append(("condition number of the matrix", "2-norm, 1 = orthogonal",
                     _f(nb.get("condition"), ".3f"), _f(na["condition"], ".3f")))
        rows.append(("σ_out of the grey patch (R / G / B)", "display RGB, white = 1 (noise model above)",
                     _triple(nb.get("sigma_out", [np.nan] * 3), ".5f"), _triple(na["sigma_out"], ".5f")))
        rows.append(("SNR of the grey patch (R / G / B)", "dB, 20·log10(grey / σ_out)",
                     _triple(nb.get("snr_db", [np.nan] * 3), ".1f"), _triple(na["snr_db"], ".1f")))
    if a.infrared is not None:
        sb = b.infrared.summary() if b.infrared is not None else {}
        for cut, per in a.infrared.summary().items():
            rows.append((f"Near infrared above {cut} nm", None, None, None))
            for ill, d in per.items():
                db = sb.get(cut, {}).get(ill, {})
                share_b = [100 * v for v in db["share"].values()] if db else [np.nan] * 3
                rows.append((f"signal above {cut} nm under {ill} (R / G / B)",
                             "% of each channel's white signal (perfect diffuser)",
                             _triple(share_b, ".2f"), _triple([100 * v for v in d["share"].values()], ".2f")))
                rows.append((f"mean ΔE00 without it, under {ill}",
                             "sensitivities cut to zero above the cut-off, matrix refitted",
                             _f(db.get("mean_delta_E00_without_infrared"), ".3f"),
                             _f(d["mean_delta_E00_without_infrared"], ".3f")))
    return rows


def _measures_table(result) -> str:
    body = []
    for label, unit, start, after in _measure_rows(result.before, result.after):
        if unit is None:
            body.append(f'<tr class="group"><td colspan="4">{_esc(label)}</td></tr>')
        else:
            body.append(f'<tr><td>{_esc(label)}</td><td>{_esc(unit)}</td><td class="num">{_esc(start)}</td>'
                        f'<td class="num">{_esc(after)}</td></tr>')
    return ('<table id="measures"><tr><th>measure</th><th>unit and method</th><th>start</th>'
            f'<th>fitted</th></tr>{"".join(body)}</table>')


def _parameter_unit(design, name: str) -> str:
    """:func:`workbench.analysis.fit.parameter_unit` in the report's words for a plain number or an unknown unit."""
    unit = parameter_unit(design, name)
    return {"1": "1 (dimensionless)", "": "as in the design file"}.get(unit, unit)


def _parameters_table(result) -> str:
    body = []
    for p in result.parameters:
        at = p.get("at_bound")
        flag = f'<span class="flag">at {_esc(at)}</span>' if at else ""
        unit = _parameter_unit(result.start_design, p["name"])
        body.append(
            f'<tr><td>{_esc(p["name"])}</td><td>{_esc(unit)}</td><td class="num">{_esc(_f(p["start"], ".4g"))}</td>'
            f'<td class="num">{_esc(_f(p["value"], ".6g"))}</td><td class="num">{_esc(_f(p["min"], ".4g"))}</td>'
            f'<td class="num">{_esc(_f(p["max"], ".4g"))}</td>'
            f'<td class="num">{_esc(_f(p["value"] - p["start"], "+.4g"))}</td><td>{flag}</td></tr>')
    return ('<table id="parameters"><tr><th>parameter</th><th>unit</th><th>start</th><th>fitted</th>'
            '<th>lower bound</th><th>upper bound</th><th>change</th><th>at bound</th></tr>'
            f'{"".join(body)}</table>')


def _per_light_table(points) -> str:
    """Mean ΔE00 under each light with the fitted filters, by matrix rule: does any rule get every light ≤ 1?"""
    rows = [p for p in points if p.get("state") == "fitted" and p.get("by_illuminant")]
    if not rows:
        return ""
    ills = list(rows[0]["by_illuminant"])
    body = "".join(
        f"<tr><td>{_esc(p['label'])}</td>"
        + "".join(f'<td class="num">{_esc(_f(p["by_illuminant"][i], ".3f"))}</td>' for i in ills)
        + f"<td>{'yes' if max(p['by_illuminant'].values()) <= 1.0 else 'no'}</td></tr>" for p in rows)
    head = "".join(f"<th>mean ΔE00 under {_esc(i)}</th>" for i in ills)
    return ("<h3>Each light with the fitted filters, by matrix rule</h3>"
            "<p>Mean ΔE00 (CIEDE2000) over the samples under each light, the fitted filters with each matrix "
            "rule at the design's scope; the last column says whether that rule gets every light to ≤ 1.0.</p>"
            f'<table id="per-light"><tr><th>matrix rule</th>{head}<th>every light ≤ 1.0</th></tr>{body}</table>')


def robust_section_html(result) -> str:
    """Nominal against robust (``workbench fit --robust``): yield with its Wilson interval, ΔE00, noise gain."""
    rb = getattr(result, "robust", None)
    if not rb:
        return ""
    body = ""
    for side in ("nominal", "robust"):
        d = rb[side]
        if d["yield"] is None:
            cells = f"<td class=\"num\">n/a</td><td>{_esc(d.get('yield_note') or '')}</td>"
        else:
            lo, hi = d["yield_interval_95"]
            cells = (f"<td class=\"num\">{_esc(_f(100 * d['yield'], '.1f'))} %</td>"
                     f"<td class=\"num\">{_esc(_f(100 * lo, '.1f'))}–{_esc(_f(100 * hi, '.1f'))} %</td>")
        body += (f"<tr><td>{side}</td>{cells}"
                 f"<td class=\"num\">{_esc(_f(d['worst_mean_delta_E00'], '.3f'))}</td>"
                 f"<td class=\"num\">{_esc(_f(d['vora_value'], '.4f'))}</td>"
                 f"<td class=\"num\">{_esc(_f(d['noise_gain'], '.3f'))}</td></tr>")
    spec = rb["spec"]
    return ("<h2>Nominal against robust</h2>"
            f"<p>The written design is the robust one. Yield: {rb['check_trials']} fresh units (seed "
            f"{rb['check_seed']}) against mean ΔE00 ≤ {spec['max_mean_delta_E00']:g} under every light and "
            f"ν ≥ {spec['min_vora']:g}. Method: {_esc(rb['method'])}.</p>"
            '<table id="robust"><tr><th>design</th><th>yield</th><th>95 % Wilson interval</th>'
            "<th>worst light's nominal mean ΔE00</th><th>nominal ν</th><th>noise gain (largest row norm)</th></tr>"
            f"{body}</table>")


def _bound_costs_section(result) -> str:
    """What each bound a parameter ended at costs, ranked (empty when none is at a bound)."""
    costs = getattr(result, "bound_costs", ())
    if not costs:
        return ""
    return ("<h3>What the bounds cost</h3>"
            f"<p>For each parameter at a bound, the change per unit of relaxing that bound, best first — "
            f"the specification to push first is at the top. Method: {_esc(BOUND_COSTS_METHOD)}.</p>"
            + bound_costs_table(costs))


def _matrix_table(m) -> str:
    shared = m.matrix_scope == "shared"
    blocks = []
    for j, ill in enumerate(m.illuminants[:1] if shared else m.illuminants):
        rows = "".join(
            f"<tr><th>{ch} out</th>" + "".join(f'<td class="num">{_esc(_f(v, ".5f"))}</td>' for v in row) + "</tr>"
            for ch, row in zip("RGB", np.asarray(m.matrices[j])))
        title = "every illuminant (shared)" if shared else f"under {ill}"
        blocks.append(f"<p>Matrix for {_esc(title)}:</p><table><tr><th></th><th>R in</th><th>G in</th>"
                      f"<th>B in</th></tr>{rows}</table>")
    return "".join(blocks)


def _methods_list(methods: dict) -> str:
    return '<dl class="methods">' + "".join(
        f"<dt>{_esc(k.replace('_', ' '))}</dt><dd>{_esc(v)}</dd>" for k, v in methods.items()) + "</dl>"


_CAPTIONS = {
    "sensitivities": ("Camera sensitivities after white balance and the colour-correction matrix (solid) against "
                      "the target colour-matching functions (dashed), start of the fit pale; below, the "
                      "residual camera − target per wavelength. Scale: display RGB per unit light, divided by "
                      "the largest target value."),
    "delta_e_bars": ("ΔE00 (CIEDE2000) of every sample under every illuminant after white balance and the "
                     "matrix, samples in the design's set order; solid line the mean, dashed the 95th "
                     "percentile; the largest three are named."),
    "chromaticity": ("CIE 1976 u′v′ chromaticities of the samples under the curve illuminant: an arrow from "
                     "each sample's true colour (adapted to the display white, linear Bradford) to the "
                     "camera's, coloured by ΔE00; arrows lengthened when too short to see, as the legend says."),
    "noise_accuracy": ("Noise gain (largest row norm of the matrix) against mean ΔE00 over samples × illuminants "
                       "for the three matrix rules — least squares, white-preserving (Finlayson & Drew 1997), "
                       "ΔE00-minimising — at the start (open) and after the fit (filled)."),
    "chain": ("The fitted chain element by element: on each channel's path every element's curve (dashed: "
              "transmittance, or the sensor's quantum efficiency, 0-1) and their product, the channel's "
              "sensitivity (solid)."),
}

_CAPTIONS["front"] = ("The accuracy-noise front (--front): each point a fit of (1 − t)·objective/objective₀ + "
                      "t·NG²/NG₀², NG the RMS row norm of the matrix; dominated points dropped. The star is the "
                      "fit written to design.toml (t = 0, the design's own objective).")

_ALT = {
    "sensitivities": "sensitivities against targets with residual panel",
    "delta_e_bars": "per-sample ΔE00 bars per illuminant",
    "chromaticity": "u′v′ diagram with arrows from true to camera colour",
    "noise_accuracy": "noise gain against mean ΔE00 for three matrix rules",
    "front": "the accuracy-noise front: mean ΔE00 against noise gain, the written fit starred",
    "chain": "element curves and their product along each channel's path",
}


def _smoothness_html(sm) -> str:
    """The cost split into the colour objective and the coating smoothness term (nothing without the term)."""
    if sm is None:
        return ""
    return (f"<p><b>Coating smoothness</b> (weight {_esc(_f(sm['weight'], 'g'))}; "
            f"{_esc(', '.join(sm['elements']))}): cost Σr² = colour objective "
            f"{_esc(_f(sm['colour_cost_before'], '.6g'))} → {_esc(_f(sm['colour_cost_after'], '.6g'))} + smoothness "
            f"{_esc(_f(sm['smoothness_cost_before'], '.6g'))} → {_esc(_f(sm['smoothness_cost_after'], '.6g'))}. "
            f"{_esc(sm['method'])}.</p>")


def _throughput_table(design) -> str:
    label, E, _ = design.illuminant_values(design.fit.recording_illuminant)
    t = throughput(design.element_curves(), E, illuminant=label)
    body = "".join(
        f"<tr><td>{_esc(r['element'])}</td><td>{_esc(r['type'])}</td>"
        + "".join(f'<td class="num">{_esc(_f(r[ch], ".1f"))}</td>' for ch in "RGB") + "</tr>"
        for r in t.rows())
    return ("<h3>Throughput per channel, fitted design</h3>"
            f'<p class="meta">{_esc(t.method)}.</p>'
            '<table id="throughput"><tr><th>element</th><th>type</th><th>R (%)</th><th>G (%)</th>'
            f"<th>B (%)</th></tr>{body}</table>")


def fit_report_html(result, evaluator=None) -> str:
    """One self-contained HTML page reporting a fit (inline CSS, figures as base64 SVG, no links).

    Parameters
    ----------
    result : FitResult
    evaluator : DesignEvaluator, optional
        Of ``result.start_design``, for the noise-against-accuracy points
        (built when None).

    Returns
    -------
    str
        The HTML document. The status block (``id="status"``) says
        Converged, or NOT CONVERGED with the reason from the status table.
    """
    points = noise_accuracy_points(result, evaluator)
    figs = fit_report_figures(result, evaluator, points=points)
    images = {name: _data_uri(fig) for name, fig in figs.items()}
    a = result.after
    d = result.design
    fit = result.start_design.fit
    objective = OBJECTIVE_TEXT.get(result.objective, result.objective)
    if result.objective == "mean-delta-e00" and result.across_illuminants == "worst":
        objective = (f"minimise the worst light's mean ΔE00 after white balance and the matrix, as the smooth "
                     f"maximum Σr² = G = (Σ_j (ω_j m_j)^{WORST_P})^(1/{WORST_P}) of each light's sample-weighted "
                     f"mean ΔE00 m_j (illuminant weights ω_j)")
    if any(w != 1.0 for _, w in result.illuminant_weights):
        objective += "; illuminant weights " + ", ".join(f"{n} {w:g}" for n, w in result.illuminant_weights)
    # the fit's local method: L-BFGS-B for the ΔE00 and robust objectives, trust-region least squares otherwise
    local = ("bounded quasi-Newton, L-BFGS-B on Σr² with forward-difference gradients"
             if result.objective == "mean-delta-e00" or getattr(result, "robust", None)
             else "bounded least squares, trust-region reflective")
    search = f"local only ({local})" if result.global_start in (
        None, "none") else f"{result.global_start} global start (seed {result.seed}), then {local}"
    noise_w = f"; noise weight {fit.noise_weight:g} on the matrix row norms" if fit.noise_weight > 0 else ""
    grid = d.grid
    meta = (f"Design file {d.source or '(not from a file)'}; grid {grid.start_nm:g}-{grid.stop_nm:g} nm in "
            f"{grid.step_nm:g} nm steps; {a.methods.get('observer', d.observer)}; "
            f"target {a.methods.get('target', '')}; "
            f"report by workbench {__version__}.")
    noise_rows = "".join(
        f"<tr><td>{_esc(p['label'])}</td><td class=\"num\">{_esc(_f(p['noise_gain'], '.3f'))}</td>"
        f"<td class=\"num\">{_esc(_f(p['sigma_out'], '.5f'))}</td>"
        f"<td class=\"num\">{_esc(_f(p['mean_delta_E00'], '.3f'))}</td>"
        f"<td class=\"num\">{_esc(_f(p['vora_value'], '.4f'))}</td></tr>" for p in points)
    figures = "".join(
        f'<figure id="fig-{name}"><img src="{images[name]}" alt="{_esc(_ALT[name])}">'
        f"<figcaption>{_esc(_CAPTIONS[name])}</figcaption></figure>" for name in figs)
    notes = "".join(f"<li>{_esc(n)}</li>" for n in result.notes)
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{_esc('Fit report: ' + d.name)}</title><style>{_CSS}</style></head><body>",
        f"<h1>Fit report: {_esc(d.name)}</h1>",
        f'<p class="meta">{_esc(d.description)}</p>' if d.description else "",
        f'<p class="meta">{_esc(meta)}</p>',
        _status_html(result),
        "<h2>Objective and methods</h2>",
        f"<p><b>Objective</b> <code>{_esc(result.objective)}</code>: {_esc(objective)}{_esc(noise_w)}. "
        f"<b>Search</b>: {_esc(search)}. Cost Σr² {_esc(_f(result.cost_before, '.6g'))} at the start → "
        f"{_esc(_f(result.cost_after, '.6g'))} fitted; {_esc(result.evaluations)} evaluations in "
        f"{_esc(_f(result.seconds, '.2f'))} s.</p>",
        _smoothness_html(result.smoothness),
        _methods_list(a.methods),
        "<h2>Measures at the start and after the fit</h2>",
        _measures_table(result),
        "<h2>Figures</h2>",
        figures,
        _throughput_table(d),
        "<h3>Noise against accuracy, the numbers</h3>",
        '<table id="noise-points"><tr><th>matrix rule, state</th><th>noise gain (largest row norm)</th>'
        "<th>mean σ_out of the grey, display RGB (white = 1)</th><th>mean ΔE00 (CIEDE2000)</th>"
        f"<th>Vora value ν</th></tr>{noise_rows}</table>",
        _per_light_table(points),
        robust_section_html(result),
        "<h2>Fitted parameters</h2>",
        _parameters_table(result),
        _bound_costs_section(result),
        "<h2>Colour-correction matrix after the fit</h2>",
        f"<p>{_esc(a.matrix_method)}, {_esc(a.matrix_scope)}; rows map white-balanced camera RGB to the "
        f"linear RGB of {_esc(a.methods.get('target', 'the display'))} (display white = 1).</p>",
        _matrix_table(a),
        "<h2>Notes</h2>" + (f"<ul>{notes}</ul>" if notes else "<p>none</p>"),
        "</body></html>",
    ]
    return "\n".join(p for p in parts if p)


def write_fit_report(result, path, *, evaluator=None) -> Path:
    """Write :func:`fit_report_html` to ``path`` atomically (temporary file, then rename); returns the path.

    The folder must exist (checked before the figures are drawn); an
    existing file is replaced only once the new one is complete.
    """
    path = Path(path)
    if not path.parent.is_dir():
        raise InputFileError(f"cannot write: folder {path.parent} does not exist", str(path))
    write_text_atomically(path, fit_report_html(result, evaluator))
    return path
