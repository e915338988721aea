"""``workbench light SPD.csv``: the published indices of a light, its camera fidelity index, two fixtures compared.

Prints CCT and Duv (Ohno 2013), CIE 13.3 Ra and R1-R14, CIE 224:2017 Rf,
ANSI/IES TM-30-18 Rg, the Academy SSI and, for absolute SPDs, the
illuminance, each with its method. ``--camera DESIGN.toml|SENS.csv`` adds
the camera fidelity index (the camera's renderings under the light and
under the reference illuminant at the same CCT, ΔE00 per sample, scored
with the EBU Tech 3355 formula on open samples) and the ΔE00 of every
sample; ``--compare SPD2.csv`` compares a second fixture to the eye and on
that camera. Not a photobiological safety assessment (IEC 62471).
"""

from __future__ import annotations

import os
from pathlib import Path

from workbench import plots  # its modules (and matplotlib) load on first use, when a figure is drawn
from workbench.analysis.evaluator import load_camera
from workbench.analysis.light import DIFFER_DELTA_E00, MATCH_DELTA_E00, light_report, read_light
from workbench.cli.commands._output import notice, to_json
from workbench.errors import InputFileError, WorkbenchError
from workbench.fileio.atomic import write_atomically
from workbench.fileio.outdir import OutputFolder
from workbench.report.light import report_rows, value_text
import math

import numpy as np
from workbench.model.spectra import grid

NAME = "light"


def register(subparsers) -> None:
    p = subparsers.add_parser(
        NAME,
        help="indices of a light source, its camera fidelity index, two fixtures compared",
        description=__doc__.splitlines()[0].replace("``", ""),
    )
    p.add_argument("spd", metavar="SPD.csv", help="the light's spectral power distribution (CSV, one spectrum)")
    p.add_argument("--format", choices=("table", "json"), default="table",
                   help="output format on stdout (default table)")
    p.add_argument("--spectrum", metavar="NAME", help="which spectrum, when the file holds several")
    p.add_argument("--band", type=float, choices=(1.0, 5.0), default=None, metavar="{1,5}",
                   help="put a finer export on a 1 or 5 nm grid by averaging over each step with a triangular "
                        "band-pass (CIE 167, ASTM E2729-style) instead of interpolating")
    p.add_argument("--kind", choices=("emission",), default=None,
                   help="read SPD.csv as emission although its header names another kind")
    p.add_argument("--camera", metavar="DESIGN.toml|SENS.csv",
                   help="a camera: a design file, or a CSV of three sensitivities R, G, B")
    p.add_argument("--primaries", metavar="NAME", default="ITU-R BT.709",
                   help="display primaries the matrix of a sensitivity CSV is fitted to (default ITU-R BT.709; "
                        "a design file brings its own)")
    p.add_argument("--compare", metavar="SPD2.csv", help="a second light to compare with (light B)")
    p.add_argument("--compare-spectrum", metavar="NAME", help="which spectrum of SPD2.csv")
    p.add_argument("--ssi-reference", metavar="auto|NAME|FILE.csv", default="auto",
                   help="reference of the Academy SSI: auto (Planckian below 4000 K, CIE daylight above, at "
                        "the light's CCT), a CIE illuminant name (D65, D50, A, ...) or an SPD file")
    p.add_argument("--extrapolate", choices=("none", "constant"), default="none",
                   help="extend SPDs not covering 380-780 nm with their end values (CIE 167); "
                        "by default they are refused")
    p.add_argument("--match", type=float, default=None, metavar="ΔE00",
                   help="mean ΔE00 at or below which two fixtures match (default 1.0)")
    p.add_argument("--differ", type=float, default=None, metavar="ΔE00",
                   help="mean ΔE00 at or above which two fixtures differ (default 2.0)")
    p.add_argument("--figures", metavar="DIR", help="also write the figures as PNG files into DIR")
    p.set_defaults(run=run)


