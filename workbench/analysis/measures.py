"""How close a camera's sensitivities come to colour-matching functions.

The camera is ``S`` (n_λ, 3): its three channel sensitivities sampled on a
wavelength grid (optics, dichroics, trims and sensor included); the
reference is ``X`` (n_λ, 3), the CIE colour-matching functions on the same
grid. Both may carry leading batch axes, ``(..., n_λ, 3)``.

With a recording illuminant l_rec (the light the camera sees) and a viewing
illuminant l_view (the light the reference observer sees),
M = diag(l_rec)·S and A = diag(l_view)·X. The orthogonal projector onto a
matrix's column space is P = QQᵀ from a QR decomposition, never the normal
equations.

References
----------
Vora, P. L. & Trussell, H. J. (1993). Measure of goodness of a set of
color-scanning filters. *JOSA A*, 10(7), 1499-1508.
Vora, P. L. (2016). Vora value. In *Encyclopedia of Color Science and
Technology*. Springer.
Neugebauer, H. E. J. (1956). Quality factor for filters whose spectral
transmittances are different from color mixture curves, and its application
to color photography. *JOSA*, 46(10), 821-824.
Luther, R. (1927). Aus dem Gebiet der Farbreizmetrik. *Z. tech. Phys.* 8, 540.
"""

from __future__ import annotations

import numpy as np

from workbench.errors import WorkbenchError

__all__ = ["vora_value", "neugebauer_q", "orthonormal_basis"]

#: Relative size of R's smallest diagonal below which columns count as dependent.
_RANK_RTOL = 1e-10


def _as_matrix(a, what: str) -> np.ndarray:
    m = np.asarray(a, dtype=float)
    if m.ndim < 2 or m.shape[-1] != 3:
        raise WorkbenchError(f"{what} must be shaped (..., n_wavelengths, 3) (got {m.shape})")
    if not np.all(np.isfinite(m)):
        raise WorkbenchError(f"{what} must be finite")
    return m


def _weight(m: np.ndarray, illuminant, what: str) -> np.ndarray:
    if illuminant is None:
        return m
    l = np.asarray(illuminant, dtype=float)
    if l.shape[-1] != m.shape[-2]:
        raise WorkbenchError(
            f"{what} has {l.shape[-1]} wavelengths but the sensitivities {m.shape[-2]}"
        )
    return l[..., :, None] * m


def orthonormal_basis(m, *, what: str = "matrix") -> np.ndarray:
    """Q (..., n, 3) with orthonormal columns spanning the columns of ``m`` (..., n, 3).

    Raises
    ------
    WorkbenchError
        When the three columns are linearly dependent (to 1e-10 relative),
        e.g. a dead channel, because the projector is then not of rank 3.

    References
    ----------
    Golub, G. H. & Van Loan, C. F. (2013). *Matrix Computations*, 4th ed.,
    § 5.2 (QR factorisation).
    docs/methods.md §8.
    """
    q, r = np.linalg.qr(m)
    d = np.abs(np.diagonal(r, axis1=-2, axis2=-1))
    if np.any(d.min(axis=-1) <= _RANK_RTOL * d.max(axis=-1)):
        raise WorkbenchError(f"{what}: the three channels are linearly dependent (rank < 3)")
    return q


