"""CIECAM02 (forward, J M h) and CAM02-UCS (J′ a′ b′), numpy only, vectorised.

Only what CIE 224:2017 needs: the forward model from XYZ under a white, an
adapting luminance, a background and a surround, with the illuminant
discounted or not, to J (lightness), M (colourfulness) and h (hue angle);
then Luo, Cui & Li's uniform space CAM02-UCS. Written from CIE 159:2004
and the CIE 224:2017 text; checked against colour-science 0.4.7
(tests/test_light_indices_native.py).

References
----------
CIE 159:2004, *A colour appearance model for colour management systems:
CIECAM02*.
Luo, M. R., Cui, G., & Li, C. (2006). Uniform colour spaces based on
CIECAM02 colour appearance model. *Color Res. Appl.* 31(4), 320-330.
CIE 224:2017, *CIE 2017 colour fidelity index for accurate scientific use*, § 4.
docs/methods.md §17.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Surround", "SURROUND_AVERAGE", "XYZ_to_JMh_CIECAM02", "JMh_to_CAM02UCS"]

#: CAT02 (CIE 159:2004, eq. 7).
M_CAT02 = np.array([[0.7328, 0.4296, -0.1624],
                    [-0.7036, 1.6975, 0.0061],
                    [0.0030, 0.0136, 0.9834]])
#: Hunt-Pointer-Estévez, equal-energy normalised (CIE 159:2004, eq. 12).
M_HPE = np.array([[0.38971, 0.68898, -0.07868],
                  [-0.22981, 1.18340, 0.04641],
                  [0.00000, 0.00000, 1.00000]])
#: CAT02-adapted RGB to HPE cone responses in one matrix.
_M_CAT_TO_HPE = M_HPE @ np.linalg.inv(M_CAT02)


@dataclass(frozen=True)
class Surround:
    """The surround's parameters F (adaptation), c (impact), N_c (chromatic induction)."""

    F: float
    c: float
    N_c: float


#: CIE 159:2004, Table 1: the average surround.
SURROUND_AVERAGE = Surround(1.0, 0.69, 1.0)


def _spow(x: np.ndarray, p: float) -> np.ndarray:
    """sign(x)·|x|^p: a power that keeps the sign (the model's responses may be negative)."""
    return np.sign(x) * np.abs(x) ** p


def _compress(rgb: np.ndarray, F_L) -> np.ndarray:
    """Post-adaptation cone response compression (CIE 159:2004, eq. 14)."""
    q = _spow(np.asarray(F_L)[..., None] * np.abs(rgb) / 100, 0.42)
    return 400 * np.sign(rgb) * q / (27.13 + q) + 0.1


def XYZ_to_JMh_CIECAM02(XYZ, XYZ_w, *, L_A: float, Y_b: float, surround: Surround = SURROUND_AVERAGE,
                        discount_illuminant: bool = False) -> np.ndarray:
    """CIECAM02 lightness J, colourfulness M and hue angle h (°) of XYZ (..., 3) under white XYZ_w.

    Parameters
    ----------
    XYZ : array_like (..., 3)
        Samples, Y of the white = 100 scale.
    XYZ_w : array_like (..., 3)
        The adopted white, broadcast against ``XYZ``.
    L_A : float, cd/m²
        Adapting luminance.
    Y_b : float
        Background luminance factor (Y of the white = 100 scale).
    surround : Surround
    discount_illuminant : bool
        Full adaptation (D = 1) when True.

    Returns
    -------
    ndarray (..., 3)
        J, M, h (°, 0-360).

    References
    ----------
    CIE 159:2004, *CIECAM02*, eqs. 1-28.
    docs/methods.md §17.

    Examples
    --------
    >>> J, M, h = XYZ_to_JMh_CIECAM02([19.01, 20.00, 21.78], [95.05, 100.00, 108.88], L_A=318.31, Y_b=20.0)
    >>> print(f"J {J:.4f}, M {M:.4f}, h {h:.4f}")
    J 41.7311, M 0.1088, h 219.0484
    """
    XYZ = np.asarray(XYZ, dtype=float)
    XYZ_w = np.asarray(XYZ_w, dtype=float)
    Y_w = XYZ_w[..., 1]
    n = Y_b / Y_w
    k4 = (1 / (5 * L_A + 1)) ** 4
    F_L = 0.2 * k4 * (5 * L_A) + 0.1 * (1 - k4) ** 2 * _spow(np.asarray(5.0 * L_A), 1 / 3)
    N_bb = N_cb = 0.725 * _spow(1 / n, 0.2)
    z = 1.48 + np.sqrt(n)
    D = 1.0 if discount_illuminant else surround.F * (1 - (1 / 3.6) * np.exp((-L_A - 42) / 92))
    RGB = XYZ @ M_CAT02.T
    RGB_w = XYZ_w @ M_CAT02.T
    gain = Y_w[..., None] * D / RGB_w + 1 - D
    RGB_a = _compress((gain * RGB) @ _M_CAT_TO_HPE.T, F_L)
    RGB_aw = _compress((gain * RGB_w) @ _M_CAT_TO_HPE.T, F_L)
    R, G, B = RGB_a[..., 0], RGB_a[..., 1], RGB_a[..., 2]
    a = R - 12 * G / 11 + B / 11
    b = (R + G - 2 * B) / 9
    h = np.degrees(np.arctan2(b, a)) % 360
    e_t = 0.25 * (np.cos(2 + h * np.pi / 180) + 3.8)
    A = (2 * R + G + B / 20 - 0.305) * N_bb
    A_w = (2 * RGB_aw[..., 0] + RGB_aw[..., 1] + RGB_aw[..., 2] / 20 - 0.305) * N_bb
    J = 100 * _spow(A / A_w, surround.c * z)
    t = (50000 / 13) * surround.N_c * N_cb * e_t * np.sqrt(a ** 2 + b ** 2) / (R + G + 21 * B / 20)
    C = _spow(t, 0.9) * _spow(J / 100, 0.5) * _spow(1.64 - 0.29 ** n, 0.73)
    M = C * _spow(np.asarray(F_L), 0.25)
    return np.stack([J, M, h], axis=-1)


def JMh_to_CAM02UCS(JMh) -> np.ndarray:
    """CAM02-UCS J′ a′ b′ (..., 3) of CIECAM02 J, M, h (°) (..., 3).

    J′ = 1.7 J / (1 + 0.007 J), M′ = ln(1 + 0.0228 M) / 0.0228,
    a′ = M′ cos h, b′ = M′ sin h.

    References
    ----------
    Luo, M. R., Cui, G., & Li, C. (2006). *Color Res. Appl.* 31(4), 320-330, Table 2.
    """
    JMh = np.asarray(JMh, dtype=float)
    J, M, h = JMh[..., 0], JMh[..., 1], np.radians(JMh[..., 2])
    c1, c2 = 0.007, 0.0228
    Jp = (1 + 100 * c1) * J / (1 + c1 * J)
    Mp = np.log1p(c2 * M) / c2
    return np.stack([Jp, Mp * np.cos(h), Mp * np.sin(h)], axis=-1)
