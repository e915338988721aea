"""Optical materials: dispersion formulas against published values, plain indices, n,k tables."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.errors import InputFileError, RangeCoverageError, WorkbenchError
from workbench.optics.materials import (
    BUILT_IN,
    Material,
    built_in_names,
    material_named,
    parse_index,
    read_nk_csv,
)


class TestMaterial:
    def test_fused_silica_malitson_table(self):
        """Fused silica matches Malitson's measured indices at the tabulated lines to 2e-5."""
        # I. H. Malitson, J. Opt. Soc. Am. 55, 1205 (1965), Table (measured n at 20 °C); from memory
        table = {404.656: 1.46962, 435.834: 1.46669, 486.133: 1.46313, 546.074: 1.46008,
                 587.562: 1.45846, 656.272: 1.45637, 706.519: 1.45515, 1013.98: 1.45024}
        n = BUILT_IN["fused-silica"].index(list(table))
        np.testing.assert_allclose(n.real, list(table.values()), atol=2e-5)
        assert np.all(n.imag == 0)

    def test_crown_517_catalogue_indices(self):
        """crown-517 gives n_d 1.5168, n_F 1.5224, n_C 1.5143 (catalogue values)."""
        # SCHOTT optical glass data sheet N-BK7: n_d 1.51680, n_F 1.52238, n_C 1.51432; from memory
        n = BUILT_IN["crown-517"].index([587.5618, 486.1327, 656.2725]).real
        np.testing.assert_allclose(n, [1.51680, 1.52238, 1.51432], atol=2e-5)

    def test_flint_620_catalogue_index(self):
        """flint-620 gives n_d 1.6200 (catalogue value)."""
        # SCHOTT optical glass data sheet F2: n_d 1.62004; from memory
        assert BUILT_IN["flint-620"].index([587.5618]).real[0] == pytest.approx(1.62004, abs=2e-5)

    def test_cauchy_formula(self):
        """A Cauchy material evaluates A + B/λ² + C/λ⁴ (λ in µm) plus ik."""
        m = Material("x", "cauchy", (1.5, 0.01, 0.001, 0.002), (300.0, 900.0), "test")
        # common practice: Cauchy's dispersion formula
        assert m.index([500.0])[0] == pytest.approx(1.5 + 0.01 / 0.25 + 0.001 / 0.0625 + 0.002j)

    def test_coating_materials_are_normal_dispersion(self):
        """Every built-in coating oxide and fluoride falls in index from 400 to 800 nm and is lossless."""
        for name in ("TiO2", "Nb2O5", "Ta2O5", "HfO2", "Al2O3", "SiO2", "MgF2"):
            n = BUILT_IN[name.lower()].index(np.linspace(400, 800, 41))
            # common practice: normal dispersion of transparent dielectrics
            assert np.all(np.diff(n.real) < 0), name
            assert np.all(n.imag == 0), name

    def test_film_indices_at_550(self):
        """The coating materials give their stated 550 nm indices."""
        expected = {"TiO2": 2.35, "Nb2O5": 2.31, "Ta2O5": 2.11, "HfO2": 1.99, "Al2O3": 1.63,
                    "SiO2": 1.46, "MgF2": 1.38}
        for name, n550 in expected.items():
            # H. A. Macleod, Thin-Film Optical Filters, 4th ed. (2010), typical film indices; from memory
            assert BUILT_IN[name.lower()].index([550.0]).real[0] == pytest.approx(n550, abs=0.006), name

    def test_refuses_outside_range(self):
        """A wavelength outside the material's range is refused, naming the material and range."""
        with pytest.raises(RangeCoverageError) as err:
            BUILT_IN["tio2"].index([370.0, 500.0])
        assert str(err.value).startswith("material 'TiO2' must be used within 380-2000 nm (got 370-500 nm;")

    def test_every_built_in_has_a_source(self):
        """Every built-in material names the source of its numbers."""
        assert all(m.source for m in BUILT_IN.values())
        assert "crown-517" in built_in_names() and "fused-silica" in built_in_names()


class TestParseIndex:
    def test_real_and_complex(self):
        """'2.35' and '2.1+0.001j' are read as n + ik."""
        assert parse_index("2.35") == 2.35
        assert parse_index("2.1+0.001j") == 2.1 + 0.001j
        assert parse_index(" 1.5 + 0.01i ") == 1.5 + 0.01j

    def test_rejects_gain(self):
        """k < 0 is refused."""
        with pytest.raises(WorkbenchError) as err:
            parse_index("2.1-0.001j")
        assert str(err.value) == "index must have k ≥ 0 (got '2.1-0.001j'); k < 0 would be gain"

    def test_rejects_text(self):
        """Text that is not a number is refused."""
        with pytest.raises(WorkbenchError) as err:
            parse_index("2.1x")
        assert str(err.value) == "index must be a number such as 2.35 or 2.1+0.001j (got '2.1x')"

    def test_rejects_nan(self):
        """NaN is refused."""
        with pytest.raises(WorkbenchError) as err:
            parse_index("nan")
        assert str(err.value) == "index must be a number such as 2.35 or 2.1+0.001j (got 'nan')"


