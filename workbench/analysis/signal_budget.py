"""The signal a channel collects: photo-electrons per pixel from a scene, by the camera equation.

A grey card of reflectance ρ (Lambertian) under a scene illuminance E_v
(lux) from a light of relative SPD S(λ) sends to each pixel of a channel

    N_e = ρ·k·A·t·T_lens / (4 N²) · Σ_λ S(λ) s_c(λ) λ/(h c) Δλ

photo-electrons, where

* k = E_v / (683 lm/W · Σ S(λ) V(λ) Δλ) scales S to spectral irradiance in
  W·m⁻²·nm⁻¹ (V = ȳ of the CIE 1931 2° observer, CIE 15:2004);
* the card's radiance is L(λ) = ρ k S(λ)/π (Lambertian), and the image-plane
  irradiance on axis for a distant object is E_image = π L T / (4 N²) — the
  camera equation (ISO 12232:2019, § 4 / Annex: H = q L t / N² with
  q = π T v cos⁴θ / 4; here v = 1 (vignetting) and cos⁴θ = 1 on axis;
  from memory) — so E_image(λ) = ρ k S(λ) T / (4 N²);
* A = p² the pixel's area (pitch p; fill factor 1, microlenses ideal);
  t the exposure time; λ/(h c) photons per joule;
* s_c(λ) the channel's sensitivity as the design's chain gives it (every
  element, the sensor's quantum efficiency included, 0-1: electrons per
  photon), times T_lens when the lens is not in the chain (default 1).

Shot noise is Poisson: σ = √N_e, so SNR = √N_e (and √(N_e + σ_read²) with
read noise). Electrons above the full well clip; the budget says so.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from workbench.errors import WorkbenchError
from workbench.fileio.units import PLANCK_H, SPEED_OF_LIGHT
from workbench.colorimetry.cie import cmfs_on

__all__ = ["K_M", "SignalBudget", "signal_budget", "scene_irradiance_scale"]

#: Maximum luminous efficacy of radiation for photopic vision, lm/W (CIE 15:2004; SI candela definition).
K_M = 683.0
CHANNELS = ("R", "G", "B")


def scene_irradiance_scale(spd, wavelengths, lux: float) -> float:
    """k with k·S(λ) the spectral irradiance (W·m⁻²·nm⁻¹) of an SPD ``S`` at ``lux`` lx.

    E_v = 683 lm/W · Σ k S(λ) V(λ) Δλ on a uniform grid, V = ȳ (CIE 1931 2°).
    """
    wl = np.asarray(wavelengths, dtype=float)
    S = np.asarray(spd, dtype=float)
    step = float(wl[1] - wl[0])
    v = cmfs_on(wl, "2").values[:, 1]
    per_unit = K_M * float(S @ v) * step
    if not per_unit > 0:
        raise WorkbenchError("the scene illuminant has no light the eye sees (Σ S·V = 0); cannot scale it to lux")
    return float(lux) / per_unit


@dataclass(frozen=True)
class SignalBudget:
    """Photo-electrons per pixel per channel on a grey card and their shot-noise SNR.

    ``electrons`` (3,) before clipping; ``clipped`` (3,) bool (above the full
    well); ``snr_shot`` (3,) = √N_e; ``snr`` (3,) with read noise;
    ``image_irradiance_W_m2`` the grey's image-plane irradiance (all
    wavelengths, before the chain); the inputs as given.
    """

    electrons: np.ndarray
    clipped: np.ndarray
    snr_shot: np.ndarray
    snr: np.ndarray
    image_irradiance_W_m2: float
    inputs: dict
    method: str

    def rows(self) -> list[dict]:
        return [{"channel": ch, "electrons": float(self.electrons[k]), "clipped": bool(self.clipped[k]),
                 "snr_shot": float(self.snr_shot[k]), "snr_shot_db": 20 * math.log10(max(self.snr_shot[k], 1e-300)),
                 "snr": float(self.snr[k])} for k, ch in enumerate(CHANNELS)]

    def to_dict(self) -> dict:
        return {"inputs": self.inputs, "image_irradiance_W_m2": self.image_irradiance_W_m2,
                "channels": self.rows(), "method": self.method,
                "units": {"electrons": "photo-electrons per pixel", "snr": "ratio (σ = √N_e, plus read noise)"}}


def signal_budget(sensitivities, wavelengths, illuminant_spd, *, lux: float, f_number: float, exposure_s: float,
                  pixel_pitch_um: float, reflectance: float = 0.18, lens_transmittance: float = 1.0,
                  full_well_e: float | None = None, read_noise_e: float = 0.0,
                  illuminant: str = "the scene illuminant") -> SignalBudget:
    """Photo-electrons per pixel per channel from a grey card, by the camera equation (module notes).

    Parameters
    ----------
    sensitivities : (3, n) array_like
        Channel sensitivities, electrons per photon (0-1), on ``wavelengths``.
    wavelengths : (n,) array_like, nm, uniform
    illuminant_spd : (n,) array_like
        Relative SPD of the scene light.
    lux : float, lx
        Scene illuminance on the card.
    f_number : float
        Working f-number N of the lens.
    exposure_s : float, s
    pixel_pitch_um : float, µm
    reflectance : float, 0-1
        The grey card's (Lambertian) reflectance.
    lens_transmittance : float, 0-1
        A lens not in the chain (default 1: the chain holds it, or none).
    full_well_e, read_noise_e : float, electrons
        For clipping and the SNR with read noise.

    Returns
    -------
    SignalBudget

    References
    ----------
    ISO 12232:2019, *Photography — Digital still cameras — Determination of
    exposure index, ISO speed ratings, standard output sensitivity, and
    recommended exposure index* (the camera equation, H = q L t / N²,
    q = π T v cos⁴θ / 4; from memory). CIE 15:2004 (V = ȳ, 683 lm/W).
    docs/methods.md §22.
    """
    checks = {"lux": (lux, 0, math.inf), "f_number": (f_number, 0.5, 1000), "exposure_s": (exposure_s, 0, 3600),
              "pixel_pitch_um": (pixel_pitch_um, 0, 1000)}
    for key, (v, lo, hi) in checks.items():
        if not (isinstance(v, (int, float)) and math.isfinite(v) and lo < v <= hi):
            raise WorkbenchError(f"{key} must be a number in ({lo:g}, {hi:g}] (got {v!r})")
    for key, v in (("reflectance", reflectance), ("lens_transmittance", lens_transmittance)):
        if not (isinstance(v, (int, float)) and 0 < v <= 1):
            raise WorkbenchError(f"{key} must be a fraction in (0, 1] (got {v!r})")
    wl = np.asarray(wavelengths, dtype=float)
    s = np.asarray(sensitivities, dtype=float)
    E = np.asarray(illuminant_spd, dtype=float)
    step = float(wl[1] - wl[0])
    k = scene_irradiance_scale(E, wl, lux)
    factor = reflectance * k / (4.0 * f_number ** 2)                       # E_image(λ) = factor·S(λ)·T
    area = (pixel_pitch_um * 1e-6) ** 2
    photons_per_joule = wl * 1e-9 / (PLANCK_H * SPEED_OF_LIGHT)
    electrons = factor * lens_transmittance * area * exposure_s * (s * (E * photons_per_joule)).sum(axis=-1) * step
    snr_shot = np.sqrt(electrons)
    snr = electrons / np.sqrt(electrons + read_noise_e ** 2)
    clipped = electrons > full_well_e if full_well_e is not None else np.zeros(3, dtype=bool)
    inputs = {"lux": lux, "illuminant": illuminant, "f_number": f_number, "exposure_s": exposure_s,
              "pixel_pitch_um": pixel_pitch_um, "reflectance": reflectance,
              "lens_transmittance": lens_transmittance, "full_well_e": full_well_e, "read_noise_e": read_noise_e}
    return SignalBudget(
        electrons, clipped, snr_shot, snr, float(factor * E.sum() * step), inputs,
        method=("camera equation for a distant object on axis, E_image = π L T / (4 N²) with L = ρ E/π "
                "(Lambertian grey; ISO 12232 q = π T v cos⁴θ / 4 with v = 1, cos⁴θ = 1); scene SPD scaled to "
                f"{lux:g} lx by 683 lm/W · Σ S V Δλ; N_e = Σ E_image(λ) s(λ) A t λ/(h c) Δλ, A = pitch², fill "
                "factor 1; SNR_shot = √N_e, SNR with read noise = N_e/√(N_e + σ_read²)"),
    )
