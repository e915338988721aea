"""From an idealised edge to a layer recipe: a quarter-wave starting stack, then bounded refinement.

A face fitted with the idealised edge model is described by where its
reflectance crosses 50 % at its angle of incidence in its medium and which
side it reflects. :func:`starting_stack` builds the classical edge filter
for it: a symmetric period stack of two materials, ``(0.5L H 0.5L)^N`` for
a face that reflects the short wavelengths (its pass band, on the long side,
is then free of the worst ripple) or ``(0.5H L 0.5H)^N`` for one that
reflects the long wavelengths, at the reference wavelength that puts the
cone- and polarisation-averaged 50 % point where the fitted edge is.
:func:`refine_recipe` then moves every layer thickness, within bounds, by a
trust-region least-squares fit with the analytic thickness derivatives of
:mod:`workbench.optics.thinfilm`, to a target reflectance curve (the
idealised face's own curve, or any curve a caller derives from a camera
objective).

References
----------
H. A. Macleod, *Thin-Film Optical Filters*, 4th ed., CRC Press, 2010,
ch. 6 (edge filters: symmetric periods suppress pass-band ripple on one
side; the edge shifts with angle and splits in s and p).
"""

from __future__ import annotations

import copy
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import least_squares

from workbench.analysis.threads import one_blas_thread
from workbench.errors import WorkbenchError
from workbench.optics.elements import angle_shift_factor, edge
from workbench.optics.materials import Material, material_named
from workbench.optics.ripple import ripple_grid, ripple_residuals, ripple_scale
from workbench.optics.stacks import cone_rays, cone_response, parse_layer_formula, physical_thicknesses
from workbench.analysis.transition import stop_band_edges
from workbench.fileio.design_toml import design_from_dict, design_to_dict

__all__ = ["Recipe", "starting_stack", "refine_recipe", "RefineReport", "REFLECTS", "refine_in_camera",
           "CameraRefineReport", "idealised_face_reflectance", "splitter_recipes", "FaceRecipe", "coated_design",
           "measures_with_curves", "ripple_penalty", "RIPPLE_WEIGHT", "REFINE_TOLERANCE", "apodising_shares", "APODISE_MIN_SHARE"]

#: Which side of the edge a face reflects.
REFLECTS = ("short", "long")


@dataclass(frozen=True)
class Recipe:
    """A layer recipe: materials by symbol, physical thicknesses, and the geometry it was made for.

    Attributes
    ----------
    symbols : tuple of str
        Each layer's material symbol, from the incidence side.
    materials : dict of str to Material
    thicknesses_nm : (L,) ndarray, nm
    reference_nm : float, nm
        Reference wavelength of the QWOTs.
    incident, substrate : Material
    aoi_deg : float
        Chief-ray angle in the incidence medium.
    f_number : float or None
    polarisation : str
        ``'unpolarised'``, ``'s'`` or ``'p'``.
    """

    symbols: tuple
    materials: dict
    thicknesses_nm: np.ndarray
    reference_nm: float
    incident: Material
    substrate: Material
    aoi_deg: float = 0.0
    f_number: float | None = None
    polarisation: str = "unpolarised"
    notes: tuple = field(default=())

    def indices(self, wavelengths_nm) -> np.ndarray:
        """Layer indices ``(L, n_λ)``, complex."""
        by_symbol = {s: m.index(wavelengths_nm) for s, m in self.materials.items()}
        return np.stack([by_symbol[s] for s in self.symbols])

    def qwots(self) -> np.ndarray:
        """Each layer's optical thickness in quarter waves at ``reference_nm`` (normal incidence)."""
        n = np.array([self.materials[s].index([self.reference_nm])[0].real for s in self.symbols])
        return self.thicknesses_nm * n * 4.0 / self.reference_nm

    def table(self) -> list[dict]:
        """The recipe table: one row per layer, material, physical thickness (nm) and QWOT."""
        q = self.qwots()
        return [{"layer": i + 1, "symbol": s, "material": self.materials[s].name,
                 "thickness_nm": float(d), "qwot": float(qq)}
                for i, (s, d, qq) in enumerate(zip(self.symbols, self.thicknesses_nm, q))]

    def formula(self, digits: int = 2) -> str:
        """The recipe as a layer formula with physical thicknesses (``H[52.31] L[88.02] …``)."""
        return " ".join(f"{s}[{d:.{digits}f}]" for s, d in zip(self.symbols, self.thicknesses_nm))

    def response(self, wavelengths_nm, *, derivatives: bool = False, thicknesses_nm=None):
        """R, T (and thickness derivatives) over the cone and polarisations, ``(n_λ,)`` each."""
        wl = np.asarray(wavelengths_nm, dtype=float)
        d = self.thicknesses_nm if thicknesses_nm is None else thicknesses_nm
        return cone_response(self.indices(wl)[..., :], d, wl, aoi_deg=self.aoi_deg, f_number=self.f_number,
                             incident=self.incident.index(wl).real, substrate=self.substrate.index(wl),
                             polarisation=self.polarisation, derivatives=derivatives)


