"""``workbench recipe DESIGN.toml``: the design's idealised splitter faces as layer recipes.

For each face of the design's ``dichroic-splitter``: its idealised
reflectance at its angle in the prism glass (cone and s/p averaged), a
symmetric-period edge filter of two materials on its 50 % point, every
thickness refined to the idealised curve. Prints each recipe (layer,
material, physical thickness, QWOT) with the face's edge and the fit; with
``--out DIR`` writes one layer table per face (``face-blue-green.csv``,
``face-green-red.csv``: columns ``material``, ``thickness_nm``, ``qwot``,
readable by ``workbench coating``), ``face-blue-green.png`` and
``face-green-red.png`` (the chief ray's s, p and mean at the face's angle with
their edges, the cone average and the idealised target), with layer trials
``layers-blue-green.png`` and ``layers-green-red.png`` (each layer's share of
the trials' variance, its interval and the noise floor), ``recipes.json`` and
``design.toml`` (the
design with the splitter replaced by two ``coating`` elements, each layer a
parameter ``layer_<i>_nm`` bounded to ± ``--layer-range`` of its thickness,
default ±20 %; with ``--free-layers`` every layer is written free and the
design's other free parameters fixed at their fitted values (``--keep-free``
keeps them free), so ``workbench fit`` on it refines the layers against the
camera objective), as one unit. The
camera's measures with the idealised and with the coated faces are printed
side by side.
"""

from __future__ import annotations

from pathlib import Path

from workbench import plots  # its modules (and matplotlib) load on first use, when a figure is drawn
from workbench.cli.commands._output import FORMATS, notice, render_rows, to_json
from workbench.analysis.recipe import RIPPLE_WEIGHT, splitter_recipes
from workbench.errors import WorkbenchError
from workbench.fileio.design_toml import load_design, save_design
from workbench.fileio.outdir import OutputFolder
from workbench.fileio.atomic import write_bytes_atomically, write_text_atomically
from workbench.analysis.evaluator import DesignEvaluator
from workbench.analysis.recipe import coated_design
from workbench.analysis.layer_tolerance import layer_tolerance
import numpy as np
from workbench.analysis.transition import face_edges
from workbench.optics.thinfilm import stack_response

HELP = "turn a design's idealised splitter faces into thin-film layer recipes"

_COLUMNS = ["layer", "material", "thickness_nm", "qwot"]


def register(sub) -> None:
    p = sub.add_parser(
        "recipe",
        help=HELP,
        description=(
            HELP + ": a symmetric-period edge filter per face on the face's averaged 50 % point, every "
            "thickness refined to the idealised face (characteristic-matrix method, analytic derivatives)."
        ),
    )
    p.add_argument("design", type=Path, metavar="DESIGN.toml", help="a design with a dichroic-splitter")
    p.add_argument("--periods", type=int, default=20, metavar="N",
                   help="periods of each face's stack (2N + 1 layers; default 20)")
    p.add_argument("--high", default="TiO2", metavar="MATERIAL", help="high-index material (default TiO2)")
    p.add_argument("--low", default="SiO2", metavar="MATERIAL", help="low-index material (default SiO2)")
    p.add_argument("--evaluations", type=int, default=200, metavar="N",
                   help="largest number of stack evaluations per face in the refinement; a face stops earlier when "
                   "a step changes its cost by less than 0.01 %% (default 200; 0: none)")
    p.add_argument("--smoothness", type=float, default=RIPPLE_WEIGHT, metavar="WEIGHT",
                   help="weight of the ripple penalty in the refinement: second differences of the chief ray's "
                   "R_s and R_p, weight 1 counting their mean square as much as the fit's (default %(default)g; "
                   "0: none)")
    p.add_argument("--apodise", type=int, default=0, metavar="N",
                   help="taper the middle layer of the N outermost periods at each end of the starting stacks "
                   "(raised cosine; default 0: plain quarter-wave periods)")
    p.add_argument("--tolerance-trials", type=int, default=200, metavar="N",
                   help="Monte Carlo trials of layer errors per face (1 %% random per layer, 0.5 %% systematic per "
                   "material, 0.5 %% index per material; default 200; 0: none)")
    p.add_argument("--format", choices=FORMATS, default="table", help="output format (default: table)")
    p.add_argument("--out", type=Path, metavar="DIR", default=None,
                   help="write one layer table per face and recipes.json into DIR (one unit)")
    p.add_argument("--free-layers", action="store_true",
                   help="write design.toml with every layer thickness free (free = true) within --layer-range, "
                   "and the design's other free parameters fixed at their fitted values, ready for "
                   "`workbench fit`")
    p.add_argument("--layer-range", type=float, default=0.2, metavar="FRACTION",
                   help="each layer's bounds in design.toml as a fraction of its thickness, in (0, 1) "
                   "(default 0.2: ±20 %%)")
    p.add_argument("--keep-free", action="store_true",
                   help="with --free-layers: keep the design's other free parameters free as well")
    p.set_defaults(run=run)


