"""Judging a camera design: measures and matrices for any parameter values.

:class:`DesignEvaluator` reads a design once (chain curves, samples,
illuminants, target functions) and then evaluates any parameter values —
one set or a batch — to :class:`Measures`: the Vora value, Neugebauer's q,
the Luther residual, ΔE00 statistics over the design's samples ×
illuminants after white balance and the colour-correction matrix, the
ISO 17321-1-style sensitivity metamerism index and the noise of the matrix.
:meth:`DesignEvaluator.residuals` gives the residual vector of the design's
objective, which :func:`workbench.analysis.fit.fit_design` minimises.

Objectives (the design's ``[fit] objective``), each a residual vector r
whose sum of squares is minimised:

- ``vora``: r = (I − P_M) Q_A / √3 with M = diag(l_rec)·S, A = diag(l_view)·X̄;
  Σ r² = 1 − ν exactly, so the fit maximises ν;
- ``luther-residual``: r = (I − P_M)·diag(l_view)·T / ‖diag(l_view)·T‖_F,
  T the target colour-matching functions (the weighted distance to the
  targets after the best matrix);
- ``mean-delta-e00``: r_jk = √(w_k / (J Σw))·ΔE00_jk over samples k ×
  illuminants j (a weighted RMS of ΔE00); with the ``delta-e00`` matrix its
  nine (or 9·J) entries are fitted jointly with the filters.

``[fit] noise_weight`` appends noise_weight·‖m_i‖ for each row i of the
matrix (the noise gain for independent channel noise).

This module does not import ``scipy.optimize``: judging a design never
needs the optimiser.
"""

from __future__ import annotations

import copy
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from workbench.analysis.camera import Camera, ColourBench, bradford_matrix, least_squares_matrix
from workbench.colorimetry.cie import cmfs_on, illuminant_on, observer_label
from workbench.colorimetry.coordinates import Lab_to_XYZ, XYZ_to_Lab, XYZ_to_uv_prime
from workbench.model.design import Design, FittedMatrix
from workbench.fileio.design_toml import load_design
from workbench.errors import WorkbenchError
from workbench.analysis.measures import neugebauer_q, orthonormal_basis, vora_value
from workbench.analysis.near_infrared import DEFAULT_CUTOFF_NM, infrared_report, infrared_residuals
from workbench.colorimetry.primaries import (
    Primaries,
    primaries_from_emitters,
    primaries_from_xy,
    primaries_named,
)
from workbench.colorimetry.samples import ces_cie_224, tcs_cie_13_3
from workbench.model.spectra import Spectra, grid, is_uniform
from workbench.report.html import measures_html
from workbench.report.methods import METHODS, noise_method, smi_method
from workbench.fileio.spectra_csv import read_spectra_csv
from workbench.colorimetry.targets import primaries_XYZ, target_cmfs
from workbench.analysis.signal_budget import signal_budget

__all__ = [
    "design_primaries",
    "DesignEvaluator",
    "Measures",
    "BatchMeasures",
    "DeltaE00Stats",
    "fitted_matrix",
    "luther_residual",
    "sensitivity_metamerism_index",
    "noise_report",
    "camera_from_design",
    "load_camera",
]

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


# --------------------------------------------------------------------------
# The design's target and its bench
# --------------------------------------------------------------------------


def design_primaries(design: Design) -> Primaries:
    """The display primaries the design's ``[target]`` names (CIE XYZ for ``kind = 'observer'``).

    References
    ----------
    SMPTE RP 177-1993.
    docs/methods.md §5.
    """
    t = design.target
    if t.kind == "observer":
        return primaries_XYZ()
    if t.kind == "primaries":
        return primaries_named(t.name)
    if t.kind == "chromaticities":
        return primaries_from_xy([t.red, t.green, t.blue], t.white or "D65", name="design target",
                                 observer=design.observer)
    if t.error is not None:
        raise t.error.with_traceback(None)
    if t.emitters is None:
        raise WorkbenchError(f"the target's emitter file {t.file} has not been read: designs are read with "
                             "workbench.fileio.design_toml.load_design, which reads every file they name")
    return primaries_from_emitters(t.emitters, design.observer, white=t.white or "D65",
                                   name=f"emitters of {t.file}")


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


