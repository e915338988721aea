"""Reading and writing spectra as CSV: formats, notes, every rejection rule, exact round trip."""

import os
from pathlib import Path

import numpy as np
import pytest

from workbench.errors import InputFileError
from workbench.spectra import Spectra, grid
from workbench.spectra_csv import parse_spectra_text, read_spectra_csv, write_spectra_csv

BAD = Path(__file__).parent / "data" / "bad_csv"

# One file per rejection rule, with the exact one-line message ({f} = the path as given).
BAD_FILES = [
    ("duplicate_name.csv", None, "{f}duplicate_name.csv, line 1, column 3: spectrum name 'leaf' appears twice (first in column 2); expected unique names"),
    ("duplicate_wavelength.csv", None, "{f}duplicate_wavelength.csv, line 4, column 'wavelength_nm': 410 nm appears twice (first at line 3)"),
    ("empty.csv", None, '{f}empty.csv: the file is empty; expected a table of wavelength and values'),
    ("empty_cell.csv", None, "{f}empty_cell.csv, line 3, column 'leaf': empty or NaN value; gaps are not filled in — remove the row or supply a value"),
    ("infinite_value.csv", None, "{f}infinite_value.csv, line 3, column 'leaf': 'inf' is not a finite number"),
    ("long_missing_point.csv", None, "{f}long_missing_point.csv: spectrum 'b' has no value at 420 nm, which 'a' has (line 4); expected every spectrum of a long table on the same wavelengths"),
    ("nan_value.csv", None, "{f}nan_value.csv, line 3, column 'leaf': empty or NaN value; gaps are not filled in — remove the row or supply a value"),
    ("negative_wavelength.csv", None, "{f}negative_wavelength.csv, line 2, column 'wavelength_nm': wavelength -400 is not positive; expected wavelengths > 0 in nm or µm"),
    ("no_table.csv", None, '{f}no_table.csv: no table found: no line starts with a number followed by a comma, semicolon or tab; expected rows of a wavelength and one value per spectrum'),
    ("non_numeric.csv", None, "{f}non_numeric.csv, line 3, column 'leaf': 'abc' is not a number"),
    ("percent_emission.csv", "emission", "{f}percent_emission.csv, line 1, column 'power %': values are percent (the header 'power %' says so) but the kind is emission; expected percent only for reflectance, transmittance or sensitivity"),
    ("ragged_row.csv", None, '{f}ragged_row.csv, line 3: 2 cells where the header has 3; expected a wavelength and one value per spectrum in every row'),
    ("too_few_points.csv", None, '{f}too_few_points.csv: only 2 wavelengths in the table; expected at least 3'),
]


class TestReadBadFiles:
    @pytest.mark.parametrize("name, kind, message", BAD_FILES, ids=[b[0] for b in BAD_FILES])
    def test_exact_message(self, name, kind, message):
        """Each bad file is refused with one line naming file, line and column."""
        path = BAD / name
        with pytest.raises(InputFileError) as e:
            read_spectra_csv(path, kind=kind)
        assert str(e.value) == message.format(f=f"{BAD}/")
        assert "\n" not in str(e.value)

    def test_corpus_complete(self):
        """Every file of the corpus has a test row."""
        assert sorted(p.name for p in BAD.glob("*.csv")) == sorted(b[0] for b in BAD_FILES)

    def test_missing_file(self, tmp_path):
        """A missing file is an InputFileError naming it, not an OSError."""
        with pytest.raises(InputFileError, match="nope.csv"):
            read_spectra_csv(tmp_path / "nope.csv")


