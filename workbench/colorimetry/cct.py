"""Correlated colour temperature and Duv from CIE 1960 (u, v), numpy only.

Two published methods, vectorised over any number of chromaticities:

- Robertson (1968): interpolation between 31 isotemperature lines (the
  table of Wyszecki & Stiles), used by CIE 13.3-1995 to choose Ra's
  reference illuminant.
- Ohno (2013): the nearest point of a table of Planckian chromaticities,
  refined by the triangular solution near the locus (|Duv| < 0.002) and by
  the parabolic solution farther from it.

Both follow colour-science 0.4.7 step for step (its Ohno table: Planckian
radiators from ``start`` to ``end`` K in ratio steps of 1.001, the ratio
shrinking towards 1.0001 as the temperature rises to 100000 K, then
``end − 1`` and ``end``; chromaticities by the CIE 1931 2° functions over
360-780 nm at 1 nm, Planck's law with c₂ = 1.4388×10⁻² m·K). The
cascade of ever finer tables of Ohno's paper, and its 0.99991 correction of
the parabolic CCT, are not applied, because colour-science's dense table
makes them unnecessary and the workbench checks itself against it
(tests/test_light_indices_native.py).

References
----------
Robertson, A. R. (1968). Computation of correlated color temperature and
distribution temperature. *JOSA* 58(11), 1528-1535.
Wyszecki, G., & Stiles, W. S. (1982). *Color Science*, 2nd ed., Table 1(3.11).
Ohno, Y. (2014). Practical use and calculation of CCT and Duv. *LEUKOS*
10(1), 47-55.
CIE 15:2004, *Colorimetry*, 3rd ed.
docs/methods.md §17.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from workbench.colorimetry.cie import cmfs_table, table

__all__ = ["XYZ_to_uv_1960", "planck_relative", "uv_planckian", "cct_robertson_1968", "cct_ohno_2013"]

#: Second radiation constant, m·K (CIE 15:2004).
C2_M_K = 1.4388e-2
#: The range and ratio step of the Planckian table, K (colour-science 0.4.7's Ohno 2013 defaults).
OHNO_START, OHNO_END, OHNO_RATIO = 1000.0, 100000.0, 1.001


def XYZ_to_uv_1960(XYZ) -> np.ndarray:
    """CIE 1960 UCS (u, v) (..., 2) of XYZ (..., 3): u = 4X/(X + 15Y + 3Z), v = 6Y/(X + 15Y + 3Z).

    Computed through U = 2X/3, V = Y, W = (−X + 3Y + Z)/2 as CIE 1960 defines it.
    """
    XYZ = np.asarray(XYZ, dtype=float)
    X, Y, Z = XYZ[..., 0], XYZ[..., 1], XYZ[..., 2]
    U, V, W = 2 * X / 3, Y, 0.5 * (-X + 3 * Y + Z)
    s = U + V + W
    return np.stack([U / s, V / s], axis=-1)


def planck_relative(wavelengths_nm, temperature) -> np.ndarray:
    """Planck's law λ⁻⁵ / (exp(c₂/λT) − 1) in W·m⁻²·sr⁻¹·nm⁻¹ up to c₁/π: (..., n) for T (...) K, λ (n,) nm."""
    wl = np.asarray(wavelengths_nm, dtype=float) * 1e-9
    T = np.asarray(temperature, dtype=float)[..., None]
    return 3.741771e-16 / np.pi * wl ** -5 / np.expm1(C2_M_K / (wl * T)) * 1e-9


@lru_cache(maxsize=1)
def _cmfs_2_360_780() -> tuple[np.ndarray, np.ndarray]:
    wl, v = cmfs_table("2")
    keep = wl <= 780.0
    return wl[keep], np.ascontiguousarray(v[keep])


def uv_planckian(temperature) -> np.ndarray:
    """CIE 1960 (u, v) (..., 2) of Planckian radiators at ``temperature`` (...) K, CIE 1931 2°, 360-780 nm at 1 nm."""
    wl, xyz = _cmfs_2_360_780()
    return XYZ_to_uv_1960(planck_relative(wl, temperature) @ xyz)


