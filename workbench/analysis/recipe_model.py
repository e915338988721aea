"""The layer recipe: :class:`Recipe`, a thin-film stack with the geometry it was made for.

Materials by symbol, physical thicknesses from the incidence side, the
QWOTs' reference wavelength, incidence and substrate media, the chief ray's
angle, the cone's f-number and the polarisation; its table, its layer
formula and its R, T over the cone (:func:`workbench.optics.stacks.cone_response`).
:mod:`workbench.analysis.recipe` makes recipes and
:mod:`workbench.analysis.recipe_refine` refines them; both hand this class on.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from workbench.optics.materials import Material
from workbench.optics.stacks import cone_response

__all__ = ["Recipe"]


@dataclass(frozen=True)
class Recipe:
    """A layer recipe: materials by symbol, physical thicknesses, and the geometry it was made for.

    Attributes
    ----------
    symbols : tuple of str
        Each layer's material symbol, from the incidence side.
    materials : dict of str to Material
    thicknesses_nm : (L,) ndarray, nm
    reference_nm : float, nm
        Reference wavelength of the QWOTs.
    incident, substrate : Material
    aoi_deg : float
        Chief-ray angle in the incidence medium.
    f_number : float or None
    polarisation : str
        ``'unpolarised'``, ``'s'`` or ``'p'``.
    """

    symbols: tuple
    materials: dict
    thicknesses_nm: np.ndarray
    reference_nm: float
    incident: Material
    substrate: Material
    aoi_deg: float = 0.0
    f_number: float | None = None
    polarisation: str = "unpolarised"
    notes: tuple = field(default=())

    def indices(self, wavelengths_nm) -> np.ndarray:
        """Layer indices ``(L, n_λ)``, complex."""
        by_symbol = {s: m.index(wavelengths_nm) for s, m in self.materials.items()}
        return np.stack([by_symbol[s] for s in self.symbols])

    def qwots(self) -> np.ndarray:
        """Each layer's optical thickness in quarter waves at ``reference_nm`` (normal incidence)."""
        n = np.array([self.materials[s].index([self.reference_nm])[0].real for s in self.symbols])
        return self.thicknesses_nm * n * 4.0 / self.reference_nm

    def table(self) -> list[dict]:
        """The recipe table: one row per layer, material, physical thickness (nm) and QWOT."""
        q = self.qwots()
        return [{"layer": i + 1, "symbol": s, "material": self.materials[s].name,
                 "thickness_nm": float(d), "qwot": float(qq)}
                for i, (s, d, qq) in enumerate(zip(self.symbols, self.thicknesses_nm, q))]

    def formula(self, digits: int = 2) -> str:
        """The recipe as a layer formula with physical thicknesses (``H[52.31] L[88.02] …``)."""
        return " ".join(f"{s}[{d:.{digits}f}]" for s, d in zip(self.symbols, self.thicknesses_nm))

    def response(self, wavelengths_nm, *, derivatives: bool = False, thicknesses_nm=None):
        """R, T (and thickness derivatives) over the cone and polarisations, ``(n_λ,)`` each."""
        wl = np.asarray(wavelengths_nm, dtype=float)
        d = self.thicknesses_nm if thicknesses_nm is None else thicknesses_nm
        return cone_response(self.indices(wl)[..., :], d, wl, aoi_deg=self.aoi_deg, f_number=self.f_number,
                             incident=self.incident.index(wl).real, substrate=self.substrate.index(wl),
                             polarisation=self.polarisation, derivatives=derivatives)
