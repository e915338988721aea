"""Optical materials for thin-film stacks: dispersion formulas, a built-in table, user n,k tables.

A :class:`Material` gives the complex index ``n + ik`` (``k ≥ 0`` absorbs)
at any wavelength inside its stated range. Four kinds:

``constant``
    A plain index, written ``2.35`` or ``2.1+0.001j`` (:func:`parse_index`).
``cauchy``
    ``n(λ) = A + B/λ² + C/λ⁴`` with λ in µm.
``sellmeier``
    ``n²(λ) = 1 + Σ B_i λ² / (λ² − C_i)`` with λ in µm, ``C_i`` in µm².
``table``
    Tabulated n and k read from a CSV file (:func:`read_nk_csv`),
    interpolated linearly between rows; never extrapolated.

Nothing is extrapolated: asking for a wavelength outside a material's range
is an error naming the material and its range.

Built-in materials
------------------
The names are generic; each entry's ``source`` names where its numbers come
from. Coating materials are thin films whose index depends on the
deposition process: the built-in values are representative, for design
studies; a recipe for production should use the coating house's measured
n,k tables.

References
----------
I. H. Malitson, "Interspecimen comparison of the refractive index of fused
silica", J. Opt. Soc. Am. 55, 1205-1209 (1965).
SCHOTT optical glass data sheets (Sellmeier coefficients of the crown and
flint glasses whose numbers ``crown-517`` and ``flint-620`` use).
H. A. Macleod, *Thin-Film Optical Filters*, 4th ed., CRC Press, 2010
(typical film indices of coating materials).
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from workbench.errors import InputFileError, RangeCoverageError, WorkbenchError
from workbench.fileio.limits import limits, read_limited

__all__ = [
    "Material",
    "BUILT_IN",
    "material_named",
    "parse_index",
    "read_nk_csv",
    "built_in_names",
]

KINDS = ("constant", "cauchy", "sellmeier", "table")


@dataclass(frozen=True)
class Material:
    """An optical material: complex index ``n + ik`` against wavelength.

    Parameters
    ----------
    name : str
    kind : {'constant', 'cauchy', 'sellmeier', 'table'}
    coefficients : tuple of float or complex
        ``constant``: ``(N,)``; ``cauchy``: ``(A, B, C[, k])`` with B in µm²,
        C in µm⁴ and an optional constant k; ``sellmeier``:
        ``(B1, B2, B3, C1, C2, C3)`` with C in µm².
    range_nm : (float, float) or None
        Wavelength range (nm) where the data hold; ``None`` for a constant.
    source : str
        Where the numbers come from.
    table : tuple of three tuples, optional
        ``(wavelengths_nm, n, k)`` of a tabulated material.
    """

    name: str
    kind: str
    coefficients: tuple = ()
    range_nm: tuple[float, float] | None = None
    source: str = ""
    table: tuple = field(default=(), repr=False)

    def index(self, wavelengths_nm) -> np.ndarray:
        """Complex index at the given wavelengths.

        Parameters
        ----------
        wavelengths_nm : (n_λ,) array_like, nm

        Returns
        -------
        (n_λ,) ndarray of complex
            ``n + ik``.

        Raises
        ------
        RangeCoverageError
            A wavelength outside ``range_nm``.
        """
        wl = np.atleast_1d(np.asarray(wavelengths_nm, dtype=float))
        if self.range_nm is not None:
            lo, hi = self.range_nm
            if wl.size and (wl.min() < lo - 1e-9 or wl.max() > hi + 1e-9):
                raise RangeCoverageError(
                    f"material {self.name!r} must be used within {lo:g}-{hi:g} nm "
                    f"(got {wl.min():g}-{wl.max():g} nm; {self.source})"
                )
        if self.kind == "constant":
            return np.full(wl.shape, complex(self.coefficients[0]))
        um2 = (wl / 1000.0) ** 2
        if self.kind == "cauchy":
            A, B, C = self.coefficients[:3]
            k = self.coefficients[3] if len(self.coefficients) > 3 else 0.0
            return (A + B / um2 + C / um2**2) + 1j * k
        if self.kind == "sellmeier":
            B1, B2, B3, C1, C2, C3 = self.coefficients
            n2 = 1.0 + B1 * um2 / (um2 - C1) + B2 * um2 / (um2 - C2) + B3 * um2 / (um2 - C3)
            return np.sqrt(n2) + 0j
        if self.kind == "table":
            x, n, k = (np.asarray(a, dtype=float) for a in self.table)
            return np.interp(wl, x, n) + 1j * np.interp(wl, x, k)
        raise WorkbenchError(f"'kind' must be one of {', '.join(KINDS)} (got {self.kind!r})")


_FILM = (
    "typical film index recalled from H. A. Macleod, Thin-Film Optical Filters, 4th ed. (2010), "
    "fitted by us with a three-term Cauchy formula at 450, 550 and 700 nm; from memory, "
    "process-dependent"
)

#: The built-in materials, keyed by lower-case name.
BUILT_IN: dict[str, Material] = {
    m.name.lower(): m
    for m in (
        Material("air", "constant", (1.0 + 0j,), None, "common practice (n = 1 to 3e-4)"),
        # Coating materials: Cauchy A, B (µm²), C (µm⁴). From memory (see _FILM).
        Material("TiO2", "cauchy", (2.1969, 0.04453, 0.00054), (380.0, 2000.0), _FILM + " (n 2.35 at 550 nm)"),
        Material("Nb2O5", "cauchy", (2.1871, 0.03334, 0.00116), (380.0, 2000.0), _FILM + " (n 2.31 at 550 nm)"),
        Material("Ta2O5", "cauchy", (2.0334, 0.02226, 0.00027), (350.0, 2000.0), _FILM + " (n 2.11 at 550 nm)"),
        Material("HfO2", "cauchy", (1.9437, 0.01108, 0.00089), (300.0, 2000.0), _FILM + " (n 1.99 at 550 nm)"),
        Material("Al2O3", "cauchy", (1.5997, 0.01119, -0.00061), (300.0, 2000.0), _FILM + " (n 1.63 at 550 nm)"),
        Material("SiO2", "cauchy", (1.4463, 0.00446, -0.0001), (300.0, 2000.0), _FILM + " (n 1.46 at 550 nm)"),
        Material("MgF2", "cauchy", (1.3693, 0.00335, 0.0), (300.0, 2000.0), _FILM + " (n 1.38 at 550 nm)"),
        # Glasses: Sellmeier B1..B3, C1..C3 (µm²).
        Material(
            "fused-silica", "sellmeier",
            (0.6961663, 0.4079426, 0.8974794, 0.0684043**2, 0.1162414**2, 9.896161**2),
            (210.0, 3710.0),
            "I. H. Malitson, J. Opt. Soc. Am. 55, 1205 (1965), Sellmeier fit at 20 °C",
        ),
        Material(
            "crown-517", "sellmeier",
            (1.03961212, 0.231792344, 1.01046945, 0.00600069867, 0.0200179144, 103.560653),
            (300.0, 2500.0),
            "SCHOTT optical glass catalogue, borosilicate crown N-BK7 (n_d 1.5168, v_d 64.2); "
            "coefficients from memory",
        ),
        Material(
            "flint-620", "sellmeier",
            (1.34533359, 0.209073176, 0.937357162, 0.00997743871, 0.0470450767, 111.886764),
            (320.0, 2500.0),
            "SCHOTT optical glass catalogue, flint F2 (n_d 1.6200, v_d 36.4); coefficients from memory",
        ),
    )
}


def built_in_names() -> list[str]:
    """Names of the built-in materials, as written in the table."""
    return [m.name for m in BUILT_IN.values()]


def parse_index(text) -> complex:
    """A plain index: ``2.35`` or ``2.1+0.001j`` (n + ik, k ≥ 0).

    Raises
    ------
    WorkbenchError
        Not a number, not finite, n ≤ 0 or k < 0.
    """
    if isinstance(text, (int, float, complex)) and not isinstance(text, bool):
        value = complex(text)
        shown = repr(text)
    else:
        shown = repr(str(text))
        s = str(text).strip().replace(" ", "")
        if not s or any(w in s.lower() for w in ("nan", "inf")):
            raise WorkbenchError(f"index must be a number such as 2.35 or 2.1+0.001j (got {shown})")
        try:
            value = complex(s.replace("i", "j")) if "j" in s or "i" in s else complex(float(s))
        except ValueError:
            raise WorkbenchError(f"index must be a number such as 2.35 or 2.1+0.001j (got {shown})") from None
    if not (math.isfinite(value.real) and math.isfinite(value.imag)):
        raise WorkbenchError(f"index must be finite (got {shown})")
    if value.real <= 0:
        raise WorkbenchError(f"index must have n > 0 (got {shown})")
    if value.imag < 0:
        raise WorkbenchError(f"index must have k ≥ 0 (got {shown}); k < 0 would be gain")
    return value


def _looks_numeric(text: str) -> bool:
    s = text.strip()
    return bool(s) and (s[0].isdigit() or s[0] in "+-.")


def material_named(spec, *, user: dict[str, Material] | None = None) -> Material:
    """A material from a name (built-in or user) or a plain index.

    Parameters
    ----------
    spec : str or number
        A built-in name (any case, see :func:`built_in_names`), a key of
        ``user``, or a plain index such as ``2.35`` or ``2.1+0.001j``.
    user : dict of str to Material, optional
        User materials (e.g. from :func:`read_nk_csv`), matched before the
        built-in ones.

    Raises
    ------
    WorkbenchError
        An unknown name or a bad index.
    """
    if isinstance(spec, Material):
        return spec
    if not isinstance(spec, str) or _looks_numeric(spec):
        value = parse_index(spec)
        label = f"{value.real:g}" if value.imag == 0 else f"{value.real:g}+{value.imag:g}j"
        return Material(label, "constant", (value,), None, "plain index")
    key = spec.strip()
    if user:
        for name, m in user.items():
            if name.lower() == key.lower():
                return m
    m = BUILT_IN.get(key.lower())
    if m is None:
        known = ", ".join(built_in_names() + sorted(user or ()))
        raise WorkbenchError(
            f"material must be one of {known} or an index such as 2.35 or 2.1+0.001j (got {spec!r})"
        )
    return m


def _sniff(line: str) -> str:
    return "\t" if "\t" in line else ";" if ";" in line else ","


def read_nk_csv(path, *, name: str | None = None, text: str | None = None) -> Material:
    """Read a user material: a CSV table of wavelength, n and k.

    The file follows the project's CSV conventions: UTF-8 (a byte-order mark
    is allowed), ``#`` comment lines and blank lines anywhere, the delimiter
    sniffed from the header (tab, else semicolon, else comma; with tab or
    semicolon a decimal comma is read as a point). The header names the
    columns: a wavelength column (``wavelength_nm``, ``wavelength`` or
    ``nm``; ``wavelength_um`` / ``µm`` for micrometres), ``n`` and ``k``
    (any case, any order). Wavelengths must increase down the table.

    Parameters
    ----------
    path : str or path-like
        The file; messages name it as given.
    name : str, optional
        The material's name (default: the file's stem).
    text : str, optional
        The file's content, when already read (``path`` still names it).

    Returns
    -------
    Material
        Kind ``table``, range = the table's first to last wavelength.

    Raises
    ------
    InputFileError
        One line naming the file, line and column: a missing column, an
        empty cell (a gap), a value that is not a finite number, n ≤ 0,
        k < 0, wavelengths not increasing, fewer than two rows.
    """
    source = str(path)
    if text is None:
        data = read_limited(path, max_bytes=limits().design_bytes, limit_name="design_mb")
        try:
            text = data.decode("utf-8-sig")
        except UnicodeDecodeError:
            raise InputFileError("must be UTF-8 text", source) from None
    rows = []
    for number, line in enumerate(text.splitlines(), start=1):
        stripped = line.strip()
        if not stripped or stripped.startswith("#"):
            continue
        rows.append((number, line))
    if not rows:
        raise InputFileError("must hold a header (wavelength_nm, n, k) and rows (got an empty table)", source)
    header_line, header_text = rows[0]
    delim = _sniff(header_text)
    header = [h.strip().lower() for h in next(csv.reader(io.StringIO(header_text), delimiter=delim))]
    wl_col = next((i for i, h in enumerate(header) if h.startswith("wavelength") or h in ("nm", "wl", "lambda")), None)
    if wl_col is None:
        raise InputFileError(
            f"the header must name a wavelength column 'wavelength_nm' (got {', '.join(header)})",
            source, header_line,
        )
    scale = 1000.0 if any(u in header[wl_col] for u in ("um", "µm", "micron")) else 1.0
    cols = {}
    for want in ("n", "k"):
        if want not in header:
            raise InputFileError(
                f"the header must have a column {want!r} (got {', '.join(header)})", source, header_line
            )
        cols[want] = header.index(want)
    names = {wl_col: header[wl_col], cols["n"]: "n", cols["k"]: "k"}
    values = {c: [] for c in names}
    for number, line in rows[1:]:
        cells = next(csv.reader(io.StringIO(line), delimiter=delim))
        for c, label in names.items():
            cell = cells[c].strip() if c < len(cells) else ""
            if not cell:
                raise InputFileError("must hold a number (got an empty cell: gaps are not filled)",
                                     source, number, label)
            if delim != "," and "," in cell:
                cell = cell.replace(",", ".")
            try:
                v = float(cell)
            except ValueError:
                raise InputFileError(f"must be a number (got {cell!r})", source, number, label) from None
            if not math.isfinite(v):
                raise InputFileError(f"must be finite (got {cell!r})", source, number, label)
            if label == "k" and v < 0:
                raise InputFileError(f"k must be ≥ 0 (got {v:g}); k < 0 would be gain", source, number, label)
            if label == "n" and v <= 0:
                raise InputFileError(f"n must be > 0 (got {v:g})", source, number, label)
            if c == wl_col:
                v *= scale
                if v <= 0:
                    raise InputFileError(f"wavelength must be > 0 (got {cell})", source, number, label)
                if values[c] and v <= values[c][-1]:
                    raise InputFileError(
                        f"wavelengths must increase down the table (got {v:g} nm after {values[c][-1]:g} nm)",
                        source, number, label,
                    )
            values[c].append(v)
    if len(values[wl_col]) < 2:
        raise InputFileError(f"must hold at least 2 rows (got {len(values[wl_col])})", source)
    wl = tuple(values[wl_col])
    return Material(
        name or Path(source).stem,
        "table",
        (),
        (wl[0], wl[-1]),
        f"n,k table {source}",
        (wl, tuple(values[cols["n"]]), tuple(values[cols["k"]])),
    )
