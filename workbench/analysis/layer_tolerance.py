"""Layer tolerances of a coating recipe: Monte Carlo over thickness and index errors, and which layers matter.

Each trial draws, for every layer, a random proportional thickness error
(normal, σ = ``thickness_random``), one systematic proportional thickness
error per material (normal, σ = ``thickness_systematic``, shared by every
layer of that material) and one proportional index error per material
(normal, σ = ``index_error``, on n, k unchanged). All trials go through the
thin-film engine as one batch of stacks. The result gives the spread of the
face's 50 % point(s) and of its reflectance curve, and ranks the layers by
their first-order share of the curve's variance from the analytic
thickness derivatives: ``share_j ∝ σ_j² Σ_λ (∂R/∂d_j)²`` with
``σ_j = thickness_random · d_j`` (the random part, which is what tells
layers apart).

References
----------
H. A. Macleod, *Thin-Film Optical Filters*, 4th ed., CRC Press, 2010,
ch. 12 (layer thickness errors: random per layer, systematic per
material; their effect on edge filters).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from workbench.analysis.recipe import Recipe
from workbench.errors import WorkbenchError
from workbench.optics.stacks import cone_response
from workbench.analysis.transition import edge_transition

__all__ = ["LayerTolerance", "layer_tolerance", "ShareEstimate", "variance_shares"]


@dataclass(frozen=True)
class ShareEstimate:
    """Results of :func:`variance_shares`: each parameter's share, its sampling spread and the noise floor.

    Attributes
    ----------
    shares : (P,) ndarray, fraction 0-1
        First-order linear share of the response's variance (summed over its columns).
    interval : (P, 2) ndarray, fraction 0-1
        Bootstrap percentile interval of each share (``level`` two-sided).
    standard_error : (P,) ndarray
        Bootstrap standard deviation of each share.
    floor : float, fraction 0-1
        The noise floor: the ``level`` quantile of the largest share any of
        the P parameters shows when the trials' responses are shuffled
        (no parameter has an effect).
    null_mean : float, fraction 0-1
        Mean share of a parameter without effect over the shuffles (about
        1/(n − 1) for n trials).
    distinguishable : (P,) ndarray of bool
        Share above the floor.
    settings : dict
        ``trials``, ``bootstrap``, ``permutations``, ``level``, ``seed``.
    """

    shares: np.ndarray
    interval: np.ndarray
    standard_error: np.ndarray
    floor: float
    null_mean: float
    distinguishable: np.ndarray
    settings: dict


def _shares(X: np.ndarray, Y: np.ndarray, w: np.ndarray | None = None) -> np.ndarray:
    """Σ_w cov(X_j, Y_w)² / (var X_j Σ_w var Y_w) for every column j of X (n, P) against Y (n, W).

    ``w`` (k, n): trial weights (bootstrap counts) giving k estimates at once; X may then be (k, n, P).
    """
    n = X.shape[-2]
    if w is None:
        w = np.ones((1, n))
    Xw = X * w[..., None]                                                # (k, n, P)
    mx = Xw.sum(axis=-2) / n                                             # (k, P)
    my = w @ Y / n                                                       # (k, W)
    C = np.swapaxes(Xw, -1, -2) @ Y / n - mx[..., None] * my[:, None, :]  # (k, P, W)
    vx = np.einsum("kn,knp->kp", w, np.broadcast_to(X, Xw.shape) ** 2) / n - mx**2
    vy = np.sum(w @ Y**2 / n - my**2, axis=-1)                           # (k,)
    with np.errstate(invalid="ignore", divide="ignore"):
        out = np.sum(C**2, axis=-1) / (vx * vy[:, None])
    return np.where(np.isfinite(out), out, 0.0)


def variance_shares(X, Y, *, bootstrap: int = 200, permutations: int = 200, level: float = 0.95, seed: int = 0,
                    batch: int = 25) -> ShareEstimate:
    """Each parameter's first-order share of a response's variance from Monte Carlo trials, with its noise.

    The share of parameter j is the part of the response's variance that a
    straight line in X_j explains, summed over the response's columns:
    ``Σ_w cov(X_j, Y_w)² / (var X_j · Σ_w var Y_w)`` (the squared
    correlation for one column). Its sampling spread comes from resampling
    the trials with replacement (bootstrap); the noise floor from shuffling
    the responses against the draws, which gives the shares of parameters
    with no effect: for one response column such a share follows
    Beta(1/2, (n − 2)/2), mean 1/(n − 1).

    Parameters
    ----------
    X : (n, P) array_like
        The draws of the P parameters in each of n trials.
    Y : (n,) or (n, W) array_like
        The response of each trial (e.g. R at W wavelengths).
    bootstrap, permutations : int
        Resamples for the spread and shuffles for the floor.
    level : float
        Two-sided level of the intervals and one-sided level of the floor.
    seed : int
        The same seed gives the same resamples.
    batch : int
        Resamples per array operation.

    Returns
    -------
    ShareEstimate

    References
    ----------
    Efron, B. & Tibshirani, R. J. (1993), *An Introduction to the Bootstrap*,
    Chapman & Hall, ch. 13 (percentile intervals) and ch. 15 (permutation
    tests). Saltelli, A. et al. (2008), *Global Sensitivity Analysis. The
    Primer*, Wiley, ch. 1 (variance shares).
    """
    X = np.asarray(X, dtype=float)
    Y = np.asarray(Y, dtype=float)
    Y = Y[:, None] if Y.ndim == 1 else Y
    if X.ndim != 2 or Y.ndim != 2 or X.shape[0] != Y.shape[0] or X.shape[0] < 3:
        raise WorkbenchError(f"'X' and 'Y' must have one row per trial, at least 3 (got {X.shape} and {Y.shape})")
    for name, v in (("bootstrap", bootstrap), ("permutations", permutations)):
        if not (isinstance(v, (int, np.integer)) and 10 <= v <= 100_000):
            raise WorkbenchError(f"'{name}' must be an integer 10-100000 (got {v!r})")
    if not 0.5 < level < 1.0:
        raise WorkbenchError(f"'level' must be in (0.5, 1) (got {level!r})")
    n, P = X.shape
    X = X - X.mean(axis=0)                       # centred once: the moments below stay accurate
    Y = Y - Y.mean(axis=0)
    rng = np.random.default_rng(seed)
    shares = _shares(X, Y)[0]
    boot = np.empty((bootstrap, P))
    for start in range(0, bootstrap, batch):
        k = min(batch, bootstrap - start)
        counts = np.stack([np.bincount(rng.integers(0, n, n), minlength=n) for _ in range(k)]).astype(float)
        boot[start:start + k] = _shares(X, Y, counts)
    null = np.empty((permutations, P))
    for start in range(0, permutations, batch):
        k = min(batch, permutations - start)
        idx = np.argsort(rng.random((k, n)), axis=1)
        null[start:start + k] = _shares(X[idx], Y, np.ones((k, n)))
    tail = 0.5 * (1.0 - level)
    interval = np.quantile(boot, [tail, 1.0 - tail], axis=0).T
    floor = float(np.quantile(null.max(axis=1), level))
    settings = {"trials": int(n), "bootstrap": int(bootstrap), "permutations": int(permutations),
                "level": float(level), "seed": int(seed)}
    return ShareEstimate(shares, interval, boot.std(axis=0, ddof=1), floor, float(null.mean()), shares > floor,
                         settings)


@dataclass(frozen=True)
class LayerTolerance:
    """Results of :func:`layer_tolerance`.

    Attributes
    ----------
    wavelengths_nm : (n_λ,) ndarray
    R_nominal : (n_λ,) ndarray
        Reflectance of the recipe as designed (cone and polarisations averaged).
    R_trials : (trials, n_λ) ndarray
    edges_nominal : (2,) ndarray, nm
        Short- and long-wave 50 % points bounding the nominal main reflection
        band (:func:`workbench.analysis.transition.edge_transition`, NaN off the grid).
    edges_trials : (trials, 2) ndarray, nm
    ranking : list of dict
        Layers by share of the curve's variance (largest first): ``layer``
        (1-based from the incidence side), ``material``, ``thickness_nm``,
        ``share`` (0-1, first order from the derivatives, of the random
        part), ``rms_dR_per_nm``, and from the trials (:func:`variance_shares`
        of each layer's own random error against R): ``trial_share`` (0-1,
        of the trials' whole variance), ``trial_interval`` (bootstrap 90 %),
        ``above_floor`` (distinguishable from noise).
    settings : dict
    monotone_trials : (trials, 2) ndarray of bool
        Whether each trial's transition on each side is monotone.
    trial_shares : ShareEstimate or None
        The shares from the trials, by layer index (None for fewer than 10 trials).
    """

    wavelengths_nm: np.ndarray
    R_nominal: np.ndarray
    R_trials: np.ndarray
    edges_nominal: np.ndarray
    edges_trials: np.ndarray
    ranking: list
    settings: dict
    trial_shares: ShareEstimate | None = None
    monotone_trials: np.ndarray | None = None

    def non_monotone_counts(self) -> dict:
        """How many trials have a non-monotone transition on each side of the band (docs/methods.md §15)."""
        if self.monotone_trials is None:
            return {"short_wave": None, "long_wave": None}
        return {side: int(np.sum(~self.monotone_trials[:, k] & np.isfinite(self.edges_trials[:, k])))
                for k, side in enumerate(("short_wave", "long_wave"))}

    def edge_shift_percentiles(self, q=(5, 50, 95)) -> dict:
        """Percentiles (nm) of each edge's shift from nominal, over the trials where it exists."""
        out = {}
        for k, side in enumerate(("short_wave", "long_wave")):
            shift = self.edges_trials[:, k] - self.edges_nominal[k]
            shift = shift[np.isfinite(shift)]
            out[side] = None if shift.size == 0 else dict(zip((f"p{x}" for x in q),
                                                                np.percentile(shift, q).tolist()))
        return out


def layer_tolerance(recipe: Recipe, wavelengths_nm, *, thickness_random: float = 0.01,
                    thickness_systematic: float = 0.005, index_error: float = 0.005, trials: int = 500,
                    seed: int = 0, chunk: int = 250, bootstrap: int = 200) -> LayerTolerance:
    """Monte Carlo of layer thickness and index errors for one recipe.

    Parameters
    ----------
    recipe : Recipe
    wavelengths_nm : (n_λ,) array_like, nm
    thickness_random : float
        σ of each layer's own proportional thickness error (0.01 = 1 %).
    thickness_systematic : float
        σ of the proportional thickness error shared by the layers of one material.
    index_error : float
        σ of the proportional error of each material's n.
    trials : int
    seed : int
        The same seed gives the same draws.
    chunk : int
        Trials per engine call.
    bootstrap : int
        Resamples (and shuffles) for the trial shares' intervals and noise
        floor (:func:`variance_shares`, 90 % level, same seed); 0: no trial shares.

    Returns
    -------
    LayerTolerance
    """
    for name, v in (("thickness_random", thickness_random), ("thickness_systematic", thickness_systematic),
                    ("index_error", index_error)):
        if not (np.isfinite(v) and 0 <= v < 0.5):
            raise WorkbenchError(f"'{name}' must be a fraction in [0, 0.5) (got {v!r})")
    if not (isinstance(trials, (int, np.integer)) and 1 <= trials <= 1_000_000):
        raise WorkbenchError(f"'trials' must be an integer 1-1000000 (got {trials!r})")
    wl = np.asarray(wavelengths_nm, dtype=float)
    N0 = recipe.indices(wl)                                           # (L, n)
    d0 = recipe.thicknesses_nm
    L = d0.size
    symbols = list(recipe.materials)
    which = np.array([symbols.index(s) for s in recipe.symbols])
    kw = dict(aoi_deg=recipe.aoi_deg, f_number=recipe.f_number, incident=recipe.incident.index(wl).real,
              substrate=recipe.substrate.index(wl), polarisation=recipe.polarisation)
    R0, _, dR, _ = cone_response(N0, d0, wl, derivatives=True, **kw)
    rng = np.random.default_rng(seed)
    e_rand = rng.standard_normal((trials, L)) * thickness_random
    e_sys = rng.standard_normal((trials, len(symbols))) * thickness_systematic
    e_idx = rng.standard_normal((trials, len(symbols))) * index_error
    d = d0 * (1.0 + e_rand + e_sys[:, which])                          # (trials, L)
    if np.any(d <= 0):
        raise WorkbenchError("the thickness errors drew a layer of thickness ≤ 0; expected smaller tolerances")
    R = np.empty((trials, wl.size))
    for start in range(0, trials, chunk):
        sl = slice(start, start + chunk)
        scale = 1.0 + e_idx[sl][:, which]                              # (c, L)
        N = N0.real[None] * scale[..., None] + 1j * N0.imag[None]
        R[sl] = cone_response(N, d[sl], wl, **kw)[0]
    def band_edges(r):
        # the crossings bounding the main band on each side (docs/methods.md §15) and whether each side is monotone
        sides = [edge_transition(wl, r, reflects=side) for side in ("long", "short")]
        return [t.band_edge_nm for t in sides], [t.monotone for t in sides]

    edges0 = np.array(band_edges(R0)[0])
    found = [band_edges(r) for r in R]
    edges = np.array([e for e, _ in found]).reshape(trials, 2)
    monotone = np.array([m for _, m in found], dtype=bool).reshape(trials, 2)
    sigma = thickness_random * d0
    contrib = sigma**2 * np.sum(dR**2, axis=-1)
    share = contrib / contrib.sum() if contrib.sum() > 0 else np.zeros(L)
    order = np.argsort(-share)
    est = None
    if trials >= 10 and thickness_random > 0 and bootstrap > 0:
        est = variance_shares(e_rand, R, bootstrap=bootstrap, permutations=bootstrap, level=0.9, seed=seed)
    ranking = []
    for j in order:
        row = {"layer": int(j + 1), "material": recipe.materials[recipe.symbols[j]].name,
               "thickness_nm": float(d0[j]), "share": float(share[j]),
               "rms_dR_per_nm": float(np.sqrt(np.mean(dR[j] ** 2)))}
        if est is not None:
            row.update(trial_share=float(est.shares[j]), trial_interval=[float(v) for v in est.interval[j]],
                       above_floor=bool(est.distinguishable[j]))
        ranking.append(row)
    settings = {"thickness_random": thickness_random, "thickness_systematic": thickness_systematic,
                "index_error": index_error, "trials": int(trials), "seed": int(seed), "bootstrap": int(bootstrap)}
    return LayerTolerance(wl, R0, R, edges0, edges, ranking, settings, est, monotone)
