"""Refining a layer recipe's thicknesses: to a target curve, or against the camera objective itself.

:func:`refine_recipe` moves every layer thickness of a
:class:`workbench.analysis.recipe_model.Recipe`, within bounds, by a
trust-region least-squares fit with the analytic thickness derivatives of
:mod:`workbench.optics.thinfilm`, to a target reflectance curve (the
idealised face's own curve, or any curve a caller derives from a camera
objective); :func:`refine_in_camera` minimises the design's own fit
objective with the element replaced by the stack. Both can add
:func:`ripple_penalty` (second differences of the chief ray's R_s and R_p).
Every name here is importable from :mod:`workbench.analysis.recipe` too.

References
----------
H. A. Macleod, *Thin-Film Optical Filters*, 4th ed., CRC Press, 2010,
ch. 6 (edge filters: the edge shifts with angle and splits in s and p).
"""

from __future__ import annotations

import copy
from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares

from workbench.analysis.recipe_model import Recipe
from workbench.analysis.threads import one_blas_thread
from workbench.errors import WorkbenchError
from workbench.optics.ripple import ripple_grid, ripple_residuals, ripple_scale
from workbench.optics.stacks import cone_response

__all__ = ["refine_recipe", "RefineReport", "refine_in_camera", "CameraRefineReport", "ripple_penalty",
           "RIPPLE_WEIGHT", "REFINE_TOLERANCE"]


#: Default weight of the ripple penalty in the refinements (see :func:`ripple_penalty`).
RIPPLE_WEIGHT = 1.0

#: Relative change of the cost (and of the thicknesses) below which :func:`splitter_recipes` calls a face converged.
REFINE_TOLERANCE = 1e-4


def ripple_penalty(recipe: Recipe, window_nm, *, weight: float, fit_weight: float, step_nm: float = 2.0):
    """Residuals that penalise ripple: second differences of the chief ray's R_s and R_p, with their Jacobian.

    On a grid of ``step_nm`` over ``window_nm``, at the recipe's own angle,
    the residuals are ``c · (R_{k−1} − 2 R_k + R_{k+1})`` for s and p, with
    ``c = weight · √(fit_weight / n)`` (n the number of these residuals):
    with ``weight = 1`` the penalty's mean square counts as much as the fit's
    mean square when ``fit_weight`` is the fit's Σ w² (its number of
    residuals for unit weights). A smooth edge of width w has second
    differences of about (step/w)², a ripple of amplitude a and period P
    about a (2π step/P)², so the penalty falls mostly on the ripple. The
    cone average hides a chief-ray ripple from the fit; the penalty does not.

    Returns
    -------
    callable
        ``penalty(d) -> (residuals (2(n_f − 2),), jacobian (2(n_f − 2), L))``.
    """
    if not (np.isfinite(weight) and weight >= 0):
        raise WorkbenchError(f"'smoothness' must be a weight ≥ 0 (got {weight!r})")
    wl_f = ripple_grid(window_nm[0], window_nm[1], step_nm)
    N_f = recipe.indices(wl_f)
    kw_f = dict(incident=recipe.incident.index(wl_f).real, substrate=recipe.substrate.index(wl_f))
    scale = ripple_scale(weight, fit_weight, 2 * (wl_f.size - 2))
    cache = {}

    def penalty(d):
        key = d.tobytes()
        if key not in cache:
            r, J = ripple_residuals(N_f, d, wl_f, recipe.aoi_deg, derivatives=True, **kw_f)
            cache.clear()
            cache[key] = (scale * r, scale * J)
        return cache[key]

    return penalty


def _with_penalty(fun, jac, penalty):
    """The residual and Jacobian functions with the penalty's rows appended."""
    return (lambda d: np.concatenate([fun(d), penalty(d)[0]]),
            lambda d: np.vstack([jac(d), penalty(d)[1]]))


@dataclass(frozen=True)
class RefineReport:
    """What :func:`refine_recipe` did: cost before and after, evaluations, status, layers at a bound, converged.

    ``converged`` is False when the evaluation budget ran out first.
    """

    rms_before: float
    rms_after: float
    evaluations: int
    message: str
    at_bound: tuple
    converged: bool = False


