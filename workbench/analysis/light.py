"""Light sources on camera: the published indices, a camera-side fidelity index, two fixtures compared.

A measured spectral power distribution (SPD) of a luminaire goes through
three stages:

1. **Published indices**, computed by colour-science (the reference
   library): CCT and Duv (Ohno 2013), the CIE 13.3 general and special
   colour rendering indices Ra and R1-R14, the CIE 224:2017 fidelity index
   Rf, the ANSI/IES TM-30-18 gamut index Rg, the Academy spectral
   similarity index (SSI) against an automatic or chosen reference, and
   the illuminance (or luminance) when the SPD is absolute.
2. **The camera fidelity index** (this workbench's own name): how the
   light renders on a given camera compared with the reference illuminant
   at the same CCT (Planckian below 5000 K, CIE daylight at and above,
   the CIE 13.3 rule). The camera is white-balanced on the perfect
   diffuser under each light, its matrix is applied, and ΔE00 is taken
   between the two renderings of each of 113 open samples (CIE 13.3
   TCS01-TCS14 and the 99 CIE 224:2017 colour evaluation samples). The
   ΔE00 are scored with the formula of EBU Tech 3355 § 1.5.1:
   ΔE_a = (mean ΔE00⁴)^¼, index = 100 / (1 + (ΔE_a / 3.16)^2.4). That
   standard's own index cannot be computed here (its test samples are a
   commercial chart's data); this index uses the same scoring on open
   samples with the workbench's camera model, so it is *not* the EBU's
   index and its numbers are not comparable with it. The reference
   illuminant against itself scores 100 on any camera.
3. **Two fixtures compared**: how lights A and B differ to the eye and to
   the camera (see :func:`compare_lights` for the definitions), with
   flags when they match to the eye but not on camera, or the reverse.

Working grid
------------
An SPD already on a uniform 1 nm or 5 nm grid of whole multiples of its
step is used as it is; any other grid (irregular steps, 2 nm, 0.5 nm, ...)
is resampled to 1 nm over its own range (Sprague for uniform data, cubic
spline for non-uniform, CIE 167:2005), said in the notes. The SPD must
cover 380-780 nm (CIE 15:2004, CIE 224:2017) unless constant
extrapolation (CIE 167:2005) is asked for. The camera computations run on
the part of that grid the camera covers, with the camera's sensitivities
put on it (exact at their own grid points, Sprague between) and the
reference illuminant computed on the same points.

Scales: reflectances 0-1; the perfect diffuser has Y = 100 (CIELAB);
display RGB (1, 1, 1) is the display white; SPDs are relative unless their
units are radiometric (W·m⁻²·nm⁻¹ and its multiples, or per steradian).

Caution: none of this is a photobiological safety assessment (IEC 62471);
see :data:`CAUTION`.

References
----------
CIE 13.3-1995, *Method of measuring and specifying colour rendering
properties of light sources*.
CIE 15:2004, *Colorimetry*, 3rd ed. (CCT with c₂ = 1.4388×10⁻² m·K,
D-series illuminants, CIELAB).
CIE 224:2017, *CIE 2017 colour fidelity index for accurate scientific use*.
ANSI/IES TM-30-18, *IES method for evaluating light source color rendition*.
Ohno, Y. (2014). Practical use and calculation of CCT and Duv. *LEUKOS*
10(1), 47-55.
Holm, J. et al. (2016). A cinematographic spectral similarity index.
SMPTE Annual Technical Conference; Academy of Motion Picture Arts and
Sciences, *Spectral Similarity Index (SSI): Overview* (2020).
EBU Tech 3355 (2017), *Method for the assessment of the colorimetric
properties of luminaires*, § 1.5.1 (the scoring formula).
Lam, K. M. (1985), the Bradford chromatic adaptation transform.
IEC 62471:2006, *Photobiological safety of lamps and lamp systems*.
"""

from __future__ import annotations

import contextlib
import math
import re
import warnings
from dataclasses import dataclass, field, replace
from functools import lru_cache

