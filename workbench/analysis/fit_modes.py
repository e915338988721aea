"""Fits built on :func:`workbench.analysis.fit.fit_design`: the front of accuracy against noise, and the fit robust to tolerances.

:func:`fit_front` fits weighted sums of the objective and the noise gain;
:func:`fit_robust` fits the expected (or upper-tail) worst-light ΔE00 of
units drawn from the design's ``[tolerance]``. Moved out of ``fit.py``
unchanged. ``fit_design`` and ``check_fit_options`` are re-exported so the
design panel finds every fit entry point in this one module.
"""

from __future__ import annotations

import threading
from dataclasses import replace

import numpy as np

from workbench.analysis.evaluator import DesignEvaluator
from workbench.analysis.measures_report import Measures
from workbench.analysis.fit import check_fit_options, fit_design
from workbench.analysis.fit_objective import Objective
from workbench.analysis.fit_result import FitResult
from workbench.analysis.tolerance import run_tolerance
from workbench.analysis.tolerance_draws import InvertedPairError, sample_parameters, toleranced_parameters
from workbench.errors import WorkbenchError
from workbench.model.design import Design, ToleranceSpec

__all__ = ["fit_front", "non_dominated", "check_front", "fit_robust", "check_robust", "ROBUST_METHOD",
           "FRONT_METHOD", "fit_design", "check_fit_options"]


# --------------------------------------------------------------------------
# Accuracy against noise: the front
# --------------------------------------------------------------------------

FRONT_METHOD = (
    "weighted sums (1 − t)·cost/cost₀ + t·NG²/NG₀² for t evenly spaced in [0, 1], cost the design's "
    "objective (cost₀ at the accuracy fit), NG the noise gain = RMS row norm of the matrix over channels "
    "and illuminants (the factor on equal, independent channel noise; NG₀ at the accuracy fit); each "
    "point fitted from the one before; points dominated in (objective cost, NG) dropped")


def _front_point(m: Measures, t: float, res: FitResult, accuracy: Objective) -> dict:
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
    accuracy = Objective(ev, illuminant_weights=dict(first.illuminant_weights), across=first.across_illuminants)
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
        ``yield``, ``yield_interval_95`` (Wilson; both None, with the reason in
        ``yield_note``, when the fresh draws invert an ordered pair), ``mean_delta_E00`` by
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
        try:
            t = run_tolerance(fr.design, trials=check_trials, seed=seed + 1, matrix="fixed", field=False,
                              progress=False, evaluator=ev.with_design(replace(fr.design, matrix=None)))
            summ = t.summary()
            checked = {"yield": summ["yield"], "yield_interval_95": summ["yield_interval_95"], "yield_note": None}
        except InvertedPairError as e:
            # The fit is kept and written; only its yield cannot be stated (a design file's rule, docs/design-file.md).
            checked = {"yield": None, "yield_interval_95": None,
                       "yield_note": f"yield not checked: {e} (the fresh draws invert a pair the chain keeps in order)"}
        a = fr.after
        return {
            **checked,
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

