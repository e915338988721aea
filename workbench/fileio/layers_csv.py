"""Reading a thin-film layer table (one row per layer, from the incidence side) from CSV.

The table follows the project's CSV conventions: UTF-8 (a byte-order mark is
allowed), ``#`` comment lines and blank lines anywhere, the delimiter
sniffed from the header (tab, else semicolon, else comma). The header names
the columns ``material`` and ``thickness_nm`` (any case, any order; other
columns are ignored). Every problem is an :class:`InputFileError` naming the
file, the 1-based line and the column.
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass

from workbench.errors import InputFileError, WorkbenchError
from workbench.optics.materials import Material, material_named
from workbench.fileio.limits import limits, read_limited

__all__ = ["LayerRow", "read_layer_table"]

COLUMNS = ("material", "thickness_nm")


@dataclass(frozen=True)
class LayerRow:
    """One layer of a table.

    Attributes
    ----------
    line : int
        1-based line in the file.
    material : Material
    thickness_nm : float, nm
        Physical thickness, > 0.
    written : str
        The material cell as written.
    """

    line: int
    material: Material
    thickness_nm: float
    written: str


def read_layer_table(path, *, user: dict[str, Material] | None = None,
                     text: str | None = None) -> list[LayerRow]:
    """Read a layer table.

    Parameters
    ----------
    path : str or path-like
        The file; messages name it as given.
    user : dict of str to Material, optional
        User materials the ``material`` column may name.
    text : str, optional
        The content, when already read.

    Returns
    -------
    list of LayerRow
        From the incidence side.

    Raises
    ------
    InputFileError
        A missing column, an unknown material, a bad index (k < 0), a
        thickness that is not a number > 0, no layers.
    """
    source = str(path)
    if text is None:
        data = read_limited(path, max_bytes=limits().design_bytes, limit_name="design_mb")
        try:
            text = data.decode("utf-8-sig")
        except UnicodeDecodeError:
            raise InputFileError("must be UTF-8 text", source) from None
    rows = [(i, line) for i, line in enumerate(text.splitlines(), start=1)
            if line.strip() and not line.strip().startswith("#")]
    if not rows:
        raise InputFileError("must hold a header 'material,thickness_nm' and one row per layer (got nothing)",
                             source)
    header_line, header_text = rows[0]
    delim = "\t" if "\t" in header_text else ";" if ";" in header_text else ","
    header = [h.strip().lower() for h in next(csv.reader(io.StringIO(header_text), delimiter=delim))]
    missing = [c for c in COLUMNS if c not in header]
    if missing:
        raise InputFileError(
            f"the header must have the columns 'material' and 'thickness_nm' (missing "
            f"{', '.join(repr(m) for m in missing)}; got {', '.join(header)})",
            source, header_line,
        )
    i_mat, i_d = header.index("material"), header.index("thickness_nm")
    out = []
    for number, line in rows[1:]:
        cells = next(csv.reader(io.StringIO(line), delimiter=delim))
        mat_text = cells[i_mat].strip() if i_mat < len(cells) else ""
        d_text = cells[i_d].strip() if i_d < len(cells) else ""
        if not mat_text:
            raise InputFileError("must name a material or give an index such as 2.35 (got an empty cell)",
                                 source, number, "material")
        try:
            mat = material_named(mat_text, user=user)
        except WorkbenchError as err:
            raise InputFileError(str(err), source, number, "material") from None
        if delim != "," and "," in d_text:
            d_text = d_text.replace(",", ".")
        try:
            d = float(d_text)
        except ValueError:
            raise InputFileError(f"must be a thickness in nm > 0 (got {d_text!r})", source, number,
                                 "thickness_nm") from None
        if not math.isfinite(d) or d <= 0:
            raise InputFileError(f"must be a thickness in nm > 0 (got {d_text})", source, number, "thickness_nm")
        out.append(LayerRow(number, mat, d, mat_text))
    if not out:
        raise InputFileError("must hold at least one layer below the header (got none)", source)
    return out
