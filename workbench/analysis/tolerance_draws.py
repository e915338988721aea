"""Tolerance analysis, first part: which parameters are toleranced, and their seeded draws.

See :mod:`workbench.analysis.tolerance` for the whole analysis; the draws
are independent per parameter, each from its own numpy PCG64 stream seeded
by (seed, CRC-32 of the parameter's name).
"""

from __future__ import annotations

import math
import zlib

import numpy as np

from workbench.model.design import Design, Tolerance
from workbench.optics.kinds import ELEMENT_KINDS, element_param_spec
from workbench.errors import WorkbenchError

__all__ = [
    "parameter_unit",
    "toleranced_parameters",
    "sample_parameters",
    "one_at_a_time_values",
    "check_trials_seed",
    "InvertedPairError",
]


class InvertedPairError(WorkbenchError):
    """Drawn units put a pair a kind keeps in order (splitter edges, band-pass ends) out of order."""

# --------------------------------------------------------------------------
# Parameters and their draws
# --------------------------------------------------------------------------


def _spec_of(design: Design, key: str):
    name, _, param = key.partition(".")
    for e in design.chain:
        if e.name == name:
            return element_param_spec(e, param)
    return None


def parameter_unit(design: Design, key: str) -> str:
    """The unit of a parameter ``'element.param'`` ('' for a plain number)."""
    s = _spec_of(design, key)
    return "" if s is None else s.unit


def toleranced_parameters(design: Design, tolerances=None, *, scale: float = 1.0) -> dict[str, Tolerance]:
    """The parameters to vary and their tolerances, by ``'element.param'`` in chain order.

    Parameters
    ----------
    design : Design
    tolerances : mapping of str to Tolerance or None, optional
        Overrides of the design's tolerances (``None`` removes one); keys
        must be parameters of the design.
    scale : float
        Every width multiplied by this (≥ 0): 0 gives the nominal design in
        every trial, 0.5 halves every tolerance.

    Raises
    ------
    WorkbenchError
        An unknown key, distribution, a negative or non-finite width or scale.
    """
    known = design.parameters()
    if not (isinstance(scale, (int, float)) and math.isfinite(scale) and scale >= 0):
        raise WorkbenchError(f"tolerance scale must be a finite number >= 0 (got {scale!r})")
    out = {k: p.tolerance for k, p in known.items() if p.tolerance is not None}
    for k, t in dict(tolerances or {}).items():
        if k not in known:
            raise WorkbenchError(f"tolerance for {k!r}: expected one of the design's parameters "
                                 f"({', '.join(known)})")
        if t is None:
            out.pop(k, None)
            continue
        if not isinstance(t, Tolerance):
            raise WorkbenchError(f"tolerance for {k!r}: expected a Tolerance(distribution, width) (got {t!r})")
        if t.distribution not in ("normal", "uniform"):
            raise WorkbenchError(f"tolerance for {k!r}: distribution must be 'normal' or 'uniform' "
                                 f"(got {t.distribution!r})")
        if not (math.isfinite(t.width) and t.width >= 0):
            raise WorkbenchError(f"tolerance for {k!r}: width must be a finite number >= 0 (got {t.width!r})")
        out[k] = t
    order = list(known)
    return {k: Tolerance(out[k].distribution, float(out[k].width) * scale)
            for k in sorted(out, key=order.index)}


def _check_domain(design: Design, values: dict, what: str) -> None:
    """Every value inside its parameter's domain (the design-file schema), else one error line."""
    for k, v in values.items():
        s = _spec_of(design, k)
        if s is None:
            continue
        v = np.asarray(v)
        above = v > s.lo if s.lo_open else v >= s.lo
        below = v < s.hi if s.hi_open else v <= s.hi
        bad = ~(above & below)
        if np.any(bad):
            raise WorkbenchError(
                f"{k}: {int(bad.sum())} of {v.size} {what} fall outside {s.describe()} "
                f"(e.g. {float(v[bad][0]):g}); narrow the tolerance")


