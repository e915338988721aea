"""``workbench fit DESIGN.toml --out DIR``: fit a design's free parameters and its matrix.

Writes into DIR as one unit (:class:`workbench.fileio.outdir.OutputFolder`:
validated and locked before the fit, written into a staging folder beside
it and swapped in at the end, so a kill leaves the old set or the new one):

- ``design.toml`` — the fitted design with its colour-correction matrix in
  ``[matrix]``, loadable by every command;
- ``sensitivities.csv`` — the fitted R, G, B channel sensitivities;
- ``matrix.csv`` — the matrix (rows: display R, G, B; columns: balanced
  camera R, G, B), one block per illuminant for a per-illuminant matrix;
- ``metrics.json`` — ``vora_value``, ``neugebauer_q`` (R, G, B),
  ``delta_E00`` {illuminant: {mean, median, p95, max}}, the other measures,
  before and after, the parameters with their bounds, status and methods;
- ``report.html`` — a self-contained report with the figures.

The evaluation budget (``--max-evaluations``, default the design's
``[fit] max_evaluations``) and ``--time-limit`` cap the whole fit; the
progress bar counts against the budget. The fit always writes the best
point found; the reason it ended is printed, stored in metrics.json
(``status`` code, ``status_name``, ``status_message``) and sets the exit
status — one table, :data:`workbench.analysis.fit.FIT_STATUS_TABLE`:

====  ============  ===========
code  reason        exit status
====  ============  ===========
0     converged     0
1     budget spent  3
2     time limit    4
3     stopped       130 (Ctrl-C)
4     infeasible    5
====  ============  ===========

Bad input (a missing or invalid design, conflicting options) exits 2 with
one line.
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import replace
from pathlib import Path

from workbench.analysis.fit import check_fit_options, fit_design
from workbench.analysis.fit_modes import FRONT_METHOD, check_front, check_robust, fit_front, fit_robust
from workbench.cli.commands._output import atomic_write_text, notice, render_rows, to_json
from workbench.errors import WorkbenchError
from workbench.fileio.design_toml import load_design
from workbench.fileio.outdir import OutputFolder
from workbench.fileio.spectra_csv import write_spectra_csv
from workbench.model.design import CHANNELS, GLOBAL_STARTS

NAME = "fit"


def register(subparsers) -> None:
    p = subparsers.add_parser(
        NAME,
        help="fit a design's free parameters and colour-correction matrix; write the results",
        description=__doc__.splitlines()[0].replace("``", ""),
    )
    p.add_argument("design", metavar="DESIGN.toml", help="design file (docs/design-file.md)")
    p.add_argument("--out", metavar="DIR", required=True, type=Path,
                   help="folder for design.toml, sensitivities.csv, matrix.csv, metrics.json, report.html")
    p.add_argument("--global-start", choices=GLOBAL_STARTS, default=None,
                   help="global search before the local fit (default: the design's [fit] global_start)")
    p.add_argument("--seed", type=int, default=None, help="seed of the global search (default: the design's)")
    p.add_argument("--max-evaluations", type=int, default=None, metavar="N",
                   help="evaluation budget of the whole fit (default: the design's [fit] max_evaluations)")
    p.add_argument("--across-illuminants", choices=("weighted-mean", "worst"), default=None,
                   help="how the illuminants combine in the mean-delta-e00 objective: their weighted mean "
                        "or a smooth maximum (the worst light) (default: the design's)")
    p.add_argument("--illuminant-weight", action="append", default=None, metavar="NAME=W",
                   help="weight of one illuminant in the mean-delta-e00 objective, > 0 (repeatable; "
                        "default: the design's [fit.illuminant_weights], else 1)")
    p.add_argument("--front", type=int, default=None, metavar="N",
                   help="also fit N (2-100) points along the trade-off between mean ΔE00 and noise gain; "
                        "writes front.csv and plots the front in the report (each point has the budget)")
    p.add_argument("--robust", action="store_true",
                   help="fit the design that survives its tolerances: the expected worst-light mean ΔE00 over "
                        "units drawn from [tolerance] (the nominal fit first); the yield of both on fresh draws")
    p.add_argument("--robust-draws", type=int, default=32, metavar="K",
                   help="units drawn once for the robust objective (common random numbers; default 32)")
    p.add_argument("--robust-percentile", type=float, default=None, metavar="P",
                   help="with --robust: minimise the mean of the worst (100 − P) %% of the units, P in (0, 100)")
    p.add_argument("--time-limit", type=float, default=None, metavar="S",
                   help="wall-time limit of the whole fit in seconds (default: none)")
    p.add_argument("--no-report", action="store_true", help="skip report.html")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.set_defaults(run=run)


def matrix_csv(measures) -> str:
    """The matrix as CSV: illuminant, output channel, then the three coefficients."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["illuminant", "display_channel", "camera_R", "camera_G", "camera_B"])
    blocks = ([("all", 0)] if measures.matrix_scope == "shared"
              else [(ill, j) for j, ill in enumerate(measures.illuminants)])
    for ill, j in blocks:
        for i, ch in enumerate(CHANNELS):
            w.writerow([ill, ch] + [repr(float(v)) for v in measures.matrices[j, i]])
    return buf.getvalue()


