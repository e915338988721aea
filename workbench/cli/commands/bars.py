"""``workbench bars``: the colour-bar signal table for a luma system.

:func:`print_colour_bars` prints the table; ``workbench primaries --bars``
uses it too.
"""

from __future__ import annotations

from workbench.cli.commands._output import FORMATS, render_rows, to_json
from workbench.errors import WorkbenchError
from workbench.colorimetry.signals import BAR_COLUMNS, colour_bars, luma_coefficients_of

HELP = "colour-bar table: R'G'B', luma, colour differences, U/V, Cb/Cr and code values"


def register(sub) -> None:
    p = sub.add_parser("bars", help=HELP, description=HELP + " (white, yellow, cyan, green, magenta, red, blue, black).")
    p.add_argument("--amplitude", type=float, default=100.0, metavar="PERCENT",
                   help="bar amplitude in percent (default: 100; 75 for 100/0/75/0 bars)")
    p.add_argument("--white-level", type=float, default=None, metavar="PERCENT",
                   help="level of the white bar if it differs from the amplitude (e.g. 100)")
    p.add_argument("--luma", default="BT.709", metavar="SYSTEM",
                   help="luma coefficients: BT.601, BT.709 or BT.2020 (default: BT.709)")
    p.add_argument("--format", choices=FORMATS, default="table", help="output format (default: table)")
    p.set_defaults(run=run)


def print_colour_bars(system, *, amplitude_percent: float, white_percent: float | None = None,
                      fmt: str = "table") -> int:
    """Print the colour-bar table for a luma ``system`` (a name or a ``Primaries``) on stdout.

    ``amplitude_percent`` is the bar amplitude, ``white_percent`` the white
    bar's level when it differs; ``fmt`` one of ``table``, ``json``, ``csv``.
    """
    label, K = luma_coefficients_of(system)
    amp = amplitude_percent / 100.0
    white = None if white_percent is None else white_percent / 100.0
    rows = colour_bars(amp, K, white_amplitude=white)
    header = [
        f"# colour bars at {amplitude_percent:g} % amplitude"
        + (f", white {white_percent:g} %" if white is not None else "")
        + f"; luma {label} K_R {K[0]:.4f} K_G {K[1]:.4f} K_B {K[2]:.4f}",
        "# R'G'B', Y', colour differences, U/V (PAL 0.493/0.877), Cb/Cr (0.5/(1-K)) in signal "
        "units 0-1; Y8..Cr10 narrow-range code values (Y 16-235, C 16-240 at 8 bits)",
    ]
    if fmt == "json":
        print(to_json({"luma_system": label, "luma_coefficients": K.tolist(),
                       "amplitude_percent": amplitude_percent, "bars": rows}))
    elif fmt == "csv":
        print(render_rows(rows, BAR_COLUMNS, "csv"))
    else:
        print(render_rows(rows, BAR_COLUMNS, "table", header_lines=header))
    return 0


def run(args) -> int:
    if args.luma.strip().lower() == "primaries":
        raise WorkbenchError("--luma primaries needs a set (NAME, --xy or --emitters)")
    return print_colour_bars(args.luma, amplitude_percent=args.amplitude, white_percent=args.white_level,
                             fmt=args.format)
