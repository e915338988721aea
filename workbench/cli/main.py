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
import ast
import importlib
import pkgutil
import sys
from pathlib import Path

from workbench import __version__
from workbench.cli import commands
from workbench.errors import WorkbenchError

__all__ = ["main", "build_parser", "command_names"]


def command_names() -> list[str]:
    """The subcommands, from the module names under :mod:`workbench.cli.commands` (nothing imported)."""
    return sorted(m.name for m in pkgutil.iter_modules(commands.__path__) if not m.name.startswith("_"))


def _listing(name: str) -> tuple[str, str] | None:
    """(command name, one-line help) as the module's ``register`` gives them, read from its source.

    Only literal strings (or module-level names bound to literal strings)
    are read; anything else gives None and the module is imported instead.
    """
    path = Path(commands.__path__[0]) / f"{name}.py"
    try:
        tree = ast.parse(path.read_text(encoding="utf-8"))
    except (OSError, SyntaxError, UnicodeDecodeError):
        return None
    consts = {t.id: n.value.value for n in tree.body if isinstance(n, ast.Assign)
              and isinstance(n.value, ast.Constant) and isinstance(n.value.value, str)
              for t in n.targets if isinstance(t, ast.Name)}

    def text(node):
        if isinstance(node, ast.Constant) and isinstance(node.value, str):
            return node.value
        return consts.get(node.id) if isinstance(node, ast.Name) else None

    calls = [n for n in ast.walk(tree) if isinstance(n, ast.Call) and isinstance(n.func, ast.Attribute)
             and n.func.attr == "add_parser" and n.args]
    if len(calls) != 1:
        return None
    help_ = next((text(k.value) for k in calls[0].keywords if k.arg == "help"), None)
    command = text(calls[0].args[0])
    return (command, help_) if command and help_ else None


def build_parser(argv: list[str] | None = None) -> argparse.ArgumentParser:
    """The parser; with ``argv``, only what that command line needs is imported.

    With ``argv`` naming a command, only that command's module is imported
    (``workbench evaluate …`` never imports the fit, tolerance or light
    modules). With ``argv`` naming none (``--help``, ``--version``, a
    typo), each command is listed by its name and one-line help read from
    its module's source, importing no command module. Without ``argv``
    every command is registered in full.
    """
    parser = argparse.ArgumentParser(
        prog="workbench",
        description=(
            "Design and check the colour-separation optics of three-sensor cameras, "
            "display primaries and light sources on camera."
        ),
    )
    parser.add_argument("--version", action="version", version=f"workbench {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)
    names = command_names()
    first = None if argv is None else next((a for a in argv if not a.startswith("-")), "")
    if first in names:
        names = [first]
    elif first is not None:
        listing = [_listing(n) for n in names]
        if all(listing):
            for command, help_ in listing:
                sub.add_parser(command, help=help_)
            return parser
    for name in names:
        importlib.import_module(f"{commands.__name__}.{name}").register(sub)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run the command line; returns the exit status."""
    argv = sys.argv[1:] if argv is None else list(argv)
    parser = build_parser(argv)
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