def _edges_vs_angle(f, window_nm) -> list[dict]:
    """The face's edge (chief ray) for s, p and their mean at its angle and ±5°, with its transition and ripple."""
    out = []
    for a, by in face_edges(f.recipe, reflects=f.reflects, window_nm=window_nm):
        row = {"angle_deg": a}
        for name, t in by.items():
            row[f"{name}_nm"] = None if not np.isfinite(t.edge_nm) else round(float(t.edge_nm), 2)
        for name, t in by.items():
            row[name] = t.to_dict()
        out.append(row)
    return out


def _face_dict(f, window_nm) -> dict:
    rec = f.recipe
    return {
        "face": f.face,
        "reflects": f.reflects,
        "edge_nm": round(f.edge_nm, 4),
        "reference_nm": round(rec.reference_nm, 4),
        "aoi_deg": rec.aoi_deg,
        "f_number": rec.f_number,
        "incident": rec.incident.name,
        "substrate": rec.substrate.name,
        "layers": [{k: (round(v, 4) if isinstance(v, float) else v) for k, v in row.items()} for row in rec.table()],
        "total_nm": round(float(rec.thicknesses_nm.sum()), 3),
        "edge_vs_angle": _edges_vs_angle(f, window_nm),
        "refinement": None if f.report is None else {
            "rms_before": f.report.rms_before, "rms_after": f.report.rms_after,
            "evaluations": f.report.evaluations, "message": f.report.message, "converged": f.report.converged,
            "layers_at_bound": [i + 1 for i in f.report.at_bound]},
    }


def _edge_text(t: dict) -> str:
    """One polarisation's edge for the table: the crossing, or the span of several, starred when not monotone."""
    if t["problem"]:
        return "-"
    c = t["crossings_nm"]
    text = f"{c[0]:.1f}" if len(c) == 1 else f"{c[0]:.1f}–{c[-1]:.1f}"
    return text if t["monotone"] else text + "*"


def _edge_lines(f, d) -> list[str]:
    """The table's lines on a face's edges, its transition and its pass band."""
    lines = ["# 50 % point, chief ray, s / p / mean (the single 50 % crossing of the transition from the reflection "
             "band to the pass band, docs/methods.md §15): " + "; ".join(
                 f"{r['angle_deg']:g}° {_edge_text(r['s'])} / {_edge_text(r['p'])} / {_edge_text(r['mean'])} nm"
                 for r in d["edge_vs_angle"])]
    rows = d["edge_vs_angle"]
    if any(not r[pol]["monotone"] for r in rows for pol in ("s", "p", "mean")):
        lines.append("#   * non-monotone transition (R rises again by more than 1 % between R 90 % and 10 %); "
                     "a–b: several 50 % crossings, first and last, no single edge")
    at = next(r for r in rows if r["angle_deg"] == f.recipe.aoi_deg)

    def pct(v):
        return "-" if v is None else f"{v:.1f} %"

    def band(t):
        a, b = t["pass_band_nm"]
        return "-" if a is None else f"{a:.0f}-{b:.0f} nm"

    lines.append(f"# ripple at {f.recipe.aoi_deg:g}°, chief ray, s / p / mean: in the transition (largest rise of R "
                 "against its fall, R 90 % → 10 %) " + " / ".join(pct(at[p]["reversal_pct"]) for p in ("s", "p", "mean"))
                 + "; in the pass band (max − min of R, peak-to-peak) " + " / ".join(
                     f"{pct(at[p]['pass_ripple_pct'])} over {band(at[p])}" for p in ("s", "p", "mean")))
    return lines


