"""Fitting a camera design: the filter parameters (and a ΔE00 matrix) against the design's objective.

:func:`fit_design` moves the design's free parameters (bounded nonlinear
least squares, ``scipy.optimize.least_squares``, with the Jacobian from one
batched evaluation of all forward differences), optionally after a global
start (multi-start from a seeded Latin hypercube, or differential evolution
with a seed), with a tqdm progress bar, stoppable (Ctrl-C or a
``threading.Event``) with the best point so far kept. It returns a frozen
:class:`FitResult` that renders in a notebook and serialises to JSON. The
objectives are those of :meth:`workbench.analysis.evaluator.DesignEvaluator.residuals`.
"""

from __future__ import annotations

import math
import threading
import time
from dataclasses import dataclass, field, replace
from enum import IntEnum

import numpy as np
from scipy.optimize import differential_evolution, least_squares

from workbench.analysis.evaluator import DesignEvaluator, Measures, fitted_matrix
from workbench.analysis.measures import vora_value
from workbench.analysis.progress import progress_bar
from workbench.errors import WorkbenchError
from workbench.model.design import ACROSS_ILLUMINANTS, CHANNELS, Design
from workbench.optics.kinds import element_param_spec
from workbench.report.html import fit_result_html
from workbench.report.json_text import json_text
from scipy.optimize import minimize
from workbench.analysis.tolerance_draws import toleranced_parameters
from workbench.analysis.tolerance import run_tolerance
from workbench.analysis.tolerance_draws import sample_parameters
from workbench.model.design import ToleranceSpec

__all__ = ["FitResult", "FitStatus", "FIT_STATUS_TABLE", "fit_design", "FitStopped", "bound_costs",
           "bound_cost_text", "parameter_unit", "ACROSS_ILLUMINANTS", "fit_front", "non_dominated", "check_front", "fit_robust",
           "check_robust", "ROBUST_METHOD",
           "FRONT_METHOD"]


class FitStatus(IntEnum):
    """Why a fit ended: an integer code; words and exit status in :data:`FIT_STATUS_TABLE`."""

    CONVERGED = 0
    BUDGET_SPENT = 1
    TIME_LIMIT = 2
    STOPPED = 3
    INFEASIBLE = 4


#: The one table of status messages: code → (short name, message, command-line exit status).
FIT_STATUS_TABLE: dict[FitStatus, tuple[str, str, int]] = {
    FitStatus.CONVERGED: (
        "converged", "the best point passed the local solver's convergence test", 0),
    FitStatus.BUDGET_SPENT: (
        "budget spent", "the evaluation budget was spent before the best point passed the local "
        "convergence test; the best point found is kept", 3),
    FitStatus.TIME_LIMIT: (
        "time limit", "the time limit was reached before the best point passed the local "
        "convergence test; the best point found is kept", 4),
    FitStatus.STOPPED: (
        "stopped", "stopped by the user (Stop button or Ctrl-C); the best point found is kept", 130),
    FitStatus.INFEASIBLE: (
        "infeasible", "no parameter values tried gave a valid design (every evaluation failed); "
        "the start values are kept", 5),
}



BOUND_COSTS_METHOD = (
    "first-order change per unit of relaxing each bound a parameter ends at (a min lowered, a max "
    "raised), the other parameters off their bounds re-optimised: dx from the Gauss-Newton Hessian JᵀJ, "
    "objective change = its gradient·dx (the bound's Lagrange multiplier), ν and weighted mean ΔE00 "
    "changes = their gradients·dx; forward differences at the fitted point, matrix as in the objective")


class FitStopped(Exception):
    """Raised inside the objective to stop a fit; ``status`` says why."""

    def __init__(self, status: FitStatus, detail: str = ""):
        super().__init__(detail or FIT_STATUS_TABLE[status][1])
        self.status = status
        self.detail = detail


# --------------------------------------------------------------------------
# The fit
# --------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class FitResult:
    """The outcome of :func:`fit_design`: a frozen value that renders and serialises.

    ``parameters`` rows: name, unit, start, value, min, max, at_bound
    ('min', 'max' or None). ``status`` a :class:`FitStatus` (its words in
    :data:`FIT_STATUS_TABLE`: :attr:`status_name`, :attr:`status_message`);
    ``message`` the local solver's own words for its last run;
    ``budget`` the evaluation budget and ``time_limit_s`` the wall-time
    limit (None: none) that capped the whole fit.
    """

    design: Design
    start_design: Design
    parameters: tuple[dict, ...]
    before: Measures
    after: Measures
    objective: str
    cost_before: float
    cost_after: float
    status: FitStatus
    message: str
    evaluations: int
    seconds: float
    global_start: str
    seed: int
    notes: tuple[str, ...] = field(default=())
    budget: int = 0
    time_limit_s: float | None = None
    bound_costs: tuple[dict, ...] = ()
    across_illuminants: str = "weighted-mean"
    illuminant_weights: tuple[tuple[str, float], ...] = ()
    front: tuple[dict, ...] = ()
    robust: dict | None = None

    @property
    def converged(self) -> bool:
        return self.status == FitStatus.CONVERGED

    @property
    def status_name(self) -> str:
        return FIT_STATUS_TABLE[self.status][0]

    @property
    def status_message(self) -> str:
        return FIT_STATUS_TABLE[self.status][1]

    @property
    def exit_status(self) -> int:
        """The command line's exit status for this outcome (0 only when converged)."""
        return FIT_STATUS_TABLE[self.status][2]

    @property
    def residual_per_wavelength(self) -> np.ndarray:
        """(3, n): camera after balance and matrix minus the target, under the curve illuminant."""
        return self.after.curves - self.after.targets

    def to_dict(self) -> dict:
        return {
            "design": self.design.name,
            "objective": self.objective,
            "status": int(self.status),
            "status_name": self.status_name,
            "status_message": self.status_message,
            "message": self.message,
            "evaluations": self.evaluations,
            "budget": self.budget,
            "time_limit_s": self.time_limit_s,
            "seconds": self.seconds,
            "global_start": self.global_start,
            "seed": self.seed,
            "cost_before": self.cost_before,
            "cost_after": self.cost_after,
            "parameters": list(self.parameters),
            "parameters_at_bounds": [p["name"] for p in self.parameters if p["at_bound"]],
            "bound_costs": list(self.bound_costs),
            "bound_costs_method": BOUND_COSTS_METHOD,
            "across_illuminants": self.across_illuminants,
            "illuminant_weights": dict(self.illuminant_weights),
            "front": list(self.front),
            "robust": self.robust,
            "before": self.before.summary(),
            "after": self.after.summary(),
            "residual_per_wavelength": {
                "wavelength_nm": self.after.wavelengths.tolist(),
                **{ch: self.residual_per_wavelength[i].tolist() for i, ch in enumerate(CHANNELS)},
                "illuminant": self.after.curve_illuminant,
            },
            "per_sample": self.after.per_sample_table(),
            "methods": self.after.methods,
            "notes": list(self.notes),
        }

    def to_json(self) -> str:
        return json_text(self.to_dict())

    def _repr_html_(self) -> str:
        return fit_result_html(self)


