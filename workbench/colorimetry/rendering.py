"""Colour rendering and spectral similarity of light sources, numpy only, vectorised over SPDs.

- CIE 13.3-1995: the general colour rendering index Ra and the special
  indices R1-R14.
- CIE 224:2017: the colour fidelity index Rf (and the 99 Rf,i), with the
  ANSI/IES TM-30-18 gamut index Rg from its 16 hue bins.
- The Academy spectral similarity index (SSI).

Every function takes SPDs ``(m, n)`` on one uniform grid (1 or 5 nm, in
whole multiples of the step) and returns one value per SPD. The methods
are the published ones, with the same conventions as colour-science 0.4.7
(the workbench's reference library, against which
tests/test_light_indices_native.py checks them to ~1e-9): tables from the
package's CIE tables file (workbench/colorimetry/data/make_tables.py).

References
----------
CIE 13.3-1995, *Method of measuring and specifying colour rendering
properties of light sources*.
CIE 224:2017, *CIE 2017 colour fidelity index for accurate scientific use*.
ANSI/IES TM-30-18, *IES method for evaluating light source color rendition*.
Academy of Motion Picture Arts and Sciences (2020). *Spectral Similarity
Index (SSI)*, S-2020-001; Holm, J. et al. (2016), SMPTE Annual Technical
Conference.
CIE 15:2004, *Colorimetry*, 3rd ed.
docs/methods.md §17.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from workbench.colorimetry.cam02 import SURROUND_AVERAGE, JMh_to_CAM02UCS, XYZ_to_JMh_CIECAM02
from workbench.colorimetry.cct import XYZ_to_uv_1960, cct_ohno_2013, cct_robertson_1968, planck_relative
from workbench.colorimetry.cie import cmfs_table, table
from workbench.errors import WorkbenchError

__all__ = ["ColourRendering", "ColourFidelity", "colour_rendering_cie_13_3", "colour_fidelity_cie_224",
           "spectral_similarity_index", "daylight_xy", "fidelity_from_delta_E"]

#: CIE 224:2017 § 4.6: the scale factor of Rf.
RF_SCALE = 6.73
#: CIE 224:2017 § 4.4: adapting luminance (cd/m²), background (Y = 20) and surround of the CAM.
CAM_L_A, CAM_Y_B = 100.0, 20.0


# --------------------------------------------------------------------------
# Grids and references
# --------------------------------------------------------------------------


def _rows(spd) -> np.ndarray:
    a = np.asarray(spd, dtype=float)
    return a[None, :] if a.ndim == 1 else a


def _linear(wl: np.ndarray, values: np.ndarray, target: np.ndarray, fill: float | None = None) -> np.ndarray:
    """Rows of ``values`` (m, n) interpolated linearly to ``target``; outside the data the end values or ``fill``.

    One gather and one weighted sum for all rows (as ``np.interp`` does for one).
    """
    x = np.clip(target, wl[0], wl[-1])
    i = np.clip(np.searchsorted(wl, x, side="right") - 1, 0, wl.size - 2)
    w = (x - wl[i]) / (wl[i + 1] - wl[i])
    out = values[:, i] + w * (values[:, i + 1] - values[:, i])
    if fill is not None:
        out[:, (target < wl[0]) | (target > wl[-1])] = fill
    return out


def _step(wl: np.ndarray, n_values: int) -> float:
    """The grid's step (1 or 5 nm), or a WorkbenchError saying what the grid must be."""
    if wl.ndim != 1 or wl.size < 2 or wl.size != n_values:
        raise WorkbenchError(f"'wavelengths' must be one grid of as many points as each SPD has values "
                             f"(got {wl.size} wavelengths for {n_values} values)")
    step = float(wl[1] - wl[0])
    if not (step in (1.0, 5.0) and np.allclose(np.diff(wl), step, rtol=0, atol=1e-9)
            and np.all(np.abs(wl / step - np.round(wl / step)) < 1e-9)):
        raise WorkbenchError(f"'wavelengths' must be a uniform 1 nm or 5 nm grid on whole multiples of the step "
                             f"(got {wl[0]:g}-{wl[-1]:g} nm, first step {step:g} nm)")
    return step