def _face_figure(f, grid):
    """The face's chief-ray curves at its angle with its edges, the cone average and the idealised target."""
    rec = f.recipe
    ((_, by),) = face_edges(rec, reflects=f.reflects, window_nm=(grid[0], grid[-1]), step_nm=0.25, offsets_deg=(0.0,))
    wl = np.arange(grid[0], grid[-1] + 0.125, 0.25)
    res = stack_response(rec.indices(wl), rec.thicknesses_nm, wl, [rec.aoi_deg], incident=rec.incident.index(wl).real,
                         substrate=rec.substrate.index(wl))
    curves = {"s": res.R[0, 0], "p": res.R[1, 0], "mean": res.R_mean[0]}
    return plots.coating.plot_face(wl, curves, by, grid_nm=grid, R_cone=rec.response(grid)[0], R_target=f.target_R,
                                   angle_deg=rec.aoi_deg, title=f"{f.face} face")


def _layer_csv(f) -> str:
    rows = [{"material": r["material"], "thickness_nm": f"{r['thickness_nm']:.4f}", "qwot": f"{r['qwot']:.4f}"}
            for r in f.recipe.table()]
    head = (f"# {f.face} face: reflects the {f.reflects} side, 50 % point {f.edge_nm:.2f} nm at {f.recipe.aoi_deg:g}° "
            f"in index {f.recipe.incident.name}; QWOT at {f.recipe.reference_nm:.2f} nm\n")
    return head + render_rows(rows, ["material", "thickness_nm", "qwot"], "csv") + "\n"


