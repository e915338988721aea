"""Subcommands of the ``workbench`` command line, one module each.

A module here defines ``register(subparsers)``, which adds its parser and
sets ``run`` with ``parser.set_defaults(run=run)``, and ``run(args) -> int``.
Modules whose names start with ``_`` are helpers, not commands.
"""
