"""Layer stacks written compactly, their thicknesses, and their response over a cone of rays.

The layer formula
-----------------
A stack is written from the incidence side as a formula over material
symbols (keys of a ``materials`` mapping such as ``{H = "TiO2", L = "SiO2"}``):

``H``
    One quarter-wave optical thickness (QWOT) of material H at the
    reference wavelength: physical thickness ``λ_ref / (4 n_H(λ_ref))``.
``0.5L``, ``2H``
    A multiple of the QWOT (a number written before the symbol).
``H[52.3]``
    A physical thickness in nm, written in brackets after the symbol.
``( … )^N``
    A group repeated N times; groups nest: ``((H L)^3 2H)^2``.

Symbols may follow each other without spaces when that is unambiguous
(``(HL)^10 H``): the longest symbol that matches is taken first. Nothing
is evaluated: the formula is parsed by a small tokenizer.

References
----------
H. A. Macleod, *Thin-Film Optical Filters*, 4th ed., CRC Press, 2010,
ch. 1 (the QWOT notation H, L and multiples; symmetric periods such as
(0.5L H 0.5L)^N).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from workbench.errors import WorkbenchError
from workbench.optics.splitter import distinct_rays, ray_angles
from workbench.optics.materials import Material, material_named
from workbench.optics.thinfilm import StackResponse, stack_response

__all__ = ["Layer", "parse_layer_formula", "physical_thicknesses", "qwot_of", "cone_rays", "cone_response",
           "CONE_POLARISATIONS"]

#: How the two polarisations are weighted: unpolarised (mean), s only, p only.
CONE_POLARISATIONS = ("unpolarised", "s", "p")

_MAX_LAYERS = 2000


@dataclass(frozen=True)
class Layer:
    """One layer of a parsed formula.

    Attributes
    ----------
    symbol : str
        The material symbol as written.
    qwot : float or None
        Thickness in quarter waves at the reference wavelength, or None.
    physical_nm : float or None
        Physical thickness in nm, or None (exactly one of the two is set).
    """

    symbol: str
    qwot: float | None = None
    physical_nm: float | None = None


_NUMBER = r"[0-9]*\.?[0-9]+(?:[eE][+-]?[0-9]+)?"


def parse_layer_formula(formula: str, symbols, *, what: str = "'layers'") -> list[Layer]:
    """Parse a layer formula into layers, from the incidence side.

    Parameters
    ----------
    formula : str
        E.g. ``"(H L)^10 H"``, ``"0.5L (H L)^8 H 0.5L"``, ``"H[52.3] L[88]"``.
    symbols : iterable of str
        The material symbols the formula may use.
    what : str
        How messages name the formula (e.g. ``chain[2].layers``).

    Returns
    -------
    list of Layer

    Raises
    ------
    WorkbenchError
        One line saying where in the formula and what was expected.
    """
    if not isinstance(formula, str) or not formula.strip():
        raise WorkbenchError(f"{what} must be a layer formula such as '(H L)^10 H' (got {formula!r})")
    names = sorted({str(s) for s in symbols}, key=len, reverse=True)
    if not names:
        raise WorkbenchError(f"{what} needs materials to name (got none)")
    sym_re = "|".join(re.escape(n) for n in names)
    token_re = re.compile(
        rf"\s*(?:(?P<open>\()|(?P<close>\))\s*(?:\^\s*(?P<rep>[0-9]+))?"
        rf"|(?P<factor>{_NUMBER})?\s*(?P<sym>{sym_re})(?:\s*\[\s*(?P<phys>{_NUMBER})\s*(?:nm)?\s*\])?)"
    )
    stack: list[list[Layer]] = [[]]
    pos = 0
    text = formula
    while pos < len(text):
        if text[pos:].strip() == "":
            break
        m = token_re.match(text, pos)
        if m is None or m.end() == pos:
            at = pos + len(text[pos:]) - len(text[pos:].lstrip())
            raise WorkbenchError(
                f"{what} must be symbols ({', '.join(sorted(names))}), numbers before them, [nm] after them "
                f"and (groups)^N (got {text[at:at + 12]!r} at character {at + 1})"
            )
        pos = m.end()
        if m.group("open"):
            stack.append([])
        elif m.group("close") is not None and m.group("close"):
            if len(stack) == 1:
                raise WorkbenchError(f"{what} has a ')' without its '(' (got {formula!r})")
            group = stack.pop()
            n = int(m.group("rep")) if m.group("rep") else 1
            if n < 1:
                raise WorkbenchError(f"{what} must repeat a group at least once (got ^{n})")
            stack[-1].extend(group * n)
            if len(stack[-1]) > _MAX_LAYERS:
                raise WorkbenchError(f"{what} must give at most {_MAX_LAYERS} layers (got more)")
        else:
            factor = m.group("factor")
            phys = m.group("phys")
            sym = m.group("sym")
            if factor is not None and phys is not None:
                raise WorkbenchError(f"{what} must give a layer as a QWOT multiple or [nm], not both "
                                     f"(got {m.group(0).strip()!r})")
            if phys is not None:
                value = float(phys)
                if not value > 0:
                    raise WorkbenchError(f"{what} must give thicknesses > 0 nm (got {m.group(0).strip()!r})")
                stack[-1].append(Layer(sym, None, value))
            else:
                value = 1.0 if factor is None else float(factor)
                if not value > 0:
                    raise WorkbenchError(f"{what} must give QWOT multiples > 0 (got {m.group(0).strip()!r})")
                stack[-1].append(Layer(sym, value, None))
    if len(stack) != 1:
        raise WorkbenchError(f"{what} has a '(' without its ')' (got {formula!r})")
    if not stack[0]:
        raise WorkbenchError(f"{what} must hold at least one layer (got {formula!r})")
    return stack[0]


def qwot_of(material: Material, reference_nm: float) -> float:
    """Physical thickness (nm) of one quarter wave of ``material`` at ``reference_nm`` (normal incidence)."""
    n = material.index([reference_nm])[0].real
    return reference_nm / (4.0 * n)


def physical_thicknesses(layers, materials: dict, reference_nm: float | None) -> np.ndarray:
    """Physical thickness of every layer, nm.

    Parameters
    ----------
    layers : list of Layer
    materials : dict of str to Material
        By symbol.
    reference_nm : float or None
        Reference wavelength of the QWOTs (needed when any layer is a QWOT).

    Returns
    -------
    (L,) ndarray, nm
    """
    out = np.empty(len(layers))
    for i, layer in enumerate(layers):
        if layer.physical_nm is not None:
            out[i] = layer.physical_nm
        else:
            if reference_nm is None:
                raise WorkbenchError("'reference_nm' must be given when layers are written as QWOTs")
            out[i] = layer.qwot * qwot_of(materials[layer.symbol], reference_nm)
    return out


def resolve_materials(table, *, what: str = "'materials'", user=None) -> dict[str, Material]:
    """``{symbol: name or index}`` → ``{symbol: Material}``; errors name the symbol."""
    if not isinstance(table, dict) or not table:
        raise WorkbenchError(f"{what} must be a table of symbols such as {{H = \"TiO2\", L = \"SiO2\"}} "
                             f"(got {table!r})")
    out = {}
    for sym, spec in table.items():
        if not re.fullmatch(r"[A-Za-z][A-Za-z0-9_]*", str(sym)):
            raise WorkbenchError(f"{what}.{sym} must be a symbol of letters, digits and _ starting with a letter")
        try:
            out[str(sym)] = material_named(spec if isinstance(spec, str) else spec, user=user)
        except WorkbenchError as err:
            raise WorkbenchError(f"{what}.{sym}: {err}") from None
    return out


def cone_rays(aoi_deg, f_number, medium_index: float, *, rings: int = 4, azimuths: int = 8):
    """Angles of incidence (deg) and weights of the rays of a cone on a tilted surface.

    Parameters
    ----------
    aoi_deg : float
        Chief-ray angle on the surface, in the incidence medium.
    f_number : float or None
        Working f-number; None gives the chief ray alone.
    medium_index : float
        Index of the incidence medium (the cone's half-angle obeys
        ``n sin α = 1/(2N)``).
    rings, azimuths : int
        The pupil quadrature (:func:`workbench.optics.splitter.cone_quadrature`),
        rays of equal angle merged.

    Returns
    -------
    angles : (K,) ndarray, degrees
    weights : (K,) ndarray, sum 1
    """
    if f_number is None:
        return np.array([float(aoi_deg)]), np.ones(1)
    angles, w = _cone_rays(float(aoi_deg), float(f_number), float(medium_index), int(rings), int(azimuths))
    return angles.copy(), w.copy()


@lru_cache(maxsize=256)
def _cone_rays(aoi_deg: float, f_number: float, medium_index: float, rings: int, azimuths: int):
    """:func:`cone_rays` for one geometry, kept (a fit or a slider moves the layers far more often than the cone)."""
    r, phi, w = distinct_rays(rings, azimuths)
    angles = ray_angles(np.asarray(aoi_deg), np.asarray(f_number), np.asarray(medium_index), r, phi)
    angles = np.asarray(angles, dtype=float).reshape(-1)
    w = np.array(w, dtype=float)
    angles.setflags(write=False)
    w.setflags(write=False)
    return angles, w


def cone_response(layer_indices, thicknesses_nm, wavelengths_nm, *, aoi_deg=0.0, f_number=None,
                  incident=1.0, substrate=1.52, polarisation: str = "unpolarised", rings: int = 4,
                  azimuths: int = 8, back_surface: bool = False, derivatives: bool = False):
    """R and T of stacks averaged over a cone of rays and the polarisations.

    Parameters
    ----------
    layer_indices, thicknesses_nm, wavelengths_nm
        As for :func:`workbench.optics.thinfilm.stack_response` (batches allowed).
    aoi_deg : float
        Chief-ray angle in the incidence medium, degrees.
    f_number : float or None
        Working f-number of the cone (None: the chief ray alone).
    incident, substrate : complex or (n_λ,) array_like
    polarisation : {'unpolarised', 's', 'p'}
    rings, azimuths : int
    back_surface : bool
    derivatives : bool

    Returns
    -------
    R, T : (..., n_λ) ndarray, fractions 0-1
    dR, dT : (..., L, n_λ) ndarray or None
        Thickness derivatives (1/nm) when asked.

    Notes
    -----
    The rays' angles are set once for the cone, with the incidence medium's
    index at the middle of the grid (its dispersion does not move the rays);
    the stack itself sees every index at every wavelength.
    """
    if polarisation not in CONE_POLARISATIONS:
        raise WorkbenchError(f"'polarisation' must be one of {', '.join(CONE_POLARISATIONS)} (got {polarisation!r})")
    n0 = np.asarray(incident)
    n0_mid = float(np.real(n0 if n0.ndim == 0 else n0[n0.size // 2]))
    angles, weights = cone_rays(aoi_deg, f_number, n0_mid, rings=rings, azimuths=azimuths)
    if np.any(angles >= 90):
        raise WorkbenchError(f"the cone reaches {angles.max():.1f}° from the surface normal; expected < 90°")
    res: StackResponse = stack_response(layer_indices, thicknesses_nm, wavelengths_nm, angles,
                                        incident=incident, substrate=substrate, back_surface=back_surface,
                                        derivatives=derivatives)
    pol_w = {"unpolarised": np.array([0.5, 0.5]), "s": np.array([1.0, 0.0]), "p": np.array([0.0, 1.0])}[polarisation]
    wts = pol_w[:, None] * weights[None, :]                                  # (2, K)
    if not derivatives:
        # the weighted sum over polarisation and ray as one matrix product
        flat = wts.reshape(-1)
        R = flat @ res.R.reshape(res.R.shape[:-3] + (flat.size, -1))
        T = flat @ res.T.reshape(res.T.shape[:-3] + (flat.size, -1))
        return R, T, None, None
    R = np.einsum("...pkw,pk->...w", res.R, wts)
    T = np.einsum("...pkw,pk->...w", res.T, wts)
    dR = np.einsum("...pkw,pk->...w", res.dR_dd, wts)
    dT = np.einsum("...pkw,pk->...w", res.dT_dd, wts)
    return R, T, dR, dT
