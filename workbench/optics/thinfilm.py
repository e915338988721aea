"""Thin-film stacks by the characteristic (transfer) matrix method.

One function, :func:`stack_response`, computes the reflectance and
transmittance of any stack of homogeneous, isotropic layers with complex,
dispersive indices between a lossless incidence medium and a substrate, for
s and p polarisation at any angle, and optionally the derivatives of R and T
with respect to every layer thickness. It is vectorised over wavelengths ×
angles × polarisations × any number of stacks at once (leading batch axes):
the only Python loop runs over the layers.

The general complex path (with its analytic thickness derivatives) and the
incoherent back surface are here; lossless stacks, with or without
derivatives (and batches whose rows each change one layer of a base stack),
go to the real-arithmetic paths of :mod:`workbench.optics.lossless_stack`
(same conventions, checked against the same references and against the
complex path), which also holds the scratch buffers and phase factors both
share.

Conventions
-----------
* Complex index ``N = n + i k`` with ``k ≥ 0`` for absorption (time factor
  ``exp(-iωt)``, the convention of colour-science and of the ``tmm``
  package).
* Angles in degrees in the incidence medium, ``0 ≤ θ < 90``.
* The normal component of the wave vector in medium j, in units of
  ``2π/λ``, is ``q_j = sqrt(N_j² − β²)`` with ``β = n₀ sin θ₀`` (the
  invariant of Snell's law). The branch is the one that carries energy
  away from, or decays away from, the interface: ``Im q ≥ 0`` and ``q > 0``
  when real. Beyond the critical angle (incidence from glass, as inside a
  prism) ``q`` in the rarer media is imaginary: the wave is evanescent, a
  lossless substrate transmits nothing and the stack reflects everything
  that it does not absorb (frustrated total reflection through thin rarer
  layers is included).
* Tilted optical admittances, in units of the free-space admittance:
  ``η_s = q`` and ``η_p = N²/q``.
* Layer j of physical thickness ``d_j`` has phase thickness
  ``δ_j = 2π q_j d_j / λ`` and characteristic matrix
  ``[[cos δ, −i sin δ / η], [−i η sin δ, cos δ]]``.
* ``[B, C]ᵀ = M₁ M₂ … M_L [1, η_sub]ᵀ``; with ``Y = η₀ B + C``:
  ``r = (η₀ B − C) / Y``, ``R = |r|²``, ``T = 4 η₀ Re(η_sub) / |Y|²``.
  The admittance ratio makes T the ratio of the normal components of the
  power flow for both polarisations, so ``R + T = 1`` for lossless stacks.

Derivatives
-----------
``∂R/∂d_j`` and ``∂T/∂d_j`` (per nm) come from one backward pass (the
vectors ``v_j = M_{j+1} … M_L [1, η_sub]ᵀ``) and one forward pass carrying
two row vectors (adjoints of r and Y), so every thickness derivative costs
about as much as three evaluations in all, not one per layer. Lossless
stacks need one row vector (``∂T = −∂R``) in real arithmetic
(:func:`workbench.optics.lossless_stack.lossless_derivatives`).

Back surface
------------
A thick substrate is added incoherently (intensities, no phase):
``R = R_f + T_f T_r R_b / (1 − R_r R_b)``, ``T = T_f T_b / (1 − R_r R_b)``
with ``R_r``, ``T_r`` the stack seen from the substrate and ``R_b``, ``T_b``
the bare back face into the exit medium, per polarisation.

References
----------
H. A. Macleod, *Thin-Film Optical Filters*, 4th ed., CRC Press, 2010,
chapter 2 (characteristic matrix, tilted admittances, the thick-substrate
sum).
S. J. Byrnes, *Multilayer optical calculations*, arXiv:1603.02720 (2016)
(branch of the complex cosine, power flow for absorbing media).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from workbench.errors import WorkbenchError
from workbench.optics.lossless_stack import (cos_sin, lossless_derivatives, lossless_one_change, lossless_response,
                                             scratch_arrays)

__all__ = [
    "StackResponse",
    "stack_response",
    "normal_component",
    "half_points",
    "POLARISATIONS",
]

#: Order of the polarisation axis of every result.
POLARISATIONS = ("s", "p")

_TWO_PI = 2.0 * np.pi


@dataclass(frozen=True)
class StackResponse:
    """Reflectance and transmittance of one or many stacks.

    Attributes
    ----------
    wavelengths_nm : (n_λ,) ndarray, nm
    angles_deg : (n_a,) ndarray, degrees in the incidence medium
    R, T : (..., 2, n_a, n_λ) ndarray, fractions 0-1
        Leading axes are the batch of stacks; then polarisation
        (``POLARISATIONS``: s, p), angle, wavelength.
    dR_dd, dT_dd : (..., L, 2, n_a, n_λ) ndarray, 1/nm, or None
        Derivatives with respect to each layer's physical thickness (layer
        axis from the incidence side), when asked for.
    """

    wavelengths_nm: np.ndarray
    angles_deg: np.ndarray
    R: np.ndarray
    T: np.ndarray
    dR_dd: np.ndarray | None = None
    dT_dd: np.ndarray | None = None

    @property
    def R_mean(self) -> np.ndarray:
        """Unpolarised reflectance (mean of s and p), shape ``(..., n_a, n_λ)``."""
        return 0.5 * (self.R[..., 0, :, :] + self.R[..., 1, :, :])

    @property
    def T_mean(self) -> np.ndarray:
        """Unpolarised transmittance (mean of s and p), shape ``(..., n_a, n_λ)``."""
        return 0.5 * (self.T[..., 0, :, :] + self.T[..., 1, :, :])


def normal_component(N2_minus_beta2: np.ndarray) -> np.ndarray:
    """``q = sqrt(N² − β²)`` on the forward branch (``Im q ≥ 0``, ``q > 0`` when real).

    Parameters
    ----------
    N2_minus_beta2 : complex ndarray
        ``N² − (n₀ sin θ₀)²``.

    Returns
    -------
    complex ndarray, same shape
    """
    q = np.sqrt(np.asarray(N2_minus_beta2, dtype=complex))
    # np.sqrt is the principal branch (Re ≥ 0); a negative real argument with
    # a signed zero imaginary part may land on −i|q|: flip it to decay.
    return np.where(q.imag < 0, -q, q)


def _as_medium(value, n_wl: int, what: str) -> np.ndarray:
    arr = np.asarray(value, dtype=complex)
    if arr.ndim > 1 or (arr.ndim == 1 and arr.size not in (1, n_wl)):
        raise WorkbenchError(
            f"'{what}' must be one index or one per wavelength ({n_wl}) (got shape {arr.shape})"
        )
    arr = np.broadcast_to(arr.reshape(-1) if arr.ndim else arr, (n_wl,))
    if not np.all(np.isfinite(arr)):
        raise WorkbenchError(f"'{what}' must be finite (got {arr[~np.isfinite(arr)][0]})")
    if np.any(arr.real <= 0):
        raise WorkbenchError(f"'{what}' must have a real part > 0 (got {arr.real.min():g})")
    if np.any(arr.imag < 0):
        raise WorkbenchError(f"'{what}' must have k ≥ 0 (got {arr.imag.min():g})")
    return arr


def stack_response(
    layer_indices,
    thicknesses_nm,
    wavelengths_nm,
    angles_deg=0.0,
    *,
    incident=1.0,
    substrate=1.52,
    back_surface: bool = False,
    exit_medium=1.0,
    derivatives: bool = False,
) -> StackResponse:
    """Reflectance and transmittance of thin-film stacks, s and p, at several angles.

    Parameters
    ----------
    layer_indices : (..., L, n_λ) or (..., L, 1) array_like of complex
        Index ``n + ik`` of each layer (from the incidence side) at each
        wavelength; leading axes (a batch of stacks) broadcast against those
        of ``thicknesses_nm``.
    thicknesses_nm : (..., L) array_like, nm
        Physical thickness of each layer, > 0.
    wavelengths_nm : (n_λ,) array_like, nm
        Vacuum wavelengths, > 0.
    angles_deg : float or (n_a,) array_like, degrees
        Angles of incidence in the incidence medium, 0 ≤ θ < 90.
    incident : complex or (n_λ,) array_like
        Index of the incidence medium; must be lossless (k = 0). Glass for
        incidence inside a prism.
    substrate : complex or (n_λ,) array_like
        Index of the substrate (exit medium of the coherent stack).
    back_surface : bool
        Add the substrate's back face incoherently (thick substrate, no
        absorption in it); the substrate must then be lossless.
    exit_medium : complex or (n_λ,) array_like
        Medium behind the back face (only with ``back_surface``).
    derivatives : bool
        Also return ``∂R/∂d_j`` and ``∂T/∂d_j`` for every layer.

    Returns
    -------
    StackResponse
        ``R`` and ``T`` shaped ``(..., 2, n_a, n_λ)`` (s, p), fractions 0-1.

    Raises
    ------
    WorkbenchError
        A thickness ≤ 0, an angle outside 0-90°, k < 0, an absorbing
        incidence medium, mismatched shapes.

    References
    ----------
    H. A. Macleod, *Thin-Film Optical Filters*, 4th ed., CRC Press, 2010, ch. 2.
    """
    wl = np.asarray(wavelengths_nm, dtype=float).reshape(-1)
    if wl.size == 0 or not np.all(np.isfinite(wl)) or np.any(wl <= 0):
        raise WorkbenchError("'wavelengths_nm' must be finite and > 0")
    W = wl.size
    theta = np.atleast_1d(np.asarray(angles_deg, dtype=float)).reshape(-1)
    if not np.all(np.isfinite(theta)) or np.any(theta < 0) or np.any(theta >= 90):
        bad = theta[~(np.isfinite(theta) & (theta >= 0) & (theta < 90))][0]
        raise WorkbenchError(f"'angles_deg' must be 0 ≤ angle < 90 degrees (got {bad:g})")
    media = _media(wl, theta, incident, substrate, back_surface, exit_medium)
    d = np.asarray(thicknesses_nm, dtype=float)
    if d.ndim == 0:
        raise WorkbenchError("'thicknesses_nm' must have a layer axis (got a scalar)")
    if d.shape[-1] == 0:
        raise WorkbenchError("'thicknesses_nm' must hold at least one layer (got none)")
    N = np.asarray(layer_indices, dtype=complex)
    if N.ndim < 2 or N.shape[-1] not in (1, W) or N.shape[-2] != d.shape[-1]:
        raise WorkbenchError(
            f"'layer_indices' must be shaped (..., {d.shape[-1]}, {W}) to match "
            f"{d.shape[-1]} thicknesses and {W} wavelengths (got {N.shape})"
        )
    if not np.all(np.isfinite(d)) or np.any(d <= 0):
        raise WorkbenchError("'thicknesses_nm' must be finite and > 0 nm (got "
                             f"{d[~(np.isfinite(d) & (d > 0))].reshape(-1)[0]:g})")
    if N.size and not (N.real.min() > 0 and N.imag.min() >= 0 and max(N.real.max(), N.imag.max()) < np.inf):
        raise WorkbenchError("'layer_indices' must be finite with n > 0 and k ≥ 0")

    batch = np.broadcast_shapes(N.shape[:-2], d.shape[:-1])
    L = d.shape[-1]
    n_stacks = math.prod(batch)
    if not derivatives and media.ne is None and n_stacks >= 4 and math.prod(N.shape[:-2]) == 1:
        one = _one_change_rows(N.reshape(N.shape[-2:]), np.broadcast_to(d, batch + (L,)).reshape(n_stacks, L),
                               wl, media)
        if one is not None:
            R, T = one
            return StackResponse(wl, theta, R.reshape(batch + R.shape[1:]), T.reshape(batch + T.shape[1:]))
    # Large batches go in chunks of about _CHUNK_ELEMENTS per layer array, so
    # the working set stays in cache.
    per_stack = L * 2 * theta.size * W
    chunk = max(1, _CHUNK_ELEMENTS // per_stack)
    if n_stacks <= chunk:
        N = N.reshape((1,) * (len(batch) + 2 - N.ndim) + N.shape)
        d = d.reshape((1,) * (len(batch) + 1 - d.ndim) + d.shape)
        R, T, dR, dT = _stack(N, d, wl, media, derivatives)
        return StackResponse(wl, theta, R, T, dR, dT)
    Nf = np.broadcast_to(N, batch + N.shape[-2:]).reshape((n_stacks,) + N.shape[-2:])
    df = np.broadcast_to(d, batch + (L,)).reshape(n_stacks, L)
    out_shape = (n_stacks, 2, theta.size, W)
    R = np.empty(out_shape)
    T = np.empty(out_shape)
    dR = np.empty((n_stacks, L) + out_shape[1:]) if derivatives else None
    dT = np.empty((n_stacks, L) + out_shape[1:]) if derivatives else None
    for start in range(0, n_stacks, chunk):
        sl = slice(start, start + chunk)
        r, t, dr, dt = _stack(Nf[sl], df[sl], wl, media, derivatives)
        R[sl], T[sl] = r, t
        if derivatives:
            dR[sl], dT[sl] = dr, dt
    R = R.reshape(batch + out_shape[1:])
    T = T.reshape(batch + out_shape[1:])
    if derivatives:
        dR = dR.reshape(batch + dR.shape[1:])
        dT = dT.reshape(batch + dT.shape[1:])
    return StackResponse(wl, theta, R, T, dR, dT)


def _one_change_rows(N, d, wl, media):
    """R, T (B, 2, A, W) when every row of ``d`` (B, L) is row 0 with at most one layer changed (lossless); else None."""
    changed = d != d[0]
    counts = changed.sum(axis=1)
    if counts.max() > 1:
        return None
    rows = np.flatnonzero(counts)
    layer = np.argmax(changed[rows], axis=1)
    fast = lossless_one_change(N, d[0], layer, d[rows, layer], wl, media.beta2, media.eta0, media.eta_s)
    if fast is None:
        return None
    R0, T0, R_rows, T_rows = fast
    R = np.empty((d.shape[0],) + R0.shape)
    T = np.empty_like(R)
    R[:] = R0
    T[:] = T0
    R[rows] = R_rows
    T[rows] = T_rows
    return R, T


#: Elements per layer array (stacks × 2 × angles × wavelengths) in one chunk.
_CHUNK_ELEMENTS = 16384


@dataclass(frozen=True)
class _Media:
    """The incidence medium, substrate and exit medium on the (angle, wavelength) grid (read-only arrays)."""

    beta2: np.ndarray
    q0: np.ndarray
    n0r: np.ndarray
    ns: np.ndarray
    ne: np.ndarray | None
    eta0: np.ndarray         # (2, A, W) real
    qs: np.ndarray           # (A, W)
    eta_s: np.ndarray        # (2, A, W)


#: Media already checked and computed, by the bytes of what they depend on (a fit asks for the same ones
#: again and again); cleared when full.
_MEDIA: dict = {}
_MEDIA_KEPT = 64


def _media(wl, theta, incident, substrate, back_surface, exit_medium) -> _Media:
    """The checked media on the (angle, wavelength) grid; kept by the bytes of the inputs."""
    parts = [wl.tobytes(), theta.tobytes(), bool(back_surface)]
    for value in (incident, substrate) + ((exit_medium,) if back_surface else ()):
        a = np.asarray(value, dtype=complex)
        parts += [a.shape, a.tobytes()]
    key = tuple(parts)
    media = _MEDIA.get(key)
    if media is not None:
        return media
    W = wl.size
    n0 = _as_medium(incident, W, "incident")
    if np.any(n0.imag != 0):
        raise WorkbenchError("'incident' must be lossless (k = 0) (got an absorbing medium)")
    ns = _as_medium(substrate, W, "substrate")
    if back_surface and np.any(ns.imag != 0):
        raise WorkbenchError("'substrate' must be lossless (k = 0) with back_surface (got an absorbing medium)")
    ne = _as_medium(exit_medium, W, "exit_medium") if back_surface else None
    n0r = n0.real.copy()
    beta2 = (n0r[None, :] * np.sin(np.radians(theta))[:, None]) ** 2  # (A, W)
    q0 = n0r[None, :] * np.cos(np.radians(theta))[:, None]             # (A, W) real
    eta0 = np.stack([q0, n0r[None, :] ** 2 / q0])
    qs = normal_component(ns[None, :] ** 2 - beta2)
    eta_s = np.stack([qs, ns[None, :] ** 2 / qs])
    ns = ns.copy()
    ne = None if ne is None else ne.copy()
    for a in (beta2, q0, n0r, ns, ne, eta0, qs, eta_s):
        if a is not None:
            a.setflags(write=False)
    media = _Media(beta2, q0, n0r, ns, ne, eta0, qs, eta_s)
    if len(_MEDIA) >= _MEDIA_KEPT:
        _MEDIA.clear()
    _MEDIA[key] = media
    return media


def _stack(N, d, wl, media, derivatives):
    """R, T (and derivatives) of stacks with compatible leading axes, with the back surface if any."""
    eta0, qs, eta_s = media.eta0, media.qs, media.eta_s
    R, T, dR, dT = _coherent(N, d, wl, media.beta2, eta0, eta_s, derivatives)
    if media.ne is None:
        return R, T, dR, dT
    ne, beta2 = media.ne, media.beta2
    qe = normal_component(ne[None, :] ** 2 - beta2)
    eta_e = np.stack([qe, ne[None, :] ** 2 / qe])
    Ys = eta_s + eta_e
    Rb = np.abs((eta_s - eta_e) / Ys) ** 2
    Tb = 4.0 * eta_s.real * eta_e.real / np.abs(Ys) ** 2
    # The stack seen from the substrate: layers reversed, substrate as incidence.
    ok = (qs.imag == 0) & (qs.real > 0)                                # the substrate wave propagates
    eta_s_in = np.where(ok[None], eta_s, 1.0).real
    Rr, Tr, dRr, dTr = _coherent(N[..., ::-1, :], d[..., ::-1], wl, beta2, eta_s_in,
                                 eta0.astype(complex), derivatives)
    D = 1.0 - Rr * Rb
    # D = 0 only when the back face reflects totally (Rb = 1, Tb = 0) and the
    # stack too (Rr = 1, so Tr = Tf = 0): the trapped light's limit, Tr Rb / D → 1.
    live = D > 0
    D = np.where(live, D, 1.0)
    Rf, Tf = R, T
    R = np.where(ok, Rf + Tf * np.where(live, Tr * Rb / D, 1.0), Rf)
    T = np.where(ok & live, Tf * Tb / D, 0.0)
    if derivatives:
        dRr = dRr[..., ::-1, :, :, :]
        dTr = dTr[..., ::-1, :, :, :]

        def Ex(a):  # insert the layer axis
            return a[..., None, :, :, :]

        dR_new = dR + Ex(Rb) * ((dT * Ex(Tr) + Ex(Tf) * dTr) / Ex(D) + Ex(Tf * Tr * Rb) * dRr / Ex(D) ** 2)
        dT_new = Ex(Tb) * (dT / Ex(D) + Ex(Tf * Rb) * dRr / Ex(D) ** 2)
        okp = np.broadcast_to(ok, eta_s.shape)
        dR = np.where(Ex(okp), dR_new, dR)
        dT = np.where(Ex(okp), dT_new, 0.0)
    return R, T, dR, dT


def _coherent(N, d, wl, beta2, eta0, eta_s, derivatives):
    """The coherent stack: R, T (..., 2, A, W) and their thickness derivatives (..., L, 2, A, W)."""
    # Layer axis first internally so that each layer's slice is contiguous.
    Nt = np.moveaxis(N, -2, 0)                                         # (L, ..., W)
    dt = np.moveaxis(d, -1, 0)                                         # (L, ...)
    fast = (lossless_derivatives if derivatives else lossless_response)(Nt, dt, wl, beta2, eta0, eta_s)
    if fast is not None:
        return fast
    # an absorbing layer or an evanescent wave somewhere: complex arithmetic
    N2 = Nt * Nt
    q = normal_component(N2[..., None, :] - beta2)
    qe = q[..., None, :, :]                                            # (L, ..., 1, A, W)
    eta = np.empty(qe.shape[:-3] + (2,) + qe.shape[-2:], dtype=complex)
    eta[..., 0, :, :] = q
    np.divide(N2[..., None, :], q, out=eta[..., 1, :, :])
    k = (_TWO_PI / wl) * qe                                            # rad/nm
    delta = k * dt.reshape(dt.shape + (1, 1, 1))
    # Thick absorbing layers: cosh(Im δ) overflows near 710, and the product of
    # the layers' matrices sooner. Scale each layer's matrix by exp(−|Im δ|); r
    # and the derivatives' ratios are unchanged, T takes back exp(−2 Σ|Im δ|).
    damping = np.abs(delta.imag)
    log_scale = damping.sum(axis=0)
    scaled = bool(np.max(log_scale, initial=0.0) > 300.0)
    if scaled:
        cx, sx = cos_sin(delta.real)
        cx, sx = cx.copy(), sx.copy()
        e2 = np.exp(-2.0 * damping)
        ch = 0.5 * (1.0 + e2)
        sh = 0.5 * np.sign(delta.imag) * (1.0 - e2)
        cd, sd = cx * ch - 1j * (sx * sh), sx * ch + 1j * (cx * sh)
    else:
        cd, sd = cos_sin(delta)
    L = dt.shape[0]
    batch = np.broadcast_shapes(eta.shape[1:-3], delta.shape[1:-3])
    shape = (L,) + batch + eta.shape[-3:]
    a, b, c = scratch_arrays(shape, 3)
    a[...] = cd
    b[...] = (-1j * sd) / eta
    c[...] = (-1j * sd) * eta
    B = np.ones(shape[1:], dtype=complex)
    C = np.empty(shape[1:], dtype=complex)
    C[...] = eta_s
    if derivatives:
        VB, VC = scratch_arrays(shape, 2, slot="adjoint")
    for j in range(L - 1, -1, -1):
        if derivatives:
            VB[j] = B
            VC[j] = C
        a_j = a[j]
        B, C = a_j * B + b[j] * C, c[j] * B + a_j * C
    eB = eta0 * B
    Y = eB + C
    r = (eB - C) / Y
    R = r.real ** 2 + r.imag ** 2
    T = (4.0 * eta0.real * eta_s.real) / (Y.real ** 2 + Y.imag ** 2)
    if scaled:
        T = T * np.exp(-2.0 * log_scale)
    if not derivatives:
        return R, T, None, None
    # Adjoint row vectors: dr = u·d[B, C], dY = w·d[B, C]. With
    # x_j = (∂M_j/∂δ_j) v_j:  ∂r/∂d_j = k_j u_j·x_j, k_j = ∂δ_j/∂d_j = 2π q_j/λ.
    u0 = eta0 * (1.0 - r) / Y
    u1 = -(1.0 + r) / Y
    w0 = np.empty_like(B)
    w0[...] = eta0
    w1 = np.ones_like(B)
    x0, x1, etac, sdc = scratch_arrays(shape, 4, slot="derivative")
    etac[...] = eta
    sdc[...] = sd
    # x0 = −i cos δ V_C / η − sin δ V_B ;  x1 = −i η cos δ V_B − sin δ V_C
    np.multiply(a, VC, out=x0)
    x0 /= etac
    x0 *= -1j
    np.multiply(a, VB, out=x1)
    x1 *= etac
    x1 *= -1j
    np.multiply(sdc, VB, out=VB)
    np.multiply(sdc, VC, out=VC)
    x0 -= VB
    x1 -= VC
    dr, dY = VB, VC                                                    # reuse as outputs
    for j in range(L):
        x0j, x1j = x0[j], x1[j]
        np.multiply(u0, x0j, out=dr[j])
        dr[j] += u1 * x1j
        np.multiply(w0, x0j, out=dY[j])
        dY[j] += w1 * x1j
        a_j, b_j, c_j = a[j], b[j], c[j]
        u0, u1 = u0 * a_j + u1 * c_j, u0 * b_j + u1 * a_j
        w0, w1 = w0 * a_j + w1 * c_j, w0 * b_j + w1 * a_j
    dr *= np.conj(r)
    dY /= Y
    dr *= k
    dY *= k
    dR = 2.0 * dr.real
    dT = -2.0 * dY.real
    dT *= T
    # layer axis just before the polarisation axis
    return R, T, np.moveaxis(dR, 0, -4), np.moveaxis(dT, 0, -4)


def half_points(wavelengths_nm, values, level: float = 0.5) -> list[tuple[float, str]]:
    """Wavelengths where a curve crosses ``level``, by linear interpolation.

    Parameters
    ----------
    wavelengths_nm : (n_λ,) array_like, nm
    values : (n_λ,) array_like
        One curve (e.g. R or T, fractions 0-1).
    level : float
        The crossing level (0.5 for the 50 % points of an edge).

    Returns
    -------
    list of (float, str)
        ``(wavelength_nm, 'rising' | 'falling')`` in order of wavelength.
    """
    wl = np.asarray(wavelengths_nm, dtype=float)
    v = np.asarray(values, dtype=float) - level
    out = []
    above = v >= 0
    idx = np.nonzero(above[1:] != above[:-1])[0]
    for i in idx:
        v0, v1 = v[i], v[i + 1]
        x = wl[i] + (wl[i + 1] - wl[i]) * (v0 / (v0 - v1)) if v1 != v0 else wl[i]
        out.append((float(x), "rising" if v1 > v0 else "falling"))
    return out
