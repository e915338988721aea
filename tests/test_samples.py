"""Tests of workbench.colorimetry.samples: the CIE sample sets and user CSV on a grid."""

from __future__ import annotations

import colour
import numpy as np
import pytest
from colour.quality.cfi2017 import load_TCS_CIE2017

from workbench.errors import RangeCoverageError, WorkbenchError
from workbench.colorimetry.samples import ces_cie_224, open_sample_set, tcs_cie_13_3


class TestTCS:
    def test_values_at_nodes(self):
        """TCS01-14 at 10 nm equal colour-science's CIE 1995 table (CIE 13.3-1995)."""
        wl = np.arange(400.0, 701.0, 10.0)
        s = tcs_cie_13_3(wl)
        assert s.shape == (14, 31) and s.names[0] == "TCS01" and s.names[-1] == "TCS14"
        ref = colour.quality.SDS_TCS["CIE 1995"]["TCS05"]
        np.testing.assert_array_equal(s["TCS05"], ref.values[np.searchsorted(ref.wavelengths, wl)])

    def test_between_nodes_resampled_with_note(self):
        """Off the 5 nm table the set is Sprague-resampled and says so (CIE 167:2005)."""
        s = tcs_cie_13_3(np.arange(400.0, 701.0, 2.0))
        assert "Sprague" in s.notes[-1]


class TestCES:
    def test_99_samples(self):
        """The 99 CIE 224:2017 samples at 5 nm equal colour-science's table."""
        wl = np.arange(380.0, 781.0, 5.0)
        s = ces_cie_224(wl)
        ref = load_TCS_CIE2017(colour.SpectralShape(380, 780, 5))
        assert s.shape == (99, 81)
        np.testing.assert_array_equal(s.values, np.asarray(ref.values).T)

    def test_1nm_table_used_off_5nm(self):
        """A 2 nm grid takes the 1 nm table's values exactly."""
        wl = np.arange(400.0, 701.0, 2.0)
        ref = load_TCS_CIE2017(colour.SpectralShape(380, 780, 1))
        np.testing.assert_array_equal(ces_cie_224(wl).values, np.asarray(ref.values).T[:, 20:321:2])

    def test_coverage(self):
        """A grid beyond 380-780 nm is an error unless extrapolation is asked for."""
        with pytest.raises(RangeCoverageError):
            ces_cie_224(np.arange(360.0, 781.0, 5.0))
        s = ces_cie_224(np.arange(360.0, 781.0, 5.0), extrapolation="constant")
        np.testing.assert_array_equal(s.values[:, 0], s.values[:, 4])


class TestOpen:
    def test_csv(self, tmp_path):
        """A user CSV is read as reflectance and put on the grid."""
        p = tmp_path / "mine.csv"
        p.write_text("wavelength_nm,a,b\n400,0.1,0.5\n500,0.2,0.5\n600,0.3,0.5\n700,0.4,0.5\n")
        s = open_sample_set("csv", np.arange(400.0, 701.0, 50.0), file=p)
        assert s.names == ("a", "b")
        np.testing.assert_allclose(s["b"], 0.5)

    def test_unknown(self):
        """An unknown source and csv without a file are errors."""
        with pytest.raises(WorkbenchError, match="cie-13.3, cie-224, csv"):
            open_sample_set("munsell", np.arange(400.0, 701.0, 10.0))
        with pytest.raises(WorkbenchError, match="needs a file"):
            open_sample_set("csv", np.arange(400.0, 701.0, 10.0))
