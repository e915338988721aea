"""The ``workbench`` command line.

Each subcommand lives in its own module under :mod:`workbench.cli.commands` with
two functions, ``register(subparsers)`` and ``run(args) -> int``; they are
found automatically, so adding a command means adding a module. The commands
only combine public functions of the package.

Contract shared by every command: machine-readable output on stdout alone;
notices (assumed units, detected percent, extrapolation) on stderr; a user
error ends with exit status 2 and one line on stderr starting ``error:``,
never a traceback; Ctrl-C ends with status 130.
"""

from __future__ import annotations

import argparse
import importlib
import pkgutil
import sys

from workbench import __version__
from workbench.cli import commands
from workbench.errors import WorkbenchError

__all__ = ["main", "build_parser"]


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="workbench",
        description=(
            "Design and check the colour-separation optics of three-sensor cameras, "
            "display primaries and light sources on camera."
        ),
    )
    parser.add_argument("--version", action="version", version=f"workbench {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)
    for info in sorted(pkgutil.iter_modules(commands.__path__), key=lambda m: m.name):
        if info.name.startswith("_"):
            continue
        module = importlib.import_module(f"{commands.__name__}.{info.name}")
        module.register(sub)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run the command line; returns the exit status."""
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.run(args) or 0)
    except WorkbenchError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
