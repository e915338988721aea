"""CIE tables as plain arrays: colour-matching functions and illuminants.

The tables come from colour-science (the reference library), copied once
into the package data file ``colorimetry/data/cie_tables.npz`` by
``colorimetry/data/make_tables.py`` (a test checks they equal
colour-science's exactly). This module reads that file with numpy alone —
it never imports colour-science — and puts the tables on any wavelength
grid as read-only arrays, cached, so hot paths never build
spectral-distribution objects.

Rules used to put a table on another grid, each reported in the returned
note:

* colour-matching functions (1 nm, 360-830 nm): exact at whole nanometres;
  Sprague interpolation between (CIE 167:2005); zero outside 360-830 nm
  (the functions are below 1e-5 of their peak there; CIE 15:2004 tabulates
  nothing beyond).
* CIE illuminant A: computed from its defining formula on any grid
  (CIE 15:2004, Eq. 2.1), so it needs no interpolation.
* CIE illuminant E: equal energy, 100 at every wavelength by definition.
* every tabulated illuminant: linear interpolation. CIE 15:2004 recommends
  it for the D series (from memory); for the fluorescent, LED and other
  tables, whose narrow lines make higher-order interpolation ring, it is
  the safe choice and the one colour-science makes for all of them.
* the D series (D50, D55, D65, D75) past the end of its table up to
  830 nm: from the daylight basis S0 + M1 S1 + M2 S2 at its correlated
  colour temperature (CIE 15:2004, § 3.1, Eqs. 3.3-3.5, M1 and M2 rounded
  to three decimals), which the standard defines over 300-830 nm.
* any other table, within 360-830 nm (the colour-matching functions'
  table) only: its end values repeated (constant extrapolation,
  CIE 167:2005), said in the note.
* beyond that — below 300 nm or above 830 nm, where the camera may still
  see light but no standard defines these illuminants — a tabulated
  illuminant is refused: the user gives the SPD as a file.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

import numpy as np

from workbench.errors import WorkbenchError
from workbench.model.spectra import Spectra, check_wavelengths, resample_values

__all__ = [
    "canonical_illuminant",
    "OBSERVERS",
    "observer_key",
    "cmfs_table",
    "cmfs_on",
    "illuminant_names",
    "illuminant_on",
    "illuminant_A",
    "illuminant_table",
    "illuminant_chromaticity",
    "daylight_basis",
    "daylight_M1_M2",
    "Tabulated",
]

#: The package data file holding every CIE table (see make_tables.py beside it).
TABLES_FILE = Path(__file__).with_name("data") / "cie_tables.npz"

#: Observer keys accepted everywhere, and colour-science's names for them.
OBSERVERS = {
    "2": "CIE 1931 2 Degree Standard Observer",
    "10": "CIE 1964 10 Degree Standard Observer",
}
_OBSERVER_ALIASES = {
    "2": "2", "2°": "2", "1931": "2", "cie1931": "2", "cie 1931": "2",
    "10": "10", "10°": "10", "1964": "10", "cie1964": "10", "cie 1964": "10",
}
_OBSERVER_LABEL = {"2": "CIE 1931 2°", "10": "CIE 1964 10°"}



def observer_key(observer) -> str:
    """Normalise an observer name ('2', 2, '1931', '10', '1964', ...) to '2' or '10'."""
    key = _OBSERVER_ALIASES.get(str(observer).strip().lower())
    if key is None:
        raise WorkbenchError(
            f"observer must be 2 (CIE 1931 2°) or 10 (CIE 1964 10°) (got {observer!r})"
        )
    return key


def observer_label(observer) -> str:
    return _OBSERVER_LABEL[observer_key(observer)]


@lru_cache(maxsize=1)
def _npz():
    return np.load(TABLES_FILE, allow_pickle=False)


@lru_cache(maxsize=None)
def table(key: str) -> np.ndarray:
    """One array of the package's CIE tables file, read-only (keys: see make_tables.py)."""
    a = _npz()[key]
    a.setflags(write=False)
    return a


