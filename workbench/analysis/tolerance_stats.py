"""Tolerance analysis, second part: statistics, yield, ranking and the result value.

Distributions, the Wilson interval of the yield, the correlation ratio and
standardized regression (what drives the error), and
:class:`ToleranceResult`, the frozen outcome of
:func:`workbench.analysis.tolerance.run_tolerance`.

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
import math
from dataclasses import dataclass, field as dc_field

import numpy as np

from workbench.model.design import CHANNELS, Design, ToleranceSpec
from workbench.errors import WorkbenchError
from workbench.analysis.tolerance_draws import parameter_unit
from workbench.analysis.tolerance_field import FieldShift
from workbench.report.html import tolerance_html
from workbench.report.json_text import json_text, jsonable
from workbench.report.methods import METHODS

__all__ = [
    "IlluminantSummary",
    "CaseSummary",
    "PERCENTILES",
    "distribution",
    "wilson_interval",
    "correlation_ratio",
    "correlation_ratio_floor",
    "standardized_regression",
    "passes_spec",
    "ToleranceResult",
]

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
    "noise_floor": (
        "the variance contribution that the largest of the P parameters without effect stays below in 95 % of "
        "repeats: Kelley's ε² = a(F − 1)/(1 + aF), a = (bins − 1)/(trials − bins), at the F(bins − 1, "
        "trials − bins) quantile 0.95^(1/P); above_noise_floor marks the parameters whose contribution is "
        "distinguishable from sampling noise (docs/methods.md §16)"),
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
# Statistics
# --------------------------------------------------------------------------


def distribution(x) -> dict:
    """``{p5, p50, p95, mean, std, min, max}`` of a sample (1-D); None for an empty one.

    Percentiles by linear interpolation between order statistics (numpy's
    default, Hyndman & Fan type 7); ``std`` with ddof = 1 (0 for one value).

    References
    ----------
    Hyndman, R. J. & Fan, Y. (1996). Sample quantiles in statistical packages.
    *Am. Stat.* 50(4), 361-365 (type 7).
    docs/methods.md §16.
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

    References
    ----------
    Wilson, E. B. (1927). Probable inference, the law of succession, and
    statistical inference. *J. Am. Stat. Assoc.* 22, 209-212.
    Newcombe, R. G. (1998). *Stat. Med.* 17, 857-872.
    docs/methods.md §16.

    Examples
    --------
    >>> [round(v, 4) for v in wilson_interval(81, 263)]  # Newcombe (1998), from memory
    [0.2553, 0.3662]
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

    References
    ----------
    McKay, M. D. (1995). *Evaluating Prediction Uncertainty*. NUREG/CR-6311.
    Kelley, T. L. (1935). An unbiased correlation ratio measure. *PNAS* 21, 554-559.
    Saltelli, A. et al. (2008). *Global Sensitivity Analysis. The Primer*. Wiley, ch. 1.
    docs/methods.md §16.
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


def correlation_ratio_floor(trials: int, parameters: int, bins: int | None = None, level: float = 0.95) -> float:
    """The noise floor of the corrected correlation ratio: what ``parameters`` parameters without effect reach.

    For a parameter without effect (and a near-normal response) the binned
    ratio F = (SS_between/(k − 1)) / (SS_within/(N − k)) follows the F
    distribution with (k − 1, N − k) degrees of freedom, and Kelley's ε² is
    a(F − 1)/(1 + aF) with a = (k − 1)/(N − k). The floor is the ε² of the
    F quantile level^(1/P): the largest of P independent such parameters
    stays below it with probability ``level``. A variance contribution
    above the floor is distinguishable from sampling noise.

    References
    ----------
    Kelley, T. L. (1935). An unbiased correlation ratio measure. *PNAS* 21, 554-559.
    Šidák, Z. (1967). Rectangular confidence regions for the means of multivariate normal
    distributions. *J. Am. Stat. Assoc.* 62, 626-633. docs/methods.md §16.
    """
    from scipy.special import fdtri  # the F quantile; scipy.special only (no scipy.stats at import)

    k = bins or _bins(trials)
    if trials <= k or parameters < 1:
        return math.nan
    a = (k - 1) / (trials - k)
    F = float(fdtri(k - 1, trials - k, level ** (1.0 / parameters)))
    return a * (F - 1.0) / (1.0 + a * F)


