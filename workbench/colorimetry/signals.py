"""Luma, colour-difference signals, code values and colour bars.

Inputs are gamma-corrected (non-linear) signals R′G′B′ on 0-1 with the
primaries' white at (1, 1, 1). Luma Y′ = K_R R′ + K_G G′ + K_B B′ with the
coefficients of a system (or of any primaries set through its RP 177
matrix); colour-difference signals B′−Y′ and R′−Y′ follow.

Scaled forms
------------
PAL U, V
    U = 0.493 (B′−Y′), V = 0.877 (R′−Y′) (ITU-R BT.470-6 / BT.1700).
Cb, Cr
    Cb = 0.5 (B′−Y′)/(1−K_B), Cr = 0.5 (R′−Y′)/(1−K_R) (ITU-R BT.601-7
    § 2.5.2, BT.709-6 item 3.3, BT.2020-2 Table 4); each on −0.5 to 0.5.
Code values (narrow range)
    D_Y = round((219 Y′ + 16)·2^(n−8)), D_C = round((224 C + 128)·2^(n−8))
    for n = 8 or 10 bits (BT.601-7, BT.709-6 item 6.10, BT.2020-2 Table 5).

BT.601 (and PAL) keep the coefficients 0.299/0.587/0.114 by convention:
they come from the NTSC 1953 primaries with illuminant C, not from the
primaries those systems actually use.

References
----------
ITU-R BT.601-7 (2011); ITU-R BT.709-6 (2015); ITU-R BT.2020-2 (2015);
ITU-R BT.470-6 (1998); ITU-R BT.1700 (2005); ITU-R BT.801-1 (1995),
*Test signals for digitally encoded colour television signals*.
"""

from __future__ import annotations

import numpy as np

from workbench.errors import WorkbenchError
from workbench.colorimetry.primaries import Primaries

__all__ = [
    "LUMA_COEFFICIENTS",
    "PAL_UV_FACTORS",
    "BAR_ORDER",
    "luma_coefficients_of",
    "luma",
    "colour_difference_signals",
    "UV_PAL",
    "YCbCr",
    "code_values_narrow_range",
    "colour_bars",
]

#: Published luma coefficients (K_R, K_G, K_B) of each system.
LUMA_COEFFICIENTS = {
    "BT.601": (0.299, 0.587, 0.114),      # ITU-R BT.601-7, § 2.5.1
    "BT.709": (0.2126, 0.7152, 0.0722),   # ITU-R BT.709-6, Part 2, item 3.2
    "BT.2020": (0.2627, 0.6780, 0.0593),  # ITU-R BT.2020-2, Table 4
}
#: PAL scaling of B′−Y′ and R′−Y′ (ITU-R BT.470-6, Table 2; BT.1700).
PAL_UV_FACTORS = (0.493, 0.877)

#: Colour-bar order, left to right (common practice, EBU and SMPTE bars).
BAR_ORDER = ("white", "yellow", "cyan", "green", "magenta", "red", "blue", "black")
_BAR_RGB = {
    "white": (1, 1, 1), "yellow": (1, 1, 0), "cyan": (0, 1, 1), "green": (0, 1, 0),
    "magenta": (1, 0, 1), "red": (1, 0, 0), "blue": (0, 0, 1), "black": (0, 0, 0),
}


def luma_coefficients_of(system) -> tuple[str, np.ndarray]:
    """(label, (K_R, K_G, K_B)) of a system name, a Primaries set or three numbers.

    References
    ----------
    ITU-R BT.601-7 (2011) § 2.5; ITU-R BT.709-6 (2015) Part 2, items 3.2-3.3;
    ITU-R BT.2020-2 (2015) Table 4.
    docs/methods.md §7.
    """
    if isinstance(system, Primaries):
        return f"{system.name} (RP 177)", system.luminance_coefficients
    if isinstance(system, str):
        key = system.strip().upper().replace("ITU-R", "").replace(" ", "").replace("-", "")
        key = key if key.startswith("BT.") else key.replace("BT", "BT.")
        if key == "PAL":
            key = "BT.601"
        if key not in LUMA_COEFFICIENTS:
            raise WorkbenchError(
                f"unknown luma system {system!r}; expected BT.601, BT.709, BT.2020 or a primaries set"
            )
        return key, np.array(LUMA_COEFFICIENTS[key], dtype=float)
    K = np.asarray(system, dtype=float)
    if K.shape != (3,) or not np.all(np.isfinite(K)) or abs(K.sum() - 1) > 1e-6:
        raise WorkbenchError(f"luma coefficients must be 3 numbers summing to 1 (got {K.tolist()})")
    return "given", K