@lru_cache(maxsize=4)
def cmfs_table(observer="2") -> tuple[np.ndarray, np.ndarray]:
    """The CIE colour-matching functions as tabulated: ``(λ (471,), x̄ȳz̄ (471, 3))``.

    1 nm steps over 360-830 nm (CIE 15:2004, Tables T.4 and T.5, via
    colour-science). Read-only arrays.
    """
    key = observer_key(observer)
    return table(f"cmfs_{key}_wl"), table(f"cmfs_{key}")


@dataclass(frozen=True)
class Tabulated:
    """A table put on a grid: the values and a note on how they were made."""

    values: np.ndarray
    note: str


@lru_cache(maxsize=128)
def _cmfs_on(key: bytes, observer: str) -> Tabulated:
    wl = np.frombuffer(key, dtype=float)
    twl, tv = cmfs_table(observer)
    out = np.zeros((wl.size, 3))
    inside = (wl >= twl[0]) & (wl <= twl[-1])
    whole = inside & (np.abs(wl - np.round(wl)) < 1e-9)
    idx = np.round(wl[whole] - twl[0]).astype(int)
    out[whole] = tv[idx]
    parts = []
    between = inside & ~whole
    if between.any():
        v, _ = resample_values(tv.T, twl, wl[between], method="sprague")
        out[between] = v.T
        parts.append("Sprague-interpolated between whole nanometres (CIE 167:2005)")
    if (~inside).any():
        parts.append("taken as zero outside 360-830 nm")
    note = f"{observer_label(observer)} colour-matching functions" + (
        ", " + "; ".join(parts) if parts else ", tabulated values"
    )
    out.setflags(write=False)
    return Tabulated(out, note)


def cmfs_on(wavelengths, observer="2") -> Tabulated:
    """The colour-matching functions on ``wavelengths`` (nm) as ``(n, 3)``; see module notes.

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 4 (the standard observers).
    CIE 167:2005 (Sprague between tabulated points).
    docs/methods.md §2.

    Examples
    --------
    >>> cm = cmfs_on([555.0, 600.0, 650.0])
    >>> cm.values.round(4).tolist()  # the CIE 1931 2° table at whole nanometres
    [[0.5121, 1.0, 0.0057], [1.0622, 0.631, 0.0008], [0.2835, 0.107, 0.0]]
    """
    wl = check_wavelengths(wavelengths)
    return _cmfs_on(wl.tobytes(), observer_key(observer))


@lru_cache(maxsize=1)
def illuminant_names() -> tuple[str, ...]:
    """Names of the CIE (and other) illuminants colour-science ships."""
    return tuple(str(n) for n in table("illuminant_names"))


@lru_cache(maxsize=128)
def illuminant_table(name: str) -> tuple[np.ndarray, np.ndarray]:
    """An illuminant's table as shipped: ``(λ (n,) nm, relative SPD (n,))``, read-only.

    ``name`` as :func:`illuminant_on` accepts it (``F2`` for ``FL2``, any case).
    """
    i = illuminant_names().index(canonical_illuminant(str(name)))
    a, b = table("illuminant_offsets")[i:i + 2]
    return table("illuminant_wl")[a:b], table("illuminant_values")[a:b]


def illuminant_chromaticity(name: str, observer="2") -> tuple[str, np.ndarray] | None:
    """The tabulated chromaticity ``(name, xy (2,))`` of an illuminant, or None when not listed.

    CIE 15:2004, Table T.3 and the other whites colour-science lists, for the
    2° or 10° observer; the name is matched without regard to case, and
    ``F2`` finds ``FL2``.
    """
    key = observer_key(observer)
    names = [str(n) for n in table(f"ccs_{key}_names")]
    lowered = {n.lower(): i for i, n in enumerate(names)}
    text = str(name).strip().lower()
    i = lowered.get(text)
    if i is None and text.startswith("f"):
        i = lowered.get("fl" + text[1:])
    if i is None:
        return None
    return names[i], np.array(table(f"ccs_{key}_xy")[i])


def daylight_basis() -> tuple[np.ndarray, np.ndarray]:
    """The CIE daylight basis: ``(λ (107,) nm, S0 S1 S2 (3, 107))``, 300-830 nm at 5 nm, read-only.

    CIE 15:2004, Table T.2 (via colour-science).
    """
    return table("daylight_wl"), table("daylight_S")


