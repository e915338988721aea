"""HTML views of results: what a notebook shows for each result object.

Every ``_repr_html_`` of a result delegates here, so computation modules
build no HTML. The functions take the result objects by duck typing and
import nothing from :mod:`workbench.analysis`; every text is escaped.
:func:`html_table` is the one small table the views and the notebook
panels share.
"""

from __future__ import annotations

import html
import math

from workbench.report.light import report_rows, value_text

__all__ = [
    "escape",
    "number_text",
    "bound_costs_table",
    "html_table",
    "measures_html",
    "fit_result_html",
    "tolerance_html",
    "light_report_html",
    "emitter_fit_html",
]


def escape(value) -> str:
    """``str(value)`` escaped for HTML text and attribute values."""
    return html.escape(str(value), quote=True)


def number_text(value, fmt: str) -> str:
    """``value`` formatted by ``fmt`` ('.4g', '+.3f', …); '—' for None, text or a non-finite number."""
    try:
        x = float(value)
    except (TypeError, ValueError):
        return "—"
    if not math.isfinite(x):
        return "—"
    return format(x, fmt)


def bound_costs_table(costs, *, table_id: str = "bound-costs") -> str:
    """The ranked costs of the bounds a fit ended at (rows of :func:`workbench.analysis.fit.bound_costs`).

    One row per parameter at a bound: where it stopped, which way relaxing
    goes, and the first-order change per unit of relaxing in the objective,
    the Vora value and the weighted mean ΔE00. Empty text for no rows.
    """
    if not costs:
        return ""
    body = "".join(
        f'<tr><td>{escape(c["name"])}</td><td class="num">{escape(number_text(c["value"], ".6g"))} '
        f'{escape(c["unit"])} ({escape(c["bound"])})</td><td>per {escape(c["unit"])} {escape(c["direction"])}</td>'
        f'<td class="num">{escape(number_text(c["d_cost"], "+.3g"))}</td>'
        f'<td class="num">{escape(number_text(c["d_vora"], "+.3g"))}</td>'
        f'<td class="num">{escape(number_text(c["d_mean_delta_E00"], "+.3g"))}</td></tr>' for c in costs)
    return (f'<table id="{escape(table_id)}"><tr><th>parameter</th><th>at</th><th>relaxing</th>'
            "<th>Δ objective (Σr²)</th><th>Δ Vora value ν</th><th>Δ weighted mean ΔE00</th></tr>"
            f"{body}</table>")


def html_table(rows, columns, *, headers=None, cls: str = "", caption: str = "") -> str:
    """A small HTML table; cells are escaped text (already formatted).

    Parameters
    ----------
    rows : sequence of dict
        One dict per row, keyed by ``columns``.
    columns : sequence of str
    headers : sequence of str, optional
        Column headings (default ``columns``).
    cls, caption : str
        CSS class of the table and a bold line above it.
    """
    heads = headers or columns
    th = "".join(f'<th style="text-align:left;padding:1px 6px">{escape(h)}</th>' for h in heads)
    body = "".join(
        "<tr>" + "".join(f'<td style="padding:1px 6px">{escape(r.get(c, ""))}</td>'
                         for c in columns) + "</tr>" for r in rows)
    cap = (f'<div style="font-weight:bold;font-size:12px;margin-top:4px">{escape(caption)}</div>'
           if caption else "")
    return (f'{cap}<table class="{cls}" style="border-collapse:collapse;font-size:12px;line-height:1.3;'
            f'margin:2px 0 6px 0"><thead><tr>{th}</tr></thead><tbody>{body}</tbody></table>')


def measures_html(m) -> str:
    """The measures of one design state (:class:`workbench.analysis.measures_report.Measures`)."""
    rows = "".join(
        f"<tr><td>{escape(ill)}</td><td>{d['mean']:.3f}</td><td>{d['median']:.3f}</td>"
        f"<td>{d['p95']:.3f}</td><td>{d['max']:.3f}</td></tr>"
        for ill, d in m.delta_E00.items())
    q = " / ".join(f"{v:.4f}" for v in m.neugebauer_q)
    return (f"<p>Vora value ν = {m.vora_value:.4f}; Neugebauer q (R/G/B) = {q}; "
            f"Luther residual {m.luther_residual:.4f}; "
            f"{escape(m.smi['method'].split(' =')[0])} {m.smi['smi']:.1f}</p>"
            f"<table><tr><th>illuminant</th><th>mean ΔE00</th><th>median</th><th>p95</th>"
            f"<th>max</th></tr>{rows}</table>")


def fit_result_html(r) -> str:
    """A fit (:class:`workbench.analysis.fit.FitResult`): status, parameters and ΔE00 before → after."""
    rows = "".join(
        f"<tr><td>{escape(p['name'])}</td><td>{p['start']:.4g}</td><td>{p['value']:.4g}</td>"
        f"<td>[{p['min']:.4g}, {p['max']:.4g}]</td><td>{escape(p['at_bound'] or '')}</td></tr>"
        for p in r.parameters)
    b, a = r.before, r.after
    stats = "".join(
        f"<tr><td>{escape(ill)}</td><td>{b.delta_E00[ill]['mean']:.3f}</td><td>{a.delta_E00[ill]['mean']:.3f}</td>"
        f"<td>{a.delta_E00[ill]['p95']:.3f}</td><td>{a.delta_E00[ill]['max']:.3f}</td></tr>"
        for ill in a.illuminants)
    return (
        f"<p><b>Fit of {escape(r.design.name)}</b>: {escape(r.status_name)} ({escape(r.status_message)}); objective "
        f"{escape(r.objective)}; {r.evaluations} evaluations in {r.seconds:.2f} s.</p>"
        f"<p>Vora value ν {b.vora_value:.4f} → {a.vora_value:.4f}; matrix {escape(a.matrix_method)}, "
        f"{escape(a.matrix_scope)}.</p>"
        f"<table><tr><th>parameter</th><th>start</th><th>fitted</th><th>bounds</th><th>at bound</th></tr>"
        f"{rows}</table><table><tr><th>illuminant</th><th>mean ΔE00 before</th><th>mean ΔE00 after</th>"
        f"<th>p95 after</th><th>max after</th></tr>{stats}</table>" + _bound_costs_html(r))