def standardized_regression(X, y) -> tuple[np.ndarray, float]:
    """Standardized regression coefficients (P,) of y on X (N, P) and the fit's R².

    SRC_i = b_i·σ(X_i)/σ(y) of the least-squares fit y ≈ b₀ + Σ b_i X_i
    (Saltelli et al. 2008, ch. 1). NaN when y does not vary.

    References
    ----------
    Saltelli, A. et al. (2008). *Global Sensitivity Analysis. The Primer*.
    Wiley, ch. 1.
    docs/methods.md §16.
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



def passes_spec(arr: dict, case: str, vora, spec: ToleranceSpec) -> np.ndarray:
    return np.all(arr[case]["delta_E00_mean"] <= spec.max_mean_delta_E00, axis=-1) & (vora >= spec.min_vora)



# --------------------------------------------------------------------------
# The result
# --------------------------------------------------------------------------



@dataclass(frozen=True, eq=False)
class IlluminantSummary:
    """One illuminant's statistics over the trials of one matrix case.

    Each distribution is the dict of :func:`distribution` (p5, p50, p95,
    mean, std, min, max) over the units; ``noise_gain`` and ``grey_snr_db``
    hold one per channel R, G, B; ``nominal`` the nominal design's values.
    """

    delta_E00_mean: dict
    delta_E00_max: dict
    white_balance_gain_R_over_G: dict
    white_balance_gain_B_over_G: dict
    noise_gain: dict
    grey_snr_db: dict
    nominal: dict

    def to_dict(self) -> dict:
        """The JSON object of ``summary()['cases'][case]['illuminants'][illuminant]``."""
        return {
            "delta_E00_mean": self.delta_E00_mean,
            "delta_E00_max": self.delta_E00_max,
            "white_balance_gain_R_over_G": self.white_balance_gain_R_over_G,
            "white_balance_gain_B_over_G": self.white_balance_gain_B_over_G,
            "noise_gain": self.noise_gain,
            "grey_snr_db": self.grey_snr_db,
            "nominal": self.nominal,
        }


@dataclass(frozen=True, eq=False)
class CaseSummary:
    """One matrix case ('fixed' or 'recalibrated') over the trials: yield, worst mean ΔE00, per illuminant.

    ``yield_fraction`` is the share of units passing the spec (None for no
    trials) with its 95 % Wilson interval; ``illuminants`` maps each
    illuminant to its :class:`IlluminantSummary`; ``ranking`` is
    :meth:`ToleranceResult.ranking` of the worst-illuminant mean ΔE00.
    """

    matrix: str
    matrix_method: str
    yield_fraction: float | None
    yield_interval_95: tuple
    units_passing: int
    nominal_passes: bool
    nominal_worst_mean_delta_E00: float
    worst_mean_delta_E00: dict
    illuminants: dict
    ranking: dict

    def to_dict(self) -> dict:
        """The JSON object of ``summary()['cases'][case]``."""
        return {
            "matrix": self.matrix,
            "matrix_method": self.matrix_method,
            "yield": self.yield_fraction,
            "yield_interval_95": list(self.yield_interval_95),
            "units_passing": self.units_passing,
            "nominal_passes": self.nominal_passes,
            "nominal_worst_mean_delta_E00": self.nominal_worst_mean_delta_E00,
            "worst_mean_delta_E00": self.worst_mean_delta_E00,
            "illuminants": {ill: d.to_dict() for ill, d in self.illuminants.items()},
            "ranking": self.ranking,
        }


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
        floor = correlation_ratio_floor(self.trials, len(keys)) if keys and self.trials >= 2 else math.nan
        rows = []
        for i, k in enumerate(keys):
            j = [n for n, (kk, _) in enumerate(self.oat_labels) if kk == k]
            lo, hi = (float(y_oat[j[0]] - y_nom), float(y_oat[j[1]] - y_nom)) if j else (math.nan, math.nan)
            t = self.tolerances[k]
            rows.append({
                "name": k, "unit": parameter_unit(self.design, k), "distribution": t.distribution,
                "width": t.width, "variance_contribution": float(eta[i]),
                "above_noise_floor": bool(math.isfinite(floor) and eta[i] > floor),
                "correlation_ratio": float(eta_raw[i]), "src2": float(src[i] ** 2),
                "src": float(src[i]), "oat_minus": lo, "oat_plus": hi,
                "oat_span": float(max(abs(lo), abs(hi))) if j else math.nan,
            })
        rows.sort(key=lambda r: (-(r["variance_contribution"] if math.isfinite(r["variance_contribution"]) else -1),
                                 -(r["oat_span"] if math.isfinite(r["oat_span"]) else -1)))
        return {
            "response": response, "case": case, "r_squared": r2,
            "bins": _bins(self.trials) if self.trials >= 2 else None,
            "noise_floor": floor,
            "methods": {"variance_contribution": _METHODS["variance_contribution"], "src2": _METHODS["src2"],
                        "one_at_a_time": _METHODS["one_at_a_time"], "noise_floor": _METHODS["noise_floor"]},
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
    def case_summary(self, case: str) -> "CaseSummary":
        """The statistics of one matrix case over the trials, typed (its JSON is ``summary()['cases'][case]``)."""
        a = self.per_case[case]
        nom = self.nominal[case]
        ills = {}
        for j, ill in enumerate(self.illuminants):
            g = a["gains"][:, j, :]
            ills[ill] = IlluminantSummary(
                delta_E00_mean=distribution(a["delta_E00_mean"][:, j]),
                delta_E00_max=distribution(a["delta_E00_max"][:, j]),
                white_balance_gain_R_over_G=distribution(g[:, 0] / g[:, 1]),
                white_balance_gain_B_over_G=distribution(g[:, 2] / g[:, 1]),
                noise_gain={ch: distribution(a["noise_gain"][:, j, i]) for i, ch in enumerate(CHANNELS)},
                grey_snr_db={ch: distribution(a["grey_snr_db"][:, j, i]) for i, ch in enumerate(CHANNELS)},
                nominal={
                    "delta_E00_mean": float(nom["delta_E00_mean"][0, j]),
                    "delta_E00_max": float(nom["delta_E00_max"][0, j]),
                    "white_balance_gain_R_over_G": float(nom["gains"][0, j, 0] / nom["gains"][0, j, 1]),
                    "white_balance_gain_B_over_G": float(nom["gains"][0, j, 2] / nom["gains"][0, j, 1]),
                    "noise_gain": {ch: float(nom["noise_gain"][0, j, i]) for i, ch in enumerate(CHANNELS)},
                },
            )
        passed = a["passed"]
        k = int(passed.sum())
        lo, hi = wilson_interval(k, self.trials)
        nominal_pass = bool(passes_spec(self.nominal, case, self.nominal["vora_value"], self.spec)[0])
        return CaseSummary(
            matrix=case,
            matrix_method=a["matrix_method"],
            yield_fraction=k / self.trials if self.trials else None,
            yield_interval_95=(lo, hi),
            units_passing=k,
            nominal_passes=nominal_pass,
            nominal_worst_mean_delta_E00=float(nom["delta_E00_mean"][0].max()),
            worst_mean_delta_E00=distribution(self.worst_mean(case)),
            illuminants=ills,
            ranking=self.ranking(case),
        )

    def vora_summary(self) -> dict:
        """The Vora value over the trials (:func:`distribution`) and the nominal design's, 0-1."""
        return {**distribution(self.vora_value), "nominal": float(self.nominal["vora_value"][0])}

    def _case_summary(self, case: str) -> dict:
        return self.case_summary(case).to_dict()

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
        return jsonable({
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
            "vora_value": self.vora_summary(),
            "worst_mean_delta_E00": top["worst_mean_delta_E00"],
            "illuminants": top["illuminants"],
            "ranking": top["ranking"],
            "ranking_vora_value": self.ranking(p, "vora_value"),
            "cases": cases,
            "parameters": params,
            "field": None if self.field is None else self.field.to_dict(),
            "units": {**_UNITS, **{k: parameter_unit(self.design, k) for k in self.tolerances}},
            "methods": {**_METHODS, "delta_E00": METHODS["delta_E00"], "vora_value": METHODS["vora_value"],
                        "matrix_cases": {c: _METHODS[c] for c in self.cases}},
            "notes": list(self.notes),
        })

    def to_json(self, *, trials: bool = False) -> str:
        """The summary as JSON text; with ``trials=True`` also every trial's values (column arrays)."""
        d = self.summary()
        if trials:
            d["trials_data"] = jsonable(self.trial_columns())
        return json_text(d)

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
        return tolerance_html(self)

    def __repr__(self) -> str:
        # one line: the generated repr printed every array and the whole design (a notebook computes
        # it beside the HTML view, a quarter of a second for 1000 trials)
        return (f"<ToleranceResult of {self.design.name!r}: {self.trials} of {self.trials_requested} trials, "
                f"seed {self.seed}, matrix {' and '.join(self.cases)}>")

