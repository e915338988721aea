"""``workbench tolerance DESIGN.toml``: Monte Carlo tolerance analysis of a camera design.

Draws the toleranced parameters of the design (``tolerance = {distribution,
width}`` in its ``[[chain]]``) for ``--trials`` units with ``--seed``,
evaluates every unit with the matrix of the nominal design (``fixed``) and
with its own matrix (``recalibrated``), and prints the distributions of the
Vora value ν and of the mean and maximum ΔE00 under each illuminant, the
white-balance gains and noise gains, the yield against the design's
``[tolerance]`` specification, which tolerance drives the error, and the
colour shift across the image (field positions of ``[[tolerance.field]]``).

``--format json`` prints one JSON object: ``trials``, ``seed``, ``yield``
(fraction 0-1, of the first matrix case), ``illuminants`` →
{name → ``delta_E00_mean`` / ``delta_E00_max`` → {p5, p50, p95, mean, std,
min, max}, …}, ``vora_value``, ``ranking``, ``cases`` (every matrix case),
``field``, ``parameters``, ``units``, ``methods``. The same seed gives the
same output. ``--csv OUT.csv`` writes one row per trial; ``--trials-json
OUT.json`` the summary with every trial; ``--plots DIR`` the figures as PNG.

Exit status: 0 when done; 1 when interrupted (Ctrl-C) after some trials —
the finished trials are reported and written, and the output says so; 2 for
bad input.
"""

from __future__ import annotations

import contextlib
import math
from dataclasses import replace
from pathlib import Path

from workbench import plots  # its modules (and matplotlib) load on first use, when a figure is drawn
from workbench.analysis.tolerance import (
    DEFAULT_CHUNK,
    MATRIX_CHOICES,
    run_tolerance,
    save_trials,
    toleranced_parameters,
)
from workbench.cli.commands._output import notice, render_rows, to_json
from workbench.errors import WorkbenchError
from workbench.fileio.atomic import write_atomically
from workbench.fileio.design_toml import load_design
from workbench.fileio.limits import check_count
from workbench.fileio.outdir import OutputFolder, check_output_file

NAME = "tolerance"


def register(subparsers) -> None:
    p = subparsers.add_parser(
        NAME,
        help="Monte Carlo tolerance analysis: ΔE00, ν, yield, ranking of tolerances, shift across the field",
        description=__doc__.splitlines()[0].replace("``", ""),
    )
    p.add_argument("design", metavar="DESIGN.toml", help="design file (docs/design-file.md)")
    p.add_argument("--trials", type=int, default=2000, metavar="N", help="simulated units (default 2000)")
    p.add_argument("--seed", type=int, default=0, help="random seed, >= 0 (default 0)")
    p.add_argument("--matrix", choices=MATRIX_CHOICES, default="both",
                   help="matrix case: fixed (the nominal design's matrix in every unit), recalibrated "
                        "(each unit its own), or both (default; the summary's top level is fixed)")
    p.add_argument("--format", choices=("table", "json"), default="table",
                   help="output format on stdout (default table)")
    p.add_argument("--max-mean-de00", type=float, default=None, metavar="X",
                   help="spec: mean ΔE00 limit under every illuminant (default: the design's [tolerance])")
    p.add_argument("--min-vora", type=float, default=None, metavar="X",
                   help="spec: lowest Vora value, 0-1 (default: the design's [tolerance])")
    p.add_argument("--scale", type=float, default=1.0, metavar="F",
                   help="multiply every tolerance width by F (default 1)")
    p.add_argument("--csv", metavar="OUT.csv", help="write every trial as one CSV row")
    p.add_argument("--trials-json", metavar="OUT.json", help="write the summary with every trial as JSON")
    p.add_argument("--plots", metavar="DIR", type=Path, help="write the figures as PNG files into DIR")
    p.add_argument("--no-field", action="store_true", help="skip the colour shift across the image")
    p.add_argument("--chunk", type=int, default=DEFAULT_CHUNK, metavar="N",
                   help=f"trials evaluated together (memory; default {DEFAULT_CHUNK})")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.set_defaults(run=run)


def _spec(design, args):
    t = design.tolerance
    if args.max_mean_de00 is not None:
        if not args.max_mean_de00 > 0:
            raise WorkbenchError(f"--max-mean-de00: expected a number > 0 (got {args.max_mean_de00:g})")
        t = replace(t, max_mean_delta_E00=args.max_mean_de00)
    if args.min_vora is not None:
        if not 0 <= args.min_vora <= 1:
            raise WorkbenchError(f"--min-vora: expected a number in [0, 1] (got {args.min_vora:g})")
        t = replace(t, min_vora=args.min_vora)
    return t


def _fmt(d, digits=3):
    return "–" if d is None else f"{d:.{digits}f}"


