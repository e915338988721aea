"""Optical element kinds: one module per kind, entered in one registry.

Every module of this package other than :mod:`~workbench.optics.kinds.registry`
and :mod:`~workbench.optics.kinds.docs_table` declares one kind and registers
it (``KIND = register_kind(ElementKind(...))``); the modules are found and
imported here, so adding a kind is adding a module. See
:mod:`workbench.optics.kinds.registry` for what a kind declares, and
DEVELOPERS.md ("Adding an element kind").
"""

from __future__ import annotations

import importlib
import pkgutil

from workbench.optics.kinds.registry import (
    ELEMENT_KINDS, CurveInput, ElementKind, KindProblem, LoadInput, OptionSpec, ParamSpec, element_kind,
    element_param_spec, parameter_spec, register_kind, unregister_kind,
)

__all__ = [
    "ELEMENT_KINDS",
    "CurveInput",
    "ElementKind",
    "KindProblem",
    "OptionSpec",
    "ParamSpec",
    "element_kind",
    "element_param_spec",
    "parameter_spec",
    "LoadInput",
    "register_kind",
    "unregister_kind",
]

_NOT_KINDS = {"registry", "docs_table"}

for _module in sorted(pkgutil.iter_modules(__path__), key=lambda m: m.name):
    if _module.name not in _NOT_KINDS and not _module.name.startswith("_"):
        importlib.import_module(f"{__name__}.{_module.name}")