def _rgb(RGB_prime) -> np.ndarray:
    a = np.asarray(RGB_prime, dtype=float)
    if a.ndim == 0 or a.shape[-1] != 3:
        raise WorkbenchError(f"R′G′B′ must have 3 components on the last axis (got shape {a.shape})")
    return a


def luma(RGB_prime, system="BT.709") -> np.ndarray:
    """Luma Y′ (...) of R′G′B′ (..., 3): Y′ = K_R R′ + K_G G′ + K_B B′.

    References
    ----------
    ITU-R BT.601-7 (2011) § 2.5; ITU-R BT.709-6 (2015) Part 2, items 3.2-3.3;
    ITU-R BT.2020-2 (2015) Table 4.
    docs/methods.md §7.

    Examples
    --------
    >>> round(float(luma([1.0, 1.0, 0.0], "BT.601")), 3)  # 100 % yellow (ITU-R BT.801-1)
    0.886
    """
    return _rgb(RGB_prime) @ luma_coefficients_of(system)[1]


def colour_difference_signals(RGB_prime, system="BT.709") -> np.ndarray:
    """(Y′, B′−Y′, R′−Y′) as (..., 3) from R′G′B′ (..., 3).

    References
    ----------
    ITU-R BT.601-7 (2011) § 2.5; ITU-R BT.709-6 (2015) Part 2, items 3.2-3.3;
    ITU-R BT.2020-2 (2015) Table 4.
    docs/methods.md §7.
    """
    a = _rgb(RGB_prime)
    Y = a @ luma_coefficients_of(system)[1]
    return np.stack([Y, a[..., 2] - Y, a[..., 0] - Y], axis=-1)


def UV_PAL(RGB_prime, system="BT.601") -> np.ndarray:
    """(Y′, U, V) (..., 3): U = 0.493 (B′−Y′), V = 0.877 (R′−Y′) (BT.470-6).

    References
    ----------
    ITU-R BT.470-6 (1998); ITU-R BT.1700 (2005).
    docs/methods.md §7.
    """
    d = colour_difference_signals(RGB_prime, system)
    return np.stack([d[..., 0], PAL_UV_FACTORS[0] * d[..., 1], PAL_UV_FACTORS[1] * d[..., 2]], axis=-1)


def YCbCr(RGB_prime, system="BT.709") -> np.ndarray:
    """(Y′, Cb, Cr) (..., 3), Cb/Cr = 0.5 (B′−Y′)/(1−K_B), 0.5 (R′−Y′)/(1−K_R).

    References
    ----------
    ITU-R BT.601-7 (2011) § 2.5; ITU-R BT.709-6 (2015) Part 2, items 3.2-3.3;
    ITU-R BT.2020-2 (2015) Table 4.
    docs/methods.md §7.

    Examples
    --------
    >>> YCbCr([0.0, 0.0, 1.0], "BT.709").round(4).tolist()  # blue: Cb = +0.5
    [0.0722, 0.5, -0.0458]
    """
    K = luma_coefficients_of(system)[1]
    d = colour_difference_signals(RGB_prime, K)
    return np.stack([d[..., 0], 0.5 * d[..., 1] / (1 - K[2]), 0.5 * d[..., 2] / (1 - K[0])], axis=-1)