def refine_recipe(recipe: Recipe, wavelengths_nm, target_R, *, weights=None, lower=0.3, upper=2.0,
                  max_evaluations: int = 200, smoothness: float = 0.0,
                  smooth_step_nm: float = 2.0, ftol: float = 1e-8) -> tuple[Recipe, RefineReport]:
    """Refine every layer thickness to a target reflectance curve (bounded, analytic Jacobian).

    Parameters
    ----------
    recipe : Recipe
    wavelengths_nm : (n_λ,) array_like, nm
    target_R : (n_λ,) array_like, fraction 0-1
        The reflectance the face should have (over its cone and polarisations).
    weights : (n_λ,) array_like, optional
        Weight of each wavelength (default 1).
    lower, upper : float
        Each layer's bounds as fractions of its starting thickness.
    max_evaluations : int
    smoothness : float
        Weight of the ripple penalty on the chief ray's R_s and R_p
        (:func:`ripple_penalty`; 0: none). The reported rms is the fit's alone.
    smooth_step_nm : float, nm
        Grid step of the penalty.
    ftol : float
        Stop when a step changes the cost, or the thicknesses, by less than
        this fraction (``least_squares``' ``ftol`` and ``xtol``).

    Returns
    -------
    (Recipe, RefineReport)
    """
    wl = np.asarray(wavelengths_nm, dtype=float)
    target = np.asarray(target_R, dtype=float)
    if target.shape != wl.shape:
        raise WorkbenchError(f"'target_R' must have one value per wavelength ({wl.size}) (got {target.shape})")
    w = np.ones_like(wl) if weights is None else np.asarray(weights, dtype=float)
    d0 = recipe.thicknesses_nm.copy()
    N = recipe.indices(wl)
    inc, sub = recipe.incident.index(wl).real, recipe.substrate.index(wl)
    kw = dict(aoi_deg=recipe.aoi_deg, f_number=recipe.f_number, incident=inc, substrate=sub,
              polarisation=recipe.polarisation)
    cache = {}

    def evaluate(d):
        key = d.tobytes()
        if key not in cache:
            cache.clear()
            R, _, dR, _ = cone_response(N, d, wl, derivatives=True, **kw)
            cache[key] = (R, dR)
        return cache[key]

    def fun(d):
        return w * (evaluate(d)[0] - target)

    def jac(d):
        return (w[:, None] * evaluate(d)[1].T)

    if smoothness > 0:
        fun, jac = _with_penalty(fun, jac, ripple_penalty(recipe, (wl[0], wl[-1]), weight=smoothness,
                                                          fit_weight=float(np.sum(w**2)), step_nm=smooth_step_nm))

    r0 = fun(d0)
    lo, hi = d0 * lower, d0 * upper
    with one_blas_thread():                 # the trust region's small SVDs: idle BLAS workers cost more than they give
        sol = least_squares(fun, d0, jac=jac, bounds=(lo, hi), method="trf", x_scale=d0, max_nfev=max_evaluations,
                            ftol=ftol, xtol=ftol)
    at_bound = tuple(int(i) for i in np.nonzero((sol.x <= lo * 1.0001) | (sol.x >= hi * 0.9999))[0])
    refined = Recipe(recipe.symbols, recipe.materials, sol.x, recipe.reference_nm, recipe.incident,
                     recipe.substrate, recipe.aoi_deg, recipe.f_number, recipe.polarisation,
                     recipe.notes + (f"thicknesses refined to a target reflectance ({sol.nfev} evaluations)",))
    r0, r1 = r0[:wl.size], sol.fun[:wl.size]
    rms = lambda r: float(np.sqrt(np.sum(r**2) / np.sum(w**2)))  # noqa: E731
    return refined, RefineReport(rms(r0), rms(r1), int(sol.nfev), str(sol.message), at_bound, bool(sol.status > 0))


# --------------------------------------------------------------------------
# Refinement against the camera objective
# --------------------------------------------------------------------------

_CHANNELS = ("R", "G", "B")


def _residuals_of_sensitivities(evaluator, S):
    """The design's fit residuals for given sensitivities ``(B, 3, n)`` (the free parameters held).

    The evaluator computes its residuals from the chain's sensitivities; a
    shallow copy whose ``sensitivities`` returns ``S`` gives the same
    residuals for any sensitivities without touching the caller's evaluator.
    """
    ev = copy.copy(evaluator)
    ev.sensitivities = lambda values=None: S
    x = np.broadcast_to(evaluator.start, (S.shape[0], evaluator.start.size))
    return ev.residuals(x)


@dataclass(frozen=True)
class CameraRefineReport:
    """What :func:`refine_in_camera` did: the fit objective (½ Σ r²) before and after, evaluations, status."""

    cost_before: float
    cost_after: float
    evaluations: int
    message: str
    at_bound: tuple