import numpy as np

from workbench.colorimetry.cie import _canonical_illuminant, cmfs_on
from workbench.colorimetry.coordinates import XYZ_to_Lab, XYZ_to_uv_prime, XYZ_to_xy, delta_E_CIE2000
from workbench.errors import InputFileError, RangeCoverageError, WorkbenchError
from workbench.model.spectra import Spectra, grid, is_uniform

__all__ = [
    "CAUTION",
    "REQUIRED_RANGE",
    "MATCH_DELTA_E00",
    "DIFFER_DELTA_E00",
    "read_light",
    "parse_light",
    "working_spd",
    "absolute_scale",
    "planckian_spd",
    "daylight_spd",
    "reference_illuminant",
    "camera_fidelity_score",
    "LightIndices",
    "light_indices",
    "CameraFidelity",
    "camera_fidelity",
    "ComparisonMode",
    "LightComparison",
    "compare_lights",
    "LightReport",
    "light_report",
]

#: Said by every light report (JSON key ``caution``, tables, notebook, figures).
CAUTION = (
    "Not a photobiological safety assessment (IEC 62471): nothing here rates UV, blue-light, "
    "thermal or retinal hazard. Defer to local codes and licensed practice."
)

#: The range every SPD must cover, nm (CIE 15:2004 § 7.2; CIE 224:2017).
REQUIRED_RANGE = (380.0, 780.0)

#: Mean ΔE00 at or below which two renderings "match" (about one just-noticeable difference; common practice).
MATCH_DELTA_E00 = 1.0
#: Mean ΔE00 at or above which two renderings "differ" (clearly visible side by side; common practice).
DIFFER_DELTA_E00 = 2.0

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
_Q_HALF = 3.16
_Q_EXPONENT = 2.4
#: CIE 13.3-1995: Ra is meaningful when the test light's chromaticity lies
#: within ΔC = 5.4×10⁻³ (CIE 1960 uv) of the reference's (from memory).
_CIE_13_3_DC = 5.4e-3
#: CIE 15:2004: CCT is meaningful within |Duv| ≤ 0.05 of the Planckian locus.
_CCT_DUV_LIMIT = 0.05

_SET_LABEL = {"cie-13.3": "CIE 13.3 TCS01-TCS14", "cie-224": "CIE 224:2017 CES01-CES99"}

# CIE 13.3-1995, Table 1: the Munsell descriptions of TCS01-TCS14 (from memory)
_TCS_NAMES = (
    "light greyish red", "dark greyish yellow", "strong yellow green", "moderate yellowish green",
    "light bluish green", "light blue", "light violet", "light reddish purple", "strong red",
    "strong yellow", "strong green", "strong blue", "light yellowish pink (skin)",
    "moderate olive green (leaf)",
)


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


def read_light(path, *, spectrum: str | None = None) -> Spectra:
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
    from workbench.fileio.spectra_csv import read_spectra_csv

    return _one_spectrum(read_spectra_csv(path, kind="emission"), spectrum)


def parse_light(data: bytes | str, *, source: str, spectrum: str | None = None) -> Spectra:
    """:func:`read_light` for text already in memory (an uploaded file); ``source`` names it in messages."""
    from workbench.fileio.spectra_csv import parse_spectra_text

    return _one_spectrum(parse_spectra_text(data, source=source, kind="emission"), spectrum)


def _label(s: Spectra) -> str:
    """The file (for messages), else the spectrum's name."""
    return s.source or s.names[0]


def _short(s: Spectra) -> str:
    """A short name for titles and tables: the file's stem, else the spectrum's name."""
    if s.source:
        from pathlib import Path

        return Path(s.source).stem
    return s.names[0]


