"""What a fit minimises: the residual objective across illuminants, its robust (tolerance-drawn) variant, and bound costs.

:class:`Objective` is :meth:`workbench.analysis.evaluator.DesignEvaluator.residuals`
with illuminant weights or a smooth maximum over the lights;
:class:`RobustObjective` scores units drawn from the design's tolerances;
:func:`bound_costs` prices each bound a fitted parameter ends at. Moved out
of ``fit.py`` unchanged (the classes were ``_Objective`` and ``_RobustObjective``).
"""

from __future__ import annotations

import math

import numpy as np

from workbench.analysis.evaluator import DesignEvaluator
from workbench.analysis.measures import vora_value
from workbench.optics.ripple import RIPPLE_STEP_NM, CoatingRipple, ripple_scale

__all__ = ["Objective", "RobustObjective", "CoatingSmoothness", "SMOOTHNESS_METHOD", "WORST_P", "tail_residuals",
           "bound_costs", "bound_cost_text"]


# --------------------------------------------------------------------------
# The ripple penalty of coatings with free layers
# --------------------------------------------------------------------------

#: How the coating smoothness term is made (reported with a fit).
SMOOTHNESS_METHOD = (
    f"[fit] coating_smoothness w: for each coating element with a free layer_<i>_nm, the second differences "
    f"R(k−1) − 2R(k) + R(k+1) of its coherent stack's chief-ray R_s and R_p on a {RIPPLE_STEP_NM:g} nm grid over "
    "the design's range, at its aoi_deg, each times w·√(m/n) (m the colour objective's residuals, n the "
    "element's second differences), appended to the residuals: with w = 1 each element's mean square counts as "
    "much as the colour objective's (the ripple penalty of workbench recipe; docs/methods.md §15)")


class CoatingSmoothness:
    """The ripple residuals of every ``coating`` element with a free ``layer_<i>_nm``, for batches of points.

    Each element's block is :class:`workbench.optics.ripple.CoatingRipple`
    on its own 2 nm grid over the design's range, times
    ``weight · √(m / n_e)`` (:func:`workbench.optics.ripple.ripple_scale`;
    m the colour objective's residual count, n_e the element's number of
    second differences), as ``workbench recipe``'s refinement weighs them.
    Batched like the chain: only the rows that move an element's parameters
    are computed for it.
    """

    def __init__(self, ev: DesignEvaluator, weight: float):
        self.weight = float(weight)
        wl = ev.wavelengths
        col = {k: i for i, k in enumerate(ev.free)}
        self.elements = []
        for e in ev.design.chain:
            if e.type != "coating" or not any(k.startswith("layer_") and p.free for k, p in e.params):
                continue
            fixed = {k: float(p.value) for k, p in e.params if f"{e.name}.{k}" not in col}
            moving = {k: col[f"{e.name}.{k}"] for k, _ in e.params if f"{e.name}.{k}" in col}
            self.elements.append((CoatingRipple(e, (wl[0], wl[-1])), fixed, moving))

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(r.name for r, _, _ in self.elements)

    def __call__(self, X, m: int) -> np.ndarray:
        """Residuals (B, Σ n_e) for points X (B, n_free [+ matrix entries]) and a colour objective of m residuals."""
        X = np.atleast_2d(np.asarray(X, dtype=float))
        blocks = []
        for ripple, fixed, moving in self.elements:
            params = dict(fixed)
            params.update({k: X[:, i] for k, i in moving.items()})
            blocks.append(ripple_scale(self.weight, m, ripple.size) * ripple(params))
        return np.concatenate(blocks, axis=-1)


def smoothness_of(ev: DesignEvaluator, weight=None) -> CoatingSmoothness | None:
    """The design's coating smoothness term, or None (weight 0, or no coating with free layers)."""
    w = ev.design.fit.coating_smoothness if weight is None else float(weight)
    if w == 0:
        return None
    term = CoatingSmoothness(ev, w)
    return term if term.elements else None


# --------------------------------------------------------------------------
# The objective across illuminants, and the headline figures of a batch
# --------------------------------------------------------------------------

#: The exponent of the smooth maximum over illuminants (``across_illuminants = "worst"``).
WORST_P = 32


