"""Reading and writing spectra as CSV tables.

One reader serves the files people actually have: tables written by this
package, spreadsheet exports and spectrometer exports with a block of
metadata above the numbers. Whatever the reader assumes (the wavelength
unit, percent or fraction, the kind, the delimiter, a decimal comma, rows
reordered, lines skipped) it says so in the ``notes`` of the result, each
note starting ``read <file>:`` so a command line can print them on stderr.
Anything it cannot read unambiguously is an :class:`InputFileError` naming
the file, the 1-based line of the original file and the column.

Over 600 lines for a reason: the header rules (layout, delimiter, decimal
mark, wavelength unit, percent, kind and units) and the two ways of parsing
the numbers (cell by cell, which names the exact line and column of every
problem, and the bulk path for large wide tables, which hands any doubt back
to it) share the same sniffing and cell rules; apart, each would have to
import the other's private rules.

The rules
---------
Text
    UTF-8, with or without a byte-order mark. Lines starting with ``#`` are
    comments wherever they are. Blank lines (and lines holding only
    delimiters) are ignored.
Where the table starts
    At the first line whose first cell is a number and which has at least
    two cells (the *first row*). The nearest non-comment line above it is
    the *header* when it has as many cells as the first row; every other
    line above is metadata (``Integration time: 100 ms``, ``Date;
    2026-01-01``) and is skipped with a note. With no header the spectra are
    named ``s1, s2, ...``.
Delimiter
    Sniffed from the first row: tab if it holds one, else semicolon if it
    holds one, else comma (text in double quotes is not looked at). The
    first row is used rather than the header because spectrum names may
    hold any character.
Decimal comma
    With a semicolon or tab delimiter, numbers written ``12,5`` are read as
    12.5 (with a note); a file may not mix decimal commas and points.
Layout
    *wide*: a wavelength column, then one column per spectrum. *long*:
    three columns wavelength, name, value. ``layout='auto'`` takes long when
    the header reads ``wavelength, name, value...`` (any case, any
    wavelength label) or, in a three-column table, when no cell of the
    second column is a number.
Wavelength unit
    ``wavelength_unit='auto'`` takes the unit from the wavelength header
    (``nm``, ``µm``, ``um``, ``micron``); when the header does not say, all
    wavelengths below 30 are taken as µm and anything else as nm, with a
    note either way. µm are converted to nm exactly (decimal shift). After
    that every wavelength must lie in 100-100000 nm.
Kind
    ``kind=None`` takes the kind the file names: the ``# kind:`` line that
    :func:`write_spectra_csv` writes, else words in the value headers
    (``reflectance``, ``R%``; ``transmittance``, ``transmission``, ``T%``;
    ``emission``, ``SPD``, ``irradiance``, ``radiance``, ``W/m2/nm``;
    ``sensitivity``, ``QE``, ``responsivity``), else reflectance, with a
    note. A kind passed in wins over the file, with a note when they differ.
Scale
    ``scale='auto'`` reads values as percent (and divides them by 100, with
    a note) when a value header holds ``%`` or ``percent``, or, for
    reflectance and transmittance only, when the largest value exceeds 1.5.
    Emission is never taken as percent; a percent header on emission is an
    error. A file with a ``# kind: ...; units: ...`` line holds its values
    in those units: no guessing.
Units
    ``'1'`` for fractions. For emission and sensitivity the text in the last
    brackets of the value headers (``lamp (W/m2/nm)``, ``[A/W]``) or a
    ``W/m2/nm`` style word, else ``'relative'`` with a note.
Order
    Wavelengths may run down the table; the rows are then put in ascending
    order with a note. Any other order is an error. A long table's rows may
    come in any order.

Plausibility
    With ``scale='auto'`` and no ``# kind: …; units: …`` line (whose
    author, usually :func:`write_spectra_csv`, has stated exactly what the
    values are) the values are checked by
    :func:`workbench.fileio.plausible.check_spectral_values`: impossible
    values (reflectance below −0.1 or above 10, emission all zero or with
    negatives deeper than 5 % of its peak, magnitudes above 1e15) are
    refused; unusual ones (small negatives, reflectance above 1) are kept
    as written, with a note.
Limits
    The file must be a regular file within the ``file_mb`` limit, cells
    and lines within ``cell_chars`` and ``line_chars``, and the table within
    ``spectra`` and ``bands`` (:mod:`workbench.fileio.limits`).
Speed
    Large wide tables of plain numbers are parsed in bulk by pandas' C
    parser after the header logic; anything else, and every file that
    fails, goes cell by cell, which gives the messages.

Nothing is filled in, clamped or resampled: empty cells, NaN, infinity,
duplicate wavelengths, ragged rows, duplicate names, fewer than 3
wavelengths and spectra of a long table that do not share one wavelength
grid are all errors.
"""

from __future__ import annotations

import csv
import io
import math
import os
import re
from dataclasses import dataclass
from decimal import Decimal
from pathlib import Path

import numpy as np

from workbench.errors import InputFileError, WorkbenchError
from workbench.fileio.atomic import write_text_atomically as _write_atomically
from workbench.fileio.limits import check_count, how_to_raise, limits, read_limited, shorten
from workbench.fileio.plausible import check_spectral_values
from workbench.model.spectra import KINDS, Spectra, format_range, check_wavelengths
from workbench.fileio.units import spectral_unit, to_watts

__all__ = ["read_spectra_csv", "parse_spectra_text", "write_spectra_csv"]

WAVELENGTH_UNITS = ("auto", "nm", "um")
SCALES = ("auto", "fraction", "percent")
LAYOUTS = ("auto", "wide", "long")

#: Wavelengths accepted after unit handling, nm (vacuum UV to far infrared).
WAVELENGTH_RANGE_NM = (100.0, 100000.0)
#: Below this, wavelengths with no stated unit are taken as µm.
_UM_BELOW = 30.0
#: Above this, reflectance or transmittance with no stated scale is percent.
_PERCENT_ABOVE = 1.5

_DELIMITER_NAMES = {",": "comma", ";": "semicolon", "\t": "tab"}