def parameter_unit(design: Design, name: str) -> str:
    """The unit of the chain parameter ``element.key`` from its element kind's registry entry ('°' for degrees)."""
    element, _, key = name.rpartition(".")
    for e in design.chain:
        if e.name == element:
            spec = element_param_spec(e, key)
            if spec is not None:
                return {"deg": "°"}.get(spec.unit, spec.unit) or "1"
    return ""


class _Tracker:
    """Counts evaluations against the one budget and the time limit, keeps the best point.

    Every batch is refused before it is evaluated when it would overrun the
    budget (so a fit never spends more than its budget), when the time limit
    has passed or when the stop event is set: :class:`FitStopped` carries
    the reason. Points whose chain cannot be evaluated (a
    :class:`WorkbenchError`, e.g. crossing edges) or whose residuals are
    not finite get a large finite residual and never become the best point.
    """

    def __init__(self, objective, budget, progress, stop, callback=None, time_limit=None, t0=None):
        self.fun = objective
        self.callback = callback
        self.best_x = None
        self.best_cost = math.inf
        self.best_tag = None
        self.tag = None
        self.n = 0
        self.n_valid = 0
        self.budget = int(budget)
        self.stop = stop
        self.time_limit = time_limit
        self.t0 = time.perf_counter() if t0 is None else t0
        self.bad = None
        self.bar = None
        if progress:
            self.bar = progress_bar(total=self.budget, desc="fit", unit="eval", leave=False)

    def remaining(self) -> int:
        return self.budget - self.n

    def _evaluate(self, X) -> np.ndarray:
        try:
            r = self.fun(X)
        except WorkbenchError:
            if X.shape[0] == 1:
                return None
            rows = [self._evaluate(X[i:i + 1]) for i in range(X.shape[0])]
            m = next((q.shape[-1] for q in rows if q is not None), None)
            if m is None:
                return None
            return np.concatenate([q if q is not None else np.full((1, m), np.nan) for q in rows])
        return r

    def __call__(self, X, *, first=False) -> np.ndarray:
        """Residuals (k, m) for points X (k, n); ``first``: the start point, evaluated whatever the limits."""
        X = np.atleast_2d(X)
        k = X.shape[0]
        if not first:
            if self.stop is not None and self.stop.is_set():
                raise FitStopped(FitStatus.STOPPED)
            if self.time_limit is not None and time.perf_counter() - self.t0 >= self.time_limit:
                raise FitStopped(FitStatus.TIME_LIMIT)
            if self.n + k > self.budget:
                raise FitStopped(FitStatus.BUDGET_SPENT)
        r = self._evaluate(X)
        self.n += k
        if r is None:
            if self.bad is None:
                raise FitStopped(FitStatus.INFEASIBLE)
            r = np.broadcast_to(self.bad, (k, self.bad.size)).copy()
        ok = np.all(np.isfinite(r), axis=-1)
        if self.bad is None and np.any(ok):
            # a large finite residual for invalid points: ten times the first valid one
            first = r[np.argmax(ok)]
            self.bad = np.full(first.size, 10.0 * max(1.0, float(np.sqrt(first @ first))) / math.sqrt(first.size))
        if not np.all(ok):
            if self.bad is None:
                raise FitStopped(FitStatus.INFEASIBLE)
            r = np.where(ok[:, None], r, self.bad[None, :])
        self.n_valid += int(np.sum(ok))
        cost = np.where(ok, np.sum(r * r, axis=-1), np.inf)
        i = int(np.argmin(cost))
        if cost[i] < self.best_cost:
            self.best_cost = float(cost[i])
            self.best_x = np.array(X[i])
            self.best_tag = self.tag
        if self.bar is not None:
            self.bar.update(k)
            self.bar.set_postfix(cost=f"{self.best_cost:.4g}", refresh=False)
        if self.callback is not None:
            self.callback(self.n)
        return r

    def close(self):
        if self.bar is not None:
            self.bar.close()


# --------------------------------------------------------------------------
# The objective across illuminants, and the headline figures of a batch
# --------------------------------------------------------------------------

#: The exponent of the smooth maximum over illuminants (``across_illuminants = "worst"``).
WORST_P = 32


