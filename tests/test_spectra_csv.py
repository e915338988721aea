"""Tests of workbench.fileio.spectra_csv: layouts, delimiters, assumptions and their notes, every
rejection rule with its exact message, exact round trip and atomic writing."""

import os
from pathlib import Path

import numpy as np
import pytest

from workbench.errors import InputFileError, WorkbenchError
from workbench.model.spectra import Spectra, grid
from workbench.fileio.spectra_csv import parse_spectra_text, read_spectra_csv, write_spectra_csv

BAD = Path(__file__).parent / "data" / "bad"

KIND_NOTE = "read <text>: kind taken as reflectance (none given and the header names none)"
NM_NOTE = "read <text>: wavelengths taken as nm (the header does not say)"


def fraction_note(largest):
    return f"read <text>: values taken as fractions 0-1 (the largest is {largest} ≤ 1.5)"


class TestParseSpectraText:
    """parse_spectra_text: the reading rules, on strings and uploaded bytes."""

    def test_wide_comma(self):
        """A plain wide table: names from the header, values as written, notes in order."""
        s = parse_spectra_text(
            "wavelength (nm),leaf,bark\n400,0.10,0.20\n410,0.11,0.21\n420,0.12,0.22\n"
        )
        assert s.names == ("leaf", "bark")
        assert s.wavelengths.tolist() == [400.0, 410.0, 420.0]
        assert s.values.tolist() == [[0.10, 0.11, 0.12], [0.20, 0.21, 0.22]]
        assert (s.kind, s.units, s.source) == ("reflectance", "1", "<text>")
        assert s.notes == (
            "read <text>: 2 reflectance spectra, 400-420 nm at 10 nm, wide layout, "
            "comma-delimited",
            KIND_NOTE,
            fraction_note(0.22),
        )

    def test_semicolon_decimal_comma(self):
        """Semicolons with decimal commas (European spreadsheet export) read as points, with a note."""
        # common practice: locales with a decimal comma export CSV with ';'
        s = parse_spectra_text("nm;leaf\n400;0,5\n410;0,25\n420;1\n")
        assert s.values.tolist() == [[0.5, 0.25, 1.0]]
        assert s.notes[0].endswith("wide layout, semicolon-delimited")
        assert "read <text>: decimal commas read as decimal points (e.g. 0,5 as 0.5)" in s.notes

    def test_tab_decimal_comma(self):
        """Tab-delimited with decimal commas; names with commas stay whole."""
        s = parse_spectra_text("wavelength\tleaf, dry\n400\t12,5\n410\t13\n420\t14,25\n",
                               kind="emission")
        assert s.names == ("leaf, dry",)
        assert s.values.tolist() == [[12.5, 13.0, 14.25]]
        assert s.notes[0].endswith("tab-delimited")

    def test_tab_beats_semicolon(self):
        """Tab is the delimiter when the row holds a tab, even with semicolons in the names."""
        s = parse_spectra_text("nm\ta;b\n400\t0.1\n410\t0.2\n420\t0.3\n")
        assert s.names == ("a;b",)

    def test_semicolon_with_points(self):
        """Semicolon-delimited numbers with decimal points need no note about commas."""
        s = parse_spectra_text("nm;a\n400;0.1\n410;0.2\n420;0.3\n")
        assert s.values.tolist() == [[0.1, 0.2, 0.3]]
        assert not any("decimal comma" in n for n in s.notes)

    def test_quoted_cells(self):
        """Quoted names may hold the delimiter; quoted numbers read as numbers."""
        s = parse_spectra_text('nm,"leaf, dry",b\n"400",0.1,0.2\n410,0.1,0.2\n420,0.1,0.2\n')
        assert s.names == ("leaf, dry", "b")
        assert s.wavelengths[0] == 400.0

    def test_spaces_around_cells(self):
        """Spaces around cells are not part of numbers or names."""
        s = parse_spectra_text("nm , leaf \n 400 , 0.1 \n410, 0.2\n420 ,0.3\n")
        assert s.names == ("leaf",)
        assert s.values.tolist() == [[0.1, 0.2, 0.3]]

    def test_long_layout_by_header(self):
        """A wavelength,name,value header (any case) is a long table; rows gather by name."""
        text = "Wavelength,NAME,Value\n400,a,1\n410,a,2\n420,a,3\n400,b,4\n410,b,5\n420,b,6\n"
        s = parse_spectra_text(text, kind="emission")
        assert s.names == ("a", "b")
        assert s.values.tolist() == [[1, 2, 3], [4, 5, 6]]
        assert s.notes[0] == (
            "read <text>: 2 emission spectra, 400-420 nm at 10 nm, long layout, comma-delimited"
        )

    def test_long_layout_by_names(self):
        """With no header, a second column of names means a long table."""
        s = parse_spectra_text("400,a,1\n400,b,4\n410,a,2\n410,b,5\n420,a,3\n420,b,6\n",
                               kind="sensitivity")
        assert s.names == ("a", "b")
        assert s.values.tolist() == [[1, 2, 3], [4, 5, 6]]

    def test_long_rows_any_order(self):
        """A long table's rows may come in any order; the grid is sorted ascending."""
        s = parse_spectra_text("wavelength,name,value\n420,a,0.3\n400,a,0.1\n410,a,0.2\n")
        assert s.wavelengths.tolist() == [400, 410, 420]
        assert s.values.tolist() == [[0.1, 0.2, 0.3]]
        assert not any("run down" in n for n in s.notes)

    def test_long_numeric_names_need_layout(self):
        """Numeric sample ids in a long table without its header need layout='long'."""
        text = "400,1,0.1\n410,1,0.2\n420,1,0.3\n400,2,0.4\n410,2,0.5\n420,2,0.6\n"
        s = parse_spectra_text(text, layout="long")
        assert s.names == ("1", "2")
        assert s.values.tolist() == [[0.1, 0.2, 0.3], [0.4, 0.5, 0.6]]

    def test_layout_wide_forced(self):
        """layout='wide' reads a three-column table of numbers as two spectra."""
        s = parse_spectra_text("400,0.1,0.4\n410,0.2,0.5\n420,0.3,0.6\n", layout="wide")
        assert s.names == ("s1", "s2")

    def test_layout_long_needs_three_columns(self):
        """layout='long' on a two-column table is refused, naming the width."""
        with pytest.raises(InputFileError) as err:
            parse_spectra_text("nm,a\n400,1\n410,1\n420,1\n", layout="long")
        assert str(err.value) == (
            "<text>, line 2: a long table needs 3 columns (wavelength, name, value); got 2"
        )

    def test_metadata_block(self):
        """Spectrometer metadata above the table is skipped and counted in a note."""
        # common practice: spectrometer exports put acquisition settings above the data
        text = (
            "Spectrometer: USB4000\n"
            "Integration time: 100 ms\n"
            "Date; 2026-01-01\n"
            "# operator: JS\n"
            "\n"
            "Wavelength (nm);Sample\n"
            "400;0,1\n410;0,2\n420;0,3\n"
        )
        s = parse_spectra_text(text)
        assert s.names == ("Sample",)
        assert "read <text>: 3 metadata lines above the table skipped" in s.notes

    def test_one_metadata_line(self):
        """One skipped line is counted in the singular."""
        s = parse_spectra_text("Exported by X\nnm,a\n400,0.1\n410,0.2\n420,0.3\n")
        assert "read <text>: 1 metadata line above the table skipped" in s.notes

    def test_metadata_without_header(self):
        """With no header row the spectra are named s1, s2, ... and columns by number."""
        s = parse_spectra_text("Integration time: 100 ms\n400,0.1,0.2\n410,0.2,0.3\n420,0.3,0.4\n")
        assert s.names == ("s1", "s2")
        assert "read <text>: 1 metadata line above the table skipped" in s.notes
        with pytest.raises(InputFileError) as err:
            parse_spectra_text("400,0.1,0.2\n410,x,0.3\n420,0.3,0.4\n", layout="wide")
        assert str(err.value) == "<text>, line 2, column 2: 'x' is not a number"

    def test_comments_anywhere(self):
        """Lines starting with # are comments, in the table too, and are not metadata."""
        s = parse_spectra_text("# a\nnm,a\n# b\n400,0.1\n  # c\n410,0.2\n420,0.3\n# end\n")
        assert s.values.tolist() == [[0.1, 0.2, 0.3]]
        assert not any("metadata" in n for n in s.notes)

    def test_blank_and_delimiter_only_lines(self):
        """Blank lines, and lines holding only delimiters (spreadsheet exports), are ignored."""
        # common practice: spreadsheets export empty trailing rows as ',,'
        s = parse_spectra_text("nm,a,b\n400,0.1,0.2\n\n410,0.2,0.3\n420,0.3,0.4\n,,\n\n\r\n")
        assert s.wavelengths.tolist() == [400, 410, 420]

    def test_crlf_line_ends(self):
        """Windows line ends read like Unix ones, with the same line numbers in messages."""
        s = parse_spectra_text("nm,a\r\n400,0.1\r\n410,0.2\r\n420,0.3\r\n")
        assert s.values.tolist() == [[0.1, 0.2, 0.3]]
        with pytest.raises(InputFileError, match="^<text>, line 3, column 'a'"):
            parse_spectra_text("nm,a\r\n400,0.1\r\n410,zz\r\n420,0.3\r\n")

    def test_bom_in_string(self):
        """A byte-order mark left at the start of decoded text is dropped."""
        s = parse_spectra_text("\ufeffnm,a\n400,0.1\n410,0.2\n420,0.3\n")
        assert s.names == ("a",)

    def test_bytes_with_bom(self):
        """Uploaded bytes are decoded as UTF-8 with or without a BOM."""
        body = "Wavelength/µm,a\n0.4,0.1\n0.41,0.2\n0.42,0.3\n".encode()
        for data in (body, b"\xef\xbb\xbf" + body):
            s = parse_spectra_text(data, source="upload.csv")
            assert s.wavelengths.tolist() == [400, 410, 420]
            assert s.notes[0].startswith("read upload.csv: ")

    def test_um_from_header(self):
        """A µm header converts to nm with a note naming the header."""
        for cell in ("wavelength [um]", "Wavelength/µm", "wavelength (microns)"):
            s = parse_spectra_text(f"{cell},a\n0.40,0.1\n0.41,0.2\n0.42,0.3\n")
            assert s.wavelengths.tolist() == [400, 410, 420]
            assert (f"read <text>: wavelengths in µm (header {cell!r}) converted to nm (×1000)"
                    in s.notes)

    def test_um_from_range(self):
        """Wavelengths all below 30 with no unit are taken as µm, and the note says why."""
        s = parse_spectra_text("lambda,a\n0.4,0.1\n0.5,0.2\n0.6,0.3\n")
        assert s.wavelengths.tolist() == [400, 500, 600]
        assert ("read <text>: wavelengths taken as µm because all are below 30 "
                "(the largest is 0.6); converted to nm (×1000)") in s.notes

    def test_um_conversion_is_exact(self):
        """µm convert by a decimal shift, so 0.555 µm is exactly 555 nm."""
        s = parse_spectra_text("um,a\n0.555,0.1\n0.565,0.2\n0.575,0.3\n")
        assert s.wavelengths.tolist() == [555.0, 565.0, 575.0]

    def test_nm_from_header_no_note(self):
        """A header saying nm needs no note about the unit."""
        for cell in ("wavelength (nm)", "nm", "wavelength_nm", "Wavelength [nm]"):
            s = parse_spectra_text(f"{cell},a\n400,0.1\n410,0.2\n420,0.3\n")
            assert not any("wavelengths" in n for n in s.notes[1:])

    def test_nm_assumed(self):
        """With no unit in the header, wavelengths from 30 up are nm, with a note."""
        s = parse_spectra_text("lambda,a\n400,0.1\n410,0.2\n420,0.3\n")
        assert NM_NOTE in s.notes

    def test_wavelength_unit_argument(self):
        """wavelength_unit overrides the header, saying so, and converts µm exactly."""
        s = parse_spectra_text("wavelength (nm),a\n0.4,0.1\n0.5,0.2\n0.6,0.3\n",
                               wavelength_unit="um")
        assert s.wavelengths.tolist() == [400, 500, 600]
        assert s.notes[1:3] == (
            "read <text>: wavelengths taken as µm as asked, although the header "
            "'wavelength (nm)' says nm",
            "read <text>: wavelengths in µm converted to nm (×1000)",
        )

    def test_wavelength_unit_nm_range_error(self):
        """wavelength_unit='nm' on µm numbers fails the 100-100000 nm range, naming the cell."""
        with pytest.raises(InputFileError) as err:
            parse_spectra_text("x,a\n0.4,0.1\n0.5,0.2\n0.6,0.3\n", wavelength_unit="nm")
        assert str(err.value) == (
            "<text>, line 2, column 'x': wavelength 0.4 nm is outside 100-100000 nm; "
            "expected wavelengths in nm (or in µm, all below 30)"
        )

    def test_um_out_of_range_names_both_units(self):
        """A µm wavelength outside the range is shown as written and in nm."""
        with pytest.raises(InputFileError) as err:
            parse_spectra_text("um,a\n0.05,0.1\n0.5,0.2\n0.6,0.3\n")
        assert str(err.value) == (
            "<text>, line 2, column 'um': wavelength 0.05 µm (50 nm) is outside 100-100000 nm; "
            "expected wavelengths in nm (or in µm, all below 30)"
        )

    def test_percent_from_header(self):
        """A % or 'percent' in a value header means percent, divided by 100 with a note."""
        for cell in ("leaf %", "leaf (percent)", "R%"):
            s = parse_spectra_text(f"nm,{cell}\n400,10\n410,50\n420,100\n")
            assert s.values.tolist() == [[0.1, 0.5, 1.0]]
            assert s.units == "1"
            assert (f"read <text>: values taken as percent because the header {cell!r} says so; "
                    "divided by 100") in s.notes

    def test_percent_from_range(self):
        """Reflectance whose largest value exceeds 1.5 is percent, and the note gives the value."""
        s = parse_spectra_text("nm,leaf\n400,12.5\n410,50\n420,87.3\n")
        assert s.values.tolist() == [[0.125, 0.5, 0.873]]
        assert ("read <text>: values taken as percent because the largest is 87.3 > 1.5; "
                "divided by 100") in s.notes

    def test_fraction_note(self):
        """Reflectance no larger than 1.5 stays as written, with a note saying it was taken as 0-1."""
        s = parse_spectra_text("nm,leaf\n400,0.2\n410,1.2\n420,1.5\n")
        assert s.values.tolist() == [[0.2, 1.2, 1.5]]
        assert fraction_note(1.5) in s.notes

    def test_scale_arguments(self):
        """scale='fraction' keeps large values; scale='percent' divides small ones, with a note."""
        s = parse_spectra_text("nm,leaf %\n400,12\n410,50\n420,87\n", scale="fraction")
        assert s.values.tolist() == [[12, 50, 87]]
        assert not any("percent" in n for n in s.notes)
        s = parse_spectra_text("nm,leaf\n400,0.5\n410,1\n420,1\n", scale="percent")
        assert s.values.tolist() == [[0.005, 0.01, 0.01]]
        assert "read <text>: values taken as percent as asked; divided by 100" in s.notes

    def test_emission_never_percent_by_range(self):
        """Emission values above 1.5 are not percent; units default to 'relative' with a note."""
        s = parse_spectra_text("nm,lamp\n400,12\n410,50\n420,870\n", kind="emission")
        assert s.values.tolist() == [[12, 50, 870]]
        assert s.units == "relative"
        assert "read <text>: units taken as 'relative' (the header gives none)" in s.notes
        assert not any("percent" in n or "fractions" in n for n in s.notes)

    def test_sensitivity_percent_header(self):
        """A QE (%) header is sensitivity in percent: divided by 100, units '1'."""
        s = parse_spectra_text("nm,QE (%)\n400,20\n410,40\n420,60\n")
        assert (s.kind, s.units) == ("sensitivity", "1")
        assert s.values.tolist() == [[0.2, 0.4, 0.6]]
        assert "read <text>: kind sensitivity taken from the header 'QE (%)'" in s.notes

    def test_sensitivity_never_percent_by_range(self):
        """Sensitivity above 1.5 is not percent without a % in the header."""
        s = parse_spectra_text("nm,responsivity [A/W]\n400,2\n410,4\n420,6\n")
        assert (s.kind, s.units) == ("sensitivity", "A/W")
        assert s.values.tolist() == [[2, 4, 6]]

    def test_kind_from_header(self):
        """Header words name the kind, with a note; emission takes its units from the header."""
        s = parse_spectra_text("nm,filter T%\n400,10\n410,20\n420,30\n")
        assert (s.kind, s.units) == ("transmittance", "1")
        assert "read <text>: kind transmittance taken from the header 'filter T%'" in s.notes
        s = parse_spectra_text("nm,irradiance (W/m2/nm)\n400,0.5\n410,0.6\n420,0.7\n")
        assert (s.kind, s.units) == ("emission", "W/m2/nm")
        s = parse_spectra_text("nm,lamp SPD\n400,1\n410,2\n420,3\n")
        assert (s.kind, s.units) == ("emission", "relative")
        s = parse_spectra_text("wavelength,name,value (W/m2/nm)\n400,a,1\n410,a,2\n420,a,3\n")
        assert (s.kind, s.units) == ("emission", "W/m2/nm")

    def test_kind_argument_wins(self):
        """A kind passed in overrides the header's word, with a note of the disagreement."""
        s = parse_spectra_text("nm,lamp SPD\n400,0.1\n410,0.2\n420,0.3\n", kind="transmittance")
        assert s.kind == "transmittance"
        assert ("read <text>: kind transmittance as asked, although the header 'lamp SPD' "
                "says emission") in s.notes

    def test_percent_with_emission_argument(self):
        """scale='percent' with kind='emission' is refused before reading."""
        with pytest.raises(WorkbenchError) as err:
            parse_spectra_text("", kind="emission", scale="percent")
        assert str(err.value) == (
            "scale='percent' is for reflectance, transmittance or sensitivity, not emission"
        )

    def test_descending_wavelengths(self):
        """Wavelengths running down the table are put in ascending order, with a note."""
        s = parse_spectra_text("nm,a,b\n420,0.3,0.6\n410,0.2,0.5\n400,0.1,0.4\n")
        assert s.wavelengths.tolist() == [400, 410, 420]
        assert s.values.tolist() == [[0.1, 0.2, 0.3], [0.4, 0.5, 0.6]]
        assert ("read <text>: wavelengths run down the table (420 to 400 nm); "
                "rows put in ascending order") in s.notes

    def test_kind_line(self):
        """A '# kind: ...; units: ...' line sets kind and units and stops all guessing."""
        s = parse_spectra_text("# kind: emission; units: W·m⁻²·nm⁻¹\nnm,lamp %\n400,1\n410,2\n420,3\n")
        assert (s.kind, s.units) == ("emission", "W·m⁻²·nm⁻¹")
        assert s.values.tolist() == [[1, 2, 3]]
        assert s.notes == (
            "read <text>: 1 emission spectrum, 400-420 nm at 10 nm, wide layout, comma-delimited",
        )

    def test_kind_line_without_units(self):
        """A '# kind:' line with no units sets the kind; the header still gives the scale."""
        s = parse_spectra_text("# kind: transmittance\nnm,f\n400,10\n410,20\n420,30\n")
        assert s.kind == "transmittance"
        assert s.values.tolist() == [[0.1, 0.2, 0.3]]

    def test_kind_line_twice(self):
        """Two '# kind:' lines are refused, naming both lines."""
        with pytest.raises(InputFileError) as err:
            parse_spectra_text("# kind: emission\n# kind: emission\nnm,a\n400,1\n410,2\n420,3\n")
        assert str(err.value) == (
            "<text>, line 2: a second '# kind:' line (first at line 1); expected one"
        )

    def test_options_checked(self):
        """Unknown option values are refused with the choices and what was given."""
        cases = [
            ({"kind": "colour"}, "kind must be None or one of reflectance, transmittance, "
                                 "emission, sensitivity (got 'colour')"),
            ({"wavelength_unit": "mm"}, "wavelength_unit must be one of auto, nm, um (got 'mm')"),
            ({"scale": "%"}, "scale must be one of auto, fraction, percent (got '%')"),
            ({"layout": "tall"}, "layout must be one of auto, wide, long (got 'tall')"),
        ]
        for kwargs, message in cases:
            with pytest.raises(WorkbenchError) as err:
                parse_spectra_text("nm,a\n400,1\n410,1\n420,1\n", **kwargs)
            assert str(err.value) == message

    def test_mixed_decimal_marks_in_long_names(self):
        """Names of a tab-delimited long table may hold commas and points freely."""
        s = parse_spectra_text("400\tleaf, v1.2\t0,1\n410\tleaf, v1.2\t0,2\n420\tleaf, v1.2\t0,3\n")
        assert s.names == ("leaf, v1.2",)
        assert s.values.tolist() == [[0.1, 0.2, 0.3]]

    def test_underscore_and_unicode_digits_refused(self):
        """Python-only number spellings ('1_000', Arabic-Indic digits) are not numbers in a table."""
        for cell in ("1_000", "١٢"):
            with pytest.raises(InputFileError) as err:
                parse_spectra_text(f"nm,a\n400,0.1\n410,{cell}\n420,0.3\n")
            assert str(err.value) == f"<text>, line 3, column 'a': {cell!r} is not a number"

    def test_first_error_in_file_order(self):
        """With several bad cells the first one down the file is reported."""
        with pytest.raises(InputFileError) as err:
            parse_spectra_text("nm,a,b\n400,0.1,inf\n410,abc,0.2\n420,0.3,0.4\n")
        assert str(err.value) == "<text>, line 2, column 'b': 'inf' is not a finite number"

    def test_narrower_line_above_is_metadata(self):
        """A narrower line above the first row is metadata when it does not name the wavelength."""
        s = parse_spectra_text("Date;2026-01-01\n400;0,1;0,2\n410;0,2;0,3\n420;0,3;0,4\n")
        assert s.names == ("s1", "s2")


