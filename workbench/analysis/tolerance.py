"""Tolerance analysis: what manufacturing tolerances do to the camera's colour.

:func:`run_tolerance` draws every toleranced parameter of a design (the
``tolerance = {distribution, width}`` of its ``[[chain]]`` parameters, see
docs/design-file.md) for a number of simulated units with a seed, evaluates
all units as batched array computations through
:class:`workbench.analysis.evaluator.DesignEvaluator` (chunks of trials, no per-unit
loop through the chain), and summarises:

- the distributions (p5, p50, p95, mean, standard deviation) of the Vora
  value ν, the mean and the maximum ΔE00 under each illuminant, the
  white-balance gains and the noise gain of the matrix;
- the yield against the design's ``[tolerance]`` specification (mean ΔE00
  ≤ ``max_mean_delta_E00`` under every illuminant and ν ≥ ``min_vora``) with
  its 95 % Wilson interval;
- which tolerance drives the error: the first-order variance contribution
  of each parameter (correlation ratio), the squared standardized
  regression coefficients, and the one-at-a-time change with each
  parameter alone at ±1 tolerance width;
- the colour shift across the image (:func:`field_shift`).

Two matrix cases: ``fixed`` — every unit uses the colour-correction matrix
of the nominal design (the ``[matrix]`` stored in the design when it has
one, else fitted to the nominal design by its ``[fit]`` rule), as when one
matrix is loaded into every camera; ``recalibrated`` — every unit gets its
own matrix by the design's rule, as when each camera is calibrated at the
factory. In both cases each unit is white-balanced on its own white, as a
camera is at every shoot.

:class:`ToleranceResult` is a frozen value: it renders in a notebook,
serialises to JSON (:meth:`ToleranceResult.summary`,
:meth:`ToleranceResult.to_json`) and writes the trials as CSV
(:meth:`ToleranceResult.trials_csv`); :func:`save_trials` writes both
atomically.

References
----------
- Saltelli, A. et al., *Global Sensitivity Analysis. The Primer*, Wiley
  (2008), ch. 1 (standardized regression coefficients; first-order
  sensitivity index as the variance of the conditional mean).
- McKay, M. D., *Evaluating Prediction Uncertainty*, NUREG/CR-6311 (1995)
  (the correlation ratio estimated from a sample).
- Wilson, E. B., *J. Am. Stat. Assoc.* 22:209 (1927) (score interval of a
  proportion).
"""

from __future__ import annotations

import csv
import io
import json
import math
import os
import threading
import time
import zlib
from concurrent.futures import ThreadPoolExecutor, wait, FIRST_COMPLETED
from dataclasses import dataclass, field as dc_field, replace

import numpy as np

from workbench.colorimetry.coordinates import delta_E_CIE2000
from workbench.model.design import CHANNELS, ELEMENT_TYPES, Design, FieldPosition, Tolerance, ToleranceSpec
from workbench.errors import WorkbenchError
from workbench.fileio.atomic import write_text_atomically

__all__ = [
    "CASES",
    "MATRIX_CHOICES",
    "DEFAULT_CHUNK",
    "DEFAULT_EDGE_OFFSET_DEG",
    "DEFAULT_CORNER_OFFSET_DEG",
    "parameter_unit",
    "toleranced_parameters",
    "sample_parameters",
    "one_at_a_time_values",
    "distribution",
    "wilson_interval",
    "correlation_ratio",
    "standardized_regression",
    "default_field_positions",
    "field_shift",
    "FieldShift",
    "ToleranceResult",
    "run_tolerance",
    "save_trials",
]

CASES = ("fixed", "recalibrated")
MATRIX_CHOICES = ("fixed", "recalibrated", "both")
#: Trials evaluated together (bounds the memory of the cone-of-rays splitter: ~30 MB per chunk).
DEFAULT_CHUNK = 250
#: Default field positions when the design gives none: the chief-ray angle in the prism glass at
#: the image edge differs by ±3° from the centre (a near-telecentric camera lens, common practice),
#: at the corner of a 16:9 image by ±3°·√(1 + (9/16)²).
DEFAULT_EDGE_OFFSET_DEG = 3.0
DEFAULT_CORNER_OFFSET_DEG = round(DEFAULT_EDGE_OFFSET_DEG * math.sqrt(1 + (9 / 16) ** 2), 2)
PERCENTILES = (5, 50, 95)
_Z95 = 1.959963984540054  # two-sided 95 % normal quantile

_METHODS = {
    "sampling": (
        "Monte Carlo: each toleranced parameter = nominal + width·z, z standard normal ('normal', "
        "width = σ) or uniform on [−1, 1] ('uniform', width = half-width); parameters independent; "
        "numpy PCG64 stream seeded by (seed, CRC-32 of the parameter name), so a parameter's draws do "
        "not change when other tolerances change"),
    "distribution": ("percentiles p5, p50, p95 by linear interpolation between order statistics "
                     "(numpy 'linear', Hyndman & Fan type 7); std with ddof = 1; over the finished trials"),
    "yield": ("fraction of trials with mean ΔE00 ≤ max_mean_delta_E00 under every illuminant and "
              "ν ≥ min_vora; 95 % interval by the Wilson score method (Wilson 1927)"),
    "variance_contribution": (
        "first-order correlation ratio η² = Var(E[Y|X_i])/Var(Y), E[Y|X_i] estimated as the mean of Y in "
        "equal-count bins of X_i (McKay 1995; the first-order sensitivity index of Saltelli et al. 2008, "
        "ch. 1), bias-corrected like Kelley's ε² so that a parameter without effect scores about 0 "
        "(correlation_ratio: the uncorrected η², about (bins − 1)/(trials − 1) without effect)"),
    "src2": ("squared standardized regression coefficient SRC² = (b_i σ_i/σ_Y)² of a linear fit of Y on "
             "all parameters (Saltelli et al. 2008, ch. 1); ΣSRC² = R² when the inputs are independent "
             "and Y is near-linear; r_squared says how linear"),
    "one_at_a_time": ("each parameter alone at nominal − width and nominal + width (±1 σ for 'normal', "
                      "the ends for 'uniform'), the others nominal; change of the response from the nominal"),
    "fixed": ("the nominal design's matrix for every unit (the design's [matrix] when stored, else fitted "
              "to the nominal design by its [fit] rule); white balance on each unit's own white"),
    "recalibrated": "each unit its own matrix by the design's [fit] rule; white balance on its own white",
    "white_balance_gain": ("gain of the channel on the perfect diffuser divided by the green channel's "
                           "gain (1/raw R ÷ 1/raw G and 1/raw B ÷ 1/raw G)"),
    "noise_gain": ("2-norm of each row of the matrix applied to the white-balanced RGB: the output "
                   "noise per unit input noise for independent, equal channel noise"),
    "grey_snr_db": ("20·log10(grey / σ_out) of the design's [noise] grey in each display channel: shot + "
                    "read noise per channel, through white balance and the matrix (workbench.analysis.evaluator.noise_report)"),
    "worst_mean_delta_E00": "the largest of the per-illuminant mean ΔE00 of a unit (what the yield tests)",
}

