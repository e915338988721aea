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
needs the optimiser. The measures as functions of arrays (Luther residual,
SMI, noise report) and the typed results (:class:`Measures`,
:class:`BatchMeasures`) live in :mod:`workbench.analysis.measures_report`.
"""

from __future__ import annotations

import copy
import math
from pathlib import Path

import numpy as np

from workbench.analysis.camera import Camera, ColourBench, bradford_matrix
from workbench.colorimetry.cie import cmfs_on, illuminant_on, observer_label
from workbench.colorimetry.coordinates import Lab_to_XYZ, XYZ_to_uv_prime
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
from workbench.report.methods import METHODS, noise_method
from workbench.fileio.spectra_csv import read_spectra_csv
from workbench.colorimetry.targets import primaries_XYZ, target_cmfs
from workbench.analysis.signal_budget import signal_budget
from workbench.analysis.measures_report import (SMI_SLOPE, BatchMeasures, DeltaE00Stats, Measures, luther_residual,
                                                noise_report, sensitivity_metamerism_index)

__all__ = [
    "design_primaries",
    "DesignEvaluator",
    "fitted_matrix",
    "camera_from_design",
    "load_camera",
]


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