def daylight_xy(cct) -> np.ndarray:
    """CIE daylight chromaticity (..., 2) at ``cct`` (...) K (CIE 15:2004 § 3.1, eqs. 3.3-3.4)."""
    T = np.asarray(cct, dtype=float)
    x = np.where(T <= 7000,
                 -4.6070e9 / T ** 3 + 2.9678e6 / T ** 2 + 0.09911e3 / T + 0.244063,
                 -2.0064e9 / T ** 3 + 1.9018e6 / T ** 2 + 0.24748e3 / T + 0.237040)
    y = -3.000 * x ** 2 + 2.870 * x - 0.275
    return np.stack([x, y], axis=-1)


def _daylight_M(cct) -> tuple[np.ndarray, np.ndarray]:
    """M1, M2 (...) of CIE daylight, rounded to three decimals (CIE 15:2004 § 3.1, note 4)."""
    xy = daylight_xy(cct)
    x, y = xy[..., 0], xy[..., 1]
    M = 0.0241 + 0.2562 * x - 0.7341 * y
    return (np.around((-1.3515 - 1.7703 * x + 5.9114 * y) / M, 3),
            np.around((0.0300 - 31.4424 * x + 30.0717 * y) / M, 3))


def _daylight_5nm_linear(cct, target: np.ndarray) -> np.ndarray:
    """CIE daylight (m, k): S0 + M1 S1 + M2 S2 on the 5 nm basis, then linear to ``target`` (CIE 13.3 use)."""
    M1, M2 = _daylight_M(np.atleast_1d(cct))
    S = table("daylight_S")
    spd = S[0] + M1[:, None] * S[1] + M2[:, None] * S[2]
    return _linear(table("daylight_wl"), spd, target)


def _daylight_sprague(cct, target: np.ndarray) -> np.ndarray:
    """CIE daylight (m, k) from the basis put on 1 nm by Sprague interpolation, at ``target`` (CIE 224 use)."""
    M1, M2 = _daylight_M(np.atleast_1d(cct))
    S = table("daylight_S_1nm")[:, _index_360(target)]
    return S[0] + M1[:, None] * S[1] + M2[:, None] * S[2]


def _index_360(target: np.ndarray) -> np.ndarray:
    return np.round(target - 360.0).astype(int)


def _cmfs_at(observer: str, target: np.ndarray) -> np.ndarray:
    """x̄ȳz̄ (k, 3) at whole-nm ``target`` within 360-830 nm."""
    return np.asarray(cmfs_table(observer)[1])[_index_360(target)]


def _XYZ(spd: np.ndarray, reflect: np.ndarray | None, xyz: np.ndarray) -> np.ndarray:
    """100 Σ S ρ x̄ / Σ S ȳ: (m, 3) for ``reflect`` None, else (m, p, 3) for reflectances (p, k)."""
    Y_white = spd @ xyz[:, 1]
    if reflect is None:
        return 100 * (spd @ xyz) / Y_white[:, None]
    # one matrix product: the weights ρ_p(λ) x̄_c(λ) as (k, p·3), so a batch never builds (m, p, k)
    weights = (reflect[:, :, None] * xyz[None]).transpose(1, 0, 2).reshape(xyz.shape[0], -1)
    return 100 * (spd @ weights).reshape(spd.shape[0], reflect.shape[0], 3) / Y_white[:, None, None]


# --------------------------------------------------------------------------
# CIE 13.3-1995
# --------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class ColourRendering:
    """CIE 13.3-1995 results for m SPDs: Ra (m,), R (m, 14), the reference's CCT (m,) K and kind."""

    Ra: np.ndarray
    R: np.ndarray
    CCT_reference: np.ndarray
    daylight: np.ndarray


#: CIE 13.3-1995: the grid of the computation, nm (the CIE 1931 2° functions over 360-780 nm, 1 nm).
_CRI_GRID = np.arange(360.0, 781.0)