_UNITS = {
    "vora_value": "1 (0-1)",
    "delta_E00": "ΔE00 (CIEDE2000) units",
    "white_balance_gain": "1 (ratio to the green gain)",
    "noise_gain": "1 (output/input noise)",
    "grey_snr_db": "dB",
    "yield": "fraction of trials, 0-1",
    "aoi_offset_deg": "degrees, in the prism glass",
}


# --------------------------------------------------------------------------
# Parameters and their draws
# --------------------------------------------------------------------------


def _spec_of(design: Design, key: str):
    name, _, param = key.partition(".")
    for e in design.chain:
        if e.name == name:
            return ELEMENT_TYPES[e.type][0].get(param)
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


_ORDERED = {"dichroic-splitter": ("blue_green_nm", "green_red_nm"), "band-pass": ("low_nm", "high_nm")}


def _check_order(design: Design, values: dict, what: str) -> None:
    """Pairs the design file requires in order (splitter edges, band-pass ends) stay in order."""
    known = design.parameters()
    for e in design.chain:
        pair = _ORDERED.get(e.type)
        if pair is None:
            continue
        lo_k, hi_k = (f"{e.name}.{k}" for k in pair)
        if lo_k not in values and hi_k not in values:
            continue
        lo = np.asarray(values.get(lo_k, known[lo_k].value))
        hi = np.asarray(values.get(hi_k, known[hi_k].value))
        bad = ~(hi > lo)
        if np.any(bad):
            n = int(np.broadcast_to(bad, np.broadcast_shapes(lo.shape, hi.shape)).sum())
            size = int(np.broadcast_to(lo, np.broadcast_shapes(lo.shape, hi.shape)).size)
            raise WorkbenchError(f"{hi_k} must stay above {lo_k}: {n} of {size} {what} do not; "
                                 "narrow the tolerances")


def _stream(seed: int, key: str) -> np.random.Generator:
    return np.random.default_rng([int(seed), zlib.crc32(key.encode("utf-8"))])


