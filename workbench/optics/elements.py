"""Optical elements as functions of wavelength and of their parameters.

Every element here is a plain function of a wavelength vector ``wl`` (nm,
shape ``(n,)``) and of numeric parameters that may carry any leading batch
shape ``(...)``; the curve returned is shaped ``(..., n)`` (or
``(..., 3, n)`` for the beam splitter's three paths). So one call evaluates
a whole Monte Carlo batch of glass thicknesses or edge positions. All
transmittances, reflectances and quantum efficiencies are fractions 0-1.

Elements
--------
:func:`glass_transmittance`
    An absorbing glass measured at one thickness used at another: internal
    transmittance scaled as τ(d) = τ(d₀)^(d/d₀) and the two surfaces'
    reflection losses applied with the factor P_d = 2n/(n²+1), or with the
    exact incoherent form (1−R)²τ/(1−R²τ²).
:func:`edge`, :func:`band_pass`
    Smooth long-pass, short-pass and band-pass edges, logistic or
    error-function shaped, given by the 50 % wavelength, the 10-90 % width
    and the in-band and blocking levels.
:func:`dichroic_splitter`
    Two dichroic edges splitting light three ways (blue first or red first),
    energy conserved per ray, each edge shifted with the angle of incidence
    and averaged over the cone of rays the lens f-number sets, with optional
    separate s and p effective indices.
:func:`neutral_density`, :func:`colour_correction`
    Flat attenuation 10^(−D) and the ideal mired-shift filter.

A measured curve (lens, IR cut, sensor quantum efficiency) is used as
tabulated; reading it is the design's business (:mod:`workbench.model.design`).

References
----------
Smith, W. J. *Modern Optical Engineering*, 4th ed. (2008): Eqs. 10.2-10.6
(absorbing glass, surface reflection), Ch. 11 (interference filters, the
effective index n_eff and the shift with the angle of incidence).
SCHOTT Technical Information TIE-35, *Transmittance of optical glass*
(thickness scaling, the reflection factor P_d).
Macleod, H. A. *Thin-Film Optical Filters*, 4th ed. (2010), chapter on
tilted coatings (s and p shifts).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from workbench.errors import WorkbenchError

__all__ = [
    "distinct_rays",
    "ray_angles",
    "EDGE_SHAPES",
    "EDGE_KINDS",
    "REFLECTION_MODELS",
    "GLASS_DATA",
    "SPLITTER_ORDERS",
    "angle_shifted_wavelength",
    "angle_shift_factor",
    "reflection_factor",
    "surface_reflectance",
    "internal_transmittance_at",
    "glass_transmittance",
    "edge",
    "band_pass",
    "neutral_density",
    "colour_correction",
    "cone_quadrature",
    "dichroic_splitter",
]

EDGE_SHAPES = ("logistic", "erf")
EDGE_KINDS = ("long-pass", "short-pass")
REFLECTION_MODELS = ("approx", "exact", "none")
#: What a glass's measured curve holds: total (surfaces included) or internal transmittance.
GLASS_DATA = ("total", "internal")
SPLITTER_ORDERS = ("blue-first", "red-first")

#: Second radiation constant, nm·K (CIE 15:2004).
_C2_NM_K = 1.4388e7


def _choice(value, choices, what):
    if value not in choices:
        raise WorkbenchError(f"{what} must be one of {', '.join(choices)} (got {value!r})")
    return value


def _arr(x):
    return np.asarray(x, dtype=float)


# --------------------------------------------------------------------------
# Angle of incidence
# --------------------------------------------------------------------------


def angle_shift_factor(theta_deg, n_eff, n0=1.0):
    """The factor λ(θ)/λ₀ of an interference edge tilted by ``theta_deg``.

    Parameters
    ----------
    theta_deg : (...) array_like, degrees
        Angle of incidence in the medium of index ``n0``.
    n_eff : (...) array_like
        Effective index of the coating (typically 1.5-1.9).
    n0 : (...) array_like
        Index of the medium the light arrives from (1 for air, ~1.52 in a
        glass prism).

    Returns
    -------
    (...) ndarray
        √(1 − (n₀ sinθ / n_eff)²), 1 at normal incidence.

    Raises
    ------
    WorkbenchError
        When n₀ sinθ ≥ n_eff (the formula has no real value).

    Notes
    -----
    λ(θ) = λ₀ √(1 − (n₀ sinθ / n_eff)²) (Smith, *Modern Optical Engineering*,
    4th ed., Ch. 11). A shortcut for the characteristic-matrix calculation,
    good at small to moderate tilt.

    References
    ----------
    Smith, W. J. (2008). *Modern Optical Engineering*, 4th ed., Ch. 11.
    Macleod, H. A. (2010). *Thin-Film Optical Filters*, 4th ed., chapter on
    tilted coatings.
    docs/methods.md §14.
    """
    s = _arr(n0) * np.sin(np.radians(_arr(theta_deg))) / _arr(n_eff)
    arg = 1.0 - s * s
    if np.any(~(arg > 0)):
        raise WorkbenchError(
            "angle shift needs n0·sin(theta) < n_eff "
            f"(got n0·sin(theta)/n_eff up to {float(np.nanmax(np.abs(s))):.4g})"
        )
    return np.sqrt(arg)


def angle_shifted_wavelength(lambda0_nm, theta_deg, n_eff, n0=1.0):
    """Wavelength (nm) of a filter feature at ``lambda0_nm`` tilted by ``theta_deg``.

    λ(θ) = λ₀√(1 − (n₀ sinθ / n_eff)²); see :func:`angle_shift_factor`.

    >>> round(float(angle_shifted_wavelength(550.0, 20.0, 1.8)), 1)
    540.0

    References
    ----------
    Smith, W. J. (2008). *Modern Optical Engineering*, 4th ed., Ch. 11.
    docs/methods.md §14.
    """
    return _arr(lambda0_nm) * angle_shift_factor(theta_deg, n_eff, n0)


# --------------------------------------------------------------------------
# Absorbing glass
# --------------------------------------------------------------------------


def reflection_factor(n):
    """Reflection factor P_d = 2n/(n² + 1) of a plate's two surfaces (both, multiply reflected).

    >>> round(float(reflection_factor(1.55)), 4)
    0.9111

    Notes
    -----
    From the exact form with τ = 1: (1−R)²/(1−R²) = (1−R)/(1+R) = 2n/(n²+1),
    R = ((n−1)/(n+1))² at normal incidence (Smith, Eqs. 10.2-10.6; TIE-35).

    References
    ----------
    Smith, W. J. (2008). *Modern Optical Engineering*, 4th ed., Eqs. 10.2-10.6.
    SCHOTT Technical Information TIE-35, *Transmittance of optical glass*.
    docs/methods.md §14.
    """
    n = _arr(n)
    return 2.0 * n / (n * n + 1.0)


def surface_reflectance(n):
    """Normal-incidence Fresnel reflectance R = ((n−1)/(n+1))² of one glass-air surface.

    References
    ----------
    Smith, W. J. (2008). *Modern Optical Engineering*, 4th ed., Eqs. 10.2-10.6.
    SCHOTT Technical Information TIE-35, *Transmittance of optical glass*.
    docs/methods.md §14.

    Examples
    --------
    >>> round(float(surface_reflectance(1.52)), 5)  # uncoated glass
    0.04258
    """
    n = _arr(n)
    return ((n - 1.0) / (n + 1.0)) ** 2


def internal_transmittance_at(tau0, d0_mm, d_mm):
    """Internal transmittance at thickness ``d_mm`` from τ(d₀) (Bouguer-Lambert law).

    Parameters
    ----------
    tau0 : (..., n) array_like
        Internal transmittance at ``d0_mm``, 0-1.
    d0_mm, d_mm : (...) array_like, mm
        Reference and wanted thickness, > 0.

    Returns
    -------
    (..., n) ndarray
        τ(d) = τ(d₀)^(d/d₀).

    References
    ----------
    Smith, W. J. (2008). *Modern Optical Engineering*, 4th ed., Eqs. 10.2-10.6.
    SCHOTT Technical Information TIE-35, *Transmittance of optical glass*.
    docs/methods.md §14.
    """
    ratio = _arr(d_mm) / _arr(d0_mm)
    return np.power(_arr(tau0), ratio[..., None])


def _tau_from_total(T, n, model):
    if model == "none":
        return T
    if model == "approx":
        return T / reflection_factor(n)[..., None]
    R = surface_reflectance(n)[..., None]
    # T R² τ² + (1−R)² τ − T = 0, positive root; τ = 0 when T = 0.
    a = T * R * R
    b = (1.0 - R) ** 2
    with np.errstate(invalid="ignore", divide="ignore"):
        tau = np.where(a > 0, 2.0 * T / (b + np.sqrt(b * b + 4.0 * a * T)), T / b)
    return tau


def _total_from_tau(tau, n, model):
    if model == "none":
        return tau
    if model == "approx":
        return reflection_factor(n)[..., None] * tau
    R = surface_reflectance(n)[..., None]
    return (1.0 - R) ** 2 * tau / (1.0 - R * R * tau * tau)


def glass_transmittance(measured, measured_mm, thickness_mm, refractive_index=1.52, *,
                        reflection="approx", data="total"):
    """Transmittance of an absorbing glass at ``thickness_mm`` from one measured at ``measured_mm``.

    Parameters
    ----------
    measured : (n,) or (..., n) array_like
        Measured (total, surfaces included) transmittance at ``measured_mm``, 0-1.
    measured_mm : float, mm
        Thickness of the measured sample, > 0.
    thickness_mm : (...) array_like, mm
        Thickness wanted, > 0; a batch gives a batch of curves.
    refractive_index : (...) array_like
        Index n of the glass (one value for the band: the dispersion of the
        reflection loss is neglected).
    reflection : {'approx', 'exact', 'none'}
        The two faces in air: ``'approx'``: T = P_d·τ with P_d = 2n/(n²+1).
        ``'exact'``: T = (1−R)²τ/(1−R²τ²), R = ((n−1)/(n+1))² (multiple
        reflections between the faces, incoherent). ``'none'``: no faces (a
        glass cemented or immersed); the curve is then an internal
        transmittance.
    data : {'total', 'internal'}
        What ``measured`` is: the total transmittance of the sample (faces
        included; the faces are taken out by ``reflection`` to get τ), or its
        internal transmittance τ (only the faces of the result are added).

    Returns
    -------
    (..., n) ndarray
        Total transmittance at ``thickness_mm``, 0-1.

    Notes
    -----
    τ(d₀) = T(d₀)/P_d, τ(d) = τ(d₀)^(d/d₀), T(d) = P_d·τ(d) (Smith,
    *Modern Optical Engineering*, Eqs. 10.2-10.6; SCHOTT TIE-35). The
    published example: T(1 mm) = 59.8 % with P_d = 0.911 gives 36.1 % at
    2.2 mm.

    References
    ----------
    Smith, W. J. (2008). *Modern Optical Engineering*, 4th ed., Eqs. 10.2-10.6.
    SCHOTT Technical Information TIE-35, *Transmittance of optical glass*.
    docs/methods.md §14.

    Examples
    --------
    >>> T = glass_transmittance([0.598], 1.0, 2.2, 1.55)
    >>> round(float(T[0]) * 100, 1)
    36.1
    """
    _choice(reflection, REFLECTION_MODELS, "reflection")
    T = _arr(measured)
    if np.any(T < 0) or np.any(T > 1):
        raise WorkbenchError("measured glass transmittance must lie in 0-1")
    d = _arr(thickness_mm)
    if np.any(~(d > 0)) or not float(measured_mm) > 0:
        raise WorkbenchError("glass thicknesses must be > 0 mm")
    n = _arr(refractive_index)
    if np.any(~(n >= 1)):
        raise WorkbenchError(f"refractive_index must be >= 1 (got {refractive_index})")
    n = np.broadcast_to(n, np.broadcast_shapes(n.shape, d.shape))
    _choice(data, GLASS_DATA, "data")
    tau0 = T if data == "internal" else _tau_from_total(T, n, reflection)
    if np.any(tau0 > 1 + 1e-12):
        raise WorkbenchError(
            "measured transmittance exceeds what the surfaces allow "
            f"(P_d = {float(np.min(reflection_factor(n))):.4f}); is the curve an internal "
            "transmittance? then use transmittance = 'internal'"
        )
    tau = internal_transmittance_at(np.minimum(tau0, 1.0), measured_mm, d)
    return _total_from_tau(tau, n, reflection)


# --------------------------------------------------------------------------
# Parametric edges
# --------------------------------------------------------------------------

_LN9 = float(np.log(9.0))
#: z₀.₉ = Φ⁻¹(0.9), the standard normal's 90 % point: scipy.special.ndtri(0.9) written out, so that
#: importing this module (and every command's parser, through the design schema) needs no scipy.
_Z90 = 1.2815515655446004


def _rise(x, width, shape):
    """0→1 step at x = 0 whose 10 % and 90 % points are ``width`` apart."""
    if shape == "logistic":
        # 1/(1+exp(-x/s)): 10-90 % width = 2 s ln 9.
        s = width / (2.0 * _LN9)
        return 0.5 * (1.0 + np.tanh(x / (2.0 * s)))
    # Normal cumulative: 10-90 % width = 2 z₀.₉ σ.
    sigma = width / (2.0 * _Z90)
    from scipy.special import ndtr  # late: only normal-shaped edges need scipy (~0.1 s to import)

    return ndtr(x / sigma)


def edge(wl, center_nm, width_nm, *, kind="long-pass", shape="logistic",
         pass_level=1.0, block_level=0.0):
    """A smooth long-pass or short-pass edge.

    Parameters
    ----------
    wl : (n,) array_like, nm
    center_nm : (...) array_like, nm
        Wavelength where the curve is half-way between the levels.
    width_nm : (...) array_like, nm
        Distance between the 10 % and 90 % points of the step, > 0.
    kind : {'long-pass', 'short-pass'}
        Long-pass transmits above the centre, short-pass below.
    shape : {'logistic', 'erf'}
        Logistic 1/(1+e^(−x/s)), s = w/(2 ln 9); or error function
        Φ(x/σ), σ = w/(2·1.2816).
    pass_level, block_level : (...) array_like, 0-1
        In-band and blocking levels.

    Returns
    -------
    (..., n) ndarray
        T(λ) = block + (pass − block)·f(±(λ − centre)).

    References
    ----------
    docs/methods.md §14 (a parametric model of an edge, not a coating; common practice).

    Examples
    --------
    >>> T = edge([590.0, 600.0, 610.0], 600.0, 20.0)
    >>> [round(float(t), 3) for t in T]
    [0.1, 0.5, 0.9]
    """
    _choice(kind, EDGE_KINDS, "edge kind")
    _choice(shape, EDGE_SHAPES, "edge shape")
    wl = _arr(wl)
    c = _arr(center_nm)[..., None]
    w = _arr(width_nm)[..., None]
    if np.any(~(w > 0)):
        raise WorkbenchError("edge width_nm must be > 0 nm")
    x = wl - c if kind == "long-pass" else c - wl
    f = _rise(x, w, shape)
    hi = _arr(pass_level)[..., None]
    lo = _arr(block_level)[..., None]
    return lo + (hi - lo) * f


def band_pass(wl, low_nm, high_nm, width_nm, *, shape="logistic", pass_level=1.0,
              block_level=0.0):
    """A band-pass: a long-pass edge at ``low_nm`` times a short-pass edge at ``high_nm``.

    T(λ) = block + (pass − block)·f(λ − low)·f(high − λ); ``width_nm`` is the
    10-90 % width of each edge. Shapes as for :func:`edge`.

    References
    ----------
    docs/methods.md §14.
    """
    _choice(shape, EDGE_SHAPES, "edge shape")
    wl = _arr(wl)
    w = _arr(width_nm)[..., None]
    if np.any(~(w > 0)):
        raise WorkbenchError("band-pass width_nm must be > 0 nm")
    f = _rise(wl - _arr(low_nm)[..., None], w, shape) * _rise(_arr(high_nm)[..., None] - wl, w, shape)
    hi = _arr(pass_level)[..., None]
    lo = _arr(block_level)[..., None]
    return lo + (hi - lo) * f


def neutral_density(wl, density):
    """Flat transmittance 10^(−D) of a neutral density filter of optical density ``density`` (...).

    References
    ----------
    ISO 5-2:2009, *Photography and graphic technology - Density measurements -
    Part 2: Geometric conditions for transmittance density* (D = −log₁₀ T).
    docs/methods.md §14.

    Examples
    --------
    >>> neutral_density([500.0, 600.0], 0.3).round(4).tolist()
    [0.5012, 0.5012]
    """
    d = _arr(density)[..., None]
    return np.broadcast_to(10.0 ** (-d), d.shape[:-1] + (np.size(wl),)).copy()


def colour_correction(wl, mired_shift, *, peak_level=1.0):
    """The ideal mired-shift (colour-correction) filter.

    Parameters
    ----------
    wl : (n,) array_like, nm
    mired_shift : (...) array_like, mired (MK⁻¹)
        Δμ = 10⁶(1/T₂ − 1/T₁): negative raises the colour temperature of a
        Planckian source (a blue filter), positive lowers it (amber).
    peak_level : (...) array_like, 0-1
        Transmittance at the grid end where the filter transmits most.

    Returns
    -------
    (..., n) ndarray
        T(λ) = peak·exp(−c₂·10⁻⁶·Δμ·(1/λ − 1/λ_p)), λ_p the shortest grid
        wavelength when Δμ < 0 and the longest otherwise, so the curve's
        maximum over the grid is ``peak_level``.

    Notes
    -----
    In the Wien approximation a Planckian at T₁ times this curve is a
    Planckian at T₂ (up to scale): P(λ,T₂)/P(λ,T₁) = exp(−c₂/λ·(1/T₂ − 1/T₁)),
    c₂ = 1.4388×10⁷ nm·K (CIE 15:2004). The mired scale is common practice
    for colour-correction filters.

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed. (c₂).
    Smith, W. J. (2008). *Modern Optical Engineering*, 4th ed. (colour-correction filters; the mired scale is
    common practice).
    docs/methods.md §14.
    """
    wl = _arr(wl)
    mu = _arr(mired_shift)[..., None]
    lam_p = np.where(mu < 0, wl[0], wl[-1])
    return _arr(peak_level)[..., None] * np.exp(-_C2_NM_K * 1e-6 * mu * (1.0 / wl - 1.0 / lam_p))


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
    sin_alpha = 1.0 / (2.0 * _arr(f_number) * _arr(n0))
    if np.any(~(sin_alpha < 1)):
        raise WorkbenchError("f_number too small for the medium: 1/(2·N·n0) must be < 1")
    sin_rho = sin_alpha[..., None] * r
    cos_rho = np.sqrt(1.0 - sin_rho ** 2)
    tc = np.radians(_arr(aoi_deg))[..., None]
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
    _choice(order, SPLITTER_ORDERS, "order")
    _choice(shape, EDGE_SHAPES, "edge shape")
    wl = _arr(wl)
    if f_number is None:
        r, phi, w = np.zeros(1), np.zeros(1), np.ones(1)
        fn = np.inf
    else:
        r, phi, w = distinct_rays(int(rings), int(azimuths))
        fn = f_number
    loss = _arr(loss)
    if np.any(~((loss >= 0) & (loss < 1))):
        raise WorkbenchError("splitter loss must lie in [0, 1)")
    n_effs = [n_eff_s] if n_eff_p is None else [n_eff_s, n_eff_p]
    # both surfaces in one computation: axis -3 of (..., 2, P, K) is the surface
    # (0 blue/green, 1 green/red), -2 the polarisation, -1 the ray
    aoi = np.stack(np.broadcast_arrays(_arr(blue_green_aoi_deg), _arr(green_red_aoi_deg)), axis=-1)
    theta = ray_angles(aoi, np.asarray(fn, dtype=float)[..., None], _arr(medium_index)[..., None],
                        r, phi)                                            # (..., 2, K)
    n_eff_all = np.stack(np.broadcast_arrays(*[_arr(v) for v in n_effs]), axis=-1)  # (..., P)
    n0 = _arr(medium_index)[..., None, None, None]
    k = angle_shift_factor(theta[..., :, None, :], n_eff_all[..., None, :, None], n0)
    centers = np.stack(np.broadcast_arrays(_arr(blue_green_nm), _arr(green_red_nm)), axis=-1)
    widths = np.stack(np.broadcast_arrays(_arr(blue_green_width_nm), _arr(green_red_width_nm)), axis=-1)
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
    # what the surfaces absorb: all light meets the first, T₁/(1−ℓ) the second
    absorbed = ell + (1.0 - first) * keep * ell
    P = len(n_effs)
    # average over polarisations and rays (axes -3, -2 of (..., 3, P, K, n))
    paths = (np.swapaxes(rgb, -1, -2) @ w).sum(axis=-2) / P
    absorbed = np.broadcast_to(absorbed, rgb.shape[:-4] + rgb.shape[-3:])
    lost = (np.swapaxes(absorbed, -1, -2) @ w).sum(axis=-2) / P
    return paths, lost
