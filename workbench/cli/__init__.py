"""The ``workbench`` command line (see :mod:`workbench.cli.main`)."""

from workbench.cli.main import build_parser, main

__all__ = ["build_parser", "main"]