def _materials(high, low) -> dict:
    return {"H": material_named(high), "L": material_named(low)}


def _common_range(materials) -> tuple[float, float]:
    lo, hi = 0.0, np.inf
    for m in materials:
        if m.range_nm is not None:
            lo, hi = max(lo, m.range_nm[0]), min(hi, m.range_nm[1])
    return lo, hi


def _edge_of(recipe: Recipe, reflects: str, guess_nm: float) -> float:
    lo, hi = _common_range(list(recipe.materials.values()) + [recipe.incident, recipe.substrate])
    wl = np.linspace(max(guess_nm * 0.55, lo), min(guess_nm * 1.6, hi), 2101)
    try:
        R, _, _, _ = recipe.response(wl)
    except WorkbenchError:
        return np.nan
    short, long_ = stop_band_edges(wl, R)
    return long_ if reflects == "short" else short


#: The thinnest share of a period's optical thickness an apodised period gives its middle layer.
APODISE_MIN_SHARE = 0.1


def apodising_shares(periods: int, apodise: int) -> np.ndarray:
    """Each period's share of its optical thickness in its middle layer, tapered at both ends.

    A symmetric period ``(0.5A B 0.5A)`` reflects, per period, in proportion
    to about sin(π f) for a share f of its optical thickness in B (0.5 for
    the quarter-wave period). The ``apodise`` outermost periods at each end
    get f = arcsin(a)/π with a raised-cosine ramp a = ½(1 − cos(π k/(m + 1))),
    k = 1 … m, so the stack's reflecting strength rises smoothly from its
    ends and the ripple beside the band falls (the apodisation of periodic
    reflectors); f is kept ≥ :data:`APODISE_MIN_SHARE`. Every period keeps
    its optical thickness, so the band stays where it was.

    Returns
    -------
    (periods,) ndarray, fraction 0-0.5
    """
    f = np.full(periods, 0.5)
    k = np.arange(1, apodise + 1)
    ramp = np.maximum(np.arcsin(0.5 * (1.0 - np.cos(np.pi * k / (apodise + 1)))) / np.pi, APODISE_MIN_SHARE)
    if apodise:
        f[:apodise] = ramp
        f[periods - apodise:] = ramp[::-1]
    return f


def _apodised(merged, periods: int, apodise: int):
    """The merged symmetric-period layers with the duty of the outer periods tapered (same optical length)."""
    f = apodising_shares(periods, apodise)
    outer = 1.0 - f                                       # QWOTs of each period's two outer halves
    qwots = [outer[0]]
    for p in range(periods):
        qwots.append(2.0 * f[p])
        qwots.append(outer[p] + (outer[p + 1] if p + 1 < periods else 0.0))
    return [type(layer)(layer.symbol, float(q)) for layer, q in zip(merged, qwots)]