def parameter_table(result) -> str:
    """The fitted parameters, start → fitted, with their unit, bounds and an at-bound flag, as text."""
    rows = []
    for p in result.parameters:
        rows.append({
            "parameter": p["name"], "unit": p.get("unit") or "1", "start": f"{p['start']:.6g}", "→": "→",
            "fitted": f"{p['value']:.6g}", "change": f"{p['value'] - p['start']:+.4g}",
            "min": f"{p['min']:.6g}", "max": f"{p['max']:.6g}",
            "at bound": {"min": "at min", "max": "at max"}.get(p["at_bound"], ""),
        })
    return render_rows(rows, ["parameter", "unit", "start", "→", "fitted", "change", "min", "max", "at bound"],
                       "table", header_lines=["fitted parameters (start → fitted; bounds from the design file):"])


def bound_cost_table(result) -> str:
    """What each bound costs, ranked: the change per unit of relaxing it, as text."""
    rows = [{"parameter": c["name"], "at": f"{c['value']:.6g} {c['unit']} ({c['bound']})",
             "relaxing": f"per {c['unit']} {c['direction']}", "objective": c["d_cost"], "ν": c["d_vora"],
             "mean ΔE00": c["d_mean_delta_E00"]} for c in result.bound_costs]
    return render_rows(rows, ["parameter", "at", "relaxing", "objective", "ν", "mean ΔE00"], "table", digits=5,
                       header_lines=["what the bounds cost — first-order change per unit of relaxing each bound, "
                                     "the other parameters re-optimised (best first):"])


def smoothness_line(sm: dict) -> str:
    """One line: the cost split into the colour objective and the coating smoothness term, start → fitted."""
    return (f"cost Σr² = colour objective {sm['colour_cost_before']:.6g} → {sm['colour_cost_after']:.6g} + coating "
            f"smoothness {sm['smoothness_cost_before']:.6g} → {sm['smoothness_cost_after']:.6g} (weight "
            f"{sm['weight']:g}: ripple of {', '.join(sm['elements'])}, second differences of the chief ray's "
            "R_s, R_p on a 2 nm grid)")


