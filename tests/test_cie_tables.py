"""The package's CIE tables file equals colour-science's tables exactly (reference library).

colour-science 0.4.7 is the source (workbench/colorimetry/data/make_tables.py
copies it); these checks fail when the file and the pinned library part.
"""

from __future__ import annotations

import colour
import numpy as np
import pytest
from colour.colorimetry.datasets.illuminants import SDS_BASIS_FUNCTIONS_CIE_ILLUMINANT_D_SERIES
from colour.quality.cfi2017 import load_TCS_CIE2017
from colour.temperature.ohno2013 import planckian_table
from colour.temperature.robertson1968 import DATA_ISOTEMPERATURE_LINES_ROBERTSON1968

from workbench.colorimetry import cie
from workbench.colorimetry.samples import ces_cie_224, tcs_cie_13_3

OBSERVERS = {"2": "CIE 1931 2 Degree Standard Observer", "10": "CIE 1964 10 Degree Standard Observer"}


class TestCmfsTable:
    @pytest.mark.parametrize("observer", ["2", "10"])
    def test_equal_to_colour(self, observer):
        """x̄ȳz̄ 360-830 nm at 1 nm equal colour-science's (CIE 15:2004, Tables T.4, T.5)."""
        wl, v = cie.cmfs_table(observer)
        ref = colour.MSDS_CMFS[OBSERVERS[observer]]
        np.testing.assert_array_equal(wl, ref.wavelengths)
        np.testing.assert_array_equal(v, ref.values)

    def test_read_only(self):
        """The tables cannot be changed by a caller."""
        _, v = cie.cmfs_table("2")
        with pytest.raises(ValueError):
            v[0, 0] = 1.0


class TestIlluminantTable:
    def test_names_equal_to_colour(self):
        """Every illuminant colour-science ships is offered, in its order."""
        assert cie.illuminant_names() == tuple(colour.SDS_ILLUMINANTS)

    @pytest.mark.parametrize("name", list(colour.SDS_ILLUMINANTS))
    def test_equal_to_colour(self, name):
        """Each illuminant's wavelengths and values equal colour-science's (CIE 15:2004, Table T.1 and others)."""
        wl, v = cie.illuminant_table(name)
        sd = colour.SDS_ILLUMINANTS[name]
        np.testing.assert_array_equal(wl, sd.wavelengths)
        np.testing.assert_array_equal(v, sd.values)

    def test_short_fluorescent_name(self):
        """'F2' finds the FL2 table."""
        np.testing.assert_array_equal(cie.illuminant_table("F2")[1], colour.SDS_ILLUMINANTS["FL2"].values)


class TestIlluminantChromaticity:
    @pytest.mark.parametrize("observer", ["2", "10"])
    def test_equal_to_colour(self, observer):
        """Every tabulated white equals colour-science's CCS_ILLUMINANTS (CIE 15:2004, Table T.3)."""
        table = colour.CCS_ILLUMINANTS[OBSERVERS[observer]]
        for name, xy in table.items():
            got = cie.illuminant_chromaticity(name.lower(), observer)
            assert got[0] == name
            np.testing.assert_array_equal(got[1], xy)

    def test_unknown(self):
        """An unlisted name gives None."""
        assert cie.illuminant_chromaticity("D66") is None


class TestDaylightBasis:
    def test_equal_to_colour(self):
        """S0, S1, S2 equal colour-science's (CIE 15:2004, Table T.2)."""
        wl, S = cie.daylight_basis()
        B = SDS_BASIS_FUNCTIONS_CIE_ILLUMINANT_D_SERIES
        for i, key in enumerate(("S0", "S1", "S2")):
            np.testing.assert_array_equal(wl, B[key].wavelengths)
            np.testing.assert_array_equal(S[i], B[key].values)


class TestInterpolatedTables:
    SHAPE_1NM = colour.SpectralShape(360, 830, 1)

    def test_tcs_1nm_equal_to_colour(self):
        """TCS01-TCS14 at 1 nm equal colour-science's reshape of its 5 nm set (CIE 13.3-1995; Sprague 1880)."""
        ref = colour.quality.SDS_TCS["CIE 1995"]
        want = np.stack([colour.colorimetry.reshape_sd(ref[n], self.SHAPE_1NM, copy=True).values for n in ref])
        np.testing.assert_array_equal(cie.table("tcs_1nm"), want)

    def test_daylight_1nm_equal_to_colour(self):
        """S0, S1, S2 at 1 nm equal colour-science's Sprague reshape (CIE 15:2004, Table T.2)."""
        B = SDS_BASIS_FUNCTIONS_CIE_ILLUMINANT_D_SERIES
        want = np.stack([colour.colorimetry.reshape_sd(B[k], self.SHAPE_1NM, copy=True).values
                         for k in ("S0", "S1", "S2")])
        np.testing.assert_array_equal(cie.table("daylight_S_1nm"), want)

    def test_robertson_lines_equal_to_colour(self):
        """The 31 isotemperature lines equal colour-science's (Wyszecki & Stiles 1982, Table 1(3.11))."""
        np.testing.assert_array_equal(cie.table("robertson_lines"), np.array(DATA_ISOTEMPERATURE_LINES_ROBERTSON1968))

    def test_robertson_first_and_last_line(self):
        """Line 0 (infinite T) and line 30 (600 MK⁻¹, about 1667 K) as published (from memory: Robertson 1968)."""
        np.testing.assert_array_equal(cie.table("robertson_lines")[0], [0, 0.18006, 0.26352, -0.24341])
        assert cie.table("robertson_lines")[30, 0] == 600

    def test_ohno_table_equal_to_colour(self):
        """The Ohno 2013 Planckian table equals colour-science's (1000-100000 K, ratio 1.001, CIE 1931 2°)."""
        cmfs = colour.colorimetry.reshape_msds(colour.MSDS_CMFS[OBSERVERS["2"]], colour.SpectralShape(360, 780, 1),
                                               copy=True)
        np.testing.assert_array_equal(cie.table("ohno_planckian"), planckian_table(cmfs, 1000, 100000, 1.001))


class TestSampleTables:
    def test_tcs_equal_to_colour(self):
        """TCS01-TCS14 at 5 nm, 360-830 nm, equal colour-science's CIE 1995 set (CIE 13.3-1995)."""
        ref = colour.quality.SDS_TCS["CIE 1995"]
        s = tcs_cie_13_3(ref["TCS01"].wavelengths)
        assert s.names == tuple(ref)
        np.testing.assert_array_equal(s.values, np.stack([ref[n].values for n in ref]))

    @pytest.mark.parametrize("step", [1, 5])
    def test_ces_equal_to_colour(self, step):
        """The 99 CES at 1 and 5 nm equal colour-science's CIE 2017 tables (CIE 224:2017)."""
        ref = load_TCS_CIE2017(colour.SpectralShape(380, 780, step))
        s = ces_cie_224(ref.wavelengths)
        np.testing.assert_array_equal(s.wavelengths, ref.wavelengths)
        np.testing.assert_array_equal(s.values, np.asarray(ref.values).T)

    def test_source(self):
        """The file says which colour-science it came from, the pinned one."""
        assert str(cie.table("source")) == f"colour-science {colour.__version__}" == "colour-science 0.4.7"