def starting_stack(edge_nm: float, *, reflects: str, periods: int = 10, high="TiO2", low="SiO2",
                   aoi_deg: float = 0.0, incident="air", substrate="crown-517", f_number=None,
                   polarisation: str = "unpolarised", apodise: int = 0) -> Recipe:
    """A quarter-wave edge filter whose 50 % point lies at ``edge_nm`` at its angle.

    Parameters
    ----------
    edge_nm : float, nm
        Where the face's reflectance (averaged over the cone and the
        polarisations) is to cross 50 %.
    reflects : {'short', 'long'}
        The side the face reflects: ``'short'`` for a blue reflector (the
        edge is the long-wave edge of its reflection band), ``'long'`` for a
        red reflector.
    periods : int
        N of the symmetric period stack (2N + 1 layers).
    high, low : str or Material
        The two materials (built-in names, user materials or indices).
    aoi_deg, incident, substrate, f_number, polarisation
        The geometry the face works in.
    apodise : int
        Periods at each end whose middle layer is tapered
        (:func:`apodising_shares`; 0: the plain quarter-wave stack).

    Returns
    -------
    Recipe

    Raises
    ------
    WorkbenchError
        A bad side, materials whose stack cannot reach the edge.
    """
    if reflects not in REFLECTS:
        raise WorkbenchError(f"'reflects' must be one of {', '.join(REFLECTS)} (got {reflects!r})")
    if not (isinstance(periods, (int, np.integer)) and 1 <= periods <= 200):
        raise WorkbenchError(f"'periods' must be an integer 1-200 (got {periods!r})")
    mats = _materials(high, low)
    formula = f"(0.5L H 0.5L)^{periods}" if reflects == "short" else f"(0.5H L 0.5H)^{periods}"
    layers = parse_layer_formula(formula, mats)
    # merge the adjacent half layers of neighbouring periods (0.5L 0.5L = L)
    merged = []
    for layer in layers:
        if merged and merged[-1].symbol == layer.symbol:
            prev = merged.pop()
            merged.append(type(layer)(layer.symbol, prev.qwot + layer.qwot))
        else:
            merged.append(layer)
    if not (isinstance(apodise, (int, np.integer)) and 0 <= 2 * apodise <= periods):
        raise WorkbenchError(f"'apodise' must be an integer 0-{periods // 2} (half the periods at most) "
                             f"(got {apodise!r})")
    if apodise:
        merged = _apodised(merged, periods, apodise)
    symbols = tuple(x.symbol for x in merged)
    inc, sub = material_named(incident), material_named(substrate)

    def recipe_at(ref):
        d = physical_thicknesses(merged, mats, ref)
        return Recipe(symbols, mats, d, float(ref), inc, sub, float(aoi_deg), f_number, polarisation)

    # The edge moves almost in proportion to the reference wavelength: a few secant steps.
    ref = float(edge_nm) * (0.85 if reflects == "short" else 1.15)
    for _ in range(8):
        e = _edge_of(recipe_at(ref), reflects, edge_nm)
        if not np.isfinite(e):
            raise WorkbenchError(f"a {high}/{low} stack cannot put an edge at {edge_nm:g} nm here "
                                 "(no reflection band found)")
        if abs(e - edge_nm) < 1e-3:
            break
        ref *= edge_nm / e
    return recipe_at(ref)


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


# --------------------------------------------------------------------------
# From a fitted idealised splitter to two face recipes
# --------------------------------------------------------------------------

#: The two faces of the idealised splitter: (name, parameter prefix, side it reflects).
SPLITTER_FACES = (("blue-green", "blue_green", "short"), ("green-red", "green_red", "long"))


def idealised_face_reflectance(element, wavelengths_nm, face: str) -> np.ndarray:
    """One face of an idealised ``dichroic-splitter`` element: its reflectance over its cone, s and p averaged.

    The face's edge (logistic or erf, centre and width at normal incidence)
    is scaled per ray by √(1 − (n₀ sinθ / n_eff)²) with ``n_eff_s`` and
    ``n_eff_p`` (s only when ``n_eff_p`` is absent), as the splitter model
    does, and averaged with the pupil-area weights of the element's
    quadrature (loss left out: a recipe is made for the lossless face).

    Parameters
    ----------
    element : workbench.model.design.Element
        A ``dichroic-splitter``.
    wavelengths_nm : (n,) array_like
    face : {'blue-green', 'green-red'}

    Returns
    -------
    (n,) ndarray, fraction 0-1
    """
    names = {f: (p, side) for f, p, side in SPLITTER_FACES}
    if face not in names:
        raise WorkbenchError(f"'face' must be one of {', '.join(names)} (got {face!r})")
    if element.type != "dichroic-splitter":
        raise WorkbenchError(f"'element' must be a dichroic-splitter (got {element.type!r})")
    prefix, side = names[face]

    def value(key, default=None):
        p = element.param(key)
        return default if p is None else float(p.value)

    wl = np.asarray(wavelengths_nm, dtype=float)
    n0 = value("medium_index", 1.0)
    angles, w = cone_rays(value(f"{prefix}_aoi_deg", 0.0), value("f_number"), n0,
                          rings=int(element.option("rings", 4)), azimuths=int(element.option("azimuths", 8)))
    n_effs = [value("n_eff_s", 1.8)] + ([value("n_eff_p")] if value("n_eff_p") is not None else [])
    out = np.zeros(wl.size)
    for n_eff in n_effs:
        k = angle_shift_factor(angles, n_eff, n0)                           # (K,)
        rise = edge(wl, value(f"{prefix}_nm") * k, value(f"{prefix}_width_nm", 15.0) * k,
                    kind="long-pass", shape=element.option("shape", "logistic"))
        r = 1.0 - rise if side == "short" else rise
        out += w @ r
    return out / len(n_effs)


