"""The ``workbench`` command line.

Each subcommand lives in its own module under :mod:`workbench.cli.commands` with
two functions, ``register(subparsers)`` and ``run(args) -> int``; they are
found automatically, so adding a command means adding a module. The commands
only combine public functions of the package.

Contract shared by every command: machine-readable output on stdout alone;
notices (assumed units, detected percent, extrapolation) on stderr; a user
error ends with exit status 2 and one line on stderr starting ``error:``,
never a traceback; so does an error of the environment (disk full,
permission denied, standard output on a full device) and running out of
memory. Ctrl-C (and SIGTERM) end with status 130 and ``interrupted``; a
closed pipe on stdout (``| head``) ends quietly. Warnings raised while a
command runs (numpy's among them) are shown only when the command succeeds,
so a refused input never prints them. Control characters in anything
printed (a design's name, a spectrum's name) are written as ``\\uXXXX``
escapes, so they cannot move the cursor or recolour the terminal; JSON
output keeps its meaning because that is also JSON's escape.
``WORKBENCH_DEBUG=1`` shows the traceback of an internal error.
"""

from __future__ import annotations

import argparse
import ast
import errno
import importlib
import io
import os
import pkgutil
import re
import signal
import sys
import warnings
from pathlib import Path

from workbench import __version__
from workbench.cli import commands
from workbench.errors import WorkbenchError
from workbench.fileio import limits as _limits

__all__ = ["main", "build_parser", "command_names", "printable"]

#: C0 and C1 controls (except tab, line feed, carriage return) and the bidirectional overrides.
_CONTROL = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f\u200e\u200f\u202a-\u202e\u2066-\u2069]")


def printable(text: str, *, one_line: bool = False) -> str:
    """``text`` with control characters written as ``\\uXXXX`` (and line breaks too when ``one_line``)."""
    out = _CONTROL.sub(lambda m: f"\\u{ord(m.group()):04x}", str(text))
    if one_line:
        out = out.replace("\r", "\\r").replace("\n", "\\n")
    return out


class _Escaping(io.TextIOBase):
    """A text stream that writes through to ``inner`` with control characters escaped."""

    def __init__(self, inner):
        self.inner = inner

    def write(self, s):
        self.inner.write(printable(s))
        return len(s)

    def flush(self):
        self.inner.flush()

    def isatty(self):
        return self.inner.isatty()

    def fileno(self):
        return self.inner.fileno()

    @property
    def encoding(self):
        return getattr(self.inner, "encoding", "utf-8")

    def writable(self):
        return True


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


def _first_word(argv: list[str]) -> str:
    """The command word of ``argv``: the first argument that is neither an option nor ``--limit``'s value.

    "" when a top-level ``-h``/``--help`` comes first (the listing of every command is asked for).
    """
    skip = False
    for a in argv:
        if skip:
            skip = False
            continue
        if a == "--limit":
            skip = True
            continue
        if a in ("-h", "--help"):
            return ""
        if not a.startswith("-"):
            return a
    return ""


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
    parser.add_argument(
        "--limit", metavar="NAME=VALUE", action="append", default=[],
        help="raise an input limit for this run, e.g. --limit trials=5000000 (names: "
        + ", ".join(f"{k} {v:.10g}" for k, v in _limits.Limits().__dict__.items())
        + "; also WORKBENCH_LIMITS)",
    )
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)
    names = command_names()
    first = None if argv is None else _first_word(argv)
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


def _quiet_stdout() -> None:
    """Point stdout at /dev/null so the interpreter's final flush cannot fail again."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.__stdout__.fileno())
        os.close(devnull)
    except (OSError, AttributeError, ValueError):
        pass


def _os_error_line(err: OSError) -> str:
    what = err.strerror or str(err)
    name = getattr(err, "filename", None)
    if name is not None:
        return f"{name}: {what}"
    if err.errno in (errno.ENOSPC, errno.EIO, errno.EDQUOT if hasattr(errno, "EDQUOT") else -1):
        return f"cannot write the output: {what}"
    return what


def _sigterm(signum, frame):
    raise KeyboardInterrupt


def main(argv: list[str] | None = None) -> int:
    """Run the command line; returns the exit status."""
    argv = sys.argv[1:] if argv is None else list(argv)
    # SIGTERM becomes Ctrl-C from the start: parsing imports the command's modules, which takes a while
    try:
        old_term = signal.signal(signal.SIGTERM, _sigterm)
    except ValueError:  # not the main thread
        old_term = None
    try:
        parser = build_parser(argv)
        args = parser.parse_args(argv)
    except KeyboardInterrupt:
        if old_term is not None:
            signal.signal(signal.SIGTERM, old_term)
        print("interrupted", file=sys.stderr)
        return 130
    except BaseException:  # argparse's exit (--help, a usage error): the caller's handler back
        if old_term is not None:
            signal.signal(signal.SIGTERM, old_term)
        raise
    if args.command == "lab" and old_term is not None:  # lab forwards SIGTERM to JupyterLab itself
        signal.signal(signal.SIGTERM, old_term)
        old_term = None
    out, err = sys.stdout, sys.stderr
    sys.stdout, sys.stderr = _Escaping(out), _Escaping(err)
    saved = _limits.limits()
    code = 2
    with warnings.catch_warnings(record=True) as caught:
        try:
            _limits.limits_from_environment()
            for text in args.limit:
                try:
                    _limits.set_limits(**_limits.parse_limit(text))
                except WorkbenchError as exc:
                    raise WorkbenchError(f"--limit: {exc}") from None
            code = int(args.run(args) or 0)
            try:
                sys.stdout.flush()
            except OSError as exc:
                if isinstance(exc, BrokenPipeError):
                    raise
                _quiet_stdout()
                raise WorkbenchError(f"cannot write the output: {exc.strerror or exc}") from None
        except WorkbenchError as exc:
            code = _fail(printable(str(exc)))
        except KeyboardInterrupt:
            print("interrupted", file=sys.stderr)
            code = 130
        except BrokenPipeError:
            _quiet_stdout()
            code = 0
        except MemoryError:
            code = _fail("out of memory; reduce the input (see the input limits in the README)")
        except OSError as exc:
            if exc.errno == errno.EPIPE:
                _quiet_stdout()
                code = 0
            else:
                if exc.filename is None:
                    _quiet_stdout()
                code = _fail(printable(_os_error_line(exc), one_line=True))
        except Exception as exc:  # a bug: one line, the traceback only when asked
            if os.environ.get("WORKBENCH_DEBUG"):
                raise
            code = _fail(printable(f"internal error ({type(exc).__name__}: {exc}); please report it "
                                   "with the command line (WORKBENCH_DEBUG=1 shows the traceback)",
                                   one_line=True))
            code = 70
        finally:
            _limits._current = saved
            if old_term is not None:
                signal.signal(signal.SIGTERM, old_term)
            sys.stdout, sys.stderr = out, err
        if code in (0, 1):
            shown = set()
            for w in caught:
                line = printable(f"warning: {w.category.__name__}: {w.message}", one_line=True)
                if line in shown:  # the same warning from several stages (loading, evaluating, fitting): once
                    continue
                shown.add(line)
                try:
                    print(line, file=err)
                except OSError:
                    pass
    return code


def _fail(line: str) -> int:
    try:
        print(f"error: {line}", file=sys.stderr)
        sys.stderr.flush()
    except OSError:
        pass
    return 2


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