class _Objective:
    """The residual vector the fit minimises, for batches of points (B, n_free [+ matrix entries]).

    With the design's defaults it is :meth:`DesignEvaluator.residuals`.
    With illuminant weights ω_j (``mean-delta-e00`` objective) the block of
    illuminant j is scaled by √(J ω_j / Σω), so Σ r² = Σ_j (ω_j/Σω)·RMS_j².
    With ``worst``, Σ r² = G = (Σ_j (ω_j m_j)^p)^(1/p), p = :data:`WORST_P`,
    a smooth maximum of the weighted per-illuminant mean ΔE00 m_j (max ≤ G ≤
    J^(1/p)·max; for J = 3, within 3.5 %): r_jk = √(c_j w_k d_jk / Σw) with
    c_j = ω_j (ω_j m_j / G)^(p−1), since Σ_j c_j m_j = G^p / G^(p−1) = G.
    The noise term of ``noise_weight`` and the evaluator's extra blocks
    (:meth:`DesignEvaluator.extra_residuals`) are appended as in the
    evaluator.
    """

    def __init__(self, ev: DesignEvaluator, *, illuminant_weights=None, across="weighted-mean",
                 noise_weight=None, mix=None):
        self.ev = ev
        self.mix = mix
        fit = ev.design.fit
        names = ev.bench.illuminant_names
        w = dict(illuminant_weights or ())
        self.omega = np.array([float(w.get(n, 1.0)) for n in names])
        self.across = across
        self.noise_weight = fit.noise_weight if noise_weight is None else float(noise_weight)
        self.plain = (across == "weighted-mean" and np.all(self.omega == 1.0)
                      and self.noise_weight == fit.noise_weight)
        self.nf = len(ev.free)
        self.nm = ev._n_matrix_params()

    def parts(self, X):
        """Sensitivities (B, 3, n), balanced RGB (B, J, K, 3) and matrices (B, J, 3, 3) of points X."""
        ev, nf, nm = self.ev, self.nf, self.nm
        X = np.atleast_2d(np.asarray(X, dtype=float))
        S = ev.sensitivities(ev.values_of(X[:, :nf]))
        if S.ndim == 2:
            S = np.broadcast_to(S, (X.shape[0],) + S.shape)
        C, _ = ev.bench.balanced(S)
        J = len(ev.bench.illuminant_names)
        fit = ev.design.fit
        if nm:
            m = X[:, nf:nf + nm].reshape(X.shape[0], -1, 3, 3)
            M = np.broadcast_to(m, (X.shape[0], J, 3, 3))
        else:
            method = "least-squares" if fit.matrix == "delta-e00" else fit.matrix
            M = ev.bench.fit_matrices(C, method, fit.matrix_scope)
        return S, C, M

    def __call__(self, X) -> np.ndarray:
        if self.mix is None:
            return self._accuracy(X)
        # a point of the accuracy-noise front: (1 − t)·cost/cost₀ + t·NG²/NG₀², NG² = mean_ij ‖m_ij‖²
        t, e0, g0 = self.mix
        X = np.atleast_2d(np.asarray(X, dtype=float))
        _, _, M = self.parts(X)
        rn = np.linalg.norm(M, axis=-1).reshape(X.shape[0], -1) / math.sqrt(M.shape[-3] * 3)
        blocks = [math.sqrt(t) / g0 * rn]
        if t < 1:
            blocks.insert(0, math.sqrt((1 - t) / e0) * self._accuracy(X))
        return np.concatenate(blocks, axis=-1)

    def _accuracy(self, X) -> np.ndarray:
        if self.plain:
            return self.ev.residuals(X)
        X = np.atleast_2d(np.asarray(X, dtype=float))
        ev = self.ev
        S, C, M = self.parts(X)
        d = ev.bench.delta_e(C, M)                                  # (B, J, K)
        w = ev.bench.weights
        J = d.shape[1]
        om = self.omega / self.omega.sum()
        if self.across == "worst":
            m = np.einsum("bjk,k->bj", d, w) / w.sum()              # per-illuminant weighted mean
            a = np.maximum(self.omega * m, 1e-300)
            top = a.max(axis=1, keepdims=True)
            G = top[:, 0] * np.sum((a / top) ** WORST_P, axis=1) ** (1.0 / WORST_P)
            c = self.omega * (a / G[:, None]) ** (WORST_P - 1)
            r = np.sqrt(c[:, :, None] * w / w.sum() * d)
        else:
            r = d * np.sqrt(w / w.sum())[None, None, :] * np.sqrt(om)[None, :, None]
        parts = [r.reshape(r.shape[0], -1)]
        if self.noise_weight > 0:
            rn = np.linalg.norm(M, axis=-1) / math.sqrt(J * 3)
            parts.append(self.noise_weight * rn.reshape(rn.shape[0], -1))
        parts.extend(ev.extra_residuals(S))
        return np.concatenate(parts, axis=-1)

    def headline(self, X) -> dict:
        """For points X (B, n): ``cost`` Σr², ``vora_value``, ``mean_delta_E00`` (weighted over samples ×
        illuminants, as :attr:`Measures.weighted_mean_delta_E00`), ``mean_by_illuminant`` (B, J, sample-weighted) and
        ``noise_gain`` (B,) the largest row norm of the matrix."""
        X = np.atleast_2d(np.asarray(X, dtype=float))
        ev = self.ev
        S, C, M = self.parts(X)
        d = ev.bench.delta_e(C, M)
        w = ev.bench.weights
        r = self(X)
        rn = np.linalg.norm(M, axis=-1)
        return {
            "noise_gain_rms": np.sqrt(np.mean(rn.reshape(rn.shape[0], -1) ** 2, axis=-1)),
            "cost": np.sum(r * r, axis=-1),
            "vora_value": np.atleast_1d(vora_value(np.swapaxes(S, -1, -2), ev.cmfs, ev.rec, ev.view)),
            "mean_delta_E00": np.einsum("bjk,k->b", d, w) / (w.sum() * d.shape[1]),
            "mean_by_illuminant": np.einsum("bjk,k->bj", d, w) / w.sum(),
            "noise_gain": np.linalg.norm(M, axis=-1).max(axis=(-2, -1)),
        }


class _RobustObjective(_Objective):
    """The expected (or upper-tail) worst-light mean ΔE00 of units drawn from the design's tolerances.

    For a candidate x the matrix is the one its nominal design gets (the
    design's rule, fixed for its units, as a unit is calibrated with the
    nominal matrix); unit k has the parameters x + δ_k, δ_k drawn once from
    the ``[tolerance]`` distributions (common random numbers: the same δ_k
    for every x, so differences between candidates are not noise). A unit's
    score u_k = (Σ_j m_jk^p)^(1/p), the smooth maximum over the lights of
    its sample-weighted mean ΔE00. The cost is the mean of u_k
    (``percentile`` None) or, for a percentile P, the mean of the worst
    (100 − P) % of the units (the conditional value at risk, an upper bound
    of the P-th percentile): Σ r² with r_k = √(c_k u_k).
    """

    def __init__(self, ev: DesignEvaluator, deltas: dict, *, percentile=None):
        super().__init__(ev)
        self.deltas = {k: np.asarray(v, dtype=float) for k, v in deltas.items()}
        self.K = len(next(iter(self.deltas.values())))
        self.percentile = percentile
        self.nominal = ev.design.parameters()

    def unit_scores(self, X) -> np.ndarray:
        """u (B, K) for candidates X (B, n_free)."""
        ev, nf = self.ev, self.nf
        X = np.atleast_2d(np.asarray(X, dtype=float))
        B, K = X.shape[0], self.K
        _, _, M = self.parts(X)                                     # the nominal matrices (B, J, 3, 3)
        values = {}
        free = set(ev.free)
        for i, k in enumerate(ev.free):
            values[k] = np.repeat(X[:, i], K)
        for k, d in self.deltas.items():
            base = values[k] if k in free else np.full(B * K, self.nominal[k].value)
            values[k] = base + np.tile(d, B)
        S = ev.sensitivities(values)
        if S.ndim == 2:
            S = np.broadcast_to(S, (B * K,) + S.shape)
        C, _ = ev.bench.balanced(S)
        Mu = np.repeat(M, K, axis=0)
        d = ev.bench.delta_e(C, Mu)                                 # (B·K, J, samples)
        w = ev.bench.weights
        m = np.einsum("ujk,k->uj", d, w) / w.sum()                  # (B·K, J)
        top = m.max(axis=1, keepdims=True)
        u = top[:, 0] * np.sum((m / top) ** WORST_P, axis=1) ** (1.0 / WORST_P)
        return u.reshape(B, K)

    def __call__(self, X) -> np.ndarray:
        return tail_residuals(self.unit_scores(X), self.percentile)