@dataclass(frozen=True)
class FaceRecipe:
    """A splitter face turned into a layer recipe: the target it was made for and how close it came."""

    face: str
    reflects: str
    edge_nm: float
    target_R: np.ndarray
    recipe: Recipe
    report: RefineReport | None


def splitter_recipes(design, *, periods: int = 20, high="TiO2", low="SiO2", refine: bool = True,
                     max_evaluations: int = 200, apodise: int = 0,
                     smoothness: float = RIPPLE_WEIGHT) -> list[FaceRecipe]:
    """Both faces of a design's idealised splitter as layer recipes.

    For each face: its idealised reflectance at its angle (cone and s/p
    averaged, :func:`idealised_face_reflectance`), the 50 % point of that
    curve, a symmetric-period starting stack there (:func:`starting_stack`,
    inside glass of the element's ``medium_index``) and, with ``refine``,
    every thickness refined to the idealised curve (:func:`refine_recipe`)
    with the ripple penalty of weight ``smoothness`` on the chief ray's s
    and p (the cone average the fit sees hides their ripple).

    Parameters
    ----------
    design : workbench.model.design.Design
    periods : int
    high, low : str or Material
    refine : bool
    max_evaluations : int
        Largest number of evaluations per face; a face stops earlier when a
        step changes its cost by less than :data:`REFINE_TOLERANCE`.
    apodise : int
        Tapered periods at each end of the starting stacks (:func:`starting_stack`).
    smoothness : float
        Weight of the ripple penalty (:func:`ripple_penalty`; 0: none).

    Returns
    -------
    list of FaceRecipe
        Blue-green face first.
    """
    el = next((e for e in design.chain if e.type == "dichroic-splitter"), None)
    if el is None:
        raise WorkbenchError(f"{design.name!r} must have a dichroic-splitter element to turn into recipes (got none)")
    wl = design.model().wavelengths
    p = el.param("medium_index")
    n0 = 1.0 if p is None else float(p.value)
    fno = el.param("f_number")
    out = []
    for face, prefix, side in SPLITTER_FACES:
        target = idealised_face_reflectance(el, wl, face)
        short, long_ = stop_band_edges(wl, target)
        edge_nm = long_ if side == "short" else short
        if not np.isfinite(edge_nm):
            raise WorkbenchError(f"the {face} face's idealised edge must lie inside the design grid (it does not)")
        aoi = el.param(f"{prefix}_aoi_deg")
        rec = starting_stack(edge_nm, reflects=side, periods=periods, high=high, low=low,
                             aoi_deg=0.0 if aoi is None else float(aoi.value), incident=f"{n0:g}",
                             substrate=f"{n0:g}", f_number=None if fno is None else float(fno.value),
                             apodise=apodise)
        report = None
        if refine:
            rec, report = refine_recipe(rec, wl, target, max_evaluations=max_evaluations, smoothness=smoothness,
                                        ftol=REFINE_TOLERANCE)
        out.append(FaceRecipe(face, side, float(edge_nm), target, rec, report))
    return out