def front_csv(front) -> str:
    """The front as CSV: one row per point, the measures then the fitted parameter values."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    names = list(front[0]["values"]) if front else []
    cols = ["t", "accuracy_cost", "mean_delta_E00", "worst_illuminant_mean_delta_E00", "noise_gain_rms", "noise_gain_max",
            "vora_value", "status"]
    w.writerow(cols + names)
    for p in front:
        w.writerow([repr(p[c]) if isinstance(p[c], float) else p[c] for c in cols]
                   + [repr(float(p["values"][n])) for n in names])
    return buf.getvalue()


def metrics(result) -> dict:
    """The metrics.json object."""
    d = result.to_dict()
    a = d["after"]
    out = {
        "design": d["design"],
        "status": d["status"],
        "status_name": d["status_name"],
        "status_message": d["status_message"],
        "message": d["message"],
        "budget": d["budget"],
        "time_limit_s": d["time_limit_s"],
        "vora_value": a["vora_value"],
        "neugebauer_q": a["neugebauer_q"],
        "luther_residual": a["luther_residual"],
        "delta_E00": {ill: {k: v for k, v in s.items()} for ill, s in a["delta_E00"].items()},
        "smi": a["smi"],
        "noise": a["noise"],
        "matrix": a["matrix"],
        "white_balance_gains": a["white_balance_gains"],
        "before": d["before"],
        "objective": d["objective"],
        "cost_before": d["cost_before"],
        "cost_after": d["cost_after"],
        "smoothness": d["smoothness"],
        "evaluations": d["evaluations"],
        "seconds": d["seconds"],
        "global_start": d["global_start"],
        "seed": d["seed"],
        "parameters": d["parameters"],
        "parameters_at_bounds": d["parameters_at_bounds"],
        "bound_costs": d["bound_costs"],
        "bound_costs_method": d["bound_costs_method"],
        "across_illuminants": d["across_illuminants"],
        "illuminant_weights": d["illuminant_weights"],
        "front": d["front"],
        "robust": d["robust"],
        "methods": d["methods"],
    }
    return out


#: The most points ``--front`` fits: each is a whole fit with the full budget (100000 ran for hours).
FRONT_MAX_POINTS = 100

FILES = ("design.toml", "sensitivities.csv", "matrix.csv", "metrics.json", "report.html", "front.csv")


def _print_summary(design, result) -> None:
    """The fit's summary and parameter table on stdout."""
    b, a = result.before, result.after
    header = [
        f"design: {design.name} ({design.source})",
        f"fit: {result.status_name} — {result.status_message}; objective {result.objective}; "
        f"{result.evaluations} of {result.budget} evaluations, {result.seconds:.2f} s"
        + (f" (time limit {result.time_limit_s:g} s)" if result.time_limit_s else ""),
        *([] if result.smoothness is None else [smoothness_line(result.smoothness)]),
        f"Vora value {b.vora_value:.4f} → {a.vora_value:.4f} ({a.methods['vora_value']})",
        "Neugebauer q R/G/B " + " / ".join(f"{v:.4f}" for v in a.neugebauer_q),
        f"matrix: {a.matrix_method}, {a.matrix_scope}; ΔE00 = CIEDE2000 after white balance and matrix",
    ]
    rows = [{"illuminant": ill, "mean_before": b.delta_E00[ill]["mean"], "mean": a.delta_E00[ill]["mean"],
             "median": a.delta_E00[ill]["median"], "p95": a.delta_E00[ill]["p95"], "max": a.delta_E00[ill]["max"]}
            for ill in a.illuminants]
    print(render_rows(rows, ["illuminant", "mean_before", "mean", "median", "p95", "max"], "table",
                      header_lines=header), flush=True)
    print()
    print(parameter_table(result), flush=True)
    if result.bound_costs:
        print()
        print(bound_cost_table(result), flush=True)
    if result.robust:
        rb = result.robust
        rows = []
        for side in ("nominal", "robust"):
            d = rb[side]
            if d["yield"] is None:
                yield_pct, wilson = "n/a", "n/a"
            else:
                lo, hi = d["yield_interval_95"]
                yield_pct, wilson = 100 * d["yield"], f"{100 * lo:.1f}-{100 * hi:.1f}"
            rows.append({"design": side, "yield_%": yield_pct, "wilson_95_%": wilson,
                         "worst_mean_dE00": d["worst_mean_delta_E00"], "vora_value": d["vora_value"],
                         "noise_gain": d["noise_gain"]})
        print()
        print(render_rows(rows, ["design", "yield_%", "wilson_95_%", "worst_mean_dE00", "vora_value", "noise_gain"],
                          "table", digits=3, header_lines=[
                              f"nominal against robust ({rb['draws']} draws"
                              + (f", worst {100 - rb['percentile']:g} %" if rb["percentile"] else ", expected value")
                              + f"; yield of {rb['check_trials']} fresh units, seed {rb['check_seed']}, against "
                              f"mean ΔE00 ≤ {rb['spec']['max_mean_delta_E00']:g} under every light and "
                              f"ν ≥ {rb['spec']['min_vora']:g}, matrix fixed from the nominal design):"]), flush=True)
    if result.front:
        rows = [{k: p[k] for k in ("t", "accuracy_cost", "mean_delta_E00", "worst_illuminant_mean_delta_E00",
                                   "noise_gain_rms", "vora_value", "status")} for p in result.front]
        print()
        print(render_rows(rows, ["t", "accuracy_cost", "mean_delta_E00", "worst_illuminant_mean_delta_E00", "noise_gain_rms",
                                 "vora_value", "status"], "table",
                          header_lines=[f"accuracy against noise, {len(rows)} non-dominated points (the first is "
                                        f"this fit): {FRONT_METHOD}"]), flush=True)