def _ssi_reference(text: str):
    t = text.strip()
    if t.lower() == "auto":
        return "auto"
    if t.lower().endswith((".csv", ".txt", ".tsv")) or os.sep in t or Path(t).exists():
        return read_light(t)
    return t


def _load_camera(path: str, primaries: str):
    p = Path(path)
    if not p.exists():
        raise InputFileError("cannot read: No such file or directory", str(path))
    if p.suffix.lower() == ".toml":
        if primaries != "ITU-R BT.709":
            notice(f"--primaries {primaries} ignored: the design file {path} gives its own display primaries")
        return load_camera(p)
    return load_camera(p, primaries=primaries)


def _write_png(fig, path: Path) -> None:
    """Save a figure as PNG through a temporary file and a rename (atomic)."""
    write_atomically(path, lambda fh: fig.savefig(fh, format="png", dpi=110))


FIGURE_FILES = ("light-spd.png", "light-special-indices.png", "camera-delta-e00.png", "camera-shifts-uv.png",
                "compare-side-by-side.png", "compare-each-adapted.png")


def write_figures(report, directory) -> list[Path]:
    """Write the report's figures as PNG files into ``directory``; returns the paths.

    ``directory`` is an open :class:`workbench.fileio.outdir.OutputFolder`
    (the caller commits) or a path, then written as one unit here.
    """
    lp = plots.light  # imports matplotlib now: figures are being drawn
    if not isinstance(directory, OutputFolder):
        with OutputFolder(directory, option="--figures", command="light", names=FIGURE_FILES) as out:
            names = [p.name for p in write_figures(report, out)]
            out.commit()
        return [out.target / n for n in names]
    makers = {"light-spd.png": lambda: lp.plot_light_spd(report.indices)}
    if report.indices.R is not None:
        makers["light-special-indices.png"] = lambda: lp.plot_special_indices(report.indices)
    if report.camera is not None:
        makers["camera-delta-e00.png"] = lambda: lp.plot_camera_delta_e(report.camera)
        makers["camera-shifts-uv.png"] = lambda: lp.plot_camera_shifts(report.camera)
    if report.comparison is not None:
        for mode in report.comparison.modes:
            makers[f"compare-{mode}.png"] = lambda m=mode: lp.plot_comparison(report.comparison, mode=m)
    out = []
    for name, make in makers.items():
        _write_png(make(), directory / name)  # a pyplot-free Figure: freed with its last reference
        out.append(directory / name)
    return out


def _aligned(rows: list[dict], columns: list[str], right=("value",), header_lines=()) -> str:
    """Rows as text columns: numbers right-aligned, words left-aligned, the last column unpadded."""
    table = [columns] + [[str(r.get(c, "")) for c in columns] for r in rows]
    widths = [max(len(row[i]) for row in table) for i in range(len(columns))]
    lines = list(header_lines)
    for row in table:
        cells = [c.rjust(w) if columns[i] in right else c.ljust(w)
                 for i, (c, w) in enumerate(zip(row, widths))]
        cells[-1] = row[-1]
        lines.append("  ".join(cells).rstrip())
    return "\n".join(lines)


