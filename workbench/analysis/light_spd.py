"""Light sources, first stage: reading an SPD, its working grid, absolute scale and the reference illuminants.

Part of the light stage described in :mod:`workbench.analysis.light`
(working grid, CIE 13.3 reference illuminant rule, radiometric units).

References
----------
CIE 13.3-1995, *Method of measuring and specifying colour rendering
properties of light sources* (the reference illuminant).
CIE 15:2004, *Colorimetry*, 3rd ed. (c₂ = 1.4388×10⁻² m·K, D-series illuminants).
CIE 167:2005, *Recommended practice for tabulating spectral data for use in colour computations*.
"""

from __future__ import annotations

import math
import re
from dataclasses import replace
from pathlib import Path

import numpy as np

from workbench.colorimetry.cie import daylight_basis
from workbench.errors import InputFileError, RangeCoverageError, WorkbenchError
from workbench.fileio.spectra_csv import parse_spectra_text, read_spectra_csv
from workbench.model.spectra import Spectra, grid, is_uniform
from workbench.fileio.units import spectral_unit, to_watts
from workbench.fileio.kinds import read_for

__all__ = [
    "CAUTION",
    "REQUIRED_RANGE",
    "read_light",
    "parse_light",
    "working_spd",
    "absolute_scale",
    "planckian_spd",
    "daylight_spd",
    "reference_illuminant",
]

#: Said by every light report (JSON key ``caution``, tables, notebook, figures).
CAUTION = (
    "Not a photobiological safety assessment (IEC 62471): nothing here rates UV, blue-light, "
    "thermal or retinal hazard. Defer to local codes and licensed practice."
)

#: The range every SPD must cover, nm (CIE 15:2004 § 7.2; CIE 224:2017).
REQUIRED_RANGE = (380.0, 780.0)

#: Second radiation constant, nm·K (CIE 15:2004, ITS-90: 1.4388×10⁻² m·K).
C2_NM_K = 1.4388e7
#: CIE 13.3-1995: Planckian reference below this CCT, CIE daylight at and above, K.
CIE_13_3_DAYLIGHT_FROM = 5000.0
#: Academy SSI: Planckian reference below this CCT, CIE daylight at and above, K.
SSI_DAYLIGHT_FROM = 4000.0
#: CCTs for which CIE 15:2004 defines daylight (D-series) chromaticities, K.
DAYLIGHT_CCT_RANGE = (4000.0, 25000.0)
#: Luminous efficacy K_m of the photopic V(λ) = ȳ(λ), lm/W (CIE 15:2004).
K_M = 683.0
#: EBU Tech 3355 § 1.5.1: ΔE_a for which the score is 50, and the exponent.

# --------------------------------------------------------------------------
# Reading and the working grid
# --------------------------------------------------------------------------


def _one_spectrum(s: Spectra, spectrum: str | None) -> Spectra:
    if spectrum is not None:
        if spectrum not in s.names:
            raise InputFileError(
                f"no spectrum named {spectrum!r}; expected one of {', '.join(s.names[:8])}"
                f"{', ...' if len(s.names) > 8 else ''}", s.source)
        return s.select([spectrum])
    if len(s) != 1:
        raise InputFileError(
            f"holds {len(s)} spectra ({', '.join(s.names[:6])}{', ...' if len(s) > 6 else ''}); "
            "expected one SPD, or name one (--spectrum NAME)", s.source)
    if s.values.ndim != 2:
        s = replace(s, values=s.flat())
    return s


def absolute_watts(s: Spectra) -> Spectra:
    """An SPD with its units checked: photon units converted to W·m⁻²·nm⁻¹ (said in the notes).

    Units are read by :func:`workbench.fileio.units.spectral_unit`; text it
    does not know is refused, naming the file (never taken as relative).
    """
    unit = spectral_unit(s.units, where=f"{light_label(s)}: units")
    if not unit.photons:
        return s
    values = to_watts(s.values, s.wavelengths, unit)
    note = (f"{light_label(s)}: photon units {s.units!r} converted to {unit.si_watts} by E = N·h·c/λ "
            "(h, c: SI defining constants)")
    return replace(s, values=values, units=unit.si_watts, notes=s.notes + (note,))


