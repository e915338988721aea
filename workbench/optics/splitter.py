"""The dichroic beam splitter and the ray geometry of its cone: quadrature over the pupil, ray angles.

:func:`dichroic_splitter` splits light three ways with two dichroic edges
(blue first or red first), energy conserved per ray, each edge shifted with
the angle of incidence (:func:`workbench.optics.elements.angle_shift_factor`)
and averaged over the cone of rays the lens f-number sets
(:func:`cone_quadrature`, :func:`distinct_rays`, :func:`ray_angles`). Moved
out of ``elements.py`` unchanged.

References
----------
Smith, W. J. *Modern Optical Engineering*, 4th ed. (2008), Ch. 11
(interference filters, the effective index n_eff and the shift with the
angle of incidence).
Macleod, H. A. *Thin-Film Optical Filters*, 4th ed. (2010), chapter on
tilted coatings (s and p shifts).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from workbench.errors import WorkbenchError
from workbench.optics.elements import EDGE_SHAPES, angle_shift_factor, as_float, check_choice, edge

__all__ = ["SPLITTER_ORDERS", "cone_quadrature", "distinct_rays", "ray_angles", "dichroic_splitter"]

SPLITTER_ORDERS = ("blue-first", "red-first")


# --------------------------------------------------------------------------
# The dichroic beam splitter
# --------------------------------------------------------------------------


@lru_cache(maxsize=32)
def cone_quadrature(rings: int = 4, azimuths: int = 8):
    """A fixed quadrature over a circular pupil: ``(r, φ, w)``, each ``(rings·azimuths,)``.

    ``r`` is the pupil radius as a fraction of the rim (0-1), ``φ`` the
    azimuth in radians, ``w`` the weights (sum 1). Rays are weighted by pupil
    area (a uniformly filled pupil): Gauss-Legendre in u = r² on [0, 1]
    (``rings`` nodes) times the periodic trapezoid rule in φ (``azimuths``
    nodes), exact for polynomials in u of degree 2·rings − 1 and for
    trigonometric polynomials in φ of degree < azimuths.

    References
    ----------
    Abramowitz, M. & Stegun, I. A. (1964). *Handbook of Mathematical
    Functions*, § 25.4.29 (Gauss-Legendre).
    docs/methods.md §14.
    """
    if rings < 1 or azimuths < 1:
        raise WorkbenchError(f"cone quadrature needs rings >= 1 and azimuths >= 1 (got {rings}, {azimuths})")
    x, wx = np.polynomial.legendre.leggauss(rings)
    u = 0.5 * (x + 1.0)
    wu = 0.5 * wx
    phi = (np.arange(azimuths) + 0.5) * 2.0 * np.pi / azimuths
    r = np.repeat(np.sqrt(u), azimuths)
    p = np.tile(phi, rings)
    w = np.repeat(wu, azimuths) / azimuths
    for a in (r, p, w):
        a.setflags(write=False)
    return r, p, w


@lru_cache(maxsize=16)
def distinct_rays(rings: int, azimuths: int):
    """The cone quadrature with rays of equal (r, cos φ) merged (their weights summed).

    Only cos φ enters the angle of incidence (:func:`ray_angles`), and the
    azimuths come in mirror pairs φ, 2π − φ, so about half the rays are
    duplicates; merging them changes nothing but the work.
    """
    r, phi, w = cone_quadrature(rings, azimuths)
    key = np.round(np.stack([r, np.cos(phi)], axis=1), 12)
    _, first, inverse = np.unique(key, axis=0, return_index=True, return_inverse=True)
    w2 = np.bincount(inverse.ravel(), weights=w)
    out = (r[first].copy(), phi[first].copy(), w2)
    for a in out:
        a.setflags(write=False)
    return out


def ray_angles(aoi_deg, f_number, n0, r, phi):
    """Angles of incidence (deg), (..., K), of the cone's rays on a surface tilted ``aoi_deg``.

    The cone's half-angle α in the medium obeys n₀ sin α = 1/(2N) (image-space
    numerical aperture of an f/N lens). A ray at pupil radius r·sin α and
    azimuth φ has direction cosine sin ρ = r·sin α with the axis, and
    cos θ = cos θ_c cos ρ + sin θ_c sin ρ cos φ.
    """
    sin_alpha = 1.0 / (2.0 * as_float(f_number) * as_float(n0))
    if np.any(~(sin_alpha < 1)):
        raise WorkbenchError("f_number too small for the medium: 1/(2·N·n0) must be < 1")
    sin_rho = sin_alpha[..., None] * r
    cos_rho = np.sqrt(1.0 - sin_rho ** 2)
    tc = np.radians(as_float(aoi_deg))[..., None]
    cos_t = np.cos(tc) * cos_rho + np.sin(tc) * sin_rho * np.cos(phi)
    return np.degrees(np.arccos(np.clip(cos_t, -1.0, 1.0)))


def dichroic_splitter(
    wl,
    *,
    blue_green_nm,
    green_red_nm,
    blue_green_width_nm=15.0,
    green_red_width_nm=15.0,
    blue_green_aoi_deg=0.0,
    green_red_aoi_deg=0.0,
    n_eff_s=1.8,
    n_eff_p=None,
    medium_index=1.0,
    f_number=None,
    loss=0.0,
    order="blue-first",
    shape="logistic",
    rings=4,
    azimuths=8,
    with_lost=True,
):
    """Three-way split of a two-edge dichroic beam splitter, averaged over the cone of rays.

    Parameters
    ----------
    wl : (n,) array_like, nm
    blue_green_nm, green_red_nm : (...) array_like, nm
        50 % wavelengths of the two edges at normal incidence (λ₀).
    blue_green_width_nm, green_red_width_nm : (...) array_like, nm
        10-90 % widths of the edges at normal incidence.
    blue_green_aoi_deg, green_red_aoi_deg : (...) array_like, degrees
        Angle of incidence of the chief ray on each dichroic surface, in the
        medium of index ``medium_index``.
    n_eff_s : (...) array_like
        Effective index of the coatings for s-polarised light (or for all
        light when ``n_eff_p`` is None).
    n_eff_p : (...) array_like or None
        Effective index for p-polarised light; when given the split is the
        mean of the s and p splits (unpolarised light).
    medium_index : (...) array_like
        Index n₀ the light travels in to the surfaces (1 in air, ~1.52 in a
        glass prism).
    f_number : (...) array_like or None
        Working f-number N of the lens; None takes the chief ray alone.
    loss : (...) array_like, 0-1
        Fraction of the light each surface absorbs or scatters, same at all
        wavelengths.
    order : {'blue-first', 'red-first'}
        Which band the first surface reflects: blue-first reflects blue
        below ``blue_green_nm`` then the second surface reflects red above
        ``green_red_nm``; red-first the other way round. Green passes both.
    shape : {'logistic', 'erf'}
        Edge shape, as for :func:`edge`.
    rings, azimuths : int
        Nodes of the fixed pupil quadrature (:func:`cone_quadrature`).
    with_lost : bool
        Compute ``lost`` (False: None in its place, for a caller that needs
        the paths alone, such as the chain; a fifth less work).

    Returns
    -------
    paths : (..., 3, n) ndarray
        Fraction of the incident light reaching the R, G and B paths.
    lost : (..., n) ndarray
        Fraction absorbed or scattered by the surfaces, computed from the
        loss alone (not as a remainder), so ``paths.sum(-2) + lost == 1`` is
        a check of the model.

    Notes
    -----
    Each surface's reflectance is a logistic or error-function edge r(λ)
    (rising towards the band it reflects), scaled by (1 − loss); its
    transmittance is (1 − loss)(1 − r). Tilting by θ scales the whole edge,
    centre and width, by √(1 − (n₀ sinθ / n_eff)²) (Smith, *Modern Optical
    Engineering*, Ch. 11). Per ray and polarisation the first path gets
    R₁, the second T₁R₂, the third T₁T₂, so energy is conserved ray by ray;
    the paths are then averaged over the rays of the cone (pupil-area
    weights, :func:`cone_quadrature`) and over s and p. The two surfaces
    are taken to tilt in the same plane and sense, so a ray meets both with
    the same pupil coordinates, and s stays s between them.

    References
    ----------
    Smith, W. J. (2008). *Modern Optical Engineering*, 4th ed., Ch. 11.
    Macleod, H. A. (2010). *Thin-Film Optical Filters*, 4th ed., chapter on
    tilted coatings (s and p).
    docs/methods.md §14.
    """
    check_choice(order, SPLITTER_ORDERS, "order")
    check_choice(shape, EDGE_SHAPES, "edge shape")
    wl = as_float(wl)
    if f_number is None:
        r, phi, w = np.zeros(1), np.zeros(1), np.ones(1)
        fn = np.inf
    else:
        r, phi, w = distinct_rays(int(rings), int(azimuths))
        fn = f_number
    loss = as_float(loss)
    if np.any(~((loss >= 0) & (loss < 1))):
        raise WorkbenchError("splitter loss must lie in [0, 1)")
    n_effs = [n_eff_s] if n_eff_p is None else [n_eff_s, n_eff_p]
    # both surfaces in one computation: axis -3 of (..., 2, P, K) is the surface
    # (0 blue/green, 1 green/red), -2 the polarisation, -1 the ray
    aoi = np.stack(np.broadcast_arrays(as_float(blue_green_aoi_deg), as_float(green_red_aoi_deg)), axis=-1)
    theta = ray_angles(aoi, np.asarray(fn, dtype=float)[..., None], as_float(medium_index)[..., None],
                        r, phi)                                            # (..., 2, K)
    n_eff_all = np.stack(np.broadcast_arrays(*[as_float(v) for v in n_effs]), axis=-1)  # (..., P)
    n0 = as_float(medium_index)[..., None, None, None]
    k = angle_shift_factor(theta[..., :, None, :], n_eff_all[..., None, :, None], n0)
    centers = np.stack(np.broadcast_arrays(as_float(blue_green_nm), as_float(green_red_nm)), axis=-1)
    widths = np.stack(np.broadcast_arrays(as_float(blue_green_width_nm), as_float(green_red_width_nm)), axis=-1)
    # long-pass rise of both edges; the blue/green surface reflects the short side, 1 − rise
    rise = edge(wl, centers[..., None, None] * k, widths[..., None, None] * k, kind="long-pass",
                shape=shape)                                               # (..., 2, P, K, n)
    r_b = 1.0 - rise[..., 0, :, :, :]
    r_r = rise[..., 1, :, :, :]

    ell = loss[..., None, None, None]
    keep = 1.0 - ell
    first, second = (r_b, r_r) if order == "blue-first" else (r_r, r_b)
    T1 = keep * (1.0 - first)
    p_first, p_second, p_green = keep * first, T1 * (keep * second), T1 * (keep * (1.0 - second))
    if order == "blue-first":
        rgb = np.stack(np.broadcast_arrays(p_second, p_green, p_first), axis=-4)
    else:
        rgb = np.stack(np.broadcast_arrays(p_first, p_green, p_second), axis=-4)
    P = len(n_effs)
    # average over polarisations and rays (axes -3, -2 of (..., 3, P, K, n))
    paths = (np.swapaxes(rgb, -1, -2) @ w).sum(axis=-2) / P
    if not with_lost:
        return paths, None
    # what the surfaces absorb: all light meets the first, T₁/(1−ℓ) the second
    absorbed = ell + (1.0 - first) * keep * ell
    absorbed = np.broadcast_to(absorbed, rgb.shape[:-4] + rgb.shape[-3:])
    lost = (np.swapaxes(absorbed, -1, -2) @ w).sum(axis=-2) / P
    return paths, lost
