"""``workbench evaluate DESIGN.toml``: the channel sensitivities and measures of a design as it stands.

Prints, per channel, the peak wavelength, the 50 % points and the area of
the sensitivity curve, and the Vora value of the three channels against the
design's observer (recording and viewing illuminants from the design's
``[fit]``, equal energy when not given). ``--sensitivities OUT.csv`` writes
the three curves.
"""

from __future__ import annotations

import numpy as np

from workbench import plots  # its modules (and matplotlib) load on first use, when a figure is drawn
from workbench.analysis.evaluator import DesignEvaluator
from workbench.analysis.near_infrared import DEFAULT_CUTOFF_NM, infrared_share
from workbench.analysis.throughput import throughput
from workbench.cli.commands._output import notice, render_rows, to_json
from workbench.colorimetry.cie import observer_label
from workbench.errors import WorkbenchError
from workbench.fileio.design_toml import load_design
from workbench.fileio.atomic import write_atomically
from workbench.fileio.outdir import OutputFolder, check_output_file
from workbench.fileio.spectra_csv import write_spectra_csv
from workbench.model.design import CHANNELS
from workbench.report.methods import METHODS

NAME = "evaluate"


def register(subparsers) -> None:
    p = subparsers.add_parser(
        NAME,
        help="channel sensitivities and Vora value of a design file",
        description=__doc__.splitlines()[0].replace("``", ""),
    )
    p.add_argument("design", metavar="DESIGN.toml", help="design file (docs/design-file.md)")
    p.add_argument("--format", choices=("json", "table"), default="table",
                   help="output format on stdout (default table)")
    p.add_argument("--sensitivities", metavar="OUT.csv",
                   help="also write the R, G, B sensitivities as a wide CSV")
    p.add_argument("--figures", metavar="DIR",
                   help="also write chain.png (each path's elements and their product) and sensitivities.png "
                        "into DIR (written as one unit)")
    p.add_argument("--ir-cutoff", metavar="NM", type=float, action="append", default=[],
                   help="another cut-off for the near-infrared share and ΔE00 change, nm "
                        "(380-1100; 700 nm and the design's [fit] infrared_cutoff_nm are always reported; repeatable)")
    p.set_defaults(run=run)


def curve_summary(wl: np.ndarray, s: np.ndarray) -> dict:
    """Peak, 50 % points and area of one sensitivity curve ``s`` (n,) on ``wl`` (nm).

    The peak is the grid point of the maximum; the 50 % points are where the
    curve first rises to and last falls from half its maximum, by linear
    interpolation between grid points (None when the curve starts or ends
    above half); the area is the trapezoidal integral ∫ s dλ.
    """
    i = int(np.argmax(s))
    half = 0.5 * s[i]
    above = s >= half
    lo = hi = None
    first = int(np.argmax(above))
    last = int(s.size - 1 - np.argmax(above[::-1]))
    if first > 0:
        a, b = s[first - 1], s[first]
        lo = float(wl[first - 1] + (half - a) / (b - a) * (wl[first] - wl[first - 1]))
    if last < s.size - 1:
        a, b = s[last], s[last + 1]
        hi = float(wl[last] + (a - half) / (a - b) * (wl[last + 1] - wl[last]))
    return {
        "peak_nm": float(wl[i]),
        "peak_value": float(s[i]),
        "half_max_low_nm": lo,
        "half_max_high_nm": hi,
        "area": float(np.trapezoid(s, wl)),
    }


def evaluate(design, *, infrared_cutoffs=()) -> dict:
    """The summary that ``workbench evaluate`` prints, as a dict (every measure from the evaluator)."""
    ev = DesignEvaluator(design)
    m = ev.measures(use_stored_matrix=design.matrix is not None, infrared_cutoffs=infrared_cutoffs)
    sens = ev.model.channel_sensitivities()
    wl = sens.wavelengths
    passed = throughput(ev.model.element_curves(), ev.rec, illuminant=ev.recording_label)
    return {
        "design": design.name,
        "file": design.source,
        "grid": sens.describe_grid(),
        "observer": observer_label(design.observer),
        "sensitivity_units": sens.units,
        "channels": {
            ch: {**curve_summary(wl, sens[ch]), "neugebauer_q": m.neugebauer_q[k]}
            for k, ch in enumerate(CHANNELS)
        },
        "vora_value": m.vora_value,
        **{k: v for k, v in m.summary().items() if k not in ("vora_value", "neugebauer_q")},
        "throughput": passed.to_dict(),
        "method": {
            "sensitivities": METHODS["sensitivities"],
            "peak_nm": METHODS["peak_nm"],
            "half_max_nm": METHODS["half_max_nm"],
            "area": f"trapezoidal integral of the sensitivity over the grid, {sens.units}·nm",
            "vora_value": m.methods["vora_value"],
            "neugebauer_q": m.methods["neugebauer_q"],
            "recording_illuminant": ev.recording_label,
            "viewing_illuminant": ev.viewing_label,
            **{k: v for k, v in m.methods.items()
               if k not in ("vora_value", "neugebauer_q", "recording_illuminant", "viewing_illuminant")},
        },
        "notes": list(dict.fromkeys(list(sens.notes) + list(ev.illuminant_notes) + list(ev.notes))),
    }


FIGURE_FILES = ("chain.png", "sensitivities.png", "near-infrared.png")