def read_light(path, *, spectrum: str | None = None, kind: str | None = None) -> Spectra:
    """One emission SPD from a CSV file (spectrometer exports welcome).

    Read by :func:`workbench.fileio.spectra_csv.read_spectra_csv` with
    ``kind='emission'`` (metadata lines, semicolons, decimal commas,
    irregular steps, µm, ...); a file holding several spectra needs
    ``spectrum`` to name one.

    Returns
    -------
    Spectra
        ``values`` (1, n) in the file's units (``units`` as the header says,
        ``'relative'`` when it says none).
    """
    s = read_for(lambda k: read_spectra_csv(path, kind=k), ("emission",), command="light",
                 default="emission", kind=kind)
    return absolute_watts(_one_spectrum(s, spectrum))


def parse_light(data: bytes | str, *, source: str, spectrum: str | None = None) -> Spectra:
    """:func:`read_light` for text already in memory (an uploaded file); ``source`` names it in messages."""
    s = read_for(lambda k: parse_spectra_text(data, source=source, kind=k), ("emission",),
                 command="light", default="emission")
    return absolute_watts(_one_spectrum(s, spectrum))


def light_label(s: Spectra) -> str:
    """The file (for messages), else the spectrum's name."""
    return s.source or s.names[0]


def light_short_name(s: Spectra) -> str:
    """A short name for titles and tables: the file's stem, else the spectrum's name."""
    if s.source:
        return Path(s.source).stem
    return s.names[0]


def _check_light(spd: Spectra) -> None:
    if not isinstance(spd, Spectra):
        raise WorkbenchError(f"the light must be a Spectra (got {type(spd).__name__})")
    if spd.kind != "emission":
        raise WorkbenchError(f"{light_label(spd)}: expected an emission spectrum (got {spd.kind})")
    if len(spd) != 1:
        raise WorkbenchError(f"{light_label(spd)}: expected one SPD (got {len(spd)} spectra)")


def _is_working_grid(wl: np.ndarray) -> bool:
    if not is_uniform(wl):
        return False
    step = float(wl[1] - wl[0])
    if not (abs(step - 1.0) < 1e-9 or abs(step - 5.0) < 1e-9):
        return False
    return bool(np.all(np.abs(wl / step - np.round(wl / step)) < 1e-9))


def working_spd(spd: Spectra, *, extrapolation: str = "none", required=REQUIRED_RANGE) -> Spectra:
    """The SPD on its working grid (module notes): as it is, or resampled to 1 nm; checked for coverage.

    Parameters
    ----------
    spd : Spectra
        One emission spectrum.
    extrapolation : {'none', 'constant'}
        ``'none'`` raises :class:`RangeCoverageError` when the data do not
        cover ``required``; ``'constant'`` extends them with their end
        values (CIE 167:2005), said in the notes.
    required : (2,) nm or None

    Returns
    -------
    Spectra
        (1, n), uniform 1 or 5 nm, covering ``required``; ``notes`` say
        what was done.

    References
    ----------
    CIE 167:2005 (resampling, constant extrapolation).
    CIE 15:2004, *Colorimetry*, 3rd ed., § 7.2.
    docs/methods.md §17.
    """
    _check_light(spd)
    if extrapolation not in ("none", "constant"):
        raise WorkbenchError(f"extrapolation must be none or constant (got {extrapolation!r})")
    s = spd if spd.values.ndim == 2 else replace(spd, values=spd.flat())
    v = s.flat()[0]
    if not np.all(np.isfinite(v)):
        raise WorkbenchError(f"{light_label(s)}: the SPD holds values that are not finite numbers")
    wl = s.wavelengths
    if not _is_working_grid(wl):
        target = grid(math.ceil(wl[0] - 1e-9), math.floor(wl[-1] + 1e-9), 1.0)
        s = s.resample(target)
        s = s.with_note(f"{light_label(spd)}: put on a 1 nm grid for the published indices "
                        "(they need uniform data at 5 nm or finer)")
    if required is not None and not s.covers(*required):
        lo, hi = required
        have = f"{s.wavelengths[0]:g}-{s.wavelengths[-1]:g} nm"
        if extrapolation != "constant":
            raise RangeCoverageError(
                f"{light_label(spd)}: the SPD covers {have} but the indices need {lo:g}-{hi:g} nm "
                "(CIE 15:2004, CIE 224:2017); allow constant extrapolation (CIE 167) with "
                "--extrapolate constant")
        step = float(s.wavelengths[1] - s.wavelengths[0])
        a = min(float(s.wavelengths[0]), step * math.floor(lo / step))
        b = max(float(s.wavelengths[-1]), step * math.ceil(hi / step))
        s = s.resample(grid(a, b, step), extrapolation="constant")
    neg = int(np.sum(s.flat()[0] < 0))
    if neg:
        s = s.with_note(f"{light_label(spd)}: {neg} values below zero (smallest {s.flat()[0].min():.3g}) "
                        "kept as measured")
    return s


