"""Chromaticity, CIELAB and CIEDE2000, vectorised over leading axes.

Components are on the last axis, so any leading shape works: a single
colour (3,), a list (k, 3), an image (h, w, 3). Scales: XYZ with the white
at Y = 100; L* 0-100; chromaticities x, y and u′, v′ are plain fractions.

Chromaticity of black (X + Y + Z = 0) is undefined and returned as NaN.

References
----------
CIE 15:2004, *Colorimetry*, 3rd ed., §§ 7.3 (x, y), 8.1 (u′, v′), 8.2.1
(CIELAB).
CIE 142-2001 / ISO/CIE 11664-6:2014, *CIEDE2000 colour-difference formula*.
Sharma, G., Wu, W., & Dalal, E. N. (2005). The CIEDE2000 color-difference
formula: Implementation notes, supplementary test data, and mathematical
observations. *Color Research & Application*, 30(1), 21-30.
doi:10.1002/col.20070
"""

from __future__ import annotations

import numpy as np

from workbench.errors import WorkbenchError

__all__ = [
    "XYZ_to_xy",
    "xy_to_XYZ",
    "XYZ_to_uv_prime",
    "xy_to_uv_prime",
    "uv_prime_to_xy",
    "XYZ_to_Lab",
    "Lab_to_XYZ",
    "Lab_to_LCh",
    "delta_E_CIE2000",
    "delta_E_CIE2000_gradient",
    "XYZ_to_Lab_jacobian",
    "delta_uv_prime",
]


def _last3(a, what: str) -> np.ndarray:
    a = np.asarray(a, dtype=float)
    if a.ndim == 0 or a.shape[-1] != 3:
        raise WorkbenchError(f"{what} must have 3 components on the last axis (got shape {a.shape})")
    return a


def _last2(a, what: str) -> np.ndarray:
    a = np.asarray(a, dtype=float)
    if a.ndim == 0 or a.shape[-1] != 2:
        raise WorkbenchError(f"{what} must have 2 components on the last axis (got shape {a.shape})")
    return a


def XYZ_to_xy(XYZ) -> np.ndarray:
    """CIE 1931 chromaticity (x, y) of ``XYZ`` (..., 3) → (..., 2).

    x = X / (X + Y + Z), y = Y / (X + Y + Z) (CIE 15:2004 § 7.3).

    >>> XYZ_to_xy([95.047, 100.0, 108.883]).round(5).tolist()
    [0.31273, 0.32902]

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 7.3.
    docs/methods.md §4.
    """
    XYZ = _last3(XYZ, "XYZ")
    s = XYZ.sum(axis=-1, keepdims=True)
    with np.errstate(divide="ignore", invalid="ignore"):
        xy = XYZ[..., :2] / s
    return np.where(s == 0, np.nan, xy)


def xy_to_XYZ(xy, Y=100.0) -> np.ndarray:
    """XYZ (..., 3) with luminance ``Y`` from chromaticity ``xy`` (..., 2).

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 7.3.
    docs/methods.md §4.
    """
    xy = _last2(xy, "xy")
    x, y = xy[..., 0], xy[..., 1]
    Y = np.broadcast_to(np.asarray(Y, dtype=float), x.shape)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.stack([x * Y / y, Y, (1 - x - y) * Y / y], axis=-1)


def XYZ_to_uv_prime(XYZ) -> np.ndarray:
    """CIE 1976 UCS chromaticity (u′, v′) of ``XYZ`` (..., 3) → (..., 2).

    u′ = 4X / (X + 15Y + 3Z), v′ = 9Y / (X + 15Y + 3Z) (CIE 15:2004 § 8.1).

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 8.1.
    docs/methods.md §4.
    """
    XYZ = _last3(XYZ, "XYZ")
    X, Y, Z = XYZ[..., 0], XYZ[..., 1], XYZ[..., 2]
    d = X + 15 * Y + 3 * Z
    with np.errstate(divide="ignore", invalid="ignore"):
        uv = np.stack([4 * X / d, 9 * Y / d], axis=-1)
    return np.where((d == 0)[..., None], np.nan, uv)


def xy_to_uv_prime(xy) -> np.ndarray:
    """(u′, v′) from (x, y): u′ = 4x/(−2x + 12y + 3), v′ = 9y/(−2x + 12y + 3).

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 8.1.
    docs/methods.md §4.

    Examples
    --------
    >>> xy_to_uv_prime([0.3127, 0.3290]).round(4).tolist()  # D65
    [0.1978, 0.4683]
    """
    xy = _last2(xy, "xy")
    x, y = xy[..., 0], xy[..., 1]
    d = -2 * x + 12 * y + 3
    return np.stack([4 * x / d, 9 * y / d], axis=-1)