def canonical_illuminant(name: str) -> str:
    """The name colour-science gives an illuminant ('d65' → 'D65', 'F2' → 'FL2'); unknown names unchanged."""
    names = illuminant_names()
    if name in names:
        return name
    lowered = {n.lower(): n for n in names}
    if name.lower() in lowered:
        return lowered[name.lower()]
    # 'F2' is the usual short form of colour-science's 'FL2'.
    if name.upper().startswith("F") and not name.upper().startswith("FL"):
        alt = "FL" + name[1:]
        if alt.lower() in lowered:
            return lowered[alt.lower()]
    raise WorkbenchError(
        f"unknown illuminant {name!r}; expected a CIE name such as A, C, D50, D65, FL2, "
        "LED-B1 or a CSV file of an SPD"
    )


def illuminant_A(wavelengths) -> np.ndarray:
    """Relative SPD of CIE illuminant A on ``wavelengths`` (nm), 100 at 560 nm.

    Notes
    -----
    S_A(λ) = 100 (560/λ)^5 (exp(c₂/(2848·560)) − 1) / (exp(c₂/(2848·λ)) − 1),
    c₂ = 1.435e7 nm·K (CIE 15:2004, Eq. 2.1).

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., Eq. 2.1.
    docs/methods.md §2.

    Examples
    --------
    >>> illuminant_A([560.0]).tolist()
    [100.0]
    """
    wl = np.asarray(wavelengths, dtype=float)
    c2 = 1.435e7
    return 100.0 * (560.0 / wl) ** 5 * np.expm1(c2 / (2848 * 560)) / np.expm1(c2 / (2848 * wl))


#: Nominal correlated colour temperatures of the CIE D series, K (CIE 15:2004, § 3.1:
#: 5000, 5500, 6500, 7500 K times 1.4388/1.4380, rounded).
D_SERIES_CCT = {"D50": 5003.0, "D55": 5503.0, "D65": 6504.0, "D75": 7504.0}
#: The range the CIE daylight basis and colour-matching functions are tabulated over, nm.
DAYLIGHT_RANGE = (300.0, 830.0)
CMFS_RANGE = (360.0, 830.0)


def daylight_M1_M2(cct: float) -> tuple[float, float]:
    """The factors M1, M2 of the CIE daylight basis at a correlated colour temperature (K).

    Notes
    -----
    x_D from CIE 15:2004 Eq. 3.3 (4000-7000 K and 7000-25000 K branches),
    y_D = −3.000 x_D² + 2.870 x_D − 0.275 (Eq. 3.4), M1 and M2 from Eq. 3.5,
    rounded to three decimals as the standard's tables are.
    """
    T = float(cct)
    if not 4000.0 <= T <= 25000.0:
        raise WorkbenchError(f"daylight correlated colour temperature must be 4000-25000 K (got {T:g})")
    if T <= 7000.0:
        x = -4.6070e9 / T**3 + 2.9678e6 / T**2 + 0.09911e3 / T + 0.244063
    else:
        x = -2.0064e9 / T**3 + 1.9018e6 / T**2 + 0.24748e3 / T + 0.237040
    y = -3.000 * x * x + 2.870 * x - 0.275
    M = 0.0241 + 0.2562 * x - 0.7341 * y
    M1 = (-1.3515 - 1.7703 * x + 5.9114 * y) / M
    M2 = (0.0300 - 31.4424 * x + 30.0717 * y) / M
    return round(M1, 3), round(M2, 3)


def _daylight_from_basis(wl: np.ndarray, cct: float) -> np.ndarray:
    bwl, S = daylight_basis()
    M1, M2 = daylight_M1_M2(cct)
    return np.interp(wl, bwl, S[0] + M1 * S[1] + M2 * S[2])