def _ratio_rows(start: float, ratio: float) -> np.ndarray:
    """T (K) of the table's ratio steps from ``start`` while below 100000 K."""
    T = [start, start + 1]
    t, step = start + 1, ratio
    while (t := t * step) < OHNO_END:
        T.append(t)
        share = min(max((t - OHNO_START) / (OHNO_END - OHNO_START), 0.0), 1.0)
        step = ratio * (1 - share) + (1 + (ratio - 1) / 10) * share
    return np.array(T)


@lru_cache(maxsize=4)
def planckian_table(start: float = OHNO_START, end: float = OHNO_END, ratio: float = OHNO_RATIO) -> np.ndarray:
    """The Ohno 2013 search table (m, 3): T (K), u, v; read-only.

    T runs ``start``, ``start + 1``, then multiplies by a ratio that falls
    linearly from ``ratio`` at 1000 K to ``1 + (ratio − 1)/10`` at
    100000 K while below ``end``, and ends with ``end − 1``, ``end``
    (``end`` ≤ 100000 K). The default table's chromaticities are read from
    the package's CIE tables (``ohno_planckian``, the same numbers to
    ~1e-15, without computing 6849 blackbodies at start-up); others are
    computed by :func:`uv_planckian`.
    """
    if (start, ratio) == (OHNO_START, OHNO_RATIO):
        rows = np.asarray(table("ohno_planckian"))[:-2]
    else:
        T = _ratio_rows(float(start), float(ratio))
        rows = np.column_stack([T, uv_planckian(T)])
    ends = np.array([end - 1.0, end])
    out = np.concatenate([rows[rows[:, 0] < end], np.column_stack([ends, uv_planckian(ends)])])
    out.setflags(write=False)
    return out


def cct_ohno_2013(uv, *, start: float = OHNO_START, end: float = OHNO_END) -> tuple[np.ndarray, np.ndarray]:
    """CCT (K) and Duv of CIE 1960 chromaticities ``uv`` (..., 2) by Ohno's 2013 method.

    Parameters
    ----------
    uv : array_like (..., 2)
        CIE 1960 UCS (u, v).
    start, end : float, K
        The Planckian table's range (1000-100000 K; CIE 224:2017 uses
        1000-25000 K to choose its reference).

    Returns
    -------
    CCT : ndarray (...), K
    Duv : ndarray (...)
        Signed distance from the Planckian locus in (u, v), + above it.

    Notes
    -----
    The table entry nearest to ``uv`` and its two neighbours (i−1, i+1;
    at either end of the table the neighbour pair shifts inwards) give the
    triangular solution x = (d₋² − d₊² + l²)/(2l), T = T₋ + (T₊ − T₋) x/l,
    |Duv| = √(d₋² − x²), and the parabolic solution through (T, d) of
    the three entries. The triangular one is kept for |Duv| < 0.002, the
    parabolic beyond. The sign of Duv is that of v − v(x) on the chord.

    References
    ----------
    Ohno, Y. (2014). Practical use and calculation of CCT and Duv. *LEUKOS*
    10(1), 47-55.
    docs/methods.md §17.

    Examples
    --------
    >>> cct, duv = cct_ohno_2013(XYZ_to_uv_1960([109.850, 100.0, 35.585]))  # illuminant A's white (ASTM E308)
    >>> print(f"{cct:.1f} K, Duv {duv:.1e}")  # about 2856 K with today's c2 (CIE 15:2004)
    2855.5 K, Duv -3.0e-07
    """
    uv = np.asarray(uv, dtype=float)
    shape = uv.shape[:-1]
    p = uv.reshape(-1, 2)
    tab = planckian_table(float(start), float(end), OHNO_RATIO)
    # the nearest table entry, in blocks of points so a large batch never holds (n, 6849) distances at once
    i = np.empty(p.shape[0], dtype=int)
    for a in range(0, p.shape[0], 2048):
        q = p[a:a + 2048]
        i[a:a + 2048] = np.argmin(np.hypot(tab[None, :, 1] - q[:, 0:1], tab[None, :, 2] - q[:, 1:2]), axis=1)
    i = np.clip(i, 1, tab.shape[0] - 2)
    Tp, up, vp = tab[i - 1].T
    Ti = tab[i, 0]
    Tn, un, vn = tab[i + 1].T
    dp, di, dn = (np.hypot(tab[j, 1] - p[:, 0], tab[j, 2] - p[:, 1]) for j in (i - 1, i, i + 1))
    # triangular solution
    l = np.hypot(un - up, vn - vp)  # noqa: E741
    x = (dp ** 2 - dn ** 2 + l ** 2) / (2 * l)
    T_tri = Tp + (Tn - Tp) * (x / l)
    v_chord = vp + (vn - vp) * (x / l)
    sign = np.sign(p[:, 1] - v_chord)
    Duv_tri = np.sqrt(dp ** 2 - x ** 2) * sign
    # parabolic solution through (T, d) of the three entries
    X = (Tn - Ti) * (Tp - Tn) * (Ti - Tp)
    a = (Tp * (dn - di) + Ti * (dp - dn) + Tn * (di - dp)) / X
    b = -(Tp ** 2 * (dn - di) + Ti ** 2 * (dp - dn) + Tn ** 2 * (di - dp)) / X
    c = -(dp * (Tn - Ti) * Ti * Tn + di * (Tp - Tn) * Tp * Tn + dn * (Ti - Tp) * Tp * Ti) / X
    T_par = -b / (2 * a)
    Duv_par = (a * T_par ** 2 + b * T_par + c) * sign
    far = np.abs(Duv_tri) >= 0.002
    CCT = np.where(far, T_par, T_tri)
    Duv = np.where(far, Duv_par, Duv_tri)
    return CCT.reshape(shape), Duv.reshape(shape)


