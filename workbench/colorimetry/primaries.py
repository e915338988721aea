"""Display primaries: named sets, the RP 177 matrix, luminance, drive levels.

A set of primaries is three chromaticities (x, y) and a white (x, y); from
them the normalised primary matrix (NPM) turns linear RGB (white = 1, 1, 1)
into CIE XYZ (white Y = 1). Primaries come from a named standard, from
chromaticities typed in, or from measured emitter spectra.

Scales: chromaticities are plain fractions; the NPM maps RGB 0-1 to XYZ
with the white at Y = 1; emitter drive levels are fractions of the drive at
which the spectra were measured (1 = as measured).

References
----------
SMPTE RP 177-1993, *Derivation of Basic Television Color Equations*.
ITU-R BT.709-6 (2015), Part 2, items 1.3-1.4.
ITU-R BT.2020-2 (2015), Table 3.
EBU Tech. 3213-E (1975), *EBU Standard for Chromaticity Tolerances for
Studio Monitors*.
FCC (1953) NTSC colour standard, as restated in ITU-R BT.470-6, System M.
SMPTE RP 431-2:2011, *D-Cinema Quality - Reference Projector and
Environment*.
SMPTE RP 145 (1987) / SMPTE 170M-2004, *SMPTE C* phosphor chromaticities.
CIE 15:2004, *Colorimetry*, 3rd ed.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

import numpy as np

from workbench.colorimetry.cie import illuminant_chromaticity
from workbench.colorimetry.tristimulus import tristimulus
from workbench.colorimetry.coordinates import XYZ_to_xy
from workbench.errors import WorkbenchError
from workbench.model.spectra import Spectra

__all__ = [
    "Primaries",
    "PRIMARIES",
    "primaries_named",
    "primaries_from_xy",
    "primaries_from_emitters",
    "white_chromaticity",
    "matrix_RGB_to_XYZ_RP177",
    "matrix_XYZ_to_RGB_RP177",
    "luminance_coefficients",
    "DriveLevels",
    "drive_levels_for_white",
]


def _xy_array(xy, what: str = "primaries") -> np.ndarray:
    p = np.asarray(xy, dtype=float)
    if p.shape == (6,):
        p = p.reshape(3, 2)
    if p.shape != (3, 2):
        raise WorkbenchError(
            f"{what} must be 3 chromaticities (x, y) for R, G, B, shaped (3, 2) or 6 numbers "
            f"(got shape {p.shape})"
        )
    _check_xy(p, what)
    return p


def _check_xy(p: np.ndarray, what: str, *, y_positive: bool = False) -> None:
    if not np.all(np.isfinite(p)):
        raise WorkbenchError(f"{what} must be finite chromaticities (got {p.tolist()})")
    x, y = p[..., 0], p[..., 1]
    bad = (x < 0) | ((y <= 0) if y_positive else (y < 0)) | (x + y > 1 + 1e-12)
    if np.any(bad):
        i = int(np.flatnonzero(bad.ravel())[0])
        xy = p.reshape(-1, 2)[i]
        rule = "y > 0" if y_positive else "y >= 0"
        raise WorkbenchError(
            f"{what} must have x >= 0, {rule} and x + y <= 1 (got x={xy[0]:g}, y={xy[1]:g})"
        )


def _white_array(white) -> np.ndarray:
    w = np.asarray(white, dtype=float)
    if w.shape != (2,):
        raise WorkbenchError(f"white must be one chromaticity (x, y) (got shape {w.shape})")
    _check_xy(w, "white", y_positive=True)
    return w


def matrix_RGB_to_XYZ_RP177(primaries_xy, white_xy) -> np.ndarray:
    """Normalised primary matrix (linear RGB → XYZ) by SMPTE RP 177.

    Parameters
    ----------
    primaries_xy : (3, 2) array_like
        Chromaticities (x, y) of R, G, B.
    white_xy : (2,) array_like
        Chromaticity of the white that RGB = (1, 1, 1) must give.

    Returns
    -------
    (3, 3) ndarray
        NPM with ``XYZ = NPM @ RGB``; RGB (1, 1, 1) gives the white with Y = 1.

    Notes
    -----
    P = [[x_r, x_g, x_b], [y_r, y_g, y_b], [z_r, z_g, z_b]] with z = 1 − x − y;
    W = (x_w/y_w, 1, z_w/y_w); C = P⁻¹W; NPM = P·diag(C) (SMPTE RP 177-1993,
    § 3.3). The second row is the luminance coefficients.

    References
    ----------
    SMPTE RP 177-1993, *Derivation of Basic Television Color Equations*.
    docs/methods.md §5.

    Examples
    --------
    >>> M = matrix_RGB_to_XYZ_RP177([[0.64, 0.33], [0.30, 0.60], [0.15, 0.06]], [0.3127, 0.3290])
    >>> M[1].round(4).tolist()
    [0.2126, 0.7152, 0.0722]
    """
    p = _xy_array(primaries_xy)
    w = _white_array(white_xy)
    P = np.vstack([p[:, 0], p[:, 1], 1.0 - p[:, 0] - p[:, 1]])
    det = np.linalg.det(P)
    if abs(det) < 1e-9:
        raise WorkbenchError(
            f"primaries must not lie on one line in the chromaticity diagram (got {p.tolist()})"
        )
    W = np.array([w[0] / w[1], 1.0, (1.0 - w[0] - w[1]) / w[1]])
    C = np.linalg.solve(P, W)
    return P * C[None, :]


def matrix_XYZ_to_RGB_RP177(primaries_xy, white_xy) -> np.ndarray:
    """Inverse of :func:`matrix_RGB_to_XYZ_RP177`: XYZ (white Y = 1) → linear RGB, (3, 3).

    References
    ----------
    SMPTE RP 177-1993, *Derivation of Basic Television Color Equations*.
    docs/methods.md §5.
    """
    return np.linalg.inv(matrix_RGB_to_XYZ_RP177(primaries_xy, white_xy))


def luminance_coefficients(primaries_xy, white_xy) -> np.ndarray:
    """Luminance coefficients (K_R, K_G, K_B), (3,), summing to 1.

    The Y row of the RP 177 normalised primary matrix: Y = K_R R + K_G G + K_B B.

    >>> luminance_coefficients([[0.67, 0.33], [0.21, 0.71], [0.14, 0.08]], [0.31006, 0.31616]).round(3).tolist()
    [0.299, 0.587, 0.114]

    References
    ----------
    SMPTE RP 177-1993, *Derivation of Basic Television Color Equations*.
    docs/methods.md §5.
    """
    return matrix_RGB_to_XYZ_RP177(primaries_xy, white_xy)[1].copy()


@dataclass(frozen=True, eq=False)
class Primaries:
    """A set of display primaries and its white.

    Parameters
    ----------
    xy : (3, 2) array_like
        Chromaticities (x, y) of R, G, B.
    white_xy : (2,) array_like
        Chromaticity of the white (RGB = 1, 1, 1).
    white_name : str
        'D65', 'C', 'DCI', 'x,y' or the emitter file, for the reader.
    name : str
    source : str
        Where the numbers come from (standard and table, or file).
    notes : tuple of str
        How the chromaticities were obtained (observer, method).
    """

    xy: np.ndarray
    white_xy: np.ndarray
    white_name: str = ""
    name: str = "custom"
    source: str = ""
    notes: tuple[str, ...] = field(default=())

    def __post_init__(self) -> None:
        p = _xy_array(self.xy).copy()
        w = _white_array(self.white_xy).copy()
        matrix_RGB_to_XYZ_RP177(p, w)  # validates non-collinear primaries
        p.setflags(write=False)
        w.setflags(write=False)
        object.__setattr__(self, "xy", p)
        object.__setattr__(self, "white_xy", w)
        object.__setattr__(self, "notes", tuple(self.notes))

    @property
    def matrix_RGB_to_XYZ(self) -> np.ndarray:
        """NPM (3, 3) by SMPTE RP 177; see :func:`matrix_RGB_to_XYZ_RP177`."""
        return matrix_RGB_to_XYZ_RP177(self.xy, self.white_xy)

    @property
    def matrix_XYZ_to_RGB(self) -> np.ndarray:
        """Inverse NPM (3, 3)."""
        return matrix_XYZ_to_RGB_RP177(self.xy, self.white_xy)

    @property
    def luminance_coefficients(self) -> np.ndarray:
        """(K_R, K_G, K_B), the Y row of the NPM."""
        return luminance_coefficients(self.xy, self.white_xy)

    def __repr__(self) -> str:
        r, g, b = (f"({x:.4f}, {y:.4f})" for x, y in self.xy)
        return (
            f"Primaries({self.name!r}: R {r}, G {g}, B {b}, white {self.white_name} "
            f"({self.white_xy[0]:.4f}, {self.white_xy[1]:.4f}))"
        )

    def to_dict(self) -> dict:
        return {
            "name": self.name,
            "source": self.source,
            "primaries_xy": {k: self.xy[i].tolist() for i, k in enumerate("RGB")},
            "white_xy": self.white_xy.tolist(),
            "white_name": self.white_name,
            "notes": list(self.notes),
        }


def _named(name, xy, white, white_name, source) -> Primaries:
    return Primaries(np.array(xy, float), np.array(white, float), white_name, name, source)


#: The named standard sets. Each chromaticity is quoted from the standard
#: named in ``source``.
PRIMARIES: dict[str, Primaries] = {
    # ITU-R BT.709-6, Part 2, items 1.3 (primaries) and 1.4 (white D65).
    "ITU-R BT.709": _named(
        "ITU-R BT.709", [[0.640, 0.330], [0.300, 0.600], [0.150, 0.060]],
        [0.3127, 0.3290], "D65", "ITU-R BT.709-6, Part 2, items 1.3-1.4"),
    # ITU-R BT.2020-2, Table 3 (primaries and white D65).
    "ITU-R BT.2020": _named(
        "ITU-R BT.2020", [[0.708, 0.292], [0.170, 0.797], [0.131, 0.046]],
        [0.3127, 0.3290], "D65", "ITU-R BT.2020-2, Table 3"),
    # EBU Tech. 3213-E (1975): primaries; white D65 given as (0.313, 0.329)
    # in that document (from memory; colour-science carries the same).
    "EBU Tech 3213": _named(
        "EBU Tech 3213", [[0.64, 0.33], [0.29, 0.60], [0.15, 0.06]],
        [0.313, 0.329], "D65", "EBU Tech. 3213-E (1975)"),
    # FCC 1953 NTSC, restated in ITU-R BT.470-6 (System M): primaries and
    # white C, which they quote rounded as (0.310, 0.316); the white here is
    # CIE illuminant C to five digits (CIE 15:2004, Table T.3), which gives
    # the 0.299/0.587/0.114 of ITU-R BT.601 to three decimals (the rounded
    # white gives K_G 0.5864).
    "NTSC 1953": _named(
        "NTSC 1953", [[0.67, 0.33], [0.21, 0.71], [0.14, 0.08]],
        [0.31006, 0.31616], "C", "FCC 1953 NTSC / ITU-R BT.470-6, System M; C per CIE 15:2004"),
    # SMPTE RP 431-2:2011, reference projector primaries; DCI white (0.314, 0.351).
    "SMPTE RP 431-2": _named(
        "SMPTE RP 431-2", [[0.680, 0.320], [0.265, 0.690], [0.150, 0.060]],
        [0.314, 0.351], "DCI", "SMPTE RP 431-2:2011 (DCI-P3)"),
    # SMPTE RP 145 / SMPTE 170M-2004 § 7.1: SMPTE C phosphors, white D65.
    "SMPTE C": _named(
        "SMPTE C", [[0.630, 0.340], [0.310, 0.595], [0.155, 0.070]],
        [0.3127, 0.3290], "D65", "SMPTE RP 145 / SMPTE 170M-2004"),
}

_ALIASES = {
    "bt709": "ITU-R BT.709", "rec709": "ITU-R BT.709", "srgb": "ITU-R BT.709",
    "bt2020": "ITU-R BT.2020", "rec2020": "ITU-R BT.2020",
    "ebu": "EBU Tech 3213", "ebu3213": "EBU Tech 3213", "pal": "EBU Tech 3213",
    "ntsc": "NTSC 1953", "ntsc1953": "NTSC 1953",
    "dcip3": "SMPTE RP 431-2", "p3": "SMPTE RP 431-2", "smpterp4312": "SMPTE RP 431-2",
    "rp4312": "SMPTE RP 431-2",
    "smptec": "SMPTE C", "smpte170m": "SMPTE C",
}


def _squash(name: str) -> str:
    s = re.sub(r"[^a-z0-9]", "", name.lower())
    return s.removeprefix("itur")


def primaries_named(name: str) -> Primaries:
    """A named standard set; spelling is loose ('ITU-R-BT.709', 'bt709', 'DCI-P3').

    Raises :class:`WorkbenchError` listing the names when ``name`` is unknown.

    References
    ----------
    ITU-R BT.709-6 (2015); ITU-R BT.2020-2 (2015); EBU Tech. 3213-E (1975);
    ITU-R BT.470-6 (NTSC 1953); SMPTE RP 431-2:2011; SMPTE RP 145 / 170M-2004.
    docs/methods.md §5.

    Examples
    --------
    >>> primaries_named("ITU-R BT.709").luminance_coefficients.round(4).tolist()  # BT.709-6 item 3.2
    [0.2126, 0.7152, 0.0722]
    """
    key = _squash(str(name))
    for canonical in PRIMARIES:
        if _squash(canonical) == key:
            return PRIMARIES[canonical]
    if key in _ALIASES:
        return PRIMARIES[_ALIASES[key]]
    raise WorkbenchError(
        f"unknown primaries set {name!r}; expected one of {', '.join(PRIMARIES)}"
    )


def white_chromaticity(white, *, observer="2") -> tuple[str, np.ndarray]:
    """Chromaticity (x, y) of a white given as a CIE illuminant name or (x, y).

    Parameters
    ----------
    white : str or (2,) array_like
        ``'D65'``, ``'C'``, ``'D50'``, ``'E'``, ... (any illuminant
        colour-science tabulates), the DCI white ``'DCI'``, or a pair x, y
        (also as the text ``'0.3127,0.3290'``).
    observer : {'2', '10'}
        Observer of the tabulated chromaticities.

    Returns
    -------
    name : str
    xy : (2,) ndarray

    Notes
    -----
    Named illuminants take the chromaticities colour-science tabulates
    (CIE 15:2004, Table T.3; D65 to four digits, 0.3127/0.3290); the DCI
    white is (0.314, 0.351) (SMPTE RP 431-2).

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 7.3 and its tables of illuminant chromaticities.
    docs/methods.md §3.
    """
    if isinstance(white, str):
        text = white.strip()
        if "," in text:
            try:
                parts = [float(t) for t in text.split(",")]
            except ValueError:
                raise WorkbenchError(f"white must be an illuminant name or x,y (got {white!r})") from None
            if len(parts) != 2:
                raise WorkbenchError(f"white must be two numbers x,y (got {white!r})")
            return f"x,y {parts[0]:g},{parts[1]:g}", _white_array(parts)
        if text.upper() in ("DCI", "DCI-P3"):
            return "DCI", np.array([0.314, 0.351])
        found = illuminant_chromaticity(text, observer)
        if found is None:
            raise WorkbenchError(
                f"unknown white {white!r}; expected a CIE illuminant name (A, C, D50, D65, E, ...), "
                "DCI or x,y"
            )
        return found[0], _white_array(found[1])
    return "x,y", _white_array(white)


def primaries_from_xy(xy, white="D65", *, name: str = "custom", observer="2") -> Primaries:
    """Primaries from chromaticities (3, 2) and a white (name or x, y).

    References
    ----------
    SMPTE RP 177-1993, *Derivation of Basic Television Color Equations*.
    docs/methods.md §5.
    """
    wname, w = white_chromaticity(white, observer=observer)
    return Primaries(_xy_array(xy), w, wname, name, "chromaticities as given")


def _emitter_XYZ(spectra: Spectra, observer) -> tuple[np.ndarray, bool, tuple[str, ...]]:
    """XYZ (3, 3) of three emitter spectra at full drive, rows R, G, B."""
    if not isinstance(spectra, Spectra):
        raise WorkbenchError(f"spectra must be a Spectra (got {type(spectra).__name__})")
    if spectra.kind != "emission":
        raise WorkbenchError(f"emitter spectra must be of kind emission (got {spectra.kind})")
    if len(spectra) != 3:
        raise WorkbenchError(
            f"emitter set must hold 3 spectra, R, G, B in that order (got {len(spectra)}: "
            f"{', '.join(spectra.names[:6])})"
        )
    absolute = spectra.units.strip().lower() not in ("relative", "1", "")
    t = tristimulus(spectra, observer=observer, absolute=True)
    XYZ = t.XYZ.reshape(3, 3)
    if not absolute:
        XYZ = XYZ / 683.0  # relative units: Σ S x̄ Δλ without K_m
    if np.any(XYZ.sum(axis=1) <= 0):
        i = int(np.argmax(XYZ.sum(axis=1) <= 0))
        raise WorkbenchError(f"emitter {spectra.names[i]!r} has no visible emission (X + Y + Z <= 0)")
    return XYZ, absolute, t.notes


def primaries_from_emitters(spectra: Spectra, observer="2", *, white="D65", name=None) -> Primaries:
    """Primaries from three emitter spectra (R, G, B in that order).

    Parameters
    ----------
    spectra : Spectra
        Kind emission, 3 spectra, uniform grid covering 380-780 nm.
    observer : {'2', '10'}
    white : str or (2,) array_like
        Target white of the set (the drive levels that reach it come from
        :func:`drive_levels_for_white`).

    Returns
    -------
    Primaries
        x, y of each emitter (CIE 15:2004 § 7: X = Σ S x̄ Δλ, x = X/(X+Y+Z)).

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 7 (emitter XYZ).
    SMPTE RP 177-1993, *Derivation of Basic Television Color Equations*.
    docs/methods.md §5.
    """
    XYZ, _, notes = _emitter_XYZ(spectra, observer)
    wname, w = white_chromaticity(white, observer=observer)
    return Primaries(
        XYZ_to_xy(XYZ), w, wname, name or (spectra.source or "emitters"),
        f"emitter spectra {spectra.source or ', '.join(spectra.names)}",
        tuple(notes),
    )


@dataclass(frozen=True)
class DriveLevels:
    """Drive levels of three emitters that give a white at a luminance.

    ``drive`` (3,) are fractions of the measured drive (1 = as measured);
    ``XYZ_emitters`` (3, 3) rows are the emitters' XYZ at full drive;
    ``luminance`` is the asked white luminance in ``units``; ``reachable``
    is False when a level is negative (white outside the triangle) or above
    1 (more than the emitters give at the measured drive).
    """

    drive: np.ndarray
    XYZ_emitters: np.ndarray
    white_xy: np.ndarray
    luminance: float
    units: str
    reachable: bool
    message: str

    def to_dict(self) -> dict:
        return {
            "drive_levels": self.drive.tolist(),
            "XYZ_emitters_full_drive": self.XYZ_emitters.tolist(),
            "white_xy": self.white_xy.tolist(),
            "white_luminance": self.luminance,
            "units": self.units,
            "reachable": self.reachable,
            "message": self.message,
        }


def drive_levels_for_white(spectra: Spectra, white="D65", luminance: float = 100.0, *,
                           observer="2") -> DriveLevels:
    """Drive levels (3,) that make three emitters give ``white`` at ``luminance``.

    Parameters
    ----------
    spectra : Spectra
        Emission, R, G, B as measured at full drive. Absolute units (radiance
        W·sr⁻¹·m⁻²·nm⁻¹) give luminance in cd·m⁻² (K_m = 683 lm/W);
        ``'relative'`` units give Y = Σ S ȳ Δλ.
    white : str or (2,) array_like
    luminance : float
        Wanted Y of the white, in the units above.

    Notes
    -----
    Solve Σ dᵢ XYZᵢ = XYZ_w with XYZ_w = (x_w/y_w, 1, z_w/y_w)·Y_w; the
    levels are linear in drive (additive mixing, no emitter non-linearity).

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 7.
    SMPTE RP 177-1993, *Derivation of Basic Television Color Equations*.
    docs/methods.md §5.
    """
    if not (np.isfinite(luminance) and luminance > 0):
        raise WorkbenchError(f"luminance must be a positive number (got {luminance})")
    XYZ, absolute, _ = _emitter_XYZ(spectra, observer)
    wname, w = white_chromaticity(white, observer=observer)
    XYZ_w = np.array([w[0] / w[1], 1.0, (1 - w[0] - w[1]) / w[1]]) * luminance
    d = np.linalg.solve(XYZ.T, XYZ_w)
    units = "cd/m² (K_m = 683 lm/W)" if absolute else "relative (Σ S ȳ Δλ)"
    if np.any(d < 0):
        msg = (f"white {wname} lies outside the emitters' triangle: drive "
               f"{', '.join(f'{v:.4f}' for v in d)} has a negative level")
        ok = False
    elif np.any(d > 1):
        msg = (f"white {wname} at Y = {luminance:g} needs more than the measured drive "
               f"(max level {d.max():.4f}); the emitters give at most Y = {luminance / d.max():.4g}")
        ok = False
    else:
        msg = f"white {wname} at Y = {luminance:g} reached"
        ok = True
    return DriveLevels(d, XYZ, w, float(luminance), units, ok, msg)