@lru_cache(maxsize=256)
def _illuminant_on(key: bytes, name: str, interpolation: str = "linear") -> Tabulated:
    wl = np.frombuffer(key, dtype=float)
    if name == "A":
        v = illuminant_A(wl)
        v.setflags(write=False)
        return Tabulated(v, "CIE illuminant A from its formula (CIE 15:2004, Eq. 2.1)")
    if name == "E":
        v = np.full(wl.size, 100.0)
        v.setflags(write=False)
        return Tabulated(v, "CIE illuminant E: equal energy, 100 at every wavelength")
    twl, tv = illuminant_table(name)
    daylight = name in D_SERIES_CCT
    lo_ok, hi_ok = DAYLIGHT_RANGE if daylight else CMFS_RANGE
    lo_ok, hi_ok = min(lo_ok, twl[0]), max(hi_ok, twl[-1])
    if wl[0] < lo_ok - 1e-9 or wl[-1] > hi_ok + 1e-9:
        how = (f"is defined over {lo_ok:g}-{hi_ok:g} nm (the CIE daylight basis, CIE 15:2004)" if daylight
               else f"is tabulated over {twl[0]:g}-{twl[-1]:g} nm (extended with its end values to "
                    f"{lo_ok:g}-{hi_ok:g} nm at most)")
        raise WorkbenchError(
            f"illuminant {name} {how}, but the grid is "
            f"{wl[0]:g}-{wl[-1]:g} nm; give its SPD over the grid as a CSV file "
            "(an [[illuminants]] entry with file = ...)"
        )
    values, used = resample_values(tv, twl, wl, method=interpolation, extrapolation="constant")
    if daylight and (wl[0] < twl[0] or wl[-1] > twl[-1]):
        outside = (wl < twl[0]) | (wl > twl[-1])
        values[outside] = _daylight_from_basis(wl[outside], D_SERIES_CCT[name])
    node = np.isin(wl, twl) | (wl < twl[0]) | (wl > twl[-1])
    parts = []
    if not node.all():
        parts.append(
            "linearly interpolated" if used == "linear" else "Sprague-interpolated (CIE 167:2005)"
        )
    lo, hi = twl[0], twl[-1]
    ext = []
    if wl[0] < lo:
        ext.append(f"{wl[0]:g}-{lo:g} nm")
    if wl[-1] > hi:
        ext.append(f"{hi:g}-{wl[-1]:g} nm")
    if ext and daylight:
        parts.append(
            f"extended over {' and '.join(ext)} from the CIE daylight basis at "
            f"{D_SERIES_CCT[name]:g} K (CIE 15:2004, § 3.1; the table covers {lo:g}-{hi:g} nm)"
        )
    elif ext:
        parts.append(
            f"extended over {' and '.join(ext)} with its end values (CIE 167:2005; "
            f"the table covers {lo:g}-{hi:g} nm)"
        )
    values.setflags(write=False)
    note = f"illuminant {name}" + (": " + "; ".join(parts) if parts else ": tabulated values")
    return Tabulated(values, note)


def illuminant_on(wavelengths, illuminant, *, interpolation: str = "linear") -> tuple[str, Tabulated]:
    """An illuminant's relative SPD on ``wavelengths`` (nm).

    Parameters
    ----------
    illuminant : str or Spectra
        A name colour-science ships (A, C, D50, D65, FL1-FL12, LED-B1, ...;
        ``F2`` is accepted for ``FL2``), or a single emission spectrum, which
        must already lie on ``wavelengths`` or be resampled by the caller
        (user data are never resampled silently).
    interpolation : {'linear', 'sprague'}
        How a tabulated illuminant is put between its points (see module
        notes); A is always computed from its formula.

    Returns
    -------
    name : str
    table : Tabulated
        ``values`` (n,) and the note on how they were put on the grid.

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 3.
    CIE 167:2005 (constant extrapolation).
    docs/methods.md §2.
    """
    wl = check_wavelengths(wavelengths)
    if isinstance(illuminant, Spectra):
        if len(illuminant) != 1:
            raise WorkbenchError(
                f"illuminant file must hold one spectrum (got {len(illuminant)}: "
                f"{', '.join(illuminant.names[:4])})"
            )
        name = illuminant.source or illuminant.names[0]
        if not np.array_equal(illuminant.wavelengths, wl):
            raise WorkbenchError(
                f"illuminant {name} is on {illuminant.describe_grid()} but the data are on "
                f"{Spectra(wl, np.zeros(wl.size)).describe_grid()}; resample one of them first"
            )
        return name, Tabulated(illuminant.flat()[0], f"illuminant from {name}")
    name = canonical_illuminant(str(illuminant))
    if interpolation not in ("linear", "sprague"):
        raise WorkbenchError(f"interpolation must be linear or sprague (got {interpolation!r})")
    return name, _illuminant_on(wl.tobytes(), name, interpolation)
