"""Target colour-matching functions for a set of display primaries.

A camera whose three sensitivities are these functions (the Luther
condition for those primaries) would give, for any light, the linear RGB
that the display needs to reproduce its colour. They are the CIE
colour-matching functions carried through the inverse normalised primary
matrix, r̄ḡb̄(λ) = NPM⁻¹ · x̄ȳz̄(λ), and they have negative lobes wherever
the spectral locus lies outside the primaries' triangle.

Scale: RGB = Σ S(λ) r̄ḡb̄(λ) Δλ gives RGB on the scale of XYZ = Σ S x̄ȳz̄ Δλ
with the white (1, 1, 1) ↔ Y = 1; so a spectrum with Y = 1 and the white's
chromaticity gives RGB = (1, 1, 1).

References
----------
SMPTE RP 177-1993 (the matrix). CIE 15:2004, § 7 (summation).
Luther, R. (1927). Aus dem Gebiet der Farbreizmetrik. *Z. tech. Phys.* 8, 540.
"""

from __future__ import annotations

import numpy as np

from workbench.colorimetry.cie import cmfs_on, observer_key, observer_label
from workbench.errors import WorkbenchError
from workbench.colorimetry.primaries import Primaries
from workbench.model.spectra import Spectra, check_wavelengths, is_uniform

__all__ = ["TARGET_NAMES", "target_cmfs", "primaries_XYZ", "RGB_of_emission"]

TARGET_NAMES = ("r_bar", "g_bar", "b_bar")


def target_cmfs(primaries: Primaries, wavelengths, observer="2") -> Spectra:
    """Target colour-matching functions r̄, ḡ, b̄ for ``primaries``.

    Parameters
    ----------
    primaries : Primaries
    wavelengths : (n,) array_like, nm
    observer : {'2', '10'}

    Returns
    -------
    Spectra
        Kind ``'sensitivity'``, 3 curves ``r_bar, g_bar, b_bar`` shaped
        (3, n), with their negative lobes (never clipped).

    Notes
    -----
    r̄ḡb̄(λ) = M⁻¹ x̄ȳz̄(λ), M the RP 177 normalised primary matrix.

    References
    ----------
    SMPTE RP 177-1993 (the matrix).
    Luther, R. (1927). Aus dem Gebiet der Farbreizmetrik. *Z. tech. Phys.* 8, 540.
    docs/methods.md §5.
    """
    if not isinstance(primaries, Primaries):
        raise WorkbenchError(f"primaries must be a Primaries (got {type(primaries).__name__})")
    wl = check_wavelengths(wavelengths)
    key = observer_key(observer)
    cm = cmfs_on(wl, key)
    values = primaries.matrix_XYZ_to_RGB @ cm.values.T
    return Spectra(
        wl, values, TARGET_NAMES, kind="sensitivity", units="relative",
        notes=(cm.note,
               f"target colour-matching functions for {primaries.name} "
               f"(white {primaries.white_name}): inverse SMPTE RP 177 matrix applied to "
               f"{observer_label(key)} x̄ȳz̄"),
    )


def primaries_XYZ() -> Primaries:
    """The CIE XYZ "primaries": x, y = (1, 0), (0, 1), (0, 0), white E (1/3, 1/3).

    Their normalised primary matrix is the identity, so their target
    functions are x̄ȳz̄ themselves (CIE 15:2004 § 7).
    """
    return Primaries(
        np.array([[1.0, 0.0], [0.0, 1.0], [0.0, 0.0]]),
        np.array([1 / 3, 1 / 3]), "E", "CIE XYZ", "CIE 15:2004 (imaginary XYZ primaries)",
    )


def RGB_of_emission(values, targets: Spectra) -> np.ndarray:
    """RGB = Σ S(λ) t(λ) Δλ of emission ``values`` (..., n) under ``targets``.

    ``targets`` are three sensitivities on a uniform grid, the same as the
    values'. Returns (..., 3).

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 7.
    SMPTE RP 177-1993.
    docs/methods.md §5.
    """
    if targets.kind != "sensitivity" or len(targets) != 3:
        raise WorkbenchError("targets must be 3 sensitivity curves (from target_cmfs)")
    if not is_uniform(targets.wavelengths):
        raise WorkbenchError("targets must be on a uniform grid for summation")
    v = np.asarray(values, dtype=float)
    if v.shape[-1] != targets.wavelengths.size:
        raise WorkbenchError(
            f"values have {v.shape[-1]} wavelengths but the targets {targets.wavelengths.size}"
        )
    step = float(targets.wavelengths[1] - targets.wavelengths[0])
    return v @ (targets.flat().T * step)
