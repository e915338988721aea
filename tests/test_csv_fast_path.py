"""The bulk (vectorised) CSV path gives exactly what the cell-by-cell reader gives, and only WorkbenchError escapes."""

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from workbench.errors import InputFileError, WorkbenchError
from workbench.fileio import spectra_csv
from workbench.fileio.spectra_csv import parse_spectra_text


def _both(data: bytes, monkeypatch, **kw):
    """(result or error text) of the bulk path and of the cell-by-cell path."""
    out = []
    for threshold in (0, 1 << 60):
        monkeypatch.setattr(spectra_csv, "_FAST_MIN_BYTES", threshold)
        try:
            s = parse_spectra_text(data, source="t.csv", **kw)
            out.append(("ok", s.wavelengths.tolist(), s.values.tolist(), s.names, s.kind, s.units, s.notes))
        except WorkbenchError as err:
            out.append(("error", str(err)))
    return out


def _table(rng, rows=5, cols=6, delimiter=",", comma=False):
    wl = 380 + 10 * np.arange(rows)
    values = rng.random((rows, cols)).round(5)
    lines = [delimiter.join(["wavelength (nm)"] + [f"r{j}" for j in range(cols)])]
    for w, row in zip(wl, values):
        cells = [str(w)] + [repr(float(v)) for v in row]
        if comma:
            cells = [c.replace(".", ",") for c in cells]
        lines.append(delimiter.join(cells))
    return "\n".join(lines) + "\n"


class TestBulkPath:
    @pytest.mark.parametrize("delimiter, comma", [(",", False), (";", True), ("\t", False), ("\t", True)])
    def test_same_result_as_cell_reader(self, delimiter, comma, monkeypatch):
        """Comma, semicolon and tab tables, decimal points or commas: the same numbers, names and notes."""
        data = _table(np.random.default_rng(3), delimiter=delimiter, comma=comma).encode()
        fast, slow = _both(data, monkeypatch)
        assert fast == slow and fast[0] == "ok"

    def test_bulk_path_taken(self, monkeypatch):
        """A plain wide table does go through the bulk parser (not only the fallback)."""
        monkeypatch.setattr(spectra_csv, "_FAST_MIN_BYTES", 0)
        data = _table(np.random.default_rng(1)).encode()
        assert spectra_csv._fast_wide(data, "auto") is not None

    @pytest.mark.parametrize("text", [
        "nm,a,b,c\n400,1,2,3\n410,1,2\n420,1,2,3\n",          # ragged
        "nm,a,b,c\n400,1,2,3\n410,1,,3\n420,1,2,3\n",          # empty cell
        "nm,a,b,c\n400,1,2,3\n410,1,2 5,3\n420,1,2,3\n",       # space inside
        "nm,a,b,c\n400,1,2,3\n410,1,2.5.1,3\n420,1,2,3\n",     # two points
        "nm;a;b;c\n400;1;2;3\n410;1,5;2.5;3\n420;1;2;3\n",     # mixed marks
        "nm;a;b;c\n400;0,5,;2;3\n410;1;2;3\n420;1;2;3\n",      # stray comma
        "nm,a,b,c\n400,1,2,3\n#c\n410,1,2,3\n420,1,2,3\n",     # comment inside
        "nm,a,b,c\n400,1,2,3\n\n410,1,2,3\n420,1,2,3\n\n\n",   # blank lines
        "nm,a,b,c\n400,1,2,3\n410,1,1e999,3\n420,1,2,3\n",     # overflow
        "nm,a,b,c\n400,1,2,3\r410,1,2,3\n420,1,2,3\n",         # lone CR
        "nm,a,b,c\r\n400,1,2,3\r\n410,1,2,3\r\n420,1,2,3\r\n",  # CRLF
        "nm,a,b,c\n400,1,2,3\n410,-,2,3\n420,1,2,3\n",
        "nm,a,b,c\n420,1,2,3\n410,1,2,3\n400,1,2,3\n",         # descending
        "nm,a,b,c\n400,1,2,3\n400,1,2,3\n420,1,2,3\n",         # duplicate
    ])
    def test_awkward_tables_agree(self, text, monkeypatch):
        """Tables just off the simple shape: both paths give the same result or the same message."""
        fast, slow = _both(text.encode(), monkeypatch)
        assert fast == slow

    @settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
    @given(cells=st.lists(st.lists(st.text(alphabet="0123456789.,;+-eE \t\r", max_size=6),
                                   min_size=4, max_size=4), min_size=1, max_size=5),
           delimiter=st.sampled_from([",", ";", "\t"]))
    def test_number_like_junk_agrees(self, cells, delimiter, monkeypatch):
        """Rows of number-like characters: both paths agree, and only WorkbenchError escapes."""
        rows = [delimiter.join(["400", "1", "2", "3"])] + [delimiter.join(["4%d0" % (i + 1), *c[1:]])
                                                            for i, c in enumerate(cells)]
        data = ("nm" + delimiter + delimiter.join("abc") + "\n" + "\n".join(rows) + "\n").encode()
        fast, slow = _both(data, monkeypatch)
        assert fast == slow


class TestFuzzReader:
    @settings(max_examples=300, deadline=None)
    @given(st.binary(max_size=400))
    def test_bytes(self, data):
        """Any bytes: a Spectra or a WorkbenchError, nothing else."""
        try:
            parse_spectra_text(data, source="f.csv")
        except WorkbenchError:
            pass

    @settings(max_examples=300, deadline=None)
    @given(st.lists(st.lists(st.one_of(st.text(max_size=8), st.floats(allow_nan=True).map(repr),
                                       st.integers(-10, 2000).map(str)), min_size=1, max_size=5),
                    max_size=8),
           st.sampled_from([",", ";", "\t"]))
    def test_tables(self, rows, delimiter):
        """Tables of random cells: a Spectra or a WorkbenchError, nothing else."""
        text = "\n".join(delimiter.join(r) for r in rows)
        try:
            parse_spectra_text(text, source="f.csv")
        except WorkbenchError:
            pass


class TestLimits:
    def test_long_cell_refused_shortened(self):
        """A cell over the limit is refused with its first characters and its length, not echoed whole."""
        text = "nm,a\n400,1\n410," + "9" * 100_000 + "\n420,1\n"
        with pytest.raises(InputFileError) as err:
            parse_spectra_text(text, source="f.csv")
        msg = str(err.value)
        assert msg.startswith("f.csv, line 3, column 2: a cell of 100000 characters ('9999")
        assert "expected at most 1024" in msg and len(msg) < 300