def tail_residuals(u, percentile=None) -> np.ndarray:
    """Residuals (B, K) whose Σ r² over K units is the mean of the scores u (B, K) ≥ 0, or of their worst (100 − P) %."""
    u = np.asarray(u, dtype=float)
    K = u.shape[-1]
    if percentile is None:
        c = np.full_like(u, 1.0 / K)
    else:
        n_tail = max(1, int(math.ceil(K * (1 - percentile / 100.0))))
        rank = np.argsort(np.argsort(-u, axis=-1), axis=-1)
        c = np.where(rank < n_tail, 1.0 / n_tail, 0.0)
    return np.sqrt(c * u)


def bound_costs(objective: _Objective, x, lower, upper, at_bound, names, units) -> tuple[dict, ...]:
    """What each bound a parameter ends at costs: the first-order gain per unit of relaxing it.

    For parameter i at a bound, relaxing the bound by δ (lower min, higher
    max) and letting the parameters not at a bound re-optimise moves the
    solution by dx = δ·(e_i s_i − H_FF⁻¹ H_Fi s_i), H = JᵀJ the Gauss-Newton
    Hessian of the cost from one batch of forward differences (J the
    Jacobian of the residuals), F the parameters off their bounds, s_i −1
    for a min and +1 for a max. The objective changes by ∇f·dx (the bound's
    Lagrange multiplier; the envelope theorem), ν and mean ΔE00 by their
    gradients times dx.

    Returns
    -------
    tuple of dict
        name, unit, value, bound ('min'/'max'), direction ('lower'/'higher'),
        d_cost, d_vora, d_mean_delta_E00 per unit of the parameter; ranked,
        the largest gain in the objective first.

    References
    ----------
    Nocedal, J. & Wright, S. J. (2006). *Numerical Optimization*, 2nd ed.,
    § 12.8 (multipliers as sensitivities of the optimal value to the
    constraints) and § 10.3 (the Gauss-Newton Hessian).
    """
    x = np.asarray(x, dtype=float)
    nf = len(names)
    active = [i for i in range(nf) if at_bound[i]]
    if not active:
        return ()
    n = x.size
    span = np.concatenate([np.asarray(upper) - np.asarray(lower), np.ones(n - nf)])
    h = np.where(np.arange(n) < nf, 1e-5, 1e-6) * span
    inward = np.ones(n)
    inward[:nf] = np.where(x[:nf] + h[:nf] > upper, -1.0, 1.0)
    X = np.repeat(x[None], n + 1, axis=0)
    X[1 + np.arange(n), np.arange(n)] += inward * h
    R = objective(X)
    step = (inward * h)[:, None]
    Jt = (R[1:] - R[0]) / step                                   # (n, m): Jacobian transposed
    H = Jt @ Jt.T
    g = 2 * Jt @ R[0]
    head = objective.headline(X)
    grads = {k: (head[k][1:] - head[k][0]) / step[:, 0] for k in ("vora_value", "mean_delta_E00")}
    free = np.array([i not in active for i in range(n)])
    rows = []
    for i in active:
        s = -1.0 if at_bound[i] == "min" else 1.0
        dx = np.zeros(n)
        dx[i] = s
        if free.any():
            rhs = H[free][:, i] * s
            dx[free] = -np.linalg.lstsq(H[np.ix_(free, free)], rhs, rcond=1e-12)[0]
        rows.append({
            "name": names[i], "unit": units[i] or "1", "value": float(x[i]), "bound": at_bound[i],
            "direction": "lower" if s < 0 else "higher",
            "d_cost": float(g @ dx),
            "d_vora": float(grads["vora_value"] @ dx),
            "d_mean_delta_E00": float(grads["mean_delta_E00"] @ dx),
        })
    rows.sort(key=lambda r: r["d_cost"])
    return tuple(rows)


def bound_cost_text(row: dict) -> str:
    """One line: 'prism.green_red_width_nm 60 nm (max): −0.0021 objective, +0.0004 ν, −0.012 mean ΔE00 per nm higher'."""
    u = row["unit"]
    return (f"{row['name']} {row['value']:.6g} {u} ({row['bound']}): {row['d_cost']:+.3g} objective, "
            f"{row['d_vora']:+.3g} ν, {row['d_mean_delta_E00']:+.3g} mean ΔE00 per {u} {row['direction']}")


#: The local solver's convergence test (scipy.optimize.least_squares): relative change of the cost,
#: of the point, and the scaled gradient.
LOCAL_TOLERANCES = {"ftol": 1e-12, "xtol": 1e-10, "gtol": 1e-10}


def _local(track: _Tracker, u0, lo, hi, nf, span, base, iterations=None):
    """One bounded least-squares run in normalised coordinates u ∈ [0, 1] (filters) + raw matrix entries.

    Capped only by the tracker (the whole fit's budget and time): the
    solver's own evaluation limit is set beyond what is left.
    """
    def x_of(u):
        u = np.atleast_2d(u)
        return np.concatenate([base[:nf] + u[:, :nf] * span, u[:, nf:]], axis=1)

    def fun(u):
        return track(x_of(u))[0]

    def jac(u):
        h = np.where(np.arange(u.size) < nf, 1e-6, 1e-7)
        U = np.repeat(u[None], u.size + 1, axis=0)
        # step away from the upper bound when it would cross it
        sign = np.where(u + h > hi, -1.0, 1.0)
        U[1 + np.arange(u.size), np.arange(u.size)] += sign * h
        R = track(x_of(U))
        return ((R[1:] - R[0]) / (sign * h)[:, None]).T

    r = least_squares(fun, u0, jac=jac, bounds=(lo, hi), method="trf", x_scale=1.0,
                      max_nfev=(track.remaining() + 1) if iterations is None else iterations,
                      **LOCAL_TOLERANCES)
    return bool(r.success and r.status > 0), str(r.message).rstrip(".")


