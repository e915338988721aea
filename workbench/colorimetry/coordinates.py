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
    h1p = np.arctan2(b1, a1p) % _TAU
    h2p = np.arctan2(b2, a2p) % _TAU
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