class DesignEvaluator:
    """A design read once, ready to evaluate any parameter values (one set or a batch).

    Parameters
    ----------
    design : Design

    Attributes
    ----------
    model : ChainModel; bench : ColourBench; primaries : Primaries;
    targets : (3, n) target colour-matching functions; free : tuple of free
    parameter keys with ``lower``, ``upper`` (n_free,) bounds and ``start``.

    References
    ----------
    Vora & Trussell (1993), *JOSA A* 10(7), 1499-1508 (ν); Neugebauer (1956),
    *JOSA* 46(10), 821-824 (q); Luther (1927); CIE 142-2001 (ΔE00);
    Finlayson & Drew (1997) (matrices); ISO 17321-1:2012 (SMI, in style).
    docs/methods.md §§8-12.
    """

    def __init__(self, design: Design):
        self.design = design
        self.model = design.model()
        wl = self.model.wavelengths
        self.wavelengths = wl
        self.step = float(wl[1] - wl[0])
        self.primaries = design_primaries(design)
        tg = target_cmfs(self.primaries, wl, design.observer)
        self.targets = tg.values                                   # (3, n)
        self.cmfs = cmfs_on(wl, design.observer).values            # (n, 3)
        notes = list(self.model.notes) + list(tg.notes)
        # illuminants
        names = list(design.fit.illuminants) or [i.name for i in design.illuminants]
        ills = {}
        self.illuminant_labels = {}
        if names:
            for n in names:
                label, values, nn = design.illuminant_values(n)
                ills[n] = values
                self.illuminant_labels[n] = label
                notes.extend(nn)
        else:
            label, tab = illuminant_on(wl, "D65")
            ills["D65"] = np.asarray(tab.values)
            self.illuminant_labels["D65"] = label
            notes.append("no [[illuminants]] in the design: CIE D65 used")
        # samples
        weights = dict(design.fit.weights)
        blocks, w, sets, snames = [], [], [], []
        specs = design.samples
        if specs:
            for s in specs:
                sp = design.sample_set(s.name)
                blocks.append(sp.flat())
                w.extend([weights.get(s.name, 1.0)] * len(sp))
                sets.extend([s.name] * len(sp))
                snames.extend(sp.names)
                notes.extend(sp.notes)
        else:
        
            sp = ces_cie_224(wl)
            blocks.append(sp.flat())
            w.extend([1.0] * len(sp))
            sets.extend(["cie-224"] * len(sp))
            snames.extend(sp.names)
            notes.append("no [[samples]] in the design: the 99 CIE 224:2017 samples used")
        R = np.concatenate(blocks)
        samples = Spectra(wl, R, tuple(snames), kind="reflectance")
        self.bench = ColourBench(wl, samples, ills, self.primaries, design.observer,
                                 weights=np.asarray(w), sample_sets=sets)
        notes.extend(self.bench.notes)
        # recording / viewing illuminants for ν
        self.recording_label, self.rec, rec_notes = design.illuminant_values(design.fit.recording_illuminant)
        self.viewing_label, self.view, view_notes = design.illuminant_values(design.fit.viewing_illuminant)
        self.illuminant_notes = tuple(dict.fromkeys((*rec_notes, *view_notes)))
        self._QA = orthonormal_basis(self.view[:, None] * self.cmfs, what="X")
        A_t = self.view[:, None] * self.targets.T
        self._A_t = A_t / np.linalg.norm(A_t)
        # the SMI set: CIE 13.3 TCS01-08 under D65 (parameters of the index)
        # (on the grid up to 830 nm: D65 is defined no further, and the index is a visible one)
        self._smi_keep = wl <= 830.0
        wl_smi = wl[self._smi_keep]
        if not self._smi_keep.all():
            notes.append(f"the SMI is computed over {wl_smi[0]:g}-{wl_smi[-1]:g} nm of the grid (CIE D65 "
                         "is defined to 830 nm)")
        tcs = tcs_cie_13_3(wl_smi, extrapolation="constant")
        self._smi_samples = tcs.flat()[:8]
        self._smi_illuminant = np.asarray(illuminant_on(wl_smi, "D65")[1].values)
        # the curve illuminant: the viewing illuminant when the bench has it, else the first
        view = design.fit.viewing_illuminant
        self.curve_illuminant = view if view in self.bench.illuminant_names else self.bench.illuminant_names[0]
        # free parameters
        free = design.free_parameters()
        self.free = tuple(free)
        self.lower = np.array([p.min for p in free.values()], dtype=float)
        self.upper = np.array([p.max for p in free.values()], dtype=float)
        self.start = np.array([p.value for p in free.values()], dtype=float)
        self.notes = tuple(dict.fromkeys(notes))

    def with_design(self, design: Design) -> "DesignEvaluator":
        """This evaluator for another state of the same design file (other parameter values).

        Nothing is read again: the curves, samples and illuminants are
        shared; the parameter values (free or not) are ``design``'s.
        """
        ev = copy.copy(self)
        ev.model = copy.copy(self.model)
        ev.model.design = design
        ev.design = design
        params = design.parameters()
        if tuple(k for k, p in params.items() if p.free) != self.free:
            raise WorkbenchError("the evaluator was made for a design with other free parameters")
        ev.start = np.array([params[k].value for k in self.free], dtype=float)
        return ev

    # -- the pipeline ------------------------------------------------------------
    def sensitivities(self, values=None) -> np.ndarray:
        """R, G, B sensitivities (..., 3, n) for parameter values (dict of arrays)."""
        return self.model.sensitivities(values)

    def values_of(self, x) -> dict:
        """Free-parameter vector(s) (..., n_free) as the dict the chain takes."""
        x = np.asarray(x, dtype=float)
        return {k: x[..., i] for i, k in enumerate(self.free)}

    def _stored_matrices(self):
        m = self.design.matrix
        if m is None:
            return None
        J = len(self.bench.illuminant_names)
        if m.scope == "shared":
            return np.broadcast_to(np.array(m.values), (J, 3, 3))
        per = dict(m.per_illuminant)
        missing = [n for n in self.bench.illuminant_names if n not in per]
        if missing:
            return None
        return np.stack([np.array(per[n]) for n in self.bench.illuminant_names])

    def signal_budgets(self, S) -> dict | None:
        """The grey's signal budget per illuminant for sensitivities S (3, n), or None without ``[noise] scene_lux``.

        A relative sensor curve is scaled so its peak is ``[noise] qe_percent``
        (refused without it): the budget needs electrons per photon.
        """
        nm = self.design.noise
        if nm.scene_lux is None:
            return None
        S = np.asarray(S, dtype=float)
        if nm.qe_percent is not None:
            sensors = [c for c in self.model.element_curves() if c.type == "sensor-qe"]
            if not sensors:
                raise WorkbenchError("noise.qe_percent: the chain has no sensor-qe element to scale")
            peak = np.max(np.prod([np.asarray(c.values) for c in sensors], axis=0), axis=-1)   # (3,)
            S = S * (nm.qe_percent / 100.0 / np.where(peak > 0, peak, 1.0))[:, None]
        elif self.model.units not in ("1",):
            raise WorkbenchError(
                f"noise.qe_percent: the sensor curve is {self.model.units!r}, not quantum efficiency 0-1; give "
                "its peak quantum efficiency in percent for the signal budget")
        out = {}
        for j, ill in enumerate(self.bench.illuminant_names):
            out[ill] = signal_budget(
                S, self.wavelengths, self.bench.E[j], lux=nm.scene_lux, f_number=nm.f_number,
                exposure_s=nm.exposure_s, pixel_pitch_um=nm.pixel_pitch_um, reflectance=nm.grey,
                lens_transmittance=nm.lens_transmittance, full_well_e=nm.full_well_e,
                read_noise_e=nm.read_noise_e, illuminant=ill)
        return out

    def infrared_cutoffs(self, extra=()) -> tuple[float, ...]:
        """700 nm, the design's ``[fit] infrared_cutoff_nm`` and any ``extra`` cut-offs, nm, once each."""
        return tuple(dict.fromkeys([DEFAULT_CUTOFF_NM, float(self.design.fit.infrared_cutoff_nm),
                                    *(float(c) for c in extra)]))

    def measures(self, values=None, *, matrices=None, method=None, scope=None,
                 use_stored_matrix=False, infrared_cutoffs=()) -> Measures:
        """Every measure of one design state.

        ``matrices`` (3, 3) or (J, 3, 3) fixes the matrix; otherwise it is
        fitted by ``method``/``scope`` (default: the design's ``[fit]``), or
        taken from the design's ``[matrix]`` when ``use_stored_matrix``.
        ``infrared_cutoffs`` (nm) adds cut-offs to the near-infrared
        measures (700 nm and the design's are always there).
        """
        fit = self.design.fit
        method = method or fit.matrix
        scope = scope or fit.matrix_scope
        if matrices is None and use_stored_matrix:
            matrices = self._stored_matrices()
        S = self.sensitivities(values)
        if S.ndim != 2:
            raise WorkbenchError("measures() takes one set of values; use batch() for many")
        res = self.bench.evaluate(S, method, scope, matrices)
        if matrices is not None:
            method = (self.design.matrix.method + " (stored)") if use_stored_matrix and self.design.matrix else "fixed"
        St = S.T
        nu = float(vora_value(St, self.cmfs, self.rec, self.view))
        q = tuple(float(v) for v in neugebauer_q(St, self.cmfs, self.rec, self.view))
        lr = float(luther_residual(St, self.targets.T, self.rec, self.view))
        stats = {ill: {k: float(v) for k, v in d.items()} for ill, d in res.stats.items()}
        smi = sensitivity_metamerism_index(S[:, self._smi_keep], self.wavelengths[self._smi_keep],
                                           self._smi_samples, self._smi_illuminant,
                                           observer=self.design.observer)
        smi["samples"] = "CIE 13.3 TCS01-TCS08"
        smi["illuminant"] = "CIE D65"
        smi["slope"] = SMI_SLOPE
        signal = self.signal_budgets(S)
        noise = {ill: noise_report(res.matrices[j], res.raw_white[j], self.design.noise,
                                   grey_electrons=None if signal is None else signal[ill].electrons)
                 for j, ill in enumerate(res.illuminants)}
        signal_text = None
        if signal is not None:
            sig = next(iter(signal.values()))
            signal_text = (f"shot + read noise: the grey's electrons from the signal budget ({sig.method}; "
                            f"{self.design.noise.scene_lux:g} lx under each illuminant, f/{self.design.noise.f_number:g}, "
                            f"{self.design.noise.exposure_s:g} s, {self.design.noise.pixel_pitch_um:g} µm pixels), "
                            f"clipped at the full well {self.design.noise.full_well_e:g} e⁻; read "
                            f"{self.design.noise.read_noise_e:g} e⁻ rms; σ_out in display RGB (white = 1)")
        infrared = infrared_report(self.bench, S, cutoffs_nm=self.infrared_cutoffs(infrared_cutoffs),
                                   method=method if matrices is None else fit.matrix, scope=scope)
        j = res.illuminants.index(self.curve_illuminant)
        b = self.bench
        E = b.E[j]
        XYZw = E @ self.cmfs
        A = bradford_matrix(XYZw / XYZw[1], b.display_white)
        targets_j = b.N_inv @ A @ (self.cmfs.T / XYZw[1])       # per unit light, (3, n)
        # per unit light: Σ curves·E = M·(1,1,1), as Σ targets·E = (1,1,1)
        curves = res.matrices[j] @ (res.gains[j][:, None] * S) * b.step  # (3, n)
        display_white = 100 * b.display_white
        cam_uv = XYZ_to_uv_prime(Lab_to_XYZ(res.camera_Lab, display_white))
        true_uv = XYZ_to_uv_prime(Lab_to_XYZ(res.true_Lab, display_white))
        methods = {
            "vora_value": METHODS["vora_value"],
            "neugebauer_q": METHODS["neugebauer_q"],
            "luther_residual": METHODS["luther_residual"],
            "delta_E00": METHODS["delta_E00"],
            "matrix": f"{method}, {scope}",
            "smi": smi["method"] + ", CIE 13.3 TCS01-08 under D65",
            "noise": signal_text or noise_method(self.design.noise),
            "recording_illuminant": self.design.fit.recording_illuminant or "equal energy",
            "viewing_illuminant": self.design.fit.viewing_illuminant or "equal energy",
            "observer": observer_label(self.design.observer),
            "target": self.primaries.name,
            "near_infrared": infrared.method,
        }
        return Measures(
            vora_value=nu, neugebauer_q=q, luther_residual=lr, delta_E00=stats, smi=smi,
            noise=noise, matrices=res.matrices, matrix_method=method, matrix_scope=scope,
            gains=res.gains, per_sample=res.delta_E00, camera_Lab=res.camera_Lab,
            true_Lab=res.true_Lab, camera_uv=cam_uv, true_uv=true_uv, sensitivities=S,
            curves=curves, targets=targets_j, curve_illuminant=self.curve_illuminant,
            wavelengths=self.wavelengths, illuminants=res.illuminants,
            sample_names=res.sample_names, sample_sets=res.sample_sets,
            weighted_mean_delta_E00=float(res.weighted_mean(self.bench.weights)), methods=methods,
            infrared=infrared, signal=signal,
        )

    def batch(self, values: dict, *, matrices=None, method=None, scope=None) -> "BatchMeasures":
        """Headline measures for a batch of parameter values (dict of (B,) arrays), as arrays.

        ``matrices`` given (3, 3) / (J, 3, 3) fixes the matrix for every
        unit; otherwise each unit gets its own (the least-squares or
        white-preserving rule of the design; a ΔE00 matrix is not fitted per
        unit — least squares is used and said in ``method``).

        Returns
        -------
        BatchMeasures
            Arrays over the units (B) and illuminants (J).
        """
        fit = self.design.fit
        method = method or fit.matrix
        scope = scope or fit.matrix_scope
        S = self.sensitivities(values)
        if S.ndim == 2:
            S = S[None]
        if matrices is None and method == "delta-e00":
            method = "least-squares"
        res = self.bench.evaluate(S, method, scope, matrices)
        St = np.swapaxes(S, -1, -2)
        nu = vora_value(St, self.cmfs, self.rec, self.view)
        return BatchMeasures(
            vora_value=np.atleast_1d(nu),
            delta_E00={ill: DeltaE00Stats(**d) for ill, d in res.stats.items()},
            weighted_mean_delta_E00=res.weighted_mean(self.bench.weights),
            gains=res.gains,
            row_norms=np.linalg.norm(res.matrices, axis=-1),
            condition=np.linalg.cond(res.matrices),
            matrices=res.matrices,
            method=res.method if matrices is None else "fixed",
            illuminants=res.illuminants,
        )

    # -- residuals for the fit ------------------------------------------------------
    def _n_matrix_params(self) -> int:
        fit = self.design.fit
        if fit.objective != "mean-delta-e00" or fit.matrix != "delta-e00":
            return 0
        return 9 if fit.matrix_scope == "shared" else 9 * len(self.bench.illuminant_names)

    def residuals(self, x) -> np.ndarray:
        """Residual vectors (..., m) for free-parameter vectors x (..., n_free [+ matrix entries])."""
        x = np.atleast_2d(np.asarray(x, dtype=float))
        nf = len(self.free)
        S = self.sensitivities(self.values_of(x[:, :nf]))
        if S.ndim == 2:
            S = np.broadcast_to(S, (x.shape[0],) + S.shape)
        fit = self.design.fit
        obj = fit.objective
        St = np.swapaxes(S, -1, -2) * self.rec[:, None]            # M = diag(l_rec) S, (B, n, 3)
        need_matrix = obj == "mean-delta-e00" or fit.noise_weight > 0
        parts = []
        if obj in ("vora", "luther-residual"):
            q = orthonormal_basis(St, what="S")
            A = self._QA / math.sqrt(3) if obj == "vora" else self._A_t
            R = A - q @ (np.swapaxes(q, -1, -2) @ A)
            parts.append(R.reshape(R.shape[0], -1))
        M = None
        if need_matrix:
            C, white = self.bench.balanced(S)
            nm = self._n_matrix_params()
            J = len(self.bench.illuminant_names)
            if nm:
                m = x[:, nf:nf + nm].reshape(x.shape[0], -1, 3, 3)
                M = np.broadcast_to(m, (x.shape[0], J, 3, 3)) if m.shape[1] == 1 else m
            else:
                method = "least-squares" if fit.matrix == "delta-e00" else fit.matrix
                M = self.bench.fit_matrices(C, method, fit.matrix_scope)
            if obj == "mean-delta-e00":
                d = self.bench.delta_e(C, M)                          # (B, J, K)
                w = self.bench.weights
                scale = np.sqrt(w / (w.sum() * J))
                parts.append((d * scale).reshape(d.shape[0], -1))
            if fit.noise_weight > 0:
                rn = np.linalg.norm(M, axis=-1) / math.sqrt(M.shape[-3] * 3)
                parts.append(fit.noise_weight * rn.reshape(rn.shape[0], -1))
        parts.extend(self.extra_residuals(S))
        return np.concatenate(parts, axis=-1)

    def extra_residuals(self, S) -> list[np.ndarray]:
        """Residual blocks (B, m) added to every objective: the near-infrared weight and cap of ``[fit]``.

        The hook other penalties join; ``S`` (B, 3, n) the sensitivities of the batch.
        """
        fit = self.design.fit
        r = infrared_residuals(S, self.bench.E, self.wavelengths, cutoff_nm=fit.infrared_cutoff_nm,
                               weight=fit.infrared_weight, cap=fit.max_infrared_share)
        return [] if r is None else [r]



