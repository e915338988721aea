"""Ripple of a thin-film stack for the fits: second differences of its chief ray's R_s and R_p on a fine grid.

One definition serves the recipe refinements
(:func:`workbench.analysis.recipe.ripple_penalty`) and ``workbench fit``'s
``coating_smoothness`` (:class:`CoatingRipple`, batched over a fit's rows):
on a grid of :data:`RIPPLE_STEP_NM` over a window, at the chief-ray angle,
the coherent stack's ``R_{k−1} − 2 R_k + R_{k+1}`` for s, then for p. A
smooth edge of width w has second differences of about (step/w)², a ripple
of amplitude a and period P about a (2π step/P)², so a penalty on them
falls mostly on the ripple (docs/methods.md §15).

References
----------
H. A. Macleod, *Thin-Film Optical Filters*, 4th ed., CRC Press, 2010, ch. 2
(the characteristic matrix) and ch. 6 (pass-band ripple of edge filters).
"""

from __future__ import annotations

import numpy as np

from workbench.errors import WorkbenchError
from workbench.optics.kinds.coating import layer_indices, layer_thicknesses
from workbench.optics.materials import material_named
from workbench.optics.thinfilm import stack_response

__all__ = ["RIPPLE_STEP_NM", "ripple_grid", "second_differences", "ripple_scale", "ripple_residuals", "CoatingRipple"]

#: Grid step of the ripple's second differences, nm (fine enough for a pass-band ripple of period ≥ 10 nm).
RIPPLE_STEP_NM = 2.0


def ripple_grid(start_nm: float, stop_nm: float, step_nm: float = RIPPLE_STEP_NM) -> np.ndarray:
    """The fine grid (n_f,) nm from ``start_nm`` to ``stop_nm`` in steps of ``step_nm``; at least 3 points."""
    wl = np.arange(float(start_nm), float(stop_nm) + step_nm / 2, step_nm)
    if wl.size < 3:
        raise WorkbenchError(f"the ripple penalty needs at least 3 wavelengths (got {wl.size})")
    return wl


def second_differences(values) -> np.ndarray:
    """``v[k−1] − 2 v[k] + v[k+1]`` along the last axis, ``(..., n − 2)``; zero for any straight line."""
    v = np.asarray(values, dtype=float)
    return v[..., :-2] - 2 * v[..., 1:-1] + v[..., 2:]


def ripple_scale(weight: float, fit_weight: float, n_ripple: int) -> float:
    """The factor ``weight · √(fit_weight / n_ripple)`` on the second differences.

    With ``weight = 1`` the penalty's mean square counts as much as the
    fit's mean square when ``fit_weight`` is the fit's Σ w² (its number of
    residuals for unit weights) and ``n_ripple`` the number of second
    differences.
    """
    return float(weight) * float(np.sqrt(fit_weight / n_ripple))


def ripple_residuals(layer_indices_f, thicknesses_nm, wavelengths_nm, aoi_deg: float, *, incident, substrate,
                     derivatives: bool = False):
    """Second differences of the chief ray's R_s then R_p, ``(..., 2(n_f − 2))``, for stacks ``(..., L)``.

    Parameters
    ----------
    layer_indices_f : (L, n_f) or (..., L, n_f) array_like of complex
        The layers' indices on the fine grid.
    thicknesses_nm : (..., L) array_like, nm
    wavelengths_nm : (n_f,) array_like, nm
        The fine grid (:func:`ripple_grid`).
    aoi_deg : float, degrees
        The chief ray's angle in the incidence medium.
    incident, substrate : (n_f,) array_like
        The media's indices on the fine grid.
    derivatives : bool
        Also return the Jacobian ``(..., 2(n_f − 2), L)`` (analytic, per thickness).

    Returns
    -------
    ndarray, or (ndarray, ndarray) with ``derivatives``
    """
    res = stack_response(layer_indices_f, thicknesses_nm, wavelengths_nm, [float(aoi_deg)],
                         incident=incident, substrate=substrate, derivatives=derivatives)
    R = res.R[..., 0, :]                                                   # (..., 2, n_f)
    D2 = second_differences(R)
    out = D2.reshape(D2.shape[:-2] + (-1,))
    if not derivatives:
        return out
    dD2 = second_differences(res.dR_dd[..., 0, :])                         # (..., L, 2, n_f − 2)
    J = dD2.reshape(dD2.shape[:-2] + (-1,))                                # (..., L, 2(n_f − 2))
    return out, np.swapaxes(J, -1, -2)