BAD_FILES = [
    ("duplicate_name.csv", {}, "duplicate_name.csv, line 1, column 4: spectrum name 'leaf' appears twice (first in column 2); expected unique names"),
    ("duplicate_wavelength.csv", {}, "duplicate_wavelength.csv, line 6, column 'wavelength': 450 nm appears twice (first at line 5)"),
    ("empty.csv", {}, "empty.csv: the file is empty; expected a table of wavelength and values"),
    ("empty_cell.csv", {}, "empty_cell.csv, line 3, column 'bark': empty or NaN value; gaps are not filled in — remove the row or supply a value"),
    ("empty_name.csv", {}, "empty_name.csv, line 1, column 3: empty spectrum name; expected a name in the header for every column"),
    ("infinite.csv", {}, "infinite.csv, line 3, column 'bark': 'inf' is not a finite number"),
    ("long_duplicate.csv", {}, "long_duplicate.csv, line 4, column 'wavelength': 410 nm appears twice for 'leaf' (first at line 3)"),
    ("long_missing_wavelength.csv", {}, "long_missing_wavelength.csv: spectrum 'bark' has no value at 410 nm, which 'leaf' has (line 3); expected every spectrum of a long table on the same wavelengths"),
    ("long_two_columns.csv", {"layout": "long"}, "long_two_columns.csv, line 2: a long table needs 3 columns (wavelength, name, value); got 2"),
    ("mixed_decimal_marks.csv", {}, "mixed_decimal_marks.csv, line 3, column 'leaf': '0.11' has a decimal point but the file uses decimal commas (e.g. '0,10' at line 2); expected one decimal mark"),
    ("mixed_units.csv", {}, "mixed_units.csv, line 1: the header gives different units ('W/m2/nm' in 'lamp (W/m2/nm)', 'mW/m2/nm' in 'led (mW/m2/nm)'); expected one unit for all spectra"),
    ("nan_gap.csv", {}, "nan_gap.csv, line 3, column 'leaf': empty or NaN value; gaps are not filled in — remove the row or supply a value"),
    ("no_table.csv", {}, "no_table.csv: no table found: no line starts with a number followed by a comma, semicolon or tab; expected rows of a wavelength and one value per spectrum"),
    ("non_numeric.csv", {}, "non_numeric.csv, line 3, column 'leaf': 'abc' is not a number"),
    ("non_positive_wavelength.csv", {}, "non_positive_wavelength.csv, line 2, column 'wavelength (nm)': wavelength 0 is not positive; expected wavelengths > 0 in nm or µm"),
    ("not_utf8.csv", {}, "not_utf8.csv, line 5: byte 0xe9 is not UTF-8; expected UTF-8 text — save it as UTF-8"),
    ("only_comments.csv", {}, "only_comments.csv: the file holds only comments; expected a table of wavelength and values"),
    ("percent_emission.csv", {}, "percent_emission.csv, line 1, column 'lamp SPD %': values are percent (the header 'lamp SPD %' says so) but the kind is emission; expected percent only for reflectance, transmittance or sensitivity"),
    ("ragged.csv", {}, "ragged.csv, line 3: 2 cells where the header has 3; expected a wavelength and one value per spectrum in every row"),
    ("ragged_header.csv", {}, "ragged_header.csv, line 1: the header has 3 cells (comma-delimited) but the first row (line 2) has 2; expected one header cell per column"),
    ("too_few_points.csv", {}, "too_few_points.csv: only 2 wavelengths in the table; expected at least 3"),
    ("two_kinds.csv", {}, "two_kinds.csv, line 1: the header names more than one kind (transmittance in 'filter T%', emission in 'lamp SPD'); expected one — pass kind= to say which"),
    ("unknown_kind.csv", {}, "unknown_kind.csv, line 1: kind must be one of reflectance, transmittance, emission, sensitivity (got 'glossiness')"),
    ("unordered_wavelengths.csv", {}, "unordered_wavelengths.csv, line 4, column 'wavelength (nm)': 410 nm comes after 420 nm (line 3); expected wavelengths running one way down the table"),
    ("utf16.csv", {}, "utf16.csv: the file is UTF-16 text; expected UTF-8 — save it as UTF-8 CSV"),
    ("wavelength_out_of_range.csv", {}, "wavelength_out_of_range.csv, line 2, column 'wavelength (nm)': wavelength 50 nm is outside 100-100000 nm; expected wavelengths in nm (or in µm, all below 30)"),
]


