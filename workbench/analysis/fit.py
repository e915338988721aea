"""Fitting a camera design: the filter parameters (and a ΔE00 matrix) against the design's objective.

:func:`fit_design` moves the design's free parameters (bounded nonlinear
least squares, ``scipy.optimize.least_squares``, with the Jacobian from one
batched evaluation of all forward differences), optionally after a global
start (multi-start from a seeded Latin hypercube, or differential evolution
with a seed), with a tqdm progress bar, stoppable (Ctrl-C or a
``threading.Event``) with the best point so far kept. It returns a frozen
:class:`FitResult` that renders in a notebook and serialises to JSON. The
objectives are those of :meth:`workbench.analysis.evaluator.DesignEvaluator.residuals`.

The result types live in :mod:`workbench.analysis.fit_result`, the
objectives and bound costs in :mod:`workbench.analysis.fit_objective`, the
front and robust fits in :mod:`workbench.analysis.fit_modes`.
"""

from __future__ import annotations

import math
import threading
import time
from dataclasses import replace

import numpy as np
from scipy.optimize import differential_evolution, least_squares, minimize

from workbench.analysis.evaluator import DesignEvaluator, fitted_matrix
from workbench.analysis.fit_objective import SMOOTHNESS_METHOD, Objective, RobustObjective, bound_costs
from workbench.analysis.fit_result import FIT_STATUS_TABLE, FitResult, FitStatus, FitStopped, parameter_unit
from workbench.analysis.progress import progress_bar
from workbench.analysis.threads import one_blas_thread
from workbench.errors import WorkbenchError
from workbench.model.design import ACROSS_ILLUMINANTS, Design

__all__ = ["fit_design", "check_fit_options", "LOCAL_TOLERANCES", "ACROSS_ILLUMINANTS",
           # re-exported from fit_result / fit_objective (their homes)
           "FitResult", "FitStatus", "FitStopped", "parameter_unit", "bound_costs"]


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
        test = (f"converged by the projected-gradient test (‖g‖∞ ≤ {PROJECTED_GRADIENT_TOL:g} × cost, "
                "normalised coordinates)")
        if "ABNORMAL" in msg.upper():
            # SciPy's "ABNORMAL…" (line search failed): at a minimum the cost no longer falls measurably
            msg = "L-BFGS-B line search stopped at the precision of the finite differences; " + test
        else:
            msg = f"L-BFGS-B stopped ({msg}); " + test
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


@one_blas_thread()
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
        (see :class:`Objective`); ``worst`` needs ``mean-delta-e00``.
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

    Notes
    -----
    Runs with one BLAS thread (:func:`workbench.analysis.threads.one_blas_thread`):
    on its small arrays idle BLAS workers cost more than they give.
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
        objective = RobustObjective(ev, _robust["deltas"], percentile=_robust.get("percentile"))
    else:
        objective = Objective(ev, illuminant_weights=fit_weights, across=across, mix=_mix)
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
        if status == FitStatus.STOPPED:
            # stopped (Ctrl-C, SIGTERM, Stop) before the start point's evaluation finished: the start is kept
            message = f"{message}; stopped before the first evaluation finished, the start values are kept"
        else:
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
    smoothness = None
    if objective.smoothness is not None and status != FitStatus.INFEASIBLE:
        (c0, c1), (s0, s1) = objective.split(np.stack([x_start, x_final]))
        smoothness = {"weight": objective.smoothness.weight, "elements": list(objective.smoothness.names),
                      "colour_cost_before": float(c0), "colour_cost_after": float(c1),
                      "smoothness_cost_before": float(s0), "smoothness_cost_after": float(s1),
                      "method": SMOOTHNESS_METHOD}
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
        smoothness=smoothness,
    )



class _ShareSpent(Exception):
    """The global search has spent its share of the budget."""