class Objective:
    """The residual vector the fit minimises, for batches of points (B, n_free [+ matrix entries]).

    With the design's defaults it is :meth:`DesignEvaluator.residuals`.
    With illuminant weights ω_j (``mean-delta-e00`` objective) the block of
    illuminant j is scaled by √(J ω_j / Σω), so Σ r² = Σ_j (ω_j/Σω)·RMS_j².
    With ``worst``, Σ r² = G = (Σ_j (ω_j m_j)^p)^(1/p), p = :data:`WORST_P`,
    a smooth maximum of the weighted per-illuminant mean ΔE00 m_j (max ≤ G ≤
    J^(1/p)·max; for J = 3, within 3.5 %): r_jk = √(c_j w_k d_jk / Σw) with
    c_j = ω_j (ω_j m_j / G)^(p−1), since Σ_j c_j m_j = G^p / G^(p−1) = G.
    The noise term of ``noise_weight`` and the evaluator's extra blocks
    (:meth:`DesignEvaluator.extra_residuals`) are appended as in the
    evaluator; then, for a design with coatings whose layers are free and
    ``[fit] coating_smoothness`` > 0, their ripple penalty
    (:class:`CoatingSmoothness`; :meth:`split` tells the two parts apart).
    """

    def __init__(self, ev: DesignEvaluator, *, illuminant_weights=None, across="weighted-mean",
                 noise_weight=None, mix=None):
        self.ev = ev
        self.mix = mix
        fit = ev.design.fit
        names = ev.bench.illuminant_names
        w = dict(illuminant_weights or ())
        self.omega = np.array([float(w.get(n, 1.0)) for n in names])
        self.across = across
        self.noise_weight = fit.noise_weight if noise_weight is None else float(noise_weight)
        self.plain = (across == "weighted-mean" and np.all(self.omega == 1.0)
                      and self.noise_weight == fit.noise_weight)
        self.nf = len(ev.free)
        self.nm = ev._n_matrix_params()
        self.smoothness = smoothness_of(ev)

    def colour(self, X) -> np.ndarray:
        """The colour objective's residuals (B, m): everything but the coating smoothness term."""
        if self.mix is None:
            return self._accuracy(X)
        # a point of the accuracy-noise front: (1 − t)·cost/cost₀ + t·NG²/NG₀², NG² = mean_ij ‖m_ij‖²
        t, e0, g0 = self.mix
        X = np.atleast_2d(np.asarray(X, dtype=float))
        _, _, M = self.parts(X)
        rn = np.linalg.norm(M, axis=-1).reshape(X.shape[0], -1) / math.sqrt(M.shape[-3] * 3)
        blocks = [math.sqrt(t) / g0 * rn]
        if t < 1:
            blocks.insert(0, math.sqrt((1 - t) / e0) * self._accuracy(X))
        return np.concatenate(blocks, axis=-1)

    def __call__(self, X) -> np.ndarray:
        r = self.colour(X)
        if self.smoothness is None:
            return r
        return np.concatenate([r, self.smoothness(X, r.shape[-1])], axis=-1)

    def split(self, X) -> tuple[np.ndarray, np.ndarray]:
        """Σr² of the colour objective and of the coating smoothness term (B,), (B,) for points X; they add to the cost."""
        r = self(X)
        m = r.shape[-1] - (0 if self.smoothness is None else sum(e[0].size for e in self.smoothness.elements))
        return np.sum(r[:, :m] ** 2, axis=-1), np.sum(r[:, m:] ** 2, axis=-1)

    def parts(self, X):
        """Sensitivities (B, 3, n), balanced RGB (B, J, K, 3) and matrices (B, J, 3, 3) of points X."""
        ev, nf, nm = self.ev, self.nf, self.nm
        X = np.atleast_2d(np.asarray(X, dtype=float))
        S = ev.sensitivities(ev.values_of(X[:, :nf]))
        if S.ndim == 2:
            S = np.broadcast_to(S, (X.shape[0],) + S.shape)
        C, _ = ev.bench.balanced(S)
        J = len(ev.bench.illuminant_names)
        fit = ev.design.fit
        if nm:
            m = X[:, nf:nf + nm].reshape(X.shape[0], -1, 3, 3)
            M = np.broadcast_to(m, (X.shape[0], J, 3, 3))
        else:
            method = "least-squares" if fit.matrix == "delta-e00" else fit.matrix
            M = ev.bench.fit_matrices(C, method, fit.matrix_scope)
        return S, C, M

    def _accuracy(self, X) -> np.ndarray:
        if self.plain:
            return self.ev.residuals(X)
        X = np.atleast_2d(np.asarray(X, dtype=float))
        ev = self.ev
        S, C, M = self.parts(X)
        d = ev.bench.delta_e(C, M)                                  # (B, J, K)
        w = ev.bench.weights
        J = d.shape[1]
        om = self.omega / self.omega.sum()
        if self.across == "worst":
            m = np.einsum("bjk,k->bj", d, w) / w.sum()              # per-illuminant weighted mean
            a = np.maximum(self.omega * m, 1e-300)
            top = a.max(axis=1, keepdims=True)
            G = top[:, 0] * np.sum((a / top) ** WORST_P, axis=1) ** (1.0 / WORST_P)
            c = self.omega * (a / G[:, None]) ** (WORST_P - 1)
            r = np.sqrt(c[:, :, None] * w / w.sum() * d)
        else:
            r = d * np.sqrt(w / w.sum())[None, None, :] * np.sqrt(om)[None, :, None]
        parts = [r.reshape(r.shape[0], -1)]
        if self.noise_weight > 0:
            rn = np.linalg.norm(M, axis=-1) / math.sqrt(J * 3)
            parts.append(self.noise_weight * rn.reshape(rn.shape[0], -1))
        parts.extend(ev.extra_residuals(S))
        return np.concatenate(parts, axis=-1)

    def headline(self, X) -> dict:
        """For points X (B, n): ``cost`` Σr², ``vora_value``, ``mean_delta_E00`` (weighted over samples ×
        illuminants, as :attr:`Measures.weighted_mean_delta_E00`), ``mean_by_illuminant`` (B, J, sample-weighted) and
        ``noise_gain`` (B,) the largest row norm of the matrix."""
        X = np.atleast_2d(np.asarray(X, dtype=float))
        ev = self.ev
        S, C, M = self.parts(X)
        d = ev.bench.delta_e(C, M)
        w = ev.bench.weights
        r = self(X)
        rn = np.linalg.norm(M, axis=-1)
        return {
            "noise_gain_rms": np.sqrt(np.mean(rn.reshape(rn.shape[0], -1) ** 2, axis=-1)),
            "cost": np.sum(r * r, axis=-1),
            "vora_value": np.atleast_1d(vora_value(np.swapaxes(S, -1, -2), ev.cmfs, ev.rec, ev.view)),
            "mean_delta_E00": np.einsum("bjk,k->b", d, w) / (w.sum() * d.shape[1]),
            "mean_by_illuminant": np.einsum("bjk,k->bj", d, w) / w.sum(),
            "noise_gain": np.linalg.norm(M, axis=-1).max(axis=(-2, -1)),
        }