class TestReadSpectraCsv:
    """read_spectra_csv: files, their errors and the bad-file corpus."""

    def test_tab_delimited_long_table_in_um_percent(self, tmp_path):
        """Long table, tabs, µm by range and percent by range at once: converted and each said."""
        p = tmp_path / "long.tsv"
        p.write_text("wavelength\tname\tvalue\n0.40\ta\t50\n0.50\ta\t60\n0.60\ta\t70\n"
                     "0.40\tb\t10\n0.50\tb\t20\n0.60\tb\t30\n")
        s = read_spectra_csv(p)
        assert s.names == ("a", "b")
        np.testing.assert_allclose(s.wavelengths, [400, 500, 600])
        np.testing.assert_allclose(s.values, [[0.5, 0.6, 0.7], [0.1, 0.2, 0.3]])
        notes = " ".join(s.notes)
        assert "taken as µm" in notes and "percent" in notes

    def test_reads_file(self, tmp_path):
        """A file reads like its text, with the path as given in source and notes."""
        f = tmp_path / "leaf.csv"
        f.write_text("wavelength (nm),leaf\n400,0.1\n410,0.2\n420,0.3\n", encoding="utf-8")
        s = read_spectra_csv(f)
        assert s.source == str(f)
        assert s.values.tolist() == [[0.1, 0.2, 0.3]]
        assert all(n.startswith(f"read {f}: ") for n in s.notes)

    def test_bom_file(self, tmp_path):
        """A UTF-8 file with a byte-order mark (Excel 'CSV UTF-8') reads the same."""
        # common practice: Excel writes a BOM in front of 'CSV UTF-8' files
        f = tmp_path / "bom.csv"
        f.write_bytes("\ufeffnm;Reflexión\n400;0,1\n410;0,2\n420;0,3\n".encode())
        s = read_spectra_csv(f)
        assert s.names == ("Reflexión",)
        assert s.values.tolist() == [[0.1, 0.2, 0.3]]

    def test_missing_file(self, tmp_path, monkeypatch):
        """A missing file is an InputFileError naming it, not a traceback."""
        monkeypatch.chdir(tmp_path)
        with pytest.raises(InputFileError) as err:
            read_spectra_csv("nowhere.csv")
        assert str(err.value) == "nowhere.csv: cannot read: No such file or directory"

    def test_directory(self, tmp_path, monkeypatch):
        """A directory given as the file is an InputFileError too."""
        monkeypatch.chdir(tmp_path)
        (tmp_path / "d").mkdir()
        with pytest.raises(InputFileError) as err:
            read_spectra_csv("d")
        assert str(err.value) == "d: cannot read: Is a directory"

    def test_spectrometer_export(self, tmp_path):
        """A typical spectrometer export: metadata, tab, decimal comma, µm, percent, descending."""
        # common practice: instrument software writes a settings block, then the table
        f = tmp_path / "export.txt"
        f.write_text(
            "Instrument\tSpectro 3000\nIntegration time: 100 ms\nAverages\t10\n\n"
            "Wavelength [µm]\tSample A %\tSample B %\n"
            "0,42\t40,5\t60\n0,41\t30\t50,5\n0,40\t20\t40\n\n\n",
            encoding="utf-8",
        )
        s = read_spectra_csv(f)
        assert s.names == ("Sample A %", "Sample B %")
        assert s.wavelengths.tolist() == [400, 410, 420]
        assert s.values.tolist() == [[0.2, 0.3, 0.405], [0.4, 0.505, 0.6]]
        src = f"read {f}: "
        assert [n.removeprefix(src) for n in s.notes] == [
            "2 reflectance spectra, 400-420 nm at 10 nm, wide layout, tab-delimited",
            "3 metadata lines above the table skipped",
            "decimal commas read as decimal points (e.g. 0,42 as 0.42)",
            "wavelengths in µm (header 'Wavelength [µm]') converted to nm (×1000)",
            "kind taken as reflectance (none given and the header names none)",
            "values taken as percent because the header 'Sample A %' says so; divided by 100",
            "wavelengths run down the table (420 to 400 nm); rows put in ascending order",
        ]

    @pytest.mark.parametrize("name, kwargs, message", BAD_FILES, ids=[b[0] for b in BAD_FILES])
    def test_bad_file(self, name, kwargs, message, monkeypatch):
        """Each bad file is refused with its exact one-line message."""
        monkeypatch.chdir(BAD)
        with pytest.raises(InputFileError) as err:
            read_spectra_csv(name, **kwargs)
        assert str(err.value) == message
        assert "\n" not in str(err.value)

    def test_corpus_complete(self):
        """Every file in the bad corpus has its expected message above."""
        assert sorted(p.name for p in BAD.iterdir() if p.is_file()) == sorted(b[0] for b in BAD_FILES)