def run(args) -> int:
    if not 1 <= args.periods <= 200:
        raise WorkbenchError(f"--periods must be 1-200 (got {args.periods})")
    if not 0 <= args.tolerance_trials <= 100000:
        raise WorkbenchError(f"--tolerance-trials must be 0-100000 (got {args.tolerance_trials})")
    if not 0 <= args.evaluations <= 100000:
        raise WorkbenchError(f"--evaluations must be 0-100000 (got {args.evaluations})")
    if not 0.0 < args.layer_range < 1.0:
        raise WorkbenchError(f"--layer-range must be in (0, 1) (got {args.layer_range:g})")
    if not (np.isfinite(args.smoothness) and 0 <= args.smoothness <= 1000):
        raise WorkbenchError(f"--smoothness must be a weight 0-1000 (got {args.smoothness:g})")
    if not 0 <= 2 * args.apodise <= args.periods:
        raise WorkbenchError(f"--apodise must be 0-{args.periods // 2}, half of --periods at most (got {args.apodise})")
    if args.keep_free and not args.free_layers:
        raise WorkbenchError("'--keep-free' needs --free-layers")
    if args.free_layers and args.out is None:
        raise WorkbenchError("'--free-layers' needs --out (it writes DIR/design.toml)")
    folder = None
    if args.out is not None:
        folder = OutputFolder(args.out, option="--out", command="recipe",
                              names=("face-blue-green.csv", "face-green-red.csv", "recipes.json", "design.toml",
                                     "layers-blue-green.png", "layers-green-red.png", "face-blue-green.png",
                                     "face-green-red.png"))
        folder._validate()
    design = load_design(args.design)
    faces = splitter_recipes(design, periods=args.periods, high=args.high, low=args.low,
                             refine=args.evaluations > 0, max_evaluations=max(args.evaluations, 1),
                             apodise=args.apodise, smoothness=args.smoothness)
    method = ("characteristic-matrix method; each face averaged over its cone and s, p; refined by bounded "
              "least squares to the idealised face's reflectance"
              + (f" with a ripple penalty of weight {args.smoothness:g} on the chief ray's s and p"
                 if args.smoothness > 0 else "") + " (workbench.analysis.recipe)")
    coated = coated_design(design, faces, layer_range=args.layer_range, free_layers=args.free_layers,
                           keep_free=args.keep_free, coating_smoothness=args.smoothness)
    m_ideal, m_coated = DesignEvaluator(design).measures(), DesignEvaluator(coated).measures()
    compare = {"vora_value": {"idealised": m_ideal.vora_value, "coated": m_coated.vora_value},
               "mean_delta_E00": {ill: {"idealised": m_ideal.delta_E00[ill]["mean"],
                                        "coated": m_coated.delta_E00[ill]["mean"]} for ill in m_ideal.delta_E00},
               "method": "workbench evaluate's measures of the design as given and with the two coated faces "
                         "(matrix fitted for each as the design's [fit] says)"}
    tolerances, figures = {}, {}
    if args.tolerance_trials > 0:
        wl = DesignEvaluator(design).wavelengths
        for f in faces:
            lt = layer_tolerance(f.recipe, wl, trials=args.tolerance_trials, seed=0)
            tolerances[f.face] = {
                "settings": lt.settings,
                "method": ("Monte Carlo through one batch of stacks; ranking by first-order share of the "
                           "reflectance variance from the analytic thickness derivatives (random part)"),
                "edge_shift_nm": lt.edge_shift_percentiles(),
                "non_monotone_trials": lt.non_monotone_counts(),
                "ranking": lt.ranking,
            }
            est = lt.trial_shares
            if est is not None:
                tolerances[f.face]["trial_shares"] = {
                    "noise_floor": est.floor, "null_mean": est.null_mean, "settings": est.settings,
                    "layers_above_floor": int(est.distinguishable.sum()),
                    "method": ("each layer's linear share of the trials' variance of R (Σ_λ cov(e_j, R)² / "
                               "(var e_j Σ_λ var R), e_j its own random error); interval: bootstrap percentiles "
                               "over the trials; noise floor: the 90 % quantile of the largest share of any layer "
                               "with the trials shuffled (docs/methods.md §15)")}
                figures[f"layers-{f.face}.png"] = (lt.ranking, est.floor, est.settings["trials"], f.face)
    grid = design.model().wavelengths
    window = (float(grid[0]), float(grid[-1]))
    face_dicts = [_face_dict(f, window) for f in faces]
    for f, d in zip(faces, face_dicts):
        at = next(r for r in d["edge_vs_angle"] if r["angle_deg"] == f.recipe.aoi_deg)
        bad = [pol for pol in ("s", "p", "mean") if not at[pol]["monotone"]]
        if bad:
            notice(f"the {f.face} face's transition at {f.recipe.aoi_deg:g}° is not monotone for "
                   f"{', '.join(bad)} (see its 50 % point line); a crossing of 50 % on a ripple is not its edge")
    data = {"design": str(args.design), "method": method, "faces": face_dicts,
            "measures": compare, "layer_tolerance": tolerances}
    if args.format == "json":
        text = to_json(data)
    else:
        blocks = []
        for f, d in zip(faces, face_dicts):
            header = [f"# {f.face} face: reflects the {f.reflects} side; 50 % point {f.edge_nm:.2f} nm at "
                      f"{f.recipe.aoi_deg:g}° in index {f.recipe.incident.name}"
                      + (f", f/{f.recipe.f_number:g} cone" if f.recipe.f_number else "")
                      + f"; QWOT at {f.recipe.reference_nm:.2f} nm; {len(d['layers'])} layers, {d['total_nm']:.1f} nm"]
            if f.report is not None:
                header.append(f"# refined: rms R − idealised {f.report.rms_before:.4f} → {f.report.rms_after:.4f} "
                              f"in {f.report.evaluations} evaluations ("
                              + ("converged" if f.report.converged else "the budget of --evaluations spent") + ")")
            header += _edge_lines(f, d)
            t = tolerances.get(f.face)
            if t is not None:
                side = "long_wave" if f.reflects == "short" else "short_wave"
                shift = t["edge_shift_nm"][side]
                top = ", ".join(f"{r['layer']} {r['material']} {100 * r['share']:.0f} %" for r in t["ranking"][:5])
                header.append(f"# layer errors ({t['settings']['trials']} trials, 1 % random, 0.5 % systematic, "
                              f"0.5 % index): edge shift p5/p50/p95 "
                              + ("-" if shift is None else f"{shift['p5']:+.2f}/{shift['p50']:+.2f}/{shift['p95']:+.2f} nm")
                              + f" ({t['non_monotone_trials'][side]} trials with a non-monotone transition)"
                              + f"; layers that matter most (each one's first-order share of the variance of R, "
                              f"from the analytic thickness derivatives): {top}")
                ts = t.get("trial_shares")
                if ts is not None:
                    resolved = ", ".join(
                        f"{r['layer']} {100 * r['trial_share']:.1f} % ({100 * r['trial_interval'][0]:.1f}-"
                        f"{100 * r['trial_interval'][1]:.1f})" for r in t["ranking"] if r["above_floor"])
                    header.append(f"#   from the trials: {ts['layers_above_floor']} of {len(t['ranking'])} layers "
                                  f"above the noise floor of {100 * ts['noise_floor']:.2f} % (90 % quantile of the "
                                  f"largest share with the trials shuffled; a layer without effect scores "
                                  f"{100 * ts['null_mean']:.2f} % on average); share of R's variance, bootstrap "
                                  f"90 % interval: " + (resolved or "none"))
            rows = [{"layer": r["layer"], "material": r["material"], "thickness_nm": r["thickness_nm"],
                     "qwot": r["qwot"]} for r in f.recipe.table()]
            blocks.append(render_rows(rows, _COLUMNS, "csv" if args.format == "csv" else "table",
                                      header_lines=header if args.format == "table" else (), digits=3))
        text = ("\n\n" if args.format == "table" else "\n").join(blocks)
        if args.format == "table":
            lines = [f"# {method}", "# camera measures, idealised faces → coated faces "
                     "(matrix fitted for each as the design's [fit] says):",
                     f"#   Vora value ν            {m_ideal.vora_value:.4f} → {m_coated.vora_value:.4f}"]
            for ill, v in compare["mean_delta_E00"].items():
                lines.append(f"#   mean ΔE00 {ill:<13} {v['idealised']:.3f} → {v['coated']:.3f}")
            text = "\n".join(lines) + "\n" + text
    if folder is not None:
        with folder as out:
            for f in faces:
                write_text_atomically(out.path / f"face-{f.face}.csv", _layer_csv(f))
            write_text_atomically(out.path / "recipes.json", to_json(data) + "\n")
            save_design(coated, out.path / "design.toml")
            for f in faces:
                fig = _face_figure(f, grid)
                write_bytes_atomically(out.path / f"face-{f.face}.png", plots.coating.png_bytes(fig, dpi=110))
            for name, (ranking, floor, trials, face) in figures.items():
                fig = plots.coating.plot_layer_shares(ranking, floor, trials=trials, title=f"{face} face")
                write_bytes_atomically(out.path / name, plots.coating.png_bytes(fig, dpi=110))
            out.commit()
        notice(f"wrote face-blue-green.csv, face-green-red.csv, recipes.json, design.toml, face-blue-green.png, "
               f"face-green-red.png" + (" and " + ", ".join(figures) if figures else "") + f" into {args.out}")
    print(text)
    return 0