def write_figures(design, directory, *, evaluator=None) -> list:
    """chain.png (each path's element curves and product), sensitivities.png and near-infrared.png
    (each channel's signal per nm under each illuminant, the part above 700 nm shaded) into an open OutputFolder."""
    ev = evaluator or DesignEvaluator(design)
    model = ev.model
    S = model.sensitivities()
    ills = {n: ev.bench.E[j] for j, n in enumerate(ev.bench.illuminant_names)}
    shares = infrared_share(S, ev.bench.E, ev.wavelengths, cutoff_nm=DEFAULT_CUTOFF_NM)
    out = []
    for name, make in (("chain.png", lambda: plots.chain.plot_chain(model.wavelengths, model.element_curves())[0].figure),
                       ("sensitivities.png", lambda: plots.spectra.plot_spectra(model.channel_sensitivities()).figure),
                       ("near-infrared.png", lambda: plots.near_infrared.plot_infrared(ev.wavelengths, S, ills,
                                                                           cutoff_nm=DEFAULT_CUTOFF_NM, shares=shares))):
        fig = make()
        write_atomically(directory / name, lambda fh, fig=fig: fig.savefig(fh, format="png", dpi=110))
        out.append(directory / name)
    return out


def run(args) -> int:
    for c in args.ir_cutoff:
        if not 380 <= c <= 1100:
            raise WorkbenchError(f"--ir-cutoff must be a wavelength in [380, 1100] nm (got {c:g})")
    if args.sensitivities:
        check_output_file(args.sensitivities, option="--sensitivities")
    figures = None
    if args.figures:
        figures = OutputFolder(args.figures, option="--figures", command="evaluate", names=FIGURE_FILES)
        figures._validate()
    design = load_design(args.design)
    result = evaluate(design, infrared_cutoffs=args.ir_cutoff)
    if figures is not None:
        with figures:
            written = write_figures(design, figures)
            figures.commit()
        for p in written:
            notice(f"wrote {figures.target / p.name}")
    for n in result["notes"]:
        notice(n)
    if args.sensitivities:
        write_spectra_csv(design.channel_sensitivities(), args.sensitivities)
        notice(f"wrote the R, G, B sensitivities to {args.sensitivities}")
    if args.format == "json":
        out = dict(result)
        out.pop("notes")
        print(to_json(out))
        return 0
    rows = [
        {"channel": ch, **{k: v for k, v in c.items() if k != "peak_value"}}
        for ch, c in result["channels"].items()
    ]
    m = result["method"]
    header = [
        f"design: {result['design']} ({result['file']})",
        f"grid {result['grid']}; observer {result['observer']}",
        f"Vora value {result['vora_value']:.4f} ({m['vora_value']}; recording "
        f"{m['recording_illuminant']}, viewing {m['viewing_illuminant']})",
        f"peak, half_max_low, half_max_high in nm; area in {result['sensitivity_units']}·nm",
    ]
    print(render_rows(rows, ["channel", "peak_nm", "half_max_low_nm", "half_max_high_nm", "area",
                             "neugebauer_q"], "table", header_lines=header))
    print()
    de = [{"illuminant": ill, **s} for ill, s in result["delta_E00"].items()]
    print(render_rows(de, ["illuminant", "mean", "median", "p95", "max"], "table", header_lines=[
        f"ΔE00 over the design's samples: {m['delta_E00']}",
        f"matrix: {m['matrix']}; Luther residual {result['luther_residual']:.4f}; "
        f"{m['smi']}: {result['smi']['smi']:.1f}",
    ]))
    if "signal_budget" in result:
        print()
        sb = [{"illuminant": ill, **r} for ill, b in result["signal_budget"].items() for r in b["channels"]]
        first = next(iter(result["signal_budget"].values()))
        inp = first["inputs"]
        print(render_rows(sb, ["illuminant", "channel", "electrons", "clipped", "snr_shot", "snr_shot_db", "snr"],
                          "table", header_lines=[
            f"signal budget: photo-electrons per pixel on a {inp['reflectance']:g} grey at {inp['lux']:g} lx, "
            f"f/{inp['f_number']:g}, {inp['exposure_s']:g} s, {inp['pixel_pitch_um']:g} µm pixels; SNR = √N_e "
            "(shot) and with read noise",
            first["method"]]))
    print()
    tp = result["throughput"]
    print(render_rows(tp["rows"], ["element", "type", "R", "G", "B"], "table", header_lines=[
        f"throughput: {tp['unit']} each element passes ({tp['method']})"]))
    print()
    ir = [{"cutoff_nm": cut, "illuminant": ill,
           **{f"{ch}_ir_%": 100 * v["share"][ch] for ch in CHANNELS},
           "mean_dE00": v["mean_delta_E00"], "without_ir": v["mean_delta_E00_without_infrared"],
           "change": v["mean_delta_E00"] - v["mean_delta_E00_without_infrared"]}
          for cut, per in result["near_infrared"].items() for ill, v in per.items()]
    print(render_rows(ir, ["cutoff_nm", "illuminant", "R_ir_%", "G_ir_%", "B_ir_%", "mean_dE00",
                           "without_ir", "change"], "table", header_lines=[
        "near infrared: share of each channel's white signal above the cut-off (%), and the mean ΔE00 "
        "with and without it",
        m["near_infrared"],
    ]))
    return 0
