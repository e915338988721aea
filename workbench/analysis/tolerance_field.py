"""Tolerance analysis across the image: the colour shift where the chief ray meets the splitter at other angles.

See :func:`field_shift`; part of the analysis described in
:mod:`workbench.analysis.tolerance`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from workbench.analysis.evaluator import DesignEvaluator
from workbench.colorimetry.coordinates import delta_E_CIE2000
from workbench.optics.kinds import ELEMENT_KINDS
from workbench.model.design import Design, FieldPosition
from workbench.errors import WorkbenchError

__all__ = ["DEFAULT_EDGE_OFFSET_DEG", "DEFAULT_CORNER_OFFSET_DEG", "default_field_positions", "splitter_element", "FieldShift",
           "field_shift", "angle_in_glass"]

#: Default field positions when the design gives none: the chief-ray angle in the prism glass at
#: the image edge differs by ±3° from the centre (a near-telecentric camera lens, common practice),
#: at the corner of a 16:9 image by ±3°·√(1 + (9/16)²).
DEFAULT_EDGE_OFFSET_DEG = 3.0
DEFAULT_CORNER_OFFSET_DEG = round(DEFAULT_EDGE_OFFSET_DEG * math.sqrt(1 + (9 / 16) ** 2), 2)

# --------------------------------------------------------------------------
# Across the image
# --------------------------------------------------------------------------


def default_field_positions() -> tuple[FieldPosition, ...]:
    """Centre 0°, edges ±DEFAULT_EDGE_OFFSET_DEG, corners ±DEFAULT_CORNER_OFFSET_DEG (in glass)."""
    e, c = DEFAULT_EDGE_OFFSET_DEG, DEFAULT_CORNER_OFFSET_DEG
    return (FieldPosition("centre", 0.0), FieldPosition(f"edge −{e:g}°", -e), FieldPosition(f"edge +{e:g}°", e),
            FieldPosition(f"corner −{c:g}°", -c), FieldPosition(f"corner +{c:g}°", c))


def angle_in_glass(field_angle_deg: float, medium_index: float) -> float:
    """A ray's angle in the prism glass (degrees) from its angle in air at the entrance face.

    Snell's law at a face normal to the axis: sin θ_glass = sin θ_air / n
    (n the splitter's ``medium_index``; 1 leaves the angle as it is).

    References
    ----------
    Smith, W. J. (2008). *Modern Optical Engineering*, 4th ed., Ch. 2 (refraction). docs/methods.md §16.

    Examples
    --------
    >>> round(angle_in_glass(10.0, 1.52), 4)
    6.5599
    """
    return math.degrees(math.asin(math.sin(math.radians(field_angle_deg)) / medium_index))


def splitter_element(design: Design):
    """The first element whose kind declares ``field_angles`` (the splitter), else None."""
    for e in design.chain:
        if ELEMENT_KINDS[e.type].field_angles:
            return e
    return None


@dataclass(frozen=True, eq=False)
class FieldShift:
    """The colour shift across the image at the nominal design (see :func:`field_shift`).

    Arrays over positions (F,) × illuminants (J,): ``sample_shift_mean``,
    ``sample_shift_max`` (ΔE00 of each sample against itself at the centre,
    mean and max over the samples), ``white_shift``, ``grey_shift`` (ΔE00 of
    the perfect diffuser and of the grey against the centre),
    ``delta_E00_mean`` (mean ΔE00 against the truth); ``sensitivities``
    (F, 3, n) the channels at each position.
    """

    positions: tuple[FieldPosition, ...]
    illuminants: tuple[str, ...]
    splitter: str
    aoi_deg: dict
    sample_shift_mean: np.ndarray
    sample_shift_max: np.ndarray
    white_shift: np.ndarray
    grey_shift: np.ndarray
    delta_E00_mean: np.ndarray
    sensitivities: np.ndarray
    wavelengths: np.ndarray
    grey: float
    method: str

    def rows(self) -> list[dict]:
        """One row per position × illuminant (JSON-ready)."""
        out = []
        for f, p in enumerate(self.positions):
            for j, ill in enumerate(self.illuminants):
                out.append({
                    "position": p.name, "aoi_offset_deg": p.aoi_offset_deg, "field_angle_deg": p.field_angle_deg,
                    "illuminant": ill,
                    **{f"{face}_aoi_deg": a[f] for face, a in self.aoi_deg.items()},
                    "sample_shift_mean": float(self.sample_shift_mean[f, j]),
                    "sample_shift_max": float(self.sample_shift_max[f, j]),
                    "white_shift": float(self.white_shift[f, j]),
                    "grey_shift": float(self.grey_shift[f, j]),
                    "delta_E00_mean": float(self.delta_E00_mean[f, j]),
                })
        return out

    def to_dict(self) -> dict:
        return {
            "splitter": self.splitter,
            "reference": "centre of the image (aoi offset 0°), white balance and matrix of the nominal design there",
            "grey": self.grey,
            "method": self.method,
            "units": {"aoi": "degrees, in the prism glass", "shift": "ΔE00 (CIEDE2000) units"},
            "positions": self.rows(),
        }


def field_shift(design: Design, *, evaluator=None, matrices=None, positions=None) -> FieldShift:
    """The colour shift across the image: the nominal design at field positions where the angle differs.

    Parameters
    ----------
    design : Design
        With a ``dichroic-splitter`` element in its chain.
    evaluator : DesignEvaluator, optional
    matrices : (3, 3) or (J, 3, 3), optional
        The matrix of the nominal design (default: stored, else fitted by
        its rule).
    positions : sequence of FieldPosition, optional
        Default: the design's ``[[tolerance.field]]``, else
        :func:`default_field_positions`.

    Returns
    -------
    FieldShift

    Notes
    -----
    Model (a simplification): the field angle of the chief ray in the prism
    glass adds to the chief-ray angle of incidence on both dichroic faces,
    θ_face = θ_face,centre + δ, as for a field point in the plane of tilt;
    the cone of rays keeps its f-number. A camera has one white balance and
    one matrix for the whole image, set at the centre: so at each position
    the raw RGB is divided by the raw white of the centre and passed through
    the nominal matrix. The shift of a sample is the ΔE00 between its
    CIELAB there and at the centre (CIE 142-2001); the white's and the
    grey's (the design's ``[noise] grey``, a spectrally flat reflectance)
    likewise — a white that is not neutral at the edge is colour shading.

    References
    ----------
    Smith, W. J. (2008). *Modern Optical Engineering*, 4th ed., Ch. 11 (the
    angle shift of an interference edge).
    docs/methods.md §§14, 16.
    """
    ev = evaluator or DesignEvaluator(design)
    sp = splitter_element(design)
    explicit = positions is not None or bool(design.tolerance.field)
    if sp is None:
        raise WorkbenchError(
            f"{design.source or design.name}: field positions need a dichroic-splitter element in the chain "
            "(the angle across the image acts on its faces)" if explicit else
            f"{design.source or design.name}: no dichroic-splitter in the chain, no field analysis")
    pos = tuple(positions if positions is not None else (design.tolerance.field or default_field_positions()))
    if not pos:
        raise WorkbenchError("field_shift: expected at least one field position")
    if matrices is None:
        matrices = ev.measures(use_stored_matrix=design.matrix is not None).matrices
    params = dict(sp.params)
    # the prism glass the field angle enters (the splitter's medium_index; air for a kind without one)
    n_glass = float(params["medium_index"].value) if "medium_index" in params else 1.0
    pos = tuple(p if p.field_angle_deg is None else replace(p, aoi_offset_deg=angle_in_glass(p.field_angle_deg, n_glass))
                for p in pos)
    off = np.array([0.0] + [p.aoi_offset_deg for p in pos])
    angles = {}
    for what in ELEMENT_KINDS[sp.type].field_angles:
        a = params[what].value + off
        if np.any(np.abs(a) > 80):
            raise WorkbenchError(f"{sp.name}.{what} + aoi_offset_deg must stay within ±80° "
                                 f"(got {float(a[np.abs(a) > 80][0]):g}°)")
        angles[f"{sp.name}.{what}"] = a
    S = ev.sensitivities(angles)
    b = ev.bench
    raw, white = b.raw(S)                                           # (F+1, J, K, 3), (F+1, J, 3)
    if np.any(white[0] <= 0):
        raise WorkbenchError("a channel records nothing of the white at the centre; cannot white-balance")
    F1, J = white.shape[:2]
    M = np.broadcast_to(np.asarray(matrices, dtype=float), (J, 3, 3))
    M = np.broadcast_to(M, (F1, J, 3, 3))
    C = raw / white[0][None, :, None, :]
    lab = b.lab_of(C, M)                                            # (F+1, J, K, 3)
    shift = delta_E_CIE2000(lab, lab[0][None])                      # (F+1, J, K)
    truth = delta_E_CIE2000(lab, b.true_Lab)
    grey = float(design.noise.grey)
    Cw = (white / white[0][None])[:, :, None, :]                   # (F+1, J, 1, 3)
    lab_w = b.lab_of(Cw, M)
    lab_g = b.lab_of(grey * Cw, M)
    dw = delta_E_CIE2000(lab_w, lab_w[0][None])[..., 0]
    dg = delta_E_CIE2000(lab_g, lab_g[0][None])[..., 0]
    snell = (f"; field angles given in air turned into the glass (n = {n_glass:g}) by Snell's law at the "
             "entrance face, sin θ_glass = sin θ_air / n" if any(p.field_angle_deg is not None for p in pos) else "")
    method = ("chief-ray angle on both splitter faces = centre angle + aoi_offset_deg (in glass; field in the "
              f"plane of tilt, a simplification{snell}); white balance (raw white at the centre) and the nominal matrix "
              "for the whole image; shift = CIEDE2000 of each sample, of the perfect diffuser (white) and of "
              f"a flat {grey:g} grey against the same at the centre; delta_E00_mean = mean CIEDE2000 against the truth")
    return FieldShift(
        positions=pos, illuminants=tuple(b.illuminant_names), splitter=sp.name,
        aoi_deg={k.rpartition(".")[2].removesuffix("_aoi_deg"): [float(v) for v in a[1:]]
                 for k, a in angles.items()},
        sample_shift_mean=shift[1:].mean(axis=-1), sample_shift_max=shift[1:].max(axis=-1),
        white_shift=dw[1:], grey_shift=dg[1:], delta_E00_mean=truth[1:].mean(axis=-1),
        sensitivities=np.asarray(S[1:]), wavelengths=ev.wavelengths, grey=grey, method=method,
    )
