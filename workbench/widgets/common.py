"""Helpers shared by the notebook panels: the error line, uploads, PNG figures in an Output, HTML tables.

- :class:`ErrorLine`: the one place a panel shows a user error — the same
  ``error: …`` text the command line prints (``str`` of the
  :class:`~workbench.errors.WorkbenchError`), never a traceback;
- :func:`uploaded_files` / :func:`read_uploaded_spectra`: the files of a
  ``FileUpload`` widget, read by the CSV rules of ``workbench.fileio.spectra_csv``;
- :func:`figure_png`, :func:`show_png`, :func:`show_svg`, :func:`html_table` (from :mod:`workbench.report.html`), :func:`guard`.

Figures are PNG images drawn by matplotlib's Agg renderer (:func:`show_png`;
matplotlib imported when a panel first draws one) or SVG pictures of the
package's own plotter (:func:`show_svg`: the design panel's live figure),
held by ``ipywidgets.Output`` widgets, so a picture is part of the widget
state: tests read it without a browser, and a browser shows it as an ``<img>``.
"""

from __future__ import annotations

import base64
import datetime as _dt
import html
import io
import math

import ipywidgets as W

from workbench.errors import WorkbenchError
from workbench.fileio.design_toml import design_from_bytes
from workbench.fileio.spectra_csv import parse_spectra_text
from workbench.model.design import Design
from workbench.report.html import html_table  # the one table of the report views, re-exported for the panels

__all__ = [
    "error_text",
    "ErrorLine",
    "guard",
    "uploaded_files",
    "upload_entry",
    "read_uploaded_spectra",
    "design_from_upload",
    "figure_png",
    "show_png",
    "output_png",
    "show_svg",
    "output_svg",
    "html_table",
    "compact",
    "fmt_number",
]

# --------------------------------------------------------------------------
# Shared helpers
# --------------------------------------------------------------------------


def error_text(exc: BaseException) -> str:
    """The text a panel shows for an exception: the CLI's ``error: …`` line(s).

    A :class:`WorkbenchError` is the user's mistake and reads exactly as the
    command line prints it. Anything else is a fault of the workbench; it is
    named in one line (type and message) with a request to report it.
    """
    if isinstance(exc, WorkbenchError):
        return f"error: {exc}"
    return (f"error: unexpected {type(exc).__name__}: {exc} "
            "(a fault of the workbench, not of your input: please report it)")


class ErrorLine(W.HTML):
    """A line for user errors and short confirmations; empty when all is well.

    ``show(exc)`` writes :func:`error_text` (red, monospace, line breaks
    kept for the multi-line design-file report); ``ok(text)`` a confirmation;
    ``clear()`` empties it. ``text`` holds the plain text shown.
    """

    def __init__(self, **kw):
        super().__init__(**kw)
        self.text = ""
        self.is_error = False
        self.add_class("wb-error")

    def show(self, exc: BaseException) -> None:
        self._set(error_text(exc), error=True)

    def ok(self, text: str) -> None:
        self._set(text, error=False)

    def clear(self) -> None:
        self.text = ""
        self.is_error = False
        self.value = ""

    def _set(self, text: str, *, error: bool) -> None:
        self.text = text
        self.is_error = error
        colour = "#b00020" if error else "#1b5e20"
        self.value = (f'<pre style="margin:2px 0;color:{colour};white-space:pre-wrap;line-height:1.35;'
                      f'font-size:12px">{html.escape(text)}</pre>')


class guard:
    """Context manager for widget handlers: errors go to an :class:`ErrorLine`, never a traceback.

    ``with guard(line): ...`` clears the line first (``clear=True``) and
    shows any exception raised inside; ``failed`` tells afterwards whether
    one was. ``KeyboardInterrupt`` passes through.
    """

    def __init__(self, line: ErrorLine, *, clear: bool = True):
        self.line = line
        self.clear = clear
        self.failed = False

    def __enter__(self):
        if self.clear:
            self.line.clear()
        return self

    def __exit__(self, typ, exc, tb):
        if exc is None or not isinstance(exc, Exception):
            return False
        self.failed = True
        self.line.show(exc)
        return True


