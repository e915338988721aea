"""Lossless thin-film stacks in real arithmetic: the fast paths of the characteristic-matrix engine.

:func:`workbench.optics.thinfilm.stack_response` comes here when every
layer is lossless and the wave propagates in every layer (with thickness
derivatives: :func:`lossless_derivatives`); this module also holds the
scratch buffers and phase factors the engine shares.

With real phase thickness ``δ`` and tilted admittance ``η`` a layer's
characteristic matrix is ``[[cos δ, −i sin δ / η], [−i η sin δ, cos δ]]``.
Matrices of the form ``[[m₁₁, i m₁₂], [i m₂₁, m₂₂]]`` (m real) are closed
under products, and writing them as the real matrix
``G = [[m₁₁, m₁₂], [−m₂₁, m₂₂]]`` turns their product into the plain real
product ``G_P G_Q``; a layer is ``G = [[cos δ, −sin δ / η], [η sin δ, cos δ]]``.
For one stack, neighbouring layers of one material are one layer
(``M(δ₁) M(δ₂) = M(δ₁ + δ₂)``); then:

* when at most half of its layers are distinct (material and thickness
  equal bit for bit), as in a periodic design such as ``(0.5L H 0.5L)^20``,
  each distinct layer's ``cos δ``, ``sin δ`` and matrix is computed once
  and a block of layers repeated in a row is multiplied once and raised to
  its power (:func:`_power`): about ten 2 × 2 products for 41 layers;
* otherwise the vector ``(Re B, Im B, Re C, Im C)`` is carried from the
  substrate one layer at a time, four array operations per layer.

A batch whose rows each change one layer of a base stack (a fit's forward
differences) goes to :func:`lossless_one_change`: one pass from each side of
the base stack, then one layer and two dot products per row.

References
----------
H. A. Macleod, *Thin-Film Optical Filters*, 4th ed., CRC Press, 2010,
chapter 2 (characteristic matrix, tilted admittances).
"""

from __future__ import annotations

import math
import threading

import numpy as np

__all__ = ["lossless_response", "lossless_one_change", "lossless_derivatives", "scratch_arrays", "cos_sin"]

_TWO_PI = 2.0 * np.pi
_LOCAL = threading.local()


def scratch_arrays(shape, count, slot="stack", dtype=complex) -> list[np.ndarray]:
    """``count`` scratch arrays of ``shape``, kept per thread and reused.

    The large per-layer arrays are otherwise fresh allocations on every call;
    above glibc's mmap threshold each costs a page fault per 4 kB page, which
    was more than half the time of a 40-layer evaluation. Each thread keeps
    its own buffers (the tolerance analysis evaluates on two threads), only
    for the last shape asked for in each slot.
    """
    cache = getattr(_LOCAL, "buffers", None)
    if cache is None:
        cache = _LOCAL.buffers = {}
    held = cache.get(slot)
    if held is None or held[0] != shape or held[1][0].dtype != np.dtype(dtype) or len(held[1]) < count:
        held = (shape, [np.empty(shape, dtype=dtype) for _ in range(count)])
        cache[slot] = held
    return held[1][:count]


def cos_sin(delta):
    """``cos δ`` and ``sin δ`` through ``tan(δ/2)`` (numpy's float64 tan is vectorised, cos and sin are not).

    For complex ``δ = x + iy``: ``cos δ = cos x cosh y − i sin x sinh y`` and
    ``sin δ = sin x cosh y + i cos x sinh y``. Accurate to a few ulp. Real
    results are scratch buffers (valid until the next call with this shape).
    """
    if np.iscomplexobj(delta):
        cx, sx = cos_sin(delta.real)
        y = delta.imag
        ch = np.cosh(y)
        sh = np.sinh(y)
        return cx * ch - 1j * (sx * sh), sx * ch + 1j * (cx * sh)
    t, inv, cd, sd = scratch_arrays(delta.shape, 4, slot="phase", dtype=float)
    np.multiply(delta, 0.5, out=t)
    np.tan(t, out=t)
    np.multiply(t, t, out=cd)
    np.add(cd, 1.0, out=inv)
    np.divide(1.0, inv, out=inv)
    np.subtract(1.0, cd, out=cd)
    cd *= inv
    np.multiply(t, 2.0, out=sd)
    sd *= inv
    return cd, sd