class TestMaterialNamed:
    def test_names_any_case_and_indices(self):
        """Built-in names match in any case; numbers become constant materials."""
        assert material_named("tio2") is BUILT_IN["tio2"]
        m = material_named("2.1+0.001j")
        assert m.kind == "constant" and m.index([500.0])[0] == 2.1 + 0.001j

    def test_user_material_first(self):
        """A user material is found by its name."""
        user = Material("mine", "constant", (1.7,), None, "test")
        assert material_named("MINE", user={"mine": user}) is user

    def test_unknown_name(self):
        """An unknown name lists what is known."""
        with pytest.raises(WorkbenchError) as err:
            material_named("unobtainium")
        assert str(err.value).startswith("material must be one of air, TiO2, ")
        assert str(err.value).endswith("or an index such as 2.35 or 2.1+0.001j (got 'unobtainium')")


class TestReadNkCsv:
    def test_reads_and_interpolates(self, tmp_path):
        """A wavelength, n, k table is read and interpolated linearly inside its range."""
        p = tmp_path / "film.csv"
        p.write_text("# measured film\nwavelength_nm,n,k\n400,2.40,0.010\n500,2.30,0.002\n# gap-free\n600,2.25,0\n")
        m = read_nk_csv(p)
        assert m.name == "film" and m.range_nm == (400.0, 600.0)
        np.testing.assert_allclose(m.index([450.0, 600.0]), [2.35 + 0.006j, 2.25 + 0j])

    def test_semicolon_decimal_comma_and_micrometres(self, tmp_path):
        """Semicolons with decimal commas and a µm wavelength header are read."""
        p = tmp_path / "f.csv"
        p.write_text("wavelength_um;n;k\n0,4;1,5;0\n0,8;1,4;0\n")
        m = read_nk_csv(p, name="f")
        assert m.range_nm == (400.0, 800.0)
        assert m.index([600.0])[0] == pytest.approx(1.45)

    def test_refuses_negative_k(self, tmp_path):
        """k < 0 is refused naming file, line and column."""
        p = tmp_path / "bad.csv"
        p.write_text("wavelength_nm,n,k\n400,2.4,0\n500,2.3,-0.01\n")
        with pytest.raises(InputFileError) as err:
            read_nk_csv(p)
        assert str(err.value) == f"{p}, line 3, column 'k': k must be ≥ 0 (got -0.01); k < 0 would be gain"

    def test_refuses_gap(self, tmp_path):
        """An empty cell is refused, not filled."""
        p = tmp_path / "gap.csv"
        p.write_text("wavelength_nm,n,k\n400,2.4,0\n500,,0\n")
        with pytest.raises(InputFileError) as err:
            read_nk_csv(p)
        assert str(err.value) == f"{p}, line 3, column 'n': must hold a number (got an empty cell: gaps are not filled)"

    def test_refuses_missing_column(self, tmp_path):
        """A table without a k column is refused naming the header line."""
        p = tmp_path / "nok.csv"
        p.write_text("wavelength_nm,n\n400,2.4\n500,2.3\n")
        with pytest.raises(InputFileError) as err:
            read_nk_csv(p)
        assert str(err.value) == f"{p}, line 1: the header must have a column 'k' (got wavelength_nm, n)"

    def test_refuses_unsorted(self, tmp_path):
        """Wavelengths must increase down the table."""
        p = tmp_path / "u.csv"
        p.write_text("wavelength_nm,n,k\n500,2.4,0\n400,2.3,0\n")
        with pytest.raises(InputFileError) as err:
            read_nk_csv(p)
        assert str(err.value) == (f"{p}, line 3, column 'wavelength_nm': wavelengths must increase down "
                                  "the table (got 400 nm after 500 nm)")

    def test_refuses_outside_the_table(self, tmp_path):
        """Wavelengths beyond the table are refused, naming the file."""
        p = tmp_path / "short.csv"
        p.write_text("wavelength_nm,n,k\n400,2.4,0\n700,2.3,0\n")
        with pytest.raises(RangeCoverageError) as err:
            read_nk_csv(p).index([380.0, 780.0])
        assert str(err.value) == (f"material 'short' must be used within 400-700 nm (got 380-780 nm; "
                                  f"n,k table {p})")