def _uvw(spd: np.ndarray, white_uv: np.ndarray, xyz: np.ndarray, tcs: np.ndarray,
         adapt_from: np.ndarray | None = None) -> np.ndarray:
    """CIE 1964 U*V*W* (m, 14, 3) of the samples under ``spd``, after von Kries in CIE 1960 uv if asked.

    ``white_uv`` (m, 2) is the reference's white; ``adapt_from`` (m, 2) the
    test light's white, whose samples are adapted to the reference's
    (CIE 13.3-1995, eqs. 5-6).
    """
    XYZ = _XYZ(spd, tcs, xyz)
    uv = XYZ_to_uv_1960(XYZ)
    u, v = uv[..., 0], uv[..., 1]
    if adapt_from is not None:
        def c(u, v):
            return (4 - u - 10 * v) / v

        def d(u, v):
            return (1.708 * v + 0.404 - 1.481 * u) / v

        cr = (c(white_uv[:, 0], white_uv[:, 1]) / c(adapt_from[:, 0], adapt_from[:, 1]))[:, None]
        dr = (d(white_uv[:, 0], white_uv[:, 1]) / d(adapt_from[:, 0], adapt_from[:, 1]))[:, None]
        ci, di = c(u, v), d(u, v)
        den = 16.518 + 1.481 * cr * ci - dr * di
        u = (10.872 + 0.404 * cr * ci - 4 * dr * di) / den
        v = 5.52 / den
    W = 25 * np.cbrt(XYZ[..., 1]) - 17
    return np.stack([13 * W * (u - white_uv[:, 0:1]), 13 * W * (v - white_uv[:, 1:2]), W], axis=-1)


def colour_rendering_cie_13_3(wavelengths, spd) -> ColourRendering:
    """CIE 13.3-1995 Ra and R1-R14 of SPDs (m, n) on a uniform 1 or 5 nm grid (nm).

    Notes
    -----
    The SPD is put on 360-780 nm at 1 nm (linear interpolation; its end
    values beyond its range, CIE 167:2005) where the CIE 1931 2°
    functions weigh it. The reference is a Planckian radiator below 5000 K
    and CIE daylight (its 5 nm table interpolated linearly) at and above,
    at the test light's CCT by Robertson's method. The 14 test colour
    samples (Sprague-interpolated to 1 nm) are adapted from the test light
    to the reference by von Kries in CIE 1960 uv, and compared in CIE 1964
    U*V*W*: Ri = 100 − 4.6 ΔE, Ra = the mean of R1-R8.

    References
    ----------
    CIE 13.3-1995, §§ 5-6.
    docs/methods.md §17.

    Examples
    --------
    >>> from workbench.colorimetry.cie import illuminant_table
    >>> r = colour_rendering_cie_13_3(*illuminant_table("FL2"))  # CIE F2 (cool white fluorescent)
    >>> print(f"Ra {r.Ra[0]:.6f}, R1 {r.R[0, 0]:.2f}")  # colour-science's tests pin 64.233724
    Ra 64.233724, R1 56.05
    """
    wl = np.asarray(wavelengths, dtype=float)
    spd = _rows(spd)
    _step(wl, spd.shape[-1])
    S = _linear(wl, spd, _CRI_GRID)
    xyz = _cmfs_at("2", _CRI_GRID)
    tcs = np.asarray(table("tcs_1nm"))[:, :_CRI_GRID.size]
    uv_t = XYZ_to_uv_1960(S @ xyz)
    T, _ = cct_robertson_1968(uv_t)
    daylight = T >= 5000
    ref = np.empty_like(S)
    if np.any(~daylight):
        ref[~daylight] = planck_relative(_CRI_GRID, T[~daylight])
    if np.any(daylight):
        ref[daylight] = _daylight_5nm_linear(T[daylight], _CRI_GRID)
    uv_r = XYZ_to_uv_1960(ref @ xyz)
    test = _uvw(S, uv_r, xyz, tcs, adapt_from=uv_t)
    reference = _uvw(ref, uv_r, xyz, tcs)
    R = 100 - 4.6 * np.linalg.norm(test - reference, axis=-1)
    return ColourRendering(R[:, :8].mean(axis=1), R, T, daylight)


# --------------------------------------------------------------------------
# CIE 224:2017 and TM-30-18
# --------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class ColourFidelity:
    """CIE 224:2017 / TM-30-18 results for m SPDs.

    Rf (m,), Rf_i (m, 99), Rg (m,) (NaN where a hue bin holds no sample),
    CCT (m,) K and Duv (m,) by Ohno 2013 over 1000-25000 K, and the
    reference's daylight share (m,) (0 Planckian, 1 daylight).
    """

    Rf: np.ndarray
    Rf_i: np.ndarray
    Rg: np.ndarray
    CCT: np.ndarray
    Duv: np.ndarray
    daylight_share: np.ndarray
    Jab_test: np.ndarray
    Jab_reference: np.ndarray
    hue_bin: np.ndarray


