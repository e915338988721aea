"""Element kind ``dichroic-splitter``: two dichroic faces splitting light three ways, with angle and cone."""

from __future__ import annotations

from workbench.optics import elements as optics
from workbench.optics import splitter
from workbench.optics.kinds.registry import (
    EDGE_WIDTH, CurveInput, ElementKind, OptionSpec, ParamSpec, register_kind,
)

__all__ = ["KIND"]

_AOI = ParamSpec(0.0, 80.0, False, False, "deg", 0.0, meaning="chief-ray angle on the face",
                 slider=lambda v: (max(0.0, v - 10.0), min(80.0, v + 10.0),
                                   "no bounds in the design: ±10° shown, not fitted"))


def _curve(x: CurveInput):
    paths, _ = splitter.dichroic_splitter(
        x.wavelengths, **x.params, order=x.option("order"), shape=x.option("shape"),
        rings=x.option("rings"), azimuths=x.option("azimuths"), with_lost=False)
    return paths


KIND = register_kind(ElementKind(
    name="dichroic-splitter",
    summary="blue / green / red beam splitter",
    curve=_curve,
    per_path=True,
    paths_key=False,
    at_most_one=True,
    params={
        "blue_green_nm": ParamSpec(100.0, 3000.0, False, False, "nm",
                                   meaning="50 % point of the blue/green face at normal incidence"),
        "green_red_nm": ParamSpec(100.0, 3000.0, False, False, "nm",
                                  meaning="50 % point of the green/red face at normal incidence"),
        "blue_green_width_nm": EDGE_WIDTH, "green_red_width_nm": EDGE_WIDTH,
        "blue_green_aoi_deg": _AOI, "green_red_aoi_deg": _AOI,
        "n_eff_s": ParamSpec(1.0, 5.0, True, False, "", 1.8, meaning="effective index of the coating, s"),
        "n_eff_p": ParamSpec(1.0, 5.0, True, False, "", optional=True,
                             meaning="effective index, p (absent: s only; given: s and p averaged)"),
        "medium_index": ParamSpec(1.0, 4.0, False, False, "", 1.0, meaning="index of the prism glass"),
        "f_number": ParamSpec(0.5, 1000.0, False, False, "", optional=True,
                              meaning="absent: the chief ray only; given: averaged over the cone of rays",
                              slider=lambda v: (max(0.5, v / 2), v * 4,
                                                "no bounds in the design: f/2 ÷ 2 to × 4 shown, not fitted")),
        "loss": ParamSpec(0.0, 1.0, False, True, "", 0.0, meaning="loss per surface"),
    },
    options={
        "order": OptionSpec(splitter.SPLITTER_ORDERS, default="blue-first", meaning="which face comes first"),
        "shape": OptionSpec(optics.EDGE_SHAPES, default="logistic", meaning="edge profile"),
        "rings": OptionSpec("count", default=4, meaning="quadrature rings over the cone"),
        "azimuths": OptionSpec("count", default=8, meaning="quadrature azimuths over the cone"),
    },
    ordered=(("blue_green_nm", "green_red_nm"),),
    field_angles=("blue_green_aoi_deg", "green_red_aoi_deg"),
    notes="energy conserved per ray; edges shift with the angle of incidence by the effective index",
    order=80,
))