def uv_prime_to_xy(uv) -> np.ndarray:
    """(x, y) from (u′, v′): x = 9u′/(6u′ − 16v′ + 12), y = 4v′/(6u′ − 16v′ + 12).

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 8.1.
    docs/methods.md §4.
    """
    uv = _last2(uv, "u'v'")
    u, v = uv[..., 0], uv[..., 1]
    d = 6 * u - 16 * v + 12
    return np.stack([9 * u / d, 4 * v / d], axis=-1)


def delta_uv_prime(uv_1, uv_2) -> np.ndarray:
    """Euclidean distance Δu′v′ between chromaticities (..., 2) → (...).

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 8.1.
    docs/methods.md §4.
    """
    a = _last2(uv_1, "u'v' (first)")
    b = _last2(uv_2, "u'v' (second)")
    return np.sqrt(((a - b) ** 2).sum(axis=-1))


_EPS = 216 / 24389  # (6/29)^3
_KAPPA = 24389 / 27


def _f(t):
    return np.where(t > _EPS, np.cbrt(t), (_KAPPA * t + 16) / 116)


def XYZ_to_Lab(XYZ, white) -> np.ndarray:
    """CIE 1976 L*a*b* of ``XYZ`` (..., 3) relative to ``white`` (..., 3).

    Both on the same scale (e.g. white Y = 100). CIE 15:2004 § 8.2.1, with the
    exact constants ε = 216/24389 and κ = 24389/27 for the linear part near
    black (equal to the 0.008856 / 903.3 of the standard's text to their
    printed precision).

    >>> XYZ_to_Lab([95.047, 100.0, 108.883], [95.047, 100.0, 108.883]).round(6).tolist()
    [100.0, 0.0, 0.0]

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 8.2.1.
    docs/methods.md §4.
    """
    XYZ = _last3(XYZ, "XYZ")
    white = _last3(white, "white")
    f = _f(XYZ / white)
    L = 116 * f[..., 1] - 16
    a = 500 * (f[..., 0] - f[..., 1])
    b = 200 * (f[..., 1] - f[..., 2])
    return np.stack([L, a, b], axis=-1)


def XYZ_to_Lab_jacobian(XYZ, white) -> tuple[np.ndarray, np.ndarray]:
    """CIELAB (..., 3) of ``XYZ`` and its Jacobian ∂(L*, a*, b*)/∂(X, Y, Z), (..., 3, 3).

    The same L*a*b* as :func:`XYZ_to_Lab`; f′(t) = f(t)/(3t) on the cube-root
    part and κ/116 on the linear part near black (CIE 15:2004 § 8.2.1), so
    row L* = (0, 116 f′_Y/Y_n, 0), a* = 500 (f′_X/X_n, −f′_Y/Y_n, 0),
    b* = 200 (0, f′_Y/Y_n, −f′_Z/Z_n).

    Parameters
    ----------
    XYZ : (..., 3) array_like
        Tristimulus values on the scale of ``white``.
    white : (..., 3) array_like
        The reference white (e.g. Y = 100).

    Returns
    -------
    Lab : (..., 3) ndarray
    jacobian : (..., 3, 3) ndarray
        Row L*, a*, b*; column X, Y, Z (per unit of XYZ).

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 8.2.1.
    docs/methods.md §4.
    """
    XYZ = _last3(XYZ, "XYZ")
    white = _last3(white, "white")
    t = XYZ / white
    cube = t > _EPS
    f = np.where(cube, np.cbrt(t), (_KAPPA * t + 16) / 116)
    # f'(t)/white: the cube-root slope f/(3t) where it applies (t > ε > 0), else κ/116
    df = np.where(cube, f / (3 * np.where(cube, t, 1.0)), _KAPPA / 116) / white
    Lab = np.stack([116 * f[..., 1] - 16, 500 * (f[..., 0] - f[..., 1]), 200 * (f[..., 1] - f[..., 2])], axis=-1)
    zero = np.zeros_like(df[..., 0])
    jac = np.stack([
        np.stack([zero, 116 * df[..., 1], zero], axis=-1),
        np.stack([500 * df[..., 0], -500 * df[..., 1], zero], axis=-1),
        np.stack([zero, 200 * df[..., 1], -200 * df[..., 2]], axis=-1),
    ], axis=-2)
    return Lab, jac


