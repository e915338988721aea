"""The rows of a light report, as the command line, the HTML view and the panel show them.

:func:`report_rows` gives (quantity, value, unit, method) rows of a
:class:`workbench.analysis.light.LightReport`; :func:`value_text` formats
one value for a table.
"""

from __future__ import annotations

__all__ = ["report_rows", "value_text"]


def value_text(v) -> str:
    """A table cell for a value: 'n/a' for None, 4 decimals below 0.1, 1 from 1000 up, else 2."""
    if v is None:
        return "n/a"
    if isinstance(v, float):
        return f"{v:.4f}" if abs(v) < 0.1 else f"{v:.1f}" if abs(v) >= 1000 else f"{v:.2f}"
    return str(v)


def report_rows(report) -> list[dict]:
    """Rows (quantity, value, unit, method) of a report: the indices, then the camera fidelity index."""
    rows = report.indices.rows()
    if report.camera is not None:
        c = report.camera
        rows.append({"quantity": "camera fidelity index", "value": c.index, "unit": "1 (0-100)",
                     "method": f"{c.camera} vs {c.reference}, 113 samples; Tech 3355 scoring formula on "
                               "open samples (not the EBU's index)"})
        for s, v in c.by_set.items():
            rows.append({"quantity": f"  over {s}", "value": v["camera_fidelity_index"], "unit": "1 (0-100)",
                         "method": f"the same on the {v['count']} samples of the set"})
        st = c.stats
        rows.append({"quantity": "camera ΔE00 mean / max", "value": f"{st['mean']:.2f} / {st['max']:.2f}",
                     "unit": "ΔE00", "method": f"CIEDE2000 per sample, test vs reference; worst {st['worst']}"})
    return rows