_UNIT_PATTERN = re.compile(r"(?P<prefix>[mµμun]?)w(?P<sr1>sr)?(?P<area>c?m)2(?P<sr2>sr)?nm")
_PREFIX = {"": 1.0, "m": 1e-3, "µ": 1e-6, "μ": 1e-6, "u": 1e-6, "n": 1e-9}


def absolute_scale(units: str) -> tuple[str, str, float] | None:
    """What an SPD's units say about its absolute scale.

    Parameters
    ----------
    units : str
        As :class:`Spectra` holds them: ``'W/m2/nm'``, ``'W·m⁻²·nm⁻¹'``,
        ``'mW/cm2/nm'``, ``'µW/(cm² nm)'``, ``'W/sr/m2/nm'``, ...

    Returns
    -------
    (quantity, unit, factor) or None
        ``('illuminance', 'lx', f)`` for spectral irradiance,
        ``('luminance', 'cd/m²', f)`` for spectral radiance, where ``f``
        converts the values to W·m⁻²·nm⁻¹ (or W·sr⁻¹·m⁻²·nm⁻¹); None for
        relative or unrecognised units.

    Examples
    --------
    >>> absolute_scale("mW/cm2/nm")
    ('illuminance', 'lx', 10.0)
    >>> absolute_scale("relative") is None
    True
    """
    u = str(units).strip().lower()
    for a, b in (("⁻²", "2"), ("^2", "2"), ("²", "2"), ("-2", "2"), ("⁻¹", ""), ("^-1", ""), ("-1", "")):
        u = u.replace(a, b)
    u = re.sub(r"[\s/·*().\[\]]", "", u)
    m = _UNIT_PATTERN.fullmatch(u)
    if m is None or (m.group("sr1") and m.group("sr2")):
        return None
    factor = _PREFIX[m.group("prefix")] * (1e4 if m.group("area") == "cm" else 1.0)
    if m.group("sr1") or m.group("sr2"):
        return "luminance", "cd/m²", factor
    return "illuminance", "lx", factor


# --------------------------------------------------------------------------
# Reference illuminants
# --------------------------------------------------------------------------


def planckian_spd(wavelengths, temperature: float) -> np.ndarray:
    """Relative SPD (n,) of a Planckian radiator at ``temperature`` K, 100 at 560 nm.

    M(λ) ∝ λ⁻⁵ / (exp(c₂ / (λT)) − 1) with c₂ = 1.4388×10⁷ nm·K (CIE 15:2004).

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed. (c₂ = 1.4388×10⁻² m·K).
    docs/methods.md §2.

    Examples
    --------
    >>> planckian_spd([560.0], 2856.0).tolist()
    [100.0]
    """
    T = float(temperature)
    if not (T > 0 and math.isfinite(T)):
        raise WorkbenchError(f"temperature must be a positive number of kelvin (got {temperature!r})")
    wl = np.asarray(wavelengths, dtype=float)
    return 100.0 * (560.0 / wl) ** 5 * np.expm1(C2_NM_K / (560.0 * T)) / np.expm1(C2_NM_K / (wl * T))


