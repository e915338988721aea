"""Light sources, second stage: the published indices of one SPD (numpy, checked against colour-science).

CCT and Duv (Ohno 2013), CIE 13.3 Ra and R1-R14, CIE 224:2017 Rf, ANSI/IES
TM-30-18 Rg, the Academy SSI and the illuminance when the SPD is absolute;
see :mod:`workbench.analysis.light` for the whole stage. The indices are
the workbench's own (:mod:`workbench.colorimetry.cct`,
:mod:`workbench.colorimetry.rendering`), written to the published methods
with colour-science 0.4.7's conventions and checked against it in
tests/test_light_indices_native.py; colour-science is not imported here.

References
----------
CIE 13.3-1995, *Method of measuring and specifying colour rendering
properties of light sources*.
CIE 224:2017, *CIE 2017 colour fidelity index for accurate scientific use*.
ANSI/IES TM-30-18, *IES method for evaluating light source color rendition*.
Ohno, Y. (2014). Practical use and calculation of CCT and Duv. *LEUKOS*
10(1), 47-55.
Holm, J. et al. (2016). A cinematographic spectral similarity index.
SMPTE Annual Technical Conference.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from workbench.analysis.light_spd import (
    DAYLIGHT_CCT_RANGE,
    K_M,
    SSI_DAYLIGHT_FROM,
    absolute_scale,
    light_label,
    light_short_name,
    reference_illuminant,
    working_spd,
)
from workbench.colorimetry.cct import XYZ_to_uv_1960, cct_ohno_2013
from workbench.colorimetry.cie import canonical_illuminant, illuminant_table
from workbench.colorimetry.coordinates import XYZ_to_uv_prime, XYZ_to_xy
from workbench.colorimetry.rendering import (
    colour_fidelity_cie_224,
    colour_rendering_cie_13_3,
    spectral_similarity_index,
)
from workbench.colorimetry.tristimulus import emission_weights
from workbench.errors import WorkbenchError
from workbench.model.spectra import Spectra, grid

__all__ = ["LightIndices", "light_indices", "cct_duv", "emission_XYZ"]

_Q_HALF = 3.16

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
# Published indices
# --------------------------------------------------------------------------


def cct_duv(XYZ: np.ndarray) -> tuple[float, float]:
    """CCT (K) and Duv of a light's XYZ (3,), by Ohno's method in CIE 1960 (u, v).

    u = 4X/(X + 15Y + 3Z), v = 6Y/(X + 15Y + 3Z); Duv is the signed distance
    from the Planckian locus, positive above it.

    References
    ----------
    Ohno, Y. (2014). Practical use and calculation of CCT and Duv. *LEUKOS*
    10(1), 47-55.
    CIE 15:2004, *Colorimetry*, 3rd ed. (c₂ = 1.4388×10⁻² m·K).
    docs/methods.md §17.

    Examples
    --------
    >>> round(cct_duv([109.850, 100.0, 35.585])[0])  # illuminant A's white (ASTM E308), about 2856 K
    2856
    """
    CCT, Duv = cct_ohno_2013(XYZ_to_uv_1960(np.asarray(XYZ, dtype=float)))
    return float(CCT), float(Duv)


def emission_XYZ(wl: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Σ E x̄ȳz̄ Δλ (CIE 1931 2°) on a uniform grid — unnormalised."""
    return emission_weights(wl).apply(values)


_CHECKED = "workbench, checked against colour-science"

_METHODS = {
    "CCT": f"Ohno 2013 from CIE 1960 uv, CIE 1931 2°, CIE 15 summation on the working grid ({_CHECKED}); K",
    "Duv": "Ohno 2013: signed distance from the Planckian locus in CIE 1960 uv (+ above)",
    "Ra": f"CIE 13.3-1995 general colour rendering index, mean of R1-R8 ({_CHECKED})",
    "R": "CIE 13.3-1995 special colour rendering indices R1-R14 (TCS01-TCS14)",
    "Rf": f"CIE 224:2017 colour fidelity index (99 CES, CIE 1964 10°, CAM02-UCS; {_CHECKED})",
    "Rg": f"ANSI/IES TM-30-18 gamut index (16 hue bins of the 99 CES; {_CHECKED})",
    "SSI": f"Academy spectral similarity index, 375-675 nm, rounded to a whole number ({_CHECKED})",
}


