"""Emitter (phosphor, LED, laser-band) sets: parametric bands and a bounded fit.

Each of the three emitters R, G, B is a sum of components: parametric bands
(:class:`Band`) and measured bands (:class:`MeasuredBand`, a spectrum taken
as it is, scaled by a weight). :func:`fit_emitter_set` moves the band
parameters within their bounds so that each emitter's chromaticity hits a
target primary and the equal-drive mix of the three hits the target white,
by bounded non-linear least squares.

Band shapes (amplitude A, peak λ_p in nm, width w = full width at half
maximum in nm; both shapes have their maximum A exactly at λ_p and their
half-maximum points exactly w apart):

``'gaussian'``
    S(λ) = A·exp(−½((λ − λ_p)/σ)²), σ = w / (2√(2 ln 2)). Symmetric in λ.
``'gaussian-wavenumber'``
    A Gaussian in wavenumber ν = 1/λ: S(λ) = A·exp(−ln 2·((1/λ − 1/λ_p)/h)²),
    with the half-width h (in nm⁻¹) chosen so the half-maximum points
    λ₁ = 1/(1/λ_p + h) and λ₂ = 1/(1/λ_p − h) are w apart:
    h = (√(1 + (w/λ_p)²) − 1)/w. Emission bands of phosphors and LEDs are
    closer to Gaussian in photon energy than in wavelength, which gives
    this shape its longer tail towards long wavelengths.

Scale: spectra are relative spectral radiance (units ``'relative'``);
luminance is Y = Σ S ȳ Δλ in those units.

References
----------
Branch, M. A., Coleman, T. F., & Li, Y. (1999). A subspace, interior, and
conjugate gradient method for large-scale bound-constrained minimization
problems. *SIAM J. Sci. Comput.*, 21(1), 1-23 (the 'trf' method of
``scipy.optimize.least_squares``).
CIE 15:2004, *Colorimetry*, §§ 7, 8.1 (XYZ, u′v′).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np
from scipy.optimize import least_squares

from workbench.colorimetry.coordinates import XYZ_to_uv_prime, XYZ_to_xy, xy_to_uv_prime
from workbench.errors import WorkbenchError
from workbench.report.html import emitter_fit_html
from workbench.colorimetry.primaries import Primaries
from workbench.model.spectra import Spectra, check_wavelengths
from workbench.colorimetry.tristimulus import emission_weights

__all__ = [
    "BAND_SHAPES",
    "band_values",
    "Band",
    "MeasuredBand",
    "Emitter",
    "emitter_spectra",
    "EmitterFit",
    "fit_emitter_set",
]

BAND_SHAPES = ("gaussian", "gaussian-wavenumber")
_LN2 = np.log(2.0)
_PRIMARY_NAMES = ("red", "green", "blue")


def band_values(shape: str, wavelengths, peak_nm, width_nm, amplitude=1.0) -> np.ndarray:
    """Values of parametric bands on ``wavelengths`` (n,) nm.

    ``peak_nm``, ``width_nm`` (FWHM) and ``amplitude`` broadcast together to
    a leading shape (...,); the result is (..., n). See the module notes for
    the shapes.

    >>> float(band_values('gaussian-wavenumber', [500.0, 530.0, 560.0], 530.0, 60.0)[1])
    1.0

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., §§ 7, 8.1.
    docs/methods.md §6.
    """
    if shape not in BAND_SHAPES:
        raise WorkbenchError(f"band shape must be one of {', '.join(BAND_SHAPES)} (got {shape!r})")
    wl = np.asarray(wavelengths, dtype=float)
    p = np.asarray(peak_nm, dtype=float)[..., None]
    w = np.asarray(width_nm, dtype=float)[..., None]
    a = np.asarray(amplitude, dtype=float)[..., None]
    if shape == "gaussian":
        sigma = w / (2 * np.sqrt(2 * _LN2))
        return a * np.exp(-0.5 * ((wl - p) / sigma) ** 2)
    h = (np.sqrt(1 + (w / p) ** 2) - 1) / w
    return a * np.exp(-_LN2 * ((1 / wl - 1 / p) / h) ** 2)


def _check_bounds(value: float, bounds, what: str) -> tuple[float, float]:
    lo, hi = (float(b) for b in bounds)
    if not lo < hi:
        raise WorkbenchError(f"{what} bounds must be (low, high) with low < high (got {bounds})")
    if not (np.isfinite(value) and lo <= value <= hi):
        raise WorkbenchError(f"{what} = {value:g} must lie within its bounds {lo:g}-{hi:g}")
    return lo, hi


@dataclass(frozen=True)
class Band:
    """A parametric emission band with its fit bounds.

    Parameters
    ----------
    shape : {'gaussian', 'gaussian-wavenumber'}
    peak_nm : float
        Wavelength of the maximum, nm.
    width_nm : float
        Full width at half maximum, nm.
    amplitude : float
        Value at the peak (relative radiance).
    peak_bounds, width_bounds, amplitude_bounds : (float, float)
        Limits of the fit (nm, nm, relative). Defaults 360-830 nm,
        2-200 nm, 0-1e6. The starting values must lie within them.
    fixed : tuple of str
        Parameters the fit must not move ('peak_nm', 'width_nm', 'amplitude').
    """

    shape: str
    peak_nm: float
    width_nm: float
    amplitude: float = 1.0
    peak_bounds: tuple[float, float] = (360.0, 830.0)
    width_bounds: tuple[float, float] = (2.0, 200.0)
    amplitude_bounds: tuple[float, float] = (0.0, 1e6)
    fixed: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        if self.shape not in BAND_SHAPES:
            raise WorkbenchError(f"band shape must be one of {', '.join(BAND_SHAPES)} (got {self.shape!r})")
        object.__setattr__(self, "peak_bounds", _check_bounds(self.peak_nm, self.peak_bounds, "peak_nm"))
        object.__setattr__(self, "width_bounds", _check_bounds(self.width_nm, self.width_bounds, "width_nm"))
        object.__setattr__(self, "amplitude_bounds",
                           _check_bounds(self.amplitude, self.amplitude_bounds, "amplitude"))
        if self.width_bounds[0] <= 0:
            raise WorkbenchError(f"width_nm lower bound must be > 0 nm (got {self.width_bounds[0]:g})")
        bad = [f for f in self.fixed if f not in self.PARAMETERS]
        if bad:
            raise WorkbenchError(f"fixed must name {', '.join(self.PARAMETERS)} (got {', '.join(bad)})")
        object.__setattr__(self, "fixed", tuple(self.fixed))

    PARAMETERS = ("peak_nm", "width_nm", "amplitude")

    def values(self, wavelengths) -> np.ndarray:
        return band_values(self.shape, wavelengths, self.peak_nm, self.width_nm, self.amplitude)

    def to_dict(self) -> dict:
        return {"type": "band", "shape": self.shape, "peak_nm": self.peak_nm,
                "width_nm": self.width_nm, "amplitude": self.amplitude}


@dataclass(frozen=True, eq=False)
class MeasuredBand:
    """A measured emission spectrum taken as it is, scaled by ``weight``.

    ``wavelengths`` (n,) nm and ``values`` (n,) relative radiance; the fit
    needs them on its own grid (nothing is resampled here).
    """

    name: str
    wavelengths: np.ndarray
    spectrum: np.ndarray
    weight: float = 1.0
    weight_bounds: tuple[float, float] = (0.0, 1e6)
    fixed: tuple[str, ...] = ()

    PARAMETERS = ("weight",)

    def __post_init__(self) -> None:
        wl = check_wavelengths(self.wavelengths, what=f"wavelengths of {self.name}")
        v = np.asarray(self.spectrum, dtype=float)
        if v.shape != wl.shape:
            raise WorkbenchError(f"measured band {self.name!r} must be shaped ({wl.size},) (got {v.shape})")
        object.__setattr__(self, "wavelengths", wl)
        object.__setattr__(self, "spectrum", v)
        object.__setattr__(self, "weight_bounds", _check_bounds(self.weight, self.weight_bounds, "weight"))
        object.__setattr__(self, "fixed", tuple(self.fixed))

    @classmethod
    def from_spectra(cls, spectra: Spectra, name: str, **kw) -> "MeasuredBand":
        """The spectrum ``name`` of an emission ``Spectra`` (e.g. read from CSV)."""
        if spectra.kind != "emission":
            raise WorkbenchError(f"measured band {name!r} must be emission data (got {spectra.kind})")
        return cls(name, spectra.wavelengths, spectra[name], **kw)

    def values(self, wavelengths) -> np.ndarray:
        wl = np.asarray(wavelengths, dtype=float)
        if not np.array_equal(wl, self.wavelengths):
            raise WorkbenchError(
                f"measured band {self.name!r} is on another wavelength grid than the fit; resample it first"
            )
        return self.weight * self.spectrum

    def to_dict(self) -> dict:
        return {"type": "measured", "name": self.name, "weight": self.weight}


@dataclass(frozen=True)
class Emitter:
    """One emitter: a name and its components (bands and measured bands)."""

    name: str
    components: tuple

    def __post_init__(self) -> None:
        comps = tuple(self.components)
        if not comps:
            raise WorkbenchError(f"emitter {self.name!r} needs at least one component")
        for c in comps:
            if not isinstance(c, (Band, MeasuredBand)):
                raise WorkbenchError(
                    f"emitter {self.name!r} components must be Band or MeasuredBand (got {type(c).__name__})"
                )
        object.__setattr__(self, "components", comps)

    def values(self, wavelengths) -> np.ndarray:
        return sum(c.values(wavelengths) for c in self.components)

    def to_dict(self) -> dict:
        return {"name": self.name, "components": [c.to_dict() for c in self.components]}


def emitter_spectra(emitters, wavelengths) -> Spectra:
    """The spectra (3, n) of three emitters on ``wavelengths`` nm, kind emission, relative."""
    wl = check_wavelengths(wavelengths)
    emitters = tuple(emitters)
    values = np.stack([e.values(wl) for e in emitters])
    return Spectra(wl, values, tuple(e.name for e in emitters), kind="emission", units="relative",
                   notes=("parametric emitter model",))


# -- the fit -----------------------------------------------------------------


def _parameter_table(emitters):
    """Free parameters as [(emitter i, component j, attribute, value, lo, hi)]."""
    rows = []
    for i, e in enumerate(emitters):
        for j, c in enumerate(e.components):
            for attr in c.PARAMETERS:
                if attr in c.fixed:
                    continue
                lo, hi = getattr(c, {"peak_nm": "peak_bounds", "width_nm": "width_bounds",
                                     "amplitude": "amplitude_bounds", "weight": "weight_bounds"}[attr])
                rows.append((i, j, attr, float(getattr(c, attr)), lo, hi))
    return rows


def _with_parameters(emitters, table, x):
    emitters = [list(e.components) for e in emitters]
    for (i, j, attr, *_), v in zip(table, x):
        emitters[i][j] = replace(emitters[i][j], **{attr: float(v)})
    return emitters


@dataclass(frozen=True, eq=False)
class EmitterFit:
    """Result of :func:`fit_emitter_set` (a value; the inputs are untouched).

    Attributes
    ----------
    emitters : tuple of Emitter
        The fitted emitters (new values with the fitted parameters).
    spectra : Spectra
        Their spectra (3, n), relative radiance.
    target : Primaries
    primaries_xy : (3, 2) ndarray
        Chromaticities reached.
    white_xy : (2,) ndarray
        Chromaticity of the equal-drive mix reached.
    delta_uv_primaries : (3,) ndarray
        Δu′v′ of each primary from its target (CIE 1976 UCS distance).
    delta_uv_white : float
    white_Y, white_Y_target : float
        Luminance of the mix, Σ S ȳ Δλ (relative).
    success : bool
        True when the optimiser converged and every Δu′v′ is within
        ``tolerance_uv``.
    message : str
    cost : float
        ½ Σ residual² at the end.
    nfev : int
    at_bounds : tuple of str
        Parameters that ended on a bound, e.g. ``'red band 1 peak_nm = 610 (upper bound)'``.
    """

    emitters: tuple
    spectra: Spectra
    target: Primaries
    primaries_xy: np.ndarray
    white_xy: np.ndarray
    delta_uv_primaries: np.ndarray
    delta_uv_white: float
    white_Y: float
    white_Y_target: float
    success: bool
    message: str
    cost: float
    nfev: int
    tolerance_uv: float
    at_bounds: tuple[str, ...] = field(default=())

    def to_dict(self) -> dict:
        return {
            "success": self.success,
            "message": self.message,
            "target": self.target.to_dict(),
            "primaries_xy": self.primaries_xy.tolist(),
            "white_xy": self.white_xy.tolist(),
            "delta_uv_primaries": self.delta_uv_primaries.tolist(),
            "delta_uv_white": self.delta_uv_white,
            "white_Y_relative": self.white_Y,
            "white_Y_target_relative": self.white_Y_target,
            "tolerance_uv": self.tolerance_uv,
            "cost": self.cost,
            "nfev": self.nfev,
            "at_bounds": list(self.at_bounds),
            "emitters": [e.to_dict() for e in self.emitters],
        }

    def _repr_html_(self) -> str:
        return emitter_fit_html(self, _PRIMARY_NAMES)


def fit_emitter_set(emitters, target: Primaries, wavelengths, *, observer="2",
                    white_Y: float | None = None, tolerance_uv: float = 1e-4,
                    luminance_weight: float = 0.01, max_nfev: int | None = None) -> EmitterFit:
    """Fit three emitters so their primaries and white hit ``target``.

    Parameters
    ----------
    emitters : sequence of 3 Emitter
        R, G, B, with starting values and bounds.
    target : Primaries
        Target chromaticities and white.
    wavelengths : (n,) array_like, nm
        Uniform grid of the fit (covering 380-780 nm for the colorimetry).
    observer : {'2', '10'}
    white_Y : float, optional
        Target luminance of the equal-drive mix, Σ S ȳ Δλ (relative). Default:
        that of the starting emitters, which fixes the otherwise free overall
        scale.
    tolerance_uv : float
        Largest Δu′v′ (primaries and white) counted as success.
    luminance_weight : float
        Weight of the relative luminance residual against the u′v′ ones.

    Returns
    -------
    EmitterFit
        Never raises for an unreachable target: ``success`` is False and
        ``message`` names the worst primary and the parameters that ended on
        a bound; the closest result found is returned.

    Notes
    -----
    Minimises ½‖r‖² over the free parameters within their bounds
    (``scipy.optimize.least_squares``, method 'trf'), with
    r = (u′v′ᵢ − u′v′ᵢ,target for i = R, G, B; u′v′_mix − u′v′_white;
    w_Y (Y_mix/Y_target − 1)), u′v′ from XYZ = Σ S x̄ȳz̄ Δλ (CIE 15:2004).

    References
    ----------
    Branch, M. A., Coleman, T. F. & Li, Y. (1999). A subspace, interior, and
    conjugate gradient method for large-scale bound-constrained minimization
    problems. *SIAM J. Sci. Comput.* 21(1), 1-23.
    CIE 15:2004, *Colorimetry*, 3rd ed., §§ 7, 8.1.
    docs/methods.md §6.
    """
    emitters = tuple(emitters)
    if len(emitters) != 3 or not all(isinstance(e, Emitter) for e in emitters):
        raise WorkbenchError(f"emitters must be 3 Emitter values, R, G, B (got {len(emitters)})")
    if not isinstance(target, Primaries):
        raise WorkbenchError(f"target must be a Primaries (got {type(target).__name__})")
    if not tolerance_uv > 0:
        raise WorkbenchError(f"tolerance_uv must be > 0 (got {tolerance_uv})")
    wl = check_wavelengths(wavelengths)
    W = emission_weights(wl, observer=observer).W
    uv_t = xy_to_uv_prime(target.xy)
    uvw_t = xy_to_uv_prime(target.white_xy)
    table = _parameter_table(emitters)
    if not table:
        raise WorkbenchError("no free parameters: every component is fixed")
    x0 = np.array([r[3] for r in table])
    lo = np.array([r[4] for r in table])
    hi = np.array([r[5] for r in table])

    def spectra_of(x):
        comps = _with_parameters(emitters, table, x)
        return np.stack([sum(c.values(wl) for c in cs) for cs in comps])

    S0 = spectra_of(x0)
    XYZ0 = S0 @ W
    if np.any(XYZ0[:, 1] <= 0) or not np.all(np.isfinite(XYZ0)):
        raise WorkbenchError("starting emitters must each give visible emission (Y > 0)")
    Y_t = float(XYZ0.sum(axis=0)[1]) if white_Y is None else float(white_Y)
    if not (np.isfinite(Y_t) and Y_t > 0):
        raise WorkbenchError(f"white_Y must be a positive number (got {white_Y})")

    def residual(x):
        XYZ = spectra_of(x) @ W
        mix = XYZ.sum(axis=0)
        uv = XYZ_to_uv_prime(XYZ)
        r = np.concatenate([(uv - uv_t).ravel(), XYZ_to_uv_prime(mix) - uvw_t,
                            [luminance_weight * (mix[1] / Y_t - 1.0)]])
        return np.nan_to_num(r, nan=1.0)

    ls = least_squares(residual, x0, bounds=(lo, hi), method="trf", x_scale="jac",
                       xtol=1e-12, ftol=1e-12, gtol=1e-12, max_nfev=max_nfev)
    x = ls.x
    comps = _with_parameters(emitters, table, x)
    fitted = tuple(Emitter(e.name, tuple(cs)) for e, cs in zip(emitters, comps))
    S = spectra_of(x)
    XYZ = S @ W
    mix = XYZ.sum(axis=0)
    duv = np.sqrt(((XYZ_to_uv_prime(XYZ) - uv_t) ** 2).sum(axis=-1))
    duv_w = float(np.sqrt(((XYZ_to_uv_prime(mix) - uvw_t) ** 2).sum()))

    at_bounds = []
    for (i, j, attr, *_), v, l_, h_ in zip(table, x, lo, hi):
        span = h_ - l_
        for b, side in ((l_, "lower"), (h_, "upper")):
            if abs(v - b) <= 1e-10 * span:  # relative to the span: wide default bounds flag nothing by accident
                at_bounds.append(f"{_PRIMARY_NAMES[i]} component {j + 1} {attr} = {v:g} ({side} bound)")
    reached = bool(np.all(duv <= tolerance_uv) and duv_w <= tolerance_uv)
    worst = int(np.argmax(duv))
    if reached and ls.success:
        msg = (f"targets reached: max Δu′v′ {max(duv.max(), duv_w):.2e} "
               f"(tolerance {tolerance_uv:g}) after {ls.nfev} evaluations")
    else:
        parts = [f"targets not reached: {_PRIMARY_NAMES[worst]} primary misses by Δu′v′ "
                 f"{duv[worst]:.4f}, white by {duv_w:.4f} (tolerance {tolerance_uv:g})"]
        if at_bounds:
            parts.append("limited by bounds: " + "; ".join(at_bounds))
        if not ls.success:
            parts.append(f"optimiser: {ls.message}")
        parts.append("the closest result found is returned")
        msg = "; ".join(parts)
    spectra = Spectra(wl, S, tuple(e.name for e in fitted), kind="emission", units="relative",
                      notes=("emitter set fitted to " + target.name,))
    return EmitterFit(fitted, spectra, target, XYZ_to_xy(XYZ), XYZ_to_xy(mix), duv, duv_w,
                      float(mix[1]), Y_t, bool(reached and ls.success), msg, float(ls.cost),
                      int(ls.nfev), float(tolerance_uv), tuple(at_bounds))