#: Iterations of the short local runs from each multi-start candidate before the best is run to convergence.
SHORT_RUN = 12

#: The quasi-Newton run's convergence test: L-BFGS-B's own, or a projected gradient (normalised
#: coordinates: a parameter's whole range = 1) no larger than this fraction of the cost.
PROJECTED_GRADIENT_TOL = 1e-4


def _local_quasi_newton(track: _Tracker, u0, lo, hi, nf, span, base, iterations=None):
    """One bounded quasi-Newton run (L-BFGS-B) on the cost Σr², the gradient from one batch of forward differences.

    For large-residual objectives (ΔE00 of order 1) where Gauss-Newton
    steps crawl: L-BFGS-B builds the curvature the Gauss-Newton Hessian
    JᵀJ lacks. Converged when L-BFGS-B says so, or when it stops at the
    precision of the differences with a projected gradient ≤
    :data:`PROJECTED_GRADIENT_TOL` × the cost.

    References
    ----------
    Byrd, R. H., Lu, P., Nocedal, J. & Zhu, C. (1995). A limited memory
    algorithm for bound constrained optimization. *SIAM J. Sci. Comput.*
    16(5), 1190-1208.
    """
    n = u0.size

    def fg(u):
        h = np.where(np.arange(n) < nf, 1e-6, 1e-7)
        sign = np.where(u + h > hi, -1.0, 1.0)
        U = np.repeat(u[None], n + 1, axis=0)
        U[1 + np.arange(n), np.arange(n)] += sign * h
        R = track(np.concatenate([base[:nf] + U[:, :nf] * span, U[:, nf:]], axis=1))
        f = np.sum(R * R, axis=-1)
        return float(f[0]), (f[1:] - f[0]) / (sign * h)

    bounds = [(float(a) if np.isfinite(a) else None, float(b) if np.isfinite(b) else None) for a, b in zip(lo, hi)]
    r = minimize(fg, u0, jac=True, method="L-BFGS-B", bounds=bounds,
                 options={"maxfun": track.remaining() + 1,
                          "maxiter": 10 ** 9 if iterations is None else iterations, "ftol": 1e-12,
                          "gtol": 1e-9, "maxcor": 20})
    g = np.asarray(r.jac, dtype=float)
    u = r.x
    # the projected gradient: components pushing outward at an active bound do not count
    pg = np.where(((u <= lo) & (g > 0)) | ((u >= hi) & (g < 0)), 0.0, g)
    small = float(np.max(np.abs(pg))) <= PROJECTED_GRADIENT_TOL * max(float(r.fun), 1e-12)
    msg = str(r.message).rstrip(".: ")
    if not r.success and small:
        msg += f"; projected gradient ≤ {PROJECTED_GRADIENT_TOL:g} × cost"
    return bool(r.success or small), msg


def check_fit_options(design: Design, *, illuminant_weights=None, across_illuminants=None):
    """The illuminant weights (dict) and rule of a fit, checked: one clear :class:`WorkbenchError` each.

    Call it before any work (the command line does, before its output
    folder); :func:`fit_design` calls it too.
    """
    fit = design.fit
    weights = dict(fit.illuminant_weights if illuminant_weights is None else illuminant_weights)
    across = across_illuminants or fit.across_illuminants
    if across not in ACROSS_ILLUMINANTS:
        raise WorkbenchError(f"'across_illuminants' must be one of {', '.join(ACROSS_ILLUMINANTS)} (got {across!r})")
    names = list(fit.illuminants) or [i.name for i in design.illuminants] or ["D65"]
    for k, v in weights.items():
        if k not in names:
            raise WorkbenchError(f"'illuminant weight {k}' must name one of the fit's illuminants "
                                 f"({', '.join(names)}) (got {k!r})")
        if isinstance(v, bool) or not (isinstance(v, (int, float)) and math.isfinite(v) and v > 0):
            raise WorkbenchError(f"'illuminant weight {k}' must be a number > 0 (got {v!r})")
    if (across == "worst" or any(v != 1 for v in weights.values())) and fit.objective != "mean-delta-e00":
        raise WorkbenchError(f"{design.source or design.name}: illuminant weights and the worst-illuminant "
                             f"objective need [fit] objective = \"mean-delta-e00\" (got {fit.objective!r})")
    return weights, across