def fitted_matrix(m: Measures) -> FittedMatrix:
    """The matrix the measures used, as the ``[matrix]`` to store with a design."""
    method = m.matrix_method.replace(" (stored)", "")
    if method == "fixed":
        method = "least-squares"
    if m.matrix_scope == "shared":
        return FittedMatrix(method, "shared", tuple(tuple(float(v) for v in r) for r in m.matrices[0]))
    return FittedMatrix(method, "per-illuminant", per_illuminant=tuple(
        (ill, tuple(tuple(float(v) for v in r) for r in m.matrices[j])) for j, ill in enumerate(m.illuminants)))



# --------------------------------------------------------------------------
# A camera from a file
# --------------------------------------------------------------------------


def camera_from_design(design: Design, evaluator: DesignEvaluator | None = None) -> Camera:
    """The design as a :class:`Camera`: its sensitivities and matrix (stored, else fitted by its rule)."""
    ev = evaluator or DesignEvaluator(design)
    m = ev.measures(use_stored_matrix=design.matrix is not None)
    per = ()
    if m.matrix_scope == "per-illuminant":
        per = tuple((ill, m.matrices[j]) for j, ill in enumerate(m.illuminants))
    return Camera(design.name, ev.wavelengths, m.sensitivities, m.matrices[0], ev.primaries,
                  design.observer, m.matrix_method, per, ev.notes)


