"""The camera's colour pipeline: white balance, colour-correction matrix, ΔE00.

A three-channel camera with sensitivities S (3, n) records raw
RGB = Σ S(λ) R(λ) E(λ) Δλ of a sample with reflectance R under the light E.
The pipeline this module evaluates, for every sample set × illuminant, in
plain numpy over any batch of sensitivities:

1. **White balance** on the perfect diffuser under the same light:
   ``balanced = raw / raw_white`` per channel, so the white gives (1, 1, 1).
2. **Colour-correction matrix** M (3×3): ``display = M · balanced``, the
   linear RGB of the display primaries the pictures are made for (the
   design's target); (1, 1, 1) is the display white.
3. **Comparison** with the sample's true colour under the same light:
   XYZ = Σ R E x̄ȳz̄ Δλ normalised so the perfect diffuser has Y = 1,
   adapted to the display white with the linear Bradford transform (a
   camera balanced to the light renders its white as the display white),
   and taken to display RGB with the inverse RP 177 matrix. Both sides go
   to CIELAB against the display white (Y = 100) and ΔE00 (CIE 142-2001)
   is their difference. Under an illuminant whose white is the display
   white (D65 for BT.709) the adaptation is the identity and the truth is
   plain CIELAB.

Matrices (rows map balanced camera RGB to display RGB):

- ``least-squares``: M = Tᵀ W C (Cᵀ W C)⁻¹ over the weighted samples;
- ``white-preserving``: the least-squares M subject to M·w_c = w_t, by the
  closed form of Finlayson & Drew (1997): M = M_LS + (w_t − M_LS w_c)
  w_cᵀ G⁻¹ / (w_cᵀ G⁻¹ w_c), G = Cᵀ W C; after balance w_c = w_t = (1, 1, 1);
- ``delta-e00``: the 9 entries minimising the weighted sum of squared ΔE00,
  from the least-squares matrix by Newton steps in a trust region with the
  analytic gradient (:meth:`ColourBench.delta_e_cost`).

The scope is ``shared`` (one matrix after white balance under every
illuminant, fitted on all of them together) or ``per-illuminant`` (one
matrix for each illuminant, fitted on its own data).

References
----------
Finlayson, G. D., & Drew, M. S. (1997). Constrained least-squares
regression in color spaces. *J. Electronic Imaging* 6(4), 484-493; and
White-point preserving color correction, *Proc. IS&T/SID CIC5*, 258-261.
Lam, K. M. (1985), Bradford transform, as tabulated in ICC.1:2010 Annex E.
SMPTE RP 177-1993. CIE 15:2004 § 7 (summation). CIE 142-2001 (ΔE00).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from workbench.colorimetry.cie import cmfs_on, observer_key, observer_label
from workbench.colorimetry.coordinates import (
    XYZ_to_Lab,
    XYZ_to_Lab_jacobian,
    delta_E_CIE2000,
    delta_E_CIE2000_gradient,
)
from workbench.errors import WorkbenchError
from workbench.colorimetry.primaries import Primaries
from workbench.model.spectra import Spectra, check_wavelengths, is_uniform

__all__ = [
    "MATRIX_METHODS",
    "MATRIX_SCOPES",
    "BRADFORD",
    "bradford_matrix",
    "least_squares_matrix",
    "white_preserving_matrix",
    "ColourBench",
    "BenchResult",
    "Camera",
]

#: √ε of float64, the relative step of the forward differences of the ΔE00 matrix's gradient.
_SQRT_EPS = float(np.finfo(float).eps) ** 0.5

#: The ΔE00-minimising matrix is converged when no entry of the gradient of Σ w ΔE00² exceeds this × the cost.
DELTA_E_MATRIX_GTOL = 1e-9

MATRIX_METHODS = ("least-squares", "white-preserving", "delta-e00")
MATRIX_SCOPES = ("shared", "per-illuminant")

#: Bradford cone-response matrix (Lam 1985; ICC.1:2010 Annex E).
BRADFORD = np.array([
    [0.8951, 0.2664, -0.1614],
    [-0.7502, 1.7135, 0.0367],
    [0.0389, -0.0685, 1.0296],
])


def bradford_matrix(white_source, white_destination) -> np.ndarray:
    """Linear Bradford adaptation (3, 3) taking XYZ under ``white_source`` to ``white_destination``.

    M = B⁻¹ diag(B w_d / B w_s) B. Whites are XYZ (any common scale);
    broadcasts over leading axes of the whites.

    References
    ----------
    Lam, K. M. (1985). *Metamerism and colour constancy*. PhD thesis,
    University of Bradford; as tabulated in ICC.1:2010, Annex E.
    docs/methods.md §9.

    Examples
    --------
    >>> A, D65 = [1.09850, 1.0, 0.35585], [0.95047, 1.0, 1.08883]
    >>> (bradford_matrix(A, D65) @ A).round(5).tolist()  # A's white goes to D65's
    [0.95047, 1.0, 1.08883]
    """
    ws = np.asarray(white_source, dtype=float)
    wd = np.asarray(white_destination, dtype=float)
    rs = ws @ BRADFORD.T
    rd = wd @ BRADFORD.T
    d = rd / rs
    return np.linalg.inv(BRADFORD) @ (d[..., :, None] * BRADFORD)


def least_squares_matrix(C, T, w=None) -> np.ndarray:
    """M (..., 3, 3) minimising Σ w_k ‖M c_k − t_k‖², for C, T (..., K, 3).

    M = Tᵀ W C (Cᵀ W C)⁻¹, batched over leading axes; ``w`` (K,) weights.

    References
    ----------
    Finlayson, G. D. & Drew, M. S. (1997). Constrained least-squares
    regression in color spaces. *J. Electronic Imaging* 6(4), 484-493.
    docs/methods.md §10.

    Examples
    --------
    >>> C = np.random.default_rng(1).random((10, 3))
    >>> M0 = np.array([[1.6, -0.5, -0.1], [-0.2, 1.3, -0.1], [0.0, -0.2, 1.2]])
    >>> np.allclose(least_squares_matrix(C, C @ M0.T), M0)  # exact data give the matrix back
    True
    """
    C = np.asarray(C, dtype=float)
    T = np.asarray(T, dtype=float)
    Cw = C if w is None else C * np.asarray(w, dtype=float)[:, None]
    G = np.swapaxes(Cw, -1, -2) @ C                      # (..., 3, 3)
    B = np.swapaxes(Cw, -1, -2) @ T                      # Cᵀ W T
    # M Gᵀ = Bᵀ; G symmetric ⇒ Mᵀ = G⁻¹ B
    return np.swapaxes(np.linalg.solve(G, B), -1, -2)


def white_preserving_matrix(C, T, w=None, white_camera=(1.0, 1.0, 1.0),
                            white_target=(1.0, 1.0, 1.0)) -> np.ndarray:
    """The least-squares M subject to M·w_c = w_t, closed form (Finlayson & Drew 1997).

    M = M_LS + (w_t − M_LS w_c) w_cᵀ G⁻¹ / (w_cᵀ G⁻¹ w_c), G = Cᵀ W C.
    Batched over leading axes of C and T (..., K, 3).

    References
    ----------
    Finlayson, G. D. & Drew, M. S. (1997). White-point preserving color
    correction. *Proc. IS&T/SID 5th Color Imaging Conference*, 258-261.
    docs/methods.md §10.
    """
    C = np.asarray(C, dtype=float)
    T = np.asarray(T, dtype=float)
    Cw = C if w is None else C * np.asarray(w, dtype=float)[:, None]
    G = np.swapaxes(Cw, -1, -2) @ C
    M = least_squares_matrix(C, T, w)
    wc = np.broadcast_to(np.asarray(white_camera, dtype=float), M.shape[:-1])
    wt = np.broadcast_to(np.asarray(white_target, dtype=float), M.shape[:-1])
    g = np.linalg.solve(G, wc[..., :, None])[..., 0]     # G⁻¹ w_c (G symmetric)
    denom = np.sum(wc * g, axis=-1)
    miss = wt - np.einsum("...ij,...j->...i", M, wc)
    return M + miss[..., :, None] * g[..., None, :] / denom[..., None, None]


def _stats(d: np.ndarray, axis=-1) -> dict[str, np.ndarray]:
    return {
        "mean": np.mean(d, axis=axis),
        "median": np.median(d, axis=axis),
        "p95": np.percentile(d, 95, axis=axis),
        "max": np.max(d, axis=axis),
    }


@dataclass(frozen=True, eq=False)
class BenchResult:
    """What :meth:`ColourBench.evaluate` computed, for a batch of B cameras (no batch axis for one).

    Arrays: ``raw_white`` (..., J, 3) raw RGB of the perfect diffuser per
    illuminant; ``gains`` = 1/raw_white; ``matrices`` (..., J, 3, 3) the
    matrix used under each illuminant (equal rows of J for a shared
    matrix); ``camera_Lab`` and ``true_Lab`` (..., J, K, 3); ``delta_E00``
    (..., J, K); ``stats[illuminant][stat]`` (...) with stat in mean,
    median, p95, max (ΔE00 unweighted over the K samples).
    """

    illuminants: tuple[str, ...]
    sample_names: tuple[str, ...]
    sample_sets: tuple[str, ...]
    raw_white: np.ndarray
    gains: np.ndarray
    matrices: np.ndarray
    camera_RGB: np.ndarray
    camera_Lab: np.ndarray
    true_Lab: np.ndarray
    delta_E00: np.ndarray
    method: str
    scope: str

    @property
    def stats(self) -> dict[str, dict[str, np.ndarray]]:
        return {name: _stats(self.delta_E00[..., j, :]) for j, name in enumerate(self.illuminants)}

    def weighted_mean(self, weights) -> np.ndarray:
        """Mean ΔE00 over samples × illuminants with the sample weights (K,)."""
        w = np.asarray(weights, dtype=float)
        return np.sum(self.delta_E00 * w, axis=(-2, -1)) / (w.sum() * len(self.illuminants))


class ColourBench:
    """Precomputed samples × illuminants for judging any camera on one wavelength grid.

    Parameters
    ----------
    wavelengths : (n,) array_like
        A uniform grid, nm (summation, CIE 15:2004 § 7).
    samples : Spectra or (K, n) array
        Reflectances 0-1 on the grid.
    illuminants : dict of str to (n,) array
        Relative SPDs by name, in the order they are reported.
    primaries : Primaries
        The display primaries (the target): their RP 177 matrix and white.
    observer : {'2', '10'}
    weights : (K,) array_like, optional
        Weight of each sample in the matrix fits (default 1).
    sample_sets : (K,) sequence of str, optional
        The sample set each sample came from (for reports).

    Notes
    -----
    The true display RGB of sample k under illuminant j is
    t = N⁻¹ A_j XYZ_jk with XYZ normalised to the white's Y = 1 and A_j
    the Bradford matrix from that white to the display white N·(1,1,1);
    so the perfect diffuser's target is exactly (1, 1, 1).

    References
    ----------
    CIE 15:2004 § 7; CIE 142-2001 (ΔE00); SMPTE RP 177-1993;
    Finlayson & Drew (1997); Lam (1985), Bradford.
    docs/methods.md §§9-10.
    """

    def __init__(self, wavelengths, samples, illuminants: dict, primaries: Primaries,
                 observer="2", weights=None, sample_sets=None):
        wl = check_wavelengths(wavelengths, min_points=3)
        if not is_uniform(wl):
            raise WorkbenchError("the colour bench needs a uniform wavelength grid (summation)")
        if isinstance(samples, Spectra):
            names = tuple(samples.names)
            R = samples.flat()
            if samples.wavelengths.size != wl.size or not np.allclose(samples.wavelengths, wl):
                raise WorkbenchError("samples must be on the bench's wavelength grid")
        else:
            R = np.atleast_2d(np.asarray(samples, dtype=float))
            names = tuple(f"sample {i + 1}" for i in range(R.shape[0]))
        if R.shape[-1] != wl.size:
            raise WorkbenchError(f"samples have {R.shape[-1]} wavelengths, the grid {wl.size}")
        if not illuminants:
            raise WorkbenchError("the colour bench needs at least one illuminant")
        self.wavelengths = wl
        self.step = float(wl[1] - wl[0])
        self.observer = observer_key(observer)
        self.primaries = primaries
        self.sample_names = names
        self.sample_sets = tuple(sample_sets) if sample_sets is not None else ("samples",) * len(names)
        self.illuminant_names = tuple(illuminants)
        E = np.stack([np.asarray(illuminants[k], dtype=float) for k in self.illuminant_names])
        if E.shape[-1] != wl.size:
            raise WorkbenchError(f"illuminants have {E.shape[-1]} wavelengths, the grid {wl.size}")
        self.E = E                                             # (J, n)
        self.R = R                                             # (K, n)
        K = R.shape[0]
        self.weights = np.ones(K) if weights is None else np.asarray(weights, dtype=float)
        if self.weights.shape != (K,) or np.any(self.weights < 0) or self.weights.sum() <= 0:
            raise WorkbenchError(f"sample weights must be {K} numbers >= 0, not all zero")
        self.cmfs = cmfs_on(wl, self.observer).values          # (n, 3)
        N = primaries.matrix_RGB_to_XYZ
        self.N = N
        self.N_inv = np.linalg.inv(N)
        self.display_white = N.sum(axis=1)                     # XYZ of RGB (1,1,1), Y = 1
        # stimuli: the sample under each light, (J, K, n)
        self.stimuli = R[None, :, :] * E[:, None, :]
        XYZ_white = E @ self.cmfs                              # (J, 3)
        XYZ = self.stimuli @ self.cmfs / XYZ_white[:, None, 1:2]
        A = bradford_matrix(XYZ_white / XYZ_white[:, 1:2], self.display_white)  # (J, 3, 3)
        XYZ_adapted = np.einsum("jab,jkb->jka", A, XYZ)
        self.target_RGB = XYZ_adapted @ self.N_inv.T          # (J, K, 3)
        self.white_Lab_ref = 100 * self.display_white
        self.true_Lab = XYZ_to_Lab(100 * XYZ_adapted, self.white_Lab_ref)
        self._flat_stimuli = self.stimuli.reshape(-1, wl.size)  # (J*K, n)
        self._weights_all = np.tile(self.weights, len(self.illuminant_names))  # (J*K,), shared matrix
        self.notes = (
            f"{len(names)} samples × {len(self.illuminant_names)} illuminants "
            f"({', '.join(self.illuminant_names)}), {observer_label(self.observer)}",
            f"summation at {self.step:g} nm; white balance on the perfect diffuser; "
            f"truth adapted to the display white ({primaries.white_name}) by the linear Bradford transform",
        )

    # -- the pipeline ----------------------------------------------------------
    def raw(self, S) -> tuple[np.ndarray, np.ndarray]:
        """Raw RGB of the samples (..., J, K, 3) and of the white (..., J, 3) for S (..., 3, n)."""
        S = np.asarray(S, dtype=float)
        if S.shape[-2:] != (3, self.wavelengths.size):
            raise WorkbenchError(
                f"sensitivities must be shaped (..., 3, {self.wavelengths.size}) (got {S.shape})")
        J, K = self.stimuli.shape[:2]
        lead = S.shape[:-2]
        St = np.swapaxes(S, -1, -2)                            # (..., n, 3)
        raw = (self._flat_stimuli @ St).reshape(lead + (J, K, 3)) * self.step
        white = (self.E @ St) * self.step                     # (..., J, 3)
        return raw, white

    def balanced(self, S) -> tuple[np.ndarray, np.ndarray]:
        """White-balanced camera RGB (..., J, K, 3) and the raw white (..., J, 3)."""
        raw, white = self.raw(S)
        if np.any(white <= 0):
            raise WorkbenchError("a channel records nothing of the white under an illuminant; "
                                 "cannot white-balance")
        return raw / white[..., :, None, :], white

    def fit_matrices(self, C, method="least-squares", scope="shared") -> np.ndarray:
        """Matrices (..., J, 3, 3) from balanced RGB ``C`` (..., J, K, 3) by ``method`` and ``scope``."""
        if method not in MATRIX_METHODS:
            raise WorkbenchError(f"matrix method must be one of {', '.join(MATRIX_METHODS)} (got {method!r})")
        if scope not in MATRIX_SCOPES:
            raise WorkbenchError(f"matrix scope must be one of {', '.join(MATRIX_SCOPES)} (got {scope!r})")
        J, K = self.target_RGB.shape[:2]
        T = self.target_RGB
        lin = white_preserving_matrix if method == "white-preserving" else least_squares_matrix
        if scope == "shared":
            Cs = C.reshape(C.shape[:-3] + (J * K, 3))
            Ts = np.broadcast_to(T.reshape(J * K, 3), Cs.shape)
            M = lin(Cs, Ts, self._weights_all)
            M = np.broadcast_to(M[..., None, :, :], C.shape[:-3] + (J, 3, 3)).copy()
        else:
            M = lin(C, np.broadcast_to(T, C.shape), self.weights)
        if method == "delta-e00":
            M = self._refine_delta_e(C, M, scope)
        return M

    def lab_of(self, C, M) -> np.ndarray:
        """CIELAB (..., J, K, 3) of balanced RGB ``C`` (..., J, K, 3) through matrices ``M`` (..., J, 3, 3)."""
        Mx = 100 * (self.N @ M)                                # (..., J, 3, 3): balanced → XYZ
        return XYZ_to_Lab(C @ np.swapaxes(Mx, -1, -2), self.white_Lab_ref)

    def delta_e(self, C, M) -> np.ndarray:
        """ΔE00 (..., J, K) of balanced RGB ``C`` through ``M`` against the truth."""
        return delta_E_CIE2000(self.lab_of(C, M), self.true_Lab)

    def delta_e_cost(self, m, C, illuminants=None) -> tuple[np.ndarray, np.ndarray]:
        """Σ_jk w_k ΔE00_jk² (...) of matrices ``m`` (..., 9) and its gradient (..., 9), analytic.

        ``C`` (J', K, 3) the balanced RGB of the illuminants ``illuminants``
        (indices, default all J), each sample weighted as in the matrix
        fits. The gradient chains ∂ΔE00/∂Lab (:func:`delta_E_CIE2000_gradient`),
        ∂Lab/∂XYZ (:func:`XYZ_to_Lab_jacobian`) and XYZ = 100·N·M·c.

        Parameters
        ----------
        m : (..., 9) array_like
            Matrix entries row by row (rows: display R, G, B; columns:
            balanced camera R, G, B), any batch.
        C : (J', K, 3) array_like
            Balanced camera RGB of the illuminants ``illuminants``.
        illuminants : sequence of int, optional
            Which of the bench's illuminants ``C`` holds (default all).

        Returns
        -------
        cost : (...) ndarray
            Σ w ΔE00², ΔE00 units squared.
        gradient : (..., 9) ndarray
            ∂cost/∂m.

        References
        ----------
        CIE 142-2001; CIE 15:2004 § 8.2.1. docs/methods.md §10.
        """
        m = np.asarray(m, dtype=float)
        truth = self.true_Lab if illuminants is None else self.true_Lab[illuminants]
        M = m.reshape(m.shape[:-1] + (3, 3))
        display = np.einsum("...ab,jkb->...jka", M, C)
        lab, jac = XYZ_to_Lab_jacobian(100 * display @ self.N.T, self.white_Lab_ref)
        E, dE = delta_E_CIE2000_gradient(lab, truth)                     # (..., J', K), (..., J', K, 3)
        w = self.weights
        cost = np.einsum("...jk,k->...", E * E, w)
        # ∂E/∂display_a = 100 Σ_i (∂E/∂XYZ_i) N_ia; ∂display_a/∂M_ab = c_b
        v = 100 * np.einsum("...c,...ci->...i", dE, jac) @ self.N
        g = np.einsum("...jka,jkb->...ab", (2 * w * E)[..., None] * v, C)
        return cost, g.reshape(g.shape[:-2] + (9,))

    def _refine_delta_e(self, C, M0, scope) -> np.ndarray:
        """The ΔE00-minimising matrices from the least-squares ones ``M0``: Newton steps in a trust region.

        Minimises Σ w ΔE00² over the group's samples × illuminants (all J
        for ``shared``, each illuminant alone otherwise) with the analytic
        gradient (:meth:`delta_e_cost`) and the Hessian from one batch of
        forward differences of that gradient (SciPy's ``trust-exact``), to a
        largest gradient entry of :data:`DELTA_E_MATRIX_GTOL` × the cost.
        It replaced a Levenberg-Marquardt run on finite-difference Jacobians
        that took ~200 iterations to its 1e-10 tolerance on the cost (the
        same optimum: ``tests/test_camera_matrix.py``).

        References
        ----------
        Nocedal, J. & Wright, S. J. (2006). *Numerical Optimization*, 2nd
        ed., § 4.3 (the trust-region subproblem solved nearly exactly).
        Moré, J. J. & Sorensen, D. C. (1983). Computing a trust region
        step. *SIAM J. Sci. Stat. Comput.* 4(3), 553-572.
        docs/methods.md §10.
        """
        # Late: scipy.optimize (~1 s to import) serves only the ΔE00-minimising matrix, so judging
        # a design with the other rules (``workbench evaluate``) never loads it.
        from scipy.optimize import minimize

        if C.ndim != 3:
            raise WorkbenchError("the ΔE00-minimising matrix is fitted for one camera at a time")
        J = C.shape[0]
        out = M0.copy()
        groups = [list(range(J))] if scope == "shared" else [[j] for j in range(J)]
        for g in groups:
            Cg = C[g]

            def fun(m, Cg=Cg, g=g):
                return self.delta_e_cost(m, Cg, g)

            def hess(m, Cg=Cg, g=g):
                """Forward differences of the analytic gradient, all nine steps in one batch, symmetrised."""
                h = _SQRT_EPS * np.maximum(1.0, np.abs(m))
                _, G = self.delta_e_cost(np.vstack([m, m + np.diag(h)]), Cg, g)
                H = (G[1:] - G[0]) / h[:, None]
                return 0.5 * (H + H.T)

            m0 = out[g[0]].ravel()
            cost0 = float(fun(m0)[0])
            r = minimize(fun, m0, jac=True, hess=hess, method="trust-exact",
                         options={"gtol": DELTA_E_MATRIX_GTOL * max(cost0, 1e-12), "maxiter": 200})
            out[g] = r.x.reshape(3, 3)
        return out

    def evaluate(self, S, method="least-squares", scope="shared", matrices=None) -> BenchResult:
        """The whole pipeline for sensitivities S (..., 3, n).

        ``matrices`` (3, 3) or (J, 3, 3), when given, are used as they are
        (a fixed, calibrated matrix); otherwise they are fitted by
        ``method`` and ``scope``.
        """
        C, white = self.balanced(S)
        J = len(self.illuminant_names)
        if matrices is None:
            M = self.fit_matrices(C, method, scope)
        else:
            M = np.asarray(matrices, dtype=float)
            if M.shape[-2:] != (3, 3):
                raise WorkbenchError(f"matrices must be shaped (3, 3) or ({J}, 3, 3) (got {M.shape})")
            if M.ndim == 2:
                M = M[None]
            M = np.broadcast_to(M, C.shape[:-3] + (J, 3, 3))
            method = "fixed"
        lab = self.lab_of(C, M)
        d = delta_E_CIE2000(lab, self.true_Lab)
        return BenchResult(self.illuminant_names, self.sample_names, self.sample_sets, white,
                           1.0 / white, M, C, lab, self.true_Lab, d, method, scope)


@dataclass(frozen=True, eq=False)
class Camera:
    """A finished camera: sensitivities, its matrix and the display it renders for.

    ``matrix`` (3, 3) maps white-balanced camera RGB to the linear RGB of
    ``primaries``; ``per_illuminant`` optionally holds one matrix per
    illuminant name (used by :meth:`display_rgb` when ``illuminant_name``
    matches, else ``matrix``).

    References
    ----------
    SMPTE RP 177-1993; Lam (1985), Bradford; CIE 15:2004 § 7.
    docs/methods.md §9.
    """

    name: str
    wavelengths: np.ndarray
    sensitivities: np.ndarray              # (3, n)
    matrix: np.ndarray                     # (3, 3)
    primaries: Primaries
    observer: str = "2"
    matrix_method: str = "least-squares"
    per_illuminant: tuple[tuple[str, np.ndarray], ...] = ()
    notes: tuple[str, ...] = field(default=())

    @property
    def step(self) -> float:
        return float(self.wavelengths[1] - self.wavelengths[0])

    @property
    def display_white_XYZ(self) -> np.ndarray:
        """XYZ of display RGB (1, 1, 1), Y = 1."""
        return self.primaries.matrix_RGB_to_XYZ.sum(axis=1)

    def raw(self, stimuli) -> np.ndarray:
        """Raw RGB (..., 3) = Σ S·stimulus·Δλ of stimuli (..., n) on the camera grid."""
        return np.asarray(stimuli, dtype=float) @ (self.sensitivities.T * self.step)

    def matrix_for(self, illuminant_name: str | None = None) -> np.ndarray:
        return dict(self.per_illuminant).get(illuminant_name, self.matrix)

    def display_rgb(self, reflectance, illuminant, illuminant_name: str | None = None) -> np.ndarray:
        """Display linear RGB (..., 3) of reflectances (..., n) under ``illuminant`` (n,), balanced on its white."""
        E = np.asarray(illuminant, dtype=float)
        white = self.raw(E)
        C = self.raw(np.asarray(reflectance, dtype=float) * E) / white
        return C @ self.matrix_for(illuminant_name).T

    def XYZ(self, reflectance, illuminant, illuminant_name: str | None = None) -> np.ndarray:
        """XYZ (..., 3) of the camera's rendering, display white at Y = 1."""
        return self.display_rgb(reflectance, illuminant, illuminant_name) @ self.primaries.matrix_RGB_to_XYZ.T

    def Lab(self, reflectance, illuminant, illuminant_name: str | None = None) -> np.ndarray:
        """CIELAB (..., 3) of the camera's rendering against the display white."""
        return XYZ_to_Lab(100 * self.XYZ(reflectance, illuminant, illuminant_name),
                          100 * self.display_white_XYZ)