def fit_design(design: Design, *, progress: bool = True, stop: threading.Event | None = None,
               evaluator: DesignEvaluator | None = None, global_start: str | None = None,
               seed: int | None = None, max_evaluations: int | None = None,
               time_limit: float | None = None, callback=None, illuminant_weights=None,
               across_illuminants: str | None = None, _mix=None, _robust=None) -> FitResult:
    """Fit the design's free parameters (and a ΔE00 matrix when asked) to its objective.

    Parameters
    ----------
    design : Design
        With at least one ``free = true`` parameter.
    progress : bool
        Show a tqdm progress bar (terminal or notebook); its total is the
        evaluation budget.
    stop : threading.Event, optional
        Set it from another thread (a Stop button) to end the fit; Ctrl-C
        does the same. The best point so far is kept (status
        ``FitStatus.STOPPED``).
    evaluator : DesignEvaluator, optional
        One already made for this design file, in any parameter state, to
        skip reading the files again; the fit starts from ``design``'s
        values (see :meth:`DesignEvaluator.with_design`).
    callback : callable, optional
        Called with the running number of evaluations after each batch (a
        notebook progress bar).
    global_start, seed, max_evaluations
        Override the design's ``[fit]`` values. ``max_evaluations`` caps the
        whole fit — global search, every local run and every Jacobian
        column counted — and nothing else caps it.
    illuminant_weights : dict, optional
        Weight per illuminant name (default: the design's ``[fit]
        illuminant_weights``, else 1 each); needs ``mean-delta-e00``.
    across_illuminants : {'weighted-mean', 'worst'}, optional
        How the illuminants combine (default: the design's): the weighted
        mean, or a smooth maximum of the weighted per-illuminant mean ΔE00
        (see :class:`_Objective`); ``worst`` needs ``mean-delta-e00``.
    time_limit : float, optional
        Wall-time limit of the whole fit in s. The clock (also
        ``FitResult.seconds``) starts after the design is read and the start
        judged, and stops when the search ends, before the final measures.

    Returns
    -------
    FitResult
        ``status`` ``CONVERGED`` only when the best point found came from a
        local run that passed its convergence test.

    References
    ----------
    Branch, M. A., Coleman, T. F. & Li, Y. (1999). A subspace, interior, and
    conjugate gradient method for large-scale bound-constrained minimization
    problems. *SIAM J. Sci. Comput.* 21(1), 1-23 (``least_squares``, 'trf').
    Storn, R. & Price, K. (1997). Differential evolution. *J. Global Optim.*
    11, 341-359 (the optional global start).
    McKay, M. D., Beckman, R. J. & Conover, W. J. (1979). *Technometrics* 21(2),
    239-245 (Latin hypercube starts).
    docs/methods.md §13.
    """
    if evaluator is None:
        ev = DesignEvaluator(design)
    else:
        ev = evaluator if evaluator.design == design else evaluator.with_design(design)
    fit = design.fit
    gs = global_start or fit.global_start
    seed = fit.seed if seed is None else seed
    budget = fit.max_evaluations if max_evaluations is None else max_evaluations
    if isinstance(budget, bool) or not isinstance(budget, (int, np.integer)) or budget < 1:
        raise WorkbenchError(f"'max_evaluations' must be a whole number >= 1 (got {budget!r})")
    if time_limit is not None and not (isinstance(time_limit, (int, float)) and math.isfinite(time_limit)
                                       and time_limit > 0):
        raise WorkbenchError(f"'time_limit' must be a number of seconds > 0 (got {time_limit!r})")
    fit_weights, across = check_fit_options(design, illuminant_weights=illuminant_weights,
                                            across_illuminants=across_illuminants)
    nf = len(ev.free)
    if nf == 0:
        raise WorkbenchError(f"{design.source or design.name}: no free parameters to fit "
                             "(set free = true with min and max on at least one)")
    start = ev.start
    before = ev.measures()
    t0 = time.perf_counter()           # the clock of the time limit and of ``seconds``: the search only
    span = ev.upper - ev.lower
    base = ev.lower
    u_start = (start - base) / span
    nm = ev._n_matrix_params()
    if nm:
        m0 = before.matrices
        m0 = m0[0].ravel() if fit.matrix_scope == "shared" else m0.ravel()
    else:
        m0 = np.zeros(0)
    lo = np.concatenate([np.zeros(nf), np.full(nm, -np.inf)])
    hi = np.concatenate([np.ones(nf), np.full(nm, np.inf)])
    x_start = np.concatenate([start, m0])
    if _robust is not None:
        objective = _RobustObjective(ev, _robust["deltas"], percentile=_robust.get("percentile"))
    else:
        objective = _Objective(ev, illuminant_weights=fit_weights, across=across, mix=_mix)
    track = _Tracker(objective, budget, progress, stop, callback, time_limit, t0)
    track.tag = "start"
    status, message = FitStatus.BUDGET_SPENT, ""
    converged_runs: set = set()
    cost_before = math.inf
    try:
        r0 = track(x_start[None], first=True)[0]
        cost_before = float(r0 @ r0) if track.best_x is not None else math.inf
        starts = [np.concatenate([u_start, m0])]
        track.tag = "global"
        if gs == "multi-start":
            from scipy.stats import qmc  # late: scipy.stats takes ~0.5 s to import; only multi-start needs it

            pts = qmc.LatinHypercube(d=nf, seed=seed).random(max(1, fit.starts))
            X = np.concatenate([base + pts * span, np.broadcast_to(m0, (len(pts), nm))], axis=1)
            r = track(X)
            order = np.argsort(np.sum(r * r, axis=-1))[:3]
            starts += [np.concatenate([pts[i], m0]) for i in order]
        elif gs == "differential-evolution":
            share = track.n + budget // 2     # the global search may spend half the budget

            def de_cost(U):
                U = np.atleast_2d(U.T)
                if track.n + len(U) > share:
                    raise _ShareSpent
                X = np.concatenate([base + U * span, np.broadcast_to(m0, (len(U), nm))], axis=1)
                r = track(X)
                return np.sum(r * r, axis=-1)

            try:
                differential_evolution(de_cost, [(0, 1)] * nf, seed=seed, vectorized=True,
                                       maxiter=100000, popsize=10, polish=False, tol=1e-8,
                                       updating="deferred", x0=np.clip(u_start, 0, 1))
            except _ShareSpent:
                pass
            bx = track.best_x
            starts = [np.concatenate([(bx[:nf] - base) / span, m0])]
        local = _local_quasi_newton if (fit.objective == "mean-delta-e00" or _robust is not None) else _local
        if len(starts) > 1:
            # a short local run from each candidate, then the best point found run to convergence
            for i, u0 in enumerate(starts):
                track.tag = ("short", i)
                ok, message = local(track, np.clip(u0, lo, hi), lo, hi, nf, span, base, iterations=SHORT_RUN)
                if ok:
                    converged_runs.add(("short", i))
            bx = track.best_x
            starts = [np.concatenate([(bx[:nf] - base) / span, bx[nf:]])]
        for i, u0 in enumerate(starts):
            track.tag = ("local", i)
            ok, message = local(track, np.clip(u0, lo, hi), lo, hi, nf, span, base)
            if ok:
                converged_runs.add(("local", i))
                # the run started from the best point so far: when it found nothing better, that
                # point (evaluated earlier under another tag) is the one that passed the test
                converged_runs.add(track.best_tag)
        status = FitStatus.CONVERGED if track.best_tag in converged_runs else FitStatus.BUDGET_SPENT
    except FitStopped as e:
        status = e.status
        if status in (FitStatus.BUDGET_SPENT, FitStatus.TIME_LIMIT) and track.best_tag in converged_runs:
            status = FitStatus.CONVERGED
        message = e.detail or FIT_STATUS_TABLE[status][0]
    except KeyboardInterrupt:
        status, message = FitStatus.STOPPED, "Ctrl-C"
    finally:
        track.close()
    seconds = time.perf_counter() - t0
    if track.best_x is None:        # not one valid evaluation, the start included
        status = FitStatus.INFEASIBLE
    x = track.best_x if track.best_x is not None else x_start
    values = dict(zip(ev.free, (float(v) for v in x[:nf])))
    values = {k: float(np.clip(v, ev.lower[i], ev.upper[i])) for i, (k, v) in enumerate(values.items())}
    fitted = design.with_values(values)
    if nm:
        m = x[nf:].reshape(-1, 3, 3)
        mats = np.broadcast_to(m, (len(ev.bench.illuminant_names), 3, 3))
        after = ev.measures(values, matrices=mats)
        after = replace(after, matrix_method="delta-e00", methods={**after.methods, "matrix": f"delta-e00, {fit.matrix_scope}"})
    else:
        after = ev.measures(values)
    stored = fitted_matrix(after)
    fitted = replace(fitted, matrix=stored)
    span_tol = 1e-6
    rows = []
    x_final = np.concatenate([np.array([values[k] for k in ev.free]), x[nf:]])
    flags = []
    for i, k in enumerate(ev.free):
        v = values[k]
        flags.append("min" if v - ev.lower[i] <= span_tol * span[i]
                     else ("max" if ev.upper[i] - v <= span_tol * span[i] else None))
    costs = ()
    if status != FitStatus.INFEASIBLE and any(flags):
        try:
            costs = bound_costs(objective, x_final, ev.lower, ev.upper, flags, ev.free,
                                [parameter_unit(design, k) for k in ev.free])
        except WorkbenchError:
            costs = ()
    for i, k in enumerate(ev.free):
        v = values[k]
        at = "min" if v - ev.lower[i] <= span_tol * span[i] else ("max" if ev.upper[i] - v <= span_tol * span[i] else None)
        rows.append({"name": k, "unit": parameter_unit(design, k), "start": float(start[i]), "value": v,
                     "min": float(ev.lower[i]), "max": float(ev.upper[i]), "at_bound": at})
    return FitResult(
        design=fitted, start_design=design, parameters=tuple(rows), before=before, after=after,
        objective=fit.objective, cost_before=cost_before, cost_after=float(track.best_cost),
        status=status, message=str(message), evaluations=track.n, seconds=seconds,
        global_start=gs, seed=seed, notes=ev.notes, budget=int(budget), time_limit_s=time_limit,
        bound_costs=costs, across_illuminants=across,
        illuminant_weights=tuple((n, float(fit_weights.get(n, 1.0))) for n in ev.bench.illuminant_names),
    )


