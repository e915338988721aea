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
:func:`workbench.optics.splitter.dichroic_splitter`
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

import numpy as np

from workbench.errors import WorkbenchError

__all__ = [
    "EDGE_SHAPES",
    "EDGE_KINDS",
    "REFLECTION_MODELS",
    "GLASS_DATA",
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
    "check_choice",
    "as_float",
]

EDGE_SHAPES = ("logistic", "erf")
EDGE_KINDS = ("long-pass", "short-pass")
REFLECTION_MODELS = ("approx", "exact", "none")
#: What a glass's measured curve holds: total (surfaces included) or internal transmittance.
GLASS_DATA = ("total", "internal")

#: Second radiation constant, nm·K (CIE 15:2004).
_C2_NM_K = 1.4388e7


def check_choice(value, choices, what):
    """``value`` when it is one of ``choices``; else a WorkbenchError naming ``what``."""
    if value not in choices:
        raise WorkbenchError(f"{what} must be one of {', '.join(choices)} (got {value!r})")
    return value


def as_float(x):
    """``x`` as a float array."""
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
    s = as_float(n0) * np.sin(np.radians(as_float(theta_deg))) / as_float(n_eff)
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
    return as_float(lambda0_nm) * angle_shift_factor(theta_deg, n_eff, n0)


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
    n = as_float(n)
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
    n = as_float(n)
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
    ratio = as_float(d_mm) / as_float(d0_mm)
    return np.power(as_float(tau0), ratio[..., None])


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
    check_choice(reflection, REFLECTION_MODELS, "reflection")
    T = as_float(measured)
    if np.any(T < 0) or np.any(T > 1):
        raise WorkbenchError("measured glass transmittance must lie in 0-1")
    d = as_float(thickness_mm)
    if np.any(~(d > 0)) or not float(measured_mm) > 0:
        raise WorkbenchError("glass thicknesses must be > 0 mm")
    n = as_float(refractive_index)
    if np.any(~(n >= 1)):
        raise WorkbenchError(f"refractive_index must be >= 1 (got {refractive_index})")
    n = np.broadcast_to(n, np.broadcast_shapes(n.shape, d.shape))
    check_choice(data, GLASS_DATA, "data")
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
    check_choice(kind, EDGE_KINDS, "edge kind")
    check_choice(shape, EDGE_SHAPES, "edge shape")
    wl = as_float(wl)
    c = as_float(center_nm)[..., None]
    w = as_float(width_nm)[..., None]
    if np.any(~(w > 0)):
        raise WorkbenchError("edge width_nm must be > 0 nm")
    x = wl - c if kind == "long-pass" else c - wl
    f = _rise(x, w, shape)
    hi = as_float(pass_level)[..., None]
    lo = as_float(block_level)[..., None]
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
    check_choice(shape, EDGE_SHAPES, "edge shape")
    wl = as_float(wl)
    w = as_float(width_nm)[..., None]
    if np.any(~(w > 0)):
        raise WorkbenchError("band-pass width_nm must be > 0 nm")
    f = _rise(wl - as_float(low_nm)[..., None], w, shape) * _rise(as_float(high_nm)[..., None] - wl, w, shape)
    hi = as_float(pass_level)[..., None]
    lo = as_float(block_level)[..., None]
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
    d = as_float(density)[..., None]
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
    wl = as_float(wl)
    mu = as_float(mired_shift)[..., None]
    lam_p = np.where(mu < 0, wl[0], wl[-1])
    return as_float(peak_level)[..., None] * np.exp(-_C2_NM_K * 1e-6 * mu * (1.0 / wl - 1.0 / lam_p))
