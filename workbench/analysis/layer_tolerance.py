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
from workbench.optics.thinfilm import stop_band_edges

__all__ = ["LayerTolerance", "layer_tolerance"]


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
        Short- and long-wave 50 % points of the nominal reflection band (NaN off the grid).
    edges_trials : (trials, 2) ndarray, nm
    ranking : list of dict
        Layers by share of the curve's variance (largest first): ``layer``
        (1-based from the incidence side), ``material``, ``thickness_nm``,
        ``share`` (0-1), ``rms_dR_per_nm``.
    settings : dict
    """

    wavelengths_nm: np.ndarray
    R_nominal: np.ndarray
    R_trials: np.ndarray
    edges_nominal: np.ndarray
    edges_trials: np.ndarray
    ranking: list
    settings: dict

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
                    seed: int = 0, chunk: int = 250) -> LayerTolerance:
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
    edges0 = np.array(stop_band_edges(wl, R0))
    edges = np.array([stop_band_edges(wl, r) for r in R])
    sigma = thickness_random * d0
    contrib = sigma**2 * np.sum(dR**2, axis=-1)
    share = contrib / contrib.sum() if contrib.sum() > 0 else np.zeros(L)
    order = np.argsort(-share)
    ranking = [{"layer": int(j + 1), "material": recipe.materials[recipe.symbols[j]].name,
                "thickness_nm": float(d0[j]), "share": float(share[j]),
                "rms_dR_per_nm": float(np.sqrt(np.mean(dR[j] ** 2)))} for j in order]
    settings = {"thickness_random": thickness_random, "thickness_systematic": thickness_systematic,
                "index_error": index_error, "trials": int(trials), "seed": int(seed)}
    return LayerTolerance(wl, R0, R, edges0, edges, ranking, settings)
