"""Element kind ``glass``: an absorbing glass measured at one thickness, used at another.

The file holds either the sample's total transmittance (faces included,
taken out by ``reflection``) or its internal transmittance τ
(``transmittance = "internal"``, or a column headed Ti, τi or naming
"internal"); see :func:`workbench.optics.elements.glass_transmittance`.
"""

from __future__ import annotations

import re
from dataclasses import replace

from workbench.errors import WorkbenchError
from workbench.optics import elements as optics
from workbench.optics.kinds.registry import (
    EXTRAPOLATIONS, CurveInput, ElementKind, KindProblem, LoadInput, OptionSpec, ParamSpec, register_kind,
)

__all__ = ["KIND", "glass_holds"]


def _header_internal(column: str) -> bool:
    bare = re.sub(r"\s*(?:[(\[][^()\[\]]*[)\]]|%)\s*$", "", column.strip())
    return (re.fullmatch(r"ti|τi|t_i|τ_i|tint", bare, re.IGNORECASE) is not None
            or re.search(r"(?<![a-z])internal(?![a-z])", column, re.IGNORECASE) is not None)


def glass_holds(options: dict, column: str) -> str:
    """``'total'`` or ``'internal'``: the element's ``transmittance`` key, else its column's header.

    ``reflection = "none"`` means internal (no faces); a header naming
    internal transmittance (Ti, τi, 'internal') is read as such.
    """
    if options.get("reflection") == "none":
        return "internal"
    said = options.get("transmittance")
    if said is None:
        return "internal" if _header_internal(column) else "total"
    return said


def _after_read(s, x: LoadInput):
    """Refuse a key contradicting the header; say when the header decides."""
    column = s.names[0]
    if x.option("reflection") == "none":
        return s
    said = x.option("transmittance")
    if said is None and _header_internal(column):
        note = (f"{x.key} {x.name!r} ({x.file}): column {column!r} read as internal transmittance "
                "(its header says so); the faces are added from refractive_index")
        return replace(s, notes=(note,) + tuple(s.notes))
    if said == "total" and _header_internal(column):
        raise WorkbenchError(
            f"{x.key} {x.name!r} ({x.file}): the header {column!r} says internal transmittance but "
            'transmittance = "total"; set transmittance = "internal" (or name the column as total)')
    return s


def _check(raw: dict, params: dict, options: dict):
    if raw.get("transmittance") == "total" and raw.get("reflection") == "none":
        yield KindProblem("", 'one statement of what the file holds: transmittance = "total" (faces included) '
                              'contradicts reflection = "none" (an internal transmittance with no faces)')


def _curve(x: CurveInput):
    return optics.glass_transmittance(
        x.data[0], x.option("measured_thickness_mm"), x.p("thickness_mm"), x.p("refractive_index"),
        reflection=x.option("reflection"), data=glass_holds(x.options, x.names[0]))


KIND = register_kind(ElementKind(
    name="glass",
    summary="absorbing glass at another thickness",
    curve=_curve,
    reads="transmittance",
    after_read=_after_read,
    check=_check,
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
                                         "`none`: no faces — a cemented or immersed glass, the file then "
                                         "holding internal transmittance"),
        "transmittance": OptionSpec(optics.GLASS_DATA,
                                    meaning="`total`: the file is the sample's total transmittance, faces "
                                            "included, taken out by `reflection`; `internal`: the file is its "
                                            "internal transmittance τ and only the result's faces are added; "
                                            "default: `internal` when the column's header is Ti, τi or says "
                                            "internal, else `total`; `total` with `reflection = \"none\"` is "
                                            "refused"),
        "extrapolation": OptionSpec(EXTRAPOLATIONS, default="none", meaning="beyond the measured range"),
    },
    notes="internal transmittance scaled as τ(d) = τ(d₀)^(d/d₀)",
    order=20,
))