def _check_trials_seed(trials, seed) -> None:
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
    """
    _check_trials_seed(trials, seed)
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


# --------------------------------------------------------------------------
# Statistics
# --------------------------------------------------------------------------


def distribution(x) -> dict:
    """``{p5, p50, p95, mean, std, min, max}`` of a sample (1-D); None for an empty one.

    Percentiles by linear interpolation between order statistics (numpy's
    default, Hyndman & Fan type 7); ``std`` with ddof = 1 (0 for one value).
    """
    x = np.asarray(x, dtype=float).ravel()
    if x.size == 0:
        return {k: None for k in ("p5", "p50", "p95", "mean", "std", "min", "max")}
    p = np.percentile(x, PERCENTILES)
    return {
        "p5": float(p[0]), "p50": float(p[1]), "p95": float(p[2]),
        "mean": float(x.mean()), "std": float(x.std(ddof=1)) if x.size > 1 else 0.0,
        "min": float(x.min()), "max": float(x.max()),
    }


def wilson_interval(passed: int, n: int, z: float = _Z95) -> tuple[float, float]:
    """Wilson score interval of a proportion ``passed``/``n`` (default 95 %).

    (p̂ + z²/2n ± z√(p̂(1−p̂)/n + z²/4n²)) / (1 + z²/n) (Wilson 1927).
    """
    if n <= 0:
        return (math.nan, math.nan)
    p = passed / n
    d = 1 + z * z / n
    c = (p + z * z / (2 * n)) / d
    h = z * math.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / d
    # at p̂ = 0 (1) the lower (upper) end is exactly 0 (1); say so rather than leave a rounding residue
    lo = 0.0 if passed == 0 else c - h
    hi = 1.0 if passed == n else c + h
    return (lo, hi)


def _bins(n: int) -> int:
    return int(min(50, max(2, round(math.sqrt(n) / 2))))


def correlation_ratio(X, y, bins: int | None = None, *, corrected: bool = False) -> np.ndarray:
    """First-order correlation ratio η² = Var(E[y|X_i]) / Var(y) of each column of X (N, P) → (P,).

    E[y|X_i] is the mean of y in ``bins`` equal-count bins of X_i (default
    √N/2, 2-50). Model-free: it also sees a non-monotonic effect that a
    linear fit misses. NaN when y does not vary.

    With ``corrected=True`` the bias of the binned estimate is removed as
    in Kelley's ε²: (SS_between − (k − 1)·SS_within/(N − k)) / SS_total, so
    a parameter without effect scores about 0 (a small negative value is
    sampling noise) instead of about (k − 1)/(N − 1).
    """
    X = np.atleast_2d(np.asarray(X, dtype=float))
    y = np.asarray(y, dtype=float)
    N, P = X.shape
    if N < 2 or P == 0:
        return np.full(P, np.nan)
    ss = np.sum((y - y.mean()) ** 2)
    if not ss > 0:
        return np.full(P, np.nan)
    k = bins or _bins(N)
    ranks = np.argsort(np.argsort(X, axis=0, kind="stable"), axis=0, kind="stable")
    b = (ranks * k) // N                                           # (N, P) bin of each trial
    out = np.empty(P)
    for i in range(P):  # P parameters, each one bincount over all trials
        cnt = np.bincount(b[:, i], minlength=k)
        s = np.bincount(b[:, i], weights=y, minlength=k)
        m = np.divide(s, cnt, out=np.zeros(k), where=cnt > 0)
        between = np.sum(cnt * (m - y.mean()) ** 2)
        if corrected:
            used = int(np.count_nonzero(cnt))
            within = ss - between
            between = between - (used - 1) * within / max(1, N - used)
        out[i] = between / ss
    return out


def standardized_regression(X, y) -> tuple[np.ndarray, float]:
    """Standardized regression coefficients (P,) of y on X (N, P) and the fit's R².

    SRC_i = b_i·σ(X_i)/σ(y) of the least-squares fit y ≈ b₀ + Σ b_i X_i
    (Saltelli et al. 2008, ch. 1). NaN when y does not vary.
    """
    X = np.atleast_2d(np.asarray(X, dtype=float))
    y = np.asarray(y, dtype=float)
    N, P = X.shape
    sy = y.std()
    if N <= P + 1 or not sy > 0 or P == 0:
        return np.full(P, np.nan), math.nan
    sx = X.std(axis=0)
    Z = np.where(sx > 0, (X - X.mean(axis=0)) / np.where(sx > 0, sx, 1.0), 0.0)
    yz = (y - y.mean()) / sy
    b, *_ = np.linalg.lstsq(Z, yz, rcond=None)
    r = yz - Z @ b
    return b, float(1.0 - (r @ r) / (yz @ yz))


# --------------------------------------------------------------------------
# Evaluation of a batch
# --------------------------------------------------------------------------


def _evaluate(ev, design: Design, values: dict, cases, fixed_matrices, n: int) -> dict:
    """Per-unit arrays for a batch of ``n`` units (values: dict of (n,) arrays)."""
    from workbench.analysis.evaluator import noise_report

    out: dict = {}
    for case in cases:
        r = ev.batch(values, matrices=fixed_matrices if case == "fixed" else None)
        st = r["delta_E00"]
        ills = r["illuminants"]
        mean = np.stack([np.broadcast_to(st[i]["mean"], (n,)) for i in ills], axis=-1)   # (n, J)
        mx = np.stack([np.broadcast_to(st[i]["max"], (n,)) for i in ills], axis=-1)
        gains = np.broadcast_to(r["gains"], (n,) + r["gains"].shape[-2:])
        M = np.broadcast_to(r["matrices"], (n,) + r["matrices"].shape[-3:])
        noise = noise_report(M, 1.0 / gains, design.noise)
        out[case] = {
            "delta_E00_mean": mean,
            "delta_E00_max": mx,
            "gains": np.asarray(gains),
            "noise_gain": np.linalg.norm(M, axis=-1),                                     # (n, J, 3)
            "grey_snr_db": np.asarray(noise["snr_db"]),                                    # (n, J, 3)
            "matrix_method": r["method"],
        }
        out["vora_value"] = np.broadcast_to(r["vora_value"], (n,)).astype(float)
    return out


def _concat(parts: list[dict], cases) -> dict:
    out = {"vora_value": np.concatenate([p["vora_value"] for p in parts])}
    for c in cases:
        out[c] = {k: np.concatenate([p[c][k] for p in parts]) for k in parts[0][c] if k != "matrix_method"}
        out[c]["matrix_method"] = parts[0][c]["matrix_method"]
    return out


def _pass(arr: dict, case: str, vora, spec: ToleranceSpec) -> np.ndarray:
    return np.all(arr[case]["delta_E00_mean"] <= spec.max_mean_delta_E00, axis=-1) & (vora >= spec.min_vora)


# --------------------------------------------------------------------------
# Across the image
# --------------------------------------------------------------------------


def default_field_positions() -> tuple[FieldPosition, ...]:
    """Centre 0°, edges ±DEFAULT_EDGE_OFFSET_DEG, corners ±DEFAULT_CORNER_OFFSET_DEG (in glass)."""
    e, c = DEFAULT_EDGE_OFFSET_DEG, DEFAULT_CORNER_OFFSET_DEG
    return (FieldPosition("centre", 0.0), FieldPosition(f"edge −{e:g}°", -e), FieldPosition(f"edge +{e:g}°", e),
            FieldPosition(f"corner −{c:g}°", -c), FieldPosition(f"corner +{c:g}°", c))


def _splitter(design: Design):
    for e in design.chain:
        if e.type == "dichroic-splitter":
            return e
    return None


@dataclass(frozen=True, eq=False)
class FieldShift:
    """The colour shift across the image at the nominal design (see :func:`field_shift`).

    Arrays over positions (F,) × illuminants (J,): ``sample_shift_mean``,
    ``sample_shift_max`` (ΔE00 of each sample against itself at the centre,
    mean and max over the samples), ``white_shift``, ``grey_shift`` (ΔE00 of
    the perfect diffuser and of the grey against the centre),
    ``delta_E00_mean`` (mean ΔE00 against the truth); ``sensitivities``
    (F, 3, n) the channels at each position.
    """

    positions: tuple[FieldPosition, ...]
    illuminants: tuple[str, ...]
    splitter: str
    aoi_deg: dict
    sample_shift_mean: np.ndarray
    sample_shift_max: np.ndarray
    white_shift: np.ndarray
    grey_shift: np.ndarray
    delta_E00_mean: np.ndarray
    sensitivities: np.ndarray
    wavelengths: np.ndarray
    grey: float
    method: str

    def rows(self) -> list[dict]:
        """One row per position × illuminant (JSON-ready)."""
        out = []
        for f, p in enumerate(self.positions):
            for j, ill in enumerate(self.illuminants):
                out.append({
                    "position": p.name, "aoi_offset_deg": p.aoi_offset_deg, "illuminant": ill,
                    "blue_green_aoi_deg": self.aoi_deg["blue_green"][f],
                    "green_red_aoi_deg": self.aoi_deg["green_red"][f],
                    "sample_shift_mean": float(self.sample_shift_mean[f, j]),
                    "sample_shift_max": float(self.sample_shift_max[f, j]),
                    "white_shift": float(self.white_shift[f, j]),
                    "grey_shift": float(self.grey_shift[f, j]),
                    "delta_E00_mean": float(self.delta_E00_mean[f, j]),
                })
        return out

    def to_dict(self) -> dict:
        return {
            "splitter": self.splitter,
            "reference": "centre of the image (aoi offset 0°), white balance and matrix of the nominal design there",
            "grey": self.grey,
            "method": self.method,
            "units": {"aoi": "degrees, in the prism glass", "shift": "ΔE00 (CIEDE2000) units"},
            "positions": self.rows(),
        }


def field_shift(design: Design, *, evaluator=None, matrices=None, positions=None) -> FieldShift:
    """The colour shift across the image: the nominal design at field positions where the angle differs.

    Parameters
    ----------
    design : Design
        With a ``dichroic-splitter`` element in its chain.
    evaluator : DesignEvaluator, optional
    matrices : (3, 3) or (J, 3, 3), optional
        The matrix of the nominal design (default: stored, else fitted by
        its rule).
    positions : sequence of FieldPosition, optional
        Default: the design's ``[[tolerance.field]]``, else
        :func:`default_field_positions`.

    Returns
    -------
    FieldShift

    Notes
    -----
    Model (a simplification): the field angle of the chief ray in the prism
    glass adds to the chief-ray angle of incidence on both dichroic faces,
    θ_face = θ_face,centre + δ, as for a field point in the plane of tilt;
    the cone of rays keeps its f-number. A camera has one white balance and
    one matrix for the whole image, set at the centre: so at each position
    the raw RGB is divided by the raw white of the centre and passed through
    the nominal matrix. The shift of a sample is the ΔE00 between its
    CIELAB there and at the centre (CIE 142-2001); the white's and the
    grey's (the design's ``[noise] grey``, a spectrally flat reflectance)
    likewise — a white that is not neutral at the edge is colour shading.
    """
    from workbench.analysis.evaluator import DesignEvaluator

    ev = evaluator or DesignEvaluator(design)
    sp = _splitter(design)
    explicit = positions is not None or bool(design.tolerance.field)
    if sp is None:
        raise WorkbenchError(
            f"{design.source or design.name}: field positions need a dichroic-splitter element in the chain "
            "(the angle across the image acts on its faces)" if explicit else
            f"{design.source or design.name}: no dichroic-splitter in the chain, no field analysis")
    pos = tuple(positions if positions is not None else (design.tolerance.field or default_field_positions()))
    if not pos:
        raise WorkbenchError("field_shift: expected at least one field position")
    if matrices is None:
        matrices = ev.measures(use_stored_matrix=design.matrix is not None).matrices
    params = dict(sp.params)
    bg0 = params["blue_green_aoi_deg"].value
    gr0 = params["green_red_aoi_deg"].value
    off = np.array([0.0] + [p.aoi_offset_deg for p in pos])
    bg, gr = bg0 + off, gr0 + off
    for what, a in (("blue_green_aoi_deg", bg), ("green_red_aoi_deg", gr)):
        if np.any(np.abs(a) > 80):
            raise WorkbenchError(f"{sp.name}.{what} + aoi_offset_deg must stay within ±80° "
                                 f"(got {float(a[np.abs(a) > 80][0]):g}°)")
    S = ev.sensitivities({f"{sp.name}.blue_green_aoi_deg": bg, f"{sp.name}.green_red_aoi_deg": gr})
    b = ev.bench
    raw, white = b.raw(S)                                           # (F+1, J, K, 3), (F+1, J, 3)
    if np.any(white[0] <= 0):
        raise WorkbenchError("a channel records nothing of the white at the centre; cannot white-balance")
    F1, J = white.shape[:2]
    M = np.broadcast_to(np.asarray(matrices, dtype=float), (J, 3, 3))
    M = np.broadcast_to(M, (F1, J, 3, 3))
    C = raw / white[0][None, :, None, :]
    lab = b.lab_of(C, M)                                            # (F+1, J, K, 3)
    shift = delta_E_CIE2000(lab, lab[0][None])                      # (F+1, J, K)
    truth = delta_E_CIE2000(lab, b.true_Lab)
    grey = float(design.noise.grey)
    Cw = (white / white[0][None])[:, :, None, :]                   # (F+1, J, 1, 3)
    lab_w = b.lab_of(Cw, M)
    lab_g = b.lab_of(grey * Cw, M)
    dw = delta_E_CIE2000(lab_w, lab_w[0][None])[..., 0]
    dg = delta_E_CIE2000(lab_g, lab_g[0][None])[..., 0]
    method = ("chief-ray angle on both splitter faces = centre angle + aoi_offset_deg (in glass; field in the "
              "plane of tilt, a simplification); white balance (raw white at the centre) and the nominal matrix "
              "for the whole image; shift = CIEDE2000 of each sample, of the perfect diffuser (white) and of "
              f"a flat {grey:g} grey against the same at the centre; delta_E00_mean = mean CIEDE2000 against the truth")
    return FieldShift(
        positions=pos, illuminants=tuple(b.illuminant_names), splitter=sp.name,
        aoi_deg={"blue_green": [float(v) for v in bg[1:]], "green_red": [float(v) for v in gr[1:]]},
        sample_shift_mean=shift[1:].mean(axis=-1), sample_shift_max=shift[1:].max(axis=-1),
        white_shift=dw[1:], grey_shift=dg[1:], delta_E00_mean=truth[1:].mean(axis=-1),
        sensitivities=np.asarray(S[1:]), wavelengths=ev.wavelengths, grey=grey, method=method,
    )


# --------------------------------------------------------------------------
# The result
# --------------------------------------------------------------------------


def _clean(v):
    if isinstance(v, dict):
        return {str(k): _clean(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [_clean(x) for x in v]
    if isinstance(v, np.ndarray):
        return _clean(v.tolist())
    if isinstance(v, (float, np.floating)):
        f = float(v)
        return f if math.isfinite(f) else None
    if isinstance(v, (np.integer,)):
        return int(v)
    if isinstance(v, np.bool_):
        return bool(v)
    return v


@dataclass(frozen=True, eq=False)
class ToleranceResult:
    """The outcome of :func:`run_tolerance`: a frozen value that renders, serialises and writes CSV.

    Attributes
    ----------
    trials : int
        Trials finished (fewer than ``trials_requested`` when interrupted).
    samples : dict of str to (trials,) arrays
        The drawn parameter values, by ``'element.param'``.
    trial_index : (trials,) int array
        Index of each finished trial in the requested sequence.
    vora_value : (trials,) array
    per_case : dict
        For each case in ``cases``: ``delta_E00_mean``, ``delta_E00_max``
        (trials, J); ``gains``, ``noise_gain``, ``grey_snr_db`` (trials, J, 3);
        ``passed`` (trials,) bool; ``matrix_method``.
    nominal, one_at_a_time : dict
        The same arrays for the nominal design (1 unit) and for each
        parameter alone at ∓ width (2P units, rows in ``oat_labels``).
    field : FieldShift or None
    """

    design: Design
    trials: int
    trials_requested: int
    seed: int
    cases: tuple[str, ...]
    tolerances: dict
    samples: dict
    trial_index: np.ndarray
    vora_value: np.ndarray
    per_case: dict
    nominal: dict
    one_at_a_time: dict
    oat_labels: tuple
    illuminants: tuple[str, ...]
    spec: ToleranceSpec
    field: FieldShift | None
    interrupted: bool
    seconds: float
    chunk: int
    notes: tuple[str, ...] = dc_field(default=())

    # -- derived ------------------------------------------------------------------
    @property
    def primary(self) -> str:
        """The case whose numbers the summary puts at the top level (``fixed`` when run)."""
        return self.cases[0]

    def worst_mean(self, case: str) -> np.ndarray:
        """(trials,) the largest per-illuminant mean ΔE00 of each unit."""
        return self.per_case[case]["delta_E00_mean"].max(axis=-1)

    def passed(self, case: str) -> np.ndarray:
        return self.per_case[case]["passed"]

    def yield_fraction(self, case: str | None = None) -> float:
        p = self.passed(case or self.primary)
        return float(p.mean()) if p.size else math.nan

    def parameter_matrix(self) -> tuple[list[str], np.ndarray]:
        """The varied parameters (width > 0) and their draws (trials, P)."""
        keys = [k for k, t in self.tolerances.items() if t.width > 0]
        X = np.stack([self.samples[k] for k in keys], axis=-1) if keys else np.zeros((self.trials, 0))
        return keys, X

    def ranking(self, case: str | None = None, response: str = "worst_mean_delta_E00") -> dict:
        """Which tolerance drives ``response``: variance contribution, SRC² and one-at-a-time.

        ``response``: ``'worst_mean_delta_E00'``, ``'vora_value'`` or
        ``'delta_E00_mean:<illuminant>'``. Rows sorted by the variance
        contribution (η²), largest first.
        """
        case = case or self.primary
        y, y_nom, y_oat = self._response(case, response)
        keys, X = self.parameter_matrix()
        eta = correlation_ratio(X, y, corrected=True)
        eta_raw = correlation_ratio(X, y)
        src, r2 = standardized_regression(X, y)
        rows = []
        for i, k in enumerate(keys):
            j = [n for n, (kk, _) in enumerate(self.oat_labels) if kk == k]
            lo, hi = (float(y_oat[j[0]] - y_nom), float(y_oat[j[1]] - y_nom)) if j else (math.nan, math.nan)
            t = self.tolerances[k]
            rows.append({
                "name": k, "unit": parameter_unit(self.design, k), "distribution": t.distribution,
                "width": t.width, "variance_contribution": float(eta[i]),
                "correlation_ratio": float(eta_raw[i]), "src2": float(src[i] ** 2),
                "src": float(src[i]), "oat_minus": lo, "oat_plus": hi,
                "oat_span": float(max(abs(lo), abs(hi))) if j else math.nan,
            })
        rows.sort(key=lambda r: (-(r["variance_contribution"] if math.isfinite(r["variance_contribution"]) else -1),
                                 -(r["oat_span"] if math.isfinite(r["oat_span"]) else -1)))
        return {
            "response": response, "case": case, "r_squared": r2,
            "bins": _bins(self.trials) if self.trials >= 2 else None,
            "methods": {"variance_contribution": _METHODS["variance_contribution"], "src2": _METHODS["src2"],
                        "one_at_a_time": _METHODS["one_at_a_time"]},
            "parameters": rows,
        }

    def _response(self, case, response):
        def pick(arr):
            if response == "vora_value":
                return arr["vora_value"]
            m = arr[case]["delta_E00_mean"]
            if response == "worst_mean_delta_E00":
                return m.max(axis=-1)
            if response.startswith("delta_E00_mean:"):
                ill = response.split(":", 1)[1]
                if ill not in self.illuminants:
                    raise WorkbenchError(f"response {response!r}: expected an illuminant of "
                                         f"{', '.join(self.illuminants)}")
                return m[:, self.illuminants.index(ill)]
            raise WorkbenchError(f"response must be 'worst_mean_delta_E00', 'vora_value' or "
                                 f"'delta_E00_mean:<illuminant>' (got {response!r})")
        full = {"vora_value": self.vora_value, case: self.per_case[case]}
        return pick(full), float(pick(self.nominal)[0]), pick(self.one_at_a_time)

    # -- serialisation ----------------------------------------------------------
    def _case_summary(self, case: str) -> dict:
        a = self.per_case[case]
        nom = self.nominal[case]
        ills = {}
        for j, ill in enumerate(self.illuminants):
            g = a["gains"][:, j, :]
            ills[ill] = {
                "delta_E00_mean": distribution(a["delta_E00_mean"][:, j]),
                "delta_E00_max": distribution(a["delta_E00_max"][:, j]),
                "white_balance_gain_R_over_G": distribution(g[:, 0] / g[:, 1]),
                "white_balance_gain_B_over_G": distribution(g[:, 2] / g[:, 1]),
                "noise_gain": {ch: distribution(a["noise_gain"][:, j, i]) for i, ch in enumerate(CHANNELS)},
                "grey_snr_db": {ch: distribution(a["grey_snr_db"][:, j, i]) for i, ch in enumerate(CHANNELS)},
                "nominal": {
                    "delta_E00_mean": float(nom["delta_E00_mean"][0, j]),
                    "delta_E00_max": float(nom["delta_E00_max"][0, j]),
                    "white_balance_gain_R_over_G": float(nom["gains"][0, j, 0] / nom["gains"][0, j, 1]),
                    "white_balance_gain_B_over_G": float(nom["gains"][0, j, 2] / nom["gains"][0, j, 1]),
                    "noise_gain": {ch: float(nom["noise_gain"][0, j, i]) for i, ch in enumerate(CHANNELS)},
                },
            }
        passed = a["passed"]
        k = int(passed.sum())
        lo, hi = wilson_interval(k, self.trials)
        nominal_pass = bool(_pass(self.nominal, case, self.nominal["vora_value"], self.spec)[0])
        return {
            "matrix": case,
            "matrix_method": a["matrix_method"],
            "yield": k / self.trials if self.trials else None,
            "yield_interval_95": [lo, hi],
            "units_passing": k,
            "nominal_passes": nominal_pass,
            "nominal_worst_mean_delta_E00": float(nom["delta_E00_mean"][0].max()),
            "worst_mean_delta_E00": distribution(self.worst_mean(case)),
            "illuminants": ills,
            "ranking": self.ranking(case),
        }

    def summary(self) -> dict:
        """The JSON object ``workbench tolerance --format json`` prints (no timings, so the same
        seed gives the same text)."""
        p = self.primary
        cases = {c: self._case_summary(c) for c in self.cases}
        top = cases[p]
        params = []
        known = self.design.parameters()
        for k, t in self.tolerances.items():
            x = self.samples[k]
            params.append({
                "name": k, "unit": parameter_unit(self.design, k), "nominal": known[k].value,
                "distribution": t.distribution, "width": t.width,
                "width_means": "standard deviation" if t.distribution == "normal" else "half-width",
                "sampled": distribution(x),
            })
        return _clean({
            "design": self.design.name,
            "file": self.design.source,
            "trials": self.trials,
            "trials_requested": self.trials_requested,
            "interrupted": self.interrupted,
            "seed": self.seed,
            "matrix": p,
            "yield": top["yield"],
            "yield_interval_95": top["yield_interval_95"],
            "units_passing": top["units_passing"],
            "nominal_passes": top["nominal_passes"],
            "spec": {
                "max_mean_delta_E00": self.spec.max_mean_delta_E00, "min_vora": self.spec.min_vora,
                "rule": "mean ΔE00 ≤ max_mean_delta_E00 under every illuminant and ν ≥ min_vora",
            },
            "vora_value": {**distribution(self.vora_value), "nominal": float(self.nominal["vora_value"][0])},
            "worst_mean_delta_E00": top["worst_mean_delta_E00"],
            "illuminants": top["illuminants"],
            "ranking": top["ranking"],
            "ranking_vora_value": self.ranking(p, "vora_value"),
            "cases": cases,
            "parameters": params,
            "field": None if self.field is None else self.field.to_dict(),
            "units": {**_UNITS, **{k: parameter_unit(self.design, k) for k in self.tolerances}},
            "methods": {**_METHODS, "delta_E00": _DE_METHOD, "vora_value": _NU_METHOD,
                        "matrix_cases": {c: _METHODS[c] for c in self.cases}},
            "notes": list(self.notes),
        })

    def to_json(self, *, trials: bool = False) -> str:
        """The summary as JSON text; with ``trials=True`` also every trial's values (column arrays)."""
        d = self.summary()
        if trials:
            d["trials_data"] = _clean(self.trial_columns())
        return json.dumps(d, indent=2, ensure_ascii=False, allow_nan=False)

    def trial_columns(self) -> dict:
        """Every trial as columns: ``trial``, the parameters, ``vora_value``, then per case and illuminant."""
        cols: dict = {"trial": self.trial_index.astype(int)}
        for k in self.tolerances:
            cols[k] = self.samples[k]
        cols["vora_value"] = self.vora_value
        for c in self.cases:
            a = self.per_case[c]
            for j, ill in enumerate(self.illuminants):
                cols[f"{c}.{ill}.delta_E00_mean"] = a["delta_E00_mean"][:, j]
                cols[f"{c}.{ill}.delta_E00_max"] = a["delta_E00_max"][:, j]
                g = a["gains"][:, j, :]
                cols[f"{c}.{ill}.gain_R_over_G"] = g[:, 0] / g[:, 1]
                cols[f"{c}.{ill}.gain_B_over_G"] = g[:, 2] / g[:, 1]
                for i, ch in enumerate(CHANNELS):
                    cols[f"{c}.{ill}.noise_gain_{ch}"] = a["noise_gain"][:, j, i]
            cols[f"{c}.worst_mean_delta_E00"] = self.worst_mean(c)
            cols[f"{c}.pass"] = a["passed"].astype(int)
        return cols

    def trials_csv(self) -> str:
        """The trials as CSV text: one row per trial, columns as :meth:`trial_columns` (full precision)."""
        cols = self.trial_columns()
        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        w.writerow(list(cols))
        arrays = [np.asarray(v) for v in cols.values()]
        for i in range(self.trials):
            w.writerow([repr(int(a[i])) if a.dtype.kind in "iub" else repr(float(a[i])) for a in arrays])
        return buf.getvalue()

    def _repr_html_(self) -> str:
        s = self.summary()
        rows = []
        for c in self.cases:
            cs = s["cases"][c]
            for ill, d in cs["illuminants"].items():
                m = d["delta_E00_mean"]
                rows.append(f"<tr><td>{c}</td><td>{ill}</td><td>{d['nominal']['delta_E00_mean']:.3f}</td>"
                            f"<td>{m['p5']:.3f}</td><td>{m['p50']:.3f}</td><td>{m['p95']:.3f}</td>"
                            f"<td>{d['delta_E00_max']['p95']:.3f}</td></tr>")
        ys = "; ".join(
            f"{c}: {100 * s['cases'][c]['yield']:.1f} % (95 % Wilson {100 * s['cases'][c]['yield_interval_95'][0]:.1f}"
            f"–{100 * s['cases'][c]['yield_interval_95'][1]:.1f} %)" for c in self.cases)
        rk = s["ranking"]["parameters"][:5]
        rank = "".join(f"<tr><td>{r['name']}</td><td>{'σ' if r['distribution'] == 'normal' else '±'} "
                       f"{r['width']:g} {r['unit']}</td>"
                       f"<td>{100 * (r['variance_contribution'] or 0):.1f} %</td>"
                       f"<td>{(r['oat_minus'] or 0):+.3f} / {(r['oat_plus'] or 0):+.3f}</td></tr>" for r in rk)
        v = s["vora_value"]
        stop = " <b>Interrupted</b>: statistics over the finished trials." if self.interrupted else ""
        return (
            f"<p><b>Tolerance analysis of {self.design.name}</b>: {self.trials} trials (seed {self.seed}).{stop}</p>"
            f"<p>Yield (mean ΔE00 ≤ {self.spec.max_mean_delta_E00:g} under every illuminant and "
            f"ν ≥ {self.spec.min_vora:g}): {ys}.</p>"
            f"<p>Vora value ν (0-1): nominal {v['nominal']:.4f}, p5 {v['p5']:.4f}, p50 {v['p50']:.4f}, "
            f"p95 {v['p95']:.4f}. The nominal design {'passes' if s['nominal_passes'] else 'fails'} the spec "
            f"({self.primary} matrix).</p>"
            "<p>ΔE00: CIEDE2000 units, over the design's samples; percentiles over the trials (linear "
            "interpolation); p95 of max ΔE00 = 95th percentile over the units of each unit's largest ΔE00.</p>"
            "<table><tr><th>matrix</th><th>illuminant</th><th>nominal mean ΔE00</th><th>p5</th><th>p50</th>"
            f"<th>p95</th><th>p95 of max ΔE00</th></tr>{''.join(rows)}</table>"
            f"<p>What drives the worst-illuminant mean ΔE00 ({self.primary} matrix): variance contribution "
            "(correlation ratio η²) and one-at-a-time change at ∓1 width (ΔE00).</p>"
            f"<table><tr><th>parameter</th><th>tolerance</th><th>η²</th><th>∓1 width</th></tr>{rank}</table>")