def uploaded_files(upload: W.FileUpload) -> list[tuple[str, bytes]]:
    """``(name, content bytes)`` of each file in a ``FileUpload`` widget (ipywidgets 8)."""
    out = []
    for f in upload.value or ():
        out.append((str(f["name"]), bytes(f["content"])))
    return out


def upload_entry(name: str, content: bytes) -> dict:
    """A ``FileUpload`` value entry as the browser sends it (for code and tests that fill one)."""
    return {"name": name, "type": "", "size": len(content), "content": memoryview(content),
            "last_modified": _dt.datetime.now(_dt.timezone.utc)}


def read_uploaded_spectra(upload: W.FileUpload, *, kind: str | None = None):
    """The spectra of the (first) uploaded CSV file, by the rules of ``read_spectra_csv``.

    Returns ``None`` when nothing is uploaded. Messages name the uploaded
    file as the CLI names a file given by path.
    """
    files = uploaded_files(upload)
    if not files:
        return None
    name, content = files[0]
    return parse_spectra_text(content, source=name, kind=kind)


def design_from_upload(name: str, content: bytes, base_dir) -> Design:
    """A design file's bytes (an upload) read and validated as :func:`load_design` reads a file.

    Relative file names in it resolve against ``base_dir``; messages name
    the file ``name``, as the command line names a path.
    """
    return design_from_bytes(content, source=name, base_dir=base_dir)


def figure_png(fig, *, dpi=None) -> bytes:
    """PNG bytes of a matplotlib figure (Agg renderer; the figure is left as it is)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg  # late: the design panel draws no matplotlib

    if not isinstance(fig.canvas, FigureCanvasAgg):
        FigureCanvasAgg(fig)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi or fig.dpi)
    return buf.getvalue()


def show_png(output: W.Output, png: bytes, *, alt: str = "figure", width: int | None = None) -> None:
    """Put one PNG image into an Output widget, replacing what it held.

    Sets the widget's ``outputs`` directly (no ``with output:`` context), so
    it works from a background thread and the image is in the widget state.
    """
    meta = {"image/png": {"width": width}} if width else {}
    output.outputs = ({
        "output_type": "display_data",
        "data": {"image/png": base64.b64encode(png).decode("ascii"), "text/plain": f"<{alt}>"},
        "metadata": meta,
    },)


def show_svg(output: W.Output, svg: str, *, alt: str = "figure") -> None:
    """Put one SVG picture into an Output widget, replacing what it held (any thread, as :func:`show_png`)."""
    output.outputs = ({
        "output_type": "display_data",
        "data": {"image/svg+xml": svg, "text/plain": f"<{alt}>"},
        "metadata": {},
    },)


def output_svg(output: W.Output) -> str | None:
    """The SVG text an Output widget shows (its first SVG picture), or ``None``."""
    for o in output.outputs:
        data = o.get("data", {})
        if "image/svg+xml" in data:
            return data["image/svg+xml"]
    return None


def output_png(output: W.Output) -> bytes | None:
    """The PNG bytes an Output widget shows (its first image), or ``None``."""
    for o in output.outputs:
        data = o.get("data", {})
        if "image/png" in data:
            return base64.b64decode(data["image/png"])
    return None


def compact(content: str) -> str:
    """Wrap HTML for an ``ipywidgets.HTML`` value in ordinary line spacing.

    The widget's own line height is that of one control row (about 28 px),
    which spreads paragraphs and table rows far apart.
    """
    return f'<div style="line-height:1.35">{content}</div>'


def fmt_number(v, digits=4) -> str:
    v = float(v)
    if not math.isfinite(v):
        return "nan"
    text = f"{v:.{digits}f}"
    return text[1:] if text.startswith("-") and float(text) == 0 else text
