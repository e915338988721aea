"""The measures of a camera design: plain functions of arrays and the typed results they fill.

:func:`luther_residual`, :func:`sensitivity_metamerism_index` (ISO 17321-1
style) and :func:`noise_report` work on arrays alone; :class:`Measures`
(one design state), :class:`DeltaE00Stats` and :class:`BatchMeasures` (a
batch of units) are what :class:`workbench.analysis.evaluator.DesignEvaluator`
returns. Moved out of ``evaluator.py`` unchanged.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from workbench.analysis.camera import least_squares_matrix
from workbench.analysis.measures import orthonormal_basis
from workbench.colorimetry.cie import cmfs_on
from workbench.colorimetry.coordinates import XYZ_to_Lab
from workbench.report.html import measures_html
from workbench.report.methods import smi_method

__all__ = ["SMI_SLOPE", "luther_residual", "sensitivity_metamerism_index", "noise_report",
           "Measures", "DeltaE00Stats", "BatchMeasures"]


SMI_SLOPE = 5.5


# --------------------------------------------------------------------------
# Measures that are plain functions of arrays
# --------------------------------------------------------------------------


def luther_residual(S, T, illuminant_rec=None, illuminant_view=None):
    """‖A − M·B‖_F / ‖A‖_F after the best 3×3 B: the distance of the targets from the camera's span.

    Parameters
    ----------
    S : (..., n, 3) sensitivities; T : (..., n, 3) targets (colour-matching functions);
    illuminant_rec, illuminant_view : (n,) optional, weighting S and T.

    Notes
    -----
    M = diag(l_rec)S, A = diag(l_view)T; the best B is least squares, so the
    residual is (I − P_M)A with P_M = Q_M Q_Mᵀ from QR. 0 for a Luther camera.

    References
    ----------
    Luther, R. (1927). Aus dem Gebiet der Farbreizmetrik. *Z. tech. Phys.* 8, 540.
    docs/methods.md §8.
    """
    S = np.asarray(S, dtype=float)
    T = np.asarray(T, dtype=float)
    M = S if illuminant_rec is None else np.asarray(illuminant_rec)[:, None] * S
    A = T if illuminant_view is None else np.asarray(illuminant_view)[:, None] * T
    q = orthonormal_basis(M, what="S")
    R = A - q @ (np.swapaxes(q, -1, -2) @ A)
    return np.sqrt(np.sum(R * R, axis=(-2, -1)) / np.sum(A * A, axis=(-2, -1)))


def sensitivity_metamerism_index(S, wavelengths, samples, illuminant, *, observer="2",
                                 slope: float = SMI_SLOPE) -> dict:
    """An ISO 17321-1-style sensitivity metamerism index: 100 − slope × mean ΔE*ab.

    Parameters
    ----------
    S : (3, n) camera sensitivities on ``wavelengths`` (uniform, nm).
    samples : (K, n) reflectances 0-1 (use open CIE samples; the standard's
        own target data are brand data).
    illuminant : (n,) relative SPD.
    slope : the factor on mean ΔE*ab (5.5, from memory of the standard).

    Returns
    -------
    dict with ``smi``, ``mean_delta_E_ab``, ``matrix`` (raw → XYZ), method text.

    Notes
    -----
    Raw RGB and XYZ (white Y = 100) by summation; the matrix is least
    squares from raw RGB to XYZ over the samples; ΔE*ab in CIELAB against
    the illuminant's white (CIE 15:2004 § 8.2.1). "-style": the sample set,
    illuminant and slope are parameters, not the standard's data.

    References
    ----------
    ISO 17321-1:2012, *Graphic technology and photography - Colour
    characterisation of digital still cameras (DSCs) - Part 1* (the slope 5.5
    is from memory).
    CIE 13.3-1995 (TCS01-TCS08).
    docs/methods.md §11.
    """
    wl = np.asarray(wavelengths, dtype=float)
    R = np.atleast_2d(np.asarray(samples, dtype=float))
    E = np.asarray(illuminant, dtype=float)
    x = cmfs_on(wl, observer).values
    stim = R * E
    k = 100.0 / (E @ x[:, 1])
    XYZ = stim @ x * k
    white = E @ x * k
    raw = stim @ np.asarray(S, dtype=float).T
    M = least_squares_matrix(raw, XYZ)
    lab_c = XYZ_to_Lab(raw @ M.T, white)
    lab_t = XYZ_to_Lab(XYZ, white)
    de = np.linalg.norm(lab_c - lab_t, axis=-1)
    mean = float(de.mean())
    return {
        "smi": 100.0 - slope * mean,
        "mean_delta_E_ab": mean,
        "matrix": M,
        "method": smi_method(slope, R.shape[0]),
    }


def noise_report(M, raw_white, noise, *, grey_electrons=None) -> dict:
    """Noise of the colour-correction matrix for the sensor noise model ``noise``.

    Parameters
    ----------
    M : (..., 3, 3) the matrix applied to white-balanced RGB.
    raw_white : (..., 3) raw RGB of the perfect diffuser under the light.
    noise : NoiseModel (full well, read noise, exposure, grey).
    grey_electrons : (..., 3) optional
        The grey's photo-electrons per channel from the signal budget
        (:func:`workbench.analysis.signal_budget.signal_budget`), clipped at
        the full well; replaces the ``exposure`` rule.

    Returns
    -------
    dict of arrays: ``row_norms`` (..., 3), ``condition`` (...),
    ``signal_e`` (..., 3) electrons of the grey patch per channel,
    ``sigma_out`` (..., 3) output noise of the grey patch in display RGB
    (display white = 1), ``snr_db`` (..., 3) = 20 log10(grey / σ_out).

    Notes
    -----
    The channel collecting most of the white gets ``exposure``·full well;
    the others in proportion to their raw white. Per channel the grey gives
    e = grey·e_white electrons with variance e + read² (shot plus read
    noise); after white balance σ_in = √(e + read²)/e_white; after the
    matrix Σ_out = M diag(σ_in²) Mᵀ (independent channels), σ_out = √diag.

    References
    ----------
    Vora, P. L. (2001). Inner products and orthogonality in color recording
    filter design. *IEEE Trans. Image Process.* 10(4), 632-642.
    docs/methods.md §12.
    """
    M = np.asarray(M, dtype=float)
    w = np.asarray(raw_white, dtype=float)
    if grey_electrons is not None:
        e = np.minimum(np.asarray(grey_electrons, dtype=float), noise.full_well_e)
        e_white = e / noise.grey
    else:
        e_white = noise.exposure * noise.full_well_e * w / np.max(w, axis=-1, keepdims=True)
        e = noise.grey * e_white
    sigma_in = np.sqrt(e + noise.read_noise_e ** 2) / e_white
    var_out = np.einsum("...ij,...j->...i", M * M, sigma_in ** 2)
    sigma_out = np.sqrt(var_out)
    return {
        "row_norms": np.linalg.norm(M, axis=-1),
        "condition": np.linalg.cond(M),
        "signal_e": e,
        "sigma_out": sigma_out,
        "snr_db": 20 * np.log10(noise.grey / sigma_out),
    }



@dataclass(frozen=True, eq=False)
class Measures:
    """The measures of one design state (all numbers carry their method in :attr:`methods`).

    ``delta_E00[illuminant] = {mean, median, p95, max}``; ``per_sample``
    (J, K) ΔE00; ``camera_Lab``/``true_Lab`` (J, K, 3); ``matrices`` (J, 3, 3);
    ``curves`` (3, n) the camera after white balance and matrix under the
    curve illuminant against ``targets`` (3, n) on the same scale.
    """

    vora_value: float
    neugebauer_q: tuple[float, float, float]
    luther_residual: float
    delta_E00: dict
    smi: dict
    noise: dict
    matrices: np.ndarray
    matrix_method: str
    matrix_scope: str
    gains: np.ndarray
    per_sample: np.ndarray
    camera_Lab: np.ndarray
    true_Lab: np.ndarray
    camera_uv: np.ndarray
    true_uv: np.ndarray
    sensitivities: np.ndarray
    curves: np.ndarray
    targets: np.ndarray
    curve_illuminant: str
    wavelengths: np.ndarray
    illuminants: tuple[str, ...]
    sample_names: tuple[str, ...]
    sample_sets: tuple[str, ...]
    weighted_mean_delta_E00: float
    methods: dict
    infrared: object = None
    signal: dict | None = None

    def summary(self) -> dict:
        """The headline numbers as plain JSON-ready data."""
        return {
            "vora_value": self.vora_value,
            "neugebauer_q": list(self.neugebauer_q),
            "luther_residual": self.luther_residual,
            "delta_E00": self.delta_E00,
            "weighted_mean_delta_E00": self.weighted_mean_delta_E00,
            "smi": {k: v for k, v in self.smi.items() if k != "matrix"},
            "noise": {
                ill: {k: np.asarray(v).tolist() for k, v in d.items()} for ill, d in self.noise.items()
            },
            "matrix": {
                "method": self.matrix_method,
                "scope": self.matrix_scope,
                "values": {ill: self.matrices[j].tolist() for j, ill in enumerate(self.illuminants)},
            },
            "white_balance_gains": {ill: self.gains[j].tolist() for j, ill in enumerate(self.illuminants)},
            **({"near_infrared": self.infrared.summary()} if self.infrared is not None else {}),
            **({"signal_budget": {ill: b.to_dict() for ill, b in self.signal.items()}}
               if self.signal is not None else {}),
        }

    def per_sample_table(self) -> list[dict]:
        """One row per sample × illuminant: names, ΔE00, true and camera L*a*b*."""
        rows = []
        for j, ill in enumerate(self.illuminants):
            for k, name in enumerate(self.sample_names):
                rows.append({
                    "illuminant": ill, "sample_set": self.sample_sets[k], "sample": name,
                    "delta_E00": float(self.per_sample[j, k]),
                    "true_L": float(self.true_Lab[j, k, 0]), "true_a": float(self.true_Lab[j, k, 1]),
                    "true_b": float(self.true_Lab[j, k, 2]),
                    "camera_L": float(self.camera_Lab[j, k, 0]), "camera_a": float(self.camera_Lab[j, k, 1]),
                    "camera_b": float(self.camera_Lab[j, k, 2]),
                })
        return rows

    def _repr_html_(self) -> str:
        return measures_html(self)


@dataclass(frozen=True, eq=False)
class DeltaE00Stats:
    """ΔE00 (CIEDE2000) over the samples under one illuminant, unweighted: each field (B,), one per unit."""

    mean: np.ndarray
    median: np.ndarray
    p95: np.ndarray
    max: np.ndarray


@dataclass(frozen=True, eq=False)
class BatchMeasures:
    """The headline measures of a batch of B units (:meth:`DesignEvaluator.batch`).

    Axes: B units (the batch), J illuminants in :attr:`illuminants` order,
    3 channels R, G, B.

    Attributes
    ----------
    vora_value : (B,) Vora value ν, 0-1
    delta_E00 : dict of illuminant name to DeltaE00Stats (each field (B,))
    weighted_mean_delta_E00 : (B,) ΔE00 over samples × illuminants with the design's sample weights
    gains : (B, J, 3) white-balance gains (1 / raw RGB of the perfect diffuser)
    row_norms : (B, J, 3) row norms of the matrix (noise gain for independent channel noise)
    condition : (B, J) 2-norm condition number of the matrix
    matrices : (B, J, 3, 3) the matrix applied to white-balanced RGB
    method : str
        The matrix rule used ('fixed' when given).
    illuminants : tuple of str
    """

    vora_value: np.ndarray
    delta_E00: dict
    weighted_mean_delta_E00: np.ndarray
    gains: np.ndarray
    row_norms: np.ndarray
    condition: np.ndarray
    matrices: np.ndarray
    method: str
    illuminants: tuple[str, ...]