def _bound_costs_html(r) -> str:
    """The fit's ranked bound costs (empty when no parameter ended at a bound)."""
    costs = getattr(r, "bound_costs", ())
    if not costs:
        return ""
    return ("<p><b>What the bounds cost</b> (first-order change per unit of relaxing each bound, the other "
            "parameters re-optimised; best first):</p>" + bound_costs_table(costs))


def tolerance_html(result) -> str:
    """A tolerance analysis (:class:`workbench.analysis.tolerance_stats.ToleranceResult`)."""
    cases = {c: result.case_summary(c) for c in result.cases}
    top = cases[result.primary]
    rows = []
    for c, cs in cases.items():
        for ill, d in cs.illuminants.items():
            m = d.delta_E00_mean
            rows.append(f"<tr><td>{escape(c)}</td><td>{escape(ill)}</td><td>{d.nominal['delta_E00_mean']:.3f}</td>"
                        f"<td>{m['p5']:.3f}</td><td>{m['p50']:.3f}</td><td>{m['p95']:.3f}</td>"
                        f"<td>{d.delta_E00_max['p95']:.3f}</td></tr>")
    ys = "; ".join(
        f"{escape(c)}: {100 * cs.yield_fraction:.1f} % (95 % Wilson {100 * cs.yield_interval_95[0]:.1f}"
        f"–{100 * cs.yield_interval_95[1]:.1f} %)" for c, cs in cases.items())
    rk = top.ranking["parameters"][:5]
    rank = "".join(f"<tr><td>{escape(r['name'])}</td><td>{'σ' if r['distribution'] == 'normal' else '±'} "
                   f"{r['width']:g} {escape(r['unit'])}</td>"
                   f"<td>{100 * (r['variance_contribution'] or 0):.1f} %</td>"
                   f"<td>{(r['oat_minus'] or 0):+.3f} / {(r['oat_plus'] or 0):+.3f}</td></tr>" for r in rk)
    v = result.vora_summary()
    stop = " <b>Interrupted</b>: statistics over the finished trials." if result.interrupted else ""
    spec = result.spec
    return (
        f"<p><b>Tolerance analysis of {escape(result.design.name)}</b>: {result.trials} trials "
        f"(seed {result.seed}).{stop}</p>"
        f"<p>Yield (mean ΔE00 ≤ {spec.max_mean_delta_E00:g} under every illuminant and "
        f"ν ≥ {spec.min_vora:g}): {ys}.</p>"
        f"<p>Vora value ν (0-1): nominal {v['nominal']:.4f}, p5 {v['p5']:.4f}, p50 {v['p50']:.4f}, "
        f"p95 {v['p95']:.4f}. The nominal design {'passes' if top.nominal_passes else 'fails'} the spec "
        f"({escape(result.primary)} matrix).</p>"
        "<p>ΔE00: CIEDE2000 units, over the design's samples; percentiles over the trials (linear "
        "interpolation); p95 of max ΔE00 = 95th percentile over the units of each unit's largest ΔE00.</p>"
        "<table><tr><th>matrix</th><th>illuminant</th><th>nominal mean ΔE00</th><th>p5</th><th>p50</th>"
        f"<th>p95</th><th>p95 of max ΔE00</th></tr>{''.join(rows)}</table>"
        f"<p>What drives the worst-illuminant mean ΔE00 ({escape(result.primary)} matrix): variance contribution "
        "(correlation ratio η²) and one-at-a-time change at ∓1 width (ΔE00).</p>"
        f"<table><tr><th>parameter</th><th>tolerance</th><th>η²</th><th>∓1 width</th></tr>{rank}</table>")


def light_report_html(report) -> str:
    """A light report (:class:`workbench.analysis.light.LightReport`): caution, warnings, the rows."""
    rows = "".join(
        f"<tr><td>{escape(r['quantity'])}</td><td style='text-align:right'>{escape(value_text(r['value']))}</td>"
        f"<td>{escape(r['unit'])}</td><td style='font-size:85%'>{escape(r['method'])}</td></tr>"
        for r in report_rows(report))
    warn = "".join(f"<p style='color:#a50'>warning: {escape(w)}</p>" for w in report.indices.warnings)
    return (f"<p style='color:#a00'><b>Caution:</b> {escape(report.caution)}</p>{warn}"
            f"<table><tr><th>quantity</th><th>value</th><th>unit</th><th>method</th></tr>{rows}</table>")


def emitter_fit_html(fit, primary_names=("red", "green", "blue")) -> str:
    """An emitter-set fit (:class:`workbench.colorimetry.emitters.EmitterFit`): status and primaries."""
    rows = "".join(
        f"<tr><td>{escape(n)}</td><td>{xy[0]:.4f}, {xy[1]:.4f}</td><td>{d:.5f}</td></tr>"
        for n, xy, d in zip(primary_names, fit.primaries_xy, fit.delta_uv_primaries)
    )
    return (f"<p><b>{'converged' if fit.success else 'NOT reached'}</b>: {escape(fit.message)}</p>"
            f"<table><tr><th>primary</th><th>x, y</th><th>Δu′v′</th></tr>{rows}</table>")