def _table(report) -> str:
    ind = report.indices
    lines = [
        f"caution: {report.caution}",
        f"light: {ind.name} ({ind.source or 'in memory'}); grid {ind.spd.describe_grid()}; "
        f"units {ind.spd.units}",
    ]
    lines += [f"warning: {w}" for w in ind.warnings]
    rows = [{**r, "value": value_text(r["value"])} for r in report_rows(report)]
    out = [_aligned(rows, ["quantity", "value", "unit", "method"], header_lines=lines)]
    if report.camera is not None:
        c = report.camera
        worst = sorted(zip(c.sample_names, c.delta_E00, c.sample_sets), key=lambda t: -t[1])[:10]
        out.append("")
        out.append(_aligned(
            [{"sample": n, "set": s, "delta_E00": f"{d:.2f}"} for n, d, s in worst],
            ["sample", "set", "delta_E00"], right=("delta_E00",),
            header_lines=[f"camera {c.camera}: the 10 largest ΔE00 (CIEDE2000) of 113, "
                          f"{c.light} vs {c.reference} (all in --format json)"]))
    if report.comparison is not None:
        k = report.comparison
        rows = []
        for mode, m in k.modes.items():
            rows.append({"mode": mode, "eye_mean": f"{m.eye_mean:.2f}",
                         "camera_mean": "n/a" if m.camera is None else f"{m.camera_mean:.2f}",
                         "verdict": m.verdict})
        out.append("")
        out.append(_aligned(rows, ["mode", "eye_mean", "camera_mean", "verdict"],
                            right=("eye_mean", "camera_mean"), header_lines=[
                                   f"A = {k.light_a} ({k.CCT_a:.0f} K) vs B = {k.light_b} ({k.CCT_b:.0f} K): "
                                   f"Δu′v′ {k.delta_u_prime_v_prime:.4f} (CIE 1976 UCS, 2°)",
                                   f"mean ΔE00 over 113 samples; match ≤ {k.match:g}, differ ≥ {k.differ:g} "
                                   "(common practice); side-by-side = adapted to / balanced on A, "
                                   "each-adapted = each light on its own white (definitions in --format json)"]))
        for mode, m in k.modes.items():
            if m.eye_not_camera:
                out.append(f"{mode}: samples matching to the eye but not on camera: {', '.join(m.eye_not_camera)}")
            if m.camera_not_eye:
                out.append(f"{mode}: samples matching on camera but not to the eye: {', '.join(m.camera_not_eye)}")
    return "\n".join(out)


def band_average(spd, step: float, path: str = "SPD"):
    """The SPD on the whole-``step`` nm grid inside its range, averaged over each step (triangular band-pass)."""

    wl = spd.wavelengths
    coarsest = float(np.max(np.diff(wl)))
    if coarsest > step + 1e-9:
        raise WorkbenchError(f"{path}: --band {step:g} averages a finer export onto a {step:g} nm grid; expected "
                             f"steps of at most {step:g} nm (got steps up to {coarsest:g} nm) — leave out --band")
    start, stop = math.ceil(wl[0] / step - 1e-9) * step, math.floor(wl[-1] / step + 1e-9) * step
    return spd.resample(grid(start, stop, step), method="band")


def run(args) -> int:
    match = MATCH_DELTA_E00 if args.match is None else args.match
    differ = DIFFER_DELTA_E00 if args.differ is None else args.differ
    if not (0 <= match < differ):
        raise WorkbenchError(f"--match and --differ must satisfy 0 <= match < differ (got {match:g} and {differ:g})")
    figures = None
    if args.figures:
        figures = OutputFolder(args.figures, option="--figures", command="light", names=FIGURE_FILES)
        figures._validate()
    spd = read_light(args.spd, spectrum=args.spectrum, kind=args.kind)
    other = read_light(args.compare, spectrum=args.compare_spectrum) if args.compare else None
    if args.band is not None:
        spd = band_average(spd, args.band, args.spd)
        other = band_average(other, args.band, args.compare) if other is not None else None
    camera = _load_camera(args.camera, args.primaries) if args.camera else None
    ref = _ssi_reference(args.ssi_reference)
    report = light_report(spd, camera=camera, compare=other, ssi_reference=ref,
                          extrapolation=args.extrapolate, match=match, differ=differ)
    notes = list(report.notes)
    if camera is not None:
        notes = list(dict.fromkeys(list(camera.notes) + notes))
    for n in notes:
        notice(n)
    for w in report.indices.warnings:
        notice(f"warning: {w}")
    notice(f"caution: {report.caution}")
    if figures is not None:
        with figures:
            written = write_figures(report, figures)
            figures.commit()
        for p in written:
            notice(f"wrote {figures.target / p.name}")
    if args.format == "json":
        print(to_json(report.to_dict()))
    else:
        print(_table(report))
    return 0
