"""Units of spectral power distributions as instrument exports write them.

A spectrometer export states its units in a metadata line (``Units;W/(m2 nm)``)
or a header cell (``Irradiance [mW/m²/nm]``), spelt many ways. This module
reads the spelling into a :class:`SpectralUnit` and converts photon units
to watts, so that an absolute SPD gives illuminance (683 lm/W, CIE 15:2004).

Accepted (any spacing; ``/``, ``·``, ``*``, brackets, ``²``/``^2``/``2``,
``⁻¹``/``-1`` read alike; the prefixes m, µ (u), n on W and c on m):

* spectral irradiance: ``W/(m² nm)``, ``mW/(m² nm)``, ``µW/(cm² nm)``,
  ``W·m⁻²·nm⁻¹`` ...;
* spectral radiance: the same with ``sr``: ``W/(sr m² nm)``;
* photon units: ``photons/(s m² nm)`` and ``µmol/(s m² nm)`` (µmol of
  photons; the same with ``sr`` for radiance);
* relative: ``relative``, ``rel``, ``a.u.``, ``arb. units``, ``counts``,
  ``normalised``, ``1``.

Any other text is refused (:func:`spectral_unit` raises): a unit the
workbench cannot read is never taken as relative silently.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from workbench.errors import WorkbenchError

__all__ = ["PLANCK_H", "SPEED_OF_LIGHT", "AVOGADRO", "SpectralUnit", "spectral_unit", "to_watts",
           "RELATIVE_WORDS"]

#: SI defining constants (BIPM, The International System of Units, 9th ed., 2019).
PLANCK_H = 6.62607015e-34        # J s
SPEED_OF_LIGHT = 299792458.0     # m/s
AVOGADRO = 6.02214076e23         # 1/mol

RELATIVE_WORDS = ("relative", "rel", "a.u.", "au", "arb", "arb.", "arb. units", "arbitrary",
                  "arbitrary units", "counts", "count", "cts", "normalised", "normalized", "1")

_PREFIX = {"": 1.0, "m": 1e-3, "µ": 1e-6, "μ": 1e-6, "u": 1e-6, "n": 1e-9}
_RADIOMETRIC = re.compile(r"(?P<prefix>[mµμun]?)w(?P<sr1>sr)?(?P<area>c?m)2(?P<sr2>sr)?nm")
# photons/(s m² nm) in any order of s, m², sr; µmol/(m² s nm) likewise
_PHOTON = re.compile(
    r"(?:(?P<photons>photons?|ph|q)|(?P<mprefix>[mµμun]?)mol(?:photons?)?)"
    r"(?P<rest>(?:s|sr|c?m2){2,3})nm")


@dataclass(frozen=True)
class SpectralUnit:
    """A unit read from text.

    ``quantity``: ``'irradiance'``, ``'radiance'`` or ``'relative'``;
    ``photons``: per photon count rather than energy; ``factor``: to
    W·m⁻²·nm⁻¹ (W·sr⁻¹·m⁻²·nm⁻¹) or, for photon units, to photons·s⁻¹·m⁻²·nm⁻¹
    (·sr⁻¹); ``text``: as written.
    """

    quantity: str
    photons: bool
    factor: float
    text: str

    @property
    def absolute(self) -> bool:
        return self.quantity != "relative"

    @property
    def si_watts(self) -> str:
        """The W-based SI unit the values convert to."""
        return "W/(sr m² nm)" if self.quantity == "radiance" else "W/(m² nm)"


def _squash(text: str) -> str:
    u = str(text).strip().lower()
    for a, b in (("⁻²", "2"), ("^2", "2"), ("²", "2"), ("-2", "2"), ("⁻¹", ""), ("^-1", ""), ("-1", ""),
                 ("^{-2}", "2"), ("^{-1}", "")):
        u = u.replace(a, b)
    return re.sub(r"[\s/·*().\[\]{}]", "", u)


def spectral_unit(text: str, *, where: str = "units") -> SpectralUnit:
    """The :class:`SpectralUnit` that ``text`` spells; ``where`` names the file or key in the error.

    Raises
    ------
    WorkbenchError
        ``"<where>: unknown unit 'W/m2'; expected …"`` for anything else.
    """
    raw = str(text).strip()
    if raw.lower() in RELATIVE_WORDS or raw.lower().rstrip(".") in RELATIVE_WORDS:
        return SpectralUnit("relative", False, 1.0, raw)
    u = _squash(raw)
    m = _RADIOMETRIC.fullmatch(u)
    if m is not None and not (m.group("sr1") and m.group("sr2")):
        factor = _PREFIX[m.group("prefix")] * (1e4 if m.group("area") == "cm" else 1.0)
        q = "radiance" if (m.group("sr1") or m.group("sr2")) else "irradiance"
        return SpectralUnit(q, False, factor, raw)
    m = _PHOTON.fullmatch(u)
    if m is not None:
        rest = m.group("rest")
        parts = re.findall(r"sr|c?m2|s", rest)
        areas = [p for p in parts if p.endswith("m2")]
        # the per-second must be a token of its own ('photons/(m2 nm)' squashes to the same letters)
        per_second = re.search(r"(?<![a-zµμ])s(?![a-z])", re.sub(r"photons?", "", raw.lower())) is not None
        if ("".join(parts) == rest and parts.count("s") == 1 and len(areas) == 1 and parts.count("sr") <= 1
                and per_second):
            factor = 1e4 if areas[0] == "cm2" else 1.0
            if m.group("photons") is None:
                factor *= _PREFIX[m.group("mprefix")] * AVOGADRO
            q = "radiance" if "sr" in parts else "irradiance"
            return SpectralUnit(q, True, factor, raw)
    raise WorkbenchError(
        f"{where}: unknown unit {raw!r}; expected spectral irradiance such as W/(m² nm), mW/(m² nm) or "
        "µW/(cm² nm), radiance W/(sr m² nm), photon units photons/(s m² nm) or µmol/(s m² nm), "
        "or relative"
    )


def to_watts(values, wavelengths, unit: SpectralUnit) -> np.ndarray:
    """Values in ``unit`` as W·m⁻²·nm⁻¹ (or W·sr⁻¹·m⁻²·nm⁻¹), (..., n).

    Notes
    -----
    Photon units: each photon carries h c / λ (λ in m), so
    E(λ) = N(λ) · h c / (λ · 10⁻⁹ m/nm), N in photons·s⁻¹·m⁻²·nm⁻¹
    (µmol: × 10⁻⁶ N_A).
    """
    if not unit.absolute:
        raise WorkbenchError(f"units {unit.text!r} are relative; there is nothing to convert to watts")
    v = np.asarray(values, dtype=float) * unit.factor
    if unit.photons:
        v = v * (PLANCK_H * SPEED_OF_LIGHT / (np.asarray(wavelengths, dtype=float) * 1e-9))
    return v
