"""Element kind ``sensor-qe``: the sensor's tabulated quantum efficiency, one curve or one per channel."""

from __future__ import annotations

from workbench.optics.kinds.measured import tabulated_on_paths
from workbench.optics.kinds.registry import EXTRAPOLATIONS, ElementKind, KindProblem, OptionSpec, register_kind

__all__ = ["KIND"]


def _check(raw: dict, params: dict, options: dict):
    if "column" in raw and "columns" in raw:
        yield KindProblem("", "either column (one curve for all channels) or columns (one per channel), not both")


KIND = register_kind(ElementKind(
    name="sensor-qe",
    summary="the sensor's quantum efficiency",
    curve=tabulated_on_paths,
    per_path=True,
    reads="sensitivity",
    check=_check,
    options={
        "file": OptionSpec("file", required=True, meaning="CSV of the quantum efficiency"),
        "column": OptionSpec("str", meaning="one curve for every path"),
        "columns": OptionSpec("columns", meaning='one per path, `{ R = "...", G = "...", B = "..." }`, '
                                                "keys = the element's paths"),
        "extrapolation": OptionSpec(EXTRAPOLATIONS, default="none", meaning="beyond the measured range"),
    },
    notes="either `column` or `columns`, not both; the file's units are the sensitivities' units",
    order=90,
))