def load_camera(path, *, primaries: Primaries | str = "ITU-R BT.709", observer="2") -> Camera:
    """A camera from a design file (``.toml``) or a CSV of three sensitivities R, G, B.

    For a CSV the matrix is least squares over the 99 CIE 224:2017 samples
    under D65 to the linear RGB of ``primaries`` (white balance on the
    perfect diffuser first), on the file's own uniform grid (or resampled
    to 5 nm when irregular, said in the notes).

    References
    ----------
    SMPTE RP 177-1993; Lam (1985), Bradford.
    docs/methods.md §9.
    """
    p = Path(path)
    if p.suffix.lower() == ".toml":
        return camera_from_design(load_design(p))
    s = read_spectra_csv(p, kind="sensitivity")
    if len(s) != 3:
        raise WorkbenchError(f"{p}: expected three sensitivity columns R, G, B (got {len(s)}: "
                             f"{', '.join(s.names[:6])})")
    notes = list(s.notes)
    if not is_uniform(s.wavelengths):
        wl = grid(math.ceil(s.wavelengths[0] / 5) * 5, math.floor(s.wavelengths[-1] / 5) * 5, 5)
        s = s.resample(wl)
        notes.append(f"{p}: irregular grid resampled to 5 nm")
    wl = s.wavelengths
    prim = primaries_named(primaries) if isinstance(primaries, str) else primaries
    samples = ces_cie_224(wl, extrapolation="constant")
    _, tab = illuminant_on(wl, "D65")
    bench = ColourBench(wl, samples, {"D65": np.asarray(tab.values)}, prim, observer)
    res = bench.evaluate(s.flat(), "least-squares", "shared")
    notes.append(f"{p}: matrix least squares over the 99 CIE 224:2017 samples under D65 to {prim.name}")
    return Camera(p.stem, wl, s.flat(), res.matrices[0], prim, observer, "least-squares", (), tuple(notes))