def refine_in_camera(evaluator, element: str, recipe: Recipe, *, reflects: str = "none", paths=None,
                     lower: float = 0.5, upper: float = 1.5, max_evaluations: int = 200,
                     progress=None, smoothness: float = RIPPLE_WEIGHT,
                     ftol: float = REFINE_TOLERANCE) -> tuple[Recipe, CameraRefineReport]:
    """Refine a recipe's layer thicknesses against the camera objective itself.

    The element ``element`` of the evaluator's design is replaced by the
    recipe's stack: its reflectance on the ``reflects`` path, its
    transmittance on the other ``paths`` (default: the element's own). The
    design's fit objective (its residual vector, as ``workbench fit`` uses)
    is then minimised over every layer thickness within
    ``[lower, upper] × start`` by a trust-region least-squares fit. The
    Jacobian is the chain rule of the analytic thickness derivatives of the
    stack (:mod:`workbench.optics.thinfilm`) and the residuals' derivatives
    with respect to the sensitivities (forward differences, one batched
    evaluation of 3·n states per step).

    Parameters
    ----------
    evaluator : workbench.analysis.evaluator.DesignEvaluator
    element : str
        Name of the element the recipe replaces.
    recipe : Recipe
    reflects : {'none', 'R', 'G', 'B'}
    paths : sequence of str, optional
    lower, upper : float
        Bounds as fractions of each starting thickness.
    max_evaluations : int
    progress : callable, optional
        ``progress(evaluations, cost)`` after each evaluation of the stack.
    smoothness : float
        Weight of the ripple penalty (:func:`ripple_penalty`; default
        :data:`RIPPLE_WEIGHT`, 0: none); the reported costs are the
        objective's alone.
    ftol : float
        Stop when a step changes the cost, or the thicknesses, by less than
        this fraction (default :data:`REFINE_TOLERANCE`).

    Returns
    -------
    (Recipe, CameraRefineReport)
    """
    if evaluator._n_matrix_params():
        raise WorkbenchError("refining in the camera takes an objective without a fitted ΔE00 matrix "
                             "(got objective mean-delta-e00 with matrix delta-e00)")
    curves = evaluator.model.element_curves()
    names = [c.name for c in curves]
    if element not in names:
        raise WorkbenchError(f"'element' must be one of {', '.join(names)} (got {element!r})")
    el = curves[names.index(element)]
    paths = tuple(el.paths if paths is None else paths)
    if reflects != "none" and reflects not in paths:
        raise WorkbenchError(f"'reflects' must be one of the paths ({', '.join(paths)}) or 'none' (got {reflects!r})")
    others = np.ones((3, evaluator.wavelengths.size))
    for c in curves:
        if c.name != element:
            others = others * c.values
    wl = evaluator.wavelengths
    N = recipe.indices(wl)
    kw = dict(aoi_deg=recipe.aoi_deg, f_number=recipe.f_number, incident=recipe.incident.index(wl).real,
              substrate=recipe.substrate.index(wl), polarisation=recipe.polarisation)
    L = recipe.thicknesses_nm.size
    cache = {}
    count = [0]

    def state(d):
        key = d.tobytes()
        if key in cache:
            return cache[key]
        R, T, dR, dT = cone_response(N, d, wl, derivatives=True, **kw)
        F = np.ones((3, wl.size))
        dF = np.zeros((L, 3, wl.size))
        for i, ch in enumerate(_CHANNELS):
            if ch in paths:
                F[i], dF[:, i] = (R, dR) if ch == reflects else (T, dT)
        S = others * F
        r = _residuals_of_sensitivities(evaluator, S[None])[0]
        cache.clear()
        cache[key] = (S, others * dF, r)
        count[0] += 1
        if progress is not None:
            progress(count[0], 0.5 * float(r @ r))
        return cache[key]

    def fun(d):
        return state(d)[2]

    def jac(d):
        S, dS, r = state(d)
        h = 1e-6 * max(float(S.max()), 1e-12)
        n3 = S.size
        Sp = S[None] + h * np.eye(n3).reshape(n3, *S.shape)
        JS = (_residuals_of_sensitivities(evaluator, Sp) - r[None]) / h     # (3n, m)
        return JS.T @ dS.reshape(L, n3).T                                   # (m, L)

    d0 = recipe.thicknesses_nm.copy()
    r0 = fun(d0)
    m = r0.size
    if smoothness > 0:
        fun, jac = _with_penalty(fun, jac, ripple_penalty(recipe, (wl[0], wl[-1]), weight=smoothness,
                                                          fit_weight=float(m)))
    lo, hi = d0 * lower, d0 * upper
    with one_blas_thread():
        sol = least_squares(fun, d0, jac=jac, bounds=(lo, hi), method="trf", x_scale=d0, max_nfev=max_evaluations,
                            ftol=ftol, xtol=ftol)
    at_bound = tuple(int(i) for i in np.nonzero((sol.x <= lo * 1.0001) | (sol.x >= hi * 0.9999))[0])
    refined = Recipe(recipe.symbols, recipe.materials, sol.x, recipe.reference_nm, recipe.incident,
                     recipe.substrate, recipe.aoi_deg, recipe.f_number, recipe.polarisation,
                     recipe.notes + (f"thicknesses refined against the camera objective of "
                                     f"{evaluator.design.name!r} ({sol.nfev} evaluations)",))
    r1 = sol.fun[:m]
    return refined, CameraRefineReport(0.5 * float(r0 @ r0), 0.5 * float(r1 @ r1), int(sol.nfev), str(sol.message),
                                       at_bound)