def run(args) -> int:
    if args.max_evaluations is not None and args.max_evaluations < 1:
        raise WorkbenchError(f"'--max-evaluations' must be a whole number >= 1 (got {args.max_evaluations})")
    if args.front is not None and not 2 <= args.front <= FRONT_MAX_POINTS:
        raise WorkbenchError(f"'--front' must be a whole number of points 2-{FRONT_MAX_POINTS} (got {args.front})")
    if args.time_limit is not None and not (math.isfinite(args.time_limit) and args.time_limit > 0):
        raise WorkbenchError(f"'--time-limit' must be a number of seconds > 0 (got {args.time_limit:g})")
    if args.seed is not None and not 0 <= args.seed < 2**32:
        raise WorkbenchError(f"'--seed' must be a whole number 0-4294967295 (got {args.seed})")
    weights = None
    if args.illuminant_weight:
        weights = {}
        for item in args.illuminant_weight:
            name, eq, value = item.partition("=")
            try:
                w = float(value)
            except ValueError:
                w = math.nan
            if not eq or not name or not (math.isfinite(w) and w > 0):
                raise WorkbenchError(f"'--illuminant-weight' must be NAME=W with W > 0 (got {item!r})")
            weights[name] = w
    design = load_design(args.design)
    check_fit_options(design, illuminant_weights=weights, across_illuminants=args.across_illuminants)
    if args.front is not None:
        check_front(design)
    if args.robust or args.robust_percentile is not None:
        if not args.robust:
            raise WorkbenchError("'--robust-percentile' needs --robust")
        if args.front is not None:
            raise WorkbenchError("'--front' and '--robust' cannot be combined (the front is of nominal fits)")
        check_robust(design, draws=args.robust_draws, percentile=args.robust_percentile)
    # the output folder is one unit: validated and locked now, written into a staging folder, swapped in last
    with OutputFolder(args.out, option="--out", command="fit", names=FILES) as out:
        result = fit_design(design, progress=not args.quiet, global_start=args.global_start,
                            seed=args.seed, max_evaluations=args.max_evaluations, time_limit=args.time_limit,
                            across_illuminants=args.across_illuminants, illuminant_weights=weights)
        for n in result.notes:
            notice(n)
        if args.robust:
            result = fit_robust(design, draws=args.robust_draws, percentile=args.robust_percentile,
                                seed=args.seed, progress=not args.quiet, nominal=result,
                                time_limit=args.time_limit)
            for side in ("nominal", "robust"):
                if result.robust[side]["yield_note"]:
                    notice(f"{side} design: {result.robust[side]['yield_note']}")
        if args.front is not None:
            front = fit_front(design, args.front, progress=not args.quiet, max_evaluations=args.max_evaluations,
                              accuracy_fit=result)
            result = replace(result, front=front)
            atomic_write_text(out / "front.csv", front_csv(front))
        result.design.save(out / "design.toml")
        sens = result.design.channel_sensitivities()
        write_spectra_csv(sens, out / "sensitivities.csv")
        atomic_write_text(out / "matrix.csv", matrix_csv(result.after))
        atomic_write_text(out / "metrics.json", to_json(metrics(result)) + "\n")
        _print_summary(design, result)
        if not args.no_report:  # after the summary, which needs none of it; matplotlib only imported here
            from workbench.report.fit_report import write_fit_report  # late: matplotlib, for the report alone

            write_fit_report(result, out / "report.html")
        out.commit()
    out = args.out
    at = [p["name"] for p in result.parameters if p["at_bound"]]
    if at:
        notice("parameters at a bound: " + ", ".join(at))
    notice(f"wrote design.toml, sensitivities.csv, matrix.csv, metrics.json"
           f"{'' if args.no_report else ', report.html'} to {out}")
    if not result.converged:
        notice(f"the fit ended without converging: {result.status_name} (status {int(result.status)}) — "
               f"{result.status_message}; exit status {result.exit_status}")
    return result.exit_status