def _check_light(spd: Spectra) -> None:
    if not isinstance(spd, Spectra):
        raise WorkbenchError(f"the light must be a Spectra (got {type(spd).__name__})")
    if spd.kind != "emission":
        raise WorkbenchError(f"{_label(spd)}: expected an emission spectrum (got {spd.kind})")
    if len(spd) != 1:
        raise WorkbenchError(f"{_label(spd)}: expected one SPD (got {len(spd)} spectra)")


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
    """
    _check_light(spd)
    if extrapolation not in ("none", "constant"):
        raise WorkbenchError(f"extrapolation must be none or constant (got {extrapolation!r})")
    s = spd if spd.values.ndim == 2 else replace(spd, values=spd.flat())
    v = s.flat()[0]
    if not np.all(np.isfinite(v)):
        raise WorkbenchError(f"{_label(s)}: the SPD holds values that are not finite numbers")
    wl = s.wavelengths
    if not _is_working_grid(wl):
        target = grid(math.ceil(wl[0] - 1e-9), math.floor(wl[-1] + 1e-9), 1.0)
        s = s.resample(target)
        s = s.with_note(f"{_label(spd)}: put on a 1 nm grid for the colour-science indices "
                        "(they need uniform data at 5 nm or finer)")
    if required is not None and not s.covers(*required):
        lo, hi = required
        have = f"{s.wavelengths[0]:g}-{s.wavelengths[-1]:g} nm"
        if extrapolation != "constant":
            raise RangeCoverageError(
                f"{_label(spd)}: the SPD covers {have} but the indices need {lo:g}-{hi:g} nm "
                "(CIE 15:2004, CIE 224:2017); allow constant extrapolation (CIE 167) with "
                "--extrapolate constant")
        step = float(s.wavelengths[1] - s.wavelengths[0])
        a = min(float(s.wavelengths[0]), step * math.floor(lo / step))
        b = max(float(s.wavelengths[-1]), step * math.ceil(hi / step))
        s = s.resample(grid(a, b, step), extrapolation="constant")
    neg = int(np.sum(s.flat()[0] < 0))
    if neg:
        s = s.with_note(f"{_label(spd)}: {neg} values below zero (smallest {s.flat()[0].min():.3g}) "
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
    """
    T = float(temperature)
    if not (T > 0 and math.isfinite(T)):
        raise WorkbenchError(f"temperature must be a positive number of kelvin (got {temperature!r})")
    wl = np.asarray(wavelengths, dtype=float)
    return 100.0 * (560.0 / wl) ** 5 * np.expm1(C2_NM_K / (560.0 * T)) / np.expm1(C2_NM_K / (wl * T))


@lru_cache(maxsize=1)
def _daylight_basis() -> tuple[np.ndarray, np.ndarray]:
    from colour.colorimetry.datasets.illuminants import SDS_BASIS_FUNCTIONS_CIE_ILLUMINANT_D_SERIES as B

    wl = np.array(B["S0"].wavelengths, dtype=float)
    S = np.stack([np.array(B[k].values, dtype=float) for k in ("S0", "S1", "S2")])
    wl.setflags(write=False)
    S.setflags(write=False)
    return wl, S


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
    """
    T = float(cct)
    if not math.isfinite(T) or T <= 0:
        raise WorkbenchError(f"CCT must be a positive number of kelvin (got {cct!r})")
    if T < daylight_from:
        return f"Planckian {T:.0f} K", planckian_spd(wavelengths, T)
    return f"CIE daylight {T:.0f} K", daylight_spd(wavelengths, T)


# --------------------------------------------------------------------------
# Published indices
# --------------------------------------------------------------------------


@contextlib.contextmanager
def _quiet_colour():
    """colour-science warns on every reshape; what it assumed is said in our own notes instead."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        yield


def _sd(wl: np.ndarray, values: np.ndarray, name: str):
    """A colour-science SpectralDistribution that interpolates linearly (emission lines do not ring)."""
    import colour
    from colour.algebra import LinearInterpolator

    return colour.SpectralDistribution(np.asarray(values, dtype=float), np.asarray(wl, dtype=float), name=name,
                                       interpolator=LinearInterpolator)