def fidelity_from_delta_E(delta_E) -> np.ndarray:
    """Rf = 10 ln(1 + exp((100 − 6.73 ΔE′)/10)) (CIE 224:2017, eqs. 4.5-4.6).

    Examples
    --------
    >>> print(f"{fidelity_from_delta_E(0.0):.4f}")  # no difference: just above 100
    100.0005
    """
    return 10 * np.log1p(np.exp((100 - RF_SCALE * np.asarray(delta_E, dtype=float)) / 10))


def _reference_224(T: np.ndarray, grid: np.ndarray, ybar2: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The CIE 224 reference (m, k) at T (m,) K: Planckian ≤ 4000 K, daylight ≥ 5000 K, a blend between.

    Between 4000 and 5000 K both are scaled to equal Y (CIE 1931 2°) and
    mixed with daylight share (T − 4000)/1000 (CIE 224:2017, § 4.3).
    """
    share = np.clip((T - 4000.0) / 1000.0, 0.0, 1.0)[:, None]
    ref = np.zeros((T.size, grid.size))
    p, d = share[:, 0] < 1, share[:, 0] > 0
    if np.any(p):
        P = planck_relative(grid, T[p])
        ref[p] += (1 - share[p]) * P / (P @ ybar2)[:, None]
    if np.any(d):
        D = _daylight_sprague(T[d], grid)
        ref[d] += share[d] * D / (D @ ybar2)[:, None]
    return ref, share[:, 0]


def _bin_means(values: np.ndarray, onehot: np.ndarray) -> np.ndarray:
    """Means (m, 16, c) of ``values`` (m, 99, c) over the samples of each hue bin (NaN for an empty bin)."""
    count = onehot.sum(axis=1)[..., None]
    total = np.einsum("msb,msc->mbc", onehot, values)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(count > 0, total / np.where(count > 0, count, 1), np.nan)


def colour_fidelity_cie_224(wavelengths, spd) -> ColourFidelity:
    """CIE 224:2017 Rf and ANSI/IES TM-30-18 Rg of SPDs (m, n) on a uniform 1 or 5 nm grid (nm).

    Notes
    -----
    The SPD is taken over 380-780 nm at its own step; where it does not
    reach, its end values (colour-science 0.4.7's behaviour, although its
    warning speaks of zeros; the workbench's light path always gives
    380-780 nm). CCT by Ohno 2013 (1000-25000 K) chooses the
    reference: Planckian up to 4000 K, CIE daylight from 5000 K (basis put
    on 1 nm by Sprague interpolation), an equal-Y blend between. The 99
    CES are seen under test and reference with the CIE 1964 10° observer,
    through CIECAM02 (L_A 100 cd/m², Y_b 20, average surround, illuminant
    discounted) into CAM02-UCS. Rf,i from each ΔE′, Rf from their mean
    (scale 6.73). Rg: 100 × the area of the polygon of the test's mean a′b′
    in the 16 hue bins (22.5° of the reference's h) over the reference's.

    References
    ----------
    CIE 224:2017, §§ 4.1-4.6.
    ANSI/IES TM-30-18, § 4.
    docs/methods.md §17.

    Examples
    --------
    >>> from workbench.colorimetry.cie import illuminant_table
    >>> r = colour_fidelity_cie_224(*illuminant_table("FL2"))  # TM-30-18: Rf 70, Rg 86
    >>> print(f"Rf {r.Rf[0]:.1f}, Rg {r.Rg[0]:.1f}, CCT {r.CCT[0]:.0f} K")
    Rf 70.1, Rg 86.4, CCT 4224 K
    """
    wl = np.asarray(wavelengths, dtype=float)
    spd = _rows(spd)
    step = _step(wl, spd.shape[-1])
    grid = np.arange(380.0, 780.0 + step / 2, step)
    S = _linear(wl, spd, grid)
    xyz2 = _cmfs_at("2", grid)
    xyz10 = _cmfs_at("10", grid)
    ces = np.asarray(table("ces"))[:, _index_380(grid)]
    CCT, Duv = cct_ohno_2013(XYZ_to_uv_1960(S @ xyz2), start=1000.0, end=25000.0)
    ref, share = _reference_224(CCT, grid, xyz2[:, 1])
    both = np.concatenate([S, ref])
    white = _XYZ(both, None, xyz10)
    samples = _XYZ(both, ces, xyz10)
    JMh = XYZ_to_JMh_CIECAM02(samples, white[:, None, :], L_A=CAM_L_A, Y_b=CAM_Y_B,
                              surround=SURROUND_AVERAGE, discount_illuminant=True)
    Jab = JMh_to_CAM02UCS(JMh)
    m = S.shape[0]
    Jab_t, Jab_r = Jab[:m], Jab[m:]
    dE = np.linalg.norm(Jab_t - Jab_r, axis=-1)
    Rf_i = fidelity_from_delta_E(dE)
    Rf = fidelity_from_delta_E(dE.mean(axis=1))
    hue_bin = np.floor(JMh[m:, :, 2] / 22.5).astype(int)
    onehot = (hue_bin[..., None] == np.arange(16)).astype(float)
    mean_t = _bin_means(Jab_t[..., 1:], onehot)
    mean_r = _bin_means(Jab_r[..., 1:], onehot)
    Rg = 100 * _polygon_area(mean_t) / _polygon_area(mean_r)
    return ColourFidelity(Rf, Rf_i, Rg, CCT, Duv, share, Jab_t, Jab_r, hue_bin)


def _index_380(grid: np.ndarray) -> np.ndarray:
    return np.round(grid - 380.0).astype(int)


def _polygon_area(points: np.ndarray) -> np.ndarray:
    """Signed area (m,) of the closed polygon through ``points`` (m, k, 2) in order (shoelace)."""
    a, b = points, np.roll(points, -1, axis=1)
    return 0.5 * np.sum(a[..., 0] * b[..., 1] - a[..., 1] * b[..., 0], axis=1)


# --------------------------------------------------------------------------
# Academy SSI
# --------------------------------------------------------------------------

#: The SSI's 1 nm grid, nm.
SSI_GRID = np.arange(375.0, 676.0)


@lru_cache(maxsize=1)
def _ssi_weights() -> tuple[np.ndarray, np.ndarray]:
    """The 10 nm band integration (30, 301) and the band weights (30,) of the Academy SSI."""
    band = np.zeros((30, SSI_GRID.size))
    for i in range(30):
        band[i, 10 * i:10 * i + 11] = [0.5] + [1.0] * 9 + [0.5]
    weight = np.ones(30)
    weight[:5] = [4 / 15, 22 / 45, 32 / 45, 40 / 45, 44 / 45]
    weight[-2:] = [11 / 15, 3 / 15]
    band.setflags(write=False)
    weight.setflags(write=False)
    return band, weight


def spectral_similarity_index(wavelengths, spd, reference_wavelengths, reference) -> np.ndarray:
    """The Academy SSI (m,), unrounded, of SPDs (m, n) against one reference SPD (k,).

    Notes
    -----
    Both are put on 375-675 nm at 1 nm (linear; zero outside their data),
    integrated over thirty 10 nm bands centred 380-670 nm (trapezoid),
    normalised to unit sum; the relative differences
    (t − r)/(r + 1/30) are weighted (less at both ends), smoothed by the
    kernel (0.22, 0.56, 0.22), and SSI = 100 − 32 √(Σ squares).

    References
    ----------
    Academy of Motion Picture Arts and Sciences (2020), S-2020-001.
    Holm, J. et al. (2016). A cinematographic spectral similarity index.
    docs/methods.md §17.

    Examples
    --------
    >>> from workbench.colorimetry.cie import illuminant_table
    >>> print(f"{spectral_similarity_index(*illuminant_table('C'), *illuminant_table('D65'))[0]:.3f}")
    94.183
    """
    band, weight = _ssi_weights()
    t = _linear(np.asarray(wavelengths, dtype=float), _rows(spd), SSI_GRID, fill=0.0) @ band.T
    r = _linear(np.asarray(reference_wavelengths, dtype=float), _rows(reference), SSI_GRID, fill=0.0) @ band.T
    t = t / t.sum(axis=1, keepdims=True)
    r = r / r.sum(axis=1, keepdims=True)
    wdr = weight * (t - r) / (r + 1 / 30)
    padded = np.pad(wdr, ((0, 0), (1, 1)))
    smooth = 0.22 * padded[:, :-2] + 0.56 * padded[:, 1:-1] + 0.22 * padded[:, 2:]
    return 100 - 32 * np.sqrt(np.sum(smooth ** 2, axis=1))