def table(result) -> str:
    """The human-readable report: distributions, yield, ranking and field shift, with units and methods."""
    s = result.summary()
    blocks = []
    spec = s["spec"]
    head = [
        f"design: {s['design']} ({s['file']})",
        f"{s['trials']} trials (seed {s['seed']})" + (
            f" — INTERRUPTED after {s['trials']} of {s['trials_requested']}; statistics over those"
            if s["interrupted"] else ""),
        f"spec: {spec['rule']} (max_mean_delta_E00 = {spec['max_mean_delta_E00']:g}, "
        f"min_vora = {spec['min_vora']:g})",
        f"sampling: {s['methods']['sampling']}",
        f"statistics: {s['methods']['distribution']}",
        f"ΔE00: {s['methods']['delta_E00']}",
    ]
    for p in s["parameters"]:
        u = f" {p['unit']}" if p["unit"] else ""
        head.append(f"  tolerance {p['name']}: {p['distribution']}, width {p['width']:g}{u} "
                    f"({p['width_means']}); nominal {p['nominal']:g}{u}")
    v = s["vora_value"]
    head.append(f"Vora value ν (0-1; {s['methods']['vora_value']}): nominal {v['nominal']:.4f}, "
                f"p5 {v['p5']:.4f}, p50 {v['p50']:.4f}, p95 {v['p95']:.4f}, mean {v['mean']:.4f}, "
                f"std {v['std']:.4f}")
    blocks.append("\n".join(head))
    for case, cs in s["cases"].items():
        lo, hi = cs["yield_interval_95"]
        lines = [
            "",
            f"matrix {case}: {s['methods']['matrix_cases'][case]}",
            f"yield {100 * cs['yield']:.1f} % ({cs['units_passing']} of {s['trials']} units; 95 % Wilson "
            f"interval {100 * lo:.1f}–{100 * hi:.1f} %); nominal design "
            f"{'passes' if cs['nominal_passes'] else 'fails'} the spec",
            "ΔE00 in CIEDE2000 units over the design's samples; gains R/G, B/G in 1 (ratio to the green "
            "gain); noise gain = row 2-norm of the matrix, 1",
        ]
        rows = []
        for ill, d in cs["illuminants"].items():
            for q, label in (("delta_E00_mean", "mean ΔE00"), ("delta_E00_max", "max ΔE00"),
                             ("white_balance_gain_R_over_G", "gain R/G"),
                             ("white_balance_gain_B_over_G", "gain B/G")):
                x = d[q]
                rows.append({"illuminant": ill, "quantity": label, "nominal": d["nominal"][q],
                             **{k: x[k] for k in ("p5", "p50", "p95", "mean", "std")}})
            for ch in ("R", "G", "B"):
                x = d["noise_gain"][ch]
                rows.append({"illuminant": ill, "quantity": f"noise gain {ch}",
                             "nominal": d["nominal"]["noise_gain"][ch],
                             **{k: x[k] for k in ("p5", "p50", "p95", "mean", "std")}})
        w = cs["worst_mean_delta_E00"]
        rows.append({"illuminant": "worst", "quantity": "mean ΔE00", "nominal": cs["nominal_worst_mean_delta_E00"],
                     **{k: w[k] for k in ("p5", "p50", "p95", "mean", "std")}})
        lines.append(render_rows(rows, ["illuminant", "quantity", "nominal", "p5", "p50", "p95", "mean", "std"],
                                 "table"))
        rk = cs["ranking"]
        lines.append("")
        lines.append(f"what drives the worst-illuminant mean ΔE00 (matrix {case}; R² of the linear fit "
                     f"{_fmt(rk['r_squared'])}):")
        lines.append(f"  variance contribution: {rk['methods']['variance_contribution']}")
        lines.append(f"  src2: {rk['methods']['src2']}")
        lines.append(f"  one at a time: {rk['methods']['one_at_a_time']}; ΔE00")
        above = sum(bool(r.get("above_noise_floor")) for r in rk["parameters"])
        lines.append(f"  noise floor {_fmt(rk['noise_floor'])}: {above} of {len(rk['parameters'])} parameters above it; "
                     f"{rk['methods']['noise_floor']}")
        rows = [{"parameter": r["name"], "tolerance": f"{r['width']:g} {r['unit'] or '(1)'} {r['distribution']}",
                 "variance_contribution": r["variance_contribution"], "src2": r["src2"],
                 "at_minus_width": r["oat_minus"], "at_plus_width": r["oat_plus"]} for r in rk["parameters"]]
        if rows:
            lines.append(render_rows(rows, ["parameter", "tolerance", "variance_contribution", "src2",
                                            "at_minus_width", "at_plus_width"], "table"))
        blocks.append("\n".join(lines))
    f = s["field"]
    if f is not None:
        lines = ["", f"across the image ({f['splitter']}): {f['method']}",
                 "angles in degrees in the prism glass; shifts in ΔE00 (CIEDE2000) units against the centre"]
        rows = [{"position": r["position"], "offset_deg": r["aoi_offset_deg"], "illuminant": r["illuminant"],
                 "samples_mean": r["sample_shift_mean"], "samples_max": r["sample_shift_max"],
                 "white": r["white_shift"], "grey": r["grey_shift"], "mean_vs_truth": r["delta_E00_mean"]}
                for r in f["positions"]]
        lines.append(render_rows(rows, ["position", "offset_deg", "illuminant", "samples_mean", "samples_max",
                                        "white", "grey", "mean_vs_truth"], "table", digits=3))
        blocks.append("\n".join(lines))
    return "\n".join(blocks)