class RobustObjective(Objective):
    """The expected (or upper-tail) worst-light mean ΔE00 of units drawn from the design's tolerances.

    For a candidate x the matrix is the one its nominal design gets (the
    design's rule, fixed for its units, as a unit is calibrated with the
    nominal matrix); unit k has the parameters x + δ_k, δ_k drawn once from
    the ``[tolerance]`` distributions (common random numbers: the same δ_k
    for every x, so differences between candidates are not noise). A unit's
    score u_k = (Σ_j m_jk^p)^(1/p), the smooth maximum over the lights of
    its sample-weighted mean ΔE00. The cost is the mean of u_k
    (``percentile`` None) or, for a percentile P, the mean of the worst
    (100 − P) % of the units (the conditional value at risk, an upper bound
    of the P-th percentile): Σ r² with r_k = √(c_k u_k).
    """

    def __init__(self, ev: DesignEvaluator, deltas: dict, *, percentile=None):
        super().__init__(ev)
        self.deltas = {k: np.asarray(v, dtype=float) for k, v in deltas.items()}
        self.K = len(next(iter(self.deltas.values())))
        self.percentile = percentile
        self.nominal = ev.design.parameters()

    def unit_scores(self, X) -> np.ndarray:
        """u (B, K) for candidates X (B, n_free)."""
        ev, nf = self.ev, self.nf
        X = np.atleast_2d(np.asarray(X, dtype=float))
        B, K = X.shape[0], self.K
        _, _, M = self.parts(X)                                     # the nominal matrices (B, J, 3, 3)
        values = {}
        free = set(ev.free)
        for i, k in enumerate(ev.free):
            values[k] = np.repeat(X[:, i], K)
        for k, d in self.deltas.items():
            base = values[k] if k in free else np.full(B * K, self.nominal[k].value)
            values[k] = base + np.tile(d, B)
        S = ev.sensitivities(values)
        if S.ndim == 2:
            S = np.broadcast_to(S, (B * K,) + S.shape)
        C, _ = ev.bench.balanced(S)
        Mu = np.repeat(M, K, axis=0)
        d = ev.bench.delta_e(C, Mu)                                 # (B·K, J, samples)
        w = ev.bench.weights
        m = np.einsum("ujk,k->uj", d, w) / w.sum()                  # (B·K, J)
        top = m.max(axis=1, keepdims=True)
        u = top[:, 0] * np.sum((m / top) ** WORST_P, axis=1) ** (1.0 / WORST_P)
        return u.reshape(B, K)

    def colour(self, X) -> np.ndarray:
        return tail_residuals(self.unit_scores(X), self.percentile)