class _ShareSpent(Exception):
    """The global search has spent its share of the budget."""


# --------------------------------------------------------------------------
# Accuracy against noise: the front
# --------------------------------------------------------------------------

FRONT_METHOD = (
    "weighted sums (1 − t)·cost/cost₀ + t·NG²/NG₀² for t evenly spaced in [0, 1], cost the design's "
    "objective (cost₀ at the accuracy fit), NG the noise gain = RMS row norm of the matrix over channels "
    "and illuminants (the factor on equal, independent channel noise; NG₀ at the accuracy fit); each "
    "point fitted from the one before; points dominated in (objective cost, NG) dropped")


def _front_point(m: Measures, t: float, res: FitResult, accuracy: _Objective) -> dict:
    rn = np.linalg.norm(m.matrices, axis=-1)
    x = np.array([[p["value"] for p in res.parameters]])
    r = accuracy(x)[0]
    return {
        "t": float(t),
        "accuracy_cost": float(r @ r),
        "mean_delta_E00": float(np.mean(m.per_sample)),
        "worst_illuminant_mean_delta_E00": float(max(d["mean"] for d in m.delta_E00.values())),
        "noise_gain_rms": float(np.sqrt(np.mean(rn ** 2))),
        "noise_gain_max": float(np.max(rn)),
        "vora_value": float(m.vora_value),
        "status": res.status_name,
        "values": {p["name"]: p["value"] for p in res.parameters},
    }


def check_front(design: Design) -> None:
    """Refuse, in one line, a design whose accuracy-noise front cannot be fitted."""
    if design.fit.matrix not in ("least-squares", "white-preserving"):
        raise WorkbenchError(f"'--front' needs a matrix computed by its rule ([fit] matrix = \"least-squares\" or "
                             f"\"white-preserving\"); a ΔE00 matrix is fitted freely and shrinks to zero at the "
                             f"noise-only end (got {design.fit.matrix!r})")
    if not design.free_parameters():
        raise WorkbenchError(f"'--front' needs free parameters: {design.source or design.name} has none "
                             "(set free = true with min and max on at least one)")


def non_dominated(points, keys=("mean_delta_E00", "noise_gain_rms")) -> list[bool]:
    """For each point, True when no other point is as good in every key and better in one (smaller is better)."""
    V = np.array([[p[k] for k in keys] for p in points], dtype=float)
    out = []
    for i in range(len(V)):
        dominated = np.any(np.all(V <= V[i], axis=1) & np.any(V < V[i], axis=1))
        out.append(not bool(dominated))
    return out


def fit_front(design: Design, points: int, *, evaluator: DesignEvaluator | None = None, progress: bool = True,
              stop: threading.Event | None = None, max_evaluations: int | None = None, callback=None,
              accuracy_fit: FitResult | None = None) -> tuple[dict, ...]:
    """The trade-off between accuracy (mean ΔE00) and noise gain: ``points`` fits along it.

    Parameters
    ----------
    design : Design
        With free parameters and a matrix computed by its rule
        (``least-squares`` or ``white-preserving``).
    points : int
        Number of points, ≥ 2; the first is the accuracy fit (t = 0), the
        last the noise-only fit (t = 1).
    max_evaluations : int, optional
        The budget of each point's fit (default the design's).
    accuracy_fit : FitResult, optional
        The t = 0 fit when already done (the command's own fit).

    Returns
    -------
    tuple of dict
        The points non-dominated in (``accuracy_cost``, ``noise_gain_rms``), t rising:
        ``t``, ``accuracy_cost`` (Σr² of the design's objective), ``mean_delta_E00``
        (unweighted mean over samples × illuminants), ``worst_illuminant_mean_delta_E00``,
        ``noise_gain_rms``, ``noise_gain_max``, ``vora_value``, ``status``
        and the fitted ``values``. Method: :data:`FRONT_METHOD`.

    References
    ----------
    Miettinen, K. (1999). *Nonlinear Multiobjective Optimization*. Kluwer,
    § 3.1 (the weighting method; its solutions are Pareto optimal).
    """
    if isinstance(points, bool) or not isinstance(points, (int, np.integer)) or points < 2:
        raise WorkbenchError(f"'front' must be a whole number of points >= 2 (got {points!r})")
    check_front(design)
    ev = evaluator if evaluator is not None else DesignEvaluator(design)
    first = accuracy_fit or fit_design(design, progress=progress, stop=stop, evaluator=ev,
                                       max_evaluations=max_evaluations, callback=callback)
    accuracy = _Objective(ev, illuminant_weights=dict(first.illuminant_weights), across=first.across_illuminants)
    e0 = max(first.cost_after, 1e-12)
    out = [_front_point(first.after, 0.0, first, accuracy)]
    g0 = max(out[0]["noise_gain_rms"], 1e-12)
    current = first.design
    for t in np.linspace(0.0, 1.0, points)[1:]:
        if stop is not None and stop.is_set():
            break
        r = fit_design(replace(current, matrix=None), progress=progress, stop=stop, evaluator=ev,
                       global_start="none", max_evaluations=max_evaluations, callback=callback,
                       _mix=(float(t), e0, g0))
        m = ev.with_design(r.design).measures()
        out.append(_front_point(m, float(t), r, accuracy))
        current = r.design
    keep = non_dominated(out, ("accuracy_cost", "noise_gain_rms"))
    return tuple(p for p, k in zip(out, keep) if k)