# ASCII digits only: Python's float() also takes "1_000" and other scripts' digits.
_NUMBER = re.compile(r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
_NAN = re.compile(r"[+-]?nan", re.IGNORECASE)
_INF = re.compile(r"[+-]?inf(?:inity)?", re.IGNORECASE)
_ONLY_DELIMITERS = re.compile(r'[,;\t\s"]*')
_QUOTED = re.compile(r'"[^"]*"')
_DIRECTIVE = re.compile(
    r"#\s*kind\s*:\s*(?P<kind>[^;]*?)\s*(?:;\s*units\s*:\s*(?P<units>.*?)\s*)?$",
    re.IGNORECASE,
)
_NOT_LETTER_BEFORE = r"(?<![a-z])"
_NOT_LETTER_AFTER = r"(?![a-z])"
_WAVELENGTH_WORD = re.compile(
    r"wavelength|lambda|λ|" + _NOT_LETTER_BEFORE + r"(?:nm|um|µm|μm|wl)" + _NOT_LETTER_AFTER,
    re.IGNORECASE,
)
_UNIT_UM = re.compile(
    _NOT_LETTER_BEFORE + r"(?:um|µm|μm)" + _NOT_LETTER_AFTER + r"|micron|micromet",
    re.IGNORECASE,
)
_UNIT_NM = re.compile(
    _NOT_LETTER_BEFORE + r"nm" + _NOT_LETTER_AFTER + r"|nanomet", re.IGNORECASE
)
# Radiometric units such as W/m2/nm, W/(m² nm), mW/cm2/nm, W·m⁻²·nm⁻¹.
_W_PER_AREA = (
    _NOT_LETTER_BEFORE + r"[mµμn]?w\s*(?:/\s*\(?|·|\s)\s*c?m(?:\^?2|²|-2|⁻²)"
)
_KIND_WORDS = {
    "reflectance": r"reflectance|reflectivity|" + _NOT_LETTER_BEFORE
    + r"(?:r\s*\(?\s*%|%\s*r" + _NOT_LETTER_AFTER + ")",
    "transmittance": r"transmittance|transmission|" + _NOT_LETTER_BEFORE
    + r"(?:t\s*\(?\s*%|%\s*t" + _NOT_LETTER_AFTER + ")",
    "emission": r"emission|(?:ir)?radiance|spectral power|" + _NOT_LETTER_BEFORE
    + r"spd" + _NOT_LETTER_AFTER + "|" + _W_PER_AREA,
    "sensitivity": r"sensitivity|responsivity|quantum efficiency|" + _NOT_LETTER_BEFORE
    + r"qe" + _NOT_LETTER_AFTER,
}
_KIND_WORDS["sensitivity"] += r"|" + _NOT_LETTER_BEFORE + r"a\s*/\s*w" + _NOT_LETTER_AFTER
_KIND_PATTERNS = {k: re.compile(p, re.IGNORECASE) for k, p in _KIND_WORDS.items()}
# A header cell that is only a symbol, with an optional unit or % in brackets: T, Ti, τ, τi
# (transmittance, internal transmittance), R, ρ (reflectance). R counts only when the header
# is not an R, G, B set of channels.
_SYMBOL_KINDS = (
    (re.compile(r"(?:t|ti|t_i|tint|τ|τi|τ_i)", re.IGNORECASE), "transmittance"),
    (re.compile(r"(?:r|ρ)", re.IGNORECASE), "reflectance"),
)
_SYMBOL_TAIL = re.compile(r"\s*(?:[(\[][^()\[\]]*[)\]]|%)?\s*")
#: The rule by which a header names the kind (said in the note when the kind comes from it).
KIND_RULE = ("header rule: T, Ti, τ, transmittance/transmission → transmittance; R, ρ, "
             "reflectance → reflectance; QE, quantum efficiency, responsivity, sensitivity, A/W → "
             "sensitivity; irradiance, radiance, SPD, emission, W/(m² nm) → emission")
#: The note of a file whose kind nobody said (commands that take another kind check for it).
KIND_UNSAID_NOTE = "kind taken as reflectance (none given and the header names none)"
#: A metadata line above the table stating the values' units: 'Units;W/(m2 nm)', 'Y units: counts'.
_METADATA_UNITS = re.compile(
    r"\s*(?:y[ _-]?)?units?(?:\s+of\s+values)?\s*[,;:\t=]\s*(?P<units>[^,;\t]+?)\s*[,;\t]*",
    re.IGNORECASE)


def _as_energy(values, wl, units):
    """Photon counts as the watts they carry (photon units are 10¹³-10¹⁹ per s m² nm), else as they are."""
    try:
        unit = spectral_unit(units)
    except WorkbenchError:
        return values
    return to_watts(values, wl, unit) if unit.photons else values


def _symbol_kinds(cells) -> dict:
    """{kind: first cell} for header cells that are only a kind's symbol (T, Ti, τ, R, ρ)."""
    cells = list(cells)
    bare = [c.split("(")[0].split("[")[0].replace("%", "").strip() for c in cells]
    rgb = {b.upper() for b in bare} >= {"R", "G", "B"}
    out = {}
    for cell, b in zip(cells, bare):
        if len(b) > 4:  # no symbol is longer ('tint'); a wide table's names mostly are
            continue
        rest = cell.strip()[len(b):] if cell.strip().startswith(b) else None
        if rest is None or not _SYMBOL_TAIL.fullmatch(rest):
            continue
        for pattern, kind in _SYMBOL_KINDS:
            if pattern.fullmatch(b) and not (kind == "reflectance" and rgb):
                out.setdefault(kind, cell)
    return out
_UNITS_TOKEN = re.compile(_W_PER_AREA + r"\S*", re.IGNORECASE)
_BRACKETED = re.compile(r"[(\[]([^()\[\]]*)[)\]]")


# --------------------------------------------------------------------------
# Public functions
# --------------------------------------------------------------------------


def read_spectra_csv(
    path,
    *,
    kind: str | None = None,
    wavelength_unit: str = "auto",
    scale: str = "auto",
    layout: str = "auto",
) -> Spectra:
    """Read spectra from a CSV table (see the module notes for the rules).

    Parameters
    ----------
    path : str or path-like
        The file. Messages name it as given.
    kind : {None, 'reflectance', 'transmittance', 'emission', 'sensitivity'}
        What the values are. ``None`` takes the kind the file names, else
        reflectance.
    wavelength_unit : {'auto', 'nm', 'um'}
        Unit of the wavelength column. ``'auto'`` reads the header, else
        takes all wavelengths below 30 as µm and the rest as nm.
    scale : {'auto', 'fraction', 'percent'}
        Scale of reflectance, transmittance or sensitivity values.
        ``'auto'`` reads a ``%`` in the value headers, else (reflectance and
        transmittance only) takes a largest value above 1.5 as percent.
    layout : {'auto', 'wide', 'long'}
        Wide: wavelength then one column per spectrum. Long: wavelength,
        name, value.

    Returns
    -------
    Spectra
        Wavelengths in nm, ascending; reflectance and transmittance as
        fractions 0-1 with units ``'1'``; ``source`` is ``str(path)``;
        ``notes`` say what was read and assumed, each starting
        ``read <path>:``.

    Raises
    ------
    InputFileError
        The file cannot be read or is not an unambiguous table; the message
        names the file, the line and the column.
    WorkbenchError
        An argument is not one of its choices.

    References
    ----------
    Shafranovich, Y. (2005). RFC 4180, *Common Format and MIME Type for
    Comma-Separated Values (CSV) Files*.
    docs/methods.md §1 (the spectral data model).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> f = pathlib.Path(tempfile.mkdtemp()) / "leaf.csv"
    >>> _ = f.write_text("wavelength (nm),leaf %\\n400,5\\n410,6\\n420,8\\n")
    >>> s = read_spectra_csv(f)
    >>> s.values.tolist()
    [[0.05, 0.06, 0.08]]
    """
    _check_options(kind, wavelength_unit, scale, layout)
    name = os.fspath(path)
    return _parse(
        [read_limited(name)], str(name), kind, wavelength_unit, scale, layout,
    )


def parse_spectra_text(
    text: str | bytes,
    *,
    source: str = "<text>",
    kind: str | None = None,
    wavelength_unit: str = "auto",
    scale: str = "auto",
    layout: str = "auto",
) -> Spectra:
    """Read spectra from the text of a CSV table, by the rules of :func:`read_spectra_csv`.

    Parameters
    ----------
    text : str or bytes
        The table; bytes (an upload) are decoded as UTF-8 with or without a
        byte-order mark.
    source : str
        Name used in messages and notes and stored as ``source``.
    kind, wavelength_unit, scale, layout
        As for :func:`read_spectra_csv`.

    Returns
    -------
    Spectra

    References
    ----------
    Shafranovich, Y. (2005). RFC 4180, *Common Format and MIME Type for
    Comma-Separated Values (CSV) Files*.
    docs/methods.md §1 (the spectral data model).

    Examples
    --------
    >>> s = parse_spectra_text("nm;a;b\\n400;0,5;1\\n500;0,6;1\\n600;0,7;1\\n")
    >>> s.names, s.values[0].tolist()
    (('a', 'b'), [0.5, 0.6, 0.7])
    >>> s.notes[1]
    'read <text>: decimal commas read as decimal points (e.g. 0,5 as 0.5)'
    """
    _check_options(kind, wavelength_unit, scale, layout)
    if isinstance(text, (bytes, bytearray)):
        return _parse([bytes(text)], source, kind, wavelength_unit, scale, layout)
    if len(text) > limits().file_bytes:
        raise InputFileError(
            f"larger than the limit of {limits().file_mb:g} MiB; {how_to_raise('file_mb')}", source)
    if text.startswith("\ufeff"):
        text = text[1:]
    return _Reader(text, source, kind, wavelength_unit, scale, layout).read()


def _parse(holder: list, source, kind, wavelength_unit, scale, layout) -> Spectra:
    """Read the bytes in ``holder`` (a one-item list, emptied here so the bytes can be freed early)."""
    data = holder.pop()
    if len(data) > limits().file_bytes:
        raise InputFileError(
            f"larger than the limit of {limits().file_mb:g} MiB; {how_to_raise('file_mb')}", source)
    fast = _fast_wide(data, layout) if len(data) >= _FAST_MIN_BYTES else None
    if fast is not None:
        head, table = fast
        del data
        return _Reader(head, source, kind, wavelength_unit, scale, layout, fast=table).read()
    text = _decode(data, source)
    del data
    return _Reader(text, source, kind, wavelength_unit, scale, layout).read()


def write_spectra_csv(spectra: Spectra, path) -> None:
    """Write spectra as a wide CSV table that :func:`read_spectra_csv` reads back exactly.

    The file holds a comment line ``# kind: <kind>; units: <units>``, the
    header ``wavelength_nm,<names...>`` and one row per wavelength, numbers
    written with ``repr`` (the shortest text that reads back to the same
    float), comma-delimited, UTF-8, ``\\n`` line ends. Spectra with more
    than one leading axis are written flattened to ``(count, n)``, one
    column per name. The file is written to a temporary file in the same
    directory and moved into place, so a failure never loses the previous
    file.

    Parameters
    ----------
    spectra : Spectra
    path : str or path-like

    Raises
    ------
    WorkbenchError
        The spectra cannot be written so as to read back the same: a value
        is not finite, a wavelength lies outside 100-100000 nm, a name is
        empty, has surrounding spaces or a line break, or the names are
        ``name, value`` (which would read as a long table).
    InputFileError
        The file cannot be written.

    References
    ----------
    Shafranovich, Y. (2005). RFC 4180, *Common Format and MIME Type for
    Comma-Separated Values (CSV) Files*.
    docs/methods.md §1 (the spectral data model).
    """
    if not isinstance(spectra, Spectra):
        raise WorkbenchError(f"spectra must be a Spectra (got {type(spectra).__name__})")
    _check_writable(spectra)
    target = Path(os.fspath(path))
    buf = io.StringIO()
    buf.write(f"# kind: {spectra.kind}; units: {spectra.units}\n")
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(["wavelength_nm", *spectra.names])
    columns = spectra.flat().T.tolist()
    for wl, row in zip(spectra.wavelengths.tolist(), columns):
        writer.writerow([repr(wl), *map(repr, row)])
    _write_atomically(target, buf.getvalue())


# --------------------------------------------------------------------------
# Options, decoding, writing
# --------------------------------------------------------------------------


def _check_options(kind, wavelength_unit, scale, layout) -> None:
    if kind is not None and kind not in KINDS:
        raise WorkbenchError(f"kind must be None or one of {', '.join(KINDS)} (got {kind!r})")
    for name, value, choices in (
        ("wavelength_unit", wavelength_unit, WAVELENGTH_UNITS),
        ("scale", scale, SCALES),
        ("layout", layout, LAYOUTS),
    ):
        if value not in choices:
            raise WorkbenchError(f"{name} must be one of {', '.join(choices)} (got {value!r})")
    if kind == "emission" and scale == "percent":
        raise WorkbenchError(
            "scale='percent' is for reflectance, transmittance or sensitivity, not emission"
        )


def _decode(data: bytes, source: str) -> str:
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        raise InputFileError("the file is UTF-16 text; expected UTF-8 — save it as UTF-8 CSV", source)
    if data.startswith(b"PK\x03\x04"):
        raise InputFileError(
            "the file is a zip archive (a spreadsheet?); expected UTF-8 text — export it as CSV",
            source,
        )
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as err:
        line = data[: err.start].count(b"\n") + 1
        raise InputFileError(
            f"byte 0x{data[err.start]:02x} is not UTF-8; expected UTF-8 text — save it as UTF-8",
            source, line,
        ) from None


def _check_writable(spectra: Spectra) -> None:
    flat = spectra.flat()
    if not np.all(np.isfinite(flat)):
        i, j = np.argwhere(~np.isfinite(flat))[0]
        raise WorkbenchError(
            f"values must be finite to be written (got {flat[i, j]!r} in "
            f"{spectra.names[i]!r} at {spectra.wavelengths[j]:g} nm)"
        )
    lo, hi = WAVELENGTH_RANGE_NM
    wl = spectra.wavelengths
    if wl[0] < lo or wl[-1] > hi:
        raise WorkbenchError(
            f"wavelengths must lie in {lo:g}-{hi:g} nm to be written "
            f"(got {wl[0]:g}-{wl[-1]:g} nm)"
        )
    for name in spectra.names:
        if not name or name != name.strip() or "\n" in name or "\r" in name:
            raise WorkbenchError(
                "names must be non-empty, without surrounding spaces or line breaks, "
                f"to be written (got {name!r})"
            )
    if _is_long_header(["wavelength_nm", *spectra.names]):
        raise WorkbenchError(
            f"names {spectra.names[0]!r}, {spectra.names[1]!r} would read back as the header of "
            "a long table; rename a spectrum"
        )
    units = spectra.units
    if not units or units != units.strip() or "\n" in units or "\r" in units:
        raise WorkbenchError(
            "units must be non-empty, without surrounding spaces or line breaks, "
            f"to be written (got {units!r})"
        )


# --------------------------------------------------------------------------
# Cells
# --------------------------------------------------------------------------


def _sniff(line: str) -> str:
    bare = _QUOTED.sub("", line)
    if "\t" in bare:
        return "\t"
    if ";" in bare:
        return ";"
    return ","


def _split(line: str, delimiter: str) -> list[str]:
    cells = next(csv.reader([line], delimiter=delimiter))
    return [c.strip() for c in cells]


def _is_finite_number(cell: str, delimiter: str) -> bool:
    text = cell.replace(",", ".") if delimiter != "," else cell
    return bool(_NUMBER.fullmatch(text)) and math.isfinite(float(text))


def _cell_problem(cell: str) -> str | None:
    """Why ``cell`` (decimal marks already points) is not a finite number, or None."""
    if cell == "" or _NAN.fullmatch(cell):
        return "empty or NaN value; gaps are not filled in — remove the row or supply a value"
    if not _NUMBER.fullmatch(cell) and not _INF.fullmatch(cell):
        return "is not a number"
    if not math.isfinite(float(cell)):
        return "is not a finite number"
    return None


def _is_long_header(cells: list[str]) -> bool:
    return (
        len(cells) == 3
        and cells[1].lower() == "name"
        and re.match(r"value(?![a-z])", cells[2], re.IGNORECASE) is not None
    )


def _header_says_percent(cell: str) -> bool:
    return "%" in cell or "percent" in cell.lower()


def _header_units(cell: str) -> str | None:
    # a unit with brackets of its own, 'Irradiance [W/(m² nm)]': the outermost bracket's content
    for open_, close in (("[", "]"), ("(", ")")):
        a, b = cell.find(open_), cell.rfind(close)
        if 0 <= a < b:
            inside = cell[a + 1:b].strip()
            if "(" in inside and inside and not _header_says_percent(inside):
                return inside
    for inside in reversed(_BRACKETED.findall(cell)):
        inside = inside.strip()
        if inside and not _header_says_percent(inside):
            return inside
    m = _UNITS_TOKEN.search(cell)
    return m.group(0) if m else None


def _transposed(a: np.ndarray) -> np.ndarray:
    """``a.T`` as a C-contiguous array, copied in cache-sized blocks (fast for wide tables)."""
    out = np.empty((a.shape[1], a.shape[0]), dtype=a.dtype)
    step = 2048
    for k in range(0, a.shape[1], step):
        out[k:k + step] = a[:, k:k + step].T
    return out


def _first_kinds(cells) -> dict:
    """{kind: first header cell naming it}, in the order a cell-by-cell search finds them."""
    cells = list(cells)
    joined = "\x00".join(cells)
    ends = np.cumsum([len(c) + 1 for c in cells])
    hits = []
    for order, (k, pattern) in enumerate(_KIND_PATTERNS.items()):
        m = pattern.search(joined)
        if m is not None:
            i = int(np.searchsorted(ends, m.start(), side="right"))
            hits.append((i, order, k))
    return {k: cells[i] for i, _, k in sorted(hits)}


def _plural(n: int, word: str) -> str:
    return f"{n} {word}" if n == 1 else f"{n} {word}s"


# --------------------------------------------------------------------------
# The vectorised path for large wide tables
# --------------------------------------------------------------------------

#: Files smaller than this go through the cell-by-cell reader alone.
_FAST_MIN_BYTES = 1 << 20
#: Values parsed per block by the C parser.
_FAST_BLOCK = 1 << 20
_FAST_NUMBER_BYTES = b"0123456789.+-eE \t\r\n"


@dataclass
class _FastTable:
    """The numbers of a wide table parsed in bulk, and what the reader needs besides."""

    numbers: np.ndarray        # (rows, width)
    first_cells: list          # wavelength text per row, decimal marks as points
    comma_example: str | None  # the first cell written with a decimal comma
    first_line: int            # 1-based line of the first row


def _fast_wide(data: bytes, layout: str):
    """(text of the lines up to the first row, :class:`_FastTable`) or None.

    The lines above the table and the first row go through the ordinary
    reader; the rows below are checked with byte counts (same number of
    delimiters in every row, only number characters, no comments, blank
    lines or quotes, one decimal mark) and parsed by the C parser of
    pandas, one value per line. Anything outside that simple shape returns
    None and the whole file takes the cell-by-cell path, which gives the
    exact messages; so both paths agree on every file.
    """
    if layout == "long":
        return None
    n = len(data)
    pos = 3 if data.startswith(b"\xef\xbb\xbf") else 0
    lineno = 0
    while True:
        lineno += 1
        if lineno > 10_000:
            return None
        e = data.find(b"\n", pos)
        if e < 0:
            return None
        try:
            line = data[pos:e].decode("utf-8").strip()
        except UnicodeDecodeError:
            return None
        if "\r" in line or '"' in line:
            return None
        if _ONLY_DELIMITERS.fullmatch(line) or line.startswith("#"):
            pos = e + 1
            continue
        delimiter = _sniff(line)
        first = line.split(delimiter, 1)
        if len(first) == 2 and _is_finite_number(first[0].strip(), delimiter):
            break
        pos = e + 1
    width = line.count(delimiter) + 1
    if width < 4 or width - 1 > limits().spectra:
        return None  # three columns may be a long table: the ordinary reader decides
    off, first_line = pos, lineno
    delim = delimiter.encode()
    end = n
    while end > off and data[end - 1] in b" \t\r\n":
        end -= 1
    comma = delimiter != "," and data.find(b",", off, end) >= 0
    if comma and data.find(b".", off, end) >= 0:
        return None
    allowed = _FAST_NUMBER_BYTES + delim + (b"," if comma else b"")
    if len(data.translate(None, allowed)) != len(data[:off].translate(None, allowed)):
        return None
    if data.count(b"\r", off, end) != data.count(b"\r\n", off, end):
        return None
    starts = []
    p = off
    while p < end:
        e = data.find(b"\n", p, end)
        if e < 0:
            e = end
        if data.count(delim, p, e) != width - 1:
            return None
        starts.append(p)
        p = e + 1
    rows = len(starts)
    first_cells = []
    for p in starts:
        cell = data[p:data.find(delim, p)].decode("ascii").strip()
        first_cells.append(cell.replace(",", ".") if comma else cell)
    example = None
    if comma:
        c = data.find(b",", off, end)
        lo = max(data.rfind(delim, off, c), data.rfind(b"\n", off, c)) + 1
        hi = min(x for x in (data.find(delim, c, end), data.find(b"\n", c, end), end) if x >= 0)
        example = data[lo:hi].decode("ascii").strip().rstrip("\r")
    head = data[:_line_end(data, off)].decode("utf-8-sig")
    table = bytes.maketrans(delim + (b"," if comma else b""), b"\n" + (b"." if comma else b""))
    col = data[:end].translate(table)
    numbers = np.empty(rows * width)
    import pandas as pd  # late: pandas (~0.5 s to import) only for its C number parser on this path

    buf = io.BytesIO(col)
    buf.seek(off)
    filled = 0
    try:
        with pd.read_csv(buf, header=None, names=["v"], dtype=np.float64, engine="c",
                         na_filter=False, quoting=csv.QUOTE_NONE, chunksize=_FAST_BLOCK,
                         skip_blank_lines=True) as chunks:
            for chunk in chunks:
                v = chunk["v"].to_numpy()
                if filled + v.size > numbers.size:
                    return None
                numbers[filled:filled + v.size] = v
                filled += v.size
    except (ValueError, pd.errors.ParserError):
        return None
    finally:
        del col, buf
    if filled != numbers.size or not np.isfinite(numbers).all():
        return None
    return head, _FastTable(numbers.reshape(rows, width), first_cells, example, first_line)


def _line_end(data: bytes, off: int) -> int:
    """End (exclusive, after its newline) of the line starting at ``off``."""
    e = data.find(b"\n", off)
    return len(data) if e < 0 else e + 1


# --------------------------------------------------------------------------
# The reader
# --------------------------------------------------------------------------


class _Reader:
    """One reading of one text; methods run in the order of :meth:`read`."""

    def __init__(self, text, source, kind, wavelength_unit, scale, layout, fast=None):
        self.source = source
        self.kind_arg = kind
        self.unit_arg = wavelength_unit
        self.scale_arg = scale
        self.layout_arg = layout
        self.fast = fast
        self.lines = re.split(r"\r\n|\r|\n", text)
        self.notes: list[str] = []
        lim = limits()
        self.cell_chars = lim.cell_chars
        longest = max(range(len(self.lines)), key=lambda i: len(self.lines[i]))
        if len(self.lines[longest]) > lim.line_chars:
            raise self.error(
                f"a line of {len(self.lines[longest])} characters; expected at most "
                f"{lim.line_chars} — {how_to_raise('line_chars')}", longest + 1)
        if csv.field_size_limit() < lim.line_chars + 1:
            csv.field_size_limit(lim.line_chars + 1)

    def split(self, line: str, number: int) -> list[str]:
        """The cells of one line, refusing a cell longer than the ``cell_chars`` limit, a NUL
        character and an unbalanced double quote."""
        if "\x00" in line:
            raise self.error("a NUL character; expected text", number)
        if line.count('"') % 2:
            raise self.error('an unbalanced double quote; expected quotes in pairs around a cell', number)
        cells = _split(line, self.delimiter)
        if len(line) > self.cell_chars:
            for j, c in enumerate(cells):
                if len(c) > self.cell_chars:
                    raise self.error(
                        f"a cell of {len(c)} characters ({shorten(c, 40)!r}); expected at most "
                        f"{self.cell_chars} — {how_to_raise('cell_chars')}", number, j + 1)
        return cells

    # -- helpers ----------------------------------------------------------
    def error(self, message, line=None, column=None) -> InputFileError:
        return InputFileError(message, self.source, line, column)

    def note(self, text: str) -> None:
        self.notes.append(f"read {self.source}: {text}")

    def label(self, j: int) -> str | int:
        """Column ``j`` (0-based) as messages name it: the header text, else its number."""
        if self.header is not None and self.header[j]:
            return self.header[j]
        return j + 1

    # -- the steps ----------------------------------------------------------
    def read(self) -> Spectra:
        self.find_table()
        self.choose_layout()
        self.number_cells()
        if self.layout == "wide":
            wl, values, names, wl_text, wl_line = self.wide()
        else:
            wl, values, names, wl_text, wl_line = self.long()
        self.resolve_kind()
        wl = self.wavelengths_to_nm(wl, wl_text, wl_line)
        values = self.resolve_scale(values)
        if self.layout == "wide" and wl.size > 1 and wl[0] > wl[-1]:
            self.note(
                f"wavelengths run down the table ({wl[0]:g} to {wl[-1]:g} nm); "
                "rows put in ascending order"
            )
            wl = wl[::-1]
            values = values[:, ::-1]
        check_count(wl.size, "bands", "wavelengths", where=self.source)
        gaps = np.diff(wl)
        if gaps.size and gaps.min() < limits().min_step_nm:
            i = int(np.argmin(gaps))
            raise self.error(
                f"wavelengths {wl[i]:.12g} and {wl[i + 1]:.12g} nm are {gaps[i]:.3g} nm apart; expected "
                f"steps of at least {limits().min_step_nm:g} nm — {how_to_raise('min_step_nm')}")
        if self.scale_arg == "auto" and self.stated_units is None:
            # a scale given by the caller, or units stated by a '# kind:' line, are their author's word
            for text in check_spectral_values(_as_energy(values, wl, self.units), kind=self.kind,
                                              source=self.source, wavelengths=wl, names=names):
                self.notes.append(f"read {text}")
        count = len(names)
        summary = (
            f"read {self.source}: {count} {self.kind} spectr{'um' if count == 1 else 'a'}, "
            f"{format_range(check_wavelengths(wl))}, {self.layout} layout, "
            f"{_DELIMITER_NAMES[self.delimiter]}-delimited"
        )
        return Spectra(
            wavelengths=wl, values=values, names=names, kind=self.kind,
            units=self.units, source=self.source, notes=(summary, *self.notes),
        )

    def find_table(self) -> None:
        """Locate the first row, the header, the directive and the metadata."""
        content = []  # (1-based line, text) of non-blank, non-comment lines
        self.directive = None
        any_comment = False
        start = None
        for number, raw in enumerate(self.lines, start=1):
            line = raw.strip()
            if _ONLY_DELIMITERS.fullmatch(line):
                continue
            if line.startswith("#"):
                any_comment = True
                if start is None:
                    self.read_directive(line, number)
                continue
            if start is None:
                delimiter = _sniff(line)
                cells = _split(line, delimiter)
                if len(cells) >= 2 and _is_finite_number(cells[0], delimiter):
                    start = len(content)
                    self.delimiter = delimiter
            content.append((number, line))
        if not content:
            if any_comment:
                raise self.error(
                    "the file holds only comments; expected a table of wavelength and values"
                )
            raise self.error("the file is empty; expected a table of wavelength and values")
        if start is None:
            raise self.error(
                "no table found: no line starts with a number followed by a comma, semicolon "
                "or tab; expected rows of a wavelength and one value per spectrum"
            )
        self.row_lines = [number for number, _ in content[start:]]
        self.rows = [self.split(line, number) for number, line in content[start:]]
        width = len(self.rows[0])
        if self.fast is not None:
            self.rows = self.rows[:1]
            first = self.fast.first_line
            self.row_lines = list(range(first, first + self.fast.numbers.shape[0]))
        self.n_rows = len(self.row_lines)
        check_count(width - 1, "spectra", "columns of spectra", where=f"{self.source}, line {self.row_lines[0]}")
        # The header: the nearest content line above, when it is as wide.
        self.header = None
        self.header_line = None
        metadata = start
        if start > 0:
            number, line = content[start - 1]
            cells = self.split(line, number)
            if len(cells) == width:
                self.header, self.header_line = cells, number
                metadata -= 1
            elif _WAVELENGTH_WORD.search(cells[0]):
                raise self.error(
                    f"the header has {len(cells)} cells ({_DELIMITER_NAMES[self.delimiter]}-"
                    f"delimited) but the first row (line {self.row_lines[0]}) has {width}; "
                    "expected one header cell per column",
                    number,
                )
        self.metadata_units = None
        for number, line in content[:metadata]:
            m = _METADATA_UNITS.fullmatch(line)
            if m is not None and self.metadata_units is None:
                self.metadata_units = (m.group("units"), number)
        if metadata:
            self.note(f"{_plural(metadata, 'metadata line')} above the table skipped")
        for number, cells in zip(self.row_lines, self.rows):
            if len(cells) != width:
                against = "the header has" if self.header else (
                    f"the first row (line {self.row_lines[0]}) has")
                raise self.error(
                    f"{len(cells)} cells where {against} {width}; "
                    "expected a wavelength and one value per spectrum in every row",
                    number,
                )

    def read_directive(self, line: str, number: int) -> None:
        m = _DIRECTIVE.fullmatch(line)
        if m is None:
            return
        if self.directive is not None:
            raise self.error(
                f"a second '# kind:' line (first at line {self.directive[2]}); expected one",
                number,
            )
        kind = m.group("kind").lower()
        if kind not in KINDS:
            raise self.error(
                f"kind must be one of {', '.join(KINDS)} (got {m.group('kind')!r})", number
            )
        self.directive = (kind, m.group("units"), number)

    def choose_layout(self) -> None:
        width = len(self.rows[0])
        if self.layout_arg != "auto":
            self.layout = self.layout_arg
        elif self.header is not None and _is_long_header(self.header):
            self.layout = "long"
        elif width == 3 and not any(_is_finite_number(r[1], self.delimiter) or not r[1]
                                    for r in self.rows):
            self.layout = "long"
        else:
            self.layout = "wide"
        if self.layout == "long" and width != 3:
            raise self.error(
                f"a long table needs 3 columns (wavelength, name, value); got {width}",
                self.row_lines[0],
            )

    def number_cells(self) -> None:
        """Parse the numeric columns into ``self.numbers`` (rows, columns)."""
        cols = [0, 2] if self.layout == "long" else list(range(len(self.rows[0])))
        self.numeric_cols = cols
        if self.fast is not None:
            fast, self.fast = self.fast, None
            self.number_text = np.array(fast.first_cells, dtype=str)[:, None]
            if fast.comma_example is not None:
                example = fast.comma_example
                self.note(f"decimal commas read as decimal points (e.g. {example} as "
                          f"{float(example.replace(',', '.')):g})")
            self.numbers = fast.numbers
            return
        cells = np.array([[r[j] for j in cols] for r in self.rows], dtype=str)
        text = cells
        comma_at = None
        if self.delimiter != ",":
            has_comma = np.char.find(cells, ",") >= 0
            if has_comma.any():
                i, j = np.argwhere(has_comma)[0]
                example = str(cells[i, j])
                has_point = np.char.find(cells, ".") >= 0
                if has_point.any():
                    pi, pj = np.argwhere(has_point)[0]
                    raise self.error(
                        f"{shorten(str(cells[pi, pj]), 40)!r} has a decimal point but the file uses "
                        f"decimal commas (e.g. {shorten(example, 40)!r} at line {self.row_lines[i]}); "
                        "expected one decimal mark",
                        self.row_lines[pi], self.label(cols[pj]),
                    )
                text = np.char.replace(cells, ",", ".")
                comma_at = (i, j)
        self.number_text = text
        joined = "".join(text.ravel().tolist())
        numbers = None
        if joined.isascii() and "_" not in joined:
            try:
                numbers = text.astype(float)
            except ValueError:
                numbers = None
        if numbers is None or not np.all(np.isfinite(numbers)):
            for i, j in np.ndindex(text.shape):
                problem = _cell_problem(str(text[i, j]))
                if problem is not None:
                    shown = shorten(str(cells[i, j]), 40)
                    message = problem if problem.startswith("empty") else f"{shown!r} {problem}"
                    raise self.error(message, self.row_lines[i], self.label(cols[j]))
        if numbers is None:  # pragma: no cover - every cell passed the strict check
            numbers = np.array([[float(t) for t in row] for row in text.tolist()])
        if comma_at is not None:
            i, j = comma_at
            self.note(
                f"decimal commas read as decimal points (e.g. {cells[i, j]} as "
                f"{numbers[i, j]:g})"
            )
        self.numbers = numbers

    def check_wavelength_signs(self, wl: np.ndarray) -> None:
        bad = np.flatnonzero(wl <= 0)
        if bad.size:
            i = bad[0]
            raise self.error(
                f"wavelength {str(self.number_text[i, 0])} is not positive; "
                "expected wavelengths > 0 in nm or µm",
                self.row_lines[i], self.label(0),
            )

    def wide(self):
        header = self.header
        width = len(self.rows[0])
        if header is not None:
            seen = {}
            for j in range(1, width):
                name = header[j]
                if not name:
                    raise self.error(
                        "empty spectrum name; expected a name in the header for every column",
                        self.header_line, j + 1,
                    )
                if name in seen:
                    raise self.error(
                        f"spectrum name {name!r} appears twice (first in column {seen[name]}); "
                        "expected unique names",
                        self.header_line, j + 1,
                    )
                seen[name] = j + 1
            names = tuple(header[1:])
        else:
            names = tuple(f"s{j}" for j in range(1, width))
        if self.n_rows < 3:
            raise self.error(self.too_few(self.n_rows))
        wl = self.numbers[:, 0]
        self.check_wavelength_signs(wl)
        self.decide_unit(wl)
        first = {}
        for i, x in enumerate(wl.tolist()):
            if x in first:
                raise self.error(
                    f"{self.wl_text(i)} appears twice (first at line {self.row_lines[first[x]]})",
                    self.row_lines[i], self.label(0),
                )
            first[x] = i
        d = np.diff(wl)
        wrong = np.flatnonzero(d < 0) if d[0] > 0 else np.flatnonzero(d > 0)
        if wrong.size:
            i = wrong[0] + 1
            raise self.error(
                f"{self.wl_text(i)} comes after {self.wl_text(i - 1)} (line "
                f"{self.row_lines[i - 1]}); expected wavelengths running one way down the table",
                self.row_lines[i], self.label(0),
            )
        values = _transposed(self.numbers[:, 1:])
        wl = wl.copy()
        self.numbers = None
        return wl, values, names, self.number_text[:, 0], self.row_lines

    def long(self):
        wl_all = self.numbers[:, 0]
        self.check_wavelength_signs(wl_all)
        self.decide_unit(wl_all)
        names: dict[str, dict[float, int]] = {}
        for i, row in enumerate(self.rows):
            name = row[1]
            if not name:
                raise self.error(
                    "empty spectrum name; expected a name in every row of a long table",
                    self.row_lines[i], self.label(1),
                )
            at = names.setdefault(name, {})
            x = float(wl_all[i])
            if x in at:
                raise self.error(
                    f"{self.wl_text(i)} appears twice for {name!r} "
                    f"(first at line {self.row_lines[at[x]]})",
                    self.row_lines[i], self.label(0),
                )
            at[x] = i
        grid_first: dict[float, int] = {}
        for at in names.values():
            for x, i in at.items():
                grid_first.setdefault(x, i)
        grid = np.array(sorted(grid_first))
        if grid.size < 3:
            raise self.error(self.too_few(grid.size))
        values = np.empty((len(names), grid.size))
        for k, (name, at) in enumerate(names.items()):
            for x, i in grid_first.items():
                if x not in at:
                    owner = self.rows[i][1]
                    raise self.error(
                        f"spectrum {name!r} has no value at {self.wl_text(i)}, which {owner!r} "
                        f"has (line {self.row_lines[i]}); expected every spectrum of a long "
                        "table on the same wavelengths"
                    )
            values[k] = self.numbers[[at[x] for x in grid.tolist()], 1]
        rows = [grid_first[x] for x in grid.tolist()]
        wl_text = self.number_text[rows, 0]
        return grid, values, tuple(names), wl_text, [self.row_lines[i] for i in rows]

    def too_few(self, n: int) -> str:
        return f"only {_plural(n, 'wavelength')} in the table; expected at least 3"

    def wl_text(self, i: int) -> str:
        """Wavelength of row ``i`` as written, with the unit it is read in."""
        return f"{self.number_text[i, 0]} {'µm' if self.unit == 'um' else 'nm'}"

    def header_wavelength_unit(self) -> str | None:
        if self.header is None:
            return None
        cell = self.header[0]
        if _UNIT_UM.search(cell):
            return "um"
        if _UNIT_NM.search(cell):
            return "nm"
        return None

    def resolve_kind(self) -> None:
        """Set ``kind`` (and remember what the header says about scale and units)."""
        value_cells = []
        if self.header is not None:
            cols = [2] if self.layout == "long" else range(1, len(self.header))
            value_cells = [(j, self.header[j]) for j in cols]
        self.value_cells = value_cells
        file_kind, said_by = None, None
        if self.directive is not None:
            file_kind = self.directive[0]
            said_by = f"the '# kind:' line (line {self.directive[2]})"
        else:
            found = _first_kinds(self.header[1:]) if self.header is not None else {}
            if self.header is not None:
                for k, c in _symbol_kinds(self.header[1:]).items():
                    found.setdefault(k, c)
            if len(found) > 1:
                listed = ", ".join(f"{k} in {c!r}" for k, c in found.items())
                raise self.error(
                    f"the header names more than one kind ({listed}); "
                    "expected one — pass kind= to say which",
                    self.header_line,
                )
            if found:
                file_kind, cell = next(iter(found.items()))
                said_by = f"the header {cell!r}"
        if self.kind_arg is not None:
            self.kind = self.kind_arg
            if file_kind is not None and file_kind != self.kind_arg:
                self.note(f"kind {self.kind_arg} as asked, although {said_by} says {file_kind}")
        elif file_kind is not None:
            self.kind = file_kind
            if self.directive is None:
                self.note(f"kind {file_kind} taken from {said_by}")
                self.note(KIND_RULE)
        elif self._metadata_says_emission():
            self.kind = "emission"
            self.note(f"kind emission taken from the metadata line {self.metadata_units[1]} "
                      f"(units {self.metadata_units[0]!r} are spectral irradiance or radiance)")
        else:
            self.kind = "reflectance"
            self.note(KIND_UNSAID_NOTE)
        # Units stated by a '# kind: ...; units: ...' line of the same kind.
        self.stated_units = None
        if self.directive is not None and self.directive[0] == self.kind:
            self.stated_units = self.directive[1]

    def _metadata_says_emission(self) -> bool:
        """True when a metadata line gives absolute spectral units (irradiance, radiance, photons)."""
        if self.metadata_units is None:
            return False
        try:
            return spectral_unit(self.metadata_units[0]).quantity != "relative"
        except WorkbenchError:
            return False  # an unknown unit text is refused later, where the units are decided

    def decide_unit(self, wl: np.ndarray) -> None:
        """Set ``unit`` ('nm' or 'um') for the wavelength column, with a note."""
        header_unit = self.header_wavelength_unit()
        cell = self.header[0] if self.header is not None else None
        if self.unit_arg != "auto":
            unit = self.unit_arg
            if header_unit is not None and header_unit != unit:
                said = "µm" if header_unit == "um" else "nm"
                asked = "µm" if unit == "um" else "nm"
                self.note(
                    f"wavelengths taken as {asked} as asked, although the header {cell!r} "
                    f"says {said}"
                )
            if unit == "um":
                self.note("wavelengths in µm converted to nm (×1000)")
        elif header_unit is not None:
            unit = header_unit
            if unit == "um":
                self.note(f"wavelengths in µm (header {cell!r}) converted to nm (×1000)")
        elif np.all(wl < _UM_BELOW):
            unit = "um"
            self.note(
                f"wavelengths taken as µm because all are below {_UM_BELOW:g} "
                f"(the largest is {wl.max():g}); converted to nm (×1000)"
            )
        else:
            unit = "nm"
            self.note("wavelengths taken as nm (the header does not say)")
        self.unit = unit

    def wavelengths_to_nm(self, wl, wl_text, wl_line) -> np.ndarray:
        unit = self.unit
        if unit == "um":
            # Exact decimal shift: '0.555' µm -> 555.0 nm, not 555.0000000000001.
            wl = np.array([float(Decimal(str(t)).scaleb(3)) for t in wl_text.tolist()])
        lo, hi = WAVELENGTH_RANGE_NM
        outside = np.flatnonzero((wl < lo) | (wl > hi))
        if outside.size:
            i = outside[0]
            written = f"{wl_text[i]} µm ({wl[i]:g} nm)" if unit == "um" else f"{wl_text[i]} nm"
            raise self.error(
                f"wavelength {written} is outside {lo:g}-{hi:g} nm; "
                "expected wavelengths in nm (or in µm, all below 30)",
                wl_line[i], self.label(0),
            )
        return wl

    def resolve_scale(self, values: np.ndarray) -> np.ndarray:
        kind = self.kind
        stated = self.stated_units
        percent_cell = None
        if self.directive is None:
            percent_cell = next(
                (c for _, c in self.value_cells if _header_says_percent(c)), None
            )
        vmax = float(values.max())
        reason = None
        if self.scale_arg == "percent":
            reason = "as asked"
        elif self.scale_arg == "auto":
            if stated is not None:
                if stated.lower() in ("%", "percent"):
                    reason = f"because the '# kind:' line gives units {stated!r}"
            elif percent_cell is not None:
                reason = f"because the header {percent_cell!r} says so"
            elif kind in ("reflectance", "transmittance") and vmax > _PERCENT_ABOVE:
                reason = f"because the largest is {vmax:g} > {_PERCENT_ABOVE:g}"
            elif kind in ("reflectance", "transmittance"):
                self.note(
                    f"values taken as fractions 0-1 (the largest is {vmax:g} ≤ "
                    f"{_PERCENT_ABOVE:g})"
                )
        if reason is not None and kind == "emission":
            line, column = None, None
            if percent_cell is not None:
                line, column = self.header_line, percent_cell
            elif stated is not None:
                line = self.directive[2]
            raise self.error(
                f"values are percent ({reason.removeprefix('because ')}) but the kind is "
                "emission; expected percent only for reflectance, transmittance or sensitivity",
                line, column,
            )
        if reason is not None:
            self.note(f"values taken as percent {reason}; divided by 100")
            self.units = "1"
            return values / 100.0
        if kind in ("reflectance", "transmittance"):
            self.units = stated if stated else "1"
            return values
        if stated:
            self.units = stated
            return values
        units = {}
        for j, cell in self.value_cells:
            u = _header_units(cell)
            if u is not None:
                units.setdefault(u, cell)
        if len(units) > 1:
            listed = ", ".join(f"{u!r} in {c!r}" for u, c in units.items())
            raise self.error(
                f"the header gives different units ({listed}); expected one unit for all spectra",
                self.header_line,
            )
        if units:
            self.units = next(iter(units))
        elif self.metadata_units is not None:
            self.units = self.metadata_units[0]
            self.note(f"units {self.units!r} taken from the metadata line {self.metadata_units[1]}")
        else:
            self.units = "relative"
            self.note("units taken as 'relative' (the header gives none)")
        return values
