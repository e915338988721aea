"""Element kind ``measured``: a tabulated transmittance (lens, IR cut, any filter) used as read."""

from __future__ import annotations

import numpy as np

from workbench.optics.kinds.registry import (
    CHANNELS, EXTRAPOLATIONS, CurveInput, ElementKind, OptionSpec, register_kind,
)

__all__ = ["KIND", "tabulated_on_paths"]


def tabulated_on_paths(x: CurveInput) -> np.ndarray:
    """The tabulated rows on the element's paths, ``(3, n)``: one row for all its paths, or one per path
    (R, G, B order); 1 on the channels it is not on."""
    c = np.asarray(x.data)
    n = x.wavelengths.size
    on = {ch: c[j if c.shape[0] > 1 else 0] for j, ch in enumerate(x.paths)}
    return np.stack([on.get(ch, np.ones(n)) for ch in CHANNELS])


KIND = register_kind(ElementKind(
    name="measured",
    summary="lens, IR cut, any filter",
    curve=tabulated_on_paths,
    per_path=True,
    reads="transmittance",
    options={
        "file": OptionSpec("file", required=True, meaning="CSV of the transmittance"),
        "column": OptionSpec("str", meaning="the column to use when the file holds several"),
        "extrapolation": OptionSpec(EXTRAPOLATIONS, default="none",
                                    meaning="beyond the measured range"),
    },
    order=10,
))
