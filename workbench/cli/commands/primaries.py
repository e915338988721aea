"""``workbench primaries``: RP 177 matrices, luminance, gamut, colour bars and targets of a primaries set."""

from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path

import numpy as np

from workbench.cli.commands._output import FORMATS, notice, render_rows, to_json
from workbench.cli.commands.bars import print_colour_bars
from workbench.colorimetry.gamut import coverage_of_named_sets, gamut_area
from workbench.colorimetry.primaries import (
    PRIMARIES,
    drive_levels_for_white,
    primaries_from_emitters,
    primaries_from_xy,
    primaries_named,
    white_chromaticity,
)
from workbench.colorimetry.targets import target_cmfs
from workbench.errors import WorkbenchError
from workbench.fileio.limits import check_step, shorten
from workbench.fileio.outdir import check_output_file
from workbench.fileio.spectra_csv import read_spectra_csv, write_spectra_csv
from workbench.model.spectra import grid

HELP = "matrices, luminance coefficients, gamut and colour bars of a set of display primaries"


def register(sub) -> None:
    p = sub.add_parser(
        "primaries",
        help=HELP,
        description=(
            HELP + ". Give the set by name (" + ", ".join(PRIMARIES) + "), by chromaticities "
            "(--xy with --white) or by three emitter spectra (--emitters). The RGB→XYZ matrix "
            "follows SMPTE RP 177 (white RGB 1,1,1 → Y = 1)."
        ),
    )
    p.add_argument("name", nargs="?", default=None, help="a named set, e.g. ITU-R-BT.709, bt2020, DCI-P3")
    p.add_argument("--set", dest="set_name", metavar="NAME", default=None, help="a named set (same as NAME)")
    p.add_argument("--xy", metavar="XR,YR,XG,YG,XB,YB", default=None,
                   help="CIE 1931 chromaticities of R, G, B")
    p.add_argument("--emitters", type=Path, metavar="FILE.csv", default=None,
                   help="CSV of three emitter spectra, columns R, G, B in that order")
    p.add_argument("--white", default=None,
                   help="white: CIE illuminant name (D65, C, D50, ...), DCI, or x,y "
                   "(default: the named set's own white, else D65)")
    p.add_argument("--luminance", type=float, default=100.0, metavar="Y",
                   help="emitters: white luminance the drive levels must reach, cd/m² for "
                   "absolute spectra, Σ S ȳ Δλ for relative ones (default: 100)")
    p.add_argument("--observer", default="2", choices=["2", "10"],
                   help="2 = CIE 1931 2°, 10 = CIE 1964 10° (default: 2)")
    p.add_argument("--bars", action="store_true", help="print the colour-bar table instead")
    p.add_argument("--bar-amplitude", type=float, default=100.0, metavar="PERCENT",
                   help="colour-bar amplitude in percent, e.g. 100 or 75 (default: 100)")
    p.add_argument("--bar-white", type=float, default=None, metavar="PERCENT",
                   help="white-bar amplitude in percent (default: as --bar-amplitude; 100 for 100/0/75/0)")
    p.add_argument("--luma", default=None, metavar="SYSTEM",
                   help="luma coefficients for the bars: BT.601, BT.709, BT.2020 (published) or "
                   "'primaries' (derived by RP 177 from the set); default: primaries when a set is "
                   "given, else BT.709")
    p.add_argument("--targets", type=Path, metavar="OUT.csv", default=None,
                   help="write the target colour-matching functions r̄ḡb̄ to this CSV")
    p.add_argument("--grid", default="380,780,5", metavar="START,STOP,STEP",
                   help="wavelength grid of the target functions, nm (default: 380,780,5)")
    p.add_argument("--format", choices=FORMATS, default="table",
                   help="output format (csv: colour bars only; default: table)")
    p.set_defaults(run=run)


def _parse_numbers(text: str, count: int, option: str) -> list[float]:
    try:
        values = [float(t) for t in text.replace(" ", "").split(",")]
    except ValueError:
        raise WorkbenchError(f"{option} must be {count} comma-separated numbers (got {shorten(text, 60)!r})") from None
    if not all(math.isfinite(v) for v in values):
        raise WorkbenchError(f"{option} must be {count} finite numbers (got {shorten(text, 60)!r})")
    if len(values) != count:
        raise WorkbenchError(f"{option} must be {count} comma-separated numbers (got {len(values)})")
    return values