PLOT_FILES = ("histograms-fixed.png", "histograms-recalibrated.png", "ranking-fixed.png",
              "ranking-recalibrated.png", "field-shift.png")


def write_plots(result, folder) -> list[Path]:
    """Save the tolerance figures as PNG files into ``folder``.

    ``folder`` is an open :class:`workbench.fileio.outdir.OutputFolder` (the
    figures land in its staging folder; the caller commits) or a path,
    which is then written as one unit here.
    """
    if not isinstance(folder, OutputFolder):
        with OutputFolder(folder, option="--plots", command="tolerance", names=PLOT_FILES) as out:
            names = [p.name for p in write_plots(result, out)]
            out.commit()
        return [out.target / n for n in names]
    makers = []
    for case in result.cases:
        makers.append((f"histograms-{case}.png", lambda c=case: plots.tolerance.plot_histograms(result, case=c)))
        makers.append((f"ranking-{case}.png", lambda c=case: plots.tolerance.plot_ranking(result, case=c)))
    if result.field is not None:
        makers.append(("field-shift.png", lambda: plots.tolerance.plot_field_shift(result.field)))
    out = []
    for name, make in makers:
        fig = make()  # a pyplot-free Figure: freed with its last reference
        write_atomically(folder / name, lambda fh: fig.savefig(fh, format="png", dpi=110))
        out.append(folder / name)
    return out


def run(args) -> int:
    if args.trials < 1:
        raise WorkbenchError(f"--trials: expected a whole number >= 1 (got {args.trials})")
    check_count(args.trials, "trials", "trials", where="--trials")
    if not 0 <= args.seed < 2**63:
        raise WorkbenchError(f"--seed: expected a whole number >= 0 (got {args.seed})")
    if args.chunk < 1:
        raise WorkbenchError(f"--chunk: expected a whole number >= 1 (got {args.chunk})")
    check_count(args.chunk, "trials", "trials per chunk", where="--chunk")
    if not (args.scale >= 0 and math.isfinite(args.scale)):
        raise WorkbenchError(f"--scale: expected a finite number >= 0 (got {args.scale:g})")
    for option, value in (("--max-mean-de00", args.max_mean_de00), ("--min-vora", args.min_vora)):
        if value is not None and not math.isfinite(value):
            raise WorkbenchError(f"{option}: expected a finite number (got {value:g})")
    for option, value in (("--csv", args.csv), ("--trials-json", args.trials_json)):
        if value:
            check_output_file(value, option=option)
    plots = None
    if args.plots is not None:
        plots = OutputFolder(args.plots, option="--plots", command="tolerance", names=PLOT_FILES)
        plots._validate()
    design = load_design(args.design)
    spec = _spec(design, args)
    if not toleranced_parameters(design):
        raise WorkbenchError(f"{design.source}: no parameter has a tolerance; expected at least one "
                             "'tolerance = {distribution, width}' in the [[chain]] (docs/design-file.md)")
    with contextlib.ExitStack() as stack:
        if plots is not None:
            stack.enter_context(plots)
        result = run_tolerance(design, trials=args.trials, seed=args.seed, matrix=args.matrix,
                               scale=args.scale, spec=spec, field=False if args.no_field else None,
                               chunk=args.chunk, progress=not args.quiet)
        for n in result.notes:
            notice(n)
        if args.csv or args.trials_json:
            save_trials(result, csv_path=args.csv, json_path=args.trials_json)
            notice(f"wrote {result.trials} trials to {', '.join(p for p in (args.csv, args.trials_json) if p)}")
        if plots is not None:
            written = write_plots(result, plots)
            plots.commit()
            notice(f"wrote {', '.join(p.name for p in written)} to {args.plots}")
    if args.format == "json":
        print(to_json(result.summary()))
    else:
        print(table(result))
    notice(f"{result.trials} trials in {result.seconds:.2f} s")
    if result.interrupted:
        notice(f"interrupted after {result.trials} of {result.trials_requested} trials; exit status 1")
        return 1
    return 0
