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

from workbench.analysis.evaluator import DesignEvaluator, Measures, fitted_matrix
from workbench.errors import WorkbenchError
from workbench.model.design import CHANNELS, Design
from workbench.report.html import fit_result_html
from workbench.report.json_text import json_text

__all__ = ["FitResult", "FitStatus", "FIT_STATUS_TABLE", "fit_design", "FitStopped"]


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
    """The unit of the chain parameter ``element.key`` from the element type's schema ('°' for degrees)."""
    from workbench.model.design import ELEMENT_TYPES

    element, _, key = name.rpartition(".")
    for e in design.chain:
        if e.name == element:
            spec = ELEMENT_TYPES.get(e.type, ({}, {}))[0].get(key)
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
            from tqdm.auto import tqdm

            self.bar = tqdm(total=self.budget, desc="fit", unit="eval", leave=False)

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


def _local(track: _Tracker, u0, lo, hi, nf, span, base):
    """One bounded least-squares run in normalised coordinates u ∈ [0, 1] (filters) + raw matrix entries.

    Capped only by the tracker (the whole fit's budget and time): the
    solver's own evaluation limit is set beyond what is left.
    """
    from scipy.optimize import least_squares

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
                      xtol=1e-10, ftol=1e-12, gtol=1e-10, max_nfev=track.remaining() + 1)
    return r, x_of(r.x)[0]


def fit_design(design: Design, *, progress: bool = True, stop: threading.Event | None = None,
               evaluator: DesignEvaluator | None = None, global_start: str | None = None,
               seed: int | None = None, max_evaluations: int | None = None,
               time_limit: float | None = None, callback=None) -> FitResult:
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
    track = _Tracker(ev.residuals, budget, progress, stop, callback, time_limit, t0)
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
            from scipy.stats import qmc

            pts = qmc.LatinHypercube(d=nf, seed=seed).random(max(1, fit.starts))
            X = np.concatenate([base + pts * span, np.broadcast_to(m0, (len(pts), nm))], axis=1)
            r = track(X)
            order = np.argsort(np.sum(r * r, axis=-1))[:3]
            starts += [np.concatenate([pts[i], m0]) for i in order]
        elif gs == "differential-evolution":
            from scipy.optimize import differential_evolution

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
        for i, u0 in enumerate(starts):
            track.tag = ("local", i)
            r, _ = _local(track, np.clip(u0, lo, hi), lo, hi, nf, span, base)
            message = str(r.message).rstrip(".")
            if r.success and r.status > 0:
                converged_runs.add(("local", i))
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
    )


class _ShareSpent(Exception):
    """The global search has spent its share of the budget."""