def _cct_duv(XYZ: np.ndarray) -> tuple[float, float]:
    import colour

    X, Y, Z = (float(v) for v in XYZ)
    d = X + 15 * Y + 3 * Z
    uv = np.array([4 * X / d, 6 * Y / d])
    with _quiet_colour():
        CCT, Duv = colour.uv_to_CCT(uv, method="Ohno 2013")
    return float(CCT), float(Duv)


def _emission_XYZ(wl: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Σ E x̄ȳz̄ Δλ (CIE 1931 2°) on a uniform grid — unnormalised."""
    from workbench.colorimetry.tristimulus import emission_weights

    return emission_weights(wl).apply(values)


_METHODS = {
    "CCT": "Ohno 2013 (colour.uv_to_CCT) from CIE 1960 uv, CIE 1931 2°, CIE 15 summation on the "
           "working grid; K",
    "Duv": "Ohno 2013: signed distance from the Planckian locus in CIE 1960 uv (+ above)",
    "Ra": "CIE 13.3-1995 general colour rendering index, mean of R1-R8 "
          "(colour.colour_rendering_index, 'CIE 1995')",
    "R": "CIE 13.3-1995 special colour rendering indices R1-R14 (TCS01-TCS14)",
    "Rf": "CIE 224:2017 colour fidelity index (99 CES, CIE 1964 10°, CAM02-UCS; "
          "colour.colour_fidelity_index, 'CIE 2017')",
    "Rg": "ANSI/IES TM-30-18 gamut index (16 hue bins of the 99 CES; "
          "colour.colour_fidelity_index, 'ANSI/IES TM-30-18')",
    "SSI": "Academy spectral similarity index, 375-675 nm, rounded to a whole number "
           "(colour.spectral_similarity_index)",
}


@dataclass(frozen=True, eq=False)
class LightIndices:
    """The published indices of one SPD, each with its method (``methods``) and unit (``units_of``).

    ``R`` holds R1-R14; any index colour-science could not compute is None
    with the reason in ``warnings``. ``illuminance`` is in lx (or
    ``luminance`` in cd/m² for radiance) when the SPD's units are
    absolute, else None. ``spd`` is the SPD on its working grid.
    """

    name: str
    source: str | None
    spd: Spectra
    CCT: float
    Duv: float
    xy: tuple[float, float]
    uv_prime: tuple[float, float]
    Ra: float | None
    R: tuple[float, ...] | None
    Rf: float | None
    Rg: float | None
    SSI: int | None
    SSI_unrounded: float | None
    SSI_reference: str
    illuminance: float | None
    illuminance_quantity: str | None
    illuminance_unit: str | None
    methods: dict
    units_of: dict
    notes: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()

    def to_dict(self) -> dict:
        """The JSON form: the numbers at the top level, ``method`` and ``unit`` beside them."""
        d = {
            "light": self.name,
            "file": self.source,
            "grid": self.spd.describe_grid(),
            "spd_units": self.spd.units,
            "CCT": self.CCT,
            "Duv": self.Duv,
            "x": self.xy[0],
            "y": self.xy[1],
            "u_prime": self.uv_prime[0],
            "v_prime": self.uv_prime[1],
            "Ra": self.Ra,
            "R": None if self.R is None else list(self.R),
            "Rf": self.Rf,
            "Rg": self.Rg,
            "SSI": self.SSI,
            "SSI_unrounded": self.SSI_unrounded,
            "SSI_reference": self.SSI_reference,
            "illuminance_lx": self.illuminance if self.illuminance_unit == "lx" else None,
            "luminance_cd_m2": self.illuminance if self.illuminance_unit == "cd/m²" else None,
            "method": dict(self.methods),
            "unit": dict(self.units_of),
            "warnings": list(self.warnings),
        }
        return d

    def rows(self) -> list[dict]:
        """One row per number: ``quantity``, ``value``, ``unit``, ``method`` (for tables)."""
        out = [
            {"quantity": "CCT", "value": self.CCT, "unit": "K", "method": self.methods["CCT"]},
            {"quantity": "Duv", "value": self.Duv, "unit": "1", "method": self.methods["Duv"]},
            {"quantity": "x, y", "value": f"{self.xy[0]:.4f}, {self.xy[1]:.4f}", "unit": "1",
             "method": "CIE 1931 2° chromaticity"},
            {"quantity": "u′, v′", "value": f"{self.uv_prime[0]:.4f}, {self.uv_prime[1]:.4f}", "unit": "1",
             "method": "CIE 1976 UCS chromaticity, CIE 1931 2°"},
            {"quantity": "Ra", "value": self.Ra, "unit": "1", "method": self.methods["Ra"]},
        ]
        if self.R is not None:
            for i, r in enumerate(self.R):
                out.append({"quantity": f"R{i + 1}", "value": r, "unit": "1",
                            "method": f"CIE 13.3 special index, TCS{i + 1:02d} ({_TCS_NAMES[i]})"})
        out += [
            {"quantity": "Rf", "value": self.Rf, "unit": "1", "method": self.methods["Rf"]},
            {"quantity": "Rg", "value": self.Rg, "unit": "1", "method": self.methods["Rg"]},
            {"quantity": "SSI", "value": self.SSI, "unit": "1",
             "method": f"{self.methods['SSI']}; reference {self.SSI_reference}"},
        ]
        if self.illuminance is not None:
            out.append({"quantity": self.illuminance_quantity, "value": self.illuminance,
                        "unit": self.illuminance_unit, "method": self.methods["illuminance"]})
        return out


def _ssi_reference(ssi_reference, cct: float) -> tuple[str, object, tuple[str, ...]]:
    """(label, colour SpectralDistribution, notes) of the SSI reference."""
    import colour

    wl = grid(375.0, 675.0, 1.0)
    if isinstance(ssi_reference, Spectra):
        w = working_spd(ssi_reference, required=None)
        return (f"{_label(ssi_reference)} (given)", _sd(w.wavelengths, w.flat()[0], "reference"),
                tuple(n for n in w.notes if "put on a 1 nm grid" in n))
    ref = str(ssi_reference).strip()
    if ref.lower() == "auto":
        lo, hi = DAYLIGHT_CCT_RANGE
        if cct > hi:
            return f"none (no automatic reference above {hi:g} K)", None, ()
        label, v = reference_illuminant(cct, wl, daylight_from=SSI_DAYLIGHT_FROM)
        return f"{label} (automatic)", _sd(wl, v, label), ()
    try:
        name = _canonical_illuminant(ref)
    except WorkbenchError:
        raise WorkbenchError(
            f"SSI reference must be 'auto', a CIE illuminant name (A, D50, D65, ...) or an SPD file "
            f"(got {ssi_reference!r})") from None
    return f"{name} (chosen)", colour.SDS_ILLUMINANTS[name], ()


def light_indices(spd: Spectra, *, ssi_reference="auto", extrapolation: str = "none") -> LightIndices:
    """The published indices of one SPD.

    Parameters
    ----------
    spd : Spectra
        One emission spectrum (relative or absolute), e.g. from
        :func:`read_light`.
    ssi_reference : 'auto', str or Spectra
        The Academy SSI reference: ``'auto'`` takes a Planckian radiator at
        the test light's CCT below 4000 K and CIE daylight at that CCT from
        4000 K to 25000 K (the rule of Academy specification S-2018-001 as
        read in an open implementation); or a CIE illuminant name; or an
        SPD.
    extrapolation : {'none', 'constant'}
        For SPDs not covering 380-780 nm (see :func:`working_spd`).

    Returns
    -------
    LightIndices

    Notes
    -----
    Every index is colour-science's own computation on the working-grid
    SPD. Each index finds its own reference internally: CIE 13.3 from
    colour-science's Robertson 1968 CCT (Planckian below 5000 K, daylight
    above), CIE 224 / TM-30 from Ohno 2013 with a Planckian-daylight blend
    between 4000 and 5000 K. colour-science extends the SPD to 360-830 nm
    with its end values for CIE 13.3 and fills 375-380 nm with zeros for
    the SSI; both are said in the notes when they happen.
    """
    import colour

    w = working_spd(spd, extrapolation=extrapolation)
    wl = w.wavelengths
    v = w.flat()[0]
    name = _short(spd)
    label = _label(spd)
    XYZ = _emission_XYZ(wl, v)
    if not XYZ[1] > 0:
        raise WorkbenchError(f"{label}: the SPD has no visible power (Σ E ȳ Δλ = {XYZ[1]:.3g})")
    notes = list(w.notes)
    warns: list[str] = []
    CCT, Duv = _cct_duv(XYZ)
    if abs(Duv) > _CCT_DUV_LIMIT:
        warns.append(f"|Duv| = {abs(Duv):.4f} > {_CCT_DUV_LIMIT:g}: CCT is not meaningful (CIE 15:2004), "
                     "nor is any index that compares with a reference at that CCT")
    elif abs(Duv) > _CIE_13_3_DC:
        warns.append(f"|Duv| = {abs(Duv):.4f} > {_CIE_13_3_DC:g}: CIE 13.3 asks the test light to lie within "
                     "ΔC 5.4×10⁻³ of its reference; Ra is indicative only")
    if not 1000 <= CCT <= 20000:
        warns.append(f"CCT {CCT:.0f} K lies outside 1000-20000 K, where Ohno 2013 is within 1 K")
    if wl[0] > 360 or wl[-1] < 830:
        notes.append(f"{label}: colour-science's CIE 13.3 computation extends the SPD from "
                     f"{wl[0]:g}-{wl[-1]:g} nm to 360-830 nm with its end values (CIE 167:2005)")
    if w.step != 1.0:
        notes.append(f"{label}: colour-science's CIE 13.3 computation interpolates the SPD to 1 nm linearly "
                     "(the workbench's rule for emission spectra, whose narrow lines make higher-order "
                     "interpolation ring)")
    if wl[0] > 375:
        notes.append(f"{label}: the Academy SSI takes the SPD as zero over 375-{wl[0]:g} nm")
    # a fresh SpectralDistribution per call: colour-science reshapes and trims its argument in place
    Ra = R = Rf = Rg = SSI = SSI_u = None
    with _quiet_colour():
        try:
            cri = colour.colour_rendering_index(_sd(wl, v, name), additional_data=True)
            Ra = float(cri.Q_a)
            R = tuple(float(cri.Q_as[i].Q_a) for i in sorted(cri.Q_as))
        except (ValueError, ArithmeticError, KeyError) as err:
            warns.append(f"Ra: not computed ({err})")
        try:
            tm = colour.colour_fidelity_index(_sd(wl, v, name), additional_data=True, method="ANSI/IES TM-30-18")
            Rf, Rg = float(tm.R_f), float(tm.R_g)
            notes.append(f"CIE 224:2017 / TM-30-18 reference: {tm.sd_reference.name} "
                         f"(CCT {float(tm.CCT):.0f} K by their own Ohno 2013 computation)")
        except (ValueError, ArithmeticError, KeyError) as err:
            warns.append(f"Rf, Rg: not computed ({err})")
        ref_label, ref_sd, ref_notes = _ssi_reference(ssi_reference, CCT)
        notes += list(ref_notes)
        try:
            if ref_sd is None:
                raise ValueError(f"no automatic reference above {DAYLIGHT_CCT_RANGE[1]:g} K (CCT {CCT:.0f} K); "
                                 "choose one with --ssi-reference NAME|FILE.csv")
            SSI_u = float(colour.spectral_similarity_index(_sd(wl, v, name), ref_sd.copy(), round_result=False))
            SSI = int(np.around(SSI_u))
        except (ValueError, ArithmeticError, KeyError) as err:
            warns.append(f"SSI: not computed ({err})")
    methods = dict(_METHODS)
    methods["Ra"] += " (reference chosen by colour-science from its Robertson 1968 CCT)"
    methods["SSI_reference"] = ("automatic: Planckian below 4000 K, CIE daylight 4000-25000 K, at the "
                                "light's CCT" if str(ssi_reference).lower() == "auto" else "chosen")
    units_of = {"CCT": "K", "Duv": "1 (CIE 1960 uv)", "Ra": "1", "R": "1", "Rf": "1", "Rg": "1", "SSI": "1"}
    illum = quantity = unit = None
    scale = absolute_scale(w.units)
    if scale is not None:
        quantity, unit, factor = scale
        illum = float(K_M * factor * XYZ[1])
        what = "spectral irradiance" if unit == "lx" else "spectral radiance"
        methods["illuminance"] = (f"{quantity} = 683 lm/W · Σ E(λ) V(λ) Δλ, V = ȳ of CIE 1931 2°, "
                                  f"{what} in {w.units} (× {factor:g} to W-based SI units)")
        units_of["illuminance_lx" if unit == "lx" else "luminance_cd_m2"] = unit
    else:
        notes.append(f"{label}: units {w.units!r} are not absolute radiometric units (W·m⁻²·nm⁻¹ or "
                     "multiples); no illuminance")
    X, Y, Z = XYZ
    xy = XYZ_to_xy(XYZ)
    uvp = XYZ_to_uv_prime(XYZ)
    return LightIndices(name, spd.source, w, CCT, Duv, (float(xy[0]), float(xy[1])),
                        (float(uvp[0]), float(uvp[1])), Ra, R, Rf, Rg, SSI, SSI_u, ref_label,
                        illum, quantity, unit, methods, units_of, tuple(dict.fromkeys(notes)), tuple(warns))


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
    from workbench.colorimetry.samples import ces_cie_224, tcs_cie_13_3

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
    from workbench.model.spectra import resample_values

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
    """
    w = working_spd(spd, extrapolation=extrapolation)
    label = _label(spd)
    if cct is None:
        XYZ = _emission_XYZ(w.wavelengths, w.flat()[0])
        if not XYZ[1] > 0:
            raise WorkbenchError(f"{label}: the SPD has no visible power (Σ E ȳ Δλ = {XYZ[1]:.3g})")
        cct, _ = _cct_duv(XYZ)
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
    return CameraFidelity(camera.name, _short(spd), ref_label, float(cct), names, sets, d, Lab_t, Lab_r,
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
    """
    from workbench.analysis.camera import bradford_matrix
    from workbench.colorimetry.primaries import white_chromaticity

    if not (0 <= match < differ):
        raise WorkbenchError(f"thresholds must satisfy 0 <= match < differ (got match {match:g}, "
                             f"differ {differ:g})")
    A = working_spd(spd_a, extrapolation=extrapolation)
    B = working_spd(spd_b, extrapolation=extrapolation)
    la, lb = _label(spd_a), _label(spd_b)
    g, Ea, Eb, notes = _common_grid(A, B)
    notes = list(A.notes) + list(B.notes) + notes
    cm = cmfs_on(g).values
    step = float(g[1] - g[0])
    Wa, Wb = Ea @ cm * step, Eb @ cm * step
    for lab, W in ((la, Wa), (lb, Wb)):
        if not W[1] > 0:
            raise WorkbenchError(f"{lab}: the SPD has no visible power (Σ E ȳ Δλ = {W[1]:.3g})")
    CCT_a, _ = _cct_duv(Wa)
    CCT_b, _ = _cct_duv(Wb)
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
    return LightComparison(_short(spd_a), _short(spd_b), CCT_a, CCT_b, (float(uva[0]), float(uva[1])), (float(uvb[0]), float(uvb[1])),
                           duv, cam_name, names, sets, modes, float(match), float(differ),
                           tuple(dict.fromkeys(notes)))


# --------------------------------------------------------------------------
# The whole report
# --------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class LightReport:
    """Everything said about one light: indices, camera fidelity (optional), comparison (optional), caution."""

    indices: LightIndices
    camera: CameraFidelity | None = None
    comparison: LightComparison | None = None
    caution: str = CAUTION

    @property
    def notes(self) -> tuple[str, ...]:
        n = list(self.indices.notes)
        if self.camera is not None:
            n += list(self.camera.notes)
        if self.comparison is not None:
            n += list(self.comparison.notes)
        return tuple(dict.fromkeys(n))

    def to_dict(self) -> dict:
        """The JSON contract of ``workbench light``: CCT, Duv, Ra, R, Rf, Rg, SSI, ... and ``caution``."""
        d = {"caution": self.caution, **self.indices.to_dict()}
        if self.camera is not None:
            d["camera_fidelity_index"] = self.camera.index
            d["camera_delta_E00"] = {n: float(v) for n, v in zip(self.camera.sample_names, self.camera.delta_E00)}
            d["camera"] = self.camera.to_dict()
            d["method"]["camera_fidelity_index"] = self.camera.method
        if self.comparison is not None:
            d["compare"] = self.comparison.to_dict()
        return d

    def _repr_html_(self) -> str:
        import html

        rows = "".join(
            f"<tr><td>{html.escape(str(r['quantity']))}</td><td style='text-align:right'>{_fmt(r['value'])}</td>"
            f"<td>{html.escape(str(r['unit']))}</td><td style='font-size:85%'>{html.escape(r['method'])}</td></tr>"
            for r in report_rows(self))
        warn = "".join(f"<p style='color:#a50'>warning: {html.escape(w)}</p>" for w in self.indices.warnings)
        return (f"<p style='color:#a00'><b>Caution:</b> {html.escape(self.caution)}</p>{warn}"
                f"<table><tr><th>quantity</th><th>value</th><th>unit</th><th>method</th></tr>{rows}</table>")


def _fmt(v) -> str:
    if v is None:
        return "n/a"
    if isinstance(v, float):
        return f"{v:.4f}" if abs(v) < 0.1 else f"{v:.1f}" if abs(v) >= 1000 else f"{v:.2f}"
    return str(v)


def report_rows(report: LightReport) -> list[dict]:
    """Rows (quantity, value, unit, method) of a report: the indices, then the camera fidelity index."""
    rows = report.indices.rows()
    if report.camera is not None:
        c = report.camera
        rows.append({"quantity": "camera fidelity index", "value": c.index, "unit": "1 (0-100)",
                     "method": f"{c.camera} vs {c.reference}, 113 samples; Tech 3355 scoring formula on "
                               "open samples (not the EBU's index)"})
        for s, v in c.by_set.items():
            rows.append({"quantity": f"  over {s}", "value": v["camera_fidelity_index"], "unit": "1 (0-100)",
                         "method": f"the same on the {v['count']} samples of the set"})
        st = c.stats
        rows.append({"quantity": "camera ΔE00 mean / max", "value": f"{st['mean']:.2f} / {st['max']:.2f}",
                     "unit": "ΔE00", "method": f"CIEDE2000 per sample, test vs reference; worst {st['worst']}"})
    return rows


def light_report(spd: Spectra, *, camera=None, compare: Spectra | None = None, ssi_reference="auto",
                 extrapolation: str = "none", match: float = MATCH_DELTA_E00,
                 differ: float = DIFFER_DELTA_E00) -> LightReport:
    """The full report of one light: indices, and with a camera its fidelity index, and a comparison.

    See :func:`light_indices`, :func:`camera_fidelity` and
    :func:`compare_lights` for the parts; the camera part uses the CCT
    found for the indices.
    """
    ind = light_indices(spd, ssi_reference=ssi_reference, extrapolation=extrapolation)
    fid = None
    if camera is not None:
        fid = camera_fidelity(camera, spd, cct=ind.CCT, extrapolation=extrapolation)
    cmp = None
    if compare is not None:
        cmp = compare_lights(spd, compare, camera=camera, match=match, differ=differ,
                             extrapolation=extrapolation)
    return LightReport(ind, fid, cmp)
