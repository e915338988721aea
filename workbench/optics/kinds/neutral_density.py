"""Element kind ``neutral-density``: flat attenuation T = 10^(−D)."""

from __future__ import annotations

from workbench.optics import elements as optics
from workbench.optics.kinds.registry import CurveInput, ElementKind, ParamSpec, register_kind

__all__ = ["KIND"]


def _curve(x: CurveInput):
    return optics.neutral_density(x.wavelengths, x.p("density"))


KIND = register_kind(ElementKind(
    name="neutral-density",
    summary="flat attenuation",
    curve=_curve,
    params={"density": ParamSpec(0.0, 10.0, False, False, "", meaning="optical density D: T = 10^(−D)")},
    order=60,
))
