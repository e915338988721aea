"""Element kind ``colour-correction``: the ideal mired-shift filter."""

from __future__ import annotations

from workbench.optics import elements as optics
from workbench.optics.kinds.registry import PASS_LEVEL, CurveInput, ElementKind, ParamSpec, register_kind

__all__ = ["KIND"]


def _curve(x: CurveInput):
    return optics.colour_correction(x.wavelengths, x.p("mired_shift"), peak_level=x.p("peak_level"))


KIND = register_kind(ElementKind(
    name="colour-correction",
    summary="ideal mired-shift filter",
    curve=_curve,
    params={
        "mired_shift": ParamSpec(-1000.0, 1000.0, False, False, "mired", meaning="shift of 10⁶/CCT"),
        "peak_level": PASS_LEVEL,
    },
    order=70,
))