@dataclass(frozen=True, eq=False)
class LightIndices:
    """The published indices of one SPD, each with its method (``methods``) and unit (``units_of``).

    ``R`` holds R1-R14; any index that could not be computed is None
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


def _ssi_reference(ssi_reference, cct: float) -> tuple[str, tuple | None, tuple[str, ...]]:
    """(label, (λ nm, SPD) or None, notes) of the SSI reference."""
    wl = grid(375.0, 675.0, 1.0)
    if isinstance(ssi_reference, Spectra):
        w = working_spd(ssi_reference, required=None)
        return (f"{light_label(ssi_reference)} (given)", (w.wavelengths, w.flat()[0]),
                tuple(n for n in w.notes if "put on a 1 nm grid" in n))
    ref = str(ssi_reference).strip()
    if ref.lower() == "auto":
        lo, hi = DAYLIGHT_CCT_RANGE
        if cct > hi:
            return f"none (no automatic reference above {hi:g} K)", None, ()
        label, v = reference_illuminant(cct, wl, daylight_from=SSI_DAYLIGHT_FROM)
        return f"{label} (automatic)", (wl, v), ()
    try:
        name = canonical_illuminant(ref)
        table = illuminant_table(name)
    except (WorkbenchError, ValueError):
        raise WorkbenchError(
            f"SSI reference must be 'auto', a CIE illuminant name (A, D50, D65, ...) or an SPD file "
            f"(got {ssi_reference!r})") from None
    return f"{name} (chosen)", table, ()


def _reference_224_label(cct: float, share: float) -> str:
    """The CIE 224 reference in words: Planckian, CIE daylight, or their blend with the daylight share."""
    if share <= 0:
        return f"Planckian {cct:.0f} K"
    if share >= 1:
        return f"CIE daylight {cct:.0f} K"
    return f"Planckian and CIE daylight at {cct:.0f} K, equal Y, {100 * share:.1f} % daylight"


def _finite(x) -> float | None:
    x = float(x)
    return x if np.isfinite(x) else None


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
    Every index is the workbench's own numpy computation on the
    working-grid SPD (:mod:`workbench.colorimetry.rendering`), following
    the published methods with colour-science 0.4.7's conventions. Each
    index finds its own reference: CIE 13.3 from the Robertson 1968 CCT
    (Planckian below 5000 K, daylight above), CIE 224 / TM-30 from Ohno
    2013 with a Planckian-daylight blend between 4000 and 5000 K. CIE 13.3
    extends the SPD to 360-780 nm with its end values; the SSI fills
    375-380 nm with zeros; both are said in the notes when they happen.

    References
    ----------
    CIE 13.3-1995; CIE 224:2017; ANSI/IES TM-30-18.
    Ohno, Y. (2014). *LEUKOS* 10(1), 47-55.
    Holm, J. et al. (2016). A cinematographic spectral similarity index. SMPTE
    Annual Technical Conference.
    docs/methods.md §17.
    """
    w = working_spd(spd, extrapolation=extrapolation)
    wl = w.wavelengths
    v = w.flat()[0]
    name = light_short_name(spd)
    label = light_label(spd)
    XYZ = emission_XYZ(wl, v)
    if not XYZ[1] > 0:
        raise WorkbenchError(f"{label}: the SPD has no visible power (Σ E ȳ Δλ = {XYZ[1]:.3g})")
    notes = list(w.notes)
    warns: list[str] = []
    CCT, Duv = cct_duv(XYZ)
    if abs(Duv) > _CCT_DUV_LIMIT:
        warns.append(f"|Duv| = {abs(Duv):.4f} > {_CCT_DUV_LIMIT:g}: CCT is not meaningful (CIE 15:2004), "
                     "nor is any index that compares with a reference at that CCT")
    elif abs(Duv) > _CIE_13_3_DC:
        warns.append(f"|Duv| = {abs(Duv):.4f} > {_CIE_13_3_DC:g}: CIE 13.3 asks the test light to lie within "
                     "ΔC 5.4×10⁻³ of its reference; Ra is indicative only")
    if not 1000 <= CCT <= 20000:
        warns.append(f"CCT {CCT:.0f} K lies outside 1000-20000 K, where Ohno 2013 is within 1 K")
    if wl[0] > 360:
        notes.append(f"{label}: the CIE 13.3 computation weighs the SPD over 360-780 nm; below "
                     f"{wl[0]:g} nm it takes the SPD's end value (CIE 167:2005)")
    if w.step != 1.0:
        notes.append(f"{label}: the CIE 13.3 computation interpolates the SPD to 1 nm linearly "
                     "(the workbench's rule for emission spectra, whose narrow lines make higher-order "
                     "interpolation ring)")
    if wl[0] > 375:
        notes.append(f"{label}: the Academy SSI takes the SPD as zero over 375-{wl[0]:g} nm")
    Ra = R = Rf = Rg = SSI = SSI_u = None
    with np.errstate(all="ignore"):
        cri = colour_rendering_cie_13_3(wl, v)
        cfi = colour_fidelity_cie_224(wl, v)
    if np.all(np.isfinite(cri.R)):
        Ra, R = float(cri.Ra[0]), tuple(float(r) for r in cri.R[0])
    else:
        warns.append("Ra: not computed (the CIE 13.3 computation gave no finite number for this SPD)")
    Rf, Rg = _finite(cfi.Rf[0]), _finite(cfi.Rg[0])
    if Rf is None:
        warns.append("Rf, Rg: not computed (the CIE 224 computation gave no finite number for this SPD)")
        Rg = None
    else:
        if Rg is None:
            warns.append("Rg: not computed (a TM-30-18 hue bin holds none of the 99 CES under the reference)")
        notes.append(f"CIE 224:2017 / TM-30-18 reference: "
                     f"{_reference_224_label(float(cfi.CCT[0]), float(cfi.daylight_share[0]))} "
                     f"(CCT {float(cfi.CCT[0]):.0f} K by their own Ohno 2013 computation, 1000-25000 K)")
    ref_label, ref_spd, ref_notes = _ssi_reference(ssi_reference, CCT)
    notes += list(ref_notes)
    if ref_spd is None:
        warns.append(f"SSI: not computed (no automatic reference above {DAYLIGHT_CCT_RANGE[1]:g} K "
                     f"(CCT {CCT:.0f} K); choose one with --ssi-reference NAME|FILE.csv)")
    else:
        with np.errstate(all="ignore"):
            SSI_u = _finite(spectral_similarity_index(wl, v, *ref_spd)[0])
        if SSI_u is None:
            warns.append("SSI: not computed (the test or reference SPD has no power over 375-675 nm)")
        else:
            SSI = int(np.around(SSI_u))
    methods = dict(_METHODS)
    methods["Ra"] += " (reference chosen from the Robertson 1968 CCT)"
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
