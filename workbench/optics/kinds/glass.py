"""Element kind ``glass``: an absorbing glass measured at one thickness, used at another."""

from __future__ import annotations

from workbench.optics import elements as optics
from workbench.optics.kinds.registry import (
    EXTRAPOLATIONS, CurveInput, ElementKind, OptionSpec, ParamSpec, register_kind,
)

__all__ = ["KIND"]


def _curve(x: CurveInput):
    return optics.glass_transmittance(
        x.data[0], x.option("measured_thickness_mm"), x.p("thickness_mm"), x.p("refractive_index"),
        reflection=x.option("reflection"))


KIND = register_kind(ElementKind(
    name="glass",
    summary="absorbing glass at another thickness",
    curve=_curve,
    reads="transmittance",
    params={
        "thickness_mm": ParamSpec(0.0, 1000.0, True, False, "mm", meaning="thickness used"),
        "refractive_index": ParamSpec(1.0, 4.0, False, False, "", 1.52, meaning="for the surface reflections"),
    },
    options={
        "file": OptionSpec("file", required=True, meaning="CSV of the measured transmittance"),
        "column": OptionSpec("str", meaning="the column to use when the file holds several"),
        "measured_thickness_mm": OptionSpec("positive", required=True, meaning="thickness of the measurement"),
        "reflection": OptionSpec(optics.REFLECTION_MODELS, default="approx",
                                 meaning="`approx`: T = P_d τ, P_d = 2n/(n²+1); `exact`: (1−R)²τ/(1−R²τ²); "
                                         "`none`: the file holds internal transmittance"),
        "extrapolation": OptionSpec(EXTRAPOLATIONS, default="none", meaning="beyond the measured range"),
    },
    notes="internal transmittance scaled as τ(d) = τ(d₀)^(d/d₀)",
    order=20,
))