_DE_METHOD = ("CIEDE2000 (CIE 142-2001) between the camera (white balance on the perfect diffuser, then the "
              "matrix) and the truth adapted to the display white (linear Bradford), over the design's samples "
              "under each illuminant (workbench.analysis.evaluator.DesignEvaluator)")
_NU_METHOD = "Vora value Tr(P_A P_M)/3 with the design's recording and viewing illuminants (Vora & Trussell 1993), 0-1"


# --------------------------------------------------------------------------
# The run
# --------------------------------------------------------------------------


def _workers(n_chunks: int, workers) -> int:
    if workers is None:
        workers = min(2, os.cpu_count() or 1)
    if isinstance(workers, bool) or not isinstance(workers, int) or workers < 1:
        raise WorkbenchError(f"workers must be a whole number >= 1 (got {workers!r})")
    return max(1, min(workers, n_chunks))


def run_tolerance(design: Design, *, trials: int = 2000, seed: int = 0, matrix: str = "both",
                  tolerances=None, scale: float = 1.0, spec: ToleranceSpec | None = None,
                  field: bool | None = None, chunk: int = DEFAULT_CHUNK, workers: int | None = None,
                  progress: bool = True, stop: threading.Event | None = None,
                  evaluator=None) -> ToleranceResult:
    """Monte Carlo tolerance analysis of a design.

    Parameters
    ----------
    design : Design
        Its parameters' ``tolerance`` tables say what varies; its
        ``[tolerance]`` the specification and field positions.
    trials : int
        Simulated units (≥ 1).
    seed : int
        Seed (≥ 0); the same seed gives the same draws and results.
    matrix : {'both', 'fixed', 'recalibrated'}
        Which matrix case(s) to evaluate (module docstring); the first is
        the summary's top level.
    tolerances : mapping of str to Tolerance or None, optional
        Overrides of the design's tolerances; ``scale`` multiplies every
        width (see :func:`toleranced_parameters`).
    spec : ToleranceSpec, optional
        Overrides the design's ``[tolerance]`` limits (and field positions).
    field : bool, optional
        Evaluate the colour shift across the image (:func:`field_shift`).
        Default: when the design has a dichroic splitter.
    chunk : int
        Trials per batched evaluation (bounds memory; ~30 MB for the demo
        design at 250).
    workers : int, optional
        Threads evaluating chunks at once (default: up to 2, the machine's
        cores); the numbers do not depend on it.
    progress : bool
        A tqdm progress bar over the trials (terminal or notebook).
    stop : threading.Event, optional
        Set it to stop after the chunks under way; Ctrl-C does the same.
        The finished trials are kept and ``interrupted`` says so.
    evaluator : DesignEvaluator, optional
        Reuse one already built for ``design``.

    Returns
    -------
    ToleranceResult
    """
    from workbench.analysis.evaluator import DesignEvaluator

    t0 = time.perf_counter()
    _check_trials_seed(trials, seed)
    if matrix not in MATRIX_CHOICES:
        raise WorkbenchError(f"matrix must be one of {', '.join(MATRIX_CHOICES)} (got {matrix!r})")
    if isinstance(chunk, bool) or not isinstance(chunk, int) or chunk < 1:
        raise WorkbenchError(f"chunk must be a whole number >= 1 (got {chunk!r})")
    if spec is not None:
        design = replace(design, tolerance=spec)
    spec = design.tolerance
    cases = CASES if matrix == "both" else (matrix,)
    tol = toleranced_parameters(design, tolerances, scale=scale)
    samples = sample_parameters(design, int(trials), int(seed), tolerances=tolerances, scale=scale)
    oat_values, oat_labels = one_at_a_time_values(design, {k: t for k, t in tol.items() if t.width > 0})
    ev = evaluator or DesignEvaluator(design)
    notes = list(ev.notes)
    if not tol:
        notes.append("no parameter carries a tolerance: every trial is the nominal design")
    elif all(t.width == 0 for t in tol.values()):
        notes.append("every tolerance width is 0: every trial is the nominal design")
    if design.fit.matrix == "delta-e00" and "recalibrated" in cases:
        notes.append("recalibrated case: the ΔE00-minimising matrix is not fitted per unit; least squares is used")
    nominal_measures = ev.measures(use_stored_matrix=design.matrix is not None)
    fixed_M = nominal_measures.matrices
    if "fixed" in cases:
        notes.append(f"fixed case: the nominal design's matrix ({nominal_measures.matrix_method}, "
                     f"{nominal_measures.matrix_scope}) for every unit")

    known = design.parameters()
    anchor = next(iter(known), None)

    def with_anchor(values: dict, n: int) -> dict:
        # a batch needs at least one batched parameter to carry its length
        if values or anchor is None:
            return values
        return {anchor: np.full(n, known[anchor].value)}

    nominal = _evaluate(ev, design, with_anchor({k: np.array([known[k].value]) for k in tol}, 1), cases, fixed_M, 1)
    n_oat = len(oat_labels)
    try:
        oat_eval = _evaluate(ev, design, oat_values, cases, fixed_M, n_oat) if n_oat else None
    except WorkbenchError as err:
        raise WorkbenchError(f"one-at-a-time units (nominal ± width): {str(err).splitlines()[0]}") from None
    oat = (oat_eval if n_oat else
           {"vora_value": np.zeros(0), **{c: {k: np.zeros((0,) + v.shape[1:]) for k, v in nominal[c].items()
                                              if k != "matrix_method"} for c in cases}})

    N = int(trials)
    slices = [slice(i, min(N, i + chunk)) for i in range(0, N, chunk)]
    nw = _workers(len(slices), workers)
    done: dict[int, dict] = {}
    local = threading.local()

    def job(i: int) -> dict:
        e = getattr(local, "ev", None)
        if e is None:
            if nw == 1:
                e = ev
            else:
                import copy

                # each thread its own chain model (its curve memo is per instance)
                e = copy.copy(ev)
                e.model = design.model()
            local.ev = e
        sl = slices[i]
        n = sl.stop - sl.start
        try:
            return _evaluate(e, design, with_anchor({k: v[sl] for k, v in samples.items()}, n), cases, fixed_M, n)
        except WorkbenchError as err:
            raise WorkbenchError(f"trials {sl.start}-{sl.stop - 1}: {str(err).splitlines()[0]}") from None

    bar = None
    if progress:
        from tqdm.auto import tqdm

        bar = tqdm(total=N, desc="tolerance trials", unit="trial", leave=False)
    interrupted = False
    try:
        if nw == 1:
            for i in range(len(slices)):
                if stop is not None and stop.is_set():
                    interrupted = True
                    break
                done[i] = job(i)
                if bar is not None:
                    bar.update(slices[i].stop - slices[i].start)
        else:
            ex = ThreadPoolExecutor(max_workers=nw, thread_name_prefix="tolerance")
            pending = {}
            it = iter(range(len(slices)))
            try:
                for _ in range(nw * 2):
                    i = next(it, None)
                    if i is not None:
                        pending[ex.submit(job, i)] = i
                while pending:
                    finished, _ = wait(pending, timeout=0.2, return_when=FIRST_COMPLETED)
                    for f in finished:
                        i = pending.pop(f)
                        done[i] = f.result()
                        if bar is not None:
                            bar.update(slices[i].stop - slices[i].start)
                    if stop is not None and stop.is_set():
                        interrupted = True
                        break
                    for _ in finished:
                        i = next(it, None)
                        if i is not None:
                            pending[ex.submit(job, i)] = i
            except KeyboardInterrupt:
                interrupted = True
            finally:
                ex.shutdown(wait=True, cancel_futures=True)
                for f, i in pending.items():
                    if f.done() and not f.cancelled() and f.exception() is None:
                        done[i] = f.result()
    except KeyboardInterrupt:
        interrupted = True
    finally:
        if bar is not None:
            bar.close()
    if not done:
        raise KeyboardInterrupt("tolerance analysis stopped before the first chunk finished")
    keep = sorted(done)
    if interrupted or len(keep) < len(slices):
        interrupted = True
    arr = _concat([done[i] for i in keep], cases)
    idx = np.concatenate([np.arange(slices[i].start, slices[i].stop) for i in keep])
    kept_samples = {k: v[idx] for k, v in samples.items()}
    if interrupted:
        notes.append(f"interrupted: {idx.size} of {N} trials finished; statistics are over those")
    for c in cases:
        arr[c]["passed"] = _pass(arr, c, arr["vora_value"], spec)
    fs = None
    if field is None:
        field = _splitter(design) is not None or bool(design.tolerance.field)
    if field:
        fs = field_shift(design, evaluator=ev, matrices=fixed_M)
        if not design.tolerance.field:
            notes.append(f"no [[tolerance.field]] in the design: field positions at the centre, edges "
                         f"±{DEFAULT_EDGE_OFFSET_DEG:g}° and corners ±{DEFAULT_CORNER_OFFSET_DEG:g}° in glass")
    elif _splitter(design) is None:
        notes.append("no dichroic-splitter in the chain: no field analysis")
    return ToleranceResult(
        design=design, trials=int(idx.size), trials_requested=N, seed=int(seed), cases=cases,
        tolerances=tol, samples=kept_samples, trial_index=idx, vora_value=arr["vora_value"],
        per_case={c: arr[c] for c in cases}, nominal=nominal, one_at_a_time=oat,
        oat_labels=tuple(oat_labels), illuminants=tuple(ev.bench.illuminant_names), spec=spec,
        field=fs, interrupted=interrupted, seconds=time.perf_counter() - t0, chunk=chunk,
        notes=tuple(dict.fromkeys(notes)),
    )


def save_trials(result: ToleranceResult, *, csv_path=None, json_path=None) -> None:
    """Write the trials as CSV and/or the summary with every trial as JSON, each atomically."""
    if csv_path is not None:
        write_text_atomically(csv_path, result.trials_csv())
    if json_path is not None:
        write_text_atomically(json_path, result.to_json(trials=True) + "\n")