def Lab_to_XYZ(Lab, white) -> np.ndarray:
    """Inverse of :func:`XYZ_to_Lab`.

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 8.2.1.
    docs/methods.md §4.
    """
    Lab = _last3(Lab, "Lab")
    white = _last3(white, "white")
    fy = (Lab[..., 0] + 16) / 116
    fx = fy + Lab[..., 1] / 500
    fz = fy - Lab[..., 2] / 200
    f = np.stack([fx, fy, fz], axis=-1)
    t = np.where(f ** 3 > _EPS, f ** 3, (116 * f - 16) / _KAPPA)
    return t * white


def Lab_to_LCh(Lab) -> np.ndarray:
    """L*, C*ab, h_ab (degrees 0-360) from L*a*b* (..., 3).

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 8.2.1.
    docs/methods.md §4.

    Examples
    --------
    >>> Lab_to_LCh([50.0, 3.0, 4.0]).round(3).tolist()
    [50.0, 5.0, 53.13]
    """
    Lab = _last3(Lab, "Lab")
    C = np.hypot(Lab[..., 1], Lab[..., 2])
    h = np.degrees(np.arctan2(Lab[..., 2], Lab[..., 1])) % 360
    return np.stack([Lab[..., 0], C, h], axis=-1)


_TAU = 2 * np.pi
_P25_7 = 25.0 ** 7
_R6, _R25, _R30, _R63, _R275 = np.radians([6.0, 25.0, 30.0, 63.0, 275.0])


def _turn(h):
    """An angle from arctan2, (−π, π], taken to [0, 2π): h mod 2π, the same numbers as ``h % 2π`` but cheaper."""
    return np.where(h < 0, h + _TAU, h)


def delta_E_CIE2000(Lab_1, Lab_2, *, k_L: float = 1.0, k_C: float = 1.0, k_H: float = 1.0) -> np.ndarray:
    """CIEDE2000 colour difference ΔE00 between L*a*b* (..., 3) arrays → (...).

    Follows CIE 142-2001 as implemented and tested in Sharma, Wu & Dalal
    (2005), including their notes on the mean hue and hue difference when
    one chroma is zero. Parametric factors k_L, k_C, k_H default to 1
    (reference conditions).

    >>> float(delta_E_CIE2000([50.0, 2.6772, -79.7751], [50.0, 0.0, -82.7485]).round(4))
    2.0425

    References
    ----------
    CIE 142-2001, *Improvement to industrial colour-difference evaluation*;
    ISO/CIE 11664-6:2014.
    Sharma, G., Wu, W. & Dalal, E. N. (2005). The CIEDE2000 color-difference
    formula: implementation notes, supplementary test data, and mathematical
    observations. *Color Res. Appl.* 30(1), 21-30 (Table 1: the test pairs).
    docs/methods.md §4.
    """
    x1 = _last3(Lab_1, "Lab_1")
    x2 = _last3(Lab_2, "Lab_2")
    L1, a1, b1 = x1[..., 0], x1[..., 1], x1[..., 2]
    L2, a2, b2 = x2[..., 0], x2[..., 1], x2[..., 2]
    # Angles in radians throughout; the formula's degree constants converted once.
    Cm = (np.hypot(a1, b1) + np.hypot(a2, b2)) * 0.5
    Cm7 = Cm ** 7
    G1 = 1.5 - 0.5 * np.sqrt(Cm7 / (Cm7 + _P25_7))        # 1 + G
    a1p = G1 * a1
    a2p = G1 * a2
    C1p = np.hypot(a1p, b1)
    C2p = np.hypot(a2p, b2)
    h1p = _turn(np.arctan2(b1, a1p))
    h2p = _turn(np.arctan2(b2, a2p))
    # arctan2(0, 0) is 0 already, as Sharma et al. require.
    zero = (C1p * C2p) == 0
    dh = h2p - h1p
    dh = np.where(dh > np.pi, dh - _TAU, np.where(dh < -np.pi, dh + _TAU, dh))
    dh = np.where(zero, 0.0, dh)
    dHp = 2 * np.sqrt(C1p * C2p) * np.sin(dh * 0.5)
    Cpm = (C1p + C2p) * 0.5
    hsum = h1p + h2p
    hpm = np.where(np.abs(h1p - h2p) <= np.pi, hsum * 0.5,
                   np.where(hsum < _TAU, hsum * 0.5 + np.pi, hsum * 0.5 - np.pi))
    hpm = np.where(zero, hsum, hpm)
    T = (1 - 0.17 * np.cos(hpm - _R30) + 0.24 * np.cos(2 * hpm)
         + 0.32 * np.cos(3 * hpm + _R6) - 0.20 * np.cos(4 * hpm - _R63))
    dtheta = _R30 * np.exp(-(((hpm - _R275) / _R25) ** 2))
    Cpm7 = Cpm ** 7
    R_C = 2 * np.sqrt(Cpm7 / (Cpm7 + _P25_7))
    Lm50 = ((L1 + L2) * 0.5 - 50) ** 2
    S_L = 1 + 0.015 * Lm50 / np.sqrt(20 + Lm50)
    S_C = 1 + 0.045 * Cpm
    S_H = 1 + 0.015 * Cpm * T
    R_T = -np.sin(2 * dtheta) * R_C
    tL = (L2 - L1) / (k_L * S_L)
    tC = (C2p - C1p) / (k_C * S_C)
    tH = dHp / (k_H * S_H)
    return np.sqrt(tL * tL + tC * tC + tH * tH + R_T * tC * tH)