class TestReadFormats:
    def test_spectrometer_export(self, tmp_path):
        """Metadata lines, BOM, semicolons and decimal commas, as spectrometers export (common practice)."""
        p = tmp_path / "lamp.csv"
        p.write_bytes("\ufeffDevice: demo\nIntegration time [ms];100\nWavelength [nm];Lamp\n380;0,12\n381;0,13\n382;0,15\n".encode("utf-8"))
        s = read_spectra_csv(p, kind="emission")
        assert s.values.tolist() == [[0.12, 0.13, 0.15]] and s.wavelengths.tolist() == [380, 381, 382]
        notes = " ".join(s.notes)
        assert "2 metadata lines above the table skipped" in notes and "decimal commas" in notes

    def test_tab_delimited_long_table_in_um_percent(self, tmp_path):
        """Long table, tabs, µm by range and percent by range are converted and said."""
        p = tmp_path / "long.tsv"
        p.write_text("wavelength\tname\tvalue\n0.40\ta\t50\n0.50\ta\t60\n0.60\ta\t70\n0.40\tb\t10\n0.50\tb\t20\n0.60\tb\t30\n")
        s = read_spectra_csv(p)
        assert s.names == ("a", "b")
        np.testing.assert_allclose(s.wavelengths, [400, 500, 600])
        np.testing.assert_allclose(s.values, [[0.5, 0.6, 0.7], [0.1, 0.2, 0.3]])
        notes = " ".join(s.notes)
        assert "taken as µm" in notes and "percent" in notes

    def test_descending_sorted(self, tmp_path):
        """Descending wavelengths are sorted, with a note."""
        p = tmp_path / "d.csv"
        p.write_text("wavelength_nm,x\n420,0.3\n410,0.2\n400,0.1\n")
        s = read_spectra_csv(p)
        assert s.wavelengths.tolist() == [400, 410, 420] and s.values.tolist() == [[0.1, 0.2, 0.3]]
        assert any("descending" in n or "sorted" in n for n in s.notes)

    def test_fractions_not_scaled(self, tmp_path):
        """Reflectance within 0-1.5 is kept as fractions, and the note says why."""
        p = tmp_path / "f.csv"
        p.write_text("wavelength_nm,x\n400,0.1\n410,0.9\n420,1.0\n")
        s = read_spectra_csv(p)
        assert s.values.max() == 1.0 and any("fractions" in n for n in s.notes)

    def test_parse_text(self):
        """Uploaded text follows the same rules."""
        s = parse_spectra_text("wavelength_nm,x\n400,0.1\n410,0.2\n420,0.3\n", source="upload.csv")
        assert s.names == ("x",) and s.values.tolist() == [[0.1, 0.2, 0.3]]


class TestWrite:
    def test_round_trip_exact(self, tmp_path):
        """Write then read gives bit-identical arrays, names, kind and units."""
        wl = grid(380, 780, 5)
        rng = np.random.default_rng(1)
        s = Spectra(wl, rng.random((4, wl.size)), names=("a", "b c", "d", "e"), kind="transmittance")
        p = tmp_path / "rt.csv"
        write_spectra_csv(s, p)
        r = read_spectra_csv(p)
        assert np.array_equal(r.values, s.values) and np.array_equal(r.wavelengths, s.wavelengths)
        assert (r.names, r.kind, r.units) == (s.names, s.kind, s.units)

    def test_emission_units_round_trip(self, tmp_path):
        """Emission units survive the round trip."""
        wl = grid(380, 780, 10)
        s = Spectra(wl, np.linspace(0.001, 0.01, wl.size), names=("lamp",), kind="emission", units="W·m⁻²·nm⁻¹")
        p = tmp_path / "e.csv"
        write_spectra_csv(s, p)
        r = read_spectra_csv(p)
        assert r.kind == "emission" and r.units == s.units and np.array_equal(r.flat(), s.flat())

    def test_failed_write_keeps_old_file(self, tmp_path, monkeypatch):
        """A failure during saving leaves the previous file as it was and no temporary file."""
        p = tmp_path / "keep.csv"
        p.write_text("old contents\n")

        def boom(src, dst):
            raise OSError(28, "No space left on device")

        monkeypatch.setattr(os, "replace", boom)
        wl = grid(400, 700, 100)
        with pytest.raises(InputFileError, match="cannot write"):
            write_spectra_csv(Spectra(wl, [0.1, 0.2, 0.3, 0.4]), p)
        assert p.read_text() == "old contents\n"
        assert [q.name for q in tmp_path.iterdir()] == ["keep.csv"]