def _daylight_basis() -> tuple[np.ndarray, np.ndarray]:
    """S0, S1, S2 from the package's CIE tables (colour-science's, checked equal; no colour import)."""
    return daylight_basis()


def daylight_spd(wavelengths, cct: float) -> np.ndarray:
    """Relative SPD (n,) of CIE daylight at ``cct`` K (4000-25000 K), 100 at 560 nm.

    Notes
    -----
    CIE 15:2004 § 3.1: x_D from the CCT (two cubic formulae, below and
    above 7000 K), y_D = −3.000 x_D² + 2.870 x_D − 0.275, M1 and M2 from
    x_D, y_D rounded to three decimals, S = S0 + M1·S1 + M2·S2. The basis
    functions S0, S1, S2 (300-830 nm at 5 nm, via colour-science) are
    interpolated linearly between their points (as the CIE's 1 nm D65
    table is; from memory). colour-science's ``sd_CIE_illuminant_D_series``
    with a ``shape`` interpolates the basis by Sprague instead; the two
    agree at the 5 nm points.

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 3.1.
    docs/methods.md §2.
    """
    T = float(cct)
    lo, hi = DAYLIGHT_CCT_RANGE
    if not lo - 1e-6 <= T <= hi + 1e-6:
        raise WorkbenchError(f"CIE daylight is defined for {lo:g}-{hi:g} K (got {T:.0f} K)")
    if T <= 7000:
        x = -4.6070e9 / T ** 3 + 2.9678e6 / T ** 2 + 0.09911e3 / T + 0.244063
    else:
        x = -2.0064e9 / T ** 3 + 1.9018e6 / T ** 2 + 0.24748e3 / T + 0.237040
    y = -3.000 * x * x + 2.870 * x - 0.275
    M = 0.0241 + 0.2562 * x - 0.7341 * y
    M1 = round((-1.3515 - 1.7703 * x + 5.9114 * y) / M, 3)
    M2 = round((0.0300 - 31.4424 * x + 30.0717 * y) / M, 3)
    bwl, S = _daylight_basis()
    wl = np.asarray(wavelengths, dtype=float)
    if wl.min() < bwl[0] - 1e-9 or wl.max() > bwl[-1] + 1e-9:
        raise RangeCoverageError(
            f"CIE daylight is tabulated over {bwl[0]:g}-{bwl[-1]:g} nm (got {wl.min():g}-{wl.max():g} nm)")
    basis = np.stack([np.interp(wl, bwl, s) for s in S])
    return basis[0] + M1 * basis[1] + M2 * basis[2]


def reference_illuminant(cct: float, wavelengths, *, daylight_from: float = CIE_13_3_DAYLIGHT_FROM
                         ) -> tuple[str, np.ndarray]:
    """The reference illuminant at ``cct`` K on ``wavelengths`` (nm): its label and relative SPD (n,).

    Planckian below ``daylight_from`` (5000 K, CIE 13.3-1995; 4000 K for
    the Academy SSI), CIE daylight at and above (up to 25000 K).

    References
    ----------
    CIE 13.3-1995, *Method of measuring and specifying colour rendering
    properties of light sources*.
    docs/methods.md §17.

    Examples
    --------
    >>> reference_illuminant(4000.0, [560.0])[0], reference_illuminant(6500.0, [560.0])[0]
    ('Planckian 4000 K', 'CIE daylight 6500 K')
    """
    T = float(cct)
    if not math.isfinite(T) or T <= 0:
        raise WorkbenchError(f"CCT must be a positive number of kelvin (got {cct!r})")
    if T < daylight_from:
        return f"Planckian {T:.0f} K", planckian_spd(wavelengths, T)
    return f"CIE daylight {T:.0f} K", daylight_spd(wavelengths, T)
