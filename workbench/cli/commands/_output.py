"""Output helpers shared by the commands: formats, notices, atomic writes."""

from __future__ import annotations

import csv
import io
import math
import sys

from workbench.fileio.atomic import write_text_atomically
from workbench.report.json_text import json_text

FORMATS = ("table", "json", "csv")


def notice(message: str) -> None:
    """Print a notice for the user on stderr (never on stdout)."""
    print(f"note: {message}", file=sys.stderr)


def to_json(obj) -> str:
    """JSON text with NaN/inf written as null (valid JSON); :func:`workbench.report.json_text.json_text`."""
    return json_text(obj)


def render_rows(rows: list[dict], columns: list[str], fmt: str, *, header_lines=(), digits=4) -> str:
    """Rows as an aligned table, CSV or a JSON array."""
    if fmt == "json":
        return to_json(rows)
    if fmt == "csv":
        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        w.writerow(columns)
        for r in rows:
            w.writerow(["" if r.get(c) is None else r.get(c) for c in columns])
        return buf.getvalue().rstrip("\n")

    def cell(v):
        if isinstance(v, float):
            if not math.isfinite(v):
                return "nan"
            text = f"{v:.{digits}f}"
            return text[1:] if text.startswith("-") and float(text) == 0 else text
        return str(v)

    table = [columns] + [[cell(r.get(c, "")) for c in columns] for r in rows]
    widths = [max(len(row[i]) for row in table) for i in range(len(columns))]
    lines = list(header_lines)
    for j, row in enumerate(table):
        lines.append("  ".join(c.rjust(w) if j and i else c.ljust(w) for i, (c, w) in enumerate(zip(row, widths))))
    return "\n".join(lines)


def atomic_write_text(path, text: str) -> None:
    """Write ``text`` to ``path`` through a temporary file and a rename."""
    write_text_atomically(path, text)