def vora_value(S, X, illuminant_rec=None, illuminant_view=None):
    """The Vora value ν of sensitivities ``S`` against colour-matching functions ``X``.

    Parameters
    ----------
    S : (..., n, 3) array_like
        Camera channel sensitivities on n wavelengths (any scale).
    X : (..., n, 3) array_like
        Colour-matching functions on the same wavelengths.
    illuminant_rec : (n,) array_like, optional
        Recording illuminant (relative SPD) weighting ``S``; None = equal energy.
    illuminant_view : (n,) array_like, optional
        Viewing illuminant weighting ``X``; None = equal energy.

    Returns
    -------
    (...) ndarray or float
        ν in [0, 1]; 1 exactly when S = X·T for a non-singular 3×3 T (the
        Luther condition) under equal illuminants.

    Notes
    -----
    ν = Tr(P_A P_M)/3 = ‖Q_Aᵀ Q_M‖_F² / 3, with A = diag(l_view)X,
    M = diag(l_rec)S and P = QQᵀ from QR (Vora & Trussell 1993; *Encyclopedia
    of Color Science and Technology*, "Vora value"). It is the mean squared
    cosine of the three principal angles between the two column spaces,
    independent of any sample set and of the scale of each channel.

    References
    ----------
    Vora, P. L. & Trussell, H. J. (1993). Measure of goodness of a set of
    color-scanning filters. *JOSA A* 10(7), 1499-1508.
    Vora, P. L. (2016). Vora value. In *Encyclopedia of Color Science and
    Technology*. Springer.
    docs/methods.md §8.

    Examples
    --------
    >>> from workbench.colorimetry.cie import cmfs_on
    >>> X = cmfs_on(np.arange(400.0, 701.0, 10.0)).values
    >>> round(float(vora_value(X, X)), 12)  # the CIE functions themselves (Luther condition)
    1.0
    >>> round(float(vora_value(X @ [[1, 2, 0], [0, 1, 0], [3, 0, 1]], X)), 12)  # any invertible mix of them
    1.0
    """
    M = _weight(_as_matrix(S, "S"), illuminant_rec, "illuminant_rec")
    A = _weight(_as_matrix(X, "X"), illuminant_view, "illuminant_view")
    if M.shape[-2] != A.shape[-2]:
        raise WorkbenchError(
            f"S has {M.shape[-2]} wavelengths but X {A.shape[-2]}; put them on one grid"
        )
    qm = orthonormal_basis(M, what="S")
    qa = orthonormal_basis(A, what="X")
    c = np.swapaxes(qa, -1, -2) @ qm
    nu = np.sum(c * c, axis=(-2, -1)) / 3.0
    return float(nu) if np.ndim(nu) == 0 else nu


def neugebauer_q(S, X, illuminant_rec=None, illuminant_view=None):
    """Neugebauer's quality factor of each channel: q = ‖P_A m‖² / ‖m‖².

    Parameters
    ----------
    S, X, illuminant_rec, illuminant_view
        As for :func:`vora_value`.

    Returns
    -------
    (..., 3) ndarray
        q for each channel of ``S`` in [0, 1]; 1 when the channel is a linear
        combination of the (illuminant-weighted) colour-matching functions.

    Notes
    -----
    m = diag(l_rec)·s_k, P_A = Q_A Q_Aᵀ (QR of A = diag(l_view)X), so
    q = ‖Q_Aᵀ m‖² / ‖m‖² (Neugebauer, *JOSA* 46:821, 1956 — the citation
    is from memory; the concept is the squared cosine between the channel
    and the space of colour-matching functions).

    References
    ----------
    Neugebauer, H. E. J. (1956). Quality factor for filters whose spectral
    transmittances are different from color mixture curves. *JOSA* 46(10),
    821-824 (citation from memory).
    docs/methods.md §8.

    Examples
    --------
    >>> from workbench.colorimetry.cie import cmfs_on
    >>> X = cmfs_on(np.arange(400.0, 701.0, 10.0)).values
    >>> neugebauer_q(X, X).round(12).tolist()  # each CIE function lies in the CIE space
    [1.0, 1.0, 1.0]
    """
    M = _weight(_as_matrix(S, "S"), illuminant_rec, "illuminant_rec")
    A = _weight(_as_matrix(X, "X"), illuminant_view, "illuminant_view")
    if M.shape[-2] != A.shape[-2]:
        raise WorkbenchError(
            f"S has {M.shape[-2]} wavelengths but X {A.shape[-2]}; put them on one grid"
        )
    qa = orthonormal_basis(A, what="X")
    norm2 = np.sum(M * M, axis=-2)
    if np.any(norm2 == 0):
        raise WorkbenchError("S: a channel is zero at every wavelength")
    proj = np.swapaxes(qa, -1, -2) @ M
    return np.sum(proj * proj, axis=-2) / norm2
