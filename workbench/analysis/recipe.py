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
objective). :func:`splitter_recipes` does both for each face of a fitted
idealised splitter and :func:`coated_design` puts the recipes in its place.

The module is in three parts, every public name importable from here:
this one (starting stacks, the splitter's faces, the coated design),
:mod:`workbench.analysis.recipe_model` (:class:`Recipe`) and
:mod:`workbench.analysis.recipe_refine` (:func:`refine_recipe`,
:func:`refine_in_camera`, :func:`ripple_penalty` and their reports).

References
----------
H. A. Macleod, *Thin-Film Optical Filters*, 4th ed., CRC Press, 2010,
ch. 6 (edge filters: symmetric periods suppress pass-band ripple on one
side; the edge shifts with angle and splits in s and p).
"""

from __future__ import annotations

import copy
from dataclasses import dataclass

import numpy as np

from workbench.analysis.recipe_model import Recipe
from workbench.analysis.recipe_refine import (REFINE_TOLERANCE, RIPPLE_WEIGHT, CameraRefineReport, RefineReport,
                                              refine_in_camera, refine_recipe, ripple_penalty)
from workbench.errors import WorkbenchError
from workbench.optics.elements import angle_shift_factor, edge
from workbench.optics.materials import material_named
from workbench.optics.stacks import cone_rays, parse_layer_formula, physical_thicknesses
from workbench.analysis.transition import stop_band_edges
from workbench.fileio.design_toml import design_from_dict, design_to_dict

__all__ = ["Recipe", "starting_stack", "refine_recipe", "RefineReport", "REFLECTS", "refine_in_camera",
           "CameraRefineReport", "idealised_face_reflectance", "splitter_recipes", "FaceRecipe", "coated_design",
           "measures_with_curves", "ripple_penalty", "RIPPLE_WEIGHT", "REFINE_TOLERANCE", "apodising_shares", "APODISE_MIN_SHARE"]

#: Which side of the edge a face reflects.
REFLECTS = ("short", "long")


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


_CHANNELS = ("R", "G", "B")


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
