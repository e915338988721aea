"""Element kind ``long-pass``: a smooth long-pass edge (trim filter), logistic or error-function shaped."""

from __future__ import annotations

from dataclasses import replace

from workbench.optics import elements as optics
from workbench.optics.kinds.registry import (
    BLOCK_LEVEL, EDGE_WIDTH, PASS_LEVEL, WAVELENGTH, CurveInput, ElementKind, OptionSpec, register_kind,
)

__all__ = ["KIND"]


def _curve(x: CurveInput):
    return optics.edge(x.wavelengths, x.p("center_nm"), x.p("width_nm"), kind="long-pass",
                       shape=x.option("shape"), pass_level=x.p("pass_level"), block_level=x.p("block_level"))


KIND = register_kind(ElementKind(
    name="long-pass",
    summary="edge filter passing long wavelengths",
    curve=_curve,
    params={
        "center_nm": replace(WAVELENGTH, meaning="50 % point"), "width_nm": EDGE_WIDTH,
        "pass_level": PASS_LEVEL, "block_level": BLOCK_LEVEL,
    },
    options={"shape": OptionSpec(optics.EDGE_SHAPES, default="logistic", meaning="edge profile")},
    order=30,
))