def tail_residuals(u, percentile=None) -> np.ndarray:
    """Residuals (B, K) whose Σ r² over K units is the mean of the scores u (B, K) ≥ 0, or of their worst (100 − P) %."""
    u = np.asarray(u, dtype=float)
    K = u.shape[-1]
    if percentile is None:
        c = np.full_like(u, 1.0 / K)
    else:
        n_tail = max(1, int(math.ceil(K * (1 - percentile / 100.0))))
        rank = np.argsort(np.argsort(-u, axis=-1), axis=-1)
        c = np.where(rank < n_tail, 1.0 / n_tail, 0.0)
    return np.sqrt(c * u)


def bound_costs(objective: Objective, x, lower, upper, at_bound, names, units) -> tuple[dict, ...]:
    """What each bound a parameter ends at costs: the first-order gain per unit of relaxing it.

    For parameter i at a bound, relaxing the bound by δ (lower min, higher
    max) and letting the parameters not at a bound re-optimise moves the
    solution by dx = δ·(e_i s_i − H_FF⁻¹ H_Fi s_i), H = JᵀJ the Gauss-Newton
    Hessian of the cost from one batch of forward differences (J the
    Jacobian of the residuals), F the parameters off their bounds, s_i −1
    for a min and +1 for a max. The objective changes by ∇f·dx (the bound's
    Lagrange multiplier; the envelope theorem), ν and mean ΔE00 by their
    gradients times dx.

    Returns
    -------
    tuple of dict
        name, unit, value, bound ('min'/'max'), direction ('lower'/'higher'),
        d_cost, d_vora, d_mean_delta_E00 per unit of the parameter; ranked,
        the largest gain in the objective first.

    References
    ----------
    Nocedal, J. & Wright, S. J. (2006). *Numerical Optimization*, 2nd ed.,
    § 12.8 (multipliers as sensitivities of the optimal value to the
    constraints) and § 10.3 (the Gauss-Newton Hessian).
    """
    x = np.asarray(x, dtype=float)
    nf = len(names)
    active = [i for i in range(nf) if at_bound[i]]
    if not active:
        return ()
    n = x.size
    span = np.concatenate([np.asarray(upper) - np.asarray(lower), np.ones(n - nf)])
    h = np.where(np.arange(n) < nf, 1e-5, 1e-6) * span
    inward = np.ones(n)
    inward[:nf] = np.where(x[:nf] + h[:nf] > upper, -1.0, 1.0)
    X = np.repeat(x[None], n + 1, axis=0)
    X[1 + np.arange(n), np.arange(n)] += inward * h
    R = objective(X)
    step = (inward * h)[:, None]
    Jt = (R[1:] - R[0]) / step                                   # (n, m): Jacobian transposed
    H = Jt @ Jt.T
    g = 2 * Jt @ R[0]
    head = objective.headline(X)
    grads = {k: (head[k][1:] - head[k][0]) / step[:, 0] for k in ("vora_value", "mean_delta_E00")}
    free = np.array([i not in active for i in range(n)])
    rows = []
    for i in active:
        s = -1.0 if at_bound[i] == "min" else 1.0
        dx = np.zeros(n)
        dx[i] = s
        if free.any():
            rhs = H[free][:, i] * s
            dx[free] = -np.linalg.lstsq(H[np.ix_(free, free)], rhs, rcond=1e-12)[0]
        rows.append({
            "name": names[i], "unit": units[i] or "1", "value": float(x[i]), "bound": at_bound[i],
            "direction": "lower" if s < 0 else "higher",
            "d_cost": float(g @ dx),
            "d_vora": float(grads["vora_value"] @ dx),
            "d_mean_delta_E00": float(grads["mean_delta_E00"] @ dx),
        })
    rows.sort(key=lambda r: r["d_cost"])
    return tuple(rows)


def bound_cost_text(row: dict) -> str:
    """One line: 'prism.green_red_width_nm 60 nm (max): −0.0021 objective, +0.0004 ν, −0.012 mean ΔE00 per nm higher'."""
    u = row["unit"]
    return (f"{row['name']} {row['value']:.6g} {u} ({row['bound']}): {row['d_cost']:+.3g} objective, "
            f"{row['d_vora']:+.3g} ν, {row['d_mean_delta_E00']:+.3g} mean ΔE00 per {u} {row['direction']}")