def coated_design(design, faces: list[FaceRecipe], *, name_suffix: str = " (coated faces)",
                  layer_error: float = 0.01, material_error: float = 0.005, index_error: float = 0.005,
                  layer_range: float = 0.2, free_layers: bool = False, keep_free: bool = True,
                  coating_smoothness: float | None = None):
    """The design with its idealised splitter replaced by two ``coating`` elements made of ``faces``.

    Each face keeps its angle, cone and glass; its layers are written with
    physical thicknesses (``L[74.7634] H[25.2293] …``) and every layer gets
    its own ``layer_<i>_nm`` parameter, bounded to ± ``layer_range`` (a
    fraction of its thickness; default 0.2, ±20 %), so ``workbench fit`` can
    refine the layers: ``free_layers=True`` marks every one of them free
    (``free = true``), and then, unless ``keep_free``, every parameter that
    was free in ``design`` is fixed at its present (fitted) value, so a refit
    moves the coatings only. Tolerances for ``workbench
    tolerance``: each layer normal with σ = ``layer_error`` × its thickness
    (random per layer), each material's ``thickness_scale_<S>`` σ =
    ``material_error`` (systematic per material) and ``index_scale_<S>`` σ =
    ``index_error``. The splitter's ``loss`` is not carried over (the stacks
    are lossless dielectrics). A matrix stored with the design (by
    ``workbench fit``) was fitted to the idealised faces and is not carried
    over: the coated design's matrix follows its ``[fit]`` rule. With
    ``free_layers``, ``coating_smoothness`` (None: the design's own ``[fit]``
    value, default :data:`RIPPLE_WEIGHT`) is written as ``[fit]
    coating_smoothness``, the weight of the refit's ripple penalty on the
    faces (give it the weight the faces were refined with).

    Returns
    -------
    workbench.model.design.Design
    """
    if not 0.0 < layer_range < 1.0:
        raise WorkbenchError(f"layer_range must be in (0, 1) (got {layer_range!r})")
    data = design_to_dict(design)
    chain = data["chain"]
    if free_layers and not keep_free:
        for e in chain:                       # a parameter table is the only place ``free`` appears
            for v in e.values():
                if isinstance(v, dict) and v.get("free") is True:
                    del v["free"]
    i = next((k for k, e in enumerate(chain) if e["type"] == "dichroic-splitter"), None)
    if i is None:
        raise WorkbenchError(f"{design.name!r} must have a dichroic-splitter element (got none)")
    split = chain[i]
    order = split.get("order", "blue-first")
    by_face = {f.face: f for f in faces}
    first, second = (("blue-green", "B"), ("green-red", "R")) if order == "blue-first" else \
        (("green-red", "R"), ("blue-green", "B"))
    elements = []
    for (face, channel), paths in ((first, ["R", "G", "B"]), (second, ["G", second[1]])):
        f = by_face[face]
        rec = f.recipe
        el = {"name": f"{split['name']}-{face}", "type": "coating", "paths": sorted(paths, key="RGB".index),
              "reflects": channel, "layers": rec.formula(digits=4),
              "materials": {s: m.name for s, m in rec.materials.items()},
              "incident": rec.incident.name, "substrate": rec.substrate.name, "aoi_deg": rec.aoi_deg}
        if rec.f_number is not None:
            el["f_number"] = rec.f_number
        for j, d in enumerate(rec.thicknesses_nm):
            el[f"layer_{j + 1}_nm"] = {"value": round(float(d), 4),
                                       "min": round((1.0 - layer_range) * float(d), 4),
                                       "max": round((1.0 + layer_range) * float(d), 4),
                                       "tolerance": {"distribution": "normal",
                                                     "width": round(layer_error * float(d), 4)}}
            if free_layers:
                el[f"layer_{j + 1}_nm"]["free"] = True
        for sym in rec.materials:
            el[f"thickness_scale_{sym}"] = {"value": 1.0, "tolerance": {"distribution": "normal",
                                                                        "width": material_error}}
            el[f"index_scale_{sym}"] = {"value": 1.0, "tolerance": {"distribution": "normal", "width": index_error}}
        elements.append(el)
    chain[i:i + 1] = elements
    if free_layers:
        w = design.fit.coating_smoothness if coating_smoothness is None else coating_smoothness
        if not (np.isfinite(w) and w >= 0):
            raise WorkbenchError(f"'coating_smoothness' must be a weight ≥ 0 (got {w!r})")
        data.setdefault("fit", {})["coating_smoothness"] = float(w)
    # a matrix stored by a fit belongs to the idealised faces: the coated camera gets its own from its [fit] rule
    data.pop("matrix", None)
    data["name"] = design.name + name_suffix
    return design_from_dict(data, base_dir=design.base_dir, source=f"{design.source or design.name} (coated)")


def measures_with_curves(evaluator, element: str, R, T, *, reflects: str = "none", paths=None):
    """The camera's measures with element ``element`` replaced by a stack's R and T.

    ``R`` and ``T`` (n,) on the evaluator's grid: the ``reflects`` path gets
    R, the other ``paths`` (default the element's own) get T. Returns the
    full :class:`workbench.analysis.measures_report.Measures` (matrix fitted as the
    design's ``[fit]`` says); the caller's evaluator is not changed.
    """
    curves = evaluator.model.element_curves()
    names = [c.name for c in curves]
    if element not in names:
        raise WorkbenchError(f"'element' must be one of {', '.join(names)} (got {element!r})")
    el = curves[names.index(element)]
    paths = tuple(el.paths if paths is None else paths)
    F = np.ones((3, evaluator.wavelengths.size))
    for i, ch in enumerate(_CHANNELS):
        if ch in paths:
            F[i] = R if ch == reflects else T
    S = F
    for c in curves:
        if c.name != element:
            S = S * c.values
    ev = copy.copy(evaluator)
    ev.sensitivities = lambda values=None: S
    return ev.measures()