def _spectra(values, names=(), kind="reflectance", units="1", wavelengths=None):
    values = np.asarray(values, dtype=float)
    if wavelengths is None:
        wavelengths = grid(380, 380 + 5 * (values.shape[-1] - 1), 5)
    return Spectra(wavelengths, values, names=names, kind=kind, units=units)


class TestWriteSpectraCsv:
    """write_spectra_csv: exact round trip, the file's form and atomic replacement."""

    def test_round_trip_random(self, tmp_path):
        """Random values read back bit for bit, with names, kind and units."""
        values = np.random.default_rng(1).random((4, 81))
        s = _spectra(values, names=("a", "b", "c", "d"))
        f = tmp_path / "r.csv"
        write_spectra_csv(s, f)
        back = read_spectra_csv(f)
        assert np.array_equal(back.values, s.values)
        assert np.array_equal(back.wavelengths, s.wavelengths)
        assert (back.names, back.kind, back.units) == (s.names, s.kind, s.units)
        assert back == s

    def test_round_trip_awkward_values(self, tmp_path):
        """Extreme and awkward floats, and reflectance above 1.5, come back unchanged."""
        row = [0.1 + 0.2, -0.0, 5e-324, 1e300, 87.3, 1 / 3, -1e-7, 2.0**52 + 1]
        wl = np.array([380.0, 380.1 + 1e-9, 400.25, 412.5, 555.0000000000001, 600, 700, 780])
        s = _spectra([row], names=("x",), wavelengths=wl)
        f = tmp_path / "odd.csv"
        write_spectra_csv(s, f)
        back = read_spectra_csv(f)
        assert back.values.tobytes() == s.values.tobytes()
        assert back.wavelengths.tobytes() == s.wavelengths.tobytes()

    def test_round_trip_kind_units_and_names(self, tmp_path):
        """Emission units and names with commas, quotes, % and kind words survive."""
        names = ("a,b", 'say "hi"', "50% grey", "T%", "lamp;1", "µ-LED")
        values = np.random.default_rng(2).random((6, 11)) * 1000
        s = _spectra(values, names=names, kind="emission", units="W·m⁻²·nm⁻¹")
        f = tmp_path / "e.csv"
        write_spectra_csv(s, f)
        back = read_spectra_csv(f)
        assert back == s
        assert back.units == "W·m⁻²·nm⁻¹"

    def test_kind_argument_on_read_back(self, tmp_path):
        """Reading a written file with its own kind passed in adds no note of disagreement."""
        s = _spectra(np.full((1, 5), 0.5), names=("f",), kind="transmittance")
        f = tmp_path / "t.csv"
        write_spectra_csv(s, f)
        back = read_spectra_csv(f, kind="transmittance")
        assert back == s
        assert len(back.notes) == 1

    def test_file_form(self, tmp_path):
        """The file is a '# kind:' line, a wavelength_nm header and repr numbers."""
        s = _spectra([[0.1, 0.25, 1 / 3], [1.0, 0.0, 2.5e-05]], names=("leaf", "a,b"),
                     wavelengths=[400.0, 410.5, 420.0])
        f = tmp_path / "f.csv"
        write_spectra_csv(s, f)
        assert f.read_bytes().decode() == (
            "# kind: reflectance; units: 1\n"
            'wavelength_nm,leaf,"a,b"\n'
            "400.0,0.1,1.0\n"
            "410.5,0.25,0.0\n"
            "420.0,0.3333333333333333,2.5e-05\n"
        )

    def test_leading_axes_flattened(self, tmp_path):
        """Values shaped (2, 3, n) are written as 6 columns and read back as (6, n)."""
        values = np.random.default_rng(3).random((2, 3, 7))
        s = _spectra(values)
        f = tmp_path / "m.csv"
        write_spectra_csv(s, f)
        back = read_spectra_csv(f)
        assert back.values.shape == (6, 7)
        assert np.array_equal(back.values, values.reshape(6, 7))
        assert back.names == ("s1", "s2", "s3", "s4", "s5", "s6")

    def test_replaces_existing_file(self, tmp_path):
        """Writing over a file replaces it and keeps its permissions; no temporary file is left."""
        f = tmp_path / "x.csv"
        f.write_text("old\n")
        os.chmod(f, 0o640)
        write_spectra_csv(_spectra(np.zeros((1, 3))), f)
        assert f.read_text().startswith("# kind: reflectance")
        assert os.stat(f).st_mode & 0o777 == 0o640
        assert [p.name for p in tmp_path.iterdir()] == ["x.csv"]

    def test_failure_keeps_old_file(self, tmp_path, monkeypatch):
        """If the final rename fails, the old file is intact and the temporary file removed."""
        f = tmp_path / "x.csv"
        f.write_text("precious\n")

        def fail(*args, **kwargs):
            raise OSError(28, "No space left on device")

        monkeypatch.setattr(os, "replace", fail)
        with pytest.raises(InputFileError) as err:
            write_spectra_csv(_spectra(np.zeros((1, 3))), f)
        assert str(err.value) == f"{f}: cannot write: No space left on device"
        assert f.read_text() == "precious\n"
        assert [p.name for p in tmp_path.iterdir()] == ["x.csv"]

    def test_failure_midway_keeps_old_file(self, tmp_path, monkeypatch):
        """An interruption while flushing the data leaves the old file and no temporary file."""
        f = tmp_path / "x.csv"
        f.write_text("precious\n")

        def interrupted(fd):
            raise KeyboardInterrupt

        monkeypatch.setattr(os, "fsync", interrupted)
        with pytest.raises(KeyboardInterrupt):
            write_spectra_csv(_spectra(np.zeros((1, 3))), f)
        assert f.read_text() == "precious\n"
        assert [p.name for p in tmp_path.iterdir()] == ["x.csv"]

    def test_missing_directory(self, tmp_path):
        """A folder that does not exist is an InputFileError naming the file."""
        f = tmp_path / "no" / "x.csv"
        with pytest.raises(InputFileError) as err:
            write_spectra_csv(_spectra(np.zeros((1, 3))), f)
        assert str(err.value) == f"{f}: cannot write: No such file or directory"

    def test_refuses_what_would_not_read_back(self, tmp_path):
        """Non-finite values, awkward names and out-of-range wavelengths are refused first."""
        f = tmp_path / "x.csv"
        cases = [
            (_spectra([[0.1, np.nan, 0.3]], names=("leaf",)),
             "values must be finite to be written (got nan in 'leaf' at 385 nm)"),
            (_spectra([[0.1, 0.2, 0.3]], names=(" leaf",)),
             "names must be non-empty, without surrounding spaces or line breaks, to be "
             "written (got ' leaf')"),
            (_spectra([[0.1, 0.2, 0.3]], names=("a\nb",)),
             "names must be non-empty, without surrounding spaces or line breaks, to be "
             "written (got 'a\\nb')"),
            (_spectra(np.zeros((2, 3)), names=("Name", "value")),
             "names 'Name', 'value' would read back as the header of a long table; "
             "rename a spectrum"),
            (_spectra([[0.1, 0.2, 0.3]], wavelengths=[1, 2, 3]),
             "wavelengths must lie in 100-100000 nm to be written (got 1-3 nm)"),
            (_spectra([[0.1, 0.2, 0.3]], units=""),
             "units must be non-empty, without surrounding spaces or line breaks, to be "
             "written (got '')"),
        ]
        for s, message in cases:
            with pytest.raises(WorkbenchError) as err:
                write_spectra_csv(s, f)
            assert str(err.value) == message
            assert not f.exists()

    def test_refuses_non_spectra(self, tmp_path):
        """Only a Spectra can be written."""
        with pytest.raises(WorkbenchError) as err:
            write_spectra_csv([[1, 2, 3]], tmp_path / "x.csv")
        assert str(err.value) == "spectra must be a Spectra (got list)"
