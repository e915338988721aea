"""Light sources on camera: the camera fidelity index and two fixtures compared.

See :mod:`workbench.analysis.light` for the method (EBU Tech 3355 § 1.5.1
scoring on open samples, not the EBU's index) and the definitions.

References
----------
EBU Tech 3355 (2017), *Method for the assessment of the colorimetric
properties of luminaires*, § 1.5.1 (the scoring formula).
CIE 13.3-1995 and CIE 224:2017 (the open samples); CIE 15:2004 (CIELAB).
Lam, K. M. (1985), the Bradford chromatic adaptation transform.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from functools import lru_cache

import numpy as np

from workbench.analysis.camera import bradford_matrix
from workbench.analysis.light_indices import cct_duv, emission_XYZ
from workbench.analysis.light_spd import (
    DAYLIGHT_CCT_RANGE,
    light_label,
    light_short_name,
    reference_illuminant,
    working_spd,
)
from workbench.colorimetry.cie import cmfs_on
from workbench.colorimetry.coordinates import XYZ_to_Lab, XYZ_to_uv_prime, delta_E_CIE2000
from workbench.colorimetry.primaries import white_chromaticity
from workbench.colorimetry.samples import ces_cie_224, tcs_cie_13_3
from workbench.errors import WorkbenchError
from workbench.model.spectra import Spectra, grid, resample_values

__all__ = [
    "MATCH_DELTA_E00",
    "DIFFER_DELTA_E00",
    "camera_fidelity_score",
    "CameraFidelity",
    "camera_fidelity",
    "ComparisonMode",
    "LightComparison",
    "compare_lights",
]

#: Mean ΔE00 at or below which two renderings "match" (about one just-noticeable difference; common practice).
MATCH_DELTA_E00 = 1.0
#: Mean ΔE00 at or above which two renderings "differ" (clearly visible side by side; common practice).
DIFFER_DELTA_E00 = 2.0

_Q_HALF = 3.16
_Q_EXPONENT = 2.4
#: CIE 13.3-1995: Ra is meaningful when the test light's chromaticity lies

_SET_LABEL = {"cie-13.3": "CIE 13.3 TCS01-TCS14", "cie-224": "CIE 224:2017 CES01-CES99"}


# --------------------------------------------------------------------------
# Camera fidelity index
# --------------------------------------------------------------------------


def camera_fidelity_score(delta_E00, axis=-1) -> tuple[np.ndarray, np.ndarray]:
    """Score ΔE00 values with the formula of EBU Tech 3355 § 1.5.1.

    Parameters
    ----------
    delta_E00 : (..., K) array_like
        ΔE00 per sample.

    Returns
    -------
    index : (...) ndarray
        100 / (1 + (ΔE_a / 3.16)^2.4), 0-100; 100 for no difference, 50 for
        ΔE_a = 3.16.
    delta_E_a : (...) ndarray
        (mean ΔE00⁴)^¼ over ``axis``.

    References
    ----------
    EBU Tech 3355 (2017), *Method for the assessment of the colorimetric
    properties of luminaires*, § 1.5.1 (the scoring formula only).
    docs/methods.md §18.

    Examples
    --------
    >>> [round(float(v), 6) for v in camera_fidelity_score([3.16, 3.16])]
    [50.0, 3.16]
    """
    d = np.asarray(delta_E00, dtype=float)
    dea = np.mean(d ** 4, axis=axis) ** 0.25
    return 100.0 / (1.0 + (dea / _Q_HALF) ** _Q_EXPONENT), dea


@lru_cache(maxsize=16)
def _samples_on(key: bytes):
    wl = np.frombuffer(key, dtype=float)
    t = tcs_cie_13_3(wl, extrapolation="constant")
    c = ces_cie_224(wl, extrapolation="constant")
    R = np.vstack([t.flat(), c.flat()])
    R.setflags(write=False)
    names = tuple(t.names) + tuple(c.names)
    sets = ("cie-13.3",) * len(t) + ("cie-224",) * len(c)
    notes = tuple(n for n in t.notes + c.notes if "extrapolated" in n or "resampled" in n)
    return R, names, sets, notes


def _camera_on(camera, wl: np.ndarray):
    """The camera with its sensitivities on ``wl`` (inside its own range), and the note."""
    cw = np.asarray(camera.wavelengths, dtype=float)
    if wl.size == cw.size and np.allclose(wl, cw):
        return camera, None
    S, used = resample_values(camera.sensitivities, cw, wl)
    inside = (cw >= wl[0] - 1e-9) & (cw <= wl[-1] + 1e-9)
    d = np.diff(cw)
    step = f"{d[0]:g} nm" if np.allclose(d, d[0]) else "irregular steps"
    note = (f"camera {camera.name}: sensitivities ({cw[0]:g}-{cw[-1]:g} nm at {step}) put on the light's "
            f"{wl[0]:g}-{wl[-1]:g} nm grid at {wl[1] - wl[0]:g} nm "
            f"({'exact at its own grid points, ' if np.all(np.isin(cw[inside], wl)) else ''}{used} between)")
    return replace(camera, wavelengths=wl, sensitivities=S), note


def _camera_grid(camera, w: Spectra, label: str) -> tuple[np.ndarray, list[str]]:
    cw = np.asarray(camera.wavelengths, dtype=float)
    wl = w.wavelengths
    keep = (wl >= cw[0] - 1e-9) & (wl <= cw[-1] + 1e-9)
    if keep.sum() < 6:
        raise WorkbenchError(f"camera {camera.name} ({cw[0]:g}-{cw[-1]:g} nm) and {label} "
                             f"({wl[0]:g}-{wl[-1]:g} nm) share fewer than 6 wavelengths")
    g = wl[keep]
    notes = []
    if cw[0] < wl[0] - 1e-9 or cw[-1] > wl[-1] + 1e-9:
        # the share of each channel's sensitivity area lost where the light was not measured
        inside = (cw >= g[0] - 1e-9) & (cw <= g[-1] + 1e-9)
        S = np.asarray(camera.sensitivities, dtype=float)
        lost = 1 - np.trapezoid(S[:, inside], cw[inside], axis=1) / np.trapezoid(S, cw, axis=1)
        notes.append(f"camera {camera.name} reaches {cw[0]:g}-{cw[-1]:g} nm but {label} covers "
                     f"{wl[0]:g}-{wl[-1]:g} nm: the camera is evaluated over {g[0]:g}-{g[-1]:g} nm only "
                     f"(share of each channel's sensitivity area left out: R {lost[0]:.1%}, "
                     f"G {lost[1]:.1%}, B {lost[2]:.1%})")
    return g, notes


@dataclass(frozen=True, eq=False)
class CameraFidelity:
    """The camera fidelity index of one light on one camera (module notes for the method).

    Arrays over the K samples: ``delta_E00`` (K,), ``Lab_test`` and
    ``Lab_reference`` (K, 3) against the display white (Y = 100),
    ``uv_test`` and ``uv_reference`` (K, 2) CIE 1976 u′v′ of the
    renderings. ``index`` is the Tech 3355-scored value over all samples,
    ``by_set`` the same per sample set.
    """

    camera: str
    light: str
    reference: str
    CCT: float
    sample_names: tuple[str, ...]
    sample_sets: tuple[str, ...]
    delta_E00: np.ndarray
    Lab_test: np.ndarray
    Lab_reference: np.ndarray
    uv_test: np.ndarray
    uv_reference: np.ndarray
    index: float
    delta_E_a: float
    by_set: dict
    matrix: np.ndarray
    primaries: str
    method: str
    notes: tuple[str, ...] = field(default=())

    @property
    def stats(self) -> dict:
        d = self.delta_E00
        return {"mean": float(d.mean()), "median": float(np.median(d)), "p95": float(np.percentile(d, 95)),
                "max": float(d.max()), "worst": self.sample_names[int(np.argmax(d))]}

    def to_dict(self) -> dict:
        return {
            "camera": self.camera,
            "light": self.light,
            "reference": self.reference,
            "camera_fidelity_index": self.index,
            "delta_E_a": self.delta_E_a,
            "delta_E00": {**self.stats},
            "by_set": {k: dict(v) for k, v in self.by_set.items()},
            "samples": [
                {"name": n, "set": s, "delta_E00": float(d),
                 "u_prime_reference": float(ur[0]), "v_prime_reference": float(ur[1]),
                 "u_prime_test": float(ut[0]), "v_prime_test": float(ut[1])}
                for n, s, d, ur, ut in zip(self.sample_names, self.sample_sets, self.delta_E00,
                                           self.uv_reference, self.uv_test)
            ],
            "matrix": self.matrix.tolist(),
            "display_primaries": self.primaries,
            "method": self.method,
        }


_FIDELITY_METHOD = (
    "camera fidelity index (this workbench's own): the camera white-balanced on the perfect diffuser "
    "under the test light and under the reference illuminant at the same CCT (Planckian below 5000 K, "
    "CIE daylight at and above, CIE 13.3 rule), the camera's matrix to linear display RGB, CIELAB "
    "against the display white, ΔE00 (CIE 142-2001) per sample between the two renderings of "
    "CIE 13.3 TCS01-TCS14 and CIE 224:2017 CES01-CES99; scored with the EBU Tech 3355 § 1.5.1 "
    "formula 100/(1 + (ΔE_a/3.16)^2.4), ΔE_a = (mean ΔE00⁴)^¼ — on open samples and this "
    "workbench's camera model, so not the EBU's index; no transfer function, no clipping"
)


def camera_fidelity(camera, spd: Spectra, *, cct: float | None = None, extrapolation: str = "none"
                    ) -> CameraFidelity:
    """The camera fidelity index of a light on a camera.

    Parameters
    ----------
    camera : workbench.analysis.camera.Camera
        Sensitivities, matrix (balanced camera RGB → linear display RGB)
        and display primaries, e.g. from :func:`workbench.analysis.evaluator.load_camera`.
        The camera's ``matrix`` is used under both lights (a design with
        one matrix per illuminant gives its first).
    spd : Spectra
        The test light (one emission spectrum).
    cct : float, optional
        The CCT of the reference, K; default the light's own (Ohno 2013).
    extrapolation : {'none', 'constant'}
        For SPDs not covering 380-780 nm.

    Returns
    -------
    CameraFidelity

    Notes
    -----
    For sample k with reflectance R_k under light E, the camera records
    raw = Σ S R_k E Δλ; white balance divides by Σ S E Δλ (the perfect
    diffuser), the matrix M gives display RGB, the RP 177 matrix N gives
    XYZ (display white Y = 1) and CIELAB is taken against the display
    white. ΔE00 compares the renderings under the test light and the
    reference. The perfect diffuser renders as the display white under
    both, so its ΔE00 is 0 by construction, and the reference against
    itself scores exactly 100. For a Luther camera (S = N⁻¹ x̄ȳz̄, M = I)
    the balance is a von Kries scaling in the display primaries' RGB, and
    the result equals that colorimetric computation.

    References
    ----------
    EBU Tech 3355 (2017), *Method for the assessment of the colorimetric
    properties of luminaires*, § 1.5.1 (the scoring formula only).
    CIE 13.3-1995; CIE 224:2017; CIE 142-2001.
    docs/methods.md §18.
    """
    w = working_spd(spd, extrapolation=extrapolation)
    label = light_label(spd)
    if cct is None:
        XYZ = emission_XYZ(w.wavelengths, w.flat()[0])
        if not XYZ[1] > 0:
            raise WorkbenchError(f"{label}: the SPD has no visible power (Σ E ȳ Δλ = {XYZ[1]:.3g})")
        cct, _ = cct_duv(XYZ)
    if cct > DAYLIGHT_CCT_RANGE[1]:
        raise WorkbenchError(f"{label}: CCT {cct:.0f} K lies above {DAYLIGHT_CCT_RANGE[1]:g} K, where CIE daylight "
                             "(the reference) is not defined; no camera fidelity index")
    g, notes = _camera_grid(camera, w, label)
    cam, note = _camera_on(camera, g)
    if note:
        notes.append(note)
    E_t = w.flat()[0][np.isin(w.wavelengths, g)]
    ref_label, E_r = reference_illuminant(cct, g)
    R, names, sets, snotes = _samples_on(g.tobytes())
    notes += list(snotes)
    white = 100 * cam.display_white_XYZ
    if np.any(cam.raw(E_t) <= 0) or np.any(cam.raw(E_r) <= 0):
        raise WorkbenchError(f"camera {camera.name}: a channel records nothing of the white under "
                             f"{label} or its reference; cannot white-balance")
    XYZ_t = cam.XYZ(R, E_t)
    XYZ_r = cam.XYZ(R, E_r)
    Lab_t = XYZ_to_Lab(100 * XYZ_t, white)
    Lab_r = XYZ_to_Lab(100 * XYZ_r, white)
    d = delta_E_CIE2000(Lab_t, Lab_r)
    index, dea = camera_fidelity_score(d)
    sets_arr = np.array(sets)
    by_set = {}
    for s in dict.fromkeys(sets):
        m = sets_arr == s
        i, a = camera_fidelity_score(d[m])
        by_set[_SET_LABEL[s]] = {"camera_fidelity_index": float(i), "delta_E_a": float(a),
                                 "mean": float(d[m].mean()), "max": float(d[m].max()), "count": int(m.sum())}
    if camera.per_illuminant:
        notes.append(f"camera {camera.name}: one matrix per illuminant in the design; the first "
                     f"({camera.per_illuminant[0][0]}) is used under both lights")
    notes.append(f"camera {camera.name}: matrix {camera.matrix_method} to {camera.primaries.name}; "
                 f"reference {ref_label} on the same {g[0]:g}-{g[-1]:g} nm grid")
    return CameraFidelity(camera.name, light_short_name(spd), ref_label, float(cct), names, sets, d, Lab_t, Lab_r,
                          XYZ_to_uv_prime(XYZ_t), XYZ_to_uv_prime(XYZ_r), float(index), float(dea), by_set,
                          np.asarray(cam.matrix_for(None), dtype=float), camera.primaries.name,
                          _FIDELITY_METHOD, tuple(dict.fromkeys(notes)))


# --------------------------------------------------------------------------
# Two fixtures
# --------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class ComparisonMode:
    """One way of comparing lights A and B: per-sample ΔE00 to the eye and on camera, and the verdict.

    ``eye`` and ``camera`` are (K,) ΔE00 (``camera`` None without a
    camera); ``white_eye`` / ``white_camera`` the ΔE00 of the perfect
    diffuser; ``verdict`` one of the phrases of :func:`_verdict`.
    """

    name: str
    definition: str
    eye: np.ndarray
    camera: np.ndarray | None
    white_eye: float
    white_camera: float | None
    verdict: str
    eye_not_camera: tuple[str, ...]
    camera_not_eye: tuple[str, ...]

    @property
    def eye_mean(self) -> float:
        return float(self.eye.mean())

    @property
    def camera_mean(self) -> float | None:
        return None if self.camera is None else float(self.camera.mean())

    def to_dict(self, names) -> dict:
        d = {
            "definition": self.definition,
            "eye": {"mean": self.eye_mean, "max": float(self.eye.max()), "white": self.white_eye},
            "camera": None if self.camera is None else {
                "mean": self.camera_mean, "max": float(self.camera.max()), "white": self.white_camera},
            "verdict": self.verdict,
            "match_to_eye_not_on_camera": self.verdict == _VERDICTS["eye"],
            "match_on_camera_not_to_eye": self.verdict == _VERDICTS["camera"],
            "samples_match_to_eye_not_on_camera": list(self.eye_not_camera),
            "samples_match_on_camera_not_to_eye": list(self.camera_not_eye),
            "per_sample": [
                {"name": n, "eye": float(e), "camera": None if self.camera is None else float(self.camera[k])}
                for k, (n, e) in enumerate(zip(names, self.eye))
            ],
        }
        return d


_VERDICTS = {
    "eye": "match to the eye but not on camera",
    "camera": "match on camera but not to the eye",
    "both": "match to the eye and on camera",
    "neither": "differ to the eye and on camera",
    "eye only": "match to the eye (no camera given)",
    "differ eye only": "differ to the eye (no camera given)",
    "between": "no clear verdict (a mean ΔE00 between the thresholds)",
}


def _verdict(eye: float, cam: float | None, match: float, differ: float) -> str:
    if cam is None:
        return _VERDICTS["eye only"] if eye <= match else (
            _VERDICTS["differ eye only"] if eye >= differ else _VERDICTS["between"])
    if eye <= match and cam >= differ:
        return _VERDICTS["eye"]
    if cam <= match and eye >= differ:
        return _VERDICTS["camera"]
    if eye <= match and cam <= match:
        return _VERDICTS["both"]
    if eye >= differ and cam >= differ:
        return _VERDICTS["neither"]
    return _VERDICTS["between"]


@dataclass(frozen=True, eq=False)
class LightComparison:
    """Two lights compared to the eye and on camera (see :func:`compare_lights`)."""

    light_a: str
    light_b: str
    CCT_a: float
    CCT_b: float
    uv_prime_a: tuple[float, float]
    uv_prime_b: tuple[float, float]
    delta_u_prime_v_prime: float
    camera: str | None
    sample_names: tuple[str, ...]
    sample_sets: tuple[str, ...]
    modes: dict
    match: float
    differ: float
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict:
        return {
            "light_a": self.light_a,
            "light_b": self.light_b,
            "CCT_a": self.CCT_a,
            "CCT_b": self.CCT_b,
            "u_prime_v_prime_a": list(self.uv_prime_a),
            "u_prime_v_prime_b": list(self.uv_prime_b),
            "delta_u_prime_v_prime": self.delta_u_prime_v_prime,
            "camera": self.camera,
            "thresholds": {"match_delta_E00": self.match, "differ_delta_E00": self.differ,
                           "rule": "on the mean ΔE00 over the 113 samples: a match at or below "
                                   f"{self.match:g}, a difference at or above {self.differ:g} "
                                   "(about one and two just-noticeable differences; common practice); "
                                   "the same thresholds per sample for the sample lists"},
            "modes": {k: m.to_dict(self.sample_names) for k, m in self.modes.items()},
            "method": {
                "delta_u_prime_v_prime": "Euclidean distance of the two lights in CIE 1976 u′v′ (CIE 1931 2°)",
            },
        }


def _common_grid(a: Spectra, b: Spectra) -> tuple[np.ndarray, np.ndarray, np.ndarray, list[str]]:
    wa, wb = a.wavelengths, b.wavelengths
    if wa.size == wb.size and np.allclose(wa, wb):
        return wa, a.flat()[0], b.flat()[0], []
    lo = max(wa[0], wb[0])
    hi = min(wa[-1], wb[-1])
    g = grid(math.ceil(lo - 1e-9), math.floor(hi + 1e-9), 1.0)
    # linear: emission lines must not ring (the workbench's rule for emission tables)
    ra = a.resample(g, method="linear")
    rb = b.resample(g, method="linear")
    notes = [n for n in (ra.notes[-1:] if ra is not a else ()) + (rb.notes[-1:] if rb is not b else ())]
    return g, ra.flat()[0], rb.flat()[0], [f"comparison on {g[0]:g}-{g[-1]:g} nm at 1 nm: {n}" for n in notes]


def compare_lights(spd_a: Spectra, spd_b: Spectra, *, camera=None, match: float = MATCH_DELTA_E00,
                   differ: float = DIFFER_DELTA_E00, extrapolation: str = "none") -> LightComparison:
    """Compare two lights to the eye and on a camera.

    Parameters
    ----------
    spd_a, spd_b : Spectra
        The two lights (one emission spectrum each); A is the one the eye
        adapts to and the camera is balanced on in the side-by-side mode.
    camera : Camera, optional
        Without one only the eye is compared.
    match, differ : float
        Mean ΔE00 thresholds: at or below ``match`` the renderings match,
        at or above ``differ`` they differ; in between there is no verdict.
    extrapolation : {'none', 'constant'}

    Returns
    -------
    LightComparison
        Δu′v′ of the two lights and two modes:

        ``'side-by-side'`` — both lights in one scene. Eye: the samples'
        CIELAB under A and under B, both against the perfect diffuser under
        A (CIE 15:2004 § 8.2.1; each light scaled to the same luminance of
        the white, so B's white mismatch counts). Camera: white-balanced on
        A's perfect diffuser, the same gains and matrix under B (same
        luminance), CIELAB against the display white.

        ``'each-adapted'`` — each light in its own scene. Eye: each
        sample's XYZ under each light adapted to D65 by the linear Bradford
        transform (Lam 1985), CIELAB against D65; only the rendering
        differs, not the white. Camera: balanced on each light's own
        perfect diffuser, the same matrix.

        In each mode ``eye`` and ``camera`` hold the ΔE00 (CIE 142-2001)
        of each of the 113 samples (CIE 13.3 TCS01-TCS14, CIE 224 CES01-99)
        between A and B, and the verdict compares their means with the
        thresholds.

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 8.2.1; CIE 142-2001.
    Lam, K. M. (1985), the Bradford transform.
    docs/methods.md §18.
    """
    if not (0 <= match < differ):
        raise WorkbenchError(f"thresholds must satisfy 0 <= match < differ (got match {match:g}, "
                             f"differ {differ:g})")
    A = working_spd(spd_a, extrapolation=extrapolation)
    B = working_spd(spd_b, extrapolation=extrapolation)
    la, lb = light_label(spd_a), light_label(spd_b)
    g, Ea, Eb, notes = _common_grid(A, B)
    notes = list(A.notes) + list(B.notes) + notes
    cm = cmfs_on(g).values
    step = float(g[1] - g[0])
    Wa, Wb = Ea @ cm * step, Eb @ cm * step
    for lab, W in ((la, Wa), (lb, Wb)):
        if not W[1] > 0:
            raise WorkbenchError(f"{lab}: the SPD has no visible power (Σ E ȳ Δλ = {W[1]:.3g})")
    CCT_a, _ = cct_duv(Wa)
    CCT_b, _ = cct_duv(Wb)
    uva, uvb = XYZ_to_uv_prime(Wa), XYZ_to_uv_prime(Wb)
    duv = float(np.hypot(*(uva - uvb)))
    R, names, sets, snotes = _samples_on(g.tobytes())
    notes += list(snotes)
    # eye: object colours, each light normalised to white Y = 100
    XYZ_a = (R * Ea) @ cm * step * (100 / Wa[1])
    XYZ_b = (R * Eb) @ cm * step * (100 / Wb[1])
    wa, wb = 100 * Wa / Wa[1], 100 * Wb / Wb[1]
    side_eye = delta_E_CIE2000(XYZ_to_Lab(XYZ_a, wa), XYZ_to_Lab(XYZ_b, wa))
    white_side_eye = float(delta_E_CIE2000(XYZ_to_Lab(wa, wa), XYZ_to_Lab(wb, wa)))
    _, d65_xy = white_chromaticity("D65")
    d65 = np.array([d65_xy[0] / d65_xy[1], 1.0, (1 - d65_xy.sum()) / d65_xy[1]]) * 100
    Ma, Mb = bradford_matrix(wa, d65), bradford_matrix(wb, d65)
    own_eye = delta_E_CIE2000(XYZ_to_Lab(XYZ_a @ Ma.T, d65), XYZ_to_Lab(XYZ_b @ Mb.T, d65))
    side_cam = own_cam = None
    white_side_cam = white_own_cam = None
    cam_name = None
    if camera is not None:
        cam_name = camera.name
        cw = np.asarray(camera.wavelengths, dtype=float)
        keep = (g >= cw[0] - 1e-9) & (g <= cw[-1] + 1e-9)
        if keep.sum() < 6:
            raise WorkbenchError(f"camera {camera.name} ({cw[0]:g}-{cw[-1]:g} nm) and the lights "
                                 f"({g[0]:g}-{g[-1]:g} nm) share fewer than 6 wavelengths")
        gc = g[keep]
        if cw[0] < g[0] - 1e-9 or cw[-1] > g[-1] + 1e-9:
            notes.append(f"camera {camera.name} reaches {cw[0]:g}-{cw[-1]:g} nm; evaluated over "
                         f"{gc[0]:g}-{gc[-1]:g} nm, where both lights were measured")
        cam, note = _camera_on(camera, gc)
        if note:
            notes.append(note)
        Rc = R[:, keep]
        ea, eb = Ea[keep] * (100 / Wa[1]), Eb[keep] * (100 / Wb[1])
        raw_wa, raw_wb = cam.raw(ea), cam.raw(eb)
        if np.any(raw_wa <= 0) or np.any(raw_wb <= 0):
            raise WorkbenchError(f"camera {camera.name}: a channel records nothing of the white under "
                                 "one of the lights; cannot white-balance")
        Mx = cam.primaries.matrix_RGB_to_XYZ @ cam.matrix_for(None)
        white = 100 * cam.display_white_XYZ

        def lab(raw, raw_white):
            return XYZ_to_Lab(100 * (raw / raw_white) @ Mx.T, white)

        La = lab(cam.raw(Rc * ea), raw_wa)
        side_cam = delta_E_CIE2000(La, lab(cam.raw(Rc * eb), raw_wa))
        white_side_cam = float(delta_E_CIE2000(lab(raw_wa, raw_wa), lab(raw_wb, raw_wa)))
        own_cam = delta_E_CIE2000(La, lab(cam.raw(Rc * eb), raw_wb))
        white_own_cam = 0.0
    else:
        notes.append("no camera given: the lights are compared to the eye only")

    def per_sample(eye, cam):
        if cam is None:
            return (), ()
        e_not_c = tuple(n for n, e, c in zip(names, eye, cam) if e <= match and c >= differ)
        c_not_e = tuple(n for n, e, c in zip(names, eye, cam) if c <= match and e >= differ)
        return e_not_c, c_not_e

    side_def = (f"both lights in one scene, adapted to / balanced on {la}: eye = CIELAB of the samples "
                f"under {la} and under {lb} against the perfect diffuser under {la} (CIE 15:2004 § 8.2.1, "
                "lights at equal luminance); camera = white balance on the perfect diffuser under "
                f"{la}, the same gains and matrix under {lb}, CIELAB against the display white; ΔE00")
    own_def = ("each light in its own scene: eye = the samples' XYZ under each light adapted to D65 by "
               "the linear Bradford transform, CIELAB against D65; camera = balanced on each light's own "
               "perfect diffuser, the same matrix, CIELAB against the display white; ΔE00")
    modes = {}
    for key, definition, eye, cam, we, wc in (
        ("side-by-side", side_def, side_eye, side_cam, white_side_eye, white_side_cam),
        ("each-adapted", own_def, own_eye, own_cam, 0.0, white_own_cam),
    ):
        v = _verdict(float(eye.mean()), None if cam is None else float(cam.mean()), match, differ)
        enc, cne = per_sample(eye, cam)
        modes[key] = ComparisonMode(key, definition, eye, cam, we, wc, v, enc, cne)
    return LightComparison(light_short_name(spd_a), light_short_name(spd_b), CCT_a, CCT_b, (float(uva[0]), float(uva[1])), (float(uvb[0]), float(uvb[1])),
                           duv, cam_name, names, sets, modes, float(match), float(differ),
                           tuple(dict.fromkeys(notes)))
