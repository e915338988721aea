"""Light sources on camera: the published indices, a camera-side fidelity index, two fixtures compared.

A measured spectral power distribution (SPD) of a luminaire goes through
three stages:

1. **Published indices**, computed by the workbench in numpy and checked
   against colour-science (the reference library): CCT and Duv (Ohno 2013), the CIE 13.3 general and special
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

from dataclasses import dataclass

from workbench.model.spectra import Spectra
from workbench.analysis.light_camera import (
    DIFFER_DELTA_E00, MATCH_DELTA_E00, CameraFidelity, ComparisonMode, LightComparison,
    camera_fidelity, camera_fidelity_score, compare_lights,
)
from workbench.analysis.light_indices import LightIndices, light_indices
from workbench.analysis.light_spd import (
    CAUTION, REQUIRED_RANGE, absolute_scale, daylight_spd, parse_light, planckian_spd,
    read_light, reference_illuminant, working_spd,
)
from workbench.report.html import light_report_html
from workbench.report.light import report_rows

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
    "report_rows",
]


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
        return light_report_html(self)


def light_report(spd: Spectra, *, camera=None, compare: Spectra | None = None, ssi_reference="auto",
                 extrapolation: str = "none", match: float = MATCH_DELTA_E00,
                 differ: float = DIFFER_DELTA_E00) -> LightReport:
    """The full report of one light: indices, and with a camera its fidelity index, and a comparison.

    See :func:`light_indices`, :func:`camera_fidelity` and
    :func:`compare_lights` for the parts; the camera part uses the CCT
    found for the indices.

    References
    ----------
    CIE 13.3-1995; CIE 224:2017; ANSI/IES TM-30-18; Ohno (2014), *LEUKOS*
    10(1), 47-55; EBU Tech 3355 (2017) § 1.5.1 (scoring only); IEC 62471:2006
    (the caution).
    docs/methods.md §§17-18.
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
