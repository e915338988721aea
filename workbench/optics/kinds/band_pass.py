"""Element kind ``band-pass``: a pass band between two smooth edges."""

from __future__ import annotations

from dataclasses import replace

from workbench.optics import elements as optics
from workbench.optics.kinds.registry import (
    BLOCK_LEVEL, EDGE_WIDTH, PASS_LEVEL, WAVELENGTH, CurveInput, ElementKind, OptionSpec, register_kind,
)

__all__ = ["KIND"]


def _curve(x: CurveInput):
    return optics.band_pass(x.wavelengths, x.p("low_nm"), x.p("high_nm"), x.p("width_nm"),
                            shape=x.option("shape"), pass_level=x.p("pass_level"),
                            block_level=x.p("block_level"))


KIND = register_kind(ElementKind(
    name="band-pass",
    summary="pass band between two edges",
    curve=_curve,
    params={
        "low_nm": replace(WAVELENGTH, meaning="50 % point of the rising edge"),
        "high_nm": replace(WAVELENGTH, meaning="50 % point of the falling edge"),
        "width_nm": EDGE_WIDTH, "pass_level": PASS_LEVEL, "block_level": BLOCK_LEVEL,
    },
    options={"shape": OptionSpec(optics.EDGE_SHAPES, default="logistic", meaning="edge profile")},
    ordered=(("low_nm", "high_nm"),),
    order=50,
))