# --------------------------------------------------------------------------
# Designs that survive their tolerances
# --------------------------------------------------------------------------

ROBUST_METHOD = (
    "the fit's objective replaced by the expected (or, for a percentile P, the mean of the worst (100 − P) %, "
    "the conditional value at risk) worst-light mean ΔE00 of units drawn from the [tolerance] distributions, "
    "each unit with the nominal design's matrix (the fixed-matrix case), the same draws for every candidate "
    "(common random numbers); started from the nominal fit; the yield then checked by the tolerance Monte "
    "Carlo on fresh draws (another seed) for both designs, with its 95 % Wilson interval")


def check_robust(design: Design, *, draws=None, percentile=None) -> None:
    """Refuse, in one line, a robust fit that cannot be made."""
    if draws is not None and (isinstance(draws, bool) or not isinstance(draws, (int, np.integer)) or draws < 2):
        raise WorkbenchError(f"'--robust-draws' must be a whole number >= 2 (got {draws!r})")
    if percentile is not None and not (isinstance(percentile, (int, float)) and 0 < percentile < 100):
        raise WorkbenchError(f"'--robust-percentile' must be a number in (0, 100) (got {percentile!r})")
    if design.tolerance == ToleranceSpec():
        raise WorkbenchError(f"'--robust' needs the design's [tolerance] specification (max_mean_delta_E00, "
                             f"min_vora) to judge the yield against: {design.source or design.name} has none "
                             "(or only its default values)")
    if not toleranced_parameters(design):
        raise WorkbenchError(f"'--robust' needs toleranced parameters: {design.source or design.name} gives no "
                             "parameter a tolerance = { distribution, width } table")
    if not design.free_parameters():
        raise WorkbenchError(f"'--robust' needs free parameters: {design.source or design.name} has none")


def fit_robust(design: Design, *, draws: int = 32, percentile: float | None = None, seed: int | None = None,
               evaluator: DesignEvaluator | None = None, progress: bool = True,
               stop: threading.Event | None = None, max_evaluations: int | None = None,
               time_limit: float | None = None, nominal: FitResult | None = None,
               check_trials: int = 1000, callback=None) -> FitResult:
    """A design that survives its tolerances: fit the tolerance-averaged objective, then check the yield.

    Parameters
    ----------
    design : Design
        With free parameters and toleranced parameters.
    draws : int
        Units drawn once from the tolerances (common random numbers).
    percentile : float, optional
        In (0, 100): minimise the mean of the worst (100 − P) % of the units
        instead of the mean of all.
    seed : int, optional
        Of the draws (default the design's ``[fit] seed``); the yield check
        uses ``seed + 1`` (fresh draws).
    max_evaluations : int, optional
        Budget in unit evaluations (default 40 × the design's budget).
    nominal : FitResult, optional
        The nominal fit to start from (made when None).
    check_trials : int
        Units of the final yield check, for both designs.

    Returns
    -------
    FitResult
        Of the robust design, with ``robust`` = {method, draws, percentile,
        seed, nominal: {...}, robust: {...}} where each side holds
        ``yield``, ``yield_interval_95`` (Wilson), ``mean_delta_E00`` by
        illuminant (nominal design), ``vora_value`` and ``noise_gain``.

    References
    ----------
    Rockafellar, R. T. & Uryasev, S. (2000). Optimization of conditional
    value-at-risk. *J. Risk* 2(3), 21-41.
    Wilson, E. B. (1927). *J. Am. Stat. Assoc.* 22, 209-212.
    """
    check_robust(design, draws=draws, percentile=percentile)
    ev = evaluator if evaluator is not None else DesignEvaluator(design)
    seed = design.fit.seed if seed is None else seed
    if nominal is None:
        nominal = fit_design(design, progress=progress, stop=stop, evaluator=ev, time_limit=time_limit,
                             callback=callback)
    start = replace(nominal.design, matrix=None)
    drawn = sample_parameters(start, draws, seed)
    nominal_values = start.parameters()
    deltas = {k: v - nominal_values[k].value for k, v in drawn.items()}
    budget = max_evaluations if max_evaluations is not None else 40 * design.fit.max_evaluations
    res = fit_design(start, progress=progress, stop=stop, evaluator=ev, global_start="none",
                     max_evaluations=budget // draws, time_limit=time_limit, callback=callback,
                     _robust={"deltas": deltas, "percentile": percentile})

    def side(fr: FitResult) -> dict:
        t = run_tolerance(fr.design, trials=check_trials, seed=seed + 1, matrix="fixed", field=False,
                          progress=False, evaluator=ev.with_design(replace(fr.design, matrix=None)))
        summ = t.summary()
        a = fr.after
        return {
            "yield": summ["yield"], "yield_interval_95": summ["yield_interval_95"],
            "mean_delta_E00": {ill: a.delta_E00[ill]["mean"] for ill in a.illuminants},
            "worst_mean_delta_E00": max(a.delta_E00[ill]["mean"] for ill in a.illuminants),
            "vora_value": a.vora_value,
            "noise_gain": float(np.max(np.linalg.norm(a.matrices, axis=-1))),
        }

    info = {
        "method": ROBUST_METHOD, "draws": int(draws), "percentile": percentile, "seed": int(seed),
        "check_trials": int(check_trials), "check_seed": int(seed + 1),
        "spec": {"max_mean_delta_E00": design.tolerance.max_mean_delta_E00, "min_vora": design.tolerance.min_vora},
        "nominal": side(nominal), "robust": side(res),
    }
    return replace(res, start_design=design, robust=info,
                   evaluations=res.evaluations * draws, budget=(budget // draws) * draws)