def _distinct_rows(rows) -> tuple[np.ndarray, np.ndarray]:
    """Index of one row of each distinct value (rows compared exactly) and each row's distinct number.

    Rows are grouped by one weighted sum each, then checked entry by entry;
    should two different rows share a sum, they are told apart one by one.
    """
    weights = 1.0 + np.arange(rows.shape[1]) * 0.6180339887498949
    _, first, which = np.unique(rows @ weights, return_index=True, return_inverse=True)
    which = which.reshape(-1)
    if np.array_equal(rows[first][which], rows):
        return first, which
    seen: dict = {}
    first_list: list[int] = []
    for j, row in enumerate(rows):
        key = row.tobytes()
        m = seen.get(key)
        if m is None:
            m = seen[key] = len(first_list)
            first_list.append(j)
        which[j] = m
    return np.array(first_list, dtype=np.intp), which


def _runs(seq: list, longest: int = 8) -> list[tuple[tuple, int]]:
    """The sequence as ``(block, repeats)`` pieces, greedily from the start: ``a b c b c b a`` → a, (b c)², b, a.

    At each place the block of at most ``longest`` entries whose repeats
    cover the most entries is taken (two repeats at least); else one entry.
    """
    out, i, n = [], 0, len(seq)
    while i < n:
        best, best_p, best_r = 1, 1, 1
        for p in range(1, min(longest, (n - i) // 2) + 1):
            block = seq[i:i + p]
            r = 1
            while seq[i + r * p:i + (r + 1) * p] == block:
                r += 1
            if r >= 2 and p * r > best:
                best, best_p, best_r = p * r, p, r
        out.append((tuple(seq[i:i + best_p]), best_r))
        i += best
    return out


def _mul(P, Q):
    """``P Q`` for real 2 × 2 matrices on the two leading axes, into a new array."""
    out = P[:, 0:1] * Q[0:1]
    out += P[:, 1:2] * Q[1:2]
    return out


def _power(M, r: int):
    """``M^r`` (r ≥ 1) of a matrix of determinant 1 (a product of layers).

    Up to 40 repeats through Chebyshev polynomials of the second kind
    (``M^r = U_{r−1}(x) M − U_{r−2}(x) I``, ``x`` half the trace: two array
    operations per repeat on one matrix entry's size); more by squaring.

    References
    ----------
    F. Abelès, Ann. Phys. (Paris) 5, 596-640 (1950); M. Born and E. Wolf,
    *Principles of Optics*, 7th ed., Cambridge University Press, 1999,
    §1.6.5 (periodically stratified media).
    """
    if r == 1:
        return M
    if r > 40:
        result = None
        while True:
            if r & 1:
                result = M if result is None else _mul(result, M)
            r >>= 1
            if not r:
                return result
            M = _mul(M, M)
    two_x = M[0, 0] + M[1, 1]
    u_prev, u = None, two_x                                             # U_0 = 1, U_1 = 2x
    for _ in range(r - 2):
        nxt = two_x * u
        if u_prev is None:
            nxt -= 1.0
        else:
            nxt -= u_prev
        u_prev, u = u, nxt
    out = M * u                                                        # U_{r−1} M
    sub = 1.0 if u_prev is None else u_prev                            # U_{r−2}
    out[0, 0] -= sub
    out[1, 1] -= sub
    return out


def _by_blocks(eta_t, k_t, d_t, seq):
    """The real form (2, 2, ..., 2, A, W) of ``M₁ M₂ …`` over the layer sequence ``seq`` of distinct layers.

    Distinct layers (tokens) have admittances ``eta_t`` (T, ..., 2, A, W),
    wavenumbers ``k_t`` (T, ..., A, W) and thicknesses ``d_t`` (T,); a block
    repeated in a row is raised to its power by squaring.
    """
    delta = k_t * d_t.reshape(d_t.shape + (1,) * (k_t.ndim - 1))      # (T, ..., A, W)
    cd, sd = cos_sin(delta)
    G = np.empty((2, 2) + eta_t.shape)                                 # (2, 2, T, ..., 2, A, W)
    c_e = cd[..., None, :, :]
    s_e = sd[..., None, :, :]
    G[0, 0] = c_e
    G[1, 1] = c_e
    np.divide(s_e, eta_t, out=G[0, 1])
    np.negative(G[0, 1], out=G[0, 1])
    np.multiply(s_e, eta_t, out=G[1, 0])
    out = None
    for block, r in _runs(seq.tolist()):
        M = G[:, :, block[0]]
        for t in block[1:]:
            M = _mul(M, G[:, :, t])
        if r > 1:
            M = _power(M, r)
        out = M if out is None else _mul(out, M)
    return out


def _layer_by_layer(eta_m, k_m, which, dt, eta_s):
    """``X = M₁ M₂ … M_L [1, η_sub]`` as ``(Re B, Im B, Re C, Im C)``, one layer at a time from the substrate.

    Four array operations per layer, no allocation in the loop: with the
    material's ``E = (1/η, −1/η, η, −η)`` one layer is
    ``X ← cos δ X + sin δ (E ⊙ reversed(X))``.
    """
    E = np.empty((eta_m.shape[0], 4) + eta_m.shape[1:])                # (M, 4, ..., 2, A, W)
    E[:, 2] = eta_m
    np.divide(1.0, eta_m, out=E[:, 0])
    np.negative(E[:, 0], out=E[:, 1])
    np.negative(E[:, 2], out=E[:, 3])
    L = which.size
    d_e = dt.reshape(dt.shape + (1, 1))
    (delta,) = scratch_arrays(np.broadcast_shapes((L,) + k_m.shape[1:], d_e.shape), 1, slot="phase-thickness",
                              dtype=float)
    if delta.shape[0] == L and delta.shape[1:] == k_m.shape[1:]:
        np.take(k_m, which, axis=0, out=delta)
        delta *= d_e
    else:
        np.multiply(k_m[which], d_e, out=delta)
    cd, sd = cos_sin(delta)
    shape = np.broadcast_shapes(E.shape[2:], sd.shape[1:-2] + (1,) + sd.shape[-2:])   # (..., 2, A, W)
    Xw, t = scratch_arrays((4,) + shape, 2, slot="lossless-vector", dtype=float)
    Xw[0] = 1.0
    Xw[1] = 0.0
    Xw[2] = eta_s.real
    Xw[3] = eta_s.imag
    Xr = Xw[::-1]
    a = cd[..., None, :, :]                                            # (L, ..., 1, A, W)
    s = sd[..., None, :, :]
    for j in range(L - 1, -1, -1):
        np.multiply(Xr, E[which[j]], out=t)
        t *= s[j]
        Xw *= a[j]
        Xw += t
    return Xw


def lossless_response(Nt, dt, wl, beta2, eta0, eta_s):
    """R, T of stacks whose layers are all lossless and propagating, in real arithmetic; None otherwise.

    Parameters
    ----------
    Nt : (L, ..., n_λ) ndarray
        Layer indices, layer axis first.
    dt : (L, ...) ndarray, nm
        Thicknesses, layer axis first.
    wl : (n_λ,) ndarray, nm
    beta2 : (n_a, n_λ) ndarray
        ``(n₀ sin θ₀)²``.
    eta0 : (2, n_a, n_λ) ndarray
        Real admittances of the incidence medium (s, p).
    eta_s : (2, n_a, n_λ) complex ndarray
        Admittances of the substrate.

    Returns
    -------
    (R, T, None, None) with R, T shaped (..., 2, n_a, n_λ), or None when a
    layer absorbs or carries an evanescent wave (the general path applies).
    """
    if np.iscomplexobj(Nt):
        if np.any(Nt.imag):
            return None
        Nt = Nt.real
    L = Nt.shape[0]
    mid = Nt.shape[1:-1]
    one_stack = math.prod(dt.shape[1:]) == 1
    if math.prod(mid) == 1:
        first, which = _distinct_rows(Nt.reshape(L, Nt.shape[-1]))
        U = Nt[first]
        # neighbours of one material are one layer: M(δ₁) M(δ₂) = M(δ₁ + δ₂)
        starts = np.flatnonzero(np.r_[True, which[1:] != which[:-1]])
        if starts.size < L:
            dt = np.add.reduceat(dt, starts, axis=0)
            which = which[starts]
            L = starts.size
    else:
        U, which = Nt, np.arange(L)
    U2 = U * U
    arg = U2[..., None, :] - beta2                                     # (M, ..., A, W)
    if not np.all(arg > 0):
        return None
    q = np.sqrt(arg)
    eta = np.empty(q.shape[:-2] + (2,) + q.shape[-2:])                 # (M, ..., 2, A, W)
    eta[..., 0, :, :] = q
    np.divide(U2[..., None, :], q, out=eta[..., 1, :, :])
    k_m = (_TWO_PI / wl) * q                                           # rad/nm, (M, ..., A, W)
    seq = None
    if one_stack and math.prod(mid) == 1:
        # distinct layers (one material, one thickness): a periodic stack has few
        first, seq = _distinct_rows(np.stack([which.astype(float), dt.reshape(L)], axis=1))
    if seq is not None and 0 < len(first) <= L // 2:
        which_t = which[first]
        P = _by_blocks(eta[which_t], k_m[which_t], dt.reshape(L)[first], seq)
        # [B, C] = M [1, η_sub]:  B = g00 + i g01 η_sub,  C = −i g10 + g11 η_sub
        er, ei = eta_s.real, eta_s.imag
        Br = P[0, 0] - P[0, 1] * ei
        Bi = P[0, 1] * er
        Cr = P[1, 1] * er
        Ci = P[1, 1] * ei - P[1, 0]
    else:
        Br, Bi, Cr, Ci = _layer_by_layer(eta, k_m, which, dt, eta_s)
    eBr = eta0 * Br
    eBi = eta0 * Bi
    Yr = eBr + Cr
    Yi = eBi + Ci
    Y2 = Yr * Yr
    Y2 += Yi * Yi
    nr = eBr - Cr
    ni = eBi - Ci
    R = nr * nr
    R += ni * ni
    R /= Y2
    T = (4.0 * eta0.real * eta_s.real) / Y2
    return R, T, None, None


def lossless_one_change(N, d0, layer, thickness, wl, beta2, eta0, eta_s):
    """R, T of one lossless stack and of copies of it that each give one layer another thickness; None otherwise.

    A fit's forward differences move one layer per row: with the vectors
    ``v_j = M_{j+1} … M_L [1, η_sub]`` (one pass from the substrate) and
    the row vectors ``[η₀, ±1] M₁ … M_{j−1}`` (one pass from the incidence
    side), a row that changes layer j costs one layer's matrix and two dot
    products, not a pass through the stack.

    Parameters
    ----------
    N : (L, n_λ) ndarray
        Layer indices (one set for every row).
    d0 : (L,) ndarray, nm
        The base stack's thicknesses.
    layer : (K,) int ndarray
        The layer each row changes.
    thickness : (K,) ndarray, nm
        Its thickness in that row.
    wl, beta2, eta0, eta_s
        As for :func:`lossless_response`.

    Returns
    -------
    (R0, T0, R, T) with R0, T0 shaped (2, n_a, n_λ) (the base stack) and R,
    T shaped (K, 2, n_a, n_λ); None when a layer absorbs or carries an
    evanescent wave.
    """
    L, K = N.shape[0], layer.size
    tables = _materials(N, beta2, wl)
    if tables is None:
        return None
    which, E, k_m = tables
    E_row = E[:, [2, 3, 0, 1]]                                         # (η, −η, 1/η, −1/η) for row vectors
    delta = np.concatenate([k_m[which] * d0[:, None, None], k_m[which[layer]] * thickness[:, None, None]])
    cd, sd = cos_sin(delta)
    a = cd[:, None, None]                                              # (L + K, 1, 1, A, W)
    s = sd[:, None, None]
    V = _columns(E, which, a, s, eta_s, "one-change-columns")
    shape = V.shape[1:]                                                # (4, 2, A, W)
    (F,) = scratch_arrays((L, 2) + shape, 1, slot="one-change-rows", dtype=float)
    u = np.empty((2,) + shape)
    # row vectors [η₀, 1] and [η₀, −1] (Re a, Im a, Re b, Im b), then F_{j+1} = F_j M_j
    F[0, :, 0] = eta0
    F[0, :, 1] = 0.0
    F[0, 0, 2] = 1.0
    F[0, 1, 2] = -1.0
    F[0, :, 3] = 0.0
    for j in range(L - 1):
        np.multiply(F[j, :, ::-1], E_row[which[j]], out=u)
        u *= s[j]
        np.multiply(F[j], a[j], out=F[j + 1])
        F[j + 1] += u
    # each row (and the base stack, as row K: its first layer as it is) is [η₀, ±1] M₁ … M_j' … M_L [1, η_sub]
    layers = np.append(layer, 0)
    a_k = np.concatenate([a[L:], a[:1]])                               # (K + 1, 1, 1, A, W)
    s_k = np.concatenate([s[L:], s[:1]])
    R = np.empty((K + 1,) + shape[1:])
    T = np.empty_like(R)
    X = np.empty(shape)
    num = 4.0 * eta0 * eta_s.real
    for i, j in enumerate(layers):
        np.multiply(V[j, ::-1], E[which[j]], out=X)
        X *= s_k[i, 0]
        X += a_k[i, 0] * V[j]
        Br, Bi, Cr, Ci = X
        f0, f1, f2, f3 = F[j, :, 0], F[j, :, 1], F[j, :, 2], F[j, :, 3]          # (2, 2, A, W)
        Zr = f0 * Br - f1 * Bi + f2 * Cr - f3 * Ci                     # [η₀, ±1]·[B, C]
        Zi = f0 * Bi + f1 * Br + f2 * Ci + f3 * Cr
        Z2 = Zr * Zr
        Z2 += Zi * Zi
        np.divide(Z2[1], Z2[0], out=R[i])
        np.divide(num, Z2[0], out=T[i])
    return R[K], T[K], R[:K], T[:K]


def _materials(N, beta2, wl):
    """Per layer its material's number, and per material ``E = (1/η, −1/η, η, −η)`` (M, 4, 2, A, W) and ``2πq/λ``.

    None when a layer absorbs or carries an evanescent wave.
    """
    if np.iscomplexobj(N):
        if np.any(N.imag):
            return None
        N = N.real
    first, which = _distinct_rows(N.reshape(N.shape[0], N.shape[-1]))
    U2 = N[first] ** 2
    arg = U2[:, None, :] - beta2                                       # (M, A, W)
    if not np.all(arg > 0):
        return None
    q = np.sqrt(arg)
    eta = np.stack([q, U2[:, None, :] / q], axis=1)                    # (M, 2, A, W)
    E = np.stack([1.0 / eta, -1.0 / eta, eta, -eta], axis=1)           # (M, 4, 2, A, W)
    return which, E, (_TWO_PI / wl) * q


def _columns(E, which, a, s, eta_s, slot):
    """``v_j = M_{j+1} … M_L [1, η_sub]`` for every layer j as (L, 4, 2, A, W) (Re B, Im B, Re C, Im C), a scratch buffer."""
    L = which.size
    (V,) = scratch_arrays((L, 4) + E.shape[2:], 1, slot=slot, dtype=float)
    t = np.empty(V.shape[1:])
    V[L - 1, 0] = 1.0
    V[L - 1, 1] = 0.0
    V[L - 1, 2] = eta_s.real
    V[L - 1, 3] = eta_s.imag
    for j in range(L - 1, 0, -1):
        np.multiply(V[j, ::-1], E[which[j]], out=t)
        t *= s[j, 0]
        np.multiply(V[j], a[j, 0], out=V[j - 1])
        V[j - 1] += t
    return V


def lossless_derivatives(Nt, dt, wl, beta2, eta0, eta_s):
    """R, T and their thickness derivatives of lossless, propagating stacks in real arithmetic; None otherwise.

    One pass from the substrate stores the vectors ``v_j = M_{j+1} … M_L
    [1, η_sub]`` as ``(Re B, Im B, Re C, Im C)``; with ``Z± = [η₀, ±1] M₁ …
    M_L [1, η_sub]`` (so ``R = |Z₋|²/|Z₊|²``, ``T = 4 η₀ Re η_sub / |Z₊|²``)
    one pass from the incidence side carries the row vector
    ``g = conj(Z₋) [η₀, −1] − R conj(Z₊) [η₀, 1]`` through ``M₁ … M_{j−1}``.
    With ``x_j = (∂M_j/∂δ_j) v_j = −sin δ v_j + cos δ (E ⊙ reversed(v_j))``
    and ``k_j = ∂δ_j/∂d_j = 2π q_j/λ``:
    ``∂R/∂d_j = 2 k_j Re(g_j·x_j) / |Z₊|²``. No layer absorbs, so
    ``R + T = 1`` (``T = 0`` and ``R = 1`` when the substrate's wave is
    evanescent) and ``∂T/∂d_j = −∂R/∂d_j``. The matrices of lossless layers
    have real diagonals and imaginary off-diagonals, so every product is
    carried as real arrays (no complex temporaries).

    Parameters
    ----------
    Nt : (L, ..., n_λ) ndarray
        Layer indices, layer axis first.
    dt : (L, ...) ndarray, nm
        Thicknesses, layer axis first (same number of batch axes as ``Nt``).
    wl, beta2, eta0, eta_s
        As for :func:`lossless_response`.

    Returns
    -------
    (R, T, dR, dT) with R, T shaped (..., 2, n_a, n_λ) and dR, dT shaped
    (..., L, 2, n_a, n_λ) (1/nm), or None when a layer absorbs or carries an
    evanescent wave (the complex path applies).

    References
    ----------
    H. A. Macleod, *Thin-Film Optical Filters*, 4th ed., CRC Press, 2010,
    chapter 2 (characteristic matrix, tilted admittances).
    """
    if np.iscomplexobj(Nt):
        if np.any(Nt.imag):
            return None
        Nt = Nt.real
    L = Nt.shape[0]
    if math.prod(Nt.shape[1:-1]) == 1:
        first, which = _distinct_rows(Nt.reshape(L, Nt.shape[-1]))
        U = Nt[first]
    else:
        U, which = Nt, np.arange(L)
    U2 = U * U
    arg = U2[..., None, :] - beta2                                     # (M, ..., A, W)
    if not np.all(arg > 0):
        return None
    q = np.sqrt(arg)
    eta = np.empty(q.shape[:-2] + (2,) + q.shape[-2:])                 # (M, ..., 2, A, W)
    eta[..., 0, :, :] = q
    np.divide(U2[..., None, :], q, out=eta[..., 1, :, :])
    E = np.empty((eta.shape[0], 4) + eta.shape[1:])                    # (M, 4, ..., 2, A, W): (1/η, −1/η, η, −η)
    E[:, 2] = eta
    np.divide(1.0, eta, out=E[:, 0])
    np.negative(E[:, 0], out=E[:, 1])
    np.negative(E[:, 2], out=E[:, 3])
    E_row = E[:, [2, 3, 0, 1]]                                         # (η, −η, 1/η, −1/η) for row vectors
    k = ((_TWO_PI / wl) * q)[which]                                    # rad/nm, (L, ..., A, W)
    delta = k * dt.reshape(dt.shape + (1, 1))
    cd, sd = cos_sin(delta)
    a = cd[..., None, :, :]                                            # (L, ..., 1, A, W)
    s = sd[..., None, :, :]
    shape = np.broadcast_shapes(E.shape[2:], a.shape[1:])              # (..., 2, A, W)
    V, P, G = scratch_arrays((L, 4) + shape, 3, slot="derivative", dtype=float)
    t = np.empty((4,) + shape)
    # v_j from the substrate, and P_j = E_j ⊙ reversed(v_j): v_{j−1} = cos δ_j v_j + sin δ_j P_j
    V[L - 1, 0] = 1.0
    V[L - 1, 1] = 0.0
    V[L - 1, 2] = eta_s.real
    V[L - 1, 3] = eta_s.imag
    for j in range(L - 1, -1, -1):
        np.multiply(V[j, ::-1], E[which[j]], out=P[j])
        if j:
            np.multiply(P[j], s[j], out=t)
            np.multiply(V[j], a[j], out=V[j - 1])
            V[j - 1] += t
    Br, Bi, Cr, Ci = V[0] * a[0] + s[0] * P[0]                         # [B, C] = M₁ v₁
    eBr = eta0 * Br
    eBi = eta0 * Bi
    Zpr, Zpi, Zmr, Zmi = eBr + Cr, eBi + Ci, eBr - Cr, eBi - Ci
    Y2 = Zpr * Zpr
    Y2 += Zpi * Zpi
    R = Zmr * Zmr
    R += Zmi * Zmi
    R /= Y2
    T = (4.0 * eta0 * eta_s.real) / Y2
    # the row vector g (Re a, Im a, Re b, Im b), then g_{j+1} = g_j M_j
    RZpr, RZpi = R * Zpr, R * Zpi
    G[0, 0] = eta0 * (Zmr - RZpr)
    G[0, 1] = eta0 * (RZpi - Zmi)
    G[0, 2] = -(Zmr + RZpr)
    G[0, 3] = Zmi + RZpi
    for j in range(L - 1):
        np.multiply(G[j, ::-1], E_row[which[j]], out=t)
        t *= s[j]
        np.multiply(G[j], a[j], out=G[j + 1])
        G[j + 1] += t
    # x_j = (∂M_j/∂δ_j) v_j = cos δ_j P_j − sin δ_j v_j, into P
    P *= a[:, None]
    V *= s[:, None]
    P -= V
    # Re(g·x) = Re a Re x_B − Im a Im x_B + Re b Re x_C − Im b Im x_C
    G *= P
    dR = G[:, 0] - G[:, 1]
    dR += G[:, 2]
    dR -= G[:, 3]
    dR *= k[..., None, :, :]
    dR *= 2.0 / Y2                                                     # (L, ..., 2, A, W), 1/nm
    dR = np.moveaxis(dR, 0, -4)
    return R, T, dR, -dR