def cct_robertson_1968(uv) -> tuple[np.ndarray, np.ndarray]:
    """CCT (K) and Duv of CIE 1960 chromaticities ``uv`` (..., 2) by Robertson's isotemperature lines.

    Notes
    -----
    The first of lines 1-30 (of 0-30) that the point lies on or beyond
    (signed distance ≤ 0 along the line's normal) and the line before it
    bracket the point; the reciprocal temperature, the point on the locus
    and the line direction are interpolated between them in proportion to
    the two distances. Points beyond the last line take the last pair.
    Duv is the distance along the interpolated direction, + above the
    locus. This is the CCT CIE 13.3-1995 asks for to choose the reference
    illuminant (as colour-science 0.4.7 computes it).

    References
    ----------
    Robertson, A. R. (1968). *JOSA* 58(11), 1528-1535.
    Wyszecki, G., & Stiles, W. S. (1982). *Color Science*, 2nd ed., Table 1(3.11).

    Examples
    --------
    >>> print(f"{cct_robertson_1968(XYZ_to_uv_1960([109.850, 100.0, 35.585]))[0]:.1f} K")  # illuminant A's white
    2855.6 K
    """
    uv = np.asarray(uv, dtype=float)
    shape = uv.shape[:-1]
    p = uv.reshape(-1, 2)
    r, u, v, t = table("robertson_lines").T
    length = np.hypot(1.0, t)
    du, dv = 1.0 / length, t / length
    u0, v0 = p[:, 0:1], p[:, 1:2]
    dist = -(u0 - u[1:]) * dv[1:] + (v0 - v[1:]) * du[1:]  # (n, 30)
    beyond = dist <= 0
    i = np.where(beyond.any(axis=1), np.argmax(beyond, axis=1) + 1, 30)
    rows = np.arange(p.shape[0])
    now = -np.minimum(dist[rows, i - 1], 0.0)
    before = dist[rows, i - 2]
    f = np.where(i == 1, 0.0, now / np.where(i == 1, 1.0, before + now))
    T = 1.0e6 / (r[i - 1] * f + r[i] * (1 - f))
    ui = u[i - 1] * f + u[i] * (1 - f)
    vi = v[i - 1] * f + v[i] * (1 - f)
    dui = du[i] * (1 - f) + du[i - 1] * f
    dvi = dv[i] * (1 - f) + dv[i - 1] * f
    n = np.hypot(dui, dvi)
    Duv = -((p[:, 0] - ui) * dui / n + (p[:, 1] - vi) * dvi / n)
    return T.reshape(shape), Duv.reshape(shape)
