"""``workbench tristimulus``: CIE XYZ, chromaticity and CIELAB of spectra in a CSV file."""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np

from workbench.colorimetry.coordinates import XYZ_to_Lab, XYZ_to_uv_prime, XYZ_to_xy
from workbench.errors import WorkbenchError
from workbench.model.spectra import KINDS, grid
from workbench.fileio.limits import check_step, limits
from workbench.fileio.kinds import read_for
from workbench.fileio.spectra_csv import read_spectra_csv
from workbench.colorimetry.tristimulus import tristimulus
from workbench.cli.commands._output import FORMATS, notice, render_rows

HELP = "CIE XYZ, x y, u' v' and CIELAB of the spectra in a CSV file"


def register(sub) -> None:
    p = sub.add_parser(
        "tristimulus",
        help=HELP,
        description=(
            HELP + ". Reflectance and transmittance are taken under the illuminant, the "
            "perfect reflecting diffuser at Y = 100; emission spectra give relative "
            "(Y = 100) or absolute (683 lm/W) values. Notices go to stderr."
        ),
    )
    p.add_argument("file", type=Path, help="CSV of spectra (wide or long table)")
    p.add_argument(
        "--illuminant", default="D65",
        help="CIE illuminant name (A, C, D50, D65, FL2, LED-B1, ...) or a CSV file of one SPD "
        "on the data's grid (default: D65)",
    )
    p.add_argument("--observer", default="2", choices=["2", "10"],
                   help="2 = CIE 1931 2°, 10 = CIE 1964 10° (default: 2)")
    p.add_argument("--method", default="integration", choices=["integration", "astm-e308"],
                   help="CIE 15 summation on the data's grid, or ASTM E308 weighting tables "
                   "(default: integration)")
    p.add_argument("--kind", choices=[k for k in KINDS if k != "sensitivity"], default=None,
                   help="what the file holds, when its header does not say or says otherwise "
                        "(default: as the file says, else reflectance)")
    p.add_argument("--extrapolate", choices=["none", "constant"], default="none",
                   help="extend data that do not cover 380-780 nm with their end values "
                   "(CIE 167); default: refuse")
    p.add_argument("--resample", type=float, metavar="STEP_NM", default=None,
                   help="resample onto a uniform grid of this step first (Sprague for uniform, "
                   "cubic spline for non-uniform data, CIE 167); needed for non-uniform files")
    p.add_argument("--band", action="store_true",
                   help="with --resample to a coarser step: average over each output band with a triangular "
                   "band-pass (CIE 167, ASTM E2729-style) instead of interpolating")
    p.add_argument("--relative", action="store_true",
                   help="emission: scale each spectrum to Y = 100 even when its units are absolute")
    p.add_argument("--format", choices=FORMATS, default="table", help="output format (default: table)")
    p.set_defaults(run=run)


def _load_illuminant(arg: str, wavelengths):
    path = Path(arg)
    if path.suffix.lower() in (".csv", ".txt", ".tsv") or path.exists():
        ill = read_spectra_csv(path, kind="emission")
        for n in ill.notes:
            notice(n)
        if not np.array_equal(ill.wavelengths, wavelengths):
            ill = ill.resample(wavelengths)
            notice(ill.notes[-1])
        return ill
    return arg


def run(args) -> int:
    if args.resample is not None and not (math.isfinite(args.resample)
                                          and args.resample >= limits().min_step_nm):
        raise WorkbenchError(f"--resample: expected a step of at least {limits().min_step_nm:g} nm "
                             f"(got {args.resample:g})")
    spectra = read_for(lambda k: read_spectra_csv(args.file, kind=k),
                       ("reflectance", "transmittance", "emission"), command="tristimulus",
                       default="reflectance", kind=args.kind)
    if args.resample is not None:
        lo, hi = spectra.wavelengths[0], spectra.wavelengths[-1]
        step = args.resample
        check_step(float(lo), float(hi), step, what="--resample")
        start = np.ceil(lo / step - 1e-9) * step
        stop = np.floor(hi / step + 1e-9) * step
        spectra = spectra.resample(grid(start, stop, step), method="band" if args.band else "auto")
    elif not spectra.uniform:
        raise WorkbenchError(
            f"{args.file}: wavelengths are not equally spaced ({spectra.describe_grid()}); "
            "pass --resample 1 to resample by cubic spline (CIE 167)"
        )
    illuminant = _load_illuminant(args.illuminant, spectra.wavelengths) if spectra.kind != "emission" else None
    result = tristimulus(
        spectra,
        illuminant=illuminant if illuminant is not None else "D65",
        observer=args.observer,
        method=args.method,
        extrapolation=args.extrapolate,
        absolute=False if args.relative else None,
    )
    for n in result.notes:
        notice(n)

    XYZ = result.XYZ.reshape(-1, 3)
    xy = XYZ_to_xy(XYZ)
    uv = XYZ_to_uv_prime(XYZ)
    rows = []
    for i, name in enumerate(result.names):
        row = {"name": name, "X": float(XYZ[i, 0]), "Y": float(XYZ[i, 1]), "Z": float(XYZ[i, 2]),
               "x": float(xy[i, 0]), "y": float(xy[i, 1]),
               "u_prime": float(uv[i, 0]), "v_prime": float(uv[i, 1])}
        rows.append(row)
    columns = ["name", "X", "Y", "Z", "x", "y", "u_prime", "v_prime"]
    if result.white is not None:
        Lab = XYZ_to_Lab(XYZ, result.white)
        for row, lab in zip(rows, Lab):
            row.update({"L": float(lab[0]), "a": float(lab[1]), "b": float(lab[2])})
        columns += ["L", "a", "b"]
    method = result.describe_method()
    if args.format == "json":
        for row in rows:
            row.update({
                "illuminant": result.illuminant,
                "observer": args.observer,
                "method": result.method,
                "scale": "relative, Y = 100" if not result.absolute else "absolute, K_m = 683 lm/W",
            })
    units = "XYZ: Y of the perfect diffuser = 100" if result.white is not None else (
        "XYZ: absolute (lx or cd/m² for W·m⁻²·nm⁻¹ input)" if result.absolute else "XYZ: relative, Y = 100")
    header = [f"# {args.file}: {method}", f"# {units}; x y: CIE 1931; u' v': CIE 1976 UCS"
              + ("; L a b: CIELAB (CIE 15:2004) against the illuminant's white" if result.white is not None else "")]
    text = render_rows(rows, columns, args.format, header_lines=header if args.format == "table" else ())
    sys.stdout.write(text + "\n")
    return 0