class CoatingRipple:
    """The ripple residuals of one ``coating`` element for a fit's batch of its parameters.

    The element's layers are evaluated on their own fine grid
    (:func:`ripple_grid` over ``window_nm``; the materials' dispersion
    formulas or tables read there once), with the thicknesses and index
    scales the element's parameters give (:func:`layer_thicknesses`,
    :func:`layer_indices`) at its ``aoi_deg``. In a batch, only row 0 and
    the rows whose thicknesses, indices or angle differ from it are
    computed (a fit's forward differences move one parameter per row; the
    engine takes a batch that changes one layer per row from one pass from
    each side); the others repeat row 0. The last batch's answer is kept.

    Parameters
    ----------
    element : workbench.model.design.Element
        A loaded ``coating`` element (its ``data`` read).
    window_nm : (float, float), nm
    step_nm : float, nm
    """

    def __init__(self, element, window_nm, *, step_nm: float = RIPPLE_STEP_NM):
        if element.type != "coating" or element.data is None:
            raise WorkbenchError(f"{element.name!r} must be a loaded coating element (got type {element.type!r})")
        self.name = element.name
        self.data = element.data
        self.wavelengths = ripple_grid(window_nm[0], window_nm[1], step_nm)
        wl = self.wavelengths
        by_sym = {s: m.index(wl) for s, m in self.data.materials.items()}
        self.N = np.stack([by_sym[layer.symbol] for layer in self.data.layers])         # (L, n_f)
        media = {}
        for key, default in (("incident", "air"), ("substrate", "crown-517")):
            spec = element.option(key, default)
            media[key] = material_named(spec if isinstance(spec, str) else float(spec)).index(wl)
        self.incident = media["incident"].real
        self.substrate = media["substrate"]
        self.size = 2 * (wl.size - 2)
        self._last = None

    def __call__(self, params: dict) -> np.ndarray:
        """Residuals (B, 2(n_f − 2)) for the element's parameters by their own key, each a scalar or (B,)."""
        key = tuple((k, np.shape(v), np.asarray(v, dtype=float).tobytes()) for k, v in sorted(params.items()))
        if self._last is not None and self._last[0] == key:
            return self._last[1]
        d = np.atleast_2d(layer_thicknesses(self.data, params))                           # (B, L)
        N = layer_indices(self.data, params, self.N)                                       # (L, n) or (B, L, n)
        aoi = np.asarray(params.get("aoi_deg", 0.0), dtype=float)
        B = max(d.shape[0], N.shape[0] if N.ndim == 3 else 1, aoi.size)
        d = np.broadcast_to(d, (B, d.shape[-1]))
        aoi = np.broadcast_to(aoi.reshape(-1) if aoi.ndim else aoi, (B,))
        if np.any(~(d > 0)):
            raise WorkbenchError(f"{self.name}: coating layer thicknesses must be > 0 nm (got one ≤ 0)")
        moved = np.any(d != d[0], axis=1) | (aoi != aoi[0])
        if N.ndim == 3:
            N = np.broadcast_to(N, (B,) + N.shape[1:])
            moved |= np.any(N != N[0], axis=(1, 2))
        keep = np.concatenate([[0], np.flatnonzero(moved)])                                # row 0 and the rows unlike it
        inverse = np.zeros(B, dtype=np.intp)
        inverse[keep[1:]] = np.arange(1, keep.size)
        out = np.empty((keep.size, self.size))
        angles = aoi[keep]
        for a in np.unique(angles):               # one engine call per distinct angle (one in a fit)
            rows = np.flatnonzero(angles == a)
            Nr = N[keep[rows]] if N.ndim == 3 else N
            out[rows] = ripple_residuals(Nr, d[keep[rows]], self.wavelengths, float(a), incident=self.incident,
                                         substrate=self.substrate)
        result = out[inverse]
        self._last = (key, result)
        return result
