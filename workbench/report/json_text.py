"""JSON text of results: the one cleaner every result and command uses.

:func:`jsonable` turns a result's plain data (dicts, lists, tuples, numpy
arrays and scalars) into what :mod:`json` writes, with every NaN or
infinity written as ``null`` so that the text is valid JSON;
:func:`json_text` is the indented text the commands print and save.
"""

from __future__ import annotations

import json
import math

import numpy as np

__all__ = ["jsonable", "json_text"]


def jsonable(value):
    """``value`` as plain JSON data: arrays as lists, numpy scalars as Python ones, NaN/inf as None.

    Dictionary keys become strings; anything else is returned unchanged.
    """
    if isinstance(value, dict):
        return {k if isinstance(k, str) else str(k): jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [jsonable(v) for v in value]
    if isinstance(value, np.ndarray):
        return jsonable(value.tolist())
    if isinstance(value, (float, np.floating)):
        f = float(value)
        return f if math.isfinite(f) else None
    if isinstance(value, np.bool_):
        return bool(value)
    if isinstance(value, np.integer):
        return int(value)
    return value


def json_text(value) -> str:
    """Indented JSON text (UTF-8 characters kept) of :func:`jsonable` ``(value)``."""
    return json.dumps(jsonable(value), indent=2, ensure_ascii=False, allow_nan=False)
