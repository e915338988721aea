"""``workbench bars``: the colour-bar signal table for a luma system."""

from __future__ import annotations

from types import SimpleNamespace

from workbench.cli.commands._output import FORMATS
from workbench.cli.commands.primaries import _bars

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


def run(args) -> int:
    ns = SimpleNamespace(luma=args.luma, bar_amplitude=args.amplitude, bar_white=args.white_level,
                         format=args.format)
    return _bars(ns, None)