def _root_ratio(c):
    """√(c⁷/(c⁷ + 25⁷)) and its derivative 3.5 c^2.5 25⁷/(c⁷ + 25⁷)^1.5 (finite at c = 0)."""
    c7 = c ** 7
    s = c7 + _P25_7
    return np.sqrt(c7 / s), 3.5 * np.sqrt(c ** 5) * _P25_7 / (s * np.sqrt(s))


def delta_E_CIE2000_gradient(Lab_1, Lab_2) -> tuple[np.ndarray, np.ndarray]:
    """ΔE00 (...) and its gradient with respect to ``Lab_1`` (..., 3), ``Lab_2`` held fixed.

    The value is :func:`delta_E_CIE2000`'s (k_L = k_C = k_H = 1), computed
    by the same operations; the gradient ∂ΔE00/∂(L*₁, a*₁, b*₁) follows the
    formula term by term (forward-mode differentiation: every intermediate
    carries its three partial derivatives). The branch choices (hue
    wrapping, the mean hue's ±180°) are constants of a neighbourhood. Where
    ΔE00 is not differentiable the gradient is a one-sided or zero value:
    at ΔE00 = 0 it is 0; where a chroma is 0 (the hue undefined) the hue
    terms count as constant.

    Used by the ΔE00-minimising matrix (:class:`workbench.analysis.camera.ColourBench`),
    whose Newton steps need the gradient of Σ w ΔE00² with respect to the
    nine matrix entries.

    Parameters
    ----------
    Lab_1 : (..., 3) array_like
        The colours the gradient is taken at (the camera's), CIELAB.
    Lab_2 : (..., 3) array_like
        The fixed colours (the truth), CIELAB; broadcasts with ``Lab_1``.

    Returns
    -------
    delta_E : (...) ndarray
        ΔE00, equal to :func:`delta_E_CIE2000`'s.
    gradient : (..., 3) ndarray
        ∂ΔE00/∂L*₁, ∂ΔE00/∂a*₁, ∂ΔE00/∂b*₁ (per CIELAB unit).

    References
    ----------
    CIE 142-2001; Sharma, G., Wu, W. & Dalal, E. N. (2005). *Color Res. Appl.* 30(1), 21-30.
    docs/methods.md §4.
    """
    x1 = _last3(Lab_1, "Lab_1")
    x2 = _last3(Lab_2, "Lab_2")
    L1, a1, b1 = x1[..., 0], x1[..., 1], x1[..., 2]
    L2, a2, b2 = x2[..., 0], x2[..., 1], x2[..., 2]
    shape = np.broadcast_shapes(L1.shape, L2.shape)
    # unit partials of (L1, a1, b1), as (..., 3) derivative vectors
    eL, ea, eb = (np.broadcast_to(np.eye(3)[i], shape + (3,)) for i in range(3))

    def ratio(num, den):
        """num/den, 0 where den is 0 (a derivative through an undefined hue or chroma)."""
        return np.where(den == 0, 0.0, num / np.where(den == 0, 1.0, den))

    C1ab = np.hypot(a1, b1)
    Cm = (C1ab + np.hypot(a2, b2)) * 0.5
    dCm = 0.5 * ratio(a1[..., None] * ea + b1[..., None] * eb, C1ab[..., None])
    rt, drt = _root_ratio(Cm)
    G1 = 1.5 - 0.5 * rt                                    # 1 + G
    dG1 = -0.5 * drt[..., None] * dCm
    a1p = G1 * a1
    a2p = G1 * a2
    da1p = dG1 * a1[..., None] + G1[..., None] * ea
    da2p = dG1 * a2[..., None]
    C1p = np.hypot(a1p, b1)
    C2p = np.hypot(a2p, b2)
    dC1p = ratio(a1p[..., None] * da1p + b1[..., None] * eb, C1p[..., None])
    dC2p = ratio(a2p[..., None] * da2p, C2p[..., None])
    h1p = _turn(np.arctan2(b1, a1p))
    h2p = _turn(np.arctan2(b2, a2p))
    dh1p = ratio(a1p[..., None] * eb - b1[..., None] * da1p, (C1p * C1p)[..., None])
    dh2p = ratio(-b2[..., None] * da2p, (C2p * C2p)[..., None])
    zero = (C1p * C2p) == 0
    dh = h2p - h1p
    dh = np.where(dh > np.pi, dh - _TAU, np.where(dh < -np.pi, dh + _TAU, dh))
    dh = np.where(zero, 0.0, dh)
    ddh = np.where(zero[..., None], 0.0, dh2p - dh1p)
    CC = C1p * C2p
    rCC = np.sqrt(CC)
    sin_h = np.sin(dh * 0.5)
    dHp = 2 * rCC * sin_h
    dCC = dC1p * C2p[..., None] + C1p[..., None] * dC2p
    ddHp = (ratio(dCC, rCC[..., None]) * sin_h[..., None]
            + rCC[..., None] * np.cos(dh * 0.5)[..., None] * ddh)
    Cpm = (C1p + C2p) * 0.5
    dCpm = 0.5 * (dC1p + dC2p)
    hsum = h1p + h2p
    hpm = np.where(np.abs(h1p - h2p) <= np.pi, hsum * 0.5,
                   np.where(hsum < _TAU, hsum * 0.5 + np.pi, hsum * 0.5 - np.pi))
    hpm = np.where(zero, hsum, hpm)
    dhpm = np.where(zero[..., None], dh1p + dh2p, 0.5 * (dh1p + dh2p))
    T = (1 - 0.17 * np.cos(hpm - _R30) + 0.24 * np.cos(2 * hpm)
         + 0.32 * np.cos(3 * hpm + _R6) - 0.20 * np.cos(4 * hpm - _R63))
    dT = (0.17 * np.sin(hpm - _R30) - 0.48 * np.sin(2 * hpm)
          - 0.96 * np.sin(3 * hpm + _R6) + 0.80 * np.sin(4 * hpm - _R63))[..., None] * dhpm
    dtheta = _R30 * np.exp(-(((hpm - _R275) / _R25) ** 2))
    ddtheta = (dtheta * (-2.0 * (hpm - _R275) / (_R25 * _R25)))[..., None] * dhpm
    rc, drc = _root_ratio(Cpm)
    R_C = 2 * rc
    dR_C = 2 * drc[..., None] * dCpm
    Lm = (L1 + L2) * 0.5 - 50
    Lm50 = Lm ** 2
    root = np.sqrt(20 + Lm50)
    S_L = 1 + 0.015 * Lm50 / root
    dS_L = (0.015 * (20 + 0.5 * Lm50) / (root ** 3) * Lm)[..., None] * eL     # dLm50/dL1 = Lm
    S_C = 1 + 0.045 * Cpm
    dS_C = 0.045 * dCpm
    S_H = 1 + 0.015 * Cpm * T
    dS_H = 0.015 * (dCpm * T[..., None] + Cpm[..., None] * dT)
    sin2 = np.sin(2 * dtheta)
    R_T = -sin2 * R_C
    dR_T = -(2 * np.cos(2 * dtheta)[..., None] * ddtheta * R_C[..., None] + sin2[..., None] * dR_C)
    tL = (L2 - L1) / S_L
    tC = (C2p - C1p) / S_C
    tH = dHp / S_H
    dtL = (-eL - tL[..., None] * dS_L) / S_L[..., None]
    dtC = ((dC2p - dC1p) - tC[..., None] * dS_C) / S_C[..., None]
    dtH = (ddHp - tH[..., None] * dS_H) / S_H[..., None]
    E = np.sqrt(tL * tL + tC * tC + tH * tH + R_T * tC * tH)
    dQ = (2 * tL[..., None] * dtL + 2 * tC[..., None] * dtC + 2 * tH[..., None] * dtH
          + dR_T * (tC * tH)[..., None] + R_T[..., None] * (dtC * tH[..., None] + tC[..., None] * dtH))
    return E, ratio(dQ, 2 * E[..., None])
