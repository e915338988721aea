"""Interpolation operators on a wavelength grid, as matrices: Sprague, linear and not-a-knot cubic spline.

Each function returns the matrix ``M`` (len(xt), n) whose product with
values on the data grid ``x`` gives the interpolated values at ``xt``
(inside the data's range; :mod:`workbench.model.spectra` handles exact
nodes, extrapolation and caching, and chooses the method). numpy only.

References
----------
CIE 167:2005, *Recommended practice for tabulating spectral data for use in
colour computations* (Sprague interpolation for uniform data, cubic spline
for non-uniform data).
Sprague, T. B. (1880). Explanation of a new formula for interpolation.
*Journal of the Institute of Actuaries*, 22, 270-285.
"""

from __future__ import annotations

import numpy as np

__all__ = ["sprague_matrix", "linear_matrix", "spline_matrix"]

# CIE 167:2005 / Sprague (1880): two extra points at each end of the data.
_SPRAGUE_EXTEND = np.array(
    [
        [884, -1960, 3033, -2648, 1080, -180],
        [508, -540, 488, -367, 144, -24],
    ],
    dtype=float,
) / 209.0

# Quintic coefficients a1..a5 from the six points p[i-2] .. p[i+3].
_SPRAGUE_A = np.array(
    [
        [2, -16, 0, 16, -2, 0],
        [-1, 16, -30, 16, -1, 0],
        [-9, 39, -70, 66, -33, 7],
        [13, -64, 126, -124, 61, -12],
        [-5, 25, -50, 50, -25, 5],
    ],
    dtype=float,
) / 24.0


def sprague_matrix(x: np.ndarray, xt: np.ndarray) -> np.ndarray:
    """Sprague interpolation operator for uniform ``x`` (≥ 6 points)."""
    n = x.size
    h = x[1] - x[0]
    # Extension operator E ((n+4) x n): extended points from the data.
    E = np.zeros((n + 4, n))
    E[0, :6] = _SPRAGUE_EXTEND[0]
    E[1, :6] = _SPRAGUE_EXTEND[1]
    E[2:n + 2] = np.eye(n)
    E[n + 2, n - 6:] = _SPRAGUE_EXTEND[1][::-1]
    E[n + 3, n - 6:] = _SPRAGUE_EXTEND[0][::-1]

    t = (xt - x[0]) / h
    i = np.clip(np.floor(t).astype(int), 0, n - 2)
    X = t - i  # local coordinate in [0, 1]
    M = np.zeros((xt.size, n + 4))
    rows = np.arange(xt.size)
    # p index of data point i in the extended vector is i + 2.
    for j in range(6):
        coef = sum(_SPRAGUE_A[k, j] * X ** (k + 1) for k in range(5))
        if j == 2:
            coef = coef + 1.0
        M[rows, i + j] += coef
    return M @ E


def linear_matrix(x: np.ndarray, xt: np.ndarray) -> np.ndarray:
    n = x.size
    i = np.clip(np.searchsorted(x, xt, side="right") - 1, 0, n - 2)
    w = (xt - x[i]) / (x[i + 1] - x[i])
    M = np.zeros((xt.size, n))
    rows = np.arange(xt.size)
    M[rows, i] = 1 - w
    M[rows, i + 1] += w
    return M


def spline_matrix(x: np.ndarray, xt: np.ndarray) -> np.ndarray:
    """The not-a-knot cubic spline through (x, y) at ``xt`` as a matrix (len(xt), n): column j answers y = e_j.

    Second derivatives M at the knots solve the usual tridiagonal system
    h₋ M₋ + 2(h₋ + h₊) M + h₊ M₊ = 6 (Δy₊/h₊ − Δy₋/h₋); not-a-knot (a
    continuous third derivative at the second and the last-but-one knot)
    gives M at both ends from their neighbours, which are substituted into
    the first and last rows so the system stays diagonally dominant and is
    solved by forward elimination and back substitution (numpy only; agrees
    with scipy's CubicSpline to rounding). Two knots give the straight
    line, three the parabola through them.
    """
    n = x.size
    h = np.diff(x)
    eye = np.eye(n)
    if n == 2:
        return linear_matrix(x, xt)
    if n == 3:  # the parabola through the three points (Lagrange)
        return np.stack([np.prod([(xt - x[k]) / (x[j] - x[k]) for k in range(3) if k != j], axis=0)
                         for j in range(3)], axis=1)
    # right-hand side (n - 2, n): 6 (Δy_i/h_i − Δy_{i−1}/h_{i−1}) as a matrix acting on y
    rhs = 6 * ((eye[2:] - eye[1:-1]) / h[1:, None] - (eye[1:-1] - eye[:-2]) / h[:-1, None])
    lower = h[:-1].copy()          # coefficient of M_{i−1} in row i (i = 1 … n−2)
    diag = 2 * (h[:-1] + h[1:])
    upper = h[1:].copy()           # coefficient of M_{i+1}
    h0, h1, hb, ha = h[0], h[1], h[-2], h[-1]
    diag[0] += h0 * (h0 + h1) / h1   # M_0 = ((h0 + h1) M_1 − h0 M_2) / h1
    upper[0] -= h0 * h0 / h1
    diag[-1] += ha * (hb + ha) / hb  # M_{n−1} = ((h_{n−3} + h_{n−2}) M_{n−2} − h_{n−2} M_{n−3}) / h_{n−3}
    lower[-1] -= ha * ha / hb
    m = n - 2
    c = np.empty(m)
    d = np.empty_like(rhs)
    c[0] = upper[0] / diag[0]
    d[0] = rhs[0] / diag[0]
    for i in range(1, m):
        piv = diag[i] - lower[i] * c[i - 1]
        c[i] = upper[i] / piv
        d[i] = (rhs[i] - lower[i] * d[i - 1]) / piv
    M = np.empty((n, n))
    M[m] = d[m - 1]
    for i in range(m - 2, -1, -1):
        d[i] -= c[i] * d[i + 1]
    M[1:-1] = d
    M[0] = ((h0 + h1) * M[1] - h0 * M[2]) / h1
    M[-1] = ((hb + ha) * M[-2] - ha * M[-3]) / hb
    k = np.clip(np.searchsorted(x, xt, side="right") - 1, 0, n - 2)
    hk = h[k][:, None]
    a = (x[k + 1] - xt)[:, None]
    b = (xt - x[k])[:, None]
    return (M[k] * a ** 3 + M[k + 1] * b ** 3) / (6 * hk) + (eye[k] / hk - M[k] * hk / 6) * a \
        + (eye[k + 1] / hk - M[k + 1] * hk / 6) * b