def code_values_narrow_range(YCbCr_values, bits: int = 8) -> np.ndarray:
    """Integer code values (..., 3) of Y′CbCr (Y′ 0-1, Cb/Cr −0.5-0.5), 8 or 10 bits.

    D_Y = round((219 Y′ + 16)·2^(n−8)), D_C = round((224 C + 128)·2^(n−8))
    (ITU-R BT.709-6 item 6.10; round half up as the standard's INT).
    Values outside the coded range are an error, never clipped.

    References
    ----------
    ITU-R BT.601-7 (2011); ITU-R BT.709-6 (2015) item 6.10;
    ITU-R BT.2020-2 (2015) Table 5.
    docs/methods.md §7.

    Examples
    --------
    >>> code_values_narrow_range([[0.0, 0.0, 0.0], [1.0, 0.5, -0.5]], 10).tolist()
    [[64, 512, 512], [940, 960, 64]]
    """
    if bits not in (8, 10):
        raise WorkbenchError(f"bits must be 8 or 10 (got {bits})")
    v = _rgb(YCbCr_values)
    s = 2 ** (bits - 8)
    D = np.floor(np.stack([(219 * v[..., 0] + 16) * s,
                           (224 * v[..., 1] + 128) * s,
                           (224 * v[..., 2] + 128) * s], axis=-1) + 0.5)
    top = 2 ** bits - 1
    if np.any(D < 0) or np.any(D > top) or not np.all(np.isfinite(D)):
        raise WorkbenchError(f"Y′CbCr out of the {bits}-bit code range 0-{top}")
    return D.astype(int)


def colour_bars(amplitude: float = 1.0, system="BT.709", *, white_amplitude: float | None = None) -> list[dict]:
    """The colour-bar table, one row per bar in :data:`BAR_ORDER`.

    Parameters
    ----------
    amplitude : float
        R′G′B′ level of the lit components, 0-1 (1.0 = 100 % bars, 0.75 =
        75 % bars).
    system : str, Primaries or (3,) array_like
        Source of the luma coefficients (and so of the Cb/Cr factors).
    white_amplitude : float, optional
        Level of the white bar; default ``amplitude`` (pass 1.0 for the
        100/0/75/0 pattern).

    Returns
    -------
    list of dict
        Keys: bar, R', G', B', Y', B'-Y', R'-Y', U, V, Cb, Cr (signal units
        0-1), Y8, Cb8, Cr8, Y10, Cb10, Cr10 (code values).

    References
    ----------
    ITU-R BT.601-7 (2011) § 2.5; ITU-R BT.709-6 (2015) Part 2, items 3.2-3.3;
    ITU-R BT.2020-2 (2015) Table 4.
    docs/methods.md §7.
    ITU-R BT.801-1 (1995), *Test signals for digitally encoded colour television signals*.
    """
    if not (0 < amplitude <= 1):
        raise WorkbenchError(f"amplitude must be in (0, 1] (got {amplitude})")
    wa = amplitude if white_amplitude is None else white_amplitude
    if not (0 < wa <= 1):
        raise WorkbenchError(f"white_amplitude must be in (0, 1] (got {wa})")
    label, K = luma_coefficients_of(system)
    RGB = np.array([_BAR_RGB[b] for b in BAR_ORDER], dtype=float) * amplitude
    RGB[0] = wa
    d = colour_difference_signals(RGB, K)
    uv = UV_PAL(RGB, K)
    ycc = YCbCr(RGB, K)
    c8 = code_values_narrow_range(ycc, 8)
    c10 = code_values_narrow_range(ycc, 10)
    rows = []
    for i, bar in enumerate(BAR_ORDER):
        rows.append({
            "bar": bar, "R'": RGB[i, 0], "G'": RGB[i, 1], "B'": RGB[i, 2],
            "Y'": d[i, 0], "B'-Y'": d[i, 1], "R'-Y'": d[i, 2],
            "U": uv[i, 1], "V": uv[i, 2], "Cb": ycc[i, 1], "Cr": ycc[i, 2],
            "Y8": int(c8[i, 0]), "Cb8": int(c8[i, 1]), "Cr8": int(c8[i, 2]),
            "Y10": int(c10[i, 0]), "Cb10": int(c10[i, 1]), "Cr10": int(c10[i, 2]),
        })
    return rows


BAR_COLUMNS = ["bar", "R'", "G'", "B'", "Y'", "B'-Y'", "R'-Y'", "U", "V", "Cb", "Cr",
               "Y8", "Cb8", "Cr8", "Y10", "Cb10", "Cr10"]