def _primaries(args):
    given = [x for x in (args.name, args.set_name, args.xy, args.emitters) if x is not None]
    if len(given) > 1:
        raise WorkbenchError("give one set: NAME, --set, --xy or --emitters (got several)")
    if not given:
        return None, None
    if args.xy is not None:
        xy = np.array(_parse_numbers(args.xy, 6, "--xy")).reshape(3, 2)
        return primaries_from_xy(xy, args.white or "D65", observer=args.observer), None
    if args.emitters is not None:
        s = read_spectra_csv(args.emitters, kind="emission")
        for n in s.notes:
            notice(n)
        white = args.white or "D65"
        p = primaries_from_emitters(s, args.observer, white=white, name=str(args.emitters))
        drive = drive_levels_for_white(s, white, args.luminance, observer=args.observer)
        if not drive.reachable:
            notice(drive.message)
        return p, drive
    p = primaries_named(args.name or args.set_name)
    if args.white is not None:
        wname, w = white_chromaticity(args.white, observer=args.observer)
        p = replace(p, white_xy=w, white_name=wname, source=p.source + f"; white replaced by {wname}")
    return p, None


def _bars(args, p) -> int:
    system = args.luma or ("primaries" if p is not None else "BT.709")
    if system.strip().lower() == "primaries":
        if p is None:
            raise WorkbenchError("--luma primaries needs a set (NAME, --xy or --emitters)")
        system = p
    return print_colour_bars(system, amplitude_percent=args.bar_amplitude, white_percent=args.bar_white,
                             fmt=args.format)


def _matrix_lines(title: str, M: np.ndarray) -> list[str]:
    return [title] + ["  " + "  ".join(f"{v:10.6f}" for v in row) for row in M]


def run(args) -> int:
    if args.targets is not None:
        check_output_file(args.targets, option="--targets")
    p, drive = _primaries(args)
    if args.bars:
        return _bars(args, p)
    if p is None:
        raise WorkbenchError("give a set: NAME, --set, --xy or --emitters (e.g. workbench primaries bt709)")
    if args.format == "csv":
        raise WorkbenchError("--format csv is for --bars; use table or json")
    if args.targets is not None:
        start, stop, step = _parse_numbers(args.grid, 3, "--grid")
        check_step(start, stop, step, what="--grid")
        t = target_cmfs(p, grid(start, stop, step), args.observer)
        write_spectra_csv(t, args.targets)
        notice(f"wrote target colour-matching functions r̄ḡb̄ ({t.describe_grid()}, observer "
               f"{args.observer}°) to {args.targets}")
    M = p.matrix_RGB_to_XYZ
    K = p.luminance_coefficients
    cov = coverage_of_named_sets(p)
    out = {
        "name": p.name,
        "source": p.source,
        "primaries_xy": p.xy.tolist(),
        "white_xy": p.white_xy.tolist(),
        "white_name": p.white_name,
        "rgb_to_xyz": M.tolist(),
        "xyz_to_rgb": p.matrix_XYZ_to_RGB.tolist(),
        "luminance_coefficients": K.tolist(),
        "gamut_area_xy": gamut_area(p, "xy"),
        "gamut_area_uv": gamut_area(p, "uv"),
        "coverage": cov,
        "method": ("SMPTE RP 177 normalised primary matrix (linear RGB 0-1, white 1,1,1 → XYZ with "
                   "Y = 1); gamut areas in CIE 1931 xy and CIE 1976 u′v′ units²; coverage = "
                   "intersection area ÷ standard's area"),
    }
    if drive is not None:
        out["drive_levels"] = drive.to_dict()
    if args.format == "json":
        print(to_json(out))
        return 0
    lines = [f"primaries {p.name} ({p.source}); white {p.white_name} "
             f"x {p.white_xy[0]:.4f} y {p.white_xy[1]:.4f}"]
    lines.append("chromaticity (CIE 1931 x, y): " + ", ".join(
        f"{c} {x:.4f} {y:.4f}" for c, (x, y) in zip("RGB", p.xy)))
    lines += _matrix_lines("RGB → XYZ (SMPTE RP 177, white RGB 1,1,1 → Y = 1):", M)
    lines += _matrix_lines("XYZ → RGB (inverse):", p.matrix_XYZ_to_RGB)
    lines.append(f"luminance coefficients (RP 177 Y row): K_R {K[0]:.5f}  K_G {K[1]:.5f}  K_B {K[2]:.5f}")
    lines.append(f"gamut area: {out['gamut_area_xy']:.5f} (CIE 1931 xy units²), "
                 f"{out['gamut_area_uv']:.5f} (CIE 1976 u′v′ units²)")
    if drive is not None:
        d = drive.drive
        lines.append(f"drive levels for white {p.white_name} at Y = {drive.luminance:g} {drive.units}: "
                     f"R {d[0]:.4f}  G {d[1]:.4f}  B {d[2]:.4f} (1 = as measured); {drive.message}")
    lines.append("coverage of named sets (intersection area ÷ standard's area, %):")
    rows = [{"standard": n, "xy %": 100 * c["xy"], "u'v' %": 100 * c["uv"]} for n, c in cov.items()]
    lines.append(render_rows(rows, ["standard", "xy %", "u'v' %"], "table", digits=1))
    print("\n".join(lines))
    return 0