def _check_order(design: Design, values: dict, what: str) -> None:
    """Pairs the element kinds require in order (splitter edges, band-pass ends) stay in order."""
    known = design.parameters()
    for e in design.chain:
        for pair in ELEMENT_KINDS[e.type].ordered:
            _check_pair(known, values, what, *(f"{e.name}.{k}" for k in pair))


def _check_pair(known: dict, values: dict, what: str, lo_k: str, hi_k: str) -> None:
    if lo_k not in values and hi_k not in values:
        return
    lo = np.asarray(values.get(lo_k, known[lo_k].value))
    hi = np.asarray(values.get(hi_k, known[hi_k].value))
    bad = ~(hi > lo)
    if np.any(bad):
        n = int(np.broadcast_to(bad, np.broadcast_shapes(lo.shape, hi.shape)).sum())
        size = int(np.broadcast_to(lo, np.broadcast_shapes(lo.shape, hi.shape)).size)
        raise InvertedPairError(f"{hi_k} must stay above {lo_k}: {n} of {size} {what} do not; "
                             "narrow the tolerances")


def _stream(seed: int, key: str) -> np.random.Generator:
    return np.random.default_rng([int(seed), zlib.crc32(key.encode("utf-8"))])


def check_trials_seed(trials, seed) -> None:
    if isinstance(trials, bool) or not isinstance(trials, (int, np.integer)) or trials < 1:
        raise WorkbenchError(f"trials must be a whole number >= 1 (got {trials!r})")
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise WorkbenchError(f"seed must be a whole number >= 0 (got {seed!r})")


def sample_parameters(design: Design, trials: int, seed: int, *, tolerances=None,
                      scale: float = 1.0) -> dict[str, np.ndarray]:
    """Draw the toleranced parameters of ``trials`` units: ``{'element.param': (trials,) array}``.

    ``normal``: nominal + width·N(0, 1) (width = σ); ``uniform``: nominal +
    width·U(−1, 1) (width = half-width), in the parameter's unit. Each
    parameter has its own random stream seeded by ``(seed, CRC-32 of its
    name)``: the same seed gives the same draws, and a parameter's draws do
    not change when another tolerance is added, removed or changed (common
    random numbers for what-if comparisons).

    Raises
    ------
    WorkbenchError
        Bad ``trials``/``seed``, or a draw outside the parameter's domain
        (e.g. a thickness ≤ 0): the tolerance is too wide for the model, and
        no value is clipped.

    References
    ----------
    O'Neill, M. E. (2014). PCG: a family of simple fast space-efficient
    statistically good algorithms for random number generation. HMC-CS-2014-0905
    (numpy's default bit generator).
    docs/methods.md §16.
    """
    check_trials_seed(trials, seed)
    tol = toleranced_parameters(design, tolerances, scale=scale)
    known = design.parameters()
    out = {}
    for k, t in tol.items():
        rng = _stream(seed, k)
        z = rng.standard_normal(int(trials)) if t.distribution == "normal" else rng.uniform(-1.0, 1.0, int(trials))
        out[k] = known[k].value + t.width * z
    _check_domain(design, out, "sampled values")
    _check_order(design, out, "sampled units")
    return out


def one_at_a_time_values(design: Design, tol: dict[str, Tolerance]) -> tuple[dict, list[tuple[str, int]]]:
    """Values for each parameter alone at nominal ∓ width: ``(values of (2P,) arrays, [(key, ∓1)])``."""
    known = design.parameters()
    keys = list(tol)
    n = 2 * len(keys)
    values = {k: np.full(n, known[k].value) for k in keys}
    labels = []
    for i, k in enumerate(keys):
        values[k][2 * i] -= tol[k].width
        values[k][2 * i + 1] += tol[k].width
        labels += [(k, -1), (k, +1)]
    _check_domain(design, values, "one-at-a-time values (nominal ± width)")
    _check_order(design, values, "one-at-a-time units (nominal ± width)")
    return values, labels
