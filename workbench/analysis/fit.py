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

import json
import math
import threading
import time
from dataclasses import dataclass, field, replace

import numpy as np

from workbench.analysis.evaluator import DesignEvaluator, Measures, fitted_matrix
from workbench.errors import WorkbenchError
from workbench.model.design import CHANNELS, Design

__all__ = ["FitResult", "fit_design", "FitStopped"]


class FitStopped(Exception):
    """Raised inside the objective to stop a fit (Ctrl-C or the stop event)."""


# --------------------------------------------------------------------------
# The fit
# --------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class FitResult:
    """The outcome of :func:`fit_design`: a frozen value that renders and serialises.

    ``parameters`` rows: name, start, value, min, max, at_bound ('min',
    'max' or None). ``status``: 'converged', 'not converged' or
    'interrupted'; ``message`` the optimiser's words.
    """

    design: Design
    start_design: Design
    parameters: tuple[dict, ...]
    before: Measures
    after: Measures
    objective: str
    cost_before: float
    cost_after: float
    status: str
    message: str
    evaluations: int
    seconds: float
    global_start: str
    seed: int
    notes: tuple[str, ...] = field(default=())

    @property
    def converged(self) -> bool:
        return self.status == "converged"

    @property
    def residual_per_wavelength(self) -> np.ndarray:
        """(3, n): camera after balance and matrix minus the target, under the curve illuminant."""
        return self.after.curves - self.after.targets

    def to_dict(self) -> dict:
        return {
            "design": self.design.name,
            "objective": self.objective,
            "status": self.status,
            "message": self.message,
            "evaluations": self.evaluations,
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
        return json.dumps(_jsonable(self.to_dict()), indent=2, ensure_ascii=False, allow_nan=False)

    def _repr_html_(self) -> str:
        rows = "".join(
            f"<tr><td>{p['name']}</td><td>{p['start']:.4g}</td><td>{p['value']:.4g}</td>"
            f"<td>[{p['min']:.4g}, {p['max']:.4g}]</td><td>{p['at_bound'] or ''}</td></tr>"
            for p in self.parameters)
        b, a = self.before, self.after
        stats = "".join(
            f"<tr><td>{ill}</td><td>{b.delta_E00[ill]['mean']:.3f}</td><td>{a.delta_E00[ill]['mean']:.3f}</td>"
            f"<td>{a.delta_E00[ill]['p95']:.3f}</td><td>{a.delta_E00[ill]['max']:.3f}</td></tr>"
            for ill in a.illuminants)
        return (
            f"<p><b>Fit of {self.design.name}</b>: {self.status} ({self.message}); objective "
            f"{self.objective}; {self.evaluations} evaluations in {self.seconds:.2f} s.</p>"
            f"<p>Vora value ν {b.vora_value:.4f} → {a.vora_value:.4f}; matrix {a.matrix_method}, "
            f"{a.matrix_scope}.</p>"
            f"<table><tr><th>parameter</th><th>start</th><th>fitted</th><th>bounds</th><th>at bound</th></tr>"
            f"{rows}</table><table><tr><th>illuminant</th><th>mean ΔE00 before</th><th>mean ΔE00 after</th>"
            f"<th>p95 after</th><th>max after</th></tr>{stats}</table>")


def _jsonable(v):
    if isinstance(v, dict):
        return {str(k): _jsonable(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [_jsonable(x) for x in v]
    if isinstance(v, np.ndarray):
        return _jsonable(v.tolist())
    if isinstance(v, (np.floating, float)):
        f = float(v)
        return f if math.isfinite(f) else None
    if isinstance(v, np.integer):
        return int(v)
    return v


class _Tracker:
    """Counts evaluations, keeps the best point, drives the progress bar, raises FitStopped."""

    def __init__(self, evaluator, budget, progress, stop, callback=None):
        self.ev = evaluator
        self.callback = callback
        self.best_x = None
        self.best_cost = math.inf
        self.n = 0
        self.budget = budget
        self.stop = stop
        self.bar = None
        if progress:
            from tqdm.auto import tqdm

            self.bar = tqdm(total=budget, desc="fit", unit="eval", leave=False)

    def __call__(self, X) -> np.ndarray:
        if self.stop is not None and self.stop.is_set():
            raise FitStopped("stopped")
        if self.n >= self.budget:
            raise FitStopped("evaluation budget reached")
        r = self.ev.residuals(X)
        cost = np.sum(r * r, axis=-1)
        i = int(np.argmin(cost))
        if cost[i] < self.best_cost:
            self.best_cost = float(cost[i])
            self.best_x = np.array(np.atleast_2d(X)[i])
        k = r.shape[0]
        self.n += k
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
    """One bounded least-squares run in normalised coordinates u ∈ [0, 1] (filters) + raw matrix entries."""
    from scipy.optimize import least_squares

    def x_of(u):
        u = np.atleast_2d(u)
        return np.concatenate([base[:nf] + u[:, :nf] * span, u[:, nf:]], axis=1)

    def fun(u):
        return track(x_of(u))[0]

    def jac(u):
        h = np.where(np.arange(u.size) < nf, 1e-6, 1e-7)
        U = np.repeat(u[None], u.size, axis=0)
        # step away from the upper bound when it would cross it
        sign = np.where(u + h > hi, -1.0, 1.0)
        U[np.arange(u.size), np.arange(u.size)] += sign * h
        r0 = track(x_of(u))[0]
        R = track(x_of(U))
        return ((R - r0) / (sign * h)[:, None]).T

    r = least_squares(fun, u0, jac=jac, bounds=(lo, hi), method="trf", x_scale=1.0,
                      xtol=1e-10, ftol=1e-12, gtol=1e-10, max_nfev=200)
    return r, x_of(r.x)[0]


def fit_design(design: Design, *, progress: bool = True, stop: threading.Event | None = None,
               evaluator: DesignEvaluator | None = None, global_start: str | None = None,
               seed: int | None = None, max_evaluations: int | None = None,
               callback=None) -> FitResult:
    """Fit the design's free parameters (and a ΔE00 matrix when asked) to its objective.

    Parameters
    ----------
    design : Design
        With at least one ``free = true`` parameter.
    progress : bool
        Show a tqdm progress bar (terminal or notebook).
    stop : threading.Event, optional
        Set it from another thread (a Stop button) to end the fit; Ctrl-C
        does the same. The best point so far is kept.
    evaluator : DesignEvaluator, optional
        One already made for this design file, in any parameter state, to
        skip reading the files again; the fit starts from ``design``'s
        values (see :meth:`DesignEvaluator.with_design`).
    callback : callable, optional
        Called with the running number of evaluations after each batch (a
        notebook progress bar).
    global_start, seed, max_evaluations
        Override the design's ``[fit]`` values.

    Returns
    -------
    FitResult

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
    budget = max_evaluations or fit.max_evaluations
    nf = len(ev.free)
    if nf == 0:
        raise WorkbenchError(f"{design.source or design.name}: no free parameters to fit "
                             "(set free = true with min and max on at least one)")
    start = ev.start
    t0 = time.perf_counter()
    before = ev.measures()
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
    track = _Tracker(ev, budget, progress, stop, callback)
    r0 = ev.residuals(x_start)[0]
    cost_before = float(r0 @ r0)
    track.best_x, track.best_cost = x_start.copy(), cost_before
    status, message = "not converged", ""
    starts = [np.concatenate([u_start, m0])]
    try:
        if gs == "multi-start":
            from scipy.stats import qmc

            pts = qmc.LatinHypercube(d=nf, seed=seed).random(max(1, fit.starts))
            X = np.concatenate([base + pts * span, np.broadcast_to(m0, (len(pts), nm))], axis=1)
            r = track(X)
            order = np.argsort(np.sum(r * r, axis=-1))[:3]
            starts += [np.concatenate([pts[i], m0]) for i in order]
        elif gs == "differential-evolution":
            from scipy.optimize import differential_evolution

            def de_cost(U):
                U = np.atleast_2d(U.T)
                X = np.concatenate([base + U * span, np.broadcast_to(m0, (len(U), nm))], axis=1)
                r = track(X)
                return np.sum(r * r, axis=-1)

            d = differential_evolution(de_cost, [(0, 1)] * nf, seed=seed, vectorized=True,
                                       maxiter=30, popsize=10, polish=False, tol=1e-8,
                                       updating="deferred", x0=np.clip(u_start, 0, 1))
            starts = [np.concatenate([d.x, m0])]
        best = None
        for u0 in starts:
            r, x = _local(track, np.clip(u0, lo, hi), lo, hi, nf, span, base)
            c = float(2 * r.cost)
            if best is None or c < best[0]:
                best = (c, r, x)
        _, r, _ = best
        status = "converged" if r.success and r.status > 0 else "not converged"
        message = str(r.message).rstrip(".")
    except FitStopped as e:
        status, message = "interrupted", f"{e}; best point so far kept"
    except KeyboardInterrupt:
        status, message = "interrupted", "interrupted (Ctrl-C); best point so far kept"
    finally:
        track.close()
    x = track.best_x
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
        rows.append({"name": k, "start": float(start[i]), "value": v, "min": float(ev.lower[i]),
                     "max": float(ev.upper[i]), "at_bound": at})
    return FitResult(
        design=fitted, start_design=design, parameters=tuple(rows), before=before, after=after,
        objective=fit.objective, cost_before=cost_before, cost_after=float(track.best_cost),
        status=status, message=str(message), evaluations=track.n, seconds=time.perf_counter() - t0,
        global_start=gs, seed=seed, notes=ev.notes,
    )
